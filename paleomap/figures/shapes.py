"""Shapely geometries drawn on matplotlib axes.

Polygons become one compound path each (exterior and holes together, so holes stay
open under the even-odd rule); lines become line collections. Empty geometries draw
nothing. matplotlib is imported inside the functions so ``import paleomap`` stays light.

Examples
--------
>>> import shapely
>>> from matplotlib.figure import Figure
>>> ax = Figure().add_subplot()
>>> patch = draw_polygons(ax, shapely.box(0, 0, 1, 1), facecolor="#d9b56e")
>>> patch is not None
True
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
import shapely

if TYPE_CHECKING:
    from matplotlib.axes import Axes

__all__ = ["draw_lines", "draw_polygons", "polygon_path"]


def _polygons(geom) -> list:
    if geom is None or geom.is_empty:
        return []
    return [g for g in shapely.get_parts(geom) if g.geom_type == "Polygon" and not g.is_empty]


def _lines(geom) -> list:
    if geom is None or geom.is_empty:
        return []
    out = []
    for g in shapely.get_parts(geom):
        if g.geom_type in ("LineString", "LinearRing"):
            out.append(g)
        elif g.geom_type == "Polygon":
            out.append(g.exterior)
            out.extend(g.interiors)
    return out


def polygon_path(geom):
    """One matplotlib ``Path`` for every polygon part of ``geom`` (holes included).

    Parameters
    ----------
    geom : shapely geometry
        Polygon, MultiPolygon or a collection holding polygons.

    Returns
    -------
    matplotlib.path.Path or None
        None when ``geom`` has no polygon area.

    Examples
    --------
    >>> import shapely
    >>> float(polygon_path(shapely.box(0, 0, 2, 1)).get_extents().width)
    2.0
    """
    from matplotlib.path import Path

    vertices, codes = [], []
    for poly in _polygons(geom):
        for ring in (poly.exterior, *poly.interiors):
            xy = np.asarray(ring.coords)[:, :2]
            if len(xy) < 3:
                continue
            vertices.append(xy)
            c = np.full(len(xy), Path.LINETO, dtype=Path.code_type)
            c[0] = Path.MOVETO
            c[-1] = Path.CLOSEPOLY
            codes.append(c)
    if not vertices:
        return None
    return Path(np.concatenate(vertices), np.concatenate(codes))


def draw_polygons(ax: Axes, geom, **style):
    """Fill the polygons of ``geom`` on ``ax``.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    geom : shapely geometry
    **style
        ``PathPatch`` properties (facecolor, edgecolor, linewidth, alpha, hatch, zorder).

    Returns
    -------
    matplotlib.patches.PathPatch or None
        The patch added, or None for an empty geometry.

    Examples
    --------
    >>> import shapely
    >>> from matplotlib.figure import Figure
    >>> ax = Figure().add_subplot()
    >>> draw_polygons(ax, shapely.Polygon()) is None
    True
    """
    from matplotlib.patches import PathPatch

    path = polygon_path(geom)
    if path is None:
        return None
    style.setdefault("linewidth", 0)
    patch = PathPatch(path, **style)
    # ax.add_patch would walk every vertex in Python to update the data limits (a
    # tenth of a second for a detailed belt); the geometry's bounds say the same.
    patch.set_clip_path(ax.patch)
    ax.add_artist(patch)
    x0, y0, x1, y1 = geom.bounds
    ax.update_datalim([(x0, y0), (x1, y1)])
    ax.autoscale_view()
    return patch


def draw_lines(ax: Axes, geom, **style):
    """Draw the lines of ``geom`` (or the rings of its polygons) on ``ax``.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    geom : shapely geometry
    **style
        ``LineCollection`` properties (colors, linewidths, linestyles, zorder, label).

    Returns
    -------
    matplotlib.collections.LineCollection or None
        None for an empty geometry.

    Examples
    --------
    >>> import shapely
    >>> from matplotlib.figure import Figure
    >>> ax = Figure().add_subplot()
    >>> len(draw_lines(ax, shapely.LineString([(0, 0), (1, 1)])).get_segments())
    1
    """
    from matplotlib.collections import LineCollection

    parts = [np.asarray(g.coords)[:, :2] for g in _lines(geom)]
    if not parts:
        return None
    lc = LineCollection(parts, **style)
    ax.add_collection(lc)
    return lc
