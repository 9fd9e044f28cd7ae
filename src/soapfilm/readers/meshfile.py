"""Triangle meshes from other programs, read with meshio.

A flat triangle mesh (``.vtu``, ``.msh``, ``.xdmf`` ...) is used two ways:

* as a section: :func:`read_meshfile` (registered for the mesh suffixes)
  returns the :class:`~soapfilm.profile.Profile` bounded by the mesh's free
  edges, for pictures, reports and anything that remeshes;
* as the mesh to solve on: :func:`read_mesh_file` returns the Profile and a
  :class:`~soapfilm.mesh.Mesh` made of exactly the file's triangles, so the
  solution is on the given mesh.

Boundary loops are the chains of free edges (edges of one triangle only).
The loop that encloses the others is the outside (marker 1); the others are
holes (marker ``k + 2`` for hole ``k``, in the order of the Profile's holes).
Only the ``triangle`` cells are used (``triangle6``: their corner nodes);
lines and points in the file (boundary tags and the like) are ignored;
nodes no triangle uses are dropped.  The mesh has no length unit: it comes
from ``--units`` (default mm).
"""

from __future__ import annotations

import contextlib
import io
import logging
from pathlib import Path

import numpy as np

from ..errors import GeometryError, InputError
from ..mesh import Mesh
from ..profile import LENGTH_UNITS, Profile
from . import register

__all__ = ["MESH_SUFFIXES", "read_mesh_file", "read_meshfile", "mesh_from_triangles"]

log = logging.getLogger(__name__)

#: suffixes read as meshes (none of them clash with the point-list suffixes)
#: (XDMF only when the h5py package is installed: meshio needs it for any XDMF file)
MESH_SUFFIXES = (
    ".vtu", ".vtk", ".msh", ".xdmf", ".xmf", ".mesh", ".inp", ".obj", ".off", ".ply", ".stl",
    ".mdpa", ".avs",
)


def _load(path: Path):
    import meshio

    chatter = io.StringIO()  # meshio prints its own warnings and errors: keep them for --debug
    try:
        with contextlib.redirect_stdout(chatter), contextlib.redirect_stderr(chatter):
            return meshio.read(path)
    except (Exception, SystemExit) as exc:  # meshio raises many types, even SystemExit
        text = str(exc) if not isinstance(exc, SystemExit) else "not a readable file"
        raise InputError(f"meshio could not read it: {text}".rstrip(), where=str(path),
                         fix="check that it is a mesh file of the kind its suffix says") from None
    finally:
        if chatter.getvalue().strip():
            log.debug("meshio: %s", chatter.getvalue().strip())


def _triangles(m, where: str) -> np.ndarray:
    tris = []
    other = set()
    for block in m.cells:
        if block.type == "triangle":
            tris.append(np.asarray(block.data)[:, :3])
        elif block.type == "triangle6":
            tris.append(np.asarray(block.data)[:, :3])
            log.info("%s: triangle6 cells read by their corner nodes", where)
        elif block.type not in ("vertex", "line", "line3"):
            other.add(block.type)
    if not tris:
        found = ", ".join(sorted({b.type for b in m.cells})) or "no cells"
        raise InputError(f"no triangles in the mesh (found: {found})", where=where,
                         fix="export a 2D triangle mesh of the section")
    if other:
        raise InputError(f"the mesh has {', '.join(sorted(other))} cells besides triangles",
                         where=where, fix="use a pure triangle mesh (split quads into triangles)")
    return np.concatenate(tris).astype(np.int64)


def mesh_from_triangles(points, triangles, where: str = "mesh", units: str = "mm",
                        name: str = "") -> tuple[Profile, Mesh]:
    """Profile and Mesh from flat triangles.

    Parameters
    ----------
    points : array_like (N, 2) or (N, 3)
        Node coordinates; a third column must be constant (a flat mesh).
    triangles : array_like (M, 3) of int
    where : str
        Label for messages (the file name).

    Raises
    ------
    InputError
        Not flat, degenerate triangles, overlapping or non-conforming
        triangles, a boundary that touches itself, or several pieces.
    """
    pts = np.asarray(points, dtype=float)
    tri = np.asarray(triangles, dtype=np.int64)
    if pts.ndim != 2 or pts.shape[1] not in (2, 3) or len(pts) < 3:
        raise InputError(f"points must be (N, 2) or (N, 3), got shape {pts.shape}", where=where)
    if not np.all(np.isfinite(pts)):
        raise InputError("a node coordinate is not a finite number", where=where)
    if tri.min() < 0 or tri.max() >= len(pts):
        raise InputError("a triangle refers to a node that does not exist", where=where)
    span = float(np.max(np.ptp(pts[:, :2], axis=0)))
    if pts.shape[1] == 3:
        z = pts[np.unique(tri), 2]
        if np.ptp(z) > 1e-9 * max(span, 1e-300):
            raise InputError(
                f"the mesh is not flat: z runs from {z.min():g} to {z.max():g}",
                where=where, fix="give a 2D mesh of the section in the x-y plane",
            )
    # keep only nodes used by triangles
    used = np.unique(tri)
    new = np.full(len(pts), -1, dtype=np.int64)
    new[used] = np.arange(len(used))
    p = pts[used, :2].T.copy()
    t = new[tri].T.copy()

    x, y = p[0, t], p[1, t]
    area2 = (x[1] - x[0]) * (y[2] - y[0]) - (x[2] - x[0]) * (y[1] - y[0])
    tiny = 1e-12 * span * span
    bad = np.flatnonzero(np.abs(area2) <= tiny)
    if len(bad):
        c = p[:, t[:, bad[0]]].mean(axis=1)
        raise InputError(
            f"{len(bad)} triangle(s) have zero area, the first near ({c[0]:.6g}, {c[1]:.6g})",
            where=where, fix="remove degenerate triangles in the mesher",
        )
    flip = area2 < 0
    t[:, flip] = t[[0, 2, 1]][:, flip]

    loops = _boundary_loops(t, p, where)
    signed = [_signed_area(p[:, lp]) for lp in loops]
    outside = [k for k, a in enumerate(signed) if a > 0]
    if len(outside) != 1:
        raise InputError(
            f"the mesh falls apart into {len(outside)} separate pieces",
            where=where, fix="a bar section must be one connected region",
        )
    order = outside + [k for k in range(len(loops)) if k not in outside]
    loops = [loops[k] for k in order]
    labels = [f"{where} boundary loop {k + 1} ({'outside' if k == 0 else 'hole'})"
              for k in range(len(loops))]
    try:
        profile = Profile.from_loops([p[:, lp].T for lp in loops], units=units, name=name,
                                     labels=labels)
    except GeometryError as exc:
        raise InputError(f"the mesh boundary is not a valid section: {exc}", where=where,
                         fix="check the mesh for overlapping or folded triangles") from None
    total = 0.5 * float(np.sum(np.abs(area2)))
    if not np.isclose(total, profile.area, rtol=1e-9, atol=0.0):
        raise InputError(
            f"the triangles cover {total:.9g} but the boundary encloses {profile.area:.9g}",
            where=where, fix="the triangles overlap or the mesh is not conforming",
        )
    seg_list, mark_list = [], []
    for k, lp in enumerate(loops):
        seg_list.append(np.stack([lp, np.roll(lp, -1)]))
        mark_list.append(np.full(len(lp), 1 if k == 0 else k + 1))
    mesh = Mesh(p, t, np.concatenate(seg_list, axis=1), np.concatenate(mark_list),
                profile.hole_areas)
    return profile, mesh


def _signed_area(xy: np.ndarray) -> float:
    x, y = xy
    return 0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(np.roll(x, -1), y))


def _boundary_loops(t: np.ndarray, p: np.ndarray, where: str) -> list[np.ndarray]:
    """Chains of free edges, each a node array in the triangles' orientation."""
    edges = np.concatenate([t[[0, 1]], t[[1, 2]], t[[2, 0]]], axis=1)  # oriented, (2, 3M)
    key = np.sort(edges, axis=0)
    _, inv, count = np.unique(key, axis=1, return_inverse=True, return_counts=True)
    inv = inv.ravel()
    if np.any(count > 2):
        e = key[:, np.flatnonzero(count[inv] > 2)[0]]
        c = p[:, e].mean(axis=1)
        raise InputError(
            f"an edge is shared by more than two triangles near ({c[0]:.6g}, {c[1]:.6g})",
            where=where, fix="the mesh must be a plain 2D triangulation without overlaps",
        )
    free = edges[:, count[inv] == 1]
    start, end = free
    out_deg = np.bincount(start, minlength=p.shape[1])
    if np.any(out_deg > 1):
        node = int(np.flatnonzero(out_deg > 1)[0])
        raise InputError(
            f"the boundary touches itself at ({p[0, node]:.6g}, {p[1, node]:.6g})",
            where=where, fix="two loops may not share a node; leave material between them",
        )
    nxt = np.full(p.shape[1], -1, dtype=np.int64)
    nxt[start] = end
    seen = np.zeros(p.shape[1], dtype=bool)
    loops = []
    for s in start:  # a walk along the boundary (not a hot path: boundary nodes only)
        if seen[s]:
            continue
        loop = [s]
        seen[s] = True
        node = nxt[s]
        while node != s:
            if node < 0 or seen[node]:  # pragma: no cover - impossible for a manifold boundary
                raise InputError("a boundary loop does not close", where=where)
            loop.append(node)
            seen[node] = True
            node = nxt[node]
        loops.append(np.asarray(loop, dtype=np.int64))
    return loops


def _units(units: str | None) -> str:
    units = units or "mm"
    if units not in LENGTH_UNITS:
        raise InputError(f"unknown length unit {units!r}", where="--units",
                         fix=f"use one of {', '.join(LENGTH_UNITS)}")
    return units


def read_mesh_file(path, units: str | None = None) -> tuple[Profile, Mesh]:
    """Read a triangle mesh file: the section it covers and the mesh itself.

    Parameters
    ----------
    path : path-like
        Any flat triangle mesh meshio reads.
    units : str, optional
        Length unit of the coordinates (default mm).

    Returns
    -------
    (Profile, Mesh)
    """
    path = Path(path)
    if not path.exists():
        raise InputError("file not found", where=str(path), fix="check the path")
    units = _units(units)
    if path.suffix.lower() in (".xdmf", ".xmf"):
        from ..export import require_h5py

        require_h5py(str(path))
    m = _load(path)
    tri = _triangles(m, str(path))
    profile, mesh = mesh_from_triangles(m.points, tri, where=str(path), units=units,
                                        name=path.stem)
    log.info("%s: %d triangles, %d nodes, %d holes", path, mesh.nelements, mesh.nnodes,
             mesh.nholes)
    return profile, mesh


def is_mesh_file(path) -> bool:
    """True when ``path`` has one of :data:`MESH_SUFFIXES`."""
    return Path(path).suffix.lower() in MESH_SUFFIXES


@register(*MESH_SUFFIXES)
def read_meshfile(path: Path, units: str | None = None) -> Profile:
    """The section bounded by a triangle mesh file's free edges."""
    return read_mesh_file(path, units)[0]
