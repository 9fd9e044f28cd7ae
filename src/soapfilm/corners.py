"""Sharp re-entrant corners: where the shear stress is unbounded.

At a boundary vertex whose interior (material) angle ``alpha`` exceeds 180
degrees the Saint-Venant stress behaves like ``r^(pi/alpha - 1)`` near the
vertex: singular.  J still converges; the peak stress there is not a property
of the section but of the (unmodelled) fillet radius.

A vertex counts as sharp when its interior angle exceeds ``180 + tol_deg``
(default 10 degrees).  Curves flattened into polylines turn by a few degrees
per vertex (a concave fillet flattened with nine or more chords per quarter
turn stays below 10 degrees) and are not flagged; a coarser flattening is a
weak corner in the polygon that is meshed, and flagging it is the right call.

References
----------
.. [1] M. L. Williams, "Stress singularities resulting from various boundary
   conditions in angular corners of plates in extension", J. Appl. Mech. 19
   (1952) 526-528 (the r^(pi/alpha - 1) corner behaviour; the same exponent
   holds for the Laplace problem of torsion).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .profile import Profile

__all__ = ["Corner", "reentrant_corners", "DEFAULT_CORNER_TOL_DEG", "CORNER_ZONE_FRACTION"]

#: Interior angles above 180 + this many degrees count as sharp re-entrant corners.
DEFAULT_CORNER_TOL_DEG = 10.0

#: The peak reported for a section with sharp corners is the largest at least
#: this fraction of the section's size (largest bounding-box side) away from them.
CORNER_ZONE_FRACTION = 0.025


@dataclass(frozen=True)
class Corner:
    """A sharp re-entrant corner: position and interior (material) angle in degrees."""

    x: float
    y: float
    angle: float
    loop: int  # 0 outer, k hole k

    def describe(self, units: str) -> str:
        return f"({self.x:.5g}, {self.y:.5g}) {units}, interior angle {self.angle:.1f} deg"


def reentrant_corners(profile: Profile, tol_deg: float = DEFAULT_CORNER_TOL_DEG) -> tuple[Corner, ...]:
    """Vertices of the profile with interior (material) angle above 180 + tol_deg.

    The outer loop runs counter-clockwise and holes clockwise, so the material
    is always on the left; a right turn of more than ``tol_deg`` is a sharp
    re-entrant corner.
    """
    found = []
    for k, loop in enumerate(profile.loops):
        d_in = loop - np.roll(loop, 1, axis=0)
        d_out = np.roll(loop, -1, axis=0) - loop
        cross = d_in[:, 0] * d_out[:, 1] - d_in[:, 1] * d_out[:, 0]
        dot = np.einsum("ij,ij->i", d_in, d_out)
        turn = np.degrees(np.arctan2(cross, dot))  # left turn positive
        interior = 180.0 - turn
        for i in np.flatnonzero(interior > 180.0 + tol_deg):
            found.append(Corner(float(loop[i, 0]), float(loop[i, 1]), float(interior[i]), k))
    return tuple(found)


def weak_concave_vertices(
    profile: Profile, tol_deg: float = DEFAULT_CORNER_TOL_DEG
) -> tuple[np.ndarray, np.ndarray]:
    """Slightly re-entrant vertices (flattened concave curves) and their zone radii.

    A vertex with interior angle in (180, 180 + tol_deg] is a polygon vertex on
    what is, in the part, a smooth concave curve.  The polygon has a weak
    singularity there (stress ~ r^(pi/alpha - 1), exponent a few hundredths),
    so a peak taken at the vertex creeps upward under refinement.  The peak is
    taken at least a quarter of the shorter adjacent chord away from such
    vertices, where the stress is that of the curve to within the flattening
    error.

    Only vertices whose chords the mesh has split need this: where the mesh
    is coarser than the chords, the vertex nodes are the only boundary nodes
    there and their values are the smooth ones (see ``solve.boundary_peak``).

    Returns
    -------
    xy : ndarray (k, 2)
    radius : ndarray (k,)
        A quarter of the shorter adjacent chord.
    """
    pts, rad = [], []
    for loop in profile.loops:
        d_in = loop - np.roll(loop, 1, axis=0)
        d_out = np.roll(loop, -1, axis=0) - loop
        cross = d_in[:, 0] * d_out[:, 1] - d_in[:, 1] * d_out[:, 0]
        dot = np.einsum("ij,ij->i", d_in, d_out)
        interior = 180.0 - np.degrees(np.arctan2(cross, dot))
        weak = (interior > 180.0 + 1e-6) & (interior <= 180.0 + tol_deg)
        chord = np.minimum(np.hypot(*d_in.T), np.hypot(*d_out.T))
        pts.append(loop[weak])
        rad.append(0.25 * chord[weak])
    return np.concatenate(pts), np.concatenate(rad)
