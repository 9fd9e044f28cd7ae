"""DXF drawings: flattening, joining, units and every fault, against outside references.

Every drawing is made in the test with ezdxf.  Numeric checks compare with
closed forms named beside them; fault checks run the command line in-process
and look for exit status 2 and a one-line message naming the entities.
"""

from __future__ import annotations

import math

import ezdxf
import numpy as np
import pytest

from soapfilm import analyse, read_section
from soapfilm.cli import main
from soapfilm.errors import InputError
from soapfilm.readers.dxf import read_dxf

MM, INCH = 4, 1  # $INSUNITS codes (DXF reference, HEADER section)


def new_drawing(units: int = MM):
    doc = ezdxf.new("R2010")
    doc.units = units
    return doc, doc.modelspace()


def save(doc, tmp_path, name="section.dxf"):
    path = tmp_path / name
    doc.saveas(path)
    return path


# ------------------------------------------------------------ reference series
def rectangle_j_series(b: float, t: float, terms: int = 50) -> float:
    """Saint-Venant's series for the torsion constant of a b x t rectangle, b >= t.

    Timoshenko & Goodier, Theory of Elasticity, 3rd ed., sec. 109 (full side
    lengths b and t):  J = (b t^3 / 3) [1 - (192 / pi^5) (t / b)
    sum_{n = 1, 3, 5, ...} tanh(n pi b / 2 t) / n^5].
    """
    n = np.arange(1, 2 * terms, 2, dtype=float)
    s = np.sum(np.tanh(n * math.pi * b / (2.0 * t)) / n**5)
    return b * t**3 / 3.0 * (1.0 - 192.0 / math.pi**5 * (t / b) * s)


def assert_bracket_within(result, exact: float, rtol: float) -> None:
    """Both guaranteed bounds lie within rtol of the exact value.

    J_lo <= J(read polygon) <= J_hi holds for the polygon the reader built
    (see soapfilm.fem.torsion), so this bounds the geometric error of the
    flattening by rtol.
    """
    lo, hi = result.torsion_constant_bounds
    assert lo <= hi
    assert lo >= exact * (1.0 - rtol), f"J_lo {lo} vs exact {exact}: {(lo - exact) / exact:.2e}"
    assert hi <= exact * (1.0 + rtol), f"J_hi {hi} vs exact {exact}: {(hi - exact) / exact:.2e}"


# ---------------------------------------------------------- the keyed shaft
KEYED = dict(d=50.0, b=14.0, t1=5.5, r=0.4)
"""Shaft 50 mm with a 14 mm keyway, depth 5.5 mm from the top of the circle
on the keyway centreline, floor fillets 0.4 mm (proportions of DIN 6885-1,
44-50 mm row)."""


def keyed_geometry(d, b, t1, r):
    R, a = d / 2.0, b / 2.0
    return R, a, R - t1, math.sqrt(R * R - a * a)


def draw_keyed_shaft(msp, d, b, t1, r, scale=1.0):
    """The keyed shaft as LINE and ARC entities (keyway at the top)."""
    R, a, yf, ys = (v * scale for v in keyed_geometry(d, b, t1, r))
    r = r * scale
    ents = [
        msp.add_arc((0, 0), R, math.degrees(math.atan2(ys, -a)), math.degrees(math.atan2(ys, a))),
        msp.add_line((a, ys), (a, yf + r)),
        msp.add_arc((a - r, yf + r), r, 270, 360),
        msp.add_line((a - r, yf), (-a + r, yf)),
        msp.add_arc((-a + r, yf + r), r, 180, 270),
        msp.add_line((-a, yf + r), (-a, ys)),
    ]
    return ents


def keyed_shaft_points(d, b, t1, r, step_deg=0.05):
    """The same outline as a point list, arcs sampled every step_deg degrees."""
    R, a, yf, ys = keyed_geometry(d, b, t1, r)

    def arc(cx, cy, rad, a0, a1):
        n = max(2, math.ceil(abs(math.degrees(a1 - a0)) / step_deg))
        t = np.linspace(a0, a1, n + 1)[:-1]
        return np.column_stack([cx + rad * np.cos(t), cy + rad * np.sin(t)])

    return np.vstack([
        arc(0, 0, R, math.atan2(ys, -a), math.atan2(ys, a) + 2 * math.pi),
        [[a, ys]],
        arc(a - r, yf + r, r, 0.0, -math.pi / 2),
        arc(-a + r, yf + r, r, -math.pi / 2, -math.pi),
        [[-a, yf + r]],
    ])


# ------------------------------------------------------------------ geometry
def test_circle_entity_against_polar_moment(tmp_path):
    """CIRCLE: J = pi d^4 / 32 (closed form; Timoshenko & Goodier, Theory of
    Elasticity, 3rd ed., sec. 104, or any strength-of-materials text).

    The circle reaches the solver exact, so the guaranteed bounds (linear
    elements) are for the drawn circle: they contain its J, and at mesh size
    d/160 both lie within 2e-4 of it (measured -7.4e-5 and +1.0e-4).
    """
    d = 20.0
    doc, msp = new_drawing()
    msp.add_circle((3.0, -2.0), d / 2)
    profile = read_dxf(save(doc, tmp_path))
    assert profile.units == "mm"
    result = analyse(profile, mesh_size=d / 160)
    exact = math.pi * d**4 / 32
    lo, hi = result.torsion_constant_bounds
    assert lo <= exact <= hi
    assert_bracket_within(result, exact, rtol=2e-4)


def test_hollow_tube_two_circles(tmp_path):
    """Two CIRCLE entities: J = pi (D^4 - d^4) / 32 (closed form, Timoshenko &
    Goodier, 3rd ed., sec. 104 applied to the hollow circle); the inner
    circle becomes a hole.  Both circles reach the solver exact: the bounds
    (linear elements, mesh size (D - d) / 40) contain the closed form, within
    5e-4 (measured -2.5e-4 and +2.8e-4)."""
    D, d = 30.0, 20.0
    doc, msp = new_drawing()
    msp.add_circle((0, 0), d / 2)  # hole drawn first: order must not matter
    msp.add_circle((0, 0), D / 2)
    profile = read_dxf(save(doc, tmp_path))
    assert len(profile.holes) == 1
    result = analyse(profile, mesh_size=(D - d) / 40)
    exact = math.pi * (D**4 - d**4) / 32
    lo, hi = result.torsion_constant_bounds
    assert lo <= exact <= hi
    assert_bracket_within(result, exact, rtol=5e-4)


def test_rectangle_lwpolyline_against_saint_venant_series(tmp_path):
    """Closed LWPOLYLINE rectangle 30 x 10: the guaranteed bracket contains
    Saint-Venant's series value (Timoshenko & Goodier, 3rd ed., sec. 109) and
    its midpoint is within 1e-3 of it (coarse mesh, discretisation only)."""
    b, t = 30.0, 10.0
    doc, msp = new_drawing()
    msp.add_lwpolyline([(0, 0), (b, 0), (b, t), (0, t)], close=True)
    result = analyse(read_dxf(save(doc, tmp_path)), mesh_size=t / 20)
    exact = rectangle_j_series(b, t)
    lo, hi = result.torsion_constant_bounds
    assert lo <= exact <= hi
    assert result.torsion_constant == pytest.approx(exact, rel=1e-3)


@pytest.mark.parametrize("kind", ["lwpolyline", "lwpolyline-clockwise", "polyline2d"])
def test_bulged_stadium_area(tmp_path, kind):
    """A stadium (slot) drawn with two bulge-1 segments: area 2 r L + pi r^2
    (rectangle plus two half discs, elementary geometry).  The chord sagitta
    r - sqrt(r^2 - (c/2)^2) of every flattened chord is at most the chord
    tolerance, and every vertex lies on its semicircle."""
    L, r = 40.0, 6.0
    pts = [(-L / 2, -r, 0, 0, 0.0), (L / 2, -r, 0, 0, 1.0), (L / 2, r, 0, 0, 0.0),
           (-L / 2, r, 0, 0, 1.0)]
    doc, msp = new_drawing()
    if kind == "lwpolyline":
        msp.add_lwpolyline(pts, format="xyseb", close=True)
    elif kind == "lwpolyline-clockwise":  # reversed order: bulges -1 on the other segments
        rev = [(-L / 2, r, 0, 0, 0.0), (L / 2, r, 0, 0, -1.0), (L / 2, -r, 0, 0, 0.0),
               (-L / 2, -r, 0, 0, -1.0)]
        msp.add_lwpolyline(rev, format="xyseb", close=True)
    else:
        msp.add_polyline2d(pts, format="xyseb", close=True)
    chord = 1e-3
    profile = read_dxf(save(doc, tmp_path), chord_tolerance=chord)
    assert profile.area == pytest.approx(2 * r * L + math.pi * r**2, rel=1e-4)
    xy = profile.outer
    on_cap = np.abs(xy[:, 0]) > L / 2 + 1e-9
    cx = np.sign(xy[on_cap, 0]) * L / 2
    radius = np.hypot(xy[on_cap, 0] - cx, xy[on_cap, 1])
    np.testing.assert_allclose(radius, r, rtol=0, atol=1e-12)
    nxt = np.roll(xy, -1, axis=0)
    both = on_cap & (np.abs(nxt[:, 0]) > L / 2 - 1e-9) & (np.sign(nxt[:, 0]) == np.sign(xy[:, 0]))
    c = np.hypot(*(nxt[both] - xy[both]).T)
    sagitta = r - np.sqrt(r * r - (c / 2) ** 2)
    assert sagitta.max() <= chord * (1 + 1e-9)
    assert sagitta.max() >= 0.25 * chord  # not needlessly fine either


def test_two_vertex_bulged_circle(tmp_path):
    """A closed LWPOLYLINE of two vertices with bulge 1 on both segments is a
    full circle, as CAD programs write a solid donut: area pi r^2 (closed
    form), within the chord-tolerance error (about 1e-5 here)."""
    r = 7.0
    doc, msp = new_drawing()
    msp.add_lwpolyline([(r, 0, 0, 0, 1.0), (-r, 0, 0, 0, 1.0)], format="xyseb", close=True)
    profile = read_dxf(save(doc, tmp_path))
    assert profile.area == pytest.approx(math.pi * r * r, rel=1e-4)
    np.testing.assert_allclose(np.hypot(*profile.outer.T), r, rtol=1e-12)


def test_ellipse_full_and_half(tmp_path):
    """ELLIPSE: area pi a b (closed form); J = pi a^3 b^3 / (a^2 + b^2)
    (Timoshenko & Goodier, 3rd ed., ch. 10, elliptic section; section number
    from memory).  A half ellipse closed by a LINE has area pi a b / 2."""
    a, b = 12.0, 5.0
    doc, msp = new_drawing()
    msp.add_ellipse((1, 1), major_axis=(a, 0), ratio=b / a)
    profile = read_dxf(save(doc, tmp_path, "full.dxf"))
    assert profile.area == pytest.approx(math.pi * a * b, rel=1e-4)
    result = analyse(profile, mesh_size=b / 25)
    exact = math.pi * a**3 * b**3 / (a**2 + b**2)
    lo, hi = result.torsion_constant_bounds
    assert exact * (1 - 1e-4) <= hi and lo <= exact * (1 + 1e-12)
    assert result.torsion_constant == pytest.approx(exact, rel=1e-3)

    doc, msp = new_drawing()
    msp.add_ellipse((0, 0), major_axis=(0, a), ratio=b / a, start_param=0, end_param=math.pi)
    msp.add_line((0, a), (0, -a))
    half = read_dxf(save(doc, tmp_path, "half.dxf"))
    assert half.area == pytest.approx(math.pi * a * b / 2, rel=1e-4)


def test_spline_parabolic_segment(tmp_path):
    """A degree-2 SPLINE on three control points is a parabola arc; closed by
    a LINE, the area is 2/3 of the control triangle (Archimedes, Quadrature
    of the Parabola)."""
    P = [(-3.0, 0.0), (1.0, 4.0), (3.0, 0.0)]
    doc, msp = new_drawing()
    msp.add_open_spline(P, degree=2)
    msp.add_line(P[2], P[0])
    profile = read_dxf(save(doc, tmp_path))
    tri = 0.5 * abs((P[1][0] - P[0][0]) * (P[2][1] - P[0][1])
                    - (P[2][0] - P[0][0]) * (P[1][1] - P[0][1]))
    assert profile.area == pytest.approx(2.0 / 3.0 * tri, rel=1e-4)


def test_mirrored_entity_extrusion(tmp_path):
    """A CIRCLE with extrusion (0, 0, -1), as mirroring in CAD writes it, has
    its centre's x negated in world coordinates (DXF reference, object
    coordinate system, arbitrary axis algorithm)."""
    doc, msp = new_drawing()
    msp.add_circle((-4.0, 0.0), 5.0)
    msp.add_circle((4.0, 0.0), 1.0, dxfattribs={"extrusion": (0, 0, -1)})  # world (-4, 0)
    profile = read_dxf(save(doc, tmp_path))
    assert len(profile.holes) == 1
    np.testing.assert_allclose(profile.holes[0].mean(axis=0), [-4.0, 0.0], rtol=0, atol=1e-9)


def test_keyed_shaft_lines_and_arcs_equal_point_list(tmp_path):
    """The same keyed shaft as LINE + ARC entities (exact arcs) and as a point
    list with arcs sampled every 0.05 deg gives the same J within 1e-4 (the
    brief's requirement; same mesh size 0.5 for both: the bounds are built
    differently for exact curves and for a polygon, and at size 1.0 their
    estimates of J differ by 2e-4 while the outlines differ by 3e-7)."""
    doc, msp = new_drawing()
    ents = draw_keyed_shaft(msp, **KEYED)
    dxf_path = save(doc, tmp_path)
    txt = tmp_path / "keyed.txt"
    np.savetxt(txt, keyed_shaft_points(**KEYED))
    p_dxf = read_dxf(dxf_path)
    for e in ents:
        assert f"#{e.dxf.handle}" in p_dxf.labels[0]
    r_dxf = analyse(p_dxf, mesh_size=0.5)
    r_txt = analyse(read_section(txt), mesh_size=0.5)
    assert r_dxf.torsion_constant == pytest.approx(r_txt.torsion_constant, rel=1e-4)
    # ... and as the parametric kind of a shape file (keyway depth t1 measured from the
    # top of the circle on the centreline, DIN 6885-1), read through the same dispatcher
    toml = tmp_path / "keyed.toml"
    toml.write_text(
        'units = "mm"\n[section]\nkind = "keyed_shaft"\n'
        f'diameter = {KEYED["d"]}\nkey_width = {KEYED["b"]}\nkey_depth = {KEYED["t1"]}\n'
        f'floor_radius = {KEYED["r"]}\n'
    )
    r_par = analyse(read_section(toml), mesh_size=0.5)
    assert r_par.area == pytest.approx(r_txt.area, rel=1e-4)
    assert r_par.torsion_constant == pytest.approx(r_txt.torsion_constant, rel=1e-4)
    assert r_par.torsion_constant == pytest.approx(r_dxf.torsion_constant, rel=1e-4)
    # same drawing, pieces in another order and directions: same profile area
    doc2, msp2 = new_drawing()
    R, a, yf, ys = keyed_geometry(**KEYED)
    r = KEYED["r"]
    msp2.add_line((-a, ys), (-a, yf + r))
    msp2.add_line((-a + r, yf), (a - r, yf))
    msp2.add_arc((0, 0), KEYED["d"] / 2, math.degrees(math.atan2(ys, -a)),
                 math.degrees(math.atan2(ys, a)))
    msp2.add_arc((a - r, yf + r), r, 270, 360)
    msp2.add_line((a, yf + r), (a, ys))
    msp2.add_arc((-a + r, yf + r), r, 180, 270)
    assert read_dxf(save(doc2, tmp_path, "shuffled.dxf")).area == pytest.approx(
        p_dxf.area, rel=1e-12)


# --------------------------------------------------------------------- units
def test_inch_header_scales_j_by_25_4_to_the_fourth(tmp_path):
    """A drawing in inches ($INSUNITS = 1) gives J in in^4; the same shaft
    drawn in mm gives 25.4^4 times the number (1 in = 25.4 mm exactly, NIST
    SP 811 appendix B)."""
    doc, msp = new_drawing(MM)
    draw_keyed_shaft(msp, **KEYED)
    mm = analyse(read_dxf(save(doc, tmp_path, "mm.dxf")), mesh_size=2.0)
    doc, msp = new_drawing(INCH)
    draw_keyed_shaft(msp, **KEYED, scale=1 / 25.4)
    p_in = read_dxf(save(doc, tmp_path, "in.dxf"))
    assert p_in.units == "in"
    inch = analyse(p_in, mesh_size=2.0 / 25.4)
    assert inch.units == "in"
    assert inch.torsion_constant * 25.4**4 == pytest.approx(mm.torsion_constant, rel=1e-4)


def test_unit_choice_order(tmp_path):
    """Units: an explicit argument wins (with a warning if the header differs),
    then the header, then mm.  Microns are converted to mm by 1e-3 (SI)."""
    doc, msp = new_drawing(0)  # unitless
    msp.add_circle((0, 0), 1.0)
    plain = save(doc, tmp_path, "plain.dxf")
    assert read_dxf(plain).units == "mm"
    assert read_dxf(plain, "in").units == "in"

    doc, msp = new_drawing(MM)
    msp.add_circle((0, 0), 1.0)
    metric = save(doc, tmp_path, "metric.dxf")
    overridden = read_dxf(metric, "in")
    assert overridden.units == "in"
    (note,) = overridden.notes  # told on the result, not in a log line
    assert "millimetres" in note and "read as in" in note

    doc, msp = new_drawing(13)  # microns
    msp.add_lwpolyline([(0, 0), (2000, 0), (2000, 1000), (0, 1000)], close=True)
    micro = read_dxf(save(doc, tmp_path, "micro.dxf"))
    assert micro.units == "mm"
    assert micro.area == pytest.approx(2.0, rel=1e-12)


def test_unsupported_unit_header(tmp_path, capsys):
    doc, msp = new_drawing(18)  # astronomical units
    msp.add_circle((0, 0), 1.0)
    path = save(doc, tmp_path)
    assert main(["solve", str(path)]) == 2
    assert "$INSUNITS = 18" in capsys.readouterr().err
    assert read_dxf(path, "mm").units == "mm"  # --units gets past it


# -------------------------------------------------------------------- layers
def test_layer_selection(tmp_path, capsys):
    doc, msp = new_drawing()
    doc.layers.add("OUTLINE")
    doc.layers.add("CENTRE")
    doc.layers.add("EMPTY")
    draw_keyed_shaft(msp, **KEYED)
    for e in msp:
        e.dxf.layer = "OUTLINE"
    centre = msp.add_line((-30, 0), (30, 0), dxfattribs={"layer": "CENTRE"})
    msp.add_text("shaft", dxfattribs={"layer": "OUTLINE"})
    path = save(doc, tmp_path)
    # all layers: the centre line dangles, and the message points to --layer
    assert main(["solve", str(path)]) == 2
    err = capsys.readouterr().err
    assert f"LINE #{centre.dxf.handle} on layer CENTRE" in err and "--layer" in err
    profile = read_dxf(path, layers="outline")  # one name as a plain string
    assert any("1 TEXT" in n for n in profile.notes)
    R, a, yf, ys = keyed_geometry(**KEYED)
    assert profile.size == pytest.approx(2 * R, rel=2e-5)  # chords cut the extremes
    assert main(["solve", str(path), "--layer", "OUTLINE", "--layer", "CENTRE",
                 "--quiet"]) == 2
    assert main(["solve", str(path), "--layer", "OUTLINE", "--mesh-size", "2", "--json",
                 str(tmp_path / "out.json")]) == 0
    assert main(["solve", str(path), "--layer", "EMPTY"]) == 2
    assert "no section geometry on layer(s) EMPTY" in capsys.readouterr().err
    assert main(["solve", str(path), "--layer", "NOPE"]) == 2
    err = capsys.readouterr().err
    assert "no layer named 'NOPE'" in err and "OUTLINE" in err


# -------------------------------------------------------------------- faults
def square_lines(msp, s=10.0, shift=0.0):
    return [
        msp.add_line((0, 0), (s, 0)),
        msp.add_line((s, 0), (s, s)),
        msp.add_line((s, s), (0, s)),
        msp.add_line((0, s), (shift, 0)),
    ]


def run_fault(tmp_path, capsys, doc, *extra):
    """Run the CLI on the drawing; expect exit 2 and one line on stderr."""
    path = save(doc, tmp_path)
    assert main(["solve", str(path), "--mesh-size", "1", *extra]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1, err
    assert err.startswith("soapfilm: error: ") and str(path) in err
    return err


def test_gap_names_handles_position_size_and_tolerance(tmp_path, capsys):
    doc, msp = new_drawing()
    lines = square_lines(msp, shift=0.02)
    err = run_fault(tmp_path, capsys, doc)
    assert "gap of 0.02 mm between" in err
    assert f"#{lines[3].dxf.handle}" in err and f"#{lines[0].dxf.handle}" in err
    assert "(0.02, 0)" in err and "(0, 0)" in err
    assert "joined within 0.0001 mm" in err and "--join-tolerance 0.03" in err
    # the suggested fix works
    assert main(["solve", str(save(doc, tmp_path)), "--join-tolerance", "0.03",
                 "--mesh-size", "1", "--quiet"]) == 0


def test_overlap_doubled_and_partial(tmp_path, capsys):
    doc, msp = new_drawing()
    lines = square_lines(msp)
    twin = msp.add_line((10, 0), (10, 10))
    err = run_fault(tmp_path, capsys, doc)
    assert f"#{lines[1].dxf.handle}" in err and f"#{twin.dxf.handle}" in err
    assert "overlap" in err and "(10, 5)" in err

    doc, msp = new_drawing()
    lines = square_lines(msp)
    part = msp.add_line((0, 2), (0, 6))
    err = run_fault(tmp_path, capsys, doc)
    assert f"#{lines[3].dxf.handle}" in err and f"#{part.dxf.handle}" in err
    assert "overlap" in err and "(0, 4)" in err


def test_doubled_short_entity_at_a_node(tmp_path, capsys):
    """A doubled piece too short for the overlap length test is caught where
    its ends meet (three ends at one point, two of them the same path)."""
    doc, msp = new_drawing()
    msp.add_line((0, 0), (10, 0))
    msp.add_line((10, 0), (10, 10))
    msp.add_line((10, 10), (0, 10))
    msp.add_line((0, 10), (0, 0.005))
    a = msp.add_line((0, 0.005), (0, 0))
    b = msp.add_line((0, 0), (0, 0.005))
    err = run_fault(tmp_path, capsys, doc)
    assert "drawn on top of each other" in err
    assert f"#{a.dxf.handle}" in err and f"#{b.dxf.handle}" in err


def test_dangling_entity(tmp_path, capsys):
    doc, msp = new_drawing()
    square_lines(msp)
    stub = msp.add_line((10, 10), (14, 13))
    err = run_fault(tmp_path, capsys, doc)
    assert f"dangling LINE #{stub.dxf.handle}" in err
    assert "free end at (14, 13)" in err and "(10, 10)" in err


def test_lone_entity(tmp_path, capsys):
    doc, msp = new_drawing()
    square_lines(msp)
    stray = msp.add_line((20, 0), (20, 8))
    err = run_fault(tmp_path, capsys, doc)
    assert f"dangling LINE #{stray.dxf.handle}" in err and "(20, 8)" in err


def test_branch(tmp_path, capsys):
    doc, msp = new_drawing()
    square_lines(msp)
    diag = msp.add_line((0, 0), (10, 10))
    err = run_fault(tmp_path, capsys, doc)
    assert "3 piece ends meet at" in err and f"#{diag.dxf.handle}" in err
    assert "cannot branch" in err


def test_open_loop(tmp_path, capsys):
    doc, msp = new_drawing()
    lines = square_lines(msp)
    msp.delete_entity(lines.pop())  # keep a U of three sides
    err = run_fault(tmp_path, capsys, doc)
    assert "open loop" in err and "(0, 0)" in err and "(0, 10)" in err
    for e in lines:
        assert f"#{e.dxf.handle}" in err


def test_open_polyline_without_closed_flag(tmp_path, capsys):
    """An LWPOLYLINE whose last vertex repeats the first closes by geometry;
    one that stops short is an open loop."""
    doc, msp = new_drawing()
    msp.add_lwpolyline([(0, 0), (10, 0), (10, 10), (0, 10), (0, 0)])
    assert read_dxf(save(doc, tmp_path)).area == pytest.approx(100.0, rel=1e-12)
    doc, msp = new_drawing()
    pl = msp.add_lwpolyline([(0, 0), (10, 0), (10, 10), (0, 10)])
    err = run_fault(tmp_path, capsys, doc)
    assert "open loop" in err or f"LWPOLYLINE #{pl.dxf.handle}" in err
    assert f"LWPOLYLINE #{pl.dxf.handle}" in err


def test_self_crossing_polyline(tmp_path, capsys):
    doc, msp = new_drawing()
    bow = msp.add_lwpolyline([(0, 0), (10, 10), (10, 0), (0, 10)], close=True)
    err = run_fault(tmp_path, capsys, doc)
    assert f"LWPOLYLINE #{bow.dxf.handle}) crosses itself near (5, 5)" in err


def test_entity_leaving_the_plane(tmp_path, capsys):
    doc, msp = new_drawing()
    lines = square_lines(msp)
    lines[0].dxf.end = (10, 0, 2)
    lines[1].dxf.start = (10, 0, 2)
    err = run_fault(tmp_path, capsys, doc)
    assert f"LINE #{lines[0].dxf.handle} leaves the XY plane" in err


def test_two_separate_outsides(tmp_path, capsys):
    doc, msp = new_drawing()
    a = msp.add_circle((0, 0), 5)
    b = msp.add_circle((20, 0), 5)
    err = run_fault(tmp_path, capsys, doc)
    assert "two separate outsides" in err
    assert f"CIRCLE #{a.dxf.handle}" in err and f"CIRCLE #{b.dxf.handle}" in err
    assert "(20, 0)" in err


def test_island_inside_hole(tmp_path, capsys):
    doc, msp = new_drawing()
    msp.add_circle((0, 0), 10)
    hole = msp.add_circle((0, 0), 6)
    island = msp.add_circle((1, 0), 2)
    err = run_fault(tmp_path, capsys, doc)
    assert f"island: loop (CIRCLE #{island.dxf.handle}) near (1, 0)" in err
    assert f"CIRCLE #{hole.dxf.handle}" in err


def test_crossing_loops(tmp_path, capsys):
    doc, msp = new_drawing()
    a = msp.add_circle((0, 0), 5)
    b = msp.add_circle((6, 0), 5)
    err = run_fault(tmp_path, capsys, doc)
    assert f"#{a.dxf.handle}" in err and f"#{b.dxf.handle}" in err
    assert "overlap" in err or "cross" in err


def test_no_geometry(tmp_path, capsys):
    doc, msp = new_drawing()
    msp.add_text("only words")
    msp.add_point((1, 2))
    err = run_fault(tmp_path, capsys, doc)
    assert "no section geometry (found only POINT, TEXT)" in err


def test_not_in_plan_view(tmp_path, capsys):
    doc, msp = new_drawing()
    c = msp.add_circle((0, 0), 5, dxfattribs={"extrusion": (1, 0, 0)})
    err = run_fault(tmp_path, capsys, doc)
    assert f"CIRCLE #{c.dxf.handle} is not drawn in the XY plane" in err


@pytest.mark.parametrize("content", [
    b"this is not a drawing\n",
    b"\x00\x01\x02binary junk\xff\xfe",
    "truncated",
])
def test_unreadable_file(tmp_path, capsys, content):
    path = tmp_path / "broken.dxf"
    if content == "truncated":
        doc, msp = new_drawing()
        msp.add_circle((0, 0), 5)
        good = save(doc, tmp_path, "good.dxf")
        text = good.read_bytes()
        content = text[: len(text) // 3]
    path.write_bytes(content)
    code = main(["solve", str(path), "--mesh-size", "1"])
    err = capsys.readouterr().err
    assert code == 2, err
    assert str(path) in err and "Traceback" not in err


def test_layer_option_on_point_list(tmp_path, capsys):
    txt = tmp_path / "sq.txt"
    txt.write_text("0 0\n1 0\n1 1\n0 1\n")
    assert main(["solve", str(txt), "--layer", "A"]) == 2
    assert "--layer does not apply to .txt files" in capsys.readouterr().err


def test_bad_tolerances():
    with pytest.raises(InputError, match="--join-tolerance: must be a positive length"):
        read_dxf("unused.dxf", join_tolerance=-1.0)
    with pytest.raises(InputError, match="chord tolerance must be a positive length"):
        read_dxf("unused.dxf", chord_tolerance=0.0)


# ------------------------------------------------------------------ example
def test_example_drawing_against_roark_keyway_fit(tmp_path):
    """shapes/mixer-paddle-shaft.dxf (read with --layer OUTLINE) against the
    one-keyway fit of Roark's Formulas for Stress and Strain, 7th ed., Table
    10.1: K = 2 C r^4, C = C1 + C2 (b/r) + C3 (b/r)^2 + C4 (b/r)^3, r the
    shaft radius, b the keyway depth, a half its width.  A handbook fit for
    sharp floor corners: agreement to 2 % is all it offers.  The committed
    drawing must also match what shapes/make_dxf_example.py writes now."""
    import importlib.util
    from pathlib import Path

    shapes = Path(__file__).resolve().parents[1] / "shapes"
    spec = importlib.util.spec_from_file_location("make_dxf_example",
                                                  shapes / "make_dxf_example.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    fresh = read_dxf(mod.main(tmp_path / "fresh.dxf"), layers=["OUTLINE"])
    committed = read_dxf(shapes / "mixer-paddle-shaft.dxf", layers=["OUTLINE"])
    assert committed.area == pytest.approx(fresh.area, rel=1e-12)
    assert committed.units == "mm"

    r, b, a = mod.D / 2, mod.T1, mod.B / 2
    x, q = b / r, a / b
    c = (0.7854 + (-0.0848 + 0.1234 * q - 0.0847 * q**2) * x
         + (-0.4318 - 2.2000 * q + 0.7633 * q**2) * x**2
         + (-0.0780 + 2.0618 * q - 0.5234 * q**2) * x**3)
    result = analyse(committed, mesh_size=1.0)
    assert result.torsion_constant == pytest.approx(2 * c * r**4, rel=2e-2)


def test_block_reference_is_expanded(tmp_path):
    """The keyed shaft drawn inside a block and inserted moved, turned and scaled by 2:
    J is unchanged by the rigid motion and grows by 2^4 with the scale (dimensional
    analysis, common practice); the block's layer-0 entities take the INSERT's layer."""
    doc, msp = new_drawing()
    blk = doc.blocks.new("SHAFT")
    draw_keyed_shaft(blk, **KEYED)  # entities on layer 0 inside the block
    msp.add_blockref("SHAFT", (120.0, -40.0), dxfattribs={"layer": "OUTLINE", "rotation": 30.0})
    msp.add_line((0, 0), (300, 0), dxfattribs={"layer": "CENTRE"})
    path = save(doc, tmp_path, "block.dxf")
    direct_doc, direct_msp = new_drawing()
    draw_keyed_shaft(direct_msp, **KEYED)
    ref = analyse(read_dxf(save(direct_doc, tmp_path, "direct.dxf")), mesh_size=2.0)
    placed = analyse(read_dxf(path, layers=["OUTLINE"]), mesh_size=2.0)
    assert placed.torsion_constant == pytest.approx(ref.torsion_constant, rel=1e-4)
    assert placed.centroid[0] == pytest.approx(120.0, abs=1.0)

    doc2, msp2 = new_drawing()
    blk2 = doc2.blocks.new("SHAFT")
    draw_keyed_shaft(blk2, **KEYED)
    msp2.add_blockref("SHAFT", (0.0, 0.0), dxfattribs={"xscale": 2.0, "yscale": 2.0})
    big = analyse(read_dxf(save(doc2, tmp_path, "big.dxf")), mesh_size=4.0)
    assert big.torsion_constant == pytest.approx(16.0 * ref.torsion_constant, rel=1e-4)
    with pytest.raises(InputError, match="OUTLINE|layer"):
        read_dxf(path, layers=["CENTRE"])  # a lone line: not a section
