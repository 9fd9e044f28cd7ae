"""Output helpers shared by the subcommands: atomic files, the console."""

from __future__ import annotations

import json
import os
import sys
import tempfile
from pathlib import Path

from ..errors import InputError

__all__ = ["write_atomic", "write_json", "check_writable", "console"]


def check_writable(path: str | os.PathLike, option: str) -> Path:
    """Fail early (before any work) if ``path`` cannot be written."""
    p = Path(path)
    parent = p.parent if str(p.parent) else Path(".")
    if not parent.is_dir():
        raise InputError(f"folder {str(parent)!r} does not exist", where=f"{option} {p}",
                         fix="create the folder or choose another path")
    if p.is_dir():
        raise InputError("is a folder", where=f"{option} {p}", fix="give a file name")
    return p


def write_atomic(path: str | os.PathLike, data: str | bytes) -> None:
    """Write a whole file or nothing: temporary file in the same folder, then rename."""
    p = Path(path)
    mode = "wb" if isinstance(data, bytes) else "w"
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".part", dir=p.parent or ".")
    try:
        with os.fdopen(fd, mode, **({} if mode == "wb" else {"encoding": "utf-8"})) as fh:
            fh.write(data)
        os.replace(tmp, p)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def write_json(target: str, obj) -> None:
    """Write JSON to a file atomically, or to stdout for ``-``."""
    text = json.dumps(obj, indent=1, allow_nan=False) + "\n"
    if target == "-":
        sys.stdout.write(text)
    else:
        write_atomic(target, text)


def console(quiet: bool = False, stderr: bool = False):
    """A rich console (None when quiet)."""
    if quiet:
        return None
    from rich.console import Console

    return Console(stderr=stderr, highlight=False)
