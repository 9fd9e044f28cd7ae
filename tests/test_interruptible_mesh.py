"""Long meshes run where a signal can stop them (issue 11: SIGTERM during Triangle).

Triangle runs in C holding the interpreter lock, so a SIGTERM's Python handler (which
removes the run's staged ``.part`` files, ``cli/_io.py``) used to wait until it returned:
13.6 s after the signal for a 1.6 million element mesh on the 2-core sandbox under
load.  Meshes expected above ``mesh.FORK_ABOVE`` elements are made in a forked child;
the parent waits on a pipe, the handler runs at once and the child is killed.

Reference: the square's J = 0.1405770 a^4 (Saint-Venant's series, Timoshenko &
Goodier, Theory of Elasticity, 3rd ed., sec. 109, ``reference.rectangle_series``).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time

import numpy as np
import pytest

import reference as ref
import soapfilm.mesh as mesh_module
from soapfilm import Profile, analyse
from soapfilm.errors import SolveError
from soapfilm.resources import memory_needed, physical_memory

SQUARE = [(0.0, 0.0), (10.0, 0.0), (10.0, 10.0), (0.0, 10.0)]


def test_meshes_made_in_a_child_give_the_same_answer(monkeypatch):
    """Every mesh of an adaptive run made in a child process (the starting mesh and each
    refinement): the bracket holds the series value of the square's J (sec. 109)."""
    calls = []
    real = mesh_module._triangulate_interruptibly

    def counted(data, switches, expected):
        calls.append(expected)
        return real(data, switches, expected)

    monkeypatch.setattr(mesh_module, "FORK_ABOVE", 0)
    monkeypatch.setattr(mesh_module, "_triangulate_interruptibly", counted)
    r = analyse(Profile.from_loops([SQUARE]), tol=1e-3)
    assert len(calls) == len(r.refinement) >= 2
    lo, hi = r.torsion_constant_bounds
    assert lo <= ref.rectangle_series(10.0, 10.0)[0] <= hi


def test_the_child_s_complaints_reach_the_error_not_the_terminal(monkeypatch, capfd):
    """Triangle's "precision" message, printed in the child on the descriptor the caller
    captured, ends in the one-line error; nothing reaches standard output."""
    monkeypatch.setattr(mesh_module, "FORK_ABOVE", 0)
    s = 1e100
    unchecked = Profile(outer=np.array([[0, 0], [s, 0], [s, s], [0, s]], dtype=float))
    with pytest.raises(SolveError, match="precision"):
        mesh_module.mesh_profile(unchecked)
    assert capfd.readouterr().out == ""


def _children(pid: int) -> list[str]:
    try:
        with open(f"/proc/{pid}/task/{pid}/children") as f:
            return f.read().split()
    except OSError:
        return []


@pytest.mark.skipif(not os.path.exists(f"/proc/{os.getpid()}/task/{os.getpid()}/children"),
                    reason="needs /proc/PID/task/PID/children to see the mesher's process")
def test_sigterm_during_a_long_mesh_ends_at_once(tmp_path):
    """`solve` of a 10 mm square at element size 0.015 (about 1.6 million elements, 5-13 s
    of Triangle): SIGTERM once the mesher's child process runs ends the command within
    a few seconds with status 143, no output file and no .part file."""
    need = memory_needed(1.8e6)
    ram = physical_memory()
    if ram is None or ram < 1.3 * need:
        pytest.skip("the budget this mesh needs is more than this machine has")
    (tmp_path / "sq.txt").write_text("".join(f"{x} {y}\n" for x, y in SQUARE))
    proc = subprocess.Popen(
        [sys.executable, "-m", "soapfilm", "solve", "sq.txt", "--mesh-size", "0.015",
         "--memory", f"{int(need / 1e9) + 2}GB", "--json", "out.json", "--quiet"],
        cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 120
        while not _children(proc.pid):
            assert proc.poll() is None, proc.communicate()
            assert time.monotonic() < deadline
            time.sleep(0.005)
        time.sleep(0.3)  # well inside Triangle's seconds
        child = _children(proc.pid)
        proc.send_signal(signal.SIGTERM)
        start = time.monotonic()
        _, err = proc.communicate(timeout=60)
        stopped = time.monotonic() - start
    finally:
        proc.kill()
    assert proc.returncode == 128 + signal.SIGTERM, err
    assert err.strip() == "soapfilm: stopped by SIGTERM; no output file written"
    assert stopped < 3.0, f"{stopped:.1f} s to stop"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["sq.txt"]
    assert not any(os.path.exists(f"/proc/{c}") and "soapfilm" in open(f"/proc/{c}/cmdline").read()
                   for c in child)  # the mesher's child went with it
