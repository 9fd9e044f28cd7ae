"""Adaptive refinement until the torsion constant and peak shear are certified.

Each step solves both problems on the current mesh and gets, from the
Prager-Synge hypercircle, the guaranteed bracket ``J_lo <= J <= J_hi`` and an
element indicator ``eta_e^2 = int_e |tau_w - tau_phi|^2`` whose sum is the
bracket width.  The loop

1. stops when ``(J_hi - J_lo) / J <= tol`` and the peak shear's estimated
   relative error is at most ``peak_tol``;
2. otherwise marks the elements carrying a share ``theta`` of the total
   indicator (bulk marking) and halves their area, and, while the peak has not
   settled, quarters the area of the elements round the running peak;
3. stops with a warning when the mesh reaches ``max_elements``.

The peak-shear error (of tau_max / T) is estimated as the largest of the last
change, half the change before it (a geometric sequence halving its error
each step has its remaining error about equal to its last change) and a local
estimate, plus the half-width of the J bracket (tau_max / T divides by the
bracket's midpoint).  The local estimate is twice the largest disagreement
between the stress-function and warping-function values at the places that
could hold the peak (:func:`soapfilm.solve.peak_cross_error`); for linear
elements, once the J bracket and the history meet the tolerance, it is the
difference from quadratic elements on the same mesh plus their own estimate
(:func:`soapfilm.solve.order_check_error`): linear elements' boundary
gradients are noisy at order h on unstructured meshes and their two fields'
disagreement over-states the error of the maximum many times.

References
----------
.. [1] W. Doerfler, "A convergent adaptive algorithm for Poisson's equation",
   SIAM J. Numer. Anal. 33 (1996) 1106-1124 (bulk marking).
.. [2] W. Prager and J. L. Synge, Q. Appl. Math. 5 (1947) 241-269 (hypercircle).
"""

from __future__ import annotations

import logging
from collections.abc import Callable

import numpy as np

from .corners import DEFAULT_CORNER_TOL_DEG, reentrant_corners, traced_runs
from .errors import InputError
from .fem.sectorial import warping_properties
from .mesh import Mesh, default_mesh_size, mesh_profile
from .profile import Profile
from .resources import elements_within, format_bytes, memory_budget
from .result import TorsionResult
from .solve import (
    boundary_peak,
    corner_zone_radius,
    order_check_error,
    peak_cross_error,
    result_from_mesh,
    solve_fields,
)

__all__ = ["refine_until", "DEFAULT_TOL", "DEFAULT_MAX_ELEMENTS", "bulk_marked"]

log = logging.getLogger(__name__)

from .defaults import DEFAULT_MAX_ELEMENTS, DEFAULT_TOL  # noqa: E402

#: At most this many places round the peak are refined per step (the worst first):
#: a peak on a long flat stretch (mid-wall of a box) has hundreds of candidate places,
#: and quartering round all of them multiplied the mesh by 3 per step without
#: settling a disagreement that came from elsewhere (pollution, refined by marking).
_MAX_SPOTS = 32

#: Start of the adaptive loop: this many times the default element size.
_COARSE_START = 2.5


def bulk_marked(eta2: np.ndarray, theta: float) -> np.ndarray:
    """Smallest set of elements whose indicators sum to ``theta`` of the total."""
    order = np.argsort(eta2)[::-1]
    csum = np.cumsum(eta2[order])
    n = int(np.searchsorted(csum, theta * csum[-1])) + 1
    marked = np.zeros(len(eta2), dtype=bool)
    marked[order[:n]] = True
    return marked


def _history_error(values: list[float]) -> float:
    """The larger of the last change and half the change before it (relative)."""
    if len(values) == 1:
        return float("inf")  # one solve: no history yet
    v = values[-1]
    d1 = abs(values[-1] - values[-2]) / v
    d0 = abs(values[-2] - values[-3]) / v if len(values) >= 3 else d1 * 2.0
    return max(d1, 0.5 * d0)


def refine_until(
    profile: Profile,
    tol: float = DEFAULT_TOL,
    peak_tol: float | None = None,
    mesh_size: float | None = None,
    order: int = 2,
    method: str = "auto",
    max_elements: int = DEFAULT_MAX_ELEMENTS,
    theta: float = 0.5,
    max_steps: int = 60,
    corner_tol_deg: float = DEFAULT_CORNER_TOL_DEG,
    progress: Callable[[dict], None] | None = None,
    memory=None,
    warping_shear: bool = False,
) -> TorsionResult:
    """Refine adaptively until J and the peak shear meet the tolerances.

    Parameters
    ----------
    profile : Profile
    tol : float
        Requested relative accuracy: the width of the guaranteed J bracket,
        (J_hi - J_lo)/J, and the estimated relative error of the peak shear.
    peak_tol : float, optional
        A different tolerance for the peak shear (default ``tol``).
    mesh_size : float, optional
        Element size of the starting mesh (default 2.5 x the default size).
    order : {1, 2}
    max_elements : int
        Guard: stop (with a warning in the result) at this many elements.
    theta : float
        Share of the total indicator the marked elements must carry.
    progress : callable, optional
        Called with each step's history entry.
    memory : str or number, optional
        Memory budget (``"4 GB"`` or bytes; default ``$SOAPFILM_MEMORY``, else
        4 GB): the starting mesh is refused above it, and refinement stops,
        with a warning, at the elements it affords
        (:func:`soapfilm.resources.elements_within`).
    warping_shear : bool
        Also compute the warping shear on the final mesh
        (:func:`soapfilm.solve.result_from_mesh`).

    Returns
    -------
    TorsionResult
        With ``refinement`` (one entry per step) and ``converged``; its mesh
        and fields are those of the last step solved.
    """
    if not (0 < tol < 1):
        raise InputError(f"must be a number between 0 and 1 (a relative accuracy), got {tol}",
                         where="--tol", fix="e.g. 1e-3 for 0.1 %")
    if peak_tol is None:
        peak_tol = tol
    if not (0 < peak_tol < 1):
        raise InputError(f"must be a number between 0 and 1, got {peak_tol}", where="--peak-tol")
    if max_elements < 10:
        raise InputError(f"must be at least 10, got {max_elements}", where="--max-elements")
    corners = reentrant_corners(profile, corner_tol_deg)
    traced = tuple(traced_runs(profile))
    zone = corner_zone_radius(profile)
    h_floor = 1e-6 * profile.size  # no element is asked to be smaller than this
    mesh, start_note = _starting_mesh(profile, mesh_size, max_elements, memory)
    affordable = elements_within(memory)  # the next mesh must stay within the budget
    history: list[dict] = []
    peaks: list[float] = []
    converged = False
    warnings: list[str] = [start_note] if start_note else []
    for step in range(max_steps):
        fields = solve_fields(mesh, order=order, method=method)
        peak = boundary_peak(mesh, fields, corners, zone, traced)
        j = 0.5 * (fields.j_lo + fields.j_hi)
        gap = (fields.j_hi - fields.j_lo) / j
        peaks.append(peak.value / j)
        hist = _history_error(peaks)
        if order == 1 and gap <= tol and hist <= peak_tol:
            # linear elements: check against quadratic ones on the same mesh
            local = order_check_error(mesh, fields, peak, corners, zone, traced, method)
        else:
            local = peak_cross_error(peak)
        perr = max(hist, local) + 0.5 * gap
        entry = {
            "step": step,
            "elements": int(mesh.nelements),
            "nodes": int(mesh.nnodes),
            "j_lo": float(fields.j_lo),
            "j_hi": float(fields.j_hi),
            "max_shear_per_torque": float(peak.value / j),
            "max_shear_per_torque_warping": float(peak.value_warping / j),
            "relative_bracket": float(gap),
            "max_shear_error": float(perr),
        }
        # restrained-warping quantities per step: their history is their error estimate
        wp = warping_properties(mesh, fields)
        entry["warping_constant"] = wp.warping_constant
        entry["shear_centre"] = list(wp.shear_centre)
        history.append(entry)
        log.info("step %d: %d elements, bracket %.2e, peak error %.2e",
                 step, mesh.nelements, gap, perr)
        if progress is not None:
            progress(entry)
        if gap <= tol and perr <= peak_tol:
            converged = True
            break
        limit = _next_limit(mesh, fields, peak, gap > tol, perr > peak_tol, theta, h_floor,
                            peak_tol)
        coming = _next_count(mesh, limit)
        if mesh.nelements >= max_elements or coming > affordable:
            if mesh.nelements < max_elements:
                why = (f"the memory budget {format_bytes(memory_budget(memory))} affords about "
                       f"{affordable} elements and the next step would take about "
                       f"{coming:.2g}; raise --memory or loosen --tol")
            else:
                why = f"--max-elements {max_elements}; raise --max-elements or loosen --tol"
            warnings.append(
                f"tolerance not met: stopped at {mesh.nelements} elements with J bracket "
                f"{gap:.2e} (asked {tol:g}) and peak-shear error {perr:.2e} (asked "
                f"{peak_tol:g}): {why}"
            )
            break
        if step + 1 < max_steps:  # the result always pairs a mesh with its own fields
            mesh = mesh.refined(limit)
            log.debug("refined to %d elements (estimated %.0f)", mesh.nelements, coming)
    else:
        warnings.append(f"tolerance not met after {max_steps} refinement steps")
    return result_from_mesh(
        profile,
        mesh,
        order=order,
        corner_tol_deg=corner_tol_deg,
        fields=fields,
        peak=peak,
        warnings=tuple(warnings),
        refinement=tuple(history),
        max_shear_error=history[-1]["max_shear_error"],
        converged=converged,
        warping_shear=warping_shear,
    )


def _starting_mesh(profile: Profile, mesh_size: float | None, max_elements: int,
                   memory) -> tuple[Mesh, str]:
    """The loop's first mesh, within ``max_elements``, and a warning ("" if none).

    At the default start (:data:`_COARSE_START` x the default size) a section
    whose start alone is over the cap (a 1:1000 star 0.73 mm long started at
    92 393 elements with a cap of 9 000) starts coarser instead: at the size
    whose estimated mesh (:func:`soapfilm.resources.estimate_mesh`) is half
    the cap, then, while Triangle's count is still over the cap, larger by
    the square root of the excess (its sharp tips and narrow parts refine
    whatever the size, so the count stops falling at some size).  A start
    that no size brings under the cap is solved as it is, with a warning; a
    size the caller chose whose mesh is over the cap is refused with one
    line.  The bracket of any start is guaranteed, and the loop's stop at the
    cap says so in a warning.
    """
    from .resources import KAPPA_AREA, curved_length, estimate_mesh, size_for_count

    if mesh_size is not None:
        mesh = mesh_profile(profile, mesh_size, memory=memory)
        if mesh.nelements > max_elements:
            raise InputError(
                f"the starting mesh at element size {mesh_size:.3g} {profile.units} has "
                f"{mesh.nelements} elements, more than the limit of {max_elements}",
                where="--max-elements", fix="raise --max-elements, or give a larger --mesh-size")
        return mesh, ""
    size = _COARSE_START * default_mesh_size(profile)
    target = 0.5 * max_elements
    # first the cheap lower bound of the count (area, and the curves' points, as
    # resources.precheck_mesh): no resampling of the curves at a size the cap excludes
    size = max(size, size_for_count(KAPPA_AREA * float(profile.area), curved_length(profile),
                                    target))
    est = estimate_mesh(profile, size)
    if est.elements > target:  # the area term falls as 1/size^2, the features' terms do not
        room = target - est.thin_term - est.points_term
        size *= float(np.sqrt(est.area_term / room)) if room > 0 else 4.0
    largest = float(profile.size)
    mesh = mesh_profile(profile, min(size, largest), memory=memory)
    for attempt in range(6):
        if mesh.nelements <= max_elements or size >= largest:
            break
        size = min(largest, size * max(1.25, float(np.sqrt(mesh.nelements / target))))
        if attempt == 5:
            size = largest  # the last try: elements as large as the section
        mesh = mesh_profile(profile, size, memory=memory)
    note = ""
    if mesh.nelements > max_elements:
        note = (f"the coarsest starting mesh has {mesh.nelements} elements, more than "
                f"--max-elements {max_elements} (its narrow parts and sharp tips need that many "
                "at any element size): solved on it without refinement")
    return mesh, note


def _next_count(mesh: Mesh, limit: np.ndarray) -> float:
    """Elements after refining to the per-element area ``limit`` (an upper estimate).

    Element ``e`` alone would become ``area_e / limit_e`` elements; Triangle's
    30-degree condition then splits neighbours too, which made the increase
    2.0 to 3.0 times that (measured over the adaptive runs of a square, a
    keyed shaft and a tube, linear and quadratic: DEVELOPERS.md, "Resource
    guard"), hence three times.
    """
    area = np.abs(mesh.element_areas())
    split = np.where(np.isfinite(limit), area / np.maximum(limit, 1e-300), 1.0)
    return mesh.nelements + 3.0 * float(np.sum(np.maximum(split, 1.0)) - mesh.nelements)


def _next_limit(mesh, fields, peak, refine_j, refine_peak, theta, h_floor, peak_tol
                ) -> np.ndarray:
    """Per-element area limits of the next refinement (``inf``: leave alone)."""
    area = np.abs(mesh.element_areas())
    limit = np.full(mesh.nelements, np.inf)
    if refine_j or refine_peak:
        # the peak's error is partly pollution from the whole field: refine where
        # the two fields disagree even when the J bracket is already met
        marked = bulk_marked(fields.indicators, theta)
        limit[marked] = area[marked] / 2.0
    if refine_peak:
        from scipy.spatial import cKDTree

        t = mesh.t[:3]
        cent = np.column_stack([mesh.p[0, t].mean(axis=0), mesh.p[1, t].mean(axis=0)])
        tree = cKDTree(cent)
        # the places that could hold the peak and whose two fields still disagree
        # by more than half the tolerance; the peak itself always
        big = np.flatnonzero(peak.candidate_error > 0.5 * peak_tol)
        big = big[np.argsort(peak.candidate_error[big])[::-1][:_MAX_SPOTS]]
        spots = np.vstack([np.asarray(peak.location)[None, :], peak.candidates[big],
                           peak.unresolved[:_MAX_SPOTS], peak.edge_spots[:_MAX_SPOTS]])
        _, nearest = tree.query(spots, k=min(6, len(cent)))  # the elements round each spot
        h = np.sqrt(np.mean(area[nearest], axis=1) * 4 / np.sqrt(3))
        for idx in tree.query_ball_point(spots, 4.0 * h):
            idx = np.asarray(idx, dtype=np.int64)
            limit[idx] = np.minimum(limit[idx], area[idx] / 4.0)
    floor = np.sqrt(3.0) / 4.0 * h_floor**2
    limit = np.where(np.isfinite(limit), np.maximum(limit, floor), limit)
    if not np.any(limit < area):  # nothing left to refine above the floor: refine uniformly
        limit = np.maximum(area / 2.0, floor)
    return limit
