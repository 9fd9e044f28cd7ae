"""The resource guard (issue 11): hostile inputs end at once with one line, or solve right.

Each case is a small generated file that once exhausted memory or time.  The
guard refuses before meshing, so every refusal here takes about a second:
exit status 2, one line on stderr that gives the estimate (elements, memory,
the budget) and what to change, and no output file.  The cases that can be
solved are checked against closed forms.  Peak memory is measured by
``tests/bench/bench_memory.py`` (DEVELOPERS.md, "Resource guard"), not here.
"""

from __future__ import annotations

import json
import math
import re
import time

import ezdxf
import numpy as np
import pytest

import reference as ref
from soapfilm import InputError, Profile, analyse, mesh_profile
from soapfilm.cli import main
from soapfilm.resources import (
    KAPPA_AREA,
    MAX_LOOPS,
    MAX_SWEEP_ROWS,
    elements_within,
    estimate_mesh,
    format_bytes,
    memory_needed,
    parse_memory,
)
from soapfilm.shapes.basic import ellipse

SHAPES = __import__("pathlib").Path(__file__).resolve().parents[1] / "shapes"


def _refused(capsys, argv, tmp_path, *needles):
    """Run the command line: exit 2, one line naming the needles, no file written."""
    before = sorted(p.name for p in tmp_path.iterdir())
    out = tmp_path / "out.json"
    start = time.perf_counter()
    assert main([*argv, "--json", str(out), "--quiet"]) == 2
    took = time.perf_counter() - start
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1, err
    assert err.startswith("soapfilm: error:")
    for needle in needles:
        assert needle in err, (needle, err)
    assert sorted(p.name for p in tmp_path.iterdir()) == before  # nothing written or left
    assert took < 30.0  # refused before meshing (about a second; generous for a busy machine)
    return err


def _tail(width: float) -> list[tuple[float, float]]:
    """The issue's 8-point square, 10 x 10, with a tail 5 long and ``width`` wide."""
    lo, hi = 5 - width / 2, 5 + width / 2
    return [(0, 0), (10, 0), (10, lo), (15, lo), (15, hi), (10, hi), (10, 10), (0, 10)]


def _points_file(tmp_path, name, loops):
    text = "\n\n".join("\n".join(f"{x!r} {y!r}" for x, y in lp) for lp in loops)
    path = tmp_path / name
    path.write_text(text + "\n")
    return path


# --------------------------------------------------------------- the cases
def test_sliver_tail_refused_with_its_width_and_place(tmp_path, capsys):
    """A 1e-7 wide tail forces elements 1e-7 small along its 5 mm (Triangle's 30-degree
    condition): about 1.6 L / w = 8e7 elements.  Once 259 s and 7.5 GB, then out of memory."""
    src = _points_file(tmp_path, "tail.txt", [_tail(1e-7)])
    err = _refused(capsys, ["solve", str(src)], tmp_path,
                   "1e-07 mm wide", "elements", "GB of memory", "budget of 4 GB",
                   "widen that part or remove it")
    x = float(err.split("wide near (")[1].split(",")[0])
    assert 10.0 <= x <= 15.0  # the place named is on the tail


def test_mesh_size_on_keyed_point_list_refused(tmp_path, capsys):
    """--mesh-size 0.012 on the 40 mm keyed point list: about 3e7 elements (its area
    1 197 mm^2 over 0.012^2, times Triangle's 3.67 per h^2); the old guard (2e7 from the
    area alone) let it through to over 7 GB."""
    err = _refused(capsys, ["solve", str(SHAPES / "keyed-shaft-40.txt"), "--mesh-size", "0.012"],
                   tmp_path, "element size 0.012 mm", "elements", "--mesh-size")
    suggested = float(re.search(r"--mesh-size ([0-9.e+-]+)[,)]", err).group(1))  # bare: mm
    # the size suggested fits: its estimate is within the budget
    from soapfilm import read_section

    prof = read_section(SHAPES / "keyed-shaft-40.txt", "mm")
    assert estimate_mesh(prof, suggested).memory <= parse_memory("4 GB")
    assert estimate_mesh(prof, 0.9 * suggested).memory > 0.8 * parse_memory("4 GB")


def test_chord_far_below_the_size_refused(tmp_path, capsys):
    """[mesh] chord = 1e-12 on a 40 mm round bar: pi / sqrt(2 c / r) = 1e7 points per circle
    (sagitta r (1 - cos(step / 2)) = c); once 5.6 GB."""
    src = tmp_path / "round.toml"
    src.write_text('units = "mm"\n[section]\nkind = "round"\ndiameter = 40\n'
                   "[mesh]\nchord = 1e-12\n")
    _refused(capsys, ["solve", str(src)], tmp_path, "[mesh] chord", "9.9e+06 points",
             "at least 4e-07")


def test_far_rectangle_solved_at_the_origin(tmp_path, capsys):
    """A 10 x 5 rectangle at x = 1e14 (once 5.5 GB and exit 1): J and tau/T as at the origin,
    against the Saint-Venant series (Timoshenko & Goodier, 3rd ed., sec. 109); the centroid
    where the section lies; a warning says it was moved."""
    x0 = 1e14
    src = _points_file(tmp_path, "far.txt", [[(x0, 0), (x0 + 10, 0), (x0 + 10, 5), (x0, 5)]])
    out = tmp_path / "far.json"
    assert main(["solve", str(src), "--json", str(out), "--quiet"]) == 0
    data = json.loads(out.read_text())
    j, tau = ref.rectangle_series(10, 5)
    lo, hi = data["torsion_constant_bounds"]
    assert lo <= j * (1 + 1e-9) and j * (1 - 1e-9) <= hi
    assert data["max_shear_per_torque"] == pytest.approx(tau, rel=3e-3)
    assert data["centroid"] == pytest.approx([x0 + 5, 2.5], abs=1e-2)
    assert any("solved moved to the origin" in w for w in data["warnings"])


def test_far_round_bar_with_exact_curves(tmp_path, capsys):
    """A round bar placed at 1e14 by its shape file: J = pi d^4 / 32 (closed form) within the
    bracket; its flattened points, rounded there to 0.016 mm, are put back on the circle."""
    src = tmp_path / "far.toml"
    src.write_text('units = "mm"\n[section]\nkind = "round"\ndiameter = 10\n'
                   "position = [1e14, 0]\n")
    out = tmp_path / "far.json"
    assert main(["solve", str(src), "--json", str(out), "--quiet"]) == 0
    data = json.loads(out.read_text())
    j, tau = ref.circle(10.0)
    lo, hi = data["torsion_constant_bounds"]
    assert lo <= j * (1 + 1e-9) and j * (1 - 1e-9) <= hi
    assert data["max_shear_per_torque"] == pytest.approx(tau, rel=3e-3)


def test_far_section_not_meshed_in_place(tmp_path, capsys):
    """show --mesh meshes where the section lies: 1e13 sizes out it is refused with the move to
    make (solve moves it itself); mesh_profile() in the API likewise."""
    src = tmp_path / "far.toml"
    src.write_text('units = "mm"\n[section]\nkind = "round"\ndiameter = 10\n'
                   "position = [1e14, 0]\n")
    before = sorted(p.name for p in tmp_path.iterdir())
    assert main(["show", str(src), "--mesh", "--png", str(tmp_path / "far.png")]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "move it near the origin, by -1e+14 mm in x" in err
    assert sorted(p.name for p in tmp_path.iterdir()) == before
    sq = Profile.from_loops([[(1e14, 0), (1e14 + 10, 0), (1e14 + 10, 5), (1e14, 5)]])
    with pytest.raises(InputError, match="1e\\+13 times its size"):
        mesh_profile(sq)


def test_far_translation_leaves_near_sections_alone():
    """Sections within 1e4 sizes of the origin are meshed where they are (bit for bit)."""
    from soapfilm.solve import FAR_RATIO, far_shift

    sq = [(0, 0), (1, 0), (1, 1), (0, 1)]
    near = Profile.from_loops([[(x + 0.5 * FAR_RATIO, y) for x, y in sq]])
    far = Profile.from_loops([[(x + 2.0 * FAR_RATIO, y) for x, y in sq]])
    assert far_shift(near) is None
    assert far_shift(far) == pytest.approx([2.0 * FAR_RATIO + 0.5, 0.5])


def test_block_inserting_itself_refused(tmp_path, capsys):
    """A block that inserts itself ten times never ended (about 8 MB/s)."""
    doc = ezdxf.new()
    blk = doc.blocks.new("LOOP")
    blk.add_circle((0, 0), 1)
    for i in range(10):
        blk.add_blockref("LOOP", (3 * i, 0))
    doc.modelspace().add_blockref("LOOP", (0, 0))
    path = tmp_path / "self.dxf"
    doc.saveas(path)
    _refused(capsys, ["solve", str(path)], tmp_path, "block 'LOOP' inserts itself")


def test_block_fan_out_counted_as_it_expands(tmp_path, capsys, monkeypatch):
    """Nested blocks of ten copies each, six deep: 1e6 circles.  Counted as they come and
    refused past the limit (lowered here so the test stays short)."""
    import soapfilm.resources as resources

    monkeypatch.setattr(resources, "MAX_DXF_ENTITIES", 2_000)
    doc = ezdxf.new()
    prev = None
    for level in range(6):
        blk = doc.blocks.new(f"B{level}")
        for i in range(10):
            if prev is None:
                blk.add_circle((3 * i, 0), 1)
            else:
                blk.add_blockref(prev, (0, 3 * i * 10**level))
        prev = f"B{level}"
    doc.modelspace().add_blockref(prev, (0, 0))
    path = tmp_path / "fan.dxf"
    doc.saveas(path)
    _refused(capsys, ["solve", str(path)], tmp_path, "more than 2,000 entities",
             "block 'B5'")


def test_many_holes_refused_and_checked_in_n_log_n(tmp_path, capsys, monkeypatch):
    """4 096 holes: refused by count.  Below the count the hole checks use a search tree:
    3 000 holes validate in well under the time the pairwise checks took (4.5 M pairs)."""
    k = 64
    loops = [[(0, 0), (3 * k, 0), (3 * k, 3 * k), (0, 3 * k)]]
    for i in range(k * k):
        x, y = 3 * (i // k) + 1, 3 * (i % k) + 1
        loops.append([(x, y), (x + 1, y), (x + 1, y + 1), (x, y + 1)])
    src = _points_file(tmp_path, "holes.txt", loops)
    _refused(capsys, ["solve", str(src)], tmp_path, "4,097", f"{MAX_LOOPS:,}")
    import soapfilm.resources as resources

    monkeypatch.setattr(resources, "MAX_LOOPS", 10_000)
    start = time.perf_counter()
    prof = Profile.from_loops(loops[:3001])
    assert len(prof.holes) == 3000
    assert time.perf_counter() - start < 10.0
    # and a hole touching an earlier one is still found, and named
    bad = [*loops[:3001], [(1.5, 1.5), (2.5, 1.5), (2.5, 2.5), (1.5, 2.5)]]
    with pytest.raises(InputError, match="hole 3001 overlaps or touches hole 1"):
        Profile.from_loops(bad)


def test_ten_thousand_circles_refused(tmp_path, capsys):
    """10 k circles in a DXF drawing: the loops are counted before they are nested."""
    doc = ezdxf.new()
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (300, 0), (300, 300), (0, 300)], close=True)
    for i in range(9999):
        msp.add_circle((3 * (i // 100) + 1.5, 3 * (i % 100) + 1.5), 0.5)
    path = tmp_path / "circles.dxf"
    doc.saveas(path)
    _refused(capsys, ["solve", str(path)], tmp_path, "10,000", "closed loops")


def test_five_thousand_lines_at_one_point_refused(tmp_path, capsys):
    """5 000 lines meeting at one point: a branch, found from the point's degree before the
    pairwise overlap check (once quadratic in the count)."""
    doc = ezdxf.new()
    for i in range(5000):
        a = 2 * math.pi * i / 5000
        doc.modelspace().add_line((0, 0), (10 * math.cos(a), 10 * math.sin(a)))
    path = tmp_path / "star.dxf"
    doc.saveas(path)
    _refused(capsys, ["solve", str(path)], tmp_path, "5000 piece ends meet at (0, 0)",
             "cannot branch")


def test_lines_crossing_by_the_thousand_refused(tmp_path, capsys):
    """A grid of 800 + 800 crossing lines: the overlap check stops at its pair budget."""
    doc = ezdxf.new()
    msp = doc.modelspace()
    for i in range(800):
        msp.add_line((0, i), (800, i))
        msp.add_line((i + 0.5, -1), (i + 0.5, 801))
    path = tmp_path / "grid.dxf"
    doc.saveas(path)
    _refused(capsys, ["solve", str(path)], tmp_path, "cross each other")


def test_sweep_rows_limited(tmp_path, capsys):
    """sweep --vary height=6:20:1000000 had no upper limit; a product of two lists neither."""
    src = tmp_path / "bar.toml"
    src.write_text('units = "mm"\n[section]\nkind = "rectangle"\nwidth = 40\nheight = 10\n')
    _refused(capsys, ["sweep", str(src), "--vary", "height=6:20:1000000"], tmp_path,
             "1,000,000", f"{MAX_SWEEP_ROWS:,}")
    _refused(capsys, ["sweep", str(src), "--vary", "height=6:20:1000", "--vary",
                      "width=30:40:1000"], tmp_path, "1,000,000 is more")


# ------------------------------------------------------------ every input path
def test_shape_file_mesh_size_named_in_the_message(tmp_path, capsys):
    """A shape file's own [mesh] size is refused like --mesh-size, naming the key to change."""
    src = tmp_path / "fine.toml"
    src.write_text('units = "mm"\n[section]\nkind = "round"\ndiameter = 40\n'
                   "[mesh]\nsize = 0.005\n")
    _refused(capsys, ["solve", str(src)], tmp_path, "element size 0.005 mm",
             "in [mesh] of fine.toml")


def test_slender_ellipse_refusal_advice_is_followed(tmp_path, capsys):
    """An ellipse of axis ratio 1e-5 (a = 50, b = 5e-4 mm) at a size putting 4e5 points on it:
    the refusal names a size that brings the area and the curves' points within the budget.
    Followed, that size meets the thin material (Triangle needs about 0.8 pi a / b elements
    along the whole flank at any size: 2.6-2.9e5 measured), refused for that, not for the
    size; or, were it admitted, its J bracket holds pi a^3 b^3 / (a^2 + b^2) (Timoshenko &
    Goodier, Theory of Elasticity, 3rd ed., sec. 105)."""
    a, b = 50.0, 5e-4
    src = tmp_path / "slender.toml"
    src.write_text(f'units = "mm"\n[section]\nkind = "ellipse"\nwidth = {2 * a!r}\n'
                   f"height = {2 * b!r}\n")
    err = _refused(capsys, ["solve", str(src), "--mesh-size", "0.0005", "--memory", "1GB"],
                   tmp_path, "element size 0.0005 mm", "budget of 1 GB")
    size = re.search(r"--mesh-size ([0-9.e+-]+)[,)]", err).group(1)
    assert float(size) > 0.0005
    out = tmp_path / "out.json"
    code = main(["solve", str(src), "--mesh-size", size, "--memory", "1GB", "--json", str(out),
                 "--quiet"])
    second = capsys.readouterr().err.strip()
    if code == 0:
        lo, hi = json.loads(out.read_text())["torsion_constant_bounds"]
        assert lo <= ref.ellipse(a, b)[0] <= hi
    else:
        assert code == 2 and len(second.splitlines()) == 1, second
        assert f"element size {size} mm" not in second  # not the size the first line advised
        assert "wide near" in second and "--memory" in second, second


def test_shaft_file_section_guarded(tmp_path, capsys):
    """A shaft file's section with a tiny mesh_size goes through the same guard."""
    (tmp_path / "keyed.txt").write_text((SHAPES / "keyed-shaft-40.txt").read_text())
    src = tmp_path / "shaft.toml"
    src.write_text('name = "s"\n[check]\nmaterial = "carbon-steel"\nsafety_factor = 2\n'
                   '[[segment]]\nname = "seat"\nlength = "80 mm"\n'
                   'section = { file = "keyed.txt", nominal_diameter = "40 mm", '
                   'mesh_size = "0.01 mm" }\n'
                   '[[load]]\nname = "a"\nat = "0 mm"\ntorque = "100 N*m"\n'
                   '[[load]]\nname = "b"\nat = "80 mm"\ntorque = "-100 N*m"\n')
    _refused(capsys, ["shaft", str(src)], tmp_path, "element size 0.01 mm", "GB of memory")


def test_show_mesh_guarded(tmp_path, capsys):
    """show --mesh makes the mesh it draws through the same guard."""
    before = sorted(p.name for p in tmp_path.iterdir())
    code = main(["show", str(SHAPES / "keyed-shaft-40.txt"), "--mesh", "--mesh-size", "0.01",
                 "--png", str(tmp_path / "s.png"), "--quiet"])
    assert code == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "element size 0.01 mm" in err
    assert sorted(p.name for p in tmp_path.iterdir()) == before


def test_batch_row_refused_others_solved(tmp_path, capsys):
    """In a batch the hostile file's row carries the guard's message; the others solve (exit 4:
    some rows failed).  The good square against the series (Timoshenko & Goodier sec. 109)."""
    bad = _points_file(tmp_path, "tail.txt", [_tail(1e-7)])
    good = _points_file(tmp_path, "sq.txt", [[(0, 0), (10, 0), (10, 10), (0, 10)]])
    out = tmp_path / "rows.json"
    assert main(["batch", str(bad), str(good), "--json", str(out), "--jobs", "1",
                 "--quiet"]) == 4
    rows = {r["label"]: r for r in json.loads(out.read_text())["rows"]}
    assert "1e-07 mm wide" in rows[str(bad)]["error"]
    j, _ = ref.rectangle_series(10, 10)
    assert rows[str(good)]["J_lo"] <= j * (1 + 1e-9) and j * (1 - 1e-9) <= rows[str(good)]["J_hi"]


def test_python_api_refuses_by_default_and_takes_a_budget():
    """analyse() refuses the sliver by default; mesh_profile() and analyse() take memory=."""
    tail = Profile.from_loops([_tail(1e-7)])
    with pytest.raises(InputError, match=r"1e-07 mm wide .* more than the budget of 4 GB"):
        analyse(tail)
    with pytest.raises(InputError, match="more than the budget of 4 GB"):
        mesh_profile(tail)
    sq = Profile.from_loops([[(0, 0), (10, 0), (10, 10), (0, 10)]])
    # 0.05 mm on a 10 mm square: 3.67 * 100 / 0.05^2 = 1.5e5 elements, 1.3 GB with the model:
    # within 4 GB, not within 1 GB
    assert memory_needed(estimate_mesh(sq, 0.05).elements) < parse_memory("4 GB")
    with pytest.raises(InputError, match="more than the budget of 1 GB"):
        analyse(sq, mesh_size=0.05, memory="1 GB")
    with pytest.raises(InputError, match="more than this machine's memory"):
        analyse(sq, memory="1e9 GB")


def test_adaptive_loop_stops_within_the_budget():
    """With a 600 MB budget the loop stops before the mesh it cannot afford, converged False,
    and says why; the bracket it reached still holds the series value of the square's J
    (Timoshenko & Goodier, 3rd ed., sec. 109)."""
    sq = Profile.from_loops([[(0, 0), (10, 0), (10, 10), (0, 10)]])
    r = analyse(sq, tol=1e-9, memory="600 MB")
    cap = elements_within("600 MB")
    assert r.converged is False
    assert r.mesh.nelements <= cap
    assert any("memory budget 600 MB" in w and "--memory" in w for w in r.warnings)
    j, _ = ref.rectangle_series(10, 10)
    lo, hi = r.torsion_constant_bounds
    assert lo <= j * (1 + 1e-9) and j * (1 - 1e-9) <= hi


THIN = [(0.0, 0.0), (0.73, 0.0), (0.73, 0.73e-3), (0.0, 0.73e-3)]  # 1:1000, 0.73 mm long


def test_adaptive_start_within_max_elements():
    """A 1:1000 strip whose default start (9 111 elements) is over max_elements = 3000
    starts coarser, within the cap, and its bracket holds the series value of J
    (Timoshenko & Goodier, 3rd ed., sec. 109).  Before, the start ignored the cap (a
    1:1000 star 0.73 mm long started at 92 393 elements with a cap of 9 000)."""
    strip = Profile.from_loops([THIN], units="mm")
    r = analyse(strip, tol=1e-4, max_elements=3000)
    assert r.refinement[0]["elements"] <= 3000
    j, _ = ref.rectangle_series(0.73, 0.73e-3)
    lo, hi = r.torsion_constant_bounds
    assert lo <= j <= hi
    assert r.converged is True or any("--max-elements 3000" in w for w in r.warnings)


def test_adaptive_start_that_no_size_brings_under_the_cap():
    """With a cap of 500 the strip's coarsest mesh (about 1 200 elements: Triangle's
    30-degree elements across a 1:1000 strip) is solved as it is: a warning says so and
    that the cap stopped refinement; the bracket still holds the series value of J
    (sec. 109).  A mesh size given with it is refused naming --max-elements."""
    strip = Profile.from_loops([THIN], units="mm")
    r = analyse(strip, tol=1e-4, max_elements=500)
    assert len(r.refinement) == 1 and r.converged is False
    assert any("coarsest starting mesh" in w and "--max-elements 500" in w for w in r.warnings)
    assert any("tolerance not met" in w for w in r.warnings)
    j, _ = ref.rectangle_series(0.73, 0.73e-3)
    lo, hi = r.torsion_constant_bounds
    assert lo <= j <= hi
    with pytest.raises(InputError, match="--max-elements: the starting mesh at element size"):
        analyse(strip, tol=1e-4, mesh_size=1e-4, max_elements=500)


def test_mesh_file_over_budget_refused(tmp_path, capsys):
    """A given mesh file is solved as given: its element count is checked against the budget."""
    import meshio

    from soapfilm.resources import BASE_BYTES, BYTES_PER_ELEMENT

    mesh = mesh_profile(Profile.from_loops([[(0, 0), (10, 0), (10, 10), (0, 10)]]), 0.05)
    path = tmp_path / "sq.vtu"
    meshio.write(str(path), meshio.Mesh(np.vstack([mesh.p, np.zeros(mesh.nnodes)]).T,
                                        [("triangle", mesh.t.T)]))
    budget = "500 MB"
    assert memory_needed(mesh.nelements) > parse_memory(budget)  # the premise
    assert BASE_BYTES + BYTES_PER_ELEMENT * mesh.nelements == memory_needed(mesh.nelements)
    _refused(capsys, ["solve", str(path), "--memory", budget], tmp_path,
             f"{mesh.nelements:,} elements", "budget of 500 MB")


# ------------------------------------------------------------------ the estimate
@pytest.mark.parametrize("make, size", [
    (lambda: Profile.from_loops([[(0, 0), (10, 0), (10, 10), (0, 10)]]), 0.1),
    (lambda: Profile.from_loops([_tail(1e-3)]), 0.5),
    (lambda: Profile.from_loops([_tail(1e-4)]), 0.5),
    (lambda: Profile.from_loops([ref.circle_points(20.0, 2000)]), 2.0),
    (lambda: Profile.from_loops([ref.circle_points(20.0, 400), ref.circle_points(19.9, 400)]),
     0.5),
    (lambda: ellipse(100.0, 0.1), 1.0),
    (lambda: ellipse(100.0, 0.01), 0.2),
])
def test_estimate_against_the_mesher(make, size):
    """The estimate against the count Triangle itself makes (the outside reference here):
    within 25 % on a square, a sliver 1e-3 and 1e-4 wide (1.6 L / w elements), a 2000-gon
    (about 5 elements per closely spaced point), a tube with a wall 0.1 thick and ellipses of
    axis ratio 1e-3 and 1e-4 (thin along the whole flank: 0.8 pi a / b)."""
    prof = make()
    est = estimate_mesh(prof, size).elements
    actual = mesh_profile(prof, size).nelements
    assert est == pytest.approx(actual, rel=0.25)


def test_area_term_is_the_area_over_the_size_squared():
    """Without features the estimate is KAPPA_AREA * A / h^2 (equilateral elements of side h
    have area sqrt(3)/4 h^2; Triangle's average 1/1.59 of that limit: measured)."""
    sq = Profile.from_loops([[(0, 0), (10, 0), (10, 10), (0, 10)]])
    e = estimate_mesh(sq, 0.1)
    assert e.thin_term == 0.0 and e.points_term == 0.0
    assert e.elements == pytest.approx(KAPPA_AREA * 100 / 0.01, rel=1e-12)
    assert KAPPA_AREA == pytest.approx(4 / math.sqrt(3) * 1.59, rel=0.01)


def test_sharp_wedge_is_not_a_thin_part():
    """Two edges meeting at a small angle (a spike) are meshed by Triangle without refining
    (its small-angle rule); the estimate leaves them out too."""
    a = 1e-4
    spike = Profile.from_loops([[(0, 0), (10, 0), (10, 5 - 5 * math.tan(a / 2)), (15, 5),
                                 (10, 5 + 5 * math.tan(a / 2)), (10, 10), (0, 10)]])
    e = estimate_mesh(spike, 0.5)
    assert e.thin_term == 0.0
    assert mesh_profile(spike, 0.5).nelements == pytest.approx(e.elements, rel=0.25)


# -------------------------------------------------------------------- the budget
def test_memory_text():
    """Decimal and binary units (SI and IEC 80000-13), a bare number in GB, refusals."""
    assert parse_memory("4 GB") == 4 * 10**9
    assert parse_memory("1500MB") == 1_500_000_000
    assert parse_memory("2 GiB") == 2 * 2**30
    assert parse_memory("8") == 8 * 10**9
    assert parse_memory(2e9) == 2_000_000_000
    for bad in ("abc", "4 GX", "-4 GB", "1e400 GB", "nan", "10 MB"):
        with pytest.raises(InputError):
            parse_memory(bad)
    assert format_bytes(3.8e9) == "3.8 GB" and format_bytes(850e6) == "850 MB"


def test_memory_option_and_environment(tmp_path, capsys, monkeypatch):
    """--memory and SOAPFILM_MEMORY: a bad value is one line, exit 2; the variable sets the
    default, the option wins."""
    src = _points_file(tmp_path, "sq.txt", [[(0, 0), (10, 0), (10, 10), (0, 10)]])
    _refused(capsys, ["solve", str(src), "--memory", "lots"], tmp_path, "--memory",
             "not an amount of memory")
    monkeypatch.setenv("SOAPFILM_MEMORY", "lots")
    _refused(capsys, ["solve", str(src)], tmp_path, "SOAPFILM_MEMORY")
    monkeypatch.setenv("SOAPFILM_MEMORY", "600 MB")
    _refused(capsys, ["solve", str(src), "--mesh-size", "0.02"], tmp_path, "budget of 600 MB")
    out = tmp_path / "ok.json"
    assert main(["solve", str(src), "--mesh-size", "0.2", "--memory", "2 GB", "--json",
                 str(out), "--quiet"]) == 0
    j, _ = ref.rectangle_series(10, 10)
    lo, hi = json.loads(out.read_text())["torsion_constant_bounds"]
    assert lo <= j * (1 + 1e-9) and j * (1 - 1e-9) <= hi
