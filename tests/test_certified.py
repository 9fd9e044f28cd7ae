"""Certified accuracy: two-sided bounds, the hypercircle identity, adaptive refinement.

References (implemented in tests/reference.py):
- rectangle: Saint-Venant series, Timoshenko & Goodier, Theory of Elasticity, 3rd ed., sec. 109;
- equilateral triangle: Roark's Formulas for Stress and Strain, 7th ed., Table 10.1;
- circle, ellipse: Timoshenko & Goodier, 3rd ed., secs. 104-105 (ellipse tau from memory).
Curved sections are bracketed with an inscribed and a circumscribed polygon:
for a simply connected section J grows with the domain (the stress function of
the smaller domain, extended by zero, is admissible in the larger one:
G. Polya and G. Szego, Isoperimetric Inequalities in Mathematical Physics, 1951,
from memory), so J_lo(inscribed) <= J(curve) <= J_hi(circumscribed).
"""

import math

import numpy as np
import pytest

import reference as ref
from soapfilm import Profile, analyse, mesh_profile
from soapfilm.solve import solve_fields

ORDERS = [1, 2]


def _inscribed_circumscribed(points_fn, n):
    inner = points_fn(n)
    outer = inner / math.cos(math.pi / n)  # a circle's circumscribed polygon (for the ellipse: the
    return inner, outer  # affine image of the circle's, which still contains the ellipse)


@pytest.mark.parametrize("order", ORDERS)
@pytest.mark.parametrize("h", [0.3, 0.15, 0.075])
def test_polygon_sections_bracketed(order, h):
    cases = [
        ("triangle", [ref.triangle_points(3.0)], ref.equilateral_triangle(3.0)[0]),
        ("rect 1:1", [ref.rectangle_points(2.0, 2.0)], ref.rectangle_series(2.0, 2.0)[0]),
        ("rect 5:1", [ref.rectangle_points(5.0, 1.0)], ref.rectangle_series(5.0, 1.0)[0]),
    ]
    for name, loops, exact in cases:
        f = solve_fields(mesh_profile(Profile.from_loops(loops), h), order=order)
        assert f.j_lo <= exact * (1 + 1e-12) <= f.j_hi * (1 + 2e-12), (name, order, h)


@pytest.mark.parametrize("order", ORDERS)
@pytest.mark.parametrize(
    "name,points_fn,exact",
    [
        ("circle d=2", lambda n: ref.circle_points(1.0, n), ref.circle(2.0)[0]),
        ("ellipse 2x1", lambda n: ref.ellipse_points(2.0, 1.0, n), ref.ellipse(2.0, 1.0)[0]),
    ],
)
def test_curved_sections_bracketed(order, name, points_fn, exact):
    inner, outer = _inscribed_circumscribed(points_fn, 256)
    for h in (0.2, 0.1):
        lo = solve_fields(mesh_profile(Profile.from_loops([inner]), h), order=order).j_lo
        hi = solve_fields(mesh_profile(Profile.from_loops([outer]), h), order=order).j_hi
        assert lo <= exact <= hi, (name, order, h, lo, exact, hi)


@pytest.mark.parametrize("order", ORDERS)
def test_hollow_circle_bracketed(order):
    """Tube 2/1: J = pi (D^4 - d^4)/32.  A 2048-gon for both loops changes J by less than
    (8/3) pi^2/N^2 * 2 ~ 1.3e-5 relative (inscribed-polygon area defect), allowed for."""
    n = 2048
    prof = Profile.from_loops([ref.circle_points(1.0, n), ref.circle_points(0.5, n)])
    exact = ref.hollow_circle(2.0, 1.0)[0]
    geo = 1.3e-5
    for h in (0.15, 0.08):
        f = solve_fields(mesh_profile(prof, h), order=order)
        assert f.j_lo <= exact * (1 + geo) and f.j_hi >= exact * (1 - geo), (order, h)


@pytest.mark.parametrize("order", ORDERS)
def test_hypercircle_identity(order):
    """J_hi - J_lo = sum_e int_e |tau_w - tau_phi|^2 (Prager & Synge, Q. Appl. Math. 5, 1947)."""
    loops = [ref.rectangle_points(3.0, 2.0), ref.circle_points(0.4, 40, 1.0, 1.0)]
    f = solve_fields(mesh_profile(Profile.from_loops(loops), 0.2), order=order)
    assert float(np.sum(f.indicators)) == pytest.approx(f.j_hi - f.j_lo, rel=1e-9)
    assert np.all(f.indicators >= -1e-15 * f.j_hi)


@pytest.mark.parametrize(
    "name,loops,exact",
    [
        ("equilateral triangle", [ref.triangle_points(2.0)], ref.equilateral_triangle(2.0)),
        ("rectangle 2:1", [ref.rectangle_points(2.0, 1.0)], ref.rectangle_series(2.0, 1.0)),
        ("rectangle 10:1", [ref.rectangle_points(10.0, 1.0)], ref.rectangle_series(10.0, 1.0)),
    ],
)
def test_adaptive_tol_1e4(name, loops, exact):
    j_exact, tau_exact = exact
    r = analyse(Profile.from_loops(loops), tol=1e-4, order=2)
    lo, hi = r.torsion_constant_bounds
    assert r.converged
    assert lo <= j_exact * (1 + 1e-12) and j_exact <= hi * (1 + 1e-12)
    assert abs(r.torsion_constant - j_exact) / j_exact < 1e-4
    assert r.max_shear_per_torque == pytest.approx(tau_exact, rel=5e-3)
    assert len(r.refinement) >= 1 and r.refinement[-1]["relative_bracket"] <= 1e-4


def test_adaptive_p1_tol_1e4_triangle():
    j_exact, tau_exact = ref.equilateral_triangle(2.0)
    r = analyse(Profile.from_loops([ref.triangle_points(2.0)]), tol=1e-4, order=1)
    lo, hi = r.torsion_constant_bounds
    assert lo <= j_exact <= hi and (hi - lo) / j_exact <= 1e-4
    assert r.max_shear_per_torque == pytest.approx(tau_exact, rel=5e-3)


def _keyed(fillet):
    """40 mm shaft, 12 x 5 keyway (DIN 6885-1 proportions for 38-44 mm), with or without fillets."""
    from shapely.geometry import Polygon, box

    th = np.linspace(0, 2 * np.pi, 720, endpoint=False)
    circ = Polygon(np.column_stack([20 * np.cos(th), 20 * np.sin(th)]))
    slot = box(-6, 15, 6, 30)
    if fillet:
        slot = slot.buffer(-fillet, quad_segs=16).buffer(fillet, quad_segs=16)
    return Profile.from_polygon(circ.difference(slot))


def test_sharp_keyway_warned_filleted_not():
    """Interior angle 270 deg at a sharp keyway floor: stress singular (Williams 1952)."""
    sharp = analyse(_keyed(0.0), mesh_size=1.0)
    assert len(sharp.corners) == 2
    assert all(c.angle == pytest.approx(270.0, abs=1.0) for c in sharp.corners)
    assert any("re-entrant corner" in w for w in sharp.warnings)
    assert sorted(abs(c.x) for c in sharp.corners) == pytest.approx([6.0, 6.0], abs=1e-9)
    # the reported peak is away from the corner zones
    x, y = sharp.peak_location
    zone = 0.025 * sharp.profile.size
    assert min(math.hypot(x - c.x, y - c.y) for c in sharp.corners) > zone
    filleted = analyse(_keyed(0.4), mesh_size=1.0)
    assert filleted.corners == ()
    assert not any("re-entrant" in w for w in filleted.warnings)


def test_max_elements_stops_with_message(tmp_path, capsys):
    from soapfilm.cli import main

    r = analyse(_keyed(0.4), tol=1e-7, max_elements=5000)
    assert r.converged is False
    assert any("tolerance not met" in w and "--max-elements 5000" in w for w in r.warnings)
    src = tmp_path / "k.txt"
    src.write_text("\n".join(f"{x} {y}" for x, y in _keyed(0.4).outer))
    out = tmp_path / "k.json"
    assert main(["solve", str(src), "--tol", "1e-7", "--max-elements", "4000", "--json", str(out)]) == 0
    import json

    data = json.loads(out.read_text())
    assert data["converged"] is False
    assert any("tolerance not met" in w for w in data["warnings"])
    assert "tolerance not met" in capsys.readouterr().out
