"""Dimension checks shared by the generators: one-line InputErrors."""

from __future__ import annotations

import math

from ..errors import InputError

__all__ = ["positive", "nonnegative", "count_at_least", "fmt"]


def fmt(x: float) -> str:
    """Short number for messages."""
    return f"{x:.6g}"


def _number(name: str, value) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{name} must be a number, got {value!r}", where=name)
    value = float(value)
    if not math.isfinite(value):
        raise InputError(f"{name} must be a finite number, got {value}", where=name)
    return value


def positive(name: str, value) -> float:
    """Check a length (or other size) is a finite number > 0."""
    v = _number(name, value)
    if v <= 0:
        raise InputError(f"{name} must be greater than 0, got {fmt(v)}", where=name,
                         fix="give a positive size")
    return v


def nonnegative(name: str, value) -> float:
    """Check a radius or depth is a finite number >= 0."""
    v = _number(name, value)
    if v < 0:
        raise InputError(f"{name} must not be negative, got {fmt(v)}", where=name,
                         fix="give 0 for a sharp corner or a positive size")
    return v


def count_at_least(name: str, value, low: int, high: int | None = None) -> int:
    """Check a whole-number count lies in [low, high]."""
    if isinstance(value, bool) or not (
        isinstance(value, int) or (isinstance(value, float) and value.is_integer())
    ):
        raise InputError(f"{name} must be a whole number, got {value!r}", where=name)
    v = int(value)
    if v < low or (high is not None and v > high):
        rng = f"at least {low}" if high is None else f"from {low} to {high}"
        raise InputError(f"{name} must be {rng}, got {v}", where=name)
    return v
