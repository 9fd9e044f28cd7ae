"""Which files a run opened for reading, so that no output can overwrite one.

A section file can name others (a shaft file its section files, a shape file
its drawing), and readers come from several libraries (ezdxf, meshio, tomllib):
rather than each reader reporting what it read, Python's own audit event for
opening a file (``open``, raised by ``open()``, ``os.open``, ``Path.read_text``
and libraries built on them) is watched while :func:`files_opened` is active.

Standard library only: the command line imports this before any heavy module.

Examples
--------
>>> import os, tempfile
>>> fd, name = tempfile.mkstemp(); os.close(fd)
>>> with files_opened() as seen:
...     _ = open(name).read()
>>> os.path.abspath(name) in seen
True
>>> os.unlink(name)
"""

from __future__ import annotations

import contextlib
import os
import sys

__all__ = ["files_opened", "same_files"]

#: the sets being filled, innermost last (one per active :func:`files_opened`)
_ACTIVE: list[set[str]] = []
_HOOKED = False
#: Python's own code, compiled code and extension modules: imports, not inputs
_CODE = (".py", ".pyc", ".so", ".pyd")


def _hook(event: str, args) -> None:
    if event != "open" or not _ACTIVE:
        return
    try:
        path, _mode, flags = args
        if isinstance(flags, int) and (flags & os.O_ACCMODE == os.O_WRONLY
                                       or flags & os.O_CREAT):
            return  # written or created here: an output, not an input
        if isinstance(path, int):  # a file descriptor
            return
        name = os.path.abspath(os.fsdecode(path))
        if name.endswith(_CODE):
            return
        for seen in _ACTIVE:
            seen.add(name)
    except Exception:  # noqa: BLE001 - an audit hook must never break the open it watches
        return


@contextlib.contextmanager
def files_opened():
    """Collect the absolute paths of the files opened for reading in this block.

    Yields a set that fills as files are opened (in this process only: a
    worker process collects its own, see :func:`soapfilm.batch.run_batch`).
    """
    global _HOOKED
    if not _HOOKED:  # an audit hook stays for the life of the process: add it once
        sys.addaudithook(_hook)
        _HOOKED = True
    seen: set[str] = set()
    _ACTIVE.append(seen)
    try:
        yield seen
    finally:
        for i in range(len(_ACTIVE) - 1, -1, -1):
            if _ACTIVE[i] is seen:
                del _ACTIVE[i]
                break


def same_files(paths) -> dict[tuple[int, int], str]:
    """``{(device, inode): path}`` of the paths that exist: equal keys are one file
    (after symbolic links, and for hard links too)."""
    out: dict[tuple[int, int], str] = {}
    for p in paths:
        try:
            st = os.stat(p)
        except (OSError, ValueError):
            continue
        out.setdefault((st.st_dev, st.st_ino), str(p))
    return out
