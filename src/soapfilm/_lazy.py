"""Names of a package imported on first use (PEP 562), shared by the packages that do it."""

from __future__ import annotations

import importlib


def lazy_names(package: str, lazy: dict[str, str], names, namespace: dict):
    """Return ``(__getattr__, __dir__)`` for ``package``.

    ``lazy`` maps a public name to the submodule (relative to ``package``)
    that defines it; the first access imports it and keeps the value in the
    package's ``namespace`` (its ``globals()``), so later accesses cost nothing.
    """

    def __getattr__(name: str):
        module = lazy.get(name)
        if module is None:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        value = getattr(importlib.import_module(f".{module}", package), name)
        namespace[name] = value
        return value

    def __dir__():
        return sorted(set(namespace) | set(names))

    return __getattr__, __dir__
