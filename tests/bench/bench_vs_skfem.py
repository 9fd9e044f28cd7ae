"""Assembly plus both solves against scikit-fem on the same linear-triangle mesh.

Both sides solve the stress-function problem (-lap phi = 2, phi = 0 on the outer
boundary: the section is simply connected) and the warping-function problem
(int grad w . grad v = int (y v_x - x v_y), one node pinned) on the same mesh,
with the same solver: pyamg smoothed aggregation (the same options as
soapfilm's hierarchy) preconditioning conjugate gradients to a relative
residual of 1e-8, BLAS on one thread.  scikit-fem assembles with its own
forms (``BilinearForm``/``LinearForm`` on ``ElementTriP1``) and solves with
scipy's ``cg``; soapfilm runs ``fem.torsion.solve_torsion`` minus its bounds,
indicators and drawn-outline work (timed apart), so the two do the same
arithmetic.  J from both is printed as the check that they solved the same
problem (scikit-fem's J = 4 int phi - int |grad phi|^2 at its own solution).

    python tests/bench/bench_vs_skfem.py [--elements 1000000] [--repeat 3]

Needs scikit-fem (a test dependency).  Not a test: the figures go into
DEVELOPERS.md ("Core").
"""

from __future__ import annotations

import argparse
import platform
import statistics
import time

import numpy as np
import scipy.sparse.linalg as spla
from bench_core import keyed_section  # noqa: E402  (same folder)

from soapfilm import mesh_profile
from soapfilm.fem import p1
from soapfilm.fem.linsolve import amg_hierarchy, one_blas_thread, solve_spd
from soapfilm.fem.torsion import section_centroid, stress_function_system


def ours(mesh):
    """soapfilm's assembly and both solves (the part scikit-fem also does)."""
    t0 = time.perf_counter()
    n = mesh.nnodes
    total, origin = section_centroid(mesh.p, mesh.t)
    p = mesh.p - origin[:, None]
    area, grad = p1.geometry(p, mesh.t)
    k = p1.stiffness(mesh.t, area, grad, n)
    b = p1.lumped_load(mesh.t, area, n, value=2.0)
    f = p1.coordinate_load(p, mesh.t, area, grad, n)
    marker = np.zeros(n, dtype=np.int64)
    marker[mesh.loop_nodes(1)] = 1
    prolong, k_red, b_red = stress_function_system(k, b, marker, mesh.hole_areas)
    t1 = time.perf_counter()
    x = solve_spd(k_red, b_red, method="amg", energy_tol=None)
    w = np.zeros(n)
    w[1:] = solve_spd(k[1:, 1:], f[1:], method="amg", energy_tol=None)
    t2 = time.perf_counter()
    phi = prolong @ x
    j = float(b @ phi)  # 2 int phi = a(phi, phi) at the solution: J = 2 b.phi - phi.K.phi
    j = 2 * j - float(phi @ (k @ phi))
    return t1 - t0, t2 - t1, j


def theirs(mesh):
    """scikit-fem: its assembly, the same AMG + CG (scipy's cg, rtol 1e-8)."""
    import skfem
    from skfem.helpers import dot, grad

    t0 = time.perf_counter()
    m = skfem.MeshTri(mesh.p.copy(), mesh.t.astype(np.int64))
    basis = skfem.Basis(m, skfem.ElementTriP1())

    @skfem.BilinearForm
    def lap(u, v, w):
        return dot(grad(u), grad(v))

    @skfem.LinearForm
    def two(v, w):
        return 2.0 * v

    k = lap.assemble(basis)
    b = two.assemble(basis)
    # centroid of the mesh polygon, as soapfilm centres its coordinates
    ones = skfem.LinearForm(lambda v, w: v).assemble(basis)
    area = float(ones.sum())
    xc = float(ones @ mesh.p[0]) / area
    yc = float(ones @ mesh.p[1]) / area

    @skfem.LinearForm
    def coord_c(v, w):
        x, y = w.x[0] - xc, w.x[1] - yc
        return y * grad(v)[0] - x * grad(v)[1]

    f = coord_c.assemble(basis)
    d = m.boundary_nodes()
    free = np.setdiff1d(np.arange(m.nvertices), d)
    kf = k[free][:, free].tocsr()
    kw = k[1:, 1:].tocsr()
    t1 = time.perf_counter()
    phi = np.zeros(m.nvertices)
    ml = amg_hierarchy(kf)
    phi[free], _ = spla.cg(kf, b[free], rtol=1e-8, M=ml.aspreconditioner())
    ml = amg_hierarchy(kw)
    w = np.zeros(m.nvertices)
    w[1:], _ = spla.cg(kw, f[1:], rtol=1e-8, M=ml.aspreconditioner())
    t2 = time.perf_counter()
    j = 2 * float(b @ phi) - float(phi @ (k @ phi))
    return t1 - t0, t2 - t1, j


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--elements", type=int, default=1_000_000)
    ap.add_argument("--repeat", type=int, default=3)
    a = ap.parse_args()
    prof = keyed_section()
    h = np.sqrt(4 / np.sqrt(3) * prof.area * 1.45 / a.elements)
    mesh = mesh_profile(prof, h, memory="8 GB")
    print(f"{platform.processor() or platform.machine()}, {mesh.nelements} triangles, "
          f"{mesh.nnodes} nodes")
    rows = {"ours": [], "theirs": []}
    with one_blas_thread():
        for _ in range(a.repeat):
            rows["ours"].append(ours(mesh))
            rows["theirs"].append(theirs(mesh))
    for name, rs in rows.items():
        asm = [r[0] for r in rs]
        sol = [r[1] for r in rs]
        tot = [r[0] + r[1] for r in rs]
        print(f"{name:7s} assemble {statistics.median(asm):6.2f} s ({min(asm):.2f}-{max(asm):.2f})"
              f"  solves {statistics.median(sol):6.2f} s ({min(sol):.2f}-{max(sol):.2f})"
              f"  total {statistics.median(tot):6.2f} s  J {rs[-1][2]:.10g}")
    o = statistics.median(r[0] + r[1] for r in rows["ours"])
    s = statistics.median(r[0] + r[1] for r in rows["theirs"])
    oa = statistics.median(r[0] for r in rows["ours"])
    sa = statistics.median(r[0] for r in rows["theirs"])
    print(f"ratio soapfilm / scikit-fem: total {o / s:.2f}x, assembly {oa / sa:.2f}x")


if __name__ == "__main__":
    main()
