"""Pictures of a section and of its torsion fields (matplotlib, imported lazily).

Every drawing function takes an optional ``ax`` and returns the Axes it drew
on; without ``ax`` it makes a new :class:`matplotlib.figure.Figure` (no pyplot,
so nothing global is touched and any backend works).  :func:`figure_bytes`
renders a figure to PNG, SVG or PDF bytes, :func:`save_figure` writes it
atomically.

Shear values are per unit torque (1/unit^3) unless a torque is given (N*m),
then in a stress unit (see :mod:`soapfilm.stress_units`).

Quadratic meshes (``t`` of shape ``(6, M)``) are drawn on their corner nodes
``t[:3]``.
"""

from __future__ import annotations

import io
import logging
from pathlib import Path

import numpy as np

from .fem import p1
from .fem.torsion import recovered_gradient
from .profile import Profile
from .stress_units import ShearScale, shear_scale

__all__ = [
    "FIGURE_FORMATS",
    "nodal_shear",
    "draw_section",
    "plot_shear",
    "plot_warping",
    "plot_sectorial",
    "plot_stress_surface",
    "wall_chords",
    "wall_thickness",
    "shear_flow_levels",
    "MIN_LINE_GAP_PT",
    "OVER_COLOUR",
    "figure_bytes",
    "save_figure",
]

log = logging.getLogger(__name__)

#: file suffix -> matplotlib format name
FIGURE_FORMATS = {".png": "png", ".svg": "svg", ".pdf": "pdf"}

_SIZE_2D = (6.4, 5.2)
_SIZE_3D = (6.4, 5.6)
_DPI = 150


# --------------------------------------------------------------------- fields
def _corner_triangles(mesh) -> np.ndarray:
    """``(3, M)`` corner connectivity of a linear or quadratic mesh."""
    return np.asarray(mesh.t)[:3]


def nodal_shear(result) -> np.ndarray:
    """Shear stress vector per unit torque at the corner nodes, shape ``(2, N)``.

    The stress-function gradient is taken element by element on the corner
    triangles and recovered to the nodes by patch recovery
    (:func:`~soapfilm.fem.torsion.recovered_gradient`), then turned into the
    shear ``(dphi/dy, -dphi/dx) / J``.  Nodes that are not triangle corners
    (mid-side nodes of a quadratic mesh) get zero.
    """
    mesh, f = result.mesh, result.fields
    t = _corner_triangles(mesh)
    area, grad = p1.geometry(f.p, t)
    gphi = np.einsum("cie,ie->ce", grad, f.phi[t])
    nodes = np.unique(t)
    rec = recovered_gradient(f.p, t, area, gphi, nodes)
    out = np.zeros((2, mesh.nnodes))
    out[0, nodes] = rec[1]
    out[1, nodes] = -rec[0]
    return out / result.torsion_constant


def _triangulation(p, t):
    from matplotlib.tri import Triangulation

    return Triangulation(p[0], p[1], np.asarray(t).T)


#: a quadratic triangle (corners 0 1 2, mid-sides 3 = 01, 4 = 12, 5 = 20) as four linear ones
_P2_SPLIT = np.array([[0, 3, 5], [3, 1, 4], [5, 4, 2], [3, 4, 5]])


def _stress_function_triangulation(result):
    """Triangulation and nodal values of the stress function, for its contours.

    Quadratic fields are split into four linear triangles at their mid-side
    nodes, so the contours follow the quadratic field at half the element
    size (on the corner nodes alone they wander where the field is flat,
    along the ridge of a thin wall); linear fields use the mesh as it is.
    """
    f = result.fields
    phi = np.asarray(f.phi, dtype=float)
    t6 = getattr(f, "t6", None)
    if t6 is not None and np.shape(t6)[0] == 6 and len(phi) == np.shape(f.p)[1]:
        t = np.asarray(t6)[_P2_SPLIT].transpose(1, 0, 2).reshape(3, -1)
        xy = np.asarray(f.p) + np.asarray(f.origin, dtype=float).reshape(2, 1)
        return _triangulation(xy, t), phi
    t = _corner_triangles(result.mesh)
    return _triangulation(result.mesh.p, t), phi[: result.mesh.nnodes]


# ------------------------------------------------------------------- helpers
#: width/height ratio above which the colour bar goes under the map
_WIDE = 2.2


def _is_wide(profile: Profile) -> bool:
    lo, hi = profile.outer.min(axis=0), profile.outer.max(axis=0)
    return float(hi[0] - lo[0]) > _WIDE * float(hi[1] - lo[1])


def _fit_size(profile: Profile, colorbar: bool, legend: int = 0) -> tuple[float, float]:
    """Figure size whose plot area follows the section's height/width ratio.

    The width is fixed; the height is the plot width times the section's
    aspect ratio plus room for the title, the axis labels, a colour bar under
    wide sections and ``legend`` rows of legend, so that the map fills the frame.
    """
    lo, hi = profile.outer.min(axis=0), profile.outer.max(axis=0)
    w, h = float(hi[0] - lo[0]), float(hi[1] - lo[1])
    aspect = (h + 0.1 * max(w, h)) / (w + 0.1 * max(w, h))
    wide = colorbar and _is_wide(profile)
    plot_w = _SIZE_2D[0] - (0.9 if wide or not colorbar else 1.75)
    height = plot_w * aspect + 1.35 + (0.75 if wide else 0.0) + 0.3 * int(legend)
    return _SIZE_2D[0], float(min(max(height, 3.0), 7.6))


def _new_axes(ax, size=_SIZE_2D, projection=None):
    if ax is not None:
        return ax
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=size, dpi=_DPI, layout="constrained")
    FigureCanvasAgg(fig)
    return fig.add_subplot(projection=projection)


def _outline(ax, profile: Profile, color="k", lw=1.1, zorder=4):
    for loop in profile.loops:
        xy = np.vstack([loop, loop[:1]])
        ax.plot(xy[:, 0], xy[:, 1], color=color, lw=lw, zorder=zorder, solid_joinstyle="round")


def _finish_axes(ax, profile: Profile, title: str):
    u = profile.units
    lo, hi = profile.outer.min(axis=0), profile.outer.max(axis=0)
    pad = 0.05 * float(max(hi - lo))
    ax.set_xlim(lo[0] - pad, hi[0] + pad)
    ax.set_ylim(lo[1] - pad, hi[1] + pad)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel(f"x [{u}]")
    ax.set_ylabel(f"y [{u}]")
    ax.set_title(title, fontsize=10)


def _colorbar(ax, mappable, label: str, horizontal: bool = False, extend: str = "neither"):
    from matplotlib.ticker import ScalarFormatter

    if horizontal:  # under a wide section: as wide as the map
        cb = ax.figure.colorbar(mappable, ax=ax, location="bottom", aspect=45, pad=0.04,
                                extend=extend)
    else:  # in an inset of the map's own box, so it is exactly as tall as the map
        cax = ax.inset_axes([1.035, 0.0, 0.045, 1.0], label="colorbar")
        cb = ax.figure.colorbar(mappable, cax=cax, extend=extend)
    fmt = ScalarFormatter(useMathText=True)
    fmt.set_powerlimits((-2, 4))
    cb.formatter = fmt
    cb.update_ticks()
    cb.set_label(label)
    return cb


def _mesh_overlay(ax, p, t, n_elements: int):
    lw = 0.35 if n_elements < 3000 else 0.15
    lines = ax.triplot(_triangulation(p, t), color="0.15", lw=lw, alpha=0.55, zorder=3)
    if n_elements >= 3000:  # keep SVG/PDF small: fine meshes go in as an image
        for artist in lines:
            artist.set_rasterized(True)


_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def _fmt(v: float) -> str:
    """Four significant digits; powers of ten as ``3.312×10⁻⁴`` outside 1e-2..1e5."""
    if v == 0 or 1e-2 <= abs(v) < 1e5:
        return f"{v:.4g}"
    mant, exp = f"{v:.3e}".split("e")
    return f"{mant}×10{str(int(exp)).translate(_SUPERSCRIPT)}"


def _section_name(profile: Profile) -> str:
    return profile.name or "section"


# ------------------------------------------------------- walls and line rules
#: Smallest gap between neighbouring shear-flow lines across the thinnest wall,
#: in points (1/72 in): about 1 mm on paper and 6 pixels at the 150 dpi of the
#: PNGs, room for two white lines with a coloured gap between them.
MIN_LINE_GAP_PT = 3.0

#: Colour of shear above the reported peak (the colour bar's arrow): not in viridis.
OVER_COLOUR = "#e7298a"

#: Share of the outline length whose normal chord may be shorter than the
#: thickness reported for the thinnest wall (tapers into acute corners), and
#: share of the walls' chords on which the line-gap rule may fail (where a wall
#: joins a thicker part, at fillets and junctions, the stress rises and lines
#: close up, as the stress asks).
_OUTLIER_SHARE = 0.1


def _cross(a, b):
    return a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]


def wall_chords(profile: Profile, samples: int = 2000):
    """Chords across the material along the inward normal of the outline.

    The outline is cut into about ``samples`` equal pieces (at least one per
    edge); from the middle of each a ray runs along the inward normal (the
    material lies left of every loop) to where it first leaves the material.
    This is the ray method of wall-thickness analysis (common practice, no
    source): across a wall of thickness t between parallel faces the chord
    is t, from either face.

    Returns
    -------
    start : ndarray (K, 2)
    direction : ndarray (K, 2)
        Unit inward normals.
    length : ndarray (K,)
        Chord lengths (a ray that finds no exit, from rounding, is dropped).
    weight : ndarray (K,)
        Outline length each chord stands for.
    """
    a = np.vstack(profile.loops)
    b = np.vstack([np.roll(lp, -1, axis=0) for lp in profile.loops])
    e = b - a
    seg = np.hypot(e[:, 0], e[:, 1])
    k = np.maximum(1, np.ceil(seg / (seg.sum() / samples))).astype(int)
    edge = np.repeat(np.arange(len(a)), k)
    j = np.arange(k.sum()) - np.repeat(np.cumsum(k) - k, k)
    start = a[edge] + ((j + 0.5) / k[edge])[:, None] * e[edge]
    tang = e[edge] / seg[edge][:, None]
    normal = np.c_[-tang[:, 1], tang[:, 0]]
    weight = seg[edge] / k[edge]
    tiny = 1e-9 * profile.size
    length = np.empty(len(start))
    chunk = max(1, 2_000_000 // len(a))
    for c in range(0, len(start), chunk):
        o, d = start[c:c + chunk, None, :], normal[c:c + chunk, None, :]
        ao = a[None] - o
        den = _cross(d, e[None])
        with np.errstate(divide="ignore", invalid="ignore"):
            s = _cross(ao, e[None]) / den
            u = _cross(ao, d) / den
        hit = (den != 0) & (s > tiny) & (u >= 0) & (u <= 1)
        length[c:c + chunk] = np.where(hit, s, np.inf).min(axis=1)
    ok = np.isfinite(length)
    return start[ok], normal[ok], length[ok], weight[ok]


def wall_thickness(profile: Profile, chords=None) -> float:
    """Thickness of the thinnest wall of a section, in its length unit.

    The local wall thickness at a point of the outline is the length of the
    chord across the material along the inward normal (:func:`wall_chords`).
    The thinnest wall is the shortest such chord, except that the shortest
    tenth of the outline (by length) is set aside: near an acute convex
    corner (a knife edge, the tip of a keyway land) the chord falls to zero
    without there being a wall.  A thin-walled tube gives its wall, an I or
    channel its web, a solid rectangle its smaller side, a hexagon its width
    across flats, a spline its teeth.

    It sets the width of the shear-flow lines (:func:`plot_shear`).
    """
    _, _, length, weight = chords if chords is not None else wall_chords(profile)
    order = np.argsort(length)
    share = np.cumsum(weight[order]) / weight.sum()
    return float(length[order][np.searchsorted(share, _OUTLIER_SHARE)])


def _inscribed_diameters(profile: Profile, start, normal, chords) -> np.ndarray:
    """Diameter of the largest circle in the material touching the outline at each start.

    The circle tangent at ``p`` (centre ``p + r n``) through an outline point
    ``q`` has ``r = |q - p|^2 / (2 n.(q - p))``; the largest circle inside is
    the smallest such r over the outline points in front of ``p`` (the
    shrinking-ball construction of the medial axis).  Outline points: the
    starts of all ``chords`` and the loop vertices.
    """
    q = np.vstack([chords[0], *profile.loops])
    out = np.empty(len(start))
    step = max(1, 2_000_000 // len(q))
    for c in range(0, len(start), step):
        dq = q[None, :, :] - start[c:c + step, None, :]
        front = np.einsum("kqi,ki->kq", dq, normal[c:c + step])
        with np.errstate(divide="ignore", invalid="ignore"):
            r = np.einsum("kqi,kqi->kq", dq, dq) / (2.0 * front)
        r[front <= 1e-12 * profile.size] = np.inf
        out[c:c + step] = 2.0 * r.min(axis=1)
    return out


def _wall_profiles(profile: Profile, tri, phi, chords, corners=(), samples: int = 48,
                   most: int = 400):
    """The stress function across the walls, along chords from the outline.

    ``most`` chords at most, evenly along the outline; each runs along the
    inward normal to the far face or, where shorter, across the largest
    circle inside touching there (so a ray that enters a wall lengthwise, at
    a corner, stops where the wall's cross-section does).  Chords that start
    or end within the zone of a sharp re-entrant corner
    (:func:`soapfilm.solve.corner_zone_radius`, as the peak rule; the stress is
    unbounded there and lines must crowd) are left out, as the peak rule
    leaves those zones out (a weak corner's zone is not: lines crowd there
    no more than the stress, ``r^-lambda`` with ``lambda`` under 0.053).
    Sampled at ``samples`` points from face to face; points the mesh does
    not cover (a curve's chord) take the nearest value.

    Returns ``(across (K, S), span (K,), weight (K,), ray length (K,))``.
    """
    from matplotlib.tri import LinearTriInterpolator

    from .solve import corner_zone_radius

    start, normal, length, weight = chords
    pick = np.unique(np.linspace(0, len(start) - 1, min(most, len(start))).round().astype(int))
    start, normal, length, weight = start[pick], normal[pick], length[pick], weight[pick]
    span = np.minimum(length, _inscribed_diameters(profile, start, normal, chords))
    end = start + span[:, None] * normal
    keep = np.ones(len(start), dtype=bool)
    zone = corner_zone_radius(profile)
    for c in corners:
        for xy in (start, end):
            keep &= np.hypot(xy[:, 0] - c.x, xy[:, 1] - c.y) > zone
    start, normal, weight = start[keep], normal[keep], weight[keep]
    span, length = span[keep], length[keep]
    s = np.linspace(0.0, 1.0, samples)
    pts = start[:, None, :] + (span[:, None] * s[None, :])[..., None] * normal[:, None, :]
    vals = LinearTriInterpolator(tri, phi)(pts[..., 0], pts[..., 1])
    out = np.ma.filled(vals.astype(float), np.nan)
    for row in out:  # fill the few points outside the mesh from their neighbours
        bad = np.isnan(row)
        if bad.all():
            row[:] = 0.0
        elif bad.any():
            row[bad] = np.interp(np.flatnonzero(bad), np.flatnonzero(~bad), row[~bad])
    return out, span, weight, length


def shear_flow_levels(phi_max: float, across: np.ndarray, span: np.ndarray, min_gap: float,
                      max_lines: int = 12, weight: np.ndarray | None = None,
                      thin: np.ndarray | None = None,
                      reach: np.ndarray | None = None) -> np.ndarray:
    """Stress-function levels for the shear-flow lines.

    The levels are ``first + k * step`` with ``step = phi_max / (n + 1)``:
    equal steps, so that equal shear flow passes between neighbouring lines
    and their crowding shows the stress (in a closed section ``phi_max`` is
    a hole's value and the lines share the wall evenly).  ``n`` is the
    largest count up to ``max_lines`` that fits the walls; possibly none.
    Along a chord across a wall (``across``, ``span``) the lines fit when

    * they cross at least ``min_gap`` apart, and at least half that from
      the faces it joins (black outline against white lines), and
    * no level lies within ``(min_gap / 2)^2`` of the wall's ridge (the
      chord's inner maximum): across a thin open wall ``phi ~ R - s^2``
      (``-lap phi = 2``), so such a level would cross the wall twice less
      than ``min_gap`` apart, or wander along its ridge;

    and a set of levels fits when it fits along all chords but a tenth of
    the outline's length (where a wall joins a thicker part the stress, and
    so the line density, rises: fillets, junctions).

    ``first`` is ``step`` (from zero, the even split) unless the lines then
    miss most of the thinnest walls (chords marked ``thin``) and a first
    level between ``step / 2`` and ``step`` crosses more of them - the one
    nearest half those walls' ridge, which puts the pair of lines midway
    between faces and ridge: a thin open wall (an I beam's web) whose ridge
    is below one step would otherwise show no line.

    Parameters
    ----------
    phi_max : float
        The stress function's largest value (0 on the outside).
    across : ndarray (K, S)
        Stress function sampled at S equally spaced points along K chords
        across the walls, face to face.
    span : ndarray (K,)
        The chords' lengths.
    min_gap : float
        Smallest gap, in the length unit.
    max_lines : int
    weight : ndarray (K,), optional
        Outline length each chord stands for (equal by default).
    thin : ndarray (K,) of bool, optional
        Chords across the thinnest walls (all by default).
    reach : ndarray (K,) of bool, optional
        Chords that end on the far face (all by default); the others end
        inside the material, where a line may cross anywhere.

    Returns
    -------
    ndarray
        The levels, ascending; empty when none fits.
    """
    if not phi_max > 0 or max_lines < 1:
        return np.empty(0)
    span = np.asarray(span, dtype=float)
    across = np.asarray(across, dtype=float).reshape(len(span), -1)
    if not across.size:
        n = max_lines
        return phi_max * np.arange(1, n + 1) / (n + 1)
    weight = np.ones(len(span)) if weight is None else np.asarray(weight, dtype=float)
    weight = weight / weight.sum()
    thin = np.ones(len(span), dtype=bool) if thin is None else np.asarray(thin, dtype=bool)
    reach = np.ones(len(span), dtype=bool) if reach is None else np.asarray(reach, dtype=bool)
    pos = np.linspace(0.0, 1.0, across.shape[1])[None, :] * span[:, None]
    margin = 0.25 * min_gap**2
    top = np.argmax(across, axis=1)
    ridge = np.where((top > 0) & (top < across.shape[1] - 1), across.max(axis=1), np.nan)
    lo, hi = across[:, :-1], across[:, 1:]
    x0, dx = pos[:, :-1], np.diff(pos, axis=1)

    def check(levels):
        """(share of the outline where the levels fit, share of thin chords crossed)."""
        # levels crossed between neighbouring samples: those between their values
        s_lo, s_hi = np.searchsorted(levels, lo), np.searchsorted(levels, hi)
        cnt = np.abs(s_hi - s_lo).ravel()
        cell = np.repeat(np.arange(cnt.size), cnt)
        j = np.repeat(np.minimum(s_lo, s_hi).ravel(), cnt) \
            + np.arange(cell.size) - np.repeat(np.cumsum(cnt) - cnt, cnt)
        k, i = np.divmod(cell, lo.shape[1])  # chord and sample interval of each crossing
        a, b = lo[k, i], hi[k, i]
        x = x0[k, i] + (levels[j] - a) / (b - a) * dx[k, i]
        order = np.lexsort((x, k))
        k, x = k[order], x[order]
        first = np.full(len(span), np.inf)
        last = np.full(len(span), -np.inf)
        between = np.full(len(span), np.inf)
        np.minimum.at(first, k, x)
        np.maximum.at(last, k, x)
        same = k[1:] == k[:-1]
        np.minimum.at(between, k[1:][same], np.diff(x)[same])
        near_ridge = np.any(np.abs(ridge[:, None] - levels[None, :]) < margin, axis=1)
        face = np.minimum(first, np.where(reach, span - last, np.inf))
        ok = (between >= min_gap) & (face >= 0.5 * min_gap) & ~near_ridge
        crossed = np.isfinite(first) & thin
        return float(weight[ok].sum()), float(crossed.sum() / max(thin.sum(), 1))

    thin_ridges = ridge[thin & np.isfinite(ridge)]
    aim = 0.5 * float(np.median(thin_ridges)) if len(thin_ridges) else 0.0
    for n in range(max_lines, 0, -1):
        step = phi_max / (n + 1)
        best, best_cover = None, -1.0
        shifted = np.linspace(step, 0.5 * step, 9)[1:]
        # the even split first, then first levels nearest half the thin walls' ridge
        for first in [step, *shifted[np.argsort(np.abs(shifted - aim), kind="stable")]]:
            levels = first + step * np.arange(n)
            share, cover = check(levels)
            if share < 1.0 - _OUTLIER_SHARE - 1e-12:
                continue
            if cover >= 0.5:  # lines across (most of) the thinnest walls: take it
                return levels
            if cover > best_cover + 1e-9:
                best, best_cover = levels, cover
        if best is not None:
            return best
    return np.empty(0)


def _points_per_unit(ax) -> float:
    """Points (1/72 in) per length unit of an equal-aspect map, after layout."""
    fig = ax.figure
    engine = fig.get_layout_engine()
    if engine is not None:
        engine.execute(fig)
    ax.apply_aspect()
    x0, x1 = ax.get_xlim()
    return 72.0 * ax.get_position().width * fig.get_figwidth() / abs(x1 - x0)


def _line_width(thickness_pt: float) -> float:
    """Contour line width: a twentieth of the thinnest wall, 0.25 to 0.6 pt."""
    return float(np.clip(thickness_pt / 20.0, 0.25, 0.6))


# ------------------------------------------------------------------ corners
def _corner_markers(ax, corners):
    """A white diamond at each sharp re-entrant corner; the legend handle (None without)."""
    if not corners:
        return None
    xy = np.array([(c.x, c.y) for c in corners], dtype=float)
    n = len(corners)
    what = "corner" if n == 1 else "corners"
    (handle,) = ax.plot(xy[:, 0], xy[:, 1], ls="none", marker="D", ms=5.5, mfc="white",
                        mec="black", mew=1.1, zorder=8,
                        label=f"{n} sharp re-entrant {what}: stress unbounded there")
    return handle


def _label_corners(ax, profile: Profile, corners, ppu: float, legend=None) -> bool:
    """Label the corner markers C1, C2 ... when the labels fit; True if they did.

    The labels follow the order of ``corners`` (that of the warning text)
    and sit just outside the material, on the bisector of the notch.  When
    labels would crowd (two corners closer than 22 points on the page) the
    markers stay unlabelled.  With labels, the legend entry (the last one
    of ``legend``) names them.
    """
    if not corners:
        return False
    xy = np.array([(c.x, c.y) for c in corners], dtype=float)
    n = len(corners)
    dist = np.hypot(xy[:, None, 0] - xy[None, :, 0], xy[:, None, 1] - xy[None, :, 1])
    np.fill_diagonal(dist, np.inf)
    if n > 1 and float(dist.min()) * ppu < 22.0:
        return False
    for i, c in enumerate(corners, start=1):
        out = _notch_direction(profile, c)
        # far enough along the bisector that the label's box (about 4.6 pt a
        # character by 9 pt) clears the marker and the edges
        text = f"C{i}"
        off = 6.0 + 2.3 * len(text) * abs(out[0]) + 4.5 * abs(out[1])
        ax.annotate(text, (c.x, c.y), xytext=(off * out[0], off * out[1]),
                    textcoords="offset points", ha="center", va="center", fontsize=7.5,
                    fontweight="bold", zorder=9,
                    bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none",
                          "alpha": 0.85})
    if legend is not None:
        names = "C1" if n == 1 else f"C1–C{n}"
        what = "corner" if n == 1 else "corners"
        legend.get_texts()[-1].set_text(f"{names}: sharp re-entrant {what}, "
                                        f"stress unbounded there")
    return True


def _notch_direction(profile: Profile, corner) -> np.ndarray:
    """Unit vector from a re-entrant corner into the notch (away from the material)."""
    loop = profile.loops[corner.loop]
    i = int(np.argmin(np.hypot(loop[:, 0] - corner.x, loop[:, 1] - corner.y)))
    d_in = loop[i] - loop[i - 1]
    d_out = loop[(i + 1) % len(loop)] - loop[i]
    right = [np.array([d[1], -d[0]]) / max(np.hypot(*d), 1e-300) for d in (d_in, d_out)]
    v = right[0] + right[1]
    norm = np.hypot(*v)
    return v / norm if norm > 1e-12 else right[0]


def _bottom_legend(ax, handles):
    """Legend under the figure (constrained layout), else inside the map; None without handles."""
    handles = [h for h in handles if h is not None]
    if not handles:
        return None
    fig = ax.figure
    engine = fig.get_layout_engine()
    if engine is not None and type(engine).__name__ == "ConstrainedLayoutEngine":
        return fig.legend(handles=handles, loc="outside lower center", frameon=False, fontsize=9)
    return ax.legend(handles=handles, loc="best", fontsize=8, framealpha=0.9)


# ------------------------------------------------------------------ pictures
def draw_section(profile: Profile, mesh=None, ax=None, corners=None):
    """Draw the outline, the holes and the given points (and the mesh).

    Meant for checking an input before solving: material is shaded, every
    input vertex is a dot, loops are labelled, sharp re-entrant corners are
    marked and labelled (C1, C2 ... in the order the solve warning lists
    them), and the title gives the area, the size and the number of holes.

    Parameters
    ----------
    profile : Profile
    mesh : Mesh, optional
        Drawn over the section when given.
    ax : matplotlib Axes, optional
    corners : sequence of soapfilm.corners.Corner, optional
        The corners to mark; by default found from the outline without
        solving (:func:`soapfilm.corners.reentrant_corners`, the same rule
        the solve warns by).  Pass ``()`` to mark none.

    Returns
    -------
    matplotlib.axes.Axes
    """
    from matplotlib.patches import PathPatch
    from matplotlib.path import Path as MplPath

    if corners is None:
        from .corners import reentrant_corners

        corners = reentrant_corners(profile)
    corners = tuple(corners)
    ax = _new_axes(ax, _fit_size(profile, colorbar=False, legend=1 if corners else 0))
    verts, codes = [], []
    for loop in profile.loops:
        verts.extend(loop.tolist() + [loop[0].tolist()])
        codes.extend([MplPath.MOVETO] + [MplPath.LINETO] * (len(loop) - 1) + [MplPath.CLOSEPOLY])
    ax.add_patch(PathPatch(MplPath(verts, codes), facecolor="#c9d6e3", edgecolor="none",
                           zorder=1))
    if mesh is not None:
        _mesh_overlay(ax, mesh.p, _corner_triangles(mesh), mesh.nelements)
    _outline(ax, profile)
    npts = sum(len(lp) for lp in profile.loops)
    if npts <= 400:
        for loop in profile.loops:
            ax.plot(loop[:, 0], loop[:, 1], "o", ms=2.2, color="#1f4e79", zorder=5)
    u = profile.units
    (x0, y0), (x1, y1) = profile.outer.min(axis=0), profile.outer.max(axis=0)
    nh = len(profile.holes)
    holes = f", {nh} hole{'s' if nh != 1 else ''}" if nh else ""
    lines = [
        _section_name(profile),
        f"area {profile.area:.5g} {u}², {x1 - x0:.4g} × {y1 - y0:.4g} {u}{holes}, {npts} points",
    ]
    if mesh is not None:
        lines.append(f"mesh: {mesh.nelements} triangles, {mesh.nnodes} nodes")
    from shapely.geometry import Polygon

    for k, hole in enumerate(profile.holes, start=1):
        c = Polygon(hole).representative_point()  # inside the hole even when not convex
        ax.annotate(f"hole {k}", (c.x, c.y), ha="center", va="center", fontsize=7,
                    color="#7a1f1f", zorder=6)
    _finish_axes(ax, profile, "\n".join(lines))
    legend = _bottom_legend(ax, [_corner_markers(ax, corners)])
    if corners:
        _label_corners(ax, profile, corners, _points_per_unit(ax), legend)
    return ax


def plot_shear(result, ax=None, torque: float | None = None, stress_unit: str = "MPa",
               show_mesh: bool = False, levels: int = 12):
    """Shear-stress magnitude map with shear-flow lines, the peak and the corners.

    Colours show ``|tau|`` (viridis) from zero to the reported peak
    (``result.max_shear_per_torque``): the top of the colour bar is that
    value.  Where the drawn field goes beyond it - next to sharp re-entrant
    corners, where the stress is unbounded and the peak is read a little
    away - it is drawn in :data:`OVER_COLOUR` and the colour bar ends in an
    arrow of that colour.  The drawn field is recovered from the element
    gradients and differs from the peak rule by the recovery's own error;
    the largest such excess away from the corners is taken as that error,
    and values within it of the peak are drawn at the top colour, not as
    beyond.

    White lines are contours of the Prandtl stress function, along which the
    shear flows, with equal shear flow between neighbours
    (:func:`shear_flow_levels`): as many as ``levels`` when they fit, fewer
    when the thinnest wall (:func:`wall_thickness`) is narrow on the page, so
    that they stay :data:`MIN_LINE_GAP_PT` apart across it; their width
    scales with that wall too.  The peak is a red dot with its value in the
    legend; sharp re-entrant corners are white diamonds, labelled C1, C2 ...
    in the order of the warning.

    Parameters
    ----------
    result : TorsionResult
    ax : matplotlib Axes, optional
    torque : float, optional
        Torque in N*m; values are then stresses in ``stress_unit``, otherwise
        per unit torque in 1/unit^3.
    stress_unit : str
        See :data:`soapfilm.stress_units.STRESS_UNITS`.
    show_mesh : bool
        Draw the element edges over the map.
    levels : int
        Largest number of stress-function contour lines.

    Returns
    -------
    matplotlib.axes.Axes
    """
    import matplotlib

    scale = shear_scale(result.units, torque, stress_unit)
    mesh, profile = result.mesh, result.profile
    corners = tuple(result.corners)
    ax = _new_axes(ax, _fit_size(profile, colorbar=True, legend=1 + bool(corners)))
    t = _corner_triangles(mesh)
    tri = _triangulation(mesh.p, t)
    tau = nodal_shear(result)
    mag = np.hypot(tau[0], tau[1]) * scale.factor
    peak = result.max_shear_per_torque * scale.factor
    drawn, beyond = _against_peak(mesh, t, mag, peak, _left_out_zones(profile, corners))
    cmap = matplotlib.colormaps["viridis"].with_extremes(over=OVER_COLOUR)
    pc = ax.tripcolor(tri, drawn, shading="gouraud", cmap=cmap, vmin=0.0, vmax=peak,
                      rasterized=True, zorder=1)
    if show_mesh:
        _mesh_overlay(ax, mesh.p, t, mesh.nelements)
    _outline(ax, profile)
    label = scale.label()
    if beyond:
        label += "\narrow: beyond the reported peak (corners)"
    _colorbar(ax, pc, label, horizontal=_is_wide(profile), extend="max" if beyond else "neither")
    dot = _mark_peak(ax, result, peak, scale)
    nm = _section_name(profile)
    what = "shear stress" if torque is not None else "shear stress per unit torque"
    _finish_axes(ax, profile, f"{nm}: {what}\n")
    legend = _bottom_legend(ax, [dot, _corner_markers(ax, corners)])
    ppu = _points_per_unit(ax)
    _label_corners(ax, profile, corners, ppu, legend)
    ftri, phi = _stress_function_triangulation(result)
    chords = wall_chords(profile)
    thick = wall_thickness(profile, chords)
    across, span, weight, ray = _wall_profiles(profile, ftri, phi, chords, corners)
    lv = shear_flow_levels(float(phi.max()), across, span, MIN_LINE_GAP_PT / ppu,
                           levels, weight, thin=ray <= 1.05 * thick, reach=span >= ray)
    lw = _line_width(thick * ppu)
    if len(lv):
        from matplotlib.patheffects import withStroke

        cs = ax.tricontour(ftri, phi, levels=lv, colors="white", linewidths=lw, zorder=2)
        # a thin dark edge keeps white lines visible on the bright end of the scale
        cs.set_path_effects([withStroke(linewidth=lw + 0.7, foreground=(0.0, 0.0, 0.0, 0.45))])
        how = "white lines: stress-function contours (shear flows along them)"
    else:
        how = f"no shear-flow lines: the {thick:.2g} {result.units} wall is too thin at this size"
    ax.set_title(f"{nm}: {what}\n{how}", fontsize=10)
    return ax


def _left_out_zones(profile: Profile, corners) -> list[tuple[float, float, float]]:
    """The zones the peak rule leaves out: centre x, y and radius.

    Round each sharp corner (:func:`soapfilm.solve.corner_zone_radius`) and
    each weak re-entrant corner of a polygon (:func:`soapfilm.solve.weak_corner_zones`).
    """
    from .corners import traced_runs
    from .solve import corner_zone_radius, weak_corner_zones

    zone = corner_zone_radius(profile)
    wxy, wrad, _ = weak_corner_zones(tuple(traced_runs(profile)), zone, tuple(corners))
    return [(c.x, c.y, zone) for c in corners] + [
        (float(x), float(y), float(r)) for (x, y), r in zip(wxy, wrad, strict=True)]


def _against_peak(mesh, t, mag, peak: float, zones):
    """The field to draw against a colour scale that ends at the reported peak.

    Away from the corners (outside the ``zones`` the peak rule leaves out,
    :func:`_left_out_zones`) the drawn field should not exceed the peak; by
    how much it does is the recovery's own error, and values within it are
    drawn at the peak.  Returns the field and whether anything is left
    beyond the peak.
    """
    used = np.unique(t)
    x, y = mesh.p[0, used], mesh.p[1, used]
    away = np.ones(len(used), dtype=bool)
    for cx, cy, r in zones:
        away &= np.hypot(x - cx, y - cy) > r
    vals = mag[used]
    slack = float(vals[away].max()) if away.any() else peak
    slack = max(slack, peak)
    drawn = np.where((mag > peak) & (mag <= slack), peak, mag)
    return drawn, bool(np.any(drawn[used] > peak))


def _mark_peak(ax, result, peak: float, scale: ShearScale):
    """Red dot at the peak; returns its legend handle (value and place).

    A legend (rather than a label beside the dot) never covers the map or
    the axis labels, whatever the shape of the section.
    """
    px, py = result.peak_location
    u = result.units
    tiny = 1e-9 * result.profile.size  # rounding noise of a coordinate: written as 0
    lx, ly = (0.0 if abs(v) < tiny else v for v in (px, py))
    (dot,) = ax.plot([px], [py], ls="none", marker="o", ms=8, mfc="#d62728", mec="white",
                     mew=1.4, zorder=7,
                     label=f"peak {_fmt(peak)} {scale.unit} at ({lx:.4g}, {ly:.4g}) {u}")
    return dot


def plot_warping(result, ax=None, show_mesh: bool = False):
    """Warping function map: axial displacement per unit twist rate.

    The out-of-plane displacement is ``w = theta * omega`` with ``theta`` the
    twist per length; ``omega`` here is taken about the centroid with zero
    mean (about the shear centre it differs by a plane, which only matters
    for sections without two axes of symmetry).  Diverging colours centred
    on zero; black and white lines are contours.

    Returns
    -------
    matplotlib.axes.Axes
    """
    from matplotlib.colors import TwoSlopeNorm

    ax = _new_axes(ax, _fit_size(result.profile, colorbar=True))
    mesh, profile = result.mesh, result.profile
    t = _corner_triangles(mesh)
    tri = _triangulation(mesh.p, t)
    w = np.asarray(result.fields.omega, dtype=float)[: mesh.nnodes]
    used = np.unique(t)
    lim = float(np.max(np.abs(w[used]))) or 1.0
    norm = TwoSlopeNorm(vcenter=0.0, vmin=-lim, vmax=lim)
    pc = ax.tripcolor(tri, w, shading="gouraud", cmap="RdBu_r", norm=norm, rasterized=True,
                      zorder=1)
    if np.ptp(w[used]) > 1e-12 * lim:
        ax.tricontour(tri, w, levels=np.linspace(-lim, lim, 13)[1:-1], colors="k",
                      linewidths=0.4, alpha=0.5, zorder=2)
    if show_mesh:
        _mesh_overlay(ax, mesh.p, t, mesh.nelements)
    _outline(ax, profile)
    u = result.units
    _colorbar(ax, pc, f"warping ω = w / θ [{u}²]  (θ: twist per {u}, rad)",
              horizontal=_is_wide(profile))
    _finish_axes(ax, profile, f"{_section_name(profile)}: warping (axial displacement "
                              f"per unit twist rate)\nred: out of the page, blue: into it")
    return ax


def plot_sectorial(result, ax=None, show_mesh: bool = False):
    """Normalised warping ``omega_n`` over the section, with the shear centre.

    ``omega_n`` (:func:`soapfilm.fem.sectorial.normalised_warping`) is the
    warping about the shear centre with zero mean, orthogonal to x and y,
    signed as thin-walled theory's principal sectorial coordinate (the axial
    displacement is ``-omega_n`` times the twist rate, the warping normal
    stress ``B omega_n / Gamma``).  Diverging colours centred on zero, thin
    contours; the shear centre is a black cross in a ring, the centroid a
    small ring, the largest ``|omega_n|`` a square; values in the legend.
    Quadratic fields are drawn on their elements split at the mid-side nodes.

    Returns
    -------
    matplotlib.axes.Axes
    """
    from matplotlib.colors import TwoSlopeNorm

    from .fem.sectorial import normalised_warping, warping_properties

    mesh, profile, f = result.mesh, result.profile, result.fields
    wp = result.warping if result.warping is not None else warping_properties(mesh, f)
    ax = _new_axes(ax, _fit_size(profile, colorbar=True, legend=3))
    wn = normalised_warping(mesh, f)
    t6 = getattr(f, "t6", None)
    if t6 is not None and np.shape(t6)[0] == 6 and len(wn) == np.shape(f.p)[1]:
        t = np.asarray(t6)[_P2_SPLIT].transpose(1, 0, 2).reshape(3, -1)
        xy = np.asarray(f.p) + np.asarray(f.origin, dtype=float).reshape(2, 1)
    else:
        t = _corner_triangles(mesh)
        xy, wn = mesh.p, wn[: mesh.nnodes]
    tri = _triangulation(xy, t)
    lim = float(np.max(np.abs(wn[np.unique(t)]))) or 1.0
    norm = TwoSlopeNorm(vcenter=0.0, vmin=-lim, vmax=lim)
    pc = ax.tripcolor(tri, wn, shading="gouraud", cmap="PuOr_r", norm=norm, rasterized=True,
                      zorder=1)
    if np.ptp(wn) > 1e-9 * lim:
        ax.tricontour(tri, wn, levels=np.linspace(-lim, lim, 13)[1:-1], colors="k",
                      linewidths=0.35, alpha=0.45, zorder=2)
    if show_mesh:
        _mesh_overlay(ax, mesh.p, _corner_triangles(mesh), mesh.nelements)
    _outline(ax, profile)
    u = result.units
    _colorbar(ax, pc, f"normalised warping ω_n [{u}²]", horizontal=_is_wide(profile))
    tiny = 1e-9 * profile.size

    def at(v):
        return ", ".join(f"{0.0 if abs(c) < tiny else c:.4g}" for c in v)

    sx, sy = wp.shear_centre
    cx, cy = result.centroid
    mx, my = wp.max_warping_location
    h_sc = ax.plot([sx], [sy], ls="none", marker="o", ms=11, mfc="none", mec="k", mew=1.3,
                   zorder=8)[0]
    ax.plot([sx], [sy], ls="none", marker="+", ms=11, mec="k", mew=1.3, zorder=8)
    h_sc.set_label(f"shear centre ({at(wp.shear_centre)}) {u}")
    h_c = ax.plot([cx], [cy], ls="none", marker="o", ms=5, mfc="white", mec="k", mew=1.0,
                  zorder=8, label=f"centroid ({at(result.centroid)}) {u}")[0]
    h_m = ax.plot([mx], [my], ls="none", marker="s", ms=7, mfc="none", mec="#d62728", mew=1.5,
                  zorder=8, label=f"largest |ω_n| {_fmt(wp.max_warping)} {u}² at "
                                  f"({at(wp.max_warping_location)}) {u}")[0]
    _finish_axes(ax, profile, f"{_section_name(profile)}: normalised warping ω_n about the "
                              f"shear centre\nΓ = ∫ω_n² dA = {_fmt(wp.warping_constant)} {u}⁶")
    # the shear centre may lie outside the section (channels, angles turned): keep it in view
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    pad = 0.05 * max(x1 - x0, y1 - y0)
    ax.set_xlim(min(x0, sx - pad), max(x1, sx + pad))
    ax.set_ylim(min(y0, sy - pad), max(y1, sy + pad))
    _bottom_legend(ax, [h_sc, h_c, h_m])
    return ax


def plot_stress_surface(result, ax=None):
    """3D view of the Prandtl stress function, the 'soap film' over the section.

    Its slope is the shear stress and twice the volume under it (plus the
    hole terms) is the torsion constant.

    Returns
    -------
    mpl_toolkits.mplot3d.axes3d.Axes3D
    """
    ax = _new_axes(ax, size=_SIZE_3D, projection="3d")
    mesh, profile = result.mesh, result.profile
    t = _corner_triangles(mesh)
    phi = np.asarray(result.fields.phi, dtype=float)[: mesh.nnodes]
    tri = _triangulation(mesh.p, t)
    ax.plot_trisurf(tri, phi, cmap="viridis", linewidth=0.0, antialiased=False, rasterized=True)
    for loop in profile.loops:
        xy = np.vstack([loop, loop[:1]])
        ax.plot(xy[:, 0], xy[:, 1], 0.0, color="k", lw=0.8)
    # holes: the flat lid at the hole's constant value (Prandtl's membrane analogy)
    from mpl_toolkits.mplot3d.art3d import Poly3DCollection

    hole_values = np.asarray(getattr(result.fields, "hole_values", ()), dtype=float)
    for hole, c in zip(profile.holes, hole_values, strict=False):
        lid = np.c_[hole, np.full(len(hole), c)]
        ax.add_collection3d(Poly3DCollection([lid], facecolor="0.85", edgecolor="k",
                                             linewidths=0.6, alpha=0.7))
    u = result.units
    ax.set_xlabel(f"x [{u}]")
    ax.set_ylabel(f"y [{u}]")
    ax.set_zlabel(f"φ [{u}²]", labelpad=6)
    span = np.ptp(mesh.p[:, np.unique(t)], axis=1)
    top = float(phi.max()) or 1.0
    ax.set_box_aspect((span[0], span[1], 0.45 * max(span)), zoom=0.95)
    ax.set_zlim(0.0, 1.05 * top)
    ax.view_init(elev=28, azim=-60)
    ax.set_title(f"{_section_name(profile)}: stress function φ per unit Gθ\n"
                 "(slope = shear stress, 2 × volume = J)", fontsize=10)
    return ax


# -------------------------------------------------------------------- output
def figure_format(path) -> str:
    """Matplotlib format for a file name, or raise InputError."""
    from .errors import InputError

    suffix = Path(path).suffix.lower()
    if suffix not in FIGURE_FORMATS:
        raise InputError(f"cannot tell the picture format from {suffix or '(no suffix)'!r}",
                         where=str(path), fix="end the file name in .png, .svg or .pdf")
    return FIGURE_FORMATS[suffix]


def figure_bytes(fig_or_ax, fmt: str = "png", dpi: int = _DPI) -> bytes:
    """Render a figure (or the figure of an Axes) to bytes."""
    import matplotlib

    fig = getattr(fig_or_ax, "figure", fig_or_ax)
    buf = io.BytesIO()
    # no dates, fixed SVG ids: the same result gives the same bytes (reproducible files)
    meta = {"png": {"Software": "soapfilm"}, "svg": {"Date": None},
            "pdf": {"Creator": "soapfilm", "CreationDate": None}}
    with matplotlib.rc_context({"svg.hashsalt": "soapfilm"}):
        fig.savefig(buf, format=fmt, dpi=dpi, metadata=meta.get(fmt), facecolor="white")
    return buf.getvalue()


def save_figure(fig_or_ax, path) -> Path:
    """Write a figure to ``path`` (format by suffix) atomically."""
    from .cli._io import write_atomic

    path = Path(path)
    write_atomic(path, figure_bytes(fig_or_ax, figure_format(path)))
    log.info("wrote %s", path)
    return path
