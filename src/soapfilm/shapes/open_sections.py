"""Thin-walled open sections: I (H), channel, angle and tee, with root fillets.

Placement: I and tee centred on the origin (bounding box), channel with the
back of its web on x = 0 and its flanges towards +x, angle with the heel at
the origin and legs along +x and +y.  Only the root (web-to-flange) corners
are filleted; toes and flange tips stay sharp.  The root fillets' centres are
known (a fillet of radius r in the corner between two walls sits r from both),
so they are passed on as exact circles.
"""

from __future__ import annotations

from shapely.geometry import box
from shapely.ops import unary_union

from ..errors import InputError
from ..geometry.curves import Circle
from ..profile import Profile
from ._check import fmt, nonnegative, positive
from ._geom import chord_for, fillet_concave, to_profile

__all__ = ["i_section", "channel", "angle", "tee"]


def _fillets(centres, r: float) -> list[Circle]:
    """Root fillet circles of radius ``r`` about the given centres (none if ``r`` is 0)."""
    return [Circle(float(x), float(y), r) for x, y in centres] if r > 0 else []


def _less(name: str, value: float, other: str, limit: float, fix: str) -> None:
    if value >= limit:
        raise InputError(f"{name} {fmt(value)} is not less than {other} ({fmt(limit)})",
                         where=name, fix=fix)


def _root_fits(r: float, limit: float, what: str) -> None:
    if r > limit:
        raise InputError(f"root_radius {fmt(r)} does not fit {what} ({fmt(limit)})",
                         where="root_radius", fix=f"use at most {fmt(limit)}")


def i_section(depth: float, flange_width: float, web_thickness: float,
              flange_thickness: float, root_radius: float = 0.0, *,
              chord: float | None = None, units: str = "mm") -> Profile:
    """Doubly symmetric I (H) section: overall depth, flange width, thicknesses."""
    h = positive("depth", depth)
    b = positive("flange_width", flange_width)
    tw = positive("web_thickness", web_thickness)
    tf = positive("flange_thickness", flange_thickness)
    r = nonnegative("root_radius", root_radius)
    _less("flange_thickness", tf, "half the depth", h / 2, "thinner flanges or a deeper section")
    _less("web_thickness", tw, "the flange width", b, "a thinner web or wider flanges")
    _root_fits(r, min((b - tw) / 2, h / 2 - tf), "between web and flange tip or the other flange")
    geom = unary_union([box(-b / 2, h / 2 - tf, b / 2, h / 2),
                        box(-b / 2, -h / 2, b / 2, -h / 2 + tf),
                        box(-tw / 2, -h / 2, tw / 2, h / 2)])
    c = chord_for(max(h, b), chord)
    geom = fillet_concave(geom, r, c)
    name = f"I {fmt(h)} x {fmt(b)} x {fmt(tw)}/{fmt(tf)}"
    roots = [(sx * (tw / 2 + r), sy * (h / 2 - tf - r)) for sx in (1, -1) for sy in (1, -1)]
    return to_profile(geom, name, units, curves=_fillets(roots, r), sagitta=c)


def channel(depth: float, flange_width: float, web_thickness: float,
            flange_thickness: float, root_radius: float = 0.0, *,
            chord: float | None = None, units: str = "mm") -> Profile:
    """Channel (C, U) section with parallel flanges pointing towards +x."""
    h = positive("depth", depth)
    b = positive("flange_width", flange_width)
    tw = positive("web_thickness", web_thickness)
    tf = positive("flange_thickness", flange_thickness)
    r = nonnegative("root_radius", root_radius)
    _less("flange_thickness", tf, "half the depth", h / 2, "thinner flanges or a deeper section")
    _less("web_thickness", tw, "the flange width", b, "a thinner web or wider flanges")
    _root_fits(r, min(b - tw, h / 2 - tf), "between web and flange tip or the other flange")
    geom = unary_union([box(0, h / 2 - tf, b, h / 2), box(0, -h / 2, b, -h / 2 + tf),
                        box(0, -h / 2, tw, h / 2)])
    c = chord_for(max(h, b), chord)
    geom = fillet_concave(geom, r, c)
    name = f"channel {fmt(h)} x {fmt(b)} x {fmt(tw)}/{fmt(tf)}"
    roots = [(tw + r, sy * (h / 2 - tf - r)) for sy in (1, -1)]
    return to_profile(geom, name, units, curves=_fillets(roots, r), sagitta=c)


def angle(leg_a: float, leg_b: float, thickness: float, root_radius: float = 0.0, *,
          chord: float | None = None, units: str = "mm") -> Profile:
    """Angle (L) section: leg_a along +y, leg_b along +x, uniform thickness."""
    a = positive("leg_a", leg_a)
    b = positive("leg_b", leg_b)
    t = positive("thickness", thickness)
    r = nonnegative("root_radius", root_radius)
    _less("thickness", t, "the shorter leg", min(a, b), "a thinner angle or longer legs")
    _root_fits(r, min(a, b) - t, "along the shorter leg")
    geom = unary_union([box(0, 0, b, t), box(0, 0, t, a)])
    c = chord_for(max(a, b), chord)
    geom = fillet_concave(geom, r, c)
    name = f"angle {fmt(a)} x {fmt(b)} x {fmt(t)}"
    return to_profile(geom, name, units, curves=_fillets([(t + r, t + r)], r), sagitta=c)


def tee(depth: float, flange_width: float, stem_thickness: float,
        flange_thickness: float, root_radius: float = 0.0, *,
        chord: float | None = None, units: str = "mm") -> Profile:
    """Tee section: flange on top, stem downwards, overall depth incl. the flange."""
    h = positive("depth", depth)
    b = positive("flange_width", flange_width)
    tw = positive("stem_thickness", stem_thickness)
    tf = positive("flange_thickness", flange_thickness)
    r = nonnegative("root_radius", root_radius)
    _less("flange_thickness", tf, "the depth", h, "a thinner flange or a deeper tee")
    _less("stem_thickness", tw, "the flange width", b, "a thinner stem or a wider flange")
    _root_fits(r, min((b - tw) / 2, h - tf), "between stem and flange tip or stem end")
    geom = unary_union([box(-b / 2, h / 2 - tf, b / 2, h / 2), box(-tw / 2, -h / 2, tw / 2, h / 2)])
    c = chord_for(max(h, b), chord)
    geom = fillet_concave(geom, r, c)
    name = f"tee {fmt(h)} x {fmt(b)} x {fmt(tw)}/{fmt(tf)}"
    roots = [(sx * (tw / 2 + r), h / 2 - tf - r) for sx in (1, -1)]
    return to_profile(geom, name, units, curves=_fillets(roots, r), sagitta=c)
