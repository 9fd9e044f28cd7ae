"""Quadratic triangles: bounds, hypercircle identity, convergence order, peak shear.

Every numeric check names its outside reference beside it.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from soapfilm.fem.p2 import (
    boundary_peak_p2,
    p2_nodes,
    solve_torsion_p2,
    uniformly_refined,
)
from soapfilm.mesh import mesh_profile
from soapfilm.profile import Profile

# ---------------------------------------------------------------- references


def equilateral_reference(a: float) -> tuple[float, float]:
    """J and tau_max per unit G*theta of an equilateral triangle of side a.

    Roark's Formulas for Stress and Strain, 7th ed., Table 10.1:
    J = sqrt(3) a^4 / 80, tau_max = 20 T / a^3 at the middle of each side;
    with T = G theta J, tau_max / (G theta) = 20 J / a^3.
    """
    j = np.sqrt(3.0) * a**4 / 80.0
    return j, 20.0 * j / a**3


def rectangle_reference(b: float, t: float, terms: int = 200) -> tuple[float, float]:
    """J and tau_max per unit G*theta of a b x t rectangle (b >= t), Saint-Venant series.

    Timoshenko & Goodier, Theory of Elasticity, 3rd ed., sec. 109:
    J = (b t^3 / 3) [1 - (192/pi^5)(t/b) sum_{n odd} tanh(n pi b / 2t) / n^5],
    tau_max = t [1 - (8/pi^2) sum_{n odd} 1 / (n^2 cosh(n pi b / 2t))] at the
    middle of the long sides.
    """
    n = np.arange(1, 2 * terms, 2, dtype=float)
    series = np.sum(np.tanh(n * np.pi * b / (2 * t)) / n**5)
    j = b * t**3 / 3.0 * (1.0 - 192.0 / np.pi**5 * (t / b) * series)
    z = n * np.pi * b / (2 * t)
    sech = 2.0 * np.exp(-z) / (1.0 + np.exp(-2.0 * z))  # 1/cosh without overflow
    tau = t * (1.0 - 8.0 / np.pi**2 * np.sum(sech / n**2))
    return float(j), float(tau)


def regular_polygon(r: float, n: int, clockwise: bool = False) -> np.ndarray:
    s = np.linspace(0.0, 2.0 * np.pi, n, endpoint=False)
    pts = np.column_stack([r * np.cos(s), r * np.sin(s)])
    return pts[::-1] if clockwise else pts


def triangle_profile(a: float) -> Profile:
    return Profile.from_loops([[(0.0, 0.0), (a, 0.0), (0.5 * a, 0.5 * np.sqrt(3.0) * a)]])


def rectangle_profile(b: float, t: float) -> Profile:
    return Profile.from_loops([[(0.0, 0.0), (b, 0.0), (b, t), (0.0, t)]])


def skfem_reference(mesh, r_split: float) -> tuple[float, float]:
    """J_lo and J_hi of the same P2 problems solved with scikit-fem on the same mesh.

    A general FE library as reference (scikit-fem, ElementTriP2).  The hole is
    handled by superposition, phi = u0 + C u1 with u0 (-lap u0 = 2, u0 = 0 on
    all loops) and u1 (lap u1 = 0, u1 = 0 outside, 1 on the hole); C from the
    circulation condition on the hole (Timoshenko & Goodier, 3rd ed., sec. 115),
    which in weak form reads a(phi, u1) - (2, u1) = 2 A_hole.  Boundary facets
    are split into outer/hole by their distance from the origin.
    """
    from skfem import (
        Basis,
        BilinearForm,
        ElementTriP2,
        Functional,
        LinearForm,
        MeshTri,
        asm,
        condense,
        solve,
    )
    from skfem.helpers import dot, grad

    m = MeshTri(np.array(mesh.p), np.array(mesh.t))
    basis = Basis(m, ElementTriP2(), intorder=4)

    @BilinearForm
    def lap(u, v, w):
        return dot(grad(u), grad(v))

    @LinearForm
    def two(v, w):
        return 2.0 * v

    @LinearForm
    def rot(v, w):
        x, y = w.x
        return y * v.grad[0] - x * v.grad[1]

    @Functional
    def r2(w):
        x, y = w.x
        return x * x + y * y

    k = asm(lap, basis)
    b = asm(two, basis)
    bf = m.boundary_facets()
    mid = m.p[:, m.facets[:, bf]].mean(axis=1)
    rad = np.hypot(mid[0], mid[1])
    inner = basis.get_dofs(bf[rad < r_split]).all()
    allb = basis.get_dofs(bf).all()
    u0 = solve(*condense(k, b, D=allb))
    x1 = np.zeros(basis.N)
    x1[inner] = 1.0
    u1 = solve(*condense(k, np.zeros(basis.N), x=x1, D=allb))
    hole_area = mesh.hole_areas[0]
    c = (2.0 * hole_area + b @ u1 - u0 @ (k @ u1)) / (u1 @ (k @ u1))
    phi = u0 + c * u1
    j_lo = b @ phi + 2.0 * c * hole_area

    f = asm(rot, basis)
    w = solve(*condense(k, f, D=np.array([0])))
    ip = asm(r2, basis)
    j_hi = ip - w @ (k @ w)
    return float(j_lo), float(j_hi)


# ---------------------------------------------------------------- structure


def test_quadrature_rule_exact_to_degree_three():
    """int_T L0^a L1^b L2^c dA = 2 A a! b! c! / (a + b + c + 2)! (the
    barycentric monomial formula, Zienkiewicz & Taylor, The Finite Element
    Method, 5th ed., vol. 1, sec. 8.8 - from memory), so the mean over T is
    2 a! b! c! / (a + b + c + 2)!.  Exact to rounding up to degree 3; the rule
    must fail at degree 4 (otherwise the degree claim is understated)."""
    from math import factorial

    from soapfilm.fem.p2 import QUAD_BARY, QUAD_WEIGHTS

    def exact(a, b, c):
        return 2.0 * factorial(a) * factorial(b) * factorial(c) / factorial(a + b + c + 2)

    lam = QUAD_BARY.T
    for deg in range(4):
        for a in range(deg + 1):
            for b in range(deg + 1 - a):
                c = deg - a - b
                got = QUAD_WEIGHTS @ (lam[0] ** a * lam[1] ** b * lam[2] ** c)
                np.testing.assert_allclose(got, exact(a, b, c), rtol=1e-14, atol=0)
    got4 = QUAD_WEIGHTS @ QUAD_BARY[:, 0] ** 4
    assert abs(got4 - exact(4, 0, 0)) > 1e-6


def test_p2_node_count_matches_euler_formula():
    """Euler's formula for a triangulated planar domain with H holes:
    V - E + F = 1 - H, so the number of unique edges is E = V + M - 1 + H
    (Euler's polyhedron formula, any topology text)."""
    prof = Profile.from_loops([regular_polygon(1.0, 24), regular_polygon(0.4, 12, clockwise=True)])
    mesh = mesh_profile(prof, 0.15)
    nodes = p2_nodes(mesh)
    n_edges = nodes.nnodes - mesh.nnodes
    assert n_edges == mesh.nnodes + mesh.nelements - 1 + 1
    # midpoints are midpoints of their corners (node convention of t6)
    t6 = nodes.t6
    for r, (i, j) in enumerate([(0, 1), (1, 2), (2, 0)]):
        np.testing.assert_allclose(
            nodes.p6[:, t6[3 + r]],
            0.5 * (nodes.p6[:, t6[i]] + nodes.p6[:, t6[j]]),
            rtol=0, atol=1e-14,  # exact up to rounding
        )
    # every boundary P2 node lies on its loop's circle (outer r=1 corners, chords' midpoints inside)
    rad = np.hypot(*nodes.p6)
    outer = nodes.loop_nodes(1)
    hole = nodes.loop_nodes(2)
    # a closed loop of S segments carries S corners and S midpoints
    assert len(outer) == 2 * np.sum(mesh.segment_markers == 1)
    assert len(hole) == 2 * np.sum(mesh.segment_markers == 2)
    assert np.all(rad[outer] <= 1.0 + 1e-12) and np.all(rad[outer] >= np.cos(np.pi / 24) - 1e-12)
    assert np.all(rad[hole] <= 0.4 + 1e-12)


def test_fields_are_frozen():
    """Results are immutable (common practice, no source)."""
    f = solve_torsion_p2(mesh_profile(triangle_profile(1.0), 0.3))
    with pytest.raises(dataclasses.FrozenInstanceError):
        f.j_lo = 0.0


# ---------------------------------------------------------------- bounds


@pytest.mark.parametrize("h", [0.5, 0.2, 0.08])
def test_equilateral_triangle_bounds(h):
    """J_lo <= J <= J_hi, J from Roark 7th ed., Table 10.1 (sqrt(3) a^4 / 80)."""
    a = 2.0
    j, _ = equilateral_reference(a)
    f = solve_torsion_p2(mesh_profile(triangle_profile(a), h))
    assert f.j_lo <= j <= f.j_hi, (f.j_lo, j, f.j_hi)


@pytest.mark.parametrize(("b", "t", "h"), [(2.0, 1.0, 0.3), (2.0, 1.0, 0.1), (4.0, 1.0, 0.15)])
def test_rectangle_bounds(b, t, h):
    """J_lo <= J <= J_hi, J by the Saint-Venant series (Timoshenko & Goodier 3rd ed. sec. 109)."""
    j, _ = rectangle_reference(b, t)
    f = solve_torsion_p2(mesh_profile(rectangle_profile(b, t), h))
    assert f.j_lo <= j <= f.j_hi, (f.j_lo, j, f.j_hi)


@pytest.mark.parametrize("h", [0.4, 0.15])
def test_inscribed_polygon_of_circle_bounds(h):
    """A regular N-gon inscribed in a circle of radius r contains the circle of
    radius r cos(pi/N); the torsion constant grows with the domain (domain
    monotonicity of torsional rigidity, Polya & Szego, Isoperimetric
    Inequalities in Mathematical Physics, 1951 - from memory).  With the circle
    J = pi r^4 / 2 (Timoshenko & Goodier 3rd ed. sec. 104):
    J_lo <= J(r) and J_hi >= J(r cos(pi/N))."""
    r, n = 1.5, 48
    f = solve_torsion_p2(mesh_profile(Profile.from_loops([regular_polygon(r, n)]), h))
    j_out = np.pi * r**4 / 2.0
    j_in = np.pi * (r * np.cos(np.pi / n)) ** 4 / 2.0
    assert f.j_lo <= j_out
    assert f.j_hi >= j_in
    assert f.j_lo <= f.j_hi


def test_hollow_polygon_matches_scikit_fem():
    """Multiply connected case: J_lo and J_hi equal an independent scikit-fem P2
    solve of the same problems on the same mesh to 1e-8 relative (same discrete
    space, so only rounding separates them); the hole constant is shared by
    corner and midpoint nodes."""
    prof = Profile.from_loops([regular_polygon(1.0, 40), regular_polygon(0.5, 24, clockwise=True)])
    mesh = mesh_profile(prof, 0.1)
    f = solve_torsion_p2(mesh)
    ref_lo, ref_hi = skfem_reference(mesh, r_split=0.75)
    np.testing.assert_allclose(f.j_lo, ref_lo, rtol=1e-8, atol=0)
    np.testing.assert_allclose(f.j_hi, ref_hi, rtol=1e-8, atol=0)
    # phi is constant on the hole: corners and midpoints alike
    hole = f.nodes.loop_nodes(2)
    np.testing.assert_allclose(f.phi[hole], f.hole_values[0], rtol=0, atol=0)
    # hollow circle r1 = 1, r0 = 0.5: J = pi (r1^4 - r0^4) / 2 (Timoshenko & Goodier
    # 3rd ed. sec. 115); the inscribed polygons change it by O(1/N^2): 1 % band
    np.testing.assert_allclose(0.5 * (f.j_lo + f.j_hi), np.pi * (1 - 0.5**4) / 2, rtol=1e-2)


# ---------------------------------------------------------------- hypercircle


@pytest.mark.parametrize("case", ["triangle", "hollow"])
def test_indicators_sum_to_bracket(case):
    """Prager-Synge hypercircle identity (Prager & Synge, Q. Appl. Math. 5, 1947):
    sum_e int_e |tau_w - tau_phi|^2 = J_hi - J_lo for the discrete fields,
    exact when every integral is exact; 1e-10 relative to the bracket width
    on a coarse mesh (rounding), 1e-12 relative to J on a finer one."""
    if case == "triangle":
        prof = triangle_profile(1.0)
        hs = (0.3, 0.05)
    else:
        prof = Profile.from_loops(
            [regular_polygon(1.0, 30), regular_polygon(0.3, 16, clockwise=True)]
        )
        hs = (0.4, 0.08)
    f = solve_torsion_p2(mesh_profile(prof, hs[0]))
    gap = f.j_hi - f.j_lo
    assert gap > 0
    np.testing.assert_allclose(f.indicators.sum(), gap, rtol=1e-10, atol=0)
    assert np.all(f.indicators >= 0)
    f = solve_torsion_p2(mesh_profile(prof, hs[1]))
    np.testing.assert_allclose(f.indicators.sum() - (f.j_hi - f.j_lo), 0.0, atol=1e-12 * f.j_hi)


# ---------------------------------------------------------------- convergence


def test_bracket_converges_at_order_four():
    """Smooth case (equilateral triangle: phi is a cubic polynomial, Roark 7th ed.
    Table 10.1).  P2 energy errors are O(h^2) (Strang & Fix, An Analysis of the
    Finite Element Method, 1973, ch. 3), so J_hi - J_lo = O(h^4) under uniform
    refinement; P1 gives O(h^2)."""
    from soapfilm.fem.torsion import solve_torsion

    mesh = mesh_profile(triangle_profile(1.0), 0.2)
    hs, gaps2, gaps1 = [], [], []
    for level in range(4):
        f = solve_torsion_p2(mesh)
        g = solve_torsion(mesh)
        hs.append(0.5**level)
        gaps2.append(f.j_hi - f.j_lo)
        gaps1.append(g.j_hi - g.j_lo)
        mesh = uniformly_refined(mesh)
    slope2 = np.polyfit(np.log(hs), np.log(gaps2), 1)[0]
    slope1 = np.polyfit(np.log(hs), np.log(gaps1), 1)[0]
    assert 3.7 <= slope2 <= 4.3, f"P2 bracket slope {slope2:.3f}, gaps {gaps2}"
    assert 1.8 <= slope1 <= 2.2, f"P1 bracket slope {slope1:.3f}, gaps {gaps1}"


def test_uniform_refinement_keeps_boundary():
    """Splitting into four keeps the polygon: area and loop lengths unchanged
    (shoelace formula, exact up to rounding)."""
    prof = Profile.from_loops([regular_polygon(1.0, 20), regular_polygon(0.3, 10, clockwise=True)])
    mesh = mesh_profile(prof, 0.3)
    fine = uniformly_refined(mesh)
    assert fine.nelements == 4 * mesh.nelements
    np.testing.assert_allclose(fine.element_areas().sum(), prof.polygon.area, rtol=1e-13)
    for marker in (1, 2):
        s = fine.segments[:, fine.segment_markers == marker]
        length = np.hypot(*(fine.p[:, s[1]] - fine.p[:, s[0]])).sum()
        ring = prof.polygon.exterior if marker == 1 else prof.polygon.interiors[0]
        np.testing.assert_allclose(length, ring.length, rtol=1e-13)


# ---------------------------------------------------------------- peak shear


def test_peak_shear_equilateral_triangle():
    """tau_max within 0.5 % of Roark 7th ed. Table 10.1 (20 T / a^3 at mid-side),
    from both fields, located at the middle of a side."""
    a = 2.0
    _, tau = equilateral_reference(a)
    f = solve_torsion_p2(mesh_profile(triangle_profile(a), 0.12))
    pk = boundary_peak_p2(f)
    np.testing.assert_allclose(pk.value, tau, rtol=5e-3)
    np.testing.assert_allclose(pk.warping_value, tau, rtol=5e-3)
    mids = np.array([[a / 2, 0.0], [0.75 * a, np.sqrt(3) / 4 * a], [0.25 * a, np.sqrt(3) / 4 * a]])
    assert np.min(np.hypot(*(mids - np.array(pk.xy)).T)) <= 0.15 * a


@pytest.mark.parametrize(("b", "t"), [(2.0, 1.0), (1.0, 1.0)])
def test_peak_shear_rectangle(b, t):
    """tau_max within 0.5 % of the Saint-Venant series (Timoshenko & Goodier 3rd
    ed. sec. 109), from both fields, at the middle of a long side."""
    _, tau = rectangle_reference(b, t)
    f = solve_torsion_p2(mesh_profile(rectangle_profile(b, t), 0.08 * t))
    pk = boundary_peak_p2(f)
    np.testing.assert_allclose(pk.value, tau, rtol=5e-3)
    np.testing.assert_allclose(pk.warping_value, tau, rtol=5e-3)
    if b > t:
        assert abs(pk.xy[0] - b / 2) <= 0.1 * b
        assert min(abs(pk.xy[1]), abs(pk.xy[1] - t)) <= 1e-12 * t


def test_amg_path_matches_direct():
    """Both linear solvers give the same discrete fields (common practice, no
    source): J to 1e-9 relative (AMG-CG stops at relative residual 1e-12)."""
    mesh = mesh_profile(
        Profile.from_loops([regular_polygon(1.0, 40), regular_polygon(0.5, 24, clockwise=True)]),
        0.1,
    )
    fd = solve_torsion_p2(mesh, method="direct")
    fa = solve_torsion_p2(mesh, method="amg")
    np.testing.assert_allclose([fa.j_lo, fa.j_hi], [fd.j_lo, fd.j_hi], rtol=1e-9, atol=0)
    np.testing.assert_allclose(fa.indicators.sum(), fa.j_hi - fa.j_lo, rtol=1e-8, atol=0)


def test_skip_reentrant_vertices_on_flattened_fillet():
    """A concave quarter-circle fillet given as a polyline: each vertex is
    re-entrant by the turning angle, so the nodal stress there grows without
    bound (Williams, J. Appl. Mech. 19 (1952): singularity exponent
    pi/alpha - 1 < 0 for an interior angle alpha > pi).  With those vertices
    skipped the peak changes less under uniform refinement than with them;
    the interior angles sum to (S - 2) pi over a simple polygon of S vertices
    (elementary geometry).  Nodes closer to a re-entrant vertex than a
    quarter of its shortest edge are skipped."""
    from soapfilm.fem.p2 import interior_angles

    r = 0.3
    # L-shaped bar (0..2 x 0..2 minus 1..2 x 1..2), inner corner filleted with
    # radius r about (1 + r, 1 + r), 12 chords, angles 270 -> 180 deg
    s = np.linspace(1.5 * np.pi, np.pi, 13)
    arc = np.column_stack([1.0 + r + r * np.cos(s), 1.0 + r + r * np.sin(s)])
    outer = np.concatenate([[(0.0, 0.0), (2.0, 0.0), (2.0, 1.0)], arc, [(1.0, 2.0), (0.0, 2.0)]])
    prof = Profile.from_loops([outer])
    mesh = mesh_profile(prof, 0.1)
    ang = interior_angles(mesh.p, mesh.t)
    bn = mesh.boundary_nodes
    np.testing.assert_allclose(ang[bn].sum(), (len(bn) - 2) * np.pi, rtol=1e-12)
    peaks = []
    for _ in range(3):
        f = solve_torsion_p2(mesh)
        peaks.append((boundary_peak_p2(f).value, boundary_peak_p2(f, skip_reentrant=True).value))
        mesh = uniformly_refined(mesh)
    raw, kept = np.array(peaks).T
    assert abs(kept[2] / kept[1] - 1) < abs(raw[2] / raw[1] - 1)
    # the 13 arc points are all skipped, and only points on the arc's chords
    sk = boundary_peak_p2(f, skip_reentrant=True).skipped
    xy = (f.p + f.origin[:, None]).T
    arc_nodes = [int(np.argmin(np.hypot(*(xy - a).T))) for a in arc]
    assert np.allclose(xy[arc_nodes], arc, atol=1e-12)  # the mesh keeps the input vertices
    assert np.all(np.isin(arc_nodes, sk))
    rad = np.hypot(*(f.p[:, sk] + f.origin[:, None] - 1.0 - r))
    assert np.all(rad <= r * (1 + 1e-12)) and np.all(rad >= r * np.cos(np.pi / 48) * (1 - 1e-12))
    # and the kept maximum settles: below 0.5 % change over the last halving
    assert abs(kept[2] / kept[1] - 1) < 5e-3, kept
