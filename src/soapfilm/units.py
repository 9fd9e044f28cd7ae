"""Physical quantities with units, for the shaft checks.

Quantities are written as text with their unit (``"250 N*m"``, ``"1.2 m"``,
``"79.3 GPa"``, ``"1800 lbf*in"``, ``"36 ksi"``, ``"0.25 deg/m"``), parsed
with pint, checked against the kind of quantity expected there, and handed
to the mechanics as plain floats in SI base units (m, N*m, Pa, rad).

Display goes the other way: a :class:`UnitSystem` names the unit each kind
of quantity is shown in (``SI``: mm, N*m, MPa, deg; ``US``: in, lbf*in, ksi,
deg), and :meth:`UnitSystem.fmt` gives ``"123.4 MPa"``.

References
----------
Conversion factors are pint's definitions; the tests compare them with
NIST Special Publication 811 (2008), Appendix B.
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass

from .errors import InputError

__all__ = [
    "BARE_UNITS",
    "DrawingLength",
    "parse_drawing_length",
    "KINDS",
    "UnitSystem",
    "SYSTEMS",
    "parse_quantity",
    "parse_number",
    "registry",
    "unit_system",
]

#: kind of quantity -> (pint dimensionality string, SI base unit, example for messages)
KINDS: dict[str, tuple[str, str, str]] = {
    "length": ("[length]", "m", '"60 mm" or "2.5 in"'),
    "torque": ("[mass] * [length] ** 2 / [time] ** 2", "N*m", '"250 N*m" or "1800 lbf*in"'),
    "stress": ("[mass] / [length] / [time] ** 2", "Pa", '"120 MPa" or "36 ksi"'),
    "modulus": ("[mass] / [length] / [time] ** 2", "Pa", '"79.3 GPa" or "11.5e6 psi"'),
    "angle": ("", "rad", '"1.5 deg" or "0.02 rad"'),
    "twist_rate": ("1 / [length]", "rad/m", '"0.25 deg/m" or "0.08 deg/ft"'),
    "stiffness": ("[mass] * [length] ** 2 / [time] ** 2", "N*m/rad", '"5e4 N*m/rad"'),
}

#: The one rule for bare numbers: a physical value given without a unit (on the
#: command line or in a shaft file) is in this unit.  Lengths that belong to a
#: drawing (mesh size, join tolerance) are the exception, stated in their help:
#: a bare number there is in the drawing's own length unit (:class:`DrawingLength`).
BARE_UNITS: dict[str, str] = {
    "length": "mm",
    "torque": "N*m",
    "stress": "MPa",
    "modulus": "GPa",
    "angle": "deg",
    "twist_rate": "deg/m",
    "stiffness": "N*m/rad",
}

_NAMES = {
    "length": "a length",
    "torque": "a torque",
    "stress": "a stress",
    "modulus": "a shear modulus (a stress unit)",
    "angle": "an angle",
    "twist_rate": "a twist per length (angle / length)",
    "stiffness": "a torsional stiffness (torque / angle)",
}


@functools.lru_cache(maxsize=1)
def registry():
    """The shared pint UnitRegistry (built on first use; pint takes ~0.4 s)."""
    import pint

    return pint.UnitRegistry()


@functools.cache
def _dimensionality(kind: str):
    ureg = registry()
    dim = KINDS[kind][0]
    return ureg.Quantity(1).dimensionality if not dim else ureg.get_dimensionality(dim)


def _describe(dim, unitless: bool = True) -> str:
    """Name a pint dimensionality in words, for error messages."""
    for kind in ("length", "torque", "stress", "twist_rate"):
        if dim == _dimensionality(kind):
            return _NAMES[kind].split(" (")[0]
    if not dim:
        return "a plain number" if unitless else "an angle (or another pure number)"
    return f"a quantity of dimension {dim}"


# "250 Nm" would be read by pint as "number-metres": make it newton-metres.
_NM = re.compile(r"(?<![A-Za-z])(k|M)?Nm(m?)(?![A-Za-z])")
# "lbf-in", "N-m": a hyphen between two letters is a product.
_HYPHEN = re.compile(r"(?<=[A-Za-z])-(?=[A-Za-z])")


def _normalised(text: str) -> str:
    text = text.strip().replace("·", "*").replace("⋅", "*").replace("×", "*")
    text = text.replace("°", " deg")
    text = _NM.sub(lambda m: f"{m.group(1) or ''}N*{'mm' if m.group(2) else 'm'}", text)
    return _HYPHEN.sub("*", text)


def _bare_number(value) -> float | None:
    """The number when ``value`` is a plain number or text holding only one."""
    if isinstance(value, bool):
        return None
    if isinstance(value, int | float):
        return float(value)
    if isinstance(value, str):
        try:
            return float(value.strip())
        except ValueError:
            return None
    return None


def parse_quantity(value, kind: str, where: str, bare: str | None = "default") -> float:
    """Parse a quantity with its unit and return it in SI base units.

    Parameters
    ----------
    value : str or number
        Text such as ``"250 N*m"``.  A bare number (``250`` or ``"250"``) is in
        the unit ``bare`` names: by default :data:`BARE_UNITS` of the kind
        (the rule the command line documents), None refuses it.
    kind : str
        One of :data:`KINDS`: the dimension expected at this place.
    where : str
        The option or file key, named in error messages.

    Returns
    -------
    float
        Value in m, N*m, Pa, rad, rad/m or N*m/rad.

    Raises
    ------
    InputError
        Missing unit, unknown unit, or the wrong dimension (a length where
        a torque is expected...).

    Examples
    --------
    >>> parse_quantity("1800 lbf*in", "torque", "--torque")  # doctest: +ELLIPSIS
    203.372...
    >>> parse_quantity("36 ksi", "stress", "--yield")  # doctest: +ELLIPSIS
    248211262.5...
    """
    if kind not in KINDS:
        raise ValueError(f"unknown quantity kind {kind!r}")
    example = KINDS[kind][2]
    number = _bare_number(value)
    if number is not None and bare is not None:
        unit = BARE_UNITS[kind] if bare == "default" else bare
        if not math.isfinite(number):
            raise InputError(f"{value!r} is not a finite value", where=where)
        return parse_quantity(f"{number!r} {unit}", kind, where, bare=None)
    if isinstance(value, bool) or isinstance(value, int | float):
        if kind == "angle":
            raise InputError(f"{value!r} has no unit", where=where,
                             fix=f"write the unit, e.g. {example}")
        quotes = "" if where.startswith("--") else " in quotes"
        raise InputError(f"{value!r} has no unit", where=where,
                         fix=f"write {_NAMES[kind]} with its unit{quotes}, e.g. {example}")
    if not isinstance(value, str):
        raise InputError(f"expected {_NAMES[kind]} as text with a unit, got {value!r}",
                         where=where, fix=f"e.g. {example}")
    import pint

    ureg = registry()
    text = _normalised(value)
    if not text:
        raise InputError("is empty", where=where, fix=f"give {_NAMES[kind]}, e.g. {example}")
    try:
        q = ureg.Quantity(text)
    except pint.errors.UndefinedUnitError as exc:
        raise InputError(f"unknown unit {str(exc.unit_names[0] if exc.unit_names else exc)!r} "
                         f"in {value!r}", where=where, fix=f"e.g. {example}") from None
    except Exception:  # pint raises several parser errors
        raise InputError(f"cannot read {value!r} as {_NAMES[kind]}", where=where,
                         fix=f"write a number and a unit, e.g. {example}") from None
    if not isinstance(q, ureg.Quantity):  # a bare number given as text
        q = ureg.Quantity(q)
    dim = q.dimensionality
    want = _dimensionality(kind)
    if kind == "angle" and not dim and q.unitless:
        raise InputError(f"{value!r} has no unit", where=where, fix=f"e.g. {example}")
    if dim != want:
        if not dim and q.unitless:
            raise InputError(f"{value!r} has no unit", where=where,
                             fix=f"write {_NAMES[kind]} with its unit, e.g. {example}")
        hint = f"e.g. {example}"
        if "lb" in text and "lbf" not in text and kind in ("torque", "stress", "modulus"):
            hint = "write lbf (pound-force) for forces, e.g. \"1800 lbf*in\""
        raise InputError(
            f"{value!r} is {_describe(dim, q.unitless)}, but {_NAMES[kind]} is expected here",
            where=where, fix=hint,
        )
    mag = float(q.to(KINDS[kind][1].replace("rad", "radian")).magnitude)
    if not math.isfinite(mag):
        raise InputError(f"{value!r} is not a finite value", where=where)
    return mag


def parse_number(value, where: str, positive: bool = True) -> float:
    """A plain number (e.g. a safety factor) from text or a number."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"expected a plain number, got {value!r}", where=where) from None
    if not math.isfinite(x) or (positive and x <= 0):
        raise InputError(f"must be a positive number, got {value!r}", where=where)
    return x


@dataclass(frozen=True)
class UnitSystem:
    """Display units for each kind of quantity.

    Attributes
    ----------
    name : str
        ``"SI"`` or ``"US"``.
    units : dict
        kind -> (unit label shown, factor: SI value / factor = shown value).
    """

    name: str
    units: dict

    def value(self, si: float, kind: str) -> float:
        """Convert an SI base value to the display unit of ``kind``."""
        return si / self.units[kind][1]

    def unit(self, kind: str) -> str:
        return self.units[kind][0]

    def fmt(self, si: float | None, kind: str, digits: int = 4) -> str:
        """``"123.4 MPa"``: the value in the display unit, with the unit."""
        if si is None:
            return "-"
        v = self.value(si, kind)
        label = self.unit(kind)
        text = _number(v, digits)
        return f"{text} {label}" if label else text


def _number(v: float, digits: int) -> str:
    """``digits`` significant figures, fixed notation from 1e-3 to 1e7, else exponent."""
    if v == 0 or not math.isfinite(v):
        return f"{v:g}"
    mag = math.floor(math.log10(abs(v)))
    if -3 <= mag < 7:
        text = f"{v:.{max(0, digits - 1 - mag)}f}"
        return text.rstrip("0").rstrip(".") if "." in text else text
    return f"{v:.{digits - 1}e}"


_DEG = math.pi / 180.0
_IN = 0.0254
_LBF = 4.4482216152605  # N, exact by definition of the pound (NIST SP 811, B.8)

#: Display systems.  Factors are exact definitions (inch 0.0254 m; pound-force
#: 0.45359237 kg x 9.80665 m/s^2).
SYSTEMS: dict[str, UnitSystem] = {
    "SI": UnitSystem("SI", {
        "length": ("mm", 1e-3),
        "position": ("mm", 1e-3),
        "torque": ("N*m", 1.0),
        "stress": ("MPa", 1e6),
        "modulus": ("GPa", 1e9),
        "angle": ("deg", _DEG),
        "twist_rate": ("deg/m", _DEG),
        "stiffness": ("N*m/deg", 1.0 / _DEG),
        "J": ("mm^4", 1e-12),
        "Wt": ("mm^3", 1e-9),
        "area": ("mm^2", 1e-6),
        "per_torque": ("1/mm^3", 1e9),
        "ratio": ("", 1.0),
    }),
    "US": UnitSystem("US", {
        "length": ("in", _IN),
        "position": ("in", _IN),
        "torque": ("lbf*in", _LBF * _IN),
        "stress": ("ksi", 1000.0 * _LBF / _IN**2),
        "modulus": ("Mpsi", 1e6 * _LBF / _IN**2),
        "angle": ("deg", _DEG),
        "twist_rate": ("deg/ft", _DEG / 0.3048),
        "stiffness": ("lbf*in/deg", _LBF * _IN / _DEG),
        "J": ("in^4", _IN**4),
        "Wt": ("in^3", _IN**3),
        "area": ("in^2", _IN**2),
        "per_torque": ("1/in^3", 1.0 / _IN**3),
        "ratio": ("", 1.0),
    }),
}


def unit_system(name: str, where: str = "--unit-system") -> UnitSystem:
    """Look up a display system by name (case-insensitive)."""
    key = str(name).strip().upper()
    if key not in SYSTEMS:
        raise InputError(f"unknown unit system {name!r}", where=where,
                         fix=f"use one of {', '.join(SYSTEMS)}")
    return SYSTEMS[key]


def parse_positive(value, kind: str, where: str) -> float | None:
    """:func:`parse_quantity` for a value that must be above zero; None passes through."""
    if value is None:
        return None
    q = parse_quantity(value, kind, where)
    if not q > 0:
        raise InputError(f"must be positive, got {value!r}", where=where)
    return q


@dataclass(frozen=True)
class DrawingLength:
    """A length that belongs to a drawing: given with a unit, or bare in the drawing's unit.

    Mesh sizes and join tolerances are typed before the drawing is read, so
    their unit may only be known later: ``metres`` holds a value given with a
    unit, ``bare`` a number meant in whatever unit the section turns out to use.
    """

    metres: float | None = None
    bare: float | None = None
    text: str = ""

    def in_unit(self, unit: str, metres_per_unit: float | None = None) -> float:
        """The length in ``unit`` (a key of LENGTH_UNITS), or per ``metres_per_unit``."""
        if self.bare is not None:
            return self.bare
        from .defaults import LENGTH_UNITS

        scale = LENGTH_UNITS[unit] if metres_per_unit is None else metres_per_unit
        return self.metres / scale

    def __str__(self) -> str:
        return self.text or (f"{self.bare:g}" if self.bare is not None else f"{self.metres:g} m")


def parse_drawing_length(value, where: str) -> DrawingLength | None:
    """``"0.5 mm"`` or a bare ``0.5`` (the drawing's unit) -> :class:`DrawingLength`; None passes."""
    if value is None or isinstance(value, DrawingLength):
        return value
    number = _bare_number(value)
    if number is not None:
        if not (math.isfinite(number) and number > 0):
            raise InputError(f"must be a positive length, got {value!r}", where=where)
        return DrawingLength(bare=number, text=str(value).strip())
    metres = parse_quantity(value, "length", where, bare=None)
    if not metres > 0:
        raise InputError(f"must be a positive length, got {value!r}", where=where)
    return DrawingLength(metres=metres, text=str(value).strip())
