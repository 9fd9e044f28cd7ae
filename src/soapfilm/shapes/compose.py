"""Composition: union and difference of sections, and placing a part.

All functions take and return validated :class:`~soapfilm.profile.Profile`
objects (no mutation); the result keeps the exact curves of every part, moved
with it, and the points where parts cross lie exactly on them.  Example: a hollow splined shaft is
``difference(involute_spline(...), round_bar(12))``; a keyway in a D shaft is
``difference(flatted_shaft(...), placed(rectangle(8, 10), dy=20))``.
"""

from __future__ import annotations

import math

import numpy as np
from shapely.ops import unary_union

from ..errors import InputError
from ..profile import Profile
from ._geom import flattening_sagitta, to_profile

__all__ = ["placed", "union", "difference", "combined", "ROTATE_LIMIT"]


#: Largest turn (degrees, either way) a part may be given: ten turns.  Beyond it the
#: number is a slip (``rotate = 1e300`` turned by whatever cos(1e300 deg) gives).
ROTATE_LIMIT = 3600.0


def placed(profile: Profile, dx: float = 0.0, dy: float = 0.0, rotate: float = 0.0) -> Profile:
    """Turn ``profile`` by ``rotate`` degrees about the origin, then move it by (dx, dy).

    The angle is reduced to one turn exactly (``math.fmod``) before it becomes
    radians; one beyond :data:`ROTATE_LIMIT` or not finite is refused.
    """
    if not (math.isfinite(rotate) and abs(rotate) <= ROTATE_LIMIT):
        raise InputError(f"must be an angle in degrees within +-{ROTATE_LIMIT:g}, got "
                         f"{rotate!r}", where="rotate",
                         fix="give the turn within one revolution, e.g. rotate = 30")
    rotate = math.fmod(rotate, 360.0)
    if not rotate and not dx and not dy:
        return profile
    c, s = math.cos(math.radians(rotate)), math.sin(math.radians(rotate))
    return profile.transformed(np.array([[c, -s], [s, c]]), (dx, dy))


def _units(parts) -> str:
    units = {p.units for p in parts}
    if len(units) > 1:
        raise InputError(f"parts are in different length units {sorted(units)}",
                         fix="give all parts in one unit")
    return units.pop()


def combined(geom, parts, name: str, units: str) -> Profile:
    """Profile of ``geom``, a shapely combination of ``parts``, keeping their curves.

    Every part's curves are candidates; edges of the result lying on one are
    tagged with it, and the points where parts cross are moved exactly onto
    the curves (onto both where two curves cross).  The tolerance is the
    largest gap between a part's curved edges and their curves (crossing
    points lie on the chords).
    """
    curves = [cv for p in parts for cv in p.curves]
    sag = max((flattening_sagitta(p) for p in parts), default=0.0)
    return to_profile(geom, name, units, curves=curves, sagitta=sag)


def union(*parts: Profile, name: str = "") -> Profile:
    """The region covered by any of the parts (must come out as one piece)."""
    if not parts:
        raise InputError("union of nothing", fix="give at least one part")
    geom = unary_union([p.polygon for p in parts])
    if geom.geom_type == "MultiPolygon":
        raise InputError(f"the parts do not touch: their union falls apart into "
                         f"{len(geom.geoms)} pieces", fix="move the parts so that they overlap")
    return combined(geom, parts, name or " + ".join(p.name for p in parts), _units(parts))


def difference(base: Profile, *cuts: Profile, name: str = "") -> Profile:
    """``base`` with every cut removed (must leave one connected piece)."""
    units = _units((base, *cuts))
    geom = base.polygon
    if cuts:
        geom = geom.difference(unary_union([c.polygon for c in cuts]))
    if geom.is_empty:
        raise InputError("the cuts remove the whole section", fix="check the cut sizes")
    if geom.geom_type == "MultiPolygon":
        span = max(geom.bounds[2] - geom.bounds[0], geom.bounds[3] - geom.bounds[1])
        real = [g for g in geom.geoms if g.area > 1e-12 * span * span]
        if len(real) > 1:
            raise InputError(f"the cuts split the section into {len(real)} pieces",
                             fix="a bar section must stay one connected region")
    return combined(geom, (base, *cuts), name or " - ".join([base.name, *(c.name for c in cuts)]),
                    units)
