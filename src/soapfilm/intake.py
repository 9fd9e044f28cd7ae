"""How a section comes in: a file and the shared input options -> profile -> result.

Every command that reads a section (``solve``, ``show``, ``check``, ``shaft``,
``batch``, ``sweep``) and the Python helpers behind them go through here, so
that the same options mean the same thing everywhere:

``units``
    Length unit of a file that does not state its own (a point list, a DXF
    drawing without ``$INSUNITS``, a shape file without ``units``); for a DXF
    drawing it overrides the header.
``layers``, ``join_tolerance``
    DXF drawings: the layers to read, and the distance within which entity
    ends are joined (a :class:`~soapfilm.units.DrawingLength`: a length with
    its unit, or a bare number in the drawing's own unit).
``mesh_size``
    Element edge length (a DrawingLength; a bare number is in the section's
    own unit).  Given without ``tol``: one solve on that mesh.
``tol``, ``peak_tol``, ``max_elements``, ``order``, ``method``
    Accuracy of the adaptive loop, element order and linear solver.
``memory``
    Memory budget of one section's analysis (bytes, or text such as
    ``"4 GB"``; None: ``$SOAPFILM_MEMORY``, else 4 GB): meshes are estimated
    before they are made and refused above it (:mod:`soapfilm.resources`).

A shape file's own ``[mesh] size`` and ``[solve] method`` apply when the
options leave them open.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from .defaults import DEFAULT_MAX_ELEMENTS, DEFAULT_ORDER, DEFAULT_TOL, LENGTH_UNITS
from .errors import InputError
from .units import DrawingLength, parse_drawing_length

__all__ = ["SectionOptions", "read_input", "refuse_drawing_options", "analyse_options",
           "solve_input", "scale_note", "PLAUSIBLE_SIZE_MM"]

#: Overall sizes of bar sections met in machine and structural design, in mm:
#: a section drawn with an assumed unit and coming out outside this range was
#: very likely drawn in another unit (common practice, no source).
PLAUSIBLE_SIZE_MM = (2.0, 2000.0)

_METHODS = ("auto", "direct", "amg")


@dataclass(frozen=True)
class SectionOptions:
    """The input options shared by every command (module docstring).

    ``tol`` None means the default tolerance, unless a mesh size is given
    (then one solve on that mesh); ``adaptive=False`` with no mesh size also
    solves once, on the default mesh.
    """

    units: str | None = None
    layers: tuple[str, ...] | None = None
    join_tolerance: DrawingLength | None = None
    mesh_size: DrawingLength | None = None
    tol: float | None = None
    peak_tol: float | None = None
    max_elements: int = DEFAULT_MAX_ELEMENTS
    order: int = DEFAULT_ORDER
    method: str | None = None
    memory: int | str | None = None

    def __post_init__(self):
        if self.units is not None and self.units not in LENGTH_UNITS:
            raise InputError(f"unknown length unit {self.units!r}", where="--units",
                             fix=f"use one of {', '.join(LENGTH_UNITS)}")
        for name in ("join_tolerance", "mesh_size"):
            value = getattr(self, name)
            if value is not None and not isinstance(value, DrawingLength):
                object.__setattr__(self, name, parse_drawing_length(
                    value, "--" + name.replace("_", "-")))
        if self.layers is not None:
            layers = (self.layers,) if isinstance(self.layers, str) else tuple(self.layers)
            object.__setattr__(self, "layers", layers or None)
        for name, value in (("--tol", self.tol), ("--peak-tol", self.peak_tol)):
            if value is not None and not (isinstance(value, int | float) and 0 < value < 1):
                raise InputError(f"must be a relative accuracy between 0 and 1, got {value}",
                                 where=name, fix=f"e.g. {name} 1e-3 (0.1 %)")
        if not (isinstance(self.max_elements, int) and self.max_elements >= 10):
            raise InputError(f"must be at least 10, got {self.max_elements}",
                             where="--max-elements")
        if self.order not in (1, 2):
            raise InputError(f"must be 1 or 2, got {self.order}", where="--order")
        if self.memory is not None:
            from .resources import memory_budget, parse_memory

            object.__setattr__(self, "memory", parse_memory(self.memory))
            memory_budget(self.memory)  # within the machine's memory
        if self.method is not None and self.method not in _METHODS:
            raise InputError(f"unknown linear solver {self.method!r}", where="method",
                             fix=f"use one of {', '.join(_METHODS)}")

    def reader_options(self) -> dict:
        """Keywords for :func:`soapfilm.readers.read_section` (DXF options)."""
        return {"layers": self.layers, "join_tolerance": self.join_tolerance}


def scale_note(profile) -> str | None:
    """A warning when the unit was assumed and the section's size is implausible.

    Returns None when the unit was stated (on the command line or in the file)
    or the size lies in :data:`PLAUSIBLE_SIZE_MM`.
    """
    if getattr(profile, "unit_stated", True):
        return None
    size = profile.size
    mm = size * LENGTH_UNITS[profile.units] / 1e-3
    lo, hi = PLAUSIBLE_SIZE_MM
    if lo <= mm <= hi:
        return None
    fits = [u for u, m in LENGTH_UNITS.items()
            if u != profile.units and lo <= size * m / 1e-3 <= hi]
    hint = (" or ".join(f"--units {u}" for u in fits) if fits
            else "--units UNIT (mm, cm, m, in, ft)")
    return (f"the section is {size:.4g} {profile.units} across, read as {profile.units} because "
            f"the file does not state its unit; that is {'small' if mm < lo else 'large'} for "
            f"a bar section: if the numbers are in another unit give {hint}")


def refuse_drawing_options(path, opts: SectionOptions) -> None:
    """A shape file takes no --layer or --join-tolerance: its own keys name them."""
    for key, value in opts.reader_options().items():
        if value is not None:
            flag = "--layer" if key == "layers" else "--join-tolerance"
            raise InputError(f"{flag} applies to DXF drawings, not to a shape file",
                             where=str(path),
                             fix=f"drop {flag}; a shape file names a drawing's layer and join "
                                 "tolerance with the keys layer and join_tolerance next to "
                                 "file = ...")


def read_input(path, opts: SectionOptions | None = None):
    """Read a section file with the options; return ``(profile, settings)``.

    ``settings`` holds a shape file's ``[mesh]``/``[solve]`` values
    (``mesh_size`` in the profile's unit, ``method``), ``{}`` otherwise.
    The profile carries a note when its unit was assumed and its size is
    implausible (:func:`scale_note`).
    """
    import dataclasses

    from .readers import read_section
    from .readers.shapefile import load_shapefile

    opts = opts or SectionOptions()
    path = Path(path)
    if path.suffix.lower() == ".toml" and path.is_file():
        refuse_drawing_options(path, opts)
        sf = load_shapefile(path, opts.units)
        profile, settings = sf.profile, dict(sf.settings)
    else:
        profile, settings = read_section(path, opts.units, **opts.reader_options()), {}
    note = scale_note(profile)
    if note:
        profile = dataclasses.replace(profile, notes=(*profile.notes, note))
    return profile, settings


def analyse_options(profile, settings: dict, opts: SectionOptions) -> dict:
    """Keywords of :func:`soapfilm.analyse` for this profile: options over file settings."""
    mesh_size = (opts.mesh_size.in_unit(profile.units) if opts.mesh_size is not None
                 else settings.get("mesh_size"))
    kw: dict = {"mesh_size": mesh_size, "order": opts.order,
                "method": opts.method or settings.get("method", "auto"), "memory": opts.memory}
    if opts.tol is None and mesh_size is not None:
        return kw  # one solve on the mesh of that size
    kw.update(tol=DEFAULT_TOL if opts.tol is None else opts.tol, peak_tol=opts.peak_tol,
              max_elements=opts.max_elements)
    return kw


def solve_input(path, opts: SectionOptions | None = None,
                progress: Callable[[dict], None] | None = None, warping_shear: bool = True):
    """Read and solve a section file (or a triangle mesh file, solved as given).

    ``warping_shear``: also the warping shear per unit warping torque (one more solve,
    :func:`soapfilm.solve.analyse`): ``solve`` prints it, ``member`` uses it; the
    shaft checks, which do neither, ask for it through :class:`SectionSource` only for
    members."""
    from .readers.meshfile import is_mesh_file, read_mesh_file
    from .solve import analyse, result_from_mesh

    opts = opts or SectionOptions()
    if is_mesh_file(path):
        for name, value in (("--mesh-size", opts.mesh_size), ("--layer", opts.layers),
                            ("--join-tolerance", opts.join_tolerance)):
            if value is not None:
                raise InputError(f"{name} does not apply to a mesh file, which is solved as "
                                 "given", where=str(path), fix=f"drop {name}")
        profile, mesh = read_mesh_file(path, opts.units)
        from .resources import check_elements

        check_elements(mesh.nelements, opts.memory, where=str(path),
                       fix="solve a coarser mesh, or the section itself")
        return result_from_mesh(profile, mesh, order=opts.order, warping_shear=warping_shear)
    profile, settings = read_input(path, opts)
    kw = analyse_options(profile, settings, opts)
    if progress is not None and "tol" in kw:
        kw["progress"] = progress
    from .readers._names import options_named

    hints = {}
    if opts.mesh_size is None and settings.get("mesh_size") is not None:
        # a refusal of the file's own mesh size names the key to change
        hints["mesh_size"] = f"size = {{}} in [mesh] of {Path(path).name}"
    with options_named(hints):
        return analyse(profile, warping_shear=warping_shear, **kw)

