"""Bounds on J for the drawn outline, not for the mesh polygon.

The mesh boundary is a polygon whose nodes lie on the drawn curves.  Its J
differs from the drawn section's by the slivers between each chord and its
arc.  J is monotone in the section (shared/design.md, "Bounds for the drawn
outline"; derivation in DEVELOPERS.md): a section inside another has the
smaller J, holes included.  So with an inner polygon ``P_in`` inside the drawn
section ``S`` and an outer polygon ``P_out`` containing it::

    L(phi_h on P_in) <= J(P_in) <= J(S) <= J(P_out) <= E(omega_h on P_out)

where ``L`` is the complementary-energy functional of the stress function
and ``E`` the potential energy of the warping function, both valid for ANY
admissible field.  Both polygons are the mesh itself with some boundary nodes
moved: no new solve, only the two functionals evaluated on moved nodes with
the nodal values already computed (the moved field is admissible: zero on the
outer loop, one value per hole).

Building the polygons.  Each curved boundary edge ``a -> b`` (material on the
left) lies on one curve piece whose tangent turns one way only and by less
than 90 degrees over the edge; such a piece lies inside the triangle of
``a``, ``b`` and the intersection ``T`` of its end tangents.  Where ``T`` is on
the material side (a concave curve: the chord cuts off non-material), the
inner polygon moves ``a`` and ``b`` into the material until ``T`` lies on the
far side of the moved edge; where ``T`` is outside (a convex curve) the outer
polygon moves them outward likewise.  A node is moved along the bisector of
its two edges' normals, by the largest distance either edge needs divided by
the cosine between the bisector and that edge's normal, so each edge's line
clears its triangle.  Straight edges next to a moved node tilt, into the
material for ``P_in`` and out of it for ``P_out``: still inside / outside.
Every condition is checked after the move (the triangle on the right side,
no element turned over); if one fails the bounds fall back to the mesh
polygon's and say so.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..geometry.curves import edge_params
from ..mesh import Mesh
from . import p1

__all__ = ["OutlinePolygons", "outline_polygons", "p1_lower", "p1_upper"]

#: Largest tangent turn (radians) over one curved boundary edge for which the
#: tangent triangle is used (well below pi/2; a coarser edge is not certified).
_MAX_EDGE_TURN = 0.5 * np.pi - 0.1


@dataclass(frozen=True)
class OutlinePolygons:
    """Node positions of the inner and outer polygons (same numbering as the mesh).

    ``ok`` is False when they could not be formed on this mesh (an edge too
    coarse for its curve).
    """

    p_in: np.ndarray
    p_out: np.ndarray
    ok: bool
    moved: np.ndarray  # nodes moved in either polygon


def outline_polygons(mesh: Mesh, p: np.ndarray | None = None) -> OutlinePolygons:
    """Inner and outer polygons of the drawn outline on the mesh's node numbering.

    ``p`` are the node positions to start from (default the mesh's; pass
    centred coordinates together with curves moved the same way through
    ``mesh`` itself - the curves are in the mesh's coordinates, so ``p`` must be
    too).
    """
    p = mesh.p if p is None else p
    n = p.shape[1]
    e, _, curve = mesh.oriented_boundary()
    s = e.shape[1]
    a, b = p[:, e[0]], p[:, e[1]]
    chord = b - a
    length = np.hypot(*chord)
    left = np.stack([-chord[1], chord[0]]) / np.where(length > 0, length, 1.0)
    height = np.zeros(s)  # signed height of T over the chord, + into the material
    apex = 0.5 * (a + b)  # T of each edge (the midpoint for straight edges)
    ok = True
    for c in np.unique(curve[curve >= 0]):
        sel = np.flatnonzero(curve == c)
        cv = mesh.curves[c]
        ta, tb = edge_params(cv, a[:, sel].T, b[:, sel].T)
        sgn = np.where(tb >= ta, 1.0, -1.0)
        da = cv.derivative(ta).T * sgn
        db = cv.derivative(tb).T * sgn
        cr = da[0] * db[1] - da[1] * db[0]
        turn = np.abs(np.arctan2(cr, np.einsum("ij,ij->j", da, db)))
        ab = chord[:, sel]
        with np.errstate(divide="ignore", invalid="ignore"):  # parallel tangents: see `flat`
            sa = (ab[0] * db[1] - ab[1] * db[0]) / cr
            tpt = a[:, sel] + sa * da
            h = np.einsum("ij,ij->j", left[:, sel], tpt - a[:, sel])
            along = np.einsum("ij,ij->j", ab, tpt - a[:, sel]) / np.where(length[sel] > 0,
                                                                             length[sel] ** 2, 1.0)
        # a piece that hardly turns: the tangent lines are near parallel and T is
        # ill-conditioned; its curve stays within twice the midpoint's offset
        # (exact for a circle, where T stands at twice the sagitta)
        flat = turn < 1e-6
        if np.any(flat):
            tm = 0.5 * (ta[flat] + tb[flat])
            mid = cv.point(tm).T - a[:, sel[flat]]
            h[flat] = 2.0 * np.einsum("ij,ij->j", left[:, sel[flat]], mid)
            along[flat] = 0.5
        tpt[:, flat] = a[:, sel[flat]] + 0.5 * ab[:, flat] + left[:, sel[flat]] * h[flat]
        bad = (turn > _MAX_EDGE_TURN) | ~np.isfinite(h) | (along < -1e-9) | (along > 1 + 1e-9)
        if np.any(bad):
            ok = False
            h[bad] = 0.0
            tpt[:, bad] = a[:, sel[bad]] + 0.5 * ab[:, bad]
        height[sel] = h
        apex[:, sel] = tpt
    # per node: its outgoing edge (node = e[0]) and incoming edge (node = e[1])
    out_edge = np.full(n, -1)
    in_edge = np.full(n, -1)
    out_edge[e[0]] = np.arange(s)
    in_edge[e[1]] = np.arange(s)
    bnodes = np.flatnonzero(out_edge >= 0)
    eo, ei = out_edge[bnodes], in_edge[bnodes]
    bis = left[:, eo] + left[:, ei]
    bis /= np.maximum(np.hypot(*bis), 1e-300)
    cos_o = np.einsum("ij,ij->j", bis, left[:, eo])
    cos_i = np.einsum("ij,ij->j", bis, left[:, ei])
    if np.any(np.minimum(cos_o, cos_i) <= 0.05):  # a hairpin corner: cannot move along the bisector
        needs = (height[eo] != 0) | (height[ei] != 0)
        if np.any(needs & (np.minimum(cos_o, cos_i) <= 0.05)):
            ok = False
    cos_o = np.maximum(cos_o, 0.05)
    cos_i = np.maximum(cos_i, 0.05)
    margin = 1.0 + 1e-9
    push_in = np.maximum(np.maximum(height[eo], 0.0) / cos_o, np.maximum(height[ei], 0.0) / cos_i)
    push_out = np.maximum(np.maximum(-height[eo], 0.0) / cos_o, np.maximum(-height[ei], 0.0) / cos_i)
    tiny = 1e-15 * float(np.max(np.abs(p))) if p.size else 0.0
    p_in = p.copy()
    p_out = p.copy()
    move_in = push_in > 0
    move_out = push_out > 0
    p_in[:, bnodes[move_in]] += bis[:, move_in] * (push_in[move_in] * margin + tiny)
    p_out[:, bnodes[move_out]] -= bis[:, move_out] * (push_out[move_out] * margin + tiny)
    if ok:
        ok = _checked(mesh, p, p_in, e, height, apex, +1) and _checked(mesh, p, p_out, e, height,
                                                                       apex, -1)
    moved = bnodes[move_in | move_out]
    return OutlinePolygons(p_in=p_in, p_out=p_out, ok=ok, moved=moved)


def _checked(mesh, p, q, e, height, apex, side) -> bool:
    """Every element keeps its orientation and every triangle ``a b T`` is cleared."""
    t = mesh.t[:3]
    x, y = q[0, t], q[1, t]
    if np.any((x[1] - x[0]) * (y[2] - y[0]) - (x[2] - x[0]) * (y[1] - y[0]) <= 0):
        return False
    sel = np.flatnonzero(side * height > 0)
    if not len(sel):
        return True
    a, b = p[:, e[0, sel]], p[:, e[1, sel]]
    apex = apex[:, sel]
    qa, qb = q[:, e[0, sel]], q[:, e[1, sel]]
    d = qb - qa
    nrm = np.stack([-d[1], d[0]])  # left normal of the moved edge

    def offset(pt):
        return np.einsum("ij,ij->j", nrm, pt - qa)

    # P_in (side +1): T, a and b must be on the right of (or on) the moved edge;
    # P_out (side -1): on its left
    scale = 1e-12 * np.hypot(*d) * np.maximum(np.hypot(*d), 1e-300)
    return bool(np.all(side * offset(apex) <= scale) and np.all(side * offset(a) <= scale)
                and np.all(side * offset(b) <= scale))


def p1_lower(p: np.ndarray, t: np.ndarray, phi: np.ndarray, hole_values: np.ndarray,
             hole_areas: np.ndarray) -> tuple[float, np.ndarray]:
    """Complementary-energy functional of a stress function on nodes ``p``.

    ``L = 4 int(phi) + 4 sum_k C_k A_k - int |grad phi|^2 <= J`` for any
    admissible ``phi`` (zero on the outer loop, ``C_k`` on hole k whose loop
    encloses ``A_k``).  Returns the total and the element shares (without
    the hole terms).
    """
    area, grad = p1.geometry(p, t)
    g = np.einsum("cie,ie->ce", grad, phi[t])
    per = 4.0 * area * phi[t].mean(axis=0) - area * (g[0] ** 2 + g[1] ** 2)
    return float(per.sum() + 4.0 * np.dot(hole_values, hole_areas)), per


def p1_upper(p: np.ndarray, t: np.ndarray, omega: np.ndarray) -> tuple[float, np.ndarray]:
    """Potential energy of a warping function on nodes ``p``: ``int |tau_w|^2 >= J``.

    ``tau_w = (omega_x - y, omega_y + x)``; exact on straight-sided triangles.
    Returns the total and the element shares.
    """
    area, grad = p1.geometry(p, t)
    g = np.einsum("cie,ie->ce", grad, omega[t])
    xc, yc = p[0, t].mean(axis=0), p[1, t].mean(axis=0)
    ixx, iyy, _ = p1.second_moments(p, t, area)
    per = area * (g[0] ** 2 + g[1] ** 2) - 2.0 * area * (g[0] * yc - g[1] * xc) + ixx + iyy
    return float(per.sum()), per
