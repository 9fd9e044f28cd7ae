"""The reported J bounds hold as printed: each functional's rounding is bounded and the
bracket widened by it (DEVELOPERS.md, "Rounding of the bounds").

Outside references: the rectangle's series (Timoshenko & Goodier, Theory of
Elasticity, 3rd ed., sec. 109; ``tests/reference.py``) and the same functionals
evaluated again in numpy's extended precision (``np.longdouble``, 64-bit mantissa on
x86-64; the comparison is skipped where it is no wider than float64).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from reference import rectangle_series
from soapfilm.fem import outline
from soapfilm.fem.p2 import _all_shares, solve_torsion_p2
from soapfilm.fem.torsion import solve_torsion
from soapfilm.mesh import mesh_profile
from soapfilm.profile import Profile

LD = np.longdouble
EXTENDED = np.finfo(LD).eps < 1e-3 * np.finfo(np.float64).eps


def _thin(ratio: float, turn: float = 0.3):
    """A 10 x 10/ratio rectangle, turned and moved off the origin."""
    b, t = 10.0, 10.0 / ratio
    pts = np.array([[0, 0], [b, 0], [b, t], [0, t]], float)
    c, s = math.cos(turn), math.sin(turn)
    return Profile.from_loops([pts @ np.array([[c, s], [-s, c]]) + [3.3, -1.7]]), b, t


@pytest.mark.parametrize("ratio", [1000, 5000])
@pytest.mark.parametrize("order", [1, 2])
@pytest.mark.parametrize("size", [1.0, 3.0])
def test_thin_rectangle_bracket_holds_without_allowance(ratio, order, size):
    """J_lo <= J(series) <= J_hi as reported on 1:1000 and 1:5000 sections, where
    the old form ``Ip - 2 f.w + a(w, w)`` had rounding of eps Ip/J (up to 1.4e-9);
    the widening is a few hundred eps times L/t at most."""
    prof, b, t = _thin(ratio)
    mesh = mesh_profile(prof, size * t)
    f = solve_torsion(mesh) if order == 1 else solve_torsion_p2(mesh)
    j = rectangle_series(b, t)[0]
    assert f.j_lo <= j <= f.j_hi
    assert f.j_lo <= f.j_hi
    eps = np.finfo(float).eps
    assert 0.0 < f.bounds_rounding < 1000.0 * eps * (b / t) * j
    # and below eps * Ip, the size of the old form's rounding
    assert f.bounds_rounding < eps * f.polar_moment


@pytest.mark.skipif(not EXTENDED, reason="np.longdouble is no wider than float64 here")
@pytest.mark.parametrize("ratio", [1000, 5000])
def test_rounding_bound_covers_the_actual_rounding(ratio):
    """Both functionals, P1 and P2, computed again in extended precision on the
    same nodes and nodal values: the float64 value is within its rounding bound."""
    prof, _, t = _thin(ratio)
    mesh = mesh_profile(prof, 2.0 * t)
    f = solve_torsion(mesh)
    up = outline.p1_upper(f.p, mesh.t, f.omega)
    up_x = outline.p1_upper(f.p.astype(LD), mesh.t, f.omega.astype(LD)).per.sum(dtype=LD)
    assert abs(LD(up.value) - up_x) <= LD(up.rounding)
    assert up.rounding < 1e-10 * up.value
    lo = outline.p1_lower(f.p, mesh.t, f.phi, f.hole_values, np.zeros(0))
    lo_x = outline.p1_lower(f.p.astype(LD), mesh.t, f.phi.astype(LD), f.hole_values,
                            np.zeros(0)).per.sum(dtype=LD)
    assert abs(LD(lo.value) - lo_x) <= LD(lo.rounding)
    g = solve_torsion_p2(mesh)
    t6 = g.nodes.t6
    sh = _all_shares(g.p, t6, g.nodes.curved, g.phi, g.omega)
    sh_x = _all_shares(g.p.astype(LD), t6, g.nodes.curved, g.phi.astype(LD), g.omega.astype(LD))
    for k in (0, 1):
        exact = sh_x[k].sum(dtype=LD)
        got = math.fsum(sh[k].tolist())
        bound = 2.0 * math.fsum(sh[k + 2].tolist())
        assert abs(LD(got) - exact) <= LD(bound), k
        assert bound < 1e-10 * g.j_hi


def test_hole_term_far_from_the_origin():
    """A slit hole's area by the shoelace sum relative to its loop's first node: a
    2 x 0.01 slit 1e4 away, against the shoelace sum of the same nodes in exact
    rational arithmetic (``fractions.Fraction``), within the returned bound."""
    from fractions import Fraction

    outer = np.array([[-1, -1], [1, -1], [1, 1], [-1, 1]], float) * 3.0 + 1e4
    slit = np.array([[-1, -0.005], [-1, 0.005], [1, 0.005], [1, -0.005]], float) + 1e4
    prof = Profile.from_loops([outer, slit])
    mesh = mesh_profile(prof, 0.5)
    areas, errs = outline.hole_loop_areas(mesh, mesh.p)
    e, mk = mesh.oriented_boundary()[:2]
    e = e[:, mk == 2]
    x = [Fraction(v) for v in mesh.p[0]]
    y = [Fraction(v) for v in mesh.p[1]]
    exact = -sum(x[a] * y[b] - x[b] * y[a] for a, b in e.T) / 2
    assert abs(Fraction(areas[0]) - exact) <= Fraction(errs[0])
    assert errs[0] < 1e-12 * float(exact)
    assert float(exact) == pytest.approx(0.02, rel=1e-9)
