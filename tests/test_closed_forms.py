"""Default-settings accuracy on sections with closed-form or series solutions.

Issue requirement: J within 0.1 % and tau_max within 3 % at default settings.
Sources are named in tests/reference.py beside each formula.  Curved outlines
are given as fine polygons (1024 sides): the polygon's own J differs from the
curve's by about 2.6e-5 relative (inscribed-polygon area defect 2 pi^2/(3 N^2),
times about 4 for J ~ r^4), well inside the tolerance.
"""

import math

import numpy as np
import pytest

import reference as ref
from soapfilm import Profile, analyse

N_SIDES = 1024

CASES = {
    "circle d=20": (lambda: [ref.circle_points(10, N_SIDES)], ref.circle(20)),
    "hollow circle 20/12": (
        lambda: [ref.circle_points(10, N_SIDES), ref.circle_points(6, N_SIDES)],
        ref.hollow_circle(20, 12),
    ),
    "ellipse 3x1": (lambda: [ref.ellipse_points(3, 1, N_SIDES)], ref.ellipse(3, 1)),
    "equilateral triangle a=2": (lambda: [ref.triangle_points(2)], ref.equilateral_triangle(2)),
    **{
        f"rectangle {r}:1": ((lambda r=r: [ref.rectangle_points(r, 1.0)]), ref.rectangle_series(r, 1))
        for r in (1, 2, 5, 10)
    },
}


@pytest.mark.parametrize("name", list(CASES))
def test_default_settings_accuracy(name):
    loops, (j_exact, tau_exact) = CASES[name]
    res = analyse(Profile.from_loops(loops()))
    assert res.torsion_constant == pytest.approx(j_exact, rel=1e-3), name
    assert res.max_shear_per_torque == pytest.approx(tau_exact, rel=3e-2), name
    # the stress-function value is a lower bound for the meshed polygon, which
    # for these cases lies inside the true section (inscribed polygons)
    assert res.torsion_constant_bounds[0] <= j_exact * (1 + 1e-12)


def test_peak_location_rectangle_mid_long_side():
    """The peak sits at the middle of a long side (Timoshenko & Goodier, 3rd ed., sec. 109)."""
    res = analyse(Profile.from_loops([ref.rectangle_points(2.0, 1.0)]))
    x, y = res.peak_location
    assert min(y, 1.0 - y) == pytest.approx(0.0, abs=1e-12)
    assert x == pytest.approx(1.0, abs=0.1)


def test_peak_location_ellipse_minor_axis_end():
    """tau_max at the ends of the minor axis (Timoshenko & Goodier, 3rd ed., sec. 105, from memory)."""
    res = analyse(Profile.from_loops([ref.ellipse_points(3, 1, N_SIDES)]))
    x, y = res.peak_location
    assert abs(x) == pytest.approx(0.0, abs=0.25)  # |tau| is flat there: within a/12 of the axis
    assert abs(y) == pytest.approx(1.0, abs=1e-3)


def test_hollow_circle_hole_value():
    """The hole unknown equals the exact stress function on the bore, phi = (R^2 - r^2)/2
    (Timoshenko & Goodier, 3rd ed., sec. 104 and the hollow-section condition, ch. 10)."""
    res = analyse(Profile.from_loops([ref.circle_points(1.0, N_SIDES), ref.circle_points(0.5, N_SIDES)]))
    (c,) = res.fields.hole_values
    assert c == pytest.approx((1.0 - 0.25) / 2, rel=2e-4)


def test_hollow_circle_needs_the_hole_unknown():
    """Without the hole condition (phi = 0 on the bore too) J would be tens of per cent low:
    the formulation must not reduce to that.  The exact tube value is the reference."""
    j_exact, _ = ref.hollow_circle(2.0, 1.0)
    res = analyse(Profile.from_loops([ref.circle_points(1.0, N_SIDES), ref.circle_points(0.5, N_SIDES)]))
    assert res.torsion_constant == pytest.approx(j_exact, rel=1e-3)
    assert 2 * float(res.fields.hole_values @ res.mesh.hole_areas) > 0.3 * j_exact
    assert math.isclose(res.polar_moment, j_exact, rel_tol=1e-3)  # J = Ip for a tube
    assert np.all(res.fields.phi >= -1e-12)
