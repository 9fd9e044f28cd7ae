"""The keys of a shape file (``.toml``) and what they hold.

Plain tables, apart from the reader (:mod:`soapfilm.readers.shapefile`), so
that ``soapfilm shapes`` can list them without importing the readers, numpy
or shapely.
"""

from __future__ import annotations

from ..defaults import LENGTH_UNITS

__all__ = ["TOP_KEYS", "PART_KEYS", "SPECIAL_KINDS", "MESH_KEYS", "SOLVE_KEYS"]

#: top-level keys and what they hold
TOP_KEYS = {
    "title": "free text naming the section (shown in reports)",
    "units": f"length unit of every dimension: {', '.join(LENGTH_UNITS)} (default mm "
             "or --units)",
    "section": "table: the section, one kind with its dimensions",
    "part": "array of tables [[part]]: parts combined in order instead of [section]",
    "mesh": "table: mesh settings",
    "solve": "table: solver settings",
}
#: keys any section or part may carry besides its kind's dimensions
PART_KEYS = {
    "kind": "parametric kind (see 'soapfilm shapes'), 'outline' or 'file'",
    "action": "[[part]] only: 'add' (default) or 'cut' from the parts before",
    "rotate": "turn the part by this many degrees counter-clockwise about the origin",
    "position": "[x, y]: move the part by this much (after rotate)",
}
#: kinds that are not parametric
SPECIAL_KINDS = {
    "outline": {"points": "[[x, y], ...] the outside boundary, any orientation",
                "holes": "[[[x, y], ...], ...] hole boundaries (optional)"},
    "file": {"file": "point list (.txt, .csv) or DXF drawing, relative to this file; "
                     "a drawing that states its unit is converted to the shape file's units, "
                     "one that does not is read in them",
             "layer": "DXF drawings: read only this layer, or a list of layers (default all)",
             "join_tolerance": "DXF drawings: join entity ends closer than this, in the "
                               "shape file's unit (default 1e-5 of the drawing size)"},
}
MESH_KEYS = {
    "size": "element edge length in the file's unit (default: from the section)",
    "chord": "chord tolerance for flattening arcs, a length (default 1e-5 x shape size)",
}
SOLVE_KEYS = {"method": "linear solver: 'auto' (default), 'direct' or 'amg'"}
