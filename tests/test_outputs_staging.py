"""Output files: staged, committed together, never over an input, none left on failure.

Every command's files go through one ``Outputs`` per run (soapfilm.cli._io): written
under a temporary ``.NAME.XXXX.part`` name in the target folder and renamed into
place only when every output of the run is written.  A full disk, a folder that
cannot be written, an error or SIGTERM leaves no output and no ``.part`` file; an
output that is a file the run read (a shaft file's section file, a shape file's
drawing, through a link or not) is refused.  A full disk is simulated by making the
write (or the rename) raise ENOSPC, as the system would.
"""

from __future__ import annotations

import builtins
import errno
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from soapfilm.cli import _io, main

SQUARE = "0 0\n20 0\n20 20\n0 20\n"
#: a shape file whose section is a point list it names
POINTS_SHAPE = 'units = "mm"\n[section]\nkind = "file"\nfile = "outline.txt"\n'
SHAFT = """name = "drive"
[check]
material = "carbon-steel"

[[segment]]
name = "key seat"
length = "200 mm"
section = { file = "outline.txt", nominal_diameter = "20 mm" }

[[load]]
name = "drive"
at = "0 mm"
torque = "10 N*m"

[[load]]
name = "driven"
at = "200 mm"
torque = "-10 N*m"
"""


def _folder(tmp_path) -> Path:
    (tmp_path / "outline.txt").write_text(SQUARE, encoding="utf-8")
    (tmp_path / "part.toml").write_text(POINTS_SHAPE, encoding="utf-8")
    (tmp_path / "part2.toml").write_text(POINTS_SHAPE, encoding="utf-8")
    (tmp_path / "drive.toml").write_text(SHAFT, encoding="utf-8")
    return tmp_path


def _files(folder) -> set[str]:
    return {p.name for p in Path(folder).iterdir()}


INPUTS = {"outline.txt", "part.toml", "part2.toml", "drive.toml"}


def _one_error_line(capsys) -> str:
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1, err
    return err


# ------------------------------------------------------------------ a file the run read
@pytest.mark.parametrize("argv, option", [
    (["solve", "part.toml", "--mesh-size", "5", "--json", "outline.txt"], "--json"),
    (["check", "part.toml", "--mesh-size", "5", "--torque", "10", "--length", "1 m",
      "--material", "carbon-steel", "--json", "outline.txt"], "--json"),
    (["shaft", "drive.toml", "--mesh-size", "5", "--json", "outline.txt"], "--json"),
    (["batch", "part.toml", "--mesh-size", "5", "--jobs", "1", "--csv", "outline.txt"], "--csv"),
    (["batch", "part.toml", "part2.toml", "--mesh-size", "5", "--jobs", "2", "--csv", "x.csv",
      "--json", "./link.txt"], "--json"),
    (["sweep", "part.toml", "--vary", "rotate=0,45", "--mesh-size", "5", "--jobs", "2",
      "--json", "hard.txt"], "--json"),
])
def test_no_output_over_a_file_the_run_read(tmp_path, monkeypatch, capsys, argv, option):
    """The section file named inside a shape file or a shaft file is an input too, through
    a symbolic or a hard link as well; batch and sweep jobs read it in worker processes."""
    folder = _folder(tmp_path)
    (folder / "link.txt").symlink_to("outline.txt")
    os.link(folder / "outline.txt", folder / "hard.txt")
    monkeypatch.chdir(folder)
    assert main(argv) == 2
    err = _one_error_line(capsys)
    assert option in err and "would overwrite outline.txt, which this run read" in err, err
    assert (folder / "outline.txt").read_text(encoding="utf-8") == SQUARE
    assert _files(folder) == INPUTS | {"link.txt", "hard.txt"}  # no output, no .part


def test_two_outputs_one_file_through_a_link(tmp_path, monkeypatch, capsys):
    folder = _folder(tmp_path)
    monkeypatch.chdir(folder)
    (folder / "old.json").write_text("{}", encoding="utf-8")
    (folder / "also.json").symlink_to("old.json")
    assert main(["batch", "outline.txt", "--mesh-size", "5", "--jobs", "1", "--csv", "also.json",
                 "--json", "old.json", "--quiet"]) == 2
    assert "--json old.json" in _one_error_line(capsys)
    assert (folder / "old.json").read_text(encoding="utf-8") == "{}"
    assert _files(folder) == INPUTS | {"old.json", "also.json"}


# ------------------------------------------------------------------ a full disk
class _FullDisk:
    """``open`` for the staging code: files whose name contains ``part`` fill the disk."""

    def __init__(self, part: str):
        self.part = part

    def __call__(self, file, mode="r", *args, **kwargs):
        fh = builtins.open(file, mode, *args, **kwargs)
        if self.part in os.path.basename(str(file)) and "w" in mode:
            def write(data):
                raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
            fh.write = write
        return fh


def test_full_disk_while_writing_the_picture_leaves_nothing(tmp_path, monkeypatch, capsys):
    """The JSON and the mesh are written before the picture: the disk fills on the picture,
    and neither the JSON nor the mesh file may stay behind."""
    folder = _folder(tmp_path)
    monkeypatch.chdir(folder)
    monkeypatch.setattr(_io, "open", _FullDisk(".map.png"), raising=False)
    assert main(["solve", "outline.txt", "--mesh-size", "4", "--json", "r.json", "--mesh-out",
                 "m.vtu", "--plot", "map.png", "--quiet"]) == 2
    err = _one_error_line(capsys)
    assert "--plot map.png: could not write the file (No space left on device)" in err, err
    assert _files(folder) == INPUTS


@pytest.mark.parametrize("argv", [
    ["solve", "outline.txt", "--mesh-size", "4", "--json", "r.json"],
    ["check", "outline.txt", "--mesh-size", "4", "--torque", "10", "--length", "1 m",
     "--material", "carbon-steel", "--json", "r.json", "--quiet"],
    ["batch", "outline.txt", "--mesh-size", "4", "--jobs", "1", "--json", "r.json",
     "--csv", "r.csv", "--quiet"],
])
def test_full_disk_on_json_alone_is_a_user_error(tmp_path, monkeypatch, capsys, argv):
    """`--json` on a full disk: one line, exit 2 (was an internal error), no file."""
    folder = _folder(tmp_path)
    monkeypatch.chdir(folder)
    monkeypatch.setattr(_io, "open", _FullDisk(".r.json"), raising=False)
    assert main(argv) == 2
    assert "--json r.json: could not write the file (No space left on device)" in \
        _one_error_line(capsys)
    assert _files(folder) == INPUTS


def test_failed_rename_puts_every_file_back(tmp_path, monkeypatch, capsys):
    """The second rename fails: the first output, already in place, is taken back and the
    file it replaced restored; the second keeps its old contents."""
    folder = _folder(tmp_path)
    monkeypatch.chdir(folder)
    (folder / "r.csv").write_text("old csv\n", encoding="utf-8")
    (folder / "r.json").write_text("old json\n", encoding="utf-8")
    real = os.replace
    calls = []

    def replace(src, dst, *args, **kwargs):
        calls.append(dst)
        if len(calls) == 2:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(dst))
        return real(src, dst, *args, **kwargs)

    monkeypatch.setattr(_io.os, "replace", replace)
    assert main(["batch", "outline.txt", "--mesh-size", "4", "--jobs", "1", "--csv", "r.csv",
                 "--json", "r.json", "--quiet"]) == 2
    monkeypatch.setattr(_io.os, "replace", real)
    assert "could not write the file (No space left on device)" in _one_error_line(capsys)
    assert (folder / "r.csv").read_text(encoding="utf-8") == "old csv\n"
    assert (folder / "r.json").read_text(encoding="utf-8") == "old json\n"
    assert _files(folder) == INPUTS | {"r.csv", "r.json"}


# ------------------------------------------------------------------ a folder that cannot be written
def _read_only(folder: Path):
    """Make ``folder`` unwritable (chmod; as root, the immutable attribute); return the
    undo function, or None when this system lets the writes through anyway."""
    os.chmod(folder, 0o555)

    def undo():
        if os.geteuid() == 0:
            subprocess.run(["chattr", "-i", str(folder)], capture_output=True, check=False)
        os.chmod(folder, 0o755)
    if os.geteuid() == 0:
        subprocess.run(["chattr", "+i", str(folder)], capture_output=True, check=False)
    try:
        (folder / ".probe").touch()
    except OSError:
        return undo
    (folder / ".probe").unlink()
    undo()
    return None


def test_read_only_folder(tmp_path, monkeypatch, capsys):
    folder = _folder(tmp_path)
    out = folder / "out"
    out.mkdir()
    undo = _read_only(out)
    if undo is None:
        pytest.skip("this system lets writes into a read-only folder through")
    try:
        monkeypatch.chdir(folder)
        assert main(["solve", "outline.txt", "--mesh-size", "4", "--json", "r.json",
                     "--plot", "out/map.png", "--quiet"]) == 2
        assert "--plot out/map.png: cannot write in folder 'out'" in _one_error_line(capsys)
        assert os.listdir(out) == []
        assert _files(folder) == INPUTS | {"out"}
    finally:
        undo()


def test_folder_turned_read_only_during_the_run(tmp_path, monkeypatch, capsys):
    """Checked writable before the run, refused when the file is made: the files staged
    before are removed."""
    folder = _folder(tmp_path)
    monkeypatch.chdir(folder)
    real = _io._temporary

    def temporary(target):
        if target.name == "map.png":
            raise PermissionError(errno.EACCES, os.strerror(errno.EACCES))
        return real(target)

    monkeypatch.setattr(_io, "_temporary", temporary)
    assert main(["solve", "outline.txt", "--mesh-size", "4", "--json", "r.json", "--report",
                 "r.html", "--plot", "map.png", "--quiet"]) == 2
    assert "--plot map.png: could not write the file (Permission denied)" in \
        _one_error_line(capsys)
    assert _files(folder) == INPUTS


# ------------------------------------------------------------------ stopped
def test_sigterm_in_process_removes_staged_files(tmp_path, capsys):
    folder = _folder(tmp_path)

    def run(args):
        out = _io.run_outputs()
        out.stage(folder / "a.json", "{}", "--json")
        os.kill(os.getpid(), signal.SIGTERM)
        out.stage(folder / "b.csv", "x\n", "--csv")  # never reached
        out.commit()
        return 0

    before = signal.getsignal(signal.SIGTERM)
    assert _io.staged_run(run)(None) == 128 + signal.SIGTERM
    assert "stopped by SIGTERM; no output file written" in _one_error_line(capsys)
    assert _files(folder) == INPUTS
    assert signal.getsignal(signal.SIGTERM) is before  # the handler is given back


def test_sigterm_while_writing_outputs(tmp_path):
    """A real run stopped by SIGTERM once its JSON is staged, while the pictures and the
    report are drawn: exit 143, no output, no .part file."""
    folder = _folder(tmp_path)
    (folder / "rect.txt").write_text("0 0\n60 0\n60 30\n0 30\n", encoding="utf-8")
    proc = subprocess.Popen(
        [sys.executable, "-m", "soapfilm", "solve", "rect.txt", "--mesh-size", "0.8",
         "--json", "r.json", "--plot", "map.png", "--plot-mesh", "--plot-3d", "s.png",
         "--report", "r.html", "--mesh-out", "m.vtu", "--quiet"],
        cwd=folder, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 120
        while not any(n.startswith(".r.json.") and n.endswith(".part")
                      for n in os.listdir(folder)):
            assert proc.poll() is None, proc.communicate()
            assert time.monotonic() < deadline
            time.sleep(0.005)
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=60)
    finally:
        proc.kill()
    assert proc.returncode == 128 + signal.SIGTERM, err
    assert err.strip() == "soapfilm: stopped by SIGTERM; no output file written"
    assert _files(folder) == INPUTS | {"rect.txt"}


def test_outputs_committed_together(tmp_path, monkeypatch):
    """A run that works writes every file, and nothing else (no .part left)."""
    folder = _folder(tmp_path)
    monkeypatch.chdir(folder)
    assert main(["shaft", "drive.toml", "--mesh-size", "4", "--json", "s.json", "--plot",
                 "s.svg", "--report", "s.html", "--quiet"]) == 0
    assert _files(folder) == INPUTS | {"s.json", "s.svg", "s.html"}
    assert json.loads((folder / "s.json").read_text())["segments"][0]["name"] == "key seat"


def test_sigterm_stops_a_batch_and_its_workers(tmp_path):
    """SIGTERM to a batch whose worker processes are busy (each job needs minutes): the
    workers are ended with it, not waited for, and nothing is written."""
    folder = _folder(tmp_path)
    (folder / "rect.txt").write_text("0 0\n60 0\n60 30\n0 30\n", encoding="utf-8")
    proc = subprocess.Popen(
        [sys.executable, "-m", "soapfilm", "batch", "rect.txt", "outline.txt", "--order", "1",
         "--tol", "2e-5", "--jobs", "2", "--json", "b.json", "--csv", "b.csv", "--quiet"],
        cwd=folder, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        time.sleep(3)
        assert proc.poll() is None
        proc.send_signal(signal.SIGTERM)
        start = time.monotonic()
        _, err = proc.communicate(timeout=60)
        stopped = time.monotonic() - start
    finally:
        proc.kill()
    assert proc.returncode == 128 + signal.SIGTERM, err
    assert stopped < 15, f"{stopped:.1f} s to stop"  # was the jobs' whole time (minutes)
    assert _files(folder) == INPUTS | {"rect.txt"}


def _device(tmp_path, name: str, minor: int) -> Path:
    """A character device like /dev/null (minor 3) or /dev/full (7): made in ``tmp_path``
    when we may (as root, so that a mistake could not replace the system's own), else
    the system's (which an ordinary user cannot replace)."""
    if os.geteuid() == 0:
        dev = tmp_path / name
        try:
            os.mknod(dev, 0o666 | __import__("stat").S_IFCHR, os.makedev(1, minor))
            return dev
        except OSError:
            pytest.skip("cannot make a device node here")
    dev = Path("/dev") / name
    if not dev.exists():
        pytest.skip(f"no {dev}")
    return dev


def test_device_outputs_are_written_into_not_replaced(tmp_path, monkeypatch, capsys):
    """`--json /dev/null` discards the JSON and leaves the device a device (a rename over
    it, as root, made it a regular file); /dev/full fails every write with ENOSPC, a real
    full disk: one line, exit 2, and the CSV staged with it is not left behind."""
    import stat

    (tmp_path / "work").mkdir()
    folder = _folder(tmp_path / "work")
    monkeypatch.chdir(folder)
    null = _device(tmp_path, "null", 3)
    assert main(["batch", "outline.txt", "--mesh-size", "4", "--jobs", "1", "--json", str(null),
                 "--csv", "r.csv", "--quiet"]) == 0
    assert stat.S_ISCHR(os.stat(null).st_mode)
    assert _files(folder) == INPUTS | {"r.csv"}
    os.unlink("r.csv")
    full = _device(tmp_path, "full", 7)
    assert main(["batch", "outline.txt", "--mesh-size", "4", "--jobs", "1", "--json", str(full),
                 "--csv", "r.csv", "--quiet"]) == 2
    assert "could not write the file (No space left on device)" in _one_error_line(capsys)
    assert stat.S_ISCHR(os.stat(full).st_mode)
    assert _files(folder) == INPUTS
    assert not [n for n in os.listdir(tmp_path) if n.endswith(".part")]
