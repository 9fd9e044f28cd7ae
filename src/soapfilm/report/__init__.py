"""Self-contained HTML reports: one torsion result, a bar's check, a stepped shaft.

One file, no network: the pictures are PNG images embedded as ``data:``
URIs, the style sheet is inline, and a Content-Security-Policy forbids
loading anything else.  The page prints on A4 or Letter (12-14 mm margins,
figures and tables kept whole).

:func:`render_report` (``solve --report``, ``check --report``): caution,
with a check its headline (PASS or FAIL and what governs), the check table
(what, value, limit, utilisation, basis) and its inputs with their sources;
then inputs, section drawing, results (J with its guaranteed bounds and the
estimated errors, peak shear per unit torque and, with a torque, in stress
units), shear map, warping map, normalised warping about the shear centre,
refinement history (labelled columns with units) and warnings.

:func:`render_shaft_report` (``shaft --report``): caution, headline, the
check table, inputs with sources, the shaft figure (side view, internal
torque, twist), every segment's section and stress check, the twist check,
the stations, notes and warnings.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import math
from importlib import resources
from string import Template

from ..result import CAUTION
from ..stress_units import shear_scale

__all__ = ["render_report", "render_shaft_report", "html_table", "value_text",
           "refinement_table"]

_DPI = 110


def value_text(v) -> str:
    """Plain text for a value in a table: numbers to 6 significant digits."""
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return f"{v:.6g}" if math.isfinite(v) else str(v)
    if isinstance(v, (list, tuple)) and all(isinstance(x, (int, float)) for x in v):
        return "(" + ", ".join(value_text(x) for x in v) + ")"
    return str(v)


def _esc(v) -> str:
    return html.escape(value_text(v), quote=True)


def _is_number(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def html_table(obj) -> str:
    """HTML for a dict (key/value rows), a list of dicts (one row each) or a list.

    Nested dicts and lists become nested tables, so any JSON-like shaft-check
    result can be shown without knowing its keys.
    """
    if isinstance(obj, dict):
        if not obj:
            return '<p class="none">(empty)</p>'
        rows = []
        for k, v in obj.items():
            if isinstance(v, (dict, list)) and not _flat_list(v):
                cell = f"<td>{html_table(v)}</td>"
            else:
                cell = f"<td>{_esc(v)}</td>"
            rows.append(f"<tr><th scope=\"row\">{html.escape(str(k))}</th>{cell}</tr>")
        return "<table>" + "".join(rows) + "</table>"
    if isinstance(obj, list):
        if obj and all(isinstance(x, dict) for x in obj):
            keys: list = []
            for row in obj:
                keys += [k for k in row if k not in keys]
            head = "".join(f"<th>{html.escape(str(k))}</th>" for k in keys)
            body = "".join(
                "<tr>" + "".join(
                    f'<td class="{"num" if _is_number(r.get(k)) else ""}">'
                    f'{_esc(r.get(k, ""))}</td>' for k in keys) + "</tr>"
                for r in obj
            )
            return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"
        return "<ul>" + "".join(f"<li>{_esc(x)}</li>" for x in obj) + "</ul>"
    return f"<p>{_esc(obj)}</p>"


def _flat_list(v) -> bool:
    return isinstance(v, list) and all(isinstance(x, (int, float, str)) for x in v)


def _png_figure(ax, alt: str, caption: str) -> str:
    from ..plots import figure_bytes

    return _png_html(figure_bytes(ax, "png", dpi=_DPI), alt, caption)


def _png_html(png: bytes, alt: str, caption: str) -> str:
    """A PNG embedded as a figure: ``alt`` plain text (escaped here), ``caption`` HTML."""
    data = base64.b64encode(png).decode("ascii")
    return (f'<figure><img alt="{html.escape(alt)}" src="data:image/png;base64,{data}">'
            f"<figcaption>{caption}</figcaption></figure>")


def _results_table(result, torque, stress_unit) -> str:
    rows = []
    for q, v, u in result.summary_rows():
        key = q.startswith("Torsion constant") or q.startswith("Peak shear")
        rows.append(
            f'<tr class="{"key" if key else ""}"><td>{html.escape(q.strip())}</td>'
            f'<td class="num">{html.escape(v)}</td><td class="unit">{html.escape(u)}</td></tr>'
        )
    if torque is not None:
        s = shear_scale(result.units, torque, stress_unit)
        rows.append(
            f'<tr class="key"><td>Peak shear stress at T = {torque:g} N·m</td>'
            f'<td class="num">{result.max_shear_per_torque * s.factor:.6g}</td>'
            f'<td class="unit">{html.escape(stress_unit)}</td></tr>'
        )
    shown = {"max_shear"}  # already a row of summary_rows when present
    for k, v in result.estimated_relative_error.items():
        if k in shown or not _is_number(v):
            continue
        rows.append(f"<tr><td>Estimated relative error: {html.escape(k.replace('_', ' '))}"
                    f'</td><td class="num">{v:.1e}</td><td class="unit">-</td></tr>')
    head = '<thead><tr><th>quantity</th><th class="num">value</th><th>unit</th></tr></thead>'
    return f"<table>{head}<tbody>{''.join(rows)}</tbody></table>"


def _default_inputs(result) -> dict:
    pr = result.profile
    return {
        "section": pr.name or "(unnamed)",
        "length unit": pr.units,
        "outline points": sum(len(lp) for lp in pr.loops),
        "holes": len(pr.holes),
    }


def _cells_table(head, rows, num_cols=(), over=(), util_col: int | None = None) -> str:
    """A table with a header row; text cells escaped; columns in ``num_cols`` right-aligned
    where they hold a number; rows in ``over`` marked."""
    th = "".join(f'<th class="{"num" if i in num_cols else ""}">{html.escape(h)}</th>'
                 for i, h in enumerate(head))
    body = []
    for k, row in enumerate(rows):
        cells = []
        for i, c in enumerate(row):
            cls = ("util num" if i == util_col else
                   "num" if i in num_cols and (_looks_numeric(c) or c in ("-", "")) else "")
            cells.append(f'<td class="{cls}">{html.escape(str(c))}</td>')
        body.append(f'<tr class="{"over" if k in over else ""}">' + "".join(cells) + "</tr>")
    # more columns than the page holds at body size: the smaller type of the wide tables
    tag = '<table class="compact">' if len(head) > WIDE_TABLE else "<table>"
    return f"{tag}<thead><tr>{th}</tr></thead><tbody>{''.join(body)}</tbody></table>"


#: Columns beyond which a table is set in the smaller type (``table.compact``): eight
#: columns of value-and-unit cells fill the 186 mm page at body size.
WIDE_TABLE = 8


def _looks_numeric(text) -> bool:
    t = str(text).strip()
    return bool(t) and (t[0].isdigit() or (t[0] in "+-." and len(t) > 1 and t[1].isdigit()))


def refinement_table(result) -> str:
    """The refinement history with labelled columns and units (HTML)."""
    from .checks import finite_or_dash

    u = result.units
    head = ("step", "elements", "nodes", f"J lower bound [{u}^4]", f"J upper bound [{u}^4]",
            "J bracket (J_hi - J_lo) / J", f"peak shear per unit torque [1/{u}^3]",
            f"the same, warping function [1/{u}^3]", "estimated peak error (relative)",
            f"warping constant Γ [{u}^6]")
    rows = []
    for r in result.refinement:
        rows.append((finite_or_dash(r.get("step"), "d"), finite_or_dash(r.get("elements"), "d"),
                     finite_or_dash(r.get("nodes"), "d"), finite_or_dash(r.get("j_lo")),
                     finite_or_dash(r.get("j_hi")),
                     finite_or_dash(r.get("relative_bracket"), ".2e"),
                     finite_or_dash(r.get("max_shear_per_torque"), ".5e"),
                     finite_or_dash(r.get("max_shear_per_torque_warping"), ".5e"),
                     finite_or_dash(r.get("max_shear_error"), ".2e"),
                     finite_or_dash(r.get("warping_constant"), ".6g")))
    note = ('<p class="note">One row per adaptive step. The estimated peak error is relative; '
            "it needs an earlier step to compare with, so the first step has none (-). The "
            "refinement stops when the bracket and the peak error are both within the "
            "tolerance.</p>")
    table = _cells_table(head, rows, num_cols=range(len(head)))
    return table.replace("<table>", '<table class="compact">', 1) + note


def check_html(view) -> str:
    """Headline, check table and inputs of a :class:`~soapfilm.report.checks.CheckView`."""
    from .checks import CHECK_COLUMNS, INPUT_COLUMNS

    verdict = (f'<div class="verdict {"pass" if view.passed else "fail"}"><strong>'
               f'{view.verdict}</strong> {html.escape(view.headline.split(": ", 1)[-1])}</div>')
    over = [k for k, r in enumerate(view.rows) if r.over]
    table = _cells_table(CHECK_COLUMNS, [r.cells() for r in view.rows], num_cols=(1, 2, 3),
                         over=over, util_col=3)
    notes = "".join(f'<p class="note">{html.escape(n)}</p>' for n in view.notes)
    inputs = _cells_table(INPUT_COLUMNS, view.inputs)
    return (f"{verdict}\n<h2>Check</h2>\n{table}{notes}\n"
            f"<h2>Check inputs and their sources</h2>\n{inputs}\n")


def _warnings_html(warnings) -> str:
    if warnings:
        return ('<ul class="warnings">'
                + "".join(f"<li>{html.escape(w)}</li>" for w in warnings) + "</ul>")
    return '<p class="none">No warnings.</p>'


def _page(title: str, body: str, footer: str, generated: str | None,
          caution: str = CAUTION) -> str:
    from .. import __version__

    if generated is None:
        generated = _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%d %H:%M UTC")
    tpl = Template(resources.files(__package__).joinpath("template.html").read_text("utf-8"))
    return tpl.substitute(
        version=html.escape(__version__),
        title=html.escape(title),
        generated=html.escape(generated),
        caution=html.escape(caution),
        body=body,
        footer=html.escape(footer),
    )


def render_report(result, inputs: dict | None = None, torque: float | None = None,
                  stress_unit: str = "MPa", shaft_check: dict | None = None,
                  title: str | None = None, show_mesh: bool = False,
                  generated: str | None = None, check=None) -> str:
    """The HTML text of the report.

    Parameters
    ----------
    result : TorsionResult
    inputs : dict, optional
        Extra input rows (file, options...), shown after the section's own.
    torque : float, optional
        Torque in N*m: adds the peak stress and draws the map in ``stress_unit``.
    stress_unit : str
    shaft_check : dict, optional
        Any JSON-like dict of further results, shown as nested tables at the end.
    title : str, optional
        Default ``"Torsion report: <section name>"``, or the check's title.
    show_mesh : bool
        Draw the mesh over the shear map.
    generated : str, optional
        Time stamp text (default: now, UTC); fixed in tests.
    check : CheckView, optional
        A bar's check (:func:`soapfilm.report.checks.section_check_view`):
        its headline, table and inputs come first.
    """
    from ..plots import draw_section, plot_sectorial, plot_shear, plot_warping

    name = result.profile.name or "section"
    title = title or (check.title if check is not None else f"Torsion report: {name}")
    rows = _default_inputs(result)
    if torque is not None:
        rows["torque"] = f"{torque:g} N·m"
    rows.update(inputs or {})
    section = _png_figure(draw_section(result.profile), "drawing of the section",
                          "The section as read: shaded material, input points as dots.")
    shear_cap = ("Shear stress magnitude (colours), stress-function contours (white: the shear "
                 "flows along them) and the peak (red).")
    shear = _png_figure(plot_shear(result, torque=torque, stress_unit=stress_unit,
                                   show_mesh=show_mesh), "shear stress map", shear_cap)
    warping = _png_figure(plot_warping(result), "warping map",
                          "Axial (out-of-plane) displacement per unit twist rate, about the "
                          "centroid.")
    sectorial = ""
    if result.warping is not None:
        sectorial = _png_figure(
            plot_sectorial(result), "normalised warping map",
            "Normalised warping ω_n about the shear centre (thin-walled theory's principal "
            "sectorial coordinate): the warping normal stress is B ω_n / Γ for a bimoment B "
            "where warping is held. Shear centre: cross in a ring.")
    if result.refinement:
        refinement = refinement_table(result)
    else:
        refinement = (f'<p class="none">One mesh, no adaptive refinement: '
                      f"{result.mesh.nelements} triangles, {result.mesh.nnodes} nodes.</p>")
    parts = []
    if check is not None:
        parts.append(check_html(check))
    parts += [
        f"<h2>{'Section inputs' if check is not None else 'Inputs'}</h2>\n{html_table(rows)}",
        f"<h2>Section</h2>\n{section}",
        f"<h2>Results</h2>\n{_results_table(result, torque, stress_unit)}",
        f"<h2>Shear stress</h2>\n{shear}",
        f"<h2>Warping</h2>\n{warping}{sectorial}",
        f"<h2>Refinement history</h2>\n{refinement}",
        f"<h2>Warnings</h2>\n{_warnings_html(result.warnings)}",
    ]
    if shaft_check is not None:
        parts.append(f"<h2>Shaft check</h2>\n{html_table(shaft_check)}")
    footer = ("Stresses follow linear-elastic Saint-Venant torsion of a prismatic bar. J is "
              "bracketed by the stress-function (lower) and warping-function (upper) solutions.")
    return _page(title, "\n\n".join(parts) + "\n", footer, generated)


def render_shaft_report(view, figure_png: bytes | None = None,
                        generated: str | None = None) -> str:
    """The HTML report of a stepped shaft's check.

    Parameters
    ----------
    view : ShaftView
        From :func:`soapfilm.report.checks.shaft_check_view`.
    figure_png : bytes, optional
        The shaft figure (:func:`soapfilm.members.shaftplot.plot_shaft`) as PNG.
    generated : str, optional
        Time stamp text (default: now, UTC).
    """
    parts = [check_html(view)]
    if figure_png is not None:
        parts.append("<h2>Along the shaft</h2>\n" + _png_html(
            figure_png, "side view, internal torque and twist along the shaft",
            "Side view (segments numbered, the governing one shaded), internal torque and "
            "twist angle along the axis; loads and held stations marked."))
    for title, head, rows, over in view.tables:
        util = head.index("utilisation") if "utilisation" in head else None
        nums = [i for i, h in enumerate(head) if i >= 2 and not h.startswith(
            ("section", "method", "material", "basis", "kind", "station"))]
        parts.append(f"<h2>{html.escape(title)}</h2>\n"
                     + _cells_table(head, rows, num_cols=nums, over=over, util_col=util))
    parts.append(f"<h2>Warnings</h2>\n{_warnings_html(view.warnings)}")
    footer = ("Internal torque by equilibrium (and compatibility of twist where two or more "
              "stations are held); sections by finite elements or the closed forms of the "
              "circle.")
    return _page(view.title, "\n\n".join(parts) + "\n", footer, generated)
