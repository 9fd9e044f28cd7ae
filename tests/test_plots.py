"""Pictures: produced, non-trivial, labelled; the plotted field against closed forms."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from _visual_sections import (
    box_tube,
    circle_loop,
    nonwhite_fraction,
    png_pixels,
    rect_result,
    rectangle_series,
    tube_result,
)
from soapfilm import Profile, analyse, plots
from soapfilm.errors import InputError
from soapfilm.mesh import Mesh

# ends of matplotlib's viridis colour map (its published first and last entries)
VIRIDIS_LOW = np.array([0.267004, 0.004874, 0.329415])
VIRIDIS_HIGH = np.array([0.993248, 0.906157, 0.143936])


def _has_colour(img, rgb, atol=0.03) -> bool:
    return bool(np.any(np.all(np.abs(img[..., :3] - rgb) < atol, axis=-1)))


def _peak_label(ax) -> str:
    (legend,) = ax.figure.legends
    (text,) = legend.get_texts()
    assert text.get_text().startswith("peak ")
    return text.get_text()


def _colorbar_axes(ax):
    bars = [a for a in ax.child_axes if a.get_label() == "colorbar"]
    assert len(bars) == 1, "one colour bar expected"
    return bars[0]


def test_shear_map_png_is_a_real_picture():
    r = rect_result()
    ax = plots.plot_shear(r)
    img = png_pixels(plots.figure_bytes(ax, "png"))
    h, w = img.shape[:2]
    assert w >= 900 and h >= 450  # 6.4 in wide at 150 dpi, height follows the 2:1 bar
    assert nonwhite_fraction(img) > 0.3
    # colour bar spans the whole map: both ends of viridis are drawn
    assert _has_colour(img, VIRIDIS_LOW) and _has_colour(img, VIRIDIS_HIGH)
    cb = _colorbar_axes(ax)
    assert "1/mm³" in cb.get_ylabel()
    assert ax.get_aspect() == 1.0
    assert "1/mm³" in _peak_label(ax)


def test_labels_are_not_clipped():
    """Every text of the figure lies inside the saved picture (constrained layout)."""
    ax = plots.plot_shear(tube_result(), torque=50.0)
    fig = ax.figure
    plots.figure_bytes(fig, "png")  # draws the figure
    renderer = fig.canvas.get_renderer()
    box = fig.bbox
    items = [ax.title, ax.xaxis.label, ax.yaxis.label, _colorbar_axes(ax).yaxis.label,
             *fig.legends[0].get_texts()]
    for item in items:
        bb = item.get_window_extent(renderer)
        assert bb.x0 >= box.x0 - 1 and bb.x1 <= box.x1 + 1, item.get_text()
        assert bb.y0 >= box.y0 - 1 and bb.y1 <= box.y1 + 1, item.get_text()


def test_peak_label_in_stress_units_with_a_torque():
    """T in N*m on a section in mm gives MPa: 1 N*m = 1000 N*mm and 1 N/mm^2 = 1 MPa
    (SI definitions)."""
    r = rect_result()
    ax = plots.plot_shear(r, torque=120.0, stress_unit="MPa")
    assert "MPa" in _colorbar_axes(ax).get_ylabel()
    expected = r.max_shear_per_torque * 120.0 * 1000.0
    assert float(_peak_label(ax).split()[1]) == pytest.approx(expected, rel=5e-4, abs=0)
    # psi: 1 psi = 6894.757 Pa (NIST SP 811, appendix B)
    ax = plots.plot_shear(r, torque=120.0, stress_unit="psi")
    psi = float(_peak_label(ax).split()[1])
    assert psi == pytest.approx(expected * 1e6 / 6894.757, rel=5e-4, abs=0)


def test_bad_torque_is_an_input_error():
    with pytest.raises(InputError, match="torque must be a positive number"):
        plots.plot_shear(rect_result(), torque=-3.0)


def test_nodal_shear_of_a_round_bar_is_the_elementary_solution():
    """Round bar: tau = T r / J, direction (-y, x) (elementary torsion theory; Timoshenko &
    Goodier, 3rd ed., sec. 101).  Checked at interior nodes against the meshed polygon's J."""
    prof = Profile.from_loops([circle_loop(10.0, 256)], name="round bar d20")
    r = analyse(prof, mesh_size=0.6)
    tau = plots.nodal_shear(r)
    x, y = r.fields.p[:, : r.mesh.nnodes]  # quadratic elements: corner nodes first
    rad = np.hypot(x, y)
    inner = rad < 8.0
    exact = np.stack([-y, x]) / r.torsion_constant
    err = np.abs(tau[:, inner] - exact[:, inner]).max()
    assert err <= 0.01 * 10.0 / r.torsion_constant  # 1 % of the rim stress


def test_shear_map_peak_matches_the_rectangle_series():
    """Colour-map maximum (recovered nodal shear) against the exact rectangle peak,
    Timoshenko & Goodier 3rd ed. sec. 109; P1 with recovery on h = 0.4 on a 20 x 10 bar."""
    r = rect_result()
    _, tau_exact = rectangle_series(20.0, 10.0)
    mag = np.hypot(*plots.nodal_shear(r))
    assert mag.max() == pytest.approx(tau_exact, rel=0.02, abs=0)


def test_wide_section_gets_its_colour_bar_underneath():
    """A 100 x 4 strip: the bar lies under the map, labels stay inside the picture."""
    r = analyse(Profile.from_loops([[(0, 0), (100, 0), (100, 4), (0, 4)]], name="strip"),
                mesh_size=1.0)
    ax = plots.plot_shear(r)
    fig = ax.figure
    plots.figure_bytes(fig, "png")
    bars = [a for a in fig.axes if a is not ax]
    assert len(bars) == 1
    bar, box = bars[0].get_position(), ax.get_position()
    assert bar.y1 < box.y0 and bar.width > 0.8 * box.width
    renderer = fig.canvas.get_renderer()
    for item in (ax.title, bars[0].xaxis.label, *fig.legends[0].get_texts()):
        bb = item.get_window_extent(renderer)
        assert fig.bbox.x0 - 1 <= bb.x0 and bb.x1 <= fig.bbox.x1 + 1
        assert fig.bbox.y0 - 1 <= bb.y0 and bb.y1 <= fig.bbox.y1 + 1


def test_warping_map_and_surface_and_section():
    r = tube_result()
    ax = plots.plot_warping(r, show_mesh=True)
    img = png_pixels(plots.figure_bytes(ax, "png"))
    assert nonwhite_fraction(img) > 0.2
    assert "mm²" in _colorbar_axes(ax).get_ylabel()
    ax3 = plots.plot_stress_surface(r)
    img3 = png_pixels(plots.figure_bytes(ax3, "png"))
    assert img3.shape[1] >= 800 and nonwhite_fraction(img3) > 0.15
    axs = plots.draw_section(r.profile, mesh=r.mesh)
    img_s = png_pixels(plots.figure_bytes(axs, "png"))
    assert nonwhite_fraction(img_s) > 0.2
    assert "1 hole" in axs.get_title()


def test_vector_formats_and_atomic_save(tmp_path):
    ax = plots.plot_shear(rect_result(), show_mesh=True)
    svg = plots.figure_bytes(ax, "svg")
    assert b"<svg" in svg[:500] and b"image/png" in svg  # field rasterised, lines vector
    assert plots.figure_bytes(ax, "pdf")[:5] == b"%PDF-"
    out = plots.save_figure(ax, tmp_path / "map.pdf")
    assert out.read_bytes()[:5] == b"%PDF-"
    with pytest.raises(InputError, match="picture format"):
        plots.save_figure(ax, tmp_path / "map.jpeg")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["map.pdf"]


def test_quadratic_mesh_is_drawn_on_its_corner_nodes():
    """A (6, M) mesh (corner nodes first) gives the same nodal shear at the corners."""
    r = rect_result()
    m, f = r.mesh, r.fields
    t = m.t
    n = m.nnodes
    edges = np.concatenate([t[[0, 1]], t[[1, 2]], t[[2, 0]]], axis=1)
    mid_p = 0.5 * (m.p[:, edges[0]] + m.p[:, edges[1]])
    mid_ids = n + np.arange(edges.shape[1]).reshape(3, -1)
    t6 = np.vstack([t, mid_ids])
    p6 = np.hstack([m.p, mid_p])
    mesh6 = Mesh(p6, t6, m.segments, m.segment_markers, m.hole_areas)
    fields6 = dataclasses.replace(
        f,
        p=np.hstack([f.p, 0.5 * (f.p[:, edges[0]] + f.p[:, edges[1]])]),
        phi=np.concatenate([f.phi, 0.5 * (f.phi[edges[0]] + f.phi[edges[1]])]),
        omega=np.concatenate([f.omega, 0.5 * (f.omega[edges[0]] + f.omega[edges[1]])]),
    )
    r6 = dataclasses.replace(r, mesh=mesh6, fields=fields6, order=2)
    tau6 = plots.nodal_shear(r6)
    np.testing.assert_allclose(tau6[:, :n], plots.nodal_shear(r), rtol=1e-12, atol=0)
    for ax in (plots.plot_shear(r6, show_mesh=True), plots.plot_warping(r6),
               plots.plot_stress_surface(r6), plots.draw_section(r6.profile, mesh6)):
        assert nonwhite_fraction(png_pixels(plots.figure_bytes(ax, "png"))) > 0.15
    assert math.isfinite(tau6.max())


@pytest.mark.parametrize("fmt", ["png", "svg", "pdf"])
def test_pictures_are_reproducible(fmt):
    """Same result, same bytes: no time stamps or random ids in the files."""
    r = rect_result()
    a = plots.figure_bytes(plots.plot_shear(r), fmt)
    b = plots.figure_bytes(plots.plot_shear(r), fmt)
    assert a == b


def test_stress_surface_labels_are_inside_the_picture():
    ax = plots.plot_stress_surface(tube_result())
    fig = ax.figure
    plots.figure_bytes(fig, "png")
    renderer = fig.canvas.get_renderer()
    for item in (ax.title, ax.xaxis.label, ax.yaxis.label, ax.zaxis.label):
        bb = item.get_window_extent(renderer)
        assert fig.bbox.x0 - 1 <= bb.x0 and bb.x1 <= fig.bbox.x1 + 1, item.get_text()
        assert fig.bbox.y0 - 1 <= bb.y0 and bb.y1 <= fig.bbox.y1 + 1, item.get_text()


# ------------------------------------------------- readable for every section (issue 10)
def _shear_mappable(ax):
    """The colour field of a shear map (the tripcolor with a colour bar)."""
    (pc,) = [c for c in ax.collections if getattr(c, "colorbar", None) is not None]
    return pc


def _flow_lines(ax):
    from matplotlib.contour import ContourSet

    sets = [c for c in ax.collections if isinstance(c, ContourSet)]
    assert len(sets) <= 1
    return sets[0] if sets else None


def _corner_marks(ax) -> int:
    """Number of sharp-corner markers (white diamonds) drawn on the map."""
    return sum(len(line.get_xdata()) for line in ax.lines if line.get_marker() == "D")


def test_colour_bar_ends_at_the_reported_peak():
    """A smooth section: the top of the scale is the reported peak, nothing beyond it.
    With a torque the peak is in MPa: 1 N*m = 1000 N*mm, 1 N/mm^2 = 1 MPa (SI definitions)."""
    r = rect_result()
    for torque, factor in ((None, 1.0), (120.0, 120.0 * 1000.0)):
        ax = plots.plot_shear(r, torque=torque)
        pc = _shear_mappable(ax)
        assert pc.norm.vmin == 0.0
        assert pc.norm.vmax == pytest.approx(r.max_shear_per_torque * factor, rel=1e-12, abs=0)
        assert pc.colorbar.extend == "neither"
        assert float(np.max(pc.get_array())) <= pc.norm.vmax


def test_colour_bar_extends_beyond_the_peak_at_sharp_corners():
    """Box tube with sharp inner corners: the shear there grows like r^(pi/alpha - 1) =
    r^(-1/3) for alpha = 3 pi / 2 (Williams 1952), so the drawn field exceeds the peak the
    result reports (read away from the corners); the scale still ends at that peak and the
    values beyond are drawn in the over-colour, with an arrow on the colour bar.  (On a
    mesh this fine the corner values already exceed the peak; on a coarse one they need not,
    and then there is no arrow: see the rectangle.)"""
    r = analyse(box_tube(), mesh_size=0.4)
    assert len(r.corners) == 4
    ax = plots.plot_shear(r)
    pc = _shear_mappable(ax)
    assert pc.norm.vmax == pytest.approx(r.max_shear_per_torque, rel=1e-12, abs=0)
    assert float(np.max(pc.get_array())) > 1.05 * pc.norm.vmax
    assert pc.colorbar.extend == "max"
    assert "beyond the reported peak" in _colorbar_axes(ax).get_ylabel()
    over = np.array(matplotlib_colors_to_rgb(plots.OVER_COLOUR))
    img = png_pixels(plots.figure_bytes(ax, "png"))
    assert _has_colour(img, over, atol=0.02)  # corner zones and the colour bar's arrow
    img_rect = png_pixels(plots.figure_bytes(plots.plot_shear(rect_result()), "png"))
    assert not _has_colour(img_rect, over, atol=0.02)


def matplotlib_colors_to_rgb(c):
    from matplotlib.colors import to_rgb

    return to_rgb(c)


def test_corners_are_marked_and_labelled_on_the_map_and_the_drawing():
    """One marker per sharp re-entrant corner: 4 inside a box tube (its hole's corners,
    270 deg each), none on a rectangle (all corners convex); labels C1..C4."""
    r = tube_result()
    ax = plots.plot_shear(r)
    assert _corner_marks(ax) == len(r.corners) == 4
    labels = sorted(t.get_text() for t in ax.texts if t.get_text().startswith("C"))
    assert labels == ["C1", "C2", "C3", "C4"]
    legend_texts = [t.get_text() for t in ax.figure.legends[0].get_texts()]
    assert any("C1–C4: sharp re-entrant corners" in t for t in legend_texts)
    # show draws the section without solving and finds the same corners itself
    axs = plots.draw_section(r.profile)
    assert _corner_marks(axs) == 4
    assert sorted(t.get_text() for t in axs.texts if t.get_text().startswith("C")) == labels
    assert _corner_marks(plots.draw_section(r.profile, corners=())) == 0
    assert _corner_marks(plots.plot_shear(rect_result())) == 0
    assert _corner_marks(plots.draw_section(rect_result().profile)) == 0


def test_many_corners_are_all_marked():
    """ISO 14 straight spline 8 x 32 x 36 with sharp roots: each of the 8 splines meets the
    minor circle at two sharp corners, 16 in all (ISO 14 profile, parallel flanks)."""
    from soapfilm.shapes.splines import straight_spline

    prof = straight_spline(minor_diameter=32.0, series="light")
    ax = plots.draw_section(prof)
    assert _corner_marks(ax) == 16
    (legend,) = ax.figure.legends
    assert "16" in legend.get_texts()[0].get_text()
    img = png_pixels(plots.figure_bytes(ax, "png"))
    assert nonwhite_fraction(img) > 0.2


def _tube(diameter: float, wall: float):
    from soapfilm.shapes.basic import tube

    return tube(diameter, wall)


def test_wall_thickness_of_standard_sections():
    """Thinnest wall from the outline: a round tube's wall (D - d) / 2, a rectangle's
    smaller side, a box tube's wall, a hexagon's width across flats (closed-form geometry)."""
    from soapfilm.shapes.basic import box_tube, regular_polygon

    cases = [(_tube(60.0, 2.0), 2.0), (rect_result().profile, 10.0),
             (box_tube(40.0, 25.0, 4.0), 4.0), (regular_polygon(6, 19.0), 19.0)]
    for prof, expected in cases:
        # polygon sides stand in for the circles: a few 1e-4 of the wall at most
        assert plots.wall_thickness(prof) == pytest.approx(expected, rel=2e-3, abs=0), prof.name


def test_flow_lines_are_spaced_across_a_thin_tube():
    """Thin round tube 60 x 2: the shear-flow lines are circles in the wall; on the page
    they are at least MIN_LINE_GAP_PT apart and half that from the faces (r = 28 and 30,
    closed-form geometry), as many as fit, and thinner than a tenth of the wall."""
    ro, t = 30.0, 2.0
    r = analyse(_tube(2 * ro, t), mesh_size=0.5, order=1)
    ax = plots.plot_shear(r)
    plots.figure_bytes(ax, "png")  # lay the figure out as saved
    ppu = plots._points_per_unit(ax)
    wall_pt = t * ppu
    cs = _flow_lines(ax)
    assert cs is not None
    n = len(cs.levels)
    assert 1 <= n <= wall_pt / plots.MIN_LINE_GAP_PT  # n lines need n gaps of the minimum
    radii = []
    for path in cs.get_paths():
        v = path.vertices
        rad = np.hypot(v[:, 0], v[:, 1])
        assert np.ptp(rad) < 0.1 * t  # a circle in the wall
        radii.append(float(rad.mean()))
    radii = np.sort(radii)
    assert len(radii) == n
    gaps = np.diff(np.concatenate([[ro - t], radii, [ro]])) * ppu
    assert gaps[1:-1].min(initial=np.inf) >= plots.MIN_LINE_GAP_PT
    assert min(gaps[0], gaps[-1]) >= 0.5 * plots.MIN_LINE_GAP_PT
    # one more line would not fit: the even split of the wall into n + 2 gaps
    assert wall_pt / (n + 2) < plots.MIN_LINE_GAP_PT
    (lw,) = set(np.atleast_1d(cs.get_linewidth()))
    assert lw <= 0.1 * wall_pt
    # the same tube before: twelve lines in a 2 mm wall; a solid bar keeps its twelve
    assert len(_flow_lines(plots.plot_shear(rect_result())).levels) == 12


def test_a_wall_too_thin_for_lines_gets_none():
    """Tube 200 x 1: the wall is under MIN_LINE_GAP_PT on the page (about 2.5 pt), so no
    line fits; the title says so."""
    r = analyse(_tube(200.0, 1.0), mesh_size=0.5, order=1)
    ax = plots.plot_shear(r)
    assert 1.0 * plots._points_per_unit(ax) < plots.MIN_LINE_GAP_PT
    assert _flow_lines(ax) is None
    assert "too thin" in ax.get_title()


def test_flow_lines_follow_the_quadratic_field():
    """Round bar d20: phi = (R^2 - r^2) / 2 per unit G theta (Timoshenko & Goodier, 3rd ed.,
    sec. 101), so the line at level c is the circle r = sqrt(R^2 - 2c).  On a coarse
    quadratic mesh (184 elements) the drawn lines, split at the mid-side nodes, stay within
    1.5 % of R of it (on the corner nodes alone they were 2.8 % off)."""
    from soapfilm.shapes.basic import round_bar

    rad_out = 10.0
    r = analyse(round_bar(2 * rad_out), mesh_size=2.5)
    assert r.order == 2
    cs = _flow_lines(plots.plot_shear(r))
    assert len(cs.levels) == 12  # a solid section keeps its twelve lines
    for level, segs in zip(cs.levels, cs.allsegs, strict=True):
        exact = math.sqrt(rad_out**2 - 2.0 * level)
        for seg in segs:
            err = np.abs(np.hypot(seg[:, 0], seg[:, 1]) - exact).max()
            assert err <= 0.015 * rad_out, (level, err)
