"""The resource guard: what a mesh will cost, known before it is made.

Every mesh soapfilm makes goes through :func:`soapfilm.mesh.mesh_profile`,
which first calls :func:`check_mesh`: the number of elements is estimated
from the section *as it will be meshed* and the requested element size, the
memory from the number of elements, and a mesh over the memory budget is
refused with one line that gives the estimate and what to change.  The
adaptive loop (:func:`soapfilm.adapt.refine_until`) stops refining at the
number of elements the budget affords (:func:`elements_within`).  Counts
that cost time before any mesh exists (loops, points, DXF entities after
block expansion, sweep rows) have limits of their own (:func:`check_count`).

The budget is ``--memory`` on the command line (``memory=`` in the Python
API, ``SectionOptions.memory``, a batch job's options), else the environment
variable ``SOAPFILM_MEMORY``, else :data:`~soapfilm.defaults.DEFAULT_MEMORY`
(4 GB: fits a laptop).  It applies to one section's analysis; a batch runs
at most as many workers in parallel as the machine's memory holds budgets.

Element count
-------------
Triangle's quality mesh (no angle under 30 degrees, no element larger than
an equilateral triangle of side ``h``) has elements no larger than ``h`` and
no larger than the section's local feature size.  Three terms, each measured
on the mesher's own starting polygon (curves resampled on their exact curves
as :func:`~soapfilm.geometry.edges.resampled_loop` does):

* *area*: ``KAPPA_AREA * A / h^2`` - elements of side ``h`` fill the area
  (Triangle's elements average 1/1.59 of the area limit: measured);
* *thin material*: along the boundary, the width ``t`` of the material
  across it (a ray cast along the inward normal to the first boundary part
  that is not the same or a neighbouring edge: two edges meeting at a
  vertex may enclose a sharp wedge, which Triangle meshes without refining)
  adds ``KAPPA_THIN * (1/t - 1/h)`` per unit length where ``t < h``;
* *dense points*: boundary edges shorter than ``h`` add
  ``KAPPA_POINTS * (1/l - 1/h)`` per unit length (each short edge and the
  grading away from it).

A sliver of material ``w`` wide and ``L`` long thus costs about
``1.5 L / w`` elements whatever the element size asked: the 1e-7 wide tail
of the issue-11 square, 5 mm long, about 8e7.  The constants are measured
(DEVELOPERS.md, "Resource guard"), as is the memory model.

Memory
------
``BASE_BYTES + BYTES_PER_ELEMENT * elements``: the interpreter with the
scientific libraries, plus, per element, the mesh, both fields of quadratic
(or linear, checked by quadratic) elements, the solver's factors or
multigrid hierarchy, the peak and bound computations, and the pictures,
report and mesh file drawn from them (measured peak resident memory of
``soapfilm solve`` with every output, and of ``analyse`` on uniform and
adaptive meshes, DEVELOPERS.md).
"""

from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass

from .defaults import DEFAULT_MEMORY, MEMORY_ENV
from .errors import InputError

__all__ = ["MeshEstimate", "estimate_mesh", "check_mesh", "precheck_mesh", "check_elements",
           "check_far", "MESH_FAR_RATIO",
           "memory_needed", "elements_within", "parse_memory", "format_bytes", "memory_budget",
           "physical_memory", "check_count", "starting_polygon", "MAX_LOOPS", "MAX_POINTS",
           "MAX_DXF_ENTITIES", "MAX_SWEEP_ROWS", "BASE_BYTES", "BYTES_PER_ELEMENT", "KAPPA_AREA",
           "KAPPA_THIN", "KAPPA_POINTS"]

#: resident memory of a process with the scientific libraries loaded, before any mesh
BASE_BYTES = 250e6
#: peak memory per element of a full analysis (mesh, both fields, solver, bounds, peak:
#: 3.1-3.5 kB measured) with every output drawn from it (shear, warping and 3D pictures,
#: the report, the mesh file: 2.4-2.7 kB more), and a margin (DEVELOPERS.md)
BYTES_PER_ELEMENT = 7.0e3

#: elements per (element size)^2 of area (4/sqrt(3) for equilateral triangles of side h,
#: times 1.59: Triangle's elements average 1/1.59 of the area limit, measured)
KAPPA_AREA = 3.67
#: elements per unit boundary length per 1/width where the material is thinner than h
KAPPA_THIN = 0.8
#: elements per unit boundary length per 1/spacing where boundary points are closer than h
KAPPA_POINTS = 5.0

#: most loops (outside and holes) a section may have
MAX_LOOPS = 1_000
#: most points (vertices) over all loops of a section
MAX_POINTS = 1_000_000
#: most entities a DXF drawing may hold after its block references are expanded
MAX_DXF_ENTITIES = 100_000
#: most rows (combinations) of a parameter sweep
MAX_SWEEP_ROWS = 10_000

#: boundary samples at most (the sample spacing grows on very long outlines)
_MAX_SAMPLES = 400_000

_UNITS = {"": 1e9, "b": 1.0, "kb": 1e3, "mb": 1e6, "gb": 1e9, "tb": 1e12,
          "kib": 2.0**10, "mib": 2.0**20, "gib": 2.0**30, "tib": 2.0**40,
          "k": 1e3, "m": 1e6, "g": 1e9, "t": 1e12}
_MEMORY_RE = re.compile(r"^\s*([0-9]*\.?[0-9]+(?:[eE][+-]?[0-9]+)?)\s*([A-Za-z]*)\s*$")


# --------------------------------------------------------------------- budget
def parse_memory(value, where: str = "--memory") -> int:
    """A memory budget in bytes from ``"4 GB"``, ``"1500 MB"``, ``"2 GiB"`` or a number.

    Text without a unit is in GB; a Python number is in bytes.  The budget
    must be at least 500 MB (the libraries alone take about half of that).

    Examples
    --------
    >>> parse_memory("4 GB"), parse_memory("512MiB"), parse_memory("8"), parse_memory(2e9)
    (4000000000, 536870912, 8000000000, 2000000000)
    """
    if isinstance(value, bool) or value is None:
        raise InputError(f"must be an amount of memory such as \"4 GB\", got {value!r}",
                         where=where)
    if isinstance(value, int | float):
        nbytes = float(value)
        text = repr(value)
    else:
        text = str(value)
        m = _MEMORY_RE.match(text)
        unit = m.group(2).lower() if m else ""
        if m is None or unit not in _UNITS:
            raise InputError(f"{text[:40]!r} is not an amount of memory", where=where,
                             fix="give e.g. \"4 GB\", \"1500 MB\" or \"2 GiB\" (a bare number "
                                 "is in GB)")
        nbytes = float(m.group(1)) * _UNITS[unit]
    if not math.isfinite(nbytes) or nbytes < 500e6:
        raise InputError(f"{text[:40]} is too little memory for an analysis", where=where,
                         fix="give at least \"500 MB\", e.g. \"4 GB\"")
    return int(min(nbytes, 2.0**62))


def memory_budget(memory=None) -> int:
    """The budget in bytes: ``memory`` if given, else ``$SOAPFILM_MEMORY``, else the default.

    A budget above the machine's memory is refused: it would let an analysis
    run into the operating system's out-of-memory killer instead of this guard.
    """
    where = "--memory"
    if memory is not None:
        budget = parse_memory(memory)
    elif os.environ.get(MEMORY_ENV):
        where = f"environment variable {MEMORY_ENV}"
        budget = parse_memory(os.environ[MEMORY_ENV], where=where)
    else:
        budget = DEFAULT_MEMORY
    ram = physical_memory()
    if ram is not None and budget > ram:
        if memory is None and where == "--memory":  # the default on a small machine
            return int(0.75 * ram)
        raise InputError(f"{format_bytes(budget)} is more than this machine's memory "
                         f"({format_bytes(ram)})", where=where,
                         fix=f"give at most {math.floor(ram / 1e9)} GB")
    return budget


def format_bytes(nbytes: float) -> str:
    """``"3.2 GB"``, ``"850 MB"``, ``"1.1e+04 GB"`` (decimal units, two or three digits)."""
    if nbytes >= 1e13:
        return f"{nbytes / 1e9:.2g} GB"
    if nbytes >= 1e9:
        return f"{nbytes / 1e9:.2g} GB" if nbytes < 1e10 else f"{nbytes / 1e9:.0f} GB"
    return f"{nbytes / 1e6:.0f} MB"


def memory_needed(elements: float) -> float:
    """Estimated peak memory (bytes) of an analysis on this many elements."""
    return BASE_BYTES + BYTES_PER_ELEMENT * float(elements)


def elements_within(memory) -> int:
    """The most elements an analysis can have within the budget (bytes or text)."""
    budget = memory_budget(memory)
    return max(0, int((budget - BASE_BYTES) / BYTES_PER_ELEMENT))


def check_elements(elements: int, memory=None, where: str | None = None, fix: str = "") -> None:
    """Refuse an analysis of a given mesh (a mesh file) over the memory budget."""
    from .readers._names import option_hint

    budget = memory_budget(memory)
    need = memory_needed(elements)
    if need > budget:
        raise InputError(f"the mesh has {elements:,} elements; its analysis would need about "
                         f"{format_bytes(need)} of memory, more than the budget of "
                         f"{format_bytes(budget)}", where=where,
                         fix=", or ".join(x for x in (fix, _raise_hint(need, option_hint)) if x))


#: A mesh is made where the section lies up to this many times its size from the origin;
#: farther out its nodes would keep fewer than about ten digits of the section's shape
#: (``analyse`` solves such sections moved to the origin, :func:`soapfilm.solve.far_shift`)
MESH_FAR_RATIO = 1e6


def check_far(profile) -> None:
    """Refuse to mesh a section lying farther than :data:`MESH_FAR_RATIO` sizes out.

    At 1e13 sizes out (a 10 mm section at x = 1e14 mm) coordinates are rounded
    to 0.016 mm and Triangle, inserting points it cannot place, ran out of
    memory (issue 11).
    """
    import numpy as np

    lo, hi = profile.outer.min(axis=0), profile.outer.max(axis=0)
    centre = 0.5 * (lo + hi)
    far = float(np.hypot(*centre))
    if far > MESH_FAR_RATIO * profile.size:
        u = profile.units
        raise InputError(
            f"the section lies {far:.3g} {u} from the origin, {far / profile.size:.2g} times its "
            f"size: a mesh there would keep too few digits of its shape", where=None,
            fix=f"move it near the origin, by {-centre[0] + 0.0:.6g} {u} in x and "
                f"{-centre[1] + 0.0:.6g} {u} in y: its torsion properties do not depend on where "
                f"it lies, and soapfilm solve moves it itself")


def check_count(what: str, count: int, limit: int, where: str | None, fix: str) -> None:
    """Refuse ``count`` above ``limit`` with one line (the count, the limit, the fix)."""
    if count > limit:
        raise InputError(f"{what}: {count:,} is more than the {limit:,} this tool takes",
                         where=where, fix=fix)


# ------------------------------------------------------------------- estimate
@dataclass(frozen=True)
class MeshEstimate:
    """Estimated size of the quality mesh of a section at one element size.

    Attributes
    ----------
    elements : float
        Estimated number of triangles (sum of the three terms).
    area_term, thin_term, points_term : float
        The terms (module docstring).
    size : float
        The element size asked, in the section's unit.
    narrowest : float
        Smallest width of material across the boundary found below ``size``
        (``inf`` if none), in the section's unit.
    narrowest_at : (float, float) or None
        Where it is (a boundary point, input coordinates).
    thin_length : float
        Boundary length along which the material is thinner than ``size``.
    closest_points : float
        Shortest boundary edge of the starting polygon.
    points : int
        Vertices of the starting polygon.
    """

    elements: float
    area_term: float
    thin_term: float
    points_term: float
    size: float
    narrowest: float = math.inf
    narrowest_at: tuple[float, float] | None = None
    thin_length: float = 0.0
    closest_points: float = math.inf
    points: int = 0

    @property
    def memory(self) -> float:
        """Estimated peak memory (bytes) of an analysis on this mesh."""
        return memory_needed(self.elements)


def starting_polygon(profile, size: float):
    """The mesher's starting loops: curved runs resampled on their curves (as ``mesh_profile``)."""
    from .geometry.edges import resampled_loop

    return [resampled_loop(loop, tags, profile.curves, size)
            for loop, tags in zip(profile.loops, profile.edge_curves, strict=True)]


def estimate_mesh(profile, size: float, loops=None, limit: float | None = None) -> MeshEstimate:
    """Estimate the quality mesh of ``profile`` at element size ``size`` (module docstring).

    ``loops`` are the starting polygon's loops when the caller has them
    (``(xy, tags)`` pairs, :func:`starting_polygon`).  The work is
    ``O(n log n)`` in the polygon's vertices: one search tree of the boundary
    edges and a bounded number of rays per boundary sample.  With ``limit``,
    the rays are not cast when the area and points terms alone exceed it
    (the estimate is then a lower bound, already too many).
    """
    import numpy as np

    if loops is None:
        loops = starting_polygon(profile, size)
    xy = [np.asarray(lp[0], dtype=float) for lp in loops]
    allpts = np.concatenate(xy)
    lo, hi = allpts.min(axis=0), allpts.max(axis=0)
    centre = 0.5 * (lo + hi)
    scale = float(np.max(hi - lo)) or 1.0
    h = float(size) / scale  # everything below on the section scaled to size 1
    a = np.concatenate([(p - centre) / scale for p in xy])
    nloop = np.array([len(p) for p in xy])
    start = np.concatenate([[0], np.cumsum(nloop)[:-1]])
    loop_of = np.repeat(np.arange(len(xy)), nloop)
    pos = np.arange(len(a)) - start[loop_of]
    nxt = start[loop_of] + (pos + 1) % nloop[loop_of]
    b = a[nxt]
    e = b - a
    seg_len = np.hypot(e[:, 0], e[:, 1])
    # area of the section as the mesher sees it (outer minus holes), by the shoelace sum
    cross = a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0]
    loop_area = np.abs(np.bincount(loop_of, weights=cross, minlength=len(xy))) / 2.0
    area = float(loop_area[0] - np.sum(loop_area[1:]))
    area_term = KAPPA_AREA * max(area, 0.0) / (h * h)

    # boundary samples: at most one per element size along every edge, at least one per edge
    perimeter = float(np.sum(seg_len))
    step = max(h, perimeter / _MAX_SAMPLES)
    per = np.clip(np.ceil(seg_len / step), 1, None).astype(np.int64)
    seg = np.repeat(np.arange(len(a)), per)
    k = np.arange(len(seg)) - np.repeat(np.cumsum(per) - per, per)
    u = (k + 0.5) / per[seg]
    ds = seg_len[seg] / per[seg]
    origin = a[seg] + u[:, None] * e[seg]
    with np.errstate(invalid="ignore", divide="ignore"):
        normal = np.column_stack([-e[:, 1], e[:, 0]]) / seg_len[:, None]  # material on the left
    normal = normal[seg]
    short = seg_len[seg] < h
    dense = np.zeros(len(seg))
    dense[short] = KAPPA_POINTS * ds[short] * (1.0 / seg_len[seg][short] - 1.0 / h)
    if limit is not None and area_term + float(np.sum(dense)) > limit:
        width = np.full(len(seg), np.inf)  # too many already: no need to look for thin parts
    else:
        width = _ray_widths(a, b, loop_of, pos, nloop[loop_of], origin, normal, seg, ds, h)
    thin = width < h
    thin_each = np.zeros(len(seg))
    thin_each[thin] = KAPPA_THIN * ds[thin] * (1.0 / width[thin] - 1.0 / h)
    thin_term = float(np.sum(thin_each))
    # a stretch both thin and densely pointed counts once, by the larger term
    points_term = float(np.sum(dense - np.minimum(dense, thin_each)))
    narrowest, at, thin_len = math.inf, None, 0.0
    if np.any(thin):
        i = int(np.argmin(width))
        narrowest = float(width[i]) * scale
        at = tuple(float(v) for v in origin[i] * scale + centre)
        thin_len = float(np.sum(ds[thin])) * scale
    return MeshEstimate(
        elements=area_term + thin_term + points_term, area_term=area_term,
        thin_term=thin_term, points_term=points_term, size=float(size), narrowest=narrowest,
        narrowest_at=at, thin_length=thin_len,
        closest_points=float(np.min(seg_len)) * scale if len(seg_len) else math.inf,
        points=int(len(a)))


def _ray_widths(a, b, loop_of, pos, nloop, origin, normal, seg, ds, h):
    """Width of material along the inward normal at each sample, capped at ``h``.

    Rays grow from a few sample spacings to ``h`` (each pass only for the
    rays that have not hit yet), so a ray meets few edges per pass.
    """
    import numpy as np
    import shapely

    n = len(origin)
    width = np.full(n, np.inf)
    tree = shapely.STRtree(shapely.linestrings(np.stack([a, b], axis=1)))
    done = np.zeros(n, dtype=bool)  # rays that left the material through a neighbour
    near_end = np.zeros(n)  # each pass casts from here ...
    far_end = np.minimum(h, 4.0 * ds)  # ... to here
    todo = np.arange(n)
    while len(todo):
        o, d = origin[todo], normal[todo]
        rays = shapely.linestrings(np.stack([o + d * near_end[todo, None],
                                             o + d * far_end[todo, None]], axis=1))
        ri, sj = tree.query(rays, predicate="intersects")
        r = todo[ri]
        own = seg[r]
        step = (pos[sj] - pos[own]) % nloop[own]
        keep = ~((loop_of[sj] == loop_of[own]) & (step == 0))
        r, sj, own, step = r[keep], sj[keep], own[keep], step[keep]
        if len(r):
            s = _ray_hit(origin[r], normal[r], a[sj], b[sj])
            ok = np.isfinite(s) & (s >= 0)
            r, s, sj = r[ok], s[ok], sj[ok]
            neighbour = (loop_of[sj] == loop_of[seg[r]]) & ((step[ok] == 1)
                                                              | (step[ok] == nloop[seg[r]] - 1))
            # the nearest crossing per ray; a neighbouring edge first: a wedge (no width)
            first = np.full(n, np.inf)
            np.minimum.at(first, r, s)
            at_first = s <= first[r]
            wedge = np.zeros(n, dtype=bool)
            wedge[r[at_first & neighbour]] = True
            width[r[at_first & ~neighbour]] = s[at_first & ~neighbour]
            done[wedge] = True
        todo = todo[~np.isfinite(width[todo]) & ~done[todo] & (far_end[todo] < h)]
        near_end[todo] = far_end[todo]
        far_end[todo] = np.minimum(h, 4.0 * far_end[todo])
    return width


def _ray_hit(o, d, a, b):
    """Distance along unit directions ``d`` from ``o`` to segments ``a``-``b`` (inf: none)."""
    import numpy as np

    e = b - a
    w = a - o
    den = d[:, 0] * e[:, 1] - d[:, 1] * e[:, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        s = (w[:, 0] * e[:, 1] - w[:, 1] * e[:, 0]) / den
        t = (w[:, 0] * d[:, 1] - w[:, 1] * d[:, 0]) / den
    ok = (den != 0) & (t >= -1e-12) & (t <= 1 + 1e-12)
    out = np.where(ok, s, np.inf)
    # a segment along the ray (parallel, on its line): its nearer end
    par = den == 0
    if np.any(par):
        off = w[par, 0] * d[par, 1] - w[par, 1] * d[par, 0]
        along = np.minimum(np.einsum("ij,ij->i", w[par], d[par]),
                           np.einsum("ij,ij->i", (b - o)[par], d[par]))
        out[par] = np.where(np.abs(off) <= 1e-12, np.maximum(along, 0.0), np.inf)
    return out


def curved_length(profile) -> float:
    """Length of the outline's edges that lie on curves (the polygon's chords)."""
    import numpy as np

    total = 0.0
    for xy, tags in zip(profile.loops, profile.edge_curves, strict=True):
        on = np.asarray(tags) >= 0
        if np.any(on):
            d = np.diff(np.vstack([xy, xy[:1]]), axis=0)[on]
            total += float(np.sum(np.hypot(d[:, 0], d[:, 1])))
    return total


def size_for_count(area_coef: float, curve_coef: float, count: float) -> float:
    """Element size h at which ``area_coef / h^2 + curve_coef / h = count``.

    The area term of the estimate falls as 1/h^2, the curves' points as 1/h;
    1/h is the positive root of the quadratic (written without cancellation).
    Infinite when ``count`` is not positive.
    """
    if count <= 0:
        return math.inf
    return (curve_coef + math.sqrt(curve_coef * curve_coef + 4.0 * area_coef * count)) \
        / (2.0 * count)


# ---------------------------------------------------------------------- check
def precheck_mesh(profile, size: float, memory=None, where: str | None = None) -> None:
    """The cheap part of :func:`check_mesh`, before the curves are resampled at ``size``.

    The area term, and the points the curves will get (their length over the
    size: each is a boundary edge of at least one element), are lower bounds
    of the mesh; a size so small that resampling itself would exhaust memory
    is refused here.
    """

    budget = memory_budget(memory)
    h = float(size)
    curved = curved_length(profile)
    area_term = KAPPA_AREA * max(float(profile.area), 0.0) / (h * h)
    est = MeshEstimate(elements=area_term + curved / h, area_term=area_term, thin_term=0.0,
                       points_term=curved / h, size=h,
                       points=sum(len(lp) for lp in profile.loops) + int(curved / h))
    if est.memory > budget:
        _refuse(est, profile, budget, where)


def check_mesh(profile, size: float, memory=None, loops=None, where: str | None = None
               ) -> MeshEstimate:
    """Estimate the mesh at ``size``; refuse it with one line when over the memory budget.

    The message gives the estimate (elements, memory, budget) and what to
    change: a larger element size when the area term alone is too much, else
    the part of the section that is too thin or too densely pointed, and the
    budget (``--memory``).
    """
    budget = memory_budget(memory)
    est = estimate_mesh(profile, size, loops, limit=elements_within(budget))
    if est.memory > budget:
        _refuse(est, profile, budget, where)
    return est


def _refuse(est: MeshEstimate, profile, budget: int, where: str | None):
    """Raise the one-line refusal: the estimate, the budget, and what to change."""
    from .readers._names import option_hint

    u, size = profile.units, est.size
    cap = elements_within(budget)
    need = (f"the mesh would have about {est.elements:.2g} elements and need about "
            f"{format_bytes(est.memory)} of memory, more than the budget of "
            f"{format_bytes(budget)}")
    more = _raise_hint(est.memory, option_hint)
    more = f", or {more}" if more else ""
    features = est.thin_term + est.points_term
    if features < 0.5 * cap:
        # the element size decides: the smallest size that fits beside the features
        h_min = size * math.sqrt(est.area_term / max(cap - features, 1.0)) * 1.01
        h_txt = f"{_up(h_min):g}"  # a bare number is in the section's unit, wherever given
        raise InputError(f"element size {size:.3g} {u}: {need}", where=where,
                         fix=f"use an element size of at least {h_txt} {u}: "
                             f"{option_hint('mesh_size', h_txt)}{more}")
    if est.thin_term >= est.points_term:
        x, y = est.narrowest_at
        raise InputError(
            f"the section is only {est.narrowest:.3g} {u} wide near ({x:.6g}, {y:.6g}) {u}, "
            f"along {est.thin_length:.3g} {u} of its outline: elements there must be as small "
            f"as that, so {need}", where=where,
            fix=f"widen that part or remove it from the drawing{more}")
    if est.closest_points >= size:  # points the curves would get at this size
        # both terms scale with the size (area as 1/h^2, the curves' points as 1/h): the
        # size at which they fit, 1/h the positive root of area h^2 x^2 + points h x = cap
        h_fit = size_for_count(est.area_term * size * size, est.points_term * size, cap)
        h_txt = f"{_up(1.01 * h_fit):g}" if math.isfinite(h_fit) else "H"
        raise InputError(f"element size {size:.3g} {u} would put about {est.points_term:.2g} "
                         f"points on the section's curves: {need}", where=where,
                         fix=f"use an element size of at least {h_txt} {u}: "
                             f"{option_hint('mesh_size', h_txt)}{more}")
    raise InputError(
        f"the outline has {est.points:,} points, as close as {est.closest_points:.3g} {u}: "
        f"elements must be as small as the distance between points, so {need}", where=where,
        fix=f"give the outline with fewer points, curves as arcs{more}")


def physical_memory() -> float | None:
    """The machine's memory in bytes, or None where the system does not say."""
    try:
        return float(os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES"))
    except (ValueError, OSError, AttributeError):
        return None


def _raise_hint(need: float, option_hint) -> str:
    """How to allow ``need`` bytes: the option with a value; "" beyond this machine's memory."""
    ram = physical_memory()
    if ram is not None and need > 0.9 * ram:
        return ""
    gb = math.ceil(need / 1e9 * 1.1)
    return f"raise the budget: {option_hint('memory', f'{gb}GB')}"


def _up(x: float) -> float:
    """``x`` rounded up to two significant digits."""
    if not (x > 0 and math.isfinite(x)):
        return x
    p = 10.0 ** (math.floor(math.log10(x)) - 1)
    return math.ceil(x / p - 1e-9) * p
