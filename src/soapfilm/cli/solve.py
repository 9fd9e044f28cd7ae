"""``soapfilm solve``: torsion properties of one section."""

from __future__ import annotations

import argparse

from ..errors import InputError
from ..profile import LENGTH_UNITS
from ..readers import read_section
from ..readers.meshfile import is_mesh_file, read_mesh_file  # visual: mesh-file input
from ..result import CAUTION, TorsionResult
from ..solve import analyse, result_from_mesh
from . import _outputs  # visual: pictures, report, mesh export
from ._io import check_writable, console, write_json

NAME = "solve"
HELP = "compute J, peak shear per unit torque and related properties of a section"


def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("input", metavar="INPUT",
                   help="section file (point list .txt/.csv/.dat) or a triangle mesh file "
                        "(.vtu, .msh, ...: solved on that mesh as given)")
    p.add_argument("--units", choices=sorted(LENGTH_UNITS),
                   help="length unit of the input when the file does not say (default mm)")
    p.add_argument("--mesh-size", type=float, metavar="H",
                   help="element edge length in the input unit (default: from the section)")
    p.add_argument("--json", metavar="OUT", help="write results as JSON to OUT ('-' = stdout)")
    p.add_argument("--quiet", action="store_true", help="no terminal table")
    _outputs.add_output_args(p)  # visual: --plot, --report, --mesh-out, --torque ...


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
    _outputs.check_outputs(args)  # visual: every output path checked before solving
    # --- visual: a mesh file is solved on its own mesh ---
    if is_mesh_file(args.input):
        if args.mesh_size is not None:
            raise InputError("does not apply to a mesh file, which is solved as given",
                             where="--mesh-size", fix="drop --mesh-size or give the outline")
        profile, mesh = read_mesh_file(args.input, args.units)
        result = result_from_mesh(profile, mesh)
    else:  # --- end visual ---
        profile = read_section(args.input, args.units)
        result = analyse(profile, mesh_size=args.mesh_size)
    con = console(args.quiet or args.json == "-")
    if con:
        print_summary(result, con)
        if _outputs.torque_line(result, args):  # visual
            con.print(_outputs.torque_line(result, args))
    if args.json:
        write_json(args.json, result.to_dict())
    inputs = {"input file": args.input,  # visual: rows for the report
              "mesh": ("as given in the file" if is_mesh_file(args.input)
                       else f"element size {args.mesh_size:g} {profile.units}" if args.mesh_size
                       else "default size (from the section)")}
    for path in _outputs.write_outputs(args, result, inputs=inputs):  # visual
        if con:
            con.print(f"[dim]wrote {path}[/]")
    return 0
