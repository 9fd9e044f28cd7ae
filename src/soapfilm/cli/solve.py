"""``soapfilm solve``: torsion properties of one section."""

from __future__ import annotations

import argparse

from . import _outputs  # pictures, report, mesh export
from ._inputs import add_input_args, input_options
from ._io import check_writable, console, progress, run_outputs

NAME = "solve"
HELP = "compute J, peak shear per unit torque and related properties of a section"


def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("input", metavar="INPUT",
                   help="section file: point list .txt/.csv/.dat, shape file .toml, DXF drawing "
                        ".dxf, or a triangle mesh file (.vtu, .msh, ...: solved on that mesh as given)")
    p.add_argument("--json", metavar="OUT", help="write results as JSON to OUT ('-' = stdout)")
    p.add_argument("--quiet", action="store_true", help="no terminal table")
    add_input_args(p)
    _outputs.add_output_args(p)  # --plot, --report, --mesh-out, --torque ...


def print_summary(result, con, torque_line: str | None = None) -> None:
    from rich.markup import escape
    from rich.table import Table

    from ..result import CAUTION

    title = f"Torsion properties: {result.profile.name}" if result.profile.name else None
    table = Table(title=escape(title) if title else None, show_header=True,
                  header_style="bold")
    table.add_column("quantity")
    table.add_column("value", justify="right")
    table.add_column("unit")
    for q, v, u in result.summary_rows():
        table.add_row(escape(q), escape(v), escape(u))
    con.print(table)
    if torque_line:
        con.print(escape(torque_line))
    for w in result.warnings:
        con.print(f"[bold yellow]warning:[/] {escape(w)}")
    con.print(f"[dim]Caution: {escape(CAUTION)}[/]")


def run(args) -> int:
    from ..readers.meshfile import is_mesh_file

    opts = input_options(args)
    if args.json and args.json != "-":
        check_writable(args.json, "--json")
    _outputs.check_outputs(args)  # every output path checked before solving
    quiet = args.quiet or args.json == "-"

    from ..defaults import DEFAULT_TOL
    from ..intake import solve_input

    with progress("refining", quiet=quiet) as bar:
        def step(e):
            bar.update(description=f"refining: {e['elements']} elements, J bracket "
                                   f"{e['relative_bracket']:.1e}, peak error "
                                   f"{e['max_shear_error']:.1e}")
        result = solve_input(args.input, opts, progress=step)
    if args.json and args.json != "-":
        run_outputs().stage_json(args.json, result.to_dict(), "--json")
    inputs = {"input file": args.input,  # rows for the report
              "mesh": ("as given in the file" if is_mesh_file(args.input)
                       else f"element size {opts.mesh_size}" if opts.mesh_size
                       else "default size (from the section)"),
              "accuracy": ("one solve on that mesh" if result.converged is None
                           else f"adaptive to tol {opts.tol or DEFAULT_TOL:g}"),
              "element order": str(opts.order)}
    written = _outputs.write_outputs(args, result, inputs=inputs)  # commits the JSON too
    if args.json == "-":
        from ._io import write_json

        write_json("-", result.to_dict())
    con = console(quiet)
    if con:
        print_summary(result, con, _outputs.torque_line(result, args))
        for path in written:
            con.print(f"[dim]wrote {path}[/]")
    return 0
