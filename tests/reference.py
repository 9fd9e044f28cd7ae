"""Outside reference values for the tests: closed forms and series.

Each function names its source.  Nothing here calls soapfilm.
"""

from __future__ import annotations

import math

import numpy as np


def rectangle_series(b: float, t: float, terms: int = 2000) -> tuple[float, float]:
    """Torsion constant J and tau_max / T of a b x t rectangle (b >= t, full sides).

    Saint-Venant's series as given by S. P. Timoshenko and J. N. Goodier,
    Theory of Elasticity, 3rd ed., McGraw-Hill 1970, sec. 109:

        J = (b t^3 / 3) [1 - (192 / pi^5)(t / b) sum_{n odd} tanh(n pi b / 2t) / n^5]
        tau_max = G theta t k,  k = 1 - (8 / pi^2) sum_{n odd} 1 / (n^2 cosh(n pi b / 2t))

    at the middle of the long sides.  The J series converges like n^-5 and the k
    series like n^-2 exp(-n pi b / 2t): 2000 odd terms leave both far below 1e-10.
    """
    if b < t:
        b, t = t, b
    n = np.arange(1, 2 * terms, 2, dtype=float)
    jsum = np.sum(np.tanh(n * math.pi * b / (2 * t)) / n**5)
    j = b * t**3 / 3 * (1 - 192 / math.pi**5 * (t / b) * jsum)
    arg = np.minimum(n * math.pi * b / (2 * t), 300.0)  # beyond, the terms are 0
    k = 1 - 8 / math.pi**2 * np.sum(1 / (n**2 * np.cosh(arg)))
    return float(j), float(t * k / j)


def circle(d: float) -> tuple[float, float]:
    """Solid circle: J = pi d^4 / 32, tau_max / T = 16 / (pi d^3) (any strength-of-materials text,
    e.g. Timoshenko & Goodier, 3rd ed., sec. 104)."""
    return math.pi * d**4 / 32, 16 / (math.pi * d**3)


def hollow_circle(d_out: float, d_in: float) -> tuple[float, float]:
    """Tube: J = pi (D^4 - d^4) / 32, tau_max / T = 16 D / (pi (D^4 - d^4)) (same sources)."""
    j = math.pi * (d_out**4 - d_in**4) / 32
    return j, (d_out / 2) / j


def ellipse(a: float, b: float) -> tuple[float, float]:
    """Ellipse, semi-axes a >= b: J = pi a^3 b^3 / (a^2 + b^2), tau_max / T = 2 / (pi a b^2)
    at the ends of the minor axis (Timoshenko & Goodier, 3rd ed., sec. 105; Roark's
    Formulas for Stress and Strain, 7th ed., Table 10.1 - from memory)."""
    return math.pi * a**3 * b**3 / (a**2 + b**2), 2 / (math.pi * a * b**2)


def equilateral_triangle(a: float) -> tuple[float, float]:
    """Equilateral triangle, side a: J = sqrt(3) a^4 / 80, tau_max / T = 20 / a^3 at mid-side
    (Roark's Formulas for Stress and Strain, 7th ed., Table 10.1)."""
    return math.sqrt(3) * a**4 / 80, 20 / a**3


def circle_points(r: float, n: int, cx: float = 0.0, cy: float = 0.0) -> np.ndarray:
    th = np.linspace(0, 2 * math.pi, n, endpoint=False)
    return np.column_stack([cx + r * np.cos(th), cy + r * np.sin(th)])


def ellipse_points(a: float, b: float, n: int) -> np.ndarray:
    th = np.linspace(0, 2 * math.pi, n, endpoint=False)
    return np.column_stack([a * np.cos(th), b * np.sin(th)])


def triangle_points(a: float) -> np.ndarray:
    return np.array([[0.0, 0.0], [a, 0.0], [a / 2, a * math.sqrt(3) / 2]])


def rectangle_points(b: float, t: float) -> np.ndarray:
    return np.array([[0.0, 0.0], [b, 0.0], [b, t], [0.0, t]])


def skfem_p2_basis(p6: np.ndarray, nodes, n: int):
    """scikit-fem's isoparametric quadratic basis on a soapfilm P2 mesh (the outside
    reference of the quadratic-element tests), and the map from our node numbers to its
    dofs: ``values[order]`` are our nodal values in scikit-fem's dof order.

    ``p6``: our P2 node coordinates (corners first, then the mid-edge nodes, as
    ``P2Nodes``); ``nodes``: the ``P2Nodes`` (``t6``, ``edges``); ``n``: corner count.
    The mid-edge nodes of curved edges lie on the curve, so scikit-fem's doflocs are moved
    there and its element map is the same quadratic map as ours.
    """
    import dataclasses

    from skfem import Basis, ElementTriP2, MeshTri1, MeshTri2

    m2 = MeshTri2.from_mesh(MeshTri1(np.ascontiguousarray(p6[:, :n]),
                                     np.ascontiguousarray(nodes.t6[:3].astype(np.int64))))
    fac = m2.facets
    key = np.minimum(fac[0], fac[1]).astype(np.int64) * n + np.maximum(fac[0], fac[1])
    ek = nodes.edges[0].astype(np.int64) * n + nodes.edges[1]
    j = np.searchsorted(ek, key)
    assert np.array_equal(ek[j], key)
    doflocs = m2.doflocs.copy()
    doflocs[:, m2.dofs.facet_dofs[0]] = p6[:, n + j]
    basis = Basis(dataclasses.replace(m2, doflocs=doflocs), ElementTriP2(), intorder=10)
    return basis, np.concatenate([np.arange(n), n + j])
