"""Flattening of arcs and fillets, shared by the shape generators.

Chord tolerance
---------------
Every arc is replaced by a polyline whose vertices lie on the arc, with the
largest sagitta (gap between chord and arc) not above the chord tolerance
``chord``.  When ``chord`` is None each generator uses
``DEFAULT_CHORD_REL * size`` with ``size`` its largest outer dimension.

Why the default keeps the error in J below 1e-4: moving the boundary outward
by ``dn`` changes J by ``int |grad phi|^2 dn ds`` (Hadamard shape derivative
of ``J = 2 int phi``).  An inscribed polyline takes away a sliver of mean depth
``2/3 s`` (``s`` the sagitta) along the arc.  On a round bar of radius ``r``
(``|grad phi| = r`` on the surface, ``J = pi r^4 / 2``) that gives
``dJ / J = (2/3 s)(2 pi r)(r^2) / (pi r^4 / 2) = 8 s / (3 r)``.  With the
default ``s = 1e-5 * 2 r`` this is 5.3e-5 (497 sides per full circle).  Small
fillets carry the same tolerance as a length, so their share of the sliver
area is smaller still.  ``tests/test_shapes.py`` checks the round bar against
``pi d^4 / 32`` through the guaranteed lower bound of the solver.
"""

from __future__ import annotations

import math

import numpy as np
from shapely.geometry import MultiPolygon, Polygon
from shapely.ops import unary_union

from ..errors import InputError
from ..profile import Profile

__all__ = [
    "DEFAULT_CHORD_REL",
    "chord_for",
    "arc_segments",
    "arc_points",
    "circle",
    "quad_segs",
    "fillet_concave",
    "round_convex",
    "to_profile",
]

#: default chord tolerance as a fraction of the shape's largest dimension
DEFAULT_CHORD_REL = 1e-5

#: mitre limit for the sharp-corner offsets used around fillets
_MITRE = 1e3


def chord_for(size: float, chord: float | None) -> float:
    """Chord tolerance to use: ``chord`` if given, else relative to ``size``."""
    if chord is None:
        return DEFAULT_CHORD_REL * float(size)
    if not (math.isfinite(chord) and chord > 0):
        raise InputError(f"chord tolerance must be a positive length, got {chord}",
                         where="chord", fix="give e.g. 0.001 (in the section's unit)")
    return float(chord)


def arc_segments(radius: float, sweep: float, chord: float) -> int:
    """Number of equal segments on an arc so that the sagitta is <= chord.

    ``radius * (1 - cos(step / 2)) <= chord`` with ``step = sweep / n``.
    """
    if chord >= radius:
        step = math.pi / 2
    else:
        step = 2.0 * math.acos(1.0 - chord / radius)
    return max(1, math.ceil(abs(sweep) / step - 1e-9))


def arc_points(cx: float, cy: float, radius: float, a0: float, a1: float,
               chord: float, endpoint: bool = True) -> np.ndarray:
    """Points on an arc from angle ``a0`` to ``a1`` (radians), both ends included."""
    n = arc_segments(radius, a1 - a0, chord)
    a = np.linspace(a0, a1, n + 1)
    if not endpoint:
        a = a[:-1]
    return np.column_stack([cx + radius * np.cos(a), cy + radius * np.sin(a)])


def circle(radius: float, chord: float, cx: float = 0.0, cy: float = 0.0) -> Polygon:
    """Inscribed polygon of a circle with at least 8 sides."""
    n = max(8, arc_segments(radius, 2 * math.pi, chord))
    a = np.arange(n) * (2 * math.pi / n)
    return Polygon(np.column_stack([cx + radius * np.cos(a), cy + radius * np.sin(a)]))


def quad_segs(radius: float, chord: float) -> int:
    """Segments per quarter circle for a shapely buffer of this radius."""
    return arc_segments(radius, math.pi / 2, chord)


def _negligible(poly, radius: float) -> bool:
    """Radii below 1e-9 of the shape's size are sharp corners (and upset offsetting)."""
    x0, y0, x1, y1 = poly.bounds
    return radius <= 1e-9 * max(x1 - x0, y1 - y0)


def fillet_concave(poly, radius: float, chord: float):
    """Round every concave (re-entrant) corner of ``poly`` with ``radius``.

    Morphological closing: an offset outward with sharp (mitred) corners,
    then back inward with round joins.  Convex corners and straight or
    curved edges come back unchanged; each concave corner gets a circular
    fillet tangent to both sides.  Gaps narrower than ``2 * radius`` would be
    bridged, so callers check that their fillets fit first.
    """
    if _negligible(poly, radius):
        return poly
    q = quad_segs(radius, chord)
    grown = poly.buffer(radius, quad_segs=q, join_style="mitre", mitre_limit=_MITRE)
    return grown.buffer(-radius, quad_segs=q, join_style="round")


def round_convex(poly, radius: float, chord: float):
    """Round every convex corner of ``poly`` with ``radius`` (morphological opening)."""
    if _negligible(poly, radius):
        return poly
    q = quad_segs(radius, chord)
    shrunk = poly.buffer(-radius, quad_segs=q, join_style="mitre", mitre_limit=_MITRE)
    return shrunk.buffer(radius, quad_segs=q, join_style="round")


def to_profile(geom, name: str, units: str = "mm") -> Profile:
    """Turn a shapely (Multi)Polygon into a validated :class:`Profile`."""
    geom = geom.buffer(0) if not geom.is_valid else geom
    if isinstance(geom, MultiPolygon):
        # drop slivers of rounding noise; anything real is reported
        span = max(geom.bounds[2] - geom.bounds[0], geom.bounds[3] - geom.bounds[1])
        parts = [g for g in geom.geoms if g.area > 1e-12 * span * span]
        geom = parts[0] if len(parts) == 1 else MultiPolygon(parts)
    if not isinstance(geom, (Polygon, MultiPolygon)):
        geom = unary_union([g for g in getattr(geom, "geoms", []) if g.area > 0])
    return Profile.from_polygon(geom, units=units, name=name)
