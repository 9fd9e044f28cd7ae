"""``soapfilm sweep``: a shape file analysed over ranges of its dimensions.

``--vary KEY=VALUES`` (repeatable) names a key of the ``[section]`` table
(``height``), of ``[[part]]`` N (``part2.diameter``), or ``rotate``; VALUES
is a list ``a,b,c`` or ``start:stop:count`` (count evenly spaced values, both
ends included).  Every combination is analysed (the last --vary varies
fastest).  A combination the shape file rejects becomes a row with its error.
Exit status as ``soapfilm batch``: 0 all analysed, 1 some failed, 2 bad input.
"""

from __future__ import annotations

import argparse

from ._io import check_outputs_apart
from .batch import add_run_args, check_run_args, execute, finish, job_options

NAME = "sweep"
HELP = "analyse a shape file over ranges of its dimensions (parameter sweep)"


def add_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("shape_file", metavar="SHAPE.toml", help="shape file to vary")
    p.add_argument("--vary", action="append", required=True, metavar="KEY=VALUES",
                   help="key and its values: a,b,c or start:stop:count "
                        "(e.g. height=6:20:8, part2.diameter=30,35,40); repeat for more keys")
    add_run_args(p)


def run(args) -> int:
    from ..batch import parse_vary, plan_sweep

    check_run_args(args)
    check_outputs_apart([args.shape_file], [("--csv", args.csv), ("--json", args.json)])
    from pathlib import Path

    from ..intake import refuse_drawing_options

    refuse_drawing_options(Path(args.shape_file), args.section_options)
    vary = [parse_vary(spec) for spec in args.vary]
    plan = plan_sweep(args.shape_file, vary, args.units)
    jobs = plan.jobs(job_options(args))
    rows = execute(args, jobs)
    return finish(args, rows, f"Sweep of {args.shape_file}: {len(rows)} sections",
                  input_units=plan.input_units, command="sweep", shape_file=args.shape_file,
                  vary={k: list(v) for k, v in vary})
