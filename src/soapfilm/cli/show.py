"""``soapfilm show``: draw a section (and its mesh) to check an input before solving."""

from __future__ import annotations

import argparse

from ..errors import InputError
from ..profile import LENGTH_UNITS
from ._io import check_writable

NAME = "show"
HELP = "draw a section (optionally with its mesh) to a picture, to check the input"


def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("input", metavar="INPUT", help="section file or triangle mesh file")
    p.add_argument("--png", "-o", "--out", dest="out", metavar="OUT", required=True,
                   help="picture to write; the format follows the suffix (.png, .svg, .pdf)")
    p.add_argument("--mesh", action="store_true",
                   help="draw the mesh too (a mesh file's own mesh, else the one solve would make)")
    p.add_argument("--units", choices=sorted(LENGTH_UNITS),
                   help="length unit of the input when the file does not say (default mm)")
    p.add_argument("--mesh-size", type=float, metavar="H",
                   help="element edge length for --mesh, in the input unit (implies --mesh)")
    p.add_argument("--quiet", action="store_true", help="do not print the file written")


def run(args) -> int:
    from ..mesh import mesh_profile
    from ..plots import draw_section, figure_format, save_figure
    from ..readers import read_section
    from ..readers.meshfile import is_mesh_file, read_mesh_file

    if args.mesh_size is not None and not args.mesh_size > 0:
        raise InputError(f"must be a positive length, got {args.mesh_size}", where="--mesh-size")
    try:
        figure_format(args.out)
    except InputError as exc:
        raise InputError(exc.what, where=f"--png {args.out}", fix=exc.fix) from None
    check_writable(args.out, "--png")
    mesh = None
    if is_mesh_file(args.input):
        if args.mesh_size is not None:
            raise InputError("does not apply to a mesh file, which is drawn as given",
                             where="--mesh-size", fix="drop --mesh-size")
        profile, file_mesh = read_mesh_file(args.input, args.units)
        mesh = file_mesh if args.mesh else None
    else:
        profile = read_section(args.input, args.units)
        if args.mesh or args.mesh_size is not None:
            mesh = mesh_profile(profile, args.mesh_size)
    path = save_figure(draw_section(profile, mesh=mesh), args.out)
    if not args.quiet:
        print(f"wrote {path}")
    return 0
