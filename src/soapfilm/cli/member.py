"""``soapfilm member``: a member in non-uniform torsion (restrained warping) and its checks."""

from __future__ import annotations

import argparse
from typing import TYPE_CHECKING

from ..defaults import MEMBER_CAUTION as CAUTION
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
from .check import add_allowable_args, allowable_json, parse_allowable_args, section_json, system_of

if TYPE_CHECKING:  # the mechanics are imported when a member runs, not for --help
    from ..members.member import MemberResult

NAME = "member"
HELP = ("check a member in non-uniform torsion from a member file: twist, Saint-Venant and "
        "warping torque, bimoment, shear and warping stresses with warping held or free")


def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", metavar="FILE", help="member file (TOML)")
    p.add_argument("--material", metavar="NAME",
                   help="material for segments that do not name one (overrides [check] material)")
    p.add_argument("--shear-modulus", metavar="G",
                   help='shear modulus for every segment, e.g. "79.3 GPa"')
    p.add_argument("--elastic-modulus", metavar="E",
                   help='elastic (Young\'s) modulus for every segment, e.g. "205 GPa"')
    add_allowable_args(p)
    p.add_argument("--json", metavar="OUT", help="write results as JSON (SI base units) to OUT "
                   "('-' = stdout)")
    p.add_argument("--plot", metavar="OUT.png",
                   help="draw twist, torque split (Saint-Venant and warping) and bimoment along "
                        "the member (PNG, SVG or PDF by suffix)")
    p.add_argument("--plot-sectorial", metavar="OUT",
                   help="draw the normalised warping omega_n over each section whose warping "
                        "the member counts, with its shear centre and largest |omega_n| (PNG, "
                        "SVG or PDF by suffix)")
    p.add_argument("--quiet", action="store_true", help="no terminal output")
    add_input_args(p, what="the section files")
    p.add_argument("--report", metavar="OUT.html",
                   help="self-contained HTML report: the check, every segment, the stations, "
                        "the member figure and omega_n over each section whose warping counts")


def _span_json(sp) -> dict:
    return {
        "from": sp.start,
        "to": sp.end,
        "x_start_m": sp.x_start,
        "x_end_m": sp.x_end,
        "length_m": sp.length,
        "twist_range_rad": sp.twist_range,
        "allowed_twist_angle_rad": sp.allowed,
        "utilisation": sp.utilisation,
    }


def _word(held: bool) -> str:
    return "held" if held else "free"


def member_json(res: MemberResult) -> dict:
    """Results in SI base units (README, "JSON output", ``member``)."""
    segs = []
    for p in res.segments:
        s = p.segment
        sec = s.section
        segs.append({
            "name": s.name,
            "x_start_m": p.x_start,
            "x_end_m": p.x_end,
            "length_m": s.length,
            "section": {**section_json(sec, sec.nominal_diameter),
                        "warping_constant_m6": sec.warping_constant,
                        "max_warping_m2": sec.max_warping,
                        "max_warping_shear_per_warping_torque_per_m3": sec.max_warping_shear,
                        "size_m": sec.size},
            "material": s.material.label,
            "shear_modulus_Pa": s.material.shear_modulus,
            "shear_modulus_source": s.material.shear_modulus_note,
            "elastic_modulus_Pa": s.elastic_modulus,
            "elastic_modulus_source": s.elastic_modulus_note,
            "distributed_torque_Nm_per_m": s.distributed_torque,
            "warping_counted": p.warping_counted,
            "warping_note": p.warping_note,
            "lambda_per_m": p.lam,
            "lambda_length": p.lambda_length,
            "max_twist_angle_rad": p.max_twist,
            "max_twist_rate_rad_per_m": p.max_twist_rate,
            "max_saint_venant_torque_Nm": p.max_saint_venant_torque,
            "max_warping_torque_Nm": p.max_warping_torque,
            "max_bimoment_Nm2": p.max_bimoment,
            "max_shear_stress_Pa": p.max_shear_stress,
            "max_shear_stress_x_m": p.x_max_shear_stress,
            "max_warping_stress_Pa": p.max_warping_stress,
            "max_warping_stress_x_m": p.x_max_warping_stress,
            "max_warping_shear_stress_Pa": p.max_warping_shear_stress,
            "max_warping_shear_stress_x_m": p.x_max_warping_shear_stress,
            "equivalent_shear_stress_Pa": p.equivalent_shear_stress,
            "equivalent_shear_stress_x_m": p.x_equivalent,
            "combination": p.combination,
            **allowable_json(s.allowable),
            "utilisation": p.utilisation,
            "passed": p.passed,
        })
    stations = [{
        "name": st.name,
        "x_m": st.x,
        "torque_Nm": st.torque,
        "twist": _word(st.twist_held),
        "warping": _word(st.warping_held),
        "twist_angle_rad": st.twist,
        "reaction_torque_Nm": st.reaction_torque,
        "bimoment_Nm2": st.bimoment,
    } for st in res.stations]
    sol, m, gov = res.solution, res.model, res.governing
    tg = res.twist_governing
    return {
        "units": "SI base units (m, N*m, Pa, rad)",
        "name": m.name,
        "segments": segs,
        "stations": stations,
        "twist_check": {
            "limit_rad_per_m": m.twist_limit,
            "limit_basis": m.twist_limit_note,
            "limit_per_length_m": m.twist_basis,
            "spans": [_span_json(sp) for sp in res.spans],
            "governing": None if tg is None else _span_json(tg),
        },
        "along_member": {
            "x_m": sol.x.tolist(),
            "twist_angle_rad": sol.twist.tolist(),
            "twist_rate_rad_per_m": sol.rate.tolist(),
            "saint_venant_torque_Nm": sol.saint_venant_torque.tolist(),
            "warping_torque_Nm": sol.warping_torque.tolist(),
            "bimoment_Nm2": sol.bimoment.tolist(),
        },
        "totals": {
            "length_m": m.length,
            "max_twist_angle_rad": float(abs(sol.twist).max()),
            **verdict_json(res, gov),
        },
        "notes": list(res.notes),
        "caution": CAUTION,
    }


def print_member(res: MemberResult, sys: UnitSystem, con, view=None) -> None:
    from rich.markup import escape as e
    from rich.table import Table

    from ..report.member import member_check_view
    from .check import print_headline, print_view_tables

    if view is None:
        view = member_check_view(res, sys)
    m = res.model
    n = len(m.segments)
    con.print(f"[bold]{e(m.name)}[/]: {n} segment{'s' if n != 1 else ''}, length "
              f"{sys.fmt(m.length, 'length')}, non-uniform torsion")
    short = {"Saint-Venant shear": "tau SV", "warping normal stress": "sigma_w",
             "warping shear": "tau_w",
             "largest twist": "twist", "largest bimoment": "B", "utilisation": "util.",
             "combined": "tau_eq", "allowable": "allowed", "rotation": "rotation"}
    for title, head, rows, over in view.tables:
        keep = [i for i, h in enumerate(head) if h != "section"]
        t = Table(header_style="bold", title=title, title_justify="left")
        for i in keep:
            t.add_column(e(short.get(head[i], head[i])),
                         justify="left" if head[i] in ("segment", "station") else "right",
                         overflow="fold")
        util = head.index("utilisation") if "utilisation" in head else None
        for k, row in enumerate(rows):
            cells = [e(str(row[i])) for i in keep]
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
    for target, opt in ((args.json, "--json"), (args.plot, "--plot"),
                        (args.plot_sectorial, "--plot-sectorial")):
        if target and target != "-":
            check_writable(target, opt)
    for target in (args.plot, args.plot_sectorial):
        if target:
            from ..plots import figure_format

            figure_format(target)
    if args.report:
        if not args.report.lower().endswith((".html", ".htm")):
            raise InputError("the report is an HTML file", where=f"--report {args.report}",
                             fix="end the file name in .html")
        check_writable(args.report, "--report")
    check_outputs_apart([args.file], [("--json", args.json), ("--plot", args.plot),
                                      ("--plot-sectorial", args.plot_sectorial),
                                      ("--report", args.report)])
    sys_ = system_of(args)
    from ..members.shaftfile import CheckOptions, SectionSource, twist_basis_of

    opts = parse_allowable_args(args)
    g = parse_positive(args.shear_modulus, "modulus", "--shear-modulus")
    e_mod = parse_positive(args.elastic_modulus, "modulus", "--elastic-modulus")
    options = CheckOptions(shear_modulus=g, material=args.material, **opts,
                           twist_basis=None if args.twist_limit is None
                           else twist_basis_of(args.twist_limit))
    from ..members.member import analyse_member
    from ..members.memberfile import read_member

    source = SectionSource(options=input_options(args), warping_shear=True)
    model = read_member(args.file, options, source, e_mod)
    try:
        res = analyse_member(model)
    except InputError as exc:
        if exc.where is None:
            raise InputError(exc.what, where=args.file, fix=exc.fix) from None
        raise InputError(exc.what, where=f"{args.file}: {exc.where}", fix=exc.fix) from None
    return finish(args, res, sys_, source.results)


def finish(args, res: MemberResult, sys_, section_results: dict | None = None) -> int:
    """Print, write the JSON, the plots and the report; the exit status (3: a check failed).

    ``section_results`` maps each section to its finite-element result
    (:attr:`~soapfilm.members.shaftfile.SectionSource.results`), for the
    pictures of omega_n.
    """
    from ..members.memberplot import warped_sections
    from ..report.member import member_check_view

    warped = warped_sections(res, section_results or {})
    if args.plot_sectorial and not warped:
        raise InputError("no segment counts warping, so there is no omega_n to draw",
                         where=f"--plot-sectorial {args.plot_sectorial}",
                         fix="drop the option: every segment is in Saint-Venant torsion "
                             "(see the notes)")
    view = member_check_view(res, sys_, member_file=str(args.file))
    files = run_outputs()  # every file written before anything is printed
    if args.json and args.json != "-":
        files.stage_json(args.json, member_json(res), "--json")
    if args.plot or args.report:
        from ..members.memberplot import member_figure_bytes

        if args.plot:
            from ..plots import figure_format

            files.stage(args.plot, member_figure_bytes(res, sys_, figure_format(args.plot)),
                        "--plot")
        if args.report:
            from ..members.memberplot import sectorial_bytes
            from ..report.member import render_member_report

            sectorials = [(names, sectorial_bytes([(r, names)], "png", dpi=110))
                          for r, names in warped]
            files.stage(args.report, render_member_report(
                view, member_figure_bytes(res, sys_, "png", dpi=110), sectorials),
                "--report")
    if args.plot_sectorial:
        from ..members.memberplot import sectorial_bytes
        from ..plots import figure_format

        files.stage(args.plot_sectorial,
                    sectorial_bytes(warped, figure_format(args.plot_sectorial)),
                    "--plot-sectorial")
    return finish_check(args, files, res.passed, lambda: member_json(res),
                        lambda con: print_member(res, sys_, con, view=view),
                        [(args.plot, "plot"), (args.plot_sectorial, "omega_n plot"),
                         (args.report, "report")])
