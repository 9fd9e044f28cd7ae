"""Shafts with parallel keyways and shafts with flats (D and double-D).

Keyway depth follows the trade's measure (DIN 6885-1 ``t1``): from the top of
the shaft circle on the keyway centreline down to the keyway floor.  The first
keyway (or flat) faces +y; further keyways follow counter-clockwise at equal
spacing.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

from shapely import affinity
from shapely.geometry import box
from shapely.ops import unary_union

from ..errors import InputError
from ..geometry.curves import Circle
from ..profile import Profile
from ._check import count_at_least, fmt, nonnegative, positive
from ._geom import chord_for, circle, round_convex, to_profile

__all__ = ["ParallelKey", "parallel_key", "parallel_key_table", "keyed_shaft", "flatted_shaft"]

KEY_TABLE_FILE = "parallel_keys_din6885.csv"


@dataclass(frozen=True)
class ParallelKey:
    """One row of the parallel-key table (DIN 6885-1 / ISO/R 773), in mm.

    Attributes
    ----------
    d_over, d_upto : float
        Shaft diameter range: over ``d_over`` up to and including ``d_upto``.
    width, height : float
        Key section b x h.
    shaft_depth, hub_depth : float
        Keyway depths t1 (shaft, from the top of the shaft circle on the
        centreline) and t2 (hub).
    r_min, r_max : float
        Radius at the bottom of the keyway.
    note : str
        '' or a remark such as 'from memory' for unverified values.
    """

    d_over: float
    d_upto: float
    width: float
    height: float
    shaft_depth: float
    hub_depth: float
    r_min: float
    r_max: float
    note: str = ""


def _read_csv(name: str) -> list[dict]:
    text = resources.files("soapfilm").joinpath("data", name).read_text(encoding="utf-8")
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    return list(csv.DictReader(lines))


@lru_cache(maxsize=1)
def parallel_key_table() -> tuple[ParallelKey, ...]:
    """All rows of the shipped DIN 6885-1 / ISO/R 773 table."""
    rows = []
    for r in _read_csv(KEY_TABLE_FILE):
        rows.append(ParallelKey(
            float(r["d_over"]), float(r["d_upto"]), float(r["key_b"]), float(r["key_h"]),
            float(r["t1"]), float(r["t2"]), float(r["r_min"]), float(r["r_max"]),
            r.get("note") or "",
        ))
    return tuple(rows)


def parallel_key(diameter: float) -> ParallelKey:
    """Key and keyway size for a shaft diameter in mm (DIN 6885-1 / ISO/R 773).

    Raises
    ------
    InputError
        If the diameter is outside the shipped table (over 6 up to 130 mm).
    """
    d = positive("diameter", diameter)
    table = parallel_key_table()
    for row in table:
        if row.d_over < d <= row.d_upto:
            return row
    raise InputError(
        f"no parallel key in the DIN 6885-1 table for a {fmt(d)} mm shaft "
        f"(the table covers over {fmt(table[0].d_over)} up to {fmt(table[-1].d_upto)} mm)",
        where="diameter", fix="give key_width, key_depth and floor_radius yourself")


def keyed_shaft(diameter: float, key_width: float | None = None,
                key_depth: float | None = None, floor_radius: float | None = None,
                keyways: int = 1, *, chord: float | None = None,
                units: str = "mm") -> Profile:
    """Round shaft with ``keyways`` equal parallel keyways, equally spaced.

    Parameters
    ----------
    diameter : float
        Shaft diameter.
    key_width, key_depth : float, optional
        Keyway width and depth (t1, from the top of the shaft circle on the
        keyway centreline).  Give both or neither; neither takes them from the
        DIN 6885-1 table for ``diameter`` (which must then be in mm).
    floor_radius : float, optional
        Radius of the two corners at the keyway floor (0 = sharp).  Default:
        the table's smallest radius when the key comes from the table (the
        conservative end for stress), else 0.
    keyways : int
        Number of keyways: 1, 2 (at 180 deg), 3 (at 120 deg) ...
    chord : float, optional
        Chord tolerance for the flattening (default 1e-5 * diameter).
    units : str
        Length unit the numbers are in.
    """
    d = positive("diameter", diameter)
    n = count_at_least("keyways", keyways, 1, 12)
    if (key_width is None) != (key_depth is None):
        missing = "key_depth" if key_depth is None else "key_width"
        raise InputError(f"{missing} is missing", where=missing,
                         fix="give both key_width and key_depth, or neither to take them "
                         "from the DIN 6885-1 table")
    if key_width is None:
        if units != "mm":
            raise InputError(f"the DIN 6885-1 key table is for shafts in mm, but this shape "
                             f"file has units = \"{units}\"", where="key_width",
                             fix="give key_width and key_depth yourself, or use mm")
        row = parallel_key(d)
        w, t1 = row.width, row.shaft_depth
        rf = row.r_min if floor_radius is None else nonnegative("floor_radius", floor_radius)
    else:
        w = positive("key_width", key_width)
        t1 = positive("key_depth", key_depth)
        rf = 0.0 if floor_radius is None else nonnegative("floor_radius", floor_radius)
    R = d / 2
    if w >= d:
        raise InputError(f"key_width {fmt(w)} is not less than the shaft diameter {fmt(d)}",
                         where="key_width", fix="use a narrower keyway")
    if t1 >= R:
        raise InputError(f"key_depth {fmt(t1)} reaches past the shaft centre (radius {fmt(R)}): "
                         "the keyway is deeper than the shaft allows", where="key_depth",
                         fix=f"use a key_depth below {fmt(R)}")
    if rf > w / 2:
        raise InputError(f"floor_radius {fmt(rf)} is larger than half the key width "
                         f"({fmt(w / 2)})", where="floor_radius",
                         fix=f"use at most {fmt(w / 2)}")
    y_edge = math.sqrt(R * R - (w / 2) ** 2)   # where the keyway sides leave the shaft
    y_floor = R - t1
    if y_edge <= y_floor:
        raise InputError(f"key_depth {fmt(t1)} is less than the rise of the shaft surface across "
                         f"the key width ({fmt(R - y_edge)}): the keyway would have no sides",
                         where="key_depth", fix=f"use a key_depth above {fmt(R - y_edge)}")
    if rf > y_edge - y_floor:
        raise InputError(f"floor_radius {fmt(rf)} is taller than the keyway side "
                         f"({fmt(y_edge - y_floor)})", where="floor_radius",
                         fix=f"use at most {fmt(y_edge - y_floor)}")
    c = chord_for(d, chord)
    disc = circle(R, c)
    slot = box(-w / 2, y_floor, w / 2, 2 * R + w)
    rf = rf * (1 - 1e-12)
    slot = round_convex(slot, rf, c) if rf > 0 else slot
    slots = [affinity.rotate(slot, 360.0 * k / n, origin=(0, 0)) for k in range(n)]
    if n > 1:
        cut0 = slots[0].intersection(disc)
        cut1 = slots[1].intersection(disc)
        if cut0.distance(cut1) <= 1e-9 * d:
            raise InputError(f"{n} keyways of width {fmt(w)} and depth {fmt(t1)} overlap on a "
                             f"{fmt(d)} shaft", where="keyways",
                             fix="use fewer, narrower or shallower keyways")
    geom = disc.difference(unary_union(slots))
    arcs = [Circle(0.0, 0.0, R)]
    if rf > 0:  # floor fillets about (+-(w/2 - rf), y_floor + rf), turned with each keyway
        for k in range(n):
            a = math.radians(360.0 * k / n)
            co, si = math.cos(a), math.sin(a)
            for x in (w / 2 - rf, rf - w / 2):
                y = y_floor + rf
                arcs.append(Circle(co * x - si * y, si * x + co * y, rf))
    label = f"shaft {fmt(d)} with {n} keyway{'s' if n > 1 else ''} {fmt(w)} x {fmt(t1)}"
    return to_profile(geom, label, units, curves=arcs, sagitta=c)


def flatted_shaft(diameter: float, flats: int = 1, flat_depth: float | None = None,
                  across_flats: float | None = None, *, chord: float | None = None,
                  units: str = "mm") -> Profile:
    """Round shaft with one flat (D) or two parallel flats (double-D).

    Parameters
    ----------
    diameter : float
    flats : {1, 2}
    flat_depth : float, optional
        Depth of each flat below the shaft circle (measured on the centreline).
    across_flats : float, optional
        Size over the flat(s): flat to opposite surface (one flat) or flat to
        flat (two flats).  Give exactly one of ``flat_depth`` and ``across_flats``.
    """
    d = positive("diameter", diameter)
    nf = count_at_least("flats", flats, 1, 2)
    if (flat_depth is None) == (across_flats is None):
        raise InputError("give exactly one of flat_depth and across_flats",
                         where="flat_depth" if flat_depth is None else "across_flats",
                         fix="flat_depth is the cut below the round; across_flats the size "
                         "over the flat(s)")
    R = d / 2
    if across_flats is not None:
        af = positive("across_flats", across_flats)
        if af >= d:
            raise InputError(f"across_flats {fmt(af)} is not less than the diameter {fmt(d)}",
                             where="across_flats", fix="use a smaller size across the flats")
        h = d - af if nf == 1 else (d - af) / 2
    else:
        h = positive("flat_depth", flat_depth)
        limit = d if nf == 1 else R
        if h >= limit:
            raise InputError(f"flat_depth {fmt(h)} removes the whole section "
                             f"({'diameter' if nf == 1 else 'radius'} {fmt(limit)})",
                             where="flat_depth", fix=f"use a flat_depth below {fmt(limit)}")
    c = chord_for(d, chord)
    keep = box(-d, -d if nf == 1 else -(R - h), d, R - h)
    geom = circle(R, c).intersection(keep)
    label = f"{'D' if nf == 1 else 'double-D'} shaft {fmt(d)}, flat depth {fmt(h)}"
    return to_profile(geom, label, units, curves=[Circle(0.0, 0.0, R)], sagitta=c)
