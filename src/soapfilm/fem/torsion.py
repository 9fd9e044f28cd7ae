"""The two Saint-Venant torsion problems on linear triangles.

Per unit ``G * theta`` (shear modulus times twist per length), lengths in the
mesh unit, coordinates measured from the section centroid.

Prandtl stress function ``phi`` (lower bound on J)::

    -lap(phi) = 2 in the section, phi = 0 on the outer loop,
    phi = C_k (one unknown) on hole k, loaded by 2 * A_k,
    J_lo = 2 int(phi) + 2 sum_k C_k A_k,   tau_phi = (dphi/dy, -dphi/dx).

Warping function ``omega`` (upper bound on J)::

    int grad(omega) . grad(v) = int (y dv/dx - x dv/dy)   for all v,
    J_hi = Ip - int |grad(omega)|^2,       tau_w = (domega/dx - y, domega/dy + x).

Prager-Synge hypercircle: ``J_hi - J_lo = sum_e int_e |tau_w - tau_phi|^2``.

References
----------
.. [1] S. P. Timoshenko and J. N. Goodier, Theory of Elasticity, 3rd ed.,
   McGraw-Hill, 1970, ch. 10 (stress function, warping function, hollow
   sections: the circulation condition on each hole).
.. [2] W. Prager and J. L. Synge, "Approximations in elasticity based on the
   concept of function space", Q. Appl. Math. 5 (1947) 241-269.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ..mesh import Mesh
from . import p1
from .linsolve import solve_spd

__all__ = ["TorsionFields", "solve_torsion", "recovered_gradient", "element_indicators",
           "BOUNDS_SCOPES", "drawn_outline_bounds"]

#: What the reported J bounds hold for.
BOUNDS_SCOPES = {
    "polygon": "the outline as given, a polygon (straight edges)",
    "curves": "the drawn outline with its exact curves",
    "mesh": "the mesh polygon only (the curves could not be bracketed on this mesh)",
}


@dataclass(frozen=True)
class TorsionFields:
    """Nodal fields and integrals of both problems on one mesh.

    ``p`` are the node coordinates relative to ``origin`` (the centroid).
    """

    origin: np.ndarray  # (2,)
    p: np.ndarray  # (2, N), centred
    phi: np.ndarray  # (N,)
    omega: np.ndarray  # (N,)
    hole_values: np.ndarray  # (H,) phi on each hole
    area: float
    polar_moment: float
    j_lo: float
    j_hi: float
    indicators: np.ndarray  # (M,) eta_e^2, plus each element's share of the outline slack
    elem_area: np.ndarray  # (M,)
    elem_grad: np.ndarray  # (2, 3, M)
    j_lo_mesh: float = float("nan")  # bounds for the mesh polygon (hypercircle pair)
    j_hi_mesh: float = float("nan")
    bounds_scope: str = "polygon"  # what j_lo, j_hi hold for: see BOUNDS_SCOPES


def section_centroid(p, t) -> tuple[float, np.ndarray]:
    """Area and centroid of the meshed section (exact for straight-sided triangles)."""
    area, _ = p1.geometry(p, t)
    a = float(area.sum())
    xc = p[0, t].mean(axis=0)
    yc = p[1, t].mean(axis=0)
    cx, cy = float(area @ xc) / a, float(area @ yc) / a
    return a, np.array([cx, cy])


def solve_torsion(mesh: Mesh, method: str = "auto") -> TorsionFields:
    """Solve the stress-function and warping-function problems on ``mesh``."""
    t = mesh.t
    n = mesh.nnodes
    total, origin = section_centroid(mesh.p, t)
    p = mesh.p - origin[:, None]
    area, grad = p1.geometry(p, t)
    k = p1.stiffness(t, area, grad, n)

    # ---- stress function: outer nodes fixed at 0, each hole one unknown
    marker = np.zeros(n, dtype=np.int64)
    for mk in range(1, mesh.nholes + 2):
        marker[mesh.loop_nodes(mk)] = mk
    b = p1.lumped_load(t, area, n, value=2.0)
    prolong, k_red, b_red = stress_function_system(k, b, marker, mesh.hole_areas)
    nfree = k_red.shape[0] - mesh.nholes
    x = solve_spd(k_red, b_red, method=method)
    phi = prolong @ x
    hole_values = x[nfree:].copy()
    # 2 l(phi) - a(phi, phi) is a lower bound on J for ANY admissible phi (the
    # complementary-energy functional), so the bound survives an inexact solve;
    # at the exact discrete solution it equals l(phi) = 2 int(phi) + 2 sum C_k A_k.
    j_lo = 2.0 * float(b_red @ x) - float(x @ (k_red @ x))

    # ---- warping function: node 0 pinned (fixes the free constant)
    f = p1.coordinate_load(p, t, area, grad, n)
    w = np.zeros(n)
    w[1:] = solve_spd(k[1:, 1:], f[1:], method=method)
    w -= (p1.lumped_load(t, area, n) @ w) / total  # mean zero
    ixx, iyy, _ = p1.second_moments(p, t, area)
    ip = float(ixx.sum() + iyy.sum())
    # int |tau_w|^2 = Ip - 2 f.w + a(w, w) >= J for ANY w (potential energy), so
    # this upper bound also survives an inexact solve; at the exact discrete
    # solution it equals Ip - a(w, w).
    j_hi = ip - 2.0 * float(f @ w) + float(w @ (k @ w))

    eta2 = element_indicators(p, t, area, grad, phi, w)
    j_lo_d, j_hi_d, slack, scope = drawn_outline_bounds(mesh, origin, phi, hole_values, w,
                                                        j_lo, j_hi)
    return TorsionFields(
        origin=origin,
        p=p,
        phi=phi,
        omega=w,
        hole_values=hole_values,
        area=total,
        polar_moment=ip,
        j_lo=j_lo_d,
        j_hi=j_hi_d,
        indicators=eta2 + slack,
        elem_area=area,
        elem_grad=grad,
        j_lo_mesh=j_lo,
        j_hi_mesh=j_hi,
        bounds_scope=scope,
    )


def drawn_outline_bounds(mesh: Mesh, origin, phi, hole_values, omega, j_lo, j_hi):
    """J bounds for the drawn outline from the mesh's P1 fields (see :mod:`.outline`).

    Returns ``(j_lo, j_hi, slack, scope)``: the bounds, each element's share of
    the extra width they have over the mesh polygon's bounds (added to the
    refinement indicators, so the loop refines where the curves need it), and
    the :data:`BOUNDS_SCOPES` key.
    """
    m = mesh.nelements
    if not np.any(mesh.segment_curves >= 0):
        return j_lo, j_hi, np.zeros(m), "polygon"
    from .outline import outline_polygons, p1_lower, p1_upper

    poly = outline_polygons(mesh)
    t = mesh.t[:3]
    if not poly.ok:
        # the mesh is too coarse for a curve somewhere: refine the boundary elements
        slack = np.zeros(m)
        on_b = np.zeros(mesh.nnodes, dtype=bool)
        on_b[mesh.segments.ravel()] = True
        hit = on_b[t].any(axis=0)
        slack[hit] = (j_hi - j_lo) / max(int(hit.sum()), 1)
        return j_lo, j_hi, slack, "mesh"
    c = np.asarray(origin)[:, None]
    lo_in, per_in = p1_lower(poly.p_in - c, t, phi, hole_values, mesh.hole_loop_areas(poly.p_in))
    hi_out, per_out = p1_upper(poly.p_out - c, t, omega)
    _, per_lo = p1_lower(mesh.p - c, t, phi, hole_values, mesh.hole_areas)
    _, per_hi = p1_upper(mesh.p - c, t, omega)
    slack = np.abs(per_lo - per_in) + np.abs(per_out - per_hi)
    # each bound is the mesh's own plus the functional's change on the moved nodes,
    # so rounding in the sums over all elements does not enter the difference
    return (j_lo - (np.sum(per_lo - per_in) + 4.0 * np.dot(hole_values, mesh.hole_areas
                                                           - mesh.hole_loop_areas(poly.p_in))),
            j_hi + np.sum(per_out - per_hi), slack, "curves")


def stress_function_system(k, b, marker, hole_areas):
    """Reduce the stress-function problem to its unknowns (any element order).

    Nodes with ``marker`` 0 are free, 1 (outer loop) are fixed at 0, and
    ``k + 2`` (hole k) all share ONE unknown, appended after the free ones and
    loaded by ``2 A_k``: the energy form of the condition that the circulation
    of grad(phi) round the hole is ``2 A_k`` (Timoshenko & Goodier, 3rd ed.,
    ch. 10, hollow sections).

    Returns
    -------
    prolong : sparse (n, nfree + H)
        Maps the unknowns to nodal values.
    k_red, b_red : reduced matrix and load.
    """
    n = len(marker)
    nh = len(hole_areas)
    free = np.flatnonzero(marker == 0)
    nfree = len(free)
    dof = np.full(n, -1)
    dof[free] = np.arange(nfree)
    hole = marker >= 2
    dof[hole] = nfree + marker[hole] - 2
    keep = dof >= 0
    prolong = sp.csr_matrix(
        (np.ones(keep.sum()), (np.flatnonzero(keep), dof[keep])), shape=(n, nfree + nh)
    )
    k_red = (prolong.T @ k @ prolong).tocsr()
    b_red = prolong.T @ b
    b_red[nfree:] += 2.0 * np.asarray(hole_areas, dtype=np.float64)
    return prolong, k_red, b_red


def element_indicators(p, t, area, grad, phi, omega) -> np.ndarray:
    """``eta_e^2 = int_e |tau_w - tau_phi|^2`` integrated exactly.

    On a linear triangle ``tau_phi`` is constant and ``tau_w = v + (-y, x)``
    with ``v = grad(omega)`` constant, so the integrand is a quadratic
    polynomial integrated with the element's exact moments.
    """
    gphi = np.einsum("cie,ie->ce", grad, phi[t])
    gw = np.einsum("cie,ie->ce", grad, omega[t])
    v = np.stack([gw[0] - gphi[1], gw[1] + gphi[0]])  # constant part of the difference
    xc, yc = p[0, t].mean(axis=0), p[1, t].mean(axis=0)
    ixx, iyy, _ = p1.second_moments(p, t, area)
    # int |v + (-y, x)|^2 = A|v|^2 + 2 A (v0 (-yc) + v1 xc) + int (x^2 + y^2)
    return area * (v[0] ** 2 + v[1] ** 2) + 2.0 * area * (-v[0] * yc + v[1] * xc) + ixx + iyy


def element_gradients(t, grad, u) -> np.ndarray:
    """Constant gradient of a P1 field on each element, shape (2, M)."""
    return np.einsum("cie,ie->ce", grad, u[t])


def recovered_gradient(p, t, area, elem_values, nodes) -> np.ndarray:
    """Patch-recovered nodal values of an element-wise constant field.

    For each node in ``nodes`` a linear function is fitted by area-weighted
    least squares to the element values at the element centroids of its
    two-ring patch (elements touching the node or one of its neighbours) and
    evaluated at the node: the superconvergent patch recovery of
    Zienkiewicz and Zhu, with the patch widened so that boundary nodes get a
    well-posed fit.

    Parameters
    ----------
    elem_values : ndarray (c, M)
        One or more element-constant components.
    nodes : ndarray of int
        Nodes to recover at.

    Returns
    -------
    ndarray (c, len(nodes))

    References
    ----------
    .. [1] O. C. Zienkiewicz and J. Z. Zhu, "The superconvergent patch recovery
       and a posteriori error estimates. Part 1", Int. J. Numer. Meth. Engng 33
       (1992) 1331-1364.
    """
    n = p.shape[1]
    m = t.shape[1]
    nodes = np.asarray(nodes)
    inc = sp.csr_matrix((np.ones(3 * m), (t.ravel(), np.tile(np.arange(m), 3))), shape=(n, m))
    patch = ((inc[nodes] @ inc.T) @ inc).tocoo()
    row, col = patch.row, patch.col  # (node in `nodes`, element) pairs of the patches
    xc, yc = p[0, t].mean(axis=0), p[1, t].mean(axis=0)
    dx = xc[col] - p[0, nodes][row]  # centroid offsets from the node: no cancellation
    dy = yc[col] - p[1, nodes][row]
    w = area[col]
    nb = len(nodes)

    def psum(v):
        return np.bincount(row, weights=v, minlength=nb)

    s0, sx, sy = psum(w), psum(w * dx), psum(w * dy)
    sxx, sxy, syy = psum(w * dx * dx), psum(w * dx * dy), psum(w * dy * dy)
    # scale the linear terms by the patch radius so the 3x3 systems are well conditioned
    scale = np.sqrt((sxx + syy) / s0)
    scale = np.where(scale > 0, scale, 1.0)
    one = np.ones(nb)
    d = np.stack([one, scale, scale], -1)
    mat = np.stack(
        [np.stack([s0, sx, sy], -1), np.stack([sx, sxx, sxy], -1), np.stack([sy, sxy, syy], -1)], -2
    ) / d[:, :, None] / d[:, None, :]
    # a tiny ridge keeps a degenerate patch (collinear centroids) solvable: it then
    # returns close to the weighted mean
    mat += 1e-12 * s0[:, None, None] * np.eye(3)
    vals = np.atleast_2d(elem_values)
    out = np.empty((vals.shape[0], nb))
    for c in range(vals.shape[0]):
        g = vals[c][col] * w
        rhs = np.stack([psum(g), psum(g * dx), psum(g * dy)], -1) / d
        out[c] = np.linalg.solve(mat, rhs[..., None])[:, 0, 0]
    return out
