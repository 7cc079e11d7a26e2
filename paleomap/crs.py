"""paleomap's CRS policy: which coordinate systems it accepts and where it measures.

* Every CRS is read with ``pyproj.CRS.from_user_input``; a missing CRS is an error (the
  project file's reader says so).
* paleomap measures in metres: a projected CRS in metres is its own working CRS (its
  horizontal part, for a compound CRS); a geographic CRS is projected to a local
  azimuthal equidistant CRS centred on the cores (:func:`working_crs_for`); anything
  else is refused with a reason (:func:`crs_problem`).
* Transformations use ``always_xy=True`` (easting/longitude first) everywhere.

Examples
--------
>>> working_crs_for(pyproj.CRS("EPSG:32631")) == pyproj.CRS("EPSG:32631")
True
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pyproj
from pyproj.crs import CoordinateOperation, ProjectedCRS

__all__ = ["crs_problem", "delivery_crs_for", "working_crs_for"]


def working_crs_for(
    crs: pyproj.CRS, x: Sequence[float] = (), y: Sequence[float] = ()
) -> pyproj.CRS:
    """The projected CRS in which paleomap measures a project.

    A projected CRS is its own working CRS (its horizontal part, for a compound CRS). A
    geographic CRS gets a local azimuthal equidistant projection on the same datum,
    centred on the mean position of the given points (``x`` longitudes, ``y``
    latitudes, in degrees), so distances from the centre are true and distances across
    a region of a few hundred kilometres are within a small fraction of a percent.

    Examples
    --------
    >>> w = working_crs_for(pyproj.CRS("EPSG:4326"), [10.0, 12.0], [50.0, 52.0])
    >>> w.is_projected, w.coordinate_operation.method_name
    (True, 'Azimuthal Equidistant')
    """
    horizontal = _horizontal(crs)
    if not horizontal.is_geographic:
        return horizontal
    lon = np.radians(np.asarray(x, dtype=float))
    lat = np.radians(np.asarray(y, dtype=float))
    if lon.size == 0:
        raise ValueError("a geographic CRS needs core positions to centre the working CRS")
    # Mean of unit vectors: a centre that is right across the antimeridian too.
    vx = np.mean(np.cos(lat) * np.cos(lon))
    vy = np.mean(np.cos(lat) * np.sin(lon))
    vz = np.mean(np.sin(lat))
    lat0 = float(np.degrees(np.arctan2(vz, np.hypot(vx, vy))))
    lon0 = float(np.degrees(np.arctan2(vy, vx)))
    # EPSG method 1125 (true azimuthal equidistant); pyproj's AzimuthalEquidistantConversion
    # builds EPSG 9832, the "modified" approximation meant for small islands.
    conversion = CoordinateOperation.from_json_dict(_aeqd_conversion(lat0, lon0))
    return ProjectedCRS(
        conversion=conversion,
        geodetic_crs=horizontal.geodetic_crs,
        name=f"paleomap local azimuthal equidistant ({lat0:.4f}, {lon0:.4f})",
    )


def delivery_crs_for(crs: pyproj.CRS, output: pyproj.CRS | None = None) -> pyproj.CRS:
    """The CRS a project's layers and rasters are delivered in.

    ``output`` (``[output] crs``) if given, else the project CRS; its horizontal part,
    and, where pyproj identifies it with a registered CRS (confidence 90 % or more), that
    registered CRS, so the deliverables carry an authority code (e.g. EPSG) that every GIS
    matches with the user's other data. A geographic project is mapped in a local working
    CRS (:func:`working_crs_for`) but delivered in its own geographic CRS.

    Examples
    --------
    >>> delivery_crs_for(pyproj.CRS("EPSG:4326")).to_epsg()
    4326
    >>> delivery_crs_for(pyproj.CRS("+proj=utm +zone=31 +datum=WGS84 +units=m")).to_epsg()
    32631
    >>> delivery_crs_for(pyproj.CRS("EPSG:4326"), pyproj.CRS("EPSG:3035")).to_epsg()
    3035
    """
    chosen = _horizontal(output if output is not None else crs)
    authority = chosen.to_authority(min_confidence=90)
    if authority is None:
        return chosen
    return pyproj.CRS.from_authority(*authority)


def _aeqd_conversion(lat0: float, lon0: float) -> dict:
    def param(name, code, value, unit):
        return {
            "name": name,
            "value": value,
            "unit": unit,
            "id": {"authority": "EPSG", "code": code},
        }

    return {
        "type": "Conversion",
        "name": "paleomap local azimuthal equidistant",
        "method": {"name": "Azimuthal Equidistant", "id": {"authority": "EPSG", "code": 1125}},
        "parameters": [
            param("Latitude of natural origin", 8801, round(lat0, 6), "degree"),
            param("Longitude of natural origin", 8802, round(lon0, 6), "degree"),
            param("False easting", 8806, 0.0, "metre"),
            param("False northing", 8807, 0.0, "metre"),
        ],
    }


def _horizontal(crs: pyproj.CRS) -> pyproj.CRS:
    if crs.is_compound:
        for sub in crs.sub_crs_list:
            if sub.is_projected or sub.is_geographic:
                return sub
    return crs


def crs_problem(crs: pyproj.CRS, projected_in_metres: bool = True) -> tuple[str, str] | None:
    """(message, hint) when paleomap cannot work in ``crs``, else None."""
    horizontal = _horizontal(crs)
    if horizontal.is_geographic:
        return None
    if not horizontal.is_projected:
        return (
            f"is a {crs.type_name.removesuffix(' CRS')} CRS, neither geographic nor projected",
            "give a projected CRS in metres or a geographic CRS",
        )
    if not projected_in_metres:
        # Deliverables may be in any projected unit: lengths and areas are measured in
        # the working CRS before the layers are transformed.
        return None
    units = {a.unit_name for a in horizontal.axis_info}
    factors = {a.unit_conversion_factor for a in horizontal.axis_info}
    if factors != {1.0}:
        return (
            f"is projected in {', '.join(sorted(units))}, not metres",
            "paleomap measures in metres: give the cores in a metre-based projected CRS "
            "or in a geographic CRS (it is then projected locally)",
        )
    return None
