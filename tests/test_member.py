"""Members in non-uniform torsion (``soapfilm.members.warping``, ``member``, ``memberfile``).

Every numeric check compares with a closed form of E Gamma phi'''' - G J phi'' = m
that is written out in the test, or with scipy's general boundary-value solver
on the same equations (a general-purpose library, independent of the
closed-form segment solution):

- Timoshenko & Gere, Theory of Elastic Stability, 2nd ed. (1961), ch. 5
  (non-uniform torsion of thin-walled open bars: the equation, lambda^2 =
  G J / (E Gamma), the cantilever with warping held at the root; from memory);
- AISC Steel Design Guide 9, Torsional Analysis of Structural Steel Members
  (Seaburg & Carter, 1997), appendix B cases with free-to-warp (fork) ends under
  a concentrated and a uniform torque (from memory; the closed forms below are
  re-derived: each satisfies the equation, the end conditions and equilibrium,
  as the docstrings show).

The section numbers are given directly (thin-walled I section by the thin-wall
formulas of the same chapter), so these tests need no finite-element solve.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_bvp

from soapfilm.cli import main
from soapfilm.materials import Allowable, Material
from soapfilm.members.member import MemberModel, MemberSegment, MemberSupport, analyse_member
from soapfilm.members.shaft import Load, Section
from soapfilm.members.warping import Piece, Station, solve_member

G, E = 81e9, 210e9
# a thin-walled I: flanges b x tf, web hw x tw between flange mid-lines h (m)
B_F, T_F, H, T_W = 0.1, 0.008, 0.2, 0.006
J_I = (2 * B_F * T_F**3 + H * T_W**3) / 3          # T&G ch. 5: sum b t^3 / 3
GAMMA_I = T_F * B_F**3 * H**2 / 24                  # T&G ch. 5: I_f h^2 / 2, I_f = t b^3 / 12
OMEGA_I = B_F * H / 4                               # flange tip, thin-wall sectorial coordinate
GJ, EG = G * J_I, E * GAMMA_I
LAM = math.sqrt(GJ / EG)


def _i_section(**kw) -> Section:
    return Section(name="thin I", torsion_constant=J_I, max_shear_per_torque=T_F / J_I,
                   warping_constant=GAMMA_I, max_warping=OMEGA_I, size=0.22, **kw)


# --- the segment solution against closed forms ------------------------------------
@pytest.mark.parametrize("length", [0.5, 2.0, 6.0])
def test_cantilever_with_warping_held_at_the_root(length):
    """phi(L) = T/(G J) (L - tanh(lam L)/lam), B(0) = T tanh(lam L)/lam in size
    (Timoshenko & Gere, 2nd ed., ch. 5, from memory; B = -E Gamma phi'' with
    phi'' = (T lam / G J)(tanh(lam L) cosh(lam x) - sinh(lam x))); at the root all
    of the torque is warping torque (phi' = 0 there)."""
    t = 1.5e3
    sol = solve_member([Piece(length, GJ, EG)],
                       [Station(0.0, True, True), Station(t, False, False)])
    th = math.tanh(LAM * length)
    np.testing.assert_allclose(sol.twist[-1], t / GJ * (length - th / LAM), rtol=1e-10)
    np.testing.assert_allclose(sol.bimoment[0], -t * th / LAM, rtol=1e-10)
    np.testing.assert_allclose(sol.warping_torque[0], t, rtol=1e-10)
    np.testing.assert_allclose(sol.saint_venant_torque[0], 0.0, atol=1e-9 * t)
    np.testing.assert_allclose(sol.bimoment[-1], 0.0, atol=1e-9 * t / LAM)  # free end
    np.testing.assert_allclose(sol.reactions[0], t, rtol=1e-12)


@pytest.mark.parametrize("length", [1.0, 4.0, 12.0])
def test_fork_supports_and_a_mid_span_torque(length):
    """Both ends twist held, warping free; T at mid-span.  By symmetry each half
    carries T/2: phi(x) = T/(2GJ) (x - sinh(lam x)/(lam cosh(lam a))), a = L/2
    (phi(0) = 0, phi''(0) = 0, phi'(a) = 0, torque T/2; the fork case of AISC
    Design Guide 9, 1997, appendix B, from memory).  Mid-span: phi = T/(2GJ)(a -
    tanh(lam a)/lam), B = T tanh(lam a)/(2 lam)."""
    t, a = 800.0, length / 2
    sol = solve_member([Piece(a, GJ, EG), Piece(a, GJ, EG)],
                       [Station(0.0, True, False), Station(t, False, False),
                        Station(0.0, True, False)])
    mid = sol.end_values[1][0]
    th = math.tanh(LAM * a)
    np.testing.assert_allclose(mid["phi"], t / (2 * GJ) * (a - th / LAM), rtol=1e-10)
    np.testing.assert_allclose(mid["bimoment"], t * th / (2 * LAM), rtol=1e-10)
    x = np.linspace(0, a, 7)
    closed = t / (2 * GJ) * (x - np.sinh(LAM * x) / (LAM * math.cosh(LAM * a)))
    np.testing.assert_allclose(sol.values(0, x)["phi"], closed, rtol=1e-9, atol=1e-15)
    np.testing.assert_allclose(sol.reactions, [t / 2, 0.0, t / 2], rtol=1e-10, atol=1e-9)


@pytest.mark.parametrize("length", [1.0, 5.0])
def test_fork_supports_and_a_uniform_torque(length):
    """Uniform m, both ends forked: phi = m/(GJ lam^2) (lam^2 x (L-x)/2 +
    cosh(lam (x - L/2))/cosh(lam L/2) - 1) (satisfies the equation since
    E Gamma lam^2 = G J, phi = phi'' = 0 at both ends; AISC Design Guide 9,
    1997, appendix B, uniform torque on a member with pinned ends, from
    memory).  Mid-span bimoment B = m (1 - 1/cosh(lam L/2)) / lam^2."""
    m = 300.0
    sol = solve_member([Piece(length, GJ, EG, m)],
                       [Station(0.0, True, False), Station(0.0, True, False)])
    x = np.linspace(0, length, 9)
    c = m / (GJ * LAM**2)
    closed = c * (LAM**2 * x * (length - x) / 2
                  + np.cosh(LAM * (x - length / 2)) / math.cosh(LAM * length / 2) - 1)
    np.testing.assert_allclose(sol.values(0, x)["phi"], closed, rtol=1e-8, atol=1e-14)
    b_mid = m * (1 - 1 / math.cosh(LAM * length / 2)) / LAM**2
    np.testing.assert_allclose(sol.values(0, length / 2)["bimoment"], b_mid, rtol=1e-9)
    # the interior extremum of B is found exactly and sampled (members/warping.py)
    assert np.abs(sol.bimoment).max() == pytest.approx(b_mid, rel=1e-12)
    np.testing.assert_allclose(sol.reactions, [m * length / 2] * 2, rtol=1e-10)


@pytest.mark.parametrize("lam_l", [50.0, 1e3, 1e6, 1e12])
def test_large_lambda_l_tends_to_saint_venant(lam_l):
    """lam L large: phi(L) -> T L / (G J) (Saint-Venant; the closed form above
    differs by T/(G J lam) exactly, T&G 2nd ed. ch. 5); no overflow however large."""
    t, length = 200.0, 2.0
    eg = GJ / (lam_l / length) ** 2
    sol = solve_member([Piece(length, GJ, eg)],
                       [Station(0.0, True, True), Station(t, False, False)])
    assert np.all(np.isfinite(sol.twist)) and np.all(np.isfinite(sol.bimoment))
    sv = t * length / GJ
    np.testing.assert_allclose(sol.twist[-1], sv * (1 - 1 / lam_l), rtol=1e-9)
    np.testing.assert_allclose(sol.twist[-1], sv, rtol=1.01 / lam_l)


def test_zero_warping_constant_is_saint_venant_exactly():
    """E Gamma = 0 takes the same path with two constants: T L / (G J) (Gere,
    Mechanics of Materials, torsion of bars), and B = 0 everywhere."""
    t, length = 200.0, 2.0
    sol = solve_member([Piece(length, GJ, 0.0)],
                       [Station(0.0, True, True), Station(t, False, False)])
    np.testing.assert_allclose(sol.twist[-1], t * length / GJ, rtol=1e-13)
    assert not np.any(sol.bimoment)


def test_warping_piece_joined_to_a_round_piece():
    """A warping piece (root welded) joined to a piece that does not warp: the round
    piece carries no bimoment, so B = 0 at the joint and the first piece is the
    welded cantilever of its own length (T&G 2nd ed. ch. 5, from memory); the round
    piece adds T b / (G J_2) (Gere, torsion of bars)."""
    t, a, b = 600.0, 1.5, 0.7
    gj2 = 3.0 * GJ
    sol = solve_member([Piece(a, GJ, EG), Piece(b, gj2, 0.0)],
                       [Station(0.0, True, True), Station(), Station(t)])
    left = sol.end_values[1][0]
    phi_a = t / GJ * (a - math.tanh(LAM * a) / LAM)
    np.testing.assert_allclose(left["phi"], phi_a, rtol=1e-10)
    np.testing.assert_allclose(left["bimoment"], 0.0, atol=1e-10 * t / LAM)
    np.testing.assert_allclose(sol.twist[-1], phi_a + t * b / gj2, rtol=1e-10)


def test_maximum_shear_criterion_combines_with_half_the_normal_stress():
    """With a Tresca allowable the combination is sqrt(tau^2 + (sigma/2)^2) (Shigley,
    Mechanical Engineering Design, ch. 5, maximum-shear-stress theory): at the welded
    root tau_SV = 0, so the combined stress there is sigma_w / 2."""
    t, length = 1.5e3, 0.4  # short: the root governs
    mat = Material("steel", "steel", G, 355e6, "test", "test", E, "test")
    allow = Allowable(100e6, "test", "tresca")
    seg = MemberSegment("beam", length, _i_section(), mat, E, "test", allow)
    model = MemberModel("cantilever", (seg,), (Load("arm", length, t),),
                        (MemberSupport("wall", 0.0, True, True),), math.radians(10.0), "test")
    p = analyse_member(model).segments[0]
    sigma_root = t * math.tanh(LAM * length) / LAM * OMEGA_I / GAMMA_I
    assert p.x_equivalent == 0.0
    assert p.equivalent_shear_stress == pytest.approx(sigma_root / 2, rel=1e-10)


# --- a multi-segment member against scipy's boundary-value solver -------------------
def _bvp_reference(pieces, conditions, torques):
    """The same member by scipy.integrate.solve_bvp: each piece mapped to t in [0, 1],
    the state (phi, phi', B, T) of every piece stacked, the stations' conditions as
    boundary conditions.  phi'' = -B/(E Gamma), B' = T - G J phi' (= T_w), T' = -m."""
    n = len(pieces)

    def fun(tt, y):
        out = np.empty_like(y)
        for k, p in enumerate(pieces):
            phi, rate, bim, tor = y[4 * k:4 * k + 4]
            L = p.length
            out[4 * k] = L * rate
            out[4 * k + 1] = L * (-bim / p.warping_stiffness)
            out[4 * k + 2] = L * (tor - p.shear_stiffness * rate)
            out[4 * k + 3] = L * (-p.distributed_torque) * np.ones_like(tt)
        return out

    def bc(ya, yb):
        res = []
        for j, (twist_held, warping_held) in enumerate(conditions):
            left = yb[4 * (j - 1):4 * j] if j > 0 else None
            right = ya[4 * j:4 * j + 4] if j < n else None
            sides = [s for s in (left, right) if s is not None]
            if twist_held:
                res += [s[0] for s in sides]
            else:
                if left is not None and right is not None:
                    res.append(left[0] - right[0])
                res.append((right[3] if right is not None else 0.0)
                           - (left[3] if left is not None else 0.0) + torques[j])
            if warping_held:
                res += [s[1] for s in sides]
            elif len(sides) == 2:
                res += [left[1] - right[1], left[2] - right[2]]
            else:
                res.append(sides[0][2])
        return np.array(res)

    tt = np.linspace(0, 1, 201)
    sol = solve_bvp(fun, bc, tt, np.zeros((4 * n, tt.size)), tol=1e-10, max_nodes=200000)
    assert sol.success, sol.message
    return sol


def test_multi_segment_member_against_solve_bvp():
    """Three segments (different G J, E Gamma, distributed torques), warping and
    twist held at the left end, a torque at the first joint, a fork support at
    the second, an end plate (warping held, twist free) with a torque at the
    right end: every quantity along the member against scipy's solve_bvp."""
    pieces = [Piece(0.8, GJ, EG, 0.0), Piece(1.2, 2.5 * GJ, 0.6 * EG, 400.0),
              Piece(0.6, 0.7 * GJ, 1.8 * EG, -150.0)]
    conditions = [(True, True), (False, False), (True, False), (False, True)]
    torques = [0.0, 900.0, 0.0, -350.0]
    ours = solve_member(pieces, [Station(t, *c) for t, c in zip(torques, conditions,
                                                                strict=True)])
    ref = _bvp_reference(pieces, conditions, torques)
    tt = np.linspace(0, 1, 11)
    y = ref.sol(tt)
    for k, p in enumerate(pieces):
        v = ours.values(k, tt * p.length)
        scale_phi = np.abs(ours.twist).max()
        scale_b = np.abs(ours.bimoment).max()
        scale_t = np.abs(ours.saint_venant_torque + ours.warping_torque).max()
        np.testing.assert_allclose(v["phi"], y[4 * k], atol=1e-7 * scale_phi)
        np.testing.assert_allclose(v["rate"], y[4 * k + 1], atol=1e-7 * scale_phi)
        np.testing.assert_allclose(v["bimoment"], y[4 * k + 2], atol=1e-7 * scale_b)
        np.testing.assert_allclose(v["torque"], y[4 * k + 3], atol=1e-7 * scale_t)


# --- the member: stresses and notes ------------------------------------------------
def _segment(section, length=3.0, m=0.0, name="beam"):
    mat = Material("steel", "steel", G, 355e6, "test", "test", E, "test")
    return MemberSegment(name, length, section, mat, E, "test",
                         Allowable(200e6, "given"), m)


def test_warping_stress_at_a_held_root_is_flange_bending():
    """sigma_w = B omega_n / Gamma at the flange tip equals the flange-bending picture
    of the thin I: flange moment M_f = B / h, stress M_f / (t_f b^2 / 6) (T&G 2nd ed.
    ch. 5; AISC Design Guide 9, 1997, from memory)."""
    t, length = 1.5e3, 3.0
    model = MemberModel("cantilever", (_segment(_i_section(), length),),
                        (Load("arm", length, t),),
                        (MemberSupport("wall", 0.0, True, True),), math.radians(1.0), "test")
    res = analyse_member(model)
    p = res.segments[0]
    b_root = t * math.tanh(LAM * length) / LAM
    assert p.warping_counted and abs(p.max_bimoment) == pytest.approx(b_root, rel=1e-10)
    flange = (b_root / H) / (T_F * B_F**2 / 6)
    assert p.max_warping_stress == pytest.approx(flange, rel=1e-10)
    assert p.x_max_warping_stress == 0.0
    # the distortion-energy combination (Shigley, ch. 5) at the root, where tau_SV = 0
    assert p.equivalent_shear_stress >= flange / math.sqrt(3) * (1 - 1e-12)


def test_round_and_compact_sections_come_out_as_saint_venant_with_a_note():
    """A round bar (Gamma = 0) and a section whose 1/lambda is shorter than its size
    are Saint-Venant: twist T L / (G J) (Gere, torsion of bars), no warping stress, a
    note each."""
    t, length = 400.0, 2.0
    d = 0.04
    j = math.pi * d**4 / 32
    round_bar = Section("round", j, 0.5 * d / j, warping_constant=0.0, max_warping=0.0, size=d)
    compact = Section("compact", j, 0.5 * d / j, warping_constant=j * d**2 * 1e-3,
                      max_warping=d**2 / 20, size=d)
    for sec in (round_bar, compact):
        model = MemberModel("bar", (_segment(sec, length),), (Load("arm", length, t),),
                            (MemberSupport("wall", 0.0, True, False),), math.radians(1.0),
                            "test")
        res = analyse_member(model)
        assert res.segments[0].max_warping_stress is None
        assert any("Saint-Venant" in n for n in res.notes)
        np.testing.assert_allclose(res.stations[-1].twist, t * length / (G * j), rtol=1e-9)


# --- member files through the command line -----------------------------------------
GOOD = """
name = "test"
[check]
material = "carbon-steel"
[[segment]]
length = "1 m"
section = {{ diameter = "40 mm" }}
{segment_extra}
[[support]]
at = 0
{support_extra}
[[load]]
at = "1 m"
torque = "100 N*m"
"""


def test_member_file_on_round_bars_matches_saint_venant(tmp_path, capsys):
    """A round bar through `soapfilm member`: twist T L / (G J) (Gere, Mechanics of
    Materials, torsion formula), G of the preset (EN 1993-1-1, 81 GPa)."""
    f = tmp_path / "m.toml"
    f.write_text(GOOD.format(segment_extra="", support_extra=""))
    out = tmp_path / "m.json"
    # 0.28 deg over 1 m against 0.25 deg/m: the check fails, exit 3
    assert main(["member", str(f), "--json", str(out), "--quiet"]) == 3
    doc = json.loads(out.read_text())
    j = math.pi * 0.04**4 / 32
    np.testing.assert_allclose(doc["stations"][-1]["twist_angle_rad"], 100 * 1.0 / (81e9 * j),
                               rtol=1e-9)


@pytest.mark.parametrize("segment_extra, support_extra, words", [
    ("", 'warping = "held"', "does not warp"),
    ("", 'twist = "clamped"', "unknown twist condition 'clamped'"),
    ("", 'warping = "fixed"', "unknown warping condition 'fixed'"),
    ("", 'twist = "free"', "no support holds the twist"),
    ('distributed_torque = "5 N*m"', "", "distributed torque"),
    ("", 'at = "2 m"', None),  # TOML refuses the duplicate key: still one line
])
def test_bad_member_files_one_line_exit_2(tmp_path, capsys, segment_extra, support_extra,
                                         words):
    f = tmp_path / "bad.toml"
    f.write_text(GOOD.format(segment_extra=segment_extra, support_extra=support_extra))
    out = tmp_path / "o.json"
    assert main(["member", str(f), "--json", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1, err
    if words:
        assert words in err
    assert not out.exists()


def test_support_off_the_member_one_line_exit_2(tmp_path, capsys):
    f = tmp_path / "bad.toml"
    f.write_text(GOOD.format(segment_extra="", support_extra="").replace("at = 0\n",
                                                                         'at = "1.5 m"\n'))
    assert main(["member", str(f)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "off the member" in err


def test_member_json_with_warping_matches_readme():
    """The JSON of a member that counts warping has the README's keys and types
    (test_json_schema.py reads the tables; its own run has round sections only)."""
    from soapfilm.cli.member import member_json
    from test_json_schema import check_document

    model = MemberModel("cantilever", (_segment(_i_section(), 2.0, m=50.0),),
                        (Load("arm", 2.0, 900.0),),
                        (MemberSupport("wall", 0.0, True, True),), math.radians(1.0), "test")
    doc = json.loads(json.dumps(member_json(analyse_member(model))))
    check_document(doc, "member")
    assert "restrained warping" in doc["caution"]
    seg = doc["segments"][0]
    assert seg["warping_counted"] and seg["lambda_per_m"] == pytest.approx(LAM, rel=1e-12)


def test_member_report_and_plot(tmp_path, capsys):
    """--report writes one HTML page with the verdict, the check rows and the figure;
    --plot an SVG; the twist of the round bar in the report is T L / (G J) (Gere,
    torsion formula: 100 N*m, 1 m, d 40 mm, G 81 GPa -> 0.2814 deg)."""
    f = tmp_path / "m.toml"
    f.write_text(GOOD.format(segment_extra="", support_extra="").replace(
        'name = "test"', 'name = "test"\ntwist_limit = "1 deg/m"'))
    rep, svg = tmp_path / "r.html", tmp_path / "p.svg"
    assert main(["member", str(f), "--report", str(rep), "--plot", str(svg), "--quiet"]) == 0
    text = rep.read_text(encoding="utf-8")
    assert "PASS" in text and "data:image/png;base64," in text and "Stations" in text
    # the caution names what restrained-warping theory leaves out (common practice, no source)
    assert "restrained warping" in text and "buckling" in text
    twist = math.degrees(100 * 1.0 / (81e9 * math.pi * 0.04**4 / 32))
    assert f"{twist:.4g} deg" in text
    assert svg.read_text(encoding="utf-8").lstrip().startswith(("<?xml", "<svg"))


def test_member_file_with_a_channel_uses_the_sections_warping_quantities(tmp_path):
    """A finite-element channel through a member file: the member takes J, Gamma and
    max |omega_n| of the section's own result (converted mm -> m), and the tip twist
    and root bimoment of the welded cantilever are the closed forms of Timoshenko &
    Gere (2nd ed., ch. 5, from memory) with those numbers."""
    from soapfilm import analyse, read_section

    sec = tmp_path / "c.toml"
    sec.write_text('units = "mm"\n[section]\nkind = "channel"\ndepth = 120\n'
                   "flange_width = 55\nweb_thickness = 7\nflange_thickness = 9\n")
    f = tmp_path / "m.toml"
    f.write_text('name = "jib"\ntwist_limit = "2 deg/m"\n[check]\nmaterial = "carbon-steel"\n'
                 '[[segment]]\nlength = "1.2 m"\nsection = "c.toml"\n'
                 '[[support]]\nat = 0\nwarping = "held"\n'
                 '[[load]]\nat = "1.2 m"\ntorque = "100 N*m"\n')
    out = tmp_path / "m.json"
    assert main(["member", str(f), "--tol", "1e-2", "--json", str(out), "--quiet"]) == 0
    doc = json.loads(out.read_text())
    r = analyse(read_section(sec), tol=1e-2)
    j, gamma = r.torsion_constant * 1e-12, r.warping.warping_constant * 1e-18
    seg = doc["segments"][0]
    np.testing.assert_allclose(seg["section"]["warping_constant_m6"], gamma, rtol=1e-12)
    np.testing.assert_allclose(seg["section"]["max_warping_m2"], r.warping.max_warping * 1e-6,
                               rtol=1e-12)
    lam = math.sqrt(81e9 * j / (210e9 * gamma))  # carbon-steel preset: G 81, E 210 GPa
    np.testing.assert_allclose(seg["lambda_per_m"], lam, rtol=1e-12)
    th = math.tanh(lam * 1.2)
    np.testing.assert_allclose(doc["stations"][-1]["twist_angle_rad"],
                               100 / (81e9 * j) * (1.2 - th / lam), rtol=1e-9)
    np.testing.assert_allclose(doc["stations"][0]["bimoment_Nm2"], -100 * th / lam, rtol=1e-9)
    np.testing.assert_allclose(seg["max_warping_stress_Pa"],
                               100 * th / lam * r.warping.max_warping * 1e-6 / gamma, rtol=1e-9)


# --- the member's picture of omega_n, the fork ends, the file's words ---------------
def test_fork_ends_report_their_zero_bimoment_exactly():
    """I beam on forks (twist held, warping free) with a mid-span torque: the stations
    report B = 0 at the forks by their condition (not the round-off of the solve) and
    B = T tanh(lam a) / (2 lam) at mid-span, a = L/2 (AISC Design Guide 9, 1997,
    appendix B, fork case, from memory; re-derived in
    test_fork_supports_and_a_mid_span_torque)."""
    t, length = 1e3, 4.0
    model = MemberModel("forks", (_segment(_i_section(), length),),
                        (Load("bracket", length / 2, t),),
                        (MemberSupport("left", 0.0, True, False),
                         MemberSupport("right", length, True, False)), math.radians(1.0), "test")
    st = analyse_member(model).stations
    assert st[0].bimoment == 0.0 and st[2].bimoment == 0.0
    a = length / 2
    np.testing.assert_allclose(st[1].bimoment, t * math.tanh(LAM * a) / (2 * LAM), rtol=1e-10)


CHANNEL_AND_ROUND = """
name = "jib with a round stub"
twist_limit = "10 deg/m"
[check]
material = "carbon-steel"
[[segment]]
name = "jib"
length = "1.2 m"
section = "c.toml"
[[segment]]
name = "stub"
length = "0.3 m"
section = { diameter = "60 mm" }
[[support]]
at = 0
warping = "held"
[[load]]
at = "1.5 m"
torque = "100 N*m"
"""


def test_member_draws_omega_n_of_each_warping_section(tmp_path, capsys):
    """--plot-sectorial and --report draw omega_n once per section whose warping the
    member counts (the channel, not the round stub).  The shear centre marked in the
    picture lies where thin-wall theory puts it, e = 3 b^2 t_f / (6 b t_f + h t_w) behind
    the web's mid-line with b and h between wall mid-lines (Timoshenko & Gere, 2nd ed.,
    ch. 5; AISC Design Guide 9, 1997; from memory), within the web thickness as the
    issue asks of thick walls; the largest |omega_n| is marked at a flange tip (the
    thin-wall sectorial coordinate is largest there, same sources)."""
    from soapfilm.members.member import analyse_member as analyse_m
    from soapfilm.members.memberfile import read_member
    from soapfilm.members.memberplot import sectorial_figure, warped_sections
    from soapfilm.members.shaftfile import SectionSource

    (tmp_path / "c.toml").write_text(
        'units = "mm"\n[section]\nkind = "channel"\ndepth = 120\nflange_width = 55\n'
        "web_thickness = 7\nflange_thickness = 9\n")
    f = tmp_path / "m.toml"
    f.write_text(CHANNEL_AND_ROUND)
    png, rep = tmp_path / "w.png", tmp_path / "r.html"
    assert main(["member", str(f), "--tol", "1e-2", "--plot-sectorial", str(png),
                 "--report", str(rep), "--quiet"]) == 0
    assert png.read_bytes().startswith(b"\x89PNG")
    text = rep.read_text(encoding="utf-8")
    assert "Warping over the sections" in text
    assert text.count('alt="normalised warping omega_n over the section of') == 1
    assert "&#x27;jib&#x27;" in text

    from soapfilm.intake import SectionOptions

    src = SectionSource(options=SectionOptions(tol=1e-2))
    pairs = warped_sections(analyse_m(read_member(f, None, src)), src.results)
    assert [names for _, names in pairs] == [("jib",)]
    ax = sectorial_figure(pairs).axes[0]
    marks = {ln.get_label().split(" (")[0].split(" ")[0]: ln.get_xydata()[0]
             for ln in ax.get_lines() if ln.get_label().startswith(("shear", "largest"))}
    b, h, tf, tw = 55 - 3.5, 120 - 9, 9, 7
    e = 3 * b**2 * tf / (6 * b * tf + h * tw)
    assert abs(marks["shear"][0] - (3.5 - e)) < tw, marks
    # on the symmetry line y = 0 within 1e-3 of the depth (the mesh of --tol 1e-2 is not
    # symmetric; the shear centre converges with it like J, DEVELOPERS.md)
    assert marks["shear"][1] == pytest.approx(0.0, abs=1e-3 * 120)
    assert marks["largest"][0] == pytest.approx(55.0, abs=1e-9)


def test_plot_sectorial_with_nothing_warping_is_one_line_exit_2(tmp_path, capsys):
    """Round bars only: no omega_n to draw; one line, exit 2, no file written."""
    f = tmp_path / "m.toml"
    f.write_text(GOOD.format(segment_extra="", support_extra=""))
    png, out = tmp_path / "w.png", tmp_path / "m.json"
    assert main(["member", str(f), "--plot-sectorial", str(png), "--json", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "no segment counts warping" in err, err
    assert not png.exists() and not out.exists()
    assert main(["member", str(f), "--plot-sectorial", str(tmp_path / "no" / "w.png")]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "--plot-sectorial" in err, err


@pytest.mark.parametrize("change, words", [
    (("torque = \"100 N*m\"", "torque = \"100 N\""), "is a force"),
    (("section = { diameter = \"40 mm\" }", "section = \"nothere.toml\""),
     "relative to the member file"),
])
def test_member_file_messages_speak_of_the_member(tmp_path, capsys, change, words):
    """A force where a torque goes names the force; a member file's messages say
    'member file', not 'shaft file'."""
    f = tmp_path / "m.toml"
    f.write_text(GOOD.format(segment_extra="", support_extra="").replace(*change))
    assert main(["member", str(f)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and words in err, err


def test_empty_member_file_one_line_exit_2(tmp_path, capsys):
    f = tmp_path / "m.toml"
    f.write_text("")
    assert main(["member", str(f)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "the member's lengths" in err, err
