"""Hostile and careless quantities: the grammar, ranges, signs, shaft-file types, messages.

Every bad value ends in one line on stderr and exit status 2 (an InputError in the
API); every good one gives the right value.  References: NIST Special Publication
811 (2008), Appendix B.8/B.9 for conversion factors (seven significant figures,
hence rtol 1e-6; exact where the factor is a definition: inch 0.0254 m, foot
0.3048 m, degree pi/180 rad); the torsion formula for round bars and equilibrium
of a free body (Gere, Mechanics of Materials, torsion of circular bars); Saint-
Venant's series for the square bar (Timoshenko & Goodier, Theory of Elasticity,
3rd ed., sec. 109, in ``tests/reference.py``).
"""

from __future__ import annotations

import json
import logging
import math
import textwrap
import time
import warnings

import pytest

import reference as ref
from soapfilm.cli import main
from soapfilm.errors import InputError, one_line
from soapfilm.units import PLAUSIBLE, parse_drawing_length, parse_quantity, per_length

NIST_RTOL = 1e-6  # NIST SP 811 gives seven significant figures
EXACT = 1e-12  # definitions (inch, foot, degree, SI prefixes), rounding only
NIST_LBF_IN = 0.1129848  # N*m per lbf*in, NIST SP 811, App. B
DEG = math.pi / 180  # rad per degree, exact (SI Brochure, table 8; NIST SP 811 B.9)


def _one_line_error(capsys) -> str:
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith("soapfilm: error: "), err
    assert "Traceback" not in err and "internal error" not in err
    return err


# ----------------------------------------------------------------------------- grammar
@pytest.mark.parametrize(
    ("text", "message"),
    [
        # the cases: pint's parser evaluated these (a hang, an overflow)
        ("9**9**9 N*m", "no arithmetic"),
        ("2**1024 N*m", "no arithmetic"),
        # and their kin
        ("10^3 N*m", "no arithmetic"),
        ("1/2 N*m", "no arithmetic"),
        ("250 N*m^2^3", "no powers of powers"),
        ("250 N*m^1024", "exponent 1024 is out of range"),
        ("250 N*m^1.5", "whole number"),
        ("250 N*m + 3 N*m", r"unexpected '\+'"),
        ("250 2 N*m", "goes in brackets"),
        ("250 ((((((((N*m))))))))", "brackets inside brackets"),
        ("250 (N*m", "not closed"),
        ("250 N*m)", r"unexpected '\)'"),
        ("250 N*", "ends after"),
        ("N*m 250", "must start with a number"),
        ("inf N*m", "must start with a number"),
        ("250 N*m;", "unexpected ';'"),
    ],
)
def test_no_arithmetic_is_evaluated(text, message):
    start = time.perf_counter()
    with pytest.raises(InputError, match=message) as err:
        parse_quantity(text, "torque", "--torque")
    assert time.perf_counter() - start < 1.0
    assert "--torque" in str(err.value) and "\n" not in str(err.value)


def test_brackets_with_numbers_are_read_without_evaluating_text():
    """A twist limit per a length: 1 deg/(800 mm) = (pi/180) / 0.8 rad/m (degree exact);
    the rule "1 deg in 20 diameters" of d = 40 mm written as a product gives the same."""
    for text in ("1 deg/(800 mm)", "1 deg / (20*40 mm)", "1°/(800 mm)"):
        assert parse_quantity(text, "twist_rate", "t") == pytest.approx(DEG / 0.8, rel=EXACT)
        assert per_length(text) == pytest.approx(0.8, rel=EXACT)
    with pytest.raises(InputError, match="no arithmetic"):
        parse_quantity("1 deg/(10**300 mm)", "twist_rate", "t")
    with pytest.raises(InputError, match="no arithmetic"):
        parse_quantity("1 deg/(9**9**9 mm)", "twist_rate", "t")
    with pytest.raises(InputError, match="divides by zero"):
        parse_quantity("1 deg/(0 mm)", "twist_rate", "t")


@pytest.mark.parametrize(
    ("text", "kind", "si", "rtol"),
    [
        # NIST SP 811 B.8: pound-force inch 1.129 848 E-01 N*m; a space is a product
        ("1800 lbf in", "torque", 1800 * NIST_LBF_IN, NIST_RTOL),
        ("1800 lbf·in", "torque", 1800 * NIST_LBF_IN, NIST_RTOL),
        # a dot between letters is a product (trade spelling "N.m"), SI exact
        ("250 N.m", "torque", 250.0, EXACT),
        # N/mm^2 = MPa (SI prefixes, exact); superscripts are powers
        ("10 N/mm²", "stress", 10e6, EXACT),
        ("10 N/mm^2", "stress", 10e6, EXACT),
        ("10 N*mm**-2", "stress", 10e6, EXACT),
        # micro: both the micro sign and the Greek mu (SI prefix, exact)
        ("5 µm", "length", 5e-6, EXACT),
        ("5 μm", "length", 5e-6, EXACT),
        # 0.25°/m: degree exact
        ("0.25°/m", "twist_rate", 0.25 * DEG, EXACT),
        # the Unicode minus sign is a minus
        ("−5 N*m", "torque", -5.0, EXACT),
        ("+5 N*m", "torque", 5.0, EXACT),
        # e-notation in every form float() reads
        ("1.2E3 mm", "length", 1.2, EXACT),
        (".5 in", "length", 0.0127, EXACT),
    ],
)
def test_spellings_read_right(text, kind, si, rtol):
    assert parse_quantity(text, kind, "t") == pytest.approx(si, rel=rtol)


def test_twist_basis_per_length():
    """The length a twist limit is written per (foot 0.3048 m and inch 0.0254 m exact,
    NIST SP 811 B.8)."""
    from soapfilm.members.shaftfile import twist_basis_of

    assert per_length("0.08 deg/ft") == pytest.approx(0.3048, rel=EXACT)
    assert per_length("1 deg/(20 in)") == pytest.approx(0.508, rel=EXACT)
    assert per_length("0.25 deg*m^-1") == pytest.approx(1.0, rel=EXACT)
    assert per_length("0.25") is None and per_length(0.25) is None
    assert per_length("9**9**9 deg/m") is None
    assert twist_basis_of("1 deg/(9**9**9 mm)") == 1.0  # the default basis; the limit is refused


def test_unknown_units_and_case():
    with pytest.raises(InputError, match=r"unknown unit 'MPA'.*did you mean 'MPa'"):
        parse_quantity("120 MPA", "stress", "--yield")
    with pytest.raises(InputError, match=r"unknown unit 'in2'"):
        parse_quantity("5 in2", "length", "x")
    with pytest.raises(InputError, match="cannot read"):  # an offset unit cannot be scaled
        parse_quantity("5 degC", "length", "x")


@pytest.mark.parametrize("value", [True, None, ["mm"], {"a": 1}, b"5 mm"])
def test_wrong_types_name_what_was_given(value):
    with pytest.raises(InputError, match="expected a length as text with a unit"):
        parse_quantity(value, "length", "key 'length'")


def test_long_text_is_refused_and_not_echoed():
    """A 10 MB value: refused at once, the message short and on one line."""
    text = "1" * 10_000_000 + " N*m"
    start = time.perf_counter()
    with pytest.raises(InputError, match="characters long") as err:
        parse_quantity(text, "torque", "--torque")
    assert time.perf_counter() - start < 1.0
    assert len(str(err.value)) < 200
    with pytest.raises(InputError):
        parse_quantity("1" * 10_000_000, "torque", "--torque")


# ----------------------------------------------------------------------------- ranges
@pytest.mark.parametrize(
    ("value", "kind"),
    [
        ("1e-300 Pa", "modulus"),  # the issue's --shear-modulus case
        ("1e-300 mm", "length"),  # the shaft segment and nominal diameter
        ("1e300 N*m", "torque"),
        ("1e999 N*m", "torque"),  # beyond any float
        ("1e400", "torque"),
        (10**400, "torque"),  # a Python int beyond any float (API)
        ("5e-324 nm", "length"),  # underflows to 0 in metres
        ("1 deg/(1e300*1e300 mm)", "twist_rate"),  # overflows inside the unit
        ("1e-200 deg/(1e200 mm)", "twist_rate"),  # underflows in the product
        ("1e20 GPa", "stress"),
    ],
)
def test_implausible_values_are_refused_with_the_range(value, kind):
    with pytest.raises(InputError, match="outside the range soapfilm takes") as err:
        parse_quantity(value, kind, "x")
    assert PLAUSIBLE[kind][2] in str(err.value)
    assert len(str(err.value)) < 600


def test_range_limits_themselves_are_taken():
    """Each kind's bounds are inside (1 nm = 1e-9 m; 1 GPa = 1e9 Pa, SI prefixes)."""
    assert parse_quantity("1 nm", "length", "x") == pytest.approx(1e-9, rel=EXACT)
    assert parse_quantity("1000 km", "length", "x") == pytest.approx(1e6, rel=EXACT)
    assert parse_quantity("1e4 GPa", "modulus", "x") == pytest.approx(1e13, rel=EXACT)
    assert parse_quantity("0 N*m", "torque", "x") == 0.0


@pytest.mark.parametrize("value", ["nan", "inf", "-inf", float("nan"), float("inf")])
def test_not_finite(value):
    with pytest.raises(InputError, match="not a finite value"):
        parse_quantity(value, "torque", "x")


def test_drawing_lengths_in_range():
    with pytest.raises(InputError, match="outside the range"):
        parse_drawing_length("1e-300", "--mesh-size")
    with pytest.raises(InputError, match="outside the range"):
        parse_drawing_length("1e-300 mm", "--mesh-size")
    with pytest.raises(InputError, match="negative"):
        parse_drawing_length("-1 mm", "--mesh-size")
    # 0.5 mm = 0.5 / 25.4 in (inch = 25.4 mm exactly, NIST SP 811 B.8)
    assert parse_drawing_length("0.5 mm", "x").in_unit("in") == pytest.approx(0.5 / 25.4,
                                                                              rel=EXACT)


# ----------------------------------------------------------------------------- signs
def test_sign_rules():
    """A torque keeps its sign; a size is a magnitude; zero where only above zero makes sense."""
    assert parse_quantity("-5 N*m", "torque", "x") == -5.0
    assert parse_quantity("-5", "torque", "x") == -5.0  # bare: N*m by the one rule
    with pytest.raises(InputError, match="'-5 mm' is negative, but a length here is a magnitude"):
        parse_quantity("-5 mm", "length", "--length", sign="positive")
    with pytest.raises(InputError, match="is zero"):
        parse_quantity("0 mm", "length", "--length", sign="positive")
    assert parse_quantity("0 mm", "length", "bore", sign="nonnegative") == 0.0
    with pytest.raises(InputError, match="negative"):
        parse_quantity("-1 mm", "length", "bore", sign="nonnegative")


# ----------------------------------------------------------------------------- command line
@pytest.fixture
def square(tmp_path):
    path = tmp_path / "square.txt"
    path.write_text("0 0\n10 0\n10 10\n0 10\n")
    return path


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["solve", "{sq}", "--torque", "9**9**9 N*m"], "no arithmetic"),
        (["solve", "{sq}", "--torque", "2**1024 N*m"], "no arithmetic"),
        # solve scales a picture of |tau|: a torque magnitude only
        (["solve", "{sq}", "--torque", "-5 N*m"], "magnitude"),
        (["solve", "{sq}", "--torque", "0 N*m"], "positive"),
        (["check", "{sq}", "--torque", "5 N*m", "--length", "1 m", "--shear-modulus",
          "1e-300 Pa"], "outside the range"),
        (["check", "{sq}", "--torque", "5 N*m", "--length", "1 m", "--material",
          "carbon-steel", "--nominal-diameter", "1e-300 mm"], "outside the range"),
        # kin: within the range but not the size of the section (Kts would print 0.000)
        (["check", "{sq}", "--torque", "5 N*m", "--length", "1 m", "--material",
          "carbon-steel", "--nominal-diameter", "0.001 mm"], "not the size of this section"),
        (["check", "{sq}", "--torque", "5 N*m", "--length", "-1 m", "--material",
          "carbon-steel"], "negative"),
        (["check", "{sq}", "--torque", "1e300 N*m", "--length", "1 m", "--material",
          "carbon-steel"], "outside the range"),
        (["check", "{sq}", "--torque", "5 N*m", "--length", "1 m", "--material",
          "carbon-steel", "--safety-factor", "1e300"], "implausibly large"),
    ],
)
def test_command_line_cases(square, tmp_path, capsys, args, message):
    out = tmp_path / "never.json"
    start = time.perf_counter()
    code = main([a.format(sq=square) for a in args] + ["--json", str(out)])
    assert time.perf_counter() - start < 30
    err = _one_line_error(capsys)
    assert code == 2 and message in err, err
    assert not out.exists()


def test_check_keeps_the_torque_sign(square, tmp_path, capsys):
    """-5 N*m: the same stress and verdict as +5 N*m, the twist the other way.

    Twist = T L / (G J) with J of the 10 mm square from Saint-Venant's series; the
    solver's default tolerance is 1e-3 on J.
    """
    runs = {}
    for t in ("5 N*m", "-5 N*m"):
        out = tmp_path / f"check{t[0]}.json"
        code = main(["check", str(square), "--torque", t, "--length", "1 m",
                     "--shear-modulus", "80 GPa", "--allowable-shear", "100 MPa",
                     "--twist-limit", "10 deg/m", "--json", str(out), "--quiet"])
        assert code == 0
        runs[t] = json.loads(out.read_text())
    assert capsys.readouterr().err == ""
    j = ref.rectangle_series(10.0, 10.0)[0] * 1e-12
    pos, neg = runs["5 N*m"], runs["-5 N*m"]
    assert neg["torque_Nm"] == -5.0 and pos["torque_Nm"] == 5.0
    assert neg["twist_angle_rad"] == pytest.approx(-5.0 * 1.0 / (80e9 * j), rel=1e-3)
    assert pos["twist_angle_rad"] == pytest.approx(5.0 * 1.0 / (80e9 * j), rel=1e-3)
    assert neg["max_shear_stress_Pa"] == pos["max_shear_stress_Pa"] > 0
    assert neg["passed"] is pos["passed"] is True


# ----------------------------------------------------------------------------- shaft files
SHAFT = """
{top}
[check]
material = "carbon-steel"

[[segment]]
{seg}
length = {length}
section = {{ diameter = {diameter}{section_extra} }}

[[load]]
{load}
at = "0 mm"
torque = {t1}

[[load]]
at = "{end}"
torque = {t2}
"""


def _shaft(tmp_path, **kw):
    fields = dict(top="", seg="", length='"200 mm"', diameter='"40 mm"', section_extra="",
                  load="", t1='"-150 N*m"', t2='"150 N*m"', end="200 mm")
    fields.update(kw)
    path = tmp_path / "shaft.toml"
    path.write_text(textwrap.dedent(SHAFT.format(**fields)))
    return path


SHAFT_CASES = {
    # the cases
    "section_units_list": (dict(top='section_units = ["mm"]'),
                           r"key 'section_units': is an array, but section_units must be text "
                           r"in quotes \(write section_units = \"mm\"\)$"),
    "name_list": (dict(top='name = ["drive"]'),
                  r"key 'name': is an array.*\(write name = \"drive\"\)$"),
    "segment_length_tiny": (dict(length='"1e-300 mm"'),
                            r"segment 1 key 'length': '1e-300 mm' is outside the range"),
    # kin: every key of the wrong TOML type names the key and how to write it
    "description_int": (dict(top="description = 5"),
                        r"key 'description': is an integer.*\(write description = \"...\"\)$"),
    "twist_rule_int": (dict(top="twist_rule = 3"), r"key 'twist_rule': is an integer"),
    "twist_limit_table": (dict(top="twist_limit = { a = 1 }"), r"key 'twist_limit': is a table.*"
                          r"\(write twist_limit = \"<number> <unit>\"\)$"),
    "segment_name_list": (dict(seg='name = ["x"]'), r"segment 1 key 'name': is an array.*"
                          r"\(write name = \"x\"\)$"),
    "segment_material_int": (dict(seg="material = 5"), r"segment 1 key 'material': is an integer"),
    "length_bool": (dict(length="true"), r"key 'length': is true/false.*\(write length = \""),
    "length_date": (dict(length="1979-05-27"), r"key 'length': is a date or time"),
    "load_name_int": (dict(load="name = 5"), r"load 1 key 'name': is an integer"),
    "load_name_table": (dict(load="name = { a = 1 }"), r"load 1 key 'name': is a table"),
    "section_units_in_section": (dict(section_extra=', units = ["mm"]'),
                                 r"key 'units': is an array.*\(write units = \"mm\"\)$"),
    # hostile values
    "diameter_tiny": (dict(diameter='"1e-300 mm"'), r"key 'diameter': '1e-300 mm' is outside"),
    "diameter_negative": (dict(diameter='"-40 mm"'), r"key 'diameter': '-40 mm' is negative"),
    "length_negative": (dict(length='"-200 mm"'), r"key 'length': '-200 mm' is negative"),
    "bore_negative": (dict(section_extra=', bore = "-5 mm"'), r"key 'bore': '-5 mm' is negative"),
    "nominal_tiny": (dict(section_extra=', nominal_diameter = "1e-300 mm"'),
                     r"key 'nominal_diameter': '1e-300 mm' is outside"),
    "nominal_not_the_size": (dict(section_extra=', nominal_diameter = "40 m"'),
                             r"key 'nominal_diameter': a nominal diameter of 40000 mm is not the "
                             r"size"),
    "torque_huge": (dict(t1='"-1e300 N*m"'), r"load 1 key 'torque': '-1e300 N\*m' is outside"),
    "torque_arithmetic": (dict(t1='"-2**1024 N*m"'), r"no arithmetic"),
    "twist_limit_arithmetic": (dict(top='twist_limit = "1 deg/(9**9**9 mm)"'),
                               r"key 'twist_limit': cannot read .* no arithmetic"),
    "twist_limit_negative": (dict(top='twist_limit = "-0.25 deg/m"'), r"is negative"),
    "modulus_tiny": (dict(seg='shear_modulus = "1e-300 Pa"'), r"key 'shear_modulus'"),
}


@pytest.mark.parametrize("case", sorted(SHAFT_CASES))
def test_bad_shaft_files(tmp_path, capsys, case):
    fields, message = SHAFT_CASES[case]
    path = _shaft(tmp_path, **fields)
    out = tmp_path / "never.json"
    start = time.perf_counter()
    code = main(["shaft", str(path), "--json", str(out)])
    assert time.perf_counter() - start < 30
    err = _one_line_error(capsys)
    assert code == 2, err
    import re

    assert re.search(message, err), err
    assert re.search(r" \([^()]+\)$", err), err  # every refusal ends with what to do
    assert not out.exists()


@pytest.mark.parametrize(("text", "hint"), [
    ('section = 5\n', "write [section] on a line of its own"),
    ('part = 5\n', "write [[part]] on a line of its own"),
    ('part = [5]\n', "write [[part]] on a line of its own"),
    ('mesh = 5\n[section]\nkind = "round"\ndiameter = 10\n', "write [mesh] on a line of its own"),
    ('units = ["mm"]\n[section]\nkind = "round"\ndiameter = 10\n', 'write e.g. units = "mm"'),
    ('[section]\nkind = "round"\ndiameter = [10]\n', "write e.g. diameter = 12.5"),
    ('[section]\nkind = "outline"\npoints = [[0, 0], [9, 0], [9, 9]]\nholes = 5\n',
     "write e.g. holes = [["),
])
def test_shape_file_keys_of_the_wrong_type_say_how_to_write_them(tmp_path, capsys, text, hint):
    """A shape-file table or key of the wrong TOML type: one line ending in how to write it."""
    path = tmp_path / "wrong.toml"
    path.write_text(text)
    assert main(["solve", str(path), "--quiet"]) == 2
    err = _one_line_error(capsys)
    assert hint in err and err.rstrip().endswith(")"), err


@pytest.mark.parametrize(("value", "message"), [("true", "is true/false"),
                                                ("1e300", "implausibly large"),
                                                ('"2**9"', "expected a plain number")])
def test_bad_safety_factors_in_shaft_files(tmp_path, capsys, value, message):
    path = _shaft(tmp_path)
    path.write_text(path.read_text().replace('material = "carbon-steel"',
                                             f'material = "carbon-steel"\nsafety_factor = {value}'))
    assert main(["shaft", str(path)]) == 2
    assert message in _one_line_error(capsys)


def test_shaft_torques_keep_their_sign(tmp_path, capsys):
    """Loads -150 N*m at x = 0 and +150 N*m at the end of a 40 mm round bar 200 mm long.

    Equilibrium of the free body: the internal torque is 150 N*m in size, its sign
    reversed when the loads are; twist = T L / (G J), J = pi d^4 / 32 (Gere, torsion
    of circular bars), G = 81 GPa of the carbon-steel preset (its stated source).
    """
    j = math.pi * 0.040**4 / 32
    twist = 150 * 0.2 / (81e9 * j)
    results = []
    for t1, t2 in (('"-150 N*m"', '"150 N*m"'), ('"150 N*m"', '"-150 N*m"')):
        out = tmp_path / "shaft.json"
        assert main(["shaft", str(_shaft(tmp_path, t1=t1, t2=t2)), "--json", str(out),
                     "--quiet"]) == 0
        results.append(json.loads(out.read_text()))
    assert capsys.readouterr().err == ""
    a, b = (r["segments"][0] for r in results)
    assert abs(a["internal_torque_Nm"]) == pytest.approx(150.0, rel=EXACT)
    assert b["internal_torque_Nm"] == pytest.approx(-a["internal_torque_Nm"], rel=EXACT)
    assert abs(a["twist_angle_rad"]) == pytest.approx(twist, rel=1e-12)
    assert b["twist_angle_rad"] == pytest.approx(-a["twist_angle_rad"], rel=EXACT)
    assert [s["torque_Nm"] for s in results[0]["stations"]] == [-150.0, 150.0]


# ----------------------------------------------------------------------------- messages
def test_long_quotes_are_cut_in_every_message():
    """Any InputError quoting a huge input stays a readable line."""
    exc = InputError(f"unknown material {'x' * 5_000_000!r}", where="a\nb", fix="y" * 10_000)
    text = str(exc)
    assert "\n" not in text and len(text) < 1200
    assert "characters cut" in text and text.startswith("a b: unknown material 'xxx")
    assert one_line("\x1b[31mred") == "\\x1b[31mred"  # no terminal escape reaches the screen


def test_command_line_cuts_a_long_value(square, capsys):
    code = main(["check", str(square), "--torque", "5", "--length", "1",
                 "--material", "x" * 1_000_000])
    err = _one_line_error(capsys)
    assert code == 2 and len(err) < 1300 and "characters cut" in err


# ----------------------------------------------------------------------------- warnings
def _noisy_run(raise_error):
    import numpy as np

    def run(args):
        with np.errstate(over="warn"):
            np.float64(1e308) * np.float64(10.0)  # numpy: "overflow encountered ..."
            np.float64(1e308) * np.float64(10.0)  # the same again: shown once
        warnings.warn("a library's note\nover two lines", UserWarning, stacklevel=1)
        warnings.warn("old API", DeprecationWarning, stacklevel=1)  # for developers: dropped
        logging.getLogger("ezdxf").warning("a library's WARNING record")  # below ERROR: dropped
        logging.getLogger("ezdxf").error("a library's ERROR record\nwith a second line")
        logging.getLogger("soapfilm.batch").warning("our own warning")
        if raise_error:
            raise InputError("bad value", where="--x")
        return 0
    return run


def test_warnings_and_log_records_become_one_line_notices(monkeypatch, capsys):
    import soapfilm.cli.shapes as shapes_cmd

    monkeypatch.setattr(shapes_cmd, "run", _noisy_run(False))
    with warnings.catch_warnings():
        warnings.simplefilter("default")  # as in a user's shell, whatever pytest's filters
        assert main(["shapes"]) == 0
    lines = capsys.readouterr().err.splitlines()
    assert all(line.startswith("soapfilm: warning: ") for line in lines), lines
    assert len(lines) == len(set(lines)) == 4, lines
    text = "\n".join(lines)
    assert "numerical trouble: overflow encountered" in text
    assert "a library's note over two lines" not in text  # first line only
    assert "a library's note" in text and "old API" not in text
    assert "WARNING record" not in text and "ezdxf: a library's ERROR record" in text
    assert "our own warning" in text


def test_an_error_line_stands_alone(monkeypatch, capsys):
    import soapfilm.cli.shapes as shapes_cmd

    monkeypatch.setattr(shapes_cmd, "run", _noisy_run(True))
    with warnings.catch_warnings():
        warnings.simplefilter("default")
        assert main(["shapes"]) == 2
    assert _one_line_error(capsys) == "soapfilm: error: --x: bad value\n"
    # the routing is undone after the run
    assert not any(type(h).__name__ == "_NoticeHandler" for h in logging.getLogger().handlers)
