"""Shoreline position against age, one small panel per transect.

Each panel shows the tracked boundary's position on one transect (km from its landward
end, landward up, so a transgression rises) against slice age (youngest on the right,
time running left to right), with the P10-P90 range of the position as a band. Each
step between consecutive slices is coloured by its sense (transgression blue,
regression orange, stillstand grey; the GIS styles' colours), and the panel is labelled
with the transect's least-squares rate over all slices (m/kyr, positive landward).
Panels share their axes so transects compare at a glance. The per-pair rates with their
P10-P90 ranges are in :func:`position_panel` (one transect, labelled steps) and in the
report's tables.

Examples
--------
>>> axes = shoreline_positions(result)       # doctest: +SKIP
>>> ax = position_panel(result, "T05")       # doctest: +SKIP
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from .canvas import figure_style, new_figure
from .palette import EDGE_COLOR, MUTED_COLOR, SHORELINE_COLOR

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..pipeline import BuildResult

__all__ = ["COLUMNS", "position_panel", "rate_text", "shoreline_positions"]

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


def _draw(ax, result, transect, *, label_steps: bool):
    from ..io.styles import SENSE_COLORS

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
    for k, r in enumerate(sh.itertuples()):
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
        if label_steps:
            # alternate above and below the line so neighbouring labels do not meet
            up = k % 2 == 0
            ax.annotate(
                rate_text(
                    r.rate_m_per_kyr,
                    r.rate_low_m_per_kyr,
                    r.rate_high_m_per_kyr,
                    unit=False,
                    sep="\n",
                ),
                ((a0 + a1) / 2, (y0 + y1) / 2),
                xytext=(0, 7 if up else -7),
                textcoords="offset points",
                fontsize=6.5,
                ha="center",
                va="bottom" if up else "top",
                color=EDGE_COLOR,
                zorder=4,
                linespacing=1.0,
                bbox=dict(
                    boxstyle="round,pad=0.15", facecolor="white", edgecolor="none", alpha=0.8
                ),
            )
    ax.plot(age, km, linestyle="none", marker="o", markersize=2.8, color=EDGE_COLOR, zorder=3)


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
    rate = {t.transect: t.lsq_rate_m_per_kyr for t in result.transects}.get(transect)
    with figure_style():
        if ax is None:
            ax = new_figure(7.5, 4.0).add_axes((0.1, 0.14, 0.86, 0.76))
        _draw(ax, result, transect, label_steps=True)
        if not ax.xaxis_inverted():
            ax.invert_xaxis()
        if not ax.yaxis_inverted():
            ax.invert_yaxis()
        ax.set_xlabel(f"Age ({unit})", fontsize=8)
        ax.set_ylabel("Position (km from landward end)", fontsize=8)
        ax.set_title(
            f"Shoreline position on {transect}: steps labelled with rate in m/kyr "
            f"(P10 to P90); least-squares rate {rate_text(rate)}",
            loc="left",
            fontsize=9,
        )
        ax.grid(color="#e6e6e6", linewidth=0.5)
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
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    from ..io.styles import SENSE_COLORS

    ids = list(transects) if transects is not None else [t.transect for t in result.transects]
    rates = {t.transect: t.lsq_rate_m_per_kyr for t in result.transects}
    unit = result.project.age_unit
    with figure_style():
        if axes is None:
            n = max(len(ids), 1)
            cols = min(COLUMNS, n)
            rows = math.ceil(n / cols)
            fig = new_figure(7.5, 1.2 + 1.5 * rows)
            grid = fig.subplots(rows, cols, sharex=True, sharey=True, squeeze=False)
            fig.subplots_adjust(
                left=0.09,
                right=0.98,
                top=1 - 0.75 / fig.get_figheight(),
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
            fig.suptitle(
                "Shoreline position against age per transect (P10-P90 band; least-squares rate "
                "in each title)",
                fontsize=10,
                x=0.09,
                ha="left",
                y=1 - 0.12 / fig.get_figheight(),
            )
            handles = [
                Patch(facecolor=SHORELINE_COLOR, alpha=0.18),
                *(Line2D([], [], color=c, linewidth=1.5) for c in SENSE_COLORS.values()),
            ]
            labels = ["P10-P90", *SENSE_COLORS]
            fig.legend(
                handles,
                labels,
                loc="upper left",
                ncol=4,
                frameon=False,
                fontsize=7,
                bbox_to_anchor=(0.08, 1 - 0.32 / fig.get_figheight()),
            )
        axes = np.asarray(axes, dtype=object)
        for ax, tid in zip(axes, ids, strict=True):
            _draw(ax, result, tid, label_steps=False)
            ax.set_title(f"{tid}: {rate_text(rates.get(tid))}", fontsize=7.5, loc="left", pad=2)
            ax.tick_params(labelsize=6.5, length=2)
            ax.grid(color="#e6e6e6", linewidth=0.5)
        for ax in axes:  # shared axes invert together, hence the checks
            if not ax.xaxis_inverted():
                ax.invert_xaxis()
            if not ax.yaxis_inverted():
                ax.invert_yaxis()
    return axes
