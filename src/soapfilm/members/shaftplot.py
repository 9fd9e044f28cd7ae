"""Figure of a stepped shaft: internal torque diagram and twist along the axis."""

from __future__ import annotations

import numpy as np

from ..report.checks import held_label
from ..units import UnitSystem
from .shaft import ShaftResult

__all__ = ["plot_shaft", "shaft_figure_bytes"]


def plot_shaft(result: ShaftResult, system: UnitSystem, axes=None):
    """Draw the internal-torque diagram (top) and the twist angle (bottom).

    Parameters
    ----------
    result : ShaftResult
    system : UnitSystem
        Display units for positions, torques and angles.
    axes : pair of matplotlib Axes, optional
        Drawn into if given, else a new figure is made.

    Returns
    -------
    (ax_torque, ax_twist)
    """
    import matplotlib.pyplot as plt

    if axes is None:
        fig, (ax_s, *axes) = plt.subplots(
            3, 1, sharex=True, figsize=(9, 7.2),
            gridspec_kw={"height_ratios": [0.42, 1, 1], "hspace": 0.08})
        _draw_outline(ax_s, result, system)
    ax_t, ax_p = axes
    fig = ax_t.figure
    x = system.value(result.x, "position")
    tq = system.value(result.piece_torque, "torque")
    tw = system.value(result.twist, "angle")
    lu, tu, au = system.unit("position"), system.unit("torque"), system.unit("angle")

    # torque diagram: steps between nodes
    xs = np.repeat(x, 2)[1:-1]
    ts = np.repeat(tq, 2)
    ax_t.fill_between(xs, ts, 0.0, step=None, color="#4c72b0", alpha=0.25, lw=0)
    ax_t.plot(xs, ts, color="#4c72b0", lw=1.8)
    ax_t.axhline(0.0, color="0.3", lw=0.8)
    t_lo, t_hi = min(0.0, float(tq.min())), max(0.0, float(tq.max()))
    t_pad = 0.12 * max(t_hi - t_lo, 1e-30)
    ax_t.set_ylim(t_lo - t_pad, t_hi + t_pad)
    ax_t.set_ylabel(f"internal torque [{tu}]")
    ax_t.grid(True, color="0.9")

    # segment boundaries and names, the segment of largest stress (or own twist)
    # utilisation shaded
    gov = result.governing.index
    b = system.value(result.model.boundaries, "position")
    for i in range(len(result.segments)):
        if i == gov:
            for ax in axes:
                ax.axvspan(b[i], b[i + 1], color="#dd8452", alpha=0.12, lw=0)
        for ax in axes:
            ax.axvline(b[i], color="0.75", lw=0.7, ls=":")
    for ax in axes:
        ax.axvline(b[-1], color="0.75", lw=0.7, ls=":")

    # twist along the axis: straight between nodes
    ax_p.plot(x, tw, color="#55a868", lw=1.8, marker="o", ms=3)
    ax_p.axhline(0.0, color="0.3", lw=0.8)
    ax_p.set_ylabel(f"twist angle [{au}]")
    ax_p.set_xlabel(f"position along the axis x [{lu}]")
    ax_p.grid(True, color="0.9")

    span = x[-1] - x[0]

    def placement(xv):
        """Text alignment and offset so that labels near the ends stay inside."""
        if xv - x[0] < 0.08 * span:
            return "left", 4
        if x[-1] - xv < 0.08 * span:
            return "right", -4
        return "center", 0

    # stations: loads and supports
    for ld in result.model.loads:
        xl = system.value(ld.position, "position")
        ha, dx = placement(xl)
        ax_p.annotate(f"{ld.name}\n{system.fmt(ld.torque, 'torque', 3)}", xy=(xl, 0.0),
                      xycoords=("data", "axes fraction"), xytext=(dx, 4),
                      textcoords="offset points", ha=ha, va="bottom", fontsize=7,
                      color="#8c2d04")
        for ax in axes:
            ax.axvline(xl, color="#8c2d04", lw=0.9, alpha=0.6)
    for sp, r in result.reactions:
        xs_ = system.value(sp.position, "position")
        ha, dx = placement(xs_)
        ax_p.annotate(f"{held_label(sp.name)}\nreacts {system.fmt(r, 'torque', 3)}", xy=(xs_, 1.0),
                      xycoords=("data", "axes fraction"), xytext=(dx, -4),
                      textcoords="offset points", ha=ha, va="top", fontsize=7,
                      color="0.15")
        for ax in axes:
            ax.axvline(xs_, color="0.15", lw=1.6)
    lo, hi = ax_p.get_ylim()
    pad = 0.3 * (hi - lo)
    ax_p.set_ylim(lo - pad, hi + pad)
    ax_p.set_xlim(x[0] - 0.02 * (x[-1] - x[0]), x[-1] + 0.02 * (x[-1] - x[0]))
    import textwrap

    key = "   ".join(f"{s.index + 1}: {s.segment.name}" for s in result.segments)
    ax_p.text(0.0, -0.2, "\n".join(textwrap.wrap("Segments  " + key, 130)),
              transform=ax_p.transAxes, ha="left", va="top", fontsize=7.5, color="0.25")
    g = result.governing
    tg = result.twist_governing
    if result.governs == "twist" and tg is not None:
        where = f"twist from {tg.start} to {tg.end}"
        for ax in axes:  # the governing stretch, hatched
            ax.axvspan(system.value(tg.x_start, "position"), system.value(tg.x_end, "position"),
                       facecolor="none", edgecolor="#b42318", hatch="//", alpha=0.35, lw=0)
    elif result.governs == "twist":
        where = f"twist per length in {g.segment.name}"
    else:
        where = f"stress in {g.segment.name}"
    verdict = "PASS" if result.passed else "FAIL"
    fig.suptitle(
        f"{result.model.name}: {verdict}, utilisation {result.utilisation:.2f} ({where}); "
        f"end-to-end twist {system.fmt(result.end_to_end_twist, 'angle')}", fontsize=10)
    return ax_t, ax_p


def shaft_figure_bytes(result: ShaftResult, system: UnitSystem, fmt: str = "png",
                       dpi: int = 150) -> bytes:
    """The figure of :func:`plot_shaft` as PNG, SVG or PDF bytes (closed after)."""
    import io

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    ax_t, _ = plot_shaft(result, system)
    fig = ax_t.figure
    buf = io.BytesIO()
    # no dates, fixed SVG ids: the same result gives the same bytes
    meta = {"png": {"Software": "soapfilm"}, "svg": {"Date": None},
            "pdf": {"Creator": "soapfilm", "CreationDate": None}}
    try:
        with matplotlib.rc_context({"svg.hashsalt": "soapfilm"}):
            fig.savefig(buf, format=fmt, dpi=dpi, bbox_inches="tight", metadata=meta.get(fmt),
                        facecolor="white")
    finally:
        plt.close(fig)
    return buf.getvalue()


def _draw_outline(ax, result: ShaftResult, system: UnitSystem) -> None:
    """Side view of the stepped shaft: each segment as a bar of its diameter.

    The height is the outside diameter of a round section, the nominal
    diameter of a keyed or splined one, else the equivalent diameter of the
    same stiffness d_J; numbers name the segments.
    """
    from matplotlib.patches import Rectangle

    b = system.value(result.model.boundaries, "position")
    gov = result.governing.index
    heights = []
    for s in result.segments:
        sec = s.segment.section
        d = sec.outside_diameter or sec.nominal_diameter or sec.equivalent_diameter_stiffness
        heights.append(system.value(d, "length"))
    hmax = max(heights)
    for s, h in zip(result.segments, heights, strict=True):
        i = s.index
        face = "#dd8452" if i == gov else ("#c6cfe0" if s.segment.section.method == "closed form"
                                            else "#a9b8d4")
        ax.add_patch(Rectangle((b[i], -h / 2), b[i + 1] - b[i], h, facecolor=face,
                               edgecolor="0.3", lw=0.8))
        ax.text(0.5 * (b[i] + b[i + 1]), 0.0, str(i + 1), ha="center", va="center", fontsize=8)
    for ld in result.model.loads:
        ax.axvline(system.value(ld.position, "position"), color="#8c2d04", lw=0.9, alpha=0.6)
    for sp, _ in result.reactions:
        ax.axvline(system.value(sp.position, "position"), color="0.15", lw=1.6)
    ax.axhline(0.0, color="0.5", lw=0.6, ls="-.")
    ax.set_ylim(-0.65 * hmax, 0.65 * hmax)
    ax.set_yticks([])
    ax.set_ylabel("shaft", fontsize=9)
    for side in ("top", "right", "left", "bottom"):
        ax.spines[side].set_visible(False)
    ax.tick_params(bottom=False)
