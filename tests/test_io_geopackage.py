"""Tests for paleomap.io.geopackage, read back with sqlite3, pyogrio and geopandas.

Checks against OGC 12-128r19 (GeoPackage 1.4.0) as summarised in REFERENCES.md:
requirement 2 (application_id, user_version), 6 and 7 (integrity_check,
foreign_key_check), gpkg_spatial_ref_sys, gpkg_contents and gpkg_geometry_columns.
"""

from __future__ import annotations

import datetime
import json
import signal
import sqlite3
import subprocess
import sys
import textwrap
import xml.etree.ElementTree as ET

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pyproj
import pytest
from shapely.geometry import LineString, MultiPolygon, Point, Polygon

from paleomap.io import geopackage
from paleomap.io.geopackage import (
    GEOMETRY_COLUMN,
    GPKG_APPLICATION_ID,
    GPKG_USER_VERSIONS,
    METADATA_STANDARD_URI,
    STYLE_TABLE,
    write_layers,
)
from paleomap.io.qml import to_qml
from paleomap.io.sld import sld_layer_name, to_sld
from paleomap.io.styles import layer_styles

CRS = "EPSG:32631"
BELTS = [("sand", "Sand", "#d9b56e"), ("mud", "Mud", "#1d4f7c")]
FEATURE_LAYERS = [
    "cores",
    "core_slices",
    "facies_belts",
    "shorelines",
    "shoreline_bands",
    "transects",
    "shoreline_shifts",
]
ATTRIBUTE_LAYERS = ["slice_pairs", "slice_quality", "run_info"]


def _square(x0, y0, size=1000.0):
    return Polygon([(x0, y0), (x0 + size, y0), (x0 + size, y0 + size), (x0, y0 + size)])


def _layers() -> dict:
    e0, n0 = 500000.0, 6000000.0
    cores = gpd.GeoDataFrame(
        {"core_id": ["A", "B", "C"], "elevation_m": [12.5, np.nan, 3.0]},
        geometry=[Point(e0, n0), Point(e0 + 2000, n0), Point(e0, n0 + 2000)],
        crs=CRS,
    )
    core_slices = gpd.GeoDataFrame(
        {
            "core_id": ["A", "B", "A", "B"],
            "slice": [1, 1, 2, 2],
            "age": [10.0, 10.0, 12.0, 12.0],
            "belt": ["sand", "mud", "sand", "sand"],
            "rank": np.array([0, 1, 0, 0], dtype=np.int32),
        },
        geometry=[Point(e0, n0), Point(e0 + 2000, n0)] * 2,
        crs=CRS,
    )
    two_parts = MultiPolygon([_square(e0 + 3000, n0), _square(e0 + 5000, n0)])
    facies_belts = gpd.GeoDataFrame(
        {
            "slice": [1, 1],
            "age": [10.0, 10.0],
            "belt": ["sand", "mud"],
            "rank": [0, 1],
            "marine": [False, True],
            "area_km2": [1.0, 2.0],
        },
        geometry=[_square(e0, n0), two_parts],  # mixed Polygon / MultiPolygon
        crs=CRS,
    )
    shorelines = gpd.GeoDataFrame(
        {"slice": [1], "age": [10.0], "boundary": ["sand|mud"], "length_km": [1.0]},
        geometry=[LineString([(e0 + 1000, n0), (e0 + 1000, n0 + 1000)])],
        crs=CRS,
    )
    shoreline_bands = gpd.GeoDataFrame(
        {"slice": pd.Series([], dtype="int64"), "age": pd.Series([], dtype="float64")},
        geometry=gpd.GeoSeries([], crs=CRS),
        crs=CRS,
    )
    transects = gpd.GeoDataFrame(
        {"transect": [1, 2], "azimuth_deg": [90.0, 90.0]},
        geometry=[LineString([(e0, n0 + y), (e0 + 4000, n0 + y)]) for y in (200.0, 800.0)],
        crs=CRS,
    )
    shoreline_shifts = gpd.GeoDataFrame(
        {
            "transect": [1],
            "older_slice": [2],
            "younger_slice": [1],
            "shift_m": [-350.0],
            "rate_m_per_kyr": [-175.0],
            "sense": ["regression"],
        },
        geometry=[LineString([(e0 + 1350, n0 + 200), (e0 + 1000, n0 + 200)])],
        crs=CRS,
    )
    slice_pairs = pd.DataFrame(
        {
            "older_slice": [2],
            "younger_slice": [1],
            "flooded_km2": [0.0],
            "exposed_km2": [0.35],
            "sense": ["regression"],
        }
    )
    slice_quality = pd.DataFrame(
        {
            "slice": [1, 2],
            "age": [10.0, 12.0],
            "cores_used": [2, 2],
            "covariance": [{"model": "exponential", "range_m": 1500.0}, None],
            "deterministic": [True, False],
        }
    )
    run_info = pd.DataFrame(
        {"version": ["0.1.0"], "project_toml": ['[project]\nname = "Lagoa Demo"\n']}
    )
    return {
        "cores": cores,
        "core_slices": core_slices,
        "facies_belts": facies_belts,
        "shorelines": shorelines,
        "shoreline_bands": shoreline_bands,
        "transects": transects,
        "shoreline_shifts": shoreline_shifts,
        "slice_pairs": slice_pairs,
        "slice_quality": slice_quality,
        "run_info": run_info,
    }


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    out = tmp_path_factory.mktemp("build") / "paleomap.gpkg"
    styles = {k: v for k, v in layer_styles(BELTS).items() if k in FEATURE_LAYERS}
    write_layers(
        out,
        _layers(),
        styles=styles,
        metadata={
            "paleomap_version": "0.1.0",
            "inputs": {"cores.csv": "ab12"},
            "n": np.int64(3),
            "started_utc": datetime.datetime(2024, 5, 1, 12, 0, tzinfo=datetime.UTC),
        },
        geometry_types={"shoreline_bands": "MultiPolygon"},
    )
    return out, styles


@pytest.fixture
def db(written):
    con = sqlite3.connect(f"file:{written[0]}?mode=ro", uri=True)
    yield con
    con.close()


# ------------------------------------------------------------------ OGC 12-128r19


def test_requirement_2_application_id_and_version(db):
    assert db.execute("PRAGMA application_id").fetchone()[0] == GPKG_APPLICATION_ID == 1196444487
    assert db.execute("PRAGMA user_version").fetchone()[0] in GPKG_USER_VERSIONS
    assert db.execute("PRAGMA user_version").fetchone()[0] in (10200, 10300, 10400)


def test_requirements_6_and_7_integrity_and_foreign_keys(db):
    assert db.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
    assert db.execute("PRAGMA foreign_key_check").fetchall() == []


def test_spatial_ref_sys_holds_the_required_rows(db):
    ids = {r[0] for r in db.execute("SELECT srs_id FROM gpkg_spatial_ref_sys")}
    assert {4326, -1, 0} <= ids
    assert 32631 in ids


def test_contents_and_geometry_columns(db):
    contents = {
        r[0]: (r[1], r[2])
        for r in db.execute("SELECT table_name, data_type, srs_id FROM gpkg_contents")
    }
    assert set(contents) == set(FEATURE_LAYERS) | set(ATTRIBUTE_LAYERS) | {STYLE_TABLE}
    geom = db.execute(
        "SELECT table_name, column_name, geometry_type_name, srs_id FROM gpkg_geometry_columns"
    ).fetchall()
    assert sorted(r[0] for r in geom) == sorted(FEATURE_LAYERS)  # one row each
    for table, _column, type_name, srs_id in geom:
        assert contents[table] == ("features", srs_id)
        assert type_name == type_name.upper()
        assert srs_id == 32631
    for table in ATTRIBUTE_LAYERS:
        assert contents[table][0] == "attributes"
    types = {r[0]: r[2] for r in geom}
    assert types == {
        "cores": "POINT",
        "core_slices": "POINT",
        "facies_belts": "MULTIPOLYGON",
        "shorelines": "LINESTRING",
        "shoreline_bands": "MULTIPOLYGON",
        "transects": "LINESTRING",
        "shoreline_shifts": "LINESTRING",
    }


def test_column_types_in_sqlite(db):
    def declared(table):
        return {r[1]: r[2] for r in db.execute(f'PRAGMA table_info("{table}")')}

    belts = declared("facies_belts")
    assert belts["slice"] == "INTEGER"
    assert belts["area_km2"] == "REAL"
    assert belts["belt"] == "TEXT"
    assert belts["marine"] == "BOOLEAN"
    assert db.execute("SELECT marine FROM facies_belts ORDER BY fid").fetchall() == [(0,), (1,)]
    quality = declared("slice_quality")
    assert quality["covariance"] == "TEXT"
    assert quality["deterministic"] == "BOOLEAN"
    assert set(declared("shoreline_bands")) == {"fid", "geom", "slice", "age"}


# ------------------------------------------------------------------ styles


def test_styles_are_stored_in_layer_styles(db, written):
    # The table QGIS reads a layer's default style from (columns as in REFERENCES.md,
    # "Styling layers in a GeoPackage for a desktop GIS").
    _, styles = written
    columns = [r[1] for r in db.execute(f"PRAGMA table_info({STYLE_TABLE})")]
    assert columns[1:] == [
        "f_table_catalog",
        "f_table_schema",
        "f_table_name",
        "f_geometry_column",
        "styleName",
        "styleQML",
        "styleSLD",
        "useAsDefault",
        "description",
        "owner",
        "ui",
        "update_time",
    ]
    rows = db.execute(
        f"SELECT f_table_catalog, f_table_schema, f_table_name, f_geometry_column, styleQML, "
        f"styleSLD, useAsDefault FROM {STYLE_TABLE}"
    ).fetchall()
    assert sorted(r[2] for r in rows) == sorted(styles)
    geometry_columns = dict(
        db.execute("SELECT table_name, column_name FROM gpkg_geometry_columns").fetchall()
    )
    for catalog, schema, table, geom, qml, sld, default in rows:
        assert (catalog, schema, default) == ("", "", 1)
        assert geom == geometry_columns[table] == GEOMETRY_COLUMN
        assert qml == to_qml(styles[table])
        assert sld == to_sld(styles[table])
        assert sld_layer_name(sld) == table
        ET.fromstring(qml.split("\n", 1)[1].encode("utf-8"))
    (data_type,) = db.execute(
        f"SELECT data_type FROM gpkg_contents WHERE table_name = '{STYLE_TABLE}'"
    ).fetchone()
    assert data_type == "attributes"


def test_only_valid_metadata_scopes(db):
    # md_scope takes ISO 19115 MD_ScopeCode values (REFERENCES.md); 'style' is not one.
    scopes = {r[0] for r in db.execute("SELECT md_scope FROM gpkg_metadata")}
    assert scopes == {"dataset"}


def test_geopackage_version_1_2(db):
    # user_version 10200 = GeoPackage 1.2.0 (OGC 12-128r19, requirement 2).
    assert db.execute("PRAGMA user_version").fetchone()[0] == 10200


def test_style_files_beside_the_geopackage(written):
    path, styles = written
    folder = path.parent / "styles"
    assert sorted(p.name for p in folder.iterdir()) == sorted(
        f"{k}.{ext}" for k in styles for ext in ("qml", "sld")
    )
    for name, style in styles.items():
        assert (folder / f"{name}.sld").read_text(encoding="utf-8") == to_sld(style)
        assert (folder / f"{name}.qml").read_text(encoding="utf-8") == to_qml(style)
    # Nothing else is written beside the GeoPackage.
    assert sorted(p.name for p in path.parent.iterdir()) == ["paleomap.gpkg", "styles"]


def test_dataset_metadata(db, written):
    (row,) = db.execute(
        "SELECT m.md_scope, m.md_standard_uri, m.mime_type, m.metadata, r.reference_scope "
        "FROM gpkg_metadata m JOIN gpkg_metadata_reference r ON r.md_file_id = m.id "
        "WHERE m.md_scope = 'dataset'"
    ).fetchall()
    assert row[:3] == ("dataset", METADATA_STANDARD_URI, "application/json")
    assert row[4] == "geopackage"
    assert json.loads(row[3]) == {
        "paleomap_version": "0.1.0",
        "inputs": {"cores.csv": "ab12"},
        "n": 3,
        "started_utc": "2024-05-01T12:00:00+00:00",
    }


# ------------------------------------------------------------------ read back with GDAL


def test_layer_names_in_order(written):
    names = [str(n) for n, _ in pyogrio.list_layers(written[0])]
    assert names == FEATURE_LAYERS + ATTRIBUTE_LAYERS + [STYLE_TABLE]


@pytest.mark.parametrize("name", FEATURE_LAYERS)
def test_feature_layers_read_back(written, name):
    expected = _layers()[name]
    got = gpd.read_file(written[0], layer=name, engine="pyogrio")
    assert list(got.columns) == [*expected.columns.drop("geometry"), "geometry"]
    assert pyproj.CRS.from_user_input(got.crs).equals(pyproj.CRS.from_user_input(CRS))
    assert len(got) == len(expected)
    assert got.is_valid.all()
    for col in expected.columns.drop("geometry"):
        a, b = expected[col].tolist(), got[col].tolist()
        assert [None if pd.isna(v) else v for v in a] == [None if pd.isna(v) else v for v in b], col
    if len(expected):
        # Topological equality: single parts may come back promoted to multi-parts.
        assert got.geometry.geom_equals(gpd.GeoSeries(expected.geometry.values)).all()


def test_dtypes_read_back(written):
    got = pyogrio.read_dataframe(written[0], layer="facies_belts")
    assert got["slice"].dtype == np.int64
    assert got["rank"].dtype == np.int64
    assert got["marine"].dtype == bool
    assert got["area_km2"].dtype == np.float64
    assert pd.api.types.is_string_dtype(got["belt"])
    info = pyogrio.read_info(written[0], layer="core_slices")
    assert dict(zip(info["fields"], info["ogr_types"], strict=True))["rank"] == "OFTInteger"
    assert set(got.geom_type) == {"MultiPolygon"}


def test_attribute_tables_read_back(written):
    quality = pyogrio.read_dataframe(written[0], layer="slice_quality")
    assert "geometry" not in quality.columns
    assert quality["cores_used"].tolist() == [2, 2]
    assert quality["covariance"][0] == '{"model": "exponential", "range_m": 1500.0}'
    assert quality["covariance"].isna().tolist() == [False, True]
    assert quality["deterministic"].tolist() == [True, False]
    run = pyogrio.read_dataframe(written[0], layer="run_info")
    assert run["project_toml"][0] == '[project]\nname = "Lagoa Demo"\n'


def test_reading_leaves_no_sidecar(written):
    for name in FEATURE_LAYERS:
        pyogrio.read_dataframe(written[0], layer=name)
    assert not written[0].with_name("paleomap.gpkg.aux.xml").exists()


# ------------------------------------------------------------------ geometry types


def _one(geoms, crs=CRS, **cols):
    return gpd.GeoDataFrame({"n": list(range(len(geoms))), **cols}, geometry=geoms, crs=crs)


def _declared(path, layer):
    con = sqlite3.connect(path)
    try:
        return con.execute(
            "SELECT geometry_type_name, srs_id FROM gpkg_geometry_columns WHERE table_name = ?",
            (layer,),
        ).fetchone()
    finally:
        con.close()


def test_declared_multi_type_promotes_single_parts(tmp_path):
    p = write_layers(
        tmp_path / "a.gpkg",
        {"belts": _one([_square(0, 0)])},
        geometry_types={"belts": "MultiPolygon"},
    )
    assert _declared(p, "belts")[0] == "MULTIPOLYGON"
    assert pyogrio.read_dataframe(p, layer="belts").geom_type.tolist() == ["MultiPolygon"]


def test_empty_layer_type_from_attrs_or_geometry(tmp_path):
    empty = _one([])
    hinted = _one([])
    hinted.attrs["geometry_type"] = "MultiLineString"
    p = write_layers(tmp_path / "a.gpkg", {"plain": empty, "hinted": hinted})
    assert _declared(p, "plain")[0] == "GEOMETRY"
    assert _declared(p, "hinted")[0] == "MULTILINESTRING"
    assert len(pyogrio.read_dataframe(p, layer="hinted")) == 0


def test_mixed_families_are_declared_geometry(tmp_path):
    p = write_layers(
        tmp_path / "a.gpkg", {"mixed": _one([Point(0, 0), LineString([(0, 0), (1, 1)])])}
    )
    assert _declared(p, "mixed")[0] == "GEOMETRY"


def test_null_geometries_are_kept(tmp_path):
    p = write_layers(tmp_path / "a.gpkg", {"pts": _one([Point(0, 0), None])})
    assert _declared(p, "pts")[0] == "POINT"
    got = pyogrio.read_dataframe(p, layer="pts")
    assert got.geometry.isna().tolist() == [False, True]


def test_geographic_and_custom_crs(tmp_path):
    local = pyproj.CRS.from_proj4("+proj=aeqd +lat_0=-12.5 +lon_0=-38.2 +datum=WGS84 +units=m")
    p = write_layers(
        tmp_path / "a.gpkg",
        {"geo": _one([Point(-38.2, -12.5)], crs=4326), "local": _one([Point(10, 20)], crs=local)},
    )
    assert _declared(p, "geo")[1] == 4326
    assert _declared(p, "local")[1] not in (4326, 0, -1)
    back = gpd.read_file(p, layer="local", engine="pyogrio")
    assert pyproj.CRS.from_user_input(back.crs).equals(local)


def test_index_and_odd_columns(tmp_path):
    df = pd.DataFrame(
        {
            "cat": pd.Categorical(["a", "b", None]),
            "nullable_int": pd.array([1, None, 3], dtype="Int64"),
            "obj_bool": np.array([True, None, False], dtype=object),
            "obj_int": np.array([1, None, 2], dtype=object),
            "obj_mixed": np.array([1, "x", None], dtype=object),
            "when": pd.to_datetime(["2024-01-01", "2024-06-30", None]),
        },
        index=pd.Index([10, 20, 30], name="row"),
    )
    p = write_layers(tmp_path / "a.gpkg", {"t": df})
    con = sqlite3.connect(p)
    try:
        decl = {r[1]: r[2] for r in con.execute('PRAGMA table_info("t")')}
    finally:
        con.close()
    assert decl == {
        "fid": "INTEGER",
        "cat": "TEXT",
        "nullable_int": "INTEGER",
        "obj_bool": "BOOLEAN",
        "obj_int": "INTEGER",
        "obj_mixed": "TEXT",
        "when": "DATETIME",
    }
    got = pyogrio.read_dataframe(p, layer="t")
    assert "row" not in got.columns
    assert got["cat"].tolist()[:2] == ["a", "b"] and pd.isna(got["cat"][2])
    assert got["obj_mixed"].tolist()[:2] == ["1", "x"]


# ------------------------------------------------------------------ errors


_STYLE = layer_styles(BELTS)["cores"]


@pytest.mark.parametrize(
    ("layers", "kwargs", "match"),
    [
        ({}, {}, "at least one layer"),
        ({"pts": _one([Point(0, 0)], crs=None)}, {}, "no CRS"),
        ({"bad name": _one([Point(0, 0)])}, {}, "not allowed"),
        ({"gpkg_contents": _one([Point(0, 0)])}, {}, "reserved"),
        ({"pts": _one([Point(0, 0)], fid=[1])}, {}, "'fid'"),
        ({"t": pd.DataFrame({"a": [1], "A": [2]})}, {}, "duplicate column"),
        ({"t": [1, 2]}, {}, "GeoDataFrame or DataFrame"),
        ({"pts": _one([Point(0, 0)])}, {"styles": {"other": _STYLE}}, "not being written"),
        ({"t": pd.DataFrame({"a": [1]})}, {"styles": {"t": _STYLE}}, "without geometry"),
        ({"pts": _one([Point(0, 0)])}, {"styles": {"pts": "<x/>"}}, "must be a LayerStyle"),
        ({"layer_styles": pd.DataFrame({"a": [1]})}, {}, "reserved for the layer styles"),
        ({"pts": _one([Point(0, 0)])}, {"geometry_types": {"pts": "Polygon"}}, "declared Polygon"),
        ({"pts": _one([Point(0, 0)])}, {"geometry_types": {"pts": "Blob"}}, "not one of"),
        ({"pts": _one([Point(0, 0)])}, {"geometry_types": {"x": "Point"}}, "not being written"),
        ({"t": pd.DataFrame({"a": [1]})}, {"geometry_types": {"t": "Point"}}, "without geometry"),
        ({"t": pd.DataFrame({"a": [1]})}, {"metadata": {"when": object()}}, "JSON"),
        (
            {"belts": _one([MultiPolygon([_square(0, 0)])])},
            {"geometry_types": {"belts": "Polygon"}},
            "multi-part",
        ),
    ],
    ids=[
        "no-layers",
        "no-crs",
        "bad-name",
        "reserved-name",
        "fid-column",
        "duplicate-columns",
        "not-a-frame",
        "style-unknown-layer",
        "style-attribute-table",
        "style-not-description",
        "style-table-name",
        "type-conflict",
        "type-unknown",
        "type-unknown-layer",
        "type-attribute-table",
        "metadata-not-json",
        "multi-in-single",
    ],
)
def test_bad_input_is_refused_and_nothing_written(tmp_path, layers, kwargs, match):
    with pytest.raises(ValueError, match=match):
        write_layers(tmp_path / "a.gpkg", layers, **kwargs)
    assert list(tmp_path.iterdir()) == []


def test_style_for_another_layer_is_refused(tmp_path):
    sld = layer_styles(BELTS)["cores"]
    with pytest.raises(ValueError, match="styles layer 'cores'"):
        write_layers(tmp_path / "a.gpkg", {"pts": _one([Point(0, 0)])}, styles={"pts": sld})


def test_suffix_must_be_gpkg(tmp_path):
    with pytest.raises(ValueError, match="'.gpkg'"):
        write_layers(tmp_path / "a.sqlite", {"pts": _one([Point(0, 0)])})


# ------------------------------------------------------------------ atomic replacement


def test_replacing_and_failing_writes(tmp_path, monkeypatch):
    p = tmp_path / "paleomap.gpkg"
    write_layers(p, {"old": _one([Point(0, 0)])})
    write_layers(p, {"new": _one([Point(1, 1)])})
    assert [str(n) for n, _ in pyogrio.list_layers(p)] == ["new"]

    def fail(*args):
        raise RuntimeError("disk full")

    monkeypatch.setattr(geopackage, "_store_metadata", fail)
    with pytest.raises(RuntimeError, match="disk full"):
        write_layers(p, {"newer": _one([Point(2, 2)])}, metadata={"a": 1})
    assert [str(n) for n, _ in pyogrio.list_layers(p)] == ["new"]
    assert sorted(x.name for x in tmp_path.iterdir()) == ["paleomap.gpkg"]


_KILLED_WRITER = textwrap.dedent(
    """
    import sys, time
    import geopandas as gpd, pyogrio
    from shapely.geometry import Point
    from paleomap.io.geopackage import write_layers

    real_write = pyogrio.write_dataframe

    def write_then_hang(*args, **kwargs):
        real_write(*args, **kwargs)
        print("layer written", flush=True)
        time.sleep(60)

    pyogrio.write_dataframe = write_then_hang
    pts = gpd.GeoDataFrame({"n": [1]}, geometry=[Point(0, 0)], crs=32631)
    write_layers(sys.argv[1], {"a": pts, "b": pts})
    """
)


def test_killed_file_write_keeps_old_geopackage(tmp_path):
    p = tmp_path / "paleomap.gpkg"
    write_layers(p, {"cores": _one([Point(0, 0)]), "run_info": pd.DataFrame({"v": ["old"]})})
    script = tmp_path / "writer.py"
    script.write_text(_KILLED_WRITER)
    proc = subprocess.Popen(
        [sys.executable, str(script), str(p)], stdout=subprocess.PIPE, text=True
    )
    try:
        assert proc.stdout.readline().strip() == "layer written"
        proc.send_signal(signal.SIGKILL)
    finally:
        proc.kill()
        proc.wait()
        proc.stdout.close()
    leftovers = [x.name for x in tmp_path.iterdir() if x.name.startswith(".paleomap.partial-")]
    assert leftovers  # the half-written file is beside, not in place
    assert [str(n) for n, _ in pyogrio.list_layers(p)] == ["cores", "run_info"]
    con = sqlite3.connect(p)
    try:
        assert con.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
    finally:
        con.close()
    # The next write tidies the dead writer's leftovers.
    write_layers(p, {"cores": _one([Point(0, 0)])})
    assert sorted(x.name for x in tmp_path.iterdir()) == ["paleomap.gpkg", "writer.py"]
