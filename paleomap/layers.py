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
from .results import GEOMETRY_TYPES, LAYER_COLUMNS, LAYER_ORDER

if TYPE_CHECKING:
    from .results import BuildResult

__all__ = ["GEOMETRY_TYPES", "LAYER_ORDER", "TURNAROUND_KINDS", "build_layers"]


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


TURNAROUND_KINDS = {"MFS": "maximum flooding", "MRS": "maximum regressive"}
"""The ``kind`` written in the ``turnarounds`` layer for each suggested turnaround."""

_TURNAROUND_FIELDS = (
    "core_id",
    "kind",
    "depth",
    "depth_top",
    "depth_base",
    "age",
    "confidence",
    "cycle",
    "belt",
    "change_below_ranks",
    "change_above_ranks",
    "nearest_surface",
    "surface_distance",
)
_GAP_FIELDS = ("core_id", "top", "base", "thickness", "lower", "upper", "jump_ranks")


def _depth_named(frame: pd.DataFrame, unit: str, names) -> pd.DataFrame:
    """Depth fields renamed with the project's depth unit (``depth`` -> ``depth_m``)."""
    return frame.rename(columns={n: f"{n}_{unit}" for n in names if n in frame.columns})


def _turnaround_layer(reading, unit: str, crs) -> gpd.GeoDataFrame:
    """Every suggested maximum flooding / maximum regressive surface, one point each."""
    depth_fields = ("depth", "depth_top", "depth_base", "surface_distance")
    if reading is None or not len(reading.turnarounds):
        empty = _depth_named(pd.DataFrame(columns=list(_TURNAROUND_FIELDS)), unit, depth_fields)
        return _gdf([], list(empty.columns), crs)
    t = reading.turnarounds
    frame = t.rename(
        columns={"change_below": "change_below_ranks", "change_above": "change_above_ranks"}
    )
    frame = frame.assign(kind=frame["kind"].map(TURNAROUND_KINDS))[list(_TURNAROUND_FIELDS)]
    return gpd.GeoDataFrame(
        _depth_named(frame.reset_index(drop=True), unit, depth_fields),
        geometry=shapely.points(t["easting"].to_numpy(), t["northing"].to_numpy()),
        crs=crs,
    )


def _gap_layer(reading, unit: str, crs) -> gpd.GeoDataFrame:
    """Every unrecovered depth range (no record between two logged intervals)."""
    depth_fields = ("top", "base", "thickness")
    if reading is None or not len(reading.gaps):
        empty = _depth_named(pd.DataFrame(columns=list(_GAP_FIELDS)), unit, depth_fields)
        return _gdf([], list(empty.columns), crs)
    g = reading.gaps
    frame = g.rename(columns={"jump": "jump_ranks"})[list(_GAP_FIELDS)]
    return gpd.GeoDataFrame(
        _depth_named(frame.reset_index(drop=True), unit, depth_fields),
        geometry=shapely.points(g["easting"].to_numpy(), g["northing"].to_numpy()),
        crs=crs,
    )


_CONTROL_FIELDS = ("point_id", "slice", "age", "belt", "rank", "weight", "imposed", "source")


def _control_layer(result, crs) -> gpd.GeoDataFrame:
    """The user's control points at the slices they were used in: interpretations, kept
    apart from the cores (their own layer, ``source = "control point"``)."""
    scheme = result.project.scheme
    rows = []
    for m in result.slice_maps:
        for pid, e, n, rank, weight in getattr(m, "control", ()):
            rows.append(
                dict(
                    point_id=pid,
                    slice=m.slice.name,
                    age=m.slice.age,
                    belt=scheme.ids[rank],
                    rank=rank,
                    weight=weight,
                    imposed=weight >= 1.0,
                    source="control point",
                    geometry=shapely.Point(e, n),
                )
            )
    return _gdf(rows, list(_CONTROL_FIELDS), crs)


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
        # the reading repeats the position and the interval count: keep one of each, so
        # no join leaves a pair of _x/_y columns
        extra = reading.cores.drop(
            columns=[c for c in reading.cores.columns if c in cores.columns and c != "core_id"]
            + [c for c in ("easting", "northing") if c in reading.cores.columns]
        )
        cores = cores.merge(extra, on="core_id", how="left", validate="one_to_one")
    cores_gdf = gpd.GeoDataFrame(
        cores,
        geometry=shapely.points(
            [c.easting for c in project.cores], [c.northing for c in project.cores]
        ),
        crs=crs,
    )

    s = result.samples
    core_slices = gpd.GeoDataFrame(
        s[list(LAYER_COLUMNS["core_slices"])].reset_index(drop=True),
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
        contacts = _gdf([], list(LAYER_COLUMNS["core_contacts"]), crs)

    turnarounds = _turnaround_layer(reading, project.depth_unit, crs)
    control = _control_layer(result, crs)
    gaps = _gap_layer(reading, project.depth_unit, crs)

    belt_rows, line_rows, band_rows, quality_rows = [], [], [], []
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
        # every tracked boundary, the shoreline (or the tracked one) first, each under
        # its own name and what a reader calls it
        for b in scheme.tracked_boundaries:
            bd = m.boundary(b)
            line_rows.append(
                dict(
                    slice=m.slice.name,
                    age=m.slice.age,
                    boundary=scheme.boundary_name(b),
                    boundary_label=scheme.boundary_label(b),
                    length_km=bd["line"].length / 1e3,
                    geometry=_multi(bd["line"], shapely.MultiLineString),
                )
            )
            band_rows.append(
                dict(
                    slice=m.slice.name,
                    age=m.slice.age,
                    boundary=scheme.boundary_name(b),
                    boundary_label=scheme.boundary_label(b),
                    area_km2=bd["band"].area / 1e6,
                    geometry=_multi(bd["band"], shapely.MultiPolygon),
                )
            )
        # The stem of the slice's rasters and figure: a slice name may not be a file name.
        stem = safe_name(m.slice.name)
        quality_rows.append(dict(slice=m.slice.name, age=m.slice.age, file_stem=stem, **m.quality))
    # A slice with no boundary in the mapped area keeps its row (with an empty line),
    # so the GIS and the report show that it was looked for and not found.
    facies_belts = _gdf(belt_rows, list(LAYER_COLUMNS["facies_belts"]), crs)
    shorelines = _gdf(line_rows, list(LAYER_COLUMNS["shorelines"]), crs)
    bands = _gdf(band_rows, list(LAYER_COLUMNS["shoreline_bands"]), crs)
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
        list(LAYER_COLUMNS["transects"]),
        crs,
    )
    # result.shifts has the layer's columns already (empty builds included); a further
    # tracked boundary's rows follow the tracked one's
    other = getattr(result, "other_boundaries", {}) or {}

    def both(frame, key):
        extra = other.get(key)
        if extra is None or not len(extra):
            return frame.reset_index(drop=True)
        return pd.concat([frame, extra], ignore_index=True)

    shifts = gpd.GeoDataFrame(both(result.shifts, "shifts"), geometry="geometry", crs=crs)

    run_info = pd.DataFrame(
        [
            dict(key=k, value=v if isinstance(v, str) else json.dumps(v, default=str))
            for k, v in result.run_info.items()
        ]
    )
    # units in every field name: depths carry the project's depth unit, rank counts "ranks"
    u = project.depth_unit
    cores_gdf = _depth_named(cores_gdf, u, ("elevation", "mfs_depth", "mrs_depth")).rename(
        columns={
            "top_depth": f"top_depth_{u}",
            "base_depth": f"base_depth_{u}",
            "rank_change": "rank_change_ranks",
            "slope_rank_per_m": "slope_ranks_per_m",
        }
    )
    core_slices = _depth_named(core_slices, u, ("depth",))
    contacts = _depth_named(contacts, u, ("depth", "surface_distance")).rename(
        columns={"jump": "jump_ranks"}
    )
    return {
        "cores": cores_gdf,
        "core_slices": core_slices,
        "core_contacts": contacts,
        "turnarounds": turnarounds,
        "gaps": gaps,
        "control_points": control,
        "facies_belts": facies_belts,
        "shorelines": shorelines,
        "shoreline_bands": bands,
        "transects": transects,
        "shoreline_shifts": shifts,
        "shoreline_positions": both(result.positions, "positions"),
        "slice_pairs": both(result.slice_pairs, "slice_pairs"),
        "slice_quality": quality,
        "run_info": run_info,
    }
