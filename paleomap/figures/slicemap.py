"""The map of one time slice: facies belts, cores, shoreline and its band.

Belts are filled from the slice's belt polygons in the scheme's colours (the same
polygons as the ``facies_belts`` layer); each core that records the slice is posted in
the colour of the belt it logs there, with a dark edge, so a core sitting in a belt of
another colour would stand out at once (by construction it does not: the belts honour
the cores). Cores without a record at the slice (outside their dated range, in a hiatus
or in a gap of the log) are posted as small open grey circles. The tracked boundary (the
shoreline by default) is drawn in shoreline red over its P10-P90 band in the same red,
hatched (a tinted fill would change the belt colours under it).

Examples
--------
>>> ax = slice_map(result, "KS3")          # doctest: +SKIP
>>> ax.figure.savefig("KS3.png")           # doctest: +SKIP
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from ..palette import EDGE_COLOR, MUTED_COLOR, SHORELINE_COLOR
from .canvas import REPORT_WIDTH_IN, figure_style, new_figure
from .labels import clean_text, fit_text, short_name
from .mapframe import (
    MAP_RIGHT,
    coordinate_labels,
    north_arrow,
    scale_bar,
    set_map_extent,
    side_legend,
)
from .shapes import draw_lines, draw_polygons

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..results import BuildResult, SliceMap

__all__ = [
    "CORE_MARKER_SIZE",
    "age_label",
    "find_slice_map",
    "map_axes",
    "slice_map",
    "slice_title",
]

CORE_MARKER_SIZE = 30.0
"""Area (points squared) of a posted core marker."""

_LEGEND_CHARS = 30  # a legend label in the column beside the map


def age_label(age: float, unit: str) -> str:
    """An age with its unit, without needless digits.

    >>> age_label(74.0, "ka"), age_label(2.55, "Ma")
    ('74 ka', '2.55 Ma')
    """
    return f"{age:.6g} {unit}"


def find_slice_map(result: BuildResult, which) -> SliceMap:
    """The slice map named ``which`` (a slice name), or at position ``which`` (an int).

    Raises
    ------
    KeyError
        No slice of that name.
    """
    if isinstance(which, (int, np.integer)):
        return result.slice_maps[int(which)]
    for m in result.slice_maps:
        if m.slice.name == which:
            return m
    names = ", ".join(m.slice.name for m in result.slice_maps)
    raise KeyError(f"no slice {which!r}; the build has: {names}")


def slice_title(m: SliceMap, age_unit: str) -> str:
    """``"Slice KS3 at 74 ka"``, naming the surface when the slice is at one.

    Names are drawn as :func:`~paleomap.figures.labels.clean_text` makes them.
    """
    where = (
        f" (surface {clean_text(m.slice.surface)})"
        if m.slice.surface and m.slice.surface != m.slice.name
        else ""
    )
    return f"Slice {clean_text(m.slice.name)}{where} at {age_label(m.slice.age, age_unit)}"


def map_axes(width_in: float = REPORT_WIDTH_IN, height_in: float = 5.8) -> Axes:
    """A new figure with one map axes, leaving the right column for legend and furniture."""
    fig = new_figure(width_in, height_in)
    return fig.add_axes((0.09, 0.10, MAP_RIGHT - 0.09, 0.82))


def slice_map(result: BuildResult, which=0, ax: Axes | None = None) -> Axes:
    """Draw the map of one slice.

    Parameters
    ----------
    result : BuildResult
        A computed build.
    which : str or int
        Slice name, or position in ``result.slice_maps`` (oldest first).
    ax : matplotlib.axes.Axes, optional
        Axes to draw into; a new report-size figure when None. The legend, scale bar
        and north arrow go to the right of the axes (leave room there).

    Returns
    -------
    matplotlib.axes.Axes

    Examples
    --------
    >>> ax = slice_map(result, "KS3")   # doctest: +SKIP
    """
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    m = find_slice_map(result, which)
    project = result.project
    scheme = project.scheme
    grid = result.grid
    with figure_style():
        if ax is None:
            ax = map_axes()
        for rank, geom in enumerate(m.polygons):
            draw_polygons(ax, geom, facecolor=scheme.belts[rank].color, edgecolor="none", zorder=1)
        # Hatched, not filled: a tinted fill would shift the belt colours under it.
        draw_polygons(
            ax,
            m.band,
            facecolor="none",
            edgecolor=SHORELINE_COLOR,
            hatch="////",
            linewidth=0.0,
            alpha=0.4,
            zorder=2,
        )
        draw_lines(
            ax,
            m.band,
            colors=SHORELINE_COLOR,
            linewidths=0.6,
            linestyles=(0, (4, 2)),
            alpha=0.8,
            zorder=2,
        )
        draw_lines(
            ax, m.shoreline, colors=SHORELINE_COLOR, linewidths=1.8, zorder=3, capstyle="round"
        )
        draw_lines(ax, grid.area.boundary, colors=EDGE_COLOR, linewidths=0.8, zorder=4)

        s = result.samples
        s = s[s["slice"] == m.slice.name]
        colors = [scheme.belts[int(r)].color for r in s["rank"]]
        # A white halo keeps dark markers visible on dark belts.
        ax.scatter(
            s["easting"], s["northing"], s=CORE_MARKER_SIZE * 2.0, c="white", linewidths=0, zorder=6
        )
        ax.scatter(
            s["easting"],
            s["northing"],
            s=CORE_MARKER_SIZE,
            c=colors,
            edgecolors=EDGE_COLOR,
            linewidths=0.7,
            zorder=7,
        )
        recorded = set(s["core_id"])
        missing = [c for c in project.cores if c.core_id not in recorded]
        if missing:
            ax.scatter(
                [c.easting for c in missing],
                [c.northing for c in missing],
                s=CORE_MARKER_SIZE * 0.6,
                facecolors="none",
                edgecolors=MUTED_COLOR,
                linewidths=0.8,
                zorder=5,
            )

        control = getattr(m, "control", ())
        if control:
            # control points are interpretations: a star, never a core's circle
            ax.scatter(
                [c[1] for c in control],
                [c[2] for c in control],
                s=CORE_MARKER_SIZE * 1.6,
                marker="*",
                c=[scheme.belts[c[3]].color for c in control],
                edgecolors=EDGE_COLOR,
                linewidths=0.7,
                zorder=7,
            )

        w, so, e, n = grid.area.bounds
        set_map_extent(ax, (w, so, e, n))
        coordinate_labels(ax, grid.crs if grid.crs is not None else project.working_crs)
        # The title on its own line and the core count on a line under it, so a long
        # slice name can never run into it; both cut to the map's width.
        title = ax.set_title(slice_title(m, project.age_unit), loc="left", fontsize=10, pad=13)
        q = m.quality
        sub = None
        if q:
            sub = ax.text(
                0.0,
                1.008,
                f"{q.get('cores_used', len(s))} cores, "
                f"{q.get('cores_in_own_belt', '?')} in their own belt",
                transform=ax.transAxes,
                ha="left",
                va="bottom",
                fontsize=7.5,
                color=MUTED_COLOR,
            )
        renderer = ax.figure.canvas.get_renderer()
        width = ax.get_window_extent(renderer).width
        fit_text(title, width, renderer)
        if sub is not None:
            fit_text(sub, width, renderer)

        handles = [
            Patch(facecolor=b.color, edgecolor=EDGE_COLOR, linewidth=0.4) for b in scheme.belts
        ]
        labels = [short_name(b.label or b.id, _LEGEND_CHARS) for b in scheme.belts]
        boundary = (
            "shoreline"
            if scheme.tracks_shoreline
            else short_name(
                f"boundary {scheme.boundary_name(scheme.tracked_boundary)}", _LEGEND_CHARS
            )
        )
        handles += [
            Line2D(
                [],
                [],
                linestyle="none",
                marker="o",
                markersize=5.5,
                markerfacecolor="white",
                markeredgecolor=EDGE_COLOR,
                markeredgewidth=0.7,
            ),
            Line2D([], [], color=SHORELINE_COLOR, linewidth=1.8),
            Patch(
                facecolor="none",
                edgecolor=SHORELINE_COLOR,
                hatch="////",
                linewidth=0.6,
                linestyle=(0, (4, 2)),
            ),
            Line2D([], [], color=EDGE_COLOR, linewidth=0.8),
        ]
        labels += [
            "core, filled with its logged belt",
            boundary,
            "its P10-P90 band",
            "edge of mapped area",
        ]
        if missing:
            handles.append(
                Line2D(
                    [],
                    [],
                    linestyle="none",
                    marker="o",
                    markersize=4.5,
                    markerfacecolor="none",
                    markeredgecolor=MUTED_COLOR,
                )
            )
            labels.append("core without record")
        if control:
            handles.append(
                Line2D(
                    [],
                    [],
                    linestyle="none",
                    marker="*",
                    markersize=8,
                    markerfacecolor="white",
                    markeredgecolor=EDGE_COLOR,
                )
            )
            labels.append("control point (interpretation)")
        side_legend(
            ax, handles, labels, title=short_name(f"Belts ({scheme.name} scheme)", _LEGEND_CHARS)
        )
        scale_bar(ax)
        north_arrow(ax)
    return ax
