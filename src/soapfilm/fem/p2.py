"""Quadratic triangles (P2) for both Saint-Venant torsion problems.

Straight elements are affine and integrated exactly.  An element with a
boundary edge on an exact curve of the outline is *isoparametric*: the
edge's mid-node sits on the curve (at the parameter midpoint of the edge's
end nodes), the element's geometry is the quadratic map of its six nodes,
and its integrals are taken with a collapsed Gauss rule (the Jacobian varies
inside).  Interior mid-nodes stay at the chord midpoints, so only elements
touching a curve are curved.

Node convention
---------------
``p6`` holds the P1 nodes first (same numbering as ``mesh.p``), then one node
per unique mesh edge (at its midpoint, or on the curve for a curved boundary
edge).  ``t6`` has shape ``(6, M)``: rows 0-2 are the corners (as in
``mesh.t``, counter-clockwise), row 3 is the mid-node of edge (0, 1), row 4 of
edge (1, 2) and row 5 of edge (2, 0).

Basis, with barycentric coordinates ``L0, L1, L2``::

    N_i   = L_i (2 L_i - 1)        i = 0, 1, 2
    N_3   = 4 L0 L1,  N_4 = 4 L1 L2,  N_5 = 4 L2 L0

and on a curved element the map ``x = sum_k N_k x_k`` from the reference
triangle (``xi = L1``, ``eta = L2``).

Problems (per unit ``G * theta``, coordinates from the centroid), as in
:mod:`soapfilm.fem.torsion`::

    -lap(phi) = 2, phi = 0 on the outer loop, phi = C_k on hole k (one
    unknown per hole, shared by its corner and mid-nodes, loaded by 2 A_k);
    J_lo = 2 int(phi) + 2 sum_k C_k A_k
    int grad(omega) . grad(v) = int (y dv/dx - x dv/dy);
    J_hi = Ip - int |grad(omega)|^2
    eta_e^2 = int_e |tau_w - tau_phi|^2,  sum_e eta_e^2 = J_hi - J_lo.

Which domain the bounds hold for (see :func:`solve_torsion_p2`): the pair
computed on the isoparametric mesh itself (``j_lo_mesh``, ``j_hi_mesh``; the
hypercircle pair) is exact for a straight mesh; with curved elements its
stiffness integrals carry a (tiny) quadrature error, so the reported
``j_lo`` / ``j_hi`` are instead certified bounds for the *drawn* outline,
from the same nodal values on an inner and an outer domain
(:func:`outline_domains`).

References
----------
.. [1] The 7-point rule (centroid 27/60, edge midpoints 8/60, vertices
   3/60) is a classical degree-3 triangle rule (from memory); its exactness
   is checked in ``tests/test_p2.py`` against the closed-form integrals of
   barycentric monomials, as is that of :func:`collapsed_rule`.
.. [2] S. P. Timoshenko and J. N. Goodier, Theory of Elasticity, 3rd ed.,
   McGraw-Hill, 1970, ch. 10.
.. [3] W. Prager and J. L. Synge, "Approximations in elasticity based on the
   concept of function space", Q. Appl. Math. 5 (1947) 241-269.
"""

from __future__ import annotations

import dataclasses
import functools
import logging
import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ..errors import SolveError
from ..geometry.curves import Circle, Curve, Ellipse, Involute, Moved, edge_params
from ..mesh import Mesh
from . import linsolve, p1
from .linsolve import ENERGY_TOL, amg_hierarchy, cg_or_direct, one_blas_thread, solve_spd
from .outline import UNIT_ROUNDOFF, Functional
from .torsion import stress_function_system

__all__ = [
    "P2Nodes",
    "P2Fields",
    "P2Peak",
    "OutlineDomains",
    "QUAD_BARY",
    "QUAD_WEIGHTS",
    "collapsed_rule",
    "p2_nodes",
    "basis_values",
    "basis_gradients",
    "stiffness",
    "mass_vector",
    "coordinate_load",
    "solve_torsion_p2",
    "element_indicators",
    "outline_domains",
    "boundary_peak_p2",
    "uniformly_refined",
]

log = logging.getLogger(__name__)

#: Unknowns up to which ``method="auto"`` factorises directly; above, CG
#: preconditioned with AMG of the P1 matrix on the split mesh (see
#: :func:`_solve_amg`).  Whole solve (both problems) on the keyed shaft,
#: 2-core sandbox under load: 85 913 unknowns direct 1.8 s / AMG 4.0 s;
#: 175 893 unknowns direct 7.0 s / AMG 6.8 s; 572 429 unknowns AMG 25 s
#: (34-38 CG iterations at every size), SuperLU over 200 s.  On the 18-tooth
#: involute spline (more fill-in) at 74 000 unknowns: direct 7.2 s / AMG 4.1 s,
#: at 21 000: direct 1.3 s / AMG 1.6 s; hence the limit between the two.
P2_DIRECT_LIMIT = 60_000

#: Barycentric coordinates (npts, 3) of the 7-point rule: centroid, edge
#: midpoints, vertices.  Exact for polynomials of degree <= 3.
QUAD_BARY = np.array(
    [
        [1 / 3, 1 / 3, 1 / 3],
        [0.5, 0.5, 0.0],
        [0.0, 0.5, 0.5],
        [0.5, 0.0, 0.5],
        [1.0, 0.0, 0.0],
        [0.0, 1.0, 0.0],
        [0.0, 0.0, 1.0],
    ]
)
#: Weights (fractions of the element area) of :data:`QUAD_BARY`; sum to 1.
QUAD_WEIGHTS = np.array([27, 8, 8, 8, 3, 3, 3], dtype=float) / 60.0

#: Points per direction of the collapsed rule on curved elements (degree 7):
#: exact for every polynomial integrand there (area, loads, moments: degree
#: <= 6); the stiffness integrand is rational (1 / Jacobian).
CURVED_RULE_N = 4

#: Points per direction of the collapsed rule for the certified energy
#: bounds on curved elements (degree 17; the integrands there reach 16:
#: ``|det grad w - det (y, -x)|^2`` of degree 8 times ``eps^4`` of degree 8).
CERTIFIED_RULE_N = 9

#: Local corner pairs of the mid-nodes 3, 4, 5.
_EDGES = np.array([[0, 1], [1, 2], [2, 0]])

#: Barycentric coordinates (6, 3) of the six local nodes.
NODE_BARY = np.array(
    [[1, 0, 0], [0, 1, 0], [0, 0, 1], [0.5, 0.5, 0], [0, 0.5, 0.5], [0.5, 0, 0.5]], dtype=float
)


@functools.lru_cache(maxsize=8)
def collapsed_rule(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Triangle rule of ``n * n`` points exact to degree ``2 n - 1``.

    The triangle ``0 <= eta <= 1 - xi`` is the image of the unit square under
    ``(u, v) -> (u, (1 - u) v)`` with Jacobian ``1 - u``: Gauss-Jacobi points
    with weight ``(1 - u)`` in ``u`` and Gauss-Legendre points in ``v`` (each
    exact to degree ``2 n - 1`` in its variable) integrate every polynomial
    of total degree ``2 n - 1`` in ``(xi, eta)`` exactly.

    Returns
    -------
    bary : ndarray (n*n, 3)
        Barycentric coordinates ``(1 - xi - eta, xi, eta)``.
    weights : ndarray (n*n,)
        Fractions of the triangle's area (sum 1).
    """
    from numpy.polynomial.legendre import leggauss
    from scipy.special import roots_jacobi

    xj, wj = roots_jacobi(n, 1.0, 0.0)  # weight (1 - x) on [-1, 1]
    xl, wl = leggauss(n)
    u = 0.5 * (1.0 + xj)
    v = 0.5 * (1.0 + xl)
    xi = np.repeat(u, n)
    eta = (1.0 - xi) * np.tile(v, n)
    w = np.outer(wj, wl).ravel()
    bary = np.column_stack([1.0 - xi - eta, xi, eta])
    bary.setflags(write=False)
    w = w / w.sum()
    w.setflags(write=False)
    return bary, w


@dataclass(frozen=True)
class P2Nodes:
    """The P2 node set built on a P1 mesh.

    Attributes
    ----------
    p6 : ndarray (2, N + E)
        Corner nodes, then mid-nodes (on the curve for curved boundary edges).
    t6 : ndarray (6, M) int32
        Element nodes, see the module docstring for the order.
    edges : ndarray (2, E) int32
        Unique edges (sorted corner pairs); the mid-node of edge ``j`` is node ``N + j``.
    boundary_marker : ndarray (N + E,) int32
        0 for interior nodes, otherwise the segment marker of the boundary loop
        the node lies on (1 = outer, k + 2 = hole k).
    segment_mid : ndarray (S,) int64
        Mid-node of each boundary segment of the mesh.
    segment_edges : ndarray (2, S) int64
        Corner nodes of each boundary segment, ordered with the material on
        the left (counter-clockwise round the element that owns it).
    segment_owner : ndarray (S,) int64
        The element each boundary segment belongs to.
    segment_curved : ndarray (S,) bool
        Boundary segments whose mid-node is on their curve.
    segment_params : ndarray (2, S)
        Curve parameters of the end nodes of those segments, in the order of
        ``mesh.segments`` (NaN for the others).
    curved : ndarray (M,) bool
        Elements with a curved edge (isoparametric).
    """

    p6: np.ndarray
    t6: np.ndarray
    edges: np.ndarray
    boundary_marker: np.ndarray
    segment_mid: np.ndarray
    segment_edges: np.ndarray
    segment_owner: np.ndarray
    segment_curved: np.ndarray
    segment_params: np.ndarray
    curved: np.ndarray

    def __post_init__(self):
        for f in dataclasses.fields(self):
            getattr(self, f.name).setflags(write=False)

    @property
    def nnodes(self) -> int:
        return self.p6.shape[1]

    def loop_nodes(self, marker: int) -> np.ndarray:
        """Sorted P2 nodes (corners and mid-nodes) on loop ``marker``."""
        return np.flatnonzero(self.boundary_marker == marker)


def _edge_keys(a: np.ndarray, b: np.ndarray, n: int) -> np.ndarray:
    lo = np.minimum(a, b).astype(np.int64)
    hi = np.maximum(a, b).astype(np.int64)
    return lo * n + hi


def _param_span(cv: Curve, a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Curve parameters of points ``a``, ``b`` (``(2, k)``), the shorter way round a closed curve."""
    return edge_params(cv, a.T, b.T)


def _curve_midpoints(mesh: Mesh) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Mid-nodes of the curved boundary segments on their curves.

    The point at the parameter midpoint of the segment's end nodes; if that
    is not within a quarter chord of the chord midpoint (a parameter that
    runs unevenly, a projection onto the wrong branch), the projection of the
    chord midpoint; if that is not either, the segment stays straight.

    Returns ``(xy (2, S), ok (S,), params (2, S))``; ``ok`` marks the
    segments moved onto their curve, ``params`` are the curve parameters of
    their end nodes (NaN for the others).
    """
    s = mesh.segments
    a, b = mesh.p[:, s[0]], mesh.p[:, s[1]]
    mid = 0.5 * (a + b)
    out = mid.copy()
    ok = np.zeros(s.shape[1], dtype=bool)
    params = np.full((2, s.shape[1]), np.nan)
    cur = mesh.segment_curves
    if not mesh.curves:
        return out, ok, params
    length = np.hypot(*(b - a))
    for c in np.unique(cur[cur >= 0]):
        sel = np.flatnonzero(cur == c)
        cv = mesh.curves[c]
        ta, tb = _param_span(cv, a[:, sel], b[:, sel])
        pm = cv.point(0.5 * (ta + tb)).T
        good = np.hypot(*(pm - mid[:, sel])) <= 0.25 * length[sel]
        if not np.all(good):
            pp = cv.point(cv.project(mid[:, sel].T)).T
            alt = ~good & (np.hypot(*(pp - mid[:, sel])) <= 0.25 * length[sel])
            pm[:, alt] = pp[:, alt]
            good |= alt
        out[:, sel[good]] = pm[:, good]
        ok[sel[good]] = True
        params[:, sel[good]] = np.stack([ta, tb])[:, good]
    return out, ok, params


def p2_nodes(mesh: Mesh) -> P2Nodes:
    """Build the P2 node set of a P1 mesh (vectorised, no loop over elements).

    Boundary mid-nodes are found by matching each boundary segment to its mesh
    edge; a mid-node inherits the segment's marker, and a segment on a curve
    gets its mid-node on the curve (:func:`_curve_midpoints`).  A corner node
    inherits the marker of any segment it ends (loops do not touch, so this
    is unique).
    """
    t = mesh.t
    n = mesh.nnodes
    m = mesh.nelements
    a = t[_EDGES[:, 0]]  # (3, M)
    b = t[_EDGES[:, 1]]
    keys = _edge_keys(a, b, n)  # (3, M)
    ukeys, inv = np.unique(keys.ravel(), return_inverse=True)
    inv = inv.reshape(3, m)
    edges = np.stack([ukeys // n, ukeys % n]).astype(np.int32)
    mid = 0.5 * (mesh.p[:, edges[0]] + mesh.p[:, edges[1]])
    p6 = np.concatenate([mesh.p, mid], axis=1)
    t6 = np.concatenate([t, (n + inv).astype(np.int32)], axis=0).astype(np.int32)

    marker = np.zeros(p6.shape[1], dtype=np.int32)
    skeys = _edge_keys(mesh.segments[0], mesh.segments[1], n)
    pos = np.searchsorted(ukeys, skeys)
    pos = np.minimum(pos, len(ukeys) - 1)
    if not np.array_equal(ukeys[pos], skeys):
        raise SolveError("a boundary segment is not an edge of the mesh")
    marker[n + pos] = mesh.segment_markers
    marker[mesh.segments[0]] = mesh.segment_markers
    marker[mesh.segments[1]] = mesh.segment_markers

    # owner element and local edge of each boundary segment (unique for boundary edges)
    slot = np.empty(len(ukeys), dtype=np.int64)
    slot[inv.ravel()] = np.arange(3 * m)
    owner, local = slot[pos] % m, slot[pos] // m
    seg_edges = np.stack([t[_EDGES[local, 0], owner], t[_EDGES[local, 1], owner]]).astype(np.int64)

    cmid, seg_curved, seg_params = _curve_midpoints(mesh)
    p6[:, n + pos[seg_curved]] = cmid[:, seg_curved]
    edge_curved = np.zeros(len(ukeys), dtype=bool)
    edge_curved[pos[seg_curved]] = True
    curved = edge_curved[inv].any(axis=0)
    return P2Nodes(p6=p6, t6=t6, edges=edges, boundary_marker=marker,
                   segment_mid=(n + pos).astype(np.int64), segment_edges=seg_edges,
                   segment_owner=owner, segment_curved=seg_curved, segment_params=seg_params,
                   curved=curved)


def basis_values(bary: np.ndarray) -> np.ndarray:
    """P2 basis values ``(6, npts)`` at barycentric points ``(npts, 3)``."""
    lam = np.asarray(bary, dtype=float).T  # (3, npts)
    corner = lam * (2.0 * lam - 1.0)
    edge = 4.0 * lam[_EDGES[:, 0]] * lam[_EDGES[:, 1]]
    return np.concatenate([corner, edge])


def _dn_dlam(bary: np.ndarray) -> np.ndarray:
    """``d N_i / d L_j``, shape ``(6, 3, npts)``."""
    lam = np.asarray(bary, dtype=float).T  # (3, npts)
    dn = np.zeros((6, 3, lam.shape[1]))
    for i in range(3):
        dn[i, i] = 4.0 * lam[i] - 1.0
    for r, (i, j) in enumerate(_EDGES):
        dn[3 + r, i] = 4.0 * lam[j]
        dn[3 + r, j] = 4.0 * lam[i]
    return dn


def _reference_gradients(bary: np.ndarray) -> np.ndarray:
    """``(dN/dxi, dN/deta)`` with ``xi = L1``, ``eta = L2``: shape ``(2, 6, npts)``."""
    dn = _dn_dlam(bary)
    return np.stack([dn[:, 1] - dn[:, 0], dn[:, 2] - dn[:, 0]])


def basis_gradients(bary: np.ndarray, lgrad: np.ndarray) -> np.ndarray:
    """P2 basis gradients ``(2, 6, npts, M)`` on affine elements.

    Parameters
    ----------
    bary : ndarray (npts, 3)
        Barycentric evaluation points.
    lgrad : ndarray (2, 3, M)
        Gradients of the barycentric coordinates (the P1 basis gradients).
    """
    return np.einsum("ijq,cje->ciqe", _dn_dlam(bary), lgrad)


def _iso_map(xe: np.ndarray, bary: np.ndarray):
    """The quadratic map of elements with nodes ``xe`` (``(2, 6, E)``) at reference points.

    Returns ``(pts (2, q, E), det (q, E), cg (2, 6, q, E))``: the physical
    points, the Jacobian determinant, and the basis gradients times the
    determinant (``grad N_k = cg[:, k] / det``; ``cg`` is polynomial, of
    degree 2).
    """
    d = _reference_gradients(bary)  # (2, 6, q)
    pts = np.einsum("kq,cke->cqe", basis_values(bary), xe)
    jac = np.einsum("jkq,ike->ijqe", d, xe)  # jac[i, j] = d x_i / d xi_j
    det = jac[0, 0] * jac[1, 1] - jac[0, 1] * jac[1, 0]
    # grad_x = J^-T grad_xi, J^-T = [[J11, -J10], [-J01, J00]] / det
    d0, d1 = d[0][:, :, None], d[1][:, :, None]
    cg = np.stack([jac[1, 1][None] * d0 - jac[1, 0][None] * d1,
                   -jac[0, 1][None] * d0 + jac[0, 0][None] * d1])
    return pts, det, cg


def _jacobian_lower_bound(xe: np.ndarray) -> np.ndarray:
    """A lower bound of the Jacobian determinant over each element (``xe`` ``(2, 6, E)``).

    The determinant of a quadratic map is a quadratic polynomial; its
    Bernstein coefficients on the triangle are the vertex values and
    ``2 f(m_ij) - (f_i + f_j) / 2`` for each edge, and the polynomial lies
    between its smallest and largest coefficient (convex-hull property).  For
    one curved edge the determinant is linear and the bound is its minimum.
    """
    _, det, _ = _iso_map(xe, NODE_BARY)  # (6, E)
    edge = 2.0 * det[3:] - 0.5 * (det[_EDGES[:, 0]] + det[_EDGES[:, 1]])
    return np.minimum(det[:3].min(axis=0), edge.min(axis=0))


def _element_stiffness(area: np.ndarray, lgrad: np.ndarray, g: np.ndarray | None = None
                       ) -> np.ndarray:
    """Element stiffness matrices ``(6, 6, M)`` of affine elements (exact, degree-2 integrand).

    ``g``: :func:`basis_gradients` at :data:`QUAD_BARY`, if the caller has them.
    """
    if g is None:
        g = basis_gradients(QUAD_BARY, lgrad)  # (2, 6, q, M)
    return np.einsum("ciqe,cjqe,q->ije", g, g, QUAD_WEIGHTS) * area


def _element_load(p6, t6, area, lgrad, g: np.ndarray | None = None) -> np.ndarray:
    """``int_e (y dN_i/dx - x dN_i/dy)`` per affine element ``(6, M)``, exact (degree 2)."""
    if g is None:
        g = basis_gradients(QUAD_BARY, lgrad)  # (2, 6, q, M)
    x, y = _points(p6, t6, QUAD_BARY)  # (q, M)
    return np.einsum("iqe,q->ie", y * g[0] - x * g[1], QUAD_WEIGHTS) * area


#: ``int_e N_i / area`` on an affine element: 0 for the corners, 1/3 for the mid-nodes.
_MASS = basis_values(QUAD_BARY) @ QUAD_WEIGHTS


def stiffness(t6: np.ndarray, area: np.ndarray, lgrad: np.ndarray, n: int) -> sp.csr_matrix:
    """Global P2 Laplace stiffness of affine elements, integrated exactly (degree-2 integrand)."""
    return _coo(t6, _element_stiffness(area, lgrad), n)


def _coo(t6, ke, n) -> sp.csr_matrix:
    rows = np.broadcast_to(t6[:, None, :], ke.shape).ravel()
    cols = np.broadcast_to(t6[None, :, :], ke.shape).ravel()
    return sp.csr_matrix((ke.ravel(), (rows, cols)), shape=(n, n))


def mass_vector(t6: np.ndarray, area: np.ndarray, n: int) -> np.ndarray:
    """``int N_i`` on affine elements (exact): 0 for corner nodes, ``A/3`` for mid-nodes."""
    return np.bincount(t6.ravel(), weights=(_MASS[:, None] * area).ravel(), minlength=n)


def _points(p6: np.ndarray, t6: np.ndarray, bary: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Physical coordinates ``(npts, M)`` of barycentric points (affine map)."""
    x = bary @ p6[0, t6[:3]]
    y = bary @ p6[1, t6[:3]]
    return x, y


def coordinate_load(p6, t6, area, lgrad, n: int) -> np.ndarray:
    """``f_i = int (y dN_i/dx - x dN_i/dy) dA`` on affine elements, exact (degree 2)."""
    fe = _element_load(p6, t6, area, lgrad)
    return np.bincount(t6.ravel(), weights=fe.ravel(), minlength=n)


def _gradient_at(t6, lgrad, u, bary, g: np.ndarray | None = None) -> np.ndarray:
    """Gradient ``(2, npts, M)`` of the P2 field ``u`` at barycentric points (affine elements).

    ``g``: :func:`basis_gradients` at ``bary``, if the caller has them.
    """
    if g is None:
        g = basis_gradients(bary, lgrad)
    return np.einsum("ciqe,ie->cqe", g, u[t6])


# ------------------------------------------------------------------ curved elements


@dataclass(frozen=True)
class _Curved:
    """Isoparametric quantities of the curved elements ``idx`` at the curved rule's points."""

    idx: np.ndarray  # (C,) element numbers
    pts: np.ndarray  # (2, q, C)
    det: np.ndarray  # (q, C)
    cg: np.ndarray  # (2, 6, q, C)
    wdet: np.ndarray  # (q, C): weight * det / 2, i.e. int f = sum_q f * wdet

    @classmethod
    def of(cls, p6, t6, idx, n: int = CURVED_RULE_N) -> _Curved:
        bary, w = collapsed_rule(n)
        pts, det, cg = _iso_map(p6[:, t6[:, idx]], bary)
        return cls(idx=idx, pts=pts, det=det, cg=cg, wdet=0.5 * w[:, None] * det)

    def integral(self, f: np.ndarray) -> np.ndarray:
        """``int_e f`` per element for values ``f`` (q, C) at the points."""
        return np.einsum("qe,qe->e", f, self.wdet)


def _moments(p6, t6, curved: np.ndarray):
    """Area, first moments and element areas of the isoparametric mesh (exact)."""
    area, _ = p1.geometry(p6, t6[:3])
    xc, yc = p6[0, t6[:3]].mean(axis=0), p6[1, t6[:3]].mean(axis=0)
    sx, sy = area * xc, area * yc
    idx = np.flatnonzero(curved)
    if len(idx):
        cu = _Curved.of(p6, t6, idx)
        area = area.copy()
        area[idx] = cu.integral(np.ones_like(cu.det))
        sx[idx] = cu.integral(cu.pts[0])
        sy[idx] = cu.integral(cu.pts[1])
    return area, float(sx.sum()), float(sy.sum())


def _element_areas(p6, t6, curved, elems) -> np.ndarray:
    """Areas of the elements ``elems`` (exact: the Jacobian is at most quadratic)."""
    te = t6[:, elems]
    area, _ = p1.geometry(p6, te[:3])
    c = np.flatnonzero(curved[elems])
    if len(c):
        bary, w = collapsed_rule(CURVED_RULE_N)
        _, det, _ = _iso_map(p6[:, te[:, c]], bary)
        area[c] = 0.5 * (w @ det)
    return area


def _segment_areas(mesh: Mesh, nodes: P2Nodes, p6: np.ndarray) -> np.ndarray:
    """Each boundary segment's term of the signed area its loop encloses (edges quadratic).

    Green's theorem on an edge ``a -> m -> b`` (material on the left):
    ``x(s) = a + s e + 4 s (1 - s) d`` with ``e = b - a`` and ``d = m - (a + b)/2``
    gives ``1/2 int x ^ dx = a ^ b / 2 - (2/3) e ^ d``.  Summed over a loop:
    the enclosed area for the outer loop, minus it for a hole.
    """
    e = nodes.segment_edges
    a, b, m = p6[:, e[0]], p6[:, e[1]], p6[:, nodes.segment_mid]
    d = m - 0.5 * (a + b)
    ed = b - a
    return 0.5 * (a[0] * b[1] - a[1] * b[0]) - (2.0 / 3.0) * (ed[0] * d[1] - ed[1] * d[0])


def _loop_areas(mesh: Mesh, nodes: P2Nodes, p6: np.ndarray) -> tuple[float, np.ndarray]:
    """Area enclosed by the outer loop and by each hole loop (see :func:`_segment_areas`)."""
    signed = _segment_areas(mesh, nodes, p6)
    mk = mesh.segment_markers
    outer = float(signed[mk == 1].sum())
    if not mesh.nholes:
        return outer, np.zeros(0)
    h = mk >= 2
    holes = -np.bincount(mk[h] - 2, weights=signed[h], minlength=mesh.nholes)[: mesh.nholes]
    return outer, holes


# ------------------------------------------------------------------ fields


@dataclass(frozen=True)
class P2Fields:
    """Both torsion fields on quadratic triangles.

    Same meaning as :class:`soapfilm.fem.torsion.TorsionFields` for the shared
    names; ``p``, ``phi`` and ``omega`` run over the P2 nodes (corners first,
    so ``phi[:mesh.nnodes]`` are the corner values), ``elem_grad`` holds the
    gradients of the barycentric coordinates of the straight triangles and
    ``elem_area`` the (isoparametric) element areas.

    ``j_lo`` / ``j_hi`` hold for what ``bounds_scope`` says
    (:data:`soapfilm.fem.torsion.BOUNDS_SCOPES`); ``j_lo_mesh`` /
    ``j_hi_mesh`` are the functionals on the (isoparametric) mesh itself, for
    which ``sum(eta_e^2) = j_hi_mesh - j_lo_mesh`` (``indicators`` add each
    element's share of the outline slack to ``eta_e^2``).  ``outline``
    names the construction of the drawn-outline bounds: ``"curved"``,
    ``"straight"`` or ``""`` (see :func:`outline_domains`).
    """

    origin: np.ndarray  # (2,)
    p: np.ndarray  # (2, N6), centred
    t6: np.ndarray  # (6, M)
    phi: np.ndarray  # (N6,)
    omega: np.ndarray  # (N6,)
    hole_values: np.ndarray  # (H,)
    area: float
    polar_moment: float
    j_lo: float
    j_hi: float
    indicators: np.ndarray  # (M,) eta_e^2 plus outline slack
    elem_area: np.ndarray  # (M,)
    elem_grad: np.ndarray  # (2, 3, M) barycentric gradients of the straight triangles
    nodes: P2Nodes
    order: int = 2
    j_lo_mesh: float = float("nan")
    j_hi_mesh: float = float("nan")
    bounds_scope: str = "polygon"
    outline: str = ""
    bounds_rounding: float = 0.0  # how far j_lo and j_hi were widened for rounding, together


def solve_torsion_p2(mesh: Mesh, method: str = "auto", nodes: P2Nodes | None = None,
                     outline: str = "auto") -> P2Fields:
    """Solve the stress-function and warping-function problems with P2 elements.

    Straight elements are integrated exactly; elements with an edge on a
    curve are isoparametric (:class:`_Curved`).  Their Jacobian must stay
    positive: it is bounded from below (:func:`_jacobian_lower_bound`) and a
    :class:`~soapfilm.errors.SolveError` is raised otherwise.

    Bounds: on a mesh without curves ``j_lo`` and ``j_hi`` are the exact
    functionals on the mesh polygon (``bounds_scope = "polygon"``).  With
    curves they bracket J of the drawn outline (``"curves"``, see
    :func:`outline_domains` for the argument), or, if neither inner and outer
    domain could be built, of the straight-sided mesh polygon (``"mesh"``).

    Parameters
    ----------
    mesh : Mesh
        P1 mesh; the mid-nodes are added here.
    method : {"auto", "direct", "amg"}
        "direct": sparse direct solves (:func:`soapfilm.fem.linsolve.solve_spd`; a
        section without holes both fields on one symbolic factorisation,
        :func:`soapfilm.fem.linsolve.solve_pinned_pair`); "amg":
        CG preconditioned with smoothed aggregation built on the P1 matrix
        of the split mesh; "auto" factorises up to :data:`P2_DIRECT_LIMIT`
        unknowns.
    nodes : P2Nodes, optional
        Precomputed :func:`p2_nodes` of ``mesh``.
    outline : {"auto", "straight"}
        Construction of the drawn-outline bounds (:func:`outline_domains`);
        "straight" forces the straight-sided polygons (for comparison).
    """
    if nodes is None:
        nodes = p2_nodes(mesh)
    t, t6 = mesh.t, nodes.t6
    n = nodes.nnodes
    if method == "auto":
        method = "direct" if n <= P2_DIRECT_LIMIT else "amg"
    if method not in ("direct", "amg"):
        raise ValueError(f"unknown method {method!r}")
    cidx = np.flatnonzero(nodes.curved)
    if len(cidx):
        low = _jacobian_lower_bound(nodes.p6[:, t6[:, cidx]])
        a_lin, _ = p1.geometry(nodes.p6, t6[:3, cidx])
        bad = ~(low > 1e-3 * 2.0 * a_lin)
        if np.any(bad):
            raise SolveError(
                f"{int(bad.sum())} curved element(s) could turn inside out with their mid-node on "
                "the curve (mesh too coarse for the curvature there)"
            )
    elem_area, sx, sy = _moments(nodes.p6, t6, nodes.curved)
    total = float(elem_area.sum())
    origin = np.array([sx / total, sy / total])
    p = nodes.p6 - origin[:, None]
    area, lgrad = p1.geometry(p, t)
    cu = _Curved.of(p, t6, cidx) if len(cidx) else None

    # element matrices and loads: exact on the affine elements, then the curved
    # ones replaced by their isoparametric values
    # the basis gradients at the quadrature points, once per mesh: stiffness, load and
    # the indicators use the same
    gq = basis_gradients(QUAD_BARY, lgrad)
    ke = _element_stiffness(area, lgrad, gq)
    me = _MASS[:, None] * area
    fe = _element_load(p, t6, area, lgrad, gq)
    ixx, iyy, _ = p1.second_moments(p, t, area)
    r2 = ixx + iyy
    if cu is not None:
        ke[:, :, cidx] = np.einsum("ckqe,clqe,qe->kle", cu.cg, cu.cg, cu.wdet / cu.det ** 2)
        me[:, cidx] = np.einsum("kq,qe->ke", basis_values(collapsed_rule(CURVED_RULE_N)[0]),
                                cu.wdet)
        xq, yq = cu.pts
        fe[:, cidx] = np.einsum("kqe,qe->ke", yq[None] * cu.cg[0] - xq[None] * cu.cg[1],
                                cu.wdet / cu.det)
        r2[cidx] = cu.integral(xq * xq + yq * yq)
    k = _coo(t6, ke, n)
    mvec = np.bincount(t6.ravel(), weights=me.ravel(), minlength=n)
    f = np.bincount(t6.ravel(), weights=fe.ravel(), minlength=n)
    ip = float(r2.sum())
    hole_areas = _loop_areas(mesh, nodes, nodes.p6)[1]

    if method == "amg":
        # P1 on the mesh split at the P2 nodes: same unknowns, spectrally
        # equivalent to the P2 matrix, and an M-matrix that suits aggregation.
        split = uniformly_refined(mesh, nodes)
        a1, g1 = p1.geometry(split.p, split.t)
        k_pre = p1.stiffness(split.t, a1, g1, n)

    # ---- stress function
    b = 2.0 * mvec
    # without holes both direct solves are k with some nodes held: one symbolic set-up
    pair = method == "direct" and mesh.nholes == 0 and n <= linsolve.LDL_LIMIT
    if pair:
        held = np.flatnonzero(nodes.boundary_marker != 0)
        phi, w_pair = linsolve.solve_pinned_pair(k, held, b, np.array([0]), f)
        hole_values = np.zeros(0)
    else:
        prolong, k_red, b_red = stress_function_system(k, b, nodes.boundary_marker, hole_areas)
        nfree = k_red.shape[0] - mesh.nholes
        if method == "amg":
            x = _solve_amg(k_red, (prolong.T @ k_pre @ prolong).tocsr(), b_red, "bx")
        else:
            x = solve_spd(k_red, b_red, method="direct")
        phi = prolong @ x
        hole_values = x[nfree:].copy()
    # the functional for any approximate phi (see fem.torsion): 2 l(phi) - a(phi, phi)
    # ---- warping function, then mean zero.  Direct: corner node 0 pinned.
    # AMG: the singular Neumann system with the load projected on the range
    # (sum f = 0 up to rounding), which CG handles; pinning one node slows
    # AMG-CG down by an order of magnitude.
    if method == "amg":
        w = _solve_amg(k, k_pre, f - f.mean(), ENERGY_TOL * abs(float(b_red @ x)))
    elif pair:
        w = w_pair
    else:
        w = np.zeros(n)
        w[1:] = solve_spd(k[1:, 1:], f[1:], method="direct")
    w -= (mvec @ w) / total
    # both functionals hold for ANY admissible field (see fem.torsion), so the bounds
    # survive an inexact solve; summed element by element without cancellation
    # (_shares), each with a bound on its rounding
    shares = _all_shares(p, t6, nodes.curved, phi, w)
    hterm, herr, _ = _hole_term(mesh, nodes, p, hole_values)
    lower, upper = _functionals(*shares, hterm, herr)
    j_lo, j_hi = lower.value, upper.value
    eta2 = element_indicators(p, t6, area, lgrad, phi, w, curved=cu, g=gq)
    fields = P2Fields(
        origin=origin,
        p=p,
        t6=t6,
        phi=phi,
        omega=w,
        hole_values=hole_values,
        area=total,
        polar_moment=ip,
        j_lo=lower.lower,
        j_hi=upper.upper,
        bounds_rounding=lower.rounding + upper.rounding,
        indicators=eta2,
        elem_area=elem_area,
        elem_grad=lgrad,
        nodes=nodes,
        j_lo_mesh=j_lo,
        j_hi_mesh=j_hi,
    )
    if not np.any(mesh.segment_curves >= 0):
        log.debug("P2: %d nodes, J in [%.10g, %.10g]", n, j_lo, j_hi)
        return fields
    lo, hi, slack, scope, how, rnd = _drawn_bounds(mesh, fields, outline, shares)
    log.debug("P2: %d nodes, J in [%.10g, %.10g] (%s, %s), isoparametric [%.10g, %.10g]",
              n, lo, hi, scope, how, j_lo, j_hi)
    return dataclasses.replace(fields, j_lo=lo, j_hi=hi, indicators=eta2 + slack,
                               bounds_scope=scope, outline=how, bounds_rounding=rnd)


def _solve_amg(a, a_pre, b, energy_tol, x0=None) -> np.ndarray:
    """CG on ``a`` preconditioned with AMG of ``a_pre``, BLAS on one thread (see linsolve)."""
    with one_blas_thread():
        return _solve_amg_inner(a, a_pre, b, energy_tol, x0)


def _solve_amg_inner(a, a_pre, b, energy_tol, x0=None) -> np.ndarray:
    """CG on ``a`` preconditioned with smoothed aggregation of ``a_pre``.

    Stops on the estimated energy error (:func:`soapfilm.fem.linsolve.pcg`,
    ``energy_tol`` a number or "bx"); a stalled solve is finished as
    :func:`soapfilm.fem.linsolve.cg_or_direct` says.
    """
    if not np.any(b):
        return np.zeros_like(b)
    ml = amg_hierarchy(a_pre, cheap=False)
    return cg_or_direct(a, b, ml.aspreconditioner().matvec, energy_tol, x0=x0, what="P2 AMG-CG",
                        rtol=1e-9)


def element_indicators(p, t6, area, lgrad, phi, omega, curved: _Curved | None = None,
                       g: np.ndarray | None = None) -> np.ndarray:
    """``eta_e^2 = int_e |tau_w - tau_phi|^2``.

    ``tau_phi = (dphi/dy, -dphi/dx)`` and ``tau_w = (domega/dx - y,
    domega/dy + x)``.  Exact (degree 2) on affine elements; on the curved
    ones with the rule their stiffness uses, so that the sum equals
    ``J_hi - J_lo`` of the same discrete problems to rounding.
    """
    if g is None:
        g = basis_gradients(QUAD_BARY, lgrad)
    gphi = _gradient_at(t6, lgrad, phi, QUAD_BARY, g)  # (2, q, M)
    gw = _gradient_at(t6, lgrad, omega, QUAD_BARY, g)
    x, y = _points(p, t6, QUAD_BARY)
    d0 = gw[0] - y - gphi[1]
    d1 = gw[1] + x + gphi[0]
    eta2 = (QUAD_WEIGHTS @ (d0 * d0 + d1 * d1)) * area
    if curved is not None and len(curved.idx):
        cu = curved
        te = t6[:, cu.idx]
        gp = np.einsum("ckqe,ke->cqe", cu.cg, phi[te]) / cu.det
        gq = np.einsum("ckqe,ke->cqe", cu.cg, omega[te]) / cu.det
        x, y = cu.pts
        d0 = gq[0] - y - gp[1]
        d1 = gq[1] + x + gp[0]
        eta2[cu.idx] = cu.integral(d0 * d0 + d1 * d1)
    return eta2


# ------------------------------------------------------------------ the drawn outline


def _shares(p, t6, curved: np.ndarray, elems, phi, omega, certify: bool):
    """Per-element shares of the two functionals on the elements ``elems``.

    ``L_e = 4 int_e phi - int_e |grad phi|^2`` and ``E_e = int_e |grad omega
    - (y, -x)|^2`` (``p`` centred).  Returns ``(lo, hi, lo_err, hi_err)``: the
    shares and first-order bounds of their rounding (:func:`_functionals`).

    ``E_e`` is a positive-weight quadrature of the squared difference itself,
    never ``int |grad w|^2 - 2 int grad w . (y, -x) + int r^2`` (which cancels
    terms of size Ip down to J), and gradients come from nodal differences
    (``sum_k grad N_k = 0``), so a field far from zero loses nothing.  Affine
    elements: exact (every integrand has degree <= 2).  Curved elements,
    coordinates taken relative to the element's first corner: with
    ``certify``, ``L_e`` from below and ``E_e`` from above
    (:func:`_energy_upper` on ``|det grad - det (y, -x)|^2 / det``, whose
    numerator is a polynomial of degree 8: rule of degree 17); else with the
    curved rule (the discrete problem's own integration).
    """
    u = UNIT_ROUNDOFF
    elems = np.asarray(elems)
    lo = np.zeros(len(elems))
    hi = np.zeros(len(elems))
    lo_err = np.zeros(len(elems))
    hi_err = np.zeros(len(elems))
    cmask = curved[elems]
    s = np.flatnonzero(~cmask)
    if len(s):
        te = t6[:, elems[s]]
        x, y = p[0, te[:3]], p[1, te[:3]]
        dx1, dy1, dx2, dy2 = x[1] - x[0], y[1] - y[0], x[2] - x[0], y[2] - y[0]
        s1, s2 = dx1 * dy2, dx2 * dy1
        with np.errstate(divide="ignore", invalid="ignore"):
            rel = 4.0 * u * (np.abs(s1) + np.abs(s2)) / np.abs(s1 - s2) + 10.0 * u
        area, lgrad = p1.geometry(p, te[:3])
        dn = _dn_dlam(QUAD_BARY)  # (6, 3, q)
        bg = np.einsum("ijq,cje->ciqe", dn, lgrad)  # (2, 6, q, M)
        bga = np.einsum("ijq,cje->ciqe", np.abs(dn), np.abs(lgrad))

        def grad_err(v):
            dv = v[te] - v[te[0]]  # sum_k grad N_k = 0: differences from corner 0
            g = np.einsum("ciqe,ie->cqe", bg, dv)
            e = rel[None, None] * np.einsum("ciqe,ie->cqe", bga, np.abs(dv))
            return g, e

        gp, ep = grad_err(phi)
        gw, ew = grad_err(omega)
        xq, yq = _points(p, te, QUAD_BARY)
        exq = 3.0 * u * (QUAD_BARY @ np.abs(x))
        eyq = 3.0 * u * (QUAD_BARY @ np.abs(y))
        aa = np.abs(area)
        load = 4.0 * area / 3.0 * phi[te[3:]].sum(axis=0)
        energy = (QUAD_WEIGHTS @ (gp[0] ** 2 + gp[1] ** 2)) * area
        lo[s] = load - energy
        lo_err[s] = (rel * (np.abs(load) + energy + np.abs(lo[s]))
                     + aa * (QUAD_WEIGHTS @ (2.0 * np.abs(gp) * ep + ep * ep).sum(axis=0)))
        d0 = gw[0] - yq
        d1 = gw[1] + xq
        e0 = ew[0] + eyq + u * (np.abs(gw[0]) + np.abs(yq))
        e1 = ew[1] + exq + u * (np.abs(gw[1]) + np.abs(xq))
        hi[s] = (QUAD_WEIGHTS @ (d0 * d0 + d1 * d1)) * area
        hi_err[s] = (rel * hi[s]
                     + aa * (QUAD_WEIGHTS @ (2.0 * np.abs(d0) * e0 + e0 * e0
                                             + 2.0 * np.abs(d1) * e1 + e1 * e1)))
    c = np.flatnonzero(cmask)
    if len(c):
        idx = elems[c]
        te = t6[:, idx]
        bary, w = collapsed_rule(CERTIFIED_RULE_N if certify else CURVED_RULE_N)
        xe = p[:, te]
        x0 = xe[:, :1, :]
        xr = xe - x0  # relative to corner 0: the Jacobian loses nothing to the position
        pts, det, cg = _iso_map(xr, bary)
        pts = pts + x0
        wh = 0.5 * w
        wdet = wh[:, None] * det
        nv = basis_values(bary)
        # a bound on the relative rounding of det and of the cofactors: the corner
        # triangle's (as for affine elements) times the ratio of the straight to the
        # curved area's smallest Jacobian, plus the products' own
        # (entries of the Jacobian are at most 8 max|x - x_0|: sums of reference
        # gradients, each at most 3 in size)
        span = np.abs(xr).max(axis=(0, 1))
        dmin = _jacobian_lower_bound(xr)
        rel = 4.0 * u * 128.0 * span * span / np.abs(dmin) + 10.0 * u
        int_phi = np.einsum("kq,ke,qe->e", nv, phi[te], wdet)
        int_phi_abs = np.einsum("kq,ke,qe->e", np.abs(nv), np.abs(phi[te]), np.abs(wdet))

        def dgrad(v):
            dv = v[te] - v[te[0]]
            g = np.einsum("ckqe,ke->cqe", cg, dv)  # det * grad v
            e = rel[None, None] * np.einsum("ckqe,ke->cqe", np.abs(cg), np.abs(dv))
            return g, e

        gp, ep = dgrad(phi)
        gw, ew = dgrad(omega)
        x, y = pts
        d0 = gw[0] - y * det
        d1 = gw[1] + x * det
        e0 = ew[0] + rel * np.abs(y * det)
        e1 = ew[1] + rel * np.abs(x * det)
        num_p = gp[0] ** 2 + gp[1] ** 2
        num_w = d0 * d0 + d1 * d1
        enum_p = 2.0 * np.abs(gp[0]) * ep[0] + ep[0] ** 2 + 2.0 * np.abs(gp[1]) * ep[1] + ep[1] ** 2
        enum_w = 2.0 * np.abs(d0) * e0 + e0 * e0 + 2.0 * np.abs(d1) * e1 + e1 * e1
        if certify:
            e_phi, fac = _energy_upper(num_p, det, w, dmin, factor=True)
            e_w = _energy_upper(num_w, det, w, dmin)
        else:
            fac = 1.0 / det
            e_phi = np.einsum("q,qe->e", wh, num_p * fac)
            e_w = np.einsum("q,qe->e", wh, num_w * fac)
        afac = np.abs(fac)
        lo[c] = 4.0 * int_phi - e_phi
        hi[c] = e_w
        lo_err[c] = (rel * (4.0 * int_phi_abs + np.einsum("q,qe->e", wh, num_p * afac))
                     + np.einsum("q,qe->e", wh, enum_p * afac))
        hi_err[c] = (rel * np.einsum("q,qe->e", wh, num_w * afac)
                     + np.einsum("q,qe->e", wh, enum_w * afac))
    return lo, hi, lo_err, hi_err


def _functionals(shares_lo, shares_hi, err_lo, err_hi, hole_term: float, hole_err: float):
    """Sum the element shares (``math.fsum``) into the lower and upper functional.

    Returns ``(lower, upper)`` as :class:`~soapfilm.fem.outline.Functional`: the
    sums and their rounding bounds (twice the first-order bound of every
    share, plus the sums' own half ulp).
    """
    u = UNIT_ROUNDOFF
    lo_val = math.fsum(shares_lo.tolist()) + hole_term
    hi_val = math.fsum(shares_hi.tolist())
    lo_r = 2.0 * (math.fsum(err_lo.tolist()) + hole_err + 2.0 * u * abs(lo_val))
    hi_r = 2.0 * (math.fsum(err_hi.tolist()) + 2.0 * u * abs(hi_val))
    return Functional(lo_val, lo_r, shares_lo), Functional(hi_val, hi_r, shares_hi)


#: Elements per chunk when the shares of a whole mesh are evaluated (the straight
#: elements' gradient arrays take some 2 kB per element while they live).
_CHUNK = 32_768


def _all_shares(p, t6, curved, phi, omega):
    """:func:`_shares` of every element (the discrete problem's own rule), in chunks."""
    m = t6.shape[1]
    parts = [_shares(p, t6, curved, np.arange(i, min(i + _CHUNK, m)), phi, omega, certify=False)
             for i in range(0, m, _CHUNK)]
    return tuple(np.concatenate([pt[j] for pt in parts]) for j in range(4))


def _hole_term(mesh: Mesh, nodes: P2Nodes, q: np.ndarray, cvals: np.ndarray):
    """``4 sum_k C_k A_k`` with the loops on nodes ``q`` (quadratic edges), and a rounding bound.

    Each hole's area (:func:`_segment_areas`) taken relative to its loop's first
    node and summed with ``math.fsum``.
    """
    if not mesh.nholes:
        return 0.0, 0.0, np.zeros(0)
    u = UNIT_ROUNDOFF
    e = nodes.segment_edges
    mk = mesh.segment_markers
    areas = np.zeros(mesh.nholes)
    term, err = 0.0, 0.0
    for k in range(mesh.nholes):
        sel = np.flatnonzero(mk == k + 2)
        if not len(sel):
            continue
        ref = q[:, e[0, sel[0]]][:, None]
        a, b = q[:, e[0, sel]] - ref, q[:, e[1, sel]] - ref
        m = q[:, nodes.segment_mid[sel]] - ref
        d = m - 0.5 * (a + b)
        ed = b - a
        c1, c2 = a[0] * b[1], a[1] * b[0]
        c3, c4 = ed[0] * d[1], ed[1] * d[0]
        areas[k] = -math.fsum((0.5 * (c1 - c2) - (2.0 / 3.0) * (c3 - c4)).tolist())
        bound = 8.0 * u * math.fsum((np.abs(c1) + np.abs(c2) + np.abs(c3) + np.abs(c4)).tolist())
        term += 4.0 * float(cvals[k]) * areas[k]
        err += 4.0 * abs(float(cvals[k])) * (bound + u * abs(areas[k])) + 4.0 * u * abs(term)
    return term, err, areas


def _energy_upper(num: np.ndarray, det: np.ndarray, w: np.ndarray, dmin: np.ndarray,
                  factor: bool = False):
    """Upper bound of ``int_ref num / det`` (``num >= 0``, ``det > 0`` polynomials).

    With ``D0`` the mean of ``det`` and ``eps = det / D0 - 1``,
    ``1 / (1 + eps) = 1 - eps + eps^2 - eps^3 + eps^4 / (1 + eps)`` and
    ``1 + eps >= dmin / D0`` (``dmin`` a lower bound of ``det``), so::

        int num / det <= int num (1 - eps + eps^2 - eps^3) / D0 + int num eps^4 / dmin.

    Both integrands are polynomials of degree <= 12 (``num`` 4, ``eps`` 2),
    integrated exactly by the degree-13 rule.  The excess over the exact
    value is ``int num eps^4 (1/dmin - 1/det)``: of order ``eps^5``, with
    ``eps`` about the sagitta over the element size.
    """
    d0 = w @ det
    eps = det / d0 - 1.0
    e2 = eps * eps
    poly = 1.0 - eps + e2 - e2 * eps
    fac = poly / d0 + e2 * e2 / dmin  # the weight each point's num gets
    out = 0.5 * (w @ (num * fac))
    return (out, fac) if factor else out


def _conic(curve: Curve):
    """``F(xy)`` (``xy`` ``(2, ...)``) with ``F = 0`` on the curve, or None if the curve is no conic."""
    if isinstance(curve, Circle):
        cen = np.array([curve.cx, curve.cy])
        r2 = curve.r * curve.r

        def f(xy):
            d = xy - cen.reshape((2,) + (1,) * (xy.ndim - 1))
            return d[0] * d[0] + d[1] * d[1] - r2
        return f
    if isinstance(curve, Ellipse):
        rot = curve._rot()
        cen = np.array([curve.cx, curve.cy])

        def f(xy):
            d = xy - cen.reshape((2,) + (1,) * (xy.ndim - 1))
            u = rot[0, 0] * d[0] + rot[1, 0] * d[1]
            v = rot[0, 1] * d[0] + rot[1, 1] * d[1]
            return (u / curve.a) ** 2 + (v / curve.b) ** 2 - 1.0
        return f
    if isinstance(curve, Moved):
        base = _conic(curve.base)
        if base is None:
            return None
        inv = np.linalg.inv(np.asarray(curve.matrix, dtype=float))
        off = np.asarray(curve.offset, dtype=float)

        def f(xy):
            d = xy - off.reshape((2,) + (1,) * (xy.ndim - 1))
            return base(np.einsum("ij,j...->i...", inv, d))
        return f
    return None


#: Values of the degree-4 Bernstein basis at s = 0, 1/4, ..., 1, inverted:
#: maps five values of a quartic on an interval to its Bernstein coefficients.
_B4 = np.linalg.inv(np.array([[math.comb(4, i) * (k / 4) ** i * (1 - k / 4) ** (4 - i)
                               for i in range(5)] for k in range(5)]))
#: Sub-intervals of [0, 1] on which the quartic's Bernstein coefficients are checked.
_PIECES = 16
_S_CHECK = (np.arange(_PIECES)[:, None] + np.arange(5)[None, :] / 4.0) / _PIECES  # (pieces, 5)


def _edge_points(a, m, b, s):
    """Points of the quadratic edge ``a -> m -> b`` at parameters ``s`` (any shape): ``(2, k, *s.shape)``."""
    na = (1 - s) * (1 - 2 * s)
    nm = 4 * s * (1 - s)
    nb = s * (2 * s - 1)
    ex = (slice(None), slice(None)) + (None,) * s.ndim
    return a[ex] * na + m[ex] * nm + b[ex] * nb


@dataclass(frozen=True)
class OutlineDomains:
    """P2 node positions (mesh coordinates) of an inner and an outer domain of the drawn outline.

    ``curved`` marks the elements that are isoparametric in them; ``how``
    is ``"curved"`` (quadratic edges certified against their curves) or
    ``"straight"`` (the inner and outer polygons of
    :func:`soapfilm.fem.outline.outline_polygons`, every element straight);
    ``ok`` is False if neither could be built.
    """

    p_in: np.ndarray
    p_out: np.ndarray
    curved: np.ndarray
    ok: bool
    how: str
    moved: np.ndarray  # P2 nodes moved in either domain


def outline_domains(mesh: Mesh, nodes: P2Nodes, construction: str = "auto") -> OutlineDomains:
    """An inner domain inside the drawn section and an outer one containing it, on the P2 nodes.

    Argument (shared/design.md, "Bounds for the drawn outline"): J grows
    with the domain, holes included, and the stress-function functional
    ``L`` (any field zero on the outer loop and constant on each hole, with
    that hole's enclosed area) is below J, the warping energy ``E`` (any
    field) above it.  The P2 nodal values of the solution on the
    isoparametric mesh, carried to moved node positions, are such fields
    (the mesh stays conforming, boundary nodes keep 0 / ``C_k``).  So
    ``L(in) <= J(in) <= J(drawn) <= J(out) <= E(out)`` whenever ``in`` lies
    inside the drawn section and ``out`` contains it.

    Curved construction (every curve-tagged segment curved).  Each curved
    edge's end nodes move along the bisector of the two boundary normals at
    the node, into the material for the inner domain and out of it for the
    outer one, by 1.1 times the edge's largest deviation to the wrong side
    of the curve plus ``1e-12`` of the part size, divided by the cosine
    between bisector and edge normal; the mid-node moves along the chord
    normal by the mean of its ends' normal moves, so the whole edge moves by
    at least that amount to first order.  Then each moved edge is *checked*
    to lie on the right side of its curve along its whole length; an edge
    that fails gets 1.5 times the move, up to ten times.  The check:

    * circle or ellipse (possibly moved): the implicit equation ``F = 0`` of
      the conic is a quartic along a quadratic edge; ``sign * F`` must have
      non-negative Bernstein coefficients on each of 16 pieces of the edge
      (a polynomial lies between its smallest and largest Bernstein
      coefficient).  ``sign`` is the sign of ``F`` a quarter chord into the
      material: the side of the conic is the side of the drawn curve within
      that distance of the edge, and the moves are far smaller.
    * involute (possibly moved): the curve turns one way only, so between
      close samples it stays inside the triangle of their tangents, and the
      edge must clear that envelope (:class:`_EnvelopeCheck`).  Other curves
      (a drawing's spline pieces) go to the straight construction: the check
      samples one step beyond each end of the piece, where a spline piece may
      already turn the other way.

    Straight boundary edges at a moved end tilt into (out of) the material
    (the bisector makes an angle under 87 degrees with their normal,
    checked).  Every element keeps a positive Jacobian (Bernstein lower
    bound, checked).  The moves are of the order of the parabola's deviation
    from the curve, h^4 / R^3 for a circle (an ellipse is an affine image of
    a circle, and quadratic interpolation commutes with affine maps), so
    the bounds lose O(h^4), the order of the P2 error; measured in
    ``docs/notes/p2.md``.  If a check fails the straight construction is
    used.

    Straight construction (spline pieces, a curve-tagged segment left
    straight, the curved construction failing, or asked for): the inner and
    outer polygons of
    :func:`soapfilm.fem.outline.outline_polygons` (tangent-triangle argument
    there) with every mid-node at the midpoint of its moved corners, all
    elements straight.  Their moves are of the order of the sagitta,
    h^2 / R, so the bounds lose O(h^2).
    """
    if construction not in ("auto", "straight"):
        raise ValueError(f"unknown construction {construction!r}")
    segc = nodes.segment_curved
    # every curve-tagged segment must carry its mid-node on the curve (a segment
    # left straight is a chord, which only the polygons of the straight
    # construction account for)
    if construction == "auto" and segc.any() and np.array_equal(segc, mesh.segment_curves >= 0):
        out = _curved_domains(mesh, nodes)
        if out is not None:
            return out
    return _straight_domains(mesh, nodes)


def _straight_domains(mesh: Mesh, nodes: P2Nodes) -> OutlineDomains:
    from .outline import outline_polygons

    poly = outline_polygons(mesh)
    ed = nodes.edges

    def with_mids(pc):
        return np.concatenate([pc, 0.5 * (pc[:, ed[0]] + pc[:, ed[1]])], axis=1)

    p_in, p_out = with_mids(poly.p_in), with_mids(poly.p_out)
    moved = np.flatnonzero(np.any(p_in != nodes.p6, axis=0) | np.any(p_out != nodes.p6, axis=0))
    return OutlineDomains(p_in=p_in, p_out=p_out, curved=np.zeros(mesh.nelements, dtype=bool),
                          ok=bool(poly.ok), how="straight", moved=moved)


class _ConicCheck:
    """Which side of a conic the quadratic edges of one curve lie on (see :func:`outline_domains`)."""

    def __init__(self, f, a, m, b, nrm, length, size):
        self.f = f
        self.h = 1e-6 * size
        # material sign of F next to each edge: probe a quarter chord into the material
        self.sign = np.sign(f(m + 0.25 * length * nrm))
        self.ok = bool(np.all(self.sign != 0))

    def _distance(self, x):
        """``F / |grad F|`` at points ``x`` (``(2, ...)``): about the signed distance."""
        f, h = self.f, self.h

        def shifted(dx, dy):
            return f(x + np.array([dx, dy]).reshape((2,) + (1,) * (x.ndim - 1)))

        g = np.hypot(shifted(h, 0.0) - shifted(-h, 0.0), shifted(0.0, h) - shifted(0.0, -h))
        return f(x) / np.maximum(g / (2.0 * h), 1e-300)

    def violation(self, a, m, b, side):
        """How far (about) each edge strays to the wrong side, from 33 samples."""
        d = side * self.sign[:, None] * self._distance(_edge_points(a, m, b, _S_DENSE))
        return np.maximum(-d.min(axis=1), 0.0)

    def certified(self, a, m, b, side):
        """Edges proven on the ``side`` of the curve: Bernstein coefficients of the quartic."""
        vals = side * self.sign[:, None, None] * self.f(_edge_points(a, m, b, _S_CHECK))
        return (vals @ _B4.T).min(axis=(1, 2)) >= 0.0


#: Samples of an edge for the deviation estimates.
_S_DENSE = np.linspace(0.0, 1.0, 33)


class _EnvelopeCheck:
    """Which side of an involute the quadratic edges of one curve lie on.

    The curve piece of each edge is sampled at ``N + 3`` parameters (one step
    beyond each end, so a moved end node stays covered).  Between two samples
    the curve lies in the triangle of the two points and the crossing ``T``
    of their tangents (it turns one way only, by less than 90 degrees: see
    :mod:`soapfilm.geometry.curves`), and it is a graph over the chord
    (every tangent within 90 degrees of it, checked).  So on the material
    side the curve stays behind the triangle's far boundary (the tangent path
    ``P_k T P_k+1`` or the chord, whichever faces that side) and an edge
    beyond that boundary everywhere is beyond the curve.  Each boundary
    segment is a line, so "beyond" is the sign of a quadratic in the edge
    parameter over the parameter range where the edge spans that segment:
    checked exactly (ends and vertex).  ``N`` is chosen so that the triangle
    heights (about chord * turn / (4 N^2)) stay well under the parabola's
    deviation from the curve.
    """

    def __init__(self, cv, a, b, nrm, ta, tb):
        self.ok = True
        self.a = a
        length = np.hypot(*(b - a))
        self.u = (b - a) / length
        self.v = nrm
        sgn = np.where(tb >= ta, 1.0, -1.0)
        da, db = cv.derivative(ta).T * sgn, cv.derivative(tb).T * sgn
        turn = np.abs(np.arctan2(da[0] * db[1] - da[1] * db[0], np.einsum("ij,ij->j", da, db)))
        n_sub = int(np.clip(np.ceil(25.0 / max(float(turn.max()), 1e-3)), 8, 256))
        k = np.arange(-1, n_sub + 2) / n_sub  # (P,)
        t = ta[:, None] + (tb - ta)[:, None] * k[None, :]  # (E, P)
        # the step beyond each end must still turn the same way: true for an
        # involute on its branch t > 0 (curvature 1 / (rb t)); a spline piece
        # ends at an inflection or a corner, so it is not taken here
        base = cv.base if isinstance(cv, Moved) else cv
        if not isinstance(base, Involute) or np.any(t <= 0):
            self.ok = False
            return
        pts = cv.point(t.ravel()).T.reshape(2, *t.shape)
        der = cv.derivative(t.ravel()).T.reshape(2, *t.shape) * sgn[None, :, None]
        rel = pts - a[:, :, None]
        x = np.einsum("ie,iep->ep", self.u, rel)
        y = np.einsum("ie,iep->ep", self.v, rel)
        dx = np.einsum("ie,iep->ep", self.u, der)
        dy = np.einsum("ie,iep->ep", self.v, der)
        if np.any(dx <= 0) or np.any(np.diff(x, axis=1) <= 0):
            self.ok = False
            return
        slope = dy / dx
        x0, x1, y0, y1 = x[:, :-1], x[:, 1:], y[:, :-1], y[:, 1:]
        m0, m1 = slope[:, :-1], slope[:, 1:]
        dm = m0 - m1
        straight = np.abs(dm) <= 1e-14 * (1.0 + np.abs(m0))
        with np.errstate(divide="ignore", invalid="ignore"):
            xt = np.where(straight, 0.5 * (x0 + x1), (y1 - y0 + m0 * x0 - m1 * x1) / dm)
        xt = np.where(straight, 0.5 * (x0 + x1), xt)
        if np.any(~np.isfinite(xt)) or np.any(xt < x0 - 1e-12 * length[:, None]) \
                or np.any(xt > x1 + 1e-12 * length[:, None]):
            self.ok = False
            return
        xt = np.clip(xt, x0, x1)
        yt = np.where(straight, 0.5 * (y0 + y1), y0 + m0 * (xt - x0))
        chord_t = y0 + (y1 - y0) * (xt - x0) / (x1 - x0)
        bulge = np.sign(yt - chord_t)  # +1: the tangent path is on the material side
        self.cov = (x[:, 0], x[:, -1])
        # the far boundary facing each side, as two segments per piece: (E, P - 1, 2)
        self.seg = {}
        for side in (+1, -1):
            tangent = side * bulge > 0
            ym = np.where(tangent, yt, chord_t)
            self.seg[side] = (np.stack([x0, xt], -1), np.stack([y0, ym], -1),
                              np.stack([xt, x1], -1), np.stack([ym, y1], -1))

    def _margin(self, a, m, b, side):
        """Smallest signed distance (positive: beyond the far boundary) of each edge."""
        c0 = a
        c1 = -3.0 * a + 4.0 * m - b
        c2 = 2.0 * a - 4.0 * m + 2.0 * b

        def frame(c, origin):
            r = c - origin
            return np.einsum("ie,ie->e", self.u, r), np.einsum("ie,ie->e", self.v, r)

        qx0, qy0 = frame(c0, self.a)
        qx1, qy1 = frame(c1, 0.0)
        qx2, qy2 = frame(c2, 0.0)
        out = np.full(a.shape[1], -np.inf)
        # the edge must run forward along the chord, inside the sampled range
        fwd = (qx1 > 0) & (qx1 + 2.0 * qx2 > 0) & (qx0 >= self.cov[0]) \
            & (qx0 + qx1 + qx2 <= self.cov[1])
        xa, ya, xb, yb = (v for v in self.seg[side])
        e = (slice(None), None, None)
        qx0, qx1, qx2, qy0, qy1, qy2 = (v[e] for v in (qx0, qx1, qx2, qy0, qy1, qy2))

        def s_at(xv):
            """Edge parameter where its chord coordinate is ``xv`` (monotone quadratic)."""
            r = xv - qx0
            disc = np.maximum(qx1 * qx1 + 4.0 * qx2 * r, 0.0)
            return 2.0 * r / (qx1 + np.sqrt(disc))

        sa = np.clip(s_at(xa), 0.0, 1.0)
        sb = np.clip(s_at(xb), 0.0, 1.0)
        # signed distance of the edge from the segment's line: side * cross(B - A, Q - A)
        lx, ly = xb - xa, yb - ya
        norm = np.maximum(np.hypot(lx, ly), 1e-300)
        g0 = side * (lx * (qy0 - ya) - ly * (qx0 - xa)) / norm
        g1 = side * (lx * qy1 - ly * qx1) / norm
        g2 = side * (lx * qy2 - ly * qx2) / norm

        def g(sv):
            return g0 + sv * (g1 + sv * g2)

        with np.errstate(divide="ignore", invalid="ignore"):
            sv = np.where(g2 > 0, -g1 / (2.0 * g2), sa)
        sv = np.clip(sv, sa, sb)
        low = np.minimum(np.minimum(g(sa), g(sb)), g(sv))
        low = np.where(sb > sa, low, np.inf)  # the edge does not span this segment
        out = np.where(fwd, low.min(axis=(1, 2)), -np.inf)
        return out

    def violation(self, a, m, b, side):
        return np.maximum(-self._margin(a, m, b, side), 0.0)

    def certified(self, a, m, b, side):
        return self._margin(a, m, b, side) >= 0.0


def _curved_domains(mesh, nodes, margin: float = 1.1, tries: int = 10):
    p6 = nodes.p6
    e, cur = nodes.segment_edges, mesh.segment_curves
    segs = np.flatnonzero(nodes.segment_curved)
    mids = nodes.segment_mid
    a, b, m = p6[:, e[0, segs]], p6[:, e[1, segs]], p6[:, mids[segs]]
    chord = b - a
    length = np.hypot(*chord)
    nrm = np.stack([-chord[1], chord[0]]) / length  # left normal: into the material
    size = float(np.max(np.ptp(p6, axis=1)))
    tiny = 1e-12 * size
    # curve parameters of each edge's ends a, b (segments may run the other way)
    par = nodes.segment_params[:, segs]
    same = mesh.segments[0, segs] == e[0, segs]
    tpar = np.where(same, par, par[::-1])
    checks = []
    for c in np.unique(cur[segs]):
        sel = np.flatnonzero(cur[segs] == c)
        cv = mesh.curves[c]
        f = _conic(cv)
        if f is not None:
            chk = _ConicCheck(f, a[:, sel], m[:, sel], b[:, sel], nrm[:, sel], length[sel], size)
        else:
            chk = _EnvelopeCheck(cv, a[:, sel], b[:, sel], nrm[:, sel], *tpar[:, sel])
        if not chk.ok:
            return None
        checks.append((sel, chk))

    def judge(q, side, what):
        qa, qm, qb = q[:, e[0, segs]], q[:, mids[segs]], q[:, e[1, segs]]
        out = np.empty(len(segs), dtype=float if what == "violation" else bool)
        for sel, chk in checks:
            out[sel] = getattr(chk, what)(qa[:, sel], qm[:, sel], qb[:, sel], side)
        return out

    # corner directions: bisector of the left normals of the node's two boundary edges
    n = mesh.nnodes
    s_all = e.shape[1]
    chord_all = p6[:, e[1]] - p6[:, e[0]]
    left = np.stack([-chord_all[1], chord_all[0]]) / np.hypot(*chord_all)
    out_edge = np.full(n, -1)
    in_edge = np.full(n, -1)
    out_edge[e[0]] = np.arange(s_all)
    in_edge[e[1]] = np.arange(s_all)
    ends = np.concatenate([e[0, segs], e[1, segs]])
    corners = np.unique(ends)
    bis = left[:, out_edge[corners]] + left[:, in_edge[corners]]
    bis /= np.maximum(np.hypot(*bis), 1e-300)
    slot = np.searchsorted(corners, ends)  # corner slot of each curved edge's a, then b
    cos_end = np.einsum("ij,ij->j", bis[:, slot], np.concatenate([nrm, nrm], axis=1))
    if np.any(cos_end <= 0.05):  # a hairpin corner: cannot move along the bisector
        return None
    # straight boundary edges at a moved corner must tilt the right way too
    for adj in (out_edge[corners], in_edge[corners]):
        if np.any(np.einsum("ij,ij->j", bis, left[:, adj]) <= 0.05):
            return None

    k = len(segs)
    straight = np.ones(p6.shape[1] - n, dtype=bool)
    straight[mids[segs] - n] = False
    ed = nodes.edges[:, straight]
    result = {}
    for side in (+1, -1):
        delta = margin * judge(p6, side, "violation") + tiny
        for _ in range(tries):
            amount = np.zeros(len(corners))
            np.maximum.at(amount, slot, np.concatenate([delta, delta]) / cos_end)
            q = p6.copy()
            q[:, corners] += side * bis * amount
            normal_ends = amount[slot] * cos_end  # normal move of a and b
            q[:, mids[segs]] += side * nrm * 0.5 * (normal_ends[:k] + normal_ends[k:])
            # every other mid-node at the midpoint of its (possibly moved) corners
            q[:, n + np.flatnonzero(straight)] = 0.5 * (q[:, ed[0]] + q[:, ed[1]])
            bad = ~judge(q, side, "certified")
            if not bad.any():
                break
            delta[bad] *= 1.5
        else:
            return None
        result[side] = q
    curved = nodes.curved
    t6 = nodes.t6
    cidx = np.flatnonzero(curved)
    sidx = np.flatnonzero(~curved)
    for q in result.values():
        if np.any(_jacobian_lower_bound(q[:, t6[:, cidx]]) <= 0):
            return None
        area, _ = p1.geometry(q, t6[:3, sidx])
        if np.any(area <= 0):
            return None
    moved = np.flatnonzero(np.any(result[1] != p6, axis=0) | np.any(result[-1] != p6, axis=0))
    return OutlineDomains(p_in=result[1], p_out=result[-1], curved=curved.copy(), ok=True,
                          how="curved", moved=moved)


def _drawn_bounds(mesh: Mesh, fields: P2Fields, construction: str, shares):
    """J bounds for the drawn outline from the P2 fields (see :func:`outline_domains`).

    ``shares`` are the mesh's element shares and their rounding bounds
    (:func:`_all_shares`).  Returns ``(j_lo, j_hi, slack, scope, how)``: each
    bound is the sum of every element's share on its domain (the elements the
    construction touches evaluated afresh, the others as on the mesh), widened
    by its rounding bound; ``slack`` is each element's share of the two
    changes (added to the refinement indicators), ``rounding`` the two
    widenings together.
    """
    nodes = fields.nodes
    t6 = nodes.t6
    m = t6.shape[1]
    origin = fields.origin[:, None]
    phi, w, cvals = fields.phi, fields.omega, fields.hole_values
    mesh_lo, mesh_hi, mesh_elo, mesh_ehi = shares
    dom = outline_domains(mesh, nodes, construction)
    touched = np.zeros(nodes.nnodes, dtype=bool)
    touched[dom.moved] = True
    elems = np.flatnonzero(touched[t6].any(axis=0) | nodes.curved)
    if dom.ok:
        p_lo, p_hi, scope, how = dom.p_in, dom.p_out, "curves", dom.how
        curved = dom.curved
    else:
        # neither domain: exact bounds for the straight-sided mesh polygon
        p_lo = p_hi = _straight_mesh(nodes)
        curved = np.zeros(m, dtype=bool)
        scope, how = "mesh", ""
    lo_new, _, elo_new, _ = _shares(p_lo - origin, t6, curved, elems, phi, w, certify=True)
    _, hi_new, _, ehi_new = _shares(p_hi - origin, t6, curved, elems, phi, w, certify=True)
    lo_all, hi_all = mesh_lo.copy(), mesh_hi.copy()
    elo_all, ehi_all = mesh_elo.copy(), mesh_ehi.copy()
    lo_all[elems], elo_all[elems] = lo_new, elo_new
    hi_all[elems], ehi_all[elems] = hi_new, ehi_new
    hterm, herr, _ = _hole_term(mesh, nodes, p_lo - origin, cvals)
    lower, upper = _functionals(lo_all, hi_all, elo_all, ehi_all, hterm, herr)
    j_lo, j_hi = lower.lower, upper.upper
    d_lo = lo_new - mesh_lo[elems]
    d_hi = hi_new - mesh_hi[elems]
    slack = np.zeros(m)
    if dom.ok:
        # an element next to hole k gains or loses 4 C_k times its area change in
        # its own share, which the hole term gives back: count the difference
        c_node = np.concatenate([[0.0, 0.0], cvals])[nodes.boundary_marker]
        c_el = c_node[t6[:, elems]].max(axis=0)
        d_area = _element_areas(p_lo, t6, curved, elems) \
            - _element_areas(nodes.p6, t6, nodes.curved, elems)
        slack[elems] = np.abs(d_lo - 4.0 * c_el * d_area) + np.abs(d_hi)
    else:  # refine the boundary elements (as the P1 solver does)
        on_b = nodes.boundary_marker > 0
        hit = on_b[t6].any(axis=0)
        slack[hit] = (j_hi - j_lo) / max(int(hit.sum()), 1)
    return j_lo, j_hi, slack, scope, how, lower.rounding + upper.rounding


def _straight_mesh(nodes: P2Nodes) -> np.ndarray:
    """P2 node positions with every mid-node at its chord midpoint (the mesh polygon)."""
    q = nodes.p6.copy()
    n = q.shape[1] - nodes.edges.shape[1]
    q[:, n:] = 0.5 * (q[:, nodes.edges[0]] + q[:, nodes.edges[1]])
    return q


# ------------------------------------------------------------------ peak shear


@dataclass(frozen=True)
class P2Peak:
    """Peak boundary shear (per unit ``G * theta``) from a P2 solution.

    Attributes
    ----------
    value : float
        max over boundary P2 nodes of ``|tau_phi|`` (node-averaged, see
        :func:`boundary_peak_p2`).
    node : int
        P2 node where it sits.
    xy : tuple of float
        Its coordinates in the mesh frame (not centred).
    warping_value : float
        ``|tau_w|`` at the same node, averaged the same way: a cross-check.
    nodes : ndarray
        Boundary P2 nodes.
    tau_phi, tau_w : ndarray
        ``|tau|`` from each field at ``nodes``.
    """

    value: float
    node: int
    xy: tuple[float, float]
    warping_value: float
    nodes: np.ndarray
    tau_phi: np.ndarray
    tau_w: np.ndarray


def _nodal_gradients(fields: P2Fields, u: np.ndarray) -> np.ndarray:
    """Gradient of ``u`` at the six local nodes of every element, ``(2, 6, M)``.

    Affine elements: the barycentric gradients; curved elements: the
    isoparametric map's Jacobian at each node.
    """
    t6 = fields.t6
    g = _gradient_at(t6, fields.elem_grad, u, NODE_BARY)
    cidx = np.flatnonzero(fields.nodes.curved)
    if len(cidx):
        _, det, cg = _iso_map(fields.p[:, t6[:, cidx]], NODE_BARY)
        g[:, :, cidx] = np.einsum("ckqe,ke->cqe", cg, u[t6[:, cidx]]) / det
    return g


def boundary_peak_p2(fields: P2Fields) -> P2Peak:
    """Peak shear on the boundary from the P2 element gradients.

    One rule for every boundary node.  The gradient of each element is
    evaluated at its six local nodes (with the isoparametric Jacobian on
    curved elements).  A boundary mid-node belongs to one element only, so
    its value is unique.  A boundary corner node is shared by several
    elements whose one-sided gradients differ by the discretisation error;
    they are averaged with the element areas as weights (vector average,
    then magnitude).  The per-element maximum would instead pick the largest
    of these one-sided values, an upward bias of the size of the gradient
    error itself; the average is the centred estimate.  Along a boundary
    edge ``phi`` is constant (three equal nodal values of a quadratic), so
    ``tau_phi`` there is tangent to the boundary.  ``|grad phi|^2`` is
    subharmonic, so its maximum over the section lies on the boundary.
    With mid-nodes on the drawn curves, a concave fillet is a smooth
    boundary and needs no exception; sharp re-entrant corners are the
    caller's business (:func:`soapfilm.solve.boundary_peak`).

    The warping shear ``tau_w = grad(omega) + (-y, x)`` is averaged in the
    same way at the same nodes; the two fields converge to the same stress
    from opposite sides of the hypercircle, so their difference at the peak
    node shows how far the peak has settled.
    """
    t6 = fields.t6
    n = fields.p.shape[1]
    m = t6.shape[1]
    gphi = _nodal_gradients(fields, fields.phi)  # (2, 6, M)
    gw = _nodal_gradients(fields, fields.omega)
    x, y = fields.p[0, t6], fields.p[1, t6]  # (6, M)
    tw = np.stack([gw[0] - y, gw[1] + x])
    tp = np.stack([gphi[1], -gphi[0]])
    wts = np.broadcast_to(fields.elem_area, (6, m))
    idx = t6.ravel()
    wsum = np.bincount(idx, weights=wts.ravel(), minlength=n)

    def avg(v):
        return np.stack(
            [np.bincount(idx, weights=(v[c] * wts).ravel(), minlength=n) / np.maximum(wsum, 1e-300)
             for c in range(2)]
        )

    bnodes = np.flatnonzero(fields.nodes.boundary_marker > 0)
    ap, aw = avg(tp)[:, bnodes], avg(tw)[:, bnodes]
    tau_p = np.hypot(ap[0], ap[1])
    tau_w = np.hypot(aw[0], aw[1])
    i = int(np.argmax(tau_p))
    node = int(bnodes[i])
    xy = fields.p[:, node] + fields.origin
    return P2Peak(
        value=float(tau_p[i]),
        node=node,
        xy=(float(xy[0]), float(xy[1])),
        warping_value=float(tau_w[i]),
        nodes=bnodes,
        tau_phi=tau_p,
        tau_w=tau_w,
    )


def uniformly_refined(mesh: Mesh, nodes: P2Nodes | None = None) -> Mesh:
    """Split every triangle into four at its edge mid-nodes.

    Interior edges are halved at their midpoints, curved boundary edges at
    their mid-node on the curve, so the new boundary nodes lie on the drawn
    curves; straight parts of the polygon are kept exactly.  Boundary
    segments are split too and keep their markers and curves.
    """
    if nodes is None:
        nodes = p2_nodes(mesh)
    t6 = nodes.t6
    t = np.concatenate(
        [t6[[0, 3, 5]], t6[[3, 1, 4]], t6[[5, 4, 2]], t6[[3, 4, 5]]], axis=1
    )
    s = mesh.segments
    mid = nodes.segment_mid
    segs = np.concatenate([np.stack([s[0], mid]), np.stack([mid, s[1]])], axis=1)
    marks = np.concatenate([mesh.segment_markers, mesh.segment_markers])
    curves = np.concatenate([mesh.segment_curves, mesh.segment_curves])
    fine = Mesh(nodes.p6, t, segs, marks, mesh.hole_areas, curves, mesh.curves)
    if not mesh.curves:
        return fine
    from ..mesh import snapped_to_curves

    fine = snapped_to_curves(fine)
    return dataclasses.replace(fine, hole_areas=fine.hole_loop_areas())
