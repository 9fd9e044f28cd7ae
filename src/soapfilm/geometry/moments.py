"""Area, centroid and second moments of the drawn outline, curves included.

By Green's theorem every area integral of a polynomial becomes a boundary
integral::

    A    = 1/2 int (x dy - y dx)      int x dA = int x^2/2 dy
    int y dA = -int y^2/2 dx          int x^2 dA = int x^3/3 dy
    int y^2 dA = -int y^3/3 dx        int x y dA = int x^2 y/2 dy

taken round every loop with the material on the left (outer loop
counter-clockwise, holes clockwise).  Each edge is integrated along its own
piece: a straight edge exactly, a curved edge along its curve with 8-point
Gauss-Legendre quadrature over its parameter span.  The outline's curved
edges are short (a flattening with a small sagitta), so the rule is exact to
rounding for circles, ellipses, involutes and splines alike.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .curves import Curve, edge_params

__all__ = ["OutlineMoments", "outline_moments"]

_GX, _GW = np.polynomial.legendre.leggauss(8)


@dataclass(frozen=True)
class OutlineMoments:
    """Net area, centroid and second moments about the centroid of the drawn outline."""

    area: float
    centroid: tuple[float, float]
    ixx: float  # int (y - yc)^2 dA
    iyy: float  # int (x - xc)^2 dA
    ixy: float  # int (x - xc)(y - yc) dA

    @property
    def polar(self) -> float:
        return self.ixx + self.iyy


def _edge_points(loop: np.ndarray, tags: np.ndarray, curves: tuple[Curve, ...]):
    """Quadrature points ``(E, q, 2)``, derivatives ``(E, q, 2)`` and weights ``(E, q)``."""
    a = loop
    b = np.roll(loop, -1, axis=0)
    u = 0.5 * (_GX + 1.0)  # on [0, 1]
    w = np.broadcast_to(0.5 * _GW, (len(a), len(u))).copy()
    pts = a[:, None, :] + u[None, :, None] * (b - a)[:, None, :]
    der = np.broadcast_to((b - a)[:, None, :], pts.shape).copy()
    for c in np.unique(tags[tags >= 0]):
        sel = np.flatnonzero(tags == c)
        cv = curves[c]
        ta, tb = edge_params(cv, a[sel], b[sel])
        tq = ta[:, None] + u[None, :] * (tb - ta)[:, None]
        pts[sel] = cv.point(tq.ravel()).reshape(len(sel), len(u), 2)
        der[sel] = cv.derivative(tq.ravel()).reshape(len(sel), len(u), 2) * (tb - ta)[:, None, None]
    return pts, der, w


def outline_moments(profile) -> OutlineMoments:
    """Moments of ``profile``'s drawn outline (its curves where edges are tagged)."""
    sums = np.zeros(6)  # A, Sx (int x), Sy (int y), int x^2, int y^2, int xy
    # shift to a point of the outline first: the sums stay well conditioned far from the origin
    ref = profile.outer.mean(axis=0)
    for loop, tags in zip(profile.loops, profile.edge_curves, strict=True):
        pts, der, w = _edge_points(np.asarray(loop, float), np.asarray(tags), profile.curves)
        x, y = pts[..., 0] - ref[0], pts[..., 1] - ref[1]
        dx, dy = der[..., 0], der[..., 1]
        terms = (0.5 * (x * dy - y * dx), 0.5 * x * x * dy, -0.5 * y * y * dx,
                 x ** 3 / 3.0 * dy, -(y ** 3) / 3.0 * dx, 0.5 * x * x * y * dy)
        sums += np.array([float(np.sum(w * t)) for t in terms])
    a, sx, sy, xx, yy, xy = sums
    xc, yc = sx / a, sy / a
    return OutlineMoments(area=float(a), centroid=(float(xc + ref[0]), float(yc + ref[1])),
                          ixx=float(yy - a * yc * yc), iyy=float(xx - a * xc * xc),
                          ixy=float(xy - a * xc * yc))
