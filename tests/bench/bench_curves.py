"""Measured figures before and after exact curves: J bracket and peak shear against closed forms.

Runs the same sections and settings on whichever soapfilm is imported, so one
script measures two commits (the other one through ``PYTHONPATH=<tree>/src``).
Only calls present in both: ``read_section``, ``analyse(profile, tol=...,
mesh_size=..., order=...)``, the shape generators, ``Profile.from_loops``.

For each case and setting one markdown row: does the J bracket contain the
exact J, the J error of the bracket midpoint, the bracket width, the actual
relative peak-shear error, the reported estimate, whether the estimate covers
the actual error, elements, wall time (median of 3 when a run is under 5 s,
else one run; a run stopped after 120 s shows as ">120 s").

Exact values (tests/reference.py): Timoshenko & Goodier, Theory of Elasticity,
3rd ed., sec. 104 (circle, tube), 105 (ellipse), 109 (rectangle series);
Roark, 7th ed., Table 10.1 (equilateral triangle).  The two drawn examples
(keyed shafts) have no closed form: their rows compare with ``REFERENCE``,
this script's ``--reference`` run (adaptive, order 2, tol 1e-5) on the commit
named there (not an outside source: a consistency check only).

    PYTHONPATH=src python tests/bench/bench_curves.py [--reference] [--only NAME]
"""

from __future__ import annotations

import argparse
import importlib
import inspect
import math
import signal
import statistics
import subprocess
import sys
import tempfile
import time
import warnings
from pathlib import Path

HERE = Path(__file__).resolve()
sys.path.insert(0, str(HERE.parents[1]))

import ezdxf  # noqa: E402

import reference as ref  # noqa: E402
import soapfilm  # noqa: E402
from soapfilm import analyse, read_section, shapes  # noqa: E402
from soapfilm.profile import Profile  # noqa: E402

EXAMPLES = HERE.parents[2] / "shapes"
MAX_ELEMENTS = 1_000_000
TIME_LIMIT = 120  # seconds; a setting still running then is skipped
REPEAT_BELOW = 5.0  # seconds; faster runs are repeated, the median of 3 reported

#: The drawn examples' reference: ``--reference`` (order 2, tol 1e-5) on commit 8a79539
#: (23 222 and 25 173 elements; on cb65ac0 the same run agreed to 1e-7 in J, 1e-6 in
#: the peak).  name -> (J_lo, J_hi, tau_max / T)
REFERENCE: dict[str, tuple[float, float, float]] = {
    "mixer-paddle-shaft.dxf": (216241.27034372123, 216241.27588592723, 0.00022022329194838996),
    "feed-roller-shaft.toml": (216148.37402892398, 216148.3808439133, 0.00025285160970790467),
}


class TooLong(Exception):
    pass


def _alarm(signum, frame):
    raise TooLong


def default_order() -> int:
    """The element order ``analyse`` uses when not told (label only)."""
    order = getattr(importlib.import_module("soapfilm.solve"), "DEFAULT_ORDER", None)
    if order is None:
        order = inspect.signature(analyse).parameters["order"].default
    return int(order)


def commit_of_import() -> str:
    src = Path(soapfilm.__file__).resolve().parents[1]
    try:
        out = subprocess.run(["git", "-C", str(src), "rev-parse", "--short", "HEAD"],
                             capture_output=True, text=True, check=True).stdout.strip()
        dirty = subprocess.run(["git", "-C", str(src), "status", "--porcelain", "--", "."],
                               capture_output=True, text=True, check=True).stdout.strip()
    except (OSError, subprocess.CalledProcessError):
        return "?"
    return out + (" (with uncommitted changes)" if dirty else "")


# --- the sections ---------------------------------------------------------------


def _dxf(folder: Path, name: str, draw) -> Path:
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4  # millimetres
    draw(doc.modelspace())
    path = folder / f"{name}.dxf"
    doc.saveas(path)
    return path


def _draw_circle(msp):
    msp.add_circle((0.0, 0.0), 20.0)


def _draw_two_arcs(msp):
    msp.add_arc((0.0, 0.0), 20.0, 0.0, 180.0)
    msp.add_arc((0.0, 0.0), 20.0, 180.0, 360.0)


def _draw_tube(msp):
    msp.add_circle((0.0, 0.0), 20.0)
    msp.add_circle((0.0, 0.0), 15.0)


def _draw_ellipse(msp):
    msp.add_ellipse((0.0, 0.0), major_axis=(20.0, 0.0, 0.0), ratio=0.4)


def _draw_half_ellipses(msp):
    msp.add_ellipse((0.0, 0.0), major_axis=(20.0, 0.0, 0.0), ratio=0.4,
                    start_param=0.0, end_param=math.pi)
    msp.add_ellipse((0.0, 0.0), major_axis=(20.0, 0.0, 0.0), ratio=0.4,
                    start_param=math.pi, end_param=2 * math.pi)


def closed_form_cases(folder: Path):
    """(name, build, (J, tau_max / T)); build() returns the Profile."""
    yield "round_bar(40)", lambda: shapes.round_bar(40.0), ref.circle(40.0)
    yield "tube(40, 5)", lambda: shapes.tube(40.0, 5.0), ref.hollow_circle(40.0, 30.0)
    yield "ellipse(40, 16)", lambda: shapes.ellipse(40.0, 16.0), ref.ellipse(20.0, 8.0)
    yield "rectangle(20, 10)", lambda: shapes.rectangle(20.0, 10.0), ref.rectangle_series(20.0, 10.0)
    yield "rectangle(50, 5)", lambda: shapes.rectangle(50.0, 5.0), ref.rectangle_series(50.0, 5.0)
    yield ("triangle a=30 (points)", lambda: Profile.from_loops([ref.triangle_points(30.0)]),
           ref.equilateral_triangle(30.0))
    drawn = [
        ("DXF CIRCLE D40", _draw_circle, ref.circle(40.0)),
        ("DXF 2 ARCs D40", _draw_two_arcs, ref.circle(40.0)),
        ("DXF 2 CIRCLEs tube 40/30", _draw_tube, ref.hollow_circle(40.0, 30.0)),
        ("DXF ELLIPSE 40x16", _draw_ellipse, ref.ellipse(20.0, 8.0)),
        ("DXF 2 half ELLIPSEs 40x16", _draw_half_ellipses, ref.ellipse(20.0, 8.0)),
    ]
    for name, draw, exact in drawn:
        path = _dxf(folder, name.replace(" ", "_").replace("/", "-"), draw)
        yield name, (lambda p=path: read_section(p)), exact


def example_cases():
    yield ("mixer-paddle-shaft.dxf",
           lambda: read_section(EXAMPLES / "mixer-paddle-shaft.dxf", layers=["OUTLINE"]))
    yield "feed-roller-shaft.toml", lambda: read_section(EXAMPLES / "feed-roller-shaft.toml")


# --- running --------------------------------------------------------------------


def run_once(build, **options):
    """(result or None, seconds, note); the profile is built inside the timing."""
    signal.alarm(TIME_LIMIT)
    t0 = time.perf_counter()
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            res = analyse(build(), max_elements=MAX_ELEMENTS, **options)
        return res, time.perf_counter() - t0, ""
    except TooLong:
        return None, time.perf_counter() - t0, f">{TIME_LIMIT} s"
    except Exception as exc:  # a version that cannot read or solve a case: say so, go on
        return None, time.perf_counter() - t0, f"error: {type(exc).__name__}: {exc}"[:120]
    finally:
        signal.alarm(0)


def timed(build, **options):
    res, dt, note = run_once(build, **options)
    if res is None or dt >= REPEAT_BELOW:
        return res, dt, note, 1
    times = [dt]
    for _ in range(2):
        again, dt2, note2 = run_once(build, **options)
        if again is None:
            break
        times.append(dt2)
    return res, statistics.median(times), note, len(times)


def settings(order0: int):
    yield f"default (P{order0}), tol 1e-3", {"tol": 1e-3}
    yield f"default (P{order0}), tol 1e-4", {"tol": 1e-4}
    yield "P1, tol 1e-3", {"tol": 1e-3, "order": 1}
    yield "P2, tol 1e-3", {"tol": 1e-3, "order": 2}


def _elements(res) -> str:
    n = f"{res.mesh.nelements:,}".replace(",", " ")
    return n if res.converged in (True, None) else n + " (not converged)"


def closed_form_table(folder: Path, order0: int, only: str | None):
    print("| case | setting | J in bracket | J error (mid) | bracket | peak error | estimate "
          "| estimate >= actual | elements | time |")
    print("| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- |")
    for name, build, (j_ex, tau_ex) in closed_form_cases(folder):
        if only and only not in name:
            continue
        for label, options in settings(order0):
            res, dt, note, n = timed(build, **options)
            if res is None:
                print(f"| {name} | {label} | {note} | | | | | | | {dt:.1f} s |", flush=True)
                continue
            lo, hi = res.torsion_constant_bounds
            mid = 0.5 * (lo + hi)
            perr = res.max_shear_per_torque / tau_ex - 1
            est = res.estimated_relative_error["max_shear"]
            print(f"| {name} | {label} | {'yes' if lo <= j_ex <= hi else '**no**'} "
                  f"| {mid / j_ex - 1:+.1e} | {(hi - lo) / mid:.1e} | {perr:+.2e} | {est:.1e} "
                  f"| {'yes' if abs(perr) <= est else '**no**'} | {_elements(res)} "
                  f"| {dt:.2f} s{'' if n == 3 else f' ({n} run)'} |", flush=True)


def example_table(order0: int, only: str | None):
    print("| example | setting | J_lo | J_hi | J mid vs reference | tau_max/T (mm^-3) "
          "| peak vs reference | estimate | elements | time |")
    print("| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- |")
    for name, build in example_cases():
        if only and only not in name:
            continue
        for label, options in list(settings(order0))[:2]:
            res, dt, note, n = timed(build, **options)
            if res is None:
                print(f"| {name} | {label} | {note} | | | | | | | {dt:.1f} s |", flush=True)
                continue
            lo, hi = res.torsion_constant_bounds
            tau = res.max_shear_per_torque
            est = res.estimated_relative_error["max_shear"]
            if name in REFERENCE:
                rlo, rhi, rtau = REFERENCE[name]
                jcmp = f"{0.5 * (lo + hi) / (0.5 * (rlo + rhi)) - 1:+.1e}"
                tcmp = f"{tau / rtau - 1:+.2e}"
            else:
                jcmp = tcmp = "-"
            print(f"| {name} | {label} | {lo:.1f} | {hi:.1f} | {jcmp} | {tau:.6e} | {tcmp} "
                  f"| {est:.1e} | {_elements(res)} | {dt:.2f} s{'' if n == 3 else f' ({n} run)'} |",
                  flush=True)


def reference_run():
    print("REFERENCE = {")
    for name, build in example_cases():
        res, dt, note = run_once(build, tol=1e-5, order=2)
        if res is None:
            print(f"    # {name}: {note}")
            continue
        lo, hi = res.torsion_constant_bounds
        print(f"    {name!r}: ({lo!r}, {hi!r}, {res.max_shear_per_torque!r}),"
              f"  # {res.mesh.nelements} elements, {dt:.1f} s, converged {res.converged}")
    print("}")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--reference", action="store_true",
                    help="compute the drawn examples' reference (order 2, tol 1e-5) and stop")
    ap.add_argument("--only", help="run only the cases whose name contains this")
    a = ap.parse_args(argv)
    signal.signal(signal.SIGALRM, _alarm)
    order0 = default_order()
    print(f"soapfilm from {soapfilm.__file__}, commit {commit_of_import()}, default order {order0}")
    print()
    if a.reference:
        reference_run()
        return
    with tempfile.TemporaryDirectory() as tmp:
        closed_form_table(Path(tmp), order0, a.only)
    print()
    example_table(order0, a.only)


if __name__ == "__main__":
    main()
