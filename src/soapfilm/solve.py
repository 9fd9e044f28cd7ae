"""From a profile to a :class:`~soapfilm.result.TorsionResult`."""

from __future__ import annotations

import logging

import numpy as np

from .fem.torsion import TorsionFields, element_gradients, recovered_gradient, solve_torsion
from .mesh import Mesh, mesh_profile
from .profile import Profile
from .result import TorsionResult

__all__ = ["analyse", "result_from_mesh", "boundary_peak"]

log = logging.getLogger(__name__)


def boundary_peak(mesh: Mesh, fields: TorsionFields) -> tuple[float, int, np.ndarray]:
    """Peak shear magnitude (per unit G*theta) on the boundary.

    The shear from the stress function is recovered at the boundary nodes
    (patch recovery, see :func:`~soapfilm.fem.torsion.recovered_gradient`);
    ``|grad phi|^2`` is subharmonic, so its maximum lies on the boundary.

    Returns
    -------
    peak : float
        max |tau| over boundary nodes.
    node : int
        Node where it sits.
    tau_b : ndarray
        Recovered |tau| at every boundary node (order of ``mesh.boundary_nodes``).
    """
    t = mesh.t
    nodes = mesh.boundary_nodes
    gphi = element_gradients(t, fields.elem_grad, fields.phi)
    rec = recovered_gradient(fields.p, t, fields.elem_area, gphi, nodes)
    tau_b = np.hypot(rec[0], rec[1])
    i = int(np.argmax(tau_b))
    return float(tau_b[i]), int(nodes[i]), tau_b


def result_from_mesh(
    profile: Profile,
    mesh: Mesh,
    method: str = "auto",
    warnings: tuple[str, ...] = (),
    refinement: tuple[dict, ...] = (),
) -> TorsionResult:
    """Solve both problems on a given mesh and assemble the result."""
    fields = solve_torsion(mesh, method=method)
    peak, node, _ = boundary_peak(mesh, fields)
    j_lo, j_hi = fields.j_lo, fields.j_hi
    j = 0.5 * (j_lo + j_hi)
    return TorsionResult(
        profile=profile,
        mesh=mesh,
        fields=fields,
        area=fields.area,
        centroid=(float(fields.origin[0]), float(fields.origin[1])),
        polar_moment=fields.polar_moment,
        torsion_constant_bounds=(j_lo, j_hi),
        max_shear_per_torque=peak / j,
        peak_location=(float(mesh.p[0, node]), float(mesh.p[1, node])),
        warnings=tuple(warnings),
        refinement=tuple(refinement),
        estimated_relative_error={"torsion_constant": (j_hi - j_lo) / (j_hi + j_lo)},
    )


def analyse(
    profile: Profile,
    mesh_size: float | None = None,
    method: str = "auto",
) -> TorsionResult:
    """Mesh a profile and compute its torsion properties.

    Parameters
    ----------
    profile : Profile
    mesh_size : float, optional
        Element edge length in the profile's unit (default: derived from the
        section, see :func:`soapfilm.mesh.default_mesh_size`).
    method : {"auto", "direct", "amg"}
        Linear solver.

    Examples
    --------
    >>> import numpy as np
    >>> from soapfilm import Profile, analyse
    >>> sq = Profile.from_loops([[(0, 0), (1, 0), (1, 1), (0, 1)]])
    >>> r = analyse(sq)
    >>> round(r.torsion_constant, 4)  # exact series value 0.140577 (Timoshenko & Goodier)
    0.1406
    """
    mesh = mesh_profile(profile, mesh_size)
    log.info("mesh: %d nodes, %d triangles", mesh.nnodes, mesh.nelements)
    return result_from_mesh(profile, mesh, method=method)
