"""Parametric shapes carry their exact curves: tags, vertices on curves, no false corners.

Every generator returns an outline whose curved edges are tagged with the exact
curve they were flattened from (circles, ellipse, involute flanks, fillets),
with every vertex of a curved edge on its curve; compositions keep the curves of
their parts and put crossing points on them.  A sharp re-entrant corner can only
sit where two different pieces meet (:func:`soapfilm.geometry.edges.junction_corners`).

Every numeric check names its outside source beside it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from shapely.geometry import box

from soapfilm.errors import InputError
from soapfilm.geometry.curves import Circle, Involute
from soapfilm.geometry.edges import junction_corners
from soapfilm.profile import Profile
from soapfilm.readers.shapefile import load_shapefile
from soapfilm.shapes import (
    angle,
    box_tube,
    channel,
    difference,
    ellipse,
    flatted_shaft,
    i_section,
    involute_spline,
    keyed_shaft,
    placed,
    rectangle,
    regular_polygon,
    round_bar,
    straight_spline,
    tee,
    tube,
    union,
)
from soapfilm.shapes._geom import round_convex, to_profile
from soapfilm.shapes.shafts import parallel_key_table
from soapfilm.shapes.splines import inv, iso14_table

# ---------------------------------------------------------------- helpers


def edge_lengths(xy: np.ndarray) -> np.ndarray:
    return np.hypot(*(np.roll(xy, -1, axis=0) - xy).T)


def curved_fraction(profile, loop: int | None = None) -> float:
    """Share of the boundary length (all loops, or one) on tagged edges."""
    pairs = list(zip(profile.loops, profile.edge_curves, strict=True))
    if loop is not None:
        pairs = [pairs[loop]]
    total = sum(edge_lengths(xy).sum() for xy, _ in pairs)
    return float(sum(edge_lengths(xy)[ec >= 0].sum() for xy, ec in pairs) / total)


def worst_off_curve(profile) -> float:
    """Largest distance of a curved edge's end vertex from its curve, relative to the size."""
    worst = 0.0
    for xy, ec in zip(profile.loops, profile.edge_curves, strict=True):
        for c in np.unique(ec[ec >= 0]):
            e = np.flatnonzero(ec == c)
            ends = np.unique(np.concatenate([e, (e + 1) % len(xy)]))
            worst = max(worst, float(profile.curves[c].distance(xy[ends]).max()))
    return worst / profile.size


def shortest_edge(profile) -> float:
    return min(float(edge_lengths(xy).min()) for xy in profile.loops) / profile.size


def assert_clean(profile, corners: int = 0, angle_deg: float | None = None):
    """No sharp re-entrant corner but the expected ones, no sliver edge, vertices on curves.

    Slivers: the fillet notches this replaced had edges of 4.6e-6 of the size; the
    flattening's own shortest edges in the standard sizes are 4.3e-5 of it (measured).
    """
    found = junction_corners(profile)
    assert len(found) == corners, (profile.name, found[:6])
    if angle_deg is not None:
        np.testing.assert_allclose([a for _, _, a in found], angle_deg, rtol=0, atol=1e-6)
    assert shortest_edge(profile) > 1e-5, profile.name
    assert worst_off_curve(profile) < 1e-9, profile.name


# ---------------------------------------------------------------- involute conventions


@pytest.mark.parametrize("alpha", [30.0, 37.5, 45.0])
@pytest.mark.parametrize("sense", [1, -1])
def test_iso_flank_relation_lies_on_the_involute_curve(alpha, sense):
    """Points from the ISO 4156-1 flank relation (polar angle psi + inv(alpha) - inv(a_r) from
    the tooth centre line at radius r, a_r = arccos(r_b / r), inv(a) = tan a - a; involute of
    the base circle r_b = (m z / 2) cos(alpha)) lie on the Involute curve that starts on the
    base circle at that angle for r = r_b and unwinds away from the tooth centre line:
    counter-clockwise (sense +1) on the clockwise flank, clockwise on the other.  Relative
    distance <= 1e-12 (both are exact; the gap is rounding)."""
    m, z = 2.0, 20
    a = math.radians(alpha)
    rb = m * z / 2 * math.cos(a)
    psi = math.pi / (2 * z)
    r = np.linspace(rb, m * (z + 1) / 2, 400)
    th = psi + inv(a) - inv(np.arccos(np.clip(rb / r, -1, 1)))
    polar = math.pi / 2 - sense * th
    pts = np.column_stack([r * np.cos(polar), r * np.sin(polar)])
    curve = Involute(0.0, 0.0, rb, math.pi / 2 - sense * (psi + float(inv(a))), sense)
    assert curve.distance(pts).max() <= 1e-12 * m * z


@pytest.mark.parametrize("alpha, root", [(30.0, "flat"), (30.0, "fillet"), (37.5, "fillet"),
                                         (45.0, "fillet")])
def test_spline_flank_vertices_lie_on_their_involute(alpha, root):
    """The flattened flank vertices of the first tooth (centre line along +y) lie on the
    involutes written down from the ISO 4156-1 relations above (1e-12 of the size), and the
    profile tags those edges with the same curves: base radius, start angle, sense."""
    m, z = 2.0, 20
    p = involute_spline(m, z, alpha, root=root)
    a = math.radians(alpha)
    rb = m * z / 2 * math.cos(a)
    start = math.pi / 2 - (math.pi / (2 * z) + float(inv(a)))
    right, left = Involute(0.0, 0.0, rb, start, 1), Involute(0.0, 0.0, rb, math.pi - start, -1)
    xy, ec = p.outer, p.edge_curves[0]
    for want in (right, left):
        tagged = [c for c in np.unique(ec[ec >= 0]) if isinstance(p.curves[c], Involute)
                  and p.curves[c].sense == want.sense
                  and abs(math.remainder(p.curves[c].start - want.start, 2 * math.pi)) < 1e-12]
        assert len(tagged) == 1
        assert p.curves[tagged[0]].rb == pytest.approx(rb, rel=1e-14)
        e = np.flatnonzero(ec == tagged[0])
        assert len(e) > 10
        pts = xy[np.unique(np.concatenate([e, e + 1]))]
        assert want.distance(pts).max() <= 1e-12 * p.size


# ---------------------------------------------------------------- vertices on curves

CASES = {
    "round": lambda: round_bar(40),
    "tube": lambda: tube(60, 5),
    "ellipse": lambda: ellipse(40, 25),
    "rectangle r": lambda: rectangle(60, 12, 3),
    "stadium": lambda: rectangle(60, 12, 6),
    "box tube": lambda: box_tube(80, 60, 5, 10),
    "hex r": lambda: regular_polygon(6, 19, 1.5),
    "keyed DIN 40": lambda: keyed_shaft(40),
    "keyed 3 ways": lambda: keyed_shaft(40, keyways=3),
    "keyed round floor": lambda: keyed_shaft(40, key_width=8, key_depth=8, floor_radius=4),
    "D shaft": lambda: flatted_shaft(20, flat_depth=1.5),
    "double D": lambda: flatted_shaft(20, flats=2, across_flats=16),
    "ISO 14 fillet": lambda: straight_spline(series="light", minor_diameter=32, root_fillet=0.3),
    "involute": lambda: involute_spline(2, 20, 30, root="fillet"),
    "involute radial": lambda: involute_spline(1, 6, 30, root="fillet"),
    "I r": lambda: i_section(200, 100, 5.6, 8.5, 12),
    "channel r": lambda: channel(100, 50, 6, 8.5, 5),
    "angle r": lambda: angle(50, 50, 5, 5),
    "tee r": lambda: tee(60, 60, 7, 7, 3),
    "hollow spline": lambda: difference(involute_spline(2, 20, 30), round_bar(12)),
    "placed": lambda: placed(keyed_shaft(40), dx=7, dy=-3, rotate=33),
    "two rounds": lambda: union(round_bar(20), placed(round_bar(20), dx=12)),
    "notched D": lambda: difference(flatted_shaft(40, flat_depth=3),
                                    placed(rectangle(8, 10, 1), dy=17)),
}


@pytest.mark.parametrize("name", list(CASES))
def test_curved_edges_have_their_vertices_on_the_curve(name):
    """Both end vertices of every curved edge lie on its curve within 1e-9 of the size
    (the mesher puts new nodes on the curve; a vertex off it would leave a step)."""
    p = CASES[name]()
    assert not p.is_polygon
    assert worst_off_curve(p) < 1e-9


# ---------------------------------------------------------------- how much is curved


def test_curved_share_of_round_outlines():
    """Round bar, tube, ellipse: the whole boundary is curved (100 %); a rectangle, box tube
    or polygon without radii is a polygon (0 %)."""
    for p in (round_bar(40), tube(60, 5), ellipse(40, 25)):
        assert curved_fraction(p) == 1.0
    for p in (rectangle(60, 12), box_tube(80, 60, 5), regular_polygon(6, 19)):
        assert p.is_polygon


def test_curved_share_of_rounded_rectangles_and_polygons():
    """Rounded rectangle: arcs 2 pi r of perimeter 2 (w + h) - 8 r + 2 pi r; box tube per
    loop the same with its own radius; regular n-gon across flats s with corner radius r:
    arcs 2 pi r, straight n (s tan(pi/n) - 2 r tan(pi/n)) (elementary geometry; the
    polygon's chords are shorter than the arcs by under 1e-5 relative, hence rtol 1e-4)."""
    def share(w, h, r):
        return 2 * math.pi * r / (2 * (w + h) - 8 * r + 2 * math.pi * r)
    assert curved_fraction(rectangle(60, 12, 3)) == pytest.approx(share(60, 12, 3), rel=1e-4)
    b = box_tube(80, 60, 5, 10)
    assert curved_fraction(b, 0) == pytest.approx(share(80, 60, 10), rel=1e-4)
    assert curved_fraction(b, 1) == pytest.approx(share(70, 50, 5), rel=1e-4)
    n, s, r = 6, 19.0, 1.5
    tan = math.tan(math.pi / n)
    expect = 2 * math.pi * r / (n * (s * tan - 2 * r * tan) + 2 * math.pi * r)
    assert curved_fraction(regular_polygon(n, s, r)) == pytest.approx(expect, rel=1e-4)


def test_keyed_shaft_arcs_and_fillets_curved_keyway_straight():
    """DIN 6885-1 40 mm shaft (b = 12, t1 = 5, r = 0.25, table values): the shaft arc
    R (2 pi - 2 asin(b / 2R)) and the two floor fillets (quarter circles) are curved; the
    keyway sides (down to the fillets) and the floor between them are straight (elementary
    geometry; rtol 1e-4 for chords against arcs).  Every edge on the side lines x = +-b/2
    or the floor y = R - t1 is untagged, every other edge tagged."""
    R, b, t1, rf = 20.0, 12.0, 5.0, 0.25
    p = keyed_shaft(2 * R)
    y_edge = math.sqrt(R * R - (b / 2) ** 2)
    curved = R * (2 * math.pi - 2 * math.asin(b / (2 * R))) + math.pi * rf
    straight = 2 * (y_edge - (R - t1) - rf) + (b - 2 * rf)
    assert curved_fraction(p) == pytest.approx(curved / (curved + straight), rel=1e-4)
    xy, ec = p.outer, p.edge_curves[0]
    nxt = np.roll(xy, -1, axis=0)
    on_side = (np.abs(np.abs(xy[:, 0]) - b / 2) < 1e-9) & (np.abs(np.abs(nxt[:, 0]) - b / 2) < 1e-9)
    on_floor = (np.abs(xy[:, 1] - (R - t1)) < 1e-9) & (np.abs(nxt[:, 1] - (R - t1)) < 1e-9)
    assert on_side.sum() == 2 and on_floor.sum() == 1
    np.testing.assert_array_equal(ec < 0, on_side | on_floor)
    assert sorted(type(c).__name__ for c in p.curves) == ["Circle"] * 3


def test_flatted_shaft_flat_straight():
    """D shaft R = 20, flat depth h = 3: arc R (2 pi - 2 acos((R - h)/R)), flat
    2 sqrt(R^2 - (R - h)^2) (circular segment geometry)."""
    R, h = 20.0, 3.0
    arc = R * (2 * math.pi - 2 * math.acos((R - h) / R))
    flat = 2 * math.sqrt(R * R - (R - h) ** 2)
    p = flatted_shaft(2 * R, flat_depth=h)
    assert curved_fraction(p) == pytest.approx(arc / (arc + flat), rel=1e-4)


def test_straight_spline_only_flanks_straight():
    """ISO 14 light 8 x 32 x 36 x 6 (ISO 14 light series) with 0.3 root fillets: per spline
    the major arc 2 R asin(B / 2R), two flanks from the fillet up to the major circle, two
    fillets turning by phi_c (polar angle of the fillet centre (B/2 + rf, y_c),
    y_c = sqrt((r + rf)^2 - (B/2 + rf)^2): tangent to the flank and, from outside, to the
    minor circle) and the root arcs r (phi_c - (pi/2 - pi/N)) each side (elementary
    geometry)."""
    N, r, R, hb, rf = 8, 16.0, 18.0, 3.0, 0.3
    p = straight_spline(series="light", minor_diameter=32, root_fillet=rf)
    yc = math.sqrt((r + rf) ** 2 - (hb + rf) ** 2)
    phi_c = math.atan2(yc, hb + rf)
    flank = math.sqrt(R * R - hb * hb) - yc
    pitch = 2 * (r * (phi_c - (math.pi / 2 - math.pi / N)) + rf * phi_c + flank) \
        + 2 * R * math.asin(hb / R)
    assert curved_fraction(p) == pytest.approx(1 - 2 * flank / pitch, rel=1e-4)
    assert len(p.curves) == 2 + 2 * N  # minor and major circles, two fillets per space


def test_involute_spline_curved_all_round_or_but_the_radial_flank_part():
    """m 2, z 20, 30 deg fillet root: root diameter m (z - 1.8) = 36.4 > base diameter
    m z cos 30 = 34.6 (ISO 4156-1 relations): the outline is all curves.  m 1, z 6: root
    radius 2.1 < base radius 2.598, so each flank runs radially from the fillet's tangent
    point, at radius sqrt((r_r + r_f)^2 - r_f^2) (tangent from the fillet centre at radius
    r_r + r_f), up to the base circle: 2 z straight pieces of that length, nothing else
    straight (elementary geometry)."""
    assert curved_fraction(involute_spline(2, 20, 30, root="fillet")) == 1.0
    m, z = 1.0, 6
    p = involute_spline(m, z, 30, root="fillet")
    rr, rf, rb = m * (z - 1.8) / 2, 0.4 * m, m * z / 2 * math.cos(math.radians(30))
    radial = rb - math.sqrt((rr + rf) ** 2 - rf * rf)
    straight = edge_lengths(p.outer)[p.edge_curves[0] < 0]
    assert len(straight) == 2 * z
    np.testing.assert_allclose(straight, radial, rtol=1e-9)


def test_open_section_root_fillets_curved():
    """I 200 x 100 x 5.6/8.5 with r = 12: perimeter 4 b - 2 t_w + 2 h with each of the four
    root corners' legs 2 r replaced by a quarter arc (pi/2) r (elementary geometry)."""
    h, b, tw, r = 200.0, 100.0, 5.6, 12.0
    p = i_section(h, b, tw, 8.5, r)
    arcs = 4 * math.pi / 2 * r
    assert curved_fraction(p) == pytest.approx(arcs / (4 * b - 2 * tw + 2 * h - 8 * r + arcs),
                                               rel=1e-4)


def test_to_profile_finds_offset_fillets_of_given_radii():
    """A rectangle rounded by offsetting (centres unknown to the caller): given the radius,
    the four corner arcs are found and tagged, centres at (+-(w/2 - r), +-(h/2 - r))
    (elementary geometry)."""
    w, h, r = 60.0, 12.0, 3.0
    chord = 1e-4
    geom = round_convex(box(-w / 2, -h / 2, w / 2, h / 2), r, chord)
    p = to_profile(geom, "rounded", radii=[r], sagitta=chord)
    assert len(p.curves) == 4 and all(isinstance(c, Circle) for c in p.curves)
    centres = sorted((round(c.cx, 9), round(c.cy, 9)) for c in p.curves)
    assert centres == sorted((sx * (w / 2 - r), sy * (h / 2 - r)) for sx in (1, -1)
                             for sy in (1, -1))
    assert worst_off_curve(p) < 1e-9


# ---------------------------------------------------------------- composition


def test_composition_keeps_curves_and_crossings_lie_on_both():
    """Union of two round bars of radius R, centres D apart: all boundary on the two circles;
    the two crossing points lie on both (1e-12 of the size), at y = +-sqrt(R^2 - D^2/4), with
    interior angle 180 + arccos((2 R^2 - D^2) / (2 R^2)) (the angle between the radii to a
    crossing point; elementary geometry)."""
    R, D = 10.0, 12.0
    p = union(round_bar(2 * R), placed(round_bar(2 * R), dx=D))
    assert curved_fraction(p) == 1.0
    found = junction_corners(p)
    assert len(found) == 2
    expect = 180 + math.degrees(math.acos((2 * R * R - D * D) / (2 * R * R)))
    np.testing.assert_allclose([a for _, _, a in found], expect, rtol=0, atol=1e-9)
    pts = p.outer[[i for _, i, _ in found]]
    np.testing.assert_allclose(np.sort(pts[:, 1]), [-math.sqrt(R * R - D * D / 4),
                                                    math.sqrt(R * R - D * D / 4)], atol=1e-12)
    for c in p.curves:
        assert c.distance(pts).max() < 1e-12 * p.size


def test_placed_and_cut_parts_move_their_curves():
    """A hollow involute spline (bore 12) turned by 33 deg and moved: still all curved (the
    bore wholly), vertices on the moved curves, no false corner."""
    p = placed(difference(involute_spline(2, 20, 30), round_bar(12)), dx=5, dy=-3, rotate=33)
    assert curved_fraction(p, 0) == 1.0 and curved_fraction(p, 1) == 1.0
    assert worst_off_curve(p) < 1e-9
    assert_clean(p)


def test_shape_file_parts_keep_their_curves(tmp_path):
    """[[part]] add and cut: a round bar 40 with a bore 10 off centre and a notch cut in the
    rim by a turned rectangle 8 x 10 with corner radius 1: the shaft circle, the bore and
    the rectangle's two corner arcs inside the bar are the curves (corner centres at
    (+-(4 - 1), -(5 - 1)) from the rectangle's centre, turned by 30 deg, moved to
    (-10, 17.3): elementary geometry), vertices on them; the notch meets the rim at convex
    corners, so no re-entrant corner."""
    f = tmp_path / "parts.toml"
    f.write_text('units = "mm"\n'
                 '[[part]]\nkind = "round"\ndiameter = 40\n'
                 '[[part]]\naction = "cut"\nkind = "round"\ndiameter = 10\nposition = [3, 0]\n'
                 '[[part]]\naction = "cut"\nkind = "rectangle"\nwidth = 8\nheight = 10\n'
                 'corner_radius = 1\nrotate = 30\nposition = [-10, 17.3]\n')
    p = load_shapefile(f).profile
    assert p.name == "parts"
    assert curved_fraction(p, 1) == 1.0  # the bore
    c30, s30 = math.cos(math.radians(30)), math.sin(math.radians(30))
    # corner centres of the lower side (local (+-3, -4)), turned by 30 deg and moved
    inner = [(-10 + x * c30 + 4 * s30, 17.3 + x * s30 - 4 * c30) for x in (3.0, -3.0)]
    want = [(0.0, 0.0, 20.0), (3.0, 0.0, 5.0)] + [(x, y, 1.0) for x, y in inner]
    got = [(c.cx, c.cy, c.r) for c in p.curves]
    assert len(got) == 4
    for w in want:
        assert min(math.dist(w, g) for g in got) < 1e-9
    assert worst_off_curve(p) < 1e-9
    assert_clean(p)


# ---------------------------------------------------------------- no false corners


def test_issue_case_involute_fillet_root_has_no_notches():
    """m 2, z 20, 30 deg, fillet root: the offset-made fillets left 21 notches of 0.2 micron
    (edges 4.6e-6 of the size) that counted as 270 deg corners; the exact fillet (tangent to
    the root circle and to the involute) leaves none."""
    assert_clean(involute_spline(2, 20, 30, root="fillet"))


def test_keyed_shafts_every_din6885_row():
    """Every row of the shipped DIN 6885-1 table, at the top of its range and in the middle,
    one and two keyways, floor radius r min (default) and r max: no sharp corner.  Sharp
    floors (r = 0): two 270 deg corners per keyway (right angles into the material)."""
    built = 0
    for row in parallel_key_table():
        for d in (row.d_upto, 0.5 * (row.d_over + row.d_upto)):
            for n in (1, 2):
                assert_clean(keyed_shaft(d, keyways=n))
                assert_clean(keyed_shaft(d, keyways=n, floor_radius=row.r_max))
                assert_clean(keyed_shaft(d, keyways=n, floor_radius=0), 2 * n, 270.0)
                built += 3
    assert built == 3 * 2 * 2 * len(parallel_key_table())
    assert_clean(keyed_shaft(100, floor_radius=0.2))


def test_straight_splines_every_iso14_row():
    """Every shipped ISO 14 light and medium size, root fillets 0.2 and 0.4 mm: no sharp
    corner; sharp roots: 2 N corners of interior angle 180 + arccos(B / d) (the minor
    circle meets the flank x = B/2 at polar angle arccos(B/d); elementary geometry)."""
    for s in iso14_table():
        for rf in (0.2, 0.4):
            assert_clean(straight_spline(series=s.series, minor_diameter=s.minor,
                                         root_fillet=rf))
        sharp = straight_spline(series=s.series, minor_diameter=s.minor)
        assert_clean(sharp, 2 * s.splines, 180 + math.degrees(math.acos(s.width / s.minor)))


MODULES = (0.5, 0.6, 0.8, 1.0, 1.25, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0)


@pytest.mark.parametrize("alpha, root", [(30.0, "flat"), (30.0, "fillet"), (37.5, "fillet"),
                                         (45.0, "fillet")])
def test_involute_splines_every_tooth_count(alpha, root):
    """Teeth 6 to 40 (every count, the modules 0.5 to 5 taken in turn: the outline scales
    with m), ISO 4156-1 default diameters and root fillets: no sharp corner.  The same with
    root_fillet 0: two corners per tooth space, where the root circle meets the flank."""
    for z in range(6, 41):
        m = MODULES[z % len(MODULES)]
        assert_clean(involute_spline(m, z, alpha, root=root))
    for z in (6, 13, 40):
        assert_clean(involute_spline(MODULES[z % len(MODULES)], z, alpha, root=root,
                                     root_fillet=0), 2 * z)


def test_involute_splines_every_module():
    """Modules 0.5 to 5 at 6, 20 and 40 teeth, every pressure angle and root: the outline is
    the module-1 outline scaled by m (every ISO 4156-1 dimension is a multiple of m, and so
    is the default chord), vertex for vertex and tag for tag, and that one is clean."""
    for alpha, root in ((30.0, "flat"), (30.0, "fillet"), (37.5, "fillet"), (45.0, "fillet")):
        for z in (6, 20, 40):
            unit = involute_spline(1.0, z, alpha, root=root)
            assert_clean(unit)
            for m in MODULES:
                p = involute_spline(m, z, alpha, root=root)
                assert len(p.outer) == len(unit.outer)
                np.testing.assert_allclose(p.outer, m * unit.outer, rtol=0, atol=1e-12 * p.size)
                np.testing.assert_array_equal(p.edge_curves[0], unit.edge_curves[0])


def test_rectangles_boxes_polygons():
    """Convex outlines have no re-entrant corner with or without radii; a box tube whose
    inside corners are sharp has four of 270 deg on the hole (right angles)."""
    for r in (0.0, 1.0, 6.0):
        assert_clean(rectangle(60, 12, r))
    for n in range(3, 13):
        for r in (0.0, 1.0):
            assert_clean(regular_polygon(n, 19, r))
    assert_clean(box_tube(80, 60, 5), 4, 270.0)
    assert_clean(box_tube(80, 60, 5, 3), 4, 270.0)      # inside radius max(3 - 5, 0) = 0
    assert_clean(box_tube(80, 60, 5, 10))               # inside radius 5
    assert_clean(box_tube(80, 60, 5, 30))               # stadium tube, inside radius 25


@pytest.mark.parametrize("make, sharp", [
    (lambda r: i_section(200, 100, 5.6, 8.5, r), 4),
    (lambda r: channel(100, 50, 6, 8.5, r), 2),
    (lambda r: angle(50, 50, 5, r), 1),
    (lambda r: tee(60, 60, 7, 7, r), 2),
])
def test_open_sections_root_radii(make, sharp):
    """Root fillets remove the web-to-flange corners; without them each is a right angle into
    the material (270 deg)."""
    assert_clean(make(0.0), sharp, 270.0)
    for r in (0.5, 3.0):
        assert_clean(make(r))


def test_junction_corners_only_at_junctions():
    """A coarse flattening of a concave fillet turns by more than 10 deg per vertex (100 mm
    shaft, 0.2 mm floor fillet, chord 0.01: 2 segments per quarter), which a polygon test
    would flag; inside one curve it is no corner.  A plain L-shaped polygon has one of
    270 deg (right angle into the material)."""
    p = keyed_shaft(100, floor_radius=0.2, chord=0.01)
    turns = []
    for xy in p.loops:
        d_in, d_out = xy - np.roll(xy, 1, axis=0), np.roll(xy, -1, axis=0) - xy
        turns.append(np.degrees(np.arctan2(d_in[:, 0] * d_out[:, 1] - d_in[:, 1] * d_out[:, 0],
                                           np.einsum("ij,ij->i", d_in, d_out))))
    assert np.min(np.concatenate(turns)) < -10  # right turns of over 10 deg
    assert junction_corners(p) == []
    ell = Profile.from_loops([[(0, 0), (2, 0), (2, 1), (1, 1), (1, 2), (0, 2)]])
    assert junction_corners(ell) == [(0, 3, pytest.approx(270.0, abs=1e-9))]


def test_impossible_fillet_on_a_short_flank_is_refused():
    """A root fillet that cannot touch the flank below the tip circle is an input error."""
    with pytest.raises(InputError, match="root_fillet"):
        involute_spline(2, 20, 30, root_fillet=2.5)
