"""Start-up time of the command line: ``--help``, ``--version`` and every ``COMMAND --help``.

Each command runs in a fresh interpreter (``python -m soapfilm ...``), as a user
starts it; wall time, median and spread of 7 runs.  Target (issue "one tool, one
voice"): every one under 0.2 s.  Also lists the heavy modules a ``--help``
imports (numpy, scipy, shapely, matplotlib, pint, triangle, ezdxf, rich), which
should be none.

    python tests/bench/bench_startup.py
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time

COMMANDS = [["--version"], ["--help"]] + [[c, "--help"] for c in
                                          ("solve", "show", "shapes", "check", "shaft",
                                           "batch", "sweep")]
HEAVY = ("numpy", "scipy", "shapely", "matplotlib", "pint", "triangle", "ezdxf", "rich",
         "meshio", "pyamg")


def timed(argv: list[str], runs: int = 7) -> list[float]:
    out = []
    for _ in range(runs):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "soapfilm", *argv], capture_output=True,
                       check=False)
        out.append(time.perf_counter() - t0)
    return out


def heavy_imports(argv: list[str]) -> list[str]:
    code = (f"import sys, runpy\nsys.argv = ['soapfilm', *{argv!r}]\n"
            "try:\n    runpy.run_module('soapfilm', run_name='__main__')\n"
            "except SystemExit:\n    pass\n"
            f"print('HEAVY:' + ' '.join(sorted(m for m in {HEAVY!r} if m in sys.modules)), "
            "file=sys.stderr)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    lines = [ln for ln in done.stderr.splitlines() if ln.startswith("HEAVY:")]
    return [lines[-1].removeprefix("HEAVY:") if lines else "?"]


def main() -> None:
    timed(["--version"], 1)  # warm the file cache
    bare = []
    for _ in range(7):
        start = time.perf_counter()
        subprocess.run([sys.executable, "-c", "pass"], check=False)
        bare.append(time.perf_counter() - start)
    t0 = statistics.median(bare)
    print(f"bare interpreter start: {t0 * 1000:.0f} ms (median of 7)\n")
    print("| command | median [ms] | min-max [ms] | heavy modules imported |")
    print("| --- | ---: | ---: | --- |")
    for argv in COMMANDS:
        t = timed(argv)
        heavy = heavy_imports(argv)[0]
        print(f"| soapfilm {' '.join(argv)} | {statistics.median(t) * 1000:.0f} | "
              f"{min(t) * 1000:.0f}-{max(t) * 1000:.0f} | {heavy or 'none'} |")


if __name__ == "__main__":
    main()
