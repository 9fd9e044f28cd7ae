"""DXF drawings keep their exact curves: arcs stay arcs from the drawing to the solver.

Every drawing is made in the test with ezdxf and the curves the reader hands
over are compared with the numbers the test wrote into the drawing: type,
centre, radius, axes.  Every vertex of a curved edge must lie on its curve to
1e-9 of the part's size, and straight entities must stay untagged.  Each
numeric check names its outside source beside it.
"""

from __future__ import annotations

import math
import pickle

import numpy as np
import pytest
from ezdxf.math import closed_uniform_bspline

from soapfilm import analyse
from soapfilm.geometry.curves import Circle, Ellipse
from soapfilm.geometry.spline import SplineCurve
from soapfilm.profile import Profile
from soapfilm.readers.dxf import read_dxf
from test_dxf import KEYED, draw_keyed_shaft, keyed_geometry, new_drawing, save

ON_CURVE = 1e-9  # vertices on their curve, as a fraction of the part's size


# ------------------------------------------------------------------ helpers
def loop_edges(profile):
    """(start, end, curve index) of every edge of every loop."""
    for xy, tags in zip(profile.loops, profile.edge_curves, strict=True):
        yield from zip(xy, np.roll(xy, -1, axis=0), tags, strict=True)


def assert_vertices_on_curves(profile, rtol: float = ON_CURVE) -> None:
    """Both ends of every curved edge lie on the edge's curve."""
    size = profile.size
    worst = 0.0
    for xy, tags in zip(profile.loops, profile.edge_curves, strict=True):
        nxt = np.roll(np.arange(len(xy)), -1)
        for c in np.unique(tags[tags >= 0]):
            e = np.flatnonzero(tags == c)
            ends = xy[np.unique(np.concatenate([e, nxt[e]]))]
            worst = max(worst, float(profile.curves[c].distance(ends).max()))
    assert worst <= rtol * size, f"a vertex is {worst / size:.2e} of the size off its curve"


def tags_along(profile, a, b, tol: float = 1e-9) -> set[int]:
    """Curve tags of the edges lying on the segment a-b (both ends on it)."""
    a, b = np.asarray(a, float), np.asarray(b, float)
    d = b - a
    length = math.hypot(*d)
    found = set()
    for p, q, tag in loop_edges(profile):
        on = True
        for x in (p, q):
            s = np.dot(x - a, d) / length**2
            off = abs(d[0] * (x - a)[1] - d[1] * (x - a)[0]) / length
            on &= -tol <= s <= 1 + tol and off <= tol * profile.size
        if on:
            found.add(int(tag))
    return found


def circles(profile) -> list[Circle]:
    return [c for c in profile.curves if isinstance(c, Circle)]


def same_circle(c: Circle, cx: float, cy: float, r: float, tol: float) -> bool:
    return abs(c.cx - cx) <= tol and abs(c.cy - cy) <= tol and abs(c.r - r) <= tol


def assert_has_circle(profile, cx, cy, r, tol=1e-9):
    assert any(same_circle(c, cx, cy, r, tol) for c in circles(profile)), (
        f"no circle ({cx}, {cy}) r {r} among {circles(profile)}")


def assert_same_ellipse(e, cx, cy, a, b, angle, tol=1e-9):
    """Same point set: centre, semi-axes, and the a-axis direction (modulo a half turn)."""
    assert isinstance(e, Ellipse)
    np.testing.assert_allclose([e.cx, e.cy, e.a, e.b], [cx, cy, a, b], rtol=0, atol=tol)
    turn = (e.angle - angle) % math.pi
    assert min(turn, math.pi - turn) <= tol


# ------------------------------------------------------------------ circles
def test_circle(tmp_path):
    """CIRCLE: one Circle with the drawn centre and radius on every edge (the
    solve against pi d^4 / 32 is test_dxf.test_circle_entity_against_polar_moment)."""
    d = 20.0
    doc, msp = new_drawing()
    msp.add_circle((3.0, -2.0), d / 2)
    profile = read_dxf(save(doc, tmp_path))
    assert len(profile.curves) == 1
    assert same_circle(profile.curves[0], 3.0, -2.0, d / 2, 1e-12)
    assert np.all(profile.edge_curves[0] == 0)
    assert_vertices_on_curves(profile)


def test_arcs_and_lines(tmp_path):
    """The keyed shaft as ARC + LINE: the shaft circle and the two floor fillets are
    Circles with the centres and radii drawn (geometry of test_dxf.draw_keyed_shaft,
    DIN 6885-1 proportions); the flanks and the floor are straight."""
    doc, msp = new_drawing()
    draw_keyed_shaft(msp, **KEYED)
    profile = read_dxf(save(doc, tmp_path))
    R, a, yf, ys = keyed_geometry(**KEYED)
    r = KEYED["r"]
    assert len(circles(profile)) == len(profile.curves) == 3
    assert_has_circle(profile, 0.0, 0.0, R)
    assert_has_circle(profile, a - r, yf + r, r)
    assert_has_circle(profile, -a + r, yf + r, r)
    assert_vertices_on_curves(profile)
    assert tags_along(profile, (a, ys), (a, yf + r)) == {-1}
    assert tags_along(profile, (-a, ys), (-a, yf + r)) == {-1}
    assert tags_along(profile, (a - r, yf), (-a + r, yf)) == {-1}
    assert not profile.is_polygon


# -------------------------------------------------------------- bulged polylines
def rounded_rectangle(w: float, h: float, r: float) -> list[tuple[float, float, float]]:
    """Counter-clockwise (x, y, bulge) of a w x h rectangle with corner radius r.

    A quarter-circle corner has bulge tan(90 deg / 4) (DXF reference, LWPOLYLINE:
    bulge = tangent of a quarter of the included angle, positive counter-clockwise).
    """
    k = math.tan(math.pi / 8)
    x, y = w / 2, h / 2
    return [(-x + r, -y, 0.0), (x - r, -y, k), (x, -y + r, 0.0), (x, y - r, k),
            (x - r, y, 0.0), (-x + r, y, k), (-x, y - r, 0.0), (-x, -y + r, k)]


def reversed_bulges(pts):
    """The same polyline run the other way: vertices reversed, each bulge negated
    and moved to the segment's new start (DXF reference, bulge sign)."""
    n = len(pts)
    return [(pts[n - 1 - j][0], pts[n - 1 - j][1], -pts[(n - 2 - j) % n][2]) for j in range(n)]


@pytest.mark.parametrize("kind", ["lwpolyline", "lwpolyline-clockwise", "polyline2d"])
def test_rounded_rectangle_bulges(tmp_path, kind):
    """Each bulged corner is a Circle of the corner radius about the corner's centre;
    the sides are straight; area w h - (4 - pi) r^2 (elementary geometry)."""
    w, h, r = 40.0, 24.0, 5.0
    pts = rounded_rectangle(w, h, r)
    doc, msp = new_drawing()
    if kind == "lwpolyline":
        msp.add_lwpolyline([(x, y, 0, 0, b) for x, y, b in pts], format="xyseb", close=True)
    elif kind == "lwpolyline-clockwise":
        msp.add_lwpolyline([(x, y, 0, 0, b) for x, y, b in reversed_bulges(pts)],
                           format="xyseb", close=True)
    else:
        msp.add_polyline2d([(x, y, 0, 0, b) for x, y, b in pts], format="xyseb", close=True)
    profile = read_dxf(save(doc, tmp_path))
    assert len(circles(profile)) == len(profile.curves) == 4
    for sx in (-1, 1):
        for sy in (-1, 1):
            assert_has_circle(profile, sx * (w / 2 - r), sy * (h / 2 - r), r)
    assert_vertices_on_curves(profile)
    assert tags_along(profile, (-w / 2 + r, -h / 2), (w / 2 - r, -h / 2)) == {-1}
    assert tags_along(profile, (w / 2, -h / 2 + r), (w / 2, h / 2 - r)) == {-1}
    assert profile.area == pytest.approx(w * h - (4 - math.pi) * r * r, rel=1e-4)

    # the same vertices without bulges: a plain octagon, no curves
    doc, msp = new_drawing()
    msp.add_lwpolyline([(x, y) for x, y, _ in pts], close=True)
    flat = read_dxf(save(doc, tmp_path, "flat.dxf"))
    assert flat.is_polygon and not flat.curves


def keyway_polyline(d, b, t1, r):
    """The keyed shaft as one closed LWPOLYLINE: the shaft arc (more than half a turn,
    bulge above 1), the flanks, and floor fillets turning clockwise (negative bulges)."""
    R, a, yf, ys = keyed_geometry(d, b, t1, r)
    k = math.tan(math.pi / 8)
    sweep = 2 * math.pi - (math.atan2(ys, -a) - math.atan2(ys, a))  # (-a, ys) round to (a, ys)
    return [(a, ys, 0.0), (a, yf + r, -k), (a - r, yf, 0.0), (-a + r, yf, -k),
            (-a, yf + r, 0.0), (-a, ys, math.tan(sweep / 4))]


def test_keyway_outline_with_fillet_bulges(tmp_path):
    """The keyed shaft drawn as one bulged LWPOLYLINE gives the same three circles,
    the same area and the same J as the LINE + ARC drawing (one outline, two ways
    of writing it; DXF reference for the bulge)."""
    doc, msp = new_drawing()
    msp.add_lwpolyline([(x, y, 0, 0, bl) for x, y, bl in keyway_polyline(**KEYED)],
                       format="xyseb", close=True)
    bulged = read_dxf(save(doc, tmp_path, "bulged.dxf"))
    doc, msp = new_drawing()
    draw_keyed_shaft(msp, **KEYED)
    drawn = read_dxf(save(doc, tmp_path, "drawn.dxf"))
    R, a, yf, ys = keyed_geometry(**KEYED)
    r = KEYED["r"]
    assert len(bulged.curves) == 3
    for cx, cy, rad in [(0.0, 0.0, R), (a - r, yf + r, r), (-a + r, yf + r, r)]:
        assert_has_circle(bulged, cx, cy, rad)
    assert_vertices_on_curves(bulged)
    assert tags_along(bulged, (a - r, yf), (-a + r, yf)) == {-1}
    assert bulged.area == pytest.approx(drawn.area, rel=1e-12)
    j_bulged = analyse(bulged, mesh_size=1.0, order=2).torsion_constant
    j_drawn = analyse(drawn, mesh_size=1.0, order=2).torsion_constant
    assert j_bulged == pytest.approx(j_drawn, rel=1e-6)


# ------------------------------------------------------------------- ellipses
def test_full_ellipse_turned(tmp_path):
    """ELLIPSE with its major axis at 30 degrees: an Ellipse with the centre, the
    semi-axes |major axis| and ratio |major axis| and the direction written (DXF
    reference, ELLIPSE group codes 10, 11, 40); ezdxf's own points of the entity lie
    on it; area pi a b (closed form) within the chord tolerance's 1e-4."""
    a, ratio, ang = 12.0, 0.4, math.radians(30.0)
    doc, msp = new_drawing()
    ent = msp.add_ellipse((1.0, 2.0), major_axis=(a * math.cos(ang), a * math.sin(ang)),
                          ratio=ratio)
    path = save(doc, tmp_path)
    profile = read_dxf(path)
    assert len(profile.curves) == 1
    e = profile.curves[0]
    assert_same_ellipse(e, 1.0, 2.0, a, ratio * a, ang)
    assert_vertices_on_curves(profile)
    own = np.array([(v.x, v.y) for v in ent.vertices(np.linspace(0, 2 * math.pi, 37))])
    assert e.distance(own).max() <= ON_CURVE * profile.size
    assert profile.area == pytest.approx(math.pi * a * ratio * a, rel=1e-4)


def test_partial_ellipse_mirrored(tmp_path):
    """A half ELLIPSE with extrusion (0, 0, -1), as a mirror in CAD writes it: the
    minor axis is the extrusion crossed with the major axis (DXF reference, ELLIPSE;
    from memory), so the half from parameter 0 to pi with the major axis along +y
    bulges to +x in plan view and reaches x = cx + b at parameter pi/2.  Closed by a
    LINE (straight); area pi a b / 2 (closed form)."""
    a, b, cx, cy = 10.0, 4.0, 2.0, 3.0
    doc, msp = new_drawing()
    ent = msp.add_ellipse((cx, cy), major_axis=(0.0, a), ratio=b / a, start_param=0.0,
                          end_param=math.pi, dxfattribs={"extrusion": (0, 0, -1)})
    msp.add_line((cx, cy - a), (cx, cy + a))
    profile = read_dxf(save(doc, tmp_path))
    assert len(profile.curves) == 1
    e = profile.curves[0]
    assert_same_ellipse(e, cx, cy, a, b, math.pi / 2)
    assert_vertices_on_curves(profile)
    xy = profile.outer
    assert xy[:, 0].min() >= cx - 1e-12 and xy[:, 0].max() == pytest.approx(cx + b, abs=1e-12)
    own = np.array([(v.x, v.y) for v in ent.vertices(np.linspace(0, math.pi, 19))])
    assert e.distance(own).max() <= ON_CURVE * profile.size
    assert tags_along(profile, (cx, cy - a), (cx, cy + a)) == {-1}
    assert profile.area == pytest.approx(math.pi * a * b / 2, rel=1e-4)


def test_slender_ellipse(tmp_path):
    """An ellipse of axis ratio 0.001 (issue 11: its flattened polygon had 3 % less J).
    The starting polygon has no chord over which the tangent turns more than 10
    degrees, so the sharp ends of the long axis get several chords; every vertex is
    on the ellipse; and J (quadratic elements, mesh size 4 b) is within 1e-5 of
    pi a^3 b^3 / (a^2 + b^2) (Roark's Formulas for Stress and Strain, 7th ed.,
    Table 10.1, ellipse; measured 2e-6)."""
    a, b = 50.0, 0.05
    doc, msp = new_drawing()
    msp.add_ellipse((0, 0), major_axis=(a, 0), ratio=b / a)
    profile = read_dxf(save(doc, tmp_path))
    e = profile.curves[0]
    assert_same_ellipse(e, 0.0, 0.0, a, b, 0.0)
    assert_vertices_on_curves(profile)
    xy = profile.outer
    t = e.project(xy)
    d0, d1 = e.derivative(t), e.derivative(np.roll(t, -1))
    turn = np.abs(np.arctan2(d0[:, 0] * d1[:, 1] - d0[:, 1] * d1[:, 0],
                             np.einsum("ij,ij->i", d0, d1)))
    assert math.degrees(turn.max()) <= 10.0 + 1e-9
    assert np.abs(xy[:, 0]).max() == pytest.approx(a, rel=1e-12)  # the tips are vertices
    result = analyse(profile, mesh_size=4 * b, order=2)
    exact = math.pi * a**3 * b**3 / (a**2 + b**2)
    assert result.torsion_constant == pytest.approx(exact, rel=1e-5)


# -------------------------------------------------------------------- splines
def s_curve_section(msp):
    """A cubic S-shaped SPLINE from (0, 0) to (9, 0) over a 9 x 6 box drawn in LINEs."""
    spline = msp.add_open_spline([(0, 0), (3, 4), (6, -4), (9, 0)], degree=3)
    msp.add_line((9, 0), (9, -6))
    msp.add_line((9, -6), (0, -6))
    msp.add_line((0, -6), (0, 0))
    return spline


def signed_curvature(curve, t):
    d1, d2 = curve.derivative(t), curve.second_derivative(t)
    return (d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0]) / np.hypot(*d1.T) ** 3


def test_spline_split_at_its_inflection(tmp_path):
    """The S-shaped cubic has one inflection, at its middle (the control polygon is
    point-symmetric about (4.5, 0), elementary geometry): two SplineCurve pieces cut
    there, each curving one way only.  The area is the 9 x 6 box, the S-curve's parts
    above and below the axis cancelling by the same symmetry."""
    doc, msp = new_drawing()
    s_curve_section(msp)
    profile = read_dxf(save(doc, tmp_path))
    assert len(profile.curves) == 2
    assert all(isinstance(c, SplineCurve) for c in profile.curves)
    first, second = sorted(profile.curves, key=lambda c: c.t0)
    assert first.t1 == second.t0 == pytest.approx(0.5, abs=1e-9)
    np.testing.assert_allclose(first.point([first.t1])[0], [4.5, 0.0], rtol=0, atol=1e-9)
    for piece in (first, second):
        k = signed_curvature(piece, np.linspace(piece.t0, piece.t1, 201)[1:-1])
        assert np.all(k > 0) or np.all(k < 0)
    assert_vertices_on_curves(profile)
    assert tags_along(profile, (9, -6), (0, -6)) == {-1}
    assert profile.area == pytest.approx(54.0, rel=1e-9)
    # the solver takes the pieces: the bracket for the drawn outline overlaps the
    # bracket of the same outline sampled finely as a polygon (no outside source:
    # two descriptions of one outline)
    lo, hi = analyse(profile, mesh_size=0.5).torsion_constant_bounds
    t = np.linspace(0.0, 1.0, 4001)
    pts = np.vstack([first.point(t[t <= 0.5]), second.point(t[t > 0.5]), [[9, -6], [0, -6]]])
    plo, phi = analyse(Profile.from_loops([pts]), mesh_size=0.5).torsion_constant_bounds
    assert max(lo, plo) <= min(hi, phi)


def test_spline_cut_at_a_corner_knot(tmp_path):
    """A degree-2 SPLINE with a double interior knot is two quadratic Bezier arcs
    meeting in a corner at the middle control point (4, 0) (a knot of multiplicity
    equal to the degree leaves the curve only continuous; common practice, from
    memory).  It is cut there, and each piece's end tangent is its own: 2 (P2 - P1)
    = (4, -6) arriving and (4, 6) leaving (end derivatives of a quadratic Bezier)."""
    doc, msp = new_drawing()
    spline = msp.add_spline()
    spline.dxf.degree = 2
    spline.control_points = [(0, 0), (2, 3), (4, 0), (6, 3), (9, 0)]
    spline.knots = [0, 0, 0, 1, 1, 2, 2, 2]
    msp.add_line((9, 0), (9, -6))
    msp.add_line((9, -6), (0, -6))
    msp.add_line((0, -6), (0, 0))
    profile = read_dxf(save(doc, tmp_path))
    first, second = sorted(profile.curves, key=lambda c: c.t0)
    assert (first.t0, first.t1, second.t0, second.t1) == (0.0, 1.0, 1.0, 2.0)
    np.testing.assert_allclose(first.point([1.0])[0], [4.0, 0.0], rtol=0, atol=1e-12)
    np.testing.assert_allclose(first.derivative([1.0])[0], [4.0, -6.0], rtol=1e-9)
    np.testing.assert_allclose(second.derivative([1.0])[0], [4.0, 6.0], rtol=1e-9)
    assert_vertices_on_curves(profile)


def test_rational_spline_quarter_circle(tmp_path):
    """A rational quadratic SPLINE with control points (R, 0), (R, R), (0, R) and
    weights 1, cos 45 deg, 1 is an exact quarter circle (common practice for NURBS
    circles; from memory): every vertex and every evaluated point is at radius R.
    Closed by two LINEs: a quarter disc, area pi R^2 / 4 (closed form)."""
    R = 8.0
    doc, msp = new_drawing()
    msp.add_rational_spline([(R, 0), (R, R), (0, R)], weights=[1, math.sqrt(0.5), 1], degree=2)
    msp.add_line((0, R), (0, 0))
    msp.add_line((0, 0), (R, 0))
    profile = read_dxf(save(doc, tmp_path))
    (curve,) = profile.curves
    assert isinstance(curve, SplineCurve) and curve.weights
    pts = curve.point(np.linspace(curve.t0, curve.t1, 101))
    np.testing.assert_allclose(np.hypot(*pts.T), R, rtol=1e-12)
    xy = profile.outer
    on_arc = np.hypot(*xy.T) > R * (1 - 1e-9)
    np.testing.assert_allclose(np.hypot(*xy[on_arc].T), R, rtol=1e-12)
    assert_vertices_on_curves(profile)
    assert profile.area == pytest.approx(math.pi * R * R / 4, rel=1e-4)


def test_closed_spline_loop_is_cut(tmp_path):
    """A closed SPLINE that turns one way only is still cut into two pieces, so no
    loop is one open-parameter curve from end to end; it meshes and solves, and its
    area is between its inscribed polygon's and its control polygon's (the convex
    hull property of B-splines, common practice)."""
    ctrl = [(10, 0), (10, 10), (0, 10), (-10, 10), (-10, 0), (-10, -10), (0, -10), (10, -10)]
    doc, msp = new_drawing()
    spline = msp.add_spline()
    spline.apply_construction_tool(closed_uniform_bspline([(x, y, 0) for x, y in ctrl]))
    profile = read_dxf(save(doc, tmp_path))
    assert len(profile.curves) == 2
    assert np.all(profile.edge_curves[0] >= 0)
    assert_vertices_on_curves(profile)
    assert 0 < profile.area < 400.0
    result = analyse(profile, mesh_size=2.0)
    lo, hi = result.torsion_constant_bounds
    assert 0 < lo <= hi


def test_degree_one_spline_is_straight(tmp_path):
    """A SPLINE of degree 1 is a polyline: no curves."""
    doc, msp = new_drawing()
    msp.add_open_spline([(0, 0), (10, 0), (10, 5), (0, 5), (0, 0)], degree=1)
    profile = read_dxf(save(doc, tmp_path))
    assert profile.is_polygon
    assert profile.area == pytest.approx(50.0, rel=1e-12)


# ---------------------------------------------------------- block references
def insert_map(x, y, at, degrees, sx, sy):
    """World position of a block point: scaled, then turned, then moved to the
    insertion point (DXF reference, INSERT; from memory)."""
    c, s = math.cos(math.radians(degrees)), math.sin(math.radians(degrees))
    px, py = sx * x, sy * y
    return at[0] + c * px - s * py, at[1] + s * px + c * py


def test_insert_turned_mirrored_and_scaled(tmp_path):
    """A block of a disc with a round hole, an elliptic hole and a spline-edged hole,
    inserted turned 30 degrees, mirrored in x and scaled by 2: the circles move with
    the insertion (centres mapped, radii doubled), the ellipse's axes double and turn
    with it, the spline's control points map the same way."""
    at, rot, sx, sy = (100.0, 50.0), 30.0, -2.0, 2.0
    doc, msp = new_drawing()
    blk = doc.blocks.new("PART")
    blk.add_circle((0, 0), 10)
    blk.add_circle((3, 1), 2)
    blk.add_ellipse((-4, -2), major_axis=(3, 0), ratio=0.3)
    blk.add_open_spline([(1, -4), (2, -6), (4, -6), (5, -4)], degree=3)
    blk.add_line((5, -4), (1, -4))
    msp.add_blockref("PART", at, dxfattribs={"rotation": rot, "xscale": sx, "yscale": sy})
    profile = read_dxf(save(doc, tmp_path))
    assert len(profile.holes) == 3
    assert_has_circle(profile, *insert_map(0, 0, at, rot, sx, sy), 20.0)
    assert_has_circle(profile, *insert_map(3, 1, at, rot, sx, sy), 4.0)
    (e,) = [c for c in profile.curves if isinstance(c, Ellipse)]
    tip = insert_map(-1, -2, at, rot, sx, sy)  # end of the major axis
    ctr = insert_map(-4, -2, at, rot, sx, sy)
    assert_same_ellipse(e, *ctr, 6.0, 1.8, math.atan2(tip[1] - ctr[1], tip[0] - ctr[0]))
    splines = [c for c in profile.curves if isinstance(c, SplineCurve)]
    assert splines
    want = [insert_map(x, y, at, rot, sx, sy) for x, y in [(1, -4), (2, -6), (4, -6), (5, -4)]]
    for sp in splines:
        np.testing.assert_allclose(sp.control_points, want, rtol=0, atol=1e-9)
    assert_vertices_on_curves(profile)
    assert tags_along(profile, insert_map(5, -4, at, rot, sx, sy),
                      insert_map(1, -4, at, rot, sx, sy)) == {-1}


def test_insert_scaled_unequally(tmp_path):
    """Scaled by 2 in x and 1 in y, a block's CIRCLE is an ellipse of semi-axes 2r and
    r, and an ARC is part of one (an affine image of a circle; elementary geometry):
    ezdxf places them as ELLIPSE entities and the reader keeps Ellipses."""
    at, rot = (100.0, 50.0), 30.0
    doc, msp = new_drawing()
    blk = doc.blocks.new("PART")
    blk.add_circle((0, 0), 10)
    blk.add_arc((3, 1), 2, 0, 180)
    blk.add_line((1, 1), (5, 1))
    msp.add_blockref("PART", at, dxfattribs={"rotation": rot, "xscale": 2.0, "yscale": 1.0})
    profile = read_dxf(save(doc, tmp_path))
    ellipses = sorted((c for c in profile.curves if isinstance(c, Ellipse)), key=lambda c: -c.a)
    assert len(ellipses) == len(profile.curves) == 2
    assert_same_ellipse(ellipses[0], *at, 20.0, 10.0, math.radians(rot))
    assert_same_ellipse(ellipses[1], *insert_map(3, 1, at, rot, 2, 1), 4.0, 2.0,
                        math.radians(rot))
    assert_vertices_on_curves(profile)
    assert tags_along(profile, insert_map(1, 1, at, rot, 2, 1),
                      insert_map(5, 1, at, rot, 2, 1)) == {-1}


def test_nested_block_mirrored(tmp_path):
    """A block holding a disc and a reference to a hole block (moved to (5, 0), turned
    90 degrees), inserted mirrored in y: the hole's centre goes (1, 0) -> (5, 1) ->
    (5, -1) (both placements composed, DXF reference, INSERT; from memory)."""
    doc, msp = new_drawing()
    hole = doc.blocks.new("HOLE")
    hole.add_circle((1, 0), 1.5)
    part = doc.blocks.new("PART")
    part.add_circle((0, 0), 10)
    part.add_blockref("HOLE", (5, 0), dxfattribs={"rotation": 90})
    msp.add_blockref("PART", (0, 0), dxfattribs={"yscale": -1})
    profile = read_dxf(save(doc, tmp_path))
    assert_has_circle(profile, 0.0, 0.0, 10.0)
    assert_has_circle(profile, 5.0, -1.0, 1.5)
    assert_vertices_on_curves(profile)


# ----------------------------------------------------------------- joining
def test_joined_vertex_lands_on_the_arc(tmp_path):
    """A half disc whose LINE stops 5e-5 short of the ARC's end (inside the default
    join tolerance, 1e-5 of the 20 mm size = 2e-4): the joint is the ARC's end, on the
    circle, and the LINE's end moved by no more than the gap."""
    g = 5e-5
    doc, msp = new_drawing()
    msp.add_arc((0, 0), 10, 0, 180)
    msp.add_line((-10, 0), (10 - g, 0))
    profile = read_dxf(save(doc, tmp_path))
    assert_vertices_on_curves(profile, rtol=1e-15)
    joint = profile.outer[np.argmin(np.hypot(profile.outer[:, 0] - 10, profile.outer[:, 1]))]
    assert math.hypot(joint[0] - 10, joint[1]) <= 1e-12
    assert math.hypot(joint[0] - (10 - g), joint[1]) <= g * (1 + 1e-9)


def test_joined_vertex_between_two_arcs_is_their_crossing(tmp_path):
    """A lens of two ARCs of radius sqrt(125) about (0, -5) and (0, 5), which cross
    at (+-10, 0) (elementary geometry).  Both ARCs stop 1e-6 rad short, leaving a gap
    of about 2e-5 at each end (inside the join tolerance): the joined vertices are
    the crossing points, on both circles."""
    rad = math.sqrt(125.0)
    up = math.degrees(math.atan2(5.0, 10.0))
    eps = math.degrees(1e-6)
    doc, msp = new_drawing()
    msp.add_arc((0, -5), rad, up + eps, 180 - up - eps)  # upper arc, (10, 0) -> (-10, 0)
    msp.add_arc((0, 5), rad, 180 + up + eps, 360 - up - eps)  # lower arc
    profile = read_dxf(save(doc, tmp_path))
    assert len(profile.curves) == 2
    assert_vertices_on_curves(profile)
    for x in (-10.0, 10.0):
        d = np.hypot(profile.outer[:, 0] - x, profile.outer[:, 1])
        assert d.min() <= 1e-12 * 20


def test_joined_vertex_between_touching_arcs(tmp_path):
    """An ARC of radius 2 meeting an ARC of radius 10 where they touch (a fillet in a
    bore), but drawn 1e-6 too high so that the circles cross 2e-3 away instead of
    touching (elementary geometry): the joint is not moved to that far crossing; it
    is the end of one ARC, on its circle, and within the 1e-6 of the other."""
    delta = 1e-6
    doc, msp = new_drawing()
    msp.add_arc((0, 0), 10, 0, 90)  # (10, 0) -> (0, 10)
    msp.add_arc((0, 8 + delta), 2, 90, 180)  # (0, 10 + delta) -> (-2, 8 + delta)
    msp.add_line((-2, 8 + delta), (-2, 0))
    msp.add_line((-2, 0), (10, 0))
    profile = read_dxf(save(doc, tmp_path))
    assert len(profile.curves) == 2
    assert_vertices_on_curves(profile, rtol=delta * (1 + 1e-6) / profile.size)
    i = np.argmin(np.hypot(profile.outer[:, 0], profile.outer[:, 1] - 10))
    joint = profile.outer[i:i + 1]
    assert math.hypot(joint[0, 0], joint[0, 1] - 10) <= delta * (1 + 1e-6)  # not moved off
    dist = [c.distance(joint)[0] for c in profile.curves]
    assert min(dist) <= 1e-12 * profile.size and max(dist) <= delta * (1 + 1e-6)


def test_rounded_drawing_vertices_stay_within_the_gap(tmp_path):
    """The keyed shaft written as a CAD program rounding to a few decimals (line ends
    to 1e-4, arc angles to 1e-3 degree, so ends miss each other by up to about 2e-4,
    inside the 5e-4 join tolerance): every vertex of a curved edge is on that edge's
    curve to within the largest gap, and the joints where a LINE meets an ARC are on
    the arc."""
    R, a, yf, ys = keyed_geometry(**KEYED)
    r = KEYED["r"]

    def rounded(v, nd=4):
        return tuple(round(c, nd) for c in v)

    doc, msp = new_drawing()
    msp.add_arc((0, 0), R, round(math.degrees(math.atan2(ys, -a)), 3),
                round(math.degrees(math.atan2(ys, a)), 3))
    msp.add_line(rounded((a, ys)), rounded((a, yf + r)))
    msp.add_arc(rounded((a - r, yf + r)), r, 270, 360)
    msp.add_line(rounded((a - r, yf)), rounded((-a + r, yf)))
    msp.add_arc(rounded((-a + r, yf + r)), r, 180, 270)
    msp.add_line(rounded((-a, yf + r)), rounded((-a, ys)))
    profile = read_dxf(save(doc, tmp_path))
    gap = 2.5e-4
    assert_vertices_on_curves(profile, rtol=gap / profile.size)
    xy, tags = profile.outer, profile.edge_curves[0]
    prev = np.roll(tags, 1)
    meets = (tags >= 0) != (prev >= 0)  # a line meets an arc here
    for i in np.flatnonzero(meets):
        c = tags[i] if tags[i] >= 0 else prev[i]
        assert profile.curves[c].distance(xy[i:i + 1])[0] <= 1e-12 * profile.size


# ------------------------------------------------------------ straight only
def test_lines_only_is_a_polygon(tmp_path):
    """The same kinds of outline drawn with LINEs and bulgeless polylines only carry
    no curves."""
    doc, msp = new_drawing()
    pts = [(0, 0), (30, 0), (30, 10), (20, 10), (20, 4), (10, 4), (10, 10), (0, 10)]
    for p, q in zip(pts, pts[1:] + pts[:1], strict=True):
        msp.add_line(p, q)
    msp.add_lwpolyline([(2, 2), (6, 2), (6, 6), (2, 6)], close=True)
    msp.add_polyline3d([(24, 2, 0), (28, 2, 0), (28, 6, 0), (24, 6, 0)], close=True)
    profile = read_dxf(save(doc, tmp_path))
    assert profile.is_polygon and not profile.curves
    assert len(profile.holes) == 2


# ---------------------------------------------------------------- the rest
def test_units_scale_the_curves(tmp_path):
    """A drawing in microns ($INSUNITS 13) is read in mm: the circle's centre and
    radius are multiplied by 1e-3 with the vertices (SI prefix, NIST SP 811)."""
    doc, msp = new_drawing(13)
    msp.add_circle((2000.0, -1000.0), 5000.0)
    profile = read_dxf(save(doc, tmp_path))
    assert profile.units == "mm"
    assert same_circle(profile.curves[0], 2.0, -1.0, 5.0, 1e-12)
    assert_vertices_on_curves(profile)


def test_spline_profile_pickles(tmp_path):
    """Profiles go to worker processes in batch runs: a spline outline survives
    pickling and evaluates the same."""
    doc, msp = new_drawing()
    s_curve_section(msp)
    profile = read_dxf(save(doc, tmp_path))
    profile.curves[0].point([0.25])  # fill the evaluator cache first
    again = pickle.loads(pickle.dumps(profile))
    t = np.linspace(0.0, 0.5, 7)
    np.testing.assert_array_equal(again.curves[0].point(t), profile.curves[0].point(t))
    assert again.curves == profile.curves

