"""The section-input options, defined once for every command that reads a section.

``solve``, ``show``, ``check``, ``shaft``, ``batch`` and ``sweep`` call
:func:`add_input_args` and turn the parsed options into a
:class:`soapfilm.intake.SectionOptions` with :func:`input_options`.  Only the
standard library is imported here, so ``--help`` stays fast.

The one rule for quantities (README, "Units on the command line"): a value
with its unit is taken as given; a bare number is in the unit the option's
help names -- mm, N*m, MPa, GPa, deg/m for physical values, and the section's
own length unit for the lengths that belong to a drawing (mesh size, join
tolerance).
"""

from __future__ import annotations

import argparse

from ..defaults import (
    DEFAULT_MAX_ELEMENTS,
    DEFAULT_MEMORY,
    DEFAULT_ORDER,
    DEFAULT_TOL,
    LENGTH_UNITS,
    MEMORY_ENV,
)

__all__ = ["add_input_args", "input_options", "UNIT_RULE"]

#: the unit rule in one sentence, for help texts
UNIT_RULE = ("quantities take their unit (\"320 N*m\", \"80 mm\", \"79.3 GPa\"); a bare number "
             "is in N*m, mm, MPa, GPa or deg/m")


def add_input_args(p: argparse.ArgumentParser, *, accuracy: bool = True,
                   what: str = "the section file") -> None:
    """Add --units, --layer, --join-tolerance, --mesh-size, --memory and the accuracy options."""
    g = p.add_argument_group("section input (every command that reads a section)")
    g.add_argument("--units", choices=sorted(LENGTH_UNITS),
                   help=f"length unit of {what} when it does not state one (point lists, "
                        "DXF drawings without a unit header, shape files without 'units'); "
                        "overrides a DXF drawing's header (default mm)")
    g.add_argument("--layer", dest="layers", action="append", metavar="NAME",
                   help="DXF drawings: read only entities on this layer (repeatable; "
                        "default all layers)")
    g.add_argument("--join-tolerance", metavar="D",
                   help="DXF drawings: join entity ends closer than D, e.g. '0.01 mm'; a bare "
                        "number is in the drawing's unit (default 1e-5 of the drawing size)")
    g.add_argument("--mesh-size", metavar="H",
                   help="element edge length, e.g. '0.5 mm'; a bare number is in the "
                        "section's unit (default: a shape file's [mesh] size, else from the "
                        "section); without --tol: one solve on that mesh")
    g.add_argument("--memory", metavar="SIZE",
                   help="memory budget of one section's analysis, e.g. '8 GB' or '1500 MB' (a "
                        "bare number is in GB): a mesh whose analysis would need more is refused "
                        "before it is made, and refinement stops within it (default "
                        f"${MEMORY_ENV} if set, else {DEFAULT_MEMORY / 1e9:g} GB)")
    if accuracy:
        a = p.add_argument_group("accuracy")
        a.add_argument("--tol", type=float, metavar="REL",
                       help=f"relative accuracy: refine adaptively until the guaranteed J "
                            f"bracket, (J_hi - J_lo)/J, and the estimated error of the peak "
                            f"shear per unit torque are both at most REL, 0 < REL < 1 (default "
                            f"{DEFAULT_TOL:g}; with --mesh-size and no --tol: one solve on "
                            f"that mesh)")
        a.add_argument("--peak-tol", type=float, metavar="REL",
                       help="a different accuracy for the peak shear alone (default: --tol)")
        a.add_argument("--max-elements", type=int, default=DEFAULT_MAX_ELEMENTS, metavar="N",
                       help=f"stop refining at N elements (default {DEFAULT_MAX_ELEMENTS})")
        a.add_argument("--order", type=int, choices=(1, 2), default=DEFAULT_ORDER,
                       help="element order: 1 linear, 2 quadratic triangles, curved on curved "
                            f"edges (default {DEFAULT_ORDER})")


def input_options(args, *, units: str | None = None):
    """The parsed options as :class:`soapfilm.intake.SectionOptions` (validated)."""
    from ..intake import SectionOptions

    return SectionOptions(
        units=units if units is not None else getattr(args, "units", None),
        layers=getattr(args, "layers", None),
        join_tolerance=getattr(args, "join_tolerance", None),
        mesh_size=getattr(args, "mesh_size", None),
        tol=getattr(args, "tol", None),
        peak_tol=getattr(args, "peak_tol", None),
        max_elements=getattr(args, "max_elements", DEFAULT_MAX_ELEMENTS),
        order=getattr(args, "order", DEFAULT_ORDER),
        memory=getattr(args, "memory", None),
    )
