"""The depositional surface of the forward model: a ramp on a square region.

The region is a square in a projected CRS, aligned with easting and northing. The
ramp dips towards ``dip_azimuth_deg`` (compass degrees, clockwise from north) with a
gradient in m/km. Along strike, an optional sinusoid of elevation makes lobes
(higher ground, the shoreline further basinward) and embayments (lower ground, the
shoreline further landward); an optional subsidence rate grows linearly basinward
from zero at the most landward corner.

Two local coordinates are used throughout: ``dip_m`` (distance basinward from the
region's centre) and ``strike_m`` (distance along strike, 90 degrees clockwise of
the dip direction, from the centre).

Examples
--------
>>> r = Ramp(gradient_m_per_km=2.0)
>>> e, n = r.centre
>>> float(r.initial_elevation(e + 1000.0 * r.dip_vector[0], n + 1000.0 * r.dip_vector[1]))
-2.0
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pyproj
import shapely

from ..errors import InputError, Problem

__all__ = ["DEFAULT_CRS", "Ramp"]

DEFAULT_CRS = "EPSG:32631"
"""WGS 84 / UTM zone 31N: the default projected CRS of synthetic basins."""


@dataclass(frozen=True)
class Ramp:
    """A planar ramp with optional along-strike relief and basinward subsidence.

    Parameters
    ----------
    origin_easting, origin_northing : float
        South-west corner of the square region, metres in ``crs``.
    size_m : float
        Side of the square region, metres.
    crs : str
        A projected CRS (anything :func:`pyproj.CRS.from_user_input` accepts).
    dip_azimuth_deg : float
        Direction the surface dips towards (basinward), degrees clockwise from north.
    gradient_m_per_km : float
        Regional gradient; its tangent is ``gradient_m_per_km / 1000``.
    centre_elevation_m : float
        Initial elevation at the region's centre, m above the sea-level datum.
    relief_amplitude_m : float
        Amplitude of the along-strike sinusoid of elevation (0 for a planar ramp).
    relief_wavelength_m : float
        Its wavelength along strike.
    relief_phase_deg : float
        Its phase at the region's centre.
    subsidence_m_per_kyr_per_km : float
        Subsidence rate per km basinward of the most landward corner (0 for none).
    """

    origin_easting: float = 500_000.0
    origin_northing: float = 6_200_000.0
    size_m: float = 40_000.0
    crs: str = DEFAULT_CRS
    dip_azimuth_deg: float = 90.0
    gradient_m_per_km: float = 1.5
    centre_elevation_m: float = 0.0
    relief_amplitude_m: float = 0.0
    relief_wavelength_m: float = 16_000.0
    relief_phase_deg: float = 0.0
    subsidence_m_per_kyr_per_km: float = 0.0

    def __post_init__(self) -> None:
        problems = []

        def bad(name, value, message, hint=None):
            problems.append(Problem(None, None, name, value, message, hint))

        for name in (
            "origin_easting",
            "origin_northing",
            "dip_azimuth_deg",
            "centre_elevation_m",
            "relief_phase_deg",
        ):
            if not math.isfinite(getattr(self, name)):
                bad(name, getattr(self, name), "is not a finite number")
        if not (math.isfinite(self.size_m) and self.size_m > 0):
            bad("size_m", self.size_m, "must be a positive length in metres")
        if not (math.isfinite(self.gradient_m_per_km) and self.gradient_m_per_km > 0):
            bad(
                "gradient_m_per_km",
                self.gradient_m_per_km,
                "must be a positive gradient",
                "real shelves are about 0.5-3 m/km",
            )
        if not (math.isfinite(self.relief_amplitude_m) and self.relief_amplitude_m >= 0):
            bad("relief_amplitude_m", self.relief_amplitude_m, "must be >= 0 metres")
        if not (math.isfinite(self.relief_wavelength_m) and self.relief_wavelength_m > 0):
            bad(
                "relief_wavelength_m",
                self.relief_wavelength_m,
                "must be a positive length in metres",
            )
        if not (
            math.isfinite(self.subsidence_m_per_kyr_per_km)
            and self.subsidence_m_per_kyr_per_km >= 0
        ):
            bad("subsidence_m_per_kyr_per_km", self.subsidence_m_per_kyr_per_km, "must be >= 0")
        try:
            crs = pyproj.CRS.from_user_input(self.crs)
            if not crs.is_projected:
                bad(
                    "crs",
                    self.crs,
                    "is not a projected CRS",
                    "synthetic basins are laid out in metres, e.g. 'EPSG:32631'",
                )
        except pyproj.exceptions.CRSError:
            bad("crs", self.crs, "is not a CRS pyproj knows")
        if problems:
            raise InputError(problems)

    @property
    def tan_slope(self) -> float:
        """Tangent of the regional slope (dimensionless)."""
        return self.gradient_m_per_km / 1000.0

    @property
    def dip_vector(self) -> tuple[float, float]:
        """Unit vector (easting, northing) pointing basinward."""
        a = math.radians(self.dip_azimuth_deg)
        return math.sin(a), math.cos(a)

    @property
    def strike_vector(self) -> tuple[float, float]:
        """Unit vector (easting, northing) along strike, 90 degrees clockwise of dip."""
        a = math.radians(self.dip_azimuth_deg)
        return math.cos(a), -math.sin(a)

    @property
    def centre(self) -> tuple[float, float]:
        h = self.size_m / 2.0
        return self.origin_easting + h, self.origin_northing + h

    @property
    def region(self) -> shapely.Polygon:
        """The square region as a polygon in ``crs``."""
        e0, n0, s = self.origin_easting, self.origin_northing, self.size_m
        return shapely.box(e0, n0, e0 + s, n0 + s)

    @property
    def half_extent_m(self) -> float:
        """Half the region's extent along dip (equal to that along strike)."""
        a = math.radians(self.dip_azimuth_deg)
        return self.size_m / 2.0 * (abs(math.sin(a)) + abs(math.cos(a)))

    def local(self, easting, northing) -> tuple[np.ndarray, np.ndarray]:
        """(dip_m, strike_m) of points, relative to the region's centre."""
        ce, cn = self.centre
        de = np.asarray(easting, dtype=float) - ce
        dn = np.asarray(northing, dtype=float) - cn
        (ue, un), (ve, vn) = self.dip_vector, self.strike_vector
        return de * ue + dn * un, de * ve + dn * vn

    def to_map(self, dip_m, strike_m) -> tuple[np.ndarray, np.ndarray]:
        """(easting, northing) of local coordinates."""
        ce, cn = self.centre
        (ue, un), (ve, vn) = self.dip_vector, self.strike_vector
        u = np.asarray(dip_m, dtype=float)
        v = np.asarray(strike_m, dtype=float)
        return ce + u * ue + v * ve, cn + u * un + v * vn

    def initial_elevation(self, easting, northing) -> np.ndarray:
        """Elevation (m above datum) of the surface at the start of the history."""
        u, v = self.local(easting, northing)
        z = self.centre_elevation_m - self.tan_slope * u
        if self.relief_amplitude_m > 0:
            phase = math.radians(self.relief_phase_deg)
            z = z + self.relief_amplitude_m * np.sin(
                2.0 * math.pi * v / self.relief_wavelength_m + phase
            )
        return z

    def subsidence_rate(self, easting, northing) -> np.ndarray:
        """Subsidence rate (m/kyr) at points: zero at the most landward corner."""
        u, _ = self.local(easting, northing)
        return self.subsidence_m_per_kyr_per_km * (u + self.half_extent_m) / 1000.0

    def dip_line(self, strike_m: float) -> shapely.LineString:
        """The dip line at ``strike_m`` along strike, clipped to the region.

        It runs from its landward end to its basinward end; an empty LineString when
        the offset misses the region.

        Examples
        --------
        >>> r = Ramp(size_m=10_000.0)
        >>> round(r.dip_line(0.0).length, 6)
        10000.0
        """
        r = self.half_extent_m * 1.01 + 1.0
        e, n = self.to_map(np.array([-r, r]), np.array([strike_m, strike_m]))
        line = shapely.LineString(np.column_stack([e, n]))
        clipped = shapely.intersection(line, self.region)
        if clipped.is_empty or clipped.geom_type != "LineString" or clipped.length == 0:
            return shapely.LineString()
        coords = np.asarray(clipped.coords)
        u, _ = self.local(coords[:, 0], coords[:, 1])
        if u[0] > u[-1]:
            coords = coords[::-1]
        return shapely.LineString(coords)
