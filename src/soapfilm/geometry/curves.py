"""Exact boundary curves: circles, ellipses, involutes, and any of them moved.

A :class:`Curve` is a smooth parametric curve ``C(t)``.  The section outline
keeps, for every polyline edge, the index of the curve it lies on (or -1 for a
straight edge), so the mesher can put boundary nodes back onto the curve when
it refines, and the bounds on J can be made for the drawn outline rather than
for the polygon that stands in for it.

Every curve here has a *monotone turning* on any piece the outline uses: its
tangent direction turns one way only (no inflection).  A piece between two
points ``a`` and ``b`` whose tangent turns by less than 180 degrees then lies
inside the triangle of ``a``, ``b`` and the intersection ``T`` of the tangents
at ``a`` and ``b``; :mod:`soapfilm.fem.outline` builds the inner and outer
polygons of the certified bounds from that fact.  A curve with inflections
(a DXF spline) is split at them when it is read.

Parameters are in each curve's own measure: an angle in radians for circles
(polar angle) and ellipses (eccentric angle), the roll angle for involutes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = [
    "Curve",
    "Circle",
    "Ellipse",
    "Involute",
    "Moved",
    "edge_params",
    "unwrapped",
]

_TWO_PI = 2.0 * math.pi


class Curve:
    """A smooth parametric boundary curve (abstract).

    Subclasses implement :meth:`point`, :meth:`derivative` and
    :meth:`project`; ``period`` is the parameter period of a closed curve
    (``None`` for an open one).
    """

    period: float | None = None

    def point(self, t) -> np.ndarray:
        """Points ``C(t)``, shape ``(n, 2)`` for ``t`` of shape ``(n,)``."""
        raise NotImplementedError

    def derivative(self, t) -> np.ndarray:
        """Derivatives ``C'(t)``, shape ``(n, 2)``."""
        raise NotImplementedError

    def second_derivative(self, t) -> np.ndarray:
        """Second derivatives ``C''(t)``, shape ``(n, 2)`` (finite differences by default)."""
        t = np.asarray(t, dtype=float)
        h = 1e-5 * (1.0 + np.abs(t))
        return (self.derivative(t + h) - self.derivative(t - h)) / (2.0 * h)[:, None]

    def project(self, xy) -> np.ndarray:
        """Parameters of the points of the curve nearest to ``xy`` (``(n, 2)``)."""
        raise NotImplementedError

    def moved(self, matrix, offset) -> Curve:
        """The curve mapped by ``x -> matrix @ x + offset`` (a similarity: turn, mirror, scale)."""
        return Moved.of(self, matrix, offset)

    def distance(self, xy) -> np.ndarray:
        """Distance of each point of ``xy`` from the curve."""
        xy = np.atleast_2d(np.asarray(xy, dtype=float))
        return np.hypot(*(self.point(self.project(xy)) - xy).T)

    # Newton polish of the foot-point condition (C(t) - x) . C'(t) = 0
    def _polished(self, xy: np.ndarray, t: np.ndarray, steps: int = 4) -> np.ndarray:
        for _ in range(steps):
            c = self.point(t) - xy
            d1 = self.derivative(t)
            d2 = self.second_derivative(t)
            f = np.einsum("ij,ij->i", c, d1)
            df = np.einsum("ij,ij->i", d1, d1) + np.einsum("ij,ij->i", c, d2)
            step = np.where(df > 0, f / np.where(df > 0, df, 1.0), 0.0)
            t = t - step
        return t


def edge_params(curve: Curve, a, b) -> tuple[np.ndarray, np.ndarray]:
    """Parameters of the ends of edges ``a -> b`` (points ``(k, 2)``) on ``curve``.

    On a closed curve the end parameter is taken the shorter way round, so an
    edge across the seam spans a small interval, not most of the period.
    """
    ta = curve.project(a)
    tb = curve.project(b)
    if curve.period is not None:
        per = curve.period
        tb = ta + (tb - ta + 0.5 * per) % per - 0.5 * per
    return ta, tb


def unwrapped(curve: Curve, t: np.ndarray) -> np.ndarray:
    """Parameters along a run of points, made continuous across a closed curve's seam."""
    t = np.asarray(t, dtype=float)
    if curve.period is None or len(t) < 2:
        return t
    return np.unwrap(t, period=curve.period)


@dataclass(frozen=True)
class Circle(Curve):
    """Circle of centre ``(cx, cy)`` and radius ``r``; ``t`` the polar angle."""

    cx: float
    cy: float
    r: float
    period = _TWO_PI

    def point(self, t) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        return np.column_stack([self.cx + self.r * np.cos(t), self.cy + self.r * np.sin(t)])

    def derivative(self, t) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        return np.column_stack([-self.r * np.sin(t), self.r * np.cos(t)])

    def second_derivative(self, t) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        return np.column_stack([-self.r * np.cos(t), -self.r * np.sin(t)])

    def project(self, xy) -> np.ndarray:
        xy = np.atleast_2d(np.asarray(xy, dtype=float))
        return np.arctan2(xy[:, 1] - self.cy, xy[:, 0] - self.cx)

    def moved(self, matrix, offset) -> Curve:
        m = np.asarray(matrix, dtype=float)
        scale = math.sqrt(abs(np.linalg.det(m)))
        if not _is_similarity(m, scale):
            return Moved.of(self, matrix, offset)
        c = m @ np.array([self.cx, self.cy]) + np.asarray(offset, dtype=float)
        return Circle(float(c[0]), float(c[1]), self.r * scale)


@dataclass(frozen=True)
class Ellipse(Curve):
    """Ellipse of centre ``(cx, cy)``, semi-axes ``a`` (along ``angle``) and ``b``.

    ``t`` is the eccentric angle: ``C(t) = c + R(angle) (a cos t, b sin t)``.
    """

    cx: float
    cy: float
    a: float
    b: float
    angle: float = 0.0  # radians, direction of the a axis
    period = _TWO_PI

    def _rot(self):
        c, s = math.cos(self.angle), math.sin(self.angle)
        return np.array([[c, -s], [s, c]])

    def point(self, t) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        local = np.column_stack([self.a * np.cos(t), self.b * np.sin(t)])
        return local @ self._rot().T + np.array([self.cx, self.cy])

    def derivative(self, t) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        local = np.column_stack([-self.a * np.sin(t), self.b * np.cos(t)])
        return local @ self._rot().T

    def second_derivative(self, t) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        local = np.column_stack([-self.a * np.cos(t), -self.b * np.sin(t)])
        return local @ self._rot().T

    def project(self, xy) -> np.ndarray:
        """Eccentric angles of the nearest points, by the foot point's multiplier.

        In the ellipse's own frame, with ``A >= B`` the longer and shorter
        semi-axis and the point ``(x0, y0)`` reflected into the first
        quadrant, the nearest point is stationary for the Lagrangian of
        ``|p - x0|^2`` under ``x^2/A^2 + y^2/B^2 = 1``:
        ``x = A^2 x0 / (A^2 - B^2 + mu)``, ``y = B^2 y0 / mu`` with
        ``mu = lambda + B^2``, where ``mu`` solves
        ``F(mu) = (A x0 / (A^2 - B^2 + mu))^2 + (B y0 / mu)^2 = 1``.  For
        ``y0 > 0`` the nearest point is the root with ``mu > 0``; ``F``
        falls strictly there, from above 1 at ``mu = B y0`` to below 1 at
        ``mu = A r + B^2`` (``r = |(x0, y0)|``), so bisection on ``log mu``
        finds it to rounding whatever the axis ratio.  On the major axis
        (``y0 = 0``) the foot is ``x = A^2 x0 / (A^2 - B^2)`` off the axis while
        that is inside the ellipse, else the vertex.  Newton's method on the
        eccentric angle, used before, wandered off near the ends of a slender
        ellipse (axis ratio 1e-4: a node 6e-6 inside the flat was put 1.3e-4
        away, at the tip) and turned elements inside out.
        """
        xy = np.atleast_2d(np.asarray(xy, dtype=float))
        local = (xy - np.array([self.cx, self.cy])) @ self._rot()
        swap = self.b > self.a
        big, small = (self.b, self.a) if swap else (self.a, self.b)
        u, v = (local[:, 1], local[:, 0]) if swap else (local[:, 0], local[:, 1])
        x0, y0 = np.abs(u), np.abs(v)
        lo = np.maximum(small * y0, np.finfo(float).tiny)
        hi = big * np.hypot(x0, y0) + small * small
        gap = big * big - small * small
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            for _ in range(80):  # log-bisection: relative width 2^-80 of a range under 1e600
                mid = np.sqrt(lo) * np.sqrt(hi)
                f = (big * x0 / (gap + mid)) ** 2 + (small * y0 / mid) ** 2
                above = f > 1.0
                lo = np.where(above, mid, lo)
                hi = np.where(above, hi, mid)
            mu = np.sqrt(lo) * np.sqrt(hi)
            fx = np.where(y0 > 0, big * big * x0 / (gap + mu), np.nan)
            fy = np.where(y0 > 0, small * small * y0 / mu, np.nan)
            on_axis = ~(y0 > 0)
            if np.any(on_axis):
                xa = np.where(gap > 0, big * big * x0 / np.where(gap > 0, gap, 1.0), np.inf)
                inside = xa < big
                fx = np.where(on_axis, np.where(inside, xa, big), fx)
                fy = np.where(on_axis, np.where(inside, small * np.sqrt(
                    np.maximum(0.0, 1.0 - (xa / big) ** 2)), 0.0), fy)
        fx = np.copysign(fx, u)
        fy = np.copysign(fy, v)
        if swap:
            fx, fy = fy, fx
        return np.arctan2(fy / self.b, fx / self.a)

    def moved(self, matrix, offset) -> Curve:
        m = np.asarray(matrix, dtype=float)
        scale = math.sqrt(abs(np.linalg.det(m)))
        if not _is_similarity(m, scale) or np.linalg.det(m) < 0:
            return Moved.of(self, matrix, offset)
        c = m @ np.array([self.cx, self.cy]) + np.asarray(offset, dtype=float)
        turn = math.atan2(m[1, 0], m[0, 0])
        return Ellipse(float(c[0]), float(c[1]), self.a * scale, self.b * scale, self.angle + turn)


@dataclass(frozen=True)
class Involute(Curve):
    """Involute of the circle of radius ``rb`` about ``(cx, cy)``.

    It leaves the base circle at polar angle ``start`` and unwinds
    counter-clockwise (``sense = +1``) or clockwise (``sense = -1``); ``t``
    is the roll angle (``t >= 0``), the point at radius ``rb sqrt(1 + t^2)``::

        C(t) = c + rb [cos(start + s t) + t sin(start + s t) ... ]

    written out in :meth:`point`.
    """

    cx: float
    cy: float
    rb: float
    start: float
    sense: int = 1

    def point(self, t) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        s = self.sense
        ang = self.start + s * t
        # position = rb * (radial(ang) - s * t * tangent(ang)) rolled off the base circle
        x = self.cx + self.rb * (np.cos(ang) + t * np.sin(ang) * s)
        y = self.cy + self.rb * (np.sin(ang) - t * np.cos(ang) * s)
        return np.column_stack([x, y])

    def derivative(self, t) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        s = self.sense
        ang = self.start + s * t
        # d/dt: rb * t * (cos ang, sin ang) (s^2 = 1)
        return np.column_stack([self.rb * t * np.cos(ang), self.rb * t * np.sin(ang)])

    def second_derivative(self, t) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        s = self.sense
        ang = self.start + s * t
        return self.rb * np.column_stack([np.cos(ang) - s * t * np.sin(ang),
                                          np.sin(ang) + s * t * np.cos(ang)])

    def project(self, xy) -> np.ndarray:
        xy = np.atleast_2d(np.asarray(xy, dtype=float))
        r = np.hypot(xy[:, 0] - self.cx, xy[:, 1] - self.cy)
        t = np.sqrt(np.maximum((r / self.rb) ** 2 - 1.0, 0.0))
        return np.maximum(self._polished(xy, t), 0.0)

    def moved(self, matrix, offset) -> Curve:
        m = np.asarray(matrix, dtype=float)
        det = float(np.linalg.det(m))
        scale = math.sqrt(abs(det))
        if not _is_similarity(m, scale):
            return Moved.of(self, matrix, offset)
        c = m @ np.array([self.cx, self.cy]) + np.asarray(offset, dtype=float)
        if det > 0:
            turn = math.atan2(m[1, 0], m[0, 0])
            return Involute(float(c[0]), float(c[1]), self.rb * scale, self.start + turn, self.sense)
        # a mirror: the start direction is mirrored and the sense reverses
        d = m @ np.array([math.cos(self.start), math.sin(self.start)])
        return Involute(float(c[0]), float(c[1]), self.rb * scale, math.atan2(d[1], d[0]),
                        -self.sense)


@dataclass(frozen=True)
class Moved(Curve):
    """Any curve mapped by a similarity ``x -> matrix @ x + offset``."""

    base: Curve
    matrix: tuple[tuple[float, float], tuple[float, float]]
    offset: tuple[float, float]

    @classmethod
    def of(cls, base: Curve, matrix, offset) -> Curve:
        m = np.asarray(matrix, dtype=float)
        off = np.asarray(offset, dtype=float)
        if isinstance(base, Moved):  # compose instead of nesting
            bm = np.asarray(base.matrix)
            m, off, base = m @ bm, m @ np.asarray(base.offset) + off, base.base
        scale = math.sqrt(abs(np.linalg.det(m)))
        if not _is_similarity(m, scale):
            raise ValueError("curves can only be turned, mirrored, moved and scaled uniformly")
        return cls(base, (tuple(m[0]), tuple(m[1])), (float(off[0]), float(off[1])))

    @property
    def period(self):  # type: ignore[override]
        return self.base.period

    def _m(self):
        return np.asarray(self.matrix, dtype=float)

    def point(self, t) -> np.ndarray:
        return self.base.point(t) @ self._m().T + np.asarray(self.offset)

    def derivative(self, t) -> np.ndarray:
        return self.base.derivative(t) @ self._m().T

    def second_derivative(self, t) -> np.ndarray:
        return self.base.second_derivative(t) @ self._m().T

    def project(self, xy) -> np.ndarray:
        # a similarity keeps nearest points nearest
        xy = np.atleast_2d(np.asarray(xy, dtype=float))
        inv = np.linalg.inv(self._m())
        return self.base.project((xy - np.asarray(self.offset)) @ inv.T)

    def moved(self, matrix, offset) -> Curve:
        return Moved.of(self, matrix, offset)


def _is_similarity(m: np.ndarray, scale: float) -> bool:
    if not scale > 0:
        return False
    q = m / scale
    return bool(np.allclose(q.T @ q, np.eye(2), rtol=0, atol=1e-12))
