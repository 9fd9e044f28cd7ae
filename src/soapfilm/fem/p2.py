"""Quadratic triangles (P2) for both Saint-Venant torsion problems.

The elements are straight-sided (affine), so the meshed domain is exactly the
polygon of the P1 mesh and every integral below is computed exactly: the two
J values stay guaranteed bounds for that polygon.

Node convention
---------------
``p6`` holds the P1 nodes first (same numbering as ``mesh.p``), then one node
per unique mesh edge at its midpoint.  ``t6`` has shape ``(6, M)``: rows 0-2
are the corners (as in ``mesh.t``, counter-clockwise), row 3 is the midpoint
of edge (0, 1), row 4 of edge (1, 2) and row 5 of edge (2, 0).

Basis, with barycentric coordinates ``L0, L1, L2``::

    N_i   = L_i (2 L_i - 1)        i = 0, 1, 2
    N_3   = 4 L0 L1,  N_4 = 4 L1 L2,  N_5 = 4 L2 L0

Problems (per unit ``G * theta``, coordinates from the centroid), as in
:mod:`soapfilm.fem.torsion`::

    -lap(phi) = 2, phi = 0 on the outer loop, phi = C_k on hole k (one
    unknown per hole, shared by its corner and midpoint nodes, loaded by
    2 A_k);  J_lo = 2 int(phi) + 2 sum_k C_k A_k
    int grad(omega) . grad(v) = int (y dv/dx - x dv/dy);
    J_hi = Ip - int |grad(omega)|^2
    eta_e^2 = int_e |tau_w - tau_phi|^2,  sum_e eta_e^2 = J_hi - J_lo.

Every integrand is a polynomial of degree <= 2 on an affine triangle
(gradients of P2 functions are linear), integrated with a 7-point rule with
rational weights that is exact up to degree 3.

References
----------
.. [1] The 7-point rule (centroid 27/60, edge midpoints 8/60, vertices
   3/60) is a classical degree-3 triangle rule (from memory); its exactness
   is checked in ``tests/test_p2.py`` against the closed-form integrals of
   barycentric monomials.
.. [2] S. P. Timoshenko and J. N. Goodier, Theory of Elasticity, 3rd ed.,
   McGraw-Hill, 1970, ch. 10.
.. [3] W. Prager and J. L. Synge, "Approximations in elasticity based on the
   concept of function space", Q. Appl. Math. 5 (1947) 241-269.
"""

from __future__ import annotations

import dataclasses

import logging
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ..errors import SolveError
from ..mesh import Mesh
from . import p1
from .linsolve import solve_spd
from .torsion import section_centroid, stress_function_system

__all__ = [
    "P2Nodes",
    "P2Fields",
    "P2Peak",
    "QUAD_BARY",
    "QUAD_WEIGHTS",
    "p2_nodes",
    "basis_values",
    "basis_gradients",
    "stiffness",
    "mass_vector",
    "coordinate_load",
    "solve_torsion_p2",
    "element_indicators",
    "boundary_peak_p2",
    "interior_angles",
    "uniformly_refined",
]

log = logging.getLogger(__name__)

#: Unknowns up to which ``method="auto"`` factorises directly; above, CG
#: preconditioned with AMG of the P1 matrix on the split mesh (see
#: :func:`_solve_amg`).  Whole solve (both problems) on the keyed shaft,
#: 2-core sandbox under load: 85 913 unknowns direct 1.8 s / AMG 4.0 s;
#: 175 893 unknowns direct 7.0 s / AMG 6.8 s; 572 429 unknowns AMG 25 s
#: (34-38 CG iterations at every size), SuperLU over 200 s.
P2_DIRECT_LIMIT = 150_000

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

#: Local corner pairs of the midpoint nodes 3, 4, 5.
_EDGES = np.array([[0, 1], [1, 2], [2, 0]])

#: Barycentric coordinates (6, 3) of the six local nodes.
NODE_BARY = np.array(
    [[1, 0, 0], [0, 1, 0], [0, 0, 1], [0.5, 0.5, 0], [0, 0.5, 0.5], [0.5, 0, 0.5]], dtype=float
)


@dataclass(frozen=True)
class P2Nodes:
    """The P2 node set built on a P1 mesh.

    Attributes
    ----------
    p6 : ndarray (2, N + E)
        Corner nodes, then edge midpoints.
    t6 : ndarray (6, M) int32
        Element nodes, see the module docstring for the order.
    edges : ndarray (2, E) int32
        Unique edges (sorted corner pairs); midpoint of edge ``j`` is node ``N + j``.
    boundary_marker : ndarray (N + E,) int32
        0 for interior nodes, otherwise the segment marker of the boundary loop
        the node lies on (1 = outer, k + 2 = hole k).
    """

    p6: np.ndarray
    t6: np.ndarray
    edges: np.ndarray
    boundary_marker: np.ndarray

    def __post_init__(self):
        for name in ("p6", "t6", "edges", "boundary_marker"):
            getattr(self, name).setflags(write=False)

    @property
    def nnodes(self) -> int:
        return self.p6.shape[1]

    def loop_nodes(self, marker: int) -> np.ndarray:
        """Sorted P2 nodes (corners and midpoints) on loop ``marker``."""
        return np.flatnonzero(self.boundary_marker == marker)


def _edge_keys(a: np.ndarray, b: np.ndarray, n: int) -> np.ndarray:
    lo = np.minimum(a, b).astype(np.int64)
    hi = np.maximum(a, b).astype(np.int64)
    return lo * n + hi


def p2_nodes(mesh: Mesh) -> P2Nodes:
    """Build the P2 node set of a P1 mesh (vectorised, no loop over elements).

    Boundary midpoints are found by matching each boundary segment to its mesh
    edge; a midpoint inherits the segment's marker.  A corner node inherits the
    marker of any segment it ends (loops do not touch, so this is unique).
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
    return P2Nodes(p6=p6, t6=t6, edges=edges, boundary_marker=marker)


def basis_values(bary: np.ndarray) -> np.ndarray:
    """P2 basis values ``(6, npts)`` at barycentric points ``(npts, 3)``."""
    lam = np.asarray(bary, dtype=float).T  # (3, npts)
    corner = lam * (2.0 * lam - 1.0)
    edge = 4.0 * lam[_EDGES[:, 0]] * lam[_EDGES[:, 1]]
    return np.concatenate([corner, edge])


def basis_gradients(bary: np.ndarray, lgrad: np.ndarray) -> np.ndarray:
    """P2 basis gradients ``(2, 6, npts, M)``.

    Parameters
    ----------
    bary : ndarray (npts, 3)
        Barycentric evaluation points.
    lgrad : ndarray (2, 3, M)
        Gradients of the barycentric coordinates (the P1 basis gradients).
    """
    lam = np.asarray(bary, dtype=float).T  # (3, npts)
    # d N_i / d L_j, shape (6, 3, npts)
    dn = np.zeros((6, 3, lam.shape[1]))
    for i in range(3):
        dn[i, i] = 4.0 * lam[i] - 1.0
    for r, (i, j) in enumerate(_EDGES):
        dn[3 + r, i] = 4.0 * lam[j]
        dn[3 + r, j] = 4.0 * lam[i]
    return np.einsum("ijq,cje->ciqe", dn, lgrad)


def stiffness(t6: np.ndarray, area: np.ndarray, lgrad: np.ndarray, n: int) -> sp.csr_matrix:
    """Global P2 Laplace stiffness, integrated exactly (degree-2 integrand)."""
    g = basis_gradients(QUAD_BARY, lgrad)  # (2, 6, q, M)
    ke = np.einsum("ciqe,cjqe,q->ije", g, g, QUAD_WEIGHTS) * area  # (6, 6, M)
    rows = np.broadcast_to(t6[:, None, :], ke.shape).ravel()
    cols = np.broadcast_to(t6[None, :, :], ke.shape).ravel()
    return sp.csr_matrix((ke.ravel(), (rows, cols)), shape=(n, n))


def mass_vector(t6: np.ndarray, area: np.ndarray, n: int) -> np.ndarray:
    """``int N_i`` (exact): 0 for corner nodes, ``A/3`` for midpoint nodes."""
    w = basis_values(QUAD_BARY) @ QUAD_WEIGHTS  # (6,) = [0, 0, 0, 1/3, 1/3, 1/3]
    return np.bincount(t6.ravel(), weights=(w[:, None] * area).ravel(), minlength=n)


def _points(p6: np.ndarray, t6: np.ndarray, bary: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Physical coordinates ``(npts, M)`` of barycentric points (affine map)."""
    x = bary @ p6[0, t6[:3]]
    y = bary @ p6[1, t6[:3]]
    return x, y


def coordinate_load(p6, t6, area, lgrad, n: int) -> np.ndarray:
    """``f_i = int (y dN_i/dx - x dN_i/dy) dA``, exact (degree-2 integrand)."""
    g = basis_gradients(QUAD_BARY, lgrad)  # (2, 6, q, M)
    x, y = _points(p6, t6, QUAD_BARY)  # (q, M)
    fe = np.einsum("iqe,q->ie", y * g[0] - x * g[1], QUAD_WEIGHTS) * area
    return np.bincount(t6.ravel(), weights=fe.ravel(), minlength=n)


def _gradient_at(t6, lgrad, u, bary) -> np.ndarray:
    """Gradient ``(2, npts, M)`` of the P2 field ``u`` at barycentric points."""
    g = basis_gradients(bary, lgrad)
    return np.einsum("ciqe,ie->cqe", g, u[t6])


@dataclass(frozen=True)
class P2Fields:
    """Both torsion fields on quadratic triangles.

    Same meaning as :class:`soapfilm.fem.torsion.TorsionFields` for the shared
    names; ``p``, ``phi`` and ``omega`` run over the P2 nodes (corners first,
    so ``phi[:mesh.nnodes]`` are the corner values), and ``elem_grad`` holds the
    gradients of the barycentric coordinates.
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
    indicators: np.ndarray  # (M,) eta_e^2
    elem_area: np.ndarray  # (M,)
    elem_grad: np.ndarray  # (2, 3, M) barycentric gradients
    nodes: P2Nodes
    order: int = 2


def solve_torsion_p2(mesh: Mesh, method: str = "auto", nodes: P2Nodes | None = None) -> P2Fields:
    """Solve the stress-function and warping-function problems with P2 elements.

    Parameters
    ----------
    mesh : Mesh
        Straight-sided P1 mesh; the midpoints are added here.
    method : {"auto", "direct", "amg"}
        "direct": :func:`soapfilm.fem.linsolve.solve_spd` (SuperLU); "amg":
        CG preconditioned with smoothed aggregation built on the P1 matrix
        of the split mesh; "auto" factorises up to :data:`P2_DIRECT_LIMIT`
        unknowns.
    nodes : P2Nodes, optional
        Precomputed :func:`p2_nodes` of ``mesh``.
    """
    if nodes is None:
        nodes = p2_nodes(mesh)
    t, t6 = mesh.t, nodes.t6
    n = nodes.nnodes
    if method == "auto":
        method = "direct" if n <= P2_DIRECT_LIMIT else "amg"
    total, origin = section_centroid(mesh.p, t)
    p = nodes.p6 - origin[:, None]
    area, lgrad = p1.geometry(p, t)
    k = stiffness(t6, area, lgrad, n)
    mvec = mass_vector(t6, area, n)
    if method == "amg":
        # P1 on the mesh split at the P2 nodes: same unknowns, spectrally
        # equivalent to the P2 matrix, and an M-matrix that suits aggregation.
        split = uniformly_refined(mesh, nodes)
        a1, g1 = p1.geometry(split.p, split.t)
        k_pre = p1.stiffness(split.t, a1, g1, n)
    elif method != "direct":
        raise ValueError(f"unknown method {method!r}")

    # ---- stress function
    b = 2.0 * mvec
    prolong, k_red, b_red = stress_function_system(k, b, nodes.boundary_marker, mesh.hole_areas)
    nfree = k_red.shape[0] - mesh.nholes
    if method == "amg":
        x = _solve_amg(k_red, (prolong.T @ k_pre @ prolong).tocsr(), b_red)
    else:
        x = solve_spd(k_red, b_red, method="direct")
    phi = prolong @ x
    hole_values = x[nfree:].copy()
    # bound for any approximate phi (see fem.torsion): 2 l(phi) - a(phi, phi)
    j_lo = 2.0 * float(b_red @ x) - float(x @ (k_red @ x))

    # ---- warping function, then mean zero.  Direct: corner node 0 pinned.
    # AMG: the singular Neumann system with the load projected on the range
    # (sum f = 0 up to rounding), which CG handles; pinning one node slows
    # AMG-CG down by an order of magnitude.
    f = coordinate_load(p, t6, area, lgrad, n)
    if method == "amg":
        w = _solve_amg(k, k_pre, f - f.mean())
    else:
        w = np.zeros(n)
        w[1:] = solve_spd(k[1:, 1:], f[1:], method=method)
    w -= (mvec @ w) / total
    ixx, iyy, _ = p1.second_moments(p, t, area)
    ip = float(ixx.sum() + iyy.sum())
    # bound for any approximate w (see fem.torsion): Ip - 2 f.w + a(w, w)
    j_hi = ip - 2.0 * float(f @ w) + float(w @ (k @ w))

    eta2 = element_indicators(p, t6, area, lgrad, phi, w)
    log.debug("P2: %d nodes, J in [%.10g, %.10g]", n, j_lo, j_hi)
    return P2Fields(
        origin=origin,
        p=p,
        t6=t6,
        phi=phi,
        omega=w,
        hole_values=hole_values,
        area=total,
        polar_moment=ip,
        j_lo=j_lo,
        j_hi=j_hi,
        indicators=eta2,
        elem_area=area,
        elem_grad=lgrad,
        nodes=nodes,
    )


def _solve_amg(a, a_pre, b, rtol: float = 1e-9) -> np.ndarray:
    """CG on ``a`` preconditioned with AMG of ``a_pre``, BLAS on one thread (see linsolve)."""
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        return _solve_amg_inner(a, a_pre, b, rtol)


def _solve_amg_inner(a, a_pre, b, rtol: float) -> np.ndarray:
    """CG on ``a`` preconditioned with smoothed aggregation of ``a_pre``.

    The true residual is checked: above ``1e3 * rtol`` relative raises
    :class:`~soapfilm.errors.SolveError` (1e-9 keeps the algebraic error in J
    far below any bracket width of interest).
    """
    import pyamg
    from pyamg.krylov import cg

    bn = float(np.linalg.norm(b))
    if bn == 0.0:
        return np.zeros_like(b)
    ml = pyamg.smoothed_aggregation_solver(a_pre, symmetry="hermitian", max_coarse=500)
    res: list[float] = []
    x, _ = cg(a, b, tol=rtol, maxiter=400, M=ml.aspreconditioner(), residuals=res)
    rel = float(np.linalg.norm(b - a @ x)) / bn
    if rel > 1e3 * rtol:
        raise SolveError(f"the iterative solver stopped at relative residual {rel:.2e}")
    log.debug("P2 AMG-CG: %d iterations, relative residual %.1e", len(res) - 1, rel)
    return x


def element_indicators(p, t6, area, lgrad, phi, omega) -> np.ndarray:
    """``eta_e^2 = int_e |tau_w - tau_phi|^2``, exact (degree-2 integrand).

    ``tau_phi = (dphi/dy, -dphi/dx)`` and ``tau_w = (domega/dx - y,
    domega/dy + x)`` are linear on each element.
    """
    gphi = _gradient_at(t6, lgrad, phi, QUAD_BARY)  # (2, q, M)
    gw = _gradient_at(t6, lgrad, omega, QUAD_BARY)
    x, y = _points(p, t6, QUAD_BARY)
    d0 = gw[0] - y - gphi[1]
    d1 = gw[1] + x + gphi[0]
    return (QUAD_WEIGHTS @ (d0 * d0 + d1 * d1)) * area


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
    skipped : ndarray
        Boundary P2 nodes left out of the maximum because they lie near a
        re-entrant polygon vertex (empty unless asked for; see
        :func:`boundary_peak_p2`).
    """

    value: float
    node: int
    xy: tuple[float, float]
    warping_value: float
    nodes: np.ndarray
    tau_phi: np.ndarray
    tau_w: np.ndarray
    skipped: np.ndarray


def interior_angles(p: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Interior angle (radians) of the meshed domain at every P1 node.

    The sum of the angles at the node of all elements touching it: 2 pi
    inside, pi at a boundary node on a straight run, more than pi at a
    re-entrant boundary vertex.
    """
    n = p.shape[1]
    out = np.zeros(n)
    for i in range(3):
        u = p[:, t[(i + 1) % 3]] - p[:, t[i]]
        v = p[:, t[(i + 2) % 3]] - p[:, t[i]]
        ang = np.arctan2(np.abs(u[0] * v[1] - u[1] * v[0]), u[0] * v[0] + u[1] * v[1])
        out += np.bincount(t[i], weights=ang, minlength=n)
    return out


def boundary_peak_p2(
    fields: P2Fields, skip_reentrant: bool = False, angle_tol_deg: float = 0.01
) -> P2Peak:
    """Peak shear on the boundary from the P2 element gradients.

    The gradient of each element is evaluated at its six local nodes.  A
    boundary midpoint node belongs to one element only, so its value is
    unique.  A boundary corner node is shared by several elements whose
    one-sided gradients differ by the discretisation error; they are
    averaged with the element areas as weights (vector average, then
    magnitude).  The per-element maximum would instead pick the largest of
    these one-sided values, an upward bias of the size of the gradient error
    itself; the average is the centred estimate.  Along a boundary edge
    ``phi`` is constant (three equal nodal values of a quadratic), so
    ``tau_phi`` there is exactly normal-derivative based and tangent to the
    boundary.  ``|grad phi|^2`` is subharmonic, so its maximum over the
    section lies on the boundary.

    The warping shear ``tau_w = grad(omega) + (-y, x)`` is averaged in the
    same way at the same nodes; the two fields converge to the same stress
    from opposite sides of the hypercircle, so their difference at the peak
    node shows how far the peak has settled.

    Parameters
    ----------
    fields : P2Fields
    skip_reentrant : bool
        Leave out the boundary nodes near re-entrant vertices of the polygon
        (interior angle above ``180 + angle_tol_deg`` degrees): every node
        closer to such a vertex than a quarter of the vertex's distance to
        its nearest other polygon vertex.  The stress at a re-entrant vertex
        is unbounded, and near it grows like ``r**(pi/alpha - 1)``, so any
        nodal maximum there creeps upward under refinement as nodes approach
        the vertex.  This matters also for a concave arc given as a
        polyline, whose every vertex is slightly re-entrant: with 24 chords
        on a quarter circle the nodal maximum grows about 1.4 % per halving
        of h, while the values at the middle halves of the chords converge.
    angle_tol_deg : float
        Tolerance above 180 deg; the default ignores the collinear nodes the
        mesher adds on straight runs (which are not polygon vertices either).
    """
    t6, lgrad = fields.t6, fields.elem_grad
    n = fields.p.shape[1]
    m = t6.shape[1]
    gphi = _gradient_at(t6, lgrad, fields.phi, NODE_BARY)  # (2, 6, M)
    gw = _gradient_at(t6, lgrad, fields.omega, NODE_BARY)
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
    skipped = np.zeros(0, dtype=np.int64)
    if skip_reentrant:
        skipped = _near_reentrant(fields.p, t6, bnodes, np.radians(angle_tol_deg))
        bnodes = np.setdiff1d(bnodes, skipped)
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
        skipped=skipped,
    )


def _near_reentrant(p, t6, bnodes, tol: float) -> np.ndarray:
    """Boundary P2 nodes within a quarter-edge of a re-entrant polygon vertex."""
    from scipy.spatial import cKDTree

    ncorner = int(t6[:3].max()) + 1
    corners = bnodes[bnodes < ncorner]
    ang = interior_angles(p[:, :ncorner], t6[:3])[corners]
    vertex = np.abs(ang - np.pi) > tol  # polygon vertices (not collinear mesher nodes)
    vx = corners[vertex]
    reent = ang[vertex] > np.pi + tol
    if not reent.any():
        return np.zeros(0, dtype=np.int64)
    if len(vx) < 2:
        return vx[reent]
    tree = cKDTree(p[:, vx].T)
    dist2, _ = tree.query(p[:, vx].T, k=2)
    radius = 0.25 * dist2[:, 1]  # quarter of the distance to the nearest other vertex
    d, j = tree.query(p[:, bnodes].T, k=1)
    near = reent[j] & (d < radius[j] * (1.0 + 1e-9))
    return bnodes[near]


def uniformly_refined(mesh: Mesh, nodes: P2Nodes | None = None) -> Mesh:
    """Split every triangle into four at its edge midpoints.

    The new mesh is nested in the old one (same polygon, halved edges, same
    angles); boundary segments are split too and keep their markers.
    """
    if nodes is None:
        nodes = p2_nodes(mesh)
    t6 = nodes.t6
    t = np.concatenate(
        [t6[[0, 3, 5]], t6[[3, 1, 4]], t6[[5, 4, 2]], t6[[3, 4, 5]]], axis=1
    )
    n = mesh.nnodes
    s = mesh.segments
    skeys = _edge_keys(s[0], s[1], n)
    ekeys = _edge_keys(nodes.edges[0], nodes.edges[1], n)
    mid = n + np.searchsorted(ekeys, skeys)
    segs = np.concatenate([np.stack([s[0], mid]), np.stack([mid, s[1]])], axis=1)
    marks = np.concatenate([mesh.segment_markers, mesh.segment_markers])
    curves = np.concatenate([mesh.segment_curves, mesh.segment_curves])
    fine = Mesh(nodes.p6, t, segs, marks, mesh.hole_areas, curves, mesh.curves)
    if not mesh.curves:
        return fine
    from ..mesh import snapped_to_curves

    fine = snapped_to_curves(fine)
    return dataclasses.replace(fine, hole_areas=fine.hole_loop_areas())
