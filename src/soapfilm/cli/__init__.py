"""Command-line interface: ``soapfilm SUBCOMMAND ...``.

Each subcommand is a module in this package exposing ``NAME``, ``HELP``,
``add_args(parser)`` and ``run(args) -> int``.  :func:`main` turns every
:class:`~soapfilm.errors.SoapfilmError` into one line on stderr and exit
status 2 (a traceback only with ``--debug``).  Without ``--debug`` nothing
reaches stderr raw: Python warnings (numpy's floating-point warnings among
them) and log records become one-line notices, printed after a run that ends
normally and dropped when it ends in an error line; libraries' log records
below ERROR are dropped.
"""

from __future__ import annotations

import argparse
import contextlib
import importlib
import logging
import sys
import warnings

from ..errors import EXIT_CHECK_FAILED, EXIT_ROWS_FAILED, SoapfilmError, one_line
from ..notices import record_text, warning_text

__all__ = ["main", "SUBCOMMANDS"]

#: subcommand modules, in the order ``--help`` lists them
SUBCOMMANDS = ["solve", "show", "shapes", "check", "shaft", "member", "batch", "sweep"]


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # one line, exit 2 (argparse's own convention too)
        self.exit(2, f"{self.prog}: error: {message} (see '{self.prog} --help')\n")


_EPILOG = ("exit status: 0 done (a check passed), 1 internal error (a bug: rerun with "
           "--debug), 2 user error (one line on stderr; nothing written), "
           f"{EXIT_CHECK_FAILED} a check ran and failed, {EXIT_ROWS_FAILED} some sections of a "
           "batch or sweep failed. "
           "Units: a value with its unit is taken as given; a bare number is in N*m, mm, MPa, "
           "GPa or deg/m; mesh size and join tolerance bare are in the drawing's unit.")


def build_parser(only: str | None = None) -> argparse.ArgumentParser:
    """The argument parser: every subcommand, or ``only`` that one (see :func:`_command_in`)."""
    parser = _Parser(
        prog="soapfilm",
        description="Torsion constant, peak shear and shaft checks for non-circular bar sections.",
        epilog=_EPILOG,
    )
    parser.add_argument("--debug", action="store_true", help="show tracebacks and debug log")
    from ..defaults import VERSION
    from ._io import staged_run

    parser.add_argument("--version", action="version", version=f"soapfilm {VERSION}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    parser._commands = {}
    for name in SUBCOMMANDS if only is None else [only]:
        mod = importlib.import_module(f".{name}", __name__)
        p = sub.add_parser(mod.NAME, help=mod.HELP, description=mod.HELP, epilog=_EPILOG)
        # before or after the command: `soapfilm --debug solve ...` = `soapfilm solve --debug`
        p.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                       help="show tracebacks and debug log")
        mod.add_args(p)
        # outputs staged and committed together; SIGTERM removes them (cli/_io.py)
        p.set_defaults(_run=staged_run(mod.run))
        parser._commands[mod.NAME] = p
    return parser


#: most notices one run prints (each distinct warning once)
_MAX_NOTICES = 10


class _Notices:
    """One-line notices gathered from warnings and log records during a run.

    What becomes a notice, and its text, is :mod:`soapfilm.notices`' rule
    (shared with the batch workers, which capture the same texts).
    """

    def __init__(self):
        self.lines: list[str] = []

    def add(self, text: str | None) -> None:
        if not text:
            return
        line = f"soapfilm: warning: {one_line(text)}"
        if line not in self.lines and len(self.lines) < _MAX_NOTICES:
            self.lines.append(line)

    def showwarning(self, message, category, filename, lineno, file=None, line=None):
        """Replacement of :func:`warnings.showwarning` for the run."""
        self.add(warning_text(message, category))


class _NoticeHandler(logging.Handler):
    """Log records as notices: soapfilm's own from WARNING, other libraries' from ERROR."""

    def __init__(self, notices: _Notices):
        super().__init__(logging.WARNING)
        self.notices = notices

    def emit(self, record: logging.LogRecord) -> None:
        self.notices.add(record_text(record))


@contextlib.contextmanager
def _routed(debug: bool):
    """Route warnings and logging for one run; yield the notices (None with --debug)."""
    root = logging.getLogger()
    if debug:  # everything, raw, with the debug log
        handler = logging.StreamHandler(sys.stderr)
        handler.setFormatter(logging.Formatter("%(levelname)s %(name)s: %(message)s"))
        level = root.level
        root.setLevel(logging.DEBUG)
        root.addHandler(handler)
        try:
            yield None
        finally:
            root.removeHandler(handler)
            root.setLevel(level)
        return
    notices = _Notices()
    handler = _NoticeHandler(notices)
    root.addHandler(handler)
    try:
        with warnings.catch_warnings():
            warnings.showwarning = notices.showwarning
            yield notices
    finally:
        root.removeHandler(handler)


def _command_in(argv: list[str]) -> str | None:
    """The subcommand ``argv`` runs, when nothing but ``--debug`` comes before it.

    Only that subcommand's module is imported and its parser built (the
    others' option definitions cost start-up time, ``tests/bench/bench_startup.py``);
    anything else (``--help``, ``--version``, an unknown or missing command)
    builds them all, so the top-level help and argparse's messages are whole.
    """
    for token in argv:
        if token != "--debug":
            return token if token in SUBCOMMANDS else None
    return None


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    parser = build_parser(_command_in(sys.argv[1:] if argv is None else list(argv)))
    args, extra = parser.parse_known_args(argv)
    if extra:  # name the command's own help, not the top level's
        target = parser._commands.get(getattr(args, "command", None), parser)
        target.error(f"unrecognized arguments: {' '.join(extra)}")
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    with _routed(args.debug) as notices:
        status = _run(args)
    if notices is not None and status in (0, EXIT_CHECK_FAILED, EXIT_ROWS_FAILED):
        # after an error line nothing else: the error is what to act on
        for line in notices.lines:
            print(line, file=sys.stderr)
    return status


def _run(args) -> int:
    """Run the command; every error becomes one line on stderr and a status."""
    try:
        return int(args._run(args) or 0)
    except SoapfilmError as exc:
        if args.debug:  # the traceback asked for, then the same line and status as without
            _print_traceback()
        print(f"soapfilm: error: {one_line(exc, 4 * 300)}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("soapfilm: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # `soapfilm ... | head`: the reader left; output files are written
        import os

        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 0
    except MemoryError:
        if args.debug:
            _print_traceback()
        print("soapfilm: error: out of memory (use a larger --mesh-size, a looser --tol or a "
              "smaller --max-elements)", file=sys.stderr)
        return 2
    except Exception as exc:  # a bug, not a user error: one line, traceback with --debug
        if args.debug:
            _print_traceback()
        print(f"soapfilm: internal error: {type(exc).__name__}: {one_line(exc)} (this is a bug in "
              "soapfilm; rerun with --debug and report the traceback)", file=sys.stderr)
        return 1


def _print_traceback() -> None:
    """With ``--debug``: the traceback of the exception being handled, on stderr."""
    import traceback

    traceback.print_exc(file=sys.stderr)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
