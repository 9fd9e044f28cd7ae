"""``check`` and ``shaft`` as a designer meets them: the twist rule, exit statuses, reports.

Hand checks: twist = sum T_i L_i / (G J_i) (Gere, Mechanics of Materials, torsion of
circular bars and nonuniform torsion); the keyed section's J from Roark's Formulas for
Stress and Strain, 7th ed., Table 10.1 (a handbook fit: 2 %); the twist limit 0.25 deg/m
and "1 deg in 20 diameters" are rules of thumb (common practice, from memory).
"""

from __future__ import annotations

import base64
import json
import math
import subprocess
import textwrap
from pathlib import Path

import pytest

from _visual_sections import nonwhite_fraction, png_pixels
from soapfilm.cli import main
from soapfilm.errors import EXIT_CHECK_FAILED
from test_report import CHROMIUM, _parse
from test_shaft import _roark_keyway

SHAPES = Path(__file__).parent.parent / "shapes"
README_CHECK = ["check", str(SHAPES / "keyed-shaft-40.txt"), "--torque", "320 N*m", "--length",
                "80 mm", "--material", "carbon-steel", "--nominal-diameter", "40 mm",
                "--safety-factor", "2"]
G_CARBON = 81e9  # EN 1993-1-1:2005, 3.2.6


def test_exit_status_constant():
    """Distinct from a user error (2) and an internal error (1)."""
    assert EXIT_CHECK_FAILED == 3


def test_readme_check_example_passes_on_the_twist_of_the_bar(tmp_path, capsys, monkeypatch):
    """The README's example: a 40 mm keyed seat, 80 mm long, 320 N*m.

    By hand: phi = T L / (G J) with J from Roark's keyway fit (r = 20, keyway 12 wide,
    5 deep) = 0.084 deg; the rule of thumb allows 0.25 deg/m, and a bar shorter than the
    metre the rule is written per may twist what a metre may: 0.25 deg.  Utilisation 0.33:
    the stress (0.45) governs, PASS, exit 0.  The strict per-length reading would fail it
    on 1.05 deg/m, which is what a per-metre rule is not meant for.
    """
    monkeypatch.setenv("COLUMNS", "250")
    out = tmp_path / "c.json"
    assert main([*README_CHECK, "--json", str(out)]) == 0
    text = capsys.readouterr().out
    assert "PASS" in text and "governed by the peak shear stress" in text
    data = json.loads(out.read_text())
    k_roark, _ = _roark_keyway(20.0, 5.0, 6.0)  # mm^4
    phi = 320.0 * 0.08 / (G_CARBON * k_roark * 1e-12)
    assert data["twist_angle_rad"] == pytest.approx(phi, rel=0.02)
    assert data["allowed_twist_angle_rad"] == pytest.approx(math.radians(0.25), rel=1e-12)
    assert data["utilisation_twist"] == pytest.approx(phi / math.radians(0.25), rel=0.02)
    assert data["utilisation_twist"] < data["utilisation_stress"] < 1
    assert data["governs"] == "stress" and data["passed"] is True
    # the strict reading, on request
    assert main([*README_CHECK, "--twist-rule", "segments", "--json", str(out),
                 "--quiet"]) == EXIT_CHECK_FAILED
    data = json.loads(out.read_text())
    assert data["twist_rule"] == "segments"
    assert data["utilisation_twist"] == pytest.approx(
        320.0 / (G_CARBON * k_roark * 1e-12) / math.radians(0.25), rel=0.02)


LINE_SHAFT = """
name = "Line shaft"
{limit}
[check]
material = "carbon-steel"
safety_factor = 2

[[segment]]
name = "shaft"
length = "3 m"
section = {{ diameter = "40 mm" }}

[[load]]
name = "drive pulley"
at = "0 m"
torque = "320 N*m"

[[load]]
name = "driven pulley"
at = "3 m"
torque = "-320 N*m"
"""


def test_long_slender_shaft_fails_on_twist(tmp_path, capsys, monkeypatch):
    """A 40 mm line shaft carrying 320 N*m over 3 m: phi = T L / (G J) = 2.70 deg against
    0.25 deg/m x 3 m = 0.75 deg: FAIL on twist, exit 3, while the stress 16 T / (pi d^3) =
    25.5 MPa is far below 153 MPa.  Under "1 deg in 20 diameters" (d = 40 mm: 1 deg per
    800 mm) it is allowed 3.75 deg and passes."""
    monkeypatch.setenv("COLUMNS", "250")  # the headline on one line
    f = tmp_path / "line.toml"
    f.write_text(textwrap.dedent(LINE_SHAFT.format(limit="")))
    out = tmp_path / "l.json"
    assert main(["shaft", str(f), "--json", str(out)]) == EXIT_CHECK_FAILED
    text = capsys.readouterr().out
    assert "FAIL" in text and "governed by the twist from drive pulley to driven pulley" in text
    data = json.loads(out.read_text())
    j = math.pi * 0.04**4 / 32
    phi = 320.0 * 3.0 / (G_CARBON * j)
    gov = data["twist_check"]["governing"]
    assert abs(gov["twist_angle_rad"]) == pytest.approx(phi, rel=1e-12)
    assert gov["allowed_twist_angle_rad"] == pytest.approx(math.radians(0.25) * 3, rel=1e-12)
    assert data["totals"]["utilisation"] == pytest.approx(phi / math.radians(0.75), rel=1e-12)
    assert data["totals"]["governs"] == "twist" and data["totals"]["passed"] is False
    assert data["segments"][0]["max_shear_stress_Pa"] == pytest.approx(
        16 * 320 / (math.pi * 0.04**3), rel=1e-12)
    f.write_text(textwrap.dedent(LINE_SHAFT.format(limit='twist_limit = "1 deg/(800 mm)"')))
    assert main(["shaft", str(f), "--json", str(out), "--quiet"]) == 0
    tw = json.loads(out.read_text())["twist_check"]
    assert tw["limit_per_length_m"] == pytest.approx(0.8, rel=1e-12)
    assert tw["governing"]["allowed_twist_angle_rad"] == pytest.approx(
        math.radians(1.0) / 0.8 * 3.0, rel=1e-12)


def test_exit_statuses_are_distinct(tmp_path, capsys, monkeypatch):
    """0 pass, 3 check failed, 2 user error, 1 internal error (README, "Exit status")."""
    assert main([*README_CHECK, "--quiet"]) == 0
    assert main([*README_CHECK, "--torque", "3000 N*m", "--quiet"]) == EXIT_CHECK_FAILED
    assert main([*README_CHECK, "--safety-factor", "0.8"]) == 2
    assert "safety factor 0.8 is below 1" in capsys.readouterr().err

    def broken(*args, **kwargs):
        raise RuntimeError("simulated bug")

    import soapfilm.cli.check as check_cli

    monkeypatch.setattr(check_cli, "finish", broken)
    assert main([*README_CHECK, "--quiet"]) == 1
    assert "internal error" in capsys.readouterr().err


HELD = """
name = "Winch"
[check]
material = "alloy-steel"
{check}

[[segment]]
name = "drum seat"
length = "400 mm"
section = {{ diameter = "50 mm" }}

[[segment]]
name = "tube end"
length = "200 mm"
section = {{ diameter = "36 mm", bore = "18 mm" }}

[[support]]
name = "brake (held)"
at = "0 mm"

[[load]]
name = "drum"
at = "400 mm"
torque = "300 N*m"

[[load]]
name = "hand wheel"
at = "600 mm"
torque = "100 N*m"
"""


@pytest.mark.parametrize(("check", "args", "message"), [
    ('allowable_shear = "120 MPa"\nsafety_factor = 2', [],
     r"\[check\]: 'safety_factor' cannot be combined with 'allowable_shear'"),
    ('allowable_shear = "120 MPa"\ncriterion = "tresca"', [],
     r"'criterion' cannot be combined with 'allowable_shear'"),
    ('allowable_shear = "120 MPa"', ["--safety-factor", "2"],
     r"--safety-factor cannot be combined with the allowable_shear of the shaft file"),
    ("safety_factor = 0.5", [], r"key 'safety_factor': safety factor 0.5 is below 1"),
    ("", ["--safety-factor", "0.9"], r"--safety-factor: safety factor 0.9 is below 1"),
    ('twist_rule = "per-metre"', [], r"unknown twist rule 'per-metre'"),
])
def test_shaft_file_refuses_what_check_refuses(tmp_path, capsys, check, args, message):
    import re

    text = HELD.format(check=check)
    if check.startswith("twist_rule"):  # a top-level key
        text = check + "\n" + HELD.format(check="")
    f = tmp_path / "s.toml"
    f.write_text(textwrap.dedent(text))
    out = tmp_path / "never.json"
    assert main(["shaft", str(f), *args, "--json", str(out)]) == 2
    err = capsys.readouterr().err
    assert re.search(message, err), err
    assert err.count("\n") == 1 and not out.exists()


def test_held_station_and_plain_tube(tmp_path, capsys, monkeypatch):
    """A station named "... (held)" is shown once so; a plain tube has no Kts."""
    monkeypatch.setenv("COLUMNS", "200")
    f = tmp_path / "s.toml"
    f.write_text(textwrap.dedent(HELD.format(check="")))
    out = tmp_path / "s.json"
    main(["shaft", str(f), "--json", str(out)])
    text = capsys.readouterr().out
    assert "brake (held)" in text and "(held) (held)" not in text
    data = json.loads(out.read_text())
    assert data["segments"][1]["section"]["stress_concentration_kts"] is None
    assert data["segments"][1]["section"]["nominal_diameter_m"] is None


def test_shaft_plot_formats(tmp_path, capsys):
    f = tmp_path / "s.toml"
    f.write_text(textwrap.dedent(HELD.format(check="")))
    svg, pdf = tmp_path / "s.svg", tmp_path / "s.pdf"
    main(["shaft", str(f), "--plot", str(svg), "--quiet"])
    main(["shaft", str(f), "--plot", str(pdf), "--quiet"])
    assert b"<svg" in svg.read_bytes()[:500]
    assert pdf.read_bytes()[:5] == b"%PDF-"
    assert main(["shaft", str(f), "--plot", str(tmp_path / "s.gif")]) == 2
    assert "picture format" in capsys.readouterr().err
    assert not (tmp_path / "s.gif").exists()


def test_check_report_headline_table_inputs(tmp_path):
    """check --report: verdict first, the check in words and units, every input with its
    source, the refinement history with labelled columns and no 'inf'."""
    import html as html_mod

    out = tmp_path / "c.html"
    assert main([*README_CHECK, "--report", str(out), "--quiet"]) == 0
    page = out.read_text()
    c = _parse(page)
    assert not c.errors and not c.stack
    text = html_mod.unescape(" ".join(c.text))
    assert text.index("PASS") < text.index("Check inputs and their sources") < text.index(
        "Refinement history")
    assert "what value limit utilisation basis" in " ".join(text.split())
    for label in ("Safety factor n", "Twist limit", "Twist limit written per", "Twist rule",
                  "Nominal diameter for Kts", "given with --nominal-diameter",
                  "--safety-factor", "Yield strength Sy", "Shear modulus G", "EN 1993-1-1"):
        assert label in text, label
    assert "J lower bound [mm^4]" in text and "peak shear per unit torque [1/mm^3]" in text
    for raw in ("torsion_constant_m4", "inf", "warnings ()", "passed no", "max_shear_error"):
        assert raw not in text, raw


def _shaft_report(tmp_path) -> Path:
    f = tmp_path / "s.toml"
    f.write_text(textwrap.dedent(HELD.format(check="")))
    out = tmp_path / "s.html"
    code = main(["shaft", str(f), "--report", str(out), "--quiet"])
    assert code in (0, EXIT_CHECK_FAILED)
    return out


def test_shaft_report_is_complete(tmp_path):
    import html as html_mod

    out = _shaft_report(tmp_path)
    page = out.read_text()
    c = _parse(page)
    assert not c.errors and not c.stack
    for tag, key, url in c.urls:
        assert url.startswith("data:"), (tag, key, url)
    assert len(c.images) == 1
    img = png_pixels(base64.b64decode(c.images[0].split(",", 1)[1]))
    assert nonwhite_fraction(img) > 0.1
    text = html_mod.unescape(" ".join(c.text))
    from soapfilm import CAUTION

    assert CAUTION in text
    for heading in ("Check", "Check inputs and their sources", "Along the shaft",
                    "Segments and sections", "Stress in every segment",
                    "Twist between neighbouring stations", "Stations", "Warnings"):
        assert heading in text, heading
    assert "drum seat" in text and "tube end" in text and "hand wheel" in text
    assert "(held) (held)" not in text


@pytest.mark.skipif(CHROMIUM is None, reason="chromium not installed (apt-get install chromium)")
def test_shaft_report_renders_in_headless_chromium(tmp_path):
    out = _shaft_report(tmp_path)
    shot = tmp_path / "shot.png"
    run = subprocess.run([CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu",
                          "--hide-scrollbars", "--enable-logging=stderr", "--v=0",
                          "--no-first-run", f"--user-data-dir={tmp_path / 'profile'}",
                          "--window-size=1000,2400", f"--screenshot={shot}", out.as_uri()],
                         capture_output=True, text=True, timeout=90)
    assert run.returncode == 0, run.stderr[-2000:]
    console = [ln for ln in run.stderr.splitlines() if ":CONSOLE" in ln]
    assert not console, console
    img = png_pixels(shot.read_bytes())
    assert img.shape[:2] == (2400, 1000) and nonwhite_fraction(img) > 0.08
