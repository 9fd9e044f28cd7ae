"""The JSON (and CSV) output against its schema, the README section "JSON output".

The README is the single source of the schema: :func:`documented_keys` reads its
tables (one ``###`` subsection per command, one ``####`` table per object, the
object's path first in backticks in the heading), and real runs of the commands
are checked against them: at every object the keys equal the documented keys,
every value has the documented type, every documented object and key occurs in
the runs, and numbers are finite or null.  The units column is checked too: a
section with every coordinate doubled, and a batch converted from mm to cm.

To add a command (``check``, ``shaft``): write its ``### `command``` subsection
with its tables in the README, run the command in a fixture and call
:func:`check_document` on the output, then :func:`assert_covered` on the runs.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import json
import math
import re
import warnings
from dataclasses import dataclass
from pathlib import Path

import meshio
import numpy as np
import pytest

from soapfilm import analyse, read_section
from soapfilm.batch import csv_text, document
from soapfilm.cli import main

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
SHAPES = ROOT / "shapes"
TOL = "1e-2"  # coarse accuracy: the schema does not depend on it


# --- the schema, from the README ----------------------------------------------------
@dataclass(frozen=True)
class Field:
    """One documented key (a row of a README table)."""

    key: str  # the name, or "<...>" for names that come from the input
    type: str
    unit: str
    meaning: str
    only: str | None  # "batch" for a key marked "(batch only)"

    @property
    def wildcard(self) -> bool:
        return self.key.startswith("<")


_ONLY = re.compile(r"\((\w+) only\)")


def _section_lines(command: str) -> list[str]:
    """Lines of the README's '### ' subsection of "## JSON output" naming `command`."""
    lines = README.read_text(encoding="utf-8").splitlines()
    start = lines.index("## JSON output")
    end = next((i for i in range(start + 1, len(lines)) if lines[i].startswith("## ")), len(lines))
    found, out = False, []
    for line in lines[start + 1:end]:
        if line.startswith("### "):
            found = f"`{command}`" in line
            continue
        if found:
            out.append(line)
    assert out, f"README 'JSON output' has no subsection for `{command}`"
    return out


def _tables(lines: list[str]) -> list[tuple[str, list[str], list[list[str]]]]:
    """(heading, header cells, rows of cells) of each table under a '#### ' heading."""
    tables, heading = [], None
    for line in lines:
        if line.startswith("#### "):
            heading = line[5:].strip()
            tables.append((heading, [], []))
        elif line.startswith("|") and heading is not None:
            cells = [c.strip() for c in line.strip().strip("|").split("|")]
            if set("".join(cells)) <= set("-: "):
                continue  # the rule under the header
            _, header, rows = tables[-1]
            if header:
                rows.append(cells)
            else:
                header.extend(cells)
    return [t for t in tables if t[1]]


def _field(cells: list[str]) -> Field:
    key_cell, type_, unit, meaning = cells
    name = re.match(r"`([^`]+)`", key_cell)
    assert name, f"README key cell without a `name`: {key_cell!r}"
    only = _ONLY.search(key_cell)
    return Field(name.group(1), type_, unit, meaning, only.group(1) if only else None)


def _path(heading: str) -> tuple[str, ...]:
    """'top level' -> (); '`rows[].inputs`' -> ('rows', '[]', 'inputs')."""
    if heading.startswith("top level"):
        return ()
    m = re.match(r"`([^`]+)`", heading)
    assert m, f"README table heading names no object: {heading!r}"
    out: list[str] = []
    for part in m.group(1).split("."):
        if part.endswith("[]"):
            out += [part[:-2], "[]"]
        else:
            out.append(part)
    return tuple(out)


def documented_keys(command: str) -> dict[tuple[str, ...], dict[str, Field]]:
    """The README's JSON schema of `command`: object path -> {key: Field}.

    A path is a tuple of keys, ``"[]"`` for the entries of a list and
    ``"<...>"`` for any key; keys and tables marked "(X only)" for another
    command X are left out.
    """
    schema: dict[tuple[str, ...], dict[str, Field]] = {}
    for heading, header, rows in _tables(_section_lines(command)):
        if header[0] != "key":
            continue
        assert header == ["key", "type", "unit", "meaning"], header
        only = _ONLY.search(heading)
        if only and only.group(1) != command:
            continue
        fields = [_field(r) for r in rows]
        path = _path(heading)
        assert path not in schema, f"README documents {heading!r} twice"
        schema[path] = {f.key: f for f in fields if f.only in (None, command)}
    assert () in schema, f"README has no top-level table for `{command}`"
    return schema


def documented_csv_columns(command: str) -> list[Field]:
    """The README's CSV column table of `command`, in order."""
    for _, header, rows in _tables(_section_lines(command)):
        if header[0] == "column":
            assert header == ["column", "unit", "meaning"], header
            fields = [_field([r[0], "", r[1], r[2]]) for r in rows]
            return [f for f in fields if f.only in (None, command)]
    raise AssertionError(f"README has no CSV column table for `{command}`")


# --- checking a document ------------------------------------------------------------
def _is(value, t: str) -> bool:
    if t == "null":
        return value is None
    if t == "string":
        return isinstance(value, str)
    if t == "boolean":
        return isinstance(value, bool)
    if t == "integer":
        return isinstance(value, int) and not isinstance(value, bool)
    if t == "number":
        return (isinstance(value, (int, float)) and not isinstance(value, bool)
                and math.isfinite(value))
    if t == "object":
        return isinstance(value, dict)
    m = re.fullmatch(r"list of (?:(\d+) )?(\w+)s", t)
    assert m, f"README names an unknown type {t!r}"
    return (isinstance(value, list) and (m.group(1) is None or len(value) == int(m.group(1)))
            and all(_is(v, m.group(2)) for v in value))


def type_matches(value, spec: str) -> bool:
    """Whether `value` has the README type `spec` ("number or null", "list of 2 numbers" ...)."""
    return any(_is(value, alt.strip()) for alt in spec.split(" or "))


def _objects(obj, path=()):
    """(path, dict) of every object in a JSON document."""
    if isinstance(obj, dict):
        yield path, obj
        for k, v in obj.items():
            yield from _objects(v, path + (k,))
    elif isinstance(obj, list):
        for v in obj:
            yield from _objects(v, path + ("[]",))


def _matches(pattern: tuple[str, ...], path: tuple[str, ...]) -> bool:
    return len(pattern) == len(path) and all(
        p == c or (p.startswith("<") and c != "[]") for p, c in zip(pattern, path, strict=True))


def _strict_loads(text: str):
    def no_constant(name):
        raise AssertionError(f"JSON holds {name}: numbers must be finite or null")

    return json.loads(text, parse_constant=no_constant)


def check_document(doc: dict, command: str) -> set[tuple[tuple[str, ...], str]]:
    """Assert `doc` matches the README schema of `command`; return the (path, key) pairs seen."""
    schema = documented_keys(command)
    seen = set()
    for path, obj in _objects(doc):
        patterns = [p for p in schema if _matches(p, path)]
        assert len(patterns) == 1, f"{command}: object at {'.'.join(path) or 'top level'} " \
                                   f"is documented {len(patterns)} times in the README"
        fields = schema[patterns[0]]
        explicit = {k for k, f in fields.items() if not f.wildcard}
        wild = [f for f in fields.values() if f.wildcard]
        where = f"{command}: {'.'.join(path) or 'top level'}"
        assert not explicit - set(obj), f"{where}: documented, not output: {explicit - set(obj)}"
        if not wild:
            assert not set(obj) - explicit, f"{where}: output, not documented: {set(obj) - explicit}"
        for key, value in obj.items():
            f = fields[key] if key in explicit else wild[0]
            assert type_matches(value, f.type), f"{where}.{key} = {value!r} is not {f.type}"
            seen.add((patterns[0], f.key))
    return seen


def assert_covered(command: str, seen: set) -> None:
    """Every documented object and key occurred in the runs (nothing documented that is not output)."""
    documented = {(p, k) for p, fields in documented_keys(command).items() for k in fields}
    assert not documented - seen, f"{command}: documented but in no run: {documented - seen}"


def length_power(unit: str) -> int | None:
    """Power of the length unit in a README unit cell: 'unit^4' 4, '1/unit^3' -3, '-' 0."""
    if unit in ("-", "deg"):
        return 0
    m = re.fullmatch(r"(1/)?unit(?:\^(\d+))?", unit)
    if m is None:
        return None  # seconds, or "see `input_units`"
    p = int(m.group(2) or 1)
    return -p if m.group(1) else p


def _numbers_by_key(fields: dict[str, Field], a: dict, b: dict):
    """(key, value in a, value in b, power of length) for the documented numbers."""
    for key, f in fields.items():
        p = length_power(f.unit)
        if f.wildcard or p is None or "number" not in f.type or a[key] is None:
            continue
        yield key, np.asarray(a[key], float), np.asarray(b[key], float), p


# --- runs ---------------------------------------------------------------------------
L_SHAPE = [(0, 0), (4, 0), (4, 1.5), (1.5, 1.5), (1.5, 3), (0, 3)]  # cm; re-entrant corner


def _point_list(path: Path, scale: float) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("".join(f"{scale * x!r} {scale * y!r}\n" for x, y in L_SHAPE))
    return path


def _run(argv: list[str], status: int = 0):
    assert main(argv) == status, argv


@pytest.fixture(scope="module")
def solve_runs(tmp_path_factory):
    """(name, JSON text, mesh-out file or None) of solve runs covering every documented key."""
    tmp = tmp_path_factory.mktemp("solve")
    runs = []
    cases = [
        ("hex", [str(SHAPES / "hex-drive.toml"), "--tol", TOL], True),  # curves
        ("hollow", [str(SHAPES / "debarker-hollow-spline.toml"), "--tol", TOL], True),  # a bore
        ("L", [str(_point_list(tmp / "a" / "L.txt", 1.0)), "--units", "cm", "--tol", TOL], True),
        ("L2", [str(_point_list(tmp / "b" / "L.txt", 2.0)), "--units", "cm", "--tol", TOL], False),
        ("L-once", [str(tmp / "a" / "L.txt"), "--units", "cm", "--mesh-size", "0.3",
                    "--order", "1"], False),  # one solve: no refinement, converged null
    ]
    for name, args, mesh_out in cases:
        out = tmp / f"{name}.json"
        vtu = tmp / f"{name}.vtu" if mesh_out else None
        _run(["solve", *args, "--json", str(out), "--quiet"]
             + (["--mesh-out", str(vtu)] if vtu else []))
        runs.append((name, out.read_text(encoding="utf-8"), vtu))
    return runs


def test_solve_json_matches_readme(solve_runs):
    seen = set()
    for _, text, _ in solve_runs:
        seen |= check_document(_strict_loads(text), "solve")
    assert_covered("solve", seen)


def test_solve_json_mesh_is_the_summary(solve_runs):
    """`mesh` holds counts equal to the sizes of the mesh --mesh-out writes, and of the last step."""
    for name, text, vtu in solve_runs:
        d = json.loads(text)
        assert len(text) < 20_000, (name, len(text))  # a summary, not the mesh (was 0.26-3.6 MB)
        assert d["mesh"]["order"] == d["element_order"]
        if d["refinement"]:
            last = d["refinement"][-1]
            assert (d["mesh"]["nodes"], d["mesh"]["elements"]) == (last["nodes"], last["elements"])
        if vtu is not None:
            m = meshio.read(vtu)
            assert d["mesh"]["nodes"] == len(m.points)
            assert d["mesh"]["elements"] == sum(len(c.data) for c in m.cells)


def test_solve_json_units_scale_with_the_section(solve_runs):
    """Every coordinate doubled (same unit): a quantity of unit^p doubles p times.

    Source: dimensional analysis (closed form; Timoshenko & Goodier, Theory of Elasticity,
    3rd ed., sec. 101: J ~ length^4, tau/T ~ length^-3).  Doubling is exact in binary
    floating point, so the meshes are the same up to scale and the agreement is to rounding.
    """
    runs = {name: json.loads(text) for name, text, _ in solve_runs}
    a, b = runs["L"], runs["L2"]
    assert a["units"] == b["units"] == "cm"
    assert a["singular_corners"] and a["refinement"]  # the objects below are compared
    schema = documented_keys("solve")
    pairs = [((), a, b), (("estimated_relative_error",), a["estimated_relative_error"],
                          b["estimated_relative_error"])]
    assert len(a["refinement"]) == len(b["refinement"])
    pairs += [(("refinement", "[]"), x, y) for x, y in zip(a["refinement"], b["refinement"],
                                                           strict=True)]
    pairs += [(("singular_corners", "[]"), x, y)
              for x, y in zip(a["singular_corners"], b["singular_corners"], strict=True)]
    pairs += [(("mesh",), a["mesh"], b["mesh"])]
    pairs += [(("warping",), a["warping"], b["warping"]),
              (("warping", "estimated_relative_error"), a["warping"]["estimated_relative_error"],
               b["warping"]["estimated_relative_error"])]
    size = 4.0  # cm, the L's width
    for path, x, y in pairs:
        for key, va, vb, p in _numbers_by_key(schema[path], x, y):
            np.testing.assert_allclose(vb, va * 2.0**p, rtol=1e-8, atol=1e-9 * (2 * size) ** p,
                                       err_msg=f"{path}.{key}: unit^{p}")


@pytest.fixture(scope="module")
def batch_runs(tmp_path_factory):
    """Two sections and a broken one, with the results in mm and in cm."""
    tmp = tmp_path_factory.mktemp("batch")
    files = [str(SHAPES / "hex-drive.toml"),  # units = "mm" in the file
             str(_point_list(tmp / "L.txt", 10.0)),  # no unit of its own: --units
             str(tmp / "bow-tie.txt")]  # crosses itself: an error row
    (tmp / "bow-tie.txt").write_text("0 0\n10 10\n10 0\n0 10\n")
    runs = {}
    for unit in ("mm", "cm"):
        js, cs = tmp / f"{unit}.json", tmp / f"{unit}.csv"
        _run(["batch", *files, "--units", unit, "--tol", TOL, "--jobs", "1", "--quiet",
              "--json", str(js), "--csv", str(cs)], status=4)  # EXIT_ROWS_FAILED
        runs[unit] = (js.read_text(encoding="utf-8"), cs.read_text(encoding="utf-8"))
    return files, runs


@pytest.fixture(scope="module")
def sweep_run(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("sweep")
    js, cs = tmp / "s.json", tmp / "s.csv"
    _run(["sweep", str(SHAPES / "hex-drive.toml"), "--vary", "across_flats=19,22",
          "--vary", "sides=6", "--tol", TOL, "--jobs", "1", "--quiet",
          "--json", str(js), "--csv", str(cs)])
    return js.read_text(encoding="utf-8"), cs.read_text(encoding="utf-8")


def test_batch_json_matches_readme(batch_runs):
    files, runs = batch_runs
    seen = set()
    for text, _ in runs.values():
        d = _strict_loads(text)
        seen |= check_document(d, "batch")
        assert d["command"] == "batch" and d["inputs"] == files
        assert [r["inputs"] for r in d["rows"]] == [{"file": f} for f in files]
        assert (d["count"], d["failed"]) == (3, 1) and d["rows"][2]["error"]
    assert_covered("batch", seen)


def test_sweep_json_matches_readme(sweep_run):
    d = _strict_loads(sweep_run[0])
    assert_covered("sweep", check_document(d, "sweep"))
    assert d["vary"] == {"across_flats": [19, 22], "sides": [6]}
    assert d["input_units"] == {"across_flats": "mm", "sides": ""}
    assert [r["inputs"] for r in d["rows"]] == [{"across_flats": 19, "sides": 6},
                                                {"across_flats": 22, "sides": 6}]


def test_quantities_state_the_documented_units(batch_runs):
    """The JSON's own `quantities` table agrees with the README's unit column of `rows[]`."""
    d = json.loads(batch_runs[1]["mm"][0])
    rows = documented_keys("batch")[("rows", "[]")]
    assert set(d["quantities"]) <= set(rows)
    for key, q in d["quantities"].items():
        assert q["power_of_length"] == length_power(rows[key].unit), key


def test_batch_units_convert_as_documented(batch_runs):
    """The same rows in mm and in cm: unit^p values differ by 10^p (1 cm = 10 mm exactly,
    NIST SP 811, appendix B.8).  The point list has no unit of its own, so --units is its
    input unit: the same numbers, named cm."""
    _, runs = batch_runs
    mm, cm = (json.loads(runs[u][0]) for u in ("mm", "cm"))
    assert (mm["units"], cm["units"]) == ("mm", "cm")
    fields = documented_keys("batch")[("rows", "[]")]
    hex_mm, hex_cm = mm["rows"][0], cm["rows"][0]
    checked = 0
    for key, va, vb, p in _numbers_by_key(fields, hex_mm, hex_cm):
        np.testing.assert_allclose(vb, va * 10.0**-p, rtol=1e-12, err_msg=f"rows[].{key}")
        checked += p != 0
    assert checked == 9  # every quantity with a length unit
    for key, va, vb, _ in _numbers_by_key(fields, mm["rows"][1], cm["rows"][1]):
        np.testing.assert_allclose(vb, va, rtol=1e-12, err_msg=f"rows[].{key}")
    assert cm["rows"][1]["units"] == "cm"


def _expected_columns(command: str, unit: str, input_units: dict[str, str]) -> list[str]:
    out = []
    for f in documented_csv_columns(command):
        if f.key == "<key>_<unit>":
            out += [f"{k}_{u}" if u else k for k, u in input_units.items()]
        else:
            out.append(f.key.replace("<u>", unit))
    return out


def _csv_matches_json(text: str, doc: dict, command: str, input_units: dict) -> None:
    table = list(csv.reader(io.StringIO(text)))
    header, lines = table[0], table[1:]
    assert header == _expected_columns(command, doc["units"], input_units)
    assert len(lines) == len(doc["rows"])
    numbers = {f.key.replace("<u>", doc["units"]): f.meaning.strip("`").split(".")[-1]
               for f in documented_csv_columns(command) if "<u>" in f.key or f.key == "J_per_Ip"}
    for line, row in zip(lines, doc["rows"], strict=True):
        cells = dict(zip(header, line, strict=True))
        assert cells["label"] == row["label"]
        for column, key in numbers.items():
            if row[key] is None:
                assert cells[column] == "", column
            else:
                assert float(cells[column]) == row[key], column  # full precision
        assert cells["error"] == (row["error"] or "")
        assert cells["converged"] == ("" if row["converged"] is None else str(row["converged"]))


def test_batch_csv_columns_match_readme(batch_runs):
    _, runs = batch_runs
    for text, csv_out in runs.values():
        _csv_matches_json(csv_out, json.loads(text), "batch", {"file": ""})


def test_sweep_csv_columns_match_readme(sweep_run):
    d = json.loads(sweep_run[0])
    _csv_matches_json(sweep_run[1], d, "sweep", d["input_units"])


# --- check and shaft ---------------------------------------------------------------
def _run_check(argv: list[str], out: Path) -> dict:
    """Run `check` or `shaft` with --json; the exit status says the verdict (0 or 3)."""
    from soapfilm.errors import EXIT_CHECK_FAILED

    code = main([*argv, "--json", str(out), "--quiet"])
    doc = _strict_loads(out.read_text(encoding="utf-8"))
    passed = doc["passed"] if "passed" in doc else doc["totals"]["passed"]
    assert code == (0 if passed else EXIT_CHECK_FAILED), (argv, code)
    return doc


@pytest.fixture(scope="module")
def check_runs(tmp_path_factory):
    """The README's check (a keyed seat with a named nominal diameter), the same held to the
    per-segment twist rule (it fails), and a plain tube with a given allowable (no Kts, no
    criterion)."""
    tmp = tmp_path_factory.mktemp("check")
    tube = tmp / "tube.toml"
    tube.write_text('units = "mm"\n[section]\nkind = "tube"\ndiameter = 60\nwall = 5\n')
    keyed = [str(SHAPES / "keyed-shaft-40.txt"), "--torque", "320 N*m", "--length", "80 mm",
             "--material", "carbon-steel", "--nominal-diameter", "40 mm", "--safety-factor", "2",
             "--tol", TOL]
    cases = {
        "readme": keyed,
        "strict": [*keyed, "--twist-rule", "segments"],
        "tube": [str(tube), "--torque", "320 N*m", "--length", "80 mm", "--shear-modulus",
                 "79.3 GPa", "--allowable-shear", "100 MPa", "--tol", TOL],
        "readme-us": [*keyed, "--unit-system", "US"],
    }
    return {name: _run_check(["check", *args], tmp / f"{name}.json")
            for name, args in cases.items()}


def test_check_json_matches_readme(check_runs):
    seen = set()
    for doc in check_runs.values():
        seen |= check_document(doc, "check")
    assert_covered("check", seen)
    assert check_runs["readme"]["passed"] and not check_runs["strict"]["passed"]
    tube = check_runs["tube"]["section"]
    assert tube["stress_concentration_kts"] is None and tube["nominal_diameter_m"] is None


def test_check_json_is_si_whatever_the_display(check_runs):
    """--unit-system changes the terminal only: the JSON is the same numbers in SI."""
    assert check_runs["readme-us"] == check_runs["readme"]


SHAFT_FILE = """
name = "Schema shaft"
[check]
material = "carbon-steel"
safety_factor = 2

[[segment]]
name = "keyed seat"
length = "80 mm"
section = {{ file = "{keyed}", nominal_diameter = "40 mm" }}

[[segment]]
name = "journal"
length = "60 mm"
section = {{ diameter = "45 mm" }}

[[segment]]
name = "hollow spline"
length = "70 mm"
section = "{spline}"

[[segment]]
name = "tube"
length = "300 mm"
section = {{ diameter = "60 mm", bore = "40 mm" }}

[[support]]
name = "brake"
at = "0 mm"

[[load]]
name = "pulley"
at = "100 mm"
torque = "200 N*m"

[[load]]
name = "coupling"
at = "510 mm"
torque = "-80 N*m"
"""


@pytest.fixture(scope="module")
def shaft_runs(tmp_path_factory):
    """A held shaft with finite-element sections (keyed, a hollow spline shape file) and
    closed-form ones, checked between stations and per segment."""
    tmp = tmp_path_factory.mktemp("shaft")
    f = tmp / "s.toml"
    f.write_text(SHAFT_FILE.format(keyed=(SHAPES / "keyed-shaft-40.txt").as_posix(),
                                   spline=(SHAPES / "debarker-hollow-spline.toml").as_posix()))
    return {rule: _run_check(["shaft", str(f), "--tol", TOL, "--twist-rule", rule],
                             tmp / f"{rule}.json") for rule in ("spans", "segments")}


def test_shaft_json_matches_readme(shaft_runs):
    seen = set()
    for doc in shaft_runs.values():
        seen |= check_document(doc, "shaft")
    assert_covered("shaft", seen)
    spans, segs = shaft_runs["spans"], shaft_runs["segments"]
    assert spans["twist_check"]["governing"] is not None
    assert segs["twist_check"]["governing"] is None
    assert all(s["utilisation_twist"] is None for s in spans["segments"])
    assert all(s["utilisation_twist"] is not None for s in segs["segments"])
    # a bored spline: Kts on the tube's nominal stress; a plain tube: none
    sections = [s["section"] for s in spans["segments"]]
    assert sections[2]["nominal_bore_m"] == pytest.approx(0.018, rel=1e-12)
    assert sections[3]["stress_concentration_kts"] is None


# --- numbers that are not finite ----------------------------------------------------
@pytest.fixture(scope="module")
def hex_result():
    return analyse(read_section(SHAPES / "hex-drive.toml"), mesh_size=2.0)


def test_non_finite_numbers_become_null(hex_result):
    r = dataclasses.replace(
        hex_result, max_shear_per_torque_warping=float("nan"),
        estimated_relative_error={"torsion_constant": 1e-3, "max_shear": float("inf")},
        refinement=({"step": np.int64(0), "j_lo": np.float64("nan")},))
    d = r.to_dict()
    text = json.dumps(d, allow_nan=False)  # raises on NaN or Infinity
    assert d["max_shear_per_torque_cross_check"] is None
    assert d["estimated_relative_error"]["max_shear"] is None
    assert d["refinement"] == [{"step": 0, "j_lo": None}]
    assert type(d["refinement"][0]["step"]) is int
    assert _strict_loads(text) == d


def test_batch_non_finite_numbers_become_null_and_empty_cells():
    row = {"label": "x", "inputs": {"file": "x.txt"}, "units": "mm", "J": float("nan"),
           "J_lo": 1.0, "J_hi": float("inf"), "elements": 10, "converged": True, "warnings": 0,
           "warning_messages": [], "seconds": 0.5, "error": None}
    d = document([row], "mm")
    json.dumps(d, allow_nan=False)
    assert d["rows"][0]["J"] is None and d["rows"][0]["J_hi"] is None
    header, line = list(csv.reader(io.StringIO(csv_text([row], "mm"))))
    cells = dict(zip(header, line, strict=True))
    assert (cells["J_mm4"], cells["J_lo_mm4"], cells["J_hi_mm4"]) == ("", "1.0", "")


def test_include_mesh_is_deprecated_and_ignored(hex_result):
    with pytest.warns(DeprecationWarning, match="include_mesh"):
        old = hex_result.to_dict(include_mesh=True)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        new = hex_result.to_dict()
    assert old == new
    assert new["mesh"] == {"nodes": hex_result.mesh.nnodes,
                           "elements": hex_result.mesh.nelements, "order": 2}


# --- member ------------------------------------------------------------------------
MEMBER_FILE = """
name = "Schema member"
[check]
material = "carbon-steel"
safety_factor = 2

[[segment]]
name = "bar"
length = "600 mm"
section = { diameter = "40 mm" }
distributed_torque = "100 N*m/m"

[[segment]]
name = "tube"
length = "400 mm"
section = { diameter = "60 mm", bore = "40 mm" }

[[support]]
name = "wall"
at = 0

[[support]]
name = "bearing"
at = "1000 mm"
twist = "free"

[[load]]
name = "arm"
at = "600 mm"
torque = "150 N*m"
"""


def test_member_json_matches_readme(tmp_path):
    """A member of round sections (Gamma = 0: the warping keys null or zero); the
    warping keys' types are checked with a warping section in test_member.py."""
    f = tmp_path / "m.toml"
    f.write_text(MEMBER_FILE)
    doc = _run_check(["member", str(f)], tmp_path / "m.json")
    assert_covered("member", check_document(doc, "member"))
    assert doc["stations"][0]["reaction_torque_Nm"] == pytest.approx(150 + 60, rel=1e-12)
