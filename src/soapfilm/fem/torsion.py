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
from .linsolve import ENERGY_TOL, solve_spd
from .outline import Functional, hole_loop_areas, p1_lower, p1_upper

__all__ = ["TorsionFields", "solve_torsion", "recovered_gradient", "element_indicators",
           "BOUNDS_SCOPES", "drawn_outline_bounds"]

#: What the reported J bounds hold for.
BOUNDS_SCOPES = {
    "polygon": "the polygon as given",
    "curves": "the drawn curves",
    "mesh": "the mesh only, not the curves",
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
    bounds_rounding: float = 0.0  # how far j_lo and j_hi were widened for rounding, together


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
    x = solve_spd(k_red, b_red, method=method, energy_tol="bx")
    phi = prolong @ x
    hole_values = x[nfree:].copy()
    # L(phi) = 4 int(phi) + 4 sum C_k A_k - int |grad phi|^2 is a lower bound on J for
    # ANY admissible phi (complementary energy), so the bound survives an inexact
    # solve; summed element by element with a rounding bound (fem.outline)
    lower = p1_lower(p, t, phi, hole_values, *hole_loop_areas(mesh, p))
    # ---- warping function: node 0 pinned (fixes the free constant)
    f = p1.coordinate_load(p, t, area, grad, n)
    w = np.zeros(n)
    # stopping rule on the energy error against J (linsolve.ENERGY_TOL), J from phi
    w[1:] = solve_spd(k[1:, 1:], f[1:], method=method,
                      energy_tol=ENERGY_TOL * abs(float(b_red @ x)))
    w -= (p1.lumped_load(t, area, n) @ w) / total  # mean zero
    ixx, iyy, _ = p1.second_moments(p, t, area)
    ip = float(ixx.sum() + iyy.sum())
    # E(w) = int |tau_w|^2 >= J for ANY w (potential energy), so this upper bound
    # also survives an inexact solve; element by element, a sum of non-negative
    # terms (fem.outline.p1_upper: the form Ip - 2 f.w + a(w, w) cancelled terms of
    # size Ip down to J)
    upper = p1_upper(p, t, w)
    j_lo, j_hi = lower.value, upper.value
    eta2 = element_indicators(p, t, area, grad, phi, w)
    j_lo_d, j_hi_d, slack, scope, rnd = drawn_outline_bounds(mesh, origin, phi, hole_values, w,
                                                        lower, upper)
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
        bounds_rounding=rnd,
    )


def mesh_hole_nodes(mesh: Mesh) -> np.ndarray:
    """Mask of the nodes on hole loops."""
    mask = np.zeros(mesh.nnodes, dtype=bool)
    mask[mesh.segments[:, mesh.segment_markers >= 2].ravel()] = True
    return mask


def drawn_outline_bounds(mesh: Mesh, origin, phi, hole_values, omega, lower: Functional,
                         upper: Functional):
    """J bounds for the drawn outline from the mesh's P1 fields (see :mod:`.outline`).

    ``lower`` and ``upper`` are the two functionals on the mesh itself.
    Returns ``(j_lo, j_hi, slack, scope, rounding)``: the bounds (each widened
    by its rounding bound, ``rounding`` the two widenings together), each
    element's share of the extra width they have over the mesh polygon's
    bounds (added to the refinement indicators, so the loop refines where the
    curves need it), and the :data:`BOUNDS_SCOPES` key.
    """
    m = mesh.nelements
    if not np.any(mesh.segment_curves >= 0):
        return lower.lower, upper.upper, np.zeros(m), "polygon", lower.rounding + upper.rounding
    from .outline import outline_polygons

    poly = outline_polygons(mesh)
    t = mesh.t[:3]
    if not poly.ok:
        # the mesh is too coarse for a curve somewhere: refine the boundary elements
        slack = np.zeros(m)
        on_b = np.zeros(mesh.nnodes, dtype=bool)
        on_b[mesh.segments.ravel()] = True
        hit = on_b[t].any(axis=0)
        slack[hit] = (upper.value - lower.value) / max(int(hit.sum()), 1)
        return lower.lower, upper.upper, slack, "mesh", lower.rounding + upper.rounding
    c = np.asarray(origin)[:, None]
    p_in, p_out = poly.p_in - c, poly.p_out - c
    f_in = p1_lower(p_in, t, phi, hole_values, *hole_loop_areas(mesh, p_in))
    f_out = p1_upper(p_out, t, omega)
    # the hole term 4 C_k A_k changes by what the elements next to hole k lose in
    # area; give each element its share so that the shares sum to the bound's change
    # and large opposite parts do not stand as slack (phi = C_k on hole nodes, 0 outside)
    area_in = p1.geometry(p_in, t)[0]
    hole_phi = np.where(mesh_hole_nodes(mesh), phi, 0.0)[t].max(axis=0)
    d_lo = lower.per - f_in.per + 4.0 * hole_phi * (area_in - p1.geometry(mesh.p - c, t)[0])
    slack = np.abs(d_lo) + np.abs(f_out.per - upper.per)
    # each functional is summed afresh on its moved nodes: a sum of terms no larger
    # than J (no cancellation), with its own rounding bound
    return f_in.lower, f_out.upper, slack, "curves", f_in.rounding + f_out.rounding


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
    xc, yc = p[0, t].mean(axis=0), p[1, t].mean(axis=0)
    # the difference is v + (-(y - yc), x - xc) with v its value at the centroid:
    # int |.|^2 = A |v|^2 + int |x - x_c|^2, two non-negative terms
    v0 = gw[0] - yc - gphi[1]
    v1 = gw[1] + xc + gphi[0]
    x, y = p[0, t], p[1, t]
    sq = ((x[1] - x[0]) ** 2 + (y[1] - y[0]) ** 2 + (x[2] - x[1]) ** 2 + (y[2] - y[1]) ** 2
          + (x[0] - x[2]) ** 2 + (y[0] - y[2]) ** 2)
    return area * (v0 * v0 + v1 * v1) + area * sq / 36.0


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


#: A mesh boundary node where the boundary turns by more than this is a corner of
#: the outline: curves are meshed with turns of at most 10 degrees, and points
#: tracing a curve turn by at most 30 (soapfilm.corners.TRACE_MAX_TURN_DEG).
CORNER_TURN_DEG = 30.0


def boundary_corner_nodes(mesh: Mesh, p: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Sorted boundary nodes and a mask of those at a corner of the outline.

    At a corner of interior angle ``alpha`` the shear behaves like
    ``r^(pi/alpha - 1)``: zero at a convex corner, unbounded at a re-entrant
    one; neither is a finite peak, and a node there has no single tangent to
    take the shear along, so the peak is read at the other nodes.
    """
    p = mesh.p if p is None else p
    nodes = mesh.boundary_nodes
    nb = len(nodes)
    e = mesh.oriented_boundary()[0]
    pos = np.searchsorted(nodes, e)
    d = p[:, e[1]] - p[:, e[0]]
    s = d / np.hypot(*d)
    nxt_e = np.empty(nb, dtype=np.int64)
    prv_e = np.empty(nb, dtype=np.int64)
    nxt_e[pos[0]] = np.arange(e.shape[1])
    prv_e[pos[1]] = np.arange(e.shape[1])
    cos_turn = np.einsum("ij,ij->j", s[:, prv_e], s[:, nxt_e])
    return nodes, cos_turn < np.cos(np.radians(CORNER_TURN_DEG))


def boundary_flux_shear(mesh: Mesh, fields: TorsionFields) -> tuple[np.ndarray, np.ndarray,
                                                                    np.ndarray]:
    """Boundary shear at the boundary nodes from both fields, independently.

    On the boundary the shear is tangent to it; its magnitude is the normal
    derivative of ``phi`` (``phi`` is constant along each loop) and the
    tangential component of ``tau_w``.

    * Stress function, by consistent boundary flux: the residual of the
      discrete equations at a boundary node, ``r_i = (K phi)_i - b_i``, equals
      ``int_boundary (d phi / dn) N_i ds`` for the exact field (Green's
      formula), and its weighted sums converge like the energy, at order 2 in
      h [1]_, [2]_.  Divided by the node's share of the boundary length it is
      the normal derivative, with a node-to-node scatter of order h on an
      unstructured mesh.
    * Warping function: ``tau_w . s = d omega / ds + (-y, x) . s`` from the
      difference quotients of ``omega`` along the two boundary edges at the
      node, weighted for unequal edges (second order for smooth data).

    Both are then smoothed once along the boundary with weights (1/4, 1/2,
    1/4), which halves the scatter and moves a smooth profile by
    ``h^2/4 tau''``: second order.  Corner nodes (:func:`boundary_corner_nodes`)
    are not smoothed, nor used by their neighbours.

    Returns ``(nodes, tau_phi, tau_w)`` for the sorted boundary nodes.

    References
    ----------
    .. [1] G. F. Carey, S. S. Chow and M. K. Seager, "Approximate boundary-flux
       calculations", Comput. Methods Appl. Mech. Engrg. 50 (1985) 107-120.
    .. [2] I. Babuska and A. Miller, "The post-processing approach in the
       finite element method - part 1", Int. J. Numer. Meth. Engng 20 (1984)
       1085-1109.
    """
    p, t = fields.p, mesh.t[:3]
    n = p.shape[1]
    nodes = mesh.boundary_nodes
    nb = len(nodes)
    on_b = np.zeros(n, dtype=bool)
    on_b[nodes] = True
    el = np.flatnonzero(on_b[t].any(axis=0))  # elements touching the boundary
    te = t[:, el]
    area, grad = fields.elem_area[el], fields.elem_grad[:, :, el]
    ke = np.einsum("cie,cje->ije", grad, grad) * area
    kphi = np.einsum("ije,je->ie", ke, fields.phi[te])
    r = np.bincount(te.ravel(), weights=(kphi - 2.0 * area / 3.0).ravel(), minlength=n)[nodes]
    e = mesh.oriented_boundary()[0]  # material on the left
    pos = np.searchsorted(nodes, e)
    d = p[:, e[1]] - p[:, e[0]]
    ell = np.hypot(*d)
    s = d / ell
    nxt_e = np.empty(nb, dtype=np.int64)
    prv_e = np.empty(nb, dtype=np.int64)
    nxt_e[pos[0]] = np.arange(e.shape[1])
    prv_e[pos[1]] = np.arange(e.shape[1])
    la, lb = ell[prv_e], ell[nxt_e]
    tau_phi = np.abs(r) / (0.5 * (la + lb))
    g = (fields.omega[e[1]] - fields.omega[e[0]]) / ell  # d omega / ds on each edge
    gn = (lb * g[prv_e] + la * g[nxt_e]) / (la + lb)
    sn = (lb * s[:, prv_e] + la * s[:, nxt_e]) / (la + lb)
    sn /= np.hypot(*sn)
    x, y = p[0, nodes], p[1, nodes]
    tau_w = np.abs(gn - y * sn[0] + x * sn[1])
    # smoothing along the boundary, not at or across corners
    smooth = ~boundary_corner_nodes(mesh, p)[1]
    nxt, prv = pos[1][nxt_e], pos[0][prv_e]
    ok = smooth & smooth[nxt] & smooth[prv]

    def smoothed(v):
        return np.where(ok, 0.5 * v + 0.25 * (v[nxt] + v[prv]), v)

    return nodes, smoothed(tau_phi), smoothed(tau_w)
