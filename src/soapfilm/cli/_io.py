"""Output helpers shared by the subcommands: atomic files, the console."""

from __future__ import annotations

import json
import os
import sys
import tempfile
from pathlib import Path

from ..errors import InputError

__all__ = ["write_atomic", "write_json", "check_writable", "check_outputs_apart", "same_file",
           "json_text",
           "console", "progress"]


def same_file(path) -> str:
    """A key equal for two paths that name the same file."""
    return os.path.normcase(os.path.realpath(path))


def check_outputs_apart(inputs, outputs) -> None:
    """No output may be an input or another output: ``outputs`` is [(option, path)]."""
    taken = {same_file(p): "the input file" for p in inputs if p}
    for option, path in outputs:
        if not path or path == "-":
            continue
        key = same_file(path)
        if key in taken:
            what = taken[key]
            raise InputError(f"would overwrite {what}" if what == "the input file"
                             else f"is also given to {what}", where=f"{option} {path}",
                             fix="choose another output name" if what == "the input file"
                             else "give each output its own file name")
        taken[key] = option


def check_writable(path: str | os.PathLike, option: str) -> Path:
    """Fail early (before any work) if ``path`` cannot be written."""
    p = Path(path)
    parent = p.parent if str(p.parent) else Path(".")
    if not parent.is_dir():
        raise InputError(f"folder {str(parent)!r} does not exist", where=f"{option} {p}",
                         fix="create the folder or choose another path")
    if p.is_dir():
        raise InputError("is a folder", where=f"{option} {p}", fix="give a file name")
    try:  # the only sure test: make (and remove) a file there, as write_atomic will
        fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".check", dir=parent)
        os.close(fd)
        os.unlink(tmp)
    except OSError as exc:
        raise InputError(f"cannot write in folder {str(parent)!r} ({exc.strerror})",
                         where=f"{option} {p}", fix="choose a folder you can write to") from None
    return p


def write_atomic(path: str | os.PathLike, data: str | bytes) -> None:
    """Write a whole file or nothing: temporary file in the same folder, then rename."""
    p = Path(path)
    mode = "wb" if isinstance(data, bytes) else "w"
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".part", dir=p.parent or ".")
    try:
        with os.fdopen(fd, mode, **({} if mode == "wb" else {"encoding": "utf-8"})) as fh:
            fh.write(data)
        mask = os.umask(0)  # mkstemp makes 0600; give the file the usual permissions
        os.umask(mask)
        os.chmod(tmp, 0o666 & ~mask)
        os.replace(tmp, p)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def json_text(obj) -> str:
    """The JSON text soapfilm writes (indented, no NaN or infinity)."""
    return json.dumps(obj, indent=1, allow_nan=False) + "\n"


def write_json(target: str, obj) -> None:
    """Write JSON to a file atomically, or to stdout for ``-``."""
    text = json_text(obj)
    if target == "-":
        sys.stdout.write(text)
    else:
        write_atomic(target, text)


def console(quiet: bool = False, stderr: bool = False):
    """A rich console (None when quiet)."""
    if quiet:
        return None
    from rich.console import Console

    class _Console(Console):
        def on_broken_pipe(self) -> None:  # rich exits 1 here; let main() decide
            raise BrokenPipeError

    return _Console(stderr=stderr, highlight=False)


# --------------------------------------------------------------------- progress
class _Silent:
    """Progress stand-in that shows nothing (not a terminal, or --quiet)."""

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False

    def update(self, advance: float = 1, description: str | None = None,
               total: float | None = None) -> None:
        """Ignore progress."""


class _RichProgress:
    def __init__(self, description: str, total: float | None):
        from rich.console import Console
        from rich.progress import BarColumn, Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

        self._progress = Progress(
            SpinnerColumn(), TextColumn("{task.description}"), BarColumn(),
            TextColumn("{task.completed:g}/{task.total:g}" if total else ""),
            TimeElapsedColumn(),
            console=Console(stderr=True), transient=True,
        )
        self._description = description
        self._total = total

    def __enter__(self):
        self._progress.__enter__()
        self._task = self._progress.add_task(self._description, total=self._total)
        return self

    def __exit__(self, *exc):
        return self._progress.__exit__(*exc)

    def update(self, advance: float = 1, description: str | None = None,
               total: float | None = None) -> None:
        """Advance the bar and optionally change its text or total."""
        kw = {"advance": advance}
        if description is not None:
            kw["description"] = description
        if total is not None:
            kw["total"] = total
        self._progress.update(self._task, **kw)


def progress(description: str, total: float | None = None, quiet: bool = False, stream=None):
    """A progress display on stderr, shown only when stderr is a terminal.

    Use as a context manager; call ``update(advance=1, description=...)`` per
    step.  Silent (does nothing) when ``quiet`` is true or the stream is not a
    terminal, so scripts, pipes, CI logs and ``--json -`` stay clean.

    Examples
    --------
    >>> with progress("refining", total=3, quiet=True) as bar:
    ...     for step in range(3):
    ...         bar.update(description=f"refining: step {step + 1}")
    """
    stream = sys.stderr if stream is None else stream
    isatty = getattr(stream, "isatty", None)
    if quiet or not (isatty and isatty()):
        return _Silent()
    return _RichProgress(description, total)
