"""Keep compiled libraries from writing on the terminal.

The mesher (Triangle) prints its own complaints with C ``printf`` on file
descriptor 1 even in quiet mode ("Ran out of precision at ..."), below
Python's ``sys.stdout``: they would land in the middle of a table or of
``--json -``.  :func:`c_output_captured` points descriptor 1 at a temporary
file while such a library runs and hands back what it wrote, for the error
message or the debug log.
"""

from __future__ import annotations

import contextlib
import os
import sys
import tempfile
import threading
from collections.abc import Iterator

__all__ = ["c_output_captured"]

_LOCK = threading.RLock()  # descriptor 1 belongs to the whole process: one capture at a time


def _flush_c_streams() -> None:
    """Flush the C library's stdio buffers (text printed but not yet written)."""
    try:
        import ctypes

        libc = ctypes.CDLL(None)
        libc.fflush(None)
    except (OSError, AttributeError, TypeError):  # no C library to reach (not POSIX)
        pass


def _flush_python() -> None:
    for stream in (sys.stdout, sys.__stdout__):
        with contextlib.suppress(Exception):
            if stream is not None:
                stream.flush()


@contextlib.contextmanager
def c_output_captured(fd: int = 1) -> Iterator[list[str]]:
    """Capture what compiled code writes on descriptor ``fd`` (default 1, standard output).

    Yields a list that holds the captured text once the block ends (also when
    it raises).  Python's own output written before the block is flushed first,
    so nothing is reordered or lost.

    Examples
    --------
    >>> import os
    >>> with c_output_captured() as said:
    ...     _ = os.write(1, b"chatter")
    >>> said
    ['chatter']
    """
    said: list[str] = []
    with _LOCK:
        _flush_python()
        _flush_c_streams()
        try:
            saved = os.dup(fd)
        except OSError:  # no such descriptor (a detached process): nothing to protect
            yield said
            return
        try:
            with tempfile.TemporaryFile() as tmp:
                os.dup2(tmp.fileno(), fd)
                try:
                    yield said
                finally:
                    _flush_c_streams()
                    os.dup2(saved, fd)
                    tmp.seek(0)
                    said.append(tmp.read().decode("utf-8", errors="replace"))
        finally:
            os.close(saved)
