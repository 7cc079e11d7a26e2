"""Drawing the chronostratigraphic (Wheeler) chart along one transect.

The chart's data (:class:`paleomap.results.WheelerSection`: belts along the transect at
many ages, the no-record areas, the tracked boundary's trajectory) is computed once in
the build by :mod:`paleomap.chart` and handed over in
:attr:`paleomap.results.BuildResult.chart`; this module only draws it.

Examples
--------
>>> ax = wheeler_chart(result)        # doctest: +SKIP
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from ..palette import EDGE_COLOR, MUTED_COLOR, NO_RECORD_COLOR, SHORELINE_COLOR
from .canvas import figure_style, new_figure
from .labels import short_name, surface_labels

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..results import BuildResult, WheelerSection

__all__ = ["wheeler_chart"]


def wheeler_chart(
    result: BuildResult,
    ax: Axes | None = None,
    *,
    section: WheelerSection | None = None,
) -> Axes:
    """Draw the chronostratigraphic (Wheeler) chart the build computed.

    Parameters
    ----------
    result : BuildResult
        A computed build (its :attr:`~paleomap.results.BuildResult.chart`).
    ax : matplotlib.axes.Axes, optional
        Axes to draw into; a new report-size figure when None. Surface names go to the
        right of the axes, the legend below.
    section : WheelerSection, optional
        Another section to draw instead of ``result.chart``.

    Raises
    ------
    ValueError
        The build has no chart (no transect).

    Returns
    -------
    matplotlib.axes.Axes

    Examples
    --------
    >>> ax = wheeler_chart(result)   # doctest: +SKIP
    """
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch, Rectangle

    from .scales import belt_cmap

    project = result.project
    scheme = project.scheme
    unit = project.age_unit
    s = section if section is not None else result.chart
    if s is None:
        raise ValueError("the build has no chronostratigraphic chart (it has no transect)")
    km = s.distance_m / 1000.0
    a = s.ages
    # cell edges halfway between neighbours: the chart's ages are not evenly spaced
    # (the slices' own ages sit among the even ones)
    a_edges, km_edges = _edges(a), _edges(km)
    extent = (km_edges[0], km_edges[-1], a_edges[-1], a_edges[0])  # youngest at the top
    with figure_style():
        if ax is None:
            ax = new_figure(7.5, 5.6).add_axes((0.09, 0.25, 0.74, 0.67))
        ax.add_patch(
            Rectangle(
                (extent[0], extent[3]),
                extent[1] - extent[0],
                extent[2] - extent[3],
                facecolor=NO_RECORD_COLOR,
                edgecolor=MUTED_COLOR,
                hatch="///",
                linewidth=0.0,
                zorder=0,
            )
        )
        masked = np.ma.masked_less(s.ranks, 0)
        ax.pcolormesh(
            km_edges,
            a_edges,
            masked,
            cmap=belt_cmap(scheme),
            vmin=-0.5,
            vmax=scheme.n_belts - 0.5,
            shading="flat",
            zorder=1,
        )
        ax.set_xlim(extent[0], extent[1])
        ax.set_ylim(extent[2], extent[3])

        ordered = sorted(project.surfaces, key=lambda x: x.age)
        for sf in ordered:
            ax.axhline(
                sf.age,
                color=EDGE_COLOR,
                linewidth=1.0 if sf.erosional else 0.6,
                linestyle="-" if sf.erosional else (0, (4, 2)),
                zorder=3,
            )
        surface_labels(
            ax,
            [sf.age for sf in ordered],
            [
                f"{short_name(sf.name, 12)} {sf.age:.4g}" + (" (eros.)" if sf.erosional else "")
                for sf in ordered
            ],
            fontsize=7,
        )

        ok = np.isfinite(s.boundary_m)
        ax.plot(
            np.where(ok, s.boundary_m / 1000.0, np.nan),
            a,
            color=SHORELINE_COLOR,
            linewidth=1.8,
            zorder=4,
            solid_capstyle="round",
        )
        pos = result.positions
        pos = pos[(pos["transect"] == s.transect) & np.isfinite(pos["position_m"])]
        ax.plot(
            pos["position_m"] / 1000.0,
            pos["age"],
            linestyle="none",
            marker="D",
            markersize=4.5,
            markerfacecolor="white",
            markeredgecolor=SHORELINE_COLOR,
            markeredgewidth=1.0,
            zorder=5,
        )
        if s.near_cores:
            ax.plot(
                [c[1] / 1000.0 for c in s.near_cores],
                [extent[3]] * len(s.near_cores),
                linestyle="none",
                marker="v",
                markersize=5,
                color=EDGE_COLOR,
                clip_on=False,
                zorder=6,
            )

        ax.set_xlabel(
            f"Distance along transect {short_name(s.transect, 20)} (km), landward to basinward",
            fontsize=8,
        )
        ax.set_ylabel(f"Age ({unit}), youngest at the top", fontsize=8)
        ax.tick_params(labelsize=7.5)
        boundary = (
            "shoreline"
            if scheme.tracks_shoreline
            else short_name(f"boundary {scheme.boundary_name(scheme.tracked_boundary)}", 20)
        )
        ax.set_title(
            f"Chronostratigraphic (Wheeler) chart along {short_name(s.transect, 20)}, "
            f"{len(a)} ages",
            loc="left",
            fontsize=10,
            pad=14,
        )

        handles = [
            Patch(facecolor=b.color, edgecolor=EDGE_COLOR, linewidth=0.4) for b in scheme.belts
        ]
        labels = [short_name(b.label or b.id, 28) for b in scheme.belts]
        handles += [
            Patch(facecolor=NO_RECORD_COLOR, edgecolor=MUTED_COLOR, hatch="///", linewidth=0.4),
            Line2D([], [], color=SHORELINE_COLOR, linewidth=1.8),
            Line2D(
                [],
                [],
                linestyle="none",
                marker="D",
                markersize=4.5,
                markerfacecolor="white",
                markeredgecolor=SHORELINE_COLOR,
            ),
            Line2D([], [], color=EDGE_COLOR, linewidth=0.6, linestyle=(0, (4, 2))),
            Line2D([], [], linestyle="none", marker="v", markersize=5, color=EDGE_COLOR),
        ]
        labels += [
            "no record (hiatus or too few cores)",
            f"{boundary} trajectory",
            f"{boundary} on the slice maps",
            "dated surface",
            "core within one core spacing",
        ]
        ax.legend(
            handles,
            labels,
            loc="upper left",
            bbox_to_anchor=(0.0, -0.11),
            bbox_transform=ax.transAxes,
            ncol=3,
            frameon=False,
            fontsize=7.5,
            borderaxespad=0.0,
            handlelength=1.8,
            columnspacing=1.2,
        )
    return ax


def _edges(centres: np.ndarray) -> np.ndarray:
    """Cell edges around increasing centres: halfway between neighbours, the ends half
    a step out.

    >>> _edges(np.array([0.0, 1.0, 3.0])).tolist()
    [-0.5, 0.5, 2.0, 4.0]
    """
    c = np.asarray(centres, dtype=float)
    if c.size < 2:
        return np.array([c[0] - 0.5, c[0] + 0.5]) if c.size else np.array([0.0, 1.0])
    mid = (c[1:] + c[:-1]) / 2
    return np.concatenate([[c[0] - (mid[0] - c[0])], mid, [c[-1] + (c[-1] - mid[-1])]])
