"""Write the mesh and the torsion fields to any mesh format meshio writes.

Point data written (per node; names chosen for ParaView):

``phi``
    Prandtl stress function per unit G*theta [unit^2].
``omega``
    Warping function about the centroid per unit twist rate [unit^2];
    the axial displacement is ``theta * omega``.
``shear_per_torque``
    Shear stress magnitude per unit torque [1/unit^3] (patch-recovered).
``shear_vector_per_torque``
    Shear stress vector per unit torque, 3 components (z = 0) so that
    ParaView can draw glyphs and stream lines.
``shear_stress_<UNIT>`` and ``shear_stress_vector_<UNIT>``
    The same scaled to a torque in N*m, when one is given.

Points are written with three coordinates (z = 0); the cells are the
triangles (``triangle`` or, for quadratic meshes, ``triangle6``).
"""

from __future__ import annotations

import contextlib
import io
import logging
from pathlib import Path

import numpy as np

from .errors import InputError
from .stress_units import shear_scale

__all__ = ["MESH_WRITE_FORMATS", "mesh_format", "require_h5py", "result_to_meshio", "write_mesh"]

log = logging.getLogger(__name__)

#: file suffix -> meshio format name.  vtu, vtk, msh (gmsh 2.2), avs and ply keep the
#: point data (ply: scalars only); the others keep the triangles only.  XDMF needs the
#: h5py package, which soapfilm does not require: it works when h5py is installed.
MESH_WRITE_FORMATS = {
    ".vtu": "vtu",
    ".vtk": "vtk",
    ".xdmf": "xdmf",
    ".xmf": "xdmf",
    ".msh": "gmsh",
    ".mesh": "medit",
    ".inp": "abaqus",
    ".obj": "obj",
    ".off": "off",
    ".ply": "ply",
    ".stl": "stl",
    ".mdpa": "mdpa",
    ".avs": "avsucd",
}


def mesh_format(path, option: str = "--mesh-out") -> str:
    """meshio format name for a file name, or raise InputError."""
    suffix = Path(path).suffix.lower()
    if suffix not in MESH_WRITE_FORMATS:
        raise InputError(
            f"cannot tell the mesh format from {suffix or '(no suffix)'!r}",
            where=f"{option} {path}",
            fix=f"end the file name in one of {', '.join(MESH_WRITE_FORMATS)} (.vtu for ParaView)",
        )
    fmt = MESH_WRITE_FORMATS[suffix]
    if fmt == "xdmf":
        require_h5py(f"{option} {path}")
    return fmt


def require_h5py(where: str) -> None:
    """XDMF through meshio needs h5py; say so in one line when it is missing."""
    import importlib.util

    if importlib.util.find_spec("h5py") is None:
        raise InputError("XDMF files need the h5py package, which is not installed",
                         where=where, fix="pip install h5py, or use .vtu, which ParaView reads")


def result_to_meshio(result, torque: float | None = None, stress_unit: str = "MPa"):
    """Build a :class:`meshio.Mesh` with the fields of a TorsionResult."""
    import meshio

    from .plots import nodal_shear

    mesh, f = result.mesh, result.fields
    tau = nodal_shear(result)
    t = np.asarray(mesh.t)
    n = mesh.nnodes
    points = np.zeros((n, 3))
    points[:, :2] = mesh.p.T
    cell_type = "triangle" if t.shape[0] == 3 else "triangle6"
    vec = np.zeros((n, 3))
    vec[:, :2] = tau.T
    point_data = {
        # quadratic elements: the values at the corner nodes, which come first
        "phi": np.asarray(f.phi, dtype=float)[:n],
        "omega": np.asarray(f.omega, dtype=float)[:n],
        "shear_per_torque": np.hypot(tau[0], tau[1]),
        "shear_vector_per_torque": vec,
    }
    if torque is not None:
        s = shear_scale(result.units, torque, stress_unit)
        point_data[f"shear_stress_{stress_unit}"] = point_data["shear_per_torque"] * s.factor
        point_data[f"shear_stress_vector_{stress_unit}"] = vec * s.factor
    return meshio.Mesh(points, [(cell_type, t.T.astype(np.int64))], point_data=point_data)


def write_mesh(result, path, torque: float | None = None, stress_unit: str = "MPa",
               outputs=None) -> Path:
    """Write mesh and fields to ``path``; the format follows the suffix.

    The file is written under a temporary name in the same folder and renamed
    when complete, so a failure never leaves a partial file; with ``outputs``
    (a :class:`soapfilm.cli._io.Outputs`) it is only staged there, and renamed
    with the run's other files by ``outputs.commit()``.  XDMF is written with
    its data inline (XML), so it is one self-contained file.

    Raises
    ------
    InputError
        Unknown suffix, meshio refused to write this mesh in that format, or
        the file could not be written (disk full, no permission).
    """
    from .cli._io import Outputs

    path = Path(path)
    fmt = mesh_format(path)
    m = result_to_meshio(result, torque=torque, stress_unit=stress_unit)
    kwargs = {}
    if fmt == "xdmf":
        kwargs["data_format"] = "XML"
    if fmt == "gmsh":  # version 2.2: read by every gmsh-aware tool
        ones = np.ones(len(m.cells[0].data), dtype=np.int32)
        m.cell_data["gmsh:physical"] = [ones]
        m.cell_data["gmsh:geometrical"] = [ones]
        fmt = "gmsh22"

    def write(tmp) -> None:
        import meshio

        chatter = io.StringIO()  # meshio prints notes such as "dropping vector data"
        try:
            with contextlib.redirect_stdout(chatter), contextlib.redirect_stderr(chatter):
                meshio.write(tmp, m, file_format=fmt, **kwargs)
        except OSError:
            raise  # disk full, permissions: the caller's one line
        except Exception as exc:  # meshio raises assorted types for unsupported data
            raise InputError(f"could not write the mesh as {fmt}: {exc}",
                             where=f"--mesh-out {path}", fix="use .vtu, .xdmf or .msh") from exc
        if chatter.getvalue().strip():
            log.info("meshio: %s", chatter.getvalue().strip())

    if outputs is not None:
        outputs.stage_with(path, write, "--mesh-out")
        return path
    run = Outputs()  # alone: staged and committed at once
    try:
        run.stage_with(path, write, "--mesh-out")
        run.commit()
    finally:
        run.discard()
    log.info("wrote %s", path)
    return path
