"""Linear triangles: affine geometry, basis gradients, vectorised assembly.

All functions work on every element at once; arrays carry the element index
last, e.g. gradients have shape ``(2, 3, M)`` (component, local node, element).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

__all__ = ["geometry", "stiffness", "lumped_load", "coordinate_load", "second_moments"]


def geometry(p: np.ndarray, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Areas ``(M,)`` and basis gradients ``(2, 3, M)`` of linear triangles."""
    x, y = p[0, t], p[1, t]
    area2 = (x[1] - x[0]) * (y[2] - y[0]) - (x[2] - x[0]) * (y[1] - y[0])
    dx = np.stack([y[1] - y[2], y[2] - y[0], y[0] - y[1]]) / area2
    dy = np.stack([x[2] - x[1], x[0] - x[2], x[1] - x[0]]) / area2
    return 0.5 * area2, np.stack([dx, dy])


def stiffness(t: np.ndarray, area: np.ndarray, grad: np.ndarray, n: int) -> sp.csr_matrix:
    """Global Laplace stiffness ``K_ij = sum_e int_e grad N_i . grad N_j``."""
    ke = np.einsum("cie,cje->ije", grad, grad) * area  # (3, 3, M)
    rows = np.broadcast_to(t[:, None, :], ke.shape).ravel()
    cols = np.broadcast_to(t[None, :, :], ke.shape).ravel()
    return sp.csr_matrix((ke.ravel(), (rows, cols)), shape=(n, n))


def lumped_load(t: np.ndarray, area: np.ndarray, n: int, value: float = 1.0) -> np.ndarray:
    """``b_i = int value * N_i`` for a constant ``value`` (exact for P1)."""
    return np.bincount(t.ravel(), weights=np.tile(area * value / 3.0, 3), minlength=n)


def coordinate_load(p, t, area, grad, n: int) -> np.ndarray:
    """``f_i = int (y dN_i/dx - x dN_i/dy) dA`` (warping-function load, exact)."""
    xc, yc = p[0, t].mean(axis=0), p[1, t].mean(axis=0)
    fe = (yc * grad[0] - xc * grad[1]) * area  # (3, M)
    return np.bincount(t.ravel(), weights=fe.ravel(), minlength=n)


def second_moments(p, t, area) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Exact ``int x^2``, ``int y^2`` and ``int x y`` over each triangle."""
    x, y = p[0, t], p[1, t]
    ixx = area / 6.0 * (x[0] ** 2 + x[1] ** 2 + x[2] ** 2 + x[0] * x[1] + x[1] * x[2] + x[2] * x[0])
    iyy = area / 6.0 * (y[0] ** 2 + y[1] ** 2 + y[2] ** 2 + y[0] * y[1] + y[1] * y[2] + y[2] * y[0])
    ixy = area / 12.0 * (
        2 * (x[0] * y[0] + x[1] * y[1] + x[2] * y[2])
        + x[0] * y[1] + x[1] * y[0] + x[1] * y[2] + x[2] * y[1] + x[2] * y[0] + x[0] * y[2]
    )
    return ixx, iyy, ixy
