"""``soapfilm solve``: torsion properties of one section."""

from __future__ import annotations

import argparse

from ..errors import InputError
from ..profile import LENGTH_UNITS
from ..readers import read_section
from ..result import CAUTION, TorsionResult
from ..solve import analyse
from ._io import check_writable, console, write_json

NAME = "solve"
HELP = "compute J, peak shear per unit torque and related properties of a section"


def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("input", metavar="INPUT",
                   help="section file (point list .txt/.csv/.dat, shape file .toml)")
    p.add_argument("--units", choices=sorted(LENGTH_UNITS),
                   help="length unit of the input when the file does not say (default mm)")
    p.add_argument("--mesh-size", type=float, metavar="H",
                   help="element edge length in the input unit (default: from the section)")
    p.add_argument("--json", metavar="OUT", help="write results as JSON to OUT ('-' = stdout)")
    p.add_argument("--quiet", action="store_true", help="no terminal table")


def print_summary(result: TorsionResult, con) -> None:
    from rich.table import Table

    title = f"Torsion properties: {result.profile.name}" if result.profile.name else None
    table = Table(title=title, show_header=True, header_style="bold")
    table.add_column("quantity")
    table.add_column("value", justify="right")
    table.add_column("unit")
    for q, v, u in result.summary_rows():
        table.add_row(q, v, u)
    con.print(table)
    for w in result.warnings:
        con.print(f"[bold yellow]warning:[/] {w}")
    con.print(f"[dim]Caution: {CAUTION}[/]")


def run(args) -> int:
    if args.mesh_size is not None and not args.mesh_size > 0:
        raise InputError(f"must be a positive length, got {args.mesh_size}", where="--mesh-size")
    if args.json and args.json != "-":
        check_writable(args.json, "--json")
    profile = read_section(args.input, args.units)
    # shape files (.toml) may carry [mesh] size and [solve] method; the command line wins
    from ..readers.shapefile import settings_for

    opts = settings_for(args.input)
    mesh_size = args.mesh_size if args.mesh_size is not None else opts.get("mesh_size")
    result = analyse(profile, mesh_size=mesh_size, method=opts.get("method", "auto"))
    con = console(args.quiet or args.json == "-")
    if con:
        print_summary(result, con)
    if args.json:
        write_json(args.json, result.to_dict())
    return 0
