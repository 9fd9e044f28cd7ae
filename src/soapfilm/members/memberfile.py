"""Member files (TOML) -> :class:`~soapfilm.members.member.MemberModel`.

A member file is a shaft file (:mod:`soapfilm.members.shaftfile`: segments with
their sections and materials, ``[check]``, ``[materials.*]``, ``[[load]]``,
``twist_limit``, ``section_units``; the same keys, units and allowables) with
what non-uniform torsion adds:

- ``elastic_modulus`` (E) in ``[materials.NAME]`` and in a ``[[segment]]``
  (else the material preset's);
- ``distributed_torque`` in a ``[[segment]]``: a uniform torque per length
  along it, e.g. ``"150 N*m/m"`` (bare: N*m/m);
- ``[[support]]`` tables with ``at`` and two conditions, ``twist`` and
  ``warping``, each ``"held"`` or ``"free"`` (defaults: twist held, warping
  free: a fork support).  A support may share its place with a load; an end
  with no support is free in both.

The shaft file's ``twist_rule`` has no meaning here (the twist is checked
between neighbouring stations, largest minus smallest rotation) and is refused.
"""

from __future__ import annotations

import copy
from pathlib import Path

from ..errors import InputError
from .member import MemberModel, MemberSegment, MemberSupport
from .shaftfile import (
    _QUANTITY,
    _TEXT,
    CheckOptions,
    SectionSource,
    _check_keys,
    _label,
    _q,
    _table_list,
    load_toml,
    shaft_from_dict,
)

__all__ = ["read_member", "member_from_dict", "CONDITIONS"]

#: the words a support's twist and warping take
CONDITIONS = {"held": True, "free": False}
_SUPPORT_KEYS = {"name": _TEXT, "at": _QUANTITY, "twist": _TEXT, "warping": _TEXT}


def read_member(path, options: CheckOptions | None = None,
                sections: SectionSource | None = None,
                elastic_modulus: float | None = None) -> MemberModel:
    """Read a member file; ``elastic_modulus`` (Pa, --elastic-modulus) wins over the file's."""
    path = Path(path)
    return member_from_dict(load_toml(path, "member file"), path.parent, str(path), options,
                            sections, elastic_modulus)


def _condition(table: dict, key: str, default: str, where: str) -> bool:
    word = table.get(key, default)
    if word not in CONDITIONS:
        raise InputError(f"unknown {key} condition {word!r}", where=f"{where} key '{key}'",
                         fix=f'write {key} = "held" or {key} = "free"')
    return CONDITIONS[word]


def member_from_dict(data: dict, base: Path, where: str, options: CheckOptions | None = None,
                     sections: SectionSource | None = None,
                     elastic_modulus: float | None = None) -> MemberModel:
    """Build a :class:`MemberModel` from the parsed TOML of a member file."""
    if not isinstance(data, dict):
        raise InputError("is not a member file", where=where)
    if "twist_rule" in data:
        raise InputError("'twist_rule' is a shaft-file key", where=f"{where} key 'twist_rule'",
                         fix="a member's twist is checked between neighbouring stations; drop it")
    data = copy.deepcopy(data)
    # what the member adds, taken out before the shaft-file reader sees the rest
    mats = data.get("materials", {})
    mat_e = {}
    if isinstance(mats, dict):
        for key, m in mats.items():
            if isinstance(m, dict) and "elastic_modulus" in m:
                mw = f"{where} [materials.{key}]"
                mat_e[key] = _q(m, "elastic_modulus", "modulus", mw)
                del m["elastic_modulus"]
    seg_tables = data.get("segment", [])
    seg_extra = []
    if isinstance(seg_tables, list):
        for i, s in enumerate(seg_tables):
            extra = {}
            if isinstance(s, dict):
                sw = f"{where}: {_label('segment', i, s)}"
                if "elastic_modulus" in s:
                    extra["e"] = _q(s, "elastic_modulus", "modulus", sw)
                    del s["elastic_modulus"]
                if "distributed_torque" in s:
                    extra["m"] = _q(s, "distributed_torque", "torque_per_length", sw, sign="any")
                    del s["distributed_torque"]
            seg_extra.append(extra)
    support_tables = _table_list(data, "support", where)
    data.pop("support", None)
    if sections is None:  # a member uses its sections' warping shear
        sections = SectionSource(warping_shear=True)
    shaft = shaft_from_dict(data, base, where, options, sections, require_loads=False,
                            noun="member")

    user_mats = data.get("materials", {}) if isinstance(data.get("materials"), dict) else {}
    segments = []
    for i, (s, extra) in enumerate(zip(shaft.segments, seg_extra, strict=True)):
        sw = f"{where}: {_label('segment', i, seg_tables[i])}"
        mat = s.material
        if elastic_modulus is not None:
            e, note = elastic_modulus, "given with --elastic-modulus"
        elif "e" in extra:
            e, note = extra["e"], "given for the segment"
        elif mat.key in mat_e:
            e, note = mat_e[mat.key], f"member file [materials.{mat.key}]"
        else:
            preset = mat
            based = user_mats.get(mat.key, {}).get("based_on") if mat.key in user_mats else None
            if based is not None:
                from ..materials import material

                preset = material(based, f"{where} [materials.{mat.key}] key 'based_on'")
            elif mat.key in user_mats:
                preset = None
            e = None if preset is None else preset.elastic_modulus
            note = "" if preset is None else preset.elastic_modulus_note
            if e is None:
                raise InputError("no elastic modulus E for the segment's material", where=sw,
                                 fix='give elastic_modulus = "210 GPa" in the segment or its '
                                     "[materials.*] table, or --elastic-modulus")
        segments.append(MemberSegment(s.name, s.length, s.section, mat, e, note, s.allowable,
                                      extra.get("m", 0.0)))

    total = shaft.length
    tol = 1e-6 * total
    supports = []
    for i, sp in enumerate(support_tables):
        pw = f"{where}: {_label('support', i, sp)}"
        _check_keys(sp, _SUPPORT_KEYS, pw)
        x = _q(sp, "at", "length", pw, sign="any")
        if x < -tol or x > total + tol:
            raise InputError(
                f"position {x * 1e3:g} mm is off the member (0 to {total * 1e3:g} mm)",
                where=f"{pw} key 'at'", fix="positions are measured from the left end, x = 0")
        x = min(max(x, 0.0), total)
        for other in supports:
            if abs(other.position - x) <= tol:
                raise InputError(f"a second support at x = {x * 1e3:g} mm ({other.name!r} is "
                                 "there)", where=pw,
                                 fix="give one support per place with both its conditions")
        supports.append(MemberSupport(sp.get("name", f"support {i + 1}"), x,
                                      _condition(sp, "twist", "held", pw),
                                      _condition(sp, "warping", "free", pw)))
    if not supports:
        raise InputError("no supports", where=where,
                         fix='add [[support]] tables (at = ..., twist = "held", warping = '
                             '"held" or "free")')
    if not shaft.loads and not any(s.distributed_torque for s in segments):
        raise InputError("no loads", where=where,
                         fix="add [[load]] tables or a segment's distributed_torque")
    return MemberModel(name=shaft.name, segments=tuple(segments), loads=shaft.loads,
                       supports=tuple(supports), twist_limit=shaft.twist_limit,
                       twist_limit_note=shaft.twist_limit_note,
                       twist_basis=shaft.twist_basis)
