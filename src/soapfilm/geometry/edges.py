"""Which curve each outline edge lies on: tagging, snapping, and resampling.

An outline loop is an ``(n, 2)`` vertex array plus an ``(n,)`` integer array
``edge_curve``: entry ``i`` is the index (into the profile's curve list) of
the curve that edge ``i`` (vertex ``i`` to vertex ``i + 1``) lies on, or -1 for
a straight edge.  Vertices of curved edges lie on their curve.

* :func:`tag_edges` finds, for a polyline made by flattening known curves and
  then combining shapes (shapely unions, differences, offsets), which edges lie
  on which curve, and snaps the vertices exactly onto them.
* :func:`find_arcs` finds circular arcs of known radii in such a polyline (the
  fillets that offsetting makes: their centres are not known beforehand).
* :func:`curve_runs` and :func:`resampled_loop` give the mesher a coarse
  starting polygon with every vertex on the exact curve.
* :func:`junction_corners` finds the sharp re-entrant corners of a tagged
  outline: only where two different pieces meet, angles from exact tangents.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from .curves import Circle, Curve, unwrapped

__all__ = ["tag_edges", "find_arcs", "curve_runs", "resampled_loop",
           "junction_corners", "MAX_TURN_DEG"]

#: Largest turn of the tangent over one edge of the starting polygon of a curve.
MAX_TURN_DEG = 10.0


def _closest_curve(xy: np.ndarray, curves: Sequence[Curve]) -> tuple[np.ndarray, np.ndarray]:
    """Distance of each vertex to each curve, ``(len(curves), n)``, and foot parameters."""
    dist = np.empty((len(curves), len(xy)))
    params = np.empty((len(curves), len(xy)))
    for c, cv in enumerate(curves):
        t = cv.project(xy)
        params[c] = t
        dist[c] = np.hypot(*(cv.point(t) - xy).T)
    return dist, params


def tag_edges(xy: np.ndarray, curves: Sequence[Curve], tol: float,
              sagitta: float) -> tuple[np.ndarray, np.ndarray]:
    """Tag the edges of one closed loop with the curve they lie on, and snap.

    Parameters
    ----------
    xy : ndarray (n, 2)
        Loop vertices (not closed).
    curves : sequence of Curve
        Candidates.
    tol : float
        A vertex within ``tol`` of a curve is on it (flattening puts vertices
        on the curve up to rounding; a crossing point made by a boolean
        operation of flattened shapes is within the flattening's sagitta).
    sagitta : float
        Largest distance of an edge's midpoint from the curve it lies on
        (the chord tolerance of the flattening, with margin).  A straight edge
        whose ends happen to lie on a circle (a flat across a shaft) has its
        midpoint far from it and stays straight.

    Returns
    -------
    xy : ndarray (n, 2)
        Vertices, those on curved edges moved exactly onto their curve (a
        vertex between two different curves onto both: their intersection).
    edge_curve : ndarray (n,) int
    """
    xy = np.asarray(xy, dtype=float)
    n = len(xy)
    tags = np.full(n, -1, dtype=np.int64)
    if not curves or n < 3:
        return xy, tags
    nxt = np.roll(np.arange(n), -1)
    dist, _ = _closest_curve(xy, curves)
    mid = 0.5 * (xy + xy[nxt])
    mdist, mpar = _closest_curve(mid, curves)
    vtol = max(tol, sagitta)
    ok = (dist <= vtol) & (dist[:, nxt] <= vtol) & (mdist <= sagitta + tol)
    # a chord lies on the concave side of its curve; a short straight edge that
    # leaves a curve along its tangent (a flank after its root fillet) lies on the
    # convex side, as close to the curve as a chord would be: keep it straight
    for c in np.flatnonzero(ok.any(axis=1)):
        ok[c] &= _concave_side(curves[c], mid, mpar[c]) >= -tol
    score = np.where(ok, mdist + dist + dist[:, nxt], np.inf)
    best = np.argmin(score, axis=0)
    has = np.isfinite(score[best, np.arange(n)])
    tags[has] = best[has]
    return _snapped(xy, tags, curves), tags


def _concave_side(cv: Curve, xy: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Signed offset of ``xy`` from its foot ``C(t)``: positive towards the centre of curvature."""
    d1 = cv.derivative(t)
    d2 = cv.second_derivative(t)
    along = np.einsum("ij,ij->i", d2, d1) / np.maximum(np.einsum("ij,ij->i", d1, d1), 1e-300)
    normal = d2 - along[:, None] * d1  # points to the concave side (zero where straight)
    nrm = np.hypot(*normal.T)
    off = np.einsum("ij,ij->i", xy - cv.point(t), normal)
    return np.where(nrm > 0, off / np.where(nrm > 0, nrm, 1.0), 0.0)


def _snapped(xy: np.ndarray, tags: np.ndarray, curves: Sequence[Curve]) -> np.ndarray:
    """Move vertices of curved edges onto their curves (junctions onto both)."""
    n = len(xy)
    out = xy.copy()
    prev = np.roll(tags, 1)  # curve of the edge arriving at vertex i
    inside = (prev == tags) & (tags >= 0)  # vertices within one curve: projected together
    for c in np.unique(tags[inside]):
        sel = inside & (tags == c)
        cv = curves[c]
        out[sel] = cv.point(cv.project(xy[sel]))
    for i in np.flatnonzero(~inside):
        a, b = int(prev[i]), int(tags[i])
        if a < 0 and b < 0:
            continue
        if a >= 0 and b >= 0:
            out[i] = _intersection(curves[a], curves[b], xy[i])
        else:
            # one curve and one straight edge: slide along the straight edge onto the curve
            cv = curves[a if a >= 0 else b]
            other = xy[(i + 1) % n] if a >= 0 else xy[i - 1]
            out[i] = _line_meets(cv, other, xy[i])
    return out


def _intersection(c1: Curve, c2: Curve, guess: np.ndarray) -> np.ndarray:
    """Intersection of two curves near ``guess`` (Newton in both parameters)."""
    g = guess[None, :]
    scale = 1.0 + np.abs(guess).max()
    t1, t2 = c1.project(g), c2.project(g)
    r = (c1.point(t1) - c2.point(t2))[0]
    for _ in range(12):
        if np.hypot(*r) < 1e-13 * scale:
            break  # on both already (a tangent junction built exactly needs no Newton)
        j = np.column_stack([c1.derivative(t1)[0], -c2.derivative(t2)[0]])
        if abs(np.linalg.det(j)) < 1e-14 * (np.abs(j).max() ** 2 + 1e-300):
            break  # tangent curves: the guess projected is as good as it gets
        d = np.linalg.solve(j, r)
        r_new = (c1.point(t1 - d[0]) - c2.point(t2 - d[1]))[0]
        if np.hypot(*r_new) >= np.hypot(*r):
            break  # no progress (nearly tangent curves): keep the better point
        t1, t2, r = t1 - d[0], t2 - d[1], r_new
    p = 0.5 * (c1.point(t1)[0] + c2.point(t2)[0])
    if np.hypot(*(p - guess)) > 1e3 * (np.hypot(*(c1.point(c1.project(g))[0] - guess)) + 1e-12):
        return c1.point(c1.project(g))[0]  # Newton went astray: fall back to the projection
    return p


def _line_meets(cv: Curve, anchor: np.ndarray, guess: np.ndarray) -> np.ndarray:
    """Point of ``cv`` on the line from ``anchor`` through ``guess``, near ``guess``."""
    d = guess - anchor
    nrm = np.hypot(*d)
    if nrm == 0:
        return guess
    d = d / nrm
    scale = 1.0 + np.abs(guess).max()
    t = cv.project(guess[None, :])

    def off_line(t):
        p = cv.point(t)[0]
        return (p[0] - anchor[0]) * d[1] - (p[1] - anchor[1]) * d[0]

    f = off_line(t)
    for _ in range(12):
        if abs(f) < 1e-13 * scale:
            break  # on both already (a tangent junction built exactly needs no Newton)
        dp = cv.derivative(t)[0]
        df = dp[0] * d[1] - dp[1] * d[0]
        if abs(df) <= 1e-8 * np.hypot(*dp):
            break  # the line touches the curve here: the projection is the answer
        t_new = t - f / df
        f_new = off_line(t_new)
        if abs(f_new) >= abs(f):
            break  # no progress (near tangency): keep the better point
        t, f = t_new, f_new
    p = cv.point(t)[0]
    if np.hypot(*(p - guess)) > 0.5 * nrm:
        return cv.point(cv.project(guess[None, :]))[0]
    return p


def find_arcs(xy: np.ndarray, radii: Sequence[float], tol: float) -> list[tuple[Circle, np.ndarray]]:
    """Circular arcs of the given radii traced by consecutive vertices.

    Every vertex triple ``(i-1, i, i+1)`` whose circumscribed circle has one of
    the ``radii`` (to ``tol``) marks edges ``i-1`` and ``i`` as lying on that
    circle; neighbouring triples on the same circle form one arc.

    Returns
    -------
    list of (Circle, edges)
        The circle and the indices of the loop's edges on it.
    """
    xy = np.asarray(xy, dtype=float)
    n = len(xy)
    if n < 3 or not len(radii):
        return []
    a, b, c = np.roll(xy, 1, axis=0), xy, np.roll(xy, -1, axis=0)
    # circumcentre of (a, b, c)
    bx, by = b[:, 0] - a[:, 0], b[:, 1] - a[:, 1]
    cx, cy = c[:, 0] - a[:, 0], c[:, 1] - a[:, 1]
    d = 2.0 * (bx * cy - by * cx)
    with np.errstate(divide="ignore", invalid="ignore"):
        ux = (cy * (bx * bx + by * by) - by * (cx * cx + cy * cy)) / d
        uy = (bx * (cx * cx + cy * cy) - cx * (bx * bx + by * by)) / d
    rad = np.hypot(ux, uy)
    centre = np.column_stack([a[:, 0] + ux, a[:, 1] + uy])
    found: list[tuple[Circle, np.ndarray]] = []
    claimed = np.zeros(n, dtype=bool)
    for r in sorted(set(float(x) for x in radii if x > 0)):
        hit = np.isfinite(rad) & (np.abs(rad - r) <= tol) & ~claimed
        for i in np.flatnonzero(hit):
            if claimed[i]:
                continue
            ctr = centre[i]
            # every vertex on this circle: distance to the centre equals r
            on = np.abs(np.hypot(*(xy - ctr).T) - r) <= tol
            edges = np.flatnonzero(on & np.roll(on, -1))
            # keep only the edges of the run through vertex i (a circle may pass
            # through unrelated vertices elsewhere)
            run = _run_through(edges, (i - 1) % n, n) | _run_through(edges, i, n)
            if not run:
                continue
            sel = np.array(sorted(run))
            claimed[(sel + 1) % n] = True
            claimed[sel] = True
            found.append((Circle(float(ctr[0]), float(ctr[1]), r), sel))
    return found


def _run_through(edges: np.ndarray, start: int, n: int) -> set[int]:
    """Consecutive edges (cyclically) from the set ``edges`` that contain ``start``."""
    s = set(int(e) for e in edges)
    if start not in s:
        return set()
    run = {start}
    k = (start + 1) % n
    while k in s and k not in run:
        run.add(k)
        k = (k + 1) % n
    k = (start - 1) % n
    while k in s and k not in run:
        run.add(k)
        k = (k - 1) % n
    return run


def curve_runs(edge_curve: np.ndarray) -> list[tuple[int, int, int]]:
    """Maximal runs of consecutive edges on one curve: ``(first_edge, count, curve)``.

    A loop that is wholly one curve (a circle) is one run starting at edge 0.
    """
    n = len(edge_curve)
    if n == 0:
        return []
    ec = np.asarray(edge_curve)
    if np.all(ec == ec[0]):
        return [(0, n, int(ec[0]))] if ec[0] >= 0 else []
    starts = np.flatnonzero(ec != np.roll(ec, 1))
    runs = []
    for j, s in enumerate(starts):
        e = starts[(j + 1) % len(starts)]
        count = (e - s) % n
        if ec[s] >= 0:
            runs.append((int(s), int(count), int(ec[s])))
    return runs


def resampled_loop(xy: np.ndarray, edge_curve: np.ndarray, curves: Sequence[Curve],
                   h: float | np.ndarray, max_turn_deg: float = MAX_TURN_DEG
                   ) -> tuple[np.ndarray, np.ndarray]:
    """A coarse starting polygon of one loop: curved runs resampled on their curve.

    Straight edges keep their vertices.  Each run of edges on one curve is
    replaced by points on the curve spaced so that no edge is longer than
    ``h`` (the mesh size, a number or one per vertex) nor turns the tangent by
    more than ``max_turn_deg``; the run's end points stay where they are.

    Returns
    -------
    xy : ndarray (m, 2)
    edge_curve : ndarray (m,)
    """
    xy = np.asarray(xy, dtype=float)
    ec = np.asarray(edge_curve, dtype=np.int64)
    n = len(xy)
    runs = curve_runs(ec)
    if not runs:
        return xy, ec
    hv = np.broadcast_to(np.asarray(h, dtype=float), (n,))
    max_turn = math.radians(max_turn_deg)
    in_run = np.zeros(n, dtype=bool)  # vertices strictly inside a run (dropped)
    pieces: dict[int, tuple[np.ndarray, int]] = {}  # run start vertex -> new inner points
    for s, count, c in runs:
        cv = curves[c]
        idx = (s + np.arange(count + 1)) % n  # the run's vertices, ends included
        closed = count == n
        tv = unwrapped(cv, cv.project(xy[idx]))
        if closed:  # a whole closed curve: end where it started
            tv[-1] = tv[0] + math.copysign(cv.period or 0.0, tv[-2] - tv[0])
        steps = np.diff(tv)
        if not (np.all(steps > 0) or np.all(steps < 0)):
            continue  # the run's points do not follow the curve in order: keep them as they are
        # fine parameter grid along the run for arc length and turning
        sub = 16
        # np.linspace(tv[k], tv[k + 1], sub, endpoint=False) for every k at once (the
        # same operations: j * ((b - a) / sub) + a); one call per vertex was 65 ms of a
        # keyed shaft's start
        frac = np.arange(sub, dtype=float)[None, :] * (np.diff(tv) / sub)[:, None]
        tf = np.concatenate([(frac + tv[:-1, None]).ravel(), tv[-1:]])
        tf, pf, d, turn = _fine_grid(cv, tf, max_turn)
        ds = np.hypot(*d.T)
        turn = np.concatenate([turn[:1], 0.5 * (turn[1:] + turn[:-1]), turn[-1:]]) \
            if len(turn) else np.zeros(len(ds))
        # the mesh size at each fine point, by where it lies between the run's vertices
        hf = np.interp(tf, tv, hv[idx]) if tv[-1] > tv[0] else \
            np.interp(-tf, -tv, hv[idx])
        step = np.maximum(ds / (0.5 * (hf[1:] + hf[:-1])), turn / max_turn)
        measure = np.concatenate([[0.0], np.cumsum(step)])
        m = max(1, math.ceil(measure[-1] - 1e-9))
        if closed:
            m = max(m, 8)
        tn = np.interp(np.linspace(0.0, measure[-1], m + 1), measure, tf)
        in_run[idx[1:-1]] = True
        pieces[int(s)] = (cv.point(tn[1:-1]), c)
    new_xy, new_ec = [], []
    for i in range(n):
        if in_run[i]:
            continue
        new_xy.append(xy[i:i + 1])
        new_ec.append([ec[i]])
        if i in pieces:
            pts, c = pieces[i]
            new_xy.append(pts)
            new_ec.append(np.full(len(pts), c))
    out, out_ec = np.vstack(new_xy), np.concatenate(new_ec).astype(np.int64)
    # a point repeated (curve points that round to the same numbers at a sharp tip) would
    # give the mesher a zero-length segment: drop it, its edge goes on from the first copy
    again = np.all(out == np.roll(out, 1, axis=0), axis=1)
    if np.any(again) and np.sum(~again) >= 3:
        keep = np.flatnonzero(~again)
        out_ec = out_ec[(np.r_[keep[1:], keep[0] + len(out)] - 1) % len(out)]
        out = out[keep]
    return out, out_ec


def _fine_grid(cv: Curve, tf: np.ndarray, max_turn: float, max_rounds: int = 60
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """A parameter grid on which no two neighbouring chords turn by more than ``max_turn / 4``.

    The grid starts uniform in the parameter; a curve whose turning is packed
    into a small stretch of its parameter (the ends of a slender ellipse: at
    axis ratio 1e-4 the tangent turns through 90 degrees within 1e-4 rad of the
    eccentric angle, a two-hundredth of a uniform step) shows it as one large
    turn between two chords.  The intervals on both sides of such a turn are
    halved until the turn is spread (each halving at least halves the part of
    a smooth turn one pair of chords carries), or their parameter step is at
    rounding level.  The turning is read from the chords' directions, not
    from the derivative, which vanishes where an involute leaves its base
    circle (its direction is then 0/0).

    Returns the grid, its points, its chords ``(n - 1, 2)`` and the turn
    between consecutive chords ``(n - 2,)``.
    """
    for rnd in range(max_rounds + 1):
        pf = cv.point(tf)
        d = np.diff(pf, axis=0)
        turn = np.abs(np.diff(np.unwrap(np.arctan2(d[:, 1], d[:, 0]))))
        if rnd == max_rounds:
            break
        wide = np.zeros(len(d), dtype=bool)
        sharp = turn > 0.25 * max_turn
        wide[:-1] |= sharp
        wide[1:] |= sharp
        dt = np.diff(tf)
        wide &= np.abs(dt) > 64.0 * np.finfo(float).eps * np.maximum(1.0, np.abs(tf[:-1]))
        if not np.any(wide):
            break
        tf = np.sort(np.concatenate([tf, tf[:-1][wide] + 0.5 * dt[wide]]))
        if dt[0] < 0:
            tf = tf[::-1]
    return tf, pf, d, turn


def _unit_tangents(cv: Curve, xy: np.ndarray, toward: np.ndarray) -> np.ndarray:
    """Unit tangents of ``cv`` at the feet of ``xy``, each pointing along ``toward``.

    Where the derivative vanishes (an involute at its base circle) the limit
    direction is taken from parameters a hair to either side.
    """
    t = cv.project(xy)
    d = cv.derivative(t)
    flat = np.hypot(*d.T) <= 1e-12 * (np.hypot(*cv.second_derivative(t).T) + 1e-300)
    if np.any(flat):
        h = 1e-7 * (1.0 + np.abs(t[flat]))
        plus, minus = cv.derivative(t[flat] + h), cv.derivative(t[flat] - h)
        tw = toward[flat]
        use_plus = (np.abs(np.einsum("ij,ij->i", plus, tw))
                    >= np.abs(np.einsum("ij,ij->i", minus, tw)))
        d[flat] = np.where(use_plus[:, None], plus, minus)
    d = np.where((np.einsum("ij,ij->i", d, toward) < 0)[:, None], -d, d)
    nrm = np.hypot(*d.T)
    tw_n = toward / np.maximum(np.hypot(*toward.T), 1e-300)[:, None]
    return np.where((nrm > 0)[:, None], d / np.where(nrm > 0, nrm, 1.0)[:, None], tw_n)


def _directions(xy: np.ndarray, tags: np.ndarray, chords: np.ndarray,
                curves: Sequence[Curve]) -> np.ndarray:
    """Unit directions at points ``xy``: the chord where ``tags`` < 0, else the curve's tangent."""
    out = chords / np.maximum(np.hypot(*chords.T), 1e-300)[:, None]
    for c in np.unique(tags[tags >= 0]):
        sel = tags == c
        out[sel] = _unit_tangents(curves[c], xy[sel], chords[sel])
    return out


def junction_corners(profile, tol_deg: float = 10.0) -> list[tuple[int, int, float]]:
    """Sharp re-entrant corners of a tagged outline, from the exact tangents.

    A corner can only sit where two different pieces meet: a vertex whose
    incoming and outgoing edges lie on different curves, or on a curve and a
    straight edge, or are both straight.  Vertices inside one curve (the
    flattening of a fillet or an arc) never count, however coarse the
    flattening.  The tangent of a curved edge at the vertex is the curve's
    derivative there, turned to run along the loop; a straight edge's is its
    direction.  The material is on the left of every loop (outer loop
    counter-clockwise, holes clockwise), so the interior angle is
    ``180 - left turn``.

    Parameters
    ----------
    profile : Profile
        Anything with ``loops``, ``edge_curves`` and ``curves``.
    tol_deg : float
        A corner is sharp when its interior angle exceeds ``180 + tol_deg``.

    Returns
    -------
    list of (loop, vertex, interior angle in degrees)
        ``loop`` 0 is the outer loop, ``k`` hole ``k``.
    """
    found: list[tuple[int, int, float]] = []
    curves = profile.curves
    for k, (xy, ec) in enumerate(zip(profile.loops, profile.edge_curves, strict=True)):
        ec = np.asarray(ec)
        prev = np.roll(ec, 1)
        idx = np.flatnonzero((ec != prev) | (ec < 0))  # junctions of two pieces
        if not len(idx):
            continue
        p = xy[idx]
        m = len(idx)  # incoming and outgoing directions together: one projection per curve
        uv = _directions(np.concatenate([p, p]), np.concatenate([prev[idx], ec[idx]]),
                         np.concatenate([p - xy[idx - 1], xy[(idx + 1) % len(xy)] - p]), curves)
        u, v = uv[:m], uv[m:]
        cross = u[:, 0] * v[:, 1] - u[:, 1] * v[:, 0]
        interior = 180.0 - np.degrees(np.arctan2(cross, np.einsum("ij,ij->i", u, v)))
        found += [(k, int(i), float(a)) for i, a in zip(idx, interior, strict=True)
                  if a > 180.0 + tol_deg]
    return found
