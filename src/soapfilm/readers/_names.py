"""How the user names a reader option where the current section comes from.

A reader's error hint names the option that would fix the problem: on the
command line ``--join-tolerance 0.02``, but for a drawing referenced by a
shape file or a shaft file it is a key in that file (``join_tolerance = 0.02
in [section] of arbor.toml``).  The caller that knows sets the names with
:func:`options_named`; readers ask :func:`option_hint`.
"""

from __future__ import annotations

import contextlib
import contextvars

__all__ = ["option_hint", "options_named", "CLI_HINTS"]

#: option -> hint template on the command line ({} = the suggested value)
CLI_HINTS = {
    "layers": "--layer {}",
    "join_tolerance": "--join-tolerance {}",
    "units": "--units {}",
    "mesh_size": "--mesh-size {}",
    "memory": "--memory {}",
}

_HINTS: contextvars.ContextVar[dict | None] = contextvars.ContextVar("soapfilm_option_hints",
                                                                      default=None)


def option_hint(key: str, value: str = "VALUE") -> str:
    """The way to give option ``key`` with ``value`` where the section comes from."""
    hints = _HINTS.get() or CLI_HINTS
    return hints.get(key, CLI_HINTS[key]).format(value)


@contextlib.contextmanager
def options_named(hints: dict):
    """Within the block, readers name options by ``hints`` (key -> template with {})."""
    token = _HINTS.set({**CLI_HINTS, **hints})
    try:
        yield
    finally:
        _HINTS.reset(token)
