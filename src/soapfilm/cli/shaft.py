"""``soapfilm shaft``: internal torque, twist and checks along a stepped shaft."""

from __future__ import annotations

import argparse

from ..defaults import CAUTION
from ..errors import InputError
from ..shaft import ShaftResult, analyse_shaft
from ..units import UnitSystem, parse_positive
from ._inputs import add_input_args, input_options
from ._io import check_outputs_apart, check_writable, console, write_atomic, write_json
from .check import (
    add_allowable_args,
    allowable_json,
    parse_allowable_args,
    section_json,
    system_of,
)

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
                   help="draw the internal-torque diagram and the twist along the axis")
    p.add_argument("--quiet", action="store_true", help="no terminal output")
    add_input_args(p, what="the section files")


def shaft_json(res: ShaftResult) -> dict:
    """Results in SI base units: one entry per segment, stations, totals."""
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
    stations = [{"name": ld.name, "kind": "load", "x_m": ld.position, "torque_Nm": ld.torque}
                for ld in res.model.loads]
    stations += [{"name": sp.name, "kind": "support", "x_m": sp.position, "torque_Nm": r}
                 for sp, r in res.reactions]
    stations.sort(key=lambda d: d["x_m"])
    gov = res.governing
    return {
        "units": "SI base units (m, N*m, Pa, rad)",
        "name": res.model.name,
        "statics": res.statics,
        "segments": segs,
        "stations": stations,
        "along_axis": {
            "x_m": res.x.tolist(),
            "twist_angle_rad": res.twist.tolist(),
            "internal_torque_Nm": res.piece_torque.tolist(),
        },
        "totals": {
            "length_m": res.model.length,
            "end_to_end_twist_rad": res.end_to_end_twist,
            "torsional_stiffness_Nm_per_rad": res.torsional_stiffness,
            "twist_limit_rad_per_m": res.model.twist_limit,
            "twist_limit_basis": res.model.twist_limit_note,
            "governing_segment": gov.segment.name,
            "governing_index": gov.index,
            "utilisation": gov.utilisation,
            "governs": "stress" if gov.utilisation_stress >= gov.utilisation_twist else "twist",
            "passed": res.passed,
        },
        "notes": list(res.notes),
        "caution": CAUTION,
    }


def print_shaft(res: ShaftResult, sys: UnitSystem, con) -> None:
    from rich.markup import escape as e
    from rich.table import Table

    f = sys.fmt
    m = res.model
    con.print(f"[bold]{e(m.name)}[/]: {len(m.segments)} segments, length {f(m.length, 'length')}, "
              f"statically {res.statics}")
    def table(title, cols):
        t = Table(header_style="bold", title=title, title_justify="left")
        for col in cols:
            t.add_column(col, justify="left" if col in ("segment", "section", "") else "right")
        return t

    gov = res.governing.index
    lu = sys.unit("position")

    def idx(s):
        return str(s.index + 1) + ("*" if s.index == gov else "")

    t1 = table("Segments and sections", ["#", "segment", f"x [{lu}]", "section", "method", "J",
                                          "Kts"])
    t2 = table("Stress", ["#", "segment", "torque", "tau_max", "allowable", "util.", ""])
    t3 = table("Twist and stiffness", ["#", "segment", "G", "twist", "twist/L", "util.",
                                        "G J / L"])
    for s in res.segments:
        seg = s.segment
        kts = s.kts
        t1.add_row(idx(s), e(seg.name),
                   f"{sys.value(s.x_start, 'position'):.4g}-{sys.value(s.x_end, 'position'):.4g}",
                   e(seg.section.name),
                   "FE" if seg.section.method != "closed form" else "exact",
                   f(seg.section.torsion_constant, "J"), "-" if kts is None else f"{kts:.2f}")
        t2.add_row(idx(s), e(seg.name), f(s.governing_torque, "torque"),
                   f(s.max_shear_stress, "stress"), f(seg.allowable.value, "stress"),
                   f"{s.utilisation_stress:.3f}",
                   "[green]ok[/]" if s.utilisation_stress <= 1 else "[bold red]over[/]")
        t3.add_row(idx(s), e(seg.name), f(seg.material.shear_modulus, "modulus", 3),
                   f(s.twist_angle, "angle", 3), f(s.max_twist_per_length, "twist_rate", 3),
                   f"{s.utilisation_twist:.3f}", f(s.torsional_stiffness, "stiffness", 3))
    for t in (t1, t2, t3):
        con.print(t)
    st = Table(header_style="bold", title="Stations")
    for col, just in (("station", "left"), ("x", "right"), ("torque on shaft", "right"),
                      ("twist angle", "right")):
        st.add_column(col, justify=just)
    rows = [(ld.position, ld.name, ld.torque, "applied") for ld in m.loads]
    rows += [(sp.position, sp.name + " (held)", r, "reaction") for sp, r in res.reactions]
    for x, name, tq, kind in sorted(rows):
        i = int(abs(res.x - x).argmin())
        st.add_row(e(name), f(x, "position"), f"{f(tq, 'torque')} ({kind})",
                   f(res.twist[i], "angle"))
    con.print(st)
    g = res.governing
    con.print(f"End-to-end twist: {f(res.end_to_end_twist, 'angle')}   "
              f"shaft stiffness (segments in series): {f(res.torsional_stiffness, 'stiffness')}"
              + (f" = {res.torsional_stiffness:.4g} N*m/rad" if sys.name == "SI" else ""))
    con.print(f"Twist limit {f(m.twist_limit, 'twist_rate')}: {e(m.twist_limit_note)}")
    bases = []
    for s in res.segments:
        if s.segment.allowable.basis not in bases:
            bases.append(s.segment.allowable.basis)
    for b in bases:
        con.print(f"Allowable shear: {e(b)}")
    for s in res.segments:
        if s.segment.allowable.source:
            con.print(f"Criterion source: {e(s.segment.allowable.source)}")
            break
    which = "stress" if g.utilisation_stress >= g.utilisation_twist else "twist"
    verdict = "[bold green]PASS[/]" if res.passed else "[bold red]FAIL[/]"
    con.print(f"{verdict}: governing segment {g.index + 1} ({e(g.segment.name)}), utilisation "
              f"{g.utilisation:.3f}, governed by {which}")
    for note in res.notes:
        con.print(f"[dim]note: {e(note)}[/]")
    for s in res.segments:
        for w in s.segment.section.warnings:
            con.print(f"[bold yellow]warning:[/] segment {s.index + 1}: {e(w)}")
    con.print(f"[dim]Caution: {e(CAUTION)}[/]")


def run(args) -> int:
    for target, opt in ((args.json, "--json"), (args.plot, "--plot")):
        if target and target != "-":
            check_writable(target, opt)
    if args.plot and not args.plot.lower().endswith(".png"):
        raise InputError("the plot is written as PNG", where=f"--plot {args.plot}",
                         fix="give a file name ending in .png")
    check_outputs_apart([args.file], [("--json", args.json), ("--plot", args.plot)])
    sys_ = system_of(args)
    from ..shaftfile import CheckOptions, SectionSource, read_shaft

    opts = parse_allowable_args(args)
    g = parse_positive(args.shear_modulus, "modulus", "--shear-modulus")
    options = CheckOptions(shear_modulus=g, material=args.material, **opts)
    model = read_shaft(args.file, options, SectionSource(options=input_options(args)))
    try:
        res = analyse_shaft(model)
    except InputError as exc:
        if exc.where is None:
            raise InputError(exc.what, where=args.file, fix=exc.fix) from None
        raise
    con = console(args.quiet or args.json == "-")
    if con:
        print_shaft(res, sys_, con)
    if args.json:
        write_json(args.json, shaft_json(res))
    if args.plot:
        import io

        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        from ..shaftplot import plot_shaft

        ax_t, _ = plot_shaft(res, sys_)
        buf = io.BytesIO()
        ax_t.figure.savefig(buf, format="png", dpi=150, bbox_inches="tight")
        plt.close(ax_t.figure)
        write_atomic(args.plot, buf.getvalue())
        if con:
            con.print(f"plot written to {args.plot}")
    return 0
