"""Shaft mechanics against hand calculations, textbook formulas and handbooks.

References named at each check.  Tolerances: closed-form mechanics on exact
(round) sections agree to rounding, so rtol=1e-12; finite-element section
values carry the discretisation error stated beside them.
"""

from __future__ import annotations

import math
import tomllib
from importlib import resources

import numpy as np
import pytest

from keyed_outline import keyed_outline
from soapfilm import Profile, analyse
from soapfilm.errors import InputError
from soapfilm.materials import CRITERIA, allowable_shear, material, presets
from soapfilm.members.shaft import (
    DEFAULT_TWIST_LIMIT,
    Load,
    Segment,
    ShaftModel,
    Support,
    analyse_shaft,
    check_section,
    round_section,
    section_from_result,
)
from soapfilm.result import nodal_shear_magnitude

G_STEEL = 79.3e9
EXACT = 1e-12


def _seg(name, length, d, bore=0.0, g=G_STEEL):
    mat = material("alloy-steel").overridden(shear_modulus=g)
    return Segment(name, length, round_section(d, bore), mat, allowable_shear(500e6))


# ----------------------------------------------------------------------------- materials
def test_material_values_equal_their_sources():
    """Preset shear moduli equal the values of the sources cited in materials.toml."""
    p = presets()
    # EN 1993-1-1:2005, clause 3.2.6: G = 81 000 N/mm^2 (carbon and low-alloy steel)
    assert p["carbon-steel"].shear_modulus == pytest.approx(81e9, rel=EXACT)
    # Shigley, Mechanical Engineering Design, Table A-5: 79.3 GPa (from memory)
    assert p["alloy-steel"].shear_modulus == pytest.approx(79.3e9, rel=EXACT)
    # handbook value for 18-8 stainless, 73 GPa (book not recorded)
    assert p["stainless-steel"].shear_modulus == pytest.approx(73e9, rel=EXACT)
    # Ti-6Al-4V: 44 GPa (handbook value, book not recorded)
    assert p["titanium-alloy"].shear_modulus == pytest.approx(44e9, rel=EXACT)
    # ranges: preset = middle of the cited range (aluminium alloys 26-28 GPa; grey cast
    # iron 27-41 GPa; bronze 36-44 GPa, Gere, Mechanics of Materials, appendix table)
    for key, lo, hi in (("aluminium-alloy", 26e9, 28e9), ("grey-cast-iron", 27e9, 41e9),
                        ("bronze", 36e9, 44e9)):
        assert p[key].shear_modulus == pytest.approx(0.5 * (lo + hi), rel=EXACT)


def test_material_file_labels_every_value():
    """Every value has a source and a status; yields are marked from memory (no source read)."""
    raw = tomllib.loads(resources.files("soapfilm").joinpath("data/materials.toml")
                        .read_text("utf-8"))
    assert set(raw) == {"carbon-steel", "alloy-steel", "stainless-steel", "grey-cast-iron",
                        "aluminium-alloy", "titanium-alloy", "bronze"}
    for key, d in raw.items():
        assert d["shear_modulus_source"] and d["shear_modulus_status"], key
        if "yield_strength" in d:
            assert "from memory" in d["yield_strength_status"], key
        else:
            assert "allowable" in d["yield_strength_note"], key
    assert presets()["grey-cast-iron"].yield_strength is None  # brittle: no yield point


def test_material_lookup_aliases_and_suggestion():
    assert material("Carbon steel").key == "carbon-steel"
    assert material("aluminum").key == "aluminium-alloy"
    with pytest.raises(InputError, match=r"unknown material 'carbon steal'.*did you mean "
                                         r"'carbon-steel'"):
        material("carbon steal")


def test_shear_yield_criteria():
    """Shigley, Mechanical Engineering Design, ch. 5: Ssy = 0.577 Sy (distortion energy),
    Ssy = 0.5 Sy (maximum shear stress, from memory)."""
    assert CRITERIA["von-mises"][0] == pytest.approx(0.577, abs=5e-4)
    assert CRITERIA["tresca"][0] == 0.5
    a = allowable_shear(400e6, "tresca", 2.0)
    assert a.value == pytest.approx(100e6, rel=EXACT)
    assert "maximum shear stress" in a.basis


# ----------------------------------------------------------------------------- sections
def test_round_section_closed_forms():
    """Gere, Mechanics of Materials, torsion formula: J = pi d^4/32, tau = 16 T/(pi d^3);
    hollow: J = pi (d^4 - d_i^4)/32, tau = T (d/2)/J."""
    s = round_section(0.05)
    assert s.torsion_constant == pytest.approx(math.pi * 0.05**4 / 32, rel=EXACT)
    assert s.max_shear_per_torque == pytest.approx(16 / (math.pi * 0.05**3), rel=EXACT)
    # a plain round bar has no stress raiser: no Kts unless a diameter is named, and then
    # tau_max / (16 T / (pi d^3)) = 1 exactly (the torsion formula itself)
    assert s.kts() is None and s.nominal_diameter is None
    assert s.kts(0.05) == pytest.approx(1.0, rel=EXACT)
    assert s.equivalent_diameter_stiffness == pytest.approx(0.05, rel=EXACT)
    assert s.equivalent_diameter_strength == pytest.approx(0.05, rel=EXACT)
    h = round_section(0.06, 0.04)
    j = math.pi * (0.06**4 - 0.04**4) / 32
    assert h.torsion_constant == pytest.approx(j, rel=EXACT)
    assert h.max_shear_per_torque == pytest.approx(0.03 / j, rel=EXACT)
    # a plain tube: no Kts either (16 T / (pi d^3) would give d^4 / (d^4 - d_i^4) = 1.25,
    # the hollow-section effect, not a stress concentration)
    assert h.kts() is None
    # on the tube's own nominal stress 16 T d / (pi (d^4 - d_i^4)) the tube is exactly 1
    from dataclasses import replace

    assert replace(h, nominal_diameter=0.06, nominal_bore=0.04).kts() == pytest.approx(
        1.0, rel=EXACT)


def test_single_section_check_by_hand():
    """One round bar: tau = 16T/(pi d^3), phi = T L/(G J), k = G J/L (Gere, torsion of
    circular bars), worked by hand here."""
    d, t, length = 0.04, 500.0, 1.5
    j = math.pi * d**4 / 32
    res = check_section(round_section(d), t, length, G_STEEL, allowable_shear(530e6, "tresca"),
                        twist_limit=DEFAULT_TWIST_LIMIT)
    assert res.max_shear_stress == pytest.approx(16 * t / (math.pi * d**3), rel=EXACT)
    assert res.twist_angle == pytest.approx(t * length / (G_STEEL * j), rel=EXACT)
    assert res.twist_per_length == pytest.approx(t / (G_STEEL * j), rel=EXACT)
    assert res.torsional_stiffness == pytest.approx(G_STEEL * j / length, rel=EXACT)
    assert res.utilisation_stress == pytest.approx(res.max_shear_stress / 265e6, rel=EXACT)
    # default twist limit 0.25 deg/m (rule of thumb for machine shafts, common practice),
    # over the bar, which is longer than the rule's 1 m basis
    assert res.utilisation_twist == pytest.approx(
        (t * length / (G_STEEL * j)) / (math.radians(0.25) * length), rel=EXACT)
    assert res.passed == (max(res.utilisation_stress, res.utilisation_twist) <= 1)


# ----------------------------------------------------------------------------- stepped shafts
def test_stepped_round_shaft_against_hand_calculation():
    """Invented scenario: a winch drum shaft held by a brake at x = 0, three steps
    (50 mm x 400, 40 mm x 300, 36/18 mm tube x 200), +600 N*m at x = 0.4 m and
    +250 N*m at the free end.  Hand calculation (Gere, Mechanics of Materials,
    nonuniform torsion): T_i by equilibrium of the free end, tau_i = T_i r_i / J_i,
    phi = sum T_i L_i / (G J_i), series stiffness 1/sum(L_i/(G J_i))."""
    segs = (_seg("drum seat", 0.4, 0.05), _seg("neck", 0.3, 0.04),
            _seg("tube end", 0.2, 0.036, 0.018))
    model = ShaftModel("winch", segs, loads=(Load("drum", 0.4, 600.0), Load("end", 0.9, 250.0)),
                       supports=(Support("brake", 0.0),))
    res = analyse_shaft(model)
    assert res.statics == "determinate"
    # hand calculation
    dims = [(0.4, 0.05, 0.0), (0.3, 0.04, 0.0), (0.2, 0.036, 0.018)]
    torque = [850.0, 250.0, 250.0]
    js = [math.pi * (d**4 - b**4) / 32 for _, d, b in dims]
    taus = [t * (d / 2) / j for t, (_, d, _), j in zip(torque, dims, js, strict=True)]
    twists = [t * L / (G_STEEL * j) for t, (L, _, _), j in zip(torque, dims, js, strict=True)]
    k_series = 1 / sum(L / (G_STEEL * j) for (L, _, _), j in zip(dims, js, strict=True))
    for s, t, tau, phi in zip(res.segments, torque, taus, twists, strict=True):
        assert s.governing_torque == pytest.approx(t, rel=EXACT)
        assert s.max_shear_stress == pytest.approx(tau, rel=EXACT)
        assert s.twist_angle == pytest.approx(phi, rel=EXACT)
    assert res.end_to_end_twist == pytest.approx(sum(twists), rel=EXACT)
    assert res.torsional_stiffness == pytest.approx(k_series, rel=EXACT)
    assert res.reactions[0][1] == pytest.approx(-850.0, rel=EXACT)
    # cumulative twist at the stations, measured from the brake
    assert np.interp(0.4, res.x, res.twist) == pytest.approx(twists[0], rel=EXACT)
    assert res.twist[-1] == pytest.approx(sum(twists), rel=EXACT)
    # stress utilisation: tau over 500 MPa / sqrt(3) (distortion energy, n = 1)
    util = [tau / (500e6 / math.sqrt(3)) for tau in taus]
    for s, u in zip(res.segments, util, strict=True):
        assert s.utilisation == pytest.approx(u, rel=EXACT)
        assert s.utilisation_twist is None  # twist is checked between stations
    assert res.governing.index == int(np.argmax(util))
    # twist between stations: brake -> drum (0.4 m) and drum -> hand wheel (0.5 m), each
    # allowed 0.25 deg/m x max(length, 1 m) = 0.25 deg; brake -> hand wheel (0.9 m) together
    # twists phi_1 + phi_2 + phi_3, allowed 0.25 deg too: it governs
    lim = math.radians(0.25)
    assert [(sp.start, sp.end) for sp in res.twist_spans] == [("brake", "drum"),
                                                              ("drum", "end")]
    assert res.twist_spans[0].twist_angle == pytest.approx(twists[0], rel=EXACT)
    assert res.twist_spans[1].twist_angle == pytest.approx(twists[1] + twists[2], rel=EXACT)
    assert res.twist_spans[1].internal_torque == pytest.approx(250.0, rel=EXACT)
    gov = res.twist_governing
    assert (gov.start, gov.end) == ("brake", "end")
    assert gov.utilisation == pytest.approx(sum(twists) / lim, rel=EXACT)
    assert res.utilisation == pytest.approx(max(max(util), sum(twists) / lim), rel=EXACT)
    assert res.governs == "twist" and not res.passed


def test_fixed_fixed_reactions_textbook():
    """Uniform bar held at both ends, torque T0 at distance a from the left end:
    reactions T0 b/L (left) and T0 a/L (right); rotation at the load T0 a b/(G J L).
    Gere, Mechanics of Materials, statically indeterminate torsional members
    (sec. 3.8 in the editions I recall; section number from memory)."""
    length, a, t0, d = 1.2, 0.45, 800.0, 0.045
    b = length - a
    seg = _seg("bar", length, d)
    model = ShaftModel("fixed-fixed", (seg,), loads=(Load("gear", a, t0),),
                       supports=(Support("left", 0.0), Support("right", length)))
    res = analyse_shaft(model)
    assert res.statics == "indeterminate"
    (_, r_left), (_, r_right) = res.reactions
    assert -r_left == pytest.approx(t0 * b / length, rel=1e-12)
    assert -r_right == pytest.approx(t0 * a / length, rel=1e-12)
    j = math.pi * d**4 / 32
    assert np.interp(a, res.x, res.twist) == pytest.approx(t0 * a * b / (G_STEEL * j * length),
                                                           rel=1e-12)
    assert res.twist[0] == 0.0 and res.twist[-1] == pytest.approx(0.0, abs=1e-15)
    s = res.segments[0]
    assert s.torque_max == pytest.approx(t0 * b / length, rel=1e-12)
    assert s.torque_min == pytest.approx(-t0 * a / length, rel=1e-12)


def test_fixed_fixed_stepped_bar_textbook():
    """Two-part bar fixed at both ends, torque T0 at the step: T_A = T0 L_B J_A /
    (L_B J_A + L_A J_B) (Gere, Mechanics of Materials, statically indeterminate
    torsional members, bar with two segments; from memory)."""
    la, lb, da, db, t0 = 0.5, 0.3, 0.05, 0.035, 1000.0
    ja, jb = math.pi * da**4 / 32, math.pi * db**4 / 32
    model = ShaftModel("stepped", (_seg("A", la, da), _seg("B", lb, db)),
                       loads=(Load("step", la, t0),),
                       supports=(Support("left", 0.0), Support("right", la + lb)))
    res = analyse_shaft(model)
    ta = t0 * lb * ja / (lb * ja + la * jb)
    assert res.segments[0].governing_torque == pytest.approx(ta, rel=1e-12)
    assert res.segments[1].governing_torque == pytest.approx(ta - t0, rel=1e-12)


def test_unbalanced_torques_without_support_are_refused():
    model = ShaftModel("x", (_seg("a", 0.5, 0.04),),
                       loads=(Load("in", 0.1, 300.0), Load("out", 0.4, -250.0)))
    with pytest.raises(InputError, match=r"do not balance .*50 N\*m.*no support"):
        analyse_shaft(model)


def test_free_free_balanced_shaft():
    """No support, balanced torques: equilibrium of each cut (Gere, nonuniform torsion)."""
    model = ShaftModel("x", (_seg("a", 0.5, 0.04),),
                       loads=(Load("in", 0.1, 300.0), Load("out", 0.4, -300.0)))
    res = analyse_shaft(model)
    j = math.pi * 0.04**4 / 32
    assert res.segments[0].torque_min == pytest.approx(-300.0, rel=EXACT)
    assert res.end_to_end_twist == pytest.approx(-300.0 * 0.3 / (G_STEEL * j), rel=EXACT)


# ----------------------------------------------------------------------------- keyed section
def _roark_keyway(r, depth, half_width):
    """Roark's Formulas for Stress and Strain, 7th ed., Table 10.1, shaft with one keyway:
    K = 2 C r^4 and tau at the middle of the keyway floor = T B / r^3."""
    x, q = depth / r, half_width / depth
    c = (0.7854 + (-0.0848 + 0.1234 * q - 0.0847 * q**2) * x
         + (-0.4318 - 2.2000 * q + 0.7633 * q**2) * x**2
         + (-0.0780 + 2.0618 * q - 0.5234 * q**2) * x**3)
    b = ((1.1690 - 0.3168 * q + 0.0490 * q**2)
         + (0.4349 - 1.5096 * q + 0.8677 * q**2) * x
         + (-1.1830 + 4.2764 * q - 1.7024 * q**2) * x**2
         + (0.8812 - 0.2627 * q - 0.1897 * q**2) * x**3)
    return 2 * c * r**4, b


def test_keyed_section_kts_against_published_values():
    """Keyed 40 mm shaft, keyway width b = d/4, depth t = d/8, floor fillet r = 0.02 d
    (the proportions of the published keyseat charts).

    Kts = tau_max / (16 T / (pi d^3)) on the full diameter must lie between
    * a lower bound: the stress at the middle of the keyway floor, Roark's Formulas
      for Stress and Strain, 7th ed., Table 10.1 (tau_M = T B / r^3): the peak sits in
      the floor fillets, so it is higher than tau_M; and
    * an upper bound: Kts = 3.0, Shigley, Mechanical Engineering Design, 9th ed.,
      sec. 7-4, end-milled keyseat r/d = 0.02 for first estimates (3D, key in place,
      including the keyseat end; a 2D empty-keyway section gives lower values).
    The same section also checks J and tau_M themselves against Roark's fits
    (handbook curve fits: 2 % on J, 3 % on tau_M, which is also read from nodal
    averages that underestimate boundary values slightly).
    """
    d = 40.0
    r = d / 2
    outline = keyed_outline(r, d / 4, d / 8, 0.02 * d)
    result = analyse(Profile.from_loops([outline], units="mm", name="keyed"))
    section = section_from_result(result, nominal_diameter=d * 1e-3)
    kts = section.kts()
    k_roark, b_roark = _roark_keyway(r, d / 8, d / 8)
    kts_mid = b_roark / r**3 / (16 / (math.pi * d**3))
    assert kts_mid < kts < 3.0, (kts_mid, kts)
    assert result.torsion_constant == pytest.approx(k_roark, rel=0.02)
    p = result.mesh.p
    mid = int(np.argmin(np.hypot(p[0], p[1] - (r - d / 8))))
    assert np.hypot(p[0, mid], p[1, mid] - (r - d / 8)) < 1e-9  # a node sits mid-floor
    assert nodal_shear_magnitude(result)[mid] == pytest.approx(b_roark / r**3, rel=0.03)
    # the same Kts through the SI section: units cancel (Kts is a pure number)
    assert kts == pytest.approx(result.max_shear_per_torque * math.pi * d**3 / 16, rel=1e-12)


# ----------------------------------------------------------------------------- twist rule
def test_long_line_shaft_fails_the_twist_rule():
    """A 40 mm round line shaft carrying 320 N*m over 3 m between two pulleys.

    Hand calculation (Gere, Mechanics of Materials, torsion of circular bars):
    phi = T L / (G J) = 320 x 3 / (81e9 x pi 0.04^4 / 32) = 0.04716 rad = 2.70 deg,
    against the rule of thumb 0.25 deg/m x 3 m = 0.75 deg (common practice): utilisation
    3.6, FAIL on twist, while the stress 16 T / (pi d^3) = 25.5 MPa is well within
    0.577 x 530 MPa / 2 (EN 1993-1-1 G; AISI 1045 typical yield, from memory).
    """
    d, t, length, g = 0.04, 320.0, 3.0, 81e9
    j = math.pi * d**4 / 32
    res = check_section(round_section(d), t, length, g,
                        allowable_shear(530e6, "von-mises", 2.0))
    phi = t * length / (g * j)
    assert math.degrees(phi) == pytest.approx(2.70, abs=0.005)  # the figure in the docstring
    assert res.twist_angle == pytest.approx(phi, rel=EXACT)
    assert res.allowed_twist == pytest.approx(math.radians(0.25) * length, rel=EXACT)
    assert res.utilisation_twist == pytest.approx(phi / (math.radians(0.25) * length), rel=EXACT)
    assert res.utilisation_stress < 0.2
    assert res.governs == "twist" and not res.passed
    # the same bar as a shaft file model: two pulleys 3 m apart, one span
    model = ShaftModel("line shaft", (_seg("shaft", length, d, g=g),),
                       loads=(Load("drive pulley", 0.0, t), Load("driven pulley", length, -t)))
    sres = analyse_shaft(model)
    assert sres.twist_governing.twist_angle == pytest.approx(-phi, rel=EXACT)
    assert sres.utilisation_twist == pytest.approx(res.utilisation_twist, rel=EXACT)
    assert not sres.passed and sres.governs == "twist"


def test_short_bar_judged_by_its_whole_twist():
    """A bar shorter than the rule's basis (1 m for deg/m) may twist what 1 m may.

    80 mm of 40 mm round, 320 N*m: phi = T L / (G J) (Gere) = 0.0707 deg, against
    0.25 deg; the strict per-segment reading holds its rate, T / (G J) = 0.884 deg/m,
    against 0.25 deg/m.
    """
    d, t, length, g = 0.04, 320.0, 0.08, 81e9
    j = math.pi * d**4 / 32
    a = allowable_shear(530e6, "von-mises", 2.0)
    res = check_section(round_section(d), t, length, g, a)
    phi = t * length / (g * j)
    assert res.utilisation_twist == pytest.approx(phi / math.radians(0.25), rel=EXACT)
    assert res.passed
    strict = check_section(round_section(d), t, length, g, a, twist_rule="segments")
    assert strict.utilisation_twist == pytest.approx(
        t / (g * j) / math.radians(0.25), rel=EXACT)
    assert not strict.passed
    # a limit written per foot has a one-foot basis (NIST SP 811: 1 ft = 0.3048 m exactly)
    per_ft = check_section(round_section(d), t, length, g, a,
                           twist_limit=math.radians(0.08) / 0.3048, twist_basis=0.3048)
    assert per_ft.allowed_twist == pytest.approx(math.radians(0.08), rel=EXACT)


def test_short_spans_that_twist_together_govern():
    """Drive at x = 0 (+4T), three takeoffs of -T at 0.25, 0.5, 0.75 m and -T at 1 m on a
    uniform 30 mm round shaft.  Span torques 4T, 3T, 2T, T by equilibrium of the cut
    (Gere, nonuniform torsion), each span 0.25 m: phi_k = T_k 0.25 / (G J).  Each span alone
    stays within 0.25 deg (its 1 m basis), the first metre together twists
    (4 + 3 + 2 + 1) T 0.25 / (G J) and governs."""
    t, d = 25.0, 0.03
    j = math.pi * d**4 / 32
    model = ShaftModel("takeoffs", (_seg("shaft", 1.0, d),),
                       loads=(Load("drive", 0.0, 4 * t), Load("a", 0.25, -t), Load("b", 0.5, -t),
                              Load("c", 0.75, -t), Load("d", 1.0, -t)))
    res = analyse_shaft(model)
    lim = math.radians(0.25)
    phis = [k * t * 0.25 / (G_STEEL * j) for k in (4, 3, 2, 1)]
    for sp, phi in zip(res.twist_spans, phis, strict=True):
        assert abs(sp.twist_angle) == pytest.approx(phi, rel=EXACT)
        assert sp.utilisation == pytest.approx(phi / lim, rel=EXACT)
        assert sp.utilisation < 1
    gov = res.twist_governing
    assert (gov.start, gov.end) == ("drive", "d")
    assert gov.utilisation == pytest.approx(sum(phis) / lim, rel=EXACT)
    assert gov.utilisation > 1 and not res.passed
    # the per-segment reading: the one segment's largest rate 4T / (G J) against the limit
    seg = analyse_shaft(ShaftModel("takeoffs", model.segments, model.loads,
                                   twist_rule="segments"))
    assert seg.twist_governing is None
    assert seg.segments[0].utilisation_twist == pytest.approx(4 * t / (G_STEEL * j) / lim,
                                                              rel=EXACT)


def test_twist_basis_from_the_written_limit():
    """The basis is the length the limit is written per (1 ft = 0.3048 m exactly,
    NIST SP 811, App. B); "1 deg in 20 diameters" written for d = 40 mm is 1 deg/(800 mm)."""
    from soapfilm.members.shaftfile import twist_basis_of

    assert twist_basis_of("0.25 deg/m") == pytest.approx(1.0, rel=EXACT)
    assert twist_basis_of("0.08 deg/ft") == pytest.approx(0.3048, rel=EXACT)
    assert twist_basis_of("1 deg/(800 mm)") == pytest.approx(0.8, rel=EXACT)
    assert twist_basis_of("1 deg / (20*40 mm)") == pytest.approx(0.8, rel=EXACT)
    assert twist_basis_of("0.0044 rad/m") == pytest.approx(1.0, rel=EXACT)
    assert twist_basis_of("0.25") == pytest.approx(1.0, rel=EXACT)  # bare: deg/m
    assert twist_basis_of(None) == pytest.approx(1.0, rel=EXACT)


# ----------------------------------------------------------------------------- Kts basis
@pytest.mark.parametrize(("text", "expected"), [
    ('[section]\nkind = "keyed_shaft"\ndiameter = 40\n', (40.0, 0.0)),
    ('[section]\nkind = "flatted_shaft"\ndiameter = 20\nflat_depth = 1.5\n', (20.0, 0.0)),
    ('[section]\nkind = "straight_spline"\nseries = "light"\nminor_diameter = 32\n',
     (32.0, 0.0)),
    # ISO 4156-1, 30 deg flat root: external minor diameter m (z - 1.5) = 1.25 x 16.5
    ('[section]\nkind = "involute_spline"\nmodule = 1.25\nteeth = 18\n', (20.625, 0.0)),
    ('[section]\nkind = "round"\ndiameter = 40\n', None),
    ('[section]\nkind = "tube"\ndiameter = 60\nwall = 5\n', None),
    ('[section]\nkind = "rectangle"\nwidth = 60\nheight = 12\n', None),
    ('[[part]]\nkind = "round"\ndiameter = 40\n[[part]]\naction = "cut"\nkind = "round"\n'
     'diameter = 20\n', None),  # a tube built from parts: still no stress raiser
    ('[[part]]\nkind = "round"\ndiameter = 40\n[[part]]\naction = "cut"\nkind = "round"\n'
     'diameter = 6\nposition = [0, 12]\n', (40.0, 0.0)),  # an off-centre hole is a raiser
    ('[[part]]\nkind = "keyed_shaft"\ndiameter = 30\n[[part]]\naction = "cut"\n'
     'kind = "rectangle"\nwidth = 40\nheight = 10\nposition = [0, 18]\n', (30.0, 0.0)),
    ('[[part]]\nkind = "straight_spline"\nseries = "light"\nminor_diameter = 32\n[[part]]\n'
     'action = "cut"\nkind = "round"\ndiameter = 18\n', (32.0, 18.0)),
    ('[section]\nkind = "involute_spline"\nmodule = 1\nteeth = 20\nnominal_diameter = 22\n',
     (22.0, 0.0)),
])
def test_kts_basis_only_for_stress_raisers_on_a_round_base(tmp_path, text, expected):
    from soapfilm.members.shaftfile import shapefile_kts_basis

    f = tmp_path / "s.toml"
    f.write_text('units = "mm"\n' + text)
    got = shapefile_kts_basis(f)
    if expected is None:
        assert got is None
    else:
        assert got[:2] == pytest.approx(expected, rel=EXACT) and got[2].startswith("shape file")


def test_hollow_spline_kts_on_the_tube_nominal(tmp_path):
    """Kts of a bored spline uses the tube's nominal stress 16 T d / (pi (d^4 - d_i^4)), so
    that Kts of the section = tau_max / tau_nom with the bore's effect taken out."""
    from soapfilm.members.shaftfile import SectionSource

    f = tmp_path / "hollow.toml"
    f.write_text('units = "mm"\n[[part]]\nkind = "straight_spline"\nseries = "light"\n'
                 'minor_diameter = 32\nroot_fillet = 0.3\n[[part]]\naction = "cut"\n'
                 'kind = "round"\ndiameter = 18\n')
    sec, _ = SectionSource().from_file(f, None, "test")
    d, b = 0.032, 0.018
    assert sec.nominal_diameter == pytest.approx(d, rel=EXACT)
    assert sec.nominal_bore == pytest.approx(b, rel=EXACT)
    tau_nom = 16 * d / (math.pi * (d**4 - b**4))  # per unit torque
    assert sec.kts() == pytest.approx(sec.max_shear_per_torque / tau_nom, rel=EXACT)
    assert sec.kts() > 1.0


# ----------------------------------------------------------------------------- allowables
def test_safety_factor_below_one_is_refused():
    from soapfilm.members.shaftfile import resolve_allowable

    with pytest.raises(InputError, match=r"--safety-factor: safety factor 0.8 is below 1"):
        resolve_allowable(material("carbon-steel"), None, None, None, 0.8, "check")
    a = resolve_allowable(material("carbon-steel"), None, None, None, 1.0, "check")
    assert a.safety_factor == 1.0
