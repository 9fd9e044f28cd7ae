"""Parametric section generators, by family, and their registry.

Every generator is a pure function of its dimensions returning a validated
:class:`~soapfilm.profile.Profile`; impossible dimensions raise
:class:`~soapfilm.errors.InputError` naming the parameter and the fix.
Curved edges carry the exact curve they lie on (``profile.curves``,
``profile.edge_curves``): circles, the ellipse, involute flanks and every
fillet, so the mesh follows the drawn outline.  The polygon itself flattens
them with a chord tolerance (keyword ``chord``, a length; default ``1e-5``
times the shape's size: see :mod:`soapfilm.shapes._geom`).  Compositions keep
the curves of their parts.

>>> from soapfilm.shapes import keyed_shaft
>>> p = keyed_shaft(40)            # DIN 6885-1 key 12 x 8, t1 = 5
>>> round(p.area, 1)
1200.3
"""

from .._lazy import lazy_names

#: public name -> module of this package that defines it, imported on first use
#: (PEP 562): ``soapfilm shapes`` lists the registry without numpy or shapely
_LAZY = {
    "DEFAULT_CHORD_REL": "_geom",
    **dict.fromkeys(("box_tube", "ellipse", "rectangle", "regular_polygon", "round_bar", "tube"),
                    "basic"),
    **dict.fromkeys(("difference", "placed", "union"), "compose"),
    **dict.fromkeys(("angle", "channel", "i_section", "tee"), "open_sections"),
    **dict.fromkeys(("KINDS", "Kind", "Param", "build"), "registry"),
    **dict.fromkeys(("ParallelKey", "flatted_shaft", "keyed_shaft", "parallel_key"), "shafts"),
    **dict.fromkeys(("involute_spline", "iso14_spline", "straight_spline"), "splines"),
}

__all__ = [
    "DEFAULT_CHORD_REL",
    "KINDS",
    "Kind",
    "Param",
    "ParallelKey",
    "angle",
    "box_tube",
    "build",
    "channel",
    "difference",
    "ellipse",
    "flatted_shaft",
    "i_section",
    "involute_spline",
    "iso14_spline",
    "keyed_shaft",
    "parallel_key",
    "placed",
    "rectangle",
    "regular_polygon",
    "round_bar",
    "straight_spline",
    "tee",
    "tube",
    "union",
]


__getattr__, __dir__ = lazy_names(__name__, _LAZY, __all__, globals())
