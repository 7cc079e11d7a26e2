"""The shoreline migration map: every slice's shoreline and the shifts between them.

Shorelines (the tracked boundary of each slice) are coloured by age on one map, older
darker. Along each transect an arrow runs from the boundary's position at the older
slice to its position at the younger one, coloured by the rate (m/kyr, positive
landward) on a diverging scale: transgressions blue and drawn solid, regressions orange
and drawn dashed, stillstands grey. The arrows of successive slice pairs are set side
by side across the transect, oldest pair on the left looking basinward, so that a
shoreline moving back and forth does not draw over itself; with many transects the
arrows are drawn on at most :data:`MAX_ARROW_TRANSECTS` of them, evenly picked (every
rate is in the report's tables and the ``shoreline_shifts`` layer).

Examples
--------
>>> ax = migration_map(result)        # doctest: +SKIP
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
import shapely

from ..palette import EDGE_COLOR, MUTED_COLOR
from .canvas import figure_style, new_figure
from .mapframe import coordinate_labels, north_arrow, scale_bar, set_map_extent
from .scales import age_cmap, age_norm, rate_cmap, rate_norm
from .shapes import draw_lines

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..results import BuildResult

__all__ = [
    "MAX_ARROW_TRANSECTS",
    "SENSE_LINESTYLES",
    "arrow_transects",
    "migration_map",
    "shift_arrow_offsets",
]

MAX_ARROW_TRANSECTS = 8
"""Most transects that carry shift arrows on the migration map."""

SENSE_LINESTYLES = {"transgression": "-", "regression": (0, (3.0, 1.6)), "stillstand": ":", "": ":"}
"""Arrow line style by sense (a second cue besides the colour)."""


def shift_arrow_offsets(n_pairs: int, spacing_m: float) -> np.ndarray:
    """Across-transect offsets (m) of the arrows of ``n_pairs`` slice pairs.

    They fill 70 % of the spacing between transects, centred on the transect.

    >>> shift_arrow_offsets(3, 1000.0).tolist()
    [-233.33333333333334, 0.0, 233.33333333333334]
    """
    if n_pairs <= 1:
        return np.zeros(max(n_pairs, 0))
    step = 0.7 * spacing_m / n_pairs
    return (np.arange(n_pairs) - (n_pairs - 1) / 2) * step


def arrow_transects(transects, limit: int = MAX_ARROW_TRANSECTS) -> list:
    """The transects that carry arrows: all of them, or ``limit`` evenly picked.

    >>> arrow_transects(list("abcdefghij"), 4)
    ['a', 'd', 'g', 'j']
    """
    transects = list(transects)
    if len(transects) <= limit:
        return transects
    keep = np.unique(np.round(np.linspace(0, len(transects) - 1, limit)).astype(int))
    return [transects[i] for i in keep]


def _transect_spacing(result, transects) -> float:
    lines = [t.line for t in transects]
    if len(lines) < 2:
        w, s, e, n = result.grid.area.bounds
        return 0.05 * max(e - w, n - s)
    mids = np.array(
        [shapely.line_interpolate_point(g, 0.5, normalized=True).coords[0] for g in lines]
    )
    d = np.hypot(*np.diff(mids, axis=0).T)
    d = d[d > 0]
    return float(np.median(d)) if d.size else 0.05 * lines[0].length


def migration_map(result: BuildResult, ax: Axes | None = None) -> Axes:
    """Draw every shoreline by age and the shift arrows along the transects.

    Parameters
    ----------
    result : BuildResult
        A computed build.
    ax : matplotlib.axes.Axes, optional
        Axes to draw into; a new report-size figure when None. The colour bars go to
        the right of the axes, the legend, scale bar and north arrow below it.

    Returns
    -------
    matplotlib.axes.Axes

    Examples
    --------
    >>> ax = migration_map(result)    # doctest: +SKIP
    """
    from matplotlib.cm import ScalarMappable
    from matplotlib.lines import Line2D
    from matplotlib.patches import FancyArrowPatch

    project = result.project
    scheme = project.scheme
    grid = result.grid
    unit = project.age_unit
    maps = sorted(result.slice_maps, key=lambda m: -m.slice.age)
    with figure_style():
        if ax is None:
            ax = new_figure(7.5, 6.3).add_axes((0.09, 0.19, 0.62, 0.74))
        draw_lines(ax, grid.area.boundary, colors=EDGE_COLOR, linewidths=0.8, zorder=1)
        for t in result.transects:
            draw_lines(
                ax, t.line, colors=MUTED_COLOR, linewidths=0.4, linestyles=(0, (5, 3)), zorder=2
            )
            x0, y0 = t.line.coords[0]
            ax.annotate(
                t.transect,
                (x0, y0),
                xytext=(0, 2),
                textcoords="offset points",
                fontsize=5.5,
                color=MUTED_COLOR,
                ha="center",
                va="bottom",
                zorder=2,
            )
        anorm, acmap = age_norm([m.slice.age for m in maps]), age_cmap()
        for m in maps:
            draw_lines(
                ax,
                m.shoreline,
                colors=[acmap(anorm(m.slice.age))],
                linewidths=1.4,
                zorder=3,
                capstyle="round",
            )

        shifts = result.shifts
        rows = shifts[shifts["geometry"].notna()] if len(shifts) else shifts
        # The scale covers every rate, not only those drawn, so it is the same scale as
        # in the tables.
        rnorm, rcmap = rate_norm(rows["rate_m_per_kyr"] if len(rows) else []), rate_cmap()
        pairs = (
            list(dict.fromkeys(zip(shifts["older_slice"], shifts["younger_slice"], strict=True)))
            if len(shifts)
            else []
        )
        chosen = arrow_transects(result.transects)
        offsets = dict(
            zip(
                pairs,
                shift_arrow_offsets(len(pairs), _transect_spacing(result, chosen)),
                strict=True,
            )
        )
        lines = {t.transect: t.line for t in chosen}
        if len(rows):
            rows = rows[rows["transect"].isin(list(lines))]
        for r in rows.itertuples():
            (xa, ya), (xb, yb) = r.geometry.coords[0], r.geometry.coords[-1]
            c = np.asarray(lines[r.transect].coords)
            d = c[-1] - c[0]
            d = d / (np.hypot(*d) or 1.0)
            normal = np.array([d[1], -d[0]])  # right of the basinward direction
            off = offsets[(r.older_slice, r.younger_slice)] * normal
            arrow = FancyArrowPatch(
                (xa + off[0], ya + off[1]),
                (xb + off[0], yb + off[1]),
                arrowstyle="-|>,head_length=3.5,head_width=1.8",
                mutation_scale=1.0,
                color=rcmap(rnorm(r.rate_m_per_kyr)),
                linewidth=1.3,
                linestyle=SENSE_LINESTYLES.get(r.sense, ":"),
                shrinkA=0,
                shrinkB=0,
                zorder=4,
            )
            ax.add_patch(arrow)

        set_map_extent(ax, grid.area.bounds)
        coordinate_labels(ax, grid.crs if grid.crs is not None else project.working_crs)
        if scheme.tracks_shoreline:
            title = f"Shorelines and their shifts, {len(maps)} slices"
            line_label = "shoreline, coloured by age"
        else:
            name = scheme.boundary_name(scheme.tracked_boundary)
            title = f"Boundary {name} and its shifts, {len(maps)} slices"
            line_label = "tracked boundary, coloured by age"
        ax.set_title(title, loc="left", fontsize=10)

        cax = ax.inset_axes((1.04, 0.55, 0.035, 0.45))
        sm = ScalarMappable(norm=anorm, cmap=acmap)
        cb = ax.figure.colorbar(sm, cax=cax)
        cb.set_label(f"Slice age ({unit})", fontsize=8)
        cb.set_ticks([m.slice.age for m in maps])
        cb.set_ticklabels([f"{m.slice.name}  {m.slice.age:.6g}" for m in maps], fontsize=6.5)
        cax.invert_yaxis()  # youngest at the top, as in a stratigraphic column
        if len(rows):
            rax = ax.inset_axes((1.04, 0.0, 0.035, 0.45))
            cb2 = ax.figure.colorbar(ScalarMappable(norm=rnorm, cmap=rcmap), cax=rax)
            cb2.set_label("Shift rate (m/kyr), + landward", fontsize=8)
            cb2.ax.tick_params(labelsize=7)

        handles = [
            Line2D([], [], color=acmap(0.5), linewidth=1.4),
            Line2D([], [], color=MUTED_COLOR, linewidth=0.5, linestyle=(0, (5, 3))),
            Line2D(
                [],
                [],
                color=rcmap(1.0),
                linewidth=1.3,
                linestyle="-",
                marker=">",
                markersize=4,
                markevery=[-1],
            ),
            Line2D(
                [],
                [],
                color=rcmap(0.0),
                linewidth=1.3,
                linestyle=(0, (3.0, 1.6)),
                marker=">",
                markersize=4,
                markevery=[-1],
            ),
            Line2D([], [], color=rcmap(0.5), linewidth=1.3, linestyle=":"),
        ]
        labels = [
            line_label,
            "transect (label at landward end)",
            "transgression (landward shift)",
            "regression (seaward shift)",
            "stillstand",
        ]
        ax.legend(
            handles,
            labels,
            loc="upper left",
            bbox_to_anchor=(0.0, -0.1),
            bbox_transform=ax.transAxes,
            ncol=2,
            frameon=False,
            fontsize=7.5,
            borderaxespad=0.0,
            handlelength=2.6,
        )
        scale_bar(ax, anchor=(1.04, -0.13), fraction=0.15)
        north_arrow(ax, at=(1.30, -0.2), height=0.07)
    return ax
