"""Core spacing, the one length scale the grid, the engines and the figures share.

Two measures, for two uses: :func:`mean_core_spacing` (the square root of the core
hull's area per core: the typical distance between cores over the mapped area, used
for the default margin, the slices' own residual range and the chart's no-record
neighbourhoods) and :func:`nearest_core_spacing` (the median nearest-neighbour
distance: the shortest range a covariance can resolve).

Examples
--------
>>> import numpy as np
>>> e, n = np.array([0.0, 100.0, 0.0, 100.0]), np.array([0.0, 0.0, 100.0, 100.0])
>>> mean_core_spacing(e, n), nearest_core_spacing(e, n)
(50.0, 100.0)
"""

from __future__ import annotations

import numpy as np
import shapely

__all__ = ["mean_core_spacing", "nearest_core_spacing"]


def mean_core_spacing(easting: np.ndarray, northing: np.ndarray) -> float:
    """Mean core spacing: the square root of the core hull's area per core.

    Falls back to the mean nearest-neighbour distance when the hull has no area
    (fewer than three cores, or collinear cores).
    """
    pts = shapely.points(np.column_stack([easting, northing]))
    hull = shapely.convex_hull(shapely.multipoints(pts))
    n = len(easting)
    if hull.area > 0 and n >= 3:
        return float(np.sqrt(hull.area / n))
    if n < 2:
        return float("nan")
    from scipy.spatial import cKDTree

    d, _ = cKDTree(np.column_stack([easting, northing])).query(
        np.column_stack([easting, northing]), k=2
    )
    return float(np.mean(d[:, 1]))


def nearest_core_spacing(easting, northing) -> float:
    """Median distance from each core to its nearest neighbour.

    >>> nearest_core_spacing(np.array([0.0, 1.0, 3.0]), np.zeros(3))
    1.0
    """
    from scipy.spatial import cKDTree

    pts = np.column_stack([easting, northing])
    d, _ = cKDTree(pts).query(pts, k=2)
    return float(np.median(d[:, 1]))
