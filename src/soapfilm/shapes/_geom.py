"""Flattening of arcs and fillets, and the exact curves, shared by the shape generators.

Exact curves
------------
Every generator knows the curves its outline is made of (shaft and spline
circles, the ellipse, involute flanks, every fillet and corner radius) and
hands them to :func:`to_profile`, which tags each flattened edge with the
curve it lies on and moves its vertices exactly onto it
(:func:`soapfilm.geometry.edges.tag_edges`).  The mesher then puts its
boundary nodes on the curves and the solver bounds J for the drawn outline,
so the flattening below only decides the polygon used for areas, shapely
operations and the mesher's start.  Fillets made by offsetting
(:func:`fillet_concave`, :func:`round_convex`) have centres the caller can
work out (the corners of the offset polygon); :func:`to_profile` can also
find arcs of given radii itself.

Chord tolerance
---------------
Every arc is replaced by a polyline whose vertices lie on the arc, with the
largest sagitta (gap between chord and arc) not above the chord tolerance
``chord``.  When ``chord`` is None each generator uses
``DEFAULT_CHORD_REL * size`` with ``size`` its largest outer dimension.

What the flattening alone would cost in J: moving the boundary outward
by ``dn`` changes J by ``int |grad phi|^2 dn ds`` (Hadamard shape derivative
of ``J = 2 int phi``).  An inscribed polyline takes away a sliver of mean depth
``2/3 s`` (``s`` the sagitta) along the arc.  On a round bar of radius ``r``
(``|grad phi| = r`` on the surface, ``J = pi r^4 / 2``) that gives
``dJ / J = (2/3 s)(2 pi r)(r^2) / (pi r^4 / 2) = 8 s / (3 r)``.  With the
default ``s = 1e-5 * 2 r`` this is 5.3e-5 (497 sides per full circle), which
is what a section read as a plain polygon keeps.  ``tests/test_shapes.py``
checks the sliver estimate on the polygon's polar moment.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from shapely.geometry import MultiPolygon, Polygon, box
from shapely.ops import unary_union

from ..errors import InputError
from ..geometry.curves import Circle
from ..geometry.edges import find_arcs
from ..profile import Profile

__all__ = [
    "DEFAULT_CHORD_REL",
    "MIN_CHORD_REL",
    "COARSEST_CHORD_REL",
    "chord_for",
    "arc_segments",
    "arc_points",
    "circle",
    "quad_segs",
    "fillet_concave",
    "round_convex",
    "rounded_box",
    "to_profile",
    "flattening_sagitta",
]

#: default chord tolerance as a fraction of the shape's largest dimension
DEFAULT_CHORD_REL = 1e-5
#: smallest chord tolerance taken, as a fraction of the shape's largest dimension: finer
#: flattening buys nothing (the exact curves go to the mesher and the solver) and a circle
#: of the shape's size would get more than 15 000 points (resource guard, issue 11)
MIN_CHORD_REL = 1e-8

#: largest chord tolerance taken, as a fraction of the shape's largest dimension: the
#: sagitta of a 10-degree step on a circle of that diameter, 0.5 (1 - cos 5 deg) = 1.9e-3
COARSEST_CHORD_REL = 0.5 * (1.0 - math.cos(math.radians(5.0)))

#: mitre limit for the sharp-corner offsets used around fillets
_MITRE = 1e3


def chord_for(size: float, chord: float | None) -> float:
    """Chord tolerance to use: ``chord`` if given, else relative to ``size``."""
    if chord is None:
        return DEFAULT_CHORD_REL * float(size)
    if not (math.isfinite(chord) and chord > 0):
        raise InputError(f"chord tolerance must be a positive length, got {chord}",
                         where="chord", fix="give e.g. 0.001 (in the section's unit)")
    least = MIN_CHORD_REL * float(size)
    if chord < least:
        points = math.pi / math.sqrt(2.0 * chord / (0.5 * float(size)))
        raise InputError(f"chord tolerance {chord:g} would flatten a circle the size of the "
                         f"section, {float(size):g}, into about {points:.2g} points; finer than "
                         f"{MIN_CHORD_REL:g} of the size gains nothing, the solver takes the "
                         f"exact curves", where="chord",
                         fix=f"give at least {least:.2g}, or leave chord out for the default, "
                             f"{DEFAULT_CHORD_REL:g} of the size")
    # coarser than 10-degree steps on a circle the size of the shape resolves nothing more:
    # the polyline (tagged with its curves, which go to the solver) would no longer tell
    # a flat or a key side from the chord of an arc (issue 11: an octagon for a round bar)
    return min(float(chord), COARSEST_CHORD_REL * float(size))


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


def rounded_box(x0: float, y0: float, x1: float, y1: float, radius: float,
                chord: float) -> tuple[Polygon, list[Circle]]:
    """Rectangle with its four corners rounded, and the corner circles.

    Built point by point (quarter arcs about the known corner centres), so a
    radius of half the shorter side (a slot end, a stadium) works too; corners
    sharing a centre share one circle.
    """
    if _negligible(box(x0, y0, x1, y1), radius):
        return box(x0, y0, x1, y1), []
    r = radius
    centres = [(x1 - r, y1 - r), (x0 + r, y1 - r), (x0 + r, y0 + r), (x1 - r, y0 + r)]
    pts = [arc_points(cx, cy, r, k * math.pi / 2, (k + 1) * math.pi / 2, chord)
           for k, (cx, cy) in enumerate(centres)]
    circles: list[Circle] = []
    for cx, cy in centres:
        if not any(abs(c.cx - cx) + abs(c.cy - cy) <= 1e-12 * (x1 - x0 + y1 - y0)
                   for c in circles):
            circles.append(Circle(cx, cy, r))
    return Polygon(np.concatenate(pts)), circles


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


def flattening_sagitta(profile: Profile) -> float:
    """Largest gap between a curved edge of ``profile`` and its curve (0 for a polygon).

    The tolerance for tagging a combination of flattened parts: a point where
    two flattened parts cross lies on their chords, at most this far from the
    curves.
    """
    worst = 0.0
    for xy, ec in zip(profile.loops, profile.edge_curves, strict=True):
        mid = 0.5 * (xy + np.roll(xy, -1, axis=0))
        for c in np.unique(ec[ec >= 0]):
            sel = ec == c
            worst = max(worst, float(profile.curves[c].distance(mid[sel]).max()))
    return worst


def to_profile(geom, name: str, units: str = "mm", *, curves=(), radii=(),
               sagitta: float | None = None) -> Profile:
    """Turn a shapely (Multi)Polygon into a validated :class:`Profile` with exact curves.

    Parameters
    ----------
    geom : Polygon or MultiPolygon
        The flattened section (slivers of rounding noise are dropped).
    name, units : str
    curves : sequence of Curve
        Exact curves the flattened edges were made from (candidates: a curve
        that no edge lies on is dropped).
    radii : sequence of float
        Radii of fillets made by offsetting (:func:`fillet_concave`,
        :func:`round_convex`), whose centres are not known beforehand: every
        circular arc of such a radius traced by the outline is found
        (:func:`soapfilm.geometry.edges.find_arcs`) and added to ``curves``.
    sagitta : float, optional
        Largest gap between a flattened edge and its curve (the chord
        tolerance); default 1e-4 of the size.

    Edges lying on a curve are tagged with it and their vertices snapped onto
    it (:func:`soapfilm.geometry.edges.tag_edges`).
    """
    geom = geom.buffer(0) if not geom.is_valid else geom
    if isinstance(geom, MultiPolygon):
        # drop slivers of rounding noise; anything real is reported
        span = max(geom.bounds[2] - geom.bounds[0], geom.bounds[3] - geom.bounds[1])
        parts = [g for g in geom.geoms if g.area > 1e-12 * span * span]
        geom = parts[0] if len(parts) == 1 else MultiPolygon(parts)
    if not isinstance(geom, (Polygon, MultiPolygon)):
        geom = unary_union([g for g in getattr(geom, "geoms", []) if g.area > 0])
    radii = [float(r) for r in radii if r > 0]
    if (not curves and not radii) or not isinstance(geom, Polygon) or geom.is_empty:
        return Profile.from_polygon(geom, units=units, name=name)
    x0, y0, x1, y1 = geom.bounds
    span = max(x1 - x0, y1 - y0)
    tol = 1e-9 * span
    cands = list(curves)
    if radii:
        loops = [np.asarray(geom.exterior.coords)[:-1]]
        loops += [np.asarray(r.coords)[:-1] for r in geom.interiors]
        for lp in loops:
            cands += [c for c, _ in find_arcs(lp, radii, 1e-8 * span)]
    if sagitta is not None:
        sagitta = 1.5 * float(sagitta) + tol  # margin for rounding in the flattening
    prof = Profile.from_polygon(geom, units=units, name=name, curves=cands, tol=tol,
                                sagitta=sagitta)
    return _used_curves_only(prof)


def _used_curves_only(prof: Profile) -> Profile:
    """The profile with its curve list cut down to the curves some edge lies on."""
    used = np.unique(np.concatenate([e[e >= 0] for e in prof.edge_curves] + [[]]).astype(int))
    if len(used) == len(prof.curves):
        return prof
    new = np.full(len(prof.curves) + 1, -1, dtype=np.int64)  # last entry maps -1 -> -1
    new[used] = np.arange(len(used))
    return dataclasses.replace(prof, curves=tuple(prof.curves[i] for i in used),
                               edge_curves=tuple(new[e] for e in prof.edge_curves))
