"""Errors raised for bad user input.

Every message says what is wrong, where (file, line, loop, key) and how to fix
it, so that the command-line tool can print it on one line and exit with 2.
"""

from __future__ import annotations

__all__ = ["SoapfilmError", "InputError", "GeometryError", "SolveError", "EXIT_CHECK_FAILED",
           "EXIT_ROWS_FAILED", "one_line", "MESSAGE_PART_LIMIT"]

#: longest part (what, where, fix) of a message before its middle is cut out: a
#: value quoted from the input (a 10 MB line, a file name) must not flood the terminal
MESSAGE_PART_LIMIT = 300

_CONTROL = {c: f"\\x{c:02x}" for c in [*range(32), 127]}
_CONTROL.update({ord("\n"): " ", ord("\r"): " ", ord("\t"): " "})


def one_line(text, limit: int = MESSAGE_PART_LIMIT) -> str:
    r"""``text`` as one readable line: breaks as spaces, other control characters escaped,
    the middle cut out beyond ``limit`` characters (saying how many).

    >>> one_line("a" * 50 + "b" * 50, limit=40)
    'aaaaaaaaaaaaaaaaaaaaaaaaaa ... [60 characters cut] ... bbbbbbbbbbbbbb'
    >>> one_line("line 1\nline 2")
    'line 1 line 2'
    """
    text = str(text).translate(_CONTROL)
    if len(text) <= limit:
        return text
    head = (limit * 2) // 3
    tail = limit - head
    return f"{text[:head]} ... [{len(text) - head - tail} characters cut] ... {text[-tail:]}"


#: Exit status of ``check`` and ``shaft`` when the check ran and failed (utilisation
#: over 1); 0 is a pass, 1 an internal error, 2 a user error.
EXIT_CHECK_FAILED = 3


class SoapfilmError(Exception):
    """Base class of all errors soapfilm raises on purpose."""


class InputError(SoapfilmError, ValueError):
    """Bad user input: a file, a value or an option.

    Parameters
    ----------
    what : str
        What is wrong, with the offending value.
    where : str, optional
        Where it is: ``file``, ``file:line``, ``loop 2`` ...
    fix : str, optional
        How to fix it.
    """

    def __init__(self, what: str, where: str | None = None, fix: str | None = None):
        self.what = one_line(what)
        self.where = None if where is None else one_line(where)
        self.fix = None if fix is None else one_line(fix)
        super().__init__(self.__str__())

    def __str__(self) -> str:
        text = f"{self.where}: {self.what}" if self.where else self.what
        if self.fix:
            text += f" ({self.fix})"
        return text


class GeometryError(InputError):
    """An outline that cannot be a bar section (open, crossing, zero area...)."""


class SolveError(SoapfilmError):
    """The numerical solution failed or could not reach what was asked."""


#: exit status of a check that ran and failed; distinct from 1 (internal error)
#: and 2 (user error)
EXIT_CHECK_FAILED = 3
#: exit status of a batch or sweep in which some sections failed (their rows carry
#: the error; the others are written)
EXIT_ROWS_FAILED = 4
