"""Benchmark: mesh + assemble + solve for a section of about a million triangles.

Run:  python tests/bench/bench_core.py [--elements 1000000] [--repeat 3]

Prints, for each stage, the median wall time of the repeats and triangles per
second, the peak resident memory, and compares the sparse direct solver
(SuperLU) with smoothed-aggregation AMG + CG (pyamg) on the stress-function
system.  Not a test: the figures go into DEVELOPERS.md.
"""

from __future__ import annotations

import argparse
import platform
import resource
import statistics
import time

import numpy as np
from shapely.geometry import Polygon, box

from soapfilm import Profile, mesh_profile
from soapfilm.fem import p1
from soapfilm.fem.linsolve import solve_spd
from soapfilm.fem.torsion import solve_torsion


def keyed_section() -> Profile:
    """40 mm shaft with a 12 x 5 mm keyway (invented benchmark section)."""
    th = np.linspace(0, 2 * np.pi, 2048, endpoint=False)
    circle = Polygon(np.column_stack([20 * np.cos(th), 20 * np.sin(th)]))
    return Profile.from_polygon(circle.difference(box(-6, 15, 6, 25)), units="mm")


def peak_rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--elements", type=int, default=1_000_000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--skip-direct", action="store_true")
    a = ap.parse_args()
    prof = keyed_section()
    # equilateral area of side h: sqrt(3)/4 h^2; Triangle's quality mesh has ~1.45x
    # the elements the area bound alone would give
    h = np.sqrt(4 / np.sqrt(3) * prof.area * 1.45 / a.elements)
    times = {"mesh": [], "assemble": [], "solve_direct": [], "solve_amg": [], "both_fields": []}
    for _ in range(a.repeat):
        t0 = time.perf_counter()
        mesh = mesh_profile(prof, h, memory="8 GB")  # the guard's model is for P2 solves
        t1 = time.perf_counter()
        area, grad = p1.geometry(mesh.p, mesh.t)
        k = p1.stiffness(mesh.t, area, grad, mesh.nnodes)
        b = p1.lumped_load(mesh.t, area, mesh.nnodes, 2.0)
        t2 = time.perf_counter()
        free = np.setdiff1d(np.arange(mesh.nnodes), mesh.loop_nodes(1))
        kf = k[free][:, free]
        t3 = time.perf_counter()
        if not a.skip_direct:
            x_d = solve_spd(kf, b[free], method="direct")
        t4 = time.perf_counter()
        x_a = solve_spd(kf, b[free], method="amg")
        t5 = time.perf_counter()
        if not a.skip_direct:
            assert np.allclose(x_d, x_a, rtol=0, atol=1e-6 * np.abs(x_d).max())
        solve_torsion(mesh)
        t6 = time.perf_counter()
        times["mesh"].append(t1 - t0)
        times["assemble"].append(t2 - t1)
        times["solve_direct"].append(t4 - t3)
        times["solve_amg"].append(t5 - t4)
        times["both_fields"].append(t6 - t5)
    m = mesh.nelements
    print(f"machine: {platform.machine()}, {platform.processor() or '?'}; python {platform.python_version()}")
    print(f"section: 40 mm keyed shaft; {m} triangles, {mesh.nnodes} nodes; repeats {a.repeat}")
    for stage, ts in times.items():
        if stage == "solve_direct" and a.skip_direct:
            continue
        med = statistics.median(ts)
        print(f"{stage:14s} median {med:7.3f} s   {m / med / 1e6:6.2f} M triangles/s")
    total = statistics.median(
        [times["mesh"][i] + times["assemble"][i] + times["solve_amg"][i] for i in range(a.repeat)]
    )
    print(f"mesh + assemble + solve (AMG), median: {total:.3f} s")
    print(f"peak resident memory: {peak_rss_mb():.0f} MB")


if __name__ == "__main__":
    main()
