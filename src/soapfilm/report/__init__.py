"""A self-contained HTML report of one torsion result.

One file, no network: the pictures are PNG images embedded as ``data:``
URIs, the style sheet is inline, and a Content-Security-Policy forbids
loading anything else.  The page prints on A4 or Letter (12-14 mm margins,
figures and tables kept whole).

Sections: caution, inputs, section drawing, results (J with its guaranteed
bounds and the estimated errors, peak shear per unit torque and, with a
torque, in stress units), shear map, warping map, refinement history,
warnings and, when given, the shaft-check results.
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

__all__ = ["render_report", "html_table", "value_text"]

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

    data = base64.b64encode(figure_bytes(ax, "png", dpi=_DPI)).decode("ascii")
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


def render_report(result, inputs: dict | None = None, torque: float | None = None,
                  stress_unit: str = "MPa", shaft_check: dict | None = None,
                  title: str | None = None, show_mesh: bool = False,
                  generated: str | None = None) -> str:
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
        Shaft-check results (any JSON-like dict); adds a section.
    title : str, optional
        Default ``"Torsion report: <section name>"``.
    show_mesh : bool
        Draw the mesh over the shear map.
    generated : str, optional
        Time stamp text (default: now, UTC); fixed in tests.
    """
    from ..plots import draw_section, plot_shear, plot_warping

    name = result.profile.name or "section"
    title = title or f"Torsion report: {name}"
    rows = _default_inputs(result)
    if torque is not None:
        rows["torque"] = f"{torque:g} N·m"
    rows.update(inputs or {})
    if generated is None:
        generated = _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%d %H:%M UTC")
    section = _png_figure(draw_section(result.profile), "drawing of the section",
                          "The section as read: shaded material, input points as dots.")
    shear_cap = ("Shear stress magnitude (colours), stress-function contours (white: the shear "
                 "flows along them) and the peak (red).")
    shear = _png_figure(plot_shear(result, torque=torque, stress_unit=stress_unit,
                                   show_mesh=show_mesh), "shear stress map", shear_cap)
    warping = _png_figure(plot_warping(result), "warping map",
                          "Axial (out-of-plane) displacement per unit twist rate, about the "
                          "centroid.")
    if result.refinement:
        refinement = html_table([dict(r) for r in result.refinement])
    else:
        refinement = (f'<p class="none">One mesh, no adaptive refinement: '
                      f"{result.mesh.nelements} triangles, {result.mesh.nnodes} nodes.</p>")
    if result.warnings:
        warnings = ('<ul class="warnings">'
                    + "".join(f"<li>{html.escape(w)}</li>" for w in result.warnings) + "</ul>")
    else:
        warnings = '<p class="none">No warnings.</p>'
    shaft = ""
    if shaft_check is not None:
        shaft = f"\n<h2>Shaft check</h2>\n{html_table(shaft_check)}\n"
    from .. import __version__

    tpl = Template(resources.files(__package__).joinpath("template.html").read_text("utf-8"))
    return tpl.substitute(
        version=html.escape(__version__),
        title=html.escape(title),
        generated=html.escape(generated),
        caution=html.escape(CAUTION),
        inputs=html_table(rows),
        section=section,
        results=_results_table(result, torque, stress_unit),
        shear=shear,
        warping=warping,
        refinement=refinement,
        warnings=warnings,
        shaft=shaft,
    )
