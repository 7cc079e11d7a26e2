"""The shoreline migration map: every slice's shoreline and the shifts between them.

Each element has one colour meaning and a key of its own, so the map reads at a glance:
shorelines (the tracked boundary of each slice) are drawn in greys by age, older darker
(key: the age scale at the right, every slice ticked, as many named as fit); along each
transect an arrow runs from the boundary's position at the older slice to its position
at the younger one, coloured by its sense only (key: the legend): transgressions blue
and solid, regressions orange and dashed, stillstands grey and dotted (the GIS styles'
colours). How fast is in the tables and the position figures, not in a colour ramp
that would compete with the ages. The arrows of successive slice pairs are set side
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
from .labels import drop_overlapping, fit_text, short_name, thin
from .mapframe import (
    allotted_transform,
    coordinate_labels,
    north_arrow,
    scale_bar,
    set_map_extent,
)
from .scales import age_norm, shoreline_age_cmap
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

SENSE_LINESTYLES = {
    "transgression": "-",
    "regression": (0, (3.0, 1.6)),
    "stillstand": ":",
    "uncertain": (0, (1.0, 1.5)),
    "": ":",
}
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

    from ..io.styles import SENSE_COLORS

    project = result.project
    scheme = project.scheme
    grid = result.grid
    unit = project.age_unit
    maps = sorted(result.slice_maps, key=lambda m: -m.slice.age)
    with figure_style():
        if ax is None:
            ax = new_figure(7.5, 6.3).add_axes((0.09, 0.19, 0.62, 0.74))
        draw_lines(ax, grid.area.boundary, colors=EDGE_COLOR, linewidths=0.8, zorder=1)
        transect_labels = []
        for t in result.transects:
            draw_lines(
                ax, t.line, colors=MUTED_COLOR, linewidths=0.4, linestyles=(0, (5, 3)), zorder=2
            )
            x0, y0 = t.line.coords[0]
            transect_labels.append(
                ax.annotate(
                    short_name(t.transect, 10),
                    (x0, y0),
                    xytext=(0, 2),
                    textcoords="offset points",
                    fontsize=5.5,
                    color=MUTED_COLOR,
                    ha="center",
                    va="bottom",
                    zorder=2,
                    annotation_clip=False,
                )
            )
        anorm, acmap = age_norm([m.slice.age for m in maps]), shoreline_age_cmap()
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
                color=SENSE_COLORS.get(r.sense, SENSE_COLORS["stillstand"]),
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
            line_label = "shoreline at each slice (age at right)"
        else:
            name = scheme.boundary_name(scheme.tracked_boundary)
            title = f"Boundary {short_name(name, 40)} and its shifts, {len(maps)} slices"
            line_label = "tracked boundary at each slice"
        title_text = ax.set_title(title, loc="left", fontsize=10)
        box = allotted_transform(ax)
        renderer = ax.figure.canvas.get_renderer()
        fit_text(title_text, ax.get_window_extent(renderer).width, renderer)
        drop_overlapping(transect_labels, renderer)

        # the age key: every slice ticked, as many named as fit without touching
        cax = ax.inset_axes((1.04, 0.2, 0.035, 0.8), transform=box)
        sm = ScalarMappable(norm=anorm, cmap=acmap)
        cb = ax.figure.colorbar(sm, cax=cax)
        cb.set_label(f"Slice age ({unit}), older darker", fontsize=8)
        cax.invert_yaxis()  # youngest at the top, as in a stratigraphic column
        ages = np.array([m.slice.age for m in maps])
        order = np.argsort(ages)
        height = cax.get_window_extent(renderer).height
        label_px = 6.5 * 1.35 * ax.figure.dpi / 72.0
        named = thin(anorm(ages[order]) * height, label_px)
        cax.yaxis.set_ticks(ages[order], minor=True)
        cax.yaxis.set_ticks(ages[order][named])
        cax.yaxis.set_ticklabels(
            [
                f"{short_name(maps[i].slice.name, 12)}  {maps[i].slice.age:.4g}"
                for i in order[named]
            ],
            fontsize=6.5,
        )
        cax.tick_params(which="minor", length=2, width=0.5)

        handles = [
            Line2D([], [], color=acmap(0.5), linewidth=1.4),
            Line2D([], [], color=MUTED_COLOR, linewidth=0.5, linestyle=(0, (5, 3))),
        ]
        labels = [line_label, "transect (name at landward end)"]
        for sense, text in (
            ("transgression", "transgression: landward shift, older to younger"),
            ("regression", "regression: seaward shift, older to younger"),
            ("stillstand", "stillstand"),
            ("uncertain", "uncertain: P10-P90 spans zero"),
        ):
            if sense not in SENSE_COLORS:
                continue
            handles.append(
                Line2D(
                    [],
                    [],
                    color=SENSE_COLORS[sense],
                    linewidth=1.3,
                    linestyle=SENSE_LINESTYLES[sense],
                    marker=">" if sense in ("transgression", "regression") else None,
                    markersize=4,
                    markevery=[-1],
                )
            )
            labels.append(text)
        ax.legend(
            handles,
            labels,
            loc="upper left",
            bbox_to_anchor=(0.0, -0.1),
            bbox_transform=box,
            ncol=2,
            frameon=False,
            fontsize=7.5,
            borderaxespad=0.0,
            handlelength=2.6,
        )
        # scale bar and north arrow in the column under the age scale, clear of the key
        scale_bar(ax, anchor=(1.04, 0.0), fraction=0.15)
        north_arrow(ax, at=(1.36, 0.0), height=0.09)
    return ax
