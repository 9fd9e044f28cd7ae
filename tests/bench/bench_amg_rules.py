"""AMG-CG on the stress-function and warping systems of the 40 mm keyed shaft: set-up
with coarse levels in BSR (pyamg's) or CSR, the old stopping rule (relative residual
1e-8) against the energy rule (linsolve.ENERGY_TOL).  Medians of --repeat; figures go
into DEVELOPERS.md ("Core").

Run:  python tests/bench/bench_amg_rules.py [--elements 1000000] [--repeat 3]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from bench_core import keyed_section  # noqa: E402

from soapfilm import mesh_profile  # noqa: E402
from soapfilm.fem import p1  # noqa: E402
from soapfilm.fem.linsolve import ENERGY_TOL, amg_hierarchy, one_blas_thread, pcg  # noqa: E402


def systems(mesh):
    area, grad = p1.geometry(mesh.p, mesh.t)
    k = p1.stiffness(mesh.t, area, grad, mesh.nnodes)
    b = p1.lumped_load(mesh.t, area, mesh.nnodes, 2.0)
    free = np.setdiff1d(np.arange(mesh.nnodes), mesh.loop_nodes(1))
    f = p1.coordinate_load(mesh.p, mesh.t, area, grad, mesh.nnodes)
    return k[free][:, free].tocsr(), b[free], k[1:, 1:].tocsr(), f[1:]


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--elements", type=int, default=1_000_000)
    ap.add_argument("--repeat", type=int, default=3)
    a = ap.parse_args()
    prof = keyed_section()
    h = np.sqrt(4 / np.sqrt(3) * prof.area * 1.45 / a.elements)
    mesh = mesh_profile(prof, h, memory="8 GB")
    ks, bs, kw, fw = systems(mesh)
    print(f"{mesh.nelements} elements, {ks.shape[0]} unknowns")
    rows = {}
    with one_blas_thread():
        for fmt in ("bsr", "csr"):
            for _ in range(a.repeat):
                t0 = time.perf_counter()
                ml = amg_hierarchy(ks, csr=fmt == "csr")
                t1 = time.perf_counter()
                m = ml.aspreconditioner().matvec
                r_old = pcg(ks, bs, m, rtol=1e-8, energy_tol=None)
                t2 = time.perf_counter()
                r_new = pcg(ks, bs, m, rtol=1.0, energy_tol="bx")
                t3 = time.perf_counter()
                j = float(bs @ r_new.x)
                mw = amg_hierarchy(kw, csr=fmt == "csr").aspreconditioner().matvec
                rw = pcg(kw, fw, mw, rtol=1.0, energy_tol=ENERGY_TOL * j)
                t4 = time.perf_counter()
                for key, v in ((f"{fmt} set-up", t1 - t0), (f"{fmt} CG rtol 1e-8", t2 - t1),
                               (f"{fmt} CG energy rule", t3 - t2), (f"{fmt} warping set-up+CG", t4 - t3)):
                    rows.setdefault(key, []).append(v)
            print(f"{fmt}: iterations rtol 1e-8 {r_old.iterations}, energy rule {r_new.iterations} "
                  f"(warping {rw.iterations}); J from each {float(bs @ r_old.x):.12g} "
                  f"{j:.12g}")
    for key, v in rows.items():
        print(f"{key:28s} median {statistics.median(v):6.3f} s  (min {min(v):.3f}, max {max(v):.3f})")


if __name__ == "__main__":
    main()
