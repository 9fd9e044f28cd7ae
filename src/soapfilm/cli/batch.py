"""``soapfilm batch``: torsion properties of many section files, in parallel.

Exit status: 0 when every section was analysed, 4 when some failed (their
rows carry the error message and are written with the others), 2 for bad
input (nothing is run and no file is written).  The helpers here are shared
with ``soapfilm sweep``.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from ..defaults import CAUTION
from ..errors import EXIT_ROWS_FAILED, InputError
from ._inputs import add_input_args, input_options
from ._io import check_outputs_apart, check_writable, console, run_outputs, write_json

NAME = "batch"
HELP = "analyse many section files in parallel and tabulate them (CSV, JSON)"


def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("inputs", metavar="INPUT", nargs="+",
                   help="section files (point lists .txt/.csv/.dat, shape files .toml, DXF "
                        ".dxf); the results are in --units, else the "
                        "first section's unit (others are converted)")
    add_run_args(p)


# --- shared with 'soapfilm sweep' ---------------------------------------------
def add_run_args(p: argparse.ArgumentParser) -> None:
    """Output, parallel and section-input options of ``batch`` and ``sweep``."""
    p.add_argument("--csv", metavar="OUT", help="write the rows as CSV to OUT")
    p.add_argument("--json", metavar="OUT", help="write the rows as JSON to OUT ('-' = stdout)")
    p.add_argument("--quiet", action="store_true", help="no terminal table or progress")
    g = p.add_argument_group("parallel runs")
    g.add_argument("--jobs", type=int, metavar="N",
                   help=f"parallel worker processes (default: all {os.cpu_count()} cores; "
                        "1 = one after the other)")
    g.add_argument("--scheduler", metavar="ADDRESS",
                   help="run on a Dask cluster: its scheduler address (tcp://host:8786), or "
                        "'local' for a Dask cluster on this machine (needs soapfilm[cluster])")
    add_input_args(p, what="each section file")


def check_run_args(args) -> None:
    """Fail on bad options and unwritable outputs before any work."""
    if args.jobs is not None and args.jobs < 1:
        raise InputError(f"must be at least 1, got {args.jobs}", where="--jobs")
    args.section_options = input_options(args)  # validates the shared options
    if args.csv:
        if args.csv == "-":
            raise InputError("CSV goes to a file", where="--csv -", fix="give a file name")
        check_writable(args.csv, "--csv")
    if args.json and args.json != "-":
        check_writable(args.json, "--json")
    if args.scheduler is not None:
        try:
            import dask.distributed  # noqa: F401
        except ImportError:
            raise InputError("running on Dask needs dask.distributed, which is not installed",
                             where="--scheduler", fix="pip install 'soapfilm[cluster]'") from None


def job_options(args) -> dict:
    """Options of every job, from the command line (None = the shape file's or default)."""
    o = args.section_options
    opts = {"units": o.units, "mesh_size": o.mesh_size, "order": o.order,
            "tol": "auto" if o.tol is None else o.tol, "peak_tol": o.peak_tol,
            "max_elements": o.max_elements, "layers": o.layers,
            "join_tolerance": o.join_tolerance, "memory": o.memory}
    return {k: v for k, v in opts.items() if v is not None}


def execute(args, jobs) -> list[dict]:
    """Run the jobs with the parallel options, showing progress on a terminal."""
    from ..batch import run_batch

    # what the jobs read (a shape file's drawing, in a worker process) counts as read
    # a job's warnings and log records come back with its row and are printed as in a
    # single run (one-line notices, LABEL: TEXT); --debug lets them through raw
    run = {"workers": args.jobs, "files_read": run_outputs().reads, "notices": not args.debug}
    if args.scheduler is not None:
        run.update(executor="dask", scheduler=args.scheduler)
        if not args.debug:  # Dask's own INFO chatter is not for this terminal
            import logging

            logging.getLogger("distributed").setLevel(logging.WARNING)
    if args.quiet or not sys.stderr.isatty():
        return run_batch(jobs, progress=None, **run)
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

    con = console(stderr=True)
    with Progress(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
                  TimeElapsedColumn(), console=con, transient=True) as bar:
        task = bar.add_task("analysing", total=len(jobs))
        return run_batch(jobs, progress=lambda done, total, row: bar.update(task, completed=done),
                         **run)


def _g(v, spec=".6g") -> str:
    return "" if v is None else format(v, spec)


def print_table(rows: list[dict], unit: str, con, title: str) -> None:
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    table = Table(title=title, header_style="bold", caption_justify="left", box=box.SIMPLE_HEAD,
                  pad_edge=False,
                  caption=f"J in {unit}^4 (± relative half-width of the guaranteed bracket), "
                          f"tau/T peak shear per unit torque in 1/{unit}^3, Wt in {unit}^3")
    # file names alone when they tell the rows apart as well as the full labels do
    labels = [r["label"] for r in rows]
    names = [Path(lab).name or lab for lab in labels]
    if len(set(names)) != len(set(labels)):
        names = labels
    table.add_column("section", min_width=min(18, max(len(n) for n in names)), overflow="fold")
    for name in ("J", "±", "tau/T", "Wt", "J/Ip"):
        table.add_column(name, justify="right", no_wrap=True)
    table.add_column("note", min_width=6)
    for r, shown in zip(rows, names, strict=True):
        note = []
        if r.get("error"):
            note.append("[red]failed[/]")
        if r.get("converged") is False:
            note.append("[yellow]not converged[/]")
        if r.get("warnings"):
            note.append(f"[yellow]{r['warnings']} warn.[/]")
        half = ("" if r.get("J") is None else
                f"{(r['J_hi'] - r['J_lo']) / (r['J_hi'] + r['J_lo']):.0e}")
        table.add_row(escape(shown), _g(r.get("J"), ".5g"), half, _g(r.get("tau_max_per_T"), ".4g"),
                      _g(r.get("Wt"), ".5g"), _g(r.get("J_per_Ip"), ".4f"), ", ".join(note))
    con.print(table)
    for r in rows:
        if r.get("error"):
            con.print(f"[red]failed:[/] {escape(r['label'])}: {escape(r['error'])}")
    msgs = sorted({m for r in rows for m in r.get("warning_messages", [])})
    for m in msgs[:5]:
        con.print(f"[bold yellow]warning:[/] {escape(m)}")
    if len(msgs) > 5:
        con.print(f"[yellow]... and {len(msgs) - 5} more different warnings (see --json)[/]")


def finish(args, rows: list[dict], title: str, unit: str | None = None, input_units=None,
           **extra) -> int:
    """Table, output files, failure summary; return the exit status."""
    from ..batch import csv_text, document, output_unit, rows_in_unit

    unit = output_unit(rows, unit)
    shown = rows_in_unit(rows, unit)
    files = run_outputs()  # every file written before anything is printed
    if args.csv:
        files.stage(args.csv, csv_text(rows, unit, input_units), "--csv")
    doc = document(rows, unit, input_units=input_units, **extra) if args.json else None
    if args.json and args.json != "-":
        files.stage_json(args.json, doc, "--json")
    files.commit()
    con = console(args.quiet or args.json == "-")
    if con:
        print_table(shown, unit, con, title)
    if args.json == "-":
        write_json("-", doc)
    failed = [r for r in rows if r.get("error")]
    if con:
        con.print(f"[dim]Caution: {CAUTION}[/]")
    if failed:
        first = failed[0]
        print(f"soapfilm: {len(failed)} of {len(rows)} sections failed; the table and output "
              f"files give each error; the first, {first['label']}: {first['error']}",
              file=sys.stderr)
        return EXIT_ROWS_FAILED
    return 0
# --- end shared ----------------------------------------------------------------


def run(args) -> int:
    from ..batch import Job
    from ..readers import READERS

    check_run_args(args)
    check_outputs_apart(args.inputs, [("--csv", args.csv), ("--json", args.json)])
    for name in args.inputs:
        path = Path(name)
        if not path.exists():
            raise InputError("file not found", where=name, fix="check the path")
        if path.is_dir():
            raise InputError("is a folder, not a section file", where=name,
                             fix=f"give the files, e.g. {name.rstrip('/')}/*.toml")
        if path.suffix.lower() not in READERS:
            raise InputError(f"unknown file type {path.suffix or '(no suffix)'!r}", where=name,
                             fix=f"use one of {', '.join(sorted(READERS))}")
    opts = job_options(args)
    jobs = [Job(name, Path(name), dict(opts), {"file": name}) for name in args.inputs]
    rows = execute(args, jobs)
    return finish(args, rows, f"Torsion properties of {len(rows)} sections", unit=args.units,
                  command="batch", inputs=list(args.inputs))
