"""``soapfilm show``: draw a section (and its mesh) to check an input before solving."""

from __future__ import annotations

import argparse

from ..errors import InputError
from ._inputs import add_input_args, input_options
from ._io import check_outputs_apart, check_writable, run_outputs

NAME = "show"
HELP = "draw a section (optionally with its mesh) to a picture, to check the input"


def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("input", metavar="INPUT", help="section file or triangle mesh file")
    p.add_argument("--png", "-o", "--out", dest="out", metavar="OUT", required=True,
                   help="picture to write; the format follows the suffix (.png, .svg, .pdf)")
    p.add_argument("--mesh", action="store_true",
                   help="draw the mesh too: a mesh file's own mesh; else the starting mesh of "
                        "solve (--mesh-size sets it), or with --tol the mesh the adaptive "
                        "solve ends on")
    p.add_argument("--quiet", action="store_true", help="do not print the file written")
    add_input_args(p)


def run(args) -> int:
    opts = input_options(args)
    from ..plots import draw_section, figure_bytes, figure_format

    try:
        figure_format(args.out)
    except InputError as exc:
        raise InputError(exc.what, where=f"--png {args.out}", fix=exc.fix) from None
    check_writable(args.out, "--png")
    check_outputs_apart([args.input], [("--png", args.out)])
    from ..readers.meshfile import is_mesh_file

    mesh = None
    if is_mesh_file(args.input):
        from ..readers.meshfile import read_mesh_file

        for name, value in (("--mesh-size", opts.mesh_size), ("--tol", opts.tol),
                            ("--layer", opts.layers), ("--join-tolerance", opts.join_tolerance)):
            if value is not None:
                raise InputError(f"{name} does not apply to a mesh file, which is drawn as given",
                                 where=args.input, fix=f"drop {name}")
        profile, file_mesh = read_mesh_file(args.input, opts.units)
        mesh = file_mesh if args.mesh else None
    else:
        from ..intake import analyse_options, read_input

        profile, settings = read_input(args.input, opts)
        if args.tol is not None:
            from ..solve import analyse

            mesh = analyse(profile, **analyse_options(profile, settings, opts)).mesh
        elif args.mesh or opts.mesh_size is not None:
            from ..mesh import mesh_profile

            kw = analyse_options(profile, settings, opts)
            mesh = mesh_profile(profile, kw["mesh_size"], memory=kw["memory"])
    out = run_outputs()
    out.stage(args.out, figure_bytes(draw_section(profile, mesh=mesh), figure_format(args.out)),
              "--png")
    path, = out.commit()
    if not args.quiet:
        for note in profile.notes:
            print(f"warning: {note}")
        print(f"wrote {path}")
    return 0
