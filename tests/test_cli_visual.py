"""Command line: ``show``, and the picture/report/mesh options of ``solve``."""

from __future__ import annotations

import io
import os

import meshio
import pytest

from _visual_sections import nonwhite_fraction, png_pixels
from soapfilm import CAUTION
from soapfilm.cli import main
from soapfilm.cli._io import progress

BOX = """# box tube 40 x 25, wall 4 (mm)
0 0
40 0
40 25
0 25

4 4
36 4
36 21
4 21
"""


@pytest.fixture()
def box(tmp_path):
    p = tmp_path / "box.txt"
    p.write_text(BOX)
    return p


def test_show_writes_a_picture(tmp_path, box, capsys):
    out = tmp_path / "box.png"
    assert main(["show", str(box), "--png", str(out)]) == 0
    img = png_pixels(out.read_bytes())
    assert img.shape[1] >= 900 and nonwhite_fraction(img) > 0.2
    assert f"wrote {out}" in capsys.readouterr().out
    svg = tmp_path / "box-mesh.svg"
    assert main(["show", str(box), "-o", str(svg), "--mesh", "--mesh-size", "2", "--quiet"]) == 0
    assert b"<svg" in svg.read_bytes()[:500]
    assert capsys.readouterr().out == ""


def test_show_draws_a_mesh_file(tmp_path, box):
    vtu = tmp_path / "box.vtu"
    assert main(["solve", str(box), "--mesh-size", "2", "--mesh-out", str(vtu), "--quiet"]) == 0
    out = tmp_path / "m.pdf"
    assert main(["show", str(vtu), "--png", str(out), "--mesh"]) == 0
    assert out.read_bytes()[:5] == b"%PDF-"


@pytest.mark.parametrize("args, message", [
    (["--png", "{tmp}/nofolder/x.png"], "does not exist"),
    (["--png", "{tmp}/x.jpg"], "picture format"),
    (["--png", "{tmp}/x.png", "--mesh-size", "-1"], "positive length"),
])
def test_show_bad_output_exit_2(tmp_path, box, capsys, args, message):
    args = [a.format(tmp=tmp_path) for a in args]
    assert main(["show", str(box), *args]) == 2
    err = capsys.readouterr().err
    assert message in err and len(err.strip().splitlines()) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["box.txt"]


def test_solve_writes_every_output(tmp_path, box, capsys):
    outs = {k: tmp_path / v for k, v in {
        "--plot": "shear.png", "--plot-warping": "warp.svg", "--plot-3d": "phi.pdf",
        "--report": "box.html", "--mesh-out": "box.vtu"}.items()}
    args = ["solve", str(box), "--mesh-size", "1.5", "--torque", "50", "--plot-mesh"]
    for k, v in outs.items():
        args += [k, str(v)]
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "Peak shear stress at T = 50 N·m" in text and "MPa" in text
    assert nonwhite_fraction(png_pixels(outs["--plot"].read_bytes())) > 0.2  # tube: big hole
    assert b"<svg" in outs["--plot-warping"].read_bytes()[:500]
    assert outs["--plot-3d"].read_bytes()[:5] == b"%PDF-"
    assert CAUTION in outs["--report"].read_text()
    m = meshio.read(outs["--mesh-out"])
    assert "shear_stress_MPa" in m.point_data
    leftovers = [p.name for p in tmp_path.iterdir() if p.name.endswith(".part")]
    assert not leftovers


def test_json_to_stdout_stays_clean_with_outputs(tmp_path, box, capsys):
    out = tmp_path / "s.png"
    assert main(["solve", str(box), "--mesh-size", "2", "--json", "-", "--plot", str(out)]) == 0
    text = capsys.readouterr().out
    assert text.lstrip().startswith("{") and "wrote" not in text


@pytest.mark.parametrize("args, message", [
    (["--plot", "{tmp}/ok.png", "--report", "{tmp}/missing/r.html"], "does not exist"),
    (["--plot", "{tmp}/ok.png", "--plot-warping", "{tmp}/ok.png"], "is also given to --plot"),
    (["--json", "{tmp}/r.html", "--report", "{tmp}/r.html"], "is also given to --json"),
    (["--plot", "{tmp}/ok.gif"], "picture format"),
    (["--report", "{tmp}/r.pdf"], "must end in .html"),
    (["--mesh-out", "{tmp}/m.xyz"], "cannot tell the mesh format"),
    (["--plot-mesh"], "needs --plot"),
    (["--plot", "{tmp}/ok.png", "--torque", "-4"], "torque must be a positive"),
    (["--plot", "{tmp}/ok.png", "--torque", "nan"], "is not a finite value"),
])
def test_solve_bad_outputs_exit_2_before_work(tmp_path, box, capsys, args, message):
    args = [a.format(tmp=tmp_path) for a in args]
    assert main(["solve", str(box), *args]) == 2
    err = capsys.readouterr().err
    assert message in err, err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["box.txt"]


def test_solve_refuses_to_overwrite_the_input_or_a_folder(tmp_path, box, capsys):
    vtu = tmp_path / "box.vtu"
    assert main(["solve", str(box), "--mesh-size", "3", "--mesh-out", str(vtu), "--quiet"]) == 0
    before = vtu.read_bytes()
    assert main(["solve", str(vtu), "--mesh-out", str(vtu)]) == 2
    assert "would overwrite the input" in capsys.readouterr().err
    assert vtu.read_bytes() == before
    (tmp_path / "pics.png").mkdir()
    assert main(["solve", str(box), "--plot", str(tmp_path / "pics.png")]) == 2
    assert "is a folder" in capsys.readouterr().err
    if os.path.isdir("/proc"):  # a folder nobody can create files in, even root
        assert main(["solve", str(box), "--report", "/proc/r.html"]) == 2
        assert "cannot write in folder '/proc'" in capsys.readouterr().err


def test_progress_is_silent_off_a_terminal():
    class Tty(io.StringIO):
        def isatty(self):
            return True

    pipe = io.StringIO()
    with progress("refining", total=3, stream=pipe) as bar:
        for _ in range(3):
            bar.update(description="refining: step")
    assert pipe.getvalue() == ""
    with progress("refining", total=3, quiet=True, stream=Tty()) as bar:
        bar.update()
    assert type(bar).__name__ == "_Silent"
    with progress("refining", total=2, stream=Tty()) as bar:
        bar.update(advance=2, description="done")
    assert type(bar).__name__ == "_RichProgress"
