"""One set of section-input options for every command, one unit rule, scale warnings.

Numeric checks compare a quantity given in different ways against itself (the
unit conversions are exact definitions: 1 in = 25.4 mm, NIST SP 811 (2008)
B.8) and a square bar against its series solution (Timoshenko & Goodier,
Theory of Elasticity, 3rd ed., sec. 109: J = 0.1406 a^4 for a square of side a).
"""

from __future__ import annotations

import json
import re

import ezdxf
import pytest

from soapfilm.cli import SUBCOMMANDS, build_parser, main

#: commands that read a section, and the arguments that make each one run
READING = ("solve", "show", "check", "shaft", "batch", "sweep")
SHARED = ("--units", "--layer", "--join-tolerance", "--mesh-size", "--tol", "--peak-tol",
          "--max-elements", "--order")


def options_of(command: str) -> set[str]:
    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "command").choices[command]
    return {s for a in sub._actions for s in a.option_strings}


@pytest.mark.parametrize("command", READING)
def test_every_reading_command_has_the_shared_options(command):
    assert set(SHARED) <= options_of(command)


def test_every_command_is_listed():
    assert set(READING) <= set(SUBCOMMANDS)


def _drawing(path, gap=0.0, stray=False):
    """A 20 x 10 mm rectangle of four LINEs on layer OUTLINE; optional gap and stray line."""
    doc = ezdxf.new()
    doc.units = ezdxf.units.MM
    doc.layers.add("OUTLINE")
    msp = doc.modelspace()
    pts = [(0, 0), (20, 0), (20, 10), (0, 10)]
    for k in range(4):
        a, b = pts[k], pts[(k + 1) % 4]
        if k == 3:
            b = (b[0], b[1] + gap)
        msp.add_line(a, b, dxfattribs={"layer": "OUTLINE"})
    if stray:
        msp.add_line((30, 0), (40, 5), dxfattribs={"layer": "NOTES"})
    doc.saveas(path)
    return path


def _run_args(command, section, tmp_path):
    """Arguments that make ``command`` run on ``section`` (a DXF drawing)."""
    if command == "solve":
        return ["solve", str(section), "--quiet", "--tol", "1e-2"]
    if command == "show":
        return ["show", str(section), "--png", str(tmp_path / "s.png"), "--quiet"]
    if command == "check":
        return ["check", str(section), "--torque", "10 N*m", "--length", "1 m",
                "--shear-modulus", "79 GPa", "--allowable-shear", "100 MPa", "--quiet",
                "--tol", "1e-2"]
    if command == "shaft":
        f = tmp_path / "shaft.toml"
        f.write_text(f'name = "bar"\n[[segment]]\nlength = "1 m"\nsection = "{section}"\n'
                     'material = "carbon-steel"\n[[load]]\nat = "0 mm"\ntorque = "10 N*m"\n'
                     '[[support]]\nat = "1 m"\n')
        return ["shaft", str(f), "--quiet", "--tol", "1e-2"]
    if command == "batch":
        return ["batch", str(section), "--quiet", "--jobs", "1", "--tol", "1e-2"]
    raise AssertionError(command)


HINTED = re.compile(r"(--[a-z][a-z-]+)")


@pytest.mark.parametrize("command", ["solve", "show", "check", "shaft", "batch"])
@pytest.mark.parametrize("case", ["stray", "gap"])
def test_dxf_hints_name_options_the_command_has(command, case, tmp_path, capsys):
    """Each DXF error hint names an option of the command that printed it, and that
    option, given as the hint says, makes the command run."""
    dxf = _drawing(tmp_path / "d.dxf", gap=0.004 if case == "gap" else 0.0,
                   stray=case == "stray")
    args = _run_args(command, dxf, tmp_path)
    code = main(args)
    out = capsys.readouterr()
    text = out.err + out.out
    if command == "batch":  # a batch goes on: the row carries the error, status 4
        assert code == 4  # EXIT_ROWS_FAILED
    else:
        assert code == 2, text
    named = set(HINTED.findall(text.split("(", 1)[-1])) - {"--debug"}
    wanted = "--layer" if case == "stray" else "--join-tolerance"
    assert wanted in named, text
    assert named <= options_of(command), (named, text)
    fix = ["--layer", "OUTLINE"] if case == "stray" else ["--join-tolerance", "0.005"]
    # it runs: 0, or 3 where a check ran and the bar failed it (soapfilm.errors)
    assert main([*args, *fix]) in (0, 3), capsys.readouterr().err


def _square(tmp_path, side=10.0, name="sq.txt"):
    f = tmp_path / name
    f.write_text(f"0 0\n{side} 0\n{side} {side}\n0 {side}\n")
    return f


def test_unit_rule_same_answer_every_way(tmp_path):
    """A torque, a length, a modulus and a mesh size given bare, with the stated unit
    and in another unit give identical results in check, solve and shaft."""
    sq = _square(tmp_path)
    outs = []
    for torque, length, g, h in [("50", "500", "79.3", "1"),
                                 ("50 N*m", "500 mm", "79.3 GPa", "1 mm"),
                                 ("50000 N*mm", "0.5 m", "79300 MPa", "0.1 cm")]:
        out = tmp_path / f"c{len(outs)}.json"
        assert main(["check", str(sq), "--torque", torque, "--length", length,
                     "--shear-modulus", g, "--allowable-shear", "500", "--twist-limit", "50",
                     "--mesh-size", h, "--json", str(out), "--quiet"]) in (0, 3)
        outs.append(json.loads(out.read_text()))
    for key in ("max_shear_stress_Pa", "twist_angle_rad", "torsional_stiffness_Nm_per_rad"):
        assert outs[0][key] == pytest.approx(outs[1][key], rel=1e-12)
        assert outs[0][key] == pytest.approx(outs[2][key], rel=1e-12)
    # J of the 10 mm square from the series: 0.1406 a^4 (Timoshenko & Goodier, sec. 109)
    j = outs[0]["section"]["torsion_constant_m4"]
    assert j == pytest.approx(0.1406 * (10e-3) ** 4, rel=2e-3)
    # solve: --mesh-size bare (the section's unit) or with a unit: the same mesh
    res = []
    for units, h in [("mm", "1"), ("mm", "1 mm"), ("cm", "0.1"), ("cm", "1 mm")]:
        out = tmp_path / f"s{len(res)}.json"
        f = _square(tmp_path, 10.0 if units == "mm" else 1.0, name=f"sq_{units}.txt")
        assert main(["solve", str(f), "--units", units, "--mesh-size", h, "--json", str(out),
                     "--quiet"]) == 0
        d = json.loads(out.read_text())
        res.append((d["mesh"]["elements"], d["torsion_constant"]
                    * (1.0 if units == "mm" else 1e4)))
    assert res[0] == res[1] and res[2] == res[3]  # the same mesh, the same numbers
    # the 10 mm square in mm and the 1 cm square in cm (the mesher rounds differently):
    # both at the series value 0.1405770 a^4 (Timoshenko & Goodier, sec. 109)
    for _, j_mm4 in res:
        assert j_mm4 == pytest.approx(0.1405770 * 10.0**4, rel=1e-5)


def test_shaft_file_bare_numbers_follow_the_rule(tmp_path):
    """A shaft file with bare numbers (mm, N*m) gives the same check as with units."""
    outs = []
    for length, torque, d in [("400", "150", "30"), ('"400 mm"', '"150 N*m"', '"30 mm"')]:
        f = tmp_path / "s.toml"
        f.write_text(f'name = "rule"\n[[segment]]\nlength = {length}\n'
                     f'section = {{ diameter = {d} }}\nmaterial = "carbon-steel"\n'
                     f'[[load]]\nat = 0\ntorque = {torque}\n[[support]]\nat = {length}\n')
        out = tmp_path / f"o{len(outs)}.json"
        assert main(["shaft", str(f), "--json", str(out), "--quiet"]) in (0, 3)
        outs.append(json.loads(out.read_text()))
    a, b = outs
    assert a["segments"][0]["max_shear_stress_Pa"] == b["segments"][0]["max_shear_stress_Pa"]
    # 16 T / (pi d^3) for a round bar (any mechanics-of-materials text)
    import math

    assert a["segments"][0]["max_shear_stress_Pa"] == pytest.approx(
        16 * 150 / (math.pi * 0.03**3), rel=1e-9)


def test_implausible_scale_is_warned(tmp_path, capsys):
    """A point list written in metres (0.04 across) and a unitless DXF of a part drawn
    in inches (1.25 across) are read as mm, with a warning that names the size seen and
    the --units that would make it a plausible bar section."""
    pts = tmp_path / "metres.txt"
    pts.write_text("0 0\n0.04 0\n0.04 0.02\n0 0.02\n")
    assert main(["check", str(pts), "--torque", "100 N*m", "--length", "1 m",
                 "--material", "carbon-steel", "--quiet", "--json",
                 str(tmp_path / "m.json")]) in (0, 3)
    warnings = json.loads((tmp_path / "m.json").read_text())["section"]["warnings"]
    (w,) = [w for w in warnings if "across" in w]
    assert "0.04 mm across" in w and "--units m" in w
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 0
    doc.modelspace().add_circle((0, 0), 0.625)
    dxf = tmp_path / "inch.dxf"
    doc.saveas(dxf)
    out = tmp_path / "i.json"
    assert main(["solve", str(dxf), "--json", str(out), "--quiet", "--tol", "1e-2"]) == 0
    (w,) = [w for w in json.loads(out.read_text())["warnings"] if "across" in w]
    assert "1.25 mm across" in w and "--units in" in w
    # stated units: no warning
    assert main(["solve", str(dxf), "--units", "in", "--json", str(out), "--quiet",
                 "--tol", "1e-2"]) == 0
    assert not [w for w in json.loads(out.read_text())["warnings"] if "across" in w]
    # a plausible size with an assumed unit: no warning
    assert main(["solve", str(_square(tmp_path, 40.0)), "--json", str(out), "--quiet",
                 "--tol", "1e-2"]) == 0
    assert not [w for w in json.loads(out.read_text())["warnings"] if "across" in w]


def test_dxf_notes_are_warnings_not_log_lines(tmp_path, capsys):
    """Ignored entities are reported among the warnings; stderr stays clean."""
    doc = ezdxf.new()
    doc.units = ezdxf.units.MM
    msp = doc.modelspace()
    msp.add_circle((0, 0), 10)
    msp.add_text("note")
    dxf = tmp_path / "t.dxf"
    doc.saveas(dxf)
    out = tmp_path / "t.json"
    assert main(["solve", str(dxf), "--json", str(out), "--quiet", "--tol", "1e-2"]) == 0
    assert capsys.readouterr().err == ""
    assert any("1 TEXT" in w for w in json.loads(out.read_text())["warnings"])


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["--tol", "2"], "--tol"),
        (["--tol", "0"], "--tol"),
        (["--peak-tol", "1.5"], "--peak-tol"),
        (["--mesh-size", "-1"], "--mesh-size"),
        (["--mesh-size", "3 N*m"], "--mesh-size"),
        (["--join-tolerance", "0"], "--join-tolerance"),
        (["--stress-unit", "ksi"], "--stress-unit"),
        (["--max-elements", "3"], "--max-elements"),
    ],
)
def test_bad_shared_options_are_one_line(tmp_path, capsys, args, needle):
    assert main(["solve", str(_square(tmp_path)), *args]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and needle in err and "Traceback" not in err


def test_unrecognised_argument_points_to_the_command_help(capsys):
    assert main_exit(["check", "x.txt", "--frobnicate"]) == 2
    err = capsys.readouterr().err
    assert "soapfilm check --help" in err and err.count("\n") == 1


def main_exit(argv):
    try:
        return main(argv)
    except SystemExit as exc:
        return exc.code


@pytest.mark.parametrize("side", [1e-9, 1e-3, 1e6])
def test_any_scale_meshes(tmp_path, side):
    """A square of any size is meshed and solved (the mesher's area limit keeps every
    digit): J = 0.1405770 a^4 (Timoshenko & Goodier, 3rd ed., sec. 109)."""
    f = _square(tmp_path, side)
    out = tmp_path / "o.json"
    assert main(["solve", str(f), "--units", "m", "--json", str(out), "--quiet",
                 "--tol", "1e-3"]) == 0
    j = json.loads(out.read_text())["torsion_constant"]
    assert j == pytest.approx(0.1405770 * side**4, rel=1e-4)


@pytest.mark.parametrize("argv", [["--version"], ["--help"], ["solve", "--help"],
                                  ["check", "--help"], ["shaft", "--help"], ["show", "--help"],
                                  ["batch", "--help"], ["sweep", "--help"],
                                  ["shapes", "--help"]])
def test_help_imports_no_scientific_stack(argv):
    """--help and --version answer from the standard library alone (the start-up time
    itself is measured in tests/bench/bench_startup.py, not here)."""
    import subprocess
    import sys

    heavy = ("numpy", "scipy", "shapely", "matplotlib", "pint", "triangle", "ezdxf", "rich")
    code = (f"import sys, runpy\nsys.argv = ['soapfilm', *{argv!r}]\n"
            "try:\n    runpy.run_module('soapfilm', run_name='__main__')\n"
            "except SystemExit:\n    pass\n"
            f"print('HEAVY:' + ' '.join(m for m in {heavy!r} if m in sys.modules), "
            "file=sys.stderr)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=120)
    line = [ln for ln in done.stderr.splitlines() if ln.startswith("HEAVY:")][-1]
    assert line == "HEAVY:", line


def test_reader_leaving_the_pipe_early(tmp_path):
    """`soapfilm solve ... --json o.json | head -3`: the file is written and the status
    is 0, although the table could not be printed whole."""
    import subprocess
    import sys
    from pathlib import Path

    hexfile = Path(__file__).resolve().parents[1] / "shapes" / "hex-drive.toml"
    out = tmp_path / "o.json"
    proc = subprocess.Popen([sys.executable, "-m", "soapfilm", "solve", str(hexfile), "--json",
                             str(out)], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    proc.stdout.close()  # the reader goes away before the table is printed
    err = proc.stderr.read().decode()
    assert proc.wait(timeout=300) == 0, err
    assert "error" not in err
    assert json.loads(out.read_text())["torsion_constant"] > 0


@pytest.mark.parametrize("command", ["solve", "check", "batch-csv", "batch-json", "sweep"])
def test_no_output_overwrites_the_input(tmp_path, capsys, command):
    sq = _square(tmp_path, 20.0)
    before = sq.read_text()
    shape = tmp_path / "bar.toml"
    shape.write_text('[section]\nkind = "rectangle"\nwidth = 20\nheight = 10\n')
    shape_text = shape.read_text()
    argv = {
        "solve": ["solve", str(sq), "--json", str(sq)],
        "check": ["check", str(sq), "--torque", "1", "--length", "1", "--material",
                  "bronze", "--json", str(sq)],
        "batch-csv": ["batch", str(sq), "--csv", str(sq)],
        "batch-json": ["batch", str(sq), "--json", str(sq)],
        "sweep": ["sweep", str(shape), "--vary", "height=5,6", "--json", str(shape)],
    }[command]
    assert main(argv) == 2
    assert "would overwrite the input file" in capsys.readouterr().err
    assert sq.read_text() == before and shape.read_text() == shape_text


def test_sweep_refuses_drawing_options(tmp_path, capsys):
    shape = tmp_path / "bar.toml"
    shape.write_text('[section]\nkind = "rectangle"\nwidth = 20\nheight = 10\n')
    assert main(["sweep", str(shape), "--vary", "height=5,6", "--layer", "A"]) == 2
    assert "keys layer and join_tolerance" in capsys.readouterr().err
