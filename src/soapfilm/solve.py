"""From a profile to a :class:`~soapfilm.result.TorsionResult`.

:func:`analyse` solves on one mesh (given size or the default), or, with
``tol``, refines adaptively until the J bracket and the peak shear meet the
tolerance (see :mod:`soapfilm.adapt`).
"""

from __future__ import annotations

import functools
import logging
import math
from dataclasses import dataclass, field

import numpy as np

from .corners import (
    CORNER_ZONE_FRACTION,
    DEFAULT_CORNER_TOL_DEG,
    Corner,
    TracedRun,
    reentrant_corners,
    traced_runs,
)
from .fem.linsolve import one_blas_thread
from .fem.sectorial import warping_properties
from .fem.torsion import (
    TorsionFields,
    boundary_corner_nodes,
    boundary_flux_shear,
    solve_torsion,
)
from .geometry.moments import outline_moments
from .mesh import Mesh, mesh_profile
from .profile import Profile
from .result import TorsionResult

__all__ = ["analyse", "result_from_mesh", "boundary_peak", "Peak", "solve_fields", "DEFAULT_ORDER"]

log = logging.getLogger(__name__)

#: Element order used unless asked otherwise: quadratic triangles, isoparametric on
#: curved edges.  Their boundary shear converges at order 2 in h where linear
#: triangles' converges at order 1 (the peak shear is a boundary gradient), and their
#: J bracket at order 4 against 2; measured in DEVELOPERS.md ("Accuracy").
from .defaults import DEFAULT_ORDER  # noqa: E402


@dataclass(frozen=True)
class Peak:
    """Peak boundary shear of one solution, per unit G*theta.

    ``value`` is from the stress function, ``value_warping`` the same place's
    cross-check from the warping function; ``near_corner`` is the largest
    value inside the zones round sharp re-entrant corners (not a property of
    the section: the stress there is unbounded).  ``candidates`` are the
    boundary places that could hold the peak (``(k, 2)`` input coordinates):
    within twice the peak's two-field disagreement of it (0.1 % to 2 %), with
    their own disagreement relative to the peak in ``candidate_error``.
    """

    value: float
    node: int
    location: tuple[float, float]
    value_warping: float
    near_corner: float
    candidates: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))
    candidate_error: np.ndarray = field(default_factory=lambda: np.zeros(0))
    traced: TracedRun | None = None  # the traced curve the peak sits on (polygons only)
    traced_effect: float = 0.0  # how much the polygon's points may move the peak there
    traced_zone: float = 0.0  # radius of the zone round a lone weak corner the peak is read by
    #: how far (relative to the peak) the shear may rise between the last node read
    #: and the edge of a zone left out (:func:`zone_edge_rise`)
    zone_edge: float = 0.0
    #: places read too close to a zone's centre for their mesh that could hold the
    #: peak (``(k, 2)`` input coordinates, :func:`unresolved_near_zones`)
    unresolved: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))
    #: nodes next to a zone's edge where the shear may rise above the peak
    #: (``(k, 2)``, the largest rise first): where to refine for :attr:`zone_edge`
    edge_spots: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))


def _repeatable(func):
    """Run ``func`` with BLAS on one thread: the same bits whatever the machine's threads.

    Dot products and matrix products sum in an order that depends on the BLAS
    thread count; held to one, a section gives bit-identical results in this
    process, in a batch's worker processes and on any machine with the same
    libraries (README, "JSON output": results are repeatable).
    """
    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with one_blas_thread():
            return func(*args, **kwargs)

    return wrapper


def solve_fields(mesh: Mesh, order: int = 1, method: str = "auto") -> TorsionFields:
    """Both torsion problems on ``mesh`` with elements of the given order.

    Raises
    ------
    InputError
        When the stress function has no unknown on the mesh (no node inside
        the section and no hole): it would be zero, and so would J's lower
        bound and the peak shear.
    """
    _check_unknowns(mesh, order)
    if order == 1:
        return solve_torsion(mesh, method=method)
    if order == 2:
        from .fem.p2 import solve_torsion_p2

        return solve_torsion_p2(mesh, method=method)
    raise ValueError(f"element order must be 1 or 2, got {order}")


def _check_unknowns(mesh: Mesh, order: int) -> None:
    """Refuse a mesh on which the stress function has nothing to solve for.

    Its unknowns are the nodes inside the section (for quadratic elements also
    the mid-side nodes of edges between two triangles) and one per hole.
    """
    if mesh.nholes > 0:
        return
    inside = mesh.nnodes - len(np.unique(mesh.segments))
    if order == 2:
        inside += 3 * mesh.nelements - mesh.segments.shape[1]  # twice the inner edges
    if inside > 0:
        return
    from .errors import InputError

    raise InputError(
        f"the mesh has no node inside the section ({mesh.nelements} element(s), every node on "
        "the boundary): the stress function has nothing to solve for, so J and the shear "
        "cannot be found on it",
        fix="use a finer mesh: refine a mesh file in its mesher, or give a smaller --mesh-size")


def boundary_shear(mesh: Mesh, fields: TorsionFields) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Shear magnitude at the boundary nodes from both fields.

    Returns ``(nodes, tau_phi, tau_w)``.  For linear elements from the
    consistent boundary flux of the stress function and the tangential
    warping shear (:func:`~soapfilm.fem.torsion.boundary_flux_shear`);
    ``|grad phi|^2`` is subharmonic, so the peak lies on the boundary.
    """
    if getattr(fields, "order", 1) == 2:
        from .fem.p2 import boundary_peak_p2

        pk = boundary_peak_p2(fields)  # node-averaged P2 gradients at every boundary P2 node
        return pk.nodes, pk.tau_phi, pk.tau_w
    return boundary_flux_shear(mesh, fields)


def corner_zone_radius(profile: Profile) -> float:
    """Radius of the zone round each sharp corner left out of the reported peak.

    :data:`~soapfilm.corners.CORNER_ZONE_FRACTION` of the section's
    :attr:`~soapfilm.profile.Profile.diameter` (largest distance between two
    outline points), which, unlike the bounding box, does not change when
    the section turns: the peak is a property of the shape, not of its
    orientation.  The pictures leave out the same zones.
    """
    return CORNER_ZONE_FRACTION * profile.diameter


def weak_corner_zones(traced: tuple[TracedRun, ...], zone: float = 0.0,
                      corners: tuple[Corner, ...] = ()) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Zones round the weak re-entrant corners of a polygon, left out of the peak.

    Every point of a concave traced run and every lone weak corner (runs of
    one point, :func:`soapfilm.corners.traced_runs`): the stress there grows
    like ``r^-lambda`` with ``lambda = turn/(180 + turn)``, without bound but
    slowly.  The zone's radius is a quarter of the point's shorter chord,
    where the polygon's stress no longer depends on the mesh (DEVELOPERS.md,
    "Corners"), and at most ``zone``, a sharp corner's (when given): a weak
    corner never leaves out more than a sharp one.  A point that is itself a
    sharp corner (a tolerance under 10 degrees) keeps the sharp corner's zone.

    Returns centres ``(k, 2)``, radii ``(k,)`` and each zone's run (index in ``traced``).
    """
    weak = [(i, r) for i, r in enumerate(traced) if r.concave]
    if not weak:
        return np.zeros((0, 2)), np.zeros(0), np.zeros(0, dtype=np.int64)
    wxy = np.concatenate([r.xy for _, r in weak])
    wrad = 0.25 * np.concatenate([r.chord for _, r in weak])
    wrun = np.concatenate([np.full(len(r.xy), i) for i, r in weak])
    if zone > 0.0:
        wrad = np.minimum(wrad, zone)
    if corners:
        sharp = np.array([(c.x, c.y) for c in corners])
        gap = np.min(np.hypot(wxy[:, None, 0] - sharp[None, :, 0],
                              wxy[:, None, 1] - sharp[None, :, 1]), axis=1)
        keep = gap > 0.0
        wxy, wrad, wrun = wxy[keep], wrad[keep], wrun[keep]
    return wxy, wrad, wrun


def boundary_peak(
    mesh: Mesh,
    fields: TorsionFields,
    corners: tuple[Corner, ...] = (),
    zone: float = 0.0,
    traced: tuple[TracedRun, ...] = (),
) -> Peak:
    """Peak boundary shear: the largest recovered ``|tau|`` on the boundary.

    One rule for every outline: the maximum over the boundary nodes of the
    stress-function shear, leaving out the corner nodes of the outline (zero
    or unbounded shear, :func:`~soapfilm.fem.torsion.boundary_corner_nodes`)
    and the nodes within ``zone`` of a sharp re-entrant corner (where the
    stress is unbounded).  Curved edges
    have their nodes on the exact curve, so a fillet is a smooth boundary and
    needs no other exception.

    A polygon that *traces* a curve (``traced``, from
    :func:`soapfilm.corners.traced_runs`) has a weak corner at each of its
    points (interior angle 180 + turn, stress ~ r^(-turn/(pi + turn)) there),
    and so has a lone re-entrant vertex below the sharp-corner tolerance (a
    run of one point); nodes closer to a weak re-entrant corner than its zone
    (:func:`weak_corner_zones`) are left out where the mesh has split the
    chords (DEVELOPERS.md derives why the chord middles are the polygon's
    stand-in for the curve), and the peak carries the run so the result can
    warn.
    """
    nodes, tau_phi, tau_w = boundary_shear(mesh, fields)
    xy = fields.p[:, nodes] + fields.origin[:, None]  # input coordinates (P2: midpoints too)
    bn, corner = boundary_corner_nodes(mesh)
    away = ~np.isin(nodes, bn[corner])  # no finite peak at a corner node
    if corners:  # away from every sharp corner: the nearest one farther than the zone
        from scipy.spatial import cKDTree

        dist, _ = cKDTree(np.array([(c.x, c.y) for c in corners])).query(xy.T)
        away &= dist > zone
    near = float(tau_phi[~away].max()) if np.any(~away) else 0.0
    circles = [(c.x, c.y, zone) for c in corners]  # the zones left out: centre and radius
    run_of = np.full(len(nodes), -1)
    if traced:
        from scipy.spatial import cKDTree

        wxy, wrad, wrun = weak_corner_zones(traced, zone, corners)
        tree = cKDTree(xy.T)
        # the runs a node is read on (for the warning): within four zone radii of a
        # point, convex runs' points too
        pxy = np.concatenate([r.xy for r in traced])
        prad = 0.25 * np.concatenate([r.chord for r in traced])
        if zone > 0.0:
            prad = np.minimum(prad, zone)
        prun = np.concatenate([np.full(len(r.xy), i) for i, r in enumerate(traced)])
        dist, idx = cKDTree(pxy).query(xy.T)
        on_run = dist <= 4.0 * prad[idx] + 1e-12
        run_of[on_run] = prun[idx[on_run]]
        if len(wxy):
            inner = tree.query_ball_point(wxy, wrad * (1 - 1e-9), return_length=True)
            outer = tree.query_ball_point(wxy, 2.0 * wrad, return_length=True)
            # a weak corner's zone applies where some node lies between one and two zone
            # radii away (else the vertex nodes alone stand for the polygon there)
            split = outer > inner
            if np.any(split):
                dist, idx = cKDTree(wxy[split]).query(xy.T)
                away &= dist >= wrad[split][idx]
                circles += [(x, y, r) for (x, y), r in zip(wxy[split], wrad[split], strict=True)]
    if not np.any(away):  # degenerate: every boundary node is near a corner
        away[:] = True
        circles = []
    i = int(np.flatnonzero(away)[np.argmax(tau_phi[away])])
    node = int(nodes[i])
    # places that could hold the peak: within twice the peak's own two-field
    # disagreement of it (at least 0.1 %, at most 2 %)
    spread = float(np.clip(2.0 * abs(tau_phi[i] - tau_w[i]) / tau_phi[i], 1e-3, 0.02))
    cand = away & (tau_phi >= (1.0 - spread) * tau_phi[i])
    err = np.abs(tau_phi - tau_w)
    run = None
    effect = 0.0
    if run_of[i] >= 0:
        run = traced[run_of[i]]
        # the run's points next to the peak: within two of its chords
        reach = 2.0 * float(np.max(run.chord))
        along = (run_of == run_of[i]) & (np.hypot(xy[0] - xy[0, i], xy[1] - xy[1, i]) <= reach)
        # lone weak corner: the shear grows like r^-lambda toward it, so the value
        # read at the zone's edge rises by 2^lambda - 1 for each halving of the zone;
        # concave: how much the shear read between the points (outside their zones)
        # varies along the chords next to the peak - the polygon's ripple, which the
        # points' weak corners cause; convex: an inscribed polygon of N sides per turn
        # raises the boundary stress by about 1.4 / N (shared/design.md, measured
        # 0.59 % at N = 256)
        if run.lone:
            effect = 2.0 ** run.exponent - 1.0
        elif run.concave:
            effect = float(1.0 - np.min(tau_phi[along & away]) / tau_phi[i])
        else:
            effect = 1.4 * (run.step_deg or float(np.mean(np.abs(run.turn_deg)))) / 360.0
    nbr = boundary_neighbours(mesh, fields, nodes)
    rise = zone_edge_rise(nbr, xy, tau_phi, away, np.isin(nodes, bn[corner]), circles)
    step = 2.0 if getattr(fields, "order", 1) == 2 else 1.0  # P2: mid-nodes halve the steps
    unres = unresolved_near_zones(nbr, xy, step, circles) & away \
        & (tau_phi >= (1.0 - UNRESOLVED_BAND) * tau_phi[i])
    over = np.flatnonzero(away & (rise > tau_phi[i]))
    over = over[np.argsort(rise[over])[::-1]]
    return Peak(
        edge_spots=xy[:, over].T.copy(),
        unresolved=xy[:, unres].T.copy(),
        zone_edge=max(0.0, float(np.max(rise[away])) / float(tau_phi[i]) - 1.0),
        value=float(tau_phi[i]),
        node=node,
        location=(float(xy[0, i]), float(xy[1, i])),
        value_warping=float(tau_w[i]),
        near_corner=near,
        candidates=xy[:, cand].T.copy(),
        candidate_error=err[cand] / tau_phi[i],
        traced=run,
        traced_effect=effect,
        traced_zone=0.0 if run is None or not run.lone
        else min(0.25 * float(run.chord[0]), zone or np.inf),
    )


def boundary_neighbours(mesh: Mesh, fields: TorsionFields, nodes: np.ndarray) -> np.ndarray:
    """Positions (in ``nodes``) of each boundary node's two neighbours along its loop.

    Returns ``(2, len(nodes))``: row 0 the node before, row 1 the node after,
    with the material on the left; -1 where a neighbour is not among ``nodes``.
    Quadratic elements: a boundary segment ``a -> b`` with mid-node ``m`` is
    the two steps ``a -> m -> b``.
    """
    if getattr(fields, "order", 1) == 2:
        nd = fields.nodes
        a, b, m = nd.segment_edges[0], nd.segment_edges[1], nd.segment_mid
        e = np.stack([np.concatenate([a, m]), np.concatenate([m, b])])
    else:
        e = mesh.oriented_boundary()[0].astype(np.int64)
    order = np.argsort(nodes)
    pos = order[np.clip(np.searchsorted(nodes, e, sorter=order), 0, len(nodes) - 1)]
    known = (nodes[pos[0]] == e[0]) & (nodes[pos[1]] == e[1])
    out = np.full((2, len(nodes)), -1, dtype=np.int64)
    out[0, pos[1, known]] = pos[0, known]  # before b comes a
    out[1, pos[0, known]] = pos[1, known]  # after a comes b
    return out


#: A node read closer to a zone's centre (a sharp corner, a traced polygon point)
#: than this many element lengths has the singular field in the elements it is
#: read from; DEVELOPERS.md, "Peak error estimate".
RESOLVED_ELEMENTS = 2.0

#: Unresolved nodes this close to the peak (relative) could hold it: how far such a
#: node's value fell short of its resolved value, at most 1.4 % measured, with room.
UNRESOLVED_BAND = 0.05


def unresolved_near_zones(nbr: np.ndarray, xy: np.ndarray, step: float, circles) -> np.ndarray:
    """Boundary nodes closer to a zone's centre than :data:`RESOLVED_ELEMENTS` elements.

    The element length at a node is the longer of its two boundary steps
    (times ``step``: 2 for quadratic elements, whose mid-nodes halve them).
    """
    out = np.zeros(xy.shape[1], dtype=bool)
    if not circles:
        return out
    from scipy.spatial import cKDTree

    lengths = np.zeros(xy.shape[1])
    for side in (0, 1):
        j = nbr[side]
        ok = j >= 0
        lengths[ok] = np.maximum(lengths[ok], np.hypot(*(xy[:, ok] - xy[:, j[ok]])))
    dist, _ = cKDTree(np.array([(c[0], c[1]) for c in circles])).query(xy.T)
    return dist < RESOLVED_ELEMENTS * step * lengths


#: Factor on the secant slope in :func:`zone_edge_rise`: the shear next to a corner
#: grows like ``r^-lambda`` (0 < lambda <= 1/2), steeper toward the zone's edge than
#: the secant over the two nodes farther out; DEVELOPERS.md, "Peak error estimate".
ZONE_EDGE_FACTOR = 2.0


def zone_edge_rise(nbr: np.ndarray, xy: np.ndarray, tau: np.ndarray, away: np.ndarray,
                   corner: np.ndarray, circles) -> np.ndarray:
    """Shear the boundary may reach between the last node read and a zone's edge.

    The reported peak is the largest shear on the boundary outside the zones
    (``circles``: centre x, y and radius), a closed set whose edge points
    the nodes do not sample.  Where the largest shear sits on a zone's edge
    (it rises toward the corner) the node maximum falls short of it by the
    rise over the gap ``g`` between the last node outside and the edge: a
    first-order sampling error that both fields share, so their
    disagreement does not show it.  For each node ``i`` read, whose
    neighbour along the boundary lies in a zone, the rise is estimated as
    :data:`ZONE_EDGE_FACTOR` times the secant slope from ``i``'s other
    neighbour ``k`` times ``g``, when the shear rises from ``k`` to ``i``.

    Returns the estimated shear at the edge for each node (``tau`` where no
    zone is next to it).
    """
    out = np.array(tau, dtype=float)
    if not circles:
        return out
    cxy = np.array([(c[0], c[1]) for c in circles], dtype=float)
    rad = np.array([c[2] for c in circles], dtype=float)
    for side in (0, 1):
        j, k = nbr[side], nbr[1 - side]  # j toward the zone, k the other way
        i = np.flatnonzero(away & (j >= 0) & (k >= 0))
        i = i[~away[j[i]] & ~corner[j[i]] & away[k[i]] & ~corner[k[i]]]
        if not len(i):
            continue
        a, b = xy[:, i].T, xy[:, j[i]].T  # node read, node in the zone
        d = b - a
        # the first zone circle the step a -> b enters: |a + t d - c| = r, smallest t in [0, 1]
        f = a[:, None, :] - cxy[None, :, :]
        qa = np.einsum("ij,ij->i", d, d)[:, None]
        qb = np.einsum("ij,ikj->ik", d, f)
        qc = np.einsum("ikj,ikj->ik", f, f) - rad[None, :] ** 2
        disc = qb**2 - qa * qc
        t = np.where(disc >= 0.0, (-qb - np.sqrt(np.maximum(disc, 0.0))) / qa, np.inf)
        t = np.where((t >= 0.0) & (t <= 1.0), t, np.inf).min(axis=1)
        hit = np.isfinite(t)
        gap = t * np.sqrt(qa[:, 0])
        dk = np.hypot(*(xy[:, i] - xy[:, k[i]]))
        slope = (tau[i] - tau[k[i]]) / np.maximum(dk, 1e-300)
        up = hit & (slope > 0.0)
        cand = tau[i] + ZONE_EDGE_FACTOR * slope * np.where(up, gap, 0.0)
        out[i] = np.maximum(out[i], cand)
    return out


def corner_warnings(corners: tuple[Corner, ...], units: str, zone: float) -> list[str]:
    if not corners:
        return []
    where = "; ".join(c.describe(units) for c in corners[:6])
    more = f" and {len(corners) - 6} more" if len(corners) > 6 else ""
    return [
        f"{len(corners)} sharp re-entrant corner(s) at {where}{more}: the shear stress there is "
        f"unbounded (grows without limit as the mesh is refined). The peak shear reported is the "
        f"largest at least {zone:.3g} {units} away from these corners; model the real fillet "
        f"radius for a meaningful peak. J is not affected."
    ]


#: Safety factor on the two-field disagreement in the peak-shear estimate.  The
#: stress-function and warping-function boundary values at one node share the
#: node's boundary geometry, so their errors are partly alike and their
#: difference can fall short of either error; twice the difference covered the
#: actual error on every known-answer section (DEVELOPERS.md, "Peak error estimate").
CROSS_FACTOR = 2.0


def peak_cross_error(peak: Peak) -> float:
    """Local estimate of the peak's relative error on one mesh.

    Twice the largest relative two-field disagreement where the peak could
    be, plus how far the shear may rise between the nodes read and the edge
    of a zone left out (:func:`zone_edge_rise`).
    """
    if len(peak.unresolved):
        return float("inf")  # the mesh does not resolve where the peak could be
    cross = abs(peak.value - peak.value_warping) / peak.value
    if len(peak.candidate_error):
        cross = max(cross, float(np.max(peak.candidate_error)))
    return CROSS_FACTOR * cross + peak.zone_edge


def order_check_error(mesh: Mesh, fields: TorsionFields, peak: Peak, corners, zone, traced,
                      method: str = "auto") -> float:
    """Relative error of a linear-element peak (tau/T) by quadratic elements on the same mesh.

    ``|r1 - r2| / r1 + e2``: ``r`` the peak per unit torque from linear and from
    quadratic elements, ``e2`` the quadratic solution's own estimate (two-field
    disagreement and J half-bracket).  Quadratic elements' boundary gradients
    converge an order faster, so the difference is the linear value's error
    to within ``e2``.
    """
    f2 = solve_fields(mesh, order=2, method=method)
    pk2 = boundary_peak(mesh, f2, corners, zone, traced)
    r1 = peak.value / (0.5 * (fields.j_lo + fields.j_hi))
    r2 = pk2.value / (0.5 * (f2.j_lo + f2.j_hi))
    e2 = peak_cross_error(pk2) + (f2.j_hi - f2.j_lo) / (f2.j_hi + f2.j_lo)
    return abs(r1 - r2) / r1 + e2


def traced_warnings(peak: Peak, units: str) -> list[str]:
    """Say so when the peak sits on a curve that the outline gives as points."""
    run = peak.traced
    if run is None:
        return []
    x, y = peak.location
    if run.lone:
        (cx, cy), = run.xy
        return [
            f"the peak shear lies at ({x:.5g}, {y:.5g}) {units}, next to a weak re-entrant "
            f"corner at ({cx:.5g}, {cy:.5g}) {units} (interior angle {180.0 - run.turn_deg[0]:.1f} "
            f"deg, under the sharp-corner tolerance): the shear there is unbounded but grows "
            f"slowly (r^-{run.exponent:.2g}), so the peak reported is the largest at least "
            f"{peak.traced_zone:.3g} {units} from it and would be about "
            f"{100 * peak.traced_effect:.2g} % higher for each halving of that distance; model "
            f"the real fillet or the straight edge it stands for."
        ]
    kind = "concave" if run.concave else "convex"
    return [
        f"the peak shear lies at ({x:.5g}, {y:.5g}) {units}, on a {kind} curve of radius about "
        f"{run.radius:.3g} {units} that the outline traces with points ({run.points_per_quarter:.3g} "
        f"per quarter circle): each point is a corner of the polygon, so the peak may be off the "
        f"curve's value by about {100 * peak.traced_effect:.2g} %. Draw the curve as an arc (DXF "
        f"ARC or polyline bulge) or use a shape file for an exact fillet."
    ]


def unresolved_warnings(peak: Peak, units: str) -> list[str]:
    """Say so when the mesh cannot tell the peak's error (estimate infinite)."""
    if not len(peak.unresolved):
        return []
    x, y = peak.unresolved[0]
    return [
        f"the peak shear's error cannot be estimated on this mesh: the shear at ({x:.5g}, "
        f"{y:.5g}) {units}, within {100 * UNRESOLVED_BAND:g} % of the peak, is read within "
        f"{RESOLVED_ELEMENTS:g} elements of a sharp corner or a weak corner of the polygon, where the "
        f"mesh does not resolve the stress; use --tol (refines there) or a smaller --mesh-size"
    ]


def one_mesh_warning(estimate: float) -> str:
    """Say that a peak estimate from one mesh is an indicator, not a bound.

    On one mesh the estimate is the two fields' disagreement (or, for linear
    elements, the difference from quadratic ones) plus the half-bracket: it
    covered every closed-form case, but on random coarse meshes it fell short
    (DEVELOPERS.md, "Properties on random sections"); only the adaptive loop
    measures the change from mesh to mesh.
    """
    return (f"the peak shear's estimated error ({estimate:.1e}) comes from this one mesh: an "
            "indicator, not a bound (on coarse meshes it has fallen short); give a tolerance "
            "(--tol) for a value checked by refinement")


def bounds_warnings(fields: TorsionFields) -> list[str]:
    """Warn when the J bounds hold for the mesh polygon only."""
    if getattr(fields, "bounds_scope", "polygon") != "mesh":
        return []
    return ["the J bounds hold for the mesh polygon only: a curved edge is too coarse on this "
            "mesh to bracket the drawn curve (use --tol to refine, or a smaller --mesh-size)"]


@_repeatable
def result_from_mesh(
    profile: Profile,
    mesh: Mesh,
    method: str = "auto",
    order: int = DEFAULT_ORDER,
    corner_tol_deg: float = DEFAULT_CORNER_TOL_DEG,
    *,
    fields: TorsionFields | None = None,
    peak: Peak | None = None,
    warnings: tuple[str, ...] = (),
    refinement: tuple[dict, ...] = (),
    max_shear_error: float | None = None,
    converged: bool | None = None,
    warping_shear: bool = False,
) -> TorsionResult:
    """Solve both problems on a given mesh (unless ``fields`` are given) and assemble the result.

    ``warping_shear``: also solve for the warping shear per unit warping torque
    (:func:`soapfilm.fem.sectorial.warping_properties`, one more solve on the final
    mesh; what ``solve`` and ``member`` report, not needed for J and the peak).
    """
    corners = reentrant_corners(profile, corner_tol_deg)
    zone = corner_zone_radius(profile)
    if fields is None:
        fields = solve_fields(mesh, order=order, method=method)
    if peak is None:
        peak = boundary_peak(mesh, fields, corners, zone, tuple(traced_runs(profile)))
    j_lo, j_hi = fields.j_lo, fields.j_hi
    j = 0.5 * (j_lo + j_hi)
    moments = outline_moments(profile)  # of the drawn outline, curves included
    errors = {"torsion_constant": (j_hi - j_lo) / (j_hi + j_lo)}
    if max_shear_error is None:
        # one mesh only: the local estimate (see soapfilm.adapt), plus the J bracket's
        # half-width (tau / T divides by its midpoint)
        if getattr(fields, "order", 1) == 1:
            local = order_check_error(mesh, fields, peak, corners, zone,
                                      tuple(traced_runs(profile)), method)
        else:
            local = peak_cross_error(peak)
        max_shear_error = local + errors["torsion_constant"]
        if math.isfinite(max_shear_error):
            warnings = (*warnings, one_mesh_warning(max_shear_error))
    errors["max_shear"] = float(max_shear_error)
    return TorsionResult(
        profile=profile,
        mesh=mesh,
        fields=fields,
        area=moments.area,
        centroid=moments.centroid,
        polar_moment=moments.polar,
        torsion_constant_bounds=(j_lo, j_hi),
        max_shear_per_torque=peak.value / j,
        peak_location=peak.location,
        warnings=tuple(profile.notes) + tuple(corner_warnings(corners, profile.units, zone))
        + tuple(traced_warnings(peak, profile.units)) + tuple(unresolved_warnings(peak, profile.units))
        + tuple(bounds_warnings(fields))
        + tuple(warnings),
        refinement=tuple(refinement),
        estimated_relative_error=errors,
        order=getattr(fields, "order", 1),
        corners=corners,
        max_shear_per_torque_warping=peak.value_warping / j,
        converged=converged,
        warping=warping_properties(mesh, fields, moments=moments, history=refinement,
                                   diameter=profile.diameter, shear=warping_shear,
                                   corners=corners,
                                   zone=zone),
    )


@_repeatable
def analyse(
    profile: Profile,
    mesh_size: float | None = None,
    method: str = "auto",
    *,
    tol: float | None = None,
    order: int = DEFAULT_ORDER,
    memory=None,
    warping_shear: bool = False,
    **adapt_options,
) -> TorsionResult:
    """Mesh a profile and compute its torsion properties.

    Parameters
    ----------
    profile : Profile
    mesh_size : float, optional
        Element edge length in the profile's unit (default: derived from the
        section, see :func:`soapfilm.mesh.default_mesh_size`).  Without
        ``tol`` this is the one mesh solved on; with ``tol`` it is the start.
    method : {"auto", "direct", "amg"}
        Linear solver.
    tol : float, optional
        Requested relative accuracy: refine adaptively until the guaranteed
        bracket ``(J_hi - J_lo) / J`` and the estimated peak-shear error are
        below it (see :func:`soapfilm.adapt.refine_until`, which takes the
        further keyword options).
    order : {1, 2}
        Linear or quadratic triangles (default :data:`DEFAULT_ORDER`, quadratic).
    memory : str or number, optional
        Memory budget (``"4 GB"``, ``"500 MB"`` or bytes; default
        ``$SOAPFILM_MEMORY``, else 4 GB).  A mesh whose analysis would need
        more is refused before it is made, with an :class:`InputError` that
        gives the estimate; the adaptive loop stops refining within it
        (:mod:`soapfilm.resources`).
    warping_shear : bool
        Also compute the warping shear per unit warping torque
        (``result.warping.max_warping_shear``): one more linear solve on the
        final mesh, so off by default (the command line's ``solve`` and
        ``member`` ask for it).

    A section lying farther from the origin than :data:`FAR_RATIO` times its
    size is solved moved to the origin (far out, coordinates keep too few
    digits for a fine mesh); the result says so, gives the centroid and the
    peak where the section lies, and the mesh and pictures at the origin.

    Examples
    --------
    >>> from soapfilm import Profile, analyse
    >>> sq = Profile.from_loops([[(0, 0), (1, 0), (1, 1), (0, 1)]])
    >>> r = analyse(sq)
    >>> lo, hi = r.torsion_constant_bounds
    >>> bool(lo <= 0.1405770 <= hi)  # exact series value (Timoshenko & Goodier, sec. 109)
    True
    """
    shift = far_shift(profile)
    if shift is not None:
        return _solved_at_origin(profile, shift, mesh_size=mesh_size, method=method, tol=tol,
                                 order=order, memory=memory, warping_shear=warping_shear,
                                 **adapt_options)
    if tol is not None:
        from .adapt import refine_until

        return refine_until(profile, tol=tol, mesh_size=mesh_size, order=order, method=method,
                            memory=memory, warping_shear=warping_shear, **adapt_options)
    mesh = mesh_profile(profile, mesh_size, memory=memory)
    log.info("mesh: %d nodes, %d triangles", mesh.nnodes, mesh.nelements)
    return result_from_mesh(profile, mesh, method=method, order=order,
                            warping_shear=warping_shear)


#: A section whose centre lies farther from the origin than this many times its size
#: is solved moved to the origin: at 1e6 sizes out the J bracket of a keyed shaft had
#: widened from 3e-7 to 2e-4 (coordinates keep fewer digits for the mesh), at 1e10 the
#: curved elements turned over, at 1e13 the mesher ran out of memory (issue 11).
FAR_RATIO = 1e4


def far_shift(profile: Profile) -> np.ndarray | None:
    """The centre of the section's bounding box when it is far out (:data:`FAR_RATIO`), else None."""
    lo, hi = profile.outer.min(axis=0), profile.outer.max(axis=0)
    centre = 0.5 * (lo + hi)
    if float(np.max(np.abs(centre))) <= FAR_RATIO * profile.size:
        return None
    return centre


def _solved_at_origin(profile: Profile, shift: np.ndarray, **options) -> TorsionResult:
    """Solve the profile moved by ``-shift``; the centroid, peak and shear centre back where it lies."""
    import dataclasses

    local = profile.translated(-float(shift[0]), -float(shift[1]))
    if local.curves:
        # far out the points were rounded off their curves: put them back on
        from .geometry.edges import _snapped

        loops = [_snapped(xy, tags, local.curves)
                 for xy, tags in zip(local.loops, local.edge_curves, strict=True)]
        local = dataclasses.replace(
            Profile.from_loops(loops, units=local.units, name=local.name, labels=local.labels,
                               curves=local.curves, edge_curves=local.edge_curves),
            notes=local.notes, unit_stated=local.unit_stated)
    result = analyse(local, **options)
    u = profile.units
    far = float(np.hypot(*shift))
    step = float(np.spacing(np.max(np.abs(profile.outer))))  # rounding of a coordinate there
    rounded = (f"; its points there are rounded to {step:.2g} {u} ({step / profile.size:.1g} "
               f"of its size), so the outline is only that exact" if step > 1e-9 * profile.size
               else "")
    note = (f"the section lies {far:.3g} {u} from the origin, {far / profile.size:.2g} times "
            f"its size: it was solved moved to the origin (coordinates that far out keep too "
            f"few digits for a fine mesh){rounded}; the centroid, peak location, shear centre and "
            f"places of the largest warping and warping shear are given "
            f"where the section lies, the mesh, the pictures and other positions relative to "
            f"({shift[0]:.10g}, {shift[1]:.10g}) {u}")
    cx, cy = result.centroid
    px, py = result.peak_location
    warping = result.warping
    if warping is not None:
        sx, sy = warping.shear_centre
        wx, wy = warping.max_warping_location
        ts = warping.max_warping_shear_location
        warping = dataclasses.replace(
            warping, shear_centre=(sx + float(shift[0]), sy + float(shift[1])),
            max_warping_location=(wx + float(shift[0]), wy + float(shift[1])),
            max_warping_shear_location=None if ts is None
            else (ts[0] + float(shift[0]), ts[1] + float(shift[1])))
    return dataclasses.replace(
        result, centroid=(cx + float(shift[0]), cy + float(shift[1])),
        peak_location=(px + float(shift[0]), py + float(shift[1])), warping=warping,
        warnings=(note, *result.warnings))
