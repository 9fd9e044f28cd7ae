"""Start-up time of the command line, and the import share of a small solve.

Each command runs in a fresh interpreter (``python -m soapfilm ...``), as a user
starts it; wall time and CPU time (user + system of the child, which is what the
wall time is on an idle machine: a start-up is one thread reading cached files),
median and spread of 7 runs.  On a shared machine under load read the CPU column.  Target: ``--help``,
``--version``, every ``COMMAND --help`` and ``shapes`` (the list of kinds, and
``shapes KIND``) under 0.2 s each.  Also lists the heavy modules each one imports
(numpy, scipy, shapely, matplotlib, pint, triangle, ezdxf, rich, meshio, pyamg):
none for ``--help``, rich alone for ``shapes``.

Two ways Python finds its bytecode:

* ``cached``: compiled modules kept between runs (what an installed package does);
  here in a private ``PYTHONPYCACHEPREFIX`` folder, warmed by one run first, so the
  work tree gets no ``__pycache__``;
* ``no cache``: ``PYTHONDONTWRITEBYTECODE=1`` (this sandbox's setting): every
  soapfilm module is compiled from source at every start (the libraries keep
  their own installed bytecode).

The solve part runs ``soapfilm solve shapes/hex-drive.toml --quiet --json FILE``
with ``-X importtime`` and reports the sum of the top-level imports' cumulative
times against the run's wall time (median of 5).

    python tests/bench/bench_startup.py [--runs 7] [--mode cached|nocache|both]
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
COMMANDS = ([["--version"], ["--help"], ["shapes"], ["shapes", "keyed_shaft"]]
            + [[c, "--help"] for c in ("solve", "show", "shapes", "check", "shaft", "batch",
                                        "sweep")])
HEAVY = ("numpy", "scipy", "shapely", "matplotlib", "pint", "triangle", "ezdxf", "rich",
         "meshio", "pyamg")
SOLVE = ["solve", str(ROOT / "shapes" / "hex-drive.toml"), "--quiet"]


def environment(mode: str, cache: str) -> dict:
    env = dict(os.environ)
    if mode == "cached":
        env.pop("PYTHONDONTWRITEBYTECODE", None)
        env["PYTHONPYCACHEPREFIX"] = cache
    else:
        env["PYTHONDONTWRITEBYTECODE"] = "1"
        env.pop("PYTHONPYCACHEPREFIX", None)
    return env


def children_cpu() -> float:
    use = resource.getrusage(resource.RUSAGE_CHILDREN)
    return use.ru_utime + use.ru_stime


def timed(argv: list[str], env: dict, runs: int) -> tuple[list[float], list[float]]:
    """Wall and CPU times of ``runs`` fresh runs of ``soapfilm ARGV``."""
    walls, cpus = [], []
    for _ in range(runs):
        c0, t0 = children_cpu(), time.perf_counter()
        subprocess.run([sys.executable, "-m", "soapfilm", *argv], capture_output=True,
                       check=False, env=env, cwd=ROOT)
        walls.append(time.perf_counter() - t0)
        cpus.append(children_cpu() - c0)
    return walls, cpus


def heavy_imports(argv: list[str], env: dict) -> str:
    code = (f"import sys, runpy\nsys.argv = ['soapfilm', *{argv!r}]\n"
            "try:\n    runpy.run_module('soapfilm', run_name='__main__')\n"
            "except SystemExit:\n    pass\n"
            f"print('HEAVY:' + ' '.join(sorted(m for m in {HEAVY!r} if m in sys.modules)), "
            "file=sys.stderr)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          env=env, cwd=ROOT)
    lines = [ln for ln in done.stderr.splitlines() if ln.startswith("HEAVY:")]
    return lines[-1].removeprefix("HEAVY:") if lines else "?"


def import_share(env: dict, runs: int) -> tuple[list[float], list[float]]:
    """Wall time of a small solve and the time its imports took (top-level cumulative)."""
    walls, imports = [], []
    with tempfile.TemporaryDirectory() as tmp:
        for _ in range(runs):
            t0 = time.perf_counter()
            done = subprocess.run([sys.executable, "-X", "importtime", "-m", "soapfilm", *SOLVE,
                                   "--json", str(Path(tmp) / "o.json")],
                                  capture_output=True, text=True, env=env, cwd=ROOT)
            walls.append(time.perf_counter() - t0)
            total = 0
            for line in done.stderr.splitlines():
                if not line.startswith("import time:") or "self [us]" in line:
                    continue
                _, cumulative, name = line.removeprefix("import time:").split("|")
                if not name.startswith("  "):  # top level: one space after the bar
                    total += int(cumulative)
            imports.append(total / 1e6)
    return walls, imports


def timed_bare(env: dict, runs: int) -> tuple[list[float], list[float]]:
    walls, cpus = [], []
    for _ in range(runs):
        c0, t0 = children_cpu(), time.perf_counter()
        subprocess.run([sys.executable, "-c", "pass"], check=False, env=env)
        walls.append(time.perf_counter() - t0)
        cpus.append(children_cpu() - c0)
    return walls, cpus


def report(mode: str, runs: int, cache: str) -> None:
    env = environment(mode, cache)
    timed(["--version"], env, 1)  # warm the file cache (and the bytecode cache)
    timed(["shapes"], env, 1)
    timed(SOLVE, env, 1)
    walls, cpus = timed_bare(env, runs)
    print(f"\n## {mode}: bare interpreter start {statistics.median(walls) * 1000:.0f} ms wall, "
          f"{statistics.median(cpus) * 1000:.0f} ms CPU (median of {runs})\n")
    print("| command | wall median [ms] | wall min-max | CPU median [ms] | CPU min-max | "
          "heavy modules imported |")
    print("| --- | ---: | ---: | ---: | ---: | --- |")
    for argv in COMMANDS:
        t, c = timed(argv, env, runs)
        heavy = heavy_imports(argv, env)
        print(f"| soapfilm {' '.join(argv)} | {statistics.median(t) * 1000:.0f} | "
              f"{min(t) * 1000:.0f}-{max(t) * 1000:.0f} | {statistics.median(c) * 1000:.0f} | "
              f"{min(c) * 1000:.0f}-{max(c) * 1000:.0f} | {heavy or 'none'} |", flush=True)
    walls, imports = import_share(env, 5)
    shares = [i / w for i, w in zip(imports, walls, strict=True)]
    print(f"\nsolve shapes/hex-drive.toml --quiet --json: wall {statistics.median(walls):.2f} s "
          f"({min(walls):.2f}-{max(walls):.2f}), imports {statistics.median(imports):.2f} s "
          f"({min(imports):.2f}-{max(imports):.2f}), share {statistics.median(shares):.0%} "
          f"(median of 5; -X importtime itself adds a little); heavy modules: "
          f"{heavy_imports([*SOLVE, '--json', os.devnull], env)}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=7)
    ap.add_argument("--mode", choices=("cached", "nocache", "both"), default="both")
    args = ap.parse_args()
    try:
        load = os.getloadavg()[0]
    except OSError:
        load = float("nan")
    print(f"load average at start: {load:.2f} on {os.cpu_count()} cores")
    with tempfile.TemporaryDirectory() as cache:
        for mode in (("cached", "nocache") if args.mode == "both" else (args.mode,)):
            report(mode, args.runs, cache)


if __name__ == "__main__":
    main()
