"""DXF drawings: a section drawn in a CAD program, read with ezdxf.

The reader takes the modelspace entities that describe a boundary -- LINE,
ARC, CIRCLE, LWPOLYLINE (with bulges), 2D POLYLINE, ELLIPSE (full or
partial) and SPLINE --, keeps the exact curve of every curved one, chains the
pieces into closed loops by matching their end points, and builds a
:class:`~soapfilm.profile.Profile`: the loop that encloses all the others is
the outside, the loops directly inside it are holes.  Everything else in the
drawing (TEXT, MTEXT, DIMENSION, HATCH, POINT ...) is not section
geometry: it is skipped with a note among the result's warnings.  Block references (INSERT) are
expanded into their transformed entities (nested blocks too); an entity on
layer 0 inside a block takes the layer of its INSERT, as CAD programs draw it,
and is named in messages by the INSERT's handle and its place in the block
(``#2F.3``).

Exact curves
------------
Arcs stay arcs from the drawing to the solver.  Every curved edge of the
outline is tagged with the curve it lies on (``Profile.curves``,
``Profile.edge_curves``): ARC, CIRCLE and each bulged polyline segment give a
:class:`~soapfilm.geometry.curves.Circle`; an ELLIPSE gives an
:class:`~soapfilm.geometry.curves.Ellipse`; a SPLINE gives
:class:`~soapfilm.geometry.spline.SplineCurve` pieces, cut at its inflection
points so that each turns one way only.  LINEs, bulgeless polyline segments
and splines of degree 1 are straight.  The mesher puts its boundary nodes on
these curves and the bounds on J are for the drawn outline, so the error of
J no longer depends on how finely the reader flattens.  Block references need
nothing more: ezdxf hands over each entity already placed (a mirrored arc
with extrusion -Z, a circle scaled unequally in x and y as an ELLIPSE), and
the curve is read from the placed entity.

Flattening and chord tolerance
------------------------------
The polyline the reader makes is a starting polygon, used to join, check and
nest the loops: its vertices lie exactly on their curves, the sagitta
(distance from a chord to its curve) is at most the chord tolerance ``s``,
and the tangent turns by at most 10 degrees over any chord, so the sharp ends
of a slender ellipse get several short chords instead of one that cuts them
off.  The default ``s`` is ``1e-5`` times the drawing size (largest side of
the bounding box): loops closer than that may be judged to touch.  (When the
polygon itself was solved, this tolerance set the error of J: a flattened
circle of diameter d loses ``(8 / 3) s / (d / 2) = 5.3e-5`` of it, from the
boundary variation of J, ``-int |tau|^2 dn ds`` per unit G*theta, after
Polya and Szego, Isoperimetric Inequalities in Mathematical Physics, 1951 --
cited from memory; the polygon of an ellipse of axis ratio 0.001 had 3.1 % less J
than the ellipse.)

Joining
-------
Piece ends closer than the join tolerance (default ``1e-5`` times the drawing
size, overridable) are one point: the ends' mean between two straight
pieces, else a point on the curve(s) that meet there (see ``_joints``), so
closing a gap never puts a vertex off its curve by more than the gap.  Each
point must join exactly two piece ends.  Anything else is an
:class:`~soapfilm.errors.InputError` naming the entity handles (``#2F``) and
the position in drawing coordinates: a gap (with its size and the tolerance
that would bridge it), an overlap (doubled or partly overlapping entities), a
dangling entity, a branch, an open loop, loops that cross, two separate
outsides, an island inside a hole, no geometry on the chosen layers, or an
unreadable file.

Units
-----
The length unit is, in this order: the ``units`` argument when the caller
gives one (on the command line ``--units``); else the drawing's ``$INSUNITS``
header when it is set (inches, feet, mm, cm, m; other lengths such as
microns or decimetres are converted to the nearest of these); else mm.  An
explicit ``units`` that disagrees with the header wins, with a
note among the result's warnings, because headers are often left at a template's default while the
drawing was made in another unit; the user who typed a unit has looked.
"""

from __future__ import annotations

import dataclasses
import logging
import math
from collections import Counter, defaultdict
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import NamedTuple

import numpy as np
import shapely
from scipy.spatial import cKDTree
from shapely.geometry import LineString, Polygon

from ..errors import InputError
from ..geometry.curves import Circle, Curve, Ellipse
from ..geometry.edges import _intersection
from ..geometry.spline import SplineCurve, monotone_pieces
from ..profile import COORDINATE_LIMIT, LENGTH_UNITS, SMALLEST_SPAN, Profile
from ..resources import MAX_LOOPS, check_count
from ..shapes._geom import MIN_CHORD_REL
from ..units import DrawingLength, parse_drawing_length
from . import register
from ._names import option_hint

__all__ = ["read_dxf", "DXF_UNITS", "DEFAULT_CHORD_TOLERANCE", "DEFAULT_JOIN_TOLERANCE"]

log = logging.getLogger(__name__)

#: Default chord tolerance, as a fraction of the drawing size (see module docstring).
DEFAULT_CHORD_TOLERANCE = 1e-5
#: Default end-point join tolerance, as a fraction of the drawing size.
DEFAULT_JOIN_TOLERANCE = 1e-5
#: Largest angle one chord may span on an arc, whatever the tolerance.
_MAX_STEP = math.radians(10.0)
#: Bulges below this are straight segments (sagitta under 5e-7 of the chord: the circle's
#: centre would be millions of chords away and lose its digits).
_MIN_BULGE = 1e-6
#: Most halvings of a curve's parameter grid when it is flattened.
_MAX_HALVINGS = 40
#: Free ends closer than this fraction of the drawing size are called a gap,
#: farther ones an open loop or a dangling entity.
_GAP_LIMIT = 0.05

#: $INSUNITS code -> (name in messages, soapfilm unit, factor to that unit).
#: Factors are exact by definition: SI prefixes; 1 yd = 3 ft, 1 mi = 5280 ft,
#: 1 US survey foot = 1200/3937 m (NIST Special Publication 811, 2008, appendix B).
DXF_UNITS: dict[int, tuple[str, str, float]] = {
    1: ("inches", "in", 1.0),
    2: ("feet", "ft", 1.0),
    4: ("millimetres", "mm", 1.0),
    5: ("centimetres", "cm", 1.0),
    6: ("metres", "m", 1.0),
    3: ("miles", "ft", 5280.0),
    7: ("kilometres", "m", 1000.0),
    8: ("microinches", "in", 1e-6),
    9: ("mils", "in", 1e-3),
    10: ("yards", "ft", 3.0),
    11: ("angstroms", "mm", 1e-7),
    12: ("nanometres", "mm", 1e-6),
    13: ("microns", "mm", 1e-3),
    14: ("decimetres", "cm", 10.0),
    15: ("decametres", "m", 10.0),
    16: ("hectometres", "m", 100.0),
    21: ("US survey feet", "m", 1200.0 / 3937.0),
}

#: Entity types read as section geometry.
GEOMETRY = ("LINE", "ARC", "CIRCLE", "LWPOLYLINE", "POLYLINE", "ELLIPSE", "SPLINE")


# --------------------------------------------------------------------- pieces
class _Path(NamedTuple):
    """One entity (or one loop of it) flattened: an ``(n, 2)`` polyline in world XY.

    Edge ``i`` (vertex ``i`` to ``i + 1``) lies on ``curves[edge[i]]``, or is
    straight where ``edge[i]`` is -1; the vertices of curved edges lie on
    their curve.
    """

    xy: np.ndarray
    edge: np.ndarray
    curves: tuple[Curve, ...] = ()


def _straight(xy: np.ndarray) -> _Path:
    return _Path(xy, np.full(len(xy) - 1, -1, dtype=np.int64))


@dataclass(frozen=True)
class _Piece:
    """One flattened entity (or one loop of it), with its handle and layer."""

    path: _Path
    kind: str
    handle: str
    layer: str

    @property
    def xy(self) -> np.ndarray:
        return self.path.xy

    @property
    def name(self) -> str:
        return f"{self.kind} #{self.handle}"

    @property
    def length(self) -> float:
        return float(np.sum(np.hypot(*np.diff(self.xy, axis=0).T)))

    def end_curve(self, end: int) -> Curve | None:
        """The curve of the edge at the start (0) or the end (1) of the piece."""
        tag = int(self.path.edge[0 if end == 0 else -1])
        return self.path.curves[tag] if tag >= 0 else None


def _fmt(x: float) -> str:
    return f"{0.0 if abs(x) < 1e-10 else x:.6g}"


def _pt(xy) -> str:
    return f"({_fmt(float(xy[0]))}, {_fmt(float(xy[1]))})"


def _arc_points(center, radius: float, a0: float, sweep: float, chord: float) -> np.ndarray:
    """Points on a circular arc from angle ``a0`` turning by ``sweep`` (radians).

    Vertices lie on the arc; the sagitta of every chord is at most ``chord``
    and no chord spans more than ``_MAX_STEP``.
    """
    if chord < radius:
        step = min(2.0 * math.acos(1.0 - chord / radius), _MAX_STEP)
    else:
        step = _MAX_STEP
    n = max(1, math.ceil(abs(sweep) / step - 1e-9))
    ang = a0 + sweep * np.linspace(0.0, 1.0, n + 1)
    return np.column_stack([center[0] + radius * np.cos(ang), center[1] + radius * np.sin(ang)])


def _curve_params(curve: Curve, t: np.ndarray, chord: float) -> np.ndarray:
    """Parameters of a polyline inscribed in ``curve``, refined from the grid ``t``.

    Every interval of the grid is halved until, over it, the tangent turns by
    at most ``_MAX_STEP`` and the curve stays within ``chord`` of the chord
    (checked at the quarter points).  The turn limit is what keeps the ends of
    a slender ellipse's long axis, where the tangent turns quickly, in several
    short chords rather than one that cuts the tip off.
    """
    t = np.asarray(t, dtype=float)
    frac = np.array([0.0, 0.25, 0.5, 0.75, 1.0])
    for _ in range(_MAX_HALVINGS):
        a, b = t[:-1], t[1:]
        q = (a[:, None] + (b - a)[:, None] * frac).ravel()
        p = curve.point(q).reshape(-1, 5, 2)
        d = curve.derivative(q).reshape(-1, 5, 2)
        d0, d1 = d[:, :-1], d[:, 1:]
        turn = np.abs(np.arctan2(d0[..., 0] * d1[..., 1] - d0[..., 1] * d1[..., 0],
                                 np.einsum("ijk,ijk->ij", d0, d1))).sum(axis=1)
        c = p[:, 4] - p[:, 0]
        length = np.hypot(*c.T)
        off = p[:, 1:4] - p[:, :1]
        cross = np.abs(c[:, None, 0] * off[..., 1] - c[:, None, 1] * off[..., 0]).max(axis=1)
        dev = np.where(length > 0, cross / np.where(length > 0, length, 1.0), 0.0)
        coarse = (turn > _MAX_STEP) | (dev > chord)
        if not np.any(coarse):
            break
        where = np.flatnonzero(coarse)
        t = np.insert(t, where + 1, 0.5 * (a[where] + b[where]))
    return t


def _bulge_points(p0, p1, bulge: float, chord: float):
    """Points along a polyline segment from p0 to p1 with a DXF bulge, and its circle.

    The bulge is ``tan(theta / 4)`` with theta the included angle, positive
    for a counter-clockwise arc from p0 to p1.  A segment whose bulge is under
    ``_MIN_BULGE`` (sagitta under half that times the chord) is a line, and
    the circle is ``None``; else it is ``(centre, radius)``.
    """
    p0 = np.asarray(p0, dtype=float)
    p1 = np.asarray(p1, dtype=float)
    v = p1 - p0
    c = float(np.hypot(*v))
    if abs(bulge) < _MIN_BULGE or c == 0.0:
        return np.vstack([p0, p1]), None
    theta = 4.0 * math.atan(bulge)
    left = np.array([-v[1], v[0]]) / c
    # sagitta b c / 2, radius (c / 4)(b + 1 / b), centre (c / 4)(1 / b - b) left of the chord's
    # middle: exact for any bulge (0.5 c / tan(theta / 2) loses every digit as theta -> 2 pi)
    center = 0.5 * (p0 + p1) + left * (0.25 * c * (1.0 / bulge - bulge))
    radius = 0.25 * c * abs(bulge + 1.0 / bulge)
    a0 = math.atan2(p0[1] - center[1], p0[0] - center[0])
    pts = _arc_points(center, radius, a0, theta, chord)
    pts[0], pts[-1] = p0, p1
    return pts, (center, radius)


def _bulged_polyline(entity, points: np.ndarray, bulges: np.ndarray, closed: bool, chord: float,
                     z: float, where: str = "") -> _Path:
    """Flatten a polyline given by OCS vertices and per-vertex bulges, mapped to world XY.

    Every bulged segment gets its own :class:`Circle`.
    """
    n = len(points)
    nseg = n if closed else n - 1
    bad = np.flatnonzero(~np.isfinite(bulges[:nseg]))
    if len(bad):
        raise InputError(
            f"{entity.dxftype()} #{entity.dxf.handle} has a bulge of {bulges[bad[0]]} at vertex "
            f"{bad[0] + 1}", where=where,
            fix="redraw the arc in the CAD program (a bulge is tan(angle / 4), a finite number)")
    parts, tags, circles = [points[:1]], [], []
    for i in range(nseg):
        pts, circle = _bulge_points(points[i], points[(i + 1) % n], bulges[i], chord)
        parts.append(pts[1:])
        if circle is None:
            tags.append(np.full(len(pts) - 1, -1))
        else:
            tags.append(np.full(len(pts) - 1, len(circles)))
            circles.append(circle)
    xy = _to_wcs(entity, np.vstack(parts), z)
    curves = []
    for center, radius in circles:
        cw = _to_wcs(entity, np.asarray([center]), z)[0]
        curves.append(Circle(float(cw[0]), float(cw[1]), radius))
    return _Path(xy, np.concatenate(tags).astype(np.int64), tuple(curves))


def _plane_check(entity, where: str) -> None:
    """Raise unless the entity lies in (or parallel to) the XY plane."""
    ext = np.asarray(entity.dxf.get("extrusion", (0.0, 0.0, 1.0)), dtype=float)
    norm = float(np.linalg.norm(ext))
    if norm == 0.0 or abs(abs(ext[2]) / norm - 1.0) > 1e-9:
        raise InputError(
            f"{entity.dxftype()} #{entity.dxf.handle} is not drawn in the XY plane "
            f"(extrusion direction {tuple(float(e) for e in ext)})",
            where=where,
            fix="draw the section in the XY plane (plan view) of the drawing",
        )


def _to_wcs(entity, xy: np.ndarray, z: float = 0.0) -> np.ndarray:
    """Map OCS points of a planar entity to world XY (mirrors when extrusion is -Z)."""
    ocs = entity.ocs()
    if not ocs.transform:
        return xy
    pts = ocs.points_to_wcs([(float(x), float(y), z) for x, y in xy])
    return np.array([(p.x, p.y) for p in pts], dtype=float)


def _check_range(entity, parts: list[_Path], where: str) -> None:
    """Refuse an entity placed at numbers the solver cannot carry (NaN, 1e300 ...)."""
    for part in parts:
        xy = part.xy
        finite = bool(np.all(np.isfinite(xy)))
        far = float(np.max(np.abs(xy))) if finite and len(xy) else 0.0
        if finite and far <= COORDINATE_LIMIT:
            continue
        what = (f"a coordinate of {far:.3g}, beyond the {COORDINATE_LIMIT:.0e} this tool takes"
                if finite else "coordinates that are not finite numbers")
        placed = " (it is placed by a block reference: check the INSERT's scale factors)" \
            if "." in str(entity.dxf.handle) else ""
        raise InputError(f"{entity.dxftype()} #{entity.dxf.handle} on layer {entity.dxf.layer} "
                         f"reaches {what}{placed}", where=where,
                         fix="check the drawing's numbers and its unit")


def _flat_xy(entity, points: Iterable, where: str) -> np.ndarray:
    """XY of world points, refusing entities that leave the XY plane."""
    xyz = np.array([(p[0], p[1], p[2]) for p in points], dtype=float).reshape(-1, 3)
    if not np.all(np.isfinite(xyz)):
        raise InputError(f"{entity.dxftype()} #{entity.dxf.handle} has a point whose "
                         "coordinates are not all finite numbers", where=where,
                         fix="check the drawing's numbers")
    if len(xyz) and np.ptp(xyz[:, 2]) > 1e-9 * max(float(np.ptp(xyz[:, :2])), 1e-300):
        raise InputError(
            f"{entity.dxftype()} #{entity.dxf.handle} leaves the XY plane "
            f"(z from {_fmt(xyz[:, 2].min())} to {_fmt(xyz[:, 2].max())})",
            where=where,
            fix="draw the section flat in the XY plane (plan view) of the drawing",
        )
    return xyz[:, :2].copy()


def _ellipse(entity, chord: float, where: str = "") -> _Path | None:
    """An ELLIPSE (full or partial) as an :class:`Ellipse` and points on it.

    DXF gives the centre and the major axis vector in world coordinates, the
    minor axis as ``ratio`` times the major axis turned a quarter about the
    extrusion direction (so clockwise in plan view when the extrusion is -Z,
    a mirrored ellipse), and the arc from ``start_param`` to ``end_param`` in
    the eccentric angle, counter-clockwise about the extrusion.
    """
    numbers = [*entity.dxf.center, *entity.dxf.major_axis, entity.dxf.ratio,
               entity.dxf.start_param, entity.dxf.end_param]
    if not all(math.isfinite(float(v)) for v in numbers):
        raise InputError(f"ELLIPSE #{entity.dxf.handle} has a centre, axis, ratio or end "
                         "parameter that is not a finite number", where=where,
                         fix="redraw it in the CAD program")
    tool = entity.construction_tool()
    c, major, minor = tool.center, tool.major_axis, tool.minor_axis
    if not (math.hypot(major[0], major[1]) > 0 and math.hypot(minor[0], minor[1]) > 0):
        return None  # no area: nothing to read
    # sense +1: the minor axis is a quarter turn counter-clockwise of the major one in plan view
    sense = 1.0 if major[0] * minor[1] - major[1] * minor[0] >= 0 else -1.0
    curve = Ellipse(float(c[0]), float(c[1]), math.hypot(major[0], major[1]),
                    math.hypot(minor[0], minor[1]), math.atan2(major[1], major[0]))
    start = float(tool.start_param)
    span = (float(tool.end_param) - start) % (2.0 * math.pi)
    full = span == 0.0 or abs(span - 2.0 * math.pi) < 1e-12
    if full:
        span = 2.0 * math.pi
    grid = np.linspace(start, start + span, max(2, math.ceil(span / (0.25 * math.pi))) + 1)
    xy = curve.point(_curve_params(curve, sense * grid, chord))  # the eccentric angle, mirrored
    if full:
        xy[-1] = xy[0]
    return _Path(xy, np.zeros(len(xy) - 1, dtype=np.int64), (curve,))


def _spline_tool(entity, where: str):
    """The SPLINE's B-spline (ezdxf's construction tool), or an error naming what is wrong.

    ezdxf evaluates splines up to degree ``_MAX_SPLINE_DEGREE``; control points,
    weights and knots must be finite, the weights positive, the knots in order.
    """
    name = f"SPLINE #{entity.dxf.handle}"
    fix = "redraw it in the CAD program, or save it as a polyline or as a spline of degree 2 or 3"
    degree = int(entity.dxf.get("degree", 3))
    if not 1 <= degree <= _MAX_SPLINE_DEGREE:
        raise InputError(f"{name} has degree {degree}; splines of degree 1 to "
                         f"{_MAX_SPLINE_DEGREE} are read", where=where, fix=fix)
    numbers = [np.asarray(list(entity.control_points), dtype=float).ravel(),
               np.asarray(list(entity.fit_points), dtype=float).ravel(),
               np.asarray(list(entity.weights), dtype=float),
               np.asarray(list(entity.knots), dtype=float)]
    if not all(np.all(np.isfinite(x)) for x in numbers):
        raise InputError(f"{name} has a control point, fit point, weight or knot that is not "
                         "a finite number", where=where, fix=fix)
    if len(numbers[2]) and np.any(numbers[2] <= 0):
        raise InputError(f"{name} has a weight of {numbers[2][numbers[2] <= 0][0]:g}; weights "
                         "must be positive", where=where, fix=fix)
    count = len(numbers[0]) // 3
    if count and count <= degree:
        raise InputError(f"{name} has {count} control points; a spline of degree {degree} "
                         f"needs at least {degree + 1}", where=where, fix=fix)
    if len(numbers[3]) and np.any(np.diff(numbers[3]) < 0):
        raise InputError(f"{name} has knots out of order", where=where, fix=fix)
    try:
        return entity.construction_tool()
    except (ValueError, ArithmeticError, IndexError, TypeError) as exc:
        raise InputError(f"{name} cannot be evaluated ({exc})", where=where, fix=fix) from None


#: Highest SPLINE degree read (ezdxf's compiled evaluator stops at order 11).
_MAX_SPLINE_DEGREE = 10


def _spline(entity, chord: float, where: str) -> _Path:
    """A SPLINE as pieces of one :class:`SplineCurve` that turn one way only, and points on them.

    A spline that is straight throughout (degree 1, or collinear control
    points) is a polyline through its points at the knots.  A spline that
    closes on itself is cut in two at least, so that no loop is one
    open-parameter curve from end to end.
    """
    tool = _spline_tool(entity, where)
    ctrl = _flat_xy(entity, tool.control_points, where)
    whole = SplineCurve.from_bspline(tool)
    extent = float(np.max(np.ptp(ctrl, axis=0))) if len(ctrl) else 0.0
    pieces = monotone_pieces(whole, extent) if extent > 0 else None
    if pieces is None:
        xy = whole.point(np.unique(np.clip(whole.knots, whole.t0, whole.t1)))
        return _straight(xy)
    ends = whole.point([whole.t0, whole.t1])
    if len(pieces) == 1 and np.hypot(*(ends[1] - ends[0])) <= 1e-3 * extent:
        middle = 0.5 * (whole.t0 + whole.t1)
        pieces = [whole.restricted(whole.t0, middle), whole.restricted(middle, whole.t1)]
    parts, tags = [ends[:1]], []
    for k, piece in enumerate(pieces):
        grid = np.unique(np.concatenate([
            np.linspace(piece.t0, piece.t1, 5),
            [kn for kn in whole.knots if piece.t0 < kn < piece.t1]]))
        pts = piece.point(_curve_params(piece, grid, chord))
        parts.append(pts[1:])
        tags.append(np.full(len(pts) - 1, k, dtype=np.int64))
    return _Path(np.vstack(parts), np.concatenate(tags), tuple(pieces))


def _flatten(entity, chord: float, where: str) -> list[_Path] | None:
    """Flatten one geometry entity into paths (world XY); [] if it is empty."""
    kind = entity.dxftype()
    if kind == "LINE":
        a, b = entity.dxf.start, entity.dxf.end
        if a[2] != b[2]:  # a sloping line; the check gives the message
            return [_straight(_flat_xy(entity, [a, b], where))]
        return [_straight(np.array([[a[0], a[1]], [b[0], b[1]]], dtype=float))]
    if kind in ("ARC", "CIRCLE"):
        _plane_check(entity, where)
        c, r = entity.dxf.center, float(entity.dxf.radius)
        angles = [float(entity.dxf.start_angle), float(entity.dxf.end_angle)] \
            if kind == "ARC" else []
        if not (math.isfinite(r) and all(math.isfinite(v) for v in (*c, *angles))):
            more = f" and angles {tuple(angles)}" if angles else ""
            raise InputError(f"{kind} #{entity.dxf.handle} has a centre "
                             f"{tuple(float(v) for v in c)}, radius {r}{more}: not all finite "
                             "numbers", where=where, fix="redraw it in the CAD program")
        if not r > 0:
            return []
        if kind == "CIRCLE":
            a0, sweep = 0.0, 2.0 * math.pi
        else:
            a0 = math.radians(entity.dxf.start_angle)
            sweep = math.radians((entity.dxf.end_angle - entity.dxf.start_angle) % 360.0)
            if sweep == 0.0:
                sweep = 2.0 * math.pi
        xy = _arc_points((c[0], c[1]), r, a0, sweep, chord)
        if kind == "CIRCLE":
            xy[-1] = xy[0]
        cw = _to_wcs(entity, np.array([[c[0], c[1]]], dtype=float), float(c[2]))[0]
        return [_Path(_to_wcs(entity, xy, float(c[2])), np.zeros(len(xy) - 1, dtype=np.int64),
                      (Circle(float(cw[0]), float(cw[1]), r),))]
    if kind == "LWPOLYLINE":
        _plane_check(entity, where)
        pts = np.array(list(entity.get_points("xyb")), dtype=float).reshape(-1, 3)
        if len(pts) < 2:
            return []
        return [_bulged_polyline(entity, pts[:, :2], pts[:, 2], bool(entity.closed), chord,
                                 float(entity.dxf.elevation), where)]
    if kind == "POLYLINE":
        if entity.is_2d_polyline:
            _plane_check(entity, where)
            verts = [v for v in entity.vertices if not v.dxf.flags & 16]  # skip spline frame
            if len(verts) < 2:
                return []
            pts = np.array([(v.dxf.location[0], v.dxf.location[1], v.dxf.bulge) for v in verts])
            return [_bulged_polyline(entity, pts[:, :2], pts[:, 2], bool(entity.is_closed),
                                     chord, float(verts[0].dxf.location[2]), where)]
        if entity.is_3d_polyline:
            xy = _flat_xy(entity, [v.dxf.location for v in entity.vertices], where)
            if len(xy) < 2:
                return []
            if entity.is_closed:
                xy = np.vstack([xy, xy[:1]])
            return [_straight(xy)]
        return None  # meshes and polyface meshes: not an outline
    if kind == "ELLIPSE":
        _plane_check(entity, where)
        path = _ellipse(entity, chord, where)
        return [] if path is None else [path]
    if kind == "SPLINE":
        path = _spline(entity, chord, where)
        return [path] if len(path.xy) >= 2 else []
    return None


# -------------------------------------------------------------------- loading
def _load(path: Path):
    """Read the drawing strictly: a damaged file is refused, not guessed at.

    ezdxf's recovery mode can read damaged files, but it may silently lose
    entities (a hole cut off by a truncated file would give a wrong section
    that still solves), so it is not used.
    """
    import ezdxf

    try:
        return ezdxf.readfile(str(path))
    except ezdxf.DXFError as exc:
        detail = str(exc).strip() or exc.__class__.__name__
    except PermissionError:
        raise InputError("cannot open the file (permission denied)", where=str(path)) from None
    except (OSError, UnicodeDecodeError, ValueError) as exc:
        detail = "not a DXF file" if "not a DXF file" in str(exc) else (
            getattr(exc, "strerror", None) or exc.__class__.__name__)
    raise InputError(
        f"not a readable DXF drawing ({detail.rstrip('.')})",
        where=str(path),
        fix="check the file, or save it again from the CAD program as DXF",
    )


def _choose_units(doc, units: str | None, where: str) -> tuple[str, float, str]:
    """Return (soapfilm unit, factor from drawing numbers to it, name of drawing unit)."""
    code = int(doc.header.get("$INSUNITS", 0) or 0)
    if units is not None:
        if units not in LENGTH_UNITS:
            raise InputError(f"unknown length unit {units!r}", where="--units",
                             fix=f"use one of {', '.join(LENGTH_UNITS)}")
        return units, 1.0, units
    if code == 0:
        return "mm", 1.0, "mm"
    if code not in DXF_UNITS:
        raise InputError(
            f"the drawing's unit header $INSUNITS = {code} is not a length this tool handles",
            where=where,
            fix=f"give the unit of the numbers with {option_hint('units', 'UNIT')} "
                f"({', '.join(LENGTH_UNITS)})",
        )
    name, unit, factor = DXF_UNITS[code]
    return unit, factor, unit if factor == 1.0 else name


def _select(doc, layers: Sequence[str] | None, where: str):
    """Modelspace entities on the chosen layers.

    Returns the geometry entities, a count of the skipped (non-geometry)
    entity types, and the names of the layers that hold modelspace entities.
    """
    msp = doc.modelspace()
    used = sorted({e.dxf.layer for e in msp}, key=str.lower)
    known = {name.lower() for name in used} | {lay.dxf.name.lower() for lay in doc.layers}
    wanted = None
    if layers:
        wanted = {name.lower() for name in layers}
        missing = [name for name in layers if name.lower() not in known]
        if missing:
            raise InputError(
                f"no layer named {missing[0]!r} in the drawing",
                where=where,
                fix=f"layers with entities: {', '.join(used) or '(none)'}",
            )
    geometry, skipped = [], Counter()
    for e in _expanded(msp, where):
        if wanted is not None and e.dxf.layer.lower() not in wanted:
            continue
        if e.dxftype() in GEOMETRY:
            geometry.append(e)
        else:
            skipped[e.dxftype()] += 1
    return geometry, skipped, used


def _expanded(entities, where: str, depth: int = 0, chain: tuple[str, ...] = (),
              count: list | None = None):
    """The entities, with block references replaced by their (transformed) contents.

    At most :data:`~soapfilm.resources.MAX_DXF_ENTITIES` entities in all after
    expansion (counted as they come, so a block inserted a million times is
    refused after the first hundred thousand), and no block inside itself.
    """
    from ..resources import MAX_DXF_ENTITIES

    count = [0] if count is None else count
    for e in entities:
        count[0] += 1
        if count[0] > MAX_DXF_ENTITIES:
            what = f" (block {chain[0]!r} expands to them)" if chain else ""
            raise InputError(
                f"the drawing holds more than {MAX_DXF_ENTITIES:,} entities once its block "
                f"references are expanded{what}", where=where,
                fix="put the section alone in a drawing of its own, without the blocks it "
                    "does not need")
        if e.dxftype() != "INSERT" or depth >= _MAX_BLOCK_DEPTH:
            yield e
            continue
        name = str(e.dxf.name)
        if name in chain:
            raise InputError(
                f"block {name!r} inserts itself (INSERT #{e.dxf.handle} inside "
                f"{' -> '.join(repr(c) for c in chain)}): a block cannot contain itself",
                where=where, fix="remove the reference to the block from its own definition")
        _check_insert(e, where)
        for i, ve in enumerate(e.virtual_entities()):
            ve.dxf.handle = f"{e.dxf.handle}.{i}"
            if ve.dxf.layer == "0":
                ve.dxf.layer = e.dxf.layer
            yield from _expanded([ve], where, depth + 1, (*chain, name), count)


def _check_insert(insert, where: str) -> None:
    """Refuse a block reference whose placement cannot be computed (zero, NaN, 1e300 scales)."""
    scale = [float(insert.dxf.get(k, 1.0)) for k in ("xscale", "yscale", "zscale")]
    numbers = [*scale, float(insert.dxf.get("rotation", 0.0)), *insert.dxf.get("insert", (0, 0, 0))]
    if all(math.isfinite(v) for v in numbers) and all(
            SMALLEST_SPAN <= abs(v) <= COORDINATE_LIMIT for v in scale):
        return
    shown = ", ".join(f"{v:g}" for v in scale)
    raise InputError(
        f"INSERT #{insert.dxf.handle} of block {str(insert.dxf.name)!r} has scale factors "
        f"({shown}), rotation {float(insert.dxf.get('rotation', 0.0)):g} and insertion point "
        f"{tuple(float(v) for v in insert.dxf.get('insert', (0, 0, 0)))}: the scale factors must "
        f"be finite and between {SMALLEST_SPAN:.0e} and {COORDINATE_LIMIT:.0e} in size, the "
        "rest finite", where=where, fix="set the block reference's scale in the CAD program")


#: Nesting depth of block references expanded (deeper ones are skipped as INSERTs).
_MAX_BLOCK_DEPTH = 8


# --------------------------------------------------------------------- checks
class _Ends:
    """End points of open pieces, merged into nodes within a tolerance."""

    def __init__(self, pieces: list[_Piece], tol: float):
        ends = np.array([[p.xy[0], p.xy[-1]] for p in pieces], dtype=float).reshape(-1, 2)
        n = len(ends)
        node = np.zeros(n, dtype=int)
        if n:
            # ends within the tolerance of each other, transitively, are one node: the
            # components of the graph of close pairs (identical ends merged first, so that
            # many pieces meeting at one point do not make a pair for every two of them)
            from scipy.sparse import coo_matrix
            from scipy.sparse.csgraph import connected_components

            uniq, inverse = np.unique(ends, axis=0, return_inverse=True)
            pairs = cKDTree(uniq).query_pairs(tol, output_type="ndarray")
            graph = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])),
                               shape=(len(uniq), len(uniq)))
            _, label = connected_components(graph, directed=False)
            # numbered by each node's first end, as before
            first = np.full(label.max() + 1, n)
            np.minimum.at(first, label[inverse.ravel()], np.arange(n))
            node = np.argsort(np.argsort(first))[label[inverse.ravel()]]
        self.node = node.reshape(-1, 2) if n else np.zeros((0, 2), dtype=int)
        nnodes = int(node.max()) + 1 if n else 0
        self.pos = np.zeros((nnodes, 2))
        np.add.at(self.pos, node, ends)
        self.pos /= np.bincount(node, minlength=nnodes)[:, None]
        self.ends = ends
        self.incident: dict[int, list[tuple[int, int]]] = defaultdict(list)
        for k, (a, b) in enumerate(self.node):
            self.incident[int(a)].append((k, 0))
            self.incident[int(b)].append((k, 1))

    def degree(self, node: int) -> int:
        return len(self.incident[node])


def _above(x: float) -> float:
    """A round number a little above x (for suggested tolerances)."""
    step = 10.0 ** math.floor(math.log10(x))
    return (math.floor(x / step + 1e-9) + 1) * step


def _names(pieces: Sequence[_Piece], limit: int = 6) -> str:
    names = [p.name for p in pieces]
    if len(names) > limit:
        return ", ".join(names[: limit - 1]) + f", ... {len(names)} entities"
    return ", ".join(names)


def _check_overlaps(pieces: list[_Piece], width: float, where: str) -> None:
    """Raise if two pieces run along each other (doubled or overlapping entities).

    Pieces that only meet at an end share a stretch of about
    ``width / sin(angle)``; more than ``50 * width`` means they overlap.
    """
    if len(pieces) < 2:
        return
    lines = np.array([LineString(p.xy) for p in pieces], dtype=object)
    buffered = shapely.buffer(lines, width)
    tree = shapely.STRtree(lines)
    # a drawable outline has each piece near a few others: the pairs are O(n); the work
    # goes in chunks and stops at a budget (pieces crossing each other by the thousand)
    budget, seen = 20 * len(pieces) + 10_000, 0
    for lo in range(0, len(pieces), _CHUNK):
        left, right = tree.query(buffered[lo:lo + _CHUNK], predicate="intersects")
        left = left + lo
        keep = left < right
        left, right = left[keep], right[keep]
        seen += len(left)
        common = shapely.intersection(lines[right], buffered[left])
        length = shapely.length(common)
        bad = np.flatnonzero(length > 50.0 * width)
        if len(bad):
            k = bad[np.argmax(length[bad])]
            i, j, geom = left[k], right[k], common[k]
            try:
                at = shapely.line_interpolate_point(geom, 0.5, normalized=True)
            except shapely.errors.GEOSException:
                at = geom.representative_point()
            raise InputError(
                f"{pieces[i].name} and {pieces[j].name} overlap: they run within "
                f"{_fmt(width)} of each other for {_fmt(float(length[k]))} near "
                f"{_pt((at.x, at.y))}",
                where=where,
                fix="delete the doubled entity or trim the overlapping ones in the CAD program",
            )
        if seen > budget:
            cross = shapely.crosses(lines[left], lines[right])
            k = int(np.flatnonzero(cross)[0]) if np.any(cross) else 0
            at = shapely.intersection(lines[left[k]], lines[right[k]]).representative_point()
            raise InputError(
                f"the pieces of the drawing cross each other: more than {budget:,} pairs come "
                f"within {_fmt(width)} of each other, e.g. {pieces[left[k]].name} and "
                f"{pieces[right[k]].name} near {_pt((at.x, at.y))}",
                where=where,
                fix="a section outline is closed loops that meet only end to end: put the "
                    "section alone on a layer and pick it with " + option_hint("layers", "NAME"))


#: pieces whose neighbours are looked up at once when checking for overlaps
_CHUNK = 64
#: more piece ends than this at one point is a branch however the pieces lie
_MAX_DEGREE = 8


def _check_crowded(pieces: list[_Piece], ends: _Ends, where: str) -> None:
    """Raise for a point where more than :data:`_MAX_DEGREE` piece ends meet.

    Checked before the overlaps: pieces fanning out of one point all lie
    within the join tolerance of each other there, so the overlap check would
    look at every pair of them.
    """
    degree = np.bincount(ends.node.ravel(), minlength=len(ends.pos))
    if not len(degree) or degree.max() <= _MAX_DEGREE:
        return
    n = int(np.argmax(degree))
    ks = sorted({k for k, _ in ends.incident[n]})
    raise InputError(
        f"{degree[n]} piece ends meet at {_pt(ends.pos[n])} "
        f"({_names([pieces[i] for i in ks])}); an outline cannot branch",
        where=where,
        fix="split the drawing so that every end meets exactly one other",
    )


def _component(ends: _Ends, start_piece: int) -> set[int]:
    """Pieces connected to ``start_piece`` through shared nodes."""
    seen, stack = {start_piece}, [start_piece]
    while stack:
        k = stack.pop()
        for nd in ends.node[k]:
            for other, _ in ends.incident[int(nd)]:
                if other not in seen:
                    seen.add(other)
                    stack.append(other)
    return seen


def _check_nodes(pieces: list[_Piece], ends: _Ends, size: float, jtol: float, width: float,
                 where: str, layers_present: Sequence[str], unit: str) -> None:
    """Raise unless every node joins exactly two piece ends."""
    nnodes = len(ends.pos)
    degree = np.array([ends.degree(n) for n in range(nnodes)], dtype=int)
    free = [n for n in range(nnodes) if degree[n] == 1]
    free_piece = {}
    for n in free:
        (k, e), = ends.incident[n]
        free_piece[n] = (k, e)
    layer_fix = ""
    if len(layers_present) > 1:
        layer_fix = (f"; or pick the section's layers with {option_hint('layers', 'NAME')} "
                     f"(layers: {', '.join(layers_present)})")

    # branches: three or more ends at one point
    for n in np.flatnonzero(degree >= 3):
        inc = ends.incident[int(n)]
        ks = sorted({k for k, _ in inc})
        # doubled entities: two pieces joining the same two nodes along the same path
        for a in range(len(ks)):
            for b in range(a + 1, len(ks)):
                pa, pb = pieces[ks[a]], pieces[ks[b]]
                if set(ends.node[ks[a]]) == set(ends.node[ks[b]]) and (
                    LineString(pa.xy).hausdorff_distance(LineString(pb.xy)) <= width
                ):
                    raise InputError(
                        f"{pa.name} and {pb.name} are drawn on top of each other "
                        f"(both run from {_pt(ends.pos[ends.node[ks[a]][0]])} "
                        f"to {_pt(ends.pos[ends.node[ks[a]][1]])})",
                        where=where,
                        fix="delete the doubled entity in the CAD program",
                    )
        comp = _component(ends, ks[0])
        dangling = [m for m in free if free_piece[m][0] in comp]
        if dangling:
            k, _ = free_piece[dangling[0]]
            p = pieces[k]
            raise InputError(
                f"dangling {p.name} on layer {p.layer}: it has a free end at "
                f"{_pt(ends.pos[dangling[0]])}; {degree[n]} piece ends meet at "
                f"{_pt(ends.pos[n])} ({_names([pieces[i] for i in ks])})",
                where=where,
                fix="delete it or trim it so that every end meets exactly one other" + layer_fix,
            )
        raise InputError(
            f"{degree[n]} piece ends meet at {_pt(ends.pos[n])} "
            f"({_names([pieces[i] for i in ks])}); an outline cannot branch",
            where=where,
            fix="split the drawing so that every end meets exactly one other",
        )

    if not free:
        return
    # free ends: pair each with the nearest other free end
    fpos = ends.pos[free]
    if len(free) > 1:
        dist, idx = cKDTree(fpos).query(fpos, k=2)
        near_d, near_i = dist[:, 1], idx[:, 1]
    else:
        near_d, near_i = np.array([np.inf]), np.array([0])
    gaps = [(float(near_d[i]), i, int(near_i[i])) for i in range(len(free))
            if near_d[i] <= _GAP_LIMIT * size]
    if gaps:
        g, i, j = max(gaps)
        (ka, _), (kb, _) = free_piece[free[i]], free_piece[free[j]]
        count = len({frozenset((a, b)) for _, a, b in gaps})
        more = f" (and {count - 1} more gap(s), up to this size)" if count > 1 else ""
        same = "its own other end" if ka == kb else pieces[kb].name
        raise InputError(
            f"gap of {_fmt(g)} {unit} between the end of {pieces[ka].name} at {_pt(fpos[i])} "
            f"and {same} at {_pt(fpos[j])}{more}; ends are joined within {_fmt(jtol)} {unit}",
            where=where,
            fix=f"close the gap in the drawing, or raise the join tolerance: "
                f"{option_hint('join_tolerance', _fmt(_above(g)))}",
        )
    # no near partner: an open chain or a lone entity
    n0 = free[0]
    k0, _ = free_piece[n0]
    comp = sorted(_component(ends, k0))
    others = [m for m in free if free_piece[m][0] in comp and m != n0]
    far = ends.pos[others[0]] if others else ends.pos[n0]
    if len(comp) == 1:
        p = pieces[k0]
        raise InputError(
            f"dangling {p.name} on layer {p.layer}: it joins nothing, with free ends at "
            f"{_pt(ends.pos[n0])} and {_pt(far)}",
            where=where,
            fix="delete it or connect it to the outline" + layer_fix,
        )
    raise InputError(
        f"open loop: {_names([pieces[k] for k in comp])} run from {_pt(ends.pos[n0])} to "
        f"{_pt(far)}, {_fmt(float(np.hypot(*(far - ends.pos[n0]))))} {unit} apart, "
        "without closing",
        where=where,
        fix="draw the missing piece so that the outline closes" + layer_fix,
    )


def _joints(pieces: list[_Piece], ends: _Ends) -> np.ndarray:
    """Where each node goes in the loops, keeping vertices on their curves.

    Between two straight edges: the mean of the ends joined there.  Where one
    curved edge arrives: its own end, which is on its curve (the straight
    edge's end moves by at most the gap).  Between two different curves: their
    intersection when there is one within the gap, else the end of the first
    (on its curve, and within the gap of the other: tangent curves, such as a
    fillet meeting a shaft circle, need not cross when the ends were rounded).
    """
    pos = ends.pos.copy()
    for node, inc in ends.incident.items():
        curved = [(c, pieces[k].xy[0 if e == 0 else -1]) for k, e in inc
                  if (c := pieces[k].end_curve(e)) is not None]
        if not curved:
            continue
        c1, x1 = curved[0]
        pos[node] = x1
        if len(curved) < 2 or curved[1][0] == c1:
            continue
        c2, x2 = curved[1]
        gap = float(np.hypot(*(x2 - x1)))
        if gap > 0.0:
            mid = 0.5 * (x1 + x2)
            meet = _intersection(c1, c2, mid)
            off = max(c1.distance(meet)[0], c2.distance(meet)[0])
            if np.hypot(*(meet - mid)) <= gap and off <= 1e-3 * gap:
                pos[node] = meet
    return pos


def _trace(pieces: list[_Piece], ends: _Ends
           ) -> list[tuple[np.ndarray, np.ndarray, list[int]]]:
    """Chain pieces (every node of degree 2) into closed loops.

    Returns, per loop, its vertices, the curve of each edge (an index into
    the pieces' curves taken in order, -1 straight) and the pieces in it.
    """
    first = np.cumsum([0] + [len(p.path.curves) for p in pieces])  # global curve numbers
    joint = _joints(pieces, ends)
    used = np.zeros(len(pieces), dtype=bool)
    loops = []
    for k0 in range(len(pieces)):
        if used[k0]:
            continue
        pts, tags, members = [], [], []
        k, forward = k0, True
        start_node = int(ends.node[k0][0])
        while True:
            used[k] = True
            members.append(k)
            path = pieces[k].path
            edge = np.where(path.edge >= 0, path.edge + first[k], -1)
            xy, edge = (path.xy, edge) if forward else (path.xy[::-1], edge[::-1])
            a, b = (ends.node[k] if forward else ends.node[k][::-1])
            seg = xy.copy()
            seg[0], seg[-1] = joint[a], joint[b]
            pts.append(seg[:-1])
            tags.append(edge)
            if int(b) == start_node:
                break
            arrived = (k, 1 if forward else 0)
            nxt = [inc for inc in ends.incident[int(b)] if inc != arrived]
            k, e = nxt[0]
            forward = e == 0
        loops.append((np.vstack(pts), np.concatenate(tags), members))
    return loops


# ----------------------------------------------------------------------- read
@register(".dxf")
def read_dxf(
    path,
    units: str | None = None,
    *,
    layers: Sequence[str] | None = None,
    chord_tolerance: float | None = None,
    join_tolerance: float | None = None,
) -> Profile:
    """Read a section drawn in a DXF file.

    Parameters
    ----------
    path : str or Path
        The drawing.
    units : str, optional
        Length unit of the drawing's numbers; overrides the ``$INSUNITS``
        header (with a note on the result when they disagree).  Default: the
        header, else mm.
    layers : str or sequence of str, optional
        Read only entities on these layers (case-insensitive).  Default: all.
    chord_tolerance : float, optional
        Largest distance between a curve and the starting polyline, in
        drawing units.  Default ``1e-5`` times the drawing size.  The curves
        themselves go to the solver, so this does not set the error of J
        (module docstring).
    join_tolerance : float, str or DrawingLength, optional
        End points closer than this are joined: a number in the drawing's
        own unit, or a length with its unit (``"0.01 mm"``).  Default
        ``1e-5`` times the drawing size.

    Returns
    -------
    Profile
        Labelled by loop with the handles of its entities; curved edges
        tagged with their exact curves (``curves``, ``edge_curves``).

    Raises
    ------
    InputError
        Unreadable file, no geometry, gaps, overlaps, dangling entities,
        branches, open loops, crossing loops, two outsides, islands in holes.

    Examples
    --------
    >>> import pathlib, tempfile, ezdxf
    >>> doc = ezdxf.new()
    >>> doc.units = ezdxf.units.MM
    >>> _ = doc.modelspace().add_circle((0, 0), 10)
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "disc.dxf"
    >>> doc.saveas(path)
    >>> disc = read_dxf(path)
    >>> disc.units, "outside loop (CIRCLE #" in disc.labels[0]
    ('mm', True)
    >>> round(disc.area, 1)  # pi * 10^2 = 314.16, less 2.7e-5 for the chords
    314.2
    """
    path = Path(path)
    where = str(path)
    if isinstance(layers, str):
        layers = [layers]
    if chord_tolerance is not None and not (math.isfinite(chord_tolerance)
                                            and chord_tolerance > 0):
        raise InputError(f"chord tolerance must be a positive length, got {chord_tolerance}",
                         where=where)
    if join_tolerance is not None and not isinstance(join_tolerance, DrawingLength):
        join_tolerance = parse_drawing_length(join_tolerance, option_hint("join_tolerance", "").strip())
    doc = _load(path)
    unit, factor, ulabel = _choose_units(doc, units, where)
    notes: list[str] = []
    if units is not None and int(doc.header.get("$INSUNITS", 0) or 0) in DXF_UNITS:
        hname, hunit, hfac = DXF_UNITS[int(doc.header.get("$INSUNITS", 0) or 0)]
        if hunit != units or hfac != 1.0:
            notes.append(f"{where}: the drawing's unit header says {hname} but {units} was "
                         f"given; read as {units}")
    jtol_given = None
    if join_tolerance is not None:  # in the drawing's own numbers
        jtol_given = join_tolerance.in_unit(unit, LENGTH_UNITS[unit] * factor)
    entities, skipped, present = _select(doc, layers, where)
    on = f" on layer(s) {', '.join(layers)}" if layers else ""
    if skipped:
        what = ", ".join(f"{n} {t}" for t, n in sorted(skipped.items()))
        note = f" (block references nested deeper than {_MAX_BLOCK_DEPTH} are not expanded)" \
            if "INSERT" in skipped else ""
        notes.append(f"{where}: ignored entities that are not section geometry{on}: "
                     f"{what}{note}")

    # first pass, coarse, for the drawing size
    rough, kept = [], []
    for e in entities:
        with np.errstate(all="ignore"):  # huge scale factors: judged below, not warned about
            parts = _flatten(e, math.inf, where)
        _check_range(e, parts or [], where)
        if parts is None:
            notes.append(f"{where}: ignored {e.dxftype()} #{e.dxf.handle} (a mesh, not an "
                         "outline)")
            continue
        rough.extend(part.xy for part in parts)
        kept.append(e)
    if not rough:
        found = f" (found only {', '.join(sorted(skipped))})" if skipped else ""
        raise InputError(
            f"no section geometry{on}{found}",
            where=where,
            fix="draw the outline with lines, arcs, circles, polylines, ellipses or splines"
                + (f"; layers in the drawing: {', '.join(present)}" if present else ""),
        )
    allpts = np.vstack(rough)
    size = float(np.max(np.ptp(allpts, axis=0)))
    if not size > 0 or not np.isfinite(size):
        raise InputError("the geometry has no extent (all points coincide)", where=where)
    if size < SMALLEST_SPAN:
        raise InputError(f"the geometry is {size:.3g} across, under the {SMALLEST_SPAN:.0e} this "
                         "tool takes (J shrinks with the fourth power of the size)", where=where,
                         fix="check the drawing's numbers, unit and block scale factors")
    chord = chord_tolerance or DEFAULT_CHORD_TOLERANCE * size
    if chord < MIN_CHORD_REL * size:
        raise InputError(f"chord tolerance {chord:g} is below {MIN_CHORD_REL:g} of the drawing's "
                         f"size {_fmt(size)}: its arcs would be flattened into millions of points",
                         where=where, fix=f"give at least {MIN_CHORD_REL * size:.2g} (the exact "
                                          "curves go to the solver, finer flattening gains nothing)")
    jtol = jtol_given or DEFAULT_JOIN_TOLERANCE * size

    pieces: list[_Piece] = []
    for e in kept:
        for flat in _flatten(e, chord, where):
            p = _Piece(flat, e.dxftype(), str(e.dxf.handle), str(e.dxf.layer))
            if p.length <= jtol:
                notes.append(f"{where}: ignored {p.name} at {_pt(p.xy[0])}, shorter than the "
                             f"join tolerance {_fmt(jtol)}")
                continue
            pieces.append(p)
    if not pieces:
        raise InputError(f"no section geometry{on} (every entity has zero length)", where=where)

    width = max(jtol, 2.0 * chord)
    ends = _Ends(pieces, jtol)
    _check_crowded(pieces, ends, where)
    _check_overlaps(pieces, width, where)
    _check_nodes(pieces, ends, size, jtol, width, where, present, ulabel)
    traced = _trace(pieces, ends)
    loops = [xy for xy, _, _ in traced]
    check_count("closed loops in the drawing", len(loops), MAX_LOOPS, where,
                "a bar section with that many holes is out of this tool's scope; solve a "
                "representative part of it, or pick the section's layers with "
                + option_hint("layers", "NAME"))
    names = [_names([pieces[k] for k in members]) for _, _, members in traced]
    order = _nest(loops, names, where)
    labels = [f"{where} {'outside' if i == 0 else 'hole'} loop ({names[k]})"
              for i, k in enumerate(order)]
    curves = [c for p in pieces for c in p.path.curves]
    if factor != 1.0:
        curves = [c.moved(np.eye(2) * factor, (0.0, 0.0)) for c in curves]
    log.info("%s: %d entities in %d loops, unit %s, %d exact curves", where, len(pieces),
             len(loops), unit, len(curves))
    profile = Profile.from_loops([loops[k] * factor for k in order], units=unit,
                                 name=path.stem, labels=labels, curves=curves,
                                 edge_curves=[traced[k][1] for k in order])
    stated = units is not None or int(doc.header.get("$INSUNITS", 0) or 0) != 0
    return dataclasses.replace(profile, notes=tuple(notes), unit_stated=stated)


def _nest(loops: list[np.ndarray], names: list[str], where: str) -> list[int]:
    """Order loops outside first; raise for crossings, two outsides, islands."""
    polys = [Polygon(xy) for xy in loops]
    rings = [poly.exterior for poly in polys]
    n = len(loops)
    for i in range(n):
        if not rings[i].is_simple:
            reason = shapely.is_valid_reason(polys[i])
            at = reason[reason.find("[") + 1: reason.find("]")].split() if "[" in reason else []
            near = f" near {_pt([float(v) for v in at[:2]])}" if len(at) >= 2 else ""
            raise InputError(
                f"loop ({names[i]}) crosses itself{near}",
                where=where,
                fix="redraw it so that the outline does not cross over itself",
            )
    tree = shapely.STRtree(np.array(rings, dtype=object))
    left, right = tree.query(np.array(rings, dtype=object), predicate="intersects")
    pairs = sorted((int(i), int(j)) for i, j in zip(left, right, strict=True) if i < j)
    if pairs:
        i, j = pairs[0]
        at = rings[i].intersection(rings[j]).representative_point()
        raise InputError(
            f"loop ({names[i]}) and loop ({names[j]}) cross or touch near "
            f"{_pt((at.x, at.y))}",
            where=where,
            fix="a section boundary is one outside loop and holes that keep clear of it",
        )
    # depth: how many other loops enclose each (rings apart, so within = inside)
    inner, outer = shapely.STRtree(np.array(polys, dtype=object)).query(
        np.array(polys, dtype=object), predicate="within")
    inner = inner[inner != outer]
    depth = np.bincount(inner, minlength=n).tolist()
    tops = [i for i in range(n) if depth[i] == 0]
    if len(tops) > 1:
        a, b = tops[0], tops[1]
        ca, cb = polys[a].centroid, polys[b].centroid
        raise InputError(
            f"two separate outsides: loop ({names[a]}) near {_pt((ca.x, ca.y))} and loop "
            f"({names[b]}) near {_pt((cb.x, cb.y))}; neither encloses the other",
            where=where,
            fix="a section is one piece: delete or move the other outlines, or pick layers "
                f"with {option_hint('layers', 'NAME')}",
        )
    for i in range(n):
        if depth[i] >= 2:
            host = min((j for j in range(n) if depth[j] == depth[i] - 1
                        and polys[j].contains(polys[i])), key=lambda j: polys[j].area)
            c = polys[i].centroid
            raise InputError(
                f"island: loop ({names[i]}) near {_pt((c.x, c.y))} lies inside the hole "
                f"({names[host]})",
                where=where,
                fix="a solid piece inside a hole is not joined to the section: delete it, "
                    "or solve it as its own drawing",
            )
    return tops + [i for i in range(n) if depth[i] == 1]
