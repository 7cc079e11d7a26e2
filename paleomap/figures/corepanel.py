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
from .labels import fit_text, short_name, spread, surface_labels
from .scales import age_cmap, age_norm

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..results import BuildResult

__all__ = [
    "MAX_COLUMNS",
    "PANEL_DATUMS",
    "PANEL_SPACINGS",
    "column_positions",
    "column_width",
    "core_panel",
    "panel_cores",
    "panel_datum",
]

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


PANEL_DATUMS = ("depth", "elevation")
"""Datums a panel hangs its cores on besides a surface name: ``depth`` (each core from
its top) and ``elevation`` (core-top elevation minus depth, in the depth unit)."""

PANEL_SPACINGS = ("even", "distance")
"""How the columns are spaced: evenly, or by their distance along the transect."""


def panel_datum(result: BuildResult, cores, datum: str | None = None) -> str:
    """The datum a panel uses: ``datum`` checked, or by default ``elevation`` when every
    core of the panel has one, else ``depth``.

    Raises
    ------
    ValueError
        ``datum`` is neither a datum of :data:`PANEL_DATUMS` nor a surface of the project.
    """
    names = [s.name for s in result.project.surfaces]
    if datum is None:
        ok = bool(cores) and all(c.elevation is not None for c in cores)
        return "elevation" if ok else "depth"
    if datum not in PANEL_DATUMS and datum not in names:
        raise ValueError(
            f"core panel datum {datum!r} is not one of {', '.join(PANEL_DATUMS)} nor a "
            f"surface; the surfaces are: {', '.join(names)}"
        )
    return datum


def column_positions(along_m, spacing: str = "even") -> np.ndarray:
    """x of each column (in column spacings): evenly, or by distance along the transect.

    By distance, the median distance between neighbouring cores is one column spacing
    (the whole panel at most three times as wide as evenly spaced columns), and cores
    closer than one spacing are pushed apart just enough to keep their columns and
    names apart.

    >>> column_positions([0.0, 100.0, 1000.0], "distance").round(2).tolist()
    [0.0, 1.0, 2.0]
    >>> column_positions([0.0, 3000.0, 3500.0, 10000.0], "distance").round(2).tolist()
    [0.0, 1.0, 2.0, 3.33]
    """
    along = np.asarray(along_m, dtype=float)
    n = along.size
    if spacing not in PANEL_SPACINGS:
        raise ValueError(f"panel spacing {spacing!r} is not one of {', '.join(PANEL_SPACINGS)}")
    gaps = np.diff(along)
    if spacing == "even" or n < 2 or not (gaps > 0).any():
        return np.arange(n, dtype=float)
    x = (along - along[0]) / float(np.median(gaps[gaps > 0]))
    widest = 3.0 * (n - 1)
    if x[-1] > widest:
        x = x * widest / x[-1]
    return spread(x, 1.0, lo=0.0)


def core_panel(
    result: BuildResult,
    transect: str | None = None,
    ax: Axes | None = None,
    *,
    max_distance_m: float | None = None,
    datum: str | None = None,
    spacing: str = "even",
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
    datum : str, optional
        What the cores hang on: a surface's name (the panel is flattened on it: depth
        below its pick, cores without the pick left out), ``"elevation"`` (core-top
        elevation minus depth) or ``"depth"`` (each from its own top). Default
        ``"elevation"`` when every core of the panel has an elevation, else ``"depth"``.
        The vertical axis spans the logged intervals only, so cores logged deep down
        (say 4000 to 6000 ft) fill the panel.
    spacing : str
        ``"even"`` (default) or ``"distance"`` along the transect
        (:func:`column_positions`).

    Returns
    -------
    matplotlib.axes.Axes

    Examples
    --------
    >>> ax = core_panel(result, datum="KS3", spacing="distance")   # doctest: +SKIP
    """
    from matplotlib.collections import PatchCollection
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch, Rectangle

    project = result.project
    scheme = project.scheme
    unit = project.depth_unit
    k = scheme.n_belts
    tr, chosen = panel_cores(result, transect, max_distance_m)
    datum = panel_datum(result, [c for c, _a, _o in chosen], datum)
    left_out = []
    if datum not in PANEL_DATUMS:
        left_out = [c.core_id for c, _a, _o in chosen if c.pick_depth(datum) is None]
        chosen = [t for t in chosen if t[0].pick_depth(datum) is not None]

    def level(core, depth):
        # the panel's vertical coordinate of a depth in a core (larger = deeper)
        if datum == "depth":
            return depth
        if datum == "elevation":
            return depth - core.elevation
        return depth - core.pick_depth(datum)

    surfaces = {s.name: s for s in project.surfaces}
    anorm, acmap = age_norm([s.age for s in project.surfaces]), age_cmap()
    with figure_style():
        if ax is None:
            # the legend (belts and four more entries, three columns) sets the height
            rows = -(-(k + 4) // 3)
            below = 1.25 + 0.17 * rows  # inches: core names, axis label, legend
            height = 0.45 + 3.9 + below
            ax = new_figure(7.5, height).add_axes((0.09, below / height, 0.72, 3.9 / height))
        xs = column_positions([a for _c, a, _o in chosen], spacing)
        left = xs - _WIDEST / 2
        rects, colors = [], []
        levels = []
        for i, (core, _along, _off) in enumerate(chosen):
            for iv in core.intervals:
                top = level(core, iv.top)
                rects.append(Rectangle((left[i], top), column_width(iv.rank, k), iv.thickness))
                colors.append(scheme.belts[iv.rank].color)
            if core.intervals:
                a, b = level(core, core.top), level(core, core.base)
                levels += [a, b]
                ax.plot([left[i], left[i]], [a, b], color=EDGE_COLOR, linewidth=0.8, zorder=3)
        ax.add_collection(
            PatchCollection(
                rects, facecolors=colors, edgecolors=EDGE_COLOR, linewidths=0.3, zorder=2
            )
        )

        # surfaces: across each column that picks them, joined between neighbours
        ends = []
        for name, sf in surfaces.items():
            color = acmap(anorm(sf.age))
            lw = 1.8 if sf.erosional else 1.1
            pts = [
                (i, level(core, core.pick_depth(name)))
                for i, (core, _a, _o) in enumerate(chosen)
                if core.pick_depth(name) is not None
            ]
            levels += [d for _i, d in pts]
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
                ends.append((pts[-1][1], name, sf, color))

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
                    [
                        level(chosen[col[cid]][0], d)
                        for cid, d in zip(c["core_id"], c["depth"], strict=True)
                    ],
                    linestyle="none",
                    marker=">",
                    markersize=6,
                    color=FLAG_COLOR,
                    markeredgecolor=EDGE_COLOR,
                    markeredgewidth=0.5,
                    zorder=6,
                )

        ax.set_xlim(-0.6, (xs[-1] if len(xs) else 0.0) + 0.8)
        # the logged range only: no empty band above cores logged far below their tops
        lo, hi = (min(levels), max(levels)) if levels else (0.0, 1.0)
        pad = 0.03 * (hi - lo) if hi > lo else 1.0
        ax.set_ylim(hi + pad, lo - pad)
        if datum == "elevation":
            # elevations read upward: label the axis in elevation, not in -elevation
            from matplotlib.ticker import FuncFormatter

            ax.yaxis.set_major_formatter(
                FuncFormatter(lambda v, _p: f"{0.0 - v:g}".replace("-", "\u2212"))
            )
        ax.set_xticks(xs)
        renderer = ax.figure.canvas.get_renderer()
        # as many characters of a core id as the column spacing holds
        step_px = ax.get_window_extent(renderer).width / (ax.get_xlim()[1] - ax.get_xlim()[0])
        chars = max(4, int(0.9 * step_px / (6.5 * 0.62 * ax.figure.dpi / 72.0)))
        ax.set_xticklabels(
            [
                f"{short_name(core.core_id, chars)}\n{along / 1000:.1f} km"
                for core, along, _o in chosen
            ],
            fontsize=6.5,
        )
        for spine in ("top", "right"):
            ax.spines[spine].set_visible(False)
        ax.tick_params(axis="x", length=0)
        ax.tick_params(axis="y", labelsize=7.5)
        if datum == "depth":
            ylabel = f"Depth below core top ({unit})"
        elif datum == "elevation":
            ylabel = f"Elevation ({unit}): core-top elevation minus depth"
        else:
            ylabel = f"Depth below {short_name(datum, 16)} ({unit}), flattened on it"
        ax.set_ylabel(ylabel, fontsize=8)
        where = "by distance" if spacing == "distance" else "evenly spaced"
        xlabel = (
            f"Cores within {_distance_label(result, max_distance_m)} of transect "
            f"{short_name(tr.transect, 16)}, in order along it (landward on the left), {where}"
        )
        if left_out:
            xlabel += f"; {len(left_out)} without a pick of {short_name(datum, 16)} left out"
        xl = ax.set_xlabel(xlabel, fontsize=8)
        title = ax.set_title(
            f"Core correlation panel along {short_name(tr.transect, 16)}: {len(chosen)} cores",
            loc="left",
            fontsize=10,
        )
        fit_text(title, ax.figure.get_figwidth() * ax.figure.dpi * 0.88, renderer)
        fit_text(xl, ax.figure.get_figwidth() * ax.figure.dpi * 0.9, renderer)
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
        ends.sort(key=lambda e: e[0])
        surface_labels(
            ax,
            [e[0] for e in ends],
            [short_name(e[1], 14) + (" (eros.)" if e[2].erosional else "") for e in ends],
            colors=[e[3] for e in ends],
            fontsize=6.5,
        )

        handles = [
            Patch(facecolor=b.color, edgecolor=EDGE_COLOR, linewidth=0.4) for b in scheme.belts
        ]
        labels = [short_name(b.label or b.id, 26) for b in scheme.belts]
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
            "surface joined past a core without it",
            f"possible break ({flagged} here)",
        ]
        ax.legend(
            handles,
            labels,
            loc="upper left",
            # below the core names and the axis label (about 0.7 inch)
            bbox_to_anchor=(0.0, -0.7 * ax.figure.dpi / ax.get_window_extent(renderer).height),
            bbox_transform=ax.transAxes,
            ncol=3,
            frameon=False,
            fontsize=7.5,
            borderaxespad=0.0,
            handlelength=1.8,
            columnspacing=1.2,
            labelspacing=0.3,
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
