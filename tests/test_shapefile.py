"""Shape files (.toml): keys, errors, settings, examples, and the `soapfilm shapes` command."""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

import numpy as np
import pytest

from soapfilm import read_section
from soapfilm.cli import main
from soapfilm.cli.shapes import example_toml
from soapfilm.readers.shapefile import load_shapefile
from soapfilm.shapes import KINDS

EXAMPLES = Path(__file__).resolve().parents[1] / "shapes"


def write(tmp_path, text, name="s.toml") -> Path:
    f = tmp_path / name
    f.write_text(text)
    return f


def solve_json(tmp_path, f, *extra) -> dict:
    out = tmp_path / "r.json"
    assert main(["solve", str(f), "--quiet", "--json", str(out), *extra]) == 0
    return json.loads(out.read_text())


def fails(f, capsys, *needles) -> str:
    """Run solve, expect exit 2 and one error line holding every needle."""
    assert main(["solve", str(f)]) == 2
    err = capsys.readouterr().err.strip()
    assert "\n" not in err, err
    for n in needles:
        assert n in err, (n, err)
    return err


# ---------------------------------------------------------------- examples
def test_every_example_reads():
    files = [f for f in sorted(EXAMPLES.glob("*.toml")) if "[[segment]]" not in f.read_text()]
    assert len(files) >= 7
    for f in files:
        p = read_section(f)
        assert p.area > 0 and p.name


def test_example_feed_roller_area_uses_din6885_key():
    """shapes/feed-roller-shaft.toml: 40 mm shaft, DIN 6885-1 key for 38-44 mm: b = 12,
    t1 = 5, floor radius r min 0.25.  Area = pi R^2 - strip above the floor (elementary
    integral) + 2 r^2 (1 - pi/4) for the fillets; atol = perimeter x chord (flattening)."""
    p = read_section(EXAMPLES / "feed-roller-shaft.toml")
    R, a, t1, rf = 20.0, 6.0, 5.0, 0.25
    strip = a * math.sqrt(R * R - a * a) + R * R * math.asin(a / R) - 2 * a * (R - t1)
    expect = math.pi * R * R - strip + 2 * rf * rf * (1 - math.pi / 4)
    assert p.area == pytest.approx(expect, abs=2 * math.pi * R * 1e-5 * 2 * R + 0.1)


def test_example_box_beam_solves_against_bredt(tmp_path):
    """shapes/carriage-box-beam.toml (120 x 80 x 6) through the CLI: Bredt's formula
    4 A_m^2 t / p_m (Bredt-Batho single cell) within the corner fraction 4 t / p_m
    (argument in tests/test_shapes.py::test_box_tube_bredt)."""
    d = solve_json(tmp_path, EXAMPLES / "carriage-box-beam.toml", "--mesh-size", "1.5")
    W, H, t = 120.0, 80.0, 6.0
    am, pm = (W - t) * (H - t), 2 * (W - t + H - t)
    assert d["torsion_constant"] == pytest.approx(4 * am * am * t / pm, rel=4 * t / pm)
    assert d["name"] == "Carriage frame box beam 120 x 80 x 6"


def test_point_list_reference_matches_hexagon():
    """hex-drive-points.toml refers to hex-drive.txt (relative path): regular hexagon of
    19 across flats, area (sqrt 3 / 2) s^2 (elementary; the file has 4 decimals)."""
    p = read_section(EXAMPLES / "hex-drive-points.toml")
    assert p.area == pytest.approx(math.sqrt(3) / 2 * 19**2, rel=1e-4)


# ---------------------------------------------------------------- composition, outline
def test_parts_compose_a_tube_with_placement(tmp_path):
    """Round 40 turned and moved, less a round 24 moved the same way: a tube,
    J = pi (D^4 - d^4)/32 (closed form), independent of where it sits."""
    f = write(tmp_path, """
title = "tube from parts"
units = "mm"
[[part]]
kind = "round"
diameter = 40
rotate = 30
position = [50, 20]
[[part]]
action = "cut"
kind = "round"
diameter = 24
position = [50, 20]
[mesh]
size = 0.8
""")
    d = solve_json(tmp_path, f)
    assert d["torsion_constant"] == pytest.approx(math.pi * (40**4 - 24**4) / 32, rel=3e-4)
    assert d["centroid"] == pytest.approx([50, 20], abs=1e-6)


def test_inline_outline_with_hole(tmp_path):
    """Outline 40 x 10 with a 10 x 4 hole: area 400 - 40 (rectangles)."""
    f = write(tmp_path, """
units = "cm"
[section]
kind = "outline"
points = [[0, 0], [40, 0], [40, 10], [0, 10]]
holes = [[[15, 3], [25, 3], [25, 7], [15, 7]]]
""")
    sf = load_shapefile(f)
    assert sf.profile.area == pytest.approx(360.0, rel=1e-12)
    assert sf.profile.units == "cm" and len(sf.profile.holes) == 1


def test_file_reference_is_relative_to_the_shape_file(tmp_path):
    sub = tmp_path / "drawings"
    sub.mkdir()
    (sub / "sq.txt").write_text("0 0\n10 0\n10 10\n0 10\n")
    f = write(tmp_path, '[section]\nkind = "file"\nfile = "drawings/sq.txt"\n')
    assert read_section(f).area == pytest.approx(100.0, rel=1e-12)


def test_referenced_drawing_in_other_units_is_converted(tmp_path, monkeypatch):
    """A referenced file whose reader reports inches (as a DXF with a unit header would)
    is scaled into the shape file's mm: 1 in = 25.4 mm (exact by definition)."""
    from soapfilm import Profile
    from soapfilm.readers import READERS

    def inch_reader(path, units):
        return Profile.from_loops([[(0, 0), (1, 0), (1, 2), (0, 2)]], units="in")

    monkeypatch.setitem(READERS, ".inchtest", inch_reader)
    (tmp_path / "part.inchtest").write_text("")
    f = write(tmp_path, 'units = "mm"\n[section]\nkind = "file"\nfile = "part.inchtest"\n')
    p = read_section(f)
    assert p.units == "mm"
    assert p.area == pytest.approx(2 * 25.4**2, rel=1e-12)


def test_referenced_dxf_units_layer_and_join_tolerance(tmp_path, capsys):
    """A DXF drawing referenced from a shape file: a drawing with a unit header is
    converted (1 in = 25.4 mm, exact), one without is read in the shape file's unit;
    the keys layer and join_tolerance reach the reader, and the reader's hints name
    those keys, not command-line options."""
    import ezdxf

    def drawing(name, insunits, gap=0.0):
        doc = ezdxf.new()
        doc.header["$INSUNITS"] = insunits
        doc.layers.add("OUTLINE")
        msp = doc.modelspace()
        pts = [(0, 0), (2, 0), (2, 1), (0, 1)]
        for k in range(4):
            a, b = pts[k], pts[(k + 1) % 4]
            if k == 3:
                b = (b[0], b[1] + gap)
            msp.add_line(a, b, dxfattribs={"layer": "OUTLINE"})
        msp.add_line((5, 5), (6, 6), dxfattribs={"layer": "NOTES"})
        doc.saveas(tmp_path / name)

    drawing("inch.dxf", 1)  # $INSUNITS 1 = inches
    drawing("plain.dxf", 0)  # no unit
    drawing("gappy.dxf", 0, gap=0.004)
    f = write(tmp_path, 'units = "mm"\n[section]\nkind = "file"\nfile = "inch.dxf"\n'
                        'layer = "OUTLINE"\n')
    assert read_section(f).area == pytest.approx(2 * 25.4**2, rel=1e-12)
    f = write(tmp_path, 'units = "cm"\n[section]\nkind = "file"\nfile = "plain.dxf"\n'
                        'layer = ["OUTLINE"]\n')
    p = read_section(f)
    assert (p.units, p.area) == ("cm", pytest.approx(2.0, rel=1e-12))
    # without the layer, the stray line on NOTES dangles: the hint names the key
    f = write(tmp_path, '[section]\nkind = "file"\nfile = "plain.dxf"\n')
    assert main(["solve", str(f)]) == 2
    err = capsys.readouterr().err
    assert 'layer = "NAME" in' in err and "--layer" not in err
    # a gap of 0.004 (drawing units, here mm) closes with join_tolerance 0.005
    f = write(tmp_path, '[section]\nkind = "file"\nfile = "gappy.dxf"\nlayer = "OUTLINE"\n')
    assert main(["solve", str(f)]) == 2
    err = capsys.readouterr().err
    assert "join_tolerance = " in err and "--join-tolerance" not in err
    f = write(tmp_path, '[section]\nkind = "file"\nfile = "gappy.dxf"\nlayer = "OUTLINE"\n'
                        "join_tolerance = 0.005\n")
    assert read_section(f).area == pytest.approx(2.0, rel=1e-2)
    # the command line's DXF options do not apply to a shape file: said so, with the keys
    assert main(["solve", str(f), "--layer", "OUTLINE"]) == 2
    err = capsys.readouterr().err
    assert "keys layer and join_tolerance" in err


def test_missing_referenced_file(tmp_path, capsys):
    f = write(tmp_path, '[section]\nkind = "file"\nfile = "drawings/nope.txt"\n')
    fails(f, capsys, "s.toml [section]", "'drawings/nope.txt' not found")


# ---------------------------------------------------------------- settings
def test_mesh_settings_are_used_and_command_line_wins(tmp_path):
    """[mesh] size 2 on a 40 mm round: about area / (sqrt(3)/4 * 2^2) = 725 triangles
    (equilateral-area limit; Triangle's quality mesh gives somewhat more); --mesh-size wins."""
    f = write(tmp_path, """
units = "mm"
[section]
kind = "round"
diameter = 40
[mesh]
size = 2.0
chord = 0.05
[solve]
method = "direct"
""")
    d = solve_json(tmp_path, f)
    n = d["mesh"]["elements"]
    assert 725 <= n <= 3 * 725
    d2 = solve_json(tmp_path, f, "--mesh-size", "4")
    assert d2["mesh"]["elements"] < n / 2
    # chord 0.05 on radius 20: every edge's sagitta <= 0.05 (elementary)
    p = read_section(f)
    mid = 0.5 * (p.outer + np.roll(p.outer, -1, axis=0))
    sag = 20 - np.hypot(*mid.T)
    assert 0.025 < sag.max() <= 0.05 + 1e-12


# ---------------------------------------------------------------- errors
BAD = [
    ('titel = "x"\n[section]\nkind = "round"\ndiameter = 4\n',
     ["(top level)", "unknown key 'titel'", "did you mean 'title'?"]),
    ('[section]\nkind = "round"\ndiamter = 4\n',
     ["[section]", "unknown key 'diamter'", "did you mean 'diameter'?"]),
    ('[section]\nkind = "keyed_shat"\ndiameter = 40\n',
     ["[section]", "unknown kind 'keyed_shat'", "did you mean 'keyed_shaft'?"]),
    ('[section]\nkind = "round"\n', ["[section]", "diameter is missing"]),
    ('[section]\nkind = "round"\ndiameter = "40"\n', ["diameter must be a number"]),
    ('[section]\nkind = "round"\ndiameter = -40\n', ["diameter must not be negative"]),
    ('[section]\nkind = "round"\ndiameter = 0\n', ["diameter must be greater than 0"]),
    ('[section]\nkind = "keyed_shaft"\ndiameter = 40\nkeyways = 1.5\n',
     ["keyways must be a whole number"]),
    ('[section]\nkind = "straight_spline"\nseries = "lite"\nminor_diameter = 32\n',
     ["series = 'lite' is not allowed", "did you mean 'light'?"]),
    ('[section]\nkind = "straight_spline"\nseries = "light"\nminor_diameter = 33\n',
     ["no ISO 14 light spline with minor diameter 33"]),
    ('[section]\nkind = "round"\ndiameter = 4\n[mesh]\nsise = 1\n',
     ["[mesh]", "unknown key 'sise'", "did you mean 'size'?"]),
    ('[section]\nkind = "round"\ndiameter = 4\n[mesh]\nsize = -1\n',
     ["[mesh]", "size must be a positive number"]),
    ('[section]\nkind = "round"\ndiameter = 4\n[solve]\nmethod = "amgg"\n',
     ["[solve]", "method = 'amgg' is not known", "did you mean 'amg'?"]),
    ('units = "mmm"\n[section]\nkind = "round"\ndiameter = 4\n',
     ["unknown length unit 'mmm'", "did you mean 'mm'?"]),
    ('units = "in"\n[section]\nkind = "keyed_shaft"\ndiameter = 1.5\n',
     ["table is for shafts in mm"]),
    ('[section]\nkind = "round"\ndiameter = 4\nrotate = "left"\n',
     ["rotate must be an angle"]),
    ('[section]\nkind = "round"\ndiameter = 4\nposition = [1]\n', ["position must be [x, y]"]),
    ('[section]\nkind = "round"\ndiameter = 4\n[[part]]\nkind = "round"\ndiameter = 2\n',
     ["either one [section] table or a list of [[part]]"]),
    ('title = "nothing"\n', ["no [section] or [[part]] table"]),
    ('[[part]]\naction = "cut"\nkind = "round"\ndiameter = 4\n',
     ["[[part]] 1", "the first part cannot be a cut"]),
    ('[[part]]\nkind = "round"\ndiameter = 4\n[[part]]\nactoin = "cut"\nkind = "round"\n'
     'diameter = 2\n', ["[[part]] 2", "unknown key 'actoin'", "did you mean 'action'?"]),
    ('[[part]]\nkind = "round"\ndiameter = 4\n[[part]]\naction = "remove"\nkind = "round"\n'
     'diameter = 2\n', ["action = 'remove' is not known"]),
    ('[[part]]\nkind = "round"\ndiameter = 4\n[[part]]\nkind = "round"\ndiameter = 2\n'
     'position = [10, 0]\n', ["the parts make 2 separate pieces"]),
    ('[[part]]\nkind = "rectangle"\nwidth = 10\nheight = 10\n[[part]]\naction = "cut"\n'
     'kind = "rectangle"\nwidth = 2\nheight = 20\n', ["the parts make 2 separate pieces"]),
    ('[section]\nkind = "outline"\npoints = [[0, 0], [1, 1], [1, 0], [0, 1]]\n',
     ["[section] points crosses itself"]),
    ('[section]\nkind = "outline"\npoints = [[0, 0], [1]]\n',
     ["points must be a list of [x, y] number pairs"]),
    ('[section]\nkind = "file"\nfile = "other.toml"\n', ["cannot include another shape file"]),
    ('[section\nkind = "round"\n', ["not valid TOML", "line 1"]),
]


@pytest.mark.parametrize("text, needles", BAD, ids=[n[-1][:28] for _, n in BAD])
def test_bad_shape_files_exit_2(text, needles, tmp_path, capsys):
    f = write(tmp_path, text)
    fails(f, capsys, "s.toml", *needles)


# ---------------------------------------------------------------- soapfilm shapes
def test_shapes_lists_every_kind(capsys):
    assert main(["shapes"]) == 0
    out = capsys.readouterr().out
    for name in [*KINDS, "outline", "file"]:
        assert re.search(rf"\b{name}\b", out), name
    for key in ("title", "units", "position", "rotate", "action", "size", "chord", "method"):
        assert key in out


@pytest.mark.parametrize("name", list(KINDS))
def test_shapes_kind_shows_keys_and_a_working_example(name, capsys, tmp_path):
    """Every parameter is listed, and the printed example is a valid shape file."""
    assert main(["shapes", name]) == 0
    out = capsys.readouterr().out
    for p in KINDS[name].params:
        assert p.name in out
    f = write(tmp_path, example_toml(KINDS[name]))
    assert read_section(f).area > 0


def test_shapes_unknown_kind_exit_2(capsys):
    assert main(["shapes", "hexagon"]) == 2
    err = capsys.readouterr().err.strip()
    assert "unknown shape kind 'hexagon'" in err and "\n" not in err
    assert main(["shapes", "chanel"]) == 2
    assert "did you mean 'channel'?" in capsys.readouterr().err


def test_keyed_shaft_toml_and_independent_point_list_agree(tmp_path):
    """One keyed shaft (40 mm, keyway 12 x 5, sharp floor) given as a shape file and as
    a point list built here from elementary geometry (arc from the keyway edge at
    angle asin(a/R) from +y round to the other edge, 4000 points, then the keyway
    corners): J agrees within 1e-4 (both flattenings are within ~5e-5 of the true
    section by the sliver estimate 8 s/(3 R), soapfilm.shapes._geom)."""
    from soapfilm import analyse

    R, a, t1 = 20.0, 6.0, 5.0
    f = write(tmp_path, '[section]\nkind = "keyed_shaft"\ndiameter = 40\n'
                        'key_width = 12\nkey_depth = 5\nfloor_radius = 0\n')
    delta = math.asin(a / R)
    th = np.linspace(math.pi / 2 + delta, 5 * math.pi / 2 - delta, 4000)  # left edge, CCW
    pts = [(R * math.cos(t), R * math.sin(t)) for t in th] + [(a, R - t1), (-a, R - t1)]
    txt = tmp_path / "key.txt"
    txt.write_text("\n".join(f"{x:.12f} {y:.12f}" for x, y in pts) + "\n")
    j_toml = analyse(read_section(f), mesh_size=0.4).torsion_constant
    j_pts = analyse(read_section(txt), mesh_size=0.4).torsion_constant
    assert j_pts == pytest.approx(j_toml, rel=1e-4)


def test_shaft_file_given_to_solve_points_to_shaft_command(capsys):
    assert main(["solve", str(EXAMPLES / "conveyor-drive-shaft.toml")]) == 2
    assert "soapfilm shaft" in capsys.readouterr().err
