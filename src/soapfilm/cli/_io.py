"""Output helpers shared by the subcommands: staged output files, the console.

Every file a command writes goes through one :class:`Outputs` per run
(:func:`run_outputs`): :meth:`Outputs.stage` writes it under a temporary name
(``.NAME.XXXX.part``) in its target folder, and :meth:`Outputs.commit` renames
them all into place once every output of the run has been produced, after
checking that none of them is a file the run read.  A failure on the way (a
full disk, a folder that cannot be written, an error, Ctrl-C, SIGTERM) removes
every staged file and leaves the target files as they were.  :func:`staged_run`
wraps each command's ``run`` in such a run (the command line does this for
every command).
"""

from __future__ import annotations

import atexit
import contextlib
import errno
import functools
import json
import os
import shutil
import signal
import stat
import sys
import tempfile
import threading
from pathlib import Path

from ..errors import InputError
from ..opened import files_opened, same_files

__all__ = ["Outputs", "run_outputs", "staged_run", "Terminated", "write_atomic", "write_json",
           "check_writable", "check_outputs_apart", "same_file", "json_text",
           "console", "progress"]


# ------------------------------------------------------------------ staged outputs
#: temporary files of this process not yet renamed into place (removed at exit and
#: by the SIGTERM handler, whatever the code that made them is doing)
_TEMPS: set[str] = set()


def _remove_temps() -> None:
    for tmp in list(_TEMPS):
        try:
            os.unlink(tmp)
        except OSError:
            pass
        _TEMPS.discard(tmp)


atexit.register(_remove_temps)


@contextlib.contextmanager
def _signals_held():
    """Hold SIGTERM and SIGHUP back for a few statements (made and registered as one)."""
    held = {getattr(signal, n) for n in ("SIGTERM", "SIGHUP") if hasattr(signal, n)}
    if not hasattr(signal, "pthread_sigmask") or not held:
        yield
        return
    old = signal.pthread_sigmask(signal.SIG_BLOCK, held)
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, old)


def _is_special(path) -> bool:
    """An existing target that is no regular file (``/dev/null``, a named pipe, a
    terminal): written into when the run commits, never replaced by a rename."""
    try:
        mode = os.stat(path).st_mode
    except (OSError, ValueError):
        return False
    return not stat.S_ISREG(mode) and not stat.S_ISDIR(mode)


def _new_temporary(target: Path, suffix: str) -> str:
    """A new empty file ``.NAME.XXXX<suffix>`` next to ``target`` (in the temporary
    folder for a special target: nothing is created in /dev), registered in _TEMPS."""
    folder = (None if _is_special(target) else
              target.parent if str(target.parent) else ".")
    with _signals_held():  # no moment where the file exists and nobody would remove it
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=suffix, dir=folder)
        _TEMPS.add(tmp)
    os.close(fd)
    return tmp


def _temporary(target: Path) -> str:
    """A new empty file ``.NAME.XXXX.part`` next to ``target``, registered in _TEMPS."""
    tmp = _new_temporary(target, ".part")
    mask = os.umask(0)  # mkstemp makes 0600; give the file the usual permissions
    os.umask(mask)
    os.chmod(tmp, 0o666 & ~mask)
    return tmp


def _drop(tmp: str) -> None:
    try:
        os.unlink(tmp)
    except OSError:
        pass
    _TEMPS.discard(tmp)


def _write_error(exc: OSError, where: str) -> InputError:
    """A write failure as one line: what the system said and what to do."""
    reason = exc.strerror or type(exc).__name__
    fix = {errno.ENOSPC: "free some space or write to another disk",
           errno.EDQUOT: "free some space or write to another disk",
           errno.EACCES: "choose a folder you can write to",
           errno.EPERM: "choose a folder you can write to",
           errno.EROFS: "choose a folder on a writable disk"}.get(exc.errno,
                                                                   "check the folder")
    return InputError(f"could not write the file ({reason}); nothing was written",
                      where=where, fix=fix)


class Terminated(BaseException):
    """Raised in the main thread on SIGTERM or SIGHUP while a command runs.

    A BaseException, like KeyboardInterrupt, so that no ``except Exception``
    on the way (a batch job's isolation, say) takes it for an error to report.
    """

    def __init__(self, signum: int):
        self.signum = signum
        super().__init__(signal.Signals(signum).name)


class Outputs:
    """The files one run writes, staged and then committed together.

    Use :func:`run_outputs` to get the current run's; as a context manager
    (what :func:`staged_run` does) it records the files the run opens for
    reading, removes the staged files when the block ends in an exception and
    commits what is left when it ends normally.
    """

    def __init__(self):
        self._staged: list[tuple[Path, str, str, tuple[int, int]]] = []  # target, temp, where, id
        self.reads: set[str] = set()  # files the run read (absolute paths)
        self._recording = None

    # -- staging
    def stage(self, path, data: str | bytes, option: str | None = None) -> Path:
        """Write ``data`` to a temporary file next to ``path``; return ``path``."""
        def write(tmp):
            with open(tmp, "wb") as fh:
                fh.write(data.encode("utf-8") if isinstance(data, str) else data)
        return self.stage_with(path, write, option)

    def stage_json(self, path, obj, option: str | None = None) -> Path:
        """:meth:`stage` the JSON text soapfilm writes (:func:`json_text`)."""
        return self.stage(path, json_text(obj), option)

    def stage_with(self, path, write, option: str | None = None) -> Path:
        """Let ``write(temporary_path)`` produce the file (for writers that want a path).

        Raises
        ------
        InputError
            The file could not be written (disk full, no permission ...); the
            temporary file is removed.
        """
        target = Path(path)
        where = f"{option} {target}" if option else str(target)
        tmp = None
        try:
            tmp = _temporary(target)
            write(tmp)
            st = os.stat(tmp)
        except OSError as exc:
            if tmp is not None:
                _drop(tmp)
            raise _write_error(exc, where) from None
        except BaseException:
            if tmp is not None:
                _drop(tmp)
            raise
        self._staged.append((target, tmp, where, (st.st_dev, st.st_ino)))
        return target

    @property
    def staged(self) -> list[Path]:
        """The target paths staged so far."""
        return [target for target, *_ in self._staged]

    # -- the end of the run
    def discard(self) -> None:
        """Remove every staged file."""
        staged, self._staged = self._staged, []
        for _, tmp, _, _ in staged:
            _drop(tmp)

    def _check(self, staged) -> None:
        """No output may be a file the run read, nor another output (links resolved)."""
        read = same_files(self.reads)
        seen: dict = {}
        for target, _, where, _ in staged:
            key = same_files([target])
            ident = next(iter(key), None) or ("path", same_file(target))
            if ident in read:
                raise InputError(f"would overwrite {_shown(read[ident])}, which this run read",
                                 where=where, fix="choose another output name")
            if ident in seen:
                raise InputError(f"is the same file as {seen[ident]}", where=where,
                                 fix="give each output its own file name")
            seen[ident] = where

    def commit(self) -> list[Path]:
        """Rename every staged file into place; return the paths.

        All or nothing: when a rename fails (or the run is stopped meanwhile)
        the files already renamed are taken back (a file they replaced is
        restored) and the rest removed.
        """
        staged = list(self._staged)
        backups: dict[Path, str] = {}
        try:
            self._check(staged)
            special = [s for s in staged if _is_special(s[0])]
            for target, tmp, where, _ in staged:
                if (target, tmp, where, _) in special:
                    continue
                if os.path.lexists(target):  # keep the old file until the run is through
                    backup = tmp[: -len(".part")] + ".keep"
                    try:
                        os.link(target, backup, follow_symlinks=False)
                        backups[target] = backup
                    except OSError:
                        pass  # no hard links here: the old file cannot be kept
                try:
                    os.replace(tmp, target)
                except OSError as exc:
                    raise _write_error(exc, where) from None
                _TEMPS.discard(tmp)
            for target, tmp, where, _ in special:  # last: these cannot be taken back
                try:
                    with open(tmp, "rb") as src, open(target, "wb") as dst:
                        shutil.copyfileobj(src, dst)
                except OSError as exc:
                    raise _write_error(exc, where) from None
                _drop(tmp)
        except BaseException:
            for target, _, _, ident in staged:
                try:
                    st = os.lstat(target)
                    ours = (st.st_dev, st.st_ino) == ident
                except OSError:
                    ours = False
                if ours:
                    try:
                        if target in backups:
                            os.replace(backups.pop(target), target)
                        else:
                            os.unlink(target)
                    except OSError:
                        pass
            self.discard()
            raise
        finally:
            for backup in backups.values():
                try:
                    os.unlink(backup)
                except OSError:
                    pass
        self._staged = []
        return [target for target, *_ in staged]

    # -- one run
    def __enter__(self):
        self._recording = files_opened()
        self.reads = self._recording.__enter__()
        _RUNS.append(self)
        return self

    def __exit__(self, kind, exc, tb):
        try:
            if kind is None and self._staged:
                self.commit()  # a command that staged without committing: commit now
        finally:
            self.discard()
            _RUNS.remove(self)
            self._recording.__exit__(None, None, None)
        return False


def _shown(path: str) -> str:
    """A path as the user would write it: relative below the working folder."""
    rel = os.path.relpath(path)
    return path if rel.startswith("..") else rel


#: the runs in progress, innermost last
_RUNS: list[Outputs] = []


def run_outputs() -> Outputs:
    """The current run's outputs (a fresh, unrecorded one outside :func:`staged_run`)."""
    return _RUNS[-1] if _RUNS else Outputs()


@contextlib.contextmanager
def _stop_signals():
    """SIGTERM and SIGHUP: remove every temporary file, then raise :class:`Terminated`."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    raised = []

    def handler(signum, frame):
        _remove_temps()
        if not raised:  # once: a second signal must not break the cleanup of the first
            raised.append(signum)
            raise Terminated(signum)

    previous = {}
    for name in ("SIGTERM", "SIGHUP"):
        sig = getattr(signal, name, None)
        if sig is not None:
            previous[sig] = signal.signal(sig, handler)
    try:
        yield
    finally:
        for sig, old in previous.items():
            signal.signal(sig, old)


def staged_run(run):
    """Wrap a command's ``run(args)``: one :class:`Outputs` for it, signals handled.

    A SIGTERM or SIGHUP ends the command with one line on stderr and status
    128 + the signal's number, every staged file removed and nothing committed.
    """
    @functools.wraps(run)
    def wrapper(args):
        try:
            with _stop_signals(), Outputs():
                return run(args)
        except Terminated as exc:
            print(f"soapfilm: stopped by {signal.Signals(exc.signum).name}; no output file "
                  "written", file=sys.stderr)
            return 128 + exc.signum
    return wrapper


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
    if _is_special(p):  # /dev/null, a named pipe: written into, not replaced
        if not os.access(p, os.W_OK):
            raise InputError("cannot be written", where=f"{option} {p}",
                             fix="choose a file you can write to")
        return p
    try:  # the only sure test: make (and remove) a file there, as the outputs will be
        _drop(_new_temporary(parent / p.name, ".check"))
    except OSError as exc:
        raise InputError(f"cannot write in folder {str(parent)!r} ({exc.strerror})",
                         where=f"{option} {p}", fix="choose a folder you can write to") from None
    return p


def write_atomic(path: str | os.PathLike, data: str | bytes) -> None:
    """Write one whole file or nothing: a temporary file in the same folder, then a rename.

    For library callers (:func:`soapfilm.plots.save_figure`); commands stage
    their files in :func:`run_outputs`.  Raises OSError.
    """
    p = Path(path)
    data = data.encode("utf-8") if isinstance(data, str) else data
    if _is_special(p):  # /dev/null, a pipe: written into, never replaced
        with open(p, "wb") as fh:
            fh.write(data)
        return
    tmp = _temporary(p)
    try:
        with open(tmp, "wb") as fh:
            fh.write(data)
        os.replace(tmp, p)
        _TEMPS.discard(tmp)
    except BaseException:
        _drop(tmp)
        raise


def json_text(obj) -> str:
    """The JSON text soapfilm writes (indented, no NaN or infinity)."""
    return json.dumps(obj, indent=1, allow_nan=False) + "\n"


def write_json(target: str, obj) -> None:
    """JSON to stdout for ``-``, else staged in the current run (:func:`run_outputs`)."""
    if target == "-":
        sys.stdout.write(json_text(obj))
    else:
        run_outputs().stage_json(target, obj, "--json")


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


def finish_check(args, files: Outputs, passed: bool, document, show, written=()) -> int:
    """The common end of ``check``, ``shaft`` and ``member``: every staged file in place,
    then the table, the files' lines and ``--json -``; the exit status (3: failed).

    ``document``: the JSON object (only built for ``--json -``, called then);
    ``show(con)``: prints the tables; ``written``: ``(path or None, what)`` pairs,
    each named as written after the tables.
    """
    from ..errors import EXIT_CHECK_FAILED

    files.commit()
    con = console(args.quiet or args.json == "-")
    if con:
        show(con)
        for path, what in written:
            if path:
                con.print(f"{what} written to {path}")
    if args.json == "-":
        write_json("-", document())
    return 0 if passed else EXIT_CHECK_FAILED


def verdict_json(res, gov) -> dict:
    """The verdict keys of a shaft's or a member's JSON ``totals``: the governing segment
    ``gov`` (with ``segment.name`` and ``index``) and the check's utilisations
    (:class:`soapfilm.members.shaft.Verdict`)."""
    return {
        "governing_segment": gov.segment.name,
        "governing_index": gov.index,
        "utilisation_stress": res.utilisation_stress,
        "utilisation_twist": res.utilisation_twist,
        "utilisation": res.utilisation,
        "governs": res.governs,
        "passed": res.passed,
    }
