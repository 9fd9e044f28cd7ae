"""Physical quantities with units, for the shaft checks.

Quantities are written as text with their unit (``"250 N*m"``, ``"1.2 m"``,
``"79.3 GPa"``, ``"1800 lbf*in"``, ``"36 ksi"``, ``"0.25 deg/m"``), read by a
small grammar of our own (a number, then unit names joined by ``*``, ``/``
and small whole powers; pint only supplies the units and never evaluates the
text), checked against the kind of quantity expected there and against a
plausible range (:data:`PLAUSIBLE`), and handed to the mechanics as plain
floats in SI base units (m, N*m, Pa, rad).

Signs: a torque keeps its sign (its sense along the bar: shaft loads, and
``check --torque``, whose verdict depends on the magnitude only); a size, a
modulus, a stress or a limit must be above zero; ``solve --torque`` scales a
picture of stress magnitudes and takes a magnitude only (see
:func:`soapfilm.stress_units.shear_scale`).

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
    "parse_positive",
    "per_length",
    "PLAUSIBLE",
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
    "torque_per_length": ("[mass] * [length] / [time] ** 2", "N*m/m",
                          '"150 N*m/m" or "30 lbf*in/in"'),
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
    "torque_per_length": "N*m/m",
}

_NAMES = {
    "length": "a length",
    "torque": "a torque",
    "stress": "a stress",
    "modulus": "a shear modulus (a stress unit)",
    "angle": "an angle",
    "twist_rate": "a twist per length (angle / length)",
    "stiffness": "a torsional stiffness (torque / angle)",
    "torque_per_length": "a distributed torque (torque / length)",
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
    if dim == registry().get_dimensionality("newton"):  # "1 kN" for a torque: the lever is missing
        return "a force (a torque is a force times its lever arm)"
    return f"a quantity of dimension {dim}"


# ----------------------------------------------------------------------------- the grammar
# Quantities are read by a small grammar of our own; pint only looks up unit names
# and multiplies the results.  No user text is ever evaluated as arithmetic (pint's
# own parser would compute "9**9**9 N*m" or "2**1024 N*m"):
#
#     quantity := [sign] NUMBER [unit]
#     unit     := power (("*" | "/" | " ") power)*
#     power    := atom [("^" | "**") [sign] DIGITS]        (|exponent| <= _MAX_POWER)
#     atom     := NAME | "(" unit ")" | NUMBER             (a NUMBER only inside brackets)
#
# NUMBER is a decimal with an optional exponent (250, 1.2, .5, 11.5e6), never raised to
# a power; numbers inside a unit stand in brackets, for a rate written per a length:
# "1 deg/(800 mm)", "1 deg/(20*40 mm)".  The text is at most _MAX_TEXT characters, so
# what is computed is a short product of numbers and units.
# Spellings made regular first: "Nm"/"kNm"/"Nmm" (newton metres, not nanometres),
# "N·m", "N⋅m", "N×m", "N-m", "N.m" (a product), "°" (deg), "mm²" (mm^2), "−" (minus).

#: longest text read as a quantity (a number and a unit need far fewer characters)
_MAX_TEXT = 100
#: largest power a unit may be raised to (mm^4 is the largest any input needs)
_MAX_POWER = 6
#: deepest nesting of brackets
_MAX_DEPTH = 6

# "250 Nm" would be read by pint as "number-metres": make it newton-metres.
_NM = re.compile(r"(?<![A-Za-z])(k|M)?Nm(m?)(?![A-Za-z])")
# "lbf-in", "N-m", "N.m": a hyphen or a dot between two letters is a product.
_PRODUCT = re.compile(r"(?<=[A-Za-z])[-.](?=[A-Za-z])")
_SUPERSCRIPT = re.compile("⁻?[⁰¹²³⁴⁵⁶⁷⁸⁹]+")
_SUPERSCRIPT_DIGITS = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻", "0123456789-")
_TOKEN = re.compile(r"""\s*(?:
      (?P<num>(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)
    | (?P<name>[^\W\d]\w*)
    | (?P<op>\*\*|[*/^()+-])
    | (?P<bad>\S)
    )""", re.VERBOSE)

#: units whose spelling is easily mistyped in case ("MPA", "Kn"): named in the hint
_COMMON_UNITS = ("mm", "cm", "m", "km", "in", "ft", "N", "kN", "MN", "lbf", "kip", "Pa", "kPa",
                 "MPa", "GPa", "psi", "ksi", "Mpsi", "deg", "rad")


def _normalised(text: str) -> str:
    text = text.strip()
    for times in ("·", "⋅", "×"):
        text = text.replace(times, "*")
    text = text.replace("−", "-").replace("°", " deg ")
    text = _SUPERSCRIPT.sub(lambda m: "^" + m.group().translate(_SUPERSCRIPT_DIGITS), text)
    text = _NM.sub(lambda m: f"{m.group(1) or ''}N*{'mm' if m.group(2) else 'm'}", text)
    return _PRODUCT.sub("*", text).strip()


class _Syntax(Exception):
    """Text that does not follow the grammar; the message says what and where."""


class _Grammar:
    """Recursive-descent reader of the grammar above; builds a tree, computes nothing.

    Nodes: ``("num", float)``, ``("name", str)``, ``("mul"|"div", a, b)``,
    ``("pow", a, int)``.
    """

    def __init__(self, text: str):
        self.text = text
        self.tokens = [(m.lastgroup, m.group(m.lastgroup), m.start(m.lastgroup))
                       for m in _TOKEN.finditer(text) if m.lastgroup]
        self.i = 0

    def peek(self):
        return self.tokens[self.i] if self.i < len(self.tokens) else (None, "", len(self.text))

    def take(self):
        tok = self.peek()
        self.i += 1
        return tok

    def unexpected(self, tok, pos):
        before = self.text[:pos].strip()
        if not tok:
            raise _Syntax(f"it ends after {before[-12:]!r} where a unit is needed")
        where = f" after {before[-12:]!r}" if before else " at the start"
        raise _Syntax(f"unexpected {tok!r}{where}")

    def quantity(self):
        """(signed number, unit tree or None) of a whole quantity."""
        kind, tok, pos = self.peek()
        sign = 1.0
        if kind == "op" and tok in ("+", "-"):
            self.take()
            sign = -1.0 if tok == "-" else 1.0
            kind, tok, pos = self.peek()
        if kind != "num":
            raise _Syntax("it must start with a number" if kind else "there is no number")
        self.take()
        number = sign * float(tok)
        kind, tok, pos = self.peek()
        if kind is None:
            return number, None
        if kind == "op" and tok in ("**", "^", "*", "/"):
            raise _Syntax(f"{tok!r} after the number: no arithmetic, write the number in decimal "
                          "or e-notation (1e3, not 10**3)")
        unit = self.unit(0)
        kind, tok, pos = self.peek()
        if kind is not None:
            self.unexpected(tok, pos)
        return number, unit

    def unit(self, depth, node=None):
        if node is None:
            node = self.power(depth)
        while True:
            kind, tok, _ = self.peek()
            if kind == "op" and tok in ("*", "/"):
                self.take()
                node = ("mul" if tok == "*" else "div", node, self.power(depth))
            elif kind == "name" or (kind == "op" and tok == "("):  # "N m": a product
                node = ("mul", node, self.power(depth))
            else:
                return node

    def power(self, depth):
        node = self.atom(depth)
        kind, tok, _ = self.peek()
        if kind == "op" and tok in ("**", "^"):
            if node[0] == "num":
                raise _Syntax(f"{tok!r} after a number: no arithmetic, write the number in "
                              "decimal or e-notation (1e3, not 10**3)")
            self.take()
            node = ("pow", node, self.exponent())
            kind, tok, _ = self.peek()
            if kind == "op" and tok in ("**", "^"):
                raise _Syntax("one exponent per unit (no powers of powers)")
        return node

    def exponent(self) -> int:
        kind, tok, pos = self.take()
        sign = 1
        if kind == "op" and tok in ("+", "-"):
            sign = -1 if tok == "-" else 1
            kind, tok, pos = self.take()
        if kind != "num" or not (tok.isascii() and tok.isdigit()):
            raise _Syntax("an exponent is a whole number, e.g. mm^4")
        if len(tok) > 2 or int(tok) > _MAX_POWER:
            raise _Syntax(f"exponent {tok} is out of range (units take powers up to "
                          f"{_MAX_POWER})")
        return sign * int(tok)

    def atom(self, depth):
        kind, tok, pos = self.take()
        if kind == "name":
            return ("name", tok)
        if kind == "op" and tok == "(":
            if depth >= _MAX_DEPTH:
                raise _Syntax("too many brackets inside brackets")
            node = self.unit(depth + 1)
            kind, tok, pos = self.take()
            if kind is None:
                raise _Syntax("a '(' is not closed")
            if not (kind == "op" and tok == ")"):
                self.unexpected(tok, pos)
            return node
        if kind == "num" and depth > 0:
            return ("num", float(tok))
        if kind == "num":
            raise _Syntax(f"the number {tok!r} inside the unit: a number inside a unit goes in "
                          "brackets with its unit, e.g. 1 deg/(800 mm)")
        self.unexpected(tok, pos)


@functools.lru_cache(maxsize=256)
def _unit_named(name: str):
    """pint's Quantity of 1 of the unit ``name`` (an identifier: no arithmetic to evaluate)."""
    return registry().Quantity(1.0, name)


def _evaluate(node):
    """The tree's value: a pint Quantity, or a float for a bare number."""
    kind = node[0]
    if kind == "num":
        return node[1]
    if kind == "name":
        return _unit_named(node[1])
    a = _evaluate(node[1])
    if kind == "pow":
        out = a ** node[2]
    else:
        b = _evaluate(node[2])
        if kind == "div" and _magnitude(b) == 0:
            raise ZeroDivisionError
        out = a * b if kind == "mul" else a / b
    size = _magnitude(out)
    if not math.isfinite(size) or (size == 0 and _magnitude(a) != 0):  # over- or underflow
        raise OverflowError
    return out


def _magnitude(x) -> float:
    return abs(float(getattr(x, "magnitude", x)))


def _names(node):
    """The unit names of a tree, in order."""
    if node[0] == "name":
        yield node[1]
    elif node[0] != "num":
        yield from _names(node[1])
        if node[0] != "pow":
            yield from _names(node[2])


def _read(value: str, kind_words: str, where: str, example: str):
    """Text -> (signed number, pint Quantity of the unit or None); InputError if unreadable."""
    import pint

    if len(value) > _MAX_TEXT:
        raise InputError(f"is {len(value)} characters long, not {kind_words}", where=where,
                         fix=f"a number and its unit, e.g. {example}")
    text = _normalised(value)
    if not text:
        raise InputError("is empty", where=where, fix=f"give {kind_words}, e.g. {example}")
    try:
        number, node = _Grammar(text).quantity()
    except _Syntax as exc:
        raise InputError(f"cannot read {value!r} as {kind_words}: {exc}", where=where,
                         fix=f"write a number and a unit, e.g. {example}") from None
    if node is None:
        return number, None
    for name in _names(node):
        try:
            _unit_named(name)
        except pint.errors.UndefinedUnitError:
            close = [c for c in _COMMON_UNITS if c.lower() == name.lower()]
            fix = (f"did you mean {close[0]!r}? Units are case-sensitive" if close
                   else f"e.g. {example}")
            raise InputError(f"unknown unit {name!r} in {value!r}", where=where,
                             fix=fix) from None
        except Exception:  # pint refuses a name in another way
            raise InputError(f"cannot use the unit {name!r} in {value!r}", where=where,
                             fix=f"e.g. {example}") from None
    try:
        return number, _evaluate(node)
    except OverflowError:
        return math.inf, None
    except ZeroDivisionError:
        raise InputError(f"{value!r} divides by zero", where=where,
                         fix=f"e.g. {example}") from None
    except Exception:  # pint refuses the combination (offset units such as degC)
        raise InputError(f"cannot read {value!r} as {kind_words}", where=where,
                         fix=f"write a number and a unit, e.g. {example}") from None


def per_length(value) -> float | None:
    """The length (m) a rate is written per, or None.

    ``"0.25 deg/m"`` -> 1.0, ``"0.08 deg/ft"`` -> 0.3048, ``"1 deg/(800 mm)"``
    -> 0.8 (the last divisor of the unit, when it is a length), ``"0.25
    deg*m^-1"`` -> 1.0 (a length unit to the power -1); None for anything
    else, including text that is not a quantity (its own parse reports that).
    """
    if not isinstance(value, str) or len(value) > _MAX_TEXT:
        return None
    length = registry().get_dimensionality("[length]")
    try:
        _, node = _Grammar(_normalised(value)).quantity()
        if node is None:
            return None
        candidates = [node[2]] if node[0] == "div" else []
        stack = [node]
        while stack:
            n = stack.pop()
            if n[0] == "pow" and n[2] == -1 and n[1][0] == "name":
                candidates.append(n[1])
            elif n[0] in ("mul", "div"):
                stack += [n[1], n[2]]
        for n in candidates:
            q = _evaluate(n)
            if not isinstance(q, float) and q.dimensionality == length:
                metres = float(q.to("m").magnitude)
                if metres > 0 and math.isfinite(metres):
                    return metres
    except Exception:  # not a quantity: parse_quantity says why
        return None
    return None


# ----------------------------------------------------------------------------- values
#: What a value must lie within, per kind, in SI base units, and the range in words.
#: Values outside are typing or unit slips (1e-300 Pa, "1e300 N*m"): the mechanics
#: multiplies up to fourth powers of lengths by moduli and torques, and these bounds
#: keep every such product far inside the range of a float (1e-308 to 1e308).
#: Zero is let through here; whether a place takes zero or a sign is its own rule.
PLAUSIBLE: dict[str, tuple[float, float, str]] = {
    "length": (1e-9, 1e6, "1 nm to 1000 km"),
    "torque": (1e-9, 1e12, "1e-9 to 1e12 N*m"),
    "stress": (1.0, 1e13, "1 Pa to 1e7 MPa"),
    "modulus": (1.0, 1e13, "1 Pa to 1e4 GPa"),
    "angle": (1e-10 * math.pi / 180, 1e7 * math.pi / 180, "1e-10 to 1e7 deg"),
    "twist_rate": (1e-10 * math.pi / 180, 1e7 * math.pi / 180, "1e-10 to 1e7 deg/m"),
    "stiffness": (1e-9, 1e15, "1e-9 to 1e15 N*m/rad"),
    "torque_per_length": (1e-9, 1e12, "1e-9 to 1e12 N*m/m"),
}
#: the same for a bare length of a drawing (mesh size, join tolerance), in the drawing's unit
DRAWING_PLAUSIBLE = (1e-9, 1e9)

#: sign rules of :func:`parse_quantity`
SIGNS = ("any", "positive", "nonnegative")


def _bare_number(value) -> float | None:
    """The number when ``value`` is a plain number or text holding only one."""
    if isinstance(value, bool):
        return None
    if isinstance(value, int | float):
        try:
            return float(value)
        except OverflowError:  # a Python int beyond any float
            return math.inf if value > 0 else -math.inf
    if isinstance(value, str) and len(value) <= _MAX_TEXT:
        try:
            return float(value.strip().replace("−", "-"))
        except ValueError:
            return None
    return None


def _short_name(kind: str) -> str:
    return _NAMES[kind].split(" (")[0]


def _check_value(si: float, value, kind: str, where: str, sign: str) -> float:
    """Range and sign rules on a parsed value (SI); InputError naming the reason."""
    lo, hi, words = PLAUSIBLE[kind]
    if not (si == 0 or lo <= abs(si) <= hi):  # NaN and inf fail too
        raise InputError(
            f"{value!r} is outside the range soapfilm takes for {_short_name(kind)}, {words}",
            where=where, fix="check the number and its unit: values further out are typing or "
                             "unit slips, and would overflow the arithmetic")
    if sign != "any" and si < 0:
        raise InputError(f"{value!r} is negative, but {_short_name(kind)} here is a magnitude",
                         where=where, fix="give it without the minus sign")
    if sign == "positive" and si == 0:
        raise InputError(f"{value!r} is zero: {_short_name(kind)} above zero is needed here",
                         where=where)
    return si


def parse_quantity(value, kind: str, where: str, bare: str | None = "default",
                   sign: str = "any") -> float:
    """Parse a quantity with its unit and return it in SI base units.

    The text is read by the grammar above (a number, then a unit expression
    of unit names, ``*``, ``/``, ``^`` with small whole exponents and
    brackets); pint supplies the units, never evaluates the text.

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
    sign : {"any", "positive", "nonnegative"}
        ``"any"`` keeps the sign (a torque's sense); ``"positive"`` refuses
        zero and negatives (sizes, moduli, stresses, limits);
        ``"nonnegative"`` refuses negatives (a bore, a position).

    Returns
    -------
    float
        Value in m, N*m, Pa, rad, rad/m or N*m/rad, within :data:`PLAUSIBLE`.

    Raises
    ------
    InputError
        Unreadable text, missing or unknown unit, the wrong dimension (a
        length where a torque is expected...), a value outside the plausible
        range, or a sign the place does not take.

    Examples
    --------
    >>> parse_quantity("1800 lbf*in", "torque", "--torque")  # doctest: +ELLIPSIS
    203.372...
    >>> parse_quantity("36 ksi", "stress", "--yield")  # doctest: +ELLIPSIS
    248211262.5...
    >>> parse_quantity("1 deg/(800 mm)", "twist_rate", "twist_limit")  # doctest: +ELLIPSIS
    0.0218166...
    """
    if kind not in KINDS:
        raise ValueError(f"unknown quantity kind {kind!r}")
    if sign not in SIGNS:
        raise ValueError(f"unknown sign rule {sign!r}")
    example = KINDS[kind][2]
    number = _bare_number(value)
    if number is not None and bare is not None:
        if not math.isfinite(number):
            if math.isnan(number) or isinstance(value, float) or "inf" in str(value).lower():
                raise InputError(f"{value!r} is not a finite value", where=where)
            return _check_value(number, value, kind, where, sign)  # a literal beyond any float
        unit = _evaluate(_Grammar(_normalised(BARE_UNITS[kind] if bare == "default"
                                              else bare)).unit(0))
        q = number * unit
    else:
        if isinstance(value, bool) or not isinstance(value, str | int | float):
            shown = str(value).lower() if isinstance(value, bool) else repr(value)
            raise InputError(f"expected {_NAMES[kind]} as text with a unit, got {shown}",
                             where=where, fix=f"e.g. {example}")
        if isinstance(value, int | float):
            if kind == "angle":
                raise InputError(f"{value!r} has no unit", where=where,
                                 fix=f"write the unit, e.g. {example}")
            quotes = "" if where.startswith("--") else " in quotes"
            raise InputError(f"{value!r} has no unit", where=where,
                             fix=f"write {_NAMES[kind]} with its unit{quotes}, e.g. {example}")
        number, unit = _read(value, _NAMES[kind], where, example)
        if unit is None and math.isfinite(number):
            raise InputError(f"{value!r} has no unit", where=where,
                             fix=f"write {_NAMES[kind]} with its unit, e.g. {example}")
        if unit is None or not math.isfinite(number):  # a literal beyond any float
            return _check_value(math.inf, value, kind, where, sign)
        try:
            q = number * unit
        except Exception:  # pint refuses to scale an offset unit (degC)
            raise InputError(f"cannot read {value!r} as {_NAMES[kind]}", where=where,
                             fix=f"write a number and a unit, e.g. {example}") from None
    ureg = registry()
    if not isinstance(q, ureg.Quantity):  # a bare number in brackets: "2 (3)"
        raise InputError(f"{value!r} has no unit", where=where,
                         fix=f"write {_NAMES[kind]} with its unit, e.g. {example}")
    dim = q.dimensionality
    want = _dimensionality(kind)
    if dim != want or (kind == "angle" and q.unitless):
        if not dim and q.unitless:
            raise InputError(f"{value!r} has no unit", where=where,
                             fix=f"write {_NAMES[kind]} with its unit, e.g. {example}")
        hint = f"e.g. {example}"
        text = value if isinstance(value, str) else ""
        if "lb" in text and "lbf" not in text and kind in ("torque", "stress", "modulus"):
            hint = "write lbf (pound-force) for forces, e.g. \"1800 lbf*in\""
        raise InputError(
            f"{value!r} is {_describe(dim, q.unitless)}, but {_NAMES[kind]} is expected here",
            where=where, fix=hint,
        )
    try:
        si = float(q.to(KINDS[kind][1].replace("rad", "radian")).magnitude)
    except OverflowError:
        si = math.inf
    if si == 0 and number != 0:  # underflow on the way: below any plausible value
        si = math.copysign(5e-324, number)
    return _check_value(si, value, kind, where, sign)


def parse_number(value, where: str, positive: bool = True) -> float:
    """A plain number (e.g. a safety factor) from text or a number."""
    if isinstance(value, bool) or (isinstance(value, str) and len(value) > _MAX_TEXT):
        raise InputError(f"expected a plain number, got {value!r}", where=where)
    try:
        x = float(value.replace("−", "-") if isinstance(value, str) else value)
    except (TypeError, ValueError, OverflowError):
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
        "torque_per_length": ("N*m/m", 1.0),
        "bimoment": ("N*m^2", 1.0),
        "warping_constant": ("mm^6", 1e-18),
        "warping_function": ("mm^2", 1e-6),
        "per_length": ("1/m", 1.0),
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
        "torque_per_length": ("lbf*in/in", _LBF),
        "bimoment": ("lbf*in^2", _LBF * _IN**2),
        "warping_constant": ("in^6", _IN**6),
        "warping_function": ("in^2", _IN**2),
        "per_length": ("1/in", 1.0 / _IN),
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
    return parse_quantity(value, kind, where, sign="positive")


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
        lo, hi = DRAWING_PLAUSIBLE
        if not lo <= number <= hi:
            raise InputError(f"{value!r} is outside the range soapfilm takes for a length of "
                             f"the drawing, {lo:g} to {hi:g} in its unit", where=where,
                             fix="check the number; give it with its unit to be sure")
        return DrawingLength(bare=number, text=str(value).strip())
    metres = parse_quantity(value, "length", where, bare=None, sign="positive")
    return DrawingLength(metres=metres, text=str(value).strip())
