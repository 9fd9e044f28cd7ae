"""``soapfilm shaft``: internal torque, twist and checks along a stepped shaft."""

from __future__ import annotations

import argparse
from typing import TYPE_CHECKING

from ..defaults import CAUTION
from ..errors import InputError
from ..units import UnitSystem, parse_positive
from ._inputs import add_input_args, input_options
from ._io import (
    check_outputs_apart,
    check_writable,
    finish_check,
    run_outputs,
    verdict_json,
)
from .check import (
    add_allowable_args,
    allowable_json,
    parse_allowable_args,
    section_json,
    system_of,
)

if TYPE_CHECKING:  # the mechanics are imported when a shaft runs, not for --help
    from ..members.shaft import ShaftResult

NAME = "shaft"
HELP = "check a stepped shaft from a shaft file: internal torque, stress, twist, stiffness"


def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", metavar="FILE", help="shaft file (TOML)")
    p.add_argument("--material", metavar="NAME",
                   help="material for segments that do not name one (overrides [check] material)")
    p.add_argument("--shear-modulus", metavar="G",
                   help='shear modulus for every segment, e.g. "79.3 GPa"')
    add_allowable_args(p)
    p.add_argument("--json", metavar="OUT", help="write results as JSON (SI base units) to OUT "
                   "('-' = stdout)")
    p.add_argument("--plot", metavar="OUT.png",
                   help="draw the shaft, the internal-torque diagram and the twist along the "
                        "axis (PNG, SVG or PDF by suffix)")
    p.add_argument("--quiet", action="store_true", help="no terminal output")
    add_input_args(p, what="the section files")
    p.add_argument("--twist-rule", choices=("spans", "segments"),
                   help="spans (default): the twist between every two stations against the "
                        "limit times their distance, at least the length the limit is written "
                        "per (1 m for deg/m); segments: every segment's twist per length, "
                        "however short (overrides the file's twist_rule)")
    p.add_argument("--report", metavar="OUT.html",
                   help="self-contained HTML report: the check, every segment, the stations "
                        "and the shaft figure")


def _stretch_json(sp) -> dict:
    return {
        "from": sp.start,
        "to": sp.end,
        "x_start_m": sp.x_start,
        "x_end_m": sp.x_end,
        "length_m": sp.length,
        "internal_torque_Nm": sp.internal_torque,
        "twist_angle_rad": sp.twist_angle,
        "twist_per_length_rad_per_m": sp.twist_per_length,
        "allowed_twist_angle_rad": sp.allowed_twist,
        "utilisation": sp.utilisation,
    }


def shaft_json(res: ShaftResult) -> dict:
    """Results in SI base units (README, "JSON output", ``shaft``)."""
    segs = []
    for s in res.segments:
        seg = s.segment
        segs.append({
            "name": seg.name,
            "x_start_m": s.x_start,
            "x_end_m": s.x_end,
            "length_m": seg.length,
            "section": section_json(seg.section, seg.section.nominal_diameter),
            "material": seg.material.label,
            "shear_modulus_Pa": seg.material.shear_modulus,
            "shear_modulus_source": seg.material.shear_modulus_note,
            "internal_torque_Nm": s.governing_torque,
            "internal_torque_range_Nm": [s.torque_min, s.torque_max],
            "max_shear_stress_Pa": s.max_shear_stress,
            **allowable_json(seg.allowable),
            "twist_angle_rad": s.twist_angle,
            "twist_per_length_rad_per_m": s.max_twist_per_length,
            "torsional_stiffness_Nm_per_rad": s.torsional_stiffness,
            "utilisation_stress": s.utilisation_stress,
            "utilisation_twist": s.utilisation_twist,
            "utilisation": s.utilisation,
            "passed": s.passed,
        })

    def twist_at(x):
        return float(res.twist[int(abs(res.x - x).argmin())])

    stations = [{"name": ld.name, "kind": "load", "x_m": ld.position, "torque_Nm": ld.torque,
                 "twist_angle_rad": twist_at(ld.position)} for ld in res.model.loads]
    stations += [{"name": sp.name, "kind": "support", "x_m": sp.position, "torque_Nm": r,
                  "twist_angle_rad": twist_at(sp.position)} for sp, r in res.reactions]
    stations.sort(key=lambda d: d["x_m"])
    gov = res.governing
    m = res.model
    return {
        "units": "SI base units (m, N*m, Pa, rad)",
        "name": m.name,
        "statics": res.statics,
        "segments": segs,
        "stations": stations,
        "twist_check": {
            "rule": m.twist_rule,
            "limit_rad_per_m": m.twist_limit,
            "limit_basis": m.twist_limit_note,
            "limit_per_length_m": m.twist_basis,
            "spans": [_stretch_json(sp) for sp in res.twist_spans],
            "governing": None if res.twist_governing is None
            else _stretch_json(res.twist_governing),
        },
        "along_axis": {
            "x_m": res.x.tolist(),
            "twist_angle_rad": res.twist.tolist(),
            "internal_torque_Nm": res.piece_torque.tolist(),
        },
        "totals": {
            "length_m": m.length,
            "end_to_end_twist_rad": res.end_to_end_twist,
            "torsional_stiffness_Nm_per_rad": res.torsional_stiffness,
            "twist_limit_rad_per_m": m.twist_limit,
            "twist_limit_basis": m.twist_limit_note,
            **verdict_json(res, gov),
        },
        "notes": list(res.notes),
        "caution": CAUTION,
    }


def print_shaft(res: ShaftResult, sys: UnitSystem, con, view=None) -> None:
    from rich.markup import escape as e
    from rich.table import Table

    from ..report.checks import shaft_check_view
    from .check import print_headline, print_view_tables

    if view is None:
        view = shaft_check_view(res, sys)
    m = res.model
    n = len(m.segments)
    con.print(f"[bold]{e(m.name)}[/]: {n} segment{'s' if n != 1 else ''}, length "
              f"{sys.fmt(m.length, 'length')}, statically {res.statics}")
    text_cols = ("segment", "section", "method", "material", "basis of the allowable",
                 "stations", "station", "kind")
    # the terminal leaves out what the report and the inputs table carry
    bases = {s.segment.allowable.basis for s in res.segments}
    skip = {"J bracket half-width / J", "material"} | (
        {"basis of the allowable"} if len(bases) == 1 else set())
    short = {"finite elements": "FE", "closed form (exact)": "exact"}
    for title, head, rows, over in view.tables:
        keep = [i for i, h in enumerate(head) if h not in skip]
        t = Table(header_style="bold", title=title, title_justify="left")
        for i in keep:
            t.add_column(e(head[i]), justify="left" if head[i] in text_cols else "right",
                         overflow="fold")
        util = head.index("utilisation") if "utilisation" in head else None
        for k, row in enumerate(rows):
            cells = [e(short.get(str(row[i]), str(row[i]))) for i in keep]
            if util is not None and k in over:
                j = keep.index(util)
                cells[j] = f"[bold red]{cells[j]}[/]"
            t.add_row(*cells)
        con.print(t)
    print_view_tables(view, con)
    for note in view.notes:
        con.print(f"[dim]note: {e(note)}[/]")
    print_headline(view, con)
    for w in view.warnings:
        con.print(f"[bold yellow]warning:[/] {e(w)}")
    con.print(f"[dim]Caution: {e(CAUTION)}[/]")


def run(args) -> int:
    for target, opt in ((args.json, "--json"), (args.plot, "--plot")):
        if target and target != "-":
            check_writable(target, opt)
    if args.plot:
        from ..plots import figure_format

        figure_format(args.plot)  # PNG, SVG or PDF by suffix, else a user error now
    if args.report:
        if not args.report.lower().endswith((".html", ".htm")):
            raise InputError("the report is an HTML file", where=f"--report {args.report}",
                             fix="end the file name in .html")
        check_writable(args.report, "--report")
    check_outputs_apart([args.file], [("--json", args.json), ("--plot", args.plot),
                                      ("--report", args.report)])
    sys_ = system_of(args)
    from ..members.shaftfile import CheckOptions, SectionSource, read_shaft

    opts = parse_allowable_args(args)
    g = parse_positive(args.shear_modulus, "modulus", "--shear-modulus")
    from ..members.shaftfile import twist_basis_of

    options = CheckOptions(shear_modulus=g, material=args.material, **opts,
                           twist_rule=args.twist_rule,
                           twist_basis=None if args.twist_limit is None
                           else twist_basis_of(args.twist_limit))
    model = read_shaft(args.file, options, SectionSource(options=input_options(args)))
    from ..members.shaft import analyse_shaft

    try:
        res = analyse_shaft(model)
    except InputError as exc:
        if exc.where is None:
            raise InputError(exc.what, where=args.file, fix=exc.fix) from None
        raise
    return finish(args, res, sys_)


def finish(args, res: ShaftResult, sys_) -> int:
    """Print, write the JSON, the plot and the report; the exit status (3: a check failed)."""
    from ..report.checks import shaft_check_view

    sources = {"twist_rule": "--twist-rule" if args.twist_rule else
               ("the shaft file" if res.model.twist_rule != "spans" else "default")}
    if args.criterion:
        sources["criterion"] = "--criterion"
    if args.safety_factor:
        sources["safety_factor"] = "--safety-factor"
    view = shaft_check_view(res, sys_, sources=sources, shaft_file=str(args.file))
    files = run_outputs()  # every file written before anything is printed
    if args.json and args.json != "-":
        files.stage_json(args.json, shaft_json(res), "--json")
    if args.plot or args.report:
        from ..members.shaftplot import shaft_figure_bytes

        if args.plot:
            from ..plots import figure_format

            files.stage(args.plot, shaft_figure_bytes(res, sys_, figure_format(args.plot)),
                        "--plot")
        if args.report:
            from ..report import render_shaft_report

            files.stage(args.report, render_shaft_report(
                view, shaft_figure_bytes(res, sys_, "png", dpi=110)), "--report")
    return finish_check(args, files, res.passed, lambda: shaft_json(res),
                        lambda con: print_shaft(res, sys_, con, view=view),
                        [(args.plot, "plot"), (args.report, "report")])
