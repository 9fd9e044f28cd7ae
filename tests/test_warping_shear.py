"""Warping (secondary) shear of non-uniform torsion (soapfilm.fem.sectorial, members) against
outside references.

Where warping is held, the warping normal stress sigma_w = B omega_n / Gamma changes along the
bar, and the axial equilibrium of a slice needs a shear in the section: thin-walled theory gives
the shear flow tau t = T_w S_omega / Gamma with S_omega = int omega_n t ds from a free edge and
the warping torque T_w = -E Gamma phi''' (Timoshenko & Gere, Theory of Elastic Stability, 2nd
ed., 1961, ch. 5, sec. 5.10-5.11; AISC Steel Design Guide 9, Torsional Analysis of Structural
Steel Members, 1997, ch. 4, tau_ws = E S_w phi''' / t - from memory).  soapfilm solves the same
balance on the finite-element section, tau_s = T_w grad(psi) / Gamma with -Laplace psi = omega_n
and no flux through any boundary (DEVELOPERS.md, "Warping shear"), and reports the largest
|grad psi| / Gamma, the shear per unit warping torque.

Thin-wall theory is the limit of thin walls; the finite-element values must approach it as the
walls thin (three thicknesses), apart from the junctions, where the walls' own width changes the
flow over a few thicknesses (a local effect the thin-wall formula does not have).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from soapfilm import analyse
from soapfilm.fem.sectorial import (
    normalised_warping,
    warping_properties,
    warping_shear_function,
    warping_shear_gradients,
)
from soapfilm.materials import Allowable, Material
from soapfilm.members.member import MemberModel, MemberSegment, MemberSupport, analyse_member
from soapfilm.members.shaft import Load, Section
from soapfilm.mesh import mesh_profile
from soapfilm.shapes import box_tube, channel, i_section, rectangle
from soapfilm.solve import corner_zone_radius, solve_fields

THICKNESSES = (8.0, 4.0, 2.0)


def i_flange_shear(x, b: float, h: float):
    """Thin-walled I, one flange b wide, h between the flange mid-lines: omega_n = h x / 2
    along the flange (x from the web), so S_omega / t = h (b^2/4 - x^2) / 4 from the tip,
    h b^2 / 16 at the web (Timoshenko & Gere, 2nd ed., sec. 5.10: the sectorial coordinate of
    the I; AISC Design Guide 9, 1997, S_w1 = h b^2 t_f / 16 - from memory)."""
    return h * (b * b / 4.0 - np.asarray(x) ** 2) / 4.0


def channel_flange_peak(b: float, h: float, tf: float, tw: float) -> tuple[float, float]:
    """Thin-walled channel, flanges b from the web's mid-line, h between the flange mid-lines:
    shear-centre offset e = 3 b^2 tf / (6 b tf + h tw) (Timoshenko & Gere, 2nd ed., sec. 5.10;
    AISC Design Guide 9, 1997, Appendix C - from memory); omega_n = (e - x) h / 2 along a flange
    (x from the web's mid-line: e h / 2 at the corner, (e - b) h / 2 at the tip), so S_omega / t
    from the tip is largest where omega_n = 0, at x = e: h (b - e)^2 / 4.  The web's largest,
    at mid-depth, (2 e - b) h b tf / (4 tw) + e h^2 / 8, is smaller for the sections below.
    Returns (largest S_omega / t over the walls, x of the flange's largest)."""
    e = 3.0 * b * b * tf / (6.0 * b * tf + h * tw)
    flange = h * (b - e) ** 2 / 4.0
    web = abs((2.0 * e - b) * h * b * tf / (4.0 * tw) + e * h * h / 8.0)
    return max(flange, web), e


@pytest.fixture(scope="module")
def i_results():
    """I 200 x 100, walls of 8, 4 and 2 (no fillets), adaptive quadratic at tol 1e-3."""
    return {t: analyse(i_section(200.0, 100.0, t, t), tol=1e-3, warping_shear=True) for t in THICKNESSES}


def test_i_section_warping_shear_tends_to_thin_wall(i_results):
    """Thin-walled I without fillets: the largest warping shear per unit warping torque sits in
    a flange beside the web (thin wall: at the flange centre, T_w h b^2 / (16 Gamma)); the sharp
    web-flange corners, where it is unbounded, are left out within the corner zone (2.5 % of the
    diameter, the Saint-Venant peak's rule), so it is read at the zone's edge, and there it
    tends to the thin-wall S_omega / (Gamma t) of that place as the walls thin (measured
    +1.3e-2, -6.8e-3, -2.2e-4 for t = 8, 4, 2: the corners' own disturbance decays over a few
    thicknesses).  Against h b^2 / 16 it lies within the zone's parabolic fall-off."""
    diffs = []
    for t, r in i_results.items():
        w = r.warping
        h, zone = 200.0 - t, corner_zone_radius(r.profile)
        x, y = w.max_warping_shear_location
        assert abs(y) >= 100.0 - t - 1e-9, (t, x, y)  # in a flange
        assert abs(x) <= t / 2 + zone + t, (t, x, y)  # beside the web
        thin_here = i_flange_shear(x, 100.0, h) / w.warping_constant
        d = w.max_warping_shear / thin_here - 1.0
        diffs.append(d)
        centre = h * 100.0**2 / 16.0 / w.warping_constant  # thin wall, flange centre
        fall = 4.0 * (t / 2 + zone + t) ** 2 / 100.0**2  # S_omega's fall-off over the zone
        assert 1.0 - fall - 0.02 <= w.max_warping_shear / centre <= 1.02, (t, w.max_warping_shear)
    assert abs(diffs[-1]) <= 1e-3, diffs
    assert abs(diffs[0]) > abs(diffs[1]) > abs(diffs[2]), diffs


def test_i_flange_warping_shear_follows_s_omega(i_results):
    """Along the flanges, three thicknesses and more from the web and one from the tips, |grad
    psi| is the thin-wall S_omega / t = h (b^2/4 - x^2) / 4 (Timoshenko & Gere, 2nd ed., sec.
    5.10), within (t / b) of its largest value at every node, across the thickness too."""
    for t, r in i_results.items():
        g = warping_shear_gradients(r.mesh, r.fields)
        xy = r.fields.p + r.fields.origin[:, None]
        x, y = xy
        h = 200.0 - t
        sel = (np.abs(y) >= 100.0 - t) & (np.abs(x) >= t / 2 + 3 * t) & (np.abs(x) <= 50.0 - t)
        assert sel.sum() > 50
        fe = np.hypot(*g[:, sel])
        thin = i_flange_shear(x[sel], 100.0, h)
        err = np.max(np.abs(fe - thin)) / (h * 100.0**2 / 16.0)
        assert err <= t / 100.0, (t, err)


def test_channel_warping_shear_tends_to_thin_wall():
    """Channel 200 x 80 without fillets: the largest warping shear per unit warping torque
    against thin-wall theory's h (b - e)^2 / (4 Gamma) (channel_flange_peak), within 2 (t/b)^2
    and converging like it (measured +4.5e-3, +1.1e-3, +2.7e-4 for t = 8, 4, 2), and it sits in
    a flange where omega_n changes sign, x = e from the web's mid-line (within a tenth of b - e:
    S_omega is flat there)."""
    diffs = []
    for t in THICKNESSES:
        w = analyse(channel(200.0, 80.0, t, t), tol=1e-3, warping_shear=True).warping
        b, h = 80.0 - t / 2, 200.0 - t
        peak, e = channel_flange_peak(b, h, t, t)
        d = w.max_warping_shear * w.warping_constant / peak - 1.0
        assert abs(d) <= 2 * (t / b) ** 2, (t, d)
        diffs.append(d)
        x, y = w.max_warping_shear_location
        assert abs(y) >= 100.0 - t - 1e-9, (t, x, y)
        assert abs(x - (t / 2 + e)) <= 0.1 * (b - e), (t, x, e)
    for thick, thin in zip(diffs, diffs[1:], strict=False):
        assert abs(thin) <= abs(thick) / 3.0, diffs


# --- statics, and scikit-fem on the same mesh ------------------------------------------
def _skfem_p2_basis(mesh, f2):
    """scikit-fem's isoparametric quadratic basis on our P2 mesh, and the map from our nodal
    values to its dofs (corners, then its facets)."""
    from reference import skfem_p2_basis

    return skfem_p2_basis(f2.p + f2.origin[:, None], f2.nodes, mesh.nnodes)


def _skfem_check(basis, psi, wn, warping, size):
    """With scikit-fem's own assembly and quadrature: (1) psi solves int grad psi . grad v =
    int omega_n v (its Neumann solve, one dof pinned, constants removed) to 1e-8; (2) the
    warping shear grad(psi) T_w / Gamma has no resultant force and its moment about the shear
    centre is T_w (statics: the warping torque is the moment of the warping shear flow,
    Timoshenko & Gere, 2nd ed., sec. 5.10), to 1e-9."""
    from skfem import BilinearForm, Functional, LinearForm, asm, condense, solve
    from skfem.helpers import dot, grad

    lap = BilinearForm(lambda u, v, w: dot(grad(u), grad(v)))
    load = LinearForm(lambda v, w: w["wn"] * v)
    k = asm(lap, basis)
    f = asm(load, basis, wn=basis.interpolate(wn))
    ref = solve(*condense(k, f, D=np.array([0])))
    one = asm(Functional(lambda w: 1.0 + 0.0 * w.x[0]), basis)
    mean = Functional(lambda w: w["u"])
    ref -= asm(mean, basis, u=basis.interpolate(ref)) / one
    ours = psi - asm(mean, basis, u=basis.interpolate(psi)) / one
    np.testing.assert_allclose(ours, ref, atol=1e-8 * np.max(np.abs(ref)))

    xs, ys = warping.shear_centre
    gamma = warping.warping_constant
    u = basis.interpolate(psi)
    fx = asm(Functional(lambda w: w["u"].grad[0]), basis, u=u)
    fy = asm(Functional(lambda w: w["u"].grad[1]), basis, u=u)
    moment = asm(Functional(lambda w: (w.x[0] - xs) * w["u"].grad[1]
                            - (w.x[1] - ys) * w["u"].grad[0]), basis, u=u)
    tw = 1.0  # per unit warping torque: tau_s = T_w grad(psi) / Gamma
    assert tw * moment / gamma == pytest.approx(tw, rel=1e-9)
    assert math.hypot(fx, fy) / gamma * size <= 1e-9  # no resultant force


@pytest.mark.parametrize("kind", ["channel with fillets", "box tube", "thick rectangle"])
def test_moment_of_warping_shear_is_the_warping_torque(kind):
    """An open section (a channel with root fillets, isoparametric quadratic elements), a closed
    one (a box tube: the gradient field has no circulation round the hole, the compatibility
    condition thin-walled theory imposes on closed cells) and a solid one (a 3:1 rectangle):
    the moment of the warping shear about the shear centre equals T_w and it has no resultant,
    integrated by scikit-fem (a general finite-element library) on the same mesh (see
    _skfem_check); linear elements too, on the channel."""
    pytest.importorskip("skfem")
    from skfem import Basis, ElementTriP1, MeshTri

    pr = {"channel with fillets": channel(120.0, 60.0, 5.0, 7.0, 8.0),
          "box tube": box_tube(120.0, 80.0, 6.0),
          "thick rectangle": rectangle(60.0, 20.0)}[kind]
    mesh = mesh_profile(pr, 4.0)
    f2 = solve_fields(mesh, order=2)
    wp = warping_properties(mesh, f2)
    basis, order = _skfem_p2_basis(mesh, f2)
    _skfem_check(basis, warping_shear_function(mesh, f2)[order],
                 normalised_warping(mesh, f2)[order], wp, pr.diameter)
    if kind == "channel with fillets":
        f1 = solve_fields(mesh, order=1)
        basis = Basis(MeshTri(mesh.p, mesh.t), ElementTriP1())
        _skfem_check(basis, warping_shear_function(mesh, f1), normalised_warping(mesh, f1),
                     warping_properties(mesh, f1), pr.diameter)


# --- the member -----------------------------------------------------------------------
def test_cantilever_root_warping_shear_is_the_end_torque_times_the_property():
    """Cantilever, twist and warping held at the root (a welded end), torque T at the free end:
    phi'(0) = 0, so the whole torque is warping torque there, T_w(0) = T, and along the member
    T_w = T cosh(lam (L - x)) / cosh(lam L) (Timoshenko & Gere, 2nd ed., ch. 5, the cantilever
    with a built-in end, from memory).  The section is a thin-walled I given by the thin-wall
    formulas (J = sum b t^3 / 3, Gamma = I_f h^2 / 2, omega_max = b h / 4, warping shear per
    unit warping torque h b^2 / (16 Gamma), i_flange_shear): the member's warping shear is
    T h b^2 / (16 Gamma) at x = 0, the largest along it, and the stress check combines it with
    the Saint-Venant shear (0 at the root) and sigma_w there: sqrt(tau_w^2 + sigma_w^2 / 3)
    (distortion energy, Shigley, Mechanical Engineering Design, ch. 5)."""
    g_mod, e_mod = 81e9, 210e9
    b, tf, h, tw = 0.1, 0.008, 0.2, 0.006
    j = (2 * b * tf**3 + h * tw**3) / 3
    gamma = tf * b**3 * h**2 / 24
    per_tw = float(i_flange_shear(0.0, b, h)) / gamma
    sec = Section(name="thin I", torsion_constant=j, max_shear_per_torque=tf / j,
                  warping_constant=gamma, max_warping=b * h / 4, size=0.22,
                  max_warping_shear=per_tw)
    t, length = 1.2e3, 0.8
    mat = Material("steel", "steel", g_mod, 355e6, "test", "test", e_mod, "test")
    seg = MemberSegment("beam", length, sec, mat, e_mod, "test", Allowable(150e6, "test"))
    model = MemberModel("cantilever", (seg,), (Load("arm", length, t),),
                        (MemberSupport("wall", 0.0, True, True),), math.radians(10.0), "test")
    res = analyse_member(model)
    p = res.segments[0]
    assert p.max_warping_shear_stress == pytest.approx(t * per_tw, rel=1e-10)
    assert p.x_max_warping_shear_stress == 0.0
    lam = math.sqrt(g_mod * j / (e_mod * gamma))
    sol = res.solution
    np.testing.assert_allclose(sol.warping_torque,
                               t * np.cosh(lam * (length - sol.x)) / math.cosh(lam * length),
                               rtol=1e-9)
    sigma_root = t * math.tanh(lam * length) / lam * (b * h / 4) / gamma
    root = math.sqrt((t * per_tw) ** 2 + sigma_root**2 / 3)
    assert p.equivalent_shear_stress >= root * (1 - 1e-12)
    assert "(tau + tau_w)" in p.combination
    assert not any("not computed" in n for n in res.notes)


def test_member_file_root_warping_shear_through_the_command(tmp_path):
    """The example jib (shapes/hoist-jib-member.toml: a finite-element channel welded at the
    root, 100 N·m at the tip) through `soapfilm member --json`: at the welded root phi' = 0, so
    the whole 100 N·m is warping torque there (Timoshenko & Gere, 2nd ed., ch. 5, the built-in
    cantilever), and the segment's warping shear is 100 N·m times the section's own warping
    shear per unit warping torque (both from the JSON), at x = 0."""
    from pathlib import Path

    from soapfilm.cli import main

    here = Path(__file__).resolve().parents[1] / "shapes" / "hoist-jib-member.toml"
    out = tmp_path / "jib.json"
    assert main(["member", str(here), "--json", str(out), "--quiet"]) == 0
    seg = json.loads(out.read_text())["segments"][0]
    per_tw = seg["section"]["max_warping_shear_per_warping_torque_per_m3"]
    assert per_tw > 0
    assert seg["max_warping_torque_Nm"] == pytest.approx(100.0, rel=1e-9)
    assert seg["max_warping_shear_stress_Pa"] == pytest.approx(100.0 * per_tw, rel=1e-9)
    assert seg["max_warping_shear_stress_x_m"] == 0.0


def test_warping_shear_is_solved_only_when_asked():
    """The warping-shear solve is one more solve on the final mesh that J and the peak do not
    need: ``analyse`` makes it with ``warping_shear=True`` (the command line's ``solve`` and
    ``member`` do), not by default. The same value either way: Gamma and the rest unchanged."""
    sec = channel(120.0, 55.0, 7.0, 9.0)
    plain = analyse(sec, tol=1e-2)
    asked = analyse(sec, tol=1e-2, warping_shear=True)
    assert plain.warping.max_warping_shear is None
    assert asked.warping.max_warping_shear > 0
    assert plain.warping.warping_constant == asked.warping.warping_constant
