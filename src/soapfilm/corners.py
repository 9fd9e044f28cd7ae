"""Sharp re-entrant corners, and polygons that trace curves.

At a boundary point where the interior (material) angle ``alpha`` exceeds 180
degrees the Saint-Venant stress behaves like ``r^(pi/alpha - 1)``: singular.
J still converges; the peak stress there is not a property of the section but
of the (unmodelled) fillet radius.

A *corner* is where two different boundary pieces meet: two straight edges,
a straight edge and a curve, or two curves.  Its interior angle comes from
the exact tangents of the pieces at the junction (a curve's derivative, not a
chord), so a fillet of any radius meeting its neighbours tangentially is no
corner, and a vertex inside one curve never is.  A corner counts as sharp when
its interior angle exceeds ``180 + tol_deg`` (default 10 degrees).

A polygon (a point list, a polyline without bulges) has only straight edges,
so every vertex is a junction.  Where consecutive vertices turn the same way
by small angles they *trace* a curve (a fillet given as points): those
vertices are not reported as sharp corners but as a traced curve, with a
warning when the peak lies there (see :func:`traced_runs`).  A re-entrant
vertex between two straight edges that is neither a sharp corner nor in such
a run (a lone turn of 0.01 to 10 degrees) is a *weak corner* all the same:
:func:`traced_runs` returns it as a run of one vertex, so the peak rule
treats it as it treats the points of a concave traced curve.

References
----------
.. [1] M. L. Williams, "Stress singularities resulting from various boundary
   conditions in angular corners of plates in extension", J. Appl. Mech. 19
   (1952) 526-528 (the r^(pi/alpha - 1) corner behaviour; the same exponent
   holds for the Laplace problem of torsion).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .geometry.edges import junction_corners
from .profile import Profile

__all__ = ["Corner", "TracedRun", "reentrant_corners", "traced_runs",
           "DEFAULT_CORNER_TOL_DEG", "CORNER_ZONE_FRACTION", "TRACE_MAX_TURN_DEG",
           "WEAK_CORNER_MIN_TURN_DEG"]

#: Interior angles above 180 + this many degrees count as sharp re-entrant corners.
DEFAULT_CORNER_TOL_DEG = 10.0

#: The peak reported for a section with sharp corners is the largest at least
#: this fraction of the section's diameter (largest distance between two outline
#: points, :attr:`soapfilm.profile.Profile.diameter`) away from them.
CORNER_ZONE_FRACTION = 0.025

#: Polygon vertices turning by at most this much, next to others turning the same
#: way, trace a curve (more than 30 degrees a point is no longer a curve drawn in points).
TRACE_MAX_TURN_DEG = 30.0

#: A lone re-entrant polygon vertex turning by more than this (and not more than
#: the sharp-corner tolerance) is a weak corner.  The stress there grows like
#: ``r^-lambda``, ``lambda = turn / (180 + turn)``; a turn of at most 0.01 degree
#: (``lambda <= 5.6e-5``) raises the value read at the vertex by less than 3.9e-5
#: per halving of the elements and by less than 8.1e-4 over every mesh the adaptive
#: loop can make (elements down to 1e-6 of the size): below the default accuracy,
#: so such a vertex is read as a point of a straight edge (DEVELOPERS.md, "Corners").
WEAK_CORNER_MIN_TURN_DEG = 0.01


@dataclass(frozen=True)
class Corner:
    """A sharp re-entrant corner: position and interior (material) angle in degrees."""

    x: float
    y: float
    angle: float
    loop: int  # 0 outer, k hole k

    def describe(self, units: str) -> str:
        return f"({self.x:.5g}, {self.y:.5g}) {units}, interior angle {self.angle:.1f} deg"


@dataclass(frozen=True)
class TracedRun:
    """Consecutive polygon vertices that trace a curve.

    ``xy`` the vertices (k, 2); ``turn_deg`` their turns (left positive: a
    negative turn is concave, material outside the curve); ``radius`` the mean
    radius of the circles through consecutive vertex triples; ``chord`` the
    shorter adjacent edge length of each vertex.  A run of one vertex is a
    lone weak re-entrant corner (:attr:`lone`), no curve.
    """

    loop: int
    xy: np.ndarray
    turn_deg: np.ndarray
    radius: float
    chord: np.ndarray
    index: np.ndarray  # vertex indices in the loop
    step_deg: float = 0.0  # turn per point inside the run


    @property
    def concave(self) -> bool:
        return bool(np.mean(self.turn_deg) < 0)

    @property
    def lone(self) -> bool:
        """A single weak re-entrant vertex, not a curve traced by points."""
        return len(self.xy) == 1

    @property
    def exponent(self) -> float:
        """``lambda`` of the stress ``~ r^-lambda`` at the run's strongest re-entrant point.

        ``1 - pi/alpha`` for the interior angle ``alpha = 180 + turn`` (Williams
        1952); 0 for a convex run (no singularity).
        """
        turn = float(np.max(-self.turn_deg))
        return turn / (180.0 + turn) if turn > 0 else 0.0

    @property
    def points_per_quarter(self) -> float:
        step = self.step_deg or float(np.mean(np.abs(self.turn_deg)))
        return 90.0 / max(step, 1e-12)


def traced_runs(profile: Profile, max_turn_deg: float = TRACE_MAX_TURN_DEG,
                corner_tol_deg: float = DEFAULT_CORNER_TOL_DEG) -> list[TracedRun]:
    """Runs of straight-edge polygon vertices that trace a curve, and lone weak corners.

    A vertex between two straight edges belongs to a run when it turns by
    more than 0.5 and at most ``max_turn_deg`` degrees and a neighbouring
    vertex turns the same way within that range, with adjacent edges no more
    than three times longer than each other (points along one smooth curve).

    Every other vertex between two straight edges that turns re-entrant by
    more than :data:`WEAK_CORNER_MIN_TURN_DEG` and at most ``corner_tol_deg``
    (interior angle over 180 and not a sharp corner) is a run of one vertex:
    a weak corner of the polygon, singular like a concave run's points.
    """
    runs = []
    for k, (loop, tags) in enumerate(zip(profile.loops, profile.edge_curves, strict=True)):
        n = len(loop)
        straight = (tags < 0) & (np.roll(tags, 1) < 0)
        d_in = loop - np.roll(loop, 1, axis=0)
        d_out = np.roll(loop, -1, axis=0) - loop
        l_in, l_out = np.hypot(*d_in.T), np.hypot(*d_out.T)
        turn = np.degrees(np.arctan2(d_in[:, 0] * d_out[:, 1] - d_in[:, 1] * d_out[:, 0],
                                     np.einsum("ij,ij->i", d_in, d_out)))
        small = straight & (np.abs(turn) > 0.5) & (np.abs(turn) <= max_turn_deg) \
            & (np.maximum(l_in, l_out) <= 3.0 * np.minimum(l_in, l_out))
        nxt = np.roll(np.arange(n), -1)
        pair = small & small[nxt] & (np.sign(turn) == np.sign(turn[nxt]))  # i and i+1 together
        # the end points of a traced curve meet its straight neighbours, which may be far
        # longer than its chords: there only the turn counts (half a chord's turn at a
        # tangent end), so an end vertex joins the run it continues
        ends = straight & (np.abs(turn) > 0.5) & (np.abs(turn) <= max_turn_deg)
        core = pair | np.roll(pair, 1)
        sign = np.sign(turn)
        after = ends & ~core & np.roll(core, 1) & (sign == np.roll(sign, 1))  # i - 1 in a run
        before = ends & ~core & np.roll(core, -1) & (sign == sign[nxt])  # i + 1 in a run
        pair = pair | before | np.roll(after, -1)  # link each end to its run (once, no chaining)
        member = pair | np.roll(pair, 1)
        lone = straight & ~member & (-turn > WEAK_CORNER_MIN_TURN_DEG) & (-turn <= corner_tol_deg)
        for i in np.flatnonzero(lone):
            runs.append(TracedRun(k, loop[[i]].copy(), turn[[i]].copy(), float("inf"),
                                  np.array([min(l_in[i], l_out[i])]), np.array([i]),
                                  float(abs(turn[i]))))
        if not member.any():
            continue
        # split the members into consecutive runs (cyclically)
        link = pair  # i linked to i + 1
        starts = np.flatnonzero(member & ~np.roll(link, 1))
        if not len(starts):  # the whole loop traces one curve
            starts = np.array([0])
        for s in starts:
            idx = [int(s)]
            while link[idx[-1]] and len(idx) < n and nxt[idx[-1]] != s:
                idx.append(int(nxt[idx[-1]]))
            ii = np.array(idx)
            chord = np.minimum(l_in[ii], l_out[ii])
            # radius and turn from the inner vertices (an end vertex has one long straight
            # neighbour and half a chord's turn): radius of the circle through a vertex
            # and its neighbours, l / (2 sin(turn / 2))
            inner = ii[1:-1] if len(ii) > 2 else ii
            rad = 0.5 * (l_in[inner] + l_out[inner]) \
                / (2.0 * np.sin(np.radians(0.5 * np.abs(turn[inner]))))
            runs.append(TracedRun(k, loop[ii].copy(), turn[ii].copy(), float(np.mean(rad)), chord,
                                  ii, float(np.mean(np.abs(turn[inner])))))
    return runs


def reentrant_corners(profile: Profile, tol_deg: float = DEFAULT_CORNER_TOL_DEG) -> tuple[Corner, ...]:
    """Junctions of the outline with interior (material) angle above 180 + tol_deg.

    The outer loop runs counter-clockwise and holes clockwise, so the material
    is always on the left; a right turn of more than ``tol_deg`` is a sharp
    re-entrant corner.  Vertices inside one curve, and polygon vertices that
    trace a curve (:func:`traced_runs`), are not corners.
    """
    traced = [np.zeros(len(lp), dtype=bool) for lp in profile.loops]
    for run in traced_runs(profile, corner_tol_deg=tol_deg):
        if not run.lone:  # a lone weak corner is below tol_deg anyway
            traced[run.loop][run.index] = True
    found = []
    for k, i, interior in junction_corners(profile, tol_deg):
        if not traced[k][i]:
            x, y = profile.loops[k][i]
            found.append(Corner(float(x), float(y), float(interior), k))
    return tuple(found)
