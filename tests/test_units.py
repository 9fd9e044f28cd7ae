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
        ("250", "torque", r"has no unit"),
        (250, "torque", r"has no unit"),
        ("2", "angle", r"has no unit"),
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
