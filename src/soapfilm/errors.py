"""Errors raised for bad user input.

Every message says what is wrong, where (file, line, loop, key) and how to fix
it, so that the command-line tool can print it on one line and exit with 2.
"""

from __future__ import annotations

__all__ = ["SoapfilmError", "InputError", "GeometryError", "SolveError", "EXIT_CHECK_FAILED"]

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
        self.what = what
        self.where = where
        self.fix = fix
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
