"""Output options of ``soapfilm solve``: pictures, HTML report, mesh file.

Kept apart from ``solve.py`` so that the options are added by three calls:
:func:`add_output_args` (parser), :func:`check_outputs` (before any work:
suffixes known, folders exist, no two outputs or an output and the input the
same file) and :func:`write_outputs` (after solving: every file is staged
in the run's :class:`~soapfilm.cli._io.Outputs` and all are committed
together, so a failure leaves none of them).
"""

from __future__ import annotations

import argparse
from pathlib import Path

from ..errors import InputError
from ..stress_units import STRESS_UNITS, shear_scale
from ._io import check_writable, run_outputs, same_file

__all__ = ["add_output_args", "check_outputs", "write_outputs", "torque_line"]

#: (option, dest) of the options that name an output file
_FILE_OPTIONS = [("--plot", "plot"), ("--plot-warping", "plot_warping"),
                 ("--plot-sectorial", "plot_sectorial"), ("--plot-3d", "plot_3d"),
                 ("--report", "report"), ("--mesh-out", "mesh_out")]


def add_output_args(p: argparse.ArgumentParser) -> None:
    """Add the picture, report and mesh-export options."""
    g = p.add_argument_group("pictures, report and mesh export")
    g.add_argument("--plot", metavar="OUT",
                   help="shear-stress map with shear-flow lines and the peak (.png, .svg, .pdf)")
    g.add_argument("--plot-mesh", action="store_true", help="draw the mesh over the --plot map")
    g.add_argument("--plot-warping", metavar="OUT", help="warping (axial displacement) map")
    g.add_argument("--plot-sectorial", metavar="OUT",
                   help="normalised warping omega_n about the shear centre (restrained warping), "
                        "with the shear centre marked")
    g.add_argument("--plot-3d", metavar="OUT", help="3D view of the stress-function surface")
    g.add_argument("--torque", metavar="T",
                   help="torque, e.g. '320 N*m' or '2800 lbf*in' (a bare number is N*m): the "
                        "table, pictures, report and mesh file then show stresses")
    g.add_argument("--stress-unit", choices=list(STRESS_UNITS),
                   help="stress unit used with --torque (default MPa)")
    g.add_argument("--report", metavar="OUT.html", help="self-contained HTML report")
    g.add_argument("--mesh-out", metavar="OUT",
                   help="mesh with phi, omega and shear for ParaView (.vtu, .vtk, .msh, ...)")


def check_outputs(args) -> None:
    """Validate every output option before solving; raise InputError."""
    from ..export import mesh_format
    from ..plots import figure_format

    if args.stress_unit is not None and args.torque is None:
        raise InputError("a stress unit needs a torque", where="--stress-unit",
                         fix="add --torque T, e.g. --torque '320 N*m', or drop --stress-unit")
    if args.stress_unit is None:
        args.stress_unit = "MPa"
    if args.torque is not None and not isinstance(args.torque, float):
        from ..units import parse_quantity

        args.torque = parse_quantity(args.torque, "torque", "--torque")
    if args.torque is not None:
        shear_scale("mm", args.torque, args.stress_unit)  # validates the numbers
    seen: dict[str, str] = {}
    src = same_file(args.input)
    json_out = getattr(args, "json", None)
    if json_out and json_out != "-":
        if same_file(json_out) == src:
            raise InputError("would overwrite the input file", where=f"--json {json_out}",
                             fix="choose another output name")
        seen[same_file(json_out)] = "--json"
    for option, dest in _FILE_OPTIONS:
        out = getattr(args, dest, None)
        if not out:
            continue
        if dest == "mesh_out":
            mesh_format(out, option)
        elif dest == "report":
            if Path(out).suffix.lower() not in (".html", ".htm"):
                raise InputError("a report file must end in .html", where=f"{option} {out}",
                                 fix="e.g. --report shaft.html")
        else:
            try:
                figure_format(out)
            except InputError as exc:
                raise InputError(exc.what, where=f"{option} {out}", fix=exc.fix) from None
        check_writable(out, option)
        key = same_file(out)
        if key == src:
            raise InputError("would overwrite the input file", where=f"{option} {out}",
                             fix="choose another output name")
        if key in seen:
            raise InputError(f"is also given to {seen[key]}", where=f"{option} {out}",
                             fix="give each output its own file name")
        seen[key] = option
    if args.plot_mesh and not args.plot:
        raise InputError("needs --plot OUT", where="--plot-mesh",
                         fix="add --plot shear.png, or drop --plot-mesh")


def torque_line(result, args) -> str | None:
    """One line with the peak stress at the given torque, or None."""
    if args.torque is None:
        return None
    s = shear_scale(result.units, args.torque, args.stress_unit)
    return (f"Peak shear stress at T = {args.torque:g} N·m: "
            f"{result.max_shear_per_torque * s.factor:.4g} {args.stress_unit}")


def write_outputs(args, result, inputs: dict | None = None,
                  extra: list[tuple[str, bytes | str]] = ()) -> list[Path]:
    """Render and stage the outputs asked for, then commit the run's files; return them.

    ``extra`` are more (path, content) pairs already rendered.  Every file
    goes through the run's :class:`~soapfilm.cli._io.Outputs` (with what the
    command staged before, its JSON): nothing is in place until all are
    written, and a failure (a full disk) leaves none of them.
    """
    from .. import plots

    out = run_outputs()
    for path, data in extra:
        out.stage(path, data)
    torque, unit = args.torque, args.stress_unit
    if args.plot:
        ax = plots.plot_shear(result, torque=torque, stress_unit=unit, show_mesh=args.plot_mesh)
        out.stage(args.plot, plots.figure_bytes(ax, plots.figure_format(args.plot)), "--plot")
    if args.plot_warping:
        ax = plots.plot_warping(result)
        out.stage(args.plot_warping,
                  plots.figure_bytes(ax, plots.figure_format(args.plot_warping)),
                  "--plot-warping")
    if args.plot_sectorial:
        ax = plots.plot_sectorial(result)
        out.stage(args.plot_sectorial,
                  plots.figure_bytes(ax, plots.figure_format(args.plot_sectorial)),
                  "--plot-sectorial")
    if args.plot_3d:
        ax = plots.plot_stress_surface(result)
        out.stage(args.plot_3d, plots.figure_bytes(ax, plots.figure_format(args.plot_3d)),
                  "--plot-3d")
    if args.report:
        from ..report import render_report

        out.stage(args.report, render_report(result, inputs=inputs, torque=torque,
                                             stress_unit=unit), "--report")
    if args.mesh_out:
        from ..export import write_mesh

        write_mesh(result, args.mesh_out, torque=torque, stress_unit=unit, outputs=out)
    return out.commit()
