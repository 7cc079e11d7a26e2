"""Writing the build's layers into one OGC GeoPackage.

:func:`write_layers` writes every layer of a build into one GeoPackage
(OGC 12-128r19) through pyogrio (GDAL): GeoDataFrames become feature tables with
their CRS, plain DataFrames become attribute tables (``data_type = 'attributes'``
in ``gpkg_contents``). The file is written to a temporary path beside the target
and moved into place only when complete (:func:`paleomap.io.atomic.atomic_output_path`).

Version. The file is a GeoPackage 1.2 (``PRAGMA user_version`` 10200, GDAL creation
option ``VERSION=1.2``): the version the widest range of installed GIS reads (GDAL 3.6,
which Debian 12's QGIS 3.22 runs on, warns that 1.4 is "only partially supported"), and
paleomap uses no feature added later.

Styles. The core standard defines no style table; desktop GIS read a layer's default
style from a table ``layer_styles`` (columns f_table_catalog, f_table_schema,
f_table_name, f_geometry_column, styleName, styleQML, styleSLD, useAsDefault,
description, owner, ui, update_time), QGIS taking the row marked useAsDefault and
needing its QML. Each styled layer gets one such row, with the QML and SLD written from
the same :class:`~paleomap.io.styles.LayerStyle`, and the same two documents beside the
GeoPackage as ``styles/<layer>.qml`` and ``styles/<layer>.sld``.

Metadata. Dataset metadata (version, inputs, run time) is one JSON document in the
metadata extension (``gpkg_metadata`` and ``gpkg_metadata_reference``, registered in
``gpkg_extensions``), md_scope ``'dataset'`` (an ISO 19115 MD_ScopeCode value), referenced
by the whole GeoPackage.

Column types. Integers are written as INTEGER, floats as REAL, text as TEXT,
booleans as GDAL's boolean subtype (SQLite ``BOOLEAN``, stored 0/1), date-times as
DATETIME. Categorical columns are written as their text; other object columns are
written as text, with dicts and lists JSON-encoded (for example a fitted
covariance in ``slice_quality``).

Geometry types are declared from the data: one type throughout, or the multi-part
type where single and multi parts mix (Polygon and MultiPolygon give MULTIPOLYGON,
single parts promoted). An empty layer is written with its columns; its geometry
type comes from ``geometry_types`` or ``gdf.attrs["geometry_type"]``, else GEOMETRY.

Examples
--------
>>> import tempfile, pathlib, geopandas as gpd, pandas as pd
>>> from shapely.geometry import Point
>>> cores = gpd.GeoDataFrame({"core_id": ["A"]}, geometry=[Point(500, 6000)], crs=32631)
>>> out = pathlib.Path(tempfile.mkdtemp()) / "paleomap.gpkg"
>>> _ = write_layers(out, {"cores": cores, "run_info": pd.DataFrame({"version": ["0.1"]})})
>>> import pyogrio
>>> [str(name) for name, _ in pyogrio.list_layers(out)]
['cores', 'run_info']
"""

from __future__ import annotations

import datetime
import json
import logging
import math
import os
import re
import sqlite3
from collections.abc import Mapping
from pathlib import Path

import numpy as np
import pandas as pd

from .atomic import atomic_output_path, atomic_write_text
from .qml import to_qml
from .sld import to_sld
from .styles import LayerStyle

__all__ = [
    "GEOMETRY_COLUMN",
    "GPKG_APPLICATION_ID",
    "GPKG_USER_VERSIONS",
    "GPKG_VERSION",
    "METADATA_STANDARD_URI",
    "STYLE_FOLDER",
    "STYLE_TABLE",
    "write_layers",
]

_log = logging.getLogger(__name__)

GPKG_APPLICATION_ID = 0x47504B47
"""``PRAGMA application_id`` of a GeoPackage, "GPKG" (OGC 12-128r19, requirement 2)."""

GPKG_USER_VERSIONS = (10200, 10300, 10400)
"""``PRAGMA user_version`` of GeoPackage 1.2, 1.3 and 1.4 (OGC 12-128r19, requirement 2)."""

GPKG_VERSION = "1.2"
"""GeoPackage version written (GDAL creation option ``VERSION``)."""

STYLE_FOLDER = "styles"
"""Folder beside the GeoPackage that receives ``<layer>.qml`` and ``<layer>.sld``."""

STYLE_TABLE = "layer_styles"
"""Table of default layer styles that desktop GIS read."""

GEOMETRY_COLUMN = "geom"
"""Name of the geometry column of every feature table."""

METADATA_STANDARD_URI = "urn:x-paleomap:build-metadata:1"
"""md_standard_uri of the JSON dataset metadata that :func:`write_layers` stores."""

_METADATA_EXTENSION = "gpkg_metadata"
_METADATA_DEFINITION = "http://www.geopackage.org/spec/#extension_metadata"

# Table names must be plain SQL identifiers that do not clash with the
# GeoPackage's own tables (gpkg_*, rtree_*) or SQLite's (sqlite_*).
_LAYER_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")
_RESERVED_PREFIXES = ("gpkg_", "rtree_", "sqlite_")

_MULTI = {"Point": "MultiPoint", "LineString": "MultiLineString", "Polygon": "MultiPolygon"}
_FAMILY = {
    "Point": "Point",
    "MultiPoint": "Point",
    "LineString": "LineString",
    "LinearRing": "LineString",
    "MultiLineString": "LineString",
    "Polygon": "Polygon",
    "MultiPolygon": "Polygon",
}
_GEOMETRY_TYPES = (
    "Point",
    "MultiPoint",
    "LineString",
    "MultiLineString",
    "Polygon",
    "MultiPolygon",
    "GeometryCollection",
    "Geometry",
)

_METADATA_DDL = (
    "CREATE TABLE IF NOT EXISTS gpkg_metadata ("
    "id INTEGER CONSTRAINT m_pk PRIMARY KEY ASC NOT NULL, "
    "md_scope TEXT NOT NULL DEFAULT 'dataset', "
    "md_standard_uri TEXT NOT NULL, "
    "mime_type TEXT NOT NULL DEFAULT 'text/xml', "
    "metadata TEXT NOT NULL DEFAULT '')",
    "CREATE TABLE IF NOT EXISTS gpkg_metadata_reference ("
    "reference_scope TEXT NOT NULL, "
    "table_name TEXT, "
    "column_name TEXT, "
    "row_id_value INTEGER, "
    "timestamp DATETIME NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')), "
    "md_file_id INTEGER NOT NULL, "
    "md_parent_id INTEGER, "
    "CONSTRAINT crmr_mfi_fk FOREIGN KEY (md_file_id) REFERENCES gpkg_metadata(id), "
    "CONSTRAINT crmr_mpi_fk FOREIGN KEY (md_parent_id) REFERENCES gpkg_metadata(id))",
)


def write_layers(
    path: str | os.PathLike,
    layers: Mapping[str, pd.DataFrame],
    *,
    styles: Mapping[str, LayerStyle] | None = None,
    metadata: Mapping[str, object] | None = None,
    geometry_types: Mapping[str, str] | None = None,
) -> Path:
    """Write layers into one GeoPackage, atomically, with a style per layer.

    Parameters
    ----------
    path : path-like
        The GeoPackage to write; must end in ``.gpkg``. An existing file is
        replaced in one step when the new one is complete.
    layers : mapping of str to GeoDataFrame or DataFrame
        Layer name to data, in the order to write. A GeoDataFrame (which must have a
        CRS) becomes a feature table, a plain DataFrame an attribute table. The
        index is not written.
    styles : mapping of str to LayerStyle, optional
        Layer name to its default style (see :mod:`paleomap.io.styles`), for feature
        layers. Stored as QML and SLD in the ``layer_styles`` table and written to
        ``styles/<layer>.qml`` and ``styles/<layer>.sld`` beside the GeoPackage.
    metadata : mapping of str to object, optional
        Dataset metadata (e.g. version, run time), stored as one JSON object in
        ``gpkg_metadata`` (md_scope ``'dataset'``, mime_type ``application/json``,
        referenced with reference_scope ``'geopackage'``). Values must be
        JSON-serialisable (numpy scalars and arrays, paths and dates are converted).
    geometry_types : mapping of str to str, optional
        Geometry type to declare per layer ("Point", "MultiPolygon", ...), needed for
        an empty layer; for a non-empty one it must agree with the data, and a
        multi-part type promotes single parts.

    Returns
    -------
    pathlib.Path
        ``path``.

    Raises
    ------
    ValueError
        A bad layer name, a layer without CRS, geometries that do not fit the declared
        type, or a style for another layer or for a table without geometry.

    Examples
    --------
    >>> import tempfile, pathlib, geopandas as gpd
    >>> from shapely.geometry import Point
    >>> gdf = gpd.GeoDataFrame({"n": [1]}, geometry=[Point(0, 0)], crs=4326)
    >>> p = write_layers(pathlib.Path(tempfile.mkdtemp()) / "a.gpkg", {"pts": gdf})
    >>> p.name
    'a.gpkg'
    """
    import pyogrio

    path = Path(path)
    if path.suffix.lower() != ".gpkg":
        raise ValueError(f"a GeoPackage file name must end in '.gpkg', got {str(path)!r}")
    if not layers:
        raise ValueError("write_layers needs at least one layer")
    styles = dict(styles or {})
    geometry_types = dict(geometry_types or {})
    prepared = {name: _prepare(name, df, geometry_types.get(name)) for name, df in layers.items()}
    _check_styles(styles, prepared)
    for name in geometry_types:
        if name not in prepared:
            raise ValueError(f"geometry_types names layer {name!r}, which is not being written")
    metadata_json = _metadata_json(metadata)

    documents = {name: (to_qml(style), to_sld(style)) for name, style in styles.items()}
    with atomic_output_path(path) as tmp:
        for i, (name, (frame, geom_type)) in enumerate(prepared.items()):
            _log.info("writing layer %s (%d rows) to %s", name, len(frame), path.name)
            options = {"IDENTIFIER": name}
            if geom_type is not None:
                options["GEOMETRY_NAME"] = GEOMETRY_COLUMN
            pyogrio.write_dataframe(
                frame,
                tmp,
                layer=name,
                driver="GPKG",
                # pyogrio calls the generic type "Unknown"; GDAL declares it GEOMETRY.
                geometry_type="Unknown" if geom_type == "Geometry" else geom_type,
                promote_to_multi=False,
                layer_options=options,
                # The version is chosen when the file is created, by its first layer.
                dataset_options={"VERSION": GPKG_VERSION} if i == 0 else None,
            )
        if documents:
            pyogrio.write_dataframe(
                _style_rows(styles, documents),
                tmp,
                layer=STYLE_TABLE,
                driver="GPKG",
                layer_options={"IDENTIFIER": STYLE_TABLE, "DESCRIPTION": "default layer styles"},
            )
        if metadata_json is not None:
            _store_metadata(tmp, metadata_json)
    for name, (qml, sld) in documents.items():
        atomic_write_text(path.parent / STYLE_FOLDER / f"{name}.qml", qml)
        atomic_write_text(path.parent / STYLE_FOLDER / f"{name}.sld", sld)
    _log.info("wrote %s with %d layers", path, len(prepared))
    return path


# ------------------------------------------------------------------ preparing data


def _prepare(name: str, df: pd.DataFrame, declared: str | None):
    """The frame as it will be written, and the geometry type to declare."""
    import geopandas as gpd

    _check_layer_name(name)
    if not isinstance(df, pd.DataFrame):
        raise ValueError(
            f"layer {name!r} must be a GeoDataFrame or DataFrame, got {type(df).__name__}"
        )
    if isinstance(df, gpd.GeoDataFrame) and df._geometry_column_name in df.columns:
        if df.crs is None:
            raise ValueError(f"layer {name!r} has no CRS; set one before writing")
        geom_name = df.geometry.name
        if declared is None:
            declared = df.attrs.get("geometry_type")
        geom_type, geometry = _declare_geometry(name, df.geometry, declared)
        attrs = df.drop(columns=[geom_name])
        _check_columns(name, attrs)
        attrs = _clean_columns(attrs.reset_index(drop=True))
        frame = gpd.GeoDataFrame(
            attrs, geometry=gpd.GeoSeries(geometry.values, crs=df.crs), crs=df.crs
        )
        return frame, geom_type
    if declared is not None:
        raise ValueError(
            f"layer {name!r} is a table without geometry but has geometry type {declared!r}"
        )
    _check_columns(name, df)
    return _clean_columns(pd.DataFrame(df).reset_index(drop=True)), None


def _check_layer_name(name: str) -> None:
    if not isinstance(name, str) or not _LAYER_NAME.match(name):
        raise ValueError(
            f"layer name {name!r} is not allowed: use letters, digits and underscores, "
            "starting with a letter or underscore"
        )
    if name.lower().startswith(_RESERVED_PREFIXES):
        raise ValueError(
            f"layer name {name!r} is reserved by GeoPackage or SQLite "
            f"(prefixes {', '.join(_RESERVED_PREFIXES)})"
        )


def _check_columns(name: str, df: pd.DataFrame) -> None:
    cols = [str(c) for c in df.columns]
    lower = [c.lower() for c in cols]
    dupes = sorted({c for c in lower if lower.count(c) > 1})
    if dupes:
        # SQLite column names are case-insensitive.
        raise ValueError(f"layer {name!r} has duplicate column names: {dupes}")
    if "fid" in lower:
        raise ValueError(
            f"layer {name!r} has a column named 'fid', which GeoPackage reserves for the "
            "feature id; rename it"
        )


def _declare_geometry(name: str, geometry, declared: str | None):
    import shapely

    present = geometry[~(geometry.isna() | geometry.is_empty)]
    types = set(present.geom_type)
    if declared is not None and declared not in _GEOMETRY_TYPES:
        raise ValueError(
            f"geometry type {declared!r} for layer {name!r} is not one of "
            f"{', '.join(_GEOMETRY_TYPES)}"
        )
    if not types:
        return (declared or "Geometry"), geometry
    families = {_FAMILY.get(t, t) for t in types}
    if declared in (None, "Geometry"):
        if len(types) == 1:
            return (declared or types.pop()), geometry
        if len(families) == 1 and families <= set(_MULTI):
            declared = _MULTI[next(iter(families))]
        else:
            declared = declared or "Geometry"
            return declared, geometry
    if declared == "GeometryCollection":
        if types != {"GeometryCollection"}:
            raise ValueError(
                f"layer {name!r} is declared GeometryCollection but holds {sorted(types)}"
            )
        return declared, geometry
    family = _FAMILY[declared]
    if families != {family}:
        raise ValueError(
            f"layer {name!r} is declared {declared} but holds {', '.join(sorted(types))}"
        )
    if declared in _MULTI and types != {declared}:
        raise ValueError(
            f"layer {name!r} is declared {declared} but holds multi-part geometries "
            f"({', '.join(sorted(types))})"
        )
    if declared in _MULTI.values():
        single = geometry.geom_type == family
        if single.any():
            geometry = geometry.copy()
            values = np.asarray(geometry.values, dtype=object)
            parts = values[single.to_numpy()]
            multi = getattr(shapely, declared)
            values[single.to_numpy()] = [multi([g]) for g in parts]
            geometry = geometry.__class__(values, index=geometry.index, crs=geometry.crs)
    return declared, geometry


def _clean_columns(df: pd.DataFrame) -> pd.DataFrame:
    out = {}
    for col in df.columns:
        s = df[col]
        if isinstance(s.dtype, pd.CategoricalDtype):
            s = s.astype(object).where(s.notna(), None).map(_text_or_none)
        elif s.dtype == object:
            s = _object_column(s)
        out[str(col)] = s
    return pd.DataFrame(out, index=df.index)


def _object_column(s: pd.Series) -> pd.Series:
    """An object column as booleans, integers or floats where every value is one, else text."""
    present = [v for v in s if not _is_missing(v)]
    if present and all(isinstance(v, bool | np.bool_) for v in present):
        return s.map(lambda v: None if _is_missing(v) else bool(v)).astype("boolean")
    if present and all(
        isinstance(v, int | np.integer) and not isinstance(v, bool | np.bool_) for v in present
    ):
        return s.map(lambda v: None if _is_missing(v) else int(v)).astype("Int64")
    if present and all(
        isinstance(v, float | int | np.number) and not isinstance(v, bool | np.bool_)
        for v in present
    ):
        return s.map(lambda v: np.nan if _is_missing(v) else float(v)).astype("float64")
    return s.map(_text_or_none)


def _is_missing(value) -> bool:
    return value is None or value is pd.NA or (isinstance(value, float) and math.isnan(value))


def _text_or_none(value):
    if _is_missing(value):
        return None
    if isinstance(value, str):
        return value
    if isinstance(value, dict | list | tuple):
        return json.dumps(value, default=_json_default, sort_keys=False)
    if isinstance(value, Path):
        return str(value)
    if isinstance(value, np.generic):
        return str(value.item())
    return str(value)


def _json_default(value):
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, np.ndarray):
        return value.tolist()
    return str(value)


def _metadata_json(metadata: Mapping[str, object] | None) -> str | None:
    # Written by us rather than through GDAL's dataset metadata: GDAL's own
    # metadata rows make later read-only opens leave a .aux.xml file beside the
    # GeoPackage.
    if not metadata:
        return None
    for key in metadata:
        if not isinstance(key, str) or not key:
            raise ValueError(f"metadata keys must be non-empty strings, got {key!r}")
    try:
        return json.dumps(dict(metadata), default=_json_metadata_default, indent=2)
    except TypeError as exc:
        raise ValueError(f"metadata must be JSON-serialisable: {exc}") from exc


def _json_metadata_default(value):
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, Path):
        return str(value)
    if isinstance(value, datetime.date | datetime.datetime | pd.Timestamp):
        return value.isoformat()
    raise TypeError(f"{type(value).__name__} value {value!r} is not JSON-serialisable")


# ------------------------------------------------------------------ styles


def _check_styles(styles: dict[str, LayerStyle], prepared: dict) -> None:
    if STYLE_TABLE in prepared:
        raise ValueError(f"layer name {STYLE_TABLE!r} is reserved for the layer styles")
    for name, style in styles.items():
        if name not in prepared:
            raise ValueError(f"a style is given for layer {name!r}, which is not being written")
        if prepared[name][1] is None:
            raise ValueError(f"a style is given for {name!r}, a table without geometry")
        if not isinstance(style, LayerStyle):
            raise ValueError(
                f"the style for layer {name!r} must be a LayerStyle, got {type(style).__name__}"
            )
        if style.layer != name:
            raise ValueError(f"the style given for layer {name!r} styles layer {style.layer!r}")


def _style_rows(styles: dict[str, LayerStyle], documents: dict[str, tuple[str, str]]):
    now = pd.Timestamp.now(tz="UTC").floor("ms")
    rows = [
        {
            # QGIS matches a GeoPackage layer with empty catalog and schema.
            "f_table_catalog": "",
            "f_table_schema": "",
            "f_table_name": name,
            "f_geometry_column": GEOMETRY_COLUMN,
            "styleName": name,
            "styleQML": qml,
            "styleSLD": sld,
            "useAsDefault": True,
            "description": styles[name].title,
            "owner": "paleomap",
            "ui": None,
            "update_time": now,
        }
        for name, (qml, sld) in documents.items()
    ]
    frame = pd.DataFrame(rows)
    frame["useAsDefault"] = frame["useAsDefault"].astype("boolean")
    frame["ui"] = frame["ui"].astype(object)
    return frame


def _store_metadata(gpkg: Path, metadata_json: str) -> None:
    """Store the dataset metadata through the GeoPackage metadata extension."""
    con = sqlite3.connect(gpkg)
    try:
        with con:
            for ddl in _METADATA_DDL:
                con.execute(ddl)
            for table in ("gpkg_metadata", "gpkg_metadata_reference"):
                # SQLite's UNIQUE constraint does not catch NULL column names, so ask.
                known = con.execute(
                    "SELECT 1 FROM gpkg_extensions WHERE table_name = ? "
                    "AND column_name IS NULL AND extension_name = ?",
                    (table, _METADATA_EXTENSION),
                ).fetchone()
                if not known:
                    con.execute(
                        "INSERT INTO gpkg_extensions (table_name, column_name, extension_name, "
                        "definition, scope) VALUES (?, NULL, ?, ?, 'read-write')",
                        (table, _METADATA_EXTENSION, _METADATA_DEFINITION),
                    )
            cur = con.execute(
                "INSERT INTO gpkg_metadata (md_scope, md_standard_uri, mime_type, metadata) "
                "VALUES ('dataset', ?, 'application/json', ?)",
                (METADATA_STANDARD_URI, metadata_json),
            )
            con.execute(
                "INSERT INTO gpkg_metadata_reference (reference_scope, table_name, "
                "column_name, row_id_value, md_file_id, md_parent_id) "
                "VALUES ('geopackage', NULL, NULL, NULL, ?, NULL)",
                (cur.lastrowid,),
            )
    finally:
        con.close()
