"""Mesh files: export round trip, mesh-file input solved as given, bad meshes."""

from __future__ import annotations

import json
import math

import meshio
import numpy as np
import pytest
import shapely

from _visual_sections import hollow_circle, rect_result, rectangle, rectangle_series
from soapfilm import analyse, mesh_profile, read_section, result_from_mesh
from soapfilm.cli import main
from soapfilm.errors import InputError
from soapfilm.export import result_to_meshio, write_mesh
from soapfilm.plots import nodal_shear
from soapfilm.readers.meshfile import mesh_from_triangles, read_mesh_file


@pytest.mark.parametrize("suffix", [".vtu", ".vtk", ".msh", ".avs"])
def test_round_trip_keeps_nodes_elements_and_fields(tmp_path, suffix):
    """Binary formats give the numbers back bit for bit; AVS is text (rtol 1e-12)."""
    r = rect_result()
    path = write_mesh(r, tmp_path / f"bar{suffix}", torque=10.0)
    m = meshio.read(path)
    rtol = 0.0 if suffix != ".avs" else 1e-12
    np.testing.assert_allclose(m.points[:, :2], r.mesh.p.T, rtol=rtol, atol=1e-13 * (rtol > 0))
    np.testing.assert_array_equal(m.points[:, 2], 0.0)
    tri = np.concatenate([c.data for c in m.cells if c.type == "triangle"])
    np.testing.assert_array_equal(tri, r.mesh.t.T)
    tau = nodal_shear(r)
    expected = {
        "phi": r.fields.phi[: r.mesh.nnodes],  # quadratic elements: corner nodes come first
        "omega": r.fields.omega[: r.mesh.nnodes],
        "shear_per_torque": np.hypot(tau[0], tau[1]),
        "shear_vector_per_torque": np.c_[tau.T, np.zeros(r.mesh.nnodes)],
        # 10 N*m = 1e4 N*mm on a mm section, N/mm^2 = MPa (SI definitions)
        "shear_stress_MPa": np.hypot(tau[0], tau[1]) * 1e4,
    }
    for name, want in expected.items():
        got = np.asarray(m.point_data[name]).reshape(want.shape)
        np.testing.assert_allclose(got, want, rtol=max(rtol, 1e-15), atol=0, err_msg=name)


@pytest.mark.filterwarnings("ignore:overflow encountered:RuntimeWarning")  # meshio's STL sniffing
@pytest.mark.parametrize("suffix", [".obj", ".off", ".mesh", ".inp", ".ply", ".stl"])
def test_other_formats_give_back_the_section(tmp_path, suffix):
    """Formats without (vector) point data still carry the mesh: reading it back gives
    the same section and, solved on it, the same J (rtol 1e-10)."""
    r = rect_result()
    path = write_mesh(r, tmp_path / f"bar{suffix}")
    prof, mesh = read_mesh_file(path)
    assert mesh.nelements == r.mesh.nelements and mesh.nnodes == r.mesh.nnodes
    assert prof.area == pytest.approx(200.0, rel=1e-12, abs=0)  # 20 x 10 mm
    j = result_from_mesh(prof, mesh).torsion_constant
    assert j == pytest.approx(r.torsion_constant, rel=1e-10, abs=0)


def test_rectangle_mesh_file_brackets_the_series(tmp_path):
    """A 20 x 10 bar meshed, written, read back and solved as given: same J as the outline
    solve on that mesh (rtol 1e-10), and the guaranteed bracket holds the exact series value
    (Timoshenko & Goodier, Theory of Elasticity, 3rd ed., sec. 109)."""
    prof = rectangle()
    mesh = mesh_profile(prof, 0.5)
    direct = result_from_mesh(prof, mesh)
    path = tmp_path / "bar.vtu"
    meshio.write(path, meshio.Mesh(mesh.p.T, [("triangle", mesh.t.T)]))
    prof2, mesh2 = read_mesh_file(path)
    r = result_from_mesh(prof2, mesh2)
    assert r.torsion_constant == pytest.approx(direct.torsion_constant, rel=1e-10, abs=0)
    j_exact, _ = rectangle_series(20.0, 10.0)
    lo, hi = r.torsion_constant_bounds
    assert lo <= j_exact <= hi
    assert (hi - lo) / j_exact < 2e-2


def test_hollow_mesh_file_finds_the_hole(tmp_path):
    """Hollow circle d20/d12 as a 256-gon pair: the hole loop is found, carries marker 2,
    its nodes lie on the hole polygon and it encloses the regular-polygon area
    (n/2) r^2 sin(2 pi/n); J matches the outline solve (rtol 1e-10) and the tube formula
    J = pi (Ro^4 - Ri^4) / 2 (elementary torsion of circular tubes,
    Timoshenko & Goodier 3rd ed. sec. 101) within 1e-3 (polygon and mesh error)."""
    prof = hollow_circle(10.0, 6.0, 256)
    outline = analyse(prof)
    path = tmp_path / "tube.msh"
    write_mesh(outline, path)
    prof2, mesh2 = read_mesh_file(path)
    assert len(prof2.holes) == 1 and mesh2.nholes == 1
    n = 256
    assert mesh2.hole_areas[0] == pytest.approx(n / 2 * 36.0 * math.sin(2 * math.pi / n),
                                                rel=1e-12, abs=0)
    for marker, ring in ((1, prof.polygon.exterior), (2, prof.polygon.interiors[0])):
        nodes = mesh2.p[:, mesh2.loop_nodes(marker)].T
        dist = shapely.distance(ring, shapely.points(nodes))
        np.testing.assert_allclose(dist, 0.0, rtol=0, atol=1e-12)  # on its own loop
    r = result_from_mesh(prof2, mesh2)
    assert r.torsion_constant == pytest.approx(outline.torsion_constant, rel=1e-10, abs=0)
    assert r.torsion_constant == pytest.approx(math.pi / 2 * (1e4 - 6.0**4), rel=1e-3, abs=0)


def _square_grid(nx=4, ny=4, x0=0.0):
    xs, ys = np.meshgrid(np.linspace(x0, x0 + 1, nx + 1), np.linspace(0, 1, ny + 1))
    pts = np.c_[xs.ravel(), ys.ravel()]
    idx = np.arange((nx + 1) * (ny + 1)).reshape(ny + 1, nx + 1)
    a, b, c, d = idx[:-1, :-1].ravel(), idx[:-1, 1:].ravel(), idx[1:, 1:].ravel(), idx[1:, :-1]
    d = d.ravel()
    tri = np.r_[np.c_[a, b, c], np.c_[a, c, d]]
    return pts, tri


def test_bad_meshes_are_input_errors(tmp_path):
    pts, tri = _square_grid()
    # two separate squares
    pts2, tri2 = _square_grid(x0=3.0)
    with pytest.raises(InputError, match="2 separate pieces"):
        mesh_from_triangles(np.r_[pts, pts2], np.r_[tri, tri2 + len(pts)])
    # not flat
    p3 = np.c_[pts, pts[:, 0]]
    with pytest.raises(InputError, match="not flat"):
        mesh_from_triangles(p3, tri)
    # a triangle given twice (overlap)
    with pytest.raises(InputError, match="more than two triangles"):
        mesh_from_triangles(pts, np.r_[tri, tri[:2]])
    # two triangles sharing one node (a bow tie)
    bow = np.array([[0, 0], [1, 0], [1, 1], [2, 1], [2, 2]], dtype=float)
    with pytest.raises(InputError, match=r"touches itself at \(1, 1\)"):
        mesh_from_triangles(bow, [[0, 1, 2], [2, 3, 4]])
    # degenerate triangle
    with pytest.raises(InputError, match="zero area"):
        mesh_from_triangles(np.r_[pts, [[0.5, 0.0]]], np.r_[tri, [[0, 1, len(pts)]]])
    # quads are not split silently
    path = tmp_path / "quads.vtu"
    meshio.write(path, meshio.Mesh(np.c_[pts, np.zeros(len(pts))],
                                   [("triangle", tri), ("quad", [[0, 1, 6, 5]])]))
    with pytest.raises(InputError, match="quad cells"):
        read_mesh_file(path)
    # no triangles at all
    path = tmp_path / "lines.vtu"
    meshio.write(path, meshio.Mesh(pts, [("line", [[0, 1], [1, 2]])]))
    with pytest.raises(InputError, match="no triangles"):
        read_mesh_file(path)
    # not a mesh file at all
    bad = tmp_path / "junk.vtu"
    bad.write_text("hello")
    with pytest.raises(InputError, match="meshio could not read it"):
        read_section(bad)


def test_unused_nodes_and_clockwise_triangles_are_accepted():
    """Extra nodes are dropped and clockwise triangles turned; the unit square's area 1."""
    pts, tri = _square_grid()
    pts = np.r_[pts, [[7.0, 7.0]]]
    tri = tri[:, [0, 2, 1]]
    prof, mesh = mesh_from_triangles(pts, tri)
    assert mesh.nnodes == 25 and prof.area == pytest.approx(1.0, rel=1e-12, abs=0)
    assert np.all(mesh.element_areas() > 0)


def test_cli_solves_a_mesh_file_as_given(tmp_path, capsys):
    prof = hollow_circle(10.0, 6.0, 64)
    r = analyse(prof, mesh_size=1.0)
    path = tmp_path / "tube.vtu"
    meshio.write(path, result_to_meshio(r))
    out, back = tmp_path / "r.json", tmp_path / "back.vtu"
    assert main(["solve", str(path), "--json", str(out), "--mesh-out", str(back), "--quiet"]) == 0
    data = json.loads(out.read_text())
    assert (data["mesh"]["nodes"], data["mesh"]["elements"]) == (r.mesh.nnodes, r.mesh.nelements)
    np.testing.assert_array_equal(meshio.read(back).cells[0].data, r.mesh.t.T)  # as given
    assert data["torsion_constant"] == pytest.approx(r.torsion_constant, rel=1e-10, abs=0)
    assert main(["solve", str(path), "--mesh-size", "0.5"]) == 2
    assert "does not apply to a mesh file" in capsys.readouterr().err
