"""Shoreline position against age, one small panel per transect.

Each panel shows the tracked boundary's position on one transect (km from its landward
end, landward up, so a transgression rises) against slice age (youngest on the right,
time running left to right), with the P10-P90 range of the position as a band. Each
step between consecutive slices is coloured by its sense (transgression blue,
regression orange, stillstand grey; the GIS styles' colours; a key names them), and the
panel is labelled with one rate for the whole series (m/kyr, positive landward): the
least-squares rate where the shoreline moved one way throughout, otherwise the net rate
from the oldest to the youngest slice, labelled "net"
(:func:`paleomap.migration.trend_rate`): a least-squares line through a series that
goes back and forth describes none of it. Panels share their axes so transects compare
at a glance. The per-pair rates with their P10-P90 ranges are in :func:`position_panel`
(one transect, labelled steps, placed so that no label covers another or a point;
steps without room for a label are counted in the title) and in the report's tables.

Examples
--------
>>> axes = shoreline_positions(result)       # doctest: +SKIP
>>> ax = position_panel(result, "T05")       # doctest: +SKIP
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from ..palette import EDGE_COLOR, MUTED_COLOR, SHORELINE_COLOR
from .canvas import figure_style, new_figure
from .labels import fit_text, short_name

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..results import BuildResult

__all__ = [
    "COLUMNS",
    "position_panel",
    "rate_text",
    "series_rate",
    "series_rate_text",
    "shoreline_positions",
]

COLUMNS = 4
"""Panels per row."""


def _num(x: float) -> str:
    # three significant digits, never in exponent form, with a true minus sign
    text = f"{x:.0f}" if abs(x) >= 100 else f"{float(f'{x:.3g}'):g}"
    return text.replace("-", "\u2212")


def rate_text(
    rate: float,
    low: float | None = None,
    high: float | None = None,
    *,
    unit: bool = True,
    sep: str = " ",
) -> str:
    """A rate in m/kyr with its P10-P90 range, about three significant digits.

    >>> rate_text(-26.18), rate_text(12.0, 3.456, 2010.4)
    ('\u221226.2 m/kyr', '12 m/kyr (3.46 to 2010)')
    """
    if rate is None or not np.isfinite(rate):
        return "no rate"
    out = _num(rate) + (" m/kyr" if unit else "")
    if low is not None and high is not None and np.isfinite(low) and np.isfinite(high):
        out += f"{sep}({_num(low)} to {_num(high)})"
    return out


def series_rate(result: BuildResult, transect: str) -> tuple[float, str]:
    """The one rate of a transect's whole series and its method (``"least-squares"`` or
    ``"net"``; :func:`paleomap.migration.trend_rate`)."""
    from ..migration import trend_rate

    pos = result.positions
    p = pos[pos["transect"] == transect]
    kyr = result.project.kyr_per_age_unit
    return trend_rate(p["age"].to_numpy(float) * kyr, p["position_m"].to_numpy(float))


def series_rate_text(rate: float, method: str, *, short: bool = False) -> str:
    """``"least-squares 12 m/kyr"`` or ``"net −5.89 m/kyr"`` (``short``: ``LSQ``).

    >>> series_rate_text(-5.891, "net"), series_rate_text(12.0, "least-squares", short=True)
    ('net −5.89 m/kyr', 'LSQ 12 m/kyr')
    """
    if not method or rate is None or not np.isfinite(rate):
        return "no rate"
    name = "LSQ" if (short and method == "least-squares") else method
    return f"{name} {rate_text(rate)}"


def _key(fig_or_ax, *, anchor, loc, ncol, transform=None):
    """The key of the position figures: band, senses and slice positions."""
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    from ..io.styles import SENSE_COLORS

    handles = [
        Patch(facecolor=SHORELINE_COLOR, alpha=0.18),
        *(Line2D([], [], color=c, linewidth=1.5) for c in SENSE_COLORS.values()),
        Line2D([], [], linestyle="none", marker="o", markersize=2.8, color=EDGE_COLOR),
    ]
    labels = [
        "P10-P90 of the position",
        *(f"{k} step" for k in SENSE_COLORS),
        "position at a slice",
    ]
    return fig_or_ax.legend(
        handles,
        labels,
        loc=loc,
        ncol=ncol,
        frameon=False,
        fontsize=7,
        bbox_to_anchor=anchor,
        bbox_transform=transform,
        borderaxespad=0.0,
        handlelength=1.8,
        columnspacing=1.2,
    )


# label offsets (points) tried for a step's rate, nearest first
_OFFSETS = [(0, 7), (0, -7), (0, 20), (0, -20), (0, 33), (0, -33), (14, 7), (-14, -7)]


def _place(ax, text, xy, kept, renderer, **style):
    """Annotate ``text`` at the first offset where it touches no kept box and stays in
    the axes; None when there is no such place."""
    frame = ax.get_window_extent(renderer)
    for dx, dy in _OFFSETS:
        t = ax.annotate(
            text,
            xy,
            xytext=(dx, dy),
            textcoords="offset points",
            va="bottom" if dy > 0 else "top",
            **style,
        )
        b = t.get_window_extent(renderer)
        inside = b.x0 >= frame.x0 and b.x1 <= frame.x1 and b.y0 >= frame.y0 and b.y1 <= frame.y1
        if inside and not any(b.overlaps(k) for k in kept):
            kept.append(b)
            return t
        t.remove()
    return None


def _draw(ax, result, transect, *, label_steps: bool):
    from ..palette import SENSE_COLORS

    pos = result.positions
    p = pos[pos["transect"] == transect].sort_values("age", ascending=False)
    age = p["age"].to_numpy(float)
    km = p["position_m"].to_numpy(float) / 1000.0
    lo = p["position_low_m"].to_numpy(float) / 1000.0
    hi = p["position_high_m"].to_numpy(float) / 1000.0
    ax.fill_between(age, lo, hi, color=SHORELINE_COLOR, alpha=0.18, linewidth=0, zorder=1)
    sh = result.shifts
    sh = sh[sh["transect"] == transect] if len(sh) else sh
    at = dict(zip(p["slice"], zip(age, km, strict=True), strict=True))
    steps = []
    for r in sh.itertuples():
        (a0, y0), (a1, y1) = (
            at.get(r.older_slice, (np.nan,) * 2),
            at.get(r.younger_slice, (np.nan,) * 2),
        )
        if not (np.isfinite(y0) and np.isfinite(y1)):
            continue
        ax.plot(
            [a0, a1],
            [y0, y1],
            color=SENSE_COLORS.get(r.sense, MUTED_COLOR),
            linewidth=1.5,
            zorder=2,
        )
        steps.append((r, (a0 + a1) / 2, (y0 + y1) / 2))
    ax.plot(age, km, linestyle="none", marker="o", markersize=2.8, color=EDGE_COLOR, zorder=3)
    if not label_steps:
        return 0
    # Labels go where they touch neither another label nor a slice's point: the
    # limits are fixed first so that positions on screen are final; the margins leave
    # room for labels above the highest and below the lowest step.
    ax.margins(x=0.05, y=0.18)
    ax.autoscale_view()
    ax.set_xlim(*ax.get_xlim())
    ax.set_ylim(*ax.get_ylim())
    if not ax.xaxis_inverted():
        ax.invert_xaxis()
    if not ax.yaxis_inverted():
        ax.invert_yaxis()
    renderer = ax.figure.canvas.get_renderer()
    pts = ax.transData.transform(np.column_stack([age, km])[np.isfinite(km)])
    from matplotlib.transforms import Bbox

    r_px = 4.0 * ax.figure.dpi / 72.0
    kept = [Bbox([[x - r_px, y - r_px], [x + r_px, y + r_px]]) for x, y in pts]
    style = dict(
        fontsize=6.5,
        ha="center",
        color=EDGE_COLOR,
        zorder=4,
        linespacing=1.0,
        bbox=dict(boxstyle="square,pad=0.1", facecolor="white", edgecolor="none", alpha=0.8),
    )
    missed = 0
    for r, xm, ym in steps:
        if not np.isfinite(r.rate_m_per_kyr):
            continue
        full = rate_text(
            r.rate_m_per_kyr, r.rate_low_m_per_kyr, r.rate_high_m_per_kyr, unit=False, sep="\n"
        )
        if _place(ax, full, (xm, ym), kept, renderer, **style) is None:
            if (
                _place(
                    ax, rate_text(r.rate_m_per_kyr, unit=False), (xm, ym), kept, renderer, **style
                )
                is None
            ):
                missed += 1
    return missed


def position_panel(result: BuildResult, transect: str, ax: Axes | None = None) -> Axes:
    """Position against age on one transect, each step labelled with its rate and P10-P90.

    Parameters
    ----------
    result : BuildResult
    transect : str
        Transect id.
    ax : matplotlib.axes.Axes, optional
        Axes to draw into; a new figure when None.

    Returns
    -------
    matplotlib.axes.Axes

    Examples
    --------
    >>> ax = position_panel(result, "T05")   # doctest: +SKIP
    """
    unit = result.project.age_unit
    rate, method = series_rate(result, transect)
    with figure_style():
        if ax is None:
            ax = new_figure(7.5, 4.4).add_axes((0.1, 0.22, 0.86, 0.66))
        ax.set_xlabel(f"Age ({unit}), youngest on the right", fontsize=8)
        ax.set_ylabel("Position (km from landward end)", fontsize=8)
        ax.grid(color="#e6e6e6", linewidth=0.5)
        missed = _draw(ax, result, transect, label_steps=True)
        note = f"; {missed} steps without room for a label" if missed else ""
        title = ax.set_title(
            f"Shoreline position on {short_name(transect, 20)}: steps labelled with rate in "
            f"m/kyr (P10 to P90){note}; whole series: {series_rate_text(rate, method)}",
            loc="left",
            fontsize=9,
        )
        renderer = ax.figure.canvas.get_renderer()
        fit_text(title, ax.figure.get_figwidth() * ax.figure.dpi * 0.88, renderer)
        _key(ax, anchor=(0.0, -0.17), loc="upper left", ncol=5, transform=ax.transAxes)
    return ax


def shoreline_positions(result: BuildResult, transects=None, axes=None) -> np.ndarray:
    """Small multiples: position against age for every transect.

    Parameters
    ----------
    result : BuildResult
    transects : sequence of str, optional
        Transect ids; default every transect of the build.
    axes : sequence of matplotlib.axes.Axes, optional
        One axes per transect; a new figure with :data:`COLUMNS` panels a row when None.

    Returns
    -------
    numpy.ndarray of Axes
        The panels, in transect order.

    Examples
    --------
    >>> axes = shoreline_positions(result)   # doctest: +SKIP
    """
    ids = list(transects) if transects is not None else [t.transect for t in result.transects]
    unit = result.project.age_unit
    with figure_style():
        if axes is None:
            n = max(len(ids), 1)
            cols = min(COLUMNS, n)
            rows = math.ceil(n / cols)
            fig = new_figure(7.5, 1.4 + 1.5 * rows)
            grid = fig.subplots(rows, cols, sharex=True, sharey=True, squeeze=False)
            fig.subplots_adjust(
                left=0.09,
                right=0.98,
                top=1 - 0.95 / fig.get_figheight(),
                bottom=0.75 / fig.get_figheight(),
                hspace=0.45,
                wspace=0.12,
            )
            flat = list(grid.ravel())
            for extra in flat[len(ids) :]:
                extra.set_visible(False)
            for i in range(max(len(ids) - cols, 0), len(ids)):
                # the lowest panel of each column carries the age labels
                flat[i].xaxis.set_tick_params(labelbottom=True)
            axes = flat[: len(ids)]
            fig.supxlabel(f"Slice age ({unit}), youngest on the right", fontsize=8, y=0.02)
            fig.supylabel(
                "Shoreline position (km from landward end), landward up", fontsize=8, x=0.01
            )
            sup = fig.suptitle(
                "Shoreline position against age per transect\n"
                "Rate in each title: least-squares (LSQ) if the shoreline moved one way "
                "throughout, else net",
                fontsize=9,
                x=0.09,
                ha="left",
                y=1 - 0.12 / fig.get_figheight(),
            )
            fit_text(sup, fig.get_figwidth() * fig.dpi * 0.9)
            _key(
                fig,
                anchor=(0.08, 1 - 0.5 / fig.get_figheight()),
                loc="upper left",
                ncol=5,
            )
        axes = np.asarray(axes, dtype=object)
        for ax, tid in zip(axes, ids, strict=True):
            _draw(ax, result, tid, label_steps=False)
            rate, method = series_rate(result, tid)
            title = ax.set_title(
                f"{short_name(tid, 12)}: {series_rate_text(rate, method, short=True)}",
                fontsize=7.5,
                loc="left",
                pad=2,
            )
            fit_text(title, ax.get_window_extent(ax.figure.canvas.get_renderer()).width)
            ax.tick_params(labelsize=6.5, length=2)
            ax.grid(color="#e6e6e6", linewidth=0.5)
        for ax in axes:  # shared axes invert together, hence the checks
            if not ax.xaxis_inverted():
                ax.invert_xaxis()
            if not ax.yaxis_inverted():
                ax.invert_yaxis()
    return axes
