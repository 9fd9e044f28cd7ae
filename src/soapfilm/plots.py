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
    "plot_stress_surface",
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


# ------------------------------------------------------------------- helpers
#: width/height ratio above which the colour bar goes under the map
_WIDE = 2.2


def _is_wide(profile: Profile) -> bool:
    lo, hi = profile.outer.min(axis=0), profile.outer.max(axis=0)
    return float(hi[0] - lo[0]) > _WIDE * float(hi[1] - lo[1])


def _fit_size(profile: Profile, colorbar: bool, legend: bool = False) -> tuple[float, float]:
    """Figure size whose plot area follows the section's height/width ratio.

    The width is fixed; the height is the plot width times the section's
    aspect ratio plus room for the title, the axis labels, a colour bar under
    wide sections and the peak legend, so that the map fills the frame.
    """
    lo, hi = profile.outer.min(axis=0), profile.outer.max(axis=0)
    w, h = float(hi[0] - lo[0]), float(hi[1] - lo[1])
    aspect = (h + 0.1 * max(w, h)) / (w + 0.1 * max(w, h))
    wide = colorbar and _is_wide(profile)
    plot_w = _SIZE_2D[0] - (0.9 if wide or not colorbar else 1.75)
    height = plot_w * aspect + 1.35 + (0.75 if wide else 0.0) + (0.3 if legend else 0.0)
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


def _colorbar(ax, mappable, label: str, horizontal: bool = False):
    from matplotlib.ticker import ScalarFormatter

    if horizontal:  # under a wide section: as wide as the map
        cb = ax.figure.colorbar(mappable, ax=ax, location="bottom", aspect=45, pad=0.04)
    else:  # in an inset of the map's own box, so it is exactly as tall as the map
        cax = ax.inset_axes([1.035, 0.0, 0.045, 1.0], label="colorbar")
        cb = ax.figure.colorbar(mappable, cax=cax)
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


# ------------------------------------------------------------------ pictures
def draw_section(profile: Profile, mesh=None, ax=None):
    """Draw the outline, the holes and the given points (and the mesh).

    Meant for checking an input before solving: material is shaded, every
    input vertex is a dot, loops are labelled, and the title gives the area,
    the size and the number of holes.

    Parameters
    ----------
    profile : Profile
    mesh : Mesh, optional
        Drawn over the section when given.
    ax : matplotlib Axes, optional

    Returns
    -------
    matplotlib.axes.Axes
    """
    from matplotlib.patches import PathPatch
    from matplotlib.path import Path as MplPath

    ax = _new_axes(ax, _fit_size(profile, colorbar=False))
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
    return ax


def plot_shear(result, ax=None, torque: float | None = None, stress_unit: str = "MPa",
               show_mesh: bool = False, levels: int = 12):
    """Shear-stress magnitude map with shear-flow lines and the peak.

    Colours show ``|tau|`` (viridis, from zero); white lines are contours of
    the Prandtl stress function, along which the shear flows; the peak from
    the result is marked and labelled with its value.

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
        Number of stress-function contour lines.

    Returns
    -------
    matplotlib.axes.Axes
    """
    scale = shear_scale(result.units, torque, stress_unit)
    ax = _new_axes(ax, _fit_size(result.profile, colorbar=True, legend=True))
    mesh, profile = result.mesh, result.profile
    t = _corner_triangles(mesh)
    tri = _triangulation(mesh.p, t)
    tau = nodal_shear(result)
    mag = np.hypot(tau[0], tau[1]) * scale.factor
    peak = result.max_shear_per_torque * scale.factor
    top = max(float(mag.max()), peak)
    pc = ax.tripcolor(tri, mag, shading="gouraud", cmap="viridis", vmin=0.0, vmax=top,
                      rasterized=True, zorder=1)
    phi = np.asarray(result.fields.phi)[: mesh.nnodes]  # corner nodes come first (P2)
    if _is_wide(profile) or _is_wide(profile.transformed([[0, 1], [1, 0]])):
        levels = min(levels, 6)  # thin strips: fewer lines, or they hide the colours
    if np.ptp(phi) > 0 and levels > 0:
        ax.tricontour(tri, phi, levels=np.linspace(phi.min(), phi.max(), levels + 2)[1:-1],
                      colors="white", linewidths=0.6, alpha=0.85, zorder=2)
    if show_mesh:
        _mesh_overlay(ax, mesh.p, t, mesh.nelements)
    _outline(ax, profile)
    _colorbar(ax, pc, scale.label(), horizontal=_is_wide(profile))
    _mark_peak(ax, result, peak, scale)
    nm = _section_name(profile)
    what = "shear stress" if torque is not None else "shear stress per unit torque"
    _finish_axes(ax, profile, f"{nm}: {what}\nwhite lines: stress-function contours "
                              f"(shear flows along them)")
    return ax


def _mark_peak(ax, result, peak: float, scale: ShearScale):
    """Red dot at the peak; its value and place in a legend under the figure.

    A legend (rather than a label beside the dot) never covers the map or
    the axis labels, whatever the shape of the section.
    """
    px, py = result.peak_location
    u = result.units
    (dot,) = ax.plot([px], [py], ls="none", marker="o", ms=8, mfc="#d62728", mec="white",
                     mew=1.4, zorder=7,
                     label=f"peak {_fmt(peak)} {scale.unit} at ({px:.4g}, {py:.4g}) {u}")
    fig = ax.figure
    engine = fig.get_layout_engine()
    if engine is not None and type(engine).__name__ == "ConstrainedLayoutEngine":
        fig.legend(handles=[dot], loc="outside lower center", frameon=False, fontsize=9)
    else:
        ax.legend(handles=[dot], loc="best", fontsize=8, framealpha=0.9)


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
