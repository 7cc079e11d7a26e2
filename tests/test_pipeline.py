"""End-to-end build of the demo region: every layer and raster read back.

Checks against outside standards name their source: OGC 12-128r19 (GeoPackage 1.4.0)
requirements as quoted in shared/REFERENCES.md, Walther (1894) restated by Middleton
(1973) for the map's belt order.
"""

from __future__ import annotations

import sqlite3

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pytest
import rasterio
import shapely

from paleomap.belts import walther_contacts
from paleomap.io.readers import load_project
from paleomap.io.writers import GPKG_NAME, raster_names
from paleomap.pipeline import compute, write_build

DEMO = "demo_region/project.toml"

FEATURE_LAYERS = {
    "cores": "POINT",
    "core_slices": "POINT",
    "core_contacts": "POINT",
    "turnarounds": "POINT",
    "facies_belts": "MULTIPOLYGON",
    "shorelines": "MULTILINESTRING",
    "shoreline_bands": "MULTIPOLYGON",
    "transects": "LINESTRING",
    "shoreline_shifts": "LINESTRING",
}
TABLES = ("slice_pairs", "slice_quality", "run_info", "shoreline_positions")


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    project = load_project(DEMO)
    result = compute(project)
    out = tmp_path_factory.mktemp("demo") / "build"
    write_build(result, out, figures=False, report=False)
    return project, result, out


def test_geopackage_has_every_layer_with_the_working_crs(demo):
    project, result, out = demo
    layers = dict(pyogrio.list_layers(out / GPKG_NAME))
    for name in FEATURE_LAYERS:
        assert name in layers, name
        info = pyogrio.read_info(out / GPKG_NAME, layer=name)
        assert pyogrio.read_info(out / GPKG_NAME, layer=name)["crs"] is not None
        gdf = gpd.read_file(out / GPKG_NAME, layer=name)
        assert gdf.crs == project.working_crs
        # shifts on transects that miss the shoreline at a slice have no geometry
        present = gdf.geometry.notna()
        assert bool(gdf.geometry[present].is_valid.all()), name
        assert present.any(), name
        assert info["features"] == len(gdf)
    for name in TABLES:
        assert name in layers


def test_geopackage_meets_ogc_requirements(demo):
    # OGC 12-128r19 requirement 2 (application_id, user_version), 6 and 7 (integrity,
    # foreign keys), gpkg_contents and gpkg_geometry_columns rules (REFERENCES.md).
    _, _, out = demo
    con = sqlite3.connect(out / GPKG_NAME)
    try:
        assert con.execute("PRAGMA application_id").fetchone()[0] == 0x47504B47
        assert con.execute("PRAGMA user_version").fetchone()[0] in (10200, 10300, 10400)
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        assert con.execute("PRAGMA foreign_key_check").fetchall() == []
        srs = {r[0] for r in con.execute("SELECT srs_id FROM gpkg_spatial_ref_sys")}
        assert {4326, -1, 0} <= srs
        contents = dict(con.execute("SELECT table_name, data_type FROM gpkg_contents"))
        geom = {
            r[0]: (r[1], r[2])
            for r in con.execute(
                "SELECT table_name, geometry_type_name, srs_id FROM gpkg_geometry_columns"
            )
        }
        c_srs = dict(con.execute("SELECT table_name, srs_id FROM gpkg_contents"))
    finally:
        con.close()
    for name, gtype in FEATURE_LAYERS.items():
        assert contents[name] == "features"
        assert geom[name][0] == gtype
        assert geom[name][1] == c_srs[name]
    for name in TABLES:
        assert contents[name] == "attributes"


def test_layers_carry_slice_and_age(demo):
    _, result, out = demo
    names = {m.slice.name for m in result.slice_maps}
    for layer in ("core_slices", "facies_belts", "shorelines", "shoreline_bands"):
        gdf = gpd.read_file(out / GPKG_NAME, layer=layer)
        assert {"slice", "age"} <= set(gdf.columns), layer
        assert set(gdf["slice"]) == names, layer
    belts = gpd.read_file(out / GPKG_NAME, layer="facies_belts")
    assert {"belt", "rank", "marine", "area_km2"} <= set(belts.columns)
    shifts = gpd.read_file(out / GPKG_NAME, layer="shoreline_shifts")
    for col in (
        "transect",
        "older_slice",
        "younger_slice",
        "older_age",
        "younger_age",
        "shift_m",
        "shift_low_m",
        "shift_high_m",
        "rate_m_per_kyr",
        "rate_low_m_per_kyr",
        "rate_high_m_per_kyr",
        "sense",
    ):
        assert col in shifts.columns, col


def test_every_core_lies_in_the_belt_it_logs(demo):
    project, result, _ = demo
    for m in result.slice_maps:
        s = result.samples[result.samples["slice"] == m.slice.name]
        for rank, geom in enumerate(m.polygons):
            rows = s[s["rank"] == rank]
            if len(rows):
                assert shapely.contains_xy(geom, rows["easting"], rows["northing"]).all(), (
                    m.slice.name,
                    rank,
                )


def test_belts_that_are_not_neighbours_never_touch(demo):
    # Walther (1894), restated by Middleton (1973).
    _, result, _ = demo
    for m in result.slice_maps:
        assert walther_contacts(m.polygons) == [], m.slice.name
        assert m.quality["walther_ok"]


def test_belt_areas_partition_the_mapped_area(demo):
    _, result, out = demo
    belts = gpd.read_file(out / GPKG_NAME, layer="facies_belts")
    for _name, group in belts.groupby("slice"):
        assert group["area_km2"].sum() == pytest.approx(result.grid.area.area / 1e6, rel=1e-6)


def test_rasters_read_back_with_crs_transform_nodata_and_colours(demo):
    project, result, out = demo
    scheme = project.scheme
    for m in result.slice_maps:
        files = raster_names(m.slice.name)
        with rasterio.open(out / "rasters" / files["belt"]) as src:
            assert src.dtypes[0] == "uint8"
            assert src.nodata == 255
            assert src.crs is not None
            assert src.transform == result.grid.transform
            cmap = src.colormap(1)
            for k, color in enumerate(scheme.colors):
                assert "#{:02x}{:02x}{:02x}".format(*cmap[k][:3]) == color
            data = src.read(1)
            assert np.all(data[~result.grid.mask] == 255)
            assert set(np.unique(data[result.grid.mask])) <= set(range(scheme.n_belts))
        with rasterio.open(out / "rasters" / files["probabilities"]) as src:
            assert src.count == scheme.n_belts
            assert src.dtypes[0] == "float32"
            assert list(src.descriptions) == [f"P({b})" for b in scheme.ids]
            p = src.read()
            inside = result.grid.mask
            assert np.allclose(p[:, inside].sum(axis=0), 1.0, atol=1e-4)
            assert np.all(np.isnan(p[:, ~inside]))
        with rasterio.open(out / "rasters" / files["distal"]) as src:
            d = src.read(1)
            assert np.nanmin(d) >= 0 and np.nanmax(d) <= 1


def test_rates_csv_equals_the_shift_layer(demo):
    _, _, out = demo
    csv = pd.read_csv(out / "rates.csv")
    layer = gpd.read_file(out / GPKG_NAME, layer="shoreline_shifts")
    assert len(csv) == len(layer)
    assert np.allclose(csv["rate_m_per_kyr"], layer["rate_m_per_kyr"], rtol=1e-5, equal_nan=True)


def test_run_info_records_version_project_and_checksums(demo):
    project, _, out = demo
    info = dict(
        pyogrio.read_dataframe(out / GPKG_NAME, layer="run_info")[["key", "value"]].itertuples(
            index=False
        )
    )
    assert "paleomap_version" in info
    assert info["project_text"] == project.config_text
    assert "cores.csv" in info["input_sha256"]


def test_demo_senses_follow_the_synthetic_truth(demo):
    # The demo is a forward-modelled basin: its true shifts are in true_shifts.csv.
    _, result, _ = demo
    truth = pd.read_csv("demo_region/true_shifts.csv")
    mean = truth[truth["transect"] == "mean"] if "transect" in truth.columns else truth
    for r in result.slice_pairs.itertuples():
        t = mean[
            (mean["older_slice"] == r.older_slice) & (mean["younger_slice"] == r.younger_slice)
        ]
        assert len(t) == 1
        assert r.sense == t["sense"].iloc[0]


def test_area_and_transect_estimates_agree_on_a_sinuous_shoreline(demo):
    # Two independent estimates of the same shift: the net area swept divided by the
    # shoreline's extent along strike, and the median over the dip transects.
    _, result, _ = demo
    p = result.slice_pairs
    assert np.allclose(p["net_rate_m_per_kyr"], p["median_rate_m_per_kyr"], rtol=0.1)
    # the normal (length-based) net shift is smaller where the shoreline is sinuous; the
    # headline net shift is the dip-equivalent one
    assert (p["net_normal_shift_m"].abs() <= p["net_shift_m"].abs() + 1e-6).all()


def test_core_reading_is_in_the_geopackage(demo):
    _, result, out = demo
    contacts = gpd.read_file(out / GPKG_NAME, layer="core_contacts")
    assert {"core_id", "depth_m", "lower", "upper", "jump_ranks", "flag"} <= set(contacts.columns)
    assert len(contacts) == len(result.reading.contacts)
    cores = gpd.read_file(out / GPKG_NAME, layer="cores")
    assert "trend" in " ".join(cores.columns)
    pairs = pyogrio.read_dataframe(out / GPKG_NAME, layer="slice_pairs")
    assert {"n_deepening", "n_shallowing", "agreement"} <= set(pairs.columns)
    assert (pairs["agreement"] != "disagree").all()


def test_turnarounds_and_gaps_layers(demo):
    # The stacking docs promise both tables; they are point layers at the cores.
    project, result, out = demo
    turns = gpd.read_file(out / GPKG_NAME, layer="turnarounds")
    assert len(turns) == len(result.reading.turnarounds) > 0
    assert set(turns["kind"]) <= {"maximum flooding", "maximum regressive"}
    assert {"core_id", "depth_m", "age", "confidence", "cycle"} <= set(turns.columns)
    assert turns["confidence"].between(0, 1).all()
    gaps = pyogrio.read_info(out / GPKG_NAME, layer="gaps")
    assert gaps["geometry_type"] == "Point" and gaps["features"] == len(result.reading.gaps)
    assert {"core_id", "top_m", "base_m", "thickness_m"} <= set(gaps["fields"])


def test_no_leftover_join_columns(demo):
    _, _, out = demo
    for name, _ in pyogrio.list_layers(out / GPKG_NAME):
        fields = pyogrio.read_info(out / GPKG_NAME, layer=name)["fields"]
        left = [f for f in fields if f.endswith(("_x", "_y"))]
        assert not left, (name, left)
    cores = pyogrio.read_info(out / GPKG_NAME, layer="cores")["fields"]
    assert list(cores).count("n_intervals") == 1


def test_area_polygon_and_user_transects_are_used(tmp_path):
    from paleomap.synthetic import make_basin
    from paleomap.synthetic import write_project as write_synthetic

    basin = make_basin(n_cores=30, seed=3, cell_size_m=500.0, truth_cell_m=1000.0)
    folder = tmp_path / "p"
    write_synthetic(basin, folder)
    x0, y0 = basin.ramp.centre
    aoi = shapely.box(x0 - 18_000, y0 - 18_000, x0 + 18_000, y0 + 18_000)
    gpd.GeoDataFrame({"name": ["aoi"]}, geometry=[aoi], crs=basin.crs).to_file(
        folder / "area.gpkg", driver="GPKG"
    )
    lines = [
        shapely.LineString([(x0 - 17_000, y0 + dy), (x0 + 17_000, y0 + dy)])
        for dy in (-8_000, 8_000)
    ]
    gpd.GeoDataFrame({"name": ["south", "north"]}, geometry=lines, crs=basin.crs).to_file(
        folder / "lines.geojson", driver="GeoJSON"
    )
    text = (folder / "project.toml").read_text().replace("[grid]\n", '[grid]\narea = "area.gpkg"\n')
    (folder / "project.toml").write_text(text + '\n[migration]\ntransects = "lines.geojson"\n')
    result = compute(load_project(folder / "project.toml"))
    assert (
        result.grid.area.equals_exact(aoi, 1e-6)
        or result.grid.area.symmetric_difference(aoi).area < 1.0
    )
    assert [t.transect for t in result.transects] == ["south", "north"]
    assert {t.source for t in result.transects} == {"user"}
    assert set(result.shifts["transect"]) == {"south", "north"}


def test_float32_maps_derive_probabilities_from_the_latent(tmp_path, monkeypatch):
    # Large maps keep only the latent's mean and sd per slice (float32); probabilities,
    # the distal side and the contouring nodes are derived again on access and must be
    # what the engine's moments give, whatever asks for them.
    import paleomap.field.shared as shared
    from paleomap.belts import node_field
    from paleomap.field.normalcdf import moment_probabilities

    monkeypatch.setattr(shared, "_FAST_BUDGET", 0.0)
    result = compute(load_project(DEMO))
    b = result.project.scheme.tracked_boundary
    g = result.grid
    rng = np.random.default_rng(0)
    pe = rng.uniform(g.west, g.east, 300)
    pn = rng.uniform(g.south, g.north, 300)
    for m in result.slice_maps:
        assert m.stored_probabilities is None
        assert m.latent.dtype == np.float32 and m.latent_sd.dtype == np.float32
        p = m.probabilities
        assert p.shape == (result.project.scheme.n_belts, *g.shape)
        np.testing.assert_array_equal(p, moment_probabilities(m.latent, m.latent_sd, m.thresholds))
        np.testing.assert_allclose(m.distal_probability, p[b:].sum(axis=0), rtol=0, atol=1e-6)
        np.testing.assert_allclose(
            m.distal_probability_at(pe, pn),
            node_field(m.distal_probability, g).at(pe, pn),
            rtol=0,
            atol=1e-6,
        )
        # the rebuilt nodes carry the honouring: every core in its own belt
        nodes = m.nodes
        at_cores = nodes.at(*_core_xy(result, m))
        assert np.array_equal(np.searchsorted(m.thresholds, at_cores, side="right"), m.ranks)
    out = tmp_path / "build"
    write_build(result, out, figures=False, report=False)
    m = result.slice_maps[0]
    with rasterio.open(out / "rasters" / raster_names(m.slice.name)["probabilities"]) as src:
        written = src.read()
    inside = g.mask
    np.testing.assert_array_equal(written[:, inside], m.probabilities[:, inside])


def _core_xy(result, m):
    by_id = {c.core_id: c for c in result.project.cores}
    e = np.array([by_id[c].easting for c in m.core_ids])
    n = np.array([by_id[c].northing for c in m.core_ids])
    return e, n


def test_field_names_carry_units(demo):
    # Every number names its unit: depths in the project's depth unit, rank changes in
    # ranks, rates in m/kyr; no bare "depth", "rate_low" or "rate_high".
    _, _, out = demo
    fields = {
        name: set(pyogrio.read_info(out / GPKG_NAME, layer=name)["fields"])
        for name, _ in pyogrio.list_layers(out / GPKG_NAME)
    }
    for name, names in fields.items():
        assert not names & {"depth", "top_depth", "rate_low", "rate_high", "jump"}, name
    assert {"top_depth_m", "base_depth_m", "mfs_depth_m"} <= fields["cores"]
    assert "depth_m" in fields["core_slices"]
    assert {"rate_low_m_per_kyr", "rate_high_m_per_kyr", "shift_bound"} <= fields[
        "shoreline_shifts"
    ]
    assert {"net_shift_m", "net_normal_shift_m", "net_shift_bound"} <= fields["slice_pairs"]


def test_one_grammatical_form_for_senses(demo):
    _, result, out = demo
    nouns = {"transgression", "regression", "stillstand", "uncertain", ""}
    pairs = pyogrio.read_dataframe(out / GPKG_NAME, layer="slice_pairs")
    assert set(pairs["sense"]) <= nouns
    assert set(pairs["core_sense"].fillna("")) <= nouns
    assert set(result.reading.cores["sense"]) <= nouns
    shifts = pyogrio.read_dataframe(out / GPKG_NAME, layer="shoreline_shifts")
    assert set(shifts["sense"]) <= nouns
