"""Point lists: one ``x y`` or ``x,y`` pair per line.

``#`` starts a comment; a blank line ends a loop; the first loop is the outer
boundary, the others are holes; a closing point is optional; any orientation.
There is no unit inside the file: it comes from ``--units`` (default mm).
"""

from __future__ import annotations

import dataclasses
import math
import re
from pathlib import Path

from ..errors import InputError
from ..profile import LENGTH_UNITS, Profile
from . import register

__all__ = ["read_pointlist", "parse_pointlist"]

_SPLIT = re.compile(r"[\s,;]+")


def parse_pointlist(text: str, where: str) -> tuple[list[list[tuple[float, float]]], list[str]]:
    """Split text into loops of points; also return a label for each loop."""
    loops: list[list[tuple[float, float]]] = []
    spans: list[list[int]] = []
    current: list[tuple[float, float]] = []
    first = last = 0
    for lineno, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("#", 1)[0].strip()
        if not line:
            if current and not raw.strip():
                loops.append(current)
                spans.append([first, last])
                current = []
            continue
        parts = [p for p in _SPLIT.split(line) if p]
        try:
            if len(parts) != 2:
                raise ValueError
            x, y = float(parts[0]), float(parts[1])
        except ValueError:
            raise InputError(
                f"expected two numbers 'x y' or 'x,y', got {raw.strip()!r}",
                where=f"{where}:{lineno}",
                fix="one point per line; '#' starts a comment (put it before a header line); "
                    "a blank line ends a loop",
            ) from None
        if not (math.isfinite(x) and math.isfinite(y)):
            raise InputError(
                f"non-finite coordinate in {raw.strip()!r}",
                where=f"{where}:{lineno}",
                fix="give ordinary decimal numbers",
            )
        if not current:
            first = lineno
        last = lineno
        current.append((x, y))
    if current:
        loops.append(current)
        spans.append([first, last])
    labels = [
        f"{where} loop {k + 1} ({'outside' if k == 0 else 'hole'}, lines {a}-{b})"
        for k, (a, b) in enumerate(spans)
    ]
    return loops, labels


@register(".txt", ".csv", ".dat", ".xy")
def read_pointlist(path: Path, units: str | None = None) -> Profile:
    """Read a point-list file into a validated :class:`Profile`."""
    stated = units is not None
    units = units or "mm"
    if units not in LENGTH_UNITS:
        raise InputError(f"unknown length unit {units!r}", where="--units",
                         fix=f"use one of {', '.join(LENGTH_UNITS)}")
    try:
        text = Path(path).read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise InputError("is not a text file", where=str(path),
                         fix="save the point list as plain text") from None
    except OSError as exc:  # permission denied, a device that fails ...
        raise InputError(f"cannot read the file ({exc.strerror or type(exc).__name__})",
                         where=str(path), fix="check the file's permissions") from None
    loops, labels = parse_pointlist(text, str(path))
    if not loops:
        raise InputError("no points found (the file is empty or all comments)", where=str(path),
                         fix="write one 'x y' pair per line")
    profile = Profile.from_loops(loops, units=units, name=Path(path).stem, labels=labels)
    return profile if stated else dataclasses.replace(profile, unit_stated=False)
