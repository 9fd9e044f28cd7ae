"""Quantities with units: parsing, dimension checks, display conversions.

Reference for every conversion factor: NIST Special Publication 811 (2008
edition), "Guide for the Use of the International System of Units",
Appendix B.8/B.9 (factors to seven significant figures), hence rtol=1e-6.
"""

from __future__ import annotations

import math

import pytest

from soapfilm.errors import InputError
from soapfilm.units import SYSTEMS, parse_quantity, unit_system

NIST_RTOL = 1e-6  # NIST SP 811 gives seven significant figures


@pytest.mark.parametrize(
    ("text", "kind", "si"),
    [
        # NIST SP 811, App. B: pound-force inch to newton meter 1.129 848 E-01
        ("1 lbf*in", "torque", 0.1129848),
        # NIST SP 811, App. B: pound-force foot to newton meter 1.355 818 E+00
        ("1 lbf*ft", "torque", 1.355818),
        # NIST SP 811, App. B: kip per square inch (ksi) to pascal 6.894 757 E+06
        ("1 ksi", "stress", 6.894757e6),
        # NIST SP 811, App. B: pound-force per square inch (psi) to pascal 6.894 757 E+03
        ("1 psi", "modulus", 6.894757e3),
        # NIST SP 811, App. B: inch to meter 2.54 E-02 (exact)
        ("1 in", "length", 0.0254),
        # NIST SP 811, App. B: foot to meter 3.048 E-01 (exact)
        ("1 ft", "length", 0.3048),
        # NIST SP 811, App. B: degree to radian 1.745 329 E-02
        ("1 deg", "angle", 1.745329e-2),
    ],
)
def test_conversion_factors_match_nist(text, kind, si):
    assert parse_quantity(text, kind, "test") == pytest.approx(si, rel=NIST_RTOL)


def test_examples_from_the_issue():
    """Plain SI values must come back unchanged (exact decimal scaling)."""
    assert parse_quantity("250 N*m", "torque", "t") == pytest.approx(250.0, rel=1e-15)
    assert parse_quantity("1.2 m", "length", "t") == pytest.approx(1.2, rel=1e-15)
    assert parse_quantity("79.3 GPa", "modulus", "t") == pytest.approx(79.3e9, rel=1e-15)
    # 1800 lbf*in with the NIST factor 0.112 984 8 N*m per lbf*in
    assert parse_quantity("1800 lbf*in", "torque", "t") == pytest.approx(
        1800 * 0.1129848, rel=NIST_RTOL)
    # 36 ksi with the NIST factor 6.894 757 MPa per ksi
    assert parse_quantity("36 ksi", "stress", "t") == pytest.approx(36 * 6.894757e6,
                                                                     rel=NIST_RTOL)


def test_trade_spellings_of_torque_units():
    """'Nm', 'N.m' style and hyphenated 'lbf-in' are the same units (common practice)."""
    assert parse_quantity("250 Nm", "torque", "t") == pytest.approx(250.0, rel=1e-15)
    assert parse_quantity("2 kNm", "torque", "t") == pytest.approx(2000.0, rel=1e-15)
    assert parse_quantity("500 Nmm", "torque", "t") == pytest.approx(0.5, rel=1e-15)
    assert parse_quantity("250 N·m", "torque", "t") == pytest.approx(250.0, rel=1e-15)
    assert parse_quantity("10 lbf-in", "torque", "t") == pytest.approx(1.129848, rel=NIST_RTOL)


def test_twist_rate_units():
    # 0.08 deg/ft (line-shafting rule of thumb) in rad/m: 0.08 * 0.01745329 / 0.3048 (NIST)
    assert parse_quantity("0.08 deg/ft", "twist_rate", "t") == pytest.approx(
        0.08 * 1.745329e-2 / 0.3048, rel=NIST_RTOL)


@pytest.mark.parametrize(
    ("text", "kind", "message"),
    [
        ("250 mm", "torque", r"'250 mm' is a length, but a torque is expected"),
        ("250 N*m", "length", r"is a torque, but a length is expected"),
        ("36 ksi", "torque", r"is a stress, but a torque is expected"),
        ("250 furlongs_per_fortnight", "torque", r"unknown unit"),
        ("1800 lb*in", "torque", r"lbf"),
        ("", "length", r"empty"),
    ],
)
def test_bad_quantities_name_the_place(text, kind, message):
    with pytest.raises(InputError, match=message) as err:
        parse_quantity(text, kind, "--torque")
    assert "--torque" in str(err.value)
    assert "\n" not in str(err.value)


@pytest.mark.parametrize(("value", "kind"), [("250", "torque"), (250, "torque"), ("2", "angle")])
def test_bare_numbers_refused_where_a_unit_is_required(value, kind):
    with pytest.raises(InputError, match="has no unit"):
        parse_quantity(value, kind, "--torque", bare=None)


@pytest.mark.parametrize(
    ("bare", "with_unit", "kind"),
    [
        # the one rule (README "Units"): a bare number is in N*m, mm, MPa, GPa, deg, deg/m
        ("320", "320 N*m", "torque"),
        (320, "320 N*m", "torque"),
        ("80", "80 mm", "length"),
        (120.5, "120.5 MPa", "stress"),
        ("79.3", "79.3 GPa", "modulus"),
        ("0.25", "0.25 deg/m", "twist_rate"),
        ("1.5", "1.5 deg", "angle"),
    ],
)
def test_bare_number_rule(bare, with_unit, kind):
    assert parse_quantity(bare, kind, "x") == parse_quantity(with_unit, kind, "x")


def test_bare_number_rule_values():
    # 80 mm = 0.08 m; 79.3 GPa = 7.93e10 Pa; 0.25 deg/m = 0.25 pi/180 rad/m (SI definitions)
    assert parse_quantity("80", "length", "x") == pytest.approx(0.08, rel=1e-15)
    assert parse_quantity("79.3", "modulus", "x") == pytest.approx(7.93e10, rel=1e-15)
    assert parse_quantity("0.25", "twist_rate", "x") == pytest.approx(
        0.25 * math.pi / 180, rel=1e-15)


def test_drawing_lengths():
    from soapfilm.units import parse_drawing_length

    bare = parse_drawing_length("0.5", "--mesh-size")
    assert bare.in_unit("in") == 0.5 and bare.in_unit("mm") == 0.5  # the drawing's own unit
    given = parse_drawing_length("0.5 mm", "--mesh-size")
    # 0.5 mm = 0.5 / 25.4 in (inch = 25.4 mm exactly, NIST SP 811 B.8)
    assert given.in_unit("in") == pytest.approx(0.5 / 25.4, rel=1e-14)
    assert given.in_unit("mm") == pytest.approx(0.5, rel=1e-14)
    for bad in ("-1", "0", "nan", "2 N*m", "inf"):
        with pytest.raises(InputError):
            parse_drawing_length(bad, "--mesh-size")


def test_display_systems():
    """US display of SI values, checked with the NIST factors."""
    us = SYSTEMS["US"]
    assert us.value(0.1129848, "torque") == pytest.approx(1.0, rel=NIST_RTOL)
    assert us.value(6.894757e6, "stress") == pytest.approx(1.0, rel=NIST_RTOL)
    assert us.value(0.0254, "length") == pytest.approx(1.0, rel=1e-15)
    si = SYSTEMS["SI"]
    assert si.fmt(123.4e6, "stress") == "123.4 MPa"
    assert si.fmt(math.radians(0.25), "twist_rate") == "0.25 deg/m"
    assert us.fmt(1800 * 0.1129848, "torque") == "1800 lbf*in"
    assert unit_system("us") is us
    with pytest.raises(InputError, match="unknown unit system"):
        unit_system("cgs")
