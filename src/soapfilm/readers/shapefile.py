"""Shape files: a section described in TOML by kind and dimensions.

A shape file has a title, a length unit, and either one ``[section]`` table
or a list of ``[[part]]`` tables combined in order (``action = "add"`` or
``"cut"``); optional ``[mesh]`` and ``[solve]`` tables hold settings.  Each
section or part is one of

* a parametric kind (``kind = "keyed_shaft"`` ... with its dimensions; see
  ``soapfilm shapes``),
* ``kind = "outline"`` with ``points = [[x, y], ...]`` and optional
  ``holes = [[[x, y], ...], ...]``,
* ``kind = "file"`` with ``file = "drawing.dxf"`` or a point list, relative
  to the shape file,

and may be placed with ``rotate`` (degrees, about the origin) and
``position = [x, y]`` (applied after the rotation).  The section keeps the
exact curves of its parts (arcs, fillets, flanks), moved with them::

    title = "Feed roller shaft"
    units = "mm"

    [section]
    kind = "keyed_shaft"
    diameter = 40

    [mesh]
    size = 0.4
"""

from __future__ import annotations

import dataclasses
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from shapely.geometry import Polygon

from ..errors import GeometryError, InputError
from ..profile import LENGTH_UNITS, Profile
from ..shapes.compose import ROTATE_LIMIT, combined, placed
from ..shapes.file_keys import MESH_KEYS, PART_KEYS, SOLVE_KEYS, SPECIAL_KINDS, TOP_KEYS
from ..shapes.registry import KINDS, build, suggest
from ..units import parse_drawing_length
from . import read_section, register
from ._names import options_named

__all__ = ["ShapeFile", "load_shapefile", "shapefile_from_document", "read_shapefile",
           "settings_for", "TOP_KEYS", "PART_KEYS", "MESH_KEYS", "SOLVE_KEYS", "SPECIAL_KINDS"]

_METHODS = ("auto", "direct", "amg")


@dataclass(frozen=True)
class ShapeFile:
    """A read shape file.

    Attributes
    ----------
    profile : Profile
    title : str
    settings : dict
        ``mesh_size``, ``chord`` (lengths in the profile's unit) and
        ``method`` when the file gives them.
    path : Path
    """

    profile: Profile
    title: str = ""
    settings: dict = field(default_factory=dict)
    path: Path | None = None


def _load_toml(path: Path) -> dict:
    try:
        with open(path, "rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML: {exc}", where=str(path),
                         fix="check quotes, brackets and '=' on that line") from None
    except UnicodeDecodeError:
        raise InputError("is not a text file", where=str(path)) from None
    except RecursionError:
        raise InputError("arrays or tables are nested too deeply to read", where=str(path),
                         fix="a shape file needs at most three levels of brackets "
                             "(hole point lists)") from None
    except OSError as exc:  # permission denied, a folder, a device that fails ...
        raise InputError(f"cannot read the file ({exc.strerror or type(exc).__name__})",
                         where=str(path), fix="check the file's permissions") from None


def _unknown(key: str, allowed, where: str) -> InputError:
    return InputError(f"unknown key {key!r}", where=where, fix=suggest(key, list(allowed)))


def _table(doc: dict, key: str, allowed: dict, where: str) -> dict:
    tab = doc.get(key, {})
    if not isinstance(tab, dict):
        raise InputError(f"{key!r} must be a table [{key}]", where=where,
                         fix=f"write [{key}] on a line of its own, its keys below it")
    for k in tab:
        if k not in allowed:
            raise _unknown(k, allowed, f"{where} [{key}]")
    return tab


def _positive_length(tab: dict, key: str, where: str) -> float | None:
    if key not in tab:
        return None
    v = tab[key]
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v <= 0:
        raise InputError(f"{key} must be a positive number, got {v!r}", where=where,
                         fix=f"write e.g. {key} = 0.5")
    return float(v)


def _settings(doc: dict, where: str) -> dict:
    out: dict = {}
    mesh = _table(doc, "mesh", MESH_KEYS, where)
    solve = _table(doc, "solve", SOLVE_KEYS, where)
    for key, name in (("size", "mesh_size"), ("chord", "chord")):
        v = _positive_length(mesh, key, f"{where} [mesh]")
        if v is not None:
            out[name] = v
    if "method" in solve:
        m = solve["method"]
        if m not in _METHODS:
            raise InputError(f"method = {m!r} is not known", where=f"{where} [solve]",
                             fix=suggest(m, _METHODS))
        out["method"] = m
    return out


def _points(value, name: str, where: str) -> list[tuple[float, float]]:
    ok = isinstance(value, list) and all(
        isinstance(p, list) and len(p) == 2
        and all(isinstance(c, (int, float)) and not isinstance(c, bool) for c in p)
        for p in value)
    if not ok:
        raise InputError(f"{name} must be a list of [x, y] number pairs", where=where,
                         fix=f"write e.g. {name} = [[0, 0], [10, 0], [10, 5]]")
    return [(float(x), float(y)) for x, y in value]


def _part(tab, where: str, base: Path, units: str, chord: float | None,
          composite: bool) -> Profile:
    if not isinstance(tab, dict):
        raise InputError("must be a table of keys", where=where,
                         fix='write [[part]] on a line of its own, its keys below it, '
                             'e.g. kind = "round"')
    if "kind" not in tab:
        raise InputError("kind is missing", where=where,
                         fix="add e.g. kind = \"round\" ('soapfilm shapes' lists the kinds)")
    kind = tab["kind"]
    if not isinstance(kind, str):
        raise InputError(f"kind must be the name of a kind in quotes, got {kind!r}", where=where,
                         fix="write e.g. kind = \"round\" ('soapfilm shapes' lists the kinds)")
    common = {"kind", "rotate", "position"} | ({"action"} if composite else set())
    dims = {k: v for k, v in tab.items() if k not in common}
    if kind in SPECIAL_KINDS:
        for k in dims:
            if k not in SPECIAL_KINDS[kind]:
                raise _unknown(k, list(SPECIAL_KINDS[kind]) + sorted(common), where)
        if kind == "outline":
            if "points" not in dims:
                raise InputError("points is missing for kind 'outline'", where=where,
                                 fix="add points = [[x, y], ...]")
            loops = [_points(dims["points"], "points", where)]
            holes = dims.get("holes", [])
            if not isinstance(holes, list):
                raise InputError("holes must be a list of point lists", where=where,
                                 fix="write e.g. holes = [[[2, 2], [4, 2], [4, 4]]]")
            loops += [_points(h, f"holes[{i + 1}]", where) for i, h in enumerate(holes)]
            labels = [f"{where} points"] + [f"{where} holes[{i}]" for i in range(1, len(loops))]
            prof = Profile.from_loops(loops, units=units, name="outline", labels=labels)
        else:
            ref = dims.get("file")
            if not isinstance(ref, str) or not ref:
                raise InputError("file is missing or not text for kind 'file'", where=where,
                                 fix="add file = \"drawing.dxf\" (relative to this file)")
            target = (base / ref) if not Path(ref).is_absolute() else Path(ref)
            if target.suffix.lower() == ".toml":
                raise InputError(f"a shape file cannot include another shape file ({ref})",
                                 where=where, fix="refer to a point list or DXF drawing")
            if not target.exists():
                raise InputError(f"file {ref!r} not found (looked in {target.parent})",
                                 where=where, fix="paths are relative to the shape file")
            prof = _read_file_part(target, dims, units, where)
    else:
        if not isinstance(kind, str) or kind not in KINDS:
            choices = list(KINDS) + list(SPECIAL_KINDS)
            raise InputError(f"unknown kind {kind!r}", where=where,
                             fix=suggest(kind, choices) + "; 'soapfilm shapes' lists them")
        allowed = [p.name for p in KINDS[kind].params] + sorted(common)
        for k in dims:
            if k not in allowed:
                raise InputError(f"unknown key {k!r} for kind {kind!r}", where=where,
                                 fix=suggest(k, allowed))
        try:
            prof = build(kind, dims, chord=chord, units=units, where=where)
        except InputError as exc:
            if exc.where != f"{where} chord":
                raise
            # the chord tolerance is the file's [mesh] setting, checked against each shape
            raise InputError(exc.what, where=f"{where.rsplit(' [', 1)[0]} [mesh] chord",
                             fix=exc.fix) from None
    rot = tab.get("rotate", 0.0)
    if isinstance(rot, bool) or not isinstance(rot, (int, float)) or not math.isfinite(rot) \
            or abs(rot) > ROTATE_LIMIT:
        raise InputError(f"rotate must be an angle in degrees within +-{ROTATE_LIMIT:g}, got "
                         f"{rot!r}", where=where,
                         fix="give the turn within one revolution, e.g. rotate = 30")
    pos = tab.get("position", [0.0, 0.0])
    if not (isinstance(pos, list) and len(pos) == 2 and all(
            isinstance(c, (int, float)) and not isinstance(c, bool) and math.isfinite(c)
            for c in pos)):
        raise InputError(f"position must be [x, y], two finite numbers, got {pos!r}",
                         where=where, fix="write e.g. position = [0, 12.5]")
    try:
        return placed(prof, float(pos[0]), float(pos[1]), float(rot))
    except GeometryError as exc:
        raise InputError(f"placed at {pos} turned by {rot}: {exc.what}", where=where,
                         fix=exc.fix) from None


def _read_file_part(target: Path, dims: dict, units: str, where: str) -> Profile:
    """A point list or drawing referenced by a ``kind = "file"`` part, in ``units``."""
    layers = dims.get("layer")
    if layers is not None:
        if isinstance(layers, str):
            layers = [layers]
        if not (isinstance(layers, list) and layers
                and all(isinstance(x, str) and x for x in layers)):
            raise InputError(f"layer must be a layer name or a list of names, got "
                             f"{dims['layer']!r}", where=where, fix='write layer = "OUTLINE"')
    jt = dims.get("join_tolerance")
    if jt is not None:
        if isinstance(jt, bool) or not isinstance(jt, (int, float, str)):
            raise InputError(f"join_tolerance must be a length, got {jt!r}", where=where,
                             fix="write e.g. join_tolerance = 0.01")
        if isinstance(jt, (int, float)):  # a bare number is in the shape file's unit
            jt = f"{jt!r} {units}"
        jt = parse_drawing_length(jt, f"{where} join_tolerance")
    options = {"layers": layers, "join_tolerance": jt}
    if target.suffix.lower() != ".dxf":
        for key, name in (("layers", "layer"), ("join_tolerance", "join_tolerance")):
            if options[key] is not None:
                raise InputError(f"{name} applies to DXF drawings only, not to "
                                 f"{target.suffix or 'these'} files", where=where,
                                 fix=f"drop {name}")
        prof = read_section(target, units)
        if prof.units != units:  # a reader that knows its own unit: converted
            factor = LENGTH_UNITS[prof.units] / LENGTH_UNITS[units]
            prof = prof.scaled(factor).with_units(units)
        return prof
    hints = {"layers": f'layer = "{{}}" in {where}',
             "join_tolerance": f"join_tolerance = {{}} (in {units}) in {where}",
             "units": 'units = "{}" at the top of the shape file'}
    with options_named(hints):
        prof = read_section(target, None, **options)
    if not prof.unit_stated:  # the drawing does not say: its numbers are the shape file's
        return prof.with_units(units)
    if prof.units != units:  # a drawing with its own unit header: converted
        factor = LENGTH_UNITS[prof.units] / LENGTH_UNITS[units]
        prof = prof.scaled(factor).with_units(units)
    return prof


def load_shapefile(path, units: str | None = None) -> ShapeFile:
    """Read a shape file into a :class:`ShapeFile` (profile, title, settings).

    Parameters
    ----------
    path : path-like
    units : str, optional
        Length unit to assume when the file has no ``units`` key (default mm).
    """
    path = Path(path)
    return shapefile_from_document(_load_toml(path), path, units)


def shapefile_from_document(doc: dict, path, units: str | None = None) -> ShapeFile:
    """Build a :class:`ShapeFile` from an already parsed TOML document.

    ``path`` names the file in messages and is the base of relative ``file``
    references.  Used by :func:`load_shapefile` and by parameter sweeps, which
    change dimensions in the document before building.
    """
    path = Path(path)
    where = str(path)
    if "segment" in doc:
        raise InputError("is a shaft file (it has [[segment]] tables), not a section",
                         where=where, fix=f"run 'soapfilm shaft {path}'")
    for k in doc:
        if k not in TOP_KEYS:
            raise _unknown(k, TOP_KEYS, f"{where} (top level)")
    title = doc.get("title", "")
    if not isinstance(title, str):
        raise InputError(f"title must be text, got {title!r}", where=where,
                         fix='write title = "..."')
    file_units = doc.get("units")
    if file_units is not None and not isinstance(file_units, str):
        raise InputError(f"units must be a unit name in quotes, got {file_units!r}",
                         where=f"{where} units",
                         fix=f'write e.g. units = "mm" (one of {", ".join(LENGTH_UNITS)})')
    if file_units is not None and file_units not in LENGTH_UNITS:
        raise InputError(f"unknown length unit {file_units!r}", where=f"{where} units",
                         fix=suggest(file_units, LENGTH_UNITS))
    u = file_units or units or "mm"
    if units is not None and u not in LENGTH_UNITS:
        raise InputError(f"unknown length unit {units!r}", where="--units",
                         fix=f"use one of {', '.join(LENGTH_UNITS)}")
    settings = _settings(doc, where)
    chord = settings.get("chord")
    has_section, has_parts = "section" in doc, "part" in doc
    if has_section == has_parts:
        raise InputError("give either one [section] table or a list of [[part]] tables"
                         if has_section else "no [section] or [[part]] table", where=where,
                         fix="describe the section, e.g. [section] kind = \"round\" diameter = 40")
    base = path.parent
    if has_section:
        if not isinstance(doc["section"], dict):
            raise InputError("section must be a table [section]", where=where,
                             fix='write [section] on a line of its own, its keys below it, '
                                 'e.g. kind = "round"')
        prof = _part(doc["section"], f"{where} [section]", base, u, chord, composite=False)
    else:
        parts = doc["part"]
        if not isinstance(parts, list) or not parts:
            raise InputError("part must be a list of [[part]] tables", where=where,
                             fix='write [[part]] on a line of its own before each part\'s keys, '
                                 'e.g. kind = "round"')
        geom: Polygon | None = None
        used: list[Profile] = []
        for i, tab in enumerate(parts, start=1):
            at = f"{where} [[part]] {i}"
            action = tab.get("action", "add") if isinstance(tab, dict) else "add"
            if action not in ("add", "cut"):
                raise InputError(f"action = {action!r} is not known", where=at,
                                 fix=suggest(action, ("add", "cut")))
            if i == 1 and action == "cut":
                raise InputError("the first part cannot be a cut", where=at,
                                 fix="start with the part the others are added to or cut from")
            part = _part(tab, at, base, u, chord, composite=True)
            used.append(part)
            poly = part.polygon
            geom = poly if geom is None else (
                geom.union(poly) if action == "add" else geom.difference(poly))
        if geom.is_empty:
            raise InputError("the cuts remove the whole section", where=where)
        if geom.geom_type == "MultiPolygon":
            raise InputError(f"the parts make {len(geom.geoms)} separate pieces", where=where,
                             fix="a bar section must be one connected region: let parts overlap")
        try:
            prof = combined(geom, used, "composition", u)
        except InputError as exc:
            raise InputError(f"the combined parts: {exc.what}", where=where, fix=exc.fix) from None
    name = title or path.stem
    notes = tuple(prof.notes) if has_section else tuple(n for part in used for n in part.notes)
    final = Profile.from_loops(prof.loops, units=u, name=name, curves=prof.curves,
                               edge_curves=prof.edge_curves)
    final = dataclasses.replace(final, notes=notes,
                                unit_stated=file_units is not None or units is not None)
    return ShapeFile(profile=final,
                     title=title, settings=settings, path=path)


@register(".toml")
def read_shapefile(path: Path, units: str | None = None) -> Profile:
    """Reader for ``.toml`` shape files (the profile only; see :func:`load_shapefile`)."""
    return load_shapefile(path, units).profile


def settings_for(path) -> dict:
    """[mesh] and [solve] settings of a shape file; ``{}`` for any other input."""
    path = Path(path)
    if path.suffix.lower() != ".toml" or not path.is_file():
        return {}
    return _settings(_load_toml(path), str(path))
