"""A member's check in words (one source for the terminal and the HTML report)."""

from __future__ import annotations

import html

from ..units import UnitSystem
from .checks import CheckRow, ShaftView, _headline, allowable_text, length_basis_text

__all__ = ["member_check_view", "render_member_report"]


def _util(u: float) -> str:
    return f"{u:.3f}"


def member_check_view(res, sys: UnitSystem, member_file: str = "") -> ShaftView:
    """Headline, check rows, inputs and tables of a :class:`~soapfilm.members.member.MemberResult`."""
    f = sys.fmt
    m = res.model
    rows = []
    for p in res.segments:
        s = p.segment
        what = f"stress, {s.name}" + (" (warping counted)" if p.warping_counted
                                      else " (Saint-Venant)")
        rows.append(CheckRow(what, f"{f(p.equivalent_shear_stress, 'stress')} at x = "
                             f"{f(p.x_equivalent, 'position')}", f(s.allowable.value, 'stress'),
                             _util(p.utilisation),
                             p.combination if p.warping_counted else "Saint-Venant shear",
                             not p.passed))
    for sp in res.spans:
        rows.append(CheckRow(f"twist, {sp.start} to {sp.end}", f(sp.twist_range, "angle"),
                             f(sp.allowed, "angle"), _util(sp.utilisation),
                             f"{f(m.twist_limit, 'twist_rate')} x max(distance, "
                             f"{length_basis_text(m.twist_basis)})", sp.utilisation > 1))
    inputs = [("member file", member_file or m.name, "")]
    inputs.append(("twist limit", f(m.twist_limit, "twist_rate"), m.twist_limit_note))
    for p in res.segments:
        s = p.segment
        inputs.append((f"G, {s.name}", f(s.material.shear_modulus, "modulus"),
                       s.material.shear_modulus_note or "given"))
        inputs.append((f"E, {s.name}", f(s.elastic_modulus, "modulus"),
                       s.elastic_modulus_note or "given"))
        inputs.append((f"allowable shear, {s.name}", f(s.allowable.value, "stress"),
                       allowable_text(s.allowable, sys)))
    gov = res.governing
    governs = (f"governed by the stress in {gov.segment.name!r} at x = "
               f"{f(gov.x_equivalent, 'position')}" if res.governs == "stress" else
               f"governed by the twist from {res.twist_governing.start} to "
               f"{res.twist_governing.end}")
    seg_head = ("segment", "section", "lambda L", "largest twist", "largest bimoment",
                "Saint-Venant shear", "warping shear", "warping normal stress", "combined",
                "allowable", "utilisation")
    seg_rows = tuple((p.segment.name, p.segment.section.name,
                      "Saint-Venant" if p.lam is None else f"{p.lambda_length:.3g}",
                      f(p.max_twist, "angle"),
                      "-" if p.lam is None else f(p.max_bimoment, "bimoment"),
                      f(p.max_shear_stress, "stress"),
                      "-" if p.max_warping_shear_stress is None
                      else f(p.max_warping_shear_stress, "stress"),
                      "-" if p.max_warping_stress is None else f(p.max_warping_stress, "stress"),
                      f(p.equivalent_shear_stress, "stress"),
                      f(p.segment.allowable.value, "stress"), _util(p.utilisation))
                     for p in res.segments)
    st_head = ("station", "x", "torque", "twist", "warping", "rotation", "reaction",
               "bimoment")
    st_rows = tuple((st.name, f(st.x, "position"), f(st.torque, "torque"),
                     "held" if st.twist_held else "free", "held" if st.warping_held else "free",
                     f(st.twist, "angle"),
                     "-" if st.reaction_torque is None else f(st.reaction_torque, "torque"),
                     "-" if st.bimoment is None else f(st.bimoment, "bimoment"))
                    for st in res.stations)
    warnings = tuple(dict.fromkeys(w for p in res.segments for w in p.segment.section.warnings))
    return ShaftView(
        title=f"Member check: {m.name}",
        passed=res.passed,
        headline=_headline(res.passed, res.utilisation, governs),
        rows=tuple(rows), inputs=tuple(inputs), notes=tuple(res.notes), warnings=warnings,
        tables=(("Segments (peaks along each)", seg_head, seg_rows,
                 tuple(k for k, p in enumerate(res.segments) if not p.passed)),
                ("Stations", st_head, st_rows, ())))


def render_member_report(view: ShaftView, figure_png: bytes | None = None,
                         sectorials=(), generated: str | None = None) -> str:
    """The HTML report of a member's check (the same page as a shaft's).

    ``sectorials`` are (segment names, PNG) pairs: omega_n over each section
    whose warping the member counts.
    """
    from . import _cells_table, _page, _png_html, _warnings_html, check_html

    parts = [check_html(view)]
    if figure_png is not None:
        parts.append("<h2>Along the member</h2>\n" + _png_html(
            figure_png, "twist, torque split and bimoment along the member",
            "Twist, Saint-Venant and warping torque, and bimoment along the member; stations "
            "marked ([T] twist held, [W] warping held)."))
    if sectorials:
        figs = []
        for names, png in sectorials:
            plain = ", ".join(repr(n) for n in names)
            used = html.escape(plain)
            figs.append(_png_html(
                png, f"normalised warping omega_n over the section of {plain}",
                f"Normalised warping &omega;<sub>n</sub> over the section of "
                f"segment{'s' if len(names) > 1 else ''} {used}: the warping normal stress is "
                "B &omega;<sub>n</sub> / &Gamma;, largest where |&omega;<sub>n</sub>| is "
                "(square); the shear centre is the ringed cross."))
        parts.append("<h2>Warping over the sections</h2>\n" + "\n".join(figs))
    for title, head, rows, over in view.tables:
        util = head.index("utilisation") if "utilisation" in head else None
        nums = [i for i, h in enumerate(head) if h not in ("segment", "section", "station",
                                                             "twist", "warping")]
        parts.append(f"<h2>{html.escape(title)}</h2>\n"
                     + _cells_table(head, rows, num_cols=nums, over=over, util_col=util))
    parts.append(f"<h2>Warnings</h2>\n{_warnings_html(view.warnings)}")
    footer = ("Non-uniform torsion E Gamma phi'''' - G J phi'' = m solved in closed form per "
              "segment (Timoshenko & Gere, Theory of Elastic Stability, 2nd ed., ch. 5); "
              "sections by finite elements or the closed forms of the circle.")
    from ..defaults import MEMBER_CAUTION

    return _page(view.title, "\n\n".join(parts) + "\n", footer, generated,
                 caution=MEMBER_CAUTION)
