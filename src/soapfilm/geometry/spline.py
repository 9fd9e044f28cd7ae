"""B-spline boundary curves (a drawing's SPLINE), evaluated with ezdxf.

A :class:`SplineCurve` keeps the spline's plain numbers (degree, control
points, knots, weights) and one parameter range ``[t0, t1]``; points and
derivatives come from ezdxf's B-spline evaluator (:class:`ezdxf.math.BSpline`),
built on first use.  :func:`monotone_pieces` splits a spline where its
turning changes sense (inflection points, where the signed curvature
``x' y'' - y' x''`` changes sign) and at knots where the curve may have a
corner, so that every piece turns one way only, as :mod:`.curves` requires.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .curves import Curve

__all__ = ["SplineCurve", "monotone_pieces"]

#: Samples per knot span for splitting and for the first guess of a projection.
_SAMPLES_PER_SPAN = 32
#: Largest turn of the tangent between two projection samples (radians, 5 degrees).
_SAMPLE_TURN = np.radians(5.0)
#: Most halving rounds and most samples of a projection grid.
_MAX_SAMPLE_HALVINGS = 60
_MAX_SAMPLES = 200_000
#: Nearest samples whose chords are tried as a projection's first guess.
_NEIGHBOURS = 8


@dataclass(frozen=True)
class SplineCurve(Curve):
    """A planar (rational) B-spline restricted to the parameters ``[t0, t1]``.

    Parameters
    ----------
    degree : int
    control_points : tuple of (x, y)
    knots : tuple of float
        ``len(control_points) + degree + 1`` values from 0 (ezdxf's evaluator
        shifts and scales any other knot vector to start at 0).
    weights : tuple of float
        One per control point for a rational spline, else empty.
    t0, t1 : float
        The piece of the spline this curve stands for (``t0 < t1``).
    """

    degree: int
    control_points: tuple[tuple[float, float], ...]
    knots: tuple[float, ...]
    weights: tuple[float, ...] = ()
    t0: float = 0.0
    t1: float = 1.0
    _cache: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    def __post_init__(self):
        if len(self.knots) != len(self.control_points) + self.degree + 1 or self.knots[0] != 0:
            raise ValueError("a spline needs len(control_points) + degree + 1 knots from 0")

    @classmethod
    def from_bspline(cls, spline) -> SplineCurve:
        """The whole domain of an :class:`ezdxf.math.BSpline` (z dropped)."""
        knots = tuple(float(k) for k in spline.knots())
        order, count = spline.order, spline.count
        return cls(spline.degree, tuple((float(p[0]), float(p[1])) for p in spline.control_points),
                   knots, tuple(float(w) for w in spline.weights()),
                   knots[order - 1], knots[count])

    # evaluation -------------------------------------------------------------
    def _evaluator(self):
        ev = self._cache.get("evaluator")
        if ev is None:
            from ezdxf.math import BSpline

            spline = BSpline([(x, y, 0.0) for x, y in self.control_points], self.degree + 1,
                             self.knots, self.weights or None)
            ev = self._cache["evaluator"] = spline.evaluator
        return ev

    @property
    def domain(self) -> tuple[float, float]:
        """Parameter range over which the spline is defined."""
        return self.knots[self.degree], self.knots[len(self.control_points)]

    def _clamped(self, t) -> np.ndarray:
        lo, hi = self.domain
        return np.clip(np.atleast_1d(np.asarray(t, dtype=float)), lo, hi)

    def _derivatives(self, t, n: int) -> np.ndarray:
        """Point and derivatives up to ``n``: shape ``(n + 1, len(t), 2)``.

        Taken a hair inside ``[t0, t1]``: at a knot where the spline has a
        corner the evaluator gives the derivative of the span that follows,
        and the end of a piece must have its own piece's tangent.
        """
        hair = 1e-12 * (self.t1 - self.t0)
        t = np.clip(np.atleast_1d(np.asarray(t, dtype=float)), self.t0 + hair, self.t1 - hair)
        m = min(n, self.degree)
        rows = self._evaluator().derivatives(t.tolist(), m)
        out = np.zeros((n + 1, len(t), 2))
        if len(t):
            arr = np.array([[(v[0], v[1]) for v in row] for row in rows], dtype=float)
            out[: m + 1] = arr.transpose(1, 0, 2)
        return out

    def point(self, t) -> np.ndarray:
        t = self._clamped(t)
        pts = self._evaluator().points(t.tolist())
        return np.array([(p[0], p[1]) for p in pts], dtype=float).reshape(-1, 2)

    def derivative(self, t) -> np.ndarray:
        return self._derivatives(t, 1)[1]

    def second_derivative(self, t) -> np.ndarray:
        return self._derivatives(t, 2)[2]

    # projection -------------------------------------------------------------
    def _samples(self) -> tuple[np.ndarray, np.ndarray]:
        """Parameters and points of ``[t0, t1]`` whose polyline follows the curve closely.

        The knot spans are cut into ``_SAMPLES_PER_SPAN`` steps, then every step
        over which the tangent turns by more than ``_SAMPLE_TURN`` is halved: at
        the tip of a slender shape (a drawn ellipse of axis ratio 0.001 turns by
        180 degrees within a millionth of its length) the samples crowd in, so
        that a point near the curve is nearest to the right stretch of it.
        """
        got = self._cache.get("samples")
        if got is None:
            ts = _span_grid(self.knots, self.t0, self.t1, _SAMPLES_PER_SPAN)
            for _ in range(_MAX_SAMPLE_HALVINGS):
                d = self._derivatives(ts, 1)[1]
                d0, d1 = d[:-1], d[1:]
                turn = np.abs(np.arctan2(d0[:, 0] * d1[:, 1] - d0[:, 1] * d1[:, 0],
                                         np.einsum("ij,ij->i", d0, d1)))
                coarse = np.flatnonzero(turn > _SAMPLE_TURN)
                if not len(coarse) or len(ts) > _MAX_SAMPLES:
                    break
                ts = np.insert(ts, coarse + 1, 0.5 * (ts[coarse] + ts[coarse + 1]))
            got = self._cache["samples"] = (ts, self.point(ts))
        return got

    def project(self, xy) -> np.ndarray:
        """Parameters of the nearest points: nearest chord of the samples, then safeguarded Newton.

        The chord of the sample polyline nearest to each point (among the chords
        next to its nearest samples) gives the first guess and a bracket (that
        chord and its two neighbours); Newton on the foot-point condition stays
        inside the bracket.  A point close to one side of a thin part is thus
        never carried to the other side, however far apart the samples along it.
        """
        from scipy.spatial import cKDTree

        xy = np.atleast_2d(np.asarray(xy, dtype=float))
        if not len(xy):
            return np.zeros(0)
        ts, pts = self._samples()
        tree = self._cache.get("tree")
        if tree is None:
            tree = self._cache["tree"] = cKDTree(pts)
        k = min(_NEIGHBOURS, len(ts))
        _, idx = tree.query(xy, k=k)
        idx = np.asarray(idx).reshape(len(xy), k)
        last = len(ts) - 2  # chords are numbered 0 .. last
        seg = np.clip(np.concatenate([idx - 1, idx], axis=1), 0, last)
        a, b = pts[seg], pts[seg + 1]
        ab = b - a
        ab2 = np.einsum("ijk,ijk->ij", ab, ab)
        u = np.einsum("ijk,ijk->ij", xy[:, None, :] - a, ab) / np.where(ab2 > 0, ab2, 1.0)
        u = np.clip(np.where(ab2 > 0, u, 0.0), 0.0, 1.0)
        gap = np.hypot(*(a + u[..., None] * ab - xy[:, None, :]).transpose(2, 0, 1))
        rows = np.arange(len(xy))
        pick = np.argmin(gap, axis=1)
        s, u = seg[rows, pick], u[rows, pick]
        guess = ts[s] + u * (ts[s + 1] - ts[s])
        lo, hi = ts[np.maximum(s - 1, 0)], ts[np.minimum(s + 2, last + 1)]
        t = guess.copy()
        for _ in range(8):
            p, d1, d2 = self._derivatives(t, 2)
            c = p - xy
            f = np.einsum("ij,ij->i", c, d1)
            df = np.einsum("ij,ij->i", d1, d1) + np.einsum("ij,ij->i", c, d2)
            t = np.clip(t - np.where(df > 0, f / np.where(df > 0, df, 1.0), 0.0), lo, hi)
        d_new = np.hypot(*(self.point(t) - xy).T)
        d_old = np.hypot(*(self.point(guess) - xy).T)
        return np.where(d_new <= d_old, t, guess)

    def _polished(self, xy: np.ndarray, t: np.ndarray, steps: int = 4) -> np.ndarray:
        """Newton on the foot-point condition, point and derivatives in one evaluation."""
        for _ in range(steps):
            p, d1, d2 = self._derivatives(t, 2)
            c = p - xy
            f = np.einsum("ij,ij->i", c, d1)
            df = np.einsum("ij,ij->i", d1, d1) + np.einsum("ij,ij->i", c, d2)
            t = t - np.where(df > 0, f / np.where(df > 0, df, 1.0), 0.0)
        return t

    # transformations ----------------------------------------------------------
    def restricted(self, t0: float, t1: float) -> SplineCurve:
        """The same spline on another parameter range."""
        return SplineCurve(self.degree, self.control_points, self.knots, self.weights,
                           float(t0), float(t1))

    def moved(self, matrix, offset) -> Curve:
        """Control points mapped by ``x -> matrix @ x + offset`` (exact for any affine map)."""
        m = np.asarray(matrix, dtype=float)
        cp = np.asarray(self.control_points, dtype=float) @ m.T + np.asarray(offset, dtype=float)
        return SplineCurve(self.degree, tuple(map(tuple, cp.tolist())), self.knots,
                           self.weights, self.t0, self.t1)

    def __getstate__(self):  # the ezdxf evaluator does not pickle: drop the cache
        state = dict(self.__dict__)
        state["_cache"] = {}
        return state


def _span_grid(knots, t0: float, t1: float, per_span: int) -> np.ndarray:
    """Parameters of ``[t0, t1]``: the knots inside it, each span cut into ``per_span`` steps."""
    k = np.unique(np.asarray(knots, dtype=float))
    k = np.concatenate([[t0], k[(k > t0) & (k < t1)], [t1]])
    steps = np.linspace(0.0, 1.0, per_span, endpoint=False)
    return np.concatenate([(a + (b - a) * steps) for a, b in zip(k[:-1], k[1:], strict=True)] + [[t1]])


def monotone_pieces(curve: SplineCurve, size: float) -> list[SplineCurve] | None:
    """Split a spline into pieces whose tangent turns one way only.

    Splits are made at the inflection points (sign changes of the signed
    curvature, found on a dense grid and refined by bisection) and at interior
    knots of multiplicity ``>= degree``, where the tangent may jump.  Curvature
    below ``1e-9 / size`` counts as zero (a straight stretch needs no split).

    Returns
    -------
    list of SplineCurve, or None
        The pieces in parameter order; ``None`` when the spline is straight
        throughout (degree 1, or no curvature anywhere): its edges are lines.
    """
    if curve.degree < 2:
        return None
    cuts = [curve.t0]
    knots = np.asarray(curve.knots, dtype=float)
    inner = knots[(knots > curve.t0) & (knots < curve.t1)]
    values, counts = np.unique(inner, return_counts=True)
    corners = values[counts >= curve.degree]
    bounds = np.concatenate([[curve.t0], corners, [curve.t1]])
    straight = True
    for a, b in zip(bounds[:-1], bounds[1:], strict=True):
        ts = _span_grid(curve.knots, a, b, _SAMPLES_PER_SPAN)
        ts = ts[1:-1] if len(ts) > 2 else ts  # the signs just inside the span's ends
        sign = _turn_sign(curve, ts, size)
        straight &= not np.any(sign)
        nz = np.flatnonzero(sign)
        for i, j in zip(nz[:-1], nz[1:], strict=True):
            if sign[i] == sign[j]:
                continue
            if j == i + 1:
                cuts.append(_sign_change(curve, ts[i], ts[j], sign[i], size))
            else:  # a straight stretch between: cut in its middle
                cuts.append(0.5 * (ts[i + 1] + ts[j - 1]))
        if b < curve.t1:
            cuts.append(float(b))
    if straight:
        return None
    cuts.append(curve.t1)
    cuts = sorted(set(cuts))
    return [curve.restricted(a, b) for a, b in zip(cuts[:-1], cuts[1:], strict=True) if b > a]


def _turn_sign(curve: SplineCurve, t: np.ndarray, size: float) -> np.ndarray:
    """Sign of the curvature at ``t``: +1 left, -1 right, 0 (near) straight."""
    d = curve._derivatives(t, 2)
    d1, d2 = d[1], d[2]
    cross = d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0]
    speed = np.hypot(*d1.T)
    with np.errstate(divide="ignore", invalid="ignore"):
        kappa = np.where(speed > 0, cross / speed**3, 0.0)
    return np.where(np.abs(kappa) * size > 1e-9, np.sign(kappa), 0.0).astype(int)


def _sign_change(curve: SplineCurve, a: float, b: float, sa: int, size: float) -> float:
    """Parameter of an inflection between ``a`` (curvature sign ``sa``) and ``b``."""
    for _ in range(60):
        m = 0.5 * (a + b)
        if not a < m < b:
            break
        s = _turn_sign(curve, np.array([m]), size)[0]
        if s == 0:
            return m
        if s == sa:
            a = m
        else:
            b = m
    return 0.5 * (a + b)
