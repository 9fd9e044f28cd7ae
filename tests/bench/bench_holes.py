"""Benchmark: a plate with many small holes (961 round holes of 2 mm in a 200 mm square).

Run:  python tests/bench/bench_holes.py [--part cli|split|unknowns|all] [--repeat N]

* ``cli``: ``soapfilm solve`` of the plate as a DXF (exact circles) and as a point
  list (24-gons), each in a fresh process: wall time, exit status, elements, whether
  the tolerance was met;
* ``split``: one ``analyse`` at the default mesh (what a single adaptive step costs)
  under cProfile: mesh, AMG set-up, CG, drawn-outline bounds, the rest;
* ``unknowns``: what the hole unknowns cost the iterative solve: CG steps and time of
  the stress function on the same mesh with the hole loops as unknowns (the real
  problem) and with them fixed at 0 (no hole unknowns: the fewest steps any treatment
  of them could reach), linear and quadratic elements.

Not a test: the figures go into DEVELOPERS.md ("Many holes").
"""

from __future__ import annotations

import argparse
import json
import math
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

K, PITCH, RADIUS = 31, 200.0 / 31, 1.0  # 961 holes: a section holds at most 1 000 loops


def write_plate(d: Path) -> tuple[Path, Path]:
    import ezdxf

    doc = ezdxf.new()
    doc.units = 4
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (200, 0), (200, 200), (0, 200)], close=True)
    lines = ["0 0", "200 0", "200 200", "0 200", ""]
    for i in range(K):
        for j in range(K):
            cx, cy = PITCH * (i + 0.5), PITCH * (j + 0.5)
            msp.add_circle((cx, cy), RADIUS)
            for m in range(24):
                a = 2 * math.pi * m / 24
                lines.append(f"{cx + RADIUS * math.cos(a):.9f} {cy + RADIUS * math.sin(a):.9f}")
            lines.append("")
    doc.saveas(d / "plate961.dxf")
    (d / "plate961.txt").write_text("\n".join(lines))
    return d / "plate961.dxf", d / "plate961.txt"


def part_cli(files, repeat: int) -> None:
    exe = Path(sys.executable).with_name("soapfilm")
    for f in files:
        walls = []
        for _ in range(repeat):
            t = time.perf_counter()
            run = subprocess.run([str(exe), "solve", str(f), "--json", "-"], capture_output=True,
                                 text=True)
            walls.append(time.perf_counter() - t)
        doc = json.loads(run.stdout) if run.returncode == 0 else {}
        print(f"{f.name}: exit {run.returncode}, wall median {statistics.median(walls):.1f} s "
              f"({', '.join(f'{w:.1f}' for w in walls)}), elements "
              f"{doc.get('mesh', {}).get('elements')}, converged {doc.get('converged')}, "
              f"load {os.getloadavg()[0]:.1f}")
        for w in doc.get("warnings", []):
            print("   ", w[:160])


def part_split(files) -> None:
    import cProfile
    import pstats

    from soapfilm import read_section
    from soapfilm.solve import analyse

    for f in files:
        prof = read_section(f, "mm")
        pr = cProfile.Profile()
        t = time.perf_counter()
        pr.enable()
        analyse(prof)
        pr.disable()
        wall = time.perf_counter() - t
        st = pstats.Stats(pr).stats
        cum = {}
        for (file, _, name), (_, _, _, ct, _) in st.items():
            key = f"{Path(file).name}:{name}"
            cum[key] = max(cum.get(key, 0.0), ct)
        parts = {"mesh": "mesh.py:mesh_profile", "AMG set-up": "linsolve.py:amg_hierarchy",
                 "CG": "linsolve.py:cg_or_direct", "drawn bounds": "p2.py:_drawn_bounds",
                 "peak": "solve.py:boundary_peak"}
        print(f"{f.name}: analyse {wall:.1f} s, load {os.getloadavg()[0]:.1f}; "
              + ", ".join(f"{k} {cum.get(v, 0.0):.1f} s" for k, v in parts.items()))


def part_unknowns(files) -> None:
    import logging

    import numpy as np

    import soapfilm.fem.p2 as p2
    import soapfilm.fem.torsion as tor
    from soapfilm import read_section
    from soapfilm.fem import linsolve
    from soapfilm.mesh import mesh_profile

    logging.getLogger("ezdxf").setLevel(logging.WARNING)
    real_sfs, real_pcg = tor.stress_function_system, linsolve.pcg
    steps: list[int] = []

    class Done(Exception):
        pass

    def counting_pcg(*a, **k):
        res = real_pcg(*a, **k)
        steps.append(res.iterations)
        raise Done  # the stress function is solved first: stop there

    for f in files:
        mesh = mesh_profile(read_section(f, "mm"))
        for order in (1, 2):
            for mode in ("hole unknowns", "holes fixed"):
                def system(k, b, marker, hole_areas, mode=mode):
                    if mode == "holes fixed":
                        marker, hole_areas = np.where(marker >= 2, 1, marker), []
                    return real_sfs(k, b, marker, hole_areas)

                tor.stress_function_system = p2.stress_function_system = system
                linsolve.pcg = counting_pcg
                t = time.perf_counter()
                try:
                    if order == 1:
                        tor.solve_torsion(mesh, method="amg")
                    else:
                        p2.solve_torsion_p2(mesh, method="amg")
                except Done:
                    pass
                finally:
                    tor.stress_function_system = p2.stress_function_system = real_sfs
                    linsolve.pcg = real_pcg
                print(f"{f.name} P{order} {mesh.nelements} elements, {mode}: {steps[-1]} CG "
                      f"steps, up to the stress function {time.perf_counter() - t:.1f} s, "
                      f"load {os.getloadavg()[0]:.1f}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--part", default="all", choices=["cli", "split", "unknowns", "all"])
    ap.add_argument("--repeat", type=int, default=1)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as d:
        files = write_plate(Path(d))
        if args.part in ("cli", "all"):
            part_cli(files, args.repeat)
        if args.part in ("split", "all"):
            part_split(files)
        if args.part in ("unknowns", "all"):
            part_unknowns(files)


if __name__ == "__main__":
    main()
