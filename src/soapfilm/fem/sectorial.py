"""Section quantities of restrained warping from the finite-element warping function.

The Saint-Venant warping function ``omega`` that :mod:`soapfilm.fem.torsion`
(linear) and :mod:`soapfilm.fem.p2` (quadratic, isoparametric on curves)
solve per unit ``G * theta`` is taken about the section's centroid, with an
arbitrary constant.  Restrained (non-uniform) torsion needs it about the
*shear centre* and *normalised*: orthogonal to ``1``, ``x`` and ``y`` over the
section.  Everything here is an integral of the nodal fields against the
element mass matrices, exact for the finite-element fields (affine elements:
the reference mass matrix times the area; curved elements: the degree-7
collapsed rule, exact for the degree-6 integrand ``N_i N_j det``).

Trefftz's definition of the shear centre (one that needs no bending
solution)::

    psi_S = omega - y_s x + x_s y + c        (warping about the pole (x_s, y_s))
    int psi_S dA = int psi_S x dA = int psi_S y dA = 0

so ``c - y_s x + x_s y`` is minus the L2 projection of ``omega`` on
``span{1, x, y}``: with the Gram matrix ``G`` of ``(1, x, y)`` and
``r = (int omega, int x omega, int y omega)``, ``G (c0, c1, c2) = r`` gives
``y_s = c1``, ``x_s = -c2`` (about the coordinates' origin; with centroidal
axes ``x_s = (I_xy I_xw - I_y I_yw) / D``, ``y_s = (I_x I_xw - I_xy I_yw) / D``,
``I_xw = int x omega``, ``I_yw = int y omega``, ``I_x = int y^2``,
``I_y = int x^2``, ``D = I_x I_y - I_xy^2``).

Sign convention: ``omega_n = -psi_S`` (normalised), the *principal sectorial
coordinate* of thin-walled theory, ``omega_n = int r_t ds`` along a wall's
mid-line with ``r_t`` the distance from the shear centre to the tangent,
positive when the tangent turns counter-clockwise about the shear centre.
The axial displacement is ``u_z = -phi' omega_n`` (``phi'``: twist per
length), the warping normal stress ``sigma_w = -E phi'' omega_n``, and with
the bimoment ``B = -E Gamma phi''`` it is ``sigma_w = B omega_n / Gamma``.
Along the mid-line of an open thin wall the Saint-Venant shear vanishes, so
``d psi_S / ds = -r_t`` there: the two signs are opposite, hence the minus.

``Gamma = int omega_n^2 dA`` (length^6), the warping constant.  ``omega_n``
is harmonic, so its largest magnitude is on the boundary; it is read at the
nodes.

Warping shear: where ``sigma_w`` changes along the bar (``B' = T_w``, the
warping torque), the axial equilibrium of a slice needs the shear
``tau_s = T_w grad(psi) / Gamma`` with ``-Laplace psi = omega_n`` and
``d psi / dn = 0`` on every loop (:func:`warping_shear_function`); in a thin
open wall it is the thin-wall ``T_w S_omega / (Gamma t)`` [2]_, its moment
about the shear centre is exactly ``T_w`` and it has no resultant
(DEVELOPERS.md, "Warping shear", derives both).

References
----------
.. [1] W. D. Pilkey, Analysis and Design of Elastic Beams: Computational
   Methods, Wiley, 2002, ch. 6 (warping function about the shear centre,
   Trefftz shear centre, warping constant by finite elements).
.. [2] S. P. Timoshenko and J. M. Gere, Theory of Elastic Stability, 2nd ed.,
   McGraw-Hill, 1961, ch. 5 (thin-walled open sections: sectorial
   coordinate, warping constant, non-uniform torsion).
.. [3] E. Trefftz, "Ueber den Schubmittelpunkt in einem durch eine
   Einzellast gebogenen Balken", ZAMM 15 (1935) 220-225.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

__all__ = ["WarpingProperties", "warping_properties", "normalised_warping", "principal_axes",
           "warping_shear_function", "warping_shear_gradients"]


@dataclass(frozen=True)
class WarpingProperties:
    """Section quantities of restrained warping, in the section's length unit.

    Attributes
    ----------
    shear_centre : (float, float)
        Trefftz shear centre, input coordinates.
    warping_constant : float
        ``Gamma = int omega_n^2 dA`` (length^6), also written I_w or C_w.
    max_warping : float
        Largest ``|omega_n|`` (length^2), read at the nodes.
    max_warping_location : (float, float)
        Where it is, input coordinates.
    second_moments : (float, float, float)
        ``(I_x, I_y, I_xy)`` about the centroid: ``int y^2``, ``int x^2``,
        ``int x y`` (length^4).
    principal_angle : float
        Angle (radians, counter-clockwise from the x axis, in
        ``(-pi/2, pi/2]``) of the principal axis with the larger moment.
    principal_moments : (float, float)
        ``(I_max, I_min)`` about the principal axes.
    estimated_relative_error : dict
        ``warping_constant``: twice the change of Gamma over the last
        adaptive refinements, relative to Gamma (the change is the larger of
        the last change and half the change before, the rule of the peak's
        history); ``shear_centre``: the same of the shear centre's movement,
        relative to the section's diameter.  None after a single solve or a
        first step (no history), or when Gamma is zero.  An indicator, not a
        bound (the refinement follows J and the peak, not Gamma): measured in
        DEVELOPERS.md ("Restrained warping"), it covered every actual error
        above 3e-7 and fell short on some below.
    max_warping_shear : float or None
        Largest warping (secondary) shear stress per unit warping torque,
        ``max |grad psi| / Gamma`` (1/length^3): under non-uniform torsion the
        warping shear is ``tau_s = T_w grad(psi) / Gamma`` with the warping
        torque ``T_w = -E Gamma phi'''`` and ``psi`` from
        :func:`warping_shear_function`, so its peak is ``|T_w|`` times this,
        as the Saint-Venant peak is ``|T|`` times the peak per unit torque.
        Read at the nodes (node-averaged element gradients), away from sharp
        re-entrant corners, where it is unbounded.  None where not computed
        (the adaptive steps' own entries).
    max_warping_shear_location : (float, float) or None
        Where it is, input coordinates.
    """

    shear_centre: tuple[float, float]
    warping_constant: float
    max_warping: float
    max_warping_location: tuple[float, float]
    second_moments: tuple[float, float, float]
    principal_angle: float
    principal_moments: tuple[float, float]
    estimated_relative_error: dict = field(default_factory=dict)
    max_warping_shear: float | None = None
    max_warping_shear_location: tuple[float, float] | None = None

    @property
    def does_not_warp(self) -> bool:
        """Gamma is zero within its estimate (a round bar or tube): omega_n is rounding
        noise there, and so is the warping shear per unit warping torque (noise over
        noise squared), which the table and the JSON then leave out."""
        g_err = self.estimated_relative_error.get("warping_constant")
        return g_err is not None and g_err >= 1.0


# -------------------------------------------------------------- element integrals
def _p1_reference_mass() -> np.ndarray:
    """``int N_i N_j / area`` on a linear triangle: ``(1 + delta_ij) / 12``."""
    return (np.ones((3, 3)) + np.eye(3)) / 12.0


def _p2_reference_mass() -> np.ndarray:
    """``int N_i N_j / area`` on an affine quadratic triangle (degree-5 rule, exact for degree 4)."""
    from .p2 import basis_values, collapsed_rule

    bary, w = collapsed_rule(3)
    n = basis_values(bary)  # (6, q)
    return np.einsum("iq,jq,q->ij", n, n, w)


@dataclass(frozen=True)
class _Mass:
    """Element mass matrices of one mesh: ``area * ref`` on affine elements, ``curved`` on ``idx``."""

    t: np.ndarray  # (k, M) element nodes
    area: np.ndarray  # (M,)
    ref: np.ndarray  # (k, k)
    idx: np.ndarray  # (C,) curved elements
    curved: np.ndarray  # (k, k, C)

    def times(self, f: np.ndarray) -> np.ndarray:
        """The load ``int f N_i dA`` of the nodal field ``f``: the mass matrix times ``f``."""
        fe = f[self.t]  # (k, M)
        mf = np.einsum("ij,je->ie", self.ref, fe) * self.area
        if len(self.idx):
            mf[:, self.idx] = np.einsum("ije,je->ie", self.curved, fe[:, self.idx])
        return np.bincount(self.t.ravel(), weights=mf.ravel(), minlength=len(f))

    def gram(self, fields: np.ndarray) -> np.ndarray:
        """``int f_a f_b dA`` of nodal fields ``fields`` (``(n, N)``): an ``(n, n)`` matrix."""
        fe = fields[:, self.t]  # (n, k, M)
        mf = np.einsum("ij,bje->bie", self.ref, fe) * self.area  # M_e f_e
        if len(self.idx):
            mf[:, :, self.idx] = np.einsum("ije,bje->bie", self.curved, fe[:, :, self.idx])
        n = fields.shape[0]
        prod = np.einsum("aie,bie->abe", fe, mf)  # element shares of every pair at once
        out = np.empty((n, n))
        for a in range(n):
            for b in range(a, n):
                out[a, b] = out[b, a] = math.fsum(prod[a, b].tolist())
        return out


def _mass(mesh, fields, p: np.ndarray) -> _Mass:
    """Element mass matrices of ``fields`` (linear or quadratic) on nodes ``p``."""
    from . import p1

    t6 = getattr(fields, "t6", None)
    if t6 is None or np.shape(t6)[0] != 6:
        t = np.asarray(mesh.t)[:3]
        area, _ = p1.geometry(p, t)
        return _Mass(t, area, _p1_reference_mass(), np.zeros(0, dtype=np.int64),
                     np.zeros((3, 3, 0)))
    from .p2 import _Curved, basis_values, collapsed_rule

    t6 = np.asarray(t6)
    area, _ = p1.geometry(p, t6[:3])
    idx = np.flatnonzero(fields.nodes.curved)
    if len(idx):
        cu = _Curved.of(p, t6, idx)  # degree 7: N_i N_j det is of degree 6
        n = basis_values(collapsed_rule(4)[0])
        curved = np.einsum("iq,jq,qe->ije", n, n, cu.wdet)
    else:
        curved = np.zeros((6, 6, 0))
    return _Mass(t6, area, _p2_reference_mass(), idx, curved)


# -------------------------------------------------------------- the quantities
def _scaled(mesh, fields):
    """Nodes and omega scaled by a length ``s`` (``x / s``, ``omega / s^2``): no over- or
    underflow in the sixth powers for sections of 1e-50 to 1e50."""
    p = np.asarray(fields.p, dtype=float)
    s = float(np.max(np.ptp(p, axis=1))) or 1.0
    return p / s, np.asarray(fields.omega, dtype=float) / (s * s), s


def _projection(mesh, fields):
    """(mass, scaled nodes, scaled omega, s, c): ``c`` the L2 projection of omega on (1, x, y)."""
    q, w, s = _scaled(mesh, fields)
    mass = _mass(mesh, fields, q)
    full = mass.gram(np.vstack([np.ones(q.shape[1]), q, w]))  # 1, x, y, omega
    gram = full[:3, :3]
    c = np.linalg.solve(gram, full[:3, 3])
    return mass, q, w, s, c, gram


def normalised_warping(mesh, fields) -> np.ndarray:
    """``omega_n`` at the nodes of ``fields`` (P2: corners, then mid-nodes), length^2.

    About the shear centre, zero mean, orthogonal to ``x`` and ``y``, with the
    thin-walled sign convention (module docstring): ``omega_n = -(omega - c0
    - c1 x - c2 y)`` with ``c`` the L2 projection of ``omega`` on ``(1, x, y)``.
    """
    _, q, w, s, c, _ = _projection(mesh, fields)
    return -(w - c[0] - c[1] * q[0] - c[2] * q[1]) * (s * s)


# -------------------------------------------------------------- warping shear
def _stiffness(mesh, fields, q: np.ndarray):
    """Laplace stiffness of ``fields``' elements on nodes ``q``: P1, or P2 with the curved
    elements isoparametric (the same element matrices as the torsion solve)."""
    from . import p1

    t6 = getattr(fields, "t6", None)
    if t6 is None or np.shape(t6)[0] != 6:
        t = np.asarray(mesh.t)[:3]
        area, grad = p1.geometry(q, t)
        return p1.stiffness(t, area, grad, q.shape[1])
    from .p2 import _coo, _Curved, _element_stiffness

    t6 = np.asarray(t6)
    area, lgrad = p1.geometry(q, t6[:3])
    ke = _element_stiffness(area, lgrad)
    idx = np.flatnonzero(fields.nodes.curved)
    if len(idx):
        cu = _Curved.of(q, t6, idx)
        ke[:, :, idx] = np.einsum("ckqe,clqe,qe->kle", cu.cg, cu.cg, cu.wdet / cu.det ** 2)
    return _coo(t6, ke, q.shape[1])


def _neumann(mesh, fields, k, b: np.ndarray) -> np.ndarray:
    """The Neumann problem ``k psi = b`` (``sum b = 0``): one node pinned for a direct solve;
    for large quadratic meshes AMG-CG on the singular system, preconditioned as the torsion
    solve's (P1 on the mesh split at the mid-nodes)."""
    from . import linsolve

    n = k.shape[0]
    psi = np.zeros(n)
    quadratic = getattr(fields, "order", 1) == 2
    if quadratic and n > linsolve.DIRECT_LIMIT:
        from .p2 import P2_DIRECT_LIMIT, _solve_amg, uniformly_refined

        if n > P2_DIRECT_LIMIT:
            from . import p1

            split = uniformly_refined(mesh, fields.nodes)
            a1, g1 = p1.geometry(split.p, split.t)
            return _solve_amg(k, p1.stiffness(split.t, a1, g1, n), b - b.mean(), "bx")
        psi[1:] = linsolve.solve_spd(k[1:, 1:], b[1:], method="direct")
        return psi
    psi[1:] = linsolve.solve_spd(k[1:, 1:], b[1:])
    return psi


def _shear_function_scaled(mesh, fields):
    """(psi / s^4, nodes / s, s, mass, omega_n / s^2, Gamma / s^6) on the scaled nodes."""
    mass, q, w, s, c, _ = _projection(mesh, fields)
    wn = -(w - c[0] - c[1] * q[0] - c[2] * q[1])
    b = mass.times(wn)
    psi = _neumann(mesh, fields, _stiffness(mesh, fields, q), b)
    one = np.ones_like(psi)
    psi -= float(one @ mass.times(psi)) / float(one @ mass.times(one))  # zero mean
    gamma = float(mass.gram(wn[None])[0, 0])
    return psi, q, s, mass, wn, gamma


def warping_shear_function(mesh, fields) -> np.ndarray:
    """``psi`` at the nodes of ``fields`` (length^4): the warping shear's potential.

    ``int grad psi . grad v dA = int omega_n v dA`` for every ``v`` of the
    element space, zero mean: the Neumann problem ``-Laplace psi = omega_n``,
    ``d psi / dn = 0`` on every loop, solvable since ``int omega_n = 0``.
    Under non-uniform torsion the warping shear stress is ``tau_s = T_w grad
    psi / Gamma`` (DEVELOPERS.md, "Warping shear").
    """
    psi, _, s, *_ = _shear_function_scaled(mesh, fields)
    return psi * s**4


def _node_averaged(mesh, fields, q: np.ndarray, u: np.ndarray) -> np.ndarray:
    """Gradient ``(2, N)`` of the field ``u`` at every node: the element gradients there
    (P1: constant; P2: at the six local nodes, isoparametric on curved elements) averaged
    with the element areas as weights, the rule of the P2 boundary peak."""
    from . import p1

    t6 = getattr(fields, "t6", None)
    n = q.shape[1]
    if t6 is None or np.shape(t6)[0] != 6:
        t = np.asarray(mesh.t)[:3]
        area, grad = p1.geometry(q, t)
        g = np.einsum("cie,ie->ce", grad, u[t])[:, None, :].repeat(3, axis=1)  # (2, 3, M)
    else:
        from .p2 import NODE_BARY, _gradient_at, _iso_map

        t = np.asarray(t6)
        area, lgrad = p1.geometry(q, t[:3])
        g = _gradient_at(t, lgrad, u, NODE_BARY)
        idx = np.flatnonzero(fields.nodes.curved)
        if len(idx):
            _, det, cg = _iso_map(q[:, t[:, idx]], NODE_BARY)
            g[:, :, idx] = np.einsum("ckqe,ke->cqe", cg, u[t[:, idx]]) / det
    wts = np.broadcast_to(np.abs(area), t.shape).ravel()
    wsum = np.bincount(t.ravel(), weights=wts, minlength=n)
    return np.stack([np.bincount(t.ravel(), weights=(g[c] * wts.reshape(t.shape)).ravel(),
                                 minlength=n) for c in range(2)]) / np.maximum(wsum, 1e-300)


def warping_shear_gradients(mesh, fields) -> np.ndarray:
    """``grad psi`` at the nodes of ``fields`` (``(2, N)``, length^3), node-averaged:
    the warping shear stress per unit warping torque there is this over Gamma."""
    psi, q, s, *_ = _shear_function_scaled(mesh, fields)
    return _node_averaged(mesh, fields, q, psi) * s**3


def _shear_peak(mesh, fields, corners, zone: float):
    """(max |grad psi| / Gamma in 1/length^3, its node), away from the sharp corners."""
    psi, q, s, _, _, gamma = _shear_function_scaled(mesh, fields)
    g = _node_averaged(mesh, fields, q, psi)
    mag = np.hypot(g[0], g[1])
    xy = np.asarray(fields.p, float) + np.asarray(fields.origin, float)[:, None]
    read = np.ones(mag.size, bool)
    for c in corners:
        read &= np.hypot(xy[0] - c.x, xy[1] - c.y) > zone
    if not read.any():  # every node near a corner: read them all
        read[:] = True
    k = int(np.flatnonzero(read)[np.argmax(mag[read])])
    if not gamma > 0.0:
        return None, k
    with np.errstate(over="ignore", under="ignore"):
        value = float(np.float64(mag[k] / gamma) / np.float64(s) ** 3)
    return value, k


def principal_axes(ix: float, iy: float, ixy: float) -> tuple[float, float, float]:
    """``(angle, I_max, I_min)`` from ``I_x = int y^2``, ``I_y = int x^2``, ``I_xy = int x y``.

    About an axis at angle ``a`` from x, ``I(a) = (I_x + I_y)/2 + (I_x - I_y)/2 cos 2a
    - I_xy sin 2a`` (Pilkey 2002, ch. 1; any strength-of-materials text); it is
    largest at ``2a = atan2(-2 I_xy, I_x - I_y)``.
    """
    angle = 0.5 * math.atan2(-2.0 * ixy, ix - iy)
    if angle <= -0.5 * math.pi:
        angle += math.pi
    mean = 0.5 * (ix + iy)
    radius = math.hypot(0.5 * (ix - iy), ixy)
    return angle, mean + radius, mean - radius


def _history_change(values: Sequence[float]) -> float | None:
    """The larger of the last change and half the change before (absolute), or None."""
    if len(values) < 2:
        return None
    d1 = abs(values[-1] - values[-2])
    d0 = abs(values[-2] - values[-3]) if len(values) >= 3 else d1
    return max(d1, 0.5 * d0)


#: Factor on the history's change: the steps are made for J and the peak, not for
#: Gamma, whose remaining error was 0.8-1.4 times the last change on the ellipse
#: against its closed form (linear and quadratic elements, tol 1e-2 to 1e-4).
HISTORY_FACTOR = 2.0


def history_errors(history: Sequence[dict], gamma: float, diameter: float) -> dict:
    """Relative error estimates of Gamma and the shear centre from refinement entries.

    ``history``: the adaptive steps' entries with ``warping_constant`` and
    ``shear_centre`` (:func:`soapfilm.adapt.refine_until`).  :data:`HISTORY_FACTOR`
    times the change of the last step (or half the one before, if larger: a
    sequence halving its error each step has its remaining error about equal
    to its last change) over Gamma, and the same of the shear centre's
    movement over ``diameter``.  None without two steps.
    """
    gammas = [float(h["warping_constant"]) for h in history if "warping_constant" in h]
    centres = [np.asarray(h["shear_centre"], float) for h in history if "shear_centre" in h]
    dg = _history_change(gammas)
    moves = [float(np.hypot(*(b - a))) for a, b in zip(centres, centres[1:], strict=False)]
    ds = None if not moves else max(moves[-1], 0.5 * moves[-2]) if len(moves) >= 2 else moves[-1]
    k = HISTORY_FACTOR
    return {
        "warping_constant": k * dg / gamma if dg is not None and gamma > 0 else None,
        "shear_centre": k * ds / diameter if ds is not None and diameter > 0 else None,
    }


def warping_properties(mesh, fields, moments=None, history: Sequence[dict] = (),
                       diameter: float | None = None, *, shear: bool = False,
                       corners: Sequence = (), zone: float = 0.0) -> WarpingProperties:
    """Shear centre, warping constant, largest ``|omega_n|`` and second moments.

    Parameters
    ----------
    mesh : Mesh
        The mesh ``fields`` were solved on (its ``t`` for linear fields).
    fields : TorsionFields or P2Fields
    moments : OutlineMoments, optional
        Second moments of the drawn outline (:func:`soapfilm.geometry.moments.
        outline_moments`) to report; default the mesh's own.  The shear centre
        always uses the mesh's, consistent with ``omega``.
    history : sequence of dict
        Refinement entries with ``warping_constant`` and ``shear_centre``
        (see :func:`history_errors`); empty for a single solve.
    diameter : float, optional
        Length the shear centre's error is relative to (default: the
        largest extent of the nodes).
    shear : bool
        Also solve for the warping shear (:func:`warping_shear_function`, one
        more linear solve) and read its peak per unit warping torque.
    corners, zone : sequence of Corner, float
        Sharp re-entrant corners (with ``x``, ``y``) and the radius round each
        left out of that peak, the Saint-Venant peak's rule
        (:func:`soapfilm.solve.corner_zone_radius`): the warping shear is
        unbounded there too.
    """
    mass, q, w, s, c, gram = _projection(mesh, fields)
    origin = np.asarray(fields.origin, dtype=float)
    wn = -(w - c[0] - c[1] * q[0] - c[2] * q[1])  # scaled by 1/s^2
    with np.errstate(over="ignore", under="ignore"):
        s2 = np.float64(s) * np.float64(s)
        gamma = float(np.float64(mass.gram(wn[None])[0, 0]) * s2 * s2 * s2)
        k = int(np.argmax(np.abs(wn)))
        wmax = float(abs(wn[k]) * s2)
        xs, ys = float(-c[2] * s), float(c[1] * s)
        centre = (float(origin[0] + xs), float(origin[1] + ys))
        where = (float(origin[0] + q[0, k] * s), float(origin[1] + q[1, k] * s))
        if moments is not None:
            ix, iy, ixy = float(moments.ixx), float(moments.iyy), float(moments.ixy)
        else:
            a, sx, sy = gram[0, 0], gram[0, 1], gram[0, 2]
            s4 = s2 * s2
            ix = float((gram[2, 2] - sy * sy / a) * s4)
            iy = float((gram[1, 1] - sx * sx / a) * s4)
            ixy = float((gram[1, 2] - sx * sy / a) * s4)
    angle, imax, imin = principal_axes(ix, iy, ixy)
    if diameter is None:
        diameter = float(np.max(np.ptp(np.asarray(fields.p, float), axis=1)))
    tau_w, tau_where = None, None
    if shear:
        tau_w, node = _shear_peak(mesh, fields, corners, zone)
        tau_where = (float(origin[0] + q[0, node] * s), float(origin[1] + q[1, node] * s))
    return WarpingProperties(
        shear_centre=centre,
        warping_constant=gamma,
        max_warping=wmax,
        max_warping_location=where,
        second_moments=(ix, iy, ixy),
        principal_angle=angle,
        principal_moments=(imax, imin),
        estimated_relative_error=history_errors(history, gamma, diameter),
        max_warping_shear=tau_w,
        max_warping_shear_location=tau_where,
    )
