"""The bar section as validated polygon loops.

A :class:`Profile` is one outer loop plus any number of hole loops, each an
``(n, 2)`` float64 array of vertices without the closing point.  The outer
loop runs counter-clockwise, holes clockwise.  Construction through
:meth:`Profile.from_loops` validates the loops with shapely and raises
:class:`~soapfilm.errors.GeometryError` with a one-line message otherwise.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import shapely
from shapely.geometry import LinearRing, Polygon

from .errors import GeometryError
from .geometry.curves import Curve
from .geometry.edges import tag_edges

__all__ = ["Profile", "LENGTH_UNITS"]

from .defaults import LENGTH_UNITS  # noqa: E402  (re-exported: its home is defaults)

#: Largest coordinate (absolute value) and smallest extent of a section, in its own unit:
#: the fourth powers (J, second moments) stay within floating-point range, 1e+-200
COORDINATE_LIMIT = 1e50
SMALLEST_SPAN = 1e-50


def _signed_area(xy: np.ndarray) -> float:
    x, y = xy[:, 0], xy[:, 1]
    return 0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(np.roll(x, -1), y))


def _diameter(xy: np.ndarray) -> float:
    """Largest distance between two of the points ``xy`` (see :attr:`Profile.diameter`)."""
    base = xy[0]
    scale = float(np.max(np.ptp(xy, axis=0)))
    if not scale > 0.0:
        return 0.0
    rel = (xy - base) / scale  # hull on coordinates of order one, whatever the unit
    hull = shapely.convex_hull(shapely.multipoints(rel) if len(rel) < 3 else shapely.linearrings(rel))
    if hull.geom_type != "Polygon":  # all points on a line: its ends
        ends = np.asarray(hull.coords) if hull.geom_type == "LineString" else rel[:1]
        return float(np.max(np.hypot(*(ends - ends[0]).T))) * scale
    v = np.asarray(hull.exterior.coords)[:-1]
    if _signed_area(v) < 0.0:
        v = v[::-1]
    h = len(v)
    e = np.roll(v, -1, axis=0) - v  # edge i from vertex i to i + 1, counter-clockwise
    # outward normal of edge i is (e_y, -e_x); its angle rises by the exterior turns
    ang = np.unwrap(np.arctan2(-e[:, 0], e[:, 1]))
    # vertex k supports the directions between the normals of edges k - 1 and k, so
    # the vertex farthest along -n_i is where ang_i + pi falls among the angles
    ext = np.concatenate([ang, ang + 2.0 * np.pi, ang + 4.0 * np.pi])
    k = np.searchsorted(ext, ang + np.pi) % h
    i = np.arange(h)
    best = 0.0
    for a in (i, (i + 1) % h):  # both ends of each edge
        for d in (-1, 0, 1):  # and the neighbours of its antipode: ties and rounding
            b = (k + d) % h
            best = max(best, float(np.max(np.hypot(*(v[a] - v[b]).T))))
    return best * scale


def _clean_loop(xy, label: str, tol: float, tags=None) -> tuple[np.ndarray, np.ndarray]:
    """Drop the closing point and repeated or nearly repeated vertices.

    ``tags`` (one curve index per edge, -1 straight) follow: the edge kept
    after a run of repeated vertices is the one leaving the last of them.
    """
    xy = np.asarray(xy, dtype=np.float64)
    if xy.ndim != 2 or xy.shape[1] != 2:
        raise GeometryError(f"{label} must be a list of (x, y) points, got shape {xy.shape}")
    if not np.all(np.isfinite(xy)):
        raise GeometryError(f"{label} has a non-finite coordinate", fix="give finite numbers")
    tags = np.full(len(xy), -1, dtype=np.int64) if tags is None else np.asarray(tags, np.int64)
    if len(tags) != len(xy):
        raise GeometryError(f"{label}: {len(tags)} edge tags for {len(xy)} points")
    step = np.hypot(*np.diff(xy, axis=0).T) if len(xy) > 1 else np.zeros(0)
    if np.all(step > tol):  # nothing repeated (the usual case): no loop over the points
        tg = tags.copy()
    else:
        keep = [0] if len(xy) else []
        out_tag = [tags[0]] if len(xy) else []
        for i in range(1, len(xy)):
            if np.hypot(*(xy[i] - xy[keep[-1]])) > tol:
                keep.append(i)
                out_tag.append(tags[i])
            else:
                out_tag[-1] = tags[i]
        xy = xy[keep]
        tg = np.asarray(out_tag, dtype=np.int64)
    while len(xy) > 1 and np.hypot(*(xy[-1] - xy[0])) <= tol:
        xy, tg = xy[:-1], tg[:-1]
    if len(xy) < 3:
        raise GeometryError(
            f"{label} has {len(xy)} distinct point(s); a loop needs at least 3",
            fix="add points or join it to the loop it belongs to",
        )
    return xy, tg


def _check_holes(clean: list, rings: list, labels: list, tol: float) -> None:
    """Holes strictly inside the outer loop, clear of it and of each other.

    ``O(n log n)`` in the loops and points: the tests are vectorised, the
    pairs of holes that could touch come from a search tree.  The first
    offending hole (in order) is named: not inside, touching the outside, or
    touching an earlier hole.
    """
    if len(clean) < 2:
        return
    outer = Polygon(clean[0])
    shapely.prepare(outer)
    holes = np.array([Polygon(xy) for xy in clean[1:]], dtype=object)
    hole_rings = np.array(rings[1:], dtype=object)
    bad = np.full(len(holes), 9, dtype=np.int64)  # per hole, the first failed test (9: none)
    other = np.full(len(holes), -1, dtype=np.int64)
    outside = ~shapely.contains(outer, holes)
    bad[outside] = 0
    touch = shapely.dwithin(rings[0], hole_rings, tol) & ~outside
    bad[touch] = 1
    left, right = shapely.STRtree(holes).query(holes, predicate="intersects")
    earlier = right < left  # (hole left, an earlier hole right) that intersect
    for k, j in zip(left[earlier], right[earlier], strict=True):
        if bad[k] > 2 or (bad[k] == 2 and j < other[k]):
            bad[k], other[k] = 2, j
    if np.all(bad == 9):
        return
    k = int(np.flatnonzero(bad < 9)[0])
    label = labels[k + 1]
    if bad[k] == 0:
        raise GeometryError(f"{label} is not inside the outer loop",
                            fix="holes must lie wholly inside the first loop, which is the outside")
    if bad[k] == 1:
        raise GeometryError(f"{label} touches the outer loop",
                            fix="leave material between a hole and the outside, or make it a notch")
    raise GeometryError(f"{label} overlaps or touches {labels[other[k] + 1]}",
                        fix="merge the two holes into one loop or separate them")


def _check_scale(xy: np.ndarray, span: float, label: str) -> None:
    """Refuse coordinates whose section the arithmetic cannot carry.

    J grows with the fourth power of the size (and the second moments with the
    fourth power of the coordinates), so a section beyond ``COORDINATE_LIMIT``
    from the origin or under ``SMALLEST_SPAN`` across would leave the range of
    floating-point numbers (about 1e-308 to 1e308) in the mesher or the solver.
    """
    far = float(np.max(np.abs(xy))) if len(xy) else 0.0
    if far > COORDINATE_LIMIT:
        raise GeometryError(
            f"a coordinate reaches {far:.3g}, beyond the {COORDINATE_LIMIT:.0e} this tool takes "
            "(J grows with the fourth power of the size and would overflow)",
            where=label, fix="check the numbers and their unit")
    if 0.0 < span < SMALLEST_SPAN:
        raise GeometryError(
            f"the section is {span:.3g} across, under the {SMALLEST_SPAN:.0e} this tool takes "
            "(J shrinks with the fourth power of the size and would underflow)",
            where=label, fix="check the numbers and their unit")


def _reversed_tags(tags: np.ndarray) -> np.ndarray:
    """Edge tags of a loop whose vertex order is reversed (edge j <- edge n-2-j)."""
    return np.roll(tags[::-1], -1)


def _where_invalid(geom) -> str:
    reason = shapely.is_valid_reason(geom)
    return reason.replace("[", " at (").replace("]", ")") if "[" in reason else reason


@dataclass(frozen=True)
class Profile:
    """A bar section: one outer loop and its holes, in one length unit.

    Attributes
    ----------
    outer : ndarray, shape (n, 2)
        Outer loop, counter-clockwise, not closed.
    holes : tuple of ndarray
        Hole loops, clockwise, not closed.
    units : str
        Length unit of all coordinates (a key of :data:`LENGTH_UNITS`).
    name : str
        Free text shown in reports.
    """

    outer: np.ndarray
    holes: tuple[np.ndarray, ...] = ()
    units: str = "mm"
    name: str = ""
    labels: tuple[str, ...] = field(default=(), compare=False, repr=False)
    #: exact curves the outline's curved edges lie on
    curves: tuple[Curve, ...] = field(default=(), compare=False, repr=False)
    #: per loop (outer first), the curve index of each edge (-1 straight); () = all straight
    edge_curves: tuple[np.ndarray, ...] = field(default=(), compare=False, repr=False)
    #: what the reader wants the user told (ignored entities, an implausible scale...):
    #: they become warnings of every result of this section
    notes: tuple[str, ...] = field(default=(), compare=False, repr=False)
    #: False when the length unit was assumed (no --units, no unit in the file)
    unit_stated: bool = field(default=True, compare=False, repr=False)

    def __post_init__(self):
        outer = np.ascontiguousarray(self.outer, dtype=np.float64)
        holes = tuple(np.ascontiguousarray(h, dtype=np.float64) for h in self.holes)
        outer.setflags(write=False)
        for h in holes:
            h.setflags(write=False)
        object.__setattr__(self, "outer", outer)
        object.__setattr__(self, "holes", holes)
        loops = (outer, *holes)
        if self.edge_curves:
            tags = tuple(np.ascontiguousarray(e, dtype=np.int64) for e in self.edge_curves)
        else:
            tags = tuple(np.full(len(lp), -1, dtype=np.int64) for lp in loops)
        if len(tags) != len(loops) or any(len(e) != len(lp) for e, lp in zip(tags, loops, strict=False)):
            raise GeometryError("edge_curves must give one curve index per edge of every loop")
        if any(len(e) and e.max() >= len(self.curves) for e in tags):
            raise GeometryError("an edge refers to a curve that is not in the list")
        for e in tags:
            e.setflags(write=False)
        object.__setattr__(self, "edge_curves", tags)
        object.__setattr__(self, "curves", tuple(self.curves))
        object.__setattr__(self, "notes", tuple(self.notes))
        if self.units not in LENGTH_UNITS:
            raise GeometryError(
                f"unknown length unit {self.units!r}",
                fix=f"use one of {', '.join(LENGTH_UNITS)}",
            )

    # ------------------------------------------------------------------ build
    @classmethod
    def from_loops(
        cls,
        loops: Sequence,
        units: str = "mm",
        name: str = "",
        labels: Sequence[str] | None = None,
        curves: Sequence[Curve] = (),
        edge_curves: Sequence | None = None,
    ) -> Profile:
        """Validate loops (first = outside, rest = holes) and build a Profile.

        Parameters
        ----------
        loops : sequence of array_like, each (n, 2)
            Vertex lists in any orientation; a closing point is optional.
        units : str
            Length unit.
        name : str
            Free text naming the section.
        labels : sequence of str, optional
            One label per loop used in error messages (e.g. ``"f.txt loop 2
            (lines 7-12)"``); defaults to ``"outer loop"``, ``"hole 1"`` ...
        curves : sequence of Curve, optional
            Exact curves that edges lie on.
        edge_curves : sequence of array_like, optional
            Per loop, the index into ``curves`` of each edge (vertex ``i`` to
            ``i + 1``), -1 for straight edges.  Default: all straight (a polygon).

        Raises
        ------
        GeometryError
            If a loop is too short, crosses itself, has zero area, or a hole
            is not strictly inside the outer loop or touches another hole.
        """
        from .resources import MAX_LOOPS, MAX_POINTS, check_count

        loops = list(loops)
        if not loops:
            raise GeometryError("no loops given", fix="give at least the outer boundary")
        check_count("loops (the outside and its holes)", len(loops), MAX_LOOPS,
                    labels[0] if labels else None,
                    "a bar section with that many holes is out of this tool's scope; "
                    "solve a representative part of it")
        check_count("points over all loops", sum(len(lp) for lp in loops), MAX_POINTS,
                    labels[0] if labels else None,
                    "give the outline with fewer points (curves as arcs in a DXF drawing or "
                    "a shape file)")
        if labels is None:
            labels = ["outer loop"] + [f"hole {k}" for k in range(1, len(loops))]
        labels = list(labels)
        allpts = np.concatenate([np.asarray(lp, dtype=float).reshape(-1, 2) for lp in loops])
        if len(allpts) == 0:
            raise GeometryError("no points", where=labels[0])
        if not np.all(np.isfinite(allpts)):
            raise GeometryError("non-finite coordinate", where=labels[0], fix="give finite numbers")
        span = float(np.max(np.ptp(allpts, axis=0))) if len(allpts) else 0.0
        _check_scale(allpts, span, labels[0])
        tol = 1e-9 * max(span, 1e-300)
        tag_in = list(edge_curves) if edge_curves is not None else [None] * len(loops)
        if len(tag_in) != len(loops):
            raise GeometryError("edge_curves must have one entry per loop")
        cleaned = [_clean_loop(lp, labels[i], tol, tag_in[i]) for i, lp in enumerate(loops)]
        clean = [c[0] for c in cleaned]
        tags = [c[1] for c in cleaned]
        rings = []
        for xy, label in zip(clean, labels, strict=True):
            ring = LinearRing(xy)
            if not ring.is_simple:
                poly = Polygon(xy)
                raise GeometryError(
                    f"{label} crosses itself ({_where_invalid(poly)})",
                    fix="order the points along the boundary without crossings",
                )
            if abs(_signed_area(xy)) <= 1e-12 * span * span:
                raise GeometryError(
                    f"{label} encloses zero area", fix="check that the points are not all on a line"
                )
            rings.append(ring)
        _check_holes(clean, rings, labels, tol)
        want = [1.0] + [-1.0] * (len(clean) - 1)  # outer counter-clockwise, holes clockwise
        for k in range(len(clean)):
            if _signed_area(clean[k]) * want[k] < 0:
                clean[k], tags[k] = clean[k][::-1], _reversed_tags(tags[k])
        return cls(clean[0], tuple(clean[1:]), units=units, name=name, labels=tuple(labels),
                   curves=tuple(curves), edge_curves=tuple(tags))

    @classmethod
    def from_polygon(cls, polygon: Polygon, units: str = "mm", name: str = "",
                     curves: Sequence[Curve] = (), tol: float | None = None,
                     sagitta: float | None = None) -> Profile:
        """Build from a shapely Polygon (its exterior and interiors).

        With ``curves``, edges lying on one of them are tagged with it and
        their vertices snapped onto it (see :func:`soapfilm.geometry.tag_edges`;
        ``tol`` and ``sagitta`` default to 1e-9 and 1e-4 of the size).
        """
        if polygon.geom_type == "MultiPolygon":
            raise GeometryError(
                f"the section falls apart into {len(polygon.geoms)} separate pieces",
                fix="a bar section must be one connected region",
            )
        if polygon.is_empty:
            raise GeometryError("the section is empty", fix="check the dimensions")
        loops = [np.asarray(polygon.exterior.coords)[:-1]]
        loops += [np.asarray(r.coords)[:-1] for r in polygon.interiors]
        if not curves:
            return cls.from_loops(loops, units=units, name=name)
        x0, y0, x1, y1 = polygon.bounds
        span = max(x1 - x0, y1 - y0)
        tol = 1e-9 * span if tol is None else tol
        sagitta = 1e-4 * span if sagitta is None else sagitta
        tagged = [tag_edges(lp, curves, tol, sagitta) for lp in loops]
        return cls.from_loops([t[0] for t in tagged], units=units, name=name, curves=curves,
                              edge_curves=[t[1] for t in tagged])

    # ------------------------------------------------------------- properties
    @property
    def loops(self) -> tuple[np.ndarray, ...]:
        """All loops, outer first."""
        return (self.outer, *self.holes)

    @property
    def polygon(self) -> Polygon:
        """The section as a shapely Polygon."""
        return Polygon(self.outer, [h for h in self.holes])

    @property
    def hole_areas(self) -> np.ndarray:
        """Area enclosed by each hole loop (positive)."""
        return np.array([-_signed_area(h) for h in self.holes], dtype=np.float64)

    @property
    def area(self) -> float:
        """Net area of the section."""
        return _signed_area(self.outer) - float(np.sum(self.hole_areas))

    @property
    def size(self) -> float:
        """Largest extent of the bounding box."""
        return float(np.max(np.ptp(self.outer, axis=0)))

    @functools.cached_property
    def diameter(self) -> float:
        """Largest distance between two points of the outer loop (rotation-invariant size).

        The largest distance between two points of a section is that between
        two vertices of its convex hull (a distance is a convex function of
        either end), so it is found on the hull of the outer loop's vertices
        by rotating calipers: for each hull edge, the vertex farthest along
        its inward normal (searched on the sorted edge-normal angles), in
        ``O(h log h)`` for ``h`` hull vertices after the ``O(n log n)`` hull.
        Unlike :attr:`size` it does not change when the section turns.  It is
        exact for a polygon; a curve's vertices lie on the curve, so for a
        drawn arc it is short of the curve's true diameter only by the
        sagitta of the chords at the two far ends (under 1e-4 of the size
        at the readers' chords).

        References
        ----------
        .. [1] M. I. Shamos, "Computational Geometry", PhD thesis, Yale 1978
           (rotating calipers); A. M. Andrew, Inf. Process. Lett. 9 (1979)
           216-219 (monotone-chain hull).
        """
        return _diameter(self.outer)

    # -------------------------------------------------------- transformations
    def transformed(self, matrix, offset=(0.0, 0.0)) -> Profile:
        """Return the profile mapped by ``x -> matrix @ x + offset`` (curves too)."""
        m = np.asarray(matrix, dtype=float)
        off = np.asarray(offset, dtype=float)
        loops = [lp @ m.T + off for lp in self.loops]
        curves = tuple(c.moved(m, off) for c in self.curves)
        moved = Profile.from_loops(loops, units=self.units, name=self.name, curves=curves,
                                   edge_curves=self.edge_curves)
        return dataclasses.replace(moved, notes=self.notes, unit_stated=self.unit_stated)

    @property
    def is_polygon(self) -> bool:
        """True when no edge lies on a curve (a point list or a bulgeless polyline)."""
        return not any(np.any(e >= 0) for e in self.edge_curves)

    def translated(self, dx: float, dy: float) -> Profile:
        """Return the profile moved by (dx, dy)."""
        return self.transformed(np.eye(2), (dx, dy))

    def rotated(self, degrees: float) -> Profile:
        """Return the profile turned counter-clockwise about the origin."""
        c, s = math.cos(math.radians(degrees)), math.sin(math.radians(degrees))
        return self.transformed([[c, -s], [s, c]])

    def scaled(self, factor: float) -> Profile:
        """Return the profile enlarged by ``factor`` about the origin."""
        return self.transformed(np.eye(2) * factor)

    def with_units(self, units: str) -> Profile:
        """Return the same numbers tagged with another unit (no conversion)."""
        return dataclasses.replace(self, units=units)
