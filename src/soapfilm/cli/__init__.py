"""Command-line interface: ``soapfilm SUBCOMMAND ...``.

Each subcommand is a module in this package exposing ``NAME``, ``HELP``,
``add_args(parser)`` and ``run(args) -> int``.  :func:`main` turns every
:class:`~soapfilm.errors.SoapfilmError` into one line on stderr and exit
status 2 (a traceback only with ``--debug``).
"""

from __future__ import annotations

import argparse
import importlib
import logging
import sys

from ..errors import EXIT_CHECK_FAILED, EXIT_ROWS_FAILED, SoapfilmError

__all__ = ["main", "SUBCOMMANDS"]

#: subcommand modules, in the order ``--help`` lists them
SUBCOMMANDS = ["solve", "show", "shapes", "check", "shaft", "batch", "sweep"]


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # one line, exit 2 (argparse's own convention too)
        self.exit(2, f"{self.prog}: error: {message} (see '{self.prog} --help')\n")


_EPILOG = ("exit status: 0 done (a check passed), 1 internal error (a bug: rerun with "
           "--debug), 2 user error (one line on stderr; nothing written), "
           f"{EXIT_CHECK_FAILED} a check ran and failed, {EXIT_ROWS_FAILED} some sections of a "
           "batch or sweep failed. "
           "Units: a value with its unit is taken as given; a bare number is in N*m, mm, MPa, "
           "GPa or deg/m; mesh size and join tolerance bare are in the drawing's unit.")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="soapfilm",
        description="Torsion constant, peak shear and shaft checks for non-circular bar sections.",
        epilog=_EPILOG,
    )
    parser.add_argument("--debug", action="store_true", help="show tracebacks and debug log")
    from ..defaults import VERSION

    parser.add_argument("--version", action="version", version=f"soapfilm {VERSION}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    parser._commands = {}
    for name in SUBCOMMANDS:
        mod = importlib.import_module(f".{name}", __name__)
        p = sub.add_parser(mod.NAME, help=mod.HELP, description=mod.HELP, epilog=_EPILOG)
        # before or after the command: `soapfilm --debug solve ...` = `soapfilm solve --debug`
        p.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                       help="show tracebacks and debug log")
        mod.add_args(p)
        p.set_defaults(_run=mod.run)
        parser._commands[mod.NAME] = p
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    parser = build_parser()
    args, extra = parser.parse_known_args(argv)
    if extra:  # name the command's own help, not the top level's
        target = parser._commands.get(getattr(args, "command", None), parser)
        target.error(f"unrecognized arguments: {' '.join(extra)}")
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    logging.basicConfig(level=logging.DEBUG if args.debug else logging.WARNING,
                        format="%(levelname)s %(name)s: %(message)s")
    try:
        return int(args._run(args) or 0)
    except SoapfilmError as exc:
        if args.debug:
            raise
        print(f"soapfilm: error: {exc}", file=sys.stderr)
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
            raise
        print("soapfilm: error: out of memory (use a larger --mesh-size, a looser --tol or a "
              "smaller --max-elements)", file=sys.stderr)
        return 2
    except Exception as exc:  # a bug, not a user error: one line, traceback with --debug
        if args.debug:
            raise
        print(f"soapfilm: internal error: {type(exc).__name__}: {exc} (this is a bug in soapfilm; "
              f"rerun with --debug and report the traceback)", file=sys.stderr)
        return 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
