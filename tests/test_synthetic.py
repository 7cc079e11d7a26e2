"""Tests of the forward model with known truth (paleomap.synthetic)."""

from __future__ import annotations

import math
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pyproj
import pytest
import shapely

from paleomap.errors import InputError, OutputExistsError
from paleomap.scheme import Belt, builtin_scheme, custom_scheme
from paleomap.synthetic import (
    DEMO_COMMAND,
    DEMO_SETTINGS,
    FaciesBands,
    Ramp,
    SeaLevelHistory,
    core_positions,
    demo_basin,
    make_basin,
    project_toml,
    read_sea_level,
    write_project,
)
from paleomap.synthetic.truth import _first_crossing

REPO = Path(__file__).resolve().parents[1]
DEMO_DIR = REPO / "demo_region"

FAST = {"truth_cell_m": 1000.0}  # coarse truth maps where a test does not look at them


@pytest.fixture(scope="module")
def basin():
    return make_basin(seed=5, truth_cell_m=400.0)


@pytest.fixture(scope="module")
def eroded():
    # One rise, a fall that exposes the landward part of the ramp, then a rise.
    return make_basin(
        seed=2,
        sea_level=[(60, 0), (45, 15), (30, -10), (15, 5), (0, 5)],
        surfaces=[50, 40, 35, 20, 10],
        erosion_m_per_kyr=1.0,
        relief_amplitude_m=0.0,
        **FAST,
    )


def _transitions(intervals: pd.DataFrame, scheme):
    """(core_id, depth of contact, rank above, rank below) for every logged contact."""
    out = []
    for core_id, g in intervals.groupby("core_id", sort=False):
        ranks = [scheme.rank(f) for f in g["facies"]]
        tops, bases = g["top"].to_numpy(), g["base"].to_numpy()
        for i in range(len(g) - 1):
            assert bases[i] == tops[i + 1], f"{core_id}: gap or overlap at {bases[i]}"
            out.append((core_id, bases[i], ranks[i], ranks[i + 1]))
    return out


# ---------------------------------------------------------------- Walther's Law


@pytest.mark.parametrize(
    "kwargs",
    [
        {},
        {"scheme": "carbonate_ramp"},
        {"layout": "clusters", "subsidence_m_per_kyr_per_km": 0.004, "relief_amplitude_m": 8.0},
        # Fast sea-level swings with long steps: the model must sub-step.
        {"sea_level": [(20, 0), (15, 25), (10, -20), (5, 10), (0, -5)], "step_kyr": 5.0},
    ],
    ids=["shoreface-shelf", "carbonate-ramp", "clusters-subsidence", "fast-swings"],
)
def test_walther_law_in_every_core(kwargs):
    # Walther (1894), restated by Middleton (1973): with no erosional surface, vertically
    # adjacent facies were laterally adjacent: every contact joins belts one rank apart.
    b = make_basin(n_cores=30, seed=1, **FAST, **kwargs)
    assert not any(s.erosional for s in b.surfaces)
    contacts = _transitions(b.intervals, b.scheme)
    assert contacts
    assert all(abs(above - below) == 1 for _, _, above, below in contacts)


def test_walther_breaks_only_at_the_erosional_surface(eroded):
    # Walther (1894; Middleton 1973): the law does not hold across erosional breaks;
    # in the model every contact that skips a belt lies on an erosional surface's pick.
    erosional = [s.name for s in eroded.surfaces if s.erosional]
    assert erosional == ["SB1"]
    picks = eroded.picks[eroded.picks["surface"].isin(erosional)]
    at_break = set(zip(picks["core_id"], picks["depth"], strict=True))
    skips = [
        (c, d)
        for c, d, above, below in _transitions(eroded.intervals, eroded.scheme)
        if abs(above - below) > 1
    ]
    assert skips, "the fall should cut out belts somewhere"
    assert all(s in at_break for s in skips)


def test_erosion_removes_picks_of_eroded_surfaces(eroded):
    # Cores on the exposed ramp lose the record of surfaces older than the cut.
    counts = eroded.picks.groupby("surface").size()
    assert counts["SB1"] == len(eroded.cores)
    assert counts["S2"] < len(eroded.cores)  # 40 ka, deposited then eroded landward
    sb = next(s for s in eroded.surfaces if s.erosional)
    assert sb.age == 30.0  # the end of the fall


# ------------------------------------------------------ stacking under sea-level change


def test_rise_deepens_and_fall_shallows_upward():
    # Common practice: a relative rise faster than accumulation gives deepening-upward
    # (fining-upward) successions, a fall gives shallowing-upward (coarsening-upward) ones.
    b = make_basin(
        n_cores=30,
        seed=3,
        sea_level=[(45, 0), (40, 0), (30, 20), (20, 0), (15, 0)],
        surfaces=[40, 30, 20],
        **FAST,
    )
    picks = b.picks.pivot(index="core_id", columns="surface", values="depth")
    changed_up, changed_down = 0, 0
    for core_id, g in b.intervals.groupby("core_id"):
        ranks_of = g.assign(rank=[b.scheme.rank(f) for f in g["facies"]])
        d40, d30, d20 = picks.loc[core_id, ["S1", "S2", "S3"]]
        rise = ranks_of[(ranks_of["base"] > d30) & (ranks_of["top"] < d40)]
        fall = ranks_of[(ranks_of["base"] > d20) & (ranks_of["top"] < d30)]
        up_rise = rise.sort_values("top", ascending=False)["rank"].to_numpy()
        up_fall = fall.sort_values("top", ascending=False)["rank"].to_numpy()
        assert np.all(np.diff(up_rise) >= 0), f"{core_id} does not deepen upward"
        assert np.all(np.diff(up_fall) <= 0), f"{core_id} does not shallow upward"
        changed_up += int(np.any(np.diff(up_rise) > 0))
        changed_down += int(np.any(np.diff(up_fall) < 0))
    assert changed_up > 10 and changed_down > 10
    shifts = b.true_shifts[b.true_shifts["transect"] == "mean"].set_index("older_slice")
    # and a rise moves the shoreline landward (common practice).
    assert shifts.loc["S1", "sense"] == "transgression"
    assert shifts.loc["S2", "sense"] == "regression"


def test_facies_units_are_time_transgressive():
    # Common practice: under transgression a belt's base is younger landward.
    b = make_basin(
        n_cores=36,
        layout="grid",
        sea_level=[(60, -20), (0, 20)],
        relief_amplitude_m=0.0,
        dip_azimuth_deg=60.0,
        surfaces=[30],
        **FAST,
    )
    dip, _ = b.ramp.local(b.cores["x"].to_numpy(), b.cores["y"].to_numpy())
    base_age = {}
    for core_id in b.cores["core_id"]:
        rec = b.core_record(core_id)
        silt = rec[rec["facies"] == "offshore_transition"]
        # The base of the offshore-transition unit where the core started in a shallower belt.
        if not silt.empty and rec["facies"].iloc[-1] != "offshore_transition":
            base_age[core_id] = silt["older_age"].max()
    ids = b.cores["core_id"].tolist()
    pairs = 0
    for i, a in enumerate(ids):
        for j, c in enumerate(ids):
            if a in base_age and c in base_age and dip[i] < dip[j] - 1000.0:
                assert base_age[a] < base_age[c]
                pairs += 1
    assert pairs > 50


# --------------------------------------------------------- shoreline shift on a slope


@pytest.mark.parametrize("azimuth", [90.0, 37.0, 250.0])
def test_planar_ramp_shift_is_rise_over_tan_slope(azimuth):
    # REFERENCES.md, "Shoreline shift on a slope" (common practice): passive flooding of a
    # planar slope moves the shoreline by the rise divided by tan(slope).
    history = [(50, -10), (35, 5), (20, -3), (0, 6)]
    b = make_basin(
        n_cores=5,
        sea_level=history,
        surfaces=[45, 30, 15, 5],
        rates_m_per_kyr=(0,) * 6,
        relief_amplitude_m=0.0,
        dip_azimuth_deg=azimuth,
        gradient_m_per_km=2.0,
        **FAST,
    )
    h = SeaLevelHistory(history)
    rows = b.true_shifts
    assert len(rows) > 10
    expected = (h.level_at(rows["younger_age"]) - h.level_at(rows["older_age"])) / 0.002
    np.testing.assert_allclose(rows["shift_m"], expected, rtol=1e-9, atol=1e-6)
    np.testing.assert_allclose(
        rows["rate_m_per_kyr"], expected / (rows["older_age"] - rows["younger_age"]), rtol=1e-9
    )


def test_shift_per_metre_matches_reference_values():
    # REFERENCES.md: per 1 m of rise, 57.3 m at 1 degree and 573.0 m at 0.1 degree.
    for degrees, per_metre in ((1.0, 57.3), (0.1, 573.0)):
        gradient = 1000.0 * math.tan(math.radians(degrees))
        b = make_basin(
            n_cores=3,
            sea_level=[(2, 0), (0, 1)],
            surfaces=[2, 1],
            rates_m_per_kyr=(0,) * 6,
            relief_amplitude_m=0.0,
            gradient_m_per_km=gradient,
            centre_elevation_m=0.5,
            **FAST,
        )
        shift = b.true_shifts.loc[b.true_shifts["transect"] == "mean", "shift_m"].iloc[0]
        assert shift == pytest.approx(per_metre * 0.5, abs=0.05)


def test_uniform_accumulation_reduces_the_shift_by_the_aggradation():
    # The same rule on accommodation: a uniform rate r offsets the rise by r * dt.
    b = make_basin(
        n_cores=5,
        sea_level=[(40, 0), (0, 30)],
        surfaces=[30, 10],
        rates_m_per_kyr=(0.2,) * 6,
        relief_amplitude_m=0.0,
        **FAST,
    )
    shift = b.true_shifts["shift_m"].to_numpy()
    np.testing.assert_allclose(shift, (15.0 - 0.2 * 20.0) / 0.0015, rtol=1e-9)


def test_shoreline_position_on_any_line_and_age():
    b = make_basin(
        n_cores=5,
        sea_level=[(10, 0), (0, 3)],
        rates_m_per_kyr=(0,) * 6,
        relief_amplitude_m=0.0,
        surfaces=[5],
        **FAST,
    )
    line = b.dip_line(5000.0)
    # At 2.5 ka sea level is 2.25 m; shoreline 2.25 / 0.0015 m landward of the start-age
    # shoreline, which the default centre puts 5 km landward of the centre.
    centre0 = b.ramp.centre_elevation_m / b.ramp.tan_slope
    expected = 20000.0 + centre0 - 2.25 / 0.0015
    assert b.shoreline_position(line, 2.5) == pytest.approx(expected, abs=1e-6)
    reversed_line = shapely.reverse(line)  # starting basinward: first crossing is none
    assert math.isnan(b.shoreline_position(reversed_line, 2.5))


def test_first_crossing_is_the_landward_one():
    d = np.array([0.0, 1.0, 2.0, 3.0, 4.0])
    assert _first_crossing(d, np.array([2.0, 1.0, -1.0, 1.0, -1.0]), 0.0) == 1.5
    assert math.isnan(_first_crossing(d, np.array([-1.0, 1.0, 1.0, 1.0, 1.0]), 0.0))
    assert math.isnan(_first_crossing(d, np.ones(5), 0.0))


# --------------------------------------------------------- cores agree with the truth


def test_facies_at_each_pick_is_the_true_belt(basin):
    # The interval just above a pick (issue 2 rule) is the true belt at that core and age.
    cores = basin.cores.set_index("core_id")
    ages = [s.age for s in basin.surfaces]
    true = pd.DataFrame(
        basin.true_belt_ranks(cores["x"], cores["y"], ages).T,
        index=cores.index,
        columns=list(basin.slice_names),
    )
    checked = 0
    for core_id, g in basin.intervals.groupby("core_id"):
        for row in basin.picks[basin.picks["core_id"] == core_id].itertuples(index=False):
            above = g[(g["top"] < row.depth) & (g["base"] >= row.depth)]
            assert basin.scheme.rank(above["facies"].iloc[0]) == true.loc[core_id, row.surface]
            checked += 1
    assert checked == len(basin.picks) > 200


def test_cores_lie_in_their_true_belt_polygon(basin):
    cores = basin.cores.set_index("core_id")
    ages = {s.name: s.age for s in basin.surfaces}
    for s in basin.surfaces[:3]:
        layer = basin.true_belts[basin.true_belts["slice"] == s.name].set_index("belt")
        e = basin.elevation_above_sea_level(cores["x"], cores["y"], ages[s.name])
        for core_id, value in zip(cores.index, e, strict=True):
            if min(abs(value - lv) for lv in basin.bands.levels_m) < 0.05:
                continue  # on a boundary: either side is right
            belt = basin.scheme.ids[basin.bands.rank_of(value)]
            point = shapely.Point(cores.loc[core_id, ["x", "y"]].to_numpy())
            assert layer.loc[belt, "geometry"].contains(point)


def test_true_belts_tile_the_region_in_walther_order(basin):
    region = basin.region.area
    for _, g in basin.true_belts.groupby("slice"):
        assert g.geometry.area.sum() == pytest.approx(region, rel=1e-6)
        assert all(g.geometry.is_valid)
        by_rank = dict(zip(g["rank"], g.geometry, strict=True))
        # Walther (1894): belts more than one rank apart never touch on the map.
        for i in by_rank:
            for j in by_rank:
                if j > i + 1:
                    assert by_rank[i].distance(by_rank[j]) > 0


def test_true_shoreline_is_at_sea_level(basin):
    line = basin.true_shorelines.iloc[2]
    pts = shapely.get_coordinates(
        shapely.line_interpolate_point(line.geometry, np.linspace(0.0, line.geometry.length, 200))
    )
    e = basin.elevation_above_sea_level(pts[:, 0], pts[:, 1], line["age"])
    # linear interpolation between 400 m nodes, across the change of accumulation rate
    # at the shoreline
    assert np.max(np.abs(e)) < 0.06


def test_elevation_is_continuous_in_time_between_steps(basin):
    e, n = basin.ramp.centre
    ages = np.linspace(60.0, 59.0, 11)
    values = basin.elevation_above_sea_level([e], [n], ages)[:, 0]
    assert np.all(np.abs(np.diff(values)) < 0.2)
    with pytest.raises(InputError, match="outside the sea-level history"):
        basin.elevation_above_sea_level([e], [n], 500.0)


def test_core_record_is_the_exact_age_model(basin):
    core_id = basin.cores["core_id"].iloc[0]
    rec = basin.core_record(core_id)
    assert rec["top"].iloc[0] == 0.0
    assert np.all(rec["older_age"] > rec["younger_age"])
    picks = basin.picks[basin.picks["core_id"] == core_id]
    for row in picks.itertuples(index=False):
        age = next(s.age for s in basin.surfaces if s.name == row.surface)
        step = rec[np.isclose(rec["older_age"], age, rtol=0, atol=1e-9)]
        assert step["base"].iloc[0] == row.depth


# ------------------------------------------------------------------- the options


def test_layouts():
    ramp = Ramp()
    rng = np.random.default_rng(0)
    e, n = core_positions(ramp, 40, "random", rng)
    d = np.hypot(e[:, None] - e[None, :], n[:, None] - n[None, :]) + np.eye(40) * 1e9
    assert d.min() >= 0.5 * 40000 / math.sqrt(40)
    assert all(ramp.region.contains(shapely.points(e, n)))
    e, n = core_positions(ramp, 40, "grid", rng)
    assert len(e) == 42 and len(np.unique(e)) == 6 and len(np.unique(n)) == 7
    e, n = core_positions(ramp, 60, "clusters", rng)
    assert len(e) == 60 and all(ramp.region.contains(shapely.points(e, n)))
    with pytest.raises(InputError, match="cannot place 40 cores"):
        core_positions(ramp, 40, "random", rng, min_spacing_m=20000.0)
    with pytest.raises(InputError, match="layout"):
        core_positions(ramp, 40, "hexagons", rng)


def test_same_seed_same_basin_other_seed_other_cores():
    a = make_basin(n_cores=15, seed=9, **FAST)
    b = make_basin(n_cores=15, seed=9, **FAST)
    c = make_basin(n_cores=15, seed=10, **FAST)
    pd.testing.assert_frame_equal(a.intervals, b.intervals)
    pd.testing.assert_frame_equal(a.picks, b.picks)
    assert not a.cores[["x", "y"]].equals(c.cores[["x", "y"]])


def test_custom_scheme_with_bands():
    scheme = custom_scheme(
        "delta", [Belt("plain", False), Belt("front", True), Belt("prodelta", True)], None
    )
    b = make_basin(
        n_cores=20, scheme=scheme, levels_m=(0.0, -10.0), rates_m_per_kyr=(0.05, 0.2, 0.05), **FAST
    )
    assert set(b.intervals["facies"]) <= {"plain", "front", "prodelta"}
    assert all(abs(a - c) == 1 for _, _, a, c in _transitions(b.intervals, b.scheme))
    assert "belts = [" in project_toml(b)
    with pytest.raises(InputError, match="no default elevation bands"):
        make_basin(n_cores=5, scheme=scheme, **FAST)
    with pytest.raises(InputError, match="shoreline boundary 'plain|front' must be at 0 m"):
        FaciesBands(scheme, (2.0, -10.0), (0.1, 0.1, 0.1))


def test_carbonate_lithology_tracks_the_grainstone_edge():
    scheme = builtin_scheme("carbonate_lithology", ("grainstone", "packstone"))
    b = make_basin(n_cores=20, scheme=scheme, **FAST)
    assert set(b.true_shorelines["boundary"]) == {"grainstone|packstone"}
    assert set(b.true_shorelines["level_m"]) == {-5.0}
    assert set(b.true_belts["belt"]) == {"grainstone", "packstone", "wackestone", "mudstone"}


def test_carbonate_ramp_tracks_its_shoreline_at_sea_level():
    # Burchette & Wright (1992, from memory): the sabkha and tidal flat meet the lagoon
    # at the shoreline; the shoal's seaward edge is at fair-weather wave base.
    b = make_basin(n_cores=20, scheme="carbonate_ramp", **FAST)
    assert set(b.true_shorelines["boundary"]) == {"sabkha_tidal_flat|lagoon"}
    assert set(b.true_shorelines["level_m"]) == {0.0}
    assert b.bands.boundary_level(3) == -10.0


def test_ages_in_ma_give_rates_in_m_per_kyr():
    b = make_basin(
        n_cores=5,
        sea_level=[(2.0, 0.0), (1.0, 15.0)],
        age_unit="Ma",
        surfaces=[1.8, 1.2],
        rates_m_per_kyr=(0,) * 6,
        relief_amplitude_m=0.0,
        step_kyr=20.0,
        **FAST,
    )
    row = b.true_shifts[b.true_shifts["transect"] == "mean"].iloc[0]
    assert row["shift_m"] == pytest.approx(9.0 / 0.0015)
    assert row["rate_m_per_kyr"] == pytest.approx(9.0 / 0.0015 / 600.0)
    assert 'age_unit = "Ma"' in project_toml(b)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"n_cores": 0}, "n_cores"),
        ({"layout": "ring"}, "layout"),
        ({"gradient_m_per_km": -1.0}, "gradient_m_per_km"),
        ({"step_kyr": 0.0}, "step_kyr"),
        ({"surfaces": [500.0]}, "not inside the sea-level history"),
        ({"scheme": "reef"}, "not a built-in scheme"),
        ({"crs": "EPSG:4326"}, "not a projected CRS"),
        ({"sea_level": [(10, 0)]}, "at least two points"),
        ({"rates_m_per_kyr": (0.1, -0.1, 0.1, 0.1, 0.1, 0.1)}, "rates must be finite"),
    ],
    ids=lambda v: str(v)[:30],
)
def test_bad_arguments_raise_input_errors(kwargs, match):
    with pytest.raises(InputError, match=match):
        make_basin(**FAST, **kwargs)


def test_read_sea_level_reports_file_line_and_value(tmp_path):
    good = tmp_path / "sl.csv"
    good.write_text("age,level,note\n30,-5,x\n0,5,\n")
    assert read_sea_level(good).points == ((30.0, -5.0), (0.0, 5.0))
    bad = tmp_path / "bad.csv"
    bad.write_text("age,level\n30,-5\n-2,oops\n30,1\n")
    with pytest.raises(InputError) as err:
        read_sea_level(bad)
    text = str(err.value)
    assert "bad.csv, line 3, column 'level': is not a number (got 'oops')" in text
    assert "line 3, column 'age': is not a finite age >= 0 (got -2.0)" in text
    assert "line 4, column 'age': is given twice (also on line 2) (got 30.0)" in text
    missing = tmp_path / "m.csv"
    missing.write_text("time,level\n1,2\n")
    with pytest.raises(InputError, match="column 'age' is missing"):
        read_sea_level(missing)
    with pytest.raises(InputError, match="file not found"):
        read_sea_level(tmp_path / "none.csv")


# ------------------------------------------------------------------ written project


@pytest.fixture(scope="module")
def written(basin, tmp_path_factory):
    folder = tmp_path_factory.mktemp("synthetic") / "basin"
    return basin, write_project(basin, folder)


def test_truth_layers_read_back_with_crs(written):
    basin, path = written
    gpkg = path.parent / "truth.gpkg"
    layers = {str(name) for name, _ in pyogrio.list_layers(gpkg)}
    assert layers == {"true_belts", "true_shorelines", "true_transects"}
    belts = gpd.read_file(gpkg, layer="true_belts")
    assert belts.crs == pyproj.CRS.from_epsg(32631)
    assert {"slice", "age", "belt", "rank", "marine", "area_km2"} <= set(belts.columns)
    assert len(belts) == len(basin.true_belts) and belts.geometry.is_valid.all()
    lines = gpd.read_file(gpkg, layer="true_shorelines")
    assert lines.crs == pyproj.CRS.from_epsg(32631)
    assert set(lines["slice"]) == set(basin.slice_names)
    shifts = pd.read_csv(path.parent / "true_shifts.csv")
    assert {"shift_m", "rate_m_per_kyr", "sense", "transect"} <= set(shifts.columns)
    assert len(shifts) == len(basin.true_shifts)


def test_write_refuses_to_replace_without_overwrite(written):
    basin, path = written
    before = path.read_bytes()
    with pytest.raises(OutputExistsError, match="overwrite"):
        write_project(basin, path.parent)
    assert path.read_bytes() == before
    write_project(basin, path.parent, overwrite=True)
    assert path.read_bytes() == before


def test_written_project_round_trips_through_load_project(written):
    # Issue 3: a synthetic project passes the reader with the counts it was made with.
    from paleomap.agemodel import sample_slices
    from paleomap.io.readers import load_project

    basin, path = written
    project = load_project(path)
    assert len(project.cores) == len(basin.cores)
    assert sum(len(c.intervals) for c in project.cores) == len(basin.intervals)
    assert sum(len(c.picks) for c in project.cores) == len(basin.picks)
    assert sorted(s.name for s in project.surfaces) == sorted(basin.slice_names)
    assert len(project.slices) == len(basin.surfaces)
    assert project.crs == basin.crs
    assert project.grid.cell_size == basin.cell_size_m
    # and the reader's slice sampling gives the true belt at every core.
    table = sample_slices(project)
    assert len(table) == len(basin.picks)
    ages = {s.name: s.age for s in basin.surfaces}
    true = [
        basin.true_belt_ranks([r.easting], [r.northing], ages[r.slice])[0]
        for r in table.itertuples(index=False)
    ]
    assert table["rank"].tolist() == true


# ------------------------------------------------------------------ the demo region


def test_demo_region_is_reproduced_by_its_command(tmp_path):
    # The committed demo_region/ is what DEMO_COMMAND writes, byte for byte (tables),
    # and layer for layer (truth.gpkg, whose SQLite bytes carry a time stamp).
    out = tmp_path / "demo"
    write_project(demo_basin(), out)
    for name in ("project.toml", "cores.csv", "intervals.csv", "picks.csv", "true_shifts.csv"):
        assert (out / name).read_bytes() == (DEMO_DIR / name).read_bytes(), name
    for layer in ("true_belts", "true_shorelines", "true_transects"):
        new = gpd.read_file(out / "truth.gpkg", layer=layer)
        old = gpd.read_file(DEMO_DIR / "truth.gpkg", layer=layer)
        pd.testing.assert_frame_equal(new.drop(columns="geometry"), old.drop(columns="geometry"))
        assert all(a.equals_exact(b, 1e-6) for a, b in zip(new.geometry, old.geometry, strict=True))


def test_demo_region_matches_its_brief():
    readme = (DEMO_DIR / "README.md").read_text()
    assert DEMO_COMMAND in readme
    size = sum(p.stat().st_size for p in DEMO_DIR.iterdir())
    assert size < 1_000_000
    cores = pd.read_csv(DEMO_DIR / "cores.csv")
    assert 30 <= len(cores) <= 60 and len(cores) == DEMO_SETTINGS["n_cores"]
    assert 6 <= len(DEMO_SETTINGS["surfaces"]) <= 10
    shifts = pd.read_csv(DEMO_DIR / "true_shifts.csv")
    mean = shifts[shifts["transect"] == "mean"]
    assert {"transgression", "regression"} <= set(mean["sense"])
    assert DEMO_SETTINGS["relief_amplitude_m"] > 0
