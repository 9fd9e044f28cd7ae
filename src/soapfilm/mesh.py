"""Quality triangle meshes of a :class:`~soapfilm.profile.Profile`.

Conventions (one for the whole package):

* ``p``  nodes, shape ``(2, N)`` float64;
* ``t``  triangles, shape ``(3, M)`` int32, counter-clockwise;
* ``segments`` boundary edges, shape ``(2, S)`` int32, with ``segment_markers``
  shape ``(S,)``: 1 on the outer loop, ``k + 2`` on hole ``k`` (0-based), and
  ``segment_curves`` shape ``(S,)``: the index into ``curves`` of the exact
  curve the segment's end nodes lie on, -1 for a straight segment.

Meshing calls Shewchuk's Triangle through the ``triangle`` package with the
switches ``p`` (keep the outline as given: no triangle crosses a boundary
segment), ``q30`` (no angle under 30 degrees) and ``a`` (area limit).

Curves: the starting polygon has its curved runs resampled on the exact curves
(no edge longer than the mesh size nor turning by more than
:data:`~soapfilm.geometry.edges.MAX_TURN_DEG`).  Triangle splits boundary
segments at their midpoints when it refines; every boundary node that lies
inside one curve's run (both its segments on that curve) is then moved onto
the curve, so the mesh boundary converges to the drawn curve rather than to
the first polygon.
"""

from __future__ import annotations

import contextlib
import dataclasses
import os
import pickle
import signal
from dataclasses import dataclass, field

import numpy as np
import triangle as tr
from shapely.geometry import Polygon

from .errors import InputError, SolveError
from .geometry.curves import Curve
from .geometry.edges import resampled_loop
from .profile import Profile

__all__ = ["Mesh", "mesh_profile", "default_mesh_size", "MIN_ANGLE", "snapped_to_curves"]

#: Minimum angle (degrees) asked of Triangle.
MIN_ANGLE = 30.0

#: Elements per section area at the default size (see ``default_mesh_size``).
_DEFAULT_ELEMENTS = 12000


@dataclass(frozen=True)
class Mesh:
    """A triangle mesh with its boundary.

    Attributes
    ----------
    p : ndarray (2, N) float64
    t : ndarray (3, M) int32
    segments : ndarray (2, S) int32
    segment_markers : ndarray (S,) int32
    hole_areas : ndarray (H,) float64
        Area enclosed by each hole loop (of the mesh polygon), for the hole conditions.
    segment_curves : ndarray (S,) int32
        Curve of each boundary segment (index into ``curves``), -1 straight.
    curves : tuple of Curve
    """

    p: np.ndarray
    t: np.ndarray
    segments: np.ndarray
    segment_markers: np.ndarray
    hole_areas: np.ndarray
    segment_curves: np.ndarray | None = None
    curves: tuple[Curve, ...] = field(default=(), compare=False, repr=False)

    def __post_init__(self):
        if self.segment_curves is None:
            object.__setattr__(self, "segment_curves", np.full(self.segments.shape[1], -1))
        for name, dtype in (
            ("p", np.float64),
            ("t", np.int32),
            ("segments", np.int32),
            ("segment_markers", np.int32),
            ("hole_areas", np.float64),
            ("segment_curves", np.int32),
        ):
            arr = np.ascontiguousarray(getattr(self, name), dtype=dtype)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)
        object.__setattr__(self, "curves", tuple(self.curves))

    @property
    def nnodes(self) -> int:
        return self.p.shape[1]

    @property
    def nelements(self) -> int:
        return self.t.shape[1]

    @property
    def nholes(self) -> int:
        return len(self.hole_areas)

    def loop_nodes(self, marker: int) -> np.ndarray:
        """Sorted unique nodes on the boundary segments carrying ``marker``."""
        return np.unique(self.segments[:, self.segment_markers == marker])

    @property
    def boundary_nodes(self) -> np.ndarray:
        """All nodes on any boundary loop."""
        return np.unique(self.segments)

    def element_areas(self) -> np.ndarray:
        x, y = self.p[0, self.t], self.p[1, self.t]
        return 0.5 * ((x[1] - x[0]) * (y[2] - y[0]) - (x[2] - x[0]) * (y[1] - y[0]))

    def refined(self, max_area: np.ndarray) -> Mesh:
        """Return a mesh refined so that element ``e`` has area <= ``max_area[e]``.

        Triangle's refinement (switch ``r``) keeps the existing nodes and the
        boundary; use ``np.inf`` (or a value above the area) for elements to
        leave alone.
        """
        max_area = np.asarray(max_area, dtype=np.float64)
        limit = np.where(np.isfinite(max_area), max_area, -1.0)  # <= 0: no limit
        codes, table = _encoded(self.segment_markers, self.segment_curves)
        data = {
            "vertices": self.p.T.copy(),
            "triangles": self.t.T.copy(),
            "segments": self.segments.T.copy(),
            "segment_markers": codes.reshape(-1, 1),
            "triangle_max_area": limit.reshape(-1, 1),
        }
        area = np.abs(self.element_areas())
        expected = float(np.sum(np.where(limit > 0, np.maximum(area / np.where(
            limit > 0, limit, 1.0), 1.0), 1.0)))
        out = _triangulated(data, f"rpq{MIN_ANGLE:g}aQ", expected)
        return _from_triangle(out, table, self.curves)

    def curve_nodes(self) -> tuple[np.ndarray, np.ndarray]:
        """Boundary nodes inside a curve's run (both segments on one curve) and that curve."""
        s = self.segments
        c = np.repeat(self.segment_curves[None, :], 2, axis=0).ravel()
        n = self.nnodes
        lo = np.full(n, np.iinfo(np.int32).max, dtype=np.int64)
        hi = np.full(n, -2, dtype=np.int64)
        np.minimum.at(lo, s.ravel(), c)
        np.maximum.at(hi, s.ravel(), c)
        nodes = np.flatnonzero((lo == hi) & (lo >= 0))
        return nodes, lo[nodes]

    def hole_loop_areas(self, p: np.ndarray | None = None) -> np.ndarray:
        """Area enclosed by each hole loop of the mesh polygon (nodes ``p``, default the mesh's)."""
        if not self.nholes:
            return np.zeros(0)
        p = self.p if p is None else p
        e, mk = self.oriented_boundary()[:2]
        h = mk >= 2
        e, mk = e[:, h], mk[h]
        cross = p[0, e[0]] * p[1, e[1]] - p[0, e[1]] * p[1, e[0]]
        # material on the left: a hole loop runs clockwise, its signed area is negative
        return -0.5 * np.bincount(mk - 2, weights=cross, minlength=self.nholes)[: self.nholes]

    def oriented_boundary(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Boundary edges with the material on their left, their loop markers and curves.

        Returns ``(edges (2, S), markers (S,), curves (S,))`` in the order of
        ``segments``.
        """
        t = self.t[:3]
        a = t.ravel()
        b = t[[1, 2, 0]].ravel()  # element edges a -> b, counter-clockwise: element on the left
        n = np.int64(self.nnodes)
        key = np.minimum(a, b).astype(np.int64) * n + np.maximum(a, b)
        s0, s1 = self.segments
        skey = np.minimum(s0, s1).astype(np.int64) * n + np.maximum(s0, s1)
        order = np.argsort(key)
        pos = order[np.searchsorted(key[order], skey)]
        return np.stack([a[pos], b[pos]]), self.segment_markers, self.segment_curves


def default_mesh_size(profile: Profile) -> float:
    """Default target element edge length for a profile.

    About ``_DEFAULT_ELEMENTS`` elements over the section area, but at least
    four elements across its thinnest part (estimated as 2 * area / perimeter)
    so that thin walls are resolved.  Tests check that this gives J within
    0.1 % of the exact value on the closed-form sections.
    """
    poly = profile.polygon
    h_area = np.sqrt(2.3 * poly.area / _DEFAULT_ELEMENTS)
    thickness = 2.0 * poly.area / poly.length
    return float(min(h_area, thickness / 4.0))


def mesh_profile(profile: Profile, size: float | None = None, *, memory=None) -> Mesh:
    """Quality-mesh a profile.

    Parameters
    ----------
    profile : Profile
    size : float, optional
        Target element edge length in the profile's unit; the area limit given
        to Triangle is that of an equilateral triangle of this side.  Default
        :func:`default_mesh_size`.
    memory : str or number, optional
        Memory budget of the analysis (``"4 GB"``, or bytes; default
        ``$SOAPFILM_MEMORY``, else 4 GB).  The mesh is estimated from the
        section and the size before it is made (:mod:`soapfilm.resources`)
        and refused with one line when its analysis would need more.
    """
    from .resources import check_far, check_mesh, precheck_mesh

    check_far(profile)  # analyse() solves far sections moved to the origin; a mesh there cannot
    if size is None:
        size = default_mesh_size(profile)
    if not np.isfinite(size) or size <= 0:
        raise InputError(f"mesh size must be a positive number, got {size}", where="--mesh-size")
    precheck_mesh(profile, size, memory)  # before resampling: area and curve lengths only
    loops = [resampled_loop(loop, tags, profile.curves, size)
             for loop, tags in zip(profile.loops, profile.edge_curves, strict=True)]
    est = check_mesh(profile, size, memory, loops)
    max_area = np.sqrt(3.0) / 4.0 * size * size
    verts, segs, marks, curv, hole_pts = [], [], [], [], []
    start = 0
    for k, (loop, tags) in enumerate(loops):
        n = len(loop)
        verts.append(loop)
        idx = np.arange(n) + start
        segs.append(np.column_stack([idx, np.roll(idx, -1)]))
        marks.append(np.full(n, 1 if k == 0 else k + 1))
        curv.append(tags)
        start += n
        if k > 0:
            rp = Polygon(loop).representative_point()
            hole_pts.append([rp.x, rp.y])
    codes, table = _encoded(np.concatenate(marks), np.concatenate(curv))
    data = {
        "vertices": np.concatenate(verts),
        "segments": np.concatenate(segs).astype(np.int32),
        "segment_markers": codes.reshape(-1, 1),
    }
    if hole_pts:
        data["holes"] = np.array(hole_pts)
    area_text = np.format_float_positional(max_area, unique=True, trim="-")  # every digit
    out = _triangulated(data, f"pq{MIN_ANGLE:g}a{area_text}Q", est.elements)
    return _from_triangle(out, table, profile.curves)


def _triangulated(data: dict, switches: str, expected: float = 0.0) -> dict:
    """Triangle's ``triangulate`` with its C-level printing kept off the terminal.

    Even in quiet mode (``Q``) Triangle prints why it gives up on standard
    output, which would break ``--json -``; the text goes into the error instead.
    ``expected`` is the number of elements the call is expected to make: a
    long call runs in a child process (:func:`_triangulate_interruptibly`).
    """
    from .quiet import c_output_captured

    failed = False
    with c_output_captured() as said:
        try:
            out = _triangulate_interruptibly(data, switches, expected)
        except RuntimeError:
            failed = True
    text = " ".join(" ".join(said).split())
    if not failed:
        return out
    if "precision" in text:
        at = text[text.find(" at ") + 4: text.find(")") + 1] if " at (" in text else ""
        raise SolveError(
            "the mesher ran out of floating-point precision"
            + (f" near {at}" if at else "")
            + ": a feature there is too small for the numbers that place it (a sliver, a "
              "near-touching pair of edges, or coordinates far from the origin)")
    raise SolveError("the mesher could not triangulate the section"
                     + (f" (Triangle: {text})" if text else ""))


#: Meshes expected above this many elements are made in a child process (about 0.2 s
#: of Triangle and more): Triangle runs in C holding the interpreter lock, so a
#: SIGTERM's Python handler (which removes the run's staged files) would wait for
#: it to return - 10 s and more for a few million elements.
FORK_ABOVE = 200_000


def _triangulate_interruptibly(data: dict, switches: str, expected: float) -> dict:
    """``triangle.triangulate``, in a forked child when ``expected`` elements are many.

    The parent waits on a pipe, a system call that signals interrupt: a
    SIGTERM's handler runs at once and raises in the parent, which then kills
    the child (SIGKILL) and reaps it, so the command ends within moments with
    its staged files removed (``cli/_io.py``).  The child inherits descriptor
    1 as the caller set it (:func:`soapfilm.quiet.c_output_captured`), sends
    back the result or Triangle's RuntimeError, and leaves by ``os._exit``
    (no exit handlers of the parent run in it).  Only in the main thread of a
    system with ``fork``; elsewhere, and for small meshes, Triangle runs here.
    """
    import threading

    if (expected < FORK_ABOVE or not hasattr(os, "fork")
            or threading.current_thread() is not threading.main_thread()):
        return tr.triangulate(data, switches)
    read_end, write_end = os.pipe()
    pid = os.fork()
    if pid == 0:  # the child: Triangle, the answer down the pipe, out
        code = 0
        try:
            os.close(read_end)
            signal.signal(signal.SIGTERM, signal.SIG_DFL)
            signal.signal(signal.SIGINT, signal.SIG_DFL)
            try:
                answer = ("ok", tr.triangulate(data, switches))
            except RuntimeError as exc:
                answer = ("error", str(exc))
            with os.fdopen(write_end, "wb") as pipe:
                pickle.dump(answer, pipe, protocol=pickle.HIGHEST_PROTOCOL)
        except BaseException:  # noqa: BLE001 - nothing of the parent may run on in the child
            code = 1
        finally:
            os._exit(code)
    os.close(write_end)
    done = False
    try:
        with os.fdopen(read_end, "rb") as pipe:
            try:
                kind, value = pickle.load(pipe)
            except EOFError:
                kind, value = "died", None
        _, status = os.waitpid(pid, 0)
        done = True
    finally:
        if not done:  # a signal (or anything else) while the child works: stop it
            with contextlib.suppress(OSError):
                os.kill(pid, signal.SIGKILL)
            with contextlib.suppress(OSError):
                os.waitpid(pid, 0)
    if kind == "ok":
        return value
    if kind == "error":
        raise RuntimeError(value)
    how = (f"killed by {signal.Signals(os.WTERMSIG(status)).name}" if os.WIFSIGNALED(status)
           else f"exit status {os.WEXITSTATUS(status)}")
    raise SolveError(f"the mesher stopped before it finished ({how}; out of memory?)")


def _encoded(markers: np.ndarray, curves: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """One Triangle marker per (loop marker, curve) pair; Triangle passes them to split segments.

    Returns the codes (1-based) and the table ``(2, K)`` of (marker, curve) per code - 1.
    """
    pairs = np.stack([np.asarray(markers, np.int64), np.asarray(curves, np.int64)])
    table, inv = np.unique(pairs, axis=1, return_inverse=True)
    return (inv.ravel() + 1).astype(np.int32), table


def _from_triangle(out: dict, table: np.ndarray, curves: tuple[Curve, ...]) -> Mesh:
    if "triangles" not in out or len(out["triangles"]) == 0:
        raise SolveError("the mesher returned no triangles")
    p = out["vertices"].T.copy()
    t = out["triangles"].T
    segs = out["segments"].T
    code = out["segment_markers"].ravel().astype(np.int64) - 1
    marks, segc = table[0, code], table[1, code]
    # drop nodes not used by any triangle (Triangle keeps input duplicates)
    used = np.zeros(p.shape[1], dtype=bool)
    used[t.ravel()] = True
    if not used.all():
        new = np.cumsum(used) - 1
        p, t, segs = p[:, used], new[t], new[segs]
    x, y = p[0, t], p[1, t]
    area2 = (x[1] - x[0]) * (y[2] - y[0]) - (x[2] - x[0]) * (y[1] - y[0])
    if np.any(area2 < 0):
        t = np.where(area2 < 0, t[[0, 2, 1]], t)
    p, t, segs = _renumbered(p, t, segs)
    mesh = Mesh(p, t, segs, marks, np.zeros(int(marks.max()) - 1 if len(marks) else 0),
                segc, curves)
    if curves:
        mesh = snapped_to_curves(mesh)
    return dataclasses.replace(mesh, hole_areas=mesh.hole_loop_areas())


def snapped_to_curves(mesh: Mesh) -> Mesh:
    """Move the boundary nodes inside each curve's run onto the curve.

    Triangle puts a node that splits a boundary segment at the segment's
    midpoint, on the chord; the node's foot point on the curve is at most the
    chord's sagitta away (under 1/20 of the chord for the starting polygon's
    10-degree turns, less after each split), well inside the elements of a
    30-degree quality mesh.
    """
    nodes, which = mesh.curve_nodes()
    if not len(nodes):
        return mesh
    p = mesh.p.copy()
    for c in np.unique(which):
        sel = nodes[which == c]
        cv = mesh.curves[c]
        p[:, sel] = cv.point(cv.project(p[:, sel].T)).T
    x, y = p[0, mesh.t], p[1, mesh.t]
    area2 = (x[1] - x[0]) * (y[2] - y[0]) - (x[2] - x[0]) * (y[1] - y[0])
    if np.any(area2 <= 0):
        raise SolveError(
            f"{int(np.sum(area2 <= 0))} element(s) turned inside out when boundary nodes were "
            "put onto their curves"
        )
    return dataclasses.replace(mesh, p=p)


def _interleaved(v: np.ndarray) -> np.ndarray:
    """Spread the low 16 bits of ``v`` to the even bit positions (for Morton keys)."""
    v = v.astype(np.uint64) & np.uint64(0xFFFF)
    for shift, mask in ((8, 0x00FF00FF), (4, 0x0F0F0F0F), (2, 0x33333333), (1, 0x55555555)):
        v = (v | (v << np.uint64(shift))) & np.uint64(mask)
    return v


def _renumbered(p, t, segs):
    """Number nodes along a Morton (Z-order) curve and elements by their lowest node.

    Triangle numbers inserted nodes in insertion order, scattered over the
    section; a space-filling-curve numbering keeps neighbours close in memory,
    which made assembly 1.5x and the AMG-CG solve of a million-element mesh
    1.3x faster (bench_core.py), at a tenth of the cost of reverse
    Cuthill-McKee, which gave the same solve speed.
    """
    n = p.shape[1]
    lo = p.min(axis=1, keepdims=True)
    span = float(np.max(p.max(axis=1) - lo[:, 0])) or 1.0
    q = np.floor((p - lo) / span * 65535.0)
    key = _interleaved(q[0]) | (_interleaved(q[1]) << np.uint64(1))
    order = np.argsort(key, kind="stable")
    new = np.empty(n, dtype=np.int64)
    new[order] = np.arange(n)
    t = new[t]
    t = t[:, np.argsort(t.min(axis=0), kind="stable")]
    return p[:, order], t, new[segs]
