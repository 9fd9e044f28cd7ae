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

import math
from dataclasses import dataclass

import numpy as np

from ..geometry.curves import edge_params
from ..mesh import Mesh

__all__ = ["OutlinePolygons", "outline_polygons", "p1_lower", "p1_upper", "Functional",
           "hole_loop_areas", "UNIT_ROUNDOFF"]

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


#: Unit roundoff of float64 (half the machine epsilon): every basic operation's
#: relative error is at most this.
UNIT_ROUNDOFF = 0.5 * float(np.finfo(np.float64).eps)


@dataclass(frozen=True)
class _P1Parts:
    """Per-element geometry of linear triangles with first-order rounding bounds.

    ``area`` and ``rel`` (a bound on the relative rounding error of the area and
    of every division by it); gradients of a field are taken from the nodal
    differences (``u_i - u_0``), so a field far from zero loses nothing.
    """

    area: np.ndarray
    rel: np.ndarray
    xc: np.ndarray
    yc: np.ndarray
    dxc: np.ndarray  # rounding bound of the computed centroid
    dyc: np.ndarray
    dx1: np.ndarray
    dy1: np.ndarray
    dx2: np.ndarray
    dy2: np.ndarray
    t: np.ndarray

    @classmethod
    def of(cls, p: np.ndarray, t: np.ndarray) -> _P1Parts:
        x, y = p[0, t], p[1, t]
        dx1, dy1 = x[1] - x[0], y[1] - y[0]
        dx2, dy2 = x[2] - x[0], y[2] - y[0]
        s1, s2 = dx1 * dy2, dx2 * dy1
        area2 = s1 - s2
        u = UNIT_ROUNDOFF
        with np.errstate(divide="ignore", invalid="ignore"):
            rel = 4.0 * u * (np.abs(s1) + np.abs(s2)) / np.abs(area2)
        ax, ay = np.abs(x).sum(axis=0), np.abs(y).sum(axis=0)
        return cls(area=0.5 * area2, rel=rel, xc=x.mean(axis=0), yc=y.mean(axis=0),
                   dxc=u * ax, dyc=u * ay, dx1=dx1, dy1=dy1, dx2=dx2, dy2=dy2, t=t)

    def gradient(self, v: np.ndarray):
        """Gradient of the P1 field ``v`` and a bound on its rounding error (per component)."""
        dv1 = v[self.t[1]] - v[self.t[0]]
        dv2 = v[self.t[2]] - v[self.t[0]]
        a2 = 2.0 * self.area
        gx = (dv1 * self.dy2 - dv2 * self.dy1) / a2
        gy = (dv2 * self.dx1 - dv1 * self.dx2) / a2
        k = self.rel + 5.0 * UNIT_ROUNDOFF
        ex = k * (np.abs(dv1 * self.dy2) + np.abs(dv2 * self.dy1)) / np.abs(a2)
        ey = k * (np.abs(dv2 * self.dx1) + np.abs(dv1 * self.dx2)) / np.abs(a2)
        return gx, gy, ex, ey

    def polar_about_centroid(self) -> np.ndarray:
        """``int_e |x - x_c|^2``: ``A (l01^2 + l12^2 + l20^2) / 36``, a sum of squares."""
        dx3, dy3 = self.dx2 - self.dx1, self.dy2 - self.dy1
        sq = self.dx1**2 + self.dy1**2 + self.dx2**2 + self.dy2**2 + dx3**2 + dy3**2
        return self.area * sq / 36.0


def _sum_up(per: np.ndarray) -> float:
    """Sum correctly rounded (``math.fsum``): its own error is half an ulp of the total."""
    return math.fsum(per.tolist())


def hole_loop_areas(mesh: Mesh, p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Area each hole loop of the mesh polygon on nodes ``p`` encloses, and a rounding bound.

    Shoelace sums taken relative to each loop's first node and added up with
    ``math.fsum``, so a hole far from the origin loses nothing to cancellation;
    the bound covers the products and the differences (first order, x2).
    """
    nh = mesh.nholes
    if not nh:
        return np.zeros(0), np.zeros(0)
    e, mk = mesh.oriented_boundary()[:2]
    h = mk >= 2
    e, mk = e[:, h], mk[h] - 2
    areas = np.zeros(nh)
    errs = np.zeros(nh)
    order = np.argsort(mk, kind="stable")
    e, mk = e[:, order], mk[order]
    cuts = np.searchsorted(mk, np.arange(nh + 1))
    u = UNIT_ROUNDOFF
    for k in range(nh):
        ek = e[:, cuts[k]:cuts[k + 1]]
        if not ek.shape[1]:
            continue
        ref = p[:, ek[0, 0]]
        xa, ya = p[0, ek[0]] - ref[0], p[1, ek[0]] - ref[1]
        xb, yb = p[0, ek[1]] - ref[0], p[1, ek[1]] - ref[1]
        s1, s2 = xa * yb, xb * ya
        # material on the left: a hole loop runs clockwise, its signed area is negative
        areas[k] = -0.5 * math.fsum((s1 - s2).tolist())
        errs[k] = 2.0 * (5.0 * u * math.fsum((np.abs(s1) + np.abs(s2)).tolist())
                         + u * abs(areas[k]))
    return areas, errs


@dataclass(frozen=True)
class Functional:
    """A bound functional evaluated in floating point.

    ``value`` is the computed sum, ``rounding`` a bound on how far it can be
    from the exact functional of the same nodes and nodal values, ``per`` the
    element shares (hole terms not included).  The reported bound is
    ``value - rounding`` (lower) or ``value + rounding`` (upper).
    """

    value: float
    rounding: float
    per: np.ndarray

    @property
    def lower(self) -> float:
        return float(np.nextafter(self.value - self.rounding, -np.inf))

    @property
    def upper(self) -> float:
        return float(np.nextafter(self.value + self.rounding, np.inf))


def p1_lower(p: np.ndarray, t: np.ndarray, phi: np.ndarray, hole_values: np.ndarray,
             hole_areas: np.ndarray, hole_errors: np.ndarray | None = None) -> Functional:
    """Complementary-energy functional of a stress function on nodes ``p``.

    ``L = 4 int(phi) + 4 sum_k C_k A_k - int |grad phi|^2 <= J`` for any
    admissible ``phi`` (zero on the outer loop, ``C_k`` on hole k whose loop
    encloses ``A_k``; ``hole_errors`` bound the rounding of ``A_k``).  Element
    shares ``4 A_e mean(phi) - A_e |grad phi|^2`` with the gradient from
    nodal differences; the two parts are of the same size (2J and J at the
    solution), so there is no cancellation of larger terms.
    """
    u = UNIT_ROUNDOFF
    g = _P1Parts.of(p, t)
    gx, gy, ex, ey = g.gradient(phi)
    pt = phi[t]
    a = g.area
    load = 4.0 * a * pt.mean(axis=0)
    energy = a * (gx * gx + gy * gy)
    per = load - energy
    hv = np.asarray(hole_values, dtype=np.float64)
    ha = np.asarray(hole_areas, dtype=np.float64)
    hole = 4.0 * hv * ha
    value = _sum_up(np.concatenate([per, hole]))
    err = ((g.rel + 5.0 * u) * 4.0 * np.abs(a) * np.abs(pt).mean(axis=0)
           + np.abs(a) * (2.0 * np.abs(gx) * ex + ex * ex + 2.0 * np.abs(gy) * ey + ey * ey)
           + (g.rel + 4.0 * u) * energy + u * np.abs(per))
    herr = 3.0 * u * np.abs(hole)
    if hole_errors is not None and len(hv):
        herr = herr + 4.0 * np.abs(hv) * np.asarray(hole_errors)
    rounding = 2.0 * (_sum_up(err) + _sum_up(herr) + u * abs(value))
    return Functional(value, rounding, per)


def p1_upper(p: np.ndarray, t: np.ndarray, omega: np.ndarray) -> Functional:
    """Potential energy of a warping function on nodes ``p``: ``int |tau_w|^2 >= J``.

    ``tau_w = (omega_x - y, omega_y + x)``.  On a linear triangle ``grad omega``
    is a constant ``g``, so ``int_e |tau_w|^2 = A_e |g - (y_c, -x_c)|^2 +
    int_e |x - x_c|^2``: two non-negative terms, the second a sum of squared
    edge lengths.  No term larger than the result is cancelled (the old form
    ``Ip - 2 f.w + a(w, w)`` cancelled terms of size Ip down to J: 1e6 times
    the rounding on a 1:1000 section).  Exact on straight-sided triangles.
    """
    u = UNIT_ROUNDOFF
    g = _P1Parts.of(p, t)
    gx, gy, ex, ey = g.gradient(omega)
    d0 = gx - g.yc
    d1 = gy + g.xc
    a = g.area
    ic = g.polar_about_centroid()
    per = a * (d0 * d0 + d1 * d1) + ic
    e0 = ex + g.dyc + u * (np.abs(gx) + np.abs(g.yc))
    e1 = ey + g.dxc + u * (np.abs(gy) + np.abs(g.xc))
    err = (np.abs(a) * (2.0 * np.abs(d0) * e0 + e0 * e0 + 2.0 * np.abs(d1) * e1 + e1 * e1)
           + (g.rel + 8.0 * u) * np.abs(per))
    value = _sum_up(per)
    rounding = 2.0 * (_sum_up(err) + u * abs(value))
    return Functional(value, rounding, per)
