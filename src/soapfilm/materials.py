"""Material presets and the allowable shear stress.

Presets live in ``data/materials.toml`` with a source and a status for
every value; :func:`material` looks one up by name (with aliases and a
close-match suggestion), and :meth:`Material.overridden` applies the user's
own values.  :func:`allowable_shear` turns a yield strength into an
allowable shear stress with a named criterion and a safety factor.

All values are SI base units (Pa).
"""

from __future__ import annotations

import difflib
import functools
import math
import tomllib
from dataclasses import dataclass, replace
from importlib import resources

from .errors import InputError
from .units import parse_quantity

__all__ = [
    "Material",
    "Allowable",
    "CRITERIA",
    "material",
    "presets",
    "allowable_shear",
    "normalised_name",
]


@dataclass(frozen=True)
class Material:
    """Elastic and strength data of a shaft material.

    Attributes
    ----------
    key : str
        Preset key (``"carbon-steel"``) or ``"user"``.
    label : str
        Name shown in reports.
    shear_modulus : float
        G in Pa.
    yield_strength : float or None
        Tensile yield strength Sy in Pa (None: none known, e.g. grey iron).
    shear_modulus_note, yield_strength_note : str
        Where each value comes from, shown beside it.
    elastic_modulus : float or None
        Young's modulus E in Pa (members in non-uniform torsion need E Gamma);
        None where no value is recorded.
    elastic_modulus_note : str
        Where E comes from.
    """

    key: str
    label: str
    shear_modulus: float
    yield_strength: float | None = None
    shear_modulus_note: str = ""
    yield_strength_note: str = ""
    elastic_modulus: float | None = None
    elastic_modulus_note: str = ""

    def overridden(
        self,
        shear_modulus: float | None = None,
        yield_strength: float | None = None,
        where: str = "user value",
    ) -> Material:
        """Return a copy with the user's values in place of the preset's."""
        out = self
        if shear_modulus is not None:
            out = replace(out, shear_modulus=shear_modulus, shear_modulus_note=where)
        if yield_strength is not None:
            out = replace(out, yield_strength=yield_strength, yield_strength_note=where)
        return out


def normalised_name(name: str) -> str:
    """``"Carbon steel"`` -> ``"carbon-steel"``."""
    return "-".join(str(name).strip().lower().replace("_", " ").replace("-", " ").split())


@functools.lru_cache(maxsize=1)
def _raw_presets() -> dict:
    text = resources.files("soapfilm").joinpath("data/materials.toml").read_text("utf-8")
    return tomllib.loads(text)


@functools.cache
def presets() -> dict[str, Material]:
    """All presets by key, values parsed to SI."""
    out = {}
    for key, d in _raw_presets().items():
        where = f"materials.toml [{key}]"
        g = parse_quantity(d["shear_modulus"], "modulus", f"{where} shear_modulus")
        sy = d.get("yield_strength")
        sy = None if sy is None else parse_quantity(sy, "stress", f"{where} yield_strength")
        g_note = f"{d['shear_modulus_source']} [{d['shear_modulus_status']}]"
        if sy is None:
            y_note = d.get("yield_strength_note", "not given")
        else:
            y_note = (f"{d['yield_strength_grade']}: {d['yield_strength_source']} "
                      f"[{d['yield_strength_status']}]")
        e = d.get("elastic_modulus")
        e_note = "" if e is None else f"{d['elastic_modulus_source']} [{d['elastic_modulus_status']}]"
        e = None if e is None else parse_quantity(e, "modulus", f"{where} elastic_modulus")
        out[key] = Material(key, d["label"], g, sy, g_note, y_note, e, e_note)
    return out


def _aliases() -> dict[str, str]:
    table = {}
    for key, d in _raw_presets().items():
        table[key] = key
        for a in d.get("aliases", ()):
            table[normalised_name(a)] = key
    return table


def material(name: str, where: str = "--material") -> Material:
    """Look up a preset by name or alias; unknown names suggest a close match.

    Raises
    ------
    InputError
        Unknown name, with the closest preset names.
    """
    table = _aliases()
    key = table.get(normalised_name(name))
    if key is None:
        close = difflib.get_close_matches(normalised_name(name), list(table), n=1, cutoff=0.6)
        fix = f"did you mean {table[close[0]]!r}?" if close else ""
        fix = (fix + " " if fix else "") + f"presets: {', '.join(presets())}"
        raise InputError(f"unknown material {name!r}", where=where,
                         fix=fix + "; or give the shear modulus yourself")
    return presets()[key]


#: criterion key -> (factor on Sy, name, source)
CRITERIA: dict[str, tuple[float, str, str]] = {
    "von-mises": (
        1.0 / math.sqrt(3.0),
        "distortion energy (von Mises): shear yield = Sy/sqrt(3) = 0.577 Sy",
        "Shigley, Mechanical Engineering Design, ch. 5 (failure theories for ductile materials)",
    ),
    "tresca": (
        0.5,
        "maximum shear stress (Tresca): shear yield = 0.5 Sy",
        "Shigley, Mechanical Engineering Design, ch. 5 (from memory)",
    ),
}
_CRITERION_ALIASES = {
    "von-mises": "von-mises", "vonmises": "von-mises", "mises": "von-mises",
    "distortion-energy": "von-mises", "de": "von-mises",
    "tresca": "tresca", "maximum-shear-stress": "tresca", "max-shear": "tresca", "mss": "tresca",
}


@dataclass(frozen=True)
class Allowable:
    """An allowable shear stress and how it was obtained.

    Attributes
    ----------
    value : float
        Allowable shear stress in Pa.
    basis : str
        One line saying how: ``"given"`` or ``"Sy = ... with ... / n"``.
    criterion : str or None
        Criterion key when derived from a yield strength.
    source : str
        Reference for the criterion (empty when given directly).
    """

    value: float
    basis: str
    criterion: str | None = None
    source: str = ""
    yield_strength: float | None = None
    safety_factor: float | None = None


def criterion_key(name: str, where: str = "--criterion") -> str:
    key = _CRITERION_ALIASES.get(normalised_name(name))
    if key is None:
        raise InputError(f"unknown criterion {name!r}", where=where,
                         fix="use 'von-mises' (distortion energy) or 'tresca' (maximum shear)")
    return key


def allowable_shear(
    yield_strength: float, criterion: str = "von-mises", safety_factor: float = 1.0,
    yield_note: str = "",
) -> Allowable:
    """Allowable shear stress from a tensile yield strength.

    ``tau_allow = c * Sy / n`` with ``c = 1/sqrt(3)`` (distortion energy) or
    ``c = 0.5`` (maximum shear stress).

    References
    ----------
    Shigley, Mechanical Engineering Design, ch. 5: failure theories for
    ductile materials under static load.
    """
    key = criterion_key(criterion)
    factor, name, source = CRITERIA[key]
    if not (safety_factor > 0 and math.isfinite(safety_factor)):
        raise InputError(f"must be a positive number, got {safety_factor}",
                         where="safety factor")
    value = factor * yield_strength / safety_factor
    basis = f"{name}, safety factor {safety_factor:g}"
    if yield_note:
        basis += f"; Sy from {yield_note}"
    return Allowable(value, basis, key, source, yield_strength, safety_factor)
