"""``soapfilm shapes``: the section kinds a shape file can use, and their keys."""

from __future__ import annotations

import argparse

from ..errors import InputError
from ._io import console

NAME = "shapes"
HELP = "list the section kinds for shape files (.toml), or show the keys of one kind"

_FAMILIES = {"round": "Round", "polygon": "Flat-sided", "shaft": "Shafts",
             "spline": "Splines", "open": "Thin-walled open sections"}
_SPECIAL_HELP = {"outline": "a boundary given point by point, with optional holes",
                 "file": "a point list or DXF drawing read from another file"}


def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("kind", metavar="KIND", nargs="?",
                   help="show the keys, units and defaults of this kind")


def _unit(p) -> str:
    return {"length": "length", "angle": "deg", "count": "count"}.get(
        p.unit, " | ".join(p.choices))


def _value(v) -> str:
    return f'"{v}"' if isinstance(v, str) else f"{v:g}" if isinstance(v, float) else str(v)


def example_toml(kind) -> str:
    """A minimal shape file for ``kind``."""
    lines = [f'title = "example {kind.name}"', 'units = "mm"', "", "[section]",
             f'kind = "{kind.name}"']
    lines += [f"{k} = {_value(v)}" for k, v in kind.example]
    return "\n".join(lines)


def _list(con) -> None:
    from rich.markup import escape
    from rich.table import Table

    from ..shapes.file_keys import MESH_KEYS, PART_KEYS, SOLVE_KEYS, TOP_KEYS
    from ..shapes.registry import KINDS

    table = Table(title="Section kinds for shape files", header_style="bold")
    table.add_column("kind")
    table.add_column("description")
    table.add_column("group", style="dim")
    for k in KINDS.values():
        table.add_row(k.name, k.summary, _FAMILIES.get(k.family, k.family))
    for name, text in _SPECIAL_HELP.items():
        table.add_row(name, text, "Other")
    con.print(table)
    keys = Table(title="Shape file keys", header_style="bold")
    keys.add_column("table")
    keys.add_column("key")
    keys.add_column("meaning")
    for key, text in TOP_KEYS.items():
        keys.add_row("(top level)", key, escape(text))
    for key, text in PART_KEYS.items():
        keys.add_row(escape("[section] or [[part]]"), key, escape(text))
    for key, text in MESH_KEYS.items():
        keys.add_row(escape("[mesh]"), key, escape(text))
    for key, text in SOLVE_KEYS.items():
        keys.add_row(escape("[solve]"), key, escape(text))
    con.print(keys)
    con.print("'soapfilm shapes KIND' shows the dimensions of one kind and an example.",
              style="dim")


def _show(con, name: str) -> None:
    from rich.markup import escape
    from rich.table import Table

    from ..shapes.file_keys import SPECIAL_KINDS
    from ..shapes.registry import KINDS

    if name in SPECIAL_KINDS:
        con.print(f"[bold]{name}[/]: {_SPECIAL_HELP[name]}")
        for key, text in SPECIAL_KINDS[name].items():
            con.print(f"  [bold]{key}[/]  {escape(text)}")
        ex = ('kind = "outline"\npoints = [[0, 0], [40, 0], [40, 10], [0, 10]]'
              if name == "outline" else 'kind = "file"\nfile = "drive-end.dxf"')
        con.print("\nExample:\n", markup=False)
        con.print(f'title = "example {name}"\nunits = "mm"\n\n[section]\n{ex}', markup=False)
        return
    kind = KINDS[name]
    table = Table(title=f"{kind.name}: {kind.summary}", header_style="bold")
    for col in ("key", "unit", "default", "description"):
        table.add_column(col)
    for p in kind.params:
        table.add_row(p.name, _unit(p), p.default_label(), p.description)
    con.print(table)
    con.print("Lengths are in the file's units; angles in degrees.  Every section also "
              "takes rotate and position.")
    con.print("\nMinimal shape file:\n", markup=False)
    con.print(example_toml(kind), markup=False)


def run(args) -> int:
    from ..shapes.file_keys import SPECIAL_KINDS
    from ..shapes.registry import KINDS, suggest

    name = args.kind
    if name is not None and name not in KINDS and name not in SPECIAL_KINDS:
        raise InputError(f"unknown shape kind {name!r}", where="soapfilm shapes",
                         fix=suggest(name, list(KINDS) + list(SPECIAL_KINDS))
                         + "; 'soapfilm shapes' lists them")
    con = console()
    if name is None:
        _list(con)
    else:
        _show(con, name)
    return 0
