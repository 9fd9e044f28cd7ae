"""HTML report: self-contained, well formed, complete; renders in headless Chromium."""

from __future__ import annotations

import base64
import dataclasses
import html
import json
import os
import shutil
import subprocess
from html.parser import HTMLParser

import numpy as np
import pytest

from _visual_sections import nonwhite_fraction, png_pixels, rect_result, tube_result
from soapfilm import CAUTION
from soapfilm.report import html_table, render_report

VOID = {"meta", "img", "br", "hr", "link", "input", "col", "wbr", "source", "area", "base"}
CHROMIUM = shutil.which("chromium") or (
    "/usr/bin/chromium" if os.path.exists("/usr/bin/chromium") else None)


class _Checker(HTMLParser):
    """Collects text, links and images; checks that every element is closed in order."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.text: list[str] = []
        self.urls: list[tuple[str, str, str]] = []
        self.images: list[str] = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        for key in ("src", "href", "action", "data", "poster"):
            if key in a:
                self.urls.append((tag, key, a[key] or ""))
        if tag == "img":
            self.images.append(a.get("src", ""))
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.handle_starttag(tag, attrs)
        if tag not in VOID:
            self.stack.pop()

    def handle_endtag(self, tag):
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes <{self.stack[-1] if self.stack else None}>")
        else:
            self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


def _parse(text: str) -> _Checker:
    c = _Checker()
    c.feed(text)
    c.close()
    return c


@pytest.fixture(scope="module")
def report_text() -> str:
    r = tube_result()
    r = dataclasses.replace(
        r,
        warnings=("sharp re-entrant corner at (4, 4): the peak there is mesh-dependent",),
        refinement=({"step": 0, "elements": 900, "nodes": 500, "j_lo": 1.0, "j_hi": 1.1,
                     "relative_bracket": 0.095, "max_shear_error": float("inf")},
                    {"step": 1, "elements": 2400, "nodes": 1300, "j_lo": 1.05, "j_hi": 1.06,
                     "relative_bracket": 0.0095, "max_shear_error": 0.004}),
    )
    shaft = {"torque": 50.0, "allowable shear": 48.0, "utilisation": 0.22, "passed": True,
             "twist": {"angle per length": 0.001, "limit": 0.0044}}
    return render_report(r, inputs={"input file": "box.txt"}, torque=50.0,
                         shaft_check=shaft, generated="2026-01-01 00:00 UTC")


def test_report_is_well_formed_and_self_contained(report_text):
    c = _parse(report_text)
    assert not c.errors and not c.stack, (c.errors, c.stack)
    assert report_text.lstrip().startswith("<!DOCTYPE html>")
    for tag, key, url in c.urls:
        assert not url.lower().startswith(("http:", "https:", "//", "file:")), (tag, key, url)
    assert "http://" not in report_text and "https://" not in report_text
    assert len(c.images) == 4  # section, shear map, warping map, normalised warping map
    for src in c.images:
        assert src.startswith("data:image/png;base64,")
        img = png_pixels(base64.b64decode(src.split(",", 1)[1]))
        assert nonwhite_fraction(img) > 0.1


def test_report_content(report_text):
    r = tube_result()
    text = " ".join(_parse(report_text).text)
    assert CAUTION in text
    assert f"{r.max_shear_per_torque:.6g}" in text  # peak per unit torque
    # stress at 50 N*m on a mm section: tau/T [1/mm^3] * 50e3 N*mm = MPa (SI definitions)
    assert f"{r.max_shear_per_torque * 50e3:.6g}" in text
    lo, hi = r.torsion_constant_bounds
    assert f"[{lo:.6g}, {hi:.6g}]" in text
    assert "sharp re-entrant corner" in text
    assert "Refinement history" in text and "2400" in text
    # labelled columns with units, no raw keys, no 'inf' (step 0 has no error estimate)
    assert f"J lower bound [{r.units}^4]" in text and "estimated peak error" in text
    assert "j_lo" not in text and "inf" not in text.replace("information", "")
    assert "9.50e-02" in text and "4.00e-03" in text
    assert "Shaft check" in text and "utilisation" in text and "angle per length" in text
    assert "box.txt" in text


def test_report_without_history_or_warnings():
    one_mesh = rect_result()
    # a single solve carries one notice: its peak estimate comes from one mesh
    assert len(one_mesh.warnings) == 1 and "one mesh" in one_mesh.warnings[0]
    assert "comes from this one mesh" in html.unescape(render_report(one_mesh))
    text = html.unescape(render_report(dataclasses.replace(one_mesh, warnings=())))
    assert "no adaptive refinement" in text and "No warnings." in text
    assert "Shaft check" not in text
    assert CAUTION in text


def test_html_table_escapes_and_nests():
    out = html_table({"<b>": "a & b", "rows": [{"x": 1, "y": 2.5}, {"x": 3}], "ok": False})
    c = _parse(out)
    assert not c.errors and not c.stack
    assert "&lt;b&gt;" in out and "a &amp; b" in out and ">no<" in out
    assert out.count("<table>") == 2


@pytest.mark.skipif(CHROMIUM is None, reason="chromium not installed (apt-get install chromium)")
def test_report_renders_in_headless_chromium(tmp_path, report_text):
    page = tmp_path / "report.html"
    page.write_text(report_text, encoding="utf-8")
    shot = tmp_path / "shot.png"
    pdf = tmp_path / "print.pdf"
    common = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
              "--enable-logging=stderr", "--v=0", "--no-first-run",
              f"--user-data-dir={tmp_path / 'profile'}"]
    run = subprocess.run(common + ["--window-size=1000,2400", f"--screenshot={shot}",
                                   page.as_uri()], capture_output=True, text=True, timeout=90)
    assert run.returncode == 0, run.stderr[-2000:]
    if os.environ.get("SOAPFILM_KEEP_SCREENSHOT"):
        shutil.copy(shot, os.environ["SOAPFILM_KEEP_SCREENSHOT"])
    console = [ln for ln in run.stderr.splitlines() if ":CONSOLE" in ln]
    assert not console, console  # no blocked loads, no script or CSP errors
    img = png_pixels(shot.read_bytes())
    assert img.shape[:2] == (2400, 1000)
    assert nonwhite_fraction(img) > 0.08  # a 186 mm column with white margins
    # the shear map's viridis colours reached the screen
    assert np.any(np.all(np.abs(img[..., :3] - [0.993248, 0.906157, 0.143936]) < 0.05, axis=-1))
    run = subprocess.run(common + ["--no-pdf-header-footer", f"--print-to-pdf={pdf}",
                                   page.as_uri()], capture_output=True, text=True, timeout=90)
    assert run.returncode == 0, run.stderr[-2000:]
    data = pdf.read_bytes()
    assert data[:5] == b"%PDF-" and data.count(b"/Type /Page\n") + data.count(b"/Type/Page") >= 1


def test_notebook_html_and_json_ready_dict():
    r = rect_result()
    c = _parse(r._repr_html_())
    assert not c.errors and not c.stack
    assert CAUTION in " ".join(c.text)
    d = r.to_dict()
    assert json.loads(json.dumps(d, allow_nan=False)) == d
    assert d["max_shear_per_torque"] == r.max_shear_per_torque
