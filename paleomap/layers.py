"""The deliverable layers: GeoDataFrames and tables with paleomap's field names.

Every layer that varies by slice carries ``slice`` and ``age`` (in the project's age
unit, recorded in ``run_info``), so a GIS can filter or animate it through time.
Units are in the field names (``area_km2``, ``length_km``, ``shift_m``,
``rate_m_per_kyr``). This module only arranges values the pipeline computed; it does
not compute maps or write files.
"""

from __future__ import annotations

import json
from typing import TYPE_CHECKING

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely

from .io.filenames import safe_name

if TYPE_CHECKING:
    from .pipeline import BuildResult

__all__ = ["GEOMETRY_TYPES", "LAYER_ORDER", "build_layers"]

LAYER_ORDER = (
    "cores",
    "core_slices",
    "core_contacts",
    "facies_belts",
    "shorelines",
    "shoreline_bands",
    "transects",
    "shoreline_shifts",
    "shoreline_positions",
    "slice_pairs",
    "slice_quality",
    "run_info",
)
"""Layers of ``paleomap.gpkg``, in the order written."""

GEOMETRY_TYPES = {
    "cores": "Point",
    "core_slices": "Point",
    "core_contacts": "Point",
    "facies_belts": "MultiPolygon",
    "shorelines": "MultiLineString",
    "shoreline_bands": "MultiPolygon",
    "transects": "LineString",
    "shoreline_shifts": "LineString",
}
"""Declared geometry type of each feature layer (needed when a layer is empty)."""


def _gdf(rows: list[dict], columns: list[str], crs, geometry="geometry") -> gpd.GeoDataFrame:
    frame = pd.DataFrame(rows, columns=[*columns, geometry])
    return gpd.GeoDataFrame(frame, geometry=geometry, crs=crs)


def _multi(geom, kind):
    if geom is None or geom.is_empty:
        return kind()
    if geom.geom_type == "Polygon" and kind is shapely.MultiPolygon:
        return shapely.MultiPolygon([geom])
    if geom.geom_type == "LineString" and kind is shapely.MultiLineString:
        return shapely.MultiLineString([geom])
    if geom.geom_type == "GeometryCollection":
        want = "Polygon" if kind is shapely.MultiPolygon else "LineString"
        parts = [g for g in shapely.get_parts(geom) if g.geom_type == want]
        return kind(parts)
    return geom


def build_layers(result: BuildResult) -> dict[str, pd.DataFrame]:
    """Every layer and table of ``paleomap.gpkg`` from a finished build."""
    project = result.project
    crs = project.working_crs
    scheme = project.scheme
    reading = result.reading

    cores = pd.DataFrame(
        {
            "core_id": [c.core_id for c in project.cores],
            "x": [c.x for c in project.cores],
            "y": [c.y for c in project.cores],
            "elevation": [np.nan if c.elevation is None else c.elevation for c in project.cores],
            "top_depth": [c.top for c in project.cores],
            "base_depth": [c.base for c in project.cores],
            "n_intervals": [len(c.intervals) for c in project.cores],
            "n_picks": [len(c.picks) for c in project.cores],
        }
    )
    if reading is not None and len(reading.cores):
        extra = reading.cores.drop(
            columns=[c for c in ("easting", "northing") if c in reading.cores.columns]
        )
        cores = cores.merge(extra, on="core_id", how="left")
    cores_gdf = gpd.GeoDataFrame(
        cores,
        geometry=shapely.points(
            [c.easting for c in project.cores], [c.northing for c in project.cores]
        ),
        crs=crs,
    )

    s = result.samples
    core_slices = gpd.GeoDataFrame(
        s[["core_id", "slice", "age", "belt", "rank", "depth"]].reset_index(drop=True),
        geometry=shapely.points(s["easting"].to_numpy(), s["northing"].to_numpy()),
        crs=crs,
    )

    if reading is not None and len(reading.contacts):
        c = reading.contacts
        contacts = gpd.GeoDataFrame(
            c.drop(columns=["easting", "northing"]).reset_index(drop=True),
            geometry=shapely.points(c["easting"].to_numpy(), c["northing"].to_numpy()),
            crs=crs,
        )
    else:
        contacts = _gdf([], ["core_id", "depth", "lower", "upper", "jump", "flag"], crs)

    belt_rows, line_rows, band_rows, quality_rows = [], [], [], []
    boundary = scheme.boundary_name(scheme.tracked_boundary)
    for m in result.slice_maps:
        for rank, geom in enumerate(m.polygons):
            if geom.is_empty:
                continue
            b = scheme.belts[rank]
            belt_rows.append(
                dict(
                    slice=m.slice.name,
                    age=m.slice.age,
                    belt=b.id,
                    rank=rank,
                    marine=b.marine,
                    area_km2=geom.area / 1e6,
                    geometry=_multi(geom, shapely.MultiPolygon),
                )
            )
        line_rows.append(
            dict(
                slice=m.slice.name,
                age=m.slice.age,
                boundary=boundary,
                length_km=m.shoreline.length / 1e3,
                geometry=_multi(m.shoreline, shapely.MultiLineString),
            )
        )
        band_rows.append(
            dict(
                slice=m.slice.name,
                age=m.slice.age,
                boundary=boundary,
                area_km2=m.band.area / 1e6,
                geometry=_multi(m.band, shapely.MultiPolygon),
            )
        )
        # The stem of the slice's rasters and figure: a slice name may not be a file name.
        stem = safe_name(m.slice.name)
        quality_rows.append(dict(slice=m.slice.name, age=m.slice.age, file_stem=stem, **m.quality))
    # A slice with no boundary in the mapped area keeps its row (with an empty line),
    # so the GIS and the report show that it was looked for and not found.
    facies_belts = _gdf(belt_rows, ["slice", "age", "belt", "rank", "marine", "area_km2"], crs)
    shorelines = _gdf(line_rows, ["slice", "age", "boundary", "length_km"], crs)
    bands = _gdf(band_rows, ["slice", "age", "boundary", "area_km2"], crs)
    quality = pd.DataFrame(quality_rows)

    transects = _gdf(
        [
            dict(
                transect=t.transect,
                azimuth_deg=t.azimuth_deg,
                length_km=t.line.length / 1e3,
                source=t.source,
                lsq_rate_m_per_kyr=t.lsq_rate_m_per_kyr,
                geometry=t.line,
            )
            for t in result.transects
        ],
        ["transect", "azimuth_deg", "length_km", "source", "lsq_rate_m_per_kyr"],
        crs,
    )
    # result.shifts has the layer's columns already (empty builds included)
    shifts = gpd.GeoDataFrame(result.shifts.copy(), geometry="geometry", crs=crs)

    run_info = pd.DataFrame(
        [
            dict(key=k, value=v if isinstance(v, str) else json.dumps(v, default=str))
            for k, v in result.run_info.items()
        ]
    )
    return {
        "cores": cores_gdf,
        "core_slices": core_slices,
        "core_contacts": contacts,
        "facies_belts": facies_belts,
        "shorelines": shorelines,
        "shoreline_bands": bands,
        "transects": transects,
        "shoreline_shifts": shifts,
        "shoreline_positions": result.positions.reset_index(drop=True),
        "slice_pairs": result.slice_pairs.reset_index(drop=True),
        "slice_quality": quality,
        "run_info": run_info,
    }
