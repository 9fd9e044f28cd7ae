"""Figure of a member in non-uniform torsion: twist, torque split and bimoment along it."""

from __future__ import annotations

import numpy as np

from ..units import UnitSystem
from .member import MemberResult

__all__ = ["plot_member", "member_figure_bytes", "warped_sections", "sectorial_figure",
           "sectorial_bytes"]


def _support_mark(st) -> str:
    """Short label of a station's conditions: T twist held, W warping held."""
    return ("T" if st.twist_held else "") + ("W" if st.warping_held else "")


def plot_member(result: MemberResult, system: UnitSystem, axes=None):
    """Draw twist (top), Saint-Venant and warping torque (middle) and bimoment (bottom).

    Parameters
    ----------
    result : MemberResult
    system : UnitSystem
        Display units.
    axes : three matplotlib Axes, optional
        Drawn into if given, else a new figure is made.

    Returns
    -------
    tuple of the three Axes
    """
    import matplotlib.pyplot as plt

    if axes is None:
        _, axes = plt.subplots(3, 1, sharex=True, figsize=(9, 7.6),
                               gridspec_kw={"hspace": 0.1})
    ax_p, ax_t, ax_b = axes
    sol = result.solution
    x = system.value(sol.x, "position")
    pu, tu, au = system.unit("position"), system.unit("torque"), system.unit("angle")
    bu = system.unit("bimoment")

    # one line per piece, so that a jump at a station is drawn as one
    def lines(ax, y, **kw):
        label = kw.pop("label", None)
        for k in np.unique(sol.piece_index):
            m = sol.piece_index == k
            ax.plot(x[m], y[m], label=label if k == 0 else None, **kw)

    lines(ax_p, system.value(sol.twist, "angle"), color="#55a868", lw=1.8)
    ax_p.set_ylabel(f"twist phi [{au}]")
    tsv = system.value(sol.saint_venant_torque, "torque")
    tw = system.value(sol.warping_torque, "torque")
    lines(ax_t, tsv + tw, color="0.35", lw=1.0, ls="--", label="total")
    lines(ax_t, tsv, color="#4c72b0", lw=1.8, label="Saint-Venant G J phi'")
    lines(ax_t, tw, color="#dd8452", lw=1.8, label="warping -E Gamma phi'''")
    ax_t.set_ylabel(f"torque [{tu}]")
    ax_t.legend(loc="best", fontsize=8, frameon=False)
    bim = system.value(sol.bimoment, "bimoment")
    lines(ax_b, bim, color="#8172b3", lw=1.8)
    ax_b.fill_between(x, bim, 0.0, color="#8172b3", alpha=0.15, lw=0)
    ax_b.set_ylabel(f"bimoment B [{bu}]")
    ax_b.set_xlabel(f"position along the member x [{pu}]")
    if not any(p.warping_counted for p in result.segments):
        ax_b.text(0.5, 0.75, "no segment counts warping: Saint-Venant torsion",
                  transform=ax_b.transAxes, ha="center", va="center", color="0.4",
                  bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.85})

    xb = system.value(np.array([0.0, *np.cumsum([s.length for s in result.model.segments])]),
                      "position")
    for ax in axes:
        ax.axhline(0.0, color="0.3", lw=0.8)
        ax.grid(True, color="0.92")
        for v in xb:
            ax.axvline(v, color="0.75", lw=0.7, ls=":")
    gov = result.governing
    for ax in axes if len(result.segments) > 1 else ():
        ax.axvspan(system.value(gov.x_start, "position"), system.value(gov.x_end, "position"),
                   color="#dd8452", alpha=0.08, lw=0)
    # stations: name and conditions above the top axes
    for st in result.stations:
        xs = system.value(st.x, "position")
        for ax in axes:
            ax.axvline(xs, color="#c44e52" if st.twist_held else "0.55", lw=0.9, alpha=0.6)
        mark = _support_mark(st)
        ax_p.annotate(st.name + (f" [{mark}]" if mark else ""), (xs, 1.0),
                      xycoords=("data", "axes fraction"), xytext=(0, 3),
                      textcoords="offset points", ha="center", va="bottom", fontsize=8,
                      rotation=0)
    ax_b.text(1.0, -0.32, "[T] twist held, [W] warping held"
              + ("; shaded: governing segment" if len(result.segments) > 1 else ""),
              transform=ax_b.transAxes, ha="right", va="top", fontsize=7.5, color="0.4")
    ax_p.set_title(result.model.name, pad=18, fontsize=11)
    return tuple(axes)


def member_figure_bytes(result: MemberResult, system: UnitSystem, fmt: str = "png",
                        dpi: int | None = None) -> bytes:
    """The figure of :func:`plot_member` rendered to bytes."""
    import matplotlib.pyplot as plt

    from ..plots import figure_bytes

    axes = plot_member(result, system)
    fig = axes[0].figure
    try:
        return figure_bytes(fig, fmt, dpi) if dpi else figure_bytes(fig, fmt)
    finally:
        plt.close(fig)


def warped_sections(result: MemberResult, results: dict) -> list[tuple[object, tuple[str, ...]]]:
    """The distinct sections whose warping the member counts, with their segments' names.

    ``results`` maps a :class:`~soapfilm.members.shaft.Section` to the
    finite-element result it came from
    (:attr:`soapfilm.members.shaftfile.SectionSource.results`); a section
    without one (a closed form) has no field to draw and is left out.
    Returns (TorsionResult, segment names) pairs in the member's order.
    """
    out: dict = {}
    for p in result.segments:
        sec = p.segment.section
        if p.warping_counted and sec in results:
            out.setdefault(sec, []).append(p.segment.name)
    return [(results[sec], tuple(names)) for sec, names in out.items()]


def _segments_words(names) -> str:
    quoted = ", ".join(repr(n) for n in names)
    return f"segment{'s' if len(names) > 1 else ''} {quoted}"


def sectorial_figure(pairs):
    """One panel of the normalised warping omega_n per section (stacked), for a member.

    Each panel is :func:`soapfilm.plots.plot_sectorial` of the section (its
    own length unit, the shear centre and the largest ``|omega_n|`` marked),
    titled with the segments that use it.  ``pairs`` as returned by
    :func:`warped_sections`, not empty.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from ..plots import _DPI, _fit_size, plot_sectorial

    sizes = [_fit_size(r.profile, colorbar=True, legend=3) for r, _ in pairs]
    fig = Figure(figsize=(max(w for w, _ in sizes), sum(h for _, h in sizes)), dpi=_DPI,
                 layout="constrained")
    FigureCanvasAgg(fig)
    subs = [fig] if len(pairs) == 1 else fig.subfigures(
        len(pairs), 1, height_ratios=[h for _, h in sizes])
    for sub, (res, names) in zip(subs, pairs, strict=True):
        ax = plot_sectorial(res, ax=sub.add_subplot())
        ax.set_title(f"{_segments_words(names)}\n{ax.get_title()}", fontsize=10)
    return fig


def sectorial_bytes(pairs, fmt: str = "png", dpi: int | None = None) -> bytes:
    """The figure of :func:`sectorial_figure` rendered to bytes."""
    from ..plots import figure_bytes

    fig = sectorial_figure(pairs)
    return figure_bytes(fig, fmt, dpi) if dpi else figure_bytes(fig, fmt)
