"""Benchmark: linear (P1) vs quadratic (P2, isoparametric on curves) triangles on uniform meshes.

Run::

    python tests/bench/bench_p2.py [--quick]

Cases
-----
* rectangle 2 x 1 (straight outline); reference: the Saint-Venant series
  (Timoshenko & Goodier, Theory of Elasticity, 3rd ed., sec. 109).
* round bar 40 mm and ellipse 40 x 20 mm with their exact curves; references:
  the closed forms (same book, sec. 104-106).  The J bounds are those of the
  drawn outline (``bounds_scope == "curves"``).
* keyed shaft: 40 mm, DIN 6885-1 keyway with its floor fillets, all exact
  circles (``soapfilm.shapes.keyed_shaft``); reference: P2 on the h = 2 mm
  mesh split uniformly three times (its own bracket is printed; the peak
  sits on a 0.25 mm fillet, which uniform h does not refine, so the
  splitting sweep is the one that converges).
* the two constructions of the P2 drawn-outline bounds on the round bar:
  curved (parabolic edges certified against the circle) and straight
  (the inner and outer polygons).

For each mesh the wall time of the solve (both problems, indicators, the
drawn-outline bounds and the boundary peak; meshing excluded) is the median
of 3 runs.  Not a test: nothing is asserted.
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np

from soapfilm.fem.p2 import boundary_peak_p2, p2_nodes, solve_torsion_p2, uniformly_refined
from soapfilm.fem.torsion import solve_torsion
from soapfilm.mesh import mesh_profile
from soapfilm.profile import Profile
from soapfilm.shapes import ellipse, round_bar
from soapfilm.shapes.shafts import keyed_shaft
from soapfilm.solve import boundary_peak

HEADER = (
    "| case | order | h | elements | nodes | solve s (median) | (J_hi-J_lo)/J | J_lo err | J_hi err"
    " | tau_max err |\n|---|---|---|---|---|---|---|---|---|---|"
)


def rectangle_reference(b: float, t: float, terms: int = 200) -> tuple[float, float]:
    """J and tau_max per unit G*theta (Timoshenko & Goodier 3rd ed. sec. 109)."""
    n = np.arange(1, 2 * terms, 2, dtype=float)
    z = n * np.pi * b / (2 * t)
    j = b * t**3 / 3.0 * (1.0 - 192.0 / np.pi**5 * (t / b) * np.sum(np.tanh(z) / n**5))
    sech = 2.0 * np.exp(-z) / (1.0 + np.exp(-2.0 * z))
    tau = t * (1.0 - 8.0 / np.pi**2 * np.sum(sech / n**2))
    return float(j), float(tau)


def timed(fn, repeats):
    times, out = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def run_p1(mesh):
    f = solve_torsion(mesh)
    return f.j_lo, f.j_hi, boundary_peak(mesh, f).value


def run_p2(mesh, outline="auto"):
    f = solve_torsion_p2(mesh, outline=outline)
    return f.j_lo, f.j_hi, boundary_peak_p2(f).value


def row(name, order, h, mesh, dofs, sec, lo, hi, tau, j_ref, tau_ref):
    jm = 0.5 * (lo + hi)
    print(
        f"| {name} | {order} | {h:g} | {mesh.nelements} | {dofs} | {sec:.3f}"
        f" | {(hi - lo) / jm:.2e} | {lo / j_ref - 1:+.2e} | {hi / j_ref - 1:+.2e}"
        f" | {tau / tau_ref - 1:+.2e} |",
        flush=True,
    )


def sweep(name, profile, sizes, j_ref, tau_ref, repeats, split_from=None):
    """One table block; with ``split_from`` the meshes are the mesh of that
    size split uniformly ``h`` times (``sizes`` then holds split levels)."""
    for order, run in (("P1", run_p1), ("P2", run_p2)):
        for h in sizes[order]:
            if split_from is None:
                mesh = mesh_profile(profile, h)
            else:
                mesh = mesh_profile(profile, split_from)
                for _ in range(h):
                    mesh = uniformly_refined(mesh)
            sec, (lo, hi, tau) = timed(lambda m=mesh, r=run: r(m), repeats)
            dofs = mesh.nnodes if order == "P1" else p2_nodes(mesh).nnodes
            row(name, order, h, mesh, dofs, sec, lo, hi, tau, j_ref, tau_ref)


def main(argv=None):
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="fewer sizes, one run")
    args = ap.parse_args(argv)
    repeats = 1 if args.quick else 3

    b, t = 2.0, 1.0
    rect = Profile.from_loops([[(0, 0), (b, 0), (b, t), (0, t)]])
    j_ref, tau_ref = rectangle_reference(b, t)
    sizes = {"P1": [0.1, 0.05, 0.025, 0.0125], "P2": [0.2, 0.1, 0.05, 0.025]}
    if args.quick:
        sizes = {"P1": [0.1, 0.025], "P2": [0.2, 0.05]}
    print(f"rectangle {b} x {t}: J = {j_ref:.10g}, tau_max = {tau_ref:.10g} (series)")
    print(HEADER)
    sweep("rect 2x1", rect, sizes, j_ref, tau_ref, repeats)

    # closed forms (per unit G*theta): circle J = pi R^4 / 2, tau = R; ellipse
    # a >= b: J = pi a^3 b^3 / (a^2 + b^2), tau = 2 a^2 b / (a^2 + b^2)
    curved = [
        ("round 40", round_bar(40.0), np.pi * 20.0**4 / 2.0, 20.0),
        ("ellipse 40x20", ellipse(40.0, 20.0), np.pi * 20.0**3 * 10.0**3 / 500.0,
         2.0 * 400.0 * 10.0 / 500.0),
    ]
    sizes = {"P1": [2.0, 1.0, 0.5, 0.25], "P2": [4.0, 2.0, 1.0, 0.5]}
    if args.quick:
        sizes = {"P1": [2.0, 0.5], "P2": [4.0, 1.0]}
    for name, prof, j_ref, tau_ref in curved:
        print(f"\n{name}: J = {j_ref:.10g}, tau_max = {tau_ref:.10g} (closed form)")
        print(HEADER)
        sweep(name, prof, sizes, j_ref, tau_ref, repeats)
        print(f"\n{name}, h = 4 mesh split uniformly (column h = number of splits)")
        print(HEADER)
        sweep(name + " split", prof, {"P1": [], "P2": [0, 1, 2, 3] if not args.quick else [0, 2]},
              j_ref, tau_ref, repeats, split_from=4.0)

    name, prof, j_ref, tau_ref = curved[0]
    print(f"\n{name}: P2 drawn-outline bounds, curved vs straight construction")
    print(HEADER)
    for h in sizes["P2"]:
        mesh = mesh_profile(prof, h)
        for how in ("auto", "straight"):
            sec, (lo, hi, tau) = timed(lambda m=mesh, o=how: run_p2(m, o), repeats)
            row(name, "P2 " + ("curved" if how == "auto" else how), h, mesh,
                p2_nodes(mesh).nnodes, sec, lo, hi, tau, j_ref, tau_ref)

    shaft = keyed_shaft(40.0)
    ref_mesh = mesh_profile(shaft, 2.0)
    for _ in range(3):
        ref_mesh = uniformly_refined(ref_mesh)
    t0 = time.perf_counter()
    fr = solve_torsion_p2(ref_mesh)
    pr = boundary_peak_p2(fr)
    j_ref = 0.5 * (fr.j_lo + fr.j_hi)
    print(
        f"\nkeyed shaft reference: P2, {ref_mesh.nelements} elements, "
        f"J in [{fr.j_lo:.10g}, {fr.j_hi:.10g}] mm^4 (rel. width {(fr.j_hi - fr.j_lo) / j_ref:.1e}),"
        f" tau_max = {pr.value:.6g} (warping {pr.warping_value:.6g}) mm per unit G*theta"
        f" at ({pr.xy[0]:.3f}, {pr.xy[1]:.3f}), {time.perf_counter() - t0:.1f} s"
    )
    print(HEADER)
    sizes = {"P1": [2.0, 1.0, 0.5, 0.25], "P2": [4.0, 2.0, 1.0, 0.5]}
    if args.quick:
        sizes = {"P1": [2.0, 0.5], "P2": [4.0, 1.0]}
    sweep("keyed shaft", shaft, sizes, j_ref, pr.value, repeats)
    levels = {"P1": [0, 1, 2, 3], "P2": [0, 1, 2]}
    if args.quick:
        levels = {"P1": [0, 1], "P2": [0, 1]}
    print("\nkeyed shaft, h = 2 mm mesh split uniformly (column h = number of splits)")
    print(HEADER)
    sweep("keyed shaft split", shaft, levels, j_ref, pr.value, repeats, split_from=2.0)


if __name__ == "__main__":
    main()
