"""Repeatable results: the same input gives the same bits on every run and with any --jobs.

Two things used to make the last digits move: pyamg's set-up draws a random start
vector from numpy's unseeded global generator (spectral radius for its smoother),
so every solve above the direct solver's size differed; and BLAS reductions (dot
products) sum in an order that depends on the thread count, so a batch run in this
process (BLAS threads) and one in worker processes (one thread each) differed by
up to 2e-14.  These tests compare whole JSON documents, every key but the run time
(`seconds` of batch rows, README "JSON output").
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np
import scipy.sparse as sp

from reference import rectangle_series
from soapfilm.fem.linsolve import DIRECT_LIMIT, solve_spd
from soapfilm.fem.p2 import P2_DIRECT_LIMIT


def _soapfilm(*args, cwd, env=None):
    """Start ``python -m soapfilm ARGS`` (not waited for)."""
    return subprocess.Popen([sys.executable, "-m", "soapfilm", *map(str, args)], cwd=cwd,
                            env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def _finish(proc) -> None:
    out, err = proc.communicate(timeout=240)
    assert proc.returncode == 0, err


def _without_seconds(obj):
    if isinstance(obj, dict):
        return {k: _without_seconds(v) for k, v in obj.items() if k != "seconds"}
    if isinstance(obj, list):
        return [_without_seconds(v) for v in obj]
    return obj


def test_amg_solve_same_bits_whatever_the_random_state():
    """The AMG path gives the same solution bits after any use of np.random, and
    leaves the caller's random stream where it was."""
    n = 150  # 22 500 unknowns: above DIRECT_LIMIT, so "auto" takes AMG-CG
    lap1 = sp.diags([-1.0, 2.0, -1.0], [-1, 0, 1], shape=(n, n))
    a = (sp.kron(lap1, sp.identity(n)) + sp.kron(sp.identity(n), lap1)).tocsr()
    assert a.shape[0] > DIRECT_LIMIT
    b = np.ones(a.shape[0])
    np.random.seed(1)
    x1 = solve_spd(a, b)
    np.random.seed(2)
    x2 = solve_spd(a, b)
    assert x1.tobytes() == x2.tobytes()
    np.random.seed(3)
    expected = np.random.rand(4)
    np.random.seed(3)
    solve_spd(a, b)
    assert np.random.rand(4).tobytes() == expected.tobytes()


def _rectangle(path, b=60.0, t=30.0):
    path.write_text(f"0 0\n{b} 0\n{b} {t}\n0 {t}\n", encoding="utf-8")
    return path


def test_solve_twice_bit_identical_json(tmp_path):
    """A 60 x 30 rectangle on 32 562 quadratic elements: 16 483 corner nodes, about
    65 000 with the mid-side ones, above both direct-solver limits (AMG-CG for both
    fields), solved in two processes at once."""
    rect = _rectangle(tmp_path / "rect.txt")
    procs = [_soapfilm("solve", rect, "--mesh-size", "0.45", "--json", f"run{i}.json",
                       "--quiet", cwd=tmp_path) for i in (1, 2)]
    for p in procs:
        _finish(p)
    first, second = ((tmp_path / f"run{i}.json").read_bytes() for i in (1, 2))
    doc = json.loads(first)
    assert doc["mesh"]["order"] == 2 and 4 * doc["mesh"]["nodes"] > P2_DIRECT_LIMIT > DIRECT_LIMIT
    lo, hi = doc["torsion_constant_bounds"]
    j, _ = rectangle_series(60.0, 30.0)  # Timoshenko & Goodier, 3rd ed., sec. 109
    assert lo <= j <= hi  # the iterative solve still brackets the series value
    assert first == second


def test_batch_jobs_1_and_2_agree(tmp_path):
    """`--jobs 1` (this process, BLAS threads: four asked for, so that the reductions
    would be split even on a one-core machine) against `--jobs 2` (worker processes).
    Before BLAS was held to one thread for the whole analysis, the rectangle's J
    differed in the 16th digit between the two."""
    files = [_rectangle(tmp_path / "rect.txt"), tmp_path / "tee.txt"]
    files[1].write_text("0 0\n40 0\n40 6\n23 6\n23 30\n17 30\n17 6\n0 6\n", encoding="utf-8")
    threads = dict(os.environ, OPENBLAS_NUM_THREADS="4", OMP_NUM_THREADS="4")
    common = ["--mesh-size", "1", "--quiet"]
    serial = _soapfilm("batch", *files, "--jobs", "1", "--json", "one.json", "--csv", "one.csv",
                       *common, cwd=tmp_path, env=threads)
    pooled = _soapfilm("batch", *files, "--jobs", "2", "--json", "two.json", "--csv", "two.csv",
                       *common, cwd=tmp_path)
    for p in (serial, pooled):
        _finish(p)
    one, two = (json.loads((tmp_path / f"{n}.json").read_text()) for n in ("one", "two"))
    assert one["failed"] == 0 and len(one["rows"]) == 2
    assert _without_seconds(one) == _without_seconds(two)
    # the CSV: every column but seconds (the next to last)
    rows = [[line.split(",") for line in (tmp_path / f"{n}.csv").read_text().splitlines()]
            for n in ("one", "two")]
    assert rows[0][0][-2] == "seconds"
    assert [r[:-2] + r[-1:] for r in rows[0]] == [r[:-2] + r[-1:] for r in rows[1]]
