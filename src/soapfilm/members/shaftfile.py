"""Shaft files (TOML) and section specifications -> :class:`~soapfilm.members.shaft.ShaftModel`.

A shaft file lists segments in order along the axis from x = 0, torques
applied at stations, and stations held against turning.  Every physical
value is text with its unit (``length = "60 mm"``) or a bare number in the
unit of the one rule (:data:`soapfilm.units.BARE_UNITS`: mm, N*m, MPa, GPa,
deg/m); a section's ``mesh_size`` and ``join_tolerance`` are lengths of its
drawing, bare in the drawing's unit.  The README lists the keys.

Sections are resolved by :class:`SectionSource`, which caches the analysis
of each section file (by resolved path and unit) within one run.
"""

from __future__ import annotations

import difflib
import logging
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..materials import Allowable, Material, allowable_shear, criterion_key, material
from ..profile import LENGTH_UNITS
from ..units import parse_drawing_length, parse_number, parse_quantity
from .shaft import (
    DEFAULT_TWIST_BASIS,
    DEFAULT_TWIST_LIMIT,
    TWIST_LIMIT_NOTE,
    TWIST_RULES,
    Load,
    Section,
    Segment,
    ShaftModel,
    Support,
    check_nominal_diameter,
    nominal_diameter_hint,
    round_section,
    section_from_result,
)

__all__ = ["SectionSource", "CheckOptions", "read_shaft", "shaft_from_dict", "resolve_allowable",
           "twist_basis_of", "shapefile_kts_basis", "check_safety_factor"]

log = logging.getLogger(__name__)

# Each key of a shaft file and the TOML types it takes: a key of another type is
# refused with one line naming it.  QUANTITY: text with a unit, or a bare number by the
# one unit rule; TEXT: a string; TABLE: a table; ARRAY: an array (of tables, of points).
_TEXT = (str,)
_NUMBER = (int, float)
_QUANTITY = (str, int, float)
_TABLE = (dict,)
_ARRAY = (list,)
_TOP_KEYS = {"name": _TEXT, "description": _TEXT, "twist_limit": _QUANTITY,
             "twist_rule": _TEXT, "section_units": _TEXT, "check": _TABLE, "materials": _TABLE,
             "segment": _ARRAY, "load": _ARRAY + _TABLE, "support": _ARRAY + _TABLE}
_CHECK_KEYS = {"material": _TEXT, "allowable_shear": _QUANTITY, "yield_strength": _QUANTITY,
               "criterion": _TEXT, "safety_factor": _NUMBER + _TEXT}
_MATERIAL_KEYS = {"based_on": _TEXT, "label": _TEXT, "shear_modulus": _QUANTITY,
                  "yield_strength": _QUANTITY}
_SEGMENT_KEYS = {"name": _TEXT, "length": _QUANTITY, "section": _TEXT + _TABLE,
                 "material": _TEXT, "shear_modulus": _QUANTITY, "yield_strength": _QUANTITY,
                 "allowable_shear": _QUANTITY}
_SECTION_KEYS = {"diameter": _QUANTITY, "bore": _QUANTITY, "file": _TEXT, "outline": _ARRAY,
                 "holes": _ARRAY, "units": _TEXT, "nominal_diameter": _QUANTITY,
                 "mesh_size": _QUANTITY, "layer": _TEXT + _ARRAY, "join_tolerance": _QUANTITY}
_LOAD_KEYS = {"name": _TEXT, "at": _QUANTITY, "torque": _QUANTITY}
_SUPPORT_KEYS = {"name": _TEXT, "at": _QUANTITY}

_TYPE_WORDS = {str: "text in quotes", int: "a number", float: "a number", dict: "a table",
               list: "an array", bool: "true or false"}


def _toml_type(value) -> str:
    """The TOML type of a parsed value, in words."""
    if isinstance(value, bool):
        return "true/false"
    for kind, words in ((str, "text"), (int, "an integer"), (float, "a number"),
                        (dict, "a table"), (list, "an array")):
        if isinstance(value, kind):
            return words
    return "a date or time" if hasattr(value, "isoformat") else type(value).__name__


def _check_keys(table: dict, allowed: dict, where: str) -> None:
    """Unknown keys and keys of the wrong TOML type: one line naming the key."""
    for key, value in table.items():
        if key not in allowed:
            close = difflib.get_close_matches(key, sorted(allowed), n=1, cutoff=0.6)
            fix = (f"did you mean {close[0]!r}?" if close
                   else f"known keys: {', '.join(sorted(allowed))}")
            raise InputError(f"unknown key {key!r}", where=where, fix=fix)
        types = allowed[key]
        if isinstance(value, bool) or not isinstance(value, types):
            words = " or ".join(dict.fromkeys(_TYPE_WORDS[t] for t in types))
            if types == _QUANTITY:
                words = 'text with a unit (e.g. "40 mm") or a bare number'
            raise InputError(f"is {_toml_type(value)}, but {key} must be {words}",
                             where=f"{where} key '{key}'", fix=_type_fix(key, value, types))


def _type_fix(key: str, value, types) -> str:
    """How to write ``key`` with a TOML type it takes: the value itself when it fits.

    A one-item array of the right type (``section_units = ["mm"]``) becomes that item
    (``section_units = "mm"``).
    """
    item = value[0] if isinstance(value, list) and len(value) == 1 else None
    if item is not None and not isinstance(item, bool) and isinstance(item, types):
        return f"write {key} = {_toml_value(item)}"
    if types == _QUANTITY:
        return f'write {key} = "<number> <unit>"'
    if float in types:
        return f"write {key} = <number>, no quotes"
    if str in types:
        return f'write {key} = "..."'
    if dict in types and list in types:
        return f"write [[{key}]] tables"
    if dict in types:
        return f"write [{key}] as a table"
    return f"write {key} = [...]"


def _toml_value(value) -> str:
    """A short TOML spelling of a text or a number (for a fix hint)."""
    if isinstance(value, str):
        return '"' + value[:40].replace("\\", "\\\\").replace('"', '\\"') + '"'
    return repr(value)


# --------------------------------------------------------------------------- sections
@dataclass
class SectionSource:
    """Builds :class:`Section` objects, caching file analyses within a run.

    Parameters
    ----------
    options : soapfilm.intake.SectionOptions, optional
        The command line's section-input options (units, DXF layers and join
        tolerance, mesh size, accuracy); a shaft file's section keys override
        them per section.
    """

    options: object = None
    cache: dict = field(default_factory=dict)
    #: the finite-element result behind each section built from a file or an outline
    #: (Section -> TorsionResult), for pictures of its fields (``member --plot-sectorial``)
    results: dict = field(default_factory=dict)
    #: also solve each section's warping shear (one more solve per section): members use
    #: it, the shaft checks do not
    warping_shear: bool = False

    def _options(self, units, mesh_size, layers=None, join_tolerance=None):
        import dataclasses

        from ..intake import SectionOptions
        from ..units import DrawingLength

        opts = self.options or SectionOptions()
        change = {}
        if units is not None:
            change["units"] = units
        if isinstance(mesh_size, DrawingLength):
            change["mesh_size"] = mesh_size
        elif mesh_size is not None:
            change["mesh_size"] = DrawingLength(metres=mesh_size, text=f"{mesh_size:g} m")
        if layers is not None:
            change["layers"] = tuple(layers)
        if join_tolerance is not None:
            change["join_tolerance"] = join_tolerance
        return dataclasses.replace(opts, **change) if change else opts

    def from_file(self, path, units: str | None, where: str,
                  nominal_diameter: float | None = None, mesh_size=None,
                  missing_fix: str = "check the path",
                  nominal_source: str = "given", layers=None, join_tolerance=None,
                  hints: dict | None = None) -> tuple[Section, object]:
        """Analyse a section file (any registered reader); return (Section, TorsionResult).

        ``nominal_diameter`` is in metres, ``mesh_size`` in metres or a
        :class:`~soapfilm.units.DrawingLength`; ``layers`` and ``join_tolerance``
        (a DrawingLength) are for DXF drawings; ``hints`` name the options in the
        user's words where the section comes from a file (see
        :mod:`soapfilm.readers._names`).  Without a nominal diameter, a shape
        file of a round-based kind with a stress raiser gives its own
        (:func:`shapefile_kts_basis`).
        """
        from ..intake import solve_input
        from ..readers._names import options_named

        path = Path(path)
        if units is not None and units not in LENGTH_UNITS:
            raise InputError(f"unknown length unit {units!r}", where=where,
                             fix=f"use one of {', '.join(LENGTH_UNITS)}")
        opts = self._options(units, mesh_size, layers, join_tolerance)
        key = (str(path.resolve()), opts)
        if key not in self.cache:
            if not path.exists():
                raise InputError(f"section file {str(path)!r} not found", where=where,
                                 fix=missing_fix)
            log.info("analysing section %s", path)
            with options_named(hints or {}):
                self.cache[key] = solve_input(path, opts, warping_shear=self.warping_shear)
        result = self.cache[key]
        bore = None
        if nominal_diameter is None and nominal_diameter_hint(result) is None:
            basis = shapefile_kts_basis(path)
            if basis is not None:
                s = LENGTH_UNITS[result.units]
                d, b, nominal_source = basis
                nominal_diameter, bore = d * s, (b * s if b else None)
        section = section_from_result(result, nominal_diameter, name=path.stem,
                                      nominal_bore=bore, nominal_source=nominal_source)
        given = nominal_source.startswith(("given with --", where))
        check_nominal_diameter(section, section.nominal_diameter,
                               nominal_source.removeprefix("given with ") if given else where)
        self.results[section] = result
        return section, result

    def from_outline(self, outline, holes, units: str, where: str,
                     nominal_diameter: float | None, name: str, mesh_size: float | None = None
                     ) -> tuple[Section, object]:
        from ..intake import analyse_options
        from ..profile import Profile
        from ..solve import analyse

        loops = [outline, *holes]
        try:
            loops = [np.asarray(lp, dtype=float) for lp in loops]
        except (TypeError, ValueError):
            raise InputError("outline and holes must be lists of [x, y] number pairs",
                             where=where) from None
        opts = self._options(None, mesh_size)
        key = ("outline", tuple(a.tobytes() for a in loops), units, opts)
        if key not in self.cache:
            profile = Profile.from_loops(
                loops, units=units, name=name,
                labels=[f"{where} outline"] + [f"{where} hole {k}" for k in range(1, len(loops))])
            self.cache[key] = analyse(profile, warping_shear=self.warping_shear,
                                      **analyse_options(profile, {}, opts))
        result = self.cache[key]
        section = section_from_result(result, nominal_diameter, name=name,
                                      nominal_source=f"{where} key 'nominal_diameter'")
        check_nominal_diameter(section, nominal_diameter, f"{where} key 'nominal_diameter'")
        self.results[section] = result
        return section, result

    def from_spec(self, spec, base: Path, default_units: str | None, where: str,
                  name: str, noun: str = "shaft") -> Section:
        """A segment's ``section`` value: a path, or a table (round / file / outline).

        ``noun`` names the file in messages (``"shaft"`` or ``"member"``).
        ``default_units`` is the shaft file's ``section_units`` (None when
        not given: section files then use their own unit, else mm).
        """
        if isinstance(spec, str):
            spec = {"file": spec}
        if not isinstance(spec, dict):
            raise InputError("'section' must be a file path or a table",
                             where=where, fix='e.g. section = { diameter = "40 mm" }')
        _check_keys(spec, _SECTION_KEYS, where)
        kinds = [k for k in ("diameter", "file", "outline") if k in spec]
        if len(kinds) != 1:
            raise InputError(
                "give exactly one of 'diameter' (round), 'file' or 'outline'"
                + (f", not {' and '.join(kinds)}" if kinds else ""), where=where)
        nominal = None
        if "nominal_diameter" in spec:
            nominal = parse_quantity(spec["nominal_diameter"], "length",
                                     f"{where} key 'nominal_diameter'", sign="positive")
        mesh_size = None
        if "mesh_size" in spec:  # a bare number is in the section's own unit
            mesh_size = parse_drawing_length(spec["mesh_size"], f"{where} key 'mesh_size'")
        units = spec.get("units", default_units)
        if units is not None and units not in LENGTH_UNITS:
            raise InputError(f"unknown length unit {units!r}", where=f"{where} key 'units'",
                             fix=f"use one of {', '.join(LENGTH_UNITS)}")
        if kinds[0] == "diameter":
            d = parse_quantity(spec["diameter"], "length", f"{where} key 'diameter'",
                               sign="positive")
            bore = parse_quantity(spec["bore"], "length", f"{where} key 'bore'",
                                  sign="nonnegative") if "bore" in spec else 0.0
            if d <= 0:
                raise InputError("diameter must be positive", where=f"{where} key 'diameter'")
            if not 0 <= bore < d:
                raise InputError("bore must be at least 0 and smaller than the diameter",
                                 where=f"{where} key 'bore'")
            sec = round_section(d, bore)
            if nominal is not None:
                sec = _with_nominal(sec, nominal, f"{where} key 'nominal_diameter'")
            return sec
        for k in ("bore",):
            if k in spec:
                raise InputError(f"'{k}' goes with 'diameter' only", where=where)
        if kinds[0] == "file":
            path = Path(spec["file"])
            if not path.is_absolute():
                path = base / path
            layers = spec.get("layer")
            if layers is not None:
                layers = [layers] if isinstance(layers, str) else layers
                if not (isinstance(layers, list) and layers
                        and all(isinstance(x, str) and x for x in layers)):
                    raise InputError("layer must be a layer name or a list of names",
                                     where=f"{where} key 'layer'", fix='e.g. layer = "OUTLINE"')
            jt = None
            if "join_tolerance" in spec:
                jt = parse_drawing_length(spec["join_tolerance"], f"{where} key 'join_tolerance'")
            # the shaft command's own options apply to every section; a section table's
            # keys to this one
            hints = {"layers": f'--layer {{0}}, or layer = "{{0}}" in {where}',
                     "join_tolerance": f"--join-tolerance {{0}}, or join_tolerance = {{0}} "
                                       f"in {where}",
                     "units": f'--units {{0}}, or units = "{{0}}" in {where}',
                     "mesh_size": f"--mesh-size {{0}}, or mesh_size = {{0}} in {where}"}
            # units None: the reader decides (its own header, else mm)
            return self.from_file(path, units, where, nominal, mesh_size,
                                  missing_fix=f"paths are relative to the {noun} file",
                                  layers=layers, join_tolerance=jt, hints=hints,
                                  nominal_source=f"{where} key 'nominal_diameter'")[0]
        for k in ("layer", "join_tolerance"):
            if k in spec:
                raise InputError(f"'{k}' goes with 'file' (a DXF drawing) only", where=where)
        outline = spec["outline"]
        holes = spec.get("holes", [])
        return self.from_outline(outline, holes, units or "mm", where, nominal, name,
                                 mesh_size)[0]


#: round-based shape-file kinds with a stress raiser of their own, and the key of the
#: diameter their Kts is based on
RAISER_KINDS = {
    "keyed_shaft": ("diameter", "diameter"),
    "flatted_shaft": ("diameter", "diameter"),
    "straight_spline": ("minor_diameter", "minor diameter (root circle)"),
    "involute_spline": ("minor_diameter", "minor diameter (root circle)"),
}
#: plain round kinds: a base for a stress raiser, none of their own
ROUND_KINDS = ("round", "tube")


def _round_base(part: dict) -> tuple[float, float, str] | None:
    """(d, bore, words) of a round-based part of a shape file, or None."""
    kind = part.get("kind")

    def number(key):
        v = part.get(key)
        return float(v) if isinstance(v, int | float) and not isinstance(v, bool) else None

    if kind in RAISER_KINDS:
        key, words = RAISER_KINDS[kind]
        d = number(key)
        if d is None and kind == "involute_spline":
            from ..shapes.splines import involute_defaults

            m, z = number("module"), part.get("teeth")
            if m is None or not isinstance(z, int):
                return None
            try:
                d = involute_defaults(m, z, number("pressure_angle") or 30.0,
                                      part.get("root", "flat"))[1]
            except (KeyError, TypeError, ValueError):
                return None
            words += ", by default"
        return (d, 0.0, f"{kind} {words}") if d else None
    if kind == "round" and number("diameter"):
        return number("diameter"), 0.0, "round diameter"
    if kind == "tube" and number("diameter") and number("wall"):
        d = number("diameter")
        return d, max(d - 2 * number("wall"), 0.0), "tube diameter"
    return None


def _centre(part: dict) -> tuple[float, float]:
    pos = part.get("position", (0.0, 0.0))
    try:
        return float(pos[0]), float(pos[1])
    except (TypeError, ValueError, IndexError):
        return (math.nan, math.nan)


def shapefile_kts_basis(path) -> tuple[float, float, str] | None:
    """Nominal diameter, bore and their source for Kts, from a TOML shape file.

    Kts measures a stress raiser on a round base, so only such sections get
    one: keyed and flatted shafts (their diameter), splines (their minor
    diameter, the root circle: the basis of the published splined-shaft
    charts, from memory), and parts built on a round bar, tube, keyed shaft
    or spline with something more than a concentric bore.  A plain round bar
    or tube, and a round with only a concentric bore, have none (their
    tau_max / (16 T / (pi d^3)) would be the hollow-section effect, not a
    stress concentration).  A concentric round bore of a raiser section
    enters the nominal stress, 16 T d / (pi (d^4 - d_i^4)).
    ``[section] nominal_diameter`` wins.  Lengths in the file's unit; None
    for anything else, including files that are not TOML.
    """
    path = Path(path)
    if path.suffix.lower() != ".toml":
        return None
    try:
        doc = tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
        return None
    sec = doc.get("section")
    parts = doc.get("part")
    if isinstance(sec, dict):
        d = sec.get("nominal_diameter")
        if isinstance(d, int | float) and not isinstance(d, bool) and d > 0:
            return float(d), 0.0, "shape file [section] nominal_diameter"
        if sec.get("kind") in ROUND_KINDS:
            return None
        base = _round_base(sec)
        return None if base is None else (base[0], base[1], f"shape file: {base[2]}")
    if not (isinstance(parts, list) and parts and all(isinstance(p, dict) for p in parts)):
        return None
    base = _round_base(parts[0])
    if base is None:
        return None
    d, bore, words = base
    raiser = parts[0].get("kind") not in ROUND_KINDS
    centre = _centre(parts[0])
    for part in parts[1:]:
        if (part.get("action") == "cut" and part.get("kind") == "round"
                and _centre(part) == centre and isinstance(part.get("diameter"), int | float)):
            bore = max(bore, float(part["diameter"]))  # a concentric bore: part of the base
        else:
            raiser = True
    if not raiser or not d > bore:
        return None
    return d, bore, f"shape file: {words} of the first part"


def shapefile_nominal_diameter(path) -> float | None:
    """The nominal diameter of :func:`shapefile_kts_basis` alone (file unit), or None."""
    basis = shapefile_kts_basis(path)
    return None if basis is None else basis[0]


def _with_nominal(sec: Section, d: float, source: str) -> Section:
    from dataclasses import replace

    check_nominal_diameter(sec, d, source)
    return replace(sec, nominal_diameter=d, nominal_source=source)


def twist_basis_of(text) -> float:
    """Length (m) a twist limit is written per: ``"0.25 deg/m"`` -> 1 m.

    ``"0.08 deg/ft"`` -> 0.3048 m; ``"1 deg/(800 mm)"`` -> 0.8 m (the rule
    "1 deg in 20 diameters" for d = 40 mm); a bare number (deg/m) or a
    form without a length to divide by -> 1 m.  Read by the quantity
    grammar (:func:`soapfilm.units.per_length`), never evaluated.
    """
    from ..units import per_length

    basis = per_length(text)
    return DEFAULT_TWIST_BASIS if basis is None else basis


# --------------------------------------------------------------------------- allowables
@dataclass(frozen=True)
class CheckOptions:
    """Command-line values that override the file's (SI; None = not given)."""

    allowable_shear: float | None = None
    yield_strength: float | None = None
    criterion: str | None = None
    safety_factor: float | None = None
    twist_limit: float | None = None
    shear_modulus: float | None = None
    material: str | None = None
    twist_rule: str | None = None
    twist_basis: float | None = None


#: largest safety factor taken: beyond it the allowable is a sliver of the strength,
#: surely a slip (common practice, no source: design factors in machine design are
#: single figures)
MAX_SAFETY_FACTOR = 1000.0


def check_safety_factor(n: float | None, where: str) -> float | None:
    """A safety factor must be at least 1 (below 1 it would raise the allowable above yield)."""
    if n is not None and not n >= 1:
        raise InputError(f"safety factor {n:g} is below 1: it would allow more than the "
                         "yield-based shear strength", where=where,
                         fix="give a safety factor of 1 or more (1 = none)")
    if n is not None and n > MAX_SAFETY_FACTOR:
        raise InputError(f"safety factor {n:g} is implausibly large (at most "
                         f"{MAX_SAFETY_FACTOR:g} is taken)", where=where,
                         fix="give the factor the design calls for, e.g. 2")
    return n


def resolve_allowable(
    mat: Material,
    allowable: float | None,
    yield_strength: float | None,
    criterion: str | None,
    safety_factor: float | None,
    where: str,
    allowable_note: str = "given",
    yield_note: str | None = None,
    safety_factor_where: str = "--safety-factor",
) -> Allowable:
    """Pick the allowable shear stress: given > yield with criterion > material's yield.

    A safety factor below 1 is refused (``safety_factor_where`` names where
    it was given).
    """
    check_safety_factor(safety_factor, safety_factor_where)
    if allowable is not None:
        if allowable <= 0:
            raise InputError("the allowable shear stress must be positive", where=where)
        return Allowable(allowable, f"allowable shear stress {allowable_note}")
    sy = yield_strength if yield_strength is not None else mat.yield_strength
    note = yield_note if yield_strength is not None else mat.yield_strength_note
    if sy is None:
        raise InputError(
            f"no allowable shear stress for {mat.label}: the material has no yield strength",
            where=where,
            fix="give an allowable shear stress (--allowable-shear, or allowable_shear in the "
                "shaft file) or a yield strength (--yield / yield_strength)")
    if sy <= 0:
        raise InputError("the yield strength must be positive", where=where)
    return allowable_shear(sy, criterion or "von-mises",
                           1.0 if safety_factor is None else safety_factor, yield_note=note)


def _refuse_with_allowable(table: dict, keys, where: str) -> None:
    """As ``check`` refuses --yield/--criterion/--safety-factor with --allowable-shear."""
    if "allowable_shear" not in table:
        return
    for key in keys:
        if key in table:
            raise InputError(f"'{key}' cannot be combined with 'allowable_shear'", where=where,
                             fix="allowable_shear is used as given (no criterion, no safety "
                                 "factor); drop one of the two")


# --------------------------------------------------------------------------- shaft files
def _q(table: dict, key: str, kind: str, where: str, required: bool = True,
       sign: str = "positive"):
    """The quantity ``table[key]`` in SI; by default above zero (torques: ``sign="any"``)."""
    if key not in table:
        if required:
            raise InputError(f"missing key '{key}'", where=where,
                             fix=f"add {key} = \"...\" with its unit")
        return None
    return parse_quantity(table[key], kind, f"{where} key '{key}'", sign=sign)


def _label(kind: str, i: int, table) -> str:
    name = table.get("name") if isinstance(table, dict) else None
    return f"{kind} {i + 1}" + (f" ({name!r})" if isinstance(name, str) and name else "")


def read_shaft(path, options: CheckOptions | None = None,
               sections: SectionSource | None = None) -> ShaftModel:
    """Read a TOML shaft file into a :class:`ShaftModel` (SI)."""
    path = Path(path)
    return shaft_from_dict(load_toml(path), path.parent, str(path), options, sections)


def load_toml(path: Path, what: str = "shaft file") -> dict:
    """The parsed TOML of a shaft or member file; every fault one line."""
    if not path.exists():
        raise InputError("file not found", where=str(path), fix="check the path")
    if path.is_dir():
        raise InputError(f"is a folder, not a {what}", where=str(path))
    try:
        return tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except UnicodeDecodeError:
        raise InputError("is not a text file", where=str(path)) from None
    except tomllib.TOMLDecodeError as exc:
        hint = "check quotes, brackets and '=' on that line"
        if path.suffix.lower() != ".toml":
            hint = (f"a {what} is a TOML file (.toml); see "
                    f"{'notes/shaft.md' if what == 'shaft file' else 'the README'} for the keys")
        raise InputError(f"not valid TOML: {exc}", where=str(path), fix=hint) from None


def shaft_from_dict(data: dict, base: Path, where: str, options: CheckOptions | None = None,
                    sections: SectionSource | None = None, require_loads: bool = True,
                    noun: str = "shaft") -> ShaftModel:
    """Build a :class:`ShaftModel` from the parsed TOML of a shaft file.

    ``noun`` names the file and the part in messages and sources: ``"shaft"``,
    or ``"member"`` for a member file read through here.

    ``require_loads=False``: a file with no ``[[load]]`` is taken (a member
    file, whose loads may all be distributed; :mod:`soapfilm.members.memberfile`).
    """
    opts = options or CheckOptions()
    sections = sections or SectionSource()
    if "segment" not in data and ("section" in data or "part" in data):
        raise InputError("is a section shape file (it has [section] or [[part]]), not a "
                         f"{noun} file",
                         where=where, fix=f"run 'soapfilm solve {where}' or 'soapfilm check'")
    _check_keys(data, _TOP_KEYS, where)
    section_units = data.get("section_units")
    if section_units is not None and section_units not in LENGTH_UNITS:
        raise InputError(f"unknown length unit {section_units!r}",
                         where=f"{where} key 'section_units'",
                         fix=f"use one of {', '.join(LENGTH_UNITS)}")
    if opts.twist_limit is not None:
        twist_limit, twist_note = opts.twist_limit, "given with --twist-limit"
        twist_basis = opts.twist_basis or DEFAULT_TWIST_BASIS
    elif "twist_limit" in data:
        twist_limit = parse_quantity(data["twist_limit"], "twist_rate",
                                     f"{where} key 'twist_limit'", sign="positive")
        twist_note = f"given in the {noun} file"
        twist_basis = twist_basis_of(data["twist_limit"])
    else:
        twist_limit, twist_note = DEFAULT_TWIST_LIMIT, TWIST_LIMIT_NOTE
        twist_basis = DEFAULT_TWIST_BASIS
    if not twist_limit > 0:
        raise InputError("the twist limit must be positive", where=f"{where} key 'twist_limit'")
    twist_rule = opts.twist_rule or data.get("twist_rule", "spans")
    if twist_rule not in TWIST_RULES:
        raise InputError(f"unknown twist rule {twist_rule!r}",
                         where="--twist-rule" if opts.twist_rule else f"{where} key 'twist_rule'",
                         fix=f"use {' or '.join(repr(k) for k in TWIST_RULES)}")

    check = data.get("check", {})
    if not isinstance(check, dict):
        raise InputError("'check' must be a table", where=where, fix="write [check]")
    _check_keys(check, _CHECK_KEYS, f"{where} [check]")
    cw = f"{where} [check]"
    _refuse_with_allowable(check, ("yield_strength", "criterion", "safety_factor"), cw)
    file_allow = _q(check, "allowable_shear", "stress", cw, required=False)
    file_yield = _q(check, "yield_strength", "stress", cw, required=False)
    criterion = opts.criterion or check.get("criterion")
    if criterion is not None:
        criterion = criterion_key(criterion, "--criterion" if opts.criterion else
                                  f"{cw} key 'criterion'")
    sf, sf_where = opts.safety_factor, "--safety-factor"
    if sf is None and "safety_factor" in check:
        sf_where = f"{cw} key 'safety_factor'"
        sf = check_safety_factor(parse_number(check["safety_factor"], sf_where), sf_where)

    # user materials
    user_mats: dict[str, Material] = {}
    mats = data.get("materials", {})
    if not isinstance(mats, dict):
        raise InputError("'materials' must be a table of tables", where=where,
                         fix="write [materials.my-steel]")
    for key, m in mats.items():
        mw = f"{where} [materials.{key}]"
        if not isinstance(m, dict):
            raise InputError("must be a table", where=mw)
        _check_keys(m, _MATERIAL_KEYS, mw)
        base_mat = material(m["based_on"], f"{mw} key 'based_on'") if "based_on" in m else None
        g = _q(m, "shear_modulus", "modulus", mw, required=base_mat is None)
        sy = _q(m, "yield_strength", "stress", mw, required=False)
        if base_mat is None:
            mat = Material(key, m.get("label", key), g, sy, f"{noun} file [materials.{key}]",
                           f"{noun} file [materials.{key}]" if sy is not None else "not given")
        else:
            mat = base_mat.overridden(g, sy, where=f"{noun} file [materials.{key}]")
            mat = Material(key, m.get("label", key), mat.shear_modulus, mat.yield_strength,
                           mat.shear_modulus_note, mat.yield_strength_note)
        user_mats[key] = mat

    def find_material(name, w):
        if not isinstance(name, str):
            raise InputError(f"material must be a name in quotes, got {name!r}", where=w)
        if name in user_mats:
            return user_mats[name]
        try:
            return material(name, w)
        except InputError as exc:
            if user_mats:
                close = difflib.get_close_matches(name, list(user_mats), n=1, cutoff=0.6)
                if close:
                    raise InputError(f"unknown material {name!r}", where=w,
                                     fix=f"did you mean {close[0]!r}?") from None
            raise exc from None

    default_mat_name = opts.material or check.get("material")

    segs = data.get("segment", [])
    if not isinstance(segs, list) or not segs:
        raise InputError("no segments", where=where,
                         fix=f"list the {noun}'s lengths in order as [[segment]] tables")
    segments = []
    for i, s in enumerate(segs):
        sw = f"{where}: {_label('segment', i, s)}"
        if not isinstance(s, dict):
            raise InputError("must be a table", where=sw)
        _check_keys(s, _SEGMENT_KEYS, sw)
        _refuse_with_allowable(s, ("yield_strength",), sw)
        length = _q(s, "length", "length", sw)
        if not length > 0:
            raise InputError("length must be positive", where=f"{sw} key 'length'")
        if "section" not in s:
            raise InputError("missing key 'section'", where=sw,
                             fix='e.g. section = { diameter = "40 mm" } or section = "keyed.txt"')
        name = s.get("name", f"segment {i + 1}")
        section = sections.from_spec(s["section"], base, section_units,
                                     f"{sw} key 'section'", name, noun)
        mat_name = s.get("material", default_mat_name)
        g_seg = _q(s, "shear_modulus", "modulus", sw, required=False)
        if mat_name is None:
            g = opts.shear_modulus if opts.shear_modulus is not None else g_seg
            if g is None:
                raise InputError("no material", where=sw,
                                 fix="give material = \"carbon-steel\" (or any preset), "
                                     "shear_modulus, or [check] material")
            mat = Material("user", "user material", g, None, "given", "not given")
        else:
            mw = f"{sw} key 'material'" if "material" in s else (
                "--material" if opts.material else f"{cw} key 'material'")
            mat = find_material(mat_name, mw)
        sy_seg = _q(s, "yield_strength", "stress", sw, required=False)
        if g_seg is not None:
            mat = mat.overridden(shear_modulus=g_seg, where="segment shear_modulus")
        if opts.shear_modulus is not None:
            mat = mat.overridden(shear_modulus=opts.shear_modulus, where="--shear-modulus")
        if sy_seg is not None:
            mat = mat.overridden(yield_strength=sy_seg, where="segment yield_strength")
        allow_seg = _q(s, "allowable_shear", "stress", sw, required=False)
        if opts.allowable_shear is not None:
            allow, note = opts.allowable_shear, "given with --allowable-shear"
        elif opts.yield_strength is not None:
            allow, note = None, ""  # --yield on the command line replaces the file's allowables
        elif allow_seg is not None:
            allow, note = allow_seg, "given for the segment"
        else:
            allow, note = file_allow, "given in [check]"
        if allow is not None and opts.allowable_shear is None:
            for value, opt in ((opts.safety_factor, "--safety-factor"),
                               (opts.criterion, "--criterion")):
                if value is not None:
                    raise InputError(
                        f"{opt} cannot be combined with the allowable_shear of the {noun} file",
                        where=f"{sw} key 'allowable_shear'" if allow_seg is not None
                        else f"{cw} key 'allowable_shear'",
                        fix=f"the file's allowable shear stress is used as given; drop {opt}, "
                            "or give --yield to derive the allowable from a yield strength")
        if opts.yield_strength is not None:
            sy, ynote = opts.yield_strength, "--yield"
        elif sy_seg is not None:
            sy, ynote = None, None  # already in the material
        else:
            sy, ynote = file_yield, "[check] yield_strength"
        allowable = resolve_allowable(mat, allow, sy, criterion, sf, sw, note, ynote,
                                      safety_factor_where=sf_where)
        segments.append(Segment(name, length, section, mat, allowable))

    total = sum(s.length for s in segments)
    tol = 1e-6 * total
    stations: list[tuple[float, str]] = []

    def position(table, w):
        x = _q(table, "at", "length", w, sign="any")  # outside the shaft: said below
        if x < -tol or x > total + tol:
            raise InputError(
                f"position {x * 1e3:g} mm is outside the {noun} (0 to {total * 1e3:g} mm)",
                where=f"{w} key 'at'", fix="positions are measured from the left end, x = 0")
        for other_x, other in stations:
            if abs(other_x - x) <= tol:
                raise InputError(
                    f"overlaps {other} at the same position x = {x * 1e3:g} mm", where=w,
                    fix="two parts cannot sit at one station: correct the position, or merge "
                        "them into one load with the summed torque")
        return min(max(x, 0.0), total)

    loads = []
    for i, ld in enumerate(_table_list(data, "load", where)):
        lw = f"{where}: {_label('load', i, ld)}"
        _check_keys(ld, _LOAD_KEYS, lw)
        x = position(ld, lw)
        t = _q(ld, "torque", "torque", lw, sign="any")  # the sign is the sense
        name = ld.get("name", f"load {i + 1}")
        loads.append(Load(name, x, t))
        stations.append((x, _label("load", i, ld)))
    supports = []
    for i, sp in enumerate(_table_list(data, "support", where)):
        pw = f"{where}: {_label('support', i, sp)}"
        _check_keys(sp, _SUPPORT_KEYS, pw)
        x = position(sp, pw)
        supports.append(Support(sp.get("name", f"support {i + 1}"), x))
        stations.append((x, _label("support", i, sp)))
    if not loads and require_loads:
        raise InputError("no loads", where=where,
                         fix=f"add [[load]] tables with the torques applied along the {noun}")
    return ShaftModel(
        name=str(data.get("name", Path(where).stem)),
        segments=tuple(segments),
        loads=tuple(loads),
        supports=tuple(supports),
        twist_limit=twist_limit,
        twist_limit_note=twist_note,
        twist_basis=twist_basis,
        twist_rule=twist_rule,
    )


def _table_list(data: dict, key: str, where: str) -> list[dict]:
    items = data.get(key, [])
    if isinstance(items, dict):
        items = [items]
    if not isinstance(items, list) or not all(isinstance(t, dict) for t in items):
        raise InputError(f"'{key}' must be tables", where=where, fix=f"write [[{key}]]")
    return items
