"""The square region a bench basin lies in, and its dip and strike coordinates.

Every family is laid out on a square of a projected CRS (metres) and described in two
local coordinates: ``dip_m``, the distance basinward from the square's centre along
the regional dip, and ``strike_m``, the distance along strike (90 degrees clockwise
of the dip direction). The same square can be given to paleomap in geographic
coordinates (EPSG:4326) to measure what the change of CRS does to the results.

Examples
--------
>>> r = Region(dip_azimuth_deg=90.0)
>>> e, n = r.world(1000.0, 0.0)
>>> round(float(e) - r.centre[0], 6), round(float(n) - r.centre[1], 6)
(1000.0, 0.0)
>>> [round(float(v), 6) for v in r.local(e, n)]
[1000.0, 0.0]
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pyproj

__all__ = ["GEOGRAPHIC_CRS", "Region"]

GEOGRAPHIC_CRS = "EPSG:4326"
"""The geographic CRS the bench gives the same basins in (WGS 84 longitude, latitude)."""


@dataclass(frozen=True)
class Region:
    """A square in a projected CRS with a regional dip direction.

    Parameters
    ----------
    west, south : float
        South-west corner, metres in ``crs``. The default lies on the central
        meridian of UTM zone 32N, where the projection's scale is closest to true.
    size_m : float
        Side of the square.
    dip_azimuth_deg : float
        Basinward direction, degrees clockwise from north.
    crs : str
        The projected CRS of the basin.
    """

    west: float = 480_000.0
    south: float = 5_400_000.0
    size_m: float = 40_000.0
    dip_azimuth_deg: float = 90.0
    crs: str = "EPSG:32632"

    @property
    def centre(self) -> tuple[float, float]:
        """Easting and northing of the square's centre."""
        return self.west + self.size_m / 2, self.south + self.size_m / 2

    @property
    def dip_vector(self) -> np.ndarray:
        """Unit (east, north) vector pointing basinward."""
        a = math.radians(self.dip_azimuth_deg)
        return np.array([math.sin(a), math.cos(a)])

    @property
    def strike_vector(self) -> np.ndarray:
        """Unit (east, north) vector 90 degrees clockwise of the dip."""
        d = self.dip_vector
        return np.array([d[1], -d[0]])

    def local(self, easting, northing) -> tuple[np.ndarray, np.ndarray]:
        """(dip_m, strike_m) of points given by easting and northing."""
        ce, cn = self.centre
        de = np.asarray(easting, dtype=float) - ce
        dn = np.asarray(northing, dtype=float) - cn
        d, s = self.dip_vector, self.strike_vector
        return de * d[0] + dn * d[1], de * s[0] + dn * s[1]

    def world(self, dip_m, strike_m) -> tuple[np.ndarray, np.ndarray]:
        """Easting and northing of points given by (dip_m, strike_m)."""
        ce, cn = self.centre
        d, s = self.dip_vector, self.strike_vector
        dip_m = np.asarray(dip_m, dtype=float)
        strike_m = np.asarray(strike_m, dtype=float)
        return ce + dip_m * d[0] + strike_m * s[0], cn + dip_m * d[1] + strike_m * s[1]

    def nodes(self, spacing_m: float) -> tuple[np.ndarray, np.ndarray]:
        """Easting and northing vectors of a square lattice over the region."""
        count = int(round(self.size_m / spacing_m)) + 1
        e = self.west + np.linspace(0.0, self.size_m, count)
        n = self.south + np.linspace(0.0, self.size_m, count)
        return e, n

    def to_geographic(self, easting, northing) -> tuple[np.ndarray, np.ndarray]:
        """Longitude and latitude (degrees, EPSG:4326) of projected points."""
        t = pyproj.Transformer.from_crs(self.crs, GEOGRAPHIC_CRS, always_xy=True)
        lon, lat = t.transform(np.asarray(easting, float), np.asarray(northing, float))
        return np.asarray(lon), np.asarray(lat)
