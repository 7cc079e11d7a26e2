"""The core correlation panel: cores near a transect as facies columns, surfaces joined.

Cores within ``max_distance_m`` of the transect (default one mean core spacing) are
drawn in their order along it, landward on the left, as columns hung from their tops
(depth down, one depth scale for all). Columns are evenly spaced, not at their true
distance, so close cores stay legible; the distance along the transect is written
under each one. When more cores qualify than :data:`MAX_COLUMNS`, that many are picked
evenly along the transect.

Column width follows the belt, in the classic "profile" look of a graphic log: the most
proximal (coarsest) belt is widest and each belt basinward is narrower, so a
coarsening-upward (shallowing-upward) interval widens upward and a fining-upward one
narrows upward. Each picked surface is drawn across the columns that pick it and joined
between neighbouring columns, coloured by age (the migration map's scale), thicker
where erosional. Contacts flagged as possible breaks by the core reading (belts skipped
outside an erosional surface; Walther's Law) are marked beside the column.

Examples
--------
>>> ax = core_panel(result)          # doctest: +SKIP
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
import shapely

from ..palette import EDGE_COLOR, FLAG_COLOR, MUTED_COLOR
from .canvas import figure_style, new_figure
from .scales import age_cmap, age_norm

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..results import BuildResult

__all__ = ["MAX_COLUMNS", "column_width", "core_panel", "panel_cores"]

MAX_COLUMNS = 12
"""Most core columns on one panel."""

_WIDEST = 0.56  # column width of the most proximal belt, in column spacings
_NARROWEST = 0.18


def column_width(rank: int, n_belts: int) -> float:
    """Width (in column spacings) of an interval of belt ``rank``: proximal widest.

    >>> column_width(0, 5), column_width(4, 5)
    (0.56, 0.18)
    """
    if n_belts <= 1:
        return _WIDEST
    return _WIDEST - (_WIDEST - _NARROWEST) * rank / (n_belts - 1)


def panel_cores(
    result: BuildResult,
    transect: str | None = None,
    max_distance_m: float | None = None,
    limit: int = MAX_COLUMNS,
):
    """The cores of a panel: ``[(core, distance along m, distance off m)]`` in order.

    Parameters
    ----------
    result : BuildResult
    transect : str, optional
        Transect id; default as the chronostratigraphic chart (user's first, else the
        middle default transect).
    max_distance_m : float, optional
        Farthest a core may lie from the transect; default one mean core spacing.
    limit : int
        Most cores kept (evenly picked along the transect).
    """
    from ..grid import mean_core_spacing
    from ..results import chart_transect

    tr = chart_transect(result.transects, transect)
    cores = result.project.cores
    e = np.array([c.easting for c in cores])
    n = np.array([c.northing for c in cores])
    if max_distance_m is None:
        max_distance_m = mean_core_spacing(e, n)
        if not np.isfinite(max_distance_m):
            max_distance_m = tr.line.length
    pts = shapely.points(e, n)
    off = shapely.distance(pts, tr.line)
    along = shapely.line_locate_point(tr.line, pts)
    keep = [i for i in np.argsort(along, kind="stable") if off[i] <= max_distance_m]
    if len(keep) > limit:
        pick = np.unique(np.round(np.linspace(0, len(keep) - 1, limit)).astype(int))
        keep = [keep[i] for i in pick]
    return tr, [(cores[i], float(along[i]), float(off[i])) for i in keep]


def core_panel(
    result: BuildResult,
    transect: str | None = None,
    ax: Axes | None = None,
    *,
    max_distance_m: float | None = None,
) -> Axes:
    """Draw the correlation panel of the cores near a transect.

    Parameters
    ----------
    result : BuildResult
        A computed build.
    transect : str, optional
        Transect id; default the user's first transect or the middle default one.
    ax : matplotlib.axes.Axes, optional
        Axes to draw into; a new report-size figure when None. Surface names go to the
        right of the axes, the legend below.
    max_distance_m : float, optional
        Farthest a core may lie from the transect; default one mean core spacing.

    Returns
    -------
    matplotlib.axes.Axes

    Examples
    --------
    >>> ax = core_panel(result, max_distance_m=3000)   # doctest: +SKIP
    """
    from matplotlib.collections import PatchCollection
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch, Rectangle

    project = result.project
    scheme = project.scheme
    k = scheme.n_belts
    tr, chosen = panel_cores(result, transect, max_distance_m)
    surfaces = {s.name: s for s in project.surfaces}
    anorm, acmap = age_norm([s.age for s in project.surfaces]), age_cmap()
    with figure_style():
        if ax is None:
            ax = new_figure(7.5, 6.0).add_axes((0.09, 0.25, 0.76, 0.67))
        left = np.arange(len(chosen)) - _WIDEST / 2
        rects, colors = [], []
        deepest = 0.0
        for i, (core, _along, _off) in enumerate(chosen):
            for iv in core.intervals:
                rects.append(Rectangle((left[i], iv.top), column_width(iv.rank, k), iv.thickness))
                colors.append(scheme.belts[iv.rank].color)
            if core.intervals:
                deepest = max(deepest, core.base)
                ax.plot(
                    [left[i], left[i]],
                    [core.top, core.base],
                    color=EDGE_COLOR,
                    linewidth=0.8,
                    zorder=3,
                )
        ax.add_collection(
            PatchCollection(
                rects, facecolors=colors, edgecolors=EDGE_COLOR, linewidths=0.3, zorder=2
            )
        )

        # surfaces: across each column that picks them, joined between neighbours
        for name, sf in surfaces.items():
            color = acmap(anorm(sf.age))
            lw = 1.8 if sf.erosional else 1.1
            pts = [(i, core.pick_depth(name)) for i, (core, _a, _o) in enumerate(chosen)]
            pts = [(i, d) for i, d in pts if d is not None]
            for i, d in pts:
                ax.plot(
                    [left[i], left[i] + _WIDEST],
                    [d, d],
                    color=color,
                    linewidth=lw,
                    zorder=4,
                    solid_capstyle="butt",
                )
            for (i0, d0), (i1, d1) in zip(pts[:-1], pts[1:], strict=True):
                ax.plot(
                    [left[i0] + _WIDEST, left[i1]],
                    [d0, d1],
                    color=color,
                    linewidth=lw,
                    linestyle="-" if i1 == i0 + 1 else (0, (3, 2)),
                    zorder=4,
                )
            if pts:
                i, d = pts[-1]
                ax.annotate(
                    f"{name}" + (" (eros.)" if sf.erosional else ""),
                    (left[i] + _WIDEST, d),
                    xytext=(3, 0),
                    textcoords="offset points",
                    fontsize=6.5,
                    color=color,
                    va="center",
                    ha="left",
                    zorder=5,
                )

        flagged = 0
        reading = result.reading
        if reading is not None and len(reading.contacts):
            c = reading.contacts
            c = c[c["flag"] == "possible_break"]
            col = {core.core_id: i for i, (core, _a, _o) in enumerate(chosen)}
            c = c[c["core_id"].isin(list(col))]
            flagged = len(c)
            if flagged:
                ax.plot(
                    [left[col[cid]] - 0.05 for cid in c["core_id"]],
                    c["depth"],
                    linestyle="none",
                    marker=">",
                    markersize=6,
                    color=FLAG_COLOR,
                    markeredgecolor=EDGE_COLOR,
                    markeredgewidth=0.5,
                    zorder=6,
                )

        ax.set_xlim(-0.6, max(len(chosen), 1) - 0.2)
        ax.set_ylim(deepest * 1.03 if deepest > 0 else 1.0, 0.0)
        ax.set_xticks(np.arange(len(chosen)))
        ax.set_xticklabels(
            [f"{core.core_id}\n{along / 1000:.1f} km" for core, along, _o in chosen], fontsize=6.5
        )
        for spine in ("top", "right"):
            ax.spines[spine].set_visible(False)
        ax.tick_params(axis="x", length=0)
        ax.tick_params(axis="y", labelsize=7.5)
        ax.set_ylabel(f"Depth below core top ({project.depth_unit})", fontsize=8)
        ax.set_xlabel(
            f"Cores within {_distance_label(result, max_distance_m)} of transect "
            f"{tr.transect}, in order along it (landward on the left)",
            fontsize=8,
        )
        ax.set_title(
            f"Core correlation panel along {tr.transect}: {len(chosen)} cores",
            loc="left",
            fontsize=10,
        )
        if not chosen:
            ax.text(
                0.5,
                0.5,
                "no core lies near this transect",
                transform=ax.transAxes,
                ha="center",
                va="center",
                color=MUTED_COLOR,
            )

        handles = [
            Patch(facecolor=b.color, edgecolor=EDGE_COLOR, linewidth=0.4) for b in scheme.belts
        ]
        labels = [f"{b.label or b.id}" for b in scheme.belts]
        handles += [
            Line2D([], [], color=acmap(0.5), linewidth=1.1),
            Line2D([], [], color=acmap(0.5), linewidth=1.8),
            Line2D([], [], color=acmap(0.5), linewidth=1.1, linestyle=(0, (3, 2))),
            Line2D(
                [],
                [],
                linestyle="none",
                marker=">",
                markersize=6,
                color=FLAG_COLOR,
                markeredgecolor=EDGE_COLOR,
                markeredgewidth=0.5,
            ),
        ]
        labels += [
            "surface (colour by age)",
            "erosional surface",
            "surface joined past a core without the pick",
            f"possible break ({flagged} here)",
        ]
        ax.legend(
            handles,
            labels,
            loc="upper left",
            bbox_to_anchor=(0.0, -0.16),
            bbox_transform=ax.transAxes,
            ncol=3,
            frameon=False,
            fontsize=7.5,
            borderaxespad=0.0,
            handlelength=1.8,
            columnspacing=1.2,
            title="column width: widest = most proximal belt",
            title_fontsize=7.5,
            alignment="left",
        )
    return ax


def _distance_label(result, max_distance_m) -> str:
    from ..grid import mean_core_spacing

    if max_distance_m is None:
        cores = result.project.cores
        max_distance_m = mean_core_spacing(
            np.array([c.easting for c in cores]), np.array([c.northing for c in cores])
        )
        return f"{max_distance_m / 1000:.1f} km (one core spacing)"
    return f"{max_distance_m / 1000:.1f} km"
