"""What a command imports: only what that run uses (start-up time is measured in
tests/bench/bench_startup.py, never here; these are behaviours, checked in a fresh
interpreter through ``sys.modules``)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from soapfilm.cli import main

ROOT = Path(__file__).resolve().parents[1]

#: the scientific stack and the optional libraries
SCIENTIFIC = ("numpy", "scipy", "shapely", "triangle", "pyamg", "pint")
OPTIONAL = ("matplotlib", "ezdxf", "meshio", "dask", "distributed")


def imported(argv: list[str], cwd: Path = ROOT) -> tuple[set[str], subprocess.CompletedProcess]:
    """Top-level packages in ``sys.modules`` after ``soapfilm ARGV`` in a fresh interpreter."""
    code = (f"import sys, runpy\nsys.argv = ['soapfilm', *{argv!r}]\n"
            "try:\n    runpy.run_module('soapfilm', run_name='__main__')\n"
            "except SystemExit:\n    pass\n"
            "print('MODULES:' + ' '.join(sorted({m.split('.')[0] for m in sys.modules})), "
            "file=sys.stderr)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=300, cwd=cwd)
    line = [ln for ln in done.stderr.splitlines() if ln.startswith("MODULES:")][-1]
    return set(line.removeprefix("MODULES:").split()), done


@pytest.mark.parametrize("argv", [["shapes"], ["shapes", "keyed_shaft"], ["shapes", "outline"],
                                  ["shapes", "keyd_shaft"]])
def test_shapes_lists_kinds_without_the_scientific_stack(argv):
    """The kinds, their keys and the shape-file keys are plain tables: listing them
    imports neither numpy, scipy, shapely nor the mesher."""
    mods, done = imported(argv)
    assert not mods & set(SCIENTIFIC + OPTIONAL), sorted(mods & set(SCIENTIFIC + OPTIONAL))
    if argv[-1] == "keyd_shaft":
        assert done.returncode == 0  # runpy's SystemExit is caught; the message says why
        assert "did you mean 'keyed_shaft'?" in done.stderr
    else:
        assert "keyed_shaft" in done.stdout or "outline" in done.stdout


def test_solve_imports_only_what_it_uses(tmp_path):
    """A shape file solved to JSON: no pictures, drawings, mesh files, cluster or
    terminal tables, so none of matplotlib, ezdxf, meshio, dask or rich."""
    out = tmp_path / "o.json"
    mods, done = imported(["solve", str(ROOT / "shapes" / "hex-drive.toml"), "--quiet",
                           "--json", str(out)])
    assert out.exists(), done.stderr
    assert not mods & set(OPTIONAL + ("rich",)), sorted(mods & set(OPTIONAL + ("rich",)))
    assert {"numpy", "scipy", "shapely", "triangle"} <= mods  # the solve itself ran


def test_one_command_parser_still_takes_debug_and_help(capsys):
    """Only the named command's parser is built; --debug before it still works, and
    --help before a command prints the whole list."""
    assert main(["--debug", "shapes", "tube"]) == 0
    assert "wall" in capsys.readouterr().out
    with pytest.raises(SystemExit) as exc:
        main(["--help", "shapes"])
    assert exc.value.code == 0
    text = capsys.readouterr().out
    for name in ("solve", "show", "shapes", "check", "shaft", "batch", "sweep"):
        assert name in text
    with pytest.raises(SystemExit) as exc:
        main(["shapes", "--bogus"])
    assert exc.value.code == 2
    assert "soapfilm shapes: error: unrecognized arguments: --bogus" in capsys.readouterr().err
