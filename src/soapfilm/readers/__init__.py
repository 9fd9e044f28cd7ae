"""Readers turn an input file into a :class:`~soapfilm.profile.Profile`.

Readers register themselves for file suffixes with :func:`register`; the
dispatcher :func:`read_section` picks one by suffix.  A reader is a function
``reader(path, units) -> Profile`` where ``units`` is the length unit the user
gave on the command line (``None`` if none: the reader decides, e.g. from the
file's own header, else millimetres).
"""

from __future__ import annotations

import inspect
from collections.abc import Callable
from pathlib import Path

from ..errors import InputError
from ..profile import Profile

__all__ = ["read_section", "register", "READERS"]

Reader = Callable[[Path, "str | None"], Profile]

#: suffix (lower case, with dot) -> reader
READERS: dict[str, Reader] = {}


def register(*suffixes: str):
    """Decorator registering a reader for the given suffixes."""

    def deco(func: Reader) -> Reader:
        for s in suffixes:
            READERS[s.lower()] = func
        return func

    return deco


def read_section(path, units: str | None = None, **options) -> Profile:
    """Read a section from a file, choosing the reader by suffix.

    Keyword ``options`` whose value is not None (e.g. ``layers`` for DXF)
    are passed on to the reader; one the reader does not take is an error
    naming the command-line option (``layers`` -> ``--layer``).

    Raises
    ------
    InputError
        Missing file, unknown suffix, an option the reader does not take, or
        whatever the reader finds wrong.
    """
    path = Path(path)
    if not path.exists():
        raise InputError("file not found", where=str(path), fix="check the path")
    if path.is_dir():
        raise InputError("is a folder, not a section file", where=str(path))
    reader = READERS.get(path.suffix.lower())
    if reader is None:
        raise InputError(
            f"unknown file type {path.suffix or '(no suffix)'!r}",
            where=str(path),
            fix=f"use one of {', '.join(sorted(READERS))}",
        )
    options = {k: v for k, v in options.items() if v is not None}
    if options:  # reader-specific options, e.g. layers for DXF drawings
        accepted = inspect.signature(reader).parameters
        for key in options:
            if key not in accepted:
                flag = "--" + key.removesuffix("s").replace("_", "-")
                raise InputError(f"{flag} does not apply to {path.suffix or 'these'} files",
                                 where=str(path), fix=f"drop {flag}")
        return reader(path, units, **options)
    return reader(path, units)


# readers register on import
from . import dxf, meshfile, pointlist, shapefile  # noqa: E402,F401
