"""The iterative solves' stopping rule (linsolve.ENERGY_TOL) against tight solves.

Outside reference: scipy's SuperLU (a direct factorisation, exact to rounding) on the
same systems.  J moves by exactly the energy of the algebraic error (both bounds are
energy functionals stationary at the discrete solution), so a solve stopped at the
rule must give J within 1e-10 of the tight one; the peak, linear in the field, within
1e-6 (the smallest peak tolerance used is 1e-5: bench_known_answers.py).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse.linalg as spla

from soapfilm import Profile, mesh_profile
from soapfilm.fem import p1
from soapfilm.fem.linsolve import ENERGY_TOL, amg_hierarchy, pcg
from soapfilm.fem.torsion import boundary_flux_shear, solve_torsion


def _keyed(h: float):
    from shapely.geometry import Polygon, box

    th = np.linspace(0, 2 * np.pi, 256, endpoint=False)
    circle = Polygon(np.column_stack([20 * np.cos(th), 20 * np.sin(th)]))
    return mesh_profile(Profile.from_polygon(circle.difference(box(-6, 15, 6, 25))), h)


def test_energy_rule_gives_j_and_peak_of_a_tight_solve():
    mesh = _keyed(0.25)
    assert mesh.nnodes > 20_000
    fa = solve_torsion(mesh, method="amg")
    fd = solve_torsion(mesh, method="direct")
    np.testing.assert_allclose([fa.j_lo, fa.j_hi], [fd.j_lo, fd.j_hi], rtol=1e-10, atol=0)
    _, ta_phi, ta_w = boundary_flux_shear(mesh, fa)
    _, td_phi, td_w = boundary_flux_shear(mesh, fd)
    np.testing.assert_allclose(ta_phi.max(), td_phi.max(), rtol=1e-6)
    np.testing.assert_allclose(ta_w.max(), td_w.max(), rtol=1e-6)


def test_energy_estimate_against_the_true_error():
    """pcg's estimate of a(e, e) when it stops, against the error from SuperLU's
    solution: of the right size (within a factor of 10 either way) and the rule met."""
    mesh = _keyed(0.5)
    area, grad = p1.geometry(mesh.p, mesh.t)
    k = p1.stiffness(mesh.t, area, grad, mesh.nnodes)
    b = p1.lumped_load(mesh.t, area, mesh.nnodes, 2.0)
    free = np.setdiff1d(np.arange(mesh.nnodes), mesh.loop_nodes(1))
    a, bf = k[free][:, free].tocsr(), b[free]
    exact = spla.spsolve(a.tocsc(), bf)
    m = amg_hierarchy(a).aspreconditioner().matvec
    for tol in (1e-6, 1e-9, 1e-12):
        res = pcg(a, bf, m, rtol=1.0, energy_tol=tol * float(bf @ exact))
        e = res.x - exact
        true = float(e @ (a @ e))
        assert res.stop == "converged"
        assert true <= 10.0 * tol * float(bf @ exact)
        assert 0.1 * true <= res.energy_error <= 10.0 * true + 1e-30
    assert ENERGY_TOL <= 1e-12


@pytest.mark.parametrize("bore", [True, False])
def test_direct_path_against_superlu_and_spsolve(monkeypatch, bore):
    """The direct solves against scipy's SuperLU in symmetric mode (the previous path)
    and scipy's spsolve (a general LU with partial pivoting): J bounds and both peaks
    of a quadratic-element section within 1e-10 relative.  With a bore (its one unknown
    couples the whole hole loop) the two fields go through qdldl's LDL^T separately
    (up to linsolve.LDL_LIMIT unknowns); without holes through solve_pinned_pair (one
    symbolic factorisation, the second numeric only)."""
    import qdldl  # noqa: F401  (a declared dependency: the path under test)
    from shapely.geometry import Point, Polygon, box

    from soapfilm import result_from_mesh
    from soapfilm.fem import linsolve

    th = np.linspace(0, 2 * np.pi, 256, endpoint=False)
    shape = Polygon(np.column_stack([20 * np.cos(th), 20 * np.sin(th)])).difference(box(-6, 15, 6, 25))
    if bore:
        shape = shape.difference(Point(0, -4).buffer(5, 64))
    prof = Profile.from_polygon(shape)
    mesh = mesh_profile(prof, 1.2)
    assert mesh.nholes == int(bore)

    def values():
        r = result_from_mesh(prof, mesh, method="direct", order=2)
        return np.array([*r.torsion_constant_bounds, r.max_shear_per_torque,
                         r.max_shear_per_torque_warping])

    sizes = []
    direct = linsolve._direct

    def spy(a, b, **kw):
        sizes.append(a.shape[0])
        return direct(a, b, **kw)

    monkeypatch.setattr(linsolve, "_direct", spy)
    new = values()
    # (result_from_mesh without warping_shear: the two fields' solves only)
    if bore:  # the LDL^T path ran, once per field
        assert len(sizes) == 2 and 5_000 < max(sizes) <= linsolve.LDL_LIMIT
    else:  # the pair ran, no separate factorisation
        assert sizes == []
    monkeypatch.setattr(linsolve, "LDL_LIMIT", 0)
    superlu = values()
    assert len(sizes) == (4 if bore else 2)  # SuperLU, separately
    monkeypatch.setattr(linsolve, "_direct", lambda a, b, ordering=None: spla.spsolve(a.tocsc(), b))
    general = values()
    np.testing.assert_allclose(new, general, rtol=1e-10, atol=0)
    np.testing.assert_allclose(superlu, general, rtol=1e-10, atol=0)
