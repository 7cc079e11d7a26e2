"""The tracked boundary (the shoreline by default) and its uncertainty band.

The shoreline of a slice is the contour of the mean latent field at the tracked
threshold, clipped to the mapped area. Its band is the region where the probability
of lying on the distal side of the boundary is between 0.1 and 0.9: outside it, the
side is known with at least 90 % probability under the model.

Examples
--------
>>> import numpy as np
>>> from paleomap.grid import make_grid
>>> from paleomap.belts import node_field
>>> g = make_grid(np.array([0.0, 1000, 0, 1000]), np.array([0.0, 0, 1000, 1000]),
...               cell_size=50.0, margin=0.0)
>>> latent = np.broadcast_to((g.easting - 500.0) / 500.0, g.shape).copy()
>>> line = shoreline(node_field(latent, g), 0.0, g.area)
>>> round(line.length)
1000
"""

from __future__ import annotations

import numpy as np
import shapely

from .belts import NodeField, node_field

__all__ = ["BAND_LEVELS", "distal_region", "shoreline", "shoreline_band"]

BAND_LEVELS = (0.1, 0.9)
"""Probabilities of the distal side that bound the shoreline band."""


def shoreline(nodes: NodeField, threshold: float, area) -> shapely.MultiLineString:
    """The contour of the latent field at ``threshold``, clipped to ``area``.

    Returns an empty MultiLineString when the boundary does not cross the mapped area
    (for example when every core of the slice logs the same side of it).
    """
    gen = nodes.contours()
    lines = [shapely.LineString(p) for p in gen.lines(threshold) if len(p) >= 2]
    if not lines:
        return shapely.MultiLineString()
    merged = shapely.line_merge(shapely.MultiLineString(lines))
    clipped = shapely.intersection(merged, area)
    return _lineal(clipped)


def _lineal(geom) -> shapely.MultiLineString:
    parts = [g for g in shapely.get_parts(geom) if g.geom_type == "LineString" and g.length > 0]
    if not parts:
        return shapely.MultiLineString()
    merged = shapely.line_merge(shapely.MultiLineString(parts))
    if merged.geom_type == "LineString":
        return shapely.MultiLineString([merged])
    return merged


def shoreline_band(distal_probability: np.ndarray, grid, levels=BAND_LEVELS):
    """The polygon where the probability of the distal side lies between ``levels``.

    Parameters
    ----------
    distal_probability : numpy.ndarray, shape grid.shape
        Probability, per cell, of lying on the distal side of the tracked boundary.
    grid : paleomap.grid.Grid
    levels : (float, float)
    """
    gen = node_field(distal_probability, grid).contours()
    points, offsets = gen.filled(levels[0], levels[1])
    polys = []
    for pts, off in zip(points, offsets, strict=True):
        rings = [pts[off[i] : off[i + 1]] for i in range(len(off) - 1)]
        polys.append(shapely.Polygon(rings[0], rings[1:]))
    if not polys:
        return shapely.MultiPolygon()
    geom = shapely.union_all(shapely.make_valid(np.array(polys, dtype=object)))
    geom = shapely.intersection(geom, grid.area)
    parts = [g for g in shapely.get_parts(geom) if g.geom_type == "Polygon"]
    return shapely.MultiPolygon(parts) if parts else shapely.MultiPolygon()


def distal_region(polygons, boundary: int):
    """The union of the belts on the distal side of ``boundary`` (ranks >= boundary)."""
    parts = [p for p in polygons[boundary:] if not p.is_empty]
    return shapely.union_all(parts) if parts else shapely.MultiPolygon()
