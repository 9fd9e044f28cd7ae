"""Python warnings and log records as one-line notices.

The command line (:mod:`soapfilm.cli`) prints what a run raised as
``soapfilm: warning: TEXT`` lines instead of raw warnings and log records;
this module holds the rule that turns each into ``TEXT`` (or drops it), so
that a batch job (:mod:`soapfilm.batch`), in whatever process it runs, can
capture the same texts with :func:`captured` and hand them back to the
parent with its row.

* warnings meant for developers (deprecations, imports, resources) are
  dropped; a ``RuntimeWarning`` (numpy's floating-point warnings, mostly)
  becomes "numerical trouble: ..."; others keep their first line;
* log records: soapfilm's own from WARNING, other libraries' from ERROR,
  prefixed with the library's name; the rest dropped.
"""

from __future__ import annotations

import contextlib
import logging
import warnings
from collections.abc import Iterator

__all__ = ["DEVELOPER_WARNINGS", "warning_text", "record_text", "captured"]

#: warnings meant for developers, not for the user of the command: dropped
DEVELOPER_WARNINGS = (DeprecationWarning, PendingDeprecationWarning, FutureWarning,
                      ImportWarning, ResourceWarning)


def warning_text(message, category: type[Warning]) -> str | None:
    """The notice text of a Python warning, or None when it is for developers."""
    if issubclass(category, DEVELOPER_WARNINGS):
        return None
    text = str(message).strip().splitlines()[0] if str(message).strip() else category.__name__
    if issubclass(category, RuntimeWarning):  # numpy's floating-point warnings, mostly
        return (f"numerical trouble: {text} (check the results and the input's sizes; "
                "--debug shows where)")
    return text


def record_text(record: logging.LogRecord) -> str | None:
    """The notice text of a log record: soapfilm's own from WARNING, others' from ERROR."""
    ours = record.name == "soapfilm" or record.name.startswith("soapfilm.")
    if record.levelno < (logging.WARNING if ours else logging.ERROR):
        return None
    try:
        text = record.getMessage().strip()
    except Exception:  # a library's badly formatted record: not worth a line
        return None
    text = text.splitlines()[0] if text else record.levelname
    return text if ours else f"{record.name.split('.')[0]}: {text}"


class _Collector(logging.Handler):
    def __init__(self, add):
        super().__init__(logging.WARNING)
        self._add = add

    def emit(self, record: logging.LogRecord) -> None:
        self._add(record_text(record))


@contextlib.contextmanager
def captured() -> Iterator[list[str]]:
    """Gather the notice texts of the block's warnings and log records; print nothing.

    Yields the list the texts are appended to (each distinct text once, in
    the order raised).  The warning filters stay as they are (a filter that
    turns a warning into an error still does); while the block runs, the
    root logger's handlers are set aside, so that neither a handler of the
    caller nor logging's last-resort printer sees the records.
    """
    texts: list[str] = []

    def add(text: str | None) -> None:
        if text and text not in texts:
            texts.append(text)

    def showwarning(message, category, filename, lineno, file=None, line=None):
        add(warning_text(message, category))

    root = logging.getLogger()
    others = list(root.handlers)
    collector = _Collector(add)
    for handler in others:
        root.removeHandler(handler)
    root.addHandler(collector)
    try:
        with warnings.catch_warnings():  # entering also resets the once-per-place registries
            warnings.showwarning = showwarning
            yield texts
    finally:
        root.removeHandler(collector)
        for handler in others:
            root.addHandler(handler)
