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
from ._io import check_writable, console, progress, write_json

NAME = "solve"
HELP = "compute J, peak shear per unit torque and related properties of a section"


def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("input", metavar="INPUT",
                   help="section file: point list .txt/.csv/.dat, shape file .toml, DXF drawing "
                        ".dxf, or a triangle mesh file (.vtu, .msh, ...: solved on that mesh as given)")
    p.add_argument("--units", choices=sorted(LENGTH_UNITS),
                   help="length unit of the input (default: the file's own, else mm; "
                        "overrides a DXF drawing's unit header)")
    p.add_argument("--mesh-size", type=float, metavar="H",
                   help="element edge length in the input unit (default: from the section)")
    p.add_argument("--json", metavar="OUT", help="write results as JSON to OUT ('-' = stdout)")
    p.add_argument("--quiet", action="store_true", help="no terminal table")
    add_drawing_args(p)
    add_accuracy_args(p)
    _outputs.add_output_args(p)  # visual: --plot, --report, --mesh-out, --torque ...


# --- accuracy options (adaptive refinement, element order) ---------------------
def add_accuracy_args(p: argparse.ArgumentParser) -> None:
    from ..adapt import DEFAULT_MAX_ELEMENTS, DEFAULT_TOL
    from ..solve import DEFAULT_ORDER

    g = p.add_argument_group("accuracy")
    g.add_argument("--tol", type=float, metavar="REL",
                   help=f"relative accuracy: refine adaptively until the guaranteed J bracket, "
                        f"(J_hi - J_lo)/J, and the estimated error of the peak shear per unit "
                        f"torque are both at most REL (default {DEFAULT_TOL:g}; with --mesh-size "
                        f"and no --tol: one solve on that mesh)")
    g.add_argument("--peak-tol", type=float, metavar="REL",
                   help="a different accuracy for the peak shear alone (default: --tol)")
    g.add_argument("--max-elements", type=int, default=DEFAULT_MAX_ELEMENTS, metavar="N",
                   help=f"stop refining at N elements (default {DEFAULT_MAX_ELEMENTS})")
    g.add_argument("--order", type=int, choices=(1, 2), default=DEFAULT_ORDER,
                   help="element order: 1 linear, 2 quadratic triangles, curved on curved "
                        f"edges (default {DEFAULT_ORDER})")


def accuracy_options(args, mesh_size=None) -> dict:
    from ..adapt import DEFAULT_TOL

    if args.tol is None and (args.mesh_size is not None or mesh_size is not None):
        return {"order": args.order}
    return {
        "tol": DEFAULT_TOL if args.tol is None else args.tol,
        "peak_tol": args.peak_tol,
        "max_elements": args.max_elements,
        "order": args.order,
    }
# --- end accuracy options ------------------------------------------------------


# --- DXF drawing options (passed to readers that take them) -------------------
def add_drawing_args(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("DXF drawings")
    g.add_argument("--layer", dest="layers", action="append", metavar="NAME",
                   help="read only entities on this layer (repeatable; default all layers)")
    g.add_argument("--join-tolerance", type=float, metavar="D",
                   help="join entity ends closer than D, in drawing units "
                        "(default 1e-5 of the drawing size)")


def drawing_options(args) -> dict:
    return {"layers": args.layers, "join_tolerance": args.join_tolerance}
# --- end DXF drawing options ---------------------------------------------------


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
        result = result_from_mesh(profile, mesh, order=args.order)
    else:  # --- end visual ---
        profile = read_section(args.input, args.units, **drawing_options(args))
        # shape files (.toml) may carry [mesh] size and [solve] method; the command line wins
        from ..readers.shapefile import settings_for

        opts = settings_for(args.input)
        mesh_size = args.mesh_size if args.mesh_size is not None else opts.get("mesh_size")
        acc = accuracy_options(args, mesh_size)
        with progress("refining", quiet=args.quiet or args.json == "-") as bar:
            if "tol" in acc:
                acc["progress"] = lambda e: bar.update(
                    description=f"refining: {e['elements']} elements, J bracket "
                                f"{e['relative_bracket']:.1e}, peak error {e['max_shear_error']:.1e}")
            result = analyse(profile, mesh_size=mesh_size, method=opts.get("method", "auto"), **acc)
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
