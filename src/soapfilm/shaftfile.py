"""Shaft files (TOML) and section specifications -> :class:`~soapfilm.shaft.ShaftModel`.

A shaft file lists segments in order along the axis from x = 0, torques
applied at stations, and stations held against turning.  Every physical
value is text with a unit (``length = "60 mm"``); a bare number is refused.
See ``notes/shaft.md`` for the table of keys.

Sections are resolved by :class:`SectionSource`, which caches the analysis
of each section file (by resolved path and unit) within one run.
"""

from __future__ import annotations

import difflib
import logging
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import InputError
from .materials import Allowable, Material, allowable_shear, criterion_key, material
from .profile import LENGTH_UNITS
from .shaft import (
    DEFAULT_TWIST_LIMIT,
    TWIST_LIMIT_NOTE,
    Load,
    Section,
    Segment,
    ShaftModel,
    Support,
    nominal_diameter_hint,
    round_section,
    section_from_result,
)
from .units import parse_number, parse_quantity

__all__ = ["SectionSource", "CheckOptions", "read_shaft", "shaft_from_dict", "resolve_allowable"]

log = logging.getLogger(__name__)

_TOP_KEYS = {"name", "description", "twist_limit", "section_units", "check", "materials",
             "segment", "load", "support"}
_CHECK_KEYS = {"material", "allowable_shear", "yield_strength", "criterion", "safety_factor"}
_MATERIAL_KEYS = {"based_on", "label", "shear_modulus", "yield_strength"}
_SEGMENT_KEYS = {"name", "length", "section", "material", "shear_modulus", "yield_strength",
                 "allowable_shear"}
_SECTION_KEYS = {"diameter", "bore", "file", "outline", "holes", "units", "nominal_diameter",
                 "mesh_size"}
_LOAD_KEYS = {"name", "at", "torque"}
_SUPPORT_KEYS = {"name", "at"}


def _check_keys(table: dict, allowed: set, where: str) -> None:
    for key in table:
        if key not in allowed:
            close = difflib.get_close_matches(key, sorted(allowed), n=1, cutoff=0.6)
            fix = (f"did you mean {close[0]!r}?" if close
                   else f"known keys: {', '.join(sorted(allowed))}")
            raise InputError(f"unknown key {key!r}", where=where, fix=fix)


# --------------------------------------------------------------------------- sections
@dataclass
class SectionSource:
    """Builds :class:`Section` objects, caching file analyses within a run.

    Parameters
    ----------
    mesh_size : float, optional
        Element size for the finite-element sections, in metres (default:
        the solver's own choice).
    """

    mesh_size: float | None = None
    cache: dict = field(default_factory=dict)

    def from_file(self, path, units: str | None, where: str,
                  nominal_diameter: float | None = None, mesh_size: float | None = None,
                  missing_fix: str = "check the path") -> tuple[Section, object]:
        """Analyse a section file (any registered reader); return (Section, TorsionResult).

        ``nominal_diameter`` and ``mesh_size`` are in metres.
        """
        from .adapt import DEFAULT_TOL
        from .readers import read_section
        from .solve import analyse

        path = Path(path)
        if units is not None and units not in LENGTH_UNITS:
            raise InputError(f"unknown length unit {units!r}", where=where,
                             fix=f"use one of {', '.join(LENGTH_UNITS)}")
        size = mesh_size if mesh_size is not None else self.mesh_size
        key = (str(path.resolve()), units, size)
        if key not in self.cache:
            if not path.exists():
                raise InputError(f"section file {str(path)!r} not found", where=where,
                                 fix=missing_fix)
            profile = read_section(path, units)
            log.info("analysing section %s", path)
            h = None if size is None else size / LENGTH_UNITS[profile.units]
            # as `soapfilm solve`: adaptive to the default tolerance unless a mesh size is given
            self.cache[key] = analyse(profile, mesh_size=h, tol=None if h else DEFAULT_TOL)
        result = self.cache[key]
        if nominal_diameter is None and nominal_diameter_hint(result) is None:
            d = shapefile_nominal_diameter(path)
            if d is not None:
                nominal_diameter = d * LENGTH_UNITS[result.units]
        return section_from_result(result, nominal_diameter, name=path.stem), result

    def from_outline(self, outline, holes, units: str, where: str,
                     nominal_diameter: float | None, name: str, mesh_size: float | None = None
                     ) -> tuple[Section, object]:
        from .adapt import DEFAULT_TOL
        from .profile import Profile
        from .solve import analyse

        loops = [outline, *holes]
        try:
            loops = [np.asarray(lp, dtype=float) for lp in loops]
        except (TypeError, ValueError):
            raise InputError("outline and holes must be lists of [x, y] number pairs",
                             where=where) from None
        key = ("outline", tuple(a.tobytes() for a in loops), units, mesh_size)
        if key not in self.cache:
            profile = Profile.from_loops(
                loops, units=units, name=name,
                labels=[f"{where} outline"] + [f"{where} hole {k}" for k in range(1, len(loops))])
            size = mesh_size if mesh_size is not None else self.mesh_size
            h = None if size is None else size / LENGTH_UNITS[units]
            self.cache[key] = analyse(profile, mesh_size=h, tol=None if h else DEFAULT_TOL)
        result = self.cache[key]
        return section_from_result(result, nominal_diameter, name=name), result

    def from_spec(self, spec, base: Path, default_units: str | None, where: str,
                  name: str) -> Section:
        """A segment's ``section`` value: a path, or a table (round / file / outline).

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
                                     f"{where} key 'nominal_diameter'")
        mesh_size = None
        if "mesh_size" in spec:
            mesh_size = parse_quantity(spec["mesh_size"], "length", f"{where} key 'mesh_size'")
        units = spec.get("units", default_units)
        if units is not None and units not in LENGTH_UNITS:
            raise InputError(f"unknown length unit {units!r}", where=f"{where} key 'units'",
                             fix=f"use one of {', '.join(LENGTH_UNITS)}")
        if kinds[0] == "diameter":
            d = parse_quantity(spec["diameter"], "length", f"{where} key 'diameter'")
            bore = parse_quantity(spec["bore"], "length", f"{where} key 'bore'") \
                if "bore" in spec else 0.0
            if d <= 0:
                raise InputError("diameter must be positive", where=f"{where} key 'diameter'")
            if not 0 <= bore < d:
                raise InputError("bore must be at least 0 and smaller than the diameter",
                                 where=f"{where} key 'bore'")
            sec = round_section(d, bore)
            if nominal is not None:
                sec = _with_nominal(sec, nominal)
            return sec
        for k in ("bore",):
            if k in spec:
                raise InputError(f"'{k}' goes with 'diameter' only", where=where)
        if kinds[0] == "file":
            path = Path(spec["file"])
            if not path.is_absolute():
                path = base / path
            # units None: the reader decides (its own header, else mm)
            return self.from_file(path, units, where, nominal, mesh_size,
                                  missing_fix="paths are relative to the shaft file")[0]
        outline = spec["outline"]
        holes = spec.get("holes", [])
        return self.from_outline(outline, holes, units or "mm", where, nominal, name,
                                 mesh_size)[0]


#: shape-file kinds whose ``diameter`` is the nominal diameter for Kts (round-based)
ROUND_BASED_KINDS = ("round", "tube", "keyed", "flat")


def shapefile_nominal_diameter(path) -> float | None:
    """Nominal diameter written in a TOML shape file, in the file's length unit.

    Hook for the parametric round-based kinds: ``[section] nominal_diameter``
    if present, else ``[section] diameter`` when the kind is round-based
    (keyed shafts, flats, round, tube).  None for anything else, including
    files that are not TOML.
    """
    path = Path(path)
    if path.suffix.lower() != ".toml":
        return None
    try:
        doc = tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
        return None
    sec = doc.get("section")
    if not isinstance(sec, dict):
        return None
    d = sec.get("nominal_diameter")
    kind = str(sec.get("kind", "")).lower()
    if d is None and any(k in kind for k in ROUND_BASED_KINDS):
        d = sec.get("diameter")
    if isinstance(d, int | float) and not isinstance(d, bool) and d > 0:
        return float(d)
    return None


def _with_nominal(sec: Section, d: float) -> Section:
    from dataclasses import replace

    return replace(sec, nominal_diameter=d)


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


def resolve_allowable(
    mat: Material,
    allowable: float | None,
    yield_strength: float | None,
    criterion: str | None,
    safety_factor: float | None,
    where: str,
    allowable_note: str = "given",
    yield_note: str | None = None,
) -> Allowable:
    """Pick the allowable shear stress: given > yield with criterion > material's yield."""
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


# --------------------------------------------------------------------------- shaft files
def _q(table: dict, key: str, kind: str, where: str, required: bool = True):
    if key not in table:
        if required:
            raise InputError(f"missing key '{key}'", where=where,
                             fix=f"add {key} = \"...\" with its unit")
        return None
    return parse_quantity(table[key], kind, f"{where} key '{key}'")


def _label(kind: str, i: int, table: dict) -> str:
    name = table.get("name")
    return f"{kind} {i + 1}" + (f" ({name!r})" if isinstance(name, str) and name else "")


def read_shaft(path, options: CheckOptions | None = None,
               sections: SectionSource | None = None) -> ShaftModel:
    """Read a TOML shaft file into a :class:`ShaftModel` (SI)."""
    path = Path(path)
    if not path.exists():
        raise InputError("file not found", where=str(path), fix="check the path")
    if path.is_dir():
        raise InputError("is a folder, not a shaft file", where=str(path))
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except UnicodeDecodeError:
        raise InputError("is not a text file", where=str(path)) from None
    except tomllib.TOMLDecodeError as exc:
        hint = "check quotes, brackets and '=' on that line"
        if path.suffix.lower() != ".toml":
            hint = "a shaft file is a TOML file (.toml); see notes/shaft.md for the keys"
        raise InputError(f"not valid TOML: {exc}", where=str(path), fix=hint) from None
    return shaft_from_dict(data, path.parent, str(path), options, sections)


def shaft_from_dict(data: dict, base: Path, where: str, options: CheckOptions | None = None,
                    sections: SectionSource | None = None) -> ShaftModel:
    """Build a :class:`ShaftModel` from the parsed TOML of a shaft file."""
    opts = options or CheckOptions()
    sections = sections or SectionSource()
    if "segment" not in data and ("section" in data or "part" in data):
        raise InputError("is a section shape file (it has [section] or [[part]]), not a shaft file",
                         where=where, fix=f"run 'soapfilm solve {where}' or 'soapfilm check'")
    _check_keys(data, _TOP_KEYS, where)
    section_units = data.get("section_units")
    if section_units is not None and section_units not in LENGTH_UNITS:
        raise InputError(f"unknown length unit {section_units!r}",
                         where=f"{where} key 'section_units'",
                         fix=f"use one of {', '.join(LENGTH_UNITS)}")
    if opts.twist_limit is not None:
        twist_limit, twist_note = opts.twist_limit, "given with --twist-limit"
    elif "twist_limit" in data:
        twist_limit = parse_quantity(data["twist_limit"], "twist_rate",
                                     f"{where} key 'twist_limit'")
        twist_note = "given in the shaft file"
    else:
        twist_limit, twist_note = DEFAULT_TWIST_LIMIT, TWIST_LIMIT_NOTE
    if not twist_limit > 0:
        raise InputError("the twist limit must be positive", where=f"{where} key 'twist_limit'")

    check = data.get("check", {})
    if not isinstance(check, dict):
        raise InputError("'check' must be a table", where=where, fix="write [check]")
    _check_keys(check, _CHECK_KEYS, f"{where} [check]")
    cw = f"{where} [check]"
    file_allow = _q(check, "allowable_shear", "stress", cw, required=False)
    file_yield = _q(check, "yield_strength", "stress", cw, required=False)
    criterion = opts.criterion or check.get("criterion")
    if criterion is not None:
        criterion = criterion_key(criterion, "--criterion" if opts.criterion else
                                  f"{cw} key 'criterion'")
    sf = opts.safety_factor
    if sf is None and "safety_factor" in check:
        sf = parse_number(check["safety_factor"], f"{cw} key 'safety_factor'")

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
            mat = Material(key, m.get("label", key), g, sy, f"shaft file [materials.{key}]",
                           f"shaft file [materials.{key}]" if sy is not None else "not given")
        else:
            mat = base_mat.overridden(g, sy, where=f"shaft file [materials.{key}]")
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
                         fix="list the shaft's lengths in order as [[segment]] tables")
    segments = []
    for i, s in enumerate(segs):
        sw = f"{where}: {_label('segment', i, s)}"
        if not isinstance(s, dict):
            raise InputError("must be a table", where=sw)
        _check_keys(s, _SEGMENT_KEYS, sw)
        length = _q(s, "length", "length", sw)
        if not length > 0:
            raise InputError("length must be positive", where=f"{sw} key 'length'")
        if "section" not in s:
            raise InputError("missing key 'section'", where=sw,
                             fix='e.g. section = { diameter = "40 mm" } or section = "keyed.txt"')
        name = s.get("name", f"segment {i + 1}")
        section = sections.from_spec(s["section"], base, section_units,
                                     f"{sw} key 'section'", name)
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
        if opts.yield_strength is not None:
            sy, ynote = opts.yield_strength, "--yield"
        elif sy_seg is not None:
            sy, ynote = None, None  # already in the material
        else:
            sy, ynote = file_yield, "[check] yield_strength"
        allowable = resolve_allowable(mat, allow, sy, criterion, sf, sw, note, ynote)
        segments.append(Segment(name, length, section, mat, allowable))

    total = sum(s.length for s in segments)
    tol = 1e-6 * total
    stations: list[tuple[float, str]] = []

    def position(table, w):
        x = _q(table, "at", "length", w)
        if x < -tol or x > total + tol:
            raise InputError(
                f"position {x * 1e3:g} mm is outside the shaft (0 to {total * 1e3:g} mm)",
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
        t = _q(ld, "torque", "torque", lw)
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
    if not loads:
        raise InputError("no loads", where=where,
                         fix="add [[load]] tables with the torques applied along the shaft")
    return ShaftModel(
        name=str(data.get("name", Path(where).stem)),
        segments=tuple(segments),
        loads=tuple(loads),
        supports=tuple(supports),
        twist_limit=twist_limit,
        twist_limit_note=twist_note,
    )


def _table_list(data: dict, key: str, where: str) -> list[dict]:
    items = data.get(key, [])
    if isinstance(items, dict):
        items = [items]
    if not isinstance(items, list) or not all(isinstance(t, dict) for t in items):
        raise InputError(f"'{key}' must be tables", where=where, fix=f"write [[{key}]]")
    return items
