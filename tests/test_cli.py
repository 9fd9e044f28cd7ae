"""The command line: a good run, and every bad input gives one line and exit 2."""

import json

import pytest

import reference as ref
from soapfilm.cli import main


def _write(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_solve_writes_json_with_stable_keys(tmp_path, capsys):
    """A 3 x 1 rectangle in mm: J against the Saint-Venant series (Timoshenko & Goodier,
    3rd ed., sec. 109)."""
    src = _write(tmp_path, "bar.csv", "0,0\n30,0\n30,10\n0,10\n")
    out = tmp_path / "bar.json"
    assert main(["solve", str(src), "--json", str(out)]) == 0
    data = json.loads(out.read_text())
    for key in ("units", "area", "centroid", "polar_moment", "torsion_constant",
                "max_shear_per_torque", "torsional_section_modulus", "peak_location",
                "mesh", "warnings"):
        assert key in data
    assert set(data["mesh"]) >= {"nodes", "elements", "order"}
    assert data["units"] == "mm"
    j, tau = ref.rectangle_series(30, 10)
    assert data["torsion_constant"] == pytest.approx(j, rel=1e-3)
    assert data["torsional_section_modulus"] == pytest.approx(1 / tau, rel=3e-2)
    assert "Torsion constant" in capsys.readouterr().out


def test_json_to_stdout_is_pure_json(tmp_path, capsys):
    src = _write(tmp_path, "sq.txt", "0 0\n1 0\n1 1\n0 1\n")
    assert main(["solve", str(src), "--json", "-", "--units", "in"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["units"] == "in"


TRI = "0 0\n10 0\n5 8\n"
BAD = {
    "missing file": (None, "file not found"),
    "empty file": ("", "no points found"),
    "comments only": ("# nothing\n\n", "no points found"),
    "non-numeric line": ("0 0\n1 zero\n1 1\n", r":2: expected two numbers"),
    "three numbers": ("0 0 0\n1 0\n1 1\n", r":1: expected two numbers"),
    "short loop": ("0 0\n1 0\n", "loop 1 .*2 distinct point"),
    "short hole": (TRI + "\n4 2\n5 2\n", "loop 2 .*2 distinct point"),
    "self-intersecting": ("0 0\n2 2\n2 0\n0 2\n", "crosses itself"),
    "hole outside": (TRI + "\n20 20\n21 20\n21 21\n", "not inside the outer loop"),
    "hole touching outside": (TRI + "\n0 0\n4 1\n4 2\n", "touches the outer loop"),
    "overlapping holes": (
        "0 0\n10 0\n10 10\n0 10\n\n2 2\n5 2\n5 5\n2 5\n\n4 4\n7 4\n7 7\n4 7\n",
        "overlaps or touches",
    ),
    "zero area": ("0 0\n1 1\n2 2\n", "zero area|crosses itself"),
    "not a number NaN": ("0 0\nnan 1\n1 1\n", "non-finite"),
}


@pytest.mark.parametrize("case", list(BAD))
def test_bad_input_one_line_exit_2(tmp_path, capsys, case):
    text, pattern = BAD[case]
    src = tmp_path / "sec.txt"
    if text is not None:
        src.write_text(text)
    out = tmp_path / "out.json"
    code = main(["solve", str(src), "--json", str(out)])
    err = capsys.readouterr().err
    assert code == 2
    assert len(err.strip().splitlines()) == 1, err
    assert "Traceback" not in err
    assert err.startswith("soapfilm: error: ")
    import re

    assert re.search(pattern, err), err
    assert not out.exists()
    assert list(tmp_path.glob("*.part")) == []


def test_bad_options(tmp_path, capsys):
    src = _write(tmp_path, "t.txt", TRI)
    assert main(["solve", str(src), "--mesh-size", "-1"]) == 2
    assert "--mesh-size" in capsys.readouterr().err
    assert main(["solve", str(src), "--json", str(tmp_path / "nofolder" / "x.json")]) == 2
    assert "does not exist" in capsys.readouterr().err
    with pytest.raises(SystemExit) as exc:
        main(["solve", str(src), "--units", "furlong"])
    assert exc.value.code == 2
    assert main(["solve", str(tmp_path / "x.unknown")]) == 2


def test_unknown_suffix(tmp_path, capsys):
    src = _write(tmp_path, "t.weird", TRI)
    assert main(["solve", str(src)]) == 2
    assert "unknown file type" in capsys.readouterr().err


def test_debug_shows_traceback(tmp_path, capsys):
    """--debug (after or before the command) adds the traceback; the error line and the
    user error's status 2 stay (before, the error was raised: status 1, as for a bug)."""
    for args in (["solve", str(tmp_path / "missing.txt"), "--debug"],
                 ["--debug", "solve", str(tmp_path / "missing.txt")]):
        assert main(args) == 2
        err = capsys.readouterr().err
        assert err.startswith("Traceback") and "InputError" in err
        assert err.splitlines()[-1].startswith("soapfilm: error: ")
