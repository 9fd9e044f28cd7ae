"""``soapfilm member``: a member in non-uniform torsion (restrained warping) and its checks."""

from __future__ import annotations

import argparse
from typing import TYPE_CHECKING

from ..defaults import CAUTION
from ..errors import InputError
from ..units import UnitSystem, parse_positive
from ._inputs import add_input_args, input_options
from ._io import check_outputs_apart, check_writable, console, run_outputs, write_json
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
    p.add_argument("--quiet", action="store_true", help="no terminal output")
    add_input_args(p, what="the section files")


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
            "governing_segment": gov.segment.name,
            "governing_index": gov.index,
            "utilisation_stress": res.utilisation_stress,
            "utilisation_twist": res.utilisation_twist,
            "utilisation": res.utilisation,
            "governs": res.governs,
            "passed": res.passed,
        },
        "notes": list(res.notes),
        "caution": CAUTION,
    }


def print_member(res: MemberResult, sys: UnitSystem, con) -> None:
    from rich.markup import escape as e
    from rich.table import Table

    f = sys.fmt
    m = res.model
    n = len(m.segments)
    con.print(f"[bold]{e(m.name)}[/]: {n} segment{'s' if n != 1 else ''}, length "
              f"{f(m.length, 'length')}, non-uniform torsion")
    for p in res.segments:
        con.print(f"segment {e(p.segment.name)}: section {e(p.segment.section.name)}, "
                  f"E {f(p.segment.elastic_modulus, 'modulus')} "
                  f"({e(p.segment.elastic_modulus_note or 'given')})")
    t = Table(title="Segments (peaks along each)", header_style="bold", title_justify="left")
    for col in ("segment", "lam L", "twist", "B", "tau SV", "sigma_w", "tau_eq", "allowed",
                "util."):
        t.add_column(col, justify="left" if col == "segment" else "right", overflow="fold")
    for p in res.segments:
        s = p.segment
        util = f"{p.utilisation:.3f}"
        t.add_row(e(s.name),
                  "SV" if p.lam is None else f"{p.lambda_length:.3g}",
                  f(p.max_twist, "angle"),
                  "-" if p.lam is None else f(p.max_bimoment, "bimoment"),
                  f(p.max_shear_stress, "stress"),
                  "-" if p.max_warping_stress is None else f(p.max_warping_stress, "stress"),
                  f(p.equivalent_shear_stress, "stress"), f(s.allowable.value, "stress"),
                  util if p.passed else f"[bold red]{util}[/]")
    con.print(t)
    t = Table(title="Stations", header_style="bold", title_justify="left")
    for col in ("station", "x", "torque", "twist", "warping", "rotation", "reaction", "bimoment"):
        t.add_column(col, justify="left" if col == "station" else "right", overflow="fold")
    for st in res.stations:
        t.add_row(e(st.name), f(st.x, "position"), f(st.torque, "torque"), _word(st.twist_held),
                  _word(st.warping_held), f(st.twist, "angle"),
                  "-" if st.reaction_torque is None else f(st.reaction_torque, "torque"),
                  "-" if st.bimoment is None else f(st.bimoment, "bimoment"))
    con.print(t)
    t = Table(title=f"Twist between stations (limit {f(m.twist_limit, 'twist_rate')}, at least "
                    f"over {f(m.twist_basis, 'length')})", header_style="bold",
              title_justify="left")
    for col in ("from", "to", "length", "twist range", "allowed", "utilisation"):
        t.add_column(col, justify="left" if col in ("from", "to") else "right", overflow="fold")
    for sp in res.spans:
        util = f"{sp.utilisation:.3f}"
        t.add_row(e(sp.start), e(sp.end), f(sp.length, "length"), f(sp.twist_range, "angle"),
                  f(sp.allowed, "angle"), util if sp.utilisation <= 1 else f"[bold red]{util}[/]")
    con.print(t)
    for note in res.notes:
        con.print(f"[dim]note: {e(note)}[/]")
    gov = res.governing
    what = (f"stress in segment {gov.segment.name!r} at x = {f(gov.x_equivalent, 'position')}"
            if res.governs == "stress" else
            f"twist between {res.twist_governing.start} and {res.twist_governing.end}")
    colour = "green" if res.passed else "red"
    con.print(f"[bold {colour}]{'PASS' if res.passed else 'FAIL'}[/]: utilisation "
              f"{res.utilisation:.3f}, governed by {e(what)}")
    con.print(f"[dim]Caution: {e(CAUTION)}[/]")


def run(args) -> int:
    for target, opt in ((args.json, "--json"), (args.plot, "--plot")):
        if target and target != "-":
            check_writable(target, opt)
    if args.plot:
        from ..plots import figure_format

        figure_format(args.plot)
    check_outputs_apart([args.file], [("--json", args.json), ("--plot", args.plot)])
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

    model = read_member(args.file, options, SectionSource(options=input_options(args)), e_mod)
    try:
        res = analyse_member(model)
    except InputError as exc:
        if exc.where is None:
            raise InputError(exc.what, where=args.file, fix=exc.fix) from None
        raise InputError(exc.what, where=f"{args.file}: {exc.where}", fix=exc.fix) from None
    return finish(args, res, sys_)


def finish(args, res: MemberResult, sys_) -> int:
    """Print, write the JSON and the plot; the exit status (3: a check failed)."""
    from ..errors import EXIT_CHECK_FAILED

    files = run_outputs()  # every file written before anything is printed
    if args.json and args.json != "-":
        files.stage_json(args.json, member_json(res), "--json")
    if args.plot:
        from ..members.memberplot import member_figure_bytes
        from ..plots import figure_format

        files.stage(args.plot, member_figure_bytes(res, sys_, figure_format(args.plot)), "--plot")
    files.commit()
    con = console(args.quiet or args.json == "-")
    if con:
        print_member(res, sys_, con)
        if args.plot:
            con.print(f"plot written to {args.plot}")
    if args.json == "-":
        write_json("-", member_json(res))
    return 0 if res.passed else EXIT_CHECK_FAILED
