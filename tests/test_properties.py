"""Properties of every valid section, checked on random ones (hypothesis).

The sections are star-shaped polygons (random radii at sorted angles), with up to
three star-shaped holes placed inside, often near-touching the outside or each other
(gap down to 1e-3 of the section's size before stretching), stretched to aspect
ratios down to 1:1000 and scaled to sizes from 1e-4 to 1e6.  Each is solved on a
coarse mesh with linear or quadratic elements: the properties below hold for ANY
mesh, so coarse meshes test them as well as fine ones.

What must hold, with the outside source of each:

- ``J_lo <= J`` and ``J <= J_hi``: the stress function's complementary energy is
  below J and the warping function's potential energy above it for any admissible
  field (Timoshenko & Goodier, Theory of Elasticity, 3rd ed., ch. 10); so
  ``J_lo <= J_hi`` exactly as reported (each bound is widened by a bound on its own
  rounding), and two brackets of the same section, from any two meshes, overlap - for a
  moved copy up to the rounding of its vertices (:func:`rounding`).
- ``J <= Ip``: the warping energy with ``w = 0`` is the polar moment (same source);
  checked on ``J_hi``, which the discrete minimisation keeps below ``Ip``.
- Saint-Venant's inequality ``J <= A^2 / (2 pi)`` for a simply connected section
  (G. Polya and G. Szego, Isoperimetric Inequalities in Mathematical Physics,
  Princeton 1951).  With holes it does NOT hold for the net area (a thin tube of radii
  R > r has ``J / (A^2 / 2 pi) = (R^2 + r^2) / (R^2 - r^2) > 1``, closed form of
  Timoshenko & Goodier sec. 104), so there ``A`` is the area the outer loop encloses:
  filling the holes can only raise J (monotonicity, DEVELOPERS.md "Bounds for the
  drawn outline", fact 2).  Checked on ``J_lo``.
- ``J >= pi r^4 / 2`` for any disc of radius r inside the material: the same
  monotonicity argument (the disc's stress function, extended by zero, is admissible
  for the section) and the circle's closed form (Timoshenko & Goodier sec. 104).
  Checked on ``J_hi`` with the disc from ``shapely.maximum_inscribed_circle``.
- The peak shear lies on the boundary (``|grad phi|^2`` is subharmonic: maximum
  principle, Timoshenko & Goodier ch. 10 - from memory).
- J, tau/T, A and Ip are properties of the shape: unchanged by translation, rotation,
  mirroring and the order and direction of the loops (Saint-Venant theory; same
  source).  Different meshes of the same shape give different numbers, so the check
  is that the two certified brackets overlap and the two peaks differ by no more than
  the sum of their estimated errors (``estimated_relative_error["max_shear"]``).
  The benchmark compares the peaks too: before the peak fixes 2-3 examples in 100 failed
  on coarse meshes and 4-6 in 100 with adaptive solves at tol 1e-2 (the corner zone
  followed the bounding box; the estimate missed the rise to a zone's edge and meshes
  that do not resolve the peak beside a corner; a lone 188.7-degree vertex was not
  zoned); now none (``bench_properties.py --examples 800 --minutes 4 --seed 7``: 362
  examples, 0 peak failures in 93 coarse moved pairs, 46 scaled copies, 49 adaptive and
  38 adaptive pairs without sharp corners; worst ratio 0.54).  CI checks the brackets,
  A and Ip on random sections, and the peaks on the smallest failing examples found,
  kept as tests at the end.
- Dimensional analysis (common practice, no source): ``J ~ s^4``, ``tau/T ~ s^-3``,
  ``A ~ s^2``, ``Ip ~ s^4``.  Scaled by a power of two with the mesh scaled too, every
  floating-point operation scales exactly (IEEE 754), so the laws hold to the last
  bit; by any other factor, on a fresh mesh of the scaled size, within the brackets.
- Determinism: the same profile solved twice gives the same ``to_dict()``.

``CI`` below runs a few hundred examples in all (about 40 s on 2 cores);
``tests/bench/bench_properties.py`` runs up to 10 000 with the same strategies and
checks, peaks included, and prints the worst margins and every failure.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np
import pytest
import shapely
from hypothesis import HealthCheck, assume, given, note, settings
from hypothesis import strategies as st
from shapely.geometry import LinearRing, Point, Polygon

from soapfilm import Profile, analyse, result_from_mesh
from soapfilm.corners import reentrant_corners, traced_runs
from soapfilm.fem.p2 import solve_torsion_p2
from soapfilm.mesh import default_mesh_size, mesh_profile

# ---------------------------------------------------------------------------- settings

_COMMON = dict(
    deadline=None,
    database=None,
    print_blob=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much,
                           HealthCheck.data_too_large],
)
#: CI: deterministic (the same examples every run), a few hundred in all.
CI = settings(derandomize=True, **_COMMON)
#: element cap in CI: quadratic elements stay below the direct solver's limit
#: (soapfilm.fem.linsolve.DIRECT_LIMIT unknowns), where a solve is exact to rounding.
CI_MAX_ELEMENTS = 6000
#: the benchmark's cap (about 18 000 quadratic unknowns)
BENCH_MAX_ELEMENTS = 9000

# ------------------------------------------------------------------ section strategy


def star_loop(weights, radii, phase=0.0, centre=(0.0, 0.0)) -> np.ndarray:
    """Vertices at radii ``radii`` and angles ``phase + 2 pi cumsum(w) / sum(w)``.

    With every weight under half the sum the angular gaps are under pi, so the
    polygon is simple and star-shaped about ``centre``.
    """
    w = np.asarray(weights, dtype=float)
    th = phase + 2.0 * math.pi * np.cumsum(w) / w.sum()
    r = np.asarray(radii, dtype=float)
    return np.column_stack([centre[0] + r * np.cos(th), centre[1] + r * np.sin(th)])


def fitted_hole(outer, holes, shape, centre, gap):
    """Largest copy of ``shape`` scaled about ``centre`` at least ``gap`` from every loop.

    ``shape`` is star-shaped about ``centre``, so its scaled copies are nested and
    the distance to the other loops falls as the factor grows: bisection.  None when
    ``centre`` itself is closer than ``gap`` to a loop.
    """
    opoly, oring = Polygon(outer), LinearRing(outer)
    others = [Polygon(h) for h in holes]
    c = np.asarray(centre, dtype=float)

    def clear(k):
        hp = Polygon(c + k * (shape - c))
        if not opoly.contains(hp) or LinearRing(hp.exterior.coords).distance(oring) < gap:
            return False
        return all(hp.distance(o) >= gap for o in others)

    lo, hi = 1e-9, 4.0
    if not clear(lo):
        return None
    for _ in range(48):
        mid = 0.5 * (lo + hi)
        if clear(mid):
            lo = mid
        else:
            hi = mid
    return lo


@dataclass(frozen=True)
class Case:
    """One random section: its loops (outer first) and how it was made."""

    loops: tuple
    aspect: float  # y scaled by this (1e-3 ... 1)
    size: float  # largest extent of the bounding box
    #: per hole, its smallest distance to the other loops over the size, before stretching
    gaps: tuple = field(default=())

    def profile(self) -> Profile:
        return Profile.from_loops([np.array(lp) for lp in self.loops], units="mm")

    def __repr__(self) -> str:  # every digit: the failing section can be rebuilt from the report
        loops = ", ".join("[" + ", ".join(f"({x!r}, {y!r})" for x, y in lp) + "]"
                          for lp in self.loops)
        return (f"Case(aspect={self.aspect!r}, size={self.size!r}, gaps={self.gaps!r}, "
                f"loops=[{loops}])")


@st.composite
def sections(draw, max_holes: int = 3, smooth: bool = False) -> Case:
    """A valid section: star-shaped outside, 0..max_holes star-shaped holes, stretched, scaled.

    ``smooth``: no sharp re-entrant corner (where the stress is unbounded): the outside
    is the convex hull of the star, the holes are rounded stars of 24-40 points, each
    turning by less than 30 degrees (a traced curve, soapfilm.corners.traced_runs), and
    no stretching.
    """
    n = draw(st.integers(3, 14), label="outer vertices")
    weights = draw(st.lists(st.floats(1.0, 1.9), min_size=n, max_size=n))
    radii = draw(st.lists(st.floats(0.15, 1.0), min_size=n, max_size=n))
    phase = draw(st.floats(0.0, 2 * math.pi))
    outer = star_loop(weights, radii, phase)
    if smooth:
        outer = np.asarray(shapely.MultiPoint(outer).convex_hull.exterior.coords)[:-1]
    unit_size = float(np.max(np.ptp(outer, axis=0)))
    r_in = Point(0.0, 0.0).distance(LinearRing(outer))  # the disc about 0 is inside (star-shaped)
    holes, gaps = [], []
    for _ in range(draw(st.integers(0, max_holes), label="holes")):
        rho, psi = draw(st.floats(0.0, 0.9)), draw(st.floats(0.0, 2 * math.pi))
        centre = (rho * r_in * math.cos(psi), rho * r_in * math.sin(psi))
        if smooth:
            m = draw(st.integers(24, 40))
            eps, lobes = draw(st.floats(0.0, 0.2)), draw(st.integers(2, 3))
            th = 2 * math.pi * np.arange(m) / m
            hole_radii = 1.0 + eps * np.cos(lobes * th + draw(st.floats(0.0, 2 * math.pi)))
            shape = star_loop(np.ones(m), hole_radii, 0.0, centre)
        else:
            m = draw(st.integers(3, 10))
            shape = star_loop(draw(st.lists(st.floats(1.0, 1.9), min_size=m, max_size=m)),
                              draw(st.lists(st.floats(0.3, 1.0), min_size=m, max_size=m)),
                              draw(st.floats(0.0, 2 * math.pi)), centre)
        gap = 10.0 ** draw(st.floats(-3.0, -1.0), label="log10 gap/size") * unit_size
        fill = draw(st.one_of(st.just(1.0), st.floats(0.3, 1.0)), label="fill (1: near-touching)")
        k = fitted_hole(outer, holes, shape, centre, gap)
        if k is None or k * fill * 0.3 < 1e-3 * unit_size:
            continue  # no room here: the section keeps fewer holes
        hole = np.asarray(centre) + k * fill * (shape - np.asarray(centre))
        hp = Polygon(hole)
        dist = min([LinearRing(hole).distance(LinearRing(outer))]
                   + [hp.distance(Polygon(h)) for h in holes])
        holes.append(hole)
        gaps.append(dist / unit_size)
    aspect = 1.0 if smooth else 10.0 ** draw(st.floats(-3.0, 0.0), label="log10 aspect")
    size = 10.0 ** draw(st.floats(-4.0, 6.0), label="log10 size")
    stretch = np.array([1.0, aspect])
    stretch *= size / float(np.max(np.ptp(outer * stretch, axis=0)))
    loops = tuple(tuple((float(x), float(y)) for x, y in lp * stretch) for lp in [outer, *holes])
    return Case(loops, aspect, size, tuple(gaps))


def mesh_size_for(profile: Profile, coarse: float, max_elements: int) -> float | None:
    """``coarse`` times the default element size, made finer until the mesh has a node
    inside the section (a coarse size on a thin section can leave every node on the
    boundary, which soapfilm refuses with an InputError) and coarser until it has at
    most ``max_elements`` elements (Triangle refines near sharp tips and narrow gaps
    whatever the size asked); None if eight tries do not get there."""
    h = coarse * default_mesh_size(profile)
    for _ in range(8):
        m = mesh_profile(profile, h)
        if np.setdiff1d(np.arange(m.nnodes), m.segments.ravel()).size == 0:
            h *= 0.5
        elif m.nelements > max_elements:
            h *= 2.0
        else:
            return h
    return None


# -------------------------------------------------------------------------- checks


@dataclass(frozen=True)
class Margin:
    """One checked inequality: ``value <= limit`` must hold.

    ``value`` is a relative violation (negative: the property holds with room to
    spare), or for the peaks the ratio of the difference to the sum of the estimates.
    """

    name: str
    value: float
    limit: float

    @property
    def ok(self) -> bool:
        return bool(self.value <= self.limit)  # NaN fails


def failed(margins) -> list[Margin]:
    return [m for m in margins if not m.ok]


def assert_margins(margins) -> None:
    bad = failed(margins)
    assert not bad, "; ".join(f"{m.name}: {m.value:.3e} > {m.limit:.1e}" for m in bad)


#: rounding allowance of the inequalities that are not tight (relative)
ROUNDING = 1e-10
EPS = np.finfo(float).eps


def rounding(r) -> float:
    """Allowance of two brackets' overlap (relative to J) when the section was moved.

    Each reported bracket holds for its own nodes (every functional's rounding is
    bounded and the bracket widened by it, DEVELOPERS.md "Rounding"), so J_lo <= J_hi
    needs no allowance.  A moved, turned or mirrored copy is another polygon: its
    vertices are rounded to some eps * size, which moves J by up to about that times
    J / thickness; eps * Ip / J is larger than that for every shape drawn here
    (1e-16 on a round bar, 2e-10 on a 1:1000 section).
    """
    return 1e-12 + 32.0 * EPS * r.polar_moment / r.torsion_constant


def bound_margins(profile: Profile, r) -> list[Margin]:
    """Inequalities of one result: order of the bounds, Ip, Saint-Venant, inscribed disc,
    area (shapely's as the reference), peak on the boundary."""
    lo, hi = r.torsion_constant_bounds
    outer_area = Polygon(profile.outer).area
    sv = outer_area**2 / (2.0 * math.pi)
    disc = shapely.maximum_inscribed_circle(profile.polygon, 1e-3 * profile.size)
    r_disc = disc.length  # centre to the nearest boundary point
    j_disc = math.pi * r_disc**4 / 2.0
    peak = Point(*r.peak_location)
    boundary = profile.polygon.boundary
    return [
        Margin("J_lo > 0", -lo / hi, 0.0),
        Margin("J_lo <= J_hi", (lo - hi) / hi, 0.0),
        Margin("J_hi <= Ip", (hi - r.polar_moment) / r.polar_moment, ROUNDING),
        Margin("Saint-Venant J_lo <= A_outer^2/(2 pi)", (lo - sv) / sv, ROUNDING),
        Margin("inscribed disc pi r^4/2 <= J_hi", (j_disc - hi) / hi, ROUNDING),
        Margin("area = shapely area", abs(r.area / profile.polygon.area - 1.0), 1e-9),
        Margin("peak on the boundary", boundary.distance(peak) / profile.size, 1e-9),
    ]


def overlap(a, b) -> float:
    """Relative gap between two brackets (negative: they overlap)."""
    (alo, ahi), (blo, bhi) = a, b
    return (max(alo, blo) - min(ahi, bhi)) / min(ahi, bhi)


def peak_ratio(ra, rb, scale_b: float = 1.0) -> float:
    """|tau_a - tau_b| over the sum of their estimated errors (<= 1 must hold)."""
    ta, tb = ra.max_shear_per_torque, rb.max_shear_per_torque * scale_b
    ea = ra.estimated_relative_error["max_shear"] * ta
    eb = rb.estimated_relative_error["max_shear"] * tb
    return abs(ta - tb) / (ea + eb) if ea + eb > 0 else (0.0 if ta == tb else math.inf)


def same_shape_margins(what: str, ra, rb, scale: float = 1.0, peaks: bool = True) -> list[Margin]:
    """``rb`` solves the section of ``ra`` moved, or scaled by ``scale``, on another mesh."""
    s2, s4 = scale**2, scale**4
    out = [
        Margin(f"{what}: J brackets overlap",
               overlap(ra.torsion_constant_bounds, [v / s4 for v in rb.torsion_constant_bounds]),
               max(rounding(ra), rounding(rb))),
        Margin(f"{what}: area", abs(rb.area / (s2 * ra.area) - 1.0), 1e-9),
        Margin(f"{what}: Ip", abs(rb.polar_moment / (s4 * ra.polar_moment) - 1.0), 1e-9),
    ]
    if peaks:
        out.append(Margin(f"{what}: peaks within their estimates", peak_ratio(ra, rb, scale**3), 1.0))
    return out


@dataclass(frozen=True)
class Outcome:
    """The margins one example checked, and the size of its (first) mesh."""

    margins: list
    elements: int


def check_bounds(case: Case, order: int, coarse: float, max_elements: int) -> Outcome | None:
    """One coarse solve: the inequalities of :func:`bound_margins`."""
    prof = case.profile()
    h = mesh_size_for(prof, coarse, max_elements)
    if h is None:
        return None
    r = analyse(prof, mesh_size=h, order=order)
    return Outcome(bound_margins(prof, r), r.mesh.nelements)


def moved_profile(prof: Profile, mirror: bool, degrees: float, shift, loop_order) -> Profile:
    """The same shape mirrored (x -> -x), turned, shifted (in sizes), loops re-ordered,
    re-started and reversed."""
    p = prof
    if mirror:
        p = p.transformed([[-1.0, 0.0], [0.0, 1.0]])
    if degrees:
        p = p.rotated(degrees)
    if shift[0] or shift[1]:
        p = p.translated(shift[0] * prof.size, shift[1] * prof.size)
    perm, rolls, flips = loop_order
    loops = list(p.loops)
    loops = [loops[0], *(loops[1 + i] for i in perm)]
    loops = [np.roll(lp, rolls[i] % len(lp), axis=0) for i, lp in enumerate(loops)]
    loops = [lp[::-1] if flips[i] else lp for i, lp in enumerate(loops)]
    return Profile.from_loops(loops, units=prof.units)


def check_motion(case: Case, order: int, coarse: float, max_elements: int, motion, loop_order,
                 peaks: bool = False) -> Outcome | None:
    """Coarse solves of the section and of its moved copy (same mesh size, other mesh).

    ``peaks``: also compare the single-solve peaks within their estimates (the
    benchmark does; CI does not, see :func:`test_single_solve_peak_estimate_covers_another_mesh`).
    """
    prof = case.profile()
    h = mesh_size_for(prof, coarse, max_elements)
    if h is None:
        return None
    moved = moved_profile(prof, *motion, loop_order)
    ra = analyse(prof, mesh_size=h, order=order)
    rb = analyse(moved, mesh_size=h, order=order)
    return Outcome(same_shape_margins("moved", ra, rb, peaks=peaks) + bound_margins(moved, rb),
                   ra.mesh.nelements)


def check_scaling(case: Case, order: int, coarse: float, max_elements: int, power: int,
                  factor: float, peaks: bool = False) -> Outcome | None:
    """Scaled by ``2**power`` on the same mesh scaled (exact laws) and by ``factor`` on a
    fresh mesh of the scaled size (within the brackets).

    Every floating-point operation of the solver scales exactly by a power of two, so
    the first is exact to the last bit; Triangle does not always mesh a 2^k copy the
    same way (about 1 section in 600 in the benchmark), so the fresh mesh is not used
    for it (``Triangle's 2^k mesh differs`` counts how often, for the record).
    """
    prof = case.profile()
    h = mesh_size_for(prof, coarse, max_elements)
    if h is None:
        return None
    ra = analyse(prof, mesh_size=h, order=order)
    s = 2.0**power
    big = prof.scaled(s)
    mesh = dataclasses.replace(ra.mesh, p=ra.mesh.p * s, hole_areas=ra.mesh.hole_areas * s**2)
    rb = result_from_mesh(big, mesh, order=order)
    exact = [
        ("J_lo", ra.torsion_constant_bounds[0] * s**4, rb.torsion_constant_bounds[0]),
        ("J_hi", ra.torsion_constant_bounds[1] * s**4, rb.torsion_constant_bounds[1]),
        ("tau/T", ra.max_shear_per_torque / s**3, rb.max_shear_per_torque),
        ("A", ra.area * s**2, rb.area),
        ("Ip", ra.polar_moment * s**4, rb.polar_moment),
    ]
    margins = [Margin(f"scaled by 2^k: {name}", abs(b / a - 1.0), 1e-12) for name, a, b in exact]
    remeshed = mesh_profile(big, h * s)
    same = remeshed.t.shape == ra.mesh.t.shape and np.array_equal(remeshed.p, mesh.p)
    margins.append(Margin("Triangle's 2^k mesh differs", 0.0 if same else 1.0, math.inf))
    rc = analyse(prof.scaled(factor), mesh_size=h * factor, order=order)
    return Outcome(margins + same_shape_margins("scaled", ra, rc, factor, peaks=peaks),
                   ra.mesh.nelements)


def check_determinism(case: Case, order: int, coarse: float, max_elements: int) -> Outcome | None:
    """The same section solved twice (a fresh Profile the second time): the same JSON."""
    prof = case.profile()
    h = mesh_size_for(prof, coarse, max_elements)
    if h is None:
        return None
    first = analyse(prof, mesh_size=h, order=order)
    second = analyse(case.profile(), mesh_size=h, order=order).to_dict()
    a = first.to_dict()
    differ = sorted(k for k in a if a[k] != second.get(k))
    name = "same to_dict twice" + (f" (differ: {', '.join(differ)})" if differ else "")
    return Outcome([Margin(name, float(len(differ)), 0.0)], first.mesh.nelements)


def check_adaptive_peak(case: Case, order: int, tol: float, max_elements: int, motion,
                        loop_order) -> Outcome | None:
    """Adaptive solves (``tol``) of the section and its moved copy: brackets and peaks."""
    prof = case.profile()
    if mesh_size_for(prof, 1.0, max_elements) is None:
        return None  # the default start alone is above the cap
    moved = moved_profile(prof, *motion, loop_order)
    ra = analyse(prof, tol=tol, order=order, max_elements=max_elements)
    rb = analyse(moved, tol=tol, order=order, max_elements=max_elements)
    return Outcome(same_shape_margins("adaptive, moved", ra, rb, peaks=True), ra.mesh.nelements)


# ------------------------------------------------------------------ shared strategies

orders = st.sampled_from([1, 2])
coarseness = st.sampled_from([3.0, 4.0, 6.0])
#: what moves the section: mirror, angle, shift (in sizes)
motions = st.tuples(
    st.booleans(),
    st.one_of(st.just(0.0), st.floats(-180.0, 180.0)),
    st.tuples(st.floats(-100.0, 100.0), st.floats(-100.0, 100.0)),
)
powers = st.integers(-10, 10)
factors = st.floats(-3.0, 3.0).map(lambda e: 10.0**e)


@st.composite
def loop_orders(draw, case: Case):
    """Holes in any order, every loop started at any vertex, in either direction."""
    nh = len(case.loops) - 1
    perm = draw(st.permutations(range(nh)))
    rolls = draw(st.lists(st.integers(0, 20), min_size=nh + 1, max_size=nh + 1))
    flips = draw(st.lists(st.booleans(), min_size=nh + 1, max_size=nh + 1))
    return perm, rolls, flips


def run(outcome: Outcome | None) -> None:
    assume(outcome is not None)  # the mesh would be above this run's element cap
    for m in outcome.margins:
        note(f"{m.name}: {m.value:.3e} (limit {m.limit:g})")
    assert_margins(outcome.margins)


# ---------------------------------------------------------------------------- tests


@settings(CI, max_examples=80)
@given(sections(), orders, coarseness)
def test_bounds_and_inequalities(case, order, coarse):
    """J_lo <= J_hi <= Ip, Saint-Venant, inscribed disc, area, peak on the boundary."""
    run(check_bounds(case, order, coarse, CI_MAX_ELEMENTS))


@settings(CI, max_examples=60)
@given(sections(), orders, coarseness, motions, st.data())
def test_invariance_under_motion_and_loop_order(case, order, coarse, motion, data):
    """Brackets of the moved copy overlap the section's; A and Ip agree; its bounds hold."""
    run(check_motion(case, order, coarse, CI_MAX_ELEMENTS, motion,
                     data.draw(loop_orders(case), label="loop order")))


@settings(CI, max_examples=40)
@given(sections(), orders, coarseness, powers, factors)
def test_scaling_laws(case, order, coarse, power, factor):
    """J ~ s^4, tau/T ~ s^-3, A ~ s^2, Ip ~ s^4: exact for s = 2^k, within brackets otherwise."""
    run(check_scaling(case, order, coarse, CI_MAX_ELEMENTS, power, factor))


@settings(CI, max_examples=25)
@given(sections(), orders, coarseness)
def test_determinism(case, order, coarse):
    run(check_determinism(case, order, coarse, CI_MAX_ELEMENTS))


def test_generator_makes_what_it_says():
    """The sections are valid, have the size asked and cover the ranges the issue names:
    sizes 1e-4 to 1e6, aspect to 1:1000, holes near-touching at 1e-3 of the size."""
    seen = []

    @settings(CI, max_examples=150)
    @given(sections())
    def one(case):
        p = case.profile()  # valid: Profile.from_loops accepts it
        assert p.size == pytest.approx(case.size, rel=1e-9)
        assert len(p.holes) == len(case.loops) - 1
        assert all(g >= 1e-3 * (1 - 1e-6) for g in case.gaps)  # bisection keeps the gap
        seen.append(case)

    one()
    sizes = [c.size for c in seen]
    assert min(sizes) < 1e-3 and max(sizes) > 1e5
    assert min(c.aspect for c in seen) < 3e-3
    assert sum(bool(c.gaps) for c in seen) > 30
    assert min(g for c in seen for g in c.gaps) < 5e-3


def test_saint_venant_needs_the_filled_outline_with_holes():
    """Why the check above uses the outer loop's area: a tube breaks J <= A_net^2 / (2 pi).

    Closed form of the tube (Timoshenko & Goodier, 3rd ed., sec. 104):
    ``J = pi (R^4 - r^4) / 2``; ``A = pi (R^2 - r^2)``.  For R = 1, r = 0.9 the
    ratio ``J / (A^2 / 2 pi) = (R^2 + r^2) / (R^2 - r^2) = 9.53``; the computed lower
    bound shows it too, and stays below the filled disc's ``(pi R^2)^2 / (2 pi)``.
    """
    th = np.linspace(0.0, 2.0 * math.pi, 96, endpoint=False)
    ring = np.column_stack([np.cos(th), np.sin(th)])
    r = analyse(Profile.from_loops([ring, 0.9 * ring]), mesh_size=0.03, order=2)
    lo, hi = r.torsion_constant_bounds
    assert lo > 9.0 * r.area**2 / (2 * math.pi)  # closed form 9.53 for the circles; polygon: close
    assert hi <= Polygon(ring).area ** 2 / (2 * math.pi)


# ------------------------------------------------- peaks: where the estimates fall short
#
# The peaks of two meshes of the same shape must agree within the sum of their
# estimated errors.  The benchmark (tests/bench/bench_properties.py) measures how
# often they do not; these are the smallest sections found by it and by hypothesis's
# shrinking, one per cause.  They failed as strict xfails until the corner zone
# became rotation-invariant (Profile.diameter) and the estimate took in the rise to a
# zone's edge and meshes that do not resolve the peak beside a corner (DEVELOPERS.md,
# "Peak error estimate"); each also checks the coarse result against a finer solve of
# the same section, whose estimate the coarse one must cover with its own.  That
# reference is solved at tol 1e-3 where the failures it guards against were at the
# 1e-2 level (each docstring gives the figures): a reference within 1e-3 of the
# tol-1e-4 value, its estimate under 1e-3, moves the checked ratio by at most 1e-3
# over the coarse estimate, far below the factors 1.5-27 by which the wrong
# estimates fell short; it costs 1.2-3 s against 3.7-5.5 s at tol 1e-4.


def _peaks_agree(ra, rb) -> None:
    ratio = peak_ratio(ra, rb)
    assert ratio <= 1.0, (
        f"tau/T {ra.max_shear_per_torque:.6g} and {rb.max_shear_per_torque:.6g} differ by "
        f"{ratio:.2f} times the sum of their estimates "
        f"({ra.estimated_relative_error['max_shear']:.2e}, "
        f"{rb.estimated_relative_error['max_shear']:.2e})")


def test_peak_does_not_depend_on_orientation():
    """An L section 60 x 60 x 10 (invented) and the same turned by 45 degrees.

    With the zone 2.5 % of the bounding box: tau/T 3.423e-4 (est 0.65 %) and 3.238e-4
    (est 0.52 %), 5.4 % apart, at tol 1e-2.  With 2.5 % of the diameter (the largest
    distance between two outline points, the same turned): 3.2416e-4 (est 0.69 %) and
    3.2450e-4 (est 0.91 %); at tol 1e-4 both 3.2465e-4.  Reference at tol 1e-3:
    3.24553e-4 (est 0.098 %, 3e-4 from the tol-1e-4 value); against it the old 5.4 %
    gap with estimates of 0.5-0.7 % gives a ratio of about 7.
    """
    ell = np.array([[0, 0], [60, 0], [60, 10], [10, 10], [10, 60], [0, 60]], dtype=float)
    prof = Profile.from_loops([ell])
    turned = prof.rotated(45.0)
    # the diameter of an L 60 x 60 is its diagonal, 60 sqrt 2, however it is turned
    assert prof.diameter == pytest.approx(60.0 * math.sqrt(2.0), rel=1e-12)
    assert turned.diameter == pytest.approx(60.0 * math.sqrt(2.0), rel=1e-12)
    ra, rb = analyse(prof, tol=1e-2), analyse(turned, tol=1e-2)
    _peaks_agree(ra, rb)
    _peaks_agree(ra, analyse(prof, tol=1e-3))


def test_adaptive_peak_beside_a_weak_corner():
    """Hexagon with one 196-degree corner, hypothesis's shrunk example, and the same
    moved up by its size.  Before: tau/T 13.4079 (est 0.63 %) and 13.2776 (est 0.13 %) at
    tol 1e-2, 13.5197 at tol 1e-4 - the peak is read on the edge of the corner's zone,
    where the shear rises toward the corner, and the node outside missed that rise.
    After (zone from the diameter, rise to the zone's edge in the estimate): 13.3395
    (est 0.72 %) and 13.3403 (est 0.74 %); tol 1e-4: 13.3879.  Reference at tol 1e-3:
    13.3849 (est 0.048 %); against it the old 13.2776 (est 0.13 %) gives a ratio of 4.5."""
    hexagon = [(0.1443375672974065, 0.25), (-0.2886751345948128, 0.5000000000000001),
               (-0.5773502691896258, 7.07050159149938e-17), (-0.2886751345948132, -0.4999999999999999),
               (0.288675134594813, -0.5), (0.14433756729740646, -3.53525079574969e-17)]
    prof = Profile.from_loops([hexagon])
    ra = analyse(prof, tol=1e-2)
    _peaks_agree(ra, analyse(prof.translated(0.0, 1.0), tol=1e-2))
    _peaks_agree(ra, analyse(prof, tol=1e-3))


def test_adaptive_peak_on_a_traced_hole():
    """Convex 10-gon with a rounded 30-point hole (the smooth variant of the sections),
    and the same shifted by (100, 84) sizes.  Before: tau/T 47 701.6 (est 0.78 %) and
    47 112.9 (est 0.067 %) at tol 1e-2; tol 1e-4: 47 088.2 (est 6e-5) - read at a
    quarter chord from a traced point with elements a quarter chord long.  After (such
    a mesh has no estimate until refined there): 47 084.0 (est 0.53 %) and 47 104.3
    (est 0.18 %).  Reference at tol 1e-3: 47 088.5 (est 0.074 %; tol 1e-4 now 47 104.3);
    against it the old 47 701.6 (est 0.78 %) gives a ratio of 1.5."""
    outer = [(-0.003116010182780474, -0.031014496826565124), (-0.01787766912913189, -0.025534241311883425),
             (-0.02967279638913625, -0.009546396561691348), (-0.029105822163858246, 0.011156148485479557),
             (-0.014101456646596884, 0.027798515307626743), (0.0017458548321309926, 0.03112170502670659),
             (0.02376505474023726, 0.020170044770841146), (0.03117062016155599, 3.117063055176964e-05),
             (0.027723813564746184, -0.01424776102731251), (0.010768205771236838, -0.029251568801220068)]
    hole = np.array([
        0.009338372145069464, -0.012893360306368506, 0.008648149483889749, -0.01077721739983278,
        0.007529563049141218, -0.008853998396495403, 0.006034295446324346, -0.00720900161438308,
        0.004230689707059028, -0.005913485196438538, 0.0021996192753798234, -0.005021795760141112,
        3.0171482247196152e-05, -0.004569861652886615, -0.0021843681536847003, -0.004574784941615735,
        -0.004350008634514214, -0.0050351060360342694, -0.006375093741619872, -0.005931342805456363,
        -0.008173164756952794, -0.007226599068999439, -0.009665957155979761, -0.00886730867238856,
        -0.010786698987579375, -0.010784414355124235, -0.011483613445066007, -0.012895373818529376,
        -0.011723249360194128, -0.015107291894539906, -0.011493086275003835, -0.017321223482711316,
        -0.010802863613824121, -0.019437366389247045, -0.009684277179075591, -0.02136058539258442,
        -0.00818900957625872, -0.023005582174696743, -0.006385403836993404, -0.024301098592641283,
        -0.004354333405314196, -0.02519278802893871, -0.0021848856121815764, -0.025644722136193208,
        2.9654023750324784e-05, -0.02563979884746409, 0.0021952945045798406, -0.025179477753045555,
        0.004220379611685503, -0.024283240983623458, 0.0060184506270184275, -0.02298798472008038,
        0.007511243026045389, -0.021347275116691267, 0.008631984857645002, -0.01943016943395559,
        0.009328899315131634, -0.017319209970550444, 0.009568535230259755, -0.015107291894539923,
    ]).reshape(-1, 2)
    prof = Profile.from_loops([outer, hole])
    moved = prof.translated(100.0 * prof.size, 84.0886489087334 * prof.size)
    ra = analyse(prof, tol=1e-2)
    _peaks_agree(ra, analyse(moved, tol=1e-2))
    _peaks_agree(ra, analyse(prof, tol=1e-3))


def test_single_solve_peak_estimate_covers_another_mesh():
    """Quadrilateral with a 7-point hole 0.01 of the size from it (hypothesis's shrunk
    example), quadratic elements, mesh size 3 x default, and the same shifted by its
    size.  Before: tau/T 724.512 (est 0.128 %) and 730.109 (est 0.103 %); tol 1e-4 gives
    768.03.  The peak is read on the outer face of the ligament, at the edge of the zone
    round a traced point of the hole across it, from elements as long as that distance:
    the mesh does not resolve it, so the estimate is infinite and a warning says so.
    Reference at tol 1e-3: 767.83 (est 0.086 %); against it the old 724.512 (est
    0.128 %) gives a ratio of 27."""
    outer = [(0.42493549154185417, 0.19253750811260978), (-0.5750645084581457, 0.015413597480223482),
             (0.016297513966328957, -0.038673168851308844), (0.2907800268795524, -1.2665006579535536e-17)]
    hole = [(0.14980437187638485, 0.02958605436399727), (-0.02340174045874785, 0.03959386899269528),
            (-0.18112201344241402, 0.023400884770353503), (-0.21898682490057167, -0.008277372561254454),
            (-0.055969780209113654, -0.01723908570614712), (0.11235327890728868, -0.02218954077299795),
            (0.1958942307318976, -3.947233946076142e-17)]
    prof = Profile.from_loops([outer, hole])
    h = 3.0 * default_mesh_size(prof)
    moved = prof.translated(prof.size, 0.0)
    ra, rb = analyse(prof, mesh_size=h, order=2), analyse(moved, mesh_size=h, order=2)
    _peaks_agree(ra, rb)
    _peaks_agree(ra, analyse(prof, tol=1e-3))
    for r in (ra, rb):
        if not math.isfinite(r.estimated_relative_error["max_shear"]):
            assert any("cannot be estimated on this mesh" in w for w in r.warnings)


@pytest.mark.xfail(strict=True, raises=AssertionError, reason=(
    "one coarse quadratic mesh: twice the two fields' disagreement plus the half-bracket "
    "(2.2e-4) is five times short of the error of a peak read mid-way along a long straight "
    "edge, far from any zone (1.15e-3 against tol 1e-4); the factor 2 was measured on finer "
    "meshes of the closed-form sections (DEVELOPERS.md, 'Peak error estimate')"))
def test_single_solve_peak_estimate_on_a_straight_edge():
    """From bench_properties.py (motion check, chunk seed 10020, 5 638 examples after the
    peak fixes): a convex 10-gon of size 1e6 with a triangular hole, quadratic elements,
    mesh size 3 x default (2 137 elements), and its mirror image moved by 0.8 sizes.
    Measured: tau/T 6.70248e-18 (est 2.2e-4) and 6.69221e-18 (est 5.9e-4), 1.89 times
    the sum of the estimates apart; tol 1e-4 gives 6.69477e-18 (est 8.3e-5) for both.
    The adaptive loop's history-based estimate covers it (0 of 842 adaptive examples
    failed in the same run); a single solve at a given mesh size does not."""
    outer = [(426664.02336020174, 262719.6738432159), (224730.9195327003, 447839.0666971646),
             (-7492.130218807765, 501006.6704535829), (-282730.5888036483, 413675.271207916),
             (-424682.7327920805, 265910.4968263774), (-489491.2123077011, -107061.51936030804),
             (-371243.0047299476, -336515.1516548411), (-45491.45988404151, -498993.3295464171),
             (273031.4392091665, -420140.03505685076), (488674.9447799317, -110727.65778490565)]
    hole = [(-91671.00074870037, 82572.79544197005), (726.5687486025732, -41119.18693269285),
            (56956.68393068787, 12500.037538416362)]
    prof = Profile.from_loops([outer, hole])
    h = mesh_size_for(prof, 3.0, 9000)
    moved = moved_profile(prof, True, 0.0, (0.8, 0.0), ([0], [11, 12], [True, False]))
    ra, rb = analyse(prof, mesh_size=h, order=2), analyse(moved, mesh_size=h, order=2)
    _peaks_agree(ra, analyse(prof, tol=1e-3))
    _peaks_agree(ra, rb)


def test_adaptive_peak_beside_a_lone_weak_corner():
    """From the benchmark (adaptive check, tol 1e-2, 9 000-element cap): a 13-point star
    10 mm across with a 9-point hole, and the same moved by (0.3, 0.3) sizes.  Its outer
    loop has a lone re-entrant vertex of 188.7 degrees at (0.557, 1.522): under the
    sharp-corner tolerance (190) and in no traced run, yet singular (``r^-0.046``,
    Williams 1952, ``lambda = 1 - pi/alpha``).  Before: tau/T 0.051239 (est 0.62 %) and,
    the moved copy's refinement reaching that vertex, 0.0513 climbing about 4 % a step
    to 0.072969 at the cap (est 3.7 %); tol 1e-4: 0.051340.  Now a weak corner, zoned
    like the points of a concave traced run: 0.051239 and 0.051236 (est 0.63 %)."""
    outer = [(-4.5281379503186665, 2.304117308524868), (-0.8464685631259719, 0.02276989214603012),
             (-2.336515192161148, -1.019791436359206), (-2.1833052938307365, -3.1851042698772623),
             (-0.5434719918127705, -4.325625127313879), (0.43911220618131, -1.247971191071181),
             (4.384818100153295, -3.555365185265448), (4.786739319444512, -1.1360243777205243),
             (5.4718620496813335, 1.3880253729217276), (3.0970467863490687, 2.1299400571198728),
             (0.5573290145541174, 1.5219358411421406), (-0.21076391411160797, 1.4580184323355607),
             (-1.0358421454733142, 1.7400862190025934)]
    hole = [(-0.5286489544680701, -0.11174637037527456), (-0.5914108575197148, -1.2144810619393143),
            (0.10883665013355483, -1.434560254597892), (0.866433443956744, -0.567735792361523),
            (0.6243326362420919, -0.03347444102126452), (1.1445395858117489, 1.352680510686032),
            (0.1696146833670566, 1.0202662718451423), (-0.6584117973977085, 1.1743660716171176),
            (-0.9795455183369327, 0.5487951719546753)]
    prof = Case(aspect=1.0, size=10.0, gaps=(0.012589254117944303,), loops=[outer, hole]).profile()
    lone = [r for r in traced_runs(prof) if r.lone]
    assert any(abs(180.0 - r.turn_deg[0] - 188.7) < 0.05 for r in lone)  # the vertex is a weak corner
    assert not any(abs(c.angle - 188.7) < 0.05 for c in reentrant_corners(prof))  # and no sharp one
    moved = moved_profile(prof, False, 0.0, (0.3, 0.3), ([0], [0, 0], [False, False]))
    ra = analyse(prof, tol=1e-2, order=2, max_elements=BENCH_MAX_ELEMENTS)
    rb = analyse(moved, tol=1e-2, order=2, max_elements=BENCH_MAX_ELEMENTS)
    _peaks_agree(ra, rb)
    _peaks_agree(ra, analyse(prof, tol=1e-4))


def test_thin_section_with_slit_holes_solves():
    """From the benchmark (adaptive check): a 12-point star 76.5 long and 0.16 thick
    (aspect 0.002) with two slit holes, mirrored and turned by 6 degrees, tol 1e-2.
    AMG-CG used to stop at relative residual 1.1e-6 with SolveError; a stalled CG is
    now finished by the direct solver (linsolve.cg_or_direct)."""
    outer = np.array([
        -14.974028014554062, -0.034484016251439584, -0.6546202687527275, -0.02877921892303408,
        22.484325246693444, -0.08274795723667648, 33.27209856387968, -0.05538907687167278,
        15.289663965826252, -0.003449187977712783, 20.49195440438298, 0.011273717771470506,
        31.80637109946755, 0.06865086191959707, 6.363393511599127, 0.08041519367477275,
        -4.691077487819101, 0.024878931448239897, -13.46513693034849, 0.03058102680649347,
        -11.063899942035711, 0.0067092084540373, -43.21796891784629, -0.016380094236014806,
    ]).reshape(-1, 2)
    slit_1 = np.array([
        0.7824599564797768, -0.01897081045526641, 0.9805579382332286, -0.01832168465425359,
        1.4710915156174054, -0.016903561116832295, 0.7420129438905514, -0.016602085102204917,
        0.09428420663573782, -0.015558161912622272, -0.6795354781629421, -0.016508057286943444,
        -0.7310666919706507, -0.01806513018803862, -0.4812432290400073, -0.019367250143051826,
        0.4110738182916455, -0.020851813622580498,
    ]).reshape(-1, 2)
    slit_2 = np.array([
        -4.129463714699467, -0.007355908199289744, 0.7257009281202362, -0.007576356568825499,
        8.228838380896446, -0.009801663537415453, 3.2718585544719554, 0.0052632980297499165,
        2.059667614164508, 0.02091462758222151, -7.281760996014698, 0.016370002346061487,
        -9.970083860274118, 0.0020880853117577476,
    ]).reshape(-1, 2)
    prof = Profile.from_loops([outer, slit_1, slit_2])
    moved = moved_profile(prof, True, 6.0, (0.0, 0.025), ([1, 0], [4, 3, 10], [False] * 3))
    r = analyse(moved, tol=1e-2, order=2, max_elements=9000)
    lo, hi = r.torsion_constant_bounds
    assert lo <= hi
    # the loop's meshes may stay under the direct solver's limit: solve a 40 568-element
    # mesh of it by AMG-CG, whose warping solve stalls (relative residual 3.6e-6 after 120
    # steps) and is finished by SuperLU; the same bounds as SuperLU alone (outside
    # reference: scipy's SuperLU) to 1e-10
    mesh = mesh_profile(moved, 0.02)
    fa = solve_torsion_p2(mesh, method="amg")
    fd = solve_torsion_p2(mesh, method="direct")
    np.testing.assert_allclose([fa.j_lo, fa.j_hi], [fd.j_lo, fd.j_hi], rtol=1e-10, atol=0)
