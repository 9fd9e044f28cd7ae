"""Every ``soapfilm`` command in the README runs as written, from a copy of the repository.

The commands are taken from the README's code blocks (continuation lines joined,
comments dropped) and run through the shell in a temporary folder holding a copy
of ``shapes/``, so that the examples a new user copies keep working.  A command
may end in status 0, or in the check-failed status when the README says it fails.
"""

from __future__ import annotations

import os
import re
import shlex
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def readme_commands() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    commands = []
    for block in re.findall(r"```(?:\w*)\n(.*?)```", text, flags=re.S):
        lines = block.splitlines()
        k = 0
        while k < len(lines):
            line = lines[k]
            while line.rstrip().endswith("\\") and k + 1 < len(lines):
                k += 1
                line = line.rstrip()[:-1] + " " + lines[k].strip()
            k += 1
            if line.startswith("soapfilm "):
                commands.append(line)
    return commands


def _without_comment(command: str) -> str:
    lexer = shlex.shlex(command, posix=True, punctuation_chars=False)
    lexer.whitespace_split = True
    lexer.commenters = "#"
    return shlex.join(list(lexer))


COMMANDS = readme_commands()


def test_the_readme_has_commands():
    assert len(COMMANDS) >= 10


@pytest.mark.parametrize("command", COMMANDS, ids=[c[:60] for c in COMMANDS])
def test_readme_command_runs(command, tmp_path):
    shutil.copytree(ROOT / "shapes", tmp_path / "shapes")
    argv = shlex.split(_without_comment(command))
    exe = [sys.executable, "-m", "soapfilm"]
    # glob patterns (shapes/*.txt) as the shell would expand them
    args = []
    for a in argv[1:]:
        if any(ch in a for ch in "*?[") and not a.startswith(("-", '"')) and "/" in a:
            matches = sorted(str(p.relative_to(tmp_path)) for p in tmp_path.glob(a))
            args += matches or [a]
        else:
            args.append(a)
    env = {**os.environ, "PYTHONUNBUFFERED": "1"}
    done = subprocess.run([*exe, *args], cwd=tmp_path, capture_output=True, text=True,
                          env=env, timeout=600)
    assert done.returncode == 0, (command, done.stderr[-2000:])
    assert "Traceback" not in done.stderr
