"""Round bars, tubes, ellipses, rectangles, box tubes and regular polygons.

All generators are pure functions of their dimensions and return a validated
:class:`~soapfilm.profile.Profile` in millimetres by default (the numbers are
taken in whatever unit ``units`` names).  Curves are flattened with the chord
tolerance ``chord`` (see :mod:`soapfilm.shapes._geom`).
"""

from __future__ import annotations

import math

import numpy as np
from shapely.geometry import Polygon

from ..errors import InputError
from ..geometry.curves import Circle, Ellipse
from ..profile import Profile
from ._check import count_at_least, fmt, nonnegative, positive
from ._geom import arc_points, chord_for, circle, rounded_box, to_profile

__all__ = ["round_bar", "tube", "ellipse", "rectangle", "box_tube", "regular_polygon"]


def round_bar(diameter: float, *, chord: float | None = None, units: str = "mm") -> Profile:
    """Solid round bar of the given diameter, centred on the origin."""
    d = positive("diameter", diameter)
    c = chord_for(d, chord)
    return to_profile(circle(d / 2, c), f"round {fmt(d)}", units, curves=[Circle(0.0, 0.0, d / 2)],
                      sagitta=c)


def tube(diameter: float, wall: float, *, chord: float | None = None,
         units: str = "mm") -> Profile:
    """Round tube given by outside diameter and wall thickness."""
    d = positive("diameter", diameter)
    t = positive("wall", wall)
    if t >= d / 2:
        raise InputError(
            f"wall {fmt(t)} is not less than half the diameter ({fmt(d / 2)}): no bore is left",
            where="wall", fix="make the wall thinner, or use kind 'round' for a solid bar")
    c = chord_for(d, chord)
    geom = circle(d / 2, c).difference(circle(d / 2 - t, c))
    return to_profile(geom, f"tube {fmt(d)} x {fmt(t)}", units,
                      curves=[Circle(0.0, 0.0, d / 2), Circle(0.0, 0.0, d / 2 - t)], sagitta=c)


def ellipse(width: float, height: float, *, chord: float | None = None,
            units: str = "mm") -> Profile:
    """Solid ellipse with full axes ``width`` (along x) and ``height`` (along y).

    Vertices at equal steps ``dt`` of the eccentric angle t.  The sagitta of a step is
    about ``(v dt)^2 / (8 rho)`` with speed ``v = |dr/dt|`` and radius of curvature
    ``rho = v^3 / (a b)``, i.e. ``a b dt^2 / (8 v)``; it is largest where ``v`` is least
    (``v = min(a, b)`` at the ends of the major axis), so ``dt = sqrt(8 chord / max(a, b))``
    keeps every sagitta under the chord.
    """
    w = positive("width", width)
    h = positive("height", height)
    a, b = w / 2, h / 2
    c = chord_for(max(w, h), chord)
    big = max(a, b)
    dt = math.sqrt(8.0 * c / big) if c < big else math.pi / 4
    n = max(8, math.ceil(2 * math.pi / dt))
    t = np.arange(n) * (2 * math.pi / n)
    geom = Polygon(np.column_stack([a * np.cos(t), b * np.sin(t)]))
    return to_profile(geom, f"ellipse {fmt(w)} x {fmt(h)}", units,
                      curves=[Ellipse(0.0, 0.0, a, b)], sagitta=c)


def rectangle(width: float, height: float, corner_radius: float = 0.0, *,
              chord: float | None = None, units: str = "mm") -> Profile:
    """Rectangle centred on the origin, optionally with rounded corners."""
    w = positive("width", width)
    h = positive("height", height)
    r = nonnegative("corner_radius", corner_radius)
    if r > min(w, h) / 2:
        raise InputError(
            f"corner_radius {fmt(r)} is more than half the smaller side ({fmt(min(w, h) / 2)})",
            where="corner_radius", fix=f"use at most {fmt(min(w, h) / 2)}")
    c = chord_for(max(w, h), chord)
    geom, arcs = rounded_box(-w / 2, -h / 2, w / 2, h / 2, r, c)
    name = f"rectangle {fmt(w)} x {fmt(h)}" + (f" r{fmt(r)}" if r else "")
    return to_profile(geom, name, units, curves=arcs, sagitta=c)


def box_tube(width: float, height: float, wall: float, outer_radius: float = 0.0,
             inner_radius: float | None = None, *, chord: float | None = None,
             units: str = "mm") -> Profile:
    """Rectangular hollow section (box tube) of uniform wall.

    ``inner_radius`` defaults to ``max(outer_radius - wall, 0)`` (a bent or
    rolled corner of constant thickness).
    """
    w = positive("width", width)
    h = positive("height", height)
    t = positive("wall", wall)
    ro = nonnegative("outer_radius", outer_radius)
    small = min(w, h)
    if t >= small / 2:
        raise InputError(
            f"wall {fmt(t)} is not less than half the smaller side ({fmt(small / 2)}): "
            "no hollow is left", where="wall",
            fix="make the wall thinner, or use kind 'rectangle' for a solid bar")
    if ro > small / 2:
        raise InputError(f"outer_radius {fmt(ro)} is more than half the smaller side "
                         f"({fmt(small / 2)})", where="outer_radius",
                         fix=f"use at most {fmt(small / 2)}")
    ri = max(ro - t, 0.0) if inner_radius is None else nonnegative("inner_radius", inner_radius)
    inner_small = small - 2 * t
    if ri > inner_small / 2:
        raise InputError(f"inner_radius {fmt(ri)} is more than half the smaller inside "
                         f"size ({fmt(inner_small / 2)})", where="inner_radius",
                         fix=f"use at most {fmt(inner_small / 2)}")
    c = chord_for(max(w, h), chord)
    outer, arcs_out = rounded_box(-w / 2, -h / 2, w / 2, h / 2, ro, c)
    inner, arcs_in = rounded_box(-w / 2 + t, -h / 2 + t, w / 2 - t, h / 2 - t, ri, c)
    if not outer.contains(inner) or inner.exterior.distance(outer.exterior) <= 1e-9 * small:
        raise InputError(f"the inside corners (inner_radius {fmt(ri)}) cut through the outside "
                         f"corners (outer_radius {fmt(ro)}): no wall is left there",
                         where="inner_radius",
                         fix="make inner_radius larger or outer_radius smaller")
    geom = outer.difference(inner)
    return to_profile(geom, f"box tube {fmt(w)} x {fmt(h)} x {fmt(t)}", units,
                      curves=arcs_out + arcs_in, sagitta=c)


def regular_polygon(sides: int, across_flats: float, corner_radius: float = 0.0, *,
                    chord: float | None = None, units: str = "mm") -> Profile:
    """Regular polygon (square, hex, octagon ...) by its size across flats.

    One flat lies at the top (normal along +y), so a hex has two horizontal
    flats; ``corner_radius`` rounds every corner.
    """
    n = count_at_least("sides", sides, 3, 360)
    s = positive("across_flats", across_flats)
    r = nonnegative("corner_radius", corner_radius)
    apothem = s / 2
    if r > apothem:
        raise InputError(f"corner_radius {fmt(r)} is more than half the size across flats "
                         f"({fmt(apothem)})", where="corner_radius",
                         fix=f"use at most {fmt(apothem)} (that much rounds the polygon into a "
                             "circle)")
    rc = apothem / math.cos(math.pi / n)
    # flat normal at +y: vertices at 90 deg +- 180/n
    a = math.pi / 2 + math.pi / n + np.arange(n) * (2 * math.pi / n)
    c = chord_for(2 * rc, chord)
    label = {3: "triangle", 4: "square", 6: "hex", 8: "octagon"}.get(n, f"{n}-gon")
    name = f"{label} {fmt(s)} AF" + (f" r{fmt(r)}" if r else "")
    if r <= 1e-9 * s:  # sharp corners
        geom = Polygon(np.column_stack([rc * np.cos(a), rc * np.sin(a)]))
        return to_profile(geom, name, units, sagitta=c)
    # built point by point: each corner an arc about the corner of the polygon shrunk by r,
    # from the normal of the flat before it to the normal of the flat after it; the flats
    # between are what is left of the sides (none at r = s/2: a circle)
    dist = (apothem - r) / math.cos(math.pi / n)
    centres = np.column_stack([dist * np.cos(a), dist * np.sin(a)])
    xy = np.concatenate([arc_points(cx, cy, r, ak - math.pi / n, ak + math.pi / n, c)
                         for (cx, cy), ak in zip(centres, a, strict=True)])
    step = np.hypot(*(xy - np.roll(xy, 1, axis=0)).T)
    xy = xy[step > 1e-12 * s]  # the ends of neighbouring arcs where no flat is left
    if dist <= 1e-12 * s:
        arcs = [Circle(0.0, 0.0, r)]
    else:
        arcs = [Circle(float(cx), float(cy), r) for cx, cy in centres]
    return to_profile(Polygon(xy), name, units, curves=arcs, sagitta=c)
