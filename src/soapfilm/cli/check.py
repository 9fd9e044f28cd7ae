"""``soapfilm check``: stress, twist and stiffness of one bar under a torque."""

from __future__ import annotations

import argparse
from typing import TYPE_CHECKING

from ..defaults import CAUTION
from ..errors import InputError
from ..materials import Allowable, Material, criterion_key, material
from ..units import UnitSystem, parse_number, parse_positive, parse_quantity, unit_system
from ._inputs import add_input_args, input_options
from ._io import (
    check_outputs_apart,
    check_writable,
    finish_check,
    run_outputs,
)

if TYPE_CHECKING:  # the mechanics are imported when a check runs, not for --help
    from ..members.shaft import Section, SectionCheck

NAME = "check"
HELP = "check a bar section under a torque: peak shear, twist, stiffness, pass or fail"


# ----------------------------------------------------------------- options shared with `shaft`
def add_allowable_args(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("allowable stress and twist")
    g.add_argument("--allowable-shear", metavar="TAU",
                   help='allowable shear stress with unit, e.g. "120 MPa" or "17 ksi"')
    g.add_argument("--yield", dest="yield_strength", metavar="SY",
                   help='tensile yield strength, e.g. "530 MPa"; the allowable is then '
                        "c * Sy / n with --criterion and --safety-factor "
                        "(default: the material preset's typical yield)")
    g.add_argument("--criterion", metavar="NAME",
                   help="von-mises: distortion energy, c = 1/sqrt(3) = 0.577 (default); "
                        "tresca: maximum shear stress, c = 0.5 (Shigley, Mechanical Engineering "
                        "Design, ch. 5)")
    g.add_argument("--safety-factor", metavar="N",
                   help="divides the yield-based allowable (default 1: none)")
    g.add_argument("--twist-limit", metavar="RATE",
                   help='allowed twist per length, e.g. "0.25 deg/m" (the default, a rule of '
                        "thumb for machine shafts, common practice) or \"0.08 deg/ft\"")
    p.add_argument("--unit-system", default="SI", metavar="SYS",
                   help="units shown: SI (mm, N*m, MPa, deg) or US (in, lbf*in, ksi, deg); "
                        "JSON output is always in SI base units")


def parse_allowable_args(args) -> dict:
    """Parse the shared options to SI; check combinations."""
    out = {
        "allowable_shear": None if args.allowable_shear is None else
        parse_quantity(args.allowable_shear, "stress", "--allowable-shear"),
        "yield_strength": None if args.yield_strength is None else
        parse_quantity(args.yield_strength, "stress", "--yield"),
        "criterion": None if args.criterion is None else criterion_key(args.criterion),
        "safety_factor": None if args.safety_factor is None else
        parse_number(args.safety_factor, "--safety-factor"),
        "twist_limit": None if args.twist_limit is None else
        parse_quantity(args.twist_limit, "twist_rate", "--twist-limit"),
    }
    if out["allowable_shear"] is not None:
        for key, opt in (("yield_strength", "--yield"), ("criterion", "--criterion"),
                         ("safety_factor", "--safety-factor")):
            if out[key] is not None:
                raise InputError(f"{opt} cannot be combined with --allowable-shear",
                                 where=opt, fix="--allowable-shear is used as given; "
                                 "drop one of the two")
        if out["allowable_shear"] <= 0:
            raise InputError("must be positive", where="--allowable-shear")
    for key, opt in (("yield_strength", "--yield"), ("twist_limit", "--twist-limit")):
        if out[key] is not None and out[key] <= 0:
            raise InputError("must be positive", where=opt)
    return out


def system_of(args) -> UnitSystem:
    return unit_system(args.unit_system)


def section_json(sec: Section, nominal: float | None) -> dict:
    """Section properties in SI base units (README, "JSON output")."""
    own = nominal is None or nominal == sec.nominal_diameter
    return {
        "name": sec.name,
        "method": sec.method,
        "torsion_constant_m4": sec.torsion_constant,
        "torsion_constant_bounds_m4": list(sec.torsion_constant_bounds)
        if sec.torsion_constant_bounds else None,
        "max_shear_per_torque_per_m3": sec.max_shear_per_torque,
        "torsional_section_modulus_m3": sec.torsional_section_modulus,
        "polar_moment_m4": sec.polar_moment,
        "area_m2": sec.area,
        "equivalent_diameter_stiffness_m": sec.equivalent_diameter_stiffness,
        "equivalent_diameter_strength_m": sec.equivalent_diameter_strength,
        "nominal_diameter_m": nominal if nominal is not None else sec.nominal_diameter,
        "nominal_bore_m": sec.nominal_bore if own else None,
        "nominal_diameter_source": (sec.nominal_source or None) if own else "given",
        "stress_concentration_kts": sec.kts() if own else sec.kts(nominal),
        "warnings": list(sec.warnings),
    }


def allowable_json(a: Allowable) -> dict:
    return {
        "allowable_shear_Pa": a.value,
        "allowable_basis": a.basis,
        "criterion": a.criterion,
        "criterion_source": a.source or None,
        "yield_strength_Pa": a.yield_strength,
        "safety_factor": a.safety_factor,
    }


# ----------------------------------------------------------------- the subcommand
def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("section", metavar="SECTION", help="section file (point list .txt/.csv/.dat, "
                   "or any other format soapfilm reads)")
    p.add_argument("--torque", required=True, metavar="T", help='torque, e.g. "250 N*m"')
    p.add_argument("--length", required=True, metavar="L", help='bar length, e.g. "1.2 m"')
    p.add_argument("--material", metavar="NAME",
                   help="material preset (carbon-steel, alloy-steel, stainless-steel, "
                        "grey-cast-iron, aluminium-alloy, titanium-alloy, bronze)")
    p.add_argument("--shear-modulus", metavar="G",
                   help='shear modulus, e.g. "79.3 GPa" (overrides the preset\'s)')
    p.add_argument("--nominal-diameter", metavar="D",
                   help='diameter for Kts = tau_max / (16 T / (pi D^3)), e.g. "40 mm"')
    add_allowable_args(p)
    p.add_argument("--report", metavar="OUT.html",
                   help="self-contained HTML report: the section's results and this check")
    p.add_argument("--json", metavar="OUT", help="write results as JSON (SI base units) to OUT "
                   "('-' = stdout)")
    p.add_argument("--quiet", action="store_true", help="no terminal output")
    add_input_args(p)
    p.add_argument("--twist-rule", choices=("spans", "segments"),
                   help="spans (default): the bar's twist against the limit times its length, "
                        "at least the length the limit is written per (1 m for deg/m); "
                        "segments: its twist per length against the limit, however short")


def resolve_material(args) -> Material:
    g = None if args.shear_modulus is None else \
        parse_quantity(args.shear_modulus, "modulus", "--shear-modulus")
    if g is not None and g <= 0:
        raise InputError("must be positive", where="--shear-modulus")
    if args.material is not None:
        return material(args.material).overridden(shear_modulus=g, where="--shear-modulus")
    if g is None:
        raise InputError("no material", where="check",
                         fix="give --material NAME (a preset) or --shear-modulus G")
    return Material("user", "user material", g, None, "--shear-modulus", "not given")


def check_json(res: SectionCheck, mat: Material, twist_note: str | None = None) -> dict:
    """The check in SI base units (README, "JSON output", ``check``)."""
    if twist_note is None:
        from ..members.shaft import TWIST_LIMIT_NOTE as twist_note
    out = {
        "units": "SI base units (m, N*m, Pa, rad)",
        "section": section_json(res.section, res.nominal_diameter),
        "torque_Nm": res.torque,
        "length_m": res.length,
        "material": mat.label,
        "shear_modulus_Pa": res.shear_modulus,
        "shear_modulus_source": mat.shear_modulus_note,
        "max_shear_stress_Pa": res.max_shear_stress,
        **allowable_json(res.allowable),
        "twist_angle_rad": res.twist_angle,
        "twist_per_length_rad_per_m": res.twist_per_length,
        "twist_limit_rad_per_m": res.twist_limit,
        "twist_limit_basis": twist_note,
        "twist_limit_per_length_m": res.twist_basis,
        "twist_rule": res.twist_rule,
        "allowed_twist_angle_rad": res.allowed_twist,
        "torsional_stiffness_Nm_per_rad": res.torsional_stiffness,
        "utilisation_stress": res.utilisation_stress,
        "utilisation_twist": res.utilisation_twist,
        "utilisation": res.utilisation,
        "governs": res.governs,
        "passed": res.passed,
        "caution": CAUTION,
    }
    return out


def print_view_tables(view, con) -> None:
    """The check table (what, value, limit, utilisation, basis) and the inputs table."""
    from rich.markup import escape
    from rich.table import Table

    from ..report.checks import CHECK_COLUMNS, INPUT_COLUMNS

    t = Table(title="Check", header_style="bold", title_justify="left")
    for col in CHECK_COLUMNS:
        t.add_column(col, justify="right" if col in ("value", "limit", "utilisation")
                     else "left", overflow="fold")
    for r in view.rows:
        cells = [escape(c) for c in r.cells()]
        if r.over:
            cells[3] = f"[bold red]{cells[3]}[/]"
        t.add_row(*cells)
    con.print(t)
    t = Table(title="Check inputs and their sources", header_style="bold", title_justify="left")
    for col in INPUT_COLUMNS:
        t.add_column(col, overflow="fold")
    for row in view.inputs:
        t.add_row(*(escape(c) for c in row))
    con.print(t)


def print_headline(view, con) -> None:
    from rich.markup import escape

    colour = "green" if view.passed else "red"
    con.print(f"[bold {colour}]{view.verdict}[/]: {escape(view.headline.split(': ', 1)[-1])}")


def print_check(res: SectionCheck, mat: Material, sys: UnitSystem, twist_note: str,
                con, view=None) -> None:
    from rich.markup import escape
    from rich.table import Table

    from ..report.checks import section_check_view

    if view is None:
        view = section_check_view(res, mat, sys, twist_note=twist_note)
    sec = res.section
    f = sys.fmt
    t = Table(title=f"Section: {sec.name}", header_style="bold", title_justify="left")
    t.add_column("quantity")
    t.add_column("value", justify="right")
    t.add_column("basis / note")

    def row(q, v, note=""):
        t.add_row(escape(q), escape(v), escape(note))
    row("Torsion constant J", f(sec.torsion_constant, "J", 6), sec.method)
    row("Peak shear per unit torque", f(sec.max_shear_per_torque, "per_torque", 5),
        sec.method)
    row("Torsional section modulus Wt", f(sec.torsional_section_modulus, "Wt", 6),
        "T / tau_max")
    row("Equivalent round dia. d_J", f(sec.equivalent_diameter_stiffness, "length"),
        "(32 J / pi)^(1/4): same stiffness")
    row("Equivalent round dia. d_tau", f(sec.equivalent_diameter_strength, "length"),
        "(16 Wt / pi)^(1/3): same peak stress")
    con.print(t)
    print_view_tables(view, con)
    print_headline(view, con)
    for w in view.warnings:
        con.print(f"[bold yellow]warning:[/] {escape(w)}")
    con.print(f"[dim]Caution: {escape(CAUTION)}[/]")


def run(args) -> int:
    if args.json and args.json != "-":
        check_writable(args.json, "--json")
    if args.report:
        if not args.report.lower().endswith((".html", ".htm")):
            raise InputError("the report is an HTML file", where=f"--report {args.report}",
                             fix="end the file name in .html")
        check_writable(args.report, "--report")
    check_outputs_apart([args.section], [("--json", args.json), ("--report", args.report)])
    sys_ = system_of(args)
    torque = parse_quantity(args.torque, "torque", "--torque")
    length = parse_positive(args.length, "length", "--length")
    nominal = parse_positive(args.nominal_diameter, "length", "--nominal-diameter")
    mat = resolve_material(args)
    opts = parse_allowable_args(args)
    from ..members.shaft import DEFAULT_TWIST_LIMIT, TWIST_LIMIT_NOTE
    from ..members.shaftfile import SectionSource, resolve_allowable

    allowable = resolve_allowable(
        mat, opts["allowable_shear"], opts["yield_strength"], opts["criterion"],
        opts["safety_factor"], where="check", allowable_note="given with --allowable-shear",
        yield_note="--yield")
    twist_limit = opts["twist_limit"] if opts["twist_limit"] is not None else DEFAULT_TWIST_LIMIT
    twist_note = "given with --twist-limit" if opts["twist_limit"] is not None \
        else TWIST_LIMIT_NOTE

    source = SectionSource(options=input_options(args))
    section, fe_result = source.from_file(args.section, None, "SECTION",
                                          nominal_diameter=nominal,
                                          nominal_source="given with --nominal-diameter")
    return finish(args, section, fe_result, torque, length, mat, allowable, twist_limit,
                  twist_note, nominal, sys_)


def finish(args, section, fe_result, torque, length, mat, allowable, twist_limit, twist_note,
           nominal, sys_) -> int:
    """Check, print, write the JSON and the report; the exit status (3: the check failed)."""
    from ..members.shaft import DEFAULT_TWIST_BASIS, check_section
    from ..members.shaftfile import twist_basis_of
    from ..report.checks import section_check_view

    rule = getattr(args, "twist_rule", None)
    basis = twist_basis_of(args.twist_limit) if args.twist_limit is not None \
        else DEFAULT_TWIST_BASIS
    res = check_section(section, torque, length, mat.shear_modulus, allowable, twist_limit,
                        nominal, twist_basis=basis, twist_rule=rule or "spans")
    sources = {"criterion": "--criterion" if args.criterion else "default (distortion energy)",
               "safety_factor": "--safety-factor" if args.safety_factor else "default: 1 (none)",
               "twist_rule": "--twist-rule" if rule else "default",
               "material": "--material" if args.material else "--shear-modulus"}
    view = section_check_view(res, mat, sys_, twist_note=twist_note, sources=sources,
                              section_file=str(args.section))
    out = check_json(res, mat, twist_note)
    files = run_outputs()  # every file written before anything is printed
    if args.report:
        from ..report import render_report

        html = render_report(fe_result, torque=abs(torque) or None, check=view)
        files.stage(args.report, html, "--report")
    if args.json and args.json != "-":
        files.stage_json(args.json, out, "--json")
    return finish_check(args, files, res.passed, lambda: out,
                        lambda con: print_check(res, mat, sys_, twist_note, con, view=view))

