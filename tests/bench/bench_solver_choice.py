"""Direct (SuperLU) versus AMG-preconditioned CG on the stress-function system.

Run:  python tests/bench/bench_solver_choice.py
Prints the median of 3 wall times per method for a range of sizes, to place
``soapfilm.fem.linsolve.DIRECT_LIMIT``.
"""

import statistics
import time

import numpy as np
from shapely.geometry import Polygon, box

from soapfilm import Profile, mesh_profile
from soapfilm.fem import p1
from soapfilm.fem.linsolve import solve_spd

th = np.linspace(0, 2 * np.pi, 1024, endpoint=False)
prof = Profile.from_polygon(
    Polygon(np.column_stack([20 * np.cos(th), 20 * np.sin(th)])).difference(box(-6, 15, 6, 25))
)
print(f"{'unknowns':>9s} {'direct s':>9s} {'amg s':>9s}")
for n_el in (2_000, 8_000, 30_000, 100_000, 300_000):
    h = np.sqrt(4 / np.sqrt(3) * prof.area * 1.45 / n_el)
    mesh = mesh_profile(prof, h)
    area, grad = p1.geometry(mesh.p, mesh.t)
    k = p1.stiffness(mesh.t, area, grad, mesh.nnodes)
    b = p1.lumped_load(mesh.t, area, mesh.nnodes, 2.0)
    free = np.setdiff1d(np.arange(mesh.nnodes), mesh.loop_nodes(1))
    kf, bf = k[free][:, free].tocsr(), b[free]
    out = []
    for method in ("direct", "amg"):
        ts = []
        for _ in range(3):
            t0 = time.perf_counter()
            solve_spd(kf, bf, method=method)
            ts.append(time.perf_counter() - t0)
        out.append(statistics.median(ts))
    print(f"{len(free):9d} {out[0]:9.3f} {out[1]:9.3f}")
