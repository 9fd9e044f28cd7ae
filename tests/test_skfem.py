"""Cross-check against scikit-fem, a general-purpose finite element library.

The same Poisson problem -lap(phi) = 2, phi = 0 on the outside, on the same
mesh with the same linear elements.  For a section with a hole the hole
condition is imposed by superposition: phi = u0 + C u1 with u0 = 0 and u1 = 1
on the hole (both 0 outside, u1 discrete-harmonic), C from the energy
(circulation) condition a(phi, u1) = l(u1) + 2 A_h:
  C = (2 A_h + l(u1) - a(u0, u1)) / a(u1, u1),
which is what the single hole unknown in soapfilm solves.  Agreement to 1e-8.
"""

import numpy as np
import pytest

import reference as ref

skfem = pytest.importorskip("skfem")

from skfem import Basis, BilinearForm, ElementTriP1, LinearForm, MeshTri, condense, solve  # noqa: E402
from skfem.helpers import dot, grad  # noqa: E402

from soapfilm import Profile, mesh_profile  # noqa: E402
from soapfilm.fem.torsion import solve_torsion  # noqa: E402


@BilinearForm
def laplace(u, v, w):
    return dot(grad(u), grad(v))


@LinearForm
def two(v, w):
    return 2.0 * v


def test_keyed_like_section_with_hole_matches_skfem():
    # a non-trivial section: a round bar with a rectangular notch and an off-centre hole
    # (invented), built with shapely
    from shapely.geometry import Polygon, box

    outline = Polygon(ref.circle_points(10.0, 180)).difference(box(-3.0, 5.5, 3.0, 11.0))
    loop = np.asarray(outline.exterior.coords)
    hole = ref.circle_points(2.0, 64, cx=2.0, cy=-3.0)
    prof = Profile.from_loops([loop, hole])
    mesh = mesh_profile(prof, 0.6)
    ours = solve_torsion(mesh)

    m = MeshTri(mesh.p, mesh.t)
    basis = Basis(m, ElementTriP1())
    a = laplace.assemble(basis)
    b = two.assemble(basis)
    outer_nodes = mesh.loop_nodes(1)
    hole_nodes = mesh.loop_nodes(2)
    fixed = np.union1d(outer_nodes, hole_nodes)
    u0 = solve(*condense(a, b, D=fixed))
    x1 = np.zeros(m.p.shape[1])
    x1[hole_nodes] = 1.0
    u1 = solve(*condense(a, b * 0, x=x1, D=fixed))
    area_h = prof.hole_areas[0]

    c = (2 * area_h + b @ u1 - u1 @ (a @ u0)) / (u1 @ (a @ u1))
    phi = u0 + c * u1
    j_ref = b @ phi + 2 * c * area_h
    assert ours.j_lo == pytest.approx(j_ref, rel=1e-8)
    assert ours.hole_values[0] == pytest.approx(c, rel=1e-8)
    assert np.max(np.abs(ours.phi - phi)) <= 1e-8 * np.max(np.abs(phi))
