"""Registry of parametric kinds: parameters with unit kind, default and description.

Used by the shape-file reader (``.toml``) and by ``soapfilm shapes``.
:func:`build` checks names and types generically, then calls the generator,
which checks the combination of dimensions.  The generators' modules (numpy,
shapely) are imported on a kind's first build, so listing the kinds imports
nothing but the standard library.
"""

from __future__ import annotations

import difflib
import importlib
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING

from ..errors import InputError

if TYPE_CHECKING:
    from ..profile import Profile

__all__ = ["Param", "Kind", "Generator", "KINDS", "REQUIRED", "build", "suggest", "kind_named"]


class _Required:
    def __repr__(self) -> str:
        return "REQUIRED"


#: marker for a parameter without a default
REQUIRED = _Required()

UNIT_KINDS = ("length", "angle", "count", "choice")


@dataclass(frozen=True)
class Param:
    """One dimension of a kind.

    Attributes
    ----------
    name : str
        Key in the shape file and keyword of the generator.
    unit : {'length', 'angle', 'count', 'choice'}
        Length in the file's unit, angle in degrees, whole number, or text.
    default : object
        Default value; :data:`REQUIRED` if it must be given; None if it is
        worked out from the other dimensions (``default_text`` says how).
    description : str
    default_text : str
        How a None default is worked out.
    choices : tuple of str
        Allowed values of a 'choice' parameter.
    """

    name: str
    unit: str
    default: object
    description: str
    default_text: str = ""
    choices: tuple[str, ...] = ()

    @property
    def required(self) -> bool:
        return self.default is REQUIRED

    def default_label(self) -> str:
        if self.required:
            return "required"
        if self.default is None:
            return self.default_text or "-"
        if isinstance(self.default, float):
            return f"{self.default:g}"
        return str(self.default)


@dataclass(frozen=True)
class Generator:
    """A generator function of this package named by module and name, imported on first call.

    Attributes
    ----------
    module : str
        Module of :mod:`soapfilm.shapes` (``"shafts"``).
    name : str
        The function in it (``"keyed_shaft"``).
    """

    module: str
    name: str

    def resolved(self) -> Callable[..., Profile]:
        """The function itself (imports its module)."""
        return getattr(importlib.import_module(f".{self.module}", __package__), self.name)

    def __call__(self, *args, **kwargs) -> Profile:
        return self.resolved()(*args, **kwargs)


@dataclass(frozen=True)
class Kind:
    """A parametric section kind."""

    name: str
    family: str
    summary: str
    params: tuple[Param, ...]
    generator: Callable[..., Profile]  # a Generator: imported when first called
    example: tuple[tuple[str, object], ...]

    def param(self, name: str) -> Param | None:
        for p in self.params:
            if p.name == name:
                return p
        return None


def L(name, default, text, default_text=""):  # noqa: N802 - short table helpers
    return Param(name, "length", default, text, default_text)


def N(name, default, text, default_text=""):  # noqa: N802
    return Param(name, "count", default, text, default_text)


R = REQUIRED

_KIND_LIST = [
    Kind("round", "round", "solid round bar", (L("diameter", R, "bar diameter"),),
         Generator("basic", "round_bar"), (("diameter", 40),)),
    Kind("tube", "round", "round tube (hollow circle)",
         (L("diameter", R, "outside diameter"), L("wall", R, "wall thickness")),
         Generator("basic", "tube"), (("diameter", 60), ("wall", 5))),
    Kind("ellipse", "round", "solid ellipse",
         (L("width", R, "full axis along x"), L("height", R, "full axis along y")),
         Generator("basic", "ellipse"), (("width", 40), ("height", 25))),
    Kind("rectangle", "polygon", "rectangle, optionally with rounded corners",
         (L("width", R, "size along x"), L("height", R, "size along y"),
          L("corner_radius", 0.0, "radius of the four corners")),
         Generator("basic", "rectangle"), (("width", 60), ("height", 12))),
    Kind("box_tube", "polygon", "rectangular hollow section (welded or rolled box)",
         (L("width", R, "outside size along x"), L("height", R, "outside size along y"),
          L("wall", R, "wall thickness"), L("outer_radius", 0.0, "outside corner radius"),
          L("inner_radius", None, "inside corner radius", "outer_radius - wall, at least 0")),
         Generator("basic", "box_tube"), (("width", 80), ("height", 60), ("wall", 5))),
    Kind("polygon", "polygon", "regular polygon by size across flats (square, hex, octagon)",
         (N("sides", R, "number of sides (4 square, 6 hex, 8 octagon)"),
          L("across_flats", R, "size across flats"),
          L("corner_radius", 0.0, "radius of every corner")),
         Generator("basic", "regular_polygon"), (("sides", 6), ("across_flats", 19))),
    Kind("keyed_shaft", "shaft", "round shaft with parallel keyways, equally spaced",
         (L("diameter", R, "shaft diameter"),
          N("keyways", 1, "number of keyways (2 at 180 deg, 3 at 120 deg ...)"),
          L("key_width", None, "keyway width", "DIN 6885-1 table (mm)"),
          L("key_depth", None, "keyway depth t1 from the shaft surface on the centreline",
            "DIN 6885-1 table (mm)"),
          L("floor_radius", None, "radius of the keyway floor corners (0 = sharp)",
            "table r min, or 0 with your own key size")),
         Generator("shafts", "keyed_shaft"), (("diameter", 40),)),
    Kind("flatted_shaft", "shaft", "round shaft with one flat (D) or two parallel flats",
         (L("diameter", R, "shaft diameter"), N("flats", 1, "1 (D shaft) or 2 (double-D)"),
          L("flat_depth", None, "cut depth below the round, on the centreline",
            "give this or across_flats"),
          L("across_flats", None, "size over the flat(s)", "give this or flat_depth")),
         Generator("shafts", "flatted_shaft"), (("diameter", 20), ("flat_depth", 1.5))),
    Kind("straight_spline", "spline", "shaft with straight-sided splines (ISO 14 sizes)",
         (N("splines", None, "number of splines N", "ISO 14 with series"),
          L("minor_diameter", R, "minor (root) diameter d"),
          L("major_diameter", None, "major (outside) diameter D", "ISO 14 with series"),
          L("spline_width", None, "spline width B", "ISO 14 with series"),
          L("root_fillet", 0.0, "radius between flank and minor circle"),
          Param("series", "choice", None, "ISO 14 series to look up N, D, B from d",
                "none: give N, D, B", ("light", "medium"))),
         Generator("splines", "straight_spline"), (("series", "light"), ("minor_diameter", 32))),
    Kind("involute_spline", "spline",
         "shaft with involute spline teeth (ISO 4156-1 basic profile)",
         (L("module", R, "module m"), N("teeth", R, "number of teeth z"),
          Param("pressure_angle", "angle", 30.0, "30, 37.5 or 45 degrees"),
          L("major_diameter", None, "outside diameter", "m(z+1), m(z+0.9), m(z+0.8)"),
          L("minor_diameter", None, "root diameter",
            "m(z-1.5) flat, m(z-1.8) fillet, m(z-1.4), m(z-1.2)"),
          L("root_fillet", None, "root fillet radius", "0.2m, 0.4m, 0.3m, 0.25m"),
          Param("root", "choice", "flat", "root form at 30 deg (37.5 and 45 are fillet)",
                choices=("flat", "fillet"))),
         Generator("splines", "involute_spline"), (("module", 1.25), ("teeth", 18))),
    Kind("i_section", "open", "I (H) section with root fillets",
         (L("depth", R, "overall depth"), L("flange_width", R, "flange width"),
          L("web_thickness", R, "web thickness"), L("flange_thickness", R, "flange thickness"),
          L("root_radius", 0.0, "web-to-flange fillet radius")),
         Generator("open_sections", "i_section"), (("depth", 200), ("flange_width", 100),
                                   ("web_thickness", 5.6), ("flange_thickness", 8.5))),
    Kind("channel", "open", "channel (C, U) section with parallel flanges",
         (L("depth", R, "overall depth"), L("flange_width", R, "flange width incl. web"),
          L("web_thickness", R, "web thickness"), L("flange_thickness", R, "flange thickness"),
          L("root_radius", 0.0, "web-to-flange fillet radius")),
         Generator("open_sections", "channel"), (("depth", 100), ("flange_width", 50),
                                 ("web_thickness", 6), ("flange_thickness", 8.5))),
    Kind("angle", "open", "angle (L) section of uniform thickness",
         (L("leg_a", R, "leg along y"), L("leg_b", R, "leg along x"),
          L("thickness", R, "leg thickness"), L("root_radius", 0.0, "heel fillet radius")),
         Generator("open_sections", "angle"), (("leg_a", 50), ("leg_b", 50), ("thickness", 5))),
    Kind("tee", "open", "tee section",
         (L("depth", R, "overall depth incl. flange"), L("flange_width", R, "flange width"),
          L("stem_thickness", R, "stem thickness"), L("flange_thickness", R, "flange thickness"),
          L("root_radius", 0.0, "stem-to-flange fillet radius")),
         Generator("open_sections", "tee"), (("depth", 60), ("flange_width", 60),
                             ("stem_thickness", 7), ("flange_thickness", 7))),
]

#: name -> Kind, in listing order
KINDS: dict[str, Kind] = {k.name: k for k in _KIND_LIST}


def suggest(word: str, choices) -> str:
    """' (did you mean X?)'-style hint text, or a list of the choices."""
    close = difflib.get_close_matches(str(word), list(choices), n=1, cutoff=0.5)
    if close:
        return f"did you mean {close[0]!r}?"
    return f"use one of {', '.join(choices)}"


def kind_named(name: str, where: str | None = None) -> Kind:
    """The kind called ``name`` or an InputError naming it and the closest kind."""
    if not isinstance(name, str) or name not in KINDS:
        raise InputError(f"unknown shape kind {name!r}", where=where,
                         fix=suggest(name, KINDS) + "; 'soapfilm shapes' lists them")
    return KINDS[name]


def _check_value(p: Param, value, where: str | None):
    at = f"{where} {p.name}" if where else p.name
    if p.unit == "choice":
        if not isinstance(value, str) or value not in p.choices:
            raise InputError(f"{p.name} = {value!r} is not allowed", where=at,
                             fix=suggest(value, p.choices))
        return value
    if p.unit == "count":
        if isinstance(value, bool) or not isinstance(value, int):
            raise InputError(f"{p.name} must be a whole number, got {value!r}", where=at,
                             fix=f"write e.g. {p.name} = 6 (no decimal point, no quotes)")
        if value < 0:
            raise InputError(f"{p.name} must not be negative, got {value}", where=at)
        return value
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{p.name} must be a number, got {value!r}", where=at,
                         fix=f"write e.g. {p.name} = 12.5 (no quotes)")
    value = float(value)
    if not math.isfinite(value):
        raise InputError(f"{p.name} must be a finite number, got {value}", where=at)
    if p.unit == "length" and value < 0:
        raise InputError(f"{p.name} must not be negative, got {value:g}", where=at,
                         fix="give the size as a positive number")
    return value


def build(kind: str | Kind, values: Mapping, *, chord: float | None = None,
          units: str = "mm", where: str | None = None) -> Profile:
    """Check ``values`` against a kind and build the Profile.

    Parameters
    ----------
    kind : str or Kind
    values : mapping
        Parameter name -> value as read from a file.
    chord : float, optional
        Chord tolerance (default relative, see :mod:`soapfilm.shapes._geom`).
    units : str
        Length unit of the values.
    where : str, optional
        Prefix for error locations (file and table).

    Raises
    ------
    InputError
        Unknown, missing or mistyped parameter, or an impossible combination.
    """
    k = kind if isinstance(kind, Kind) else kind_named(kind, where)
    names = [p.name for p in k.params]
    args = {}
    for key, value in values.items():
        p = k.param(key)
        if p is None:
            at = f"{where}" if where else None
            raise InputError(f"unknown key {key!r} for kind {k.name!r}", where=at,
                             fix=suggest(key, names))
        args[key] = _check_value(p, value, where)
    for p in k.params:
        if p.required and p.name not in args:
            raise InputError(f"{p.name} is missing for kind {k.name!r} ({p.description})",
                             where=where, fix=f"add {p.name} = ...")
    try:
        return k.generator(**args, chord=chord, units=units)
    except InputError as exc:
        if where is None:
            raise
        at = f"{where} {exc.where}" if exc.where else where
        raise type(exc)(exc.what, where=at, fix=exc.fix) from None
