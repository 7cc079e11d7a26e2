"""The mapping grid and the mapped area.

The mapped area is the user's area-of-interest polygon, or the convex hull of the cores
grown by a margin. The grid covers the area's bounding box at ``cell_size`` (working-CRS
metres), snapped to whole multiples of the cell size so that rasters of different builds
line up. Rows run north to south, as in a GeoTIFF.

Examples
--------
>>> import numpy as np
>>> g = make_grid(np.array([0.0, 1000.0, 0.0]), np.array([0.0, 0.0, 1000.0]), cell_size=100.0,
...               margin=0.0)
>>> g.shape
(10, 10)
>>> int(g.mask.sum()) > 40
True
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np
import shapely
from affine import Affine

from .errors import InputError, Problem
from .spacing import mean_core_spacing

__all__ = ["MAX_GRID_CELLS", "Grid", "default_margin", "make_grid", "mean_core_spacing"]

log = logging.getLogger(__name__)

MAX_GRID_CELLS = 50_000_000
"""The largest grid paleomap allocates (cells of the bounding box)."""


@dataclass(frozen=True, eq=False)
class Grid:
    """A regular grid over the mapped area.

    Parameters
    ----------
    west, north : float
        Outer edges of the top-left cell.
    cell_size : float
        Square cell edge in working-CRS metres.
    n_rows, n_cols : int
    area : shapely geometry
        The mapped area (Polygon or MultiPolygon).
    mask : numpy.ndarray of bool, shape (n_rows, n_cols)
        True where the cell centre lies inside the mapped area.
    crs : pyproj.CRS or None
    """

    west: float
    north: float
    cell_size: float
    n_rows: int
    n_cols: int
    area: object
    mask: np.ndarray
    crs: object = None

    @property
    def shape(self) -> tuple[int, int]:
        return self.n_rows, self.n_cols

    @property
    def transform(self) -> Affine:
        """The affine transform of the grid's cells (rasterio convention)."""
        return Affine(self.cell_size, 0.0, self.west, 0.0, -self.cell_size, self.north)

    @property
    def east(self) -> float:
        return self.west + self.n_cols * self.cell_size

    @property
    def south(self) -> float:
        return self.north - self.n_rows * self.cell_size

    @property
    def easting(self) -> np.ndarray:
        """Cell-centre eastings, one per column."""
        return self.west + (np.arange(self.n_cols) + 0.5) * self.cell_size

    @property
    def northing(self) -> np.ndarray:
        """Cell-centre northings, one per row (north to south)."""
        return self.north - (np.arange(self.n_rows) + 0.5) * self.cell_size

    def cell_centres(self) -> tuple[np.ndarray, np.ndarray]:
        """Eastings and northings of every cell centre, row by row (C order)."""
        e, n = np.meshgrid(self.easting, self.northing)
        return e.ravel(), n.ravel()

    def cell_area_km2(self) -> float:
        return self.cell_size**2 / 1e6

    def index_of(self, easting, northing) -> tuple[np.ndarray, np.ndarray]:
        """Row and column of the cells holding the given points (may fall outside)."""
        col = np.floor((np.asarray(easting) - self.west) / self.cell_size).astype(int)
        row = np.floor((self.north - np.asarray(northing)) / self.cell_size).astype(int)
        return row, col


def default_margin(easting: np.ndarray, northing: np.ndarray) -> float:
    """Default margin around the core hull: half a mean core spacing."""
    s = mean_core_spacing(easting, northing)
    return 0.5 * s if np.isfinite(s) else 0.0


def make_grid(
    easting: np.ndarray,
    northing: np.ndarray,
    *,
    cell_size: float,
    margin: float | None = None,
    area=None,
    crs=None,
    max_cells: int = MAX_GRID_CELLS,
) -> Grid:
    """Build the mapping grid.

    Parameters
    ----------
    easting, northing : numpy.ndarray
        Core positions in working-CRS metres.
    cell_size : float
        Cell edge in metres.
    margin : float or None
        Growth of the core hull in metres; None for half a mean core spacing. Ignored
        when ``area`` is given.
    area : shapely geometry or None
        The user's area of interest (in working-CRS coordinates).
    crs : pyproj.CRS or None
        Recorded on the grid.
    max_cells : int
        Refuse grids larger than this, naming a cell size that would fit.

    Raises
    ------
    InputError
        When the grid would be too large, or the area is empty.
    """
    easting = np.asarray(easting, dtype=float)
    northing = np.asarray(northing, dtype=float)
    if area is None:
        if margin is None:
            margin = default_margin(easting, northing)
        pts = shapely.multipoints(np.column_stack([easting, northing]))
        hull = shapely.convex_hull(pts)
        # A point or a line (one core, collinear cores) still needs an area to map.
        grow = max(margin, cell_size) if hull.area == 0 else margin
        area = shapely.buffer(hull, grow, quad_segs=8) if grow > 0 else hull
    area = shapely.make_valid(area)
    if area.is_empty or area.area <= 0:
        raise InputError(
            [
                Problem(
                    "project.toml",
                    None,
                    "grid.area",
                    None,
                    "the mapped area is empty",
                    "give an area polygon that covers the cores, or a positive margin",
                )
            ]
        )
    minx, miny, maxx, maxy = area.bounds
    west = np.floor(minx / cell_size) * cell_size
    east = np.ceil(maxx / cell_size) * cell_size
    south = np.floor(miny / cell_size) * cell_size
    north = np.ceil(maxy / cell_size) * cell_size
    n_cols = max(1, int(round((east - west) / cell_size)))
    n_rows = max(1, int(round((north - south) / cell_size)))
    if n_rows * n_cols > max_cells:
        fit = cell_size * np.sqrt(n_rows * n_cols / max_cells)
        raise InputError(
            [
                Problem(
                    "project.toml",
                    None,
                    "grid.cell_size",
                    cell_size,
                    f"gives a grid of {n_rows} x {n_cols} = {n_rows * n_cols:,} cells, more than "
                    f"the {max_cells:,} paleomap allocates",
                    f"use cell_size = {np.ceil(fit):.0f} or larger",
                )
            ]
        )
    e = west + (np.arange(n_cols) + 0.5) * cell_size
    n = north - (np.arange(n_rows) + 0.5) * cell_size
    ee, nn = np.meshgrid(e, n)
    shapely.prepare(area)
    mask = shapely.contains_xy(area, ee, nn)
    log.debug(
        "grid: %d x %d cells of %.1f m, %d inside the mapped area",
        n_rows,
        n_cols,
        cell_size,
        int(mask.sum()),
    )
    return Grid(float(west), float(north), float(cell_size), n_rows, n_cols, area, mask, crs)
