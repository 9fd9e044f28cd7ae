"""Straight-sided splines (ISO 14 sizes) and involute splines (ISO 4156-1 basic profile).

The first tooth (spline) points along +y; the others follow counter-clockwise
at equal spacing.

Involute geometry (ISO 4156-1 relations): module m, number of teeth z,
pressure angle alpha at the reference (pitch) circle of radius
``r_p = m z / 2``; base circle ``r_b = r_p cos(alpha)``.  A flank point at
radius ``r >= r_b`` has pressure angle ``alpha_r = arccos(r_b / r)`` and lies
at polar angle ``+-(psi + inv(alpha) - inv(alpha_r))`` from the tooth centre
line, with ``inv(a) = tan(a) - a`` and ``psi = pi / (2 z)`` the half tooth
angle at the reference circle (basic tooth thickness ``pi m / 2``, no
allowance).  Below the base circle the flank continues as a radial line.

Both kinds are built point by point from one half tooth, mirrored and turned,
with every edge tagged with its piece: root and tip circles, flank (an
:class:`~soapfilm.geometry.curves.Involute` or a straight line) and root
fillet.  The root fillet is constructed exactly: a circle of the fillet
radius tangent to the root circle from outside and to the flank (found by
bisection on the involute's roll angle), with the arcs ending at the tangent
points.  (Rounding the flattened outline by offsetting, as before, put the
fillet centre where the offsets of two chords crossed and left sub-micron
steps where the fillet met the flank, each a false 270 deg corner.)
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..errors import InputError
from ..geometry.curves import Circle, Involute
from ..profile import Profile
from ._check import count_at_least, fmt, nonnegative, positive
from ._geom import arc_points, chord_for
from .shafts import _read_csv

__all__ = [
    "SplineSize",
    "iso14_table",
    "iso14_spline",
    "straight_spline",
    "involute_spline",
    "involute_defaults",
    "inv",
]

SPLINE_TABLE_FILE = "straight_splines_iso14.csv"

#: ISO 4156-1 external major and minor diameter factors (times m, added to z),
#: for (pressure angle, root): (major, minor, rack root fillet / m).  Diameter
#: relations read in the standard's basic-profile table; the rack root-fillet
#: radii are recalled from memory (not verified).
INVOLUTE_BASIC = {
    (30.0, "flat"): (1.0, -1.5, 0.2),
    (30.0, "fillet"): (1.0, -1.8, 0.4),
    (37.5, "fillet"): (0.9, -1.4, 0.3),
    (45.0, "fillet"): (0.8, -1.2, 0.25),
}
PRESSURE_ANGLES = (30.0, 37.5, 45.0)


def inv(a):
    """Involute function inv(a) = tan(a) - a (radians)."""
    return np.tan(a) - a


@dataclass(frozen=True)
class SplineSize:
    """One ISO 14 straight-sided spline size N x d x D x B (mm)."""

    series: str
    splines: int
    minor: float
    major: float
    width: float


@lru_cache(maxsize=1)
def iso14_table() -> tuple[SplineSize, ...]:
    """The shipped ISO 14 light and medium series."""
    return tuple(SplineSize(r["series"], int(r["splines"]), float(r["minor"]),
                            float(r["major"]), float(r["width"]))
                 for r in _read_csv(SPLINE_TABLE_FILE))


def iso14_spline(series: str, minor_diameter: float) -> SplineSize:
    """Look up an ISO 14 size by series ('light' or 'medium') and minor diameter."""
    rows = [r for r in iso14_table() if r.series == series]
    if not rows:
        raise InputError(f"unknown ISO 14 series {series!r}", where="series",
                         fix="use 'light' or 'medium'")
    for r in rows:
        if abs(r.minor - minor_diameter) < 1e-9:
            return r
    sizes = ", ".join(fmt(r.minor) for r in rows)
    raise InputError(f"no ISO 14 {series} spline with minor diameter {fmt(minor_diameter)}",
                     where="minor_diameter", fix=f"the {series} series has {sizes}")


def straight_spline(splines: int | None = None, minor_diameter: float | None = None,
                    major_diameter: float | None = None, spline_width: float | None = None,
                    root_fillet: float = 0.0, series: str | None = None, *,
                    chord: float | None = None, units: str = "mm") -> Profile:
    """Shaft with straight-sided (parallel-flank) splines.

    Parameters
    ----------
    splines : int
        Number of splines N.
    minor_diameter, major_diameter : float
        d (root) and D (outside).
    spline_width : float
        B, the width of each spline between its parallel flanks.
    root_fillet : float
        Radius joining each flank to the minor circle (0 = sharp).
    series : {'light', 'medium'}, optional
        Take N, D and B from ISO 14 for the given ``minor_diameter`` (mm).
    """
    if series:
        if minor_diameter is None:
            raise InputError("minor_diameter is needed to look up an ISO 14 size",
                             where="minor_diameter", fix="give the minor diameter d in mm")
        if units != "mm":
            raise InputError(f"the ISO 14 spline table is in mm, but this shape file has "
                             f"units = \"{units}\"", where="series",
                             fix="give the spline dimensions yourself, or use mm")
        row = iso14_spline(series, positive("minor_diameter", minor_diameter))
        for name, given, table in (("splines", splines, row.splines),
                                   ("major_diameter", major_diameter, row.major),
                                   ("spline_width", spline_width, row.width)):
            if given is not None and abs(float(given) - table) > 1e-9:
                raise InputError(f"{name} {given} differs from ISO 14 {series} "
                                 f"{row.splines}x{fmt(row.minor)}x{fmt(row.major)}"
                                 f"x{fmt(row.width)}", where=name,
                                 fix="leave it out to use the table, or drop 'series'")
        splines, major_diameter, spline_width = row.splines, row.major, row.width
    for name, v in (("splines", splines), ("minor_diameter", minor_diameter),
                    ("major_diameter", major_diameter), ("spline_width", spline_width)):
        if v is None:
            raise InputError(f"{name} is missing", where=name,
                             fix="give it, or give series and minor_diameter for an ISO 14 size")
    n = count_at_least("splines", splines, 3, 60)
    d = positive("minor_diameter", minor_diameter)
    D = positive("major_diameter", major_diameter)
    b = positive("spline_width", spline_width)
    rf = nonnegative("root_fillet", root_fillet)
    if d >= D:
        raise InputError(f"minor_diameter {fmt(d)} is not less than major_diameter {fmt(D)}",
                         where="minor_diameter", fix="the minor (root) diameter is the smaller")
    if b >= d:
        raise InputError(f"spline_width {fmt(b)} is not less than minor_diameter {fmt(d)}",
                         where="spline_width", fix="use narrower splines")
    if math.asin(b / d) >= math.pi / n:
        raise InputError(f"{n} splines of width {fmt(b)} overlap at the minor diameter "
                         f"{fmt(d)}", where="spline_width",
                         fix=f"use splines narrower than {fmt(d * math.sin(math.pi / n))} "
                         "or fewer of them")
    if rf > 0:
        if math.asin((b / 2 + rf) / (d / 2 + rf)) >= math.pi / n:
            raise InputError(f"root_fillet {fmt(rf)} does not fit in the space between the "
                             "splines", where="root_fillet", fix="use a smaller root fillet")
        y_fillet = math.sqrt((d / 2 + rf) ** 2 - (b / 2 + rf) ** 2)
        y_top = math.sqrt((D / 2) ** 2 - (b / 2) ** 2)
        if y_fillet >= y_top:
            raise InputError(f"root_fillet {fmt(rf)} is taller than the spline flank",
                             where="root_fillet", fix="use a smaller root fillet")
    c = chord_for(D, chord)
    r, R, hb = d / 2, D / 2, b / 2
    a_mid = math.pi / 2 - math.pi / n              # middle of the space before the first spline
    y_top = math.sqrt(R * R - hb * hb)
    fillet = None
    if rf > 0:
        # fillet circle tangent to the flank x = b/2 and, from outside, to the minor circle
        xc, yc = hb + rf, math.sqrt((r + rf) ** 2 - (hb + rf) ** 2)
        fillet = Circle(xc, yc, rf)
        phi_c = math.atan2(yc, xc)
        foot = [(arc_points(0.0, 0.0, r, a_mid, phi_c, c)[:-1], _ROOT),
                (arc_points(xc, yc, rf, phi_c - math.pi, -math.pi, c)[:-1], _FILLET),
                ([[hb, yc]], _STRAIGHT)]
    else:
        y_root = math.sqrt(r * r - hb * hb)
        foot = [(arc_points(0.0, 0.0, r, a_mid, math.atan2(y_root, hb), c)[:-1], _ROOT),
                ([[hb, y_root]], _STRAIGHT)]
    tip = arc_points(0.0, 0.0, R, math.atan2(y_top, hb), math.pi / 2, c)
    name = f"straight spline {n}x{fmt(d)}x{fmt(D)}x{fmt(b)}"
    return _toothed(foot + [(tip, _TIP)], n, Circle(0.0, 0.0, r), Circle(0.0, 0.0, R), None,
                    fillet, name, units)


# Curves of the half tooth, in the order _toothed takes them (straight edges: -1)
_ROOT, _TIP, _FLANK, _FILLET, _STRAIGHT = 0, 1, 2, 3, -1


def _toothed(half, z: int, root: Circle, tip: Circle, flank, fillet, name: str,
             units: str) -> Profile:
    """Profile of ``z`` equal teeth built from one half tooth, every edge tagged.

    Parameters
    ----------
    half : list of (points, piece)
        The half tooth with its centre line along +y, counter-clockwise from
        the middle of the tooth space on the clockwise side (polar angle
        ``pi/2 - pi/z``) to the middle of the tooth top (on the +y axis).
        Each piece's points run from its start up to, not including, the next
        piece's start; the last piece (the tip arc) ends on the axis.
        ``piece`` is ``_ROOT``, ``_TIP``, ``_FLANK``, ``_FILLET`` or
        ``_STRAIGHT``.  Every point is on its piece's curve.
    root, tip : Circle
        Root and tip circles about the origin.
    flank, fillet : Curve or None
        The flank curve and root fillet of the half tooth (None if absent).

    The other half of each tooth is the mirror image in the tooth's centre
    line, and every tooth a turned copy; each gets its own copies of ``flank``
    and ``fillet``.
    """
    pts = np.concatenate([np.asarray(p, dtype=float).reshape(-1, 2) for p, _ in half])
    tags = np.concatenate([np.full(len(np.asarray(p).reshape(-1, 2)), k) for p, k in half])
    pts[-1, 0] = 0.0
    edge = tags[:-1]                     # edge i runs from point i to point i + 1
    own = [cv for cv in (flank, fillet) if cv is not None]
    # per edge: the curve index if shared by all teeth, else -2 and the offset of its
    # tooth copy (2 j for own[j], its mirror image at 2 j + 1)
    rel = {_FLANK: 2 * own.index(flank) if flank is not None else 0,
           _FILLET: 2 * own.index(fillet) if fillet is not None else 0}
    shared = np.isin(edge, (_ROOT, _TIP, _STRAIGHT))
    offset = np.array([rel.get(int(e), 0) for e in edge], dtype=np.int64)
    right_rel = np.where(shared, edge, offset)
    left_rel = np.where(shared, edge, offset + 1)[::-1]
    shared_l = shared[::-1]
    mirror = pts[::-1] * np.array([-1.0, 1.0])
    pitch = np.concatenate([pts[:-1], mirror[:-1]])
    flip = np.array([[-1.0, 0.0], [0.0, 1.0]])
    curves: list = [root, tip]
    loop, loop_tags = [], []
    for k in range(z):
        a = 2.0 * math.pi * k / z
        turn = np.array([[math.cos(a), -math.sin(a)], [math.sin(a), math.cos(a)]])
        first = len(curves)
        for cv in own:
            curves += [cv.moved(turn, (0.0, 0.0)), cv.moved(turn @ flip, (0.0, 0.0))]
        loop.append(pitch @ turn.T)
        loop_tags.append(np.concatenate([np.where(shared, right_rel, first + right_rel),
                                         np.where(shared_l, left_rel, first + left_rel)]))
    return Profile.from_loops([np.concatenate(loop)], units=units, name=name, curves=curves,
                              edge_curves=[np.concatenate(loop_tags)])


def involute_defaults(module: float, teeth: int, pressure_angle: float = 30.0,
                      root: str = "flat") -> tuple[float, float, float]:
    """Default (major_diameter, minor_diameter, root_fillet) for an external spline.

    Major and minor diameters are the ISO 4156-1 external maxima before the
    allowance es/tan(alpha); the root fillet is that of the basic rack
    (recalled from memory, not verified).  For 37.5 and 45 deg the root is
    always a fillet root.
    """
    key = (float(pressure_angle), root if float(pressure_angle) == 30.0 else "fillet")
    fa, ff, rr = INVOLUTE_BASIC[key]
    return module * (teeth + fa), module * (teeth + ff), rr * module


def _involute_flank(rb: float, r0: float, r1: float, chord: float) -> np.ndarray:
    """Radii along an involute from r0 to r1 (both >= rb), spaced for the chord."""
    t0 = math.sqrt(max((r0 / rb) ** 2 - 1.0, 0.0))
    t1 = math.sqrt((r1 / rb) ** 2 - 1.0)
    # sagitta of a step dt near roll angle t: rb * t * dt^2 / 8
    dt = math.sqrt(8.0 * chord / (rb * max(t1, 1e-12)))
    n = max(2, math.ceil((t1 - t0) / dt))
    t = np.linspace(t0, t1, n + 1)
    return rb * np.sqrt(1.0 + t * t)


def involute_spline(module: float, teeth: int, pressure_angle: float = 30.0,
                    major_diameter: float | None = None, minor_diameter: float | None = None,
                    root_fillet: float | None = None, root: str = "flat", *,
                    chord: float | None = None, units: str = "mm") -> Profile:
    """External involute spline shaft, basic tooth profile (ISO 4156-1 relations).

    Parameters
    ----------
    module : float
        m; reference (pitch) diameter m z.
    teeth : int
        z, at least 6.
    pressure_angle : {30, 37.5, 45}
        Degrees.
    major_diameter, minor_diameter, root_fillet : float, optional
        Defaults from :func:`involute_defaults`.
    root : {'flat', 'fillet'}
        Root form for 30 deg (selects the default minor diameter and fillet).
    """
    m = positive("module", module)
    z = count_at_least("teeth", teeth, 6, 200)
    alpha_deg = positive("pressure_angle", pressure_angle)
    if not any(abs(alpha_deg - a) < 1e-9 for a in PRESSURE_ANGLES):
        raise InputError(f"pressure_angle {fmt(alpha_deg)} is not one of ISO 4156-1's "
                         "30, 37.5, 45 deg", where="pressure_angle", fix="use 30, 37.5 or 45")
    if root not in ("flat", "fillet"):
        raise InputError(f"root must be 'flat' or 'fillet', got {root!r}", where="root")
    dmaj, dmin, rdef = involute_defaults(m, z, alpha_deg, root)
    D = dmaj if major_diameter is None else positive("major_diameter", major_diameter)
    d = dmin if minor_diameter is None else positive("minor_diameter", minor_diameter)
    rf = rdef if root_fillet is None else nonnegative("root_fillet", root_fillet)
    alpha = math.radians(alpha_deg)
    rp = m * z / 2
    rb = rp * math.cos(alpha)
    ra, rr = D / 2, d / 2
    if not rr < rp < ra:
        raise InputError(f"the reference diameter m*z = {fmt(2 * rp)} must lie between "
                         f"minor_diameter {fmt(d)} and major_diameter {fmt(D)}",
                         where="minor_diameter" if rr >= rp else "major_diameter",
                         fix="check the module, teeth and diameters")
    psi = math.pi / (2 * z)
    inv_a = float(inv(alpha))

    def half_angle(r):
        r = np.asarray(r, dtype=float)
        ar = np.arccos(np.clip(rb / np.maximum(r, rb), -1.0, 1.0))
        return psi + inv_a - inv(ar)

    tip_half = float(half_angle(ra))
    if tip_half <= 0:
        # radius where the two flanks meet
        lo, hi = rp, ra
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            lo, hi = (mid, hi) if half_angle(mid) > 0 else (lo, mid)
        raise InputError(f"the teeth come to a point at diameter {fmt(2 * lo)}, below "
                         f"major_diameter {fmt(D)}", where="major_diameter",
                         fix=f"use a major_diameter below {fmt(2 * lo)}")
    root_half = float(half_angle(rr))
    space_half = math.pi / z - root_half
    if space_half <= 0:
        raise InputError(f"the {z} teeth overlap at the minor diameter {fmt(d)} "
                         f"(pressure angle {fmt(alpha_deg)} deg)", where="teeth",
                         fix="use more teeth, a smaller pressure angle or a larger "
                         "minor_diameter")
    if rf > 0:
        r_chk = min(rr + rf, ra)
        gap = 2 * r_chk * math.sin(max(math.pi / z - float(half_angle(r_chk)), 0.0))
        if gap < 2 * rf:
            raise InputError(f"root_fillet {fmt(rf)} does not fit in the tooth space "
                             f"({fmt(gap)} wide at the root)", where="root_fillet",
                             fix=f"use a root_fillet below {fmt(gap / 2)}")
    c = chord_for(D, chord)
    gamma = math.pi / 2 - psi - inv_a          # polar angle where the flank leaves the base circle
    flank = Involute(0.0, 0.0, rb, gamma, 1)   # the flank on the clockwise side of the first tooth
    t_tip = math.sqrt((ra / rb) ** 2 - 1.0)
    a_mid = math.pi / 2 - math.pi / z          # middle of the space before the first tooth
    radial_from = None                         # radius where a radial flank part starts
    fillet = None
    if rf > 0:
        fillet, t_foot, radial_from = _involute_root_fillet(flank, rr, rf, t_tip)
        phi_c = math.atan2(fillet.cy, fillet.cx)
        if phi_c <= a_mid:
            raise InputError(f"root_fillet {fmt(rf)} does not fit in the tooth space "
                             "(the two fillets of a space overlap)", where="root_fillet",
                             fix="use a smaller root_fillet")
        touch = flank.point([t_foot])[0] if radial_from is None else (
            radial_from * np.array([math.cos(gamma), math.sin(gamma)]))
        a_touch = math.atan2(touch[1] - fillet.cy, touch[0] - fillet.cx)
        a_root = phi_c - math.pi
        a_touch -= 2 * math.pi * math.ceil((a_touch - a_root) / (2 * math.pi))  # clockwise
        foot = [(arc_points(0.0, 0.0, rr, a_mid, phi_c, c)[:-1], _ROOT),
                (arc_points(fillet.cx, fillet.cy, rf, a_root, a_touch, c)[:-1], _FILLET)]
    elif rr >= rb:
        t_foot = math.sqrt((rr / rb) ** 2 - 1.0)
        a_foot = gamma + float(inv(math.atan(t_foot)))
        foot = [(arc_points(0.0, 0.0, rr, a_mid, a_foot, c)[:-1], _ROOT)]
    else:
        t_foot, radial_from = 0.0, rr
        foot = [(arc_points(0.0, 0.0, rr, a_mid, gamma, c)[:-1], _ROOT)]
    if radial_from is not None:  # radial flank below the base circle, up to it
        foot.append(([[radial_from * math.cos(gamma), radial_from * math.sin(gamma)]],
                     _STRAIGHT))
    # flank vertices at the ISO relation's polar angles (the Involute above is the same curve)
    r_flank = _involute_flank(rb, rb * math.sqrt(1.0 + t_foot * t_foot), ra, c)
    th = half_angle(r_flank)
    flank_pts = np.column_stack([r_flank * np.cos(math.pi / 2 - th),
                                 r_flank * np.sin(math.pi / 2 - th)])
    tip = arc_points(0.0, 0.0, ra, math.pi / 2 - tip_half, math.pi / 2, c)
    name = f"involute spline m{fmt(m)} z{z} {fmt(alpha_deg)} deg"
    return _toothed(foot + [(flank_pts[:-1], _FLANK), (tip, _TIP)], z, Circle(0.0, 0.0, rr),
                    Circle(0.0, 0.0, ra), flank, fillet, name, units)


def _involute_root_fillet(flank: Involute, rr: float, rf: float, t_tip: float
                          ) -> tuple[Circle, float, float | None]:
    """Root fillet of radius ``rf`` tangent to the root circle and to the flank.

    The flank is the involute ``flank`` (material on its counter-clockwise
    side) continued below the base circle by the radial line through its base
    point.  The fillet's centre lies on the circle of radius ``rr + rf``
    (tangent to the root circle from outside) at distance ``rf`` from the
    flank, on the space side.

    Returns
    -------
    fillet : Circle
    t_foot : float
        Roll angle where the involute part of the flank starts above the fillet.
    radial_from : float or None
        Radius of the fillet's tangent point on the radial part, or None if the
        fillet touches the involute.
    """
    rb, gamma, rc = flank.rb, flank.start, rr + rf
    rise = math.sqrt(rc * rc - rf * rf)   # tangent radius on a radial line
    if rise <= rb:  # touches the radial part: the centre is rf off the line, at radius rc
        beta = gamma - math.asin(rf / rc)
        return Circle(rc * math.cos(beta), rc * math.sin(beta), rf), 0.0, rise

    def centre(t):  # offset rf from the flank point of roll angle t, towards the space
        ang = gamma + t
        return flank.point([t])[0] + rf * np.array([math.sin(ang), -math.cos(ang)])

    def excess(t):
        return float(np.hypot(*centre(t))) - rc

    lo, hi = 0.0, t_tip
    if excess(hi) < 0:
        raise InputError(f"root_fillet {fmt(rf)} does not fit on the tooth flank",
                         where="root_fillet", fix="use a smaller root_fillet")
    for _ in range(200):  # bisection down to rounding (excess rises with t)
        mid = 0.5 * (lo + hi)
        if mid in (lo, hi):
            break
        lo, hi = (mid, hi) if excess(mid) < 0 else (lo, mid)
    t = hi if abs(excess(hi)) < abs(excess(lo)) else lo
    cx, cy = centre(t)
    # put the centre exactly on the circle of radius rc (moves it by rounding only)
    k = rc / math.hypot(cx, cy)
    return Circle(float(cx * k), float(cy * k), rf), t, None
