"""Map furniture: extent, grid coordinates with the CRS named, scale bar, north arrow.

Map axes keep an equal aspect (a metre is as long east as north). Coordinates are
labelled in kilometres of the working CRS, whose name is written beside them. The
scale bar, north arrow and legend are placed in a column to the right of the map, so
they never hide data. They are placed relative to the box the map axes was given
(:func:`allotted_transform`), not to the map itself, which an equal aspect makes
shorter or narrower: a wide, low map keeps the column's full height for its legend.
The north arrow points to grid north of the working CRS (the top of the map); in a
projected CRS this differs from true north only by the grid convergence.

Examples
--------
>>> from paleomap.figures.canvas import new_figure
>>> ax = new_figure(6, 4).add_subplot()
>>> set_map_extent(ax, (0.0, 0.0, 20_000.0, 10_000.0))
>>> nice_length(20_000.0 * 0.25)
5000.0
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from ..palette import EDGE_COLOR

if TYPE_CHECKING:
    from matplotlib.axes import Axes

__all__ = [
    "MAP_RIGHT",
    "allotted_transform",
    "coordinate_labels",
    "crs_label",
    "nice_length",
    "north_arrow",
    "scale_bar",
    "set_map_extent",
    "side_legend",
]

MAP_RIGHT = 0.70
"""Right edge (figure fraction) of a map axes made by paleomap; the column to its right
holds the legend, the scale bar and the north arrow."""


def nice_length(x: float) -> float:
    """Round down to 1, 2 or 5 times a power of ten (a scale bar's length).

    >>> nice_length(3700.0), nice_length(0.0)
    (2000.0, 0.0)
    """
    if not x > 0 or not math.isfinite(x):
        return 0.0
    p = 10.0 ** math.floor(math.log10(x))
    for m in (5.0, 2.0, 1.0):
        if x >= m * p:
            return m * p
    return p


def allotted_transform(ax: Axes):
    """Transform from fractions of the box ``ax`` was given (before an equal aspect
    shrank it) to display coordinates: (0, 0) its lower left, (1, 1) its upper right.

    Examples
    --------
    >>> from paleomap.figures.canvas import new_figure
    >>> ax = new_figure(4, 2).add_axes((0.1, 0.1, 0.5, 0.8))
    >>> set_map_extent(ax, (0, 0, 10, 10))
    >>> allotted_transform(ax).transform((1.0, 1.0)).round(1).tolist()
    [360.0, 270.0]
    """
    from matplotlib.transforms import BboxTransformTo, TransformedBbox

    box = ax.get_position(original=True)
    return BboxTransformTo(TransformedBbox(box, ax.figure.transFigure))


def set_map_extent(ax: Axes, bounds, pad_fraction: float = 0.02) -> None:
    """Limits from ``(west, south, east, north)`` with a small pad; equal aspect."""
    w, s, e, n = (float(v) for v in bounds)
    pad = pad_fraction * max(e - w, n - s, 1.0)
    ax.set_xlim(w - pad, e + pad)
    ax.set_ylim(s - pad, n + pad)
    ax.set_aspect("equal", adjustable="box")


def crs_label(crs) -> str:
    """Short name of a CRS for a map: its name and EPSG code where it has one.

    >>> import pyproj
    >>> crs_label(pyproj.CRS.from_user_input("EPSG:32631"))
    'WGS 84 / UTM zone 31N (EPSG:32631)'
    """
    if crs is None:
        return "unknown CRS"
    import pyproj

    crs = pyproj.CRS.from_user_input(crs)
    code = crs.to_epsg()
    return f"{crs.name} (EPSG:{code})" if code else crs.name


def coordinate_labels(ax: Axes, crs) -> None:
    """Grid coordinates in km on both axes, the CRS named under the map."""
    from matplotlib.ticker import FuncFormatter, MaxNLocator

    fmt = FuncFormatter(lambda v, _pos: f"{v / 1000:g}")
    for axis in (ax.xaxis, ax.yaxis):
        axis.set_major_formatter(fmt)
        axis.set_major_locator(MaxNLocator(nbins=6, steps=[1, 2, 2.5, 5, 10]))
    ax.tick_params(labelsize=7.5, length=3, width=0.6)
    ax.yaxis.set_tick_params(rotation=90)
    for label in ax.get_yticklabels():
        label.set_verticalalignment("center")
    ax.set_xlabel(f"Easting (km), {crs_label(crs)}", fontsize=8)
    ax.set_ylabel("Northing (km)", fontsize=8)


def scale_bar(ax: Axes, *, anchor=(1.04, 0.0), fraction: float = 0.3) -> float:
    """A scale bar in km beside the map (lower part of the right column by default).

    Returns the bar's length in metres: a round number at most ``fraction`` of the map
    width.
    """
    from matplotlib.font_manager import FontProperties
    from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar

    x0, x1 = ax.get_xlim()
    length = nice_length(fraction * abs(x1 - x0))
    if length <= 0:
        return 0.0
    label = f"{length / 1000:g} km" if length >= 1000 else f"{length:g} m"
    bar = AnchoredSizeBar(
        ax.transData,
        length,
        label,
        loc="lower left",
        bbox_to_anchor=anchor,
        bbox_transform=allotted_transform(ax),
        frameon=False,
        pad=0.0,
        borderpad=0.0,
        sep=3,
        size_vertical=abs(ax.get_ylim()[1] - ax.get_ylim()[0]) * 0.008,
        color=EDGE_COLOR,
        fontproperties=FontProperties(size=7.5),
    )
    bar.set_clip_on(False)
    ax.add_artist(bar)
    return length


def north_arrow(ax: Axes, *, at=(1.08, 0.10), height: float = 0.10) -> None:
    """An arrow pointing to grid north with an ``N`` above it, beside the map."""
    x, y = at
    box = allotted_transform(ax)
    ax.annotate(
        "",
        xy=(x, y + height),
        xytext=(x, y),
        xycoords=box,
        arrowprops=dict(arrowstyle="-|>,head_width=0.35,head_length=0.7", color=EDGE_COLOR, lw=1.2),
        annotation_clip=False,
    )
    ax.text(
        x,
        y + height + 0.01,
        "N",
        transform=box,
        ha="center",
        va="bottom",
        fontsize=9,
        fontweight="bold",
        color=EDGE_COLOR,
        clip_on=False,
    )


def side_legend(ax: Axes, handles, labels, *, title: str | None = None, anchor=(1.03, 1.0)):
    """A legend in the column to the right of the map, top-aligned with it."""
    leg = ax.legend(
        handles,
        labels,
        title=title,
        loc="upper left",
        bbox_to_anchor=anchor,
        bbox_transform=allotted_transform(ax),
        borderaxespad=0.0,
        frameon=False,
        fontsize=7.5,
        title_fontsize=8,
        handlelength=1.6,
        handleheight=1.1,
        labelspacing=0.45,
        alignment="left",
    )
    return leg
