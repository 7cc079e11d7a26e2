"""Tests of paleomap.agemodel: age-depth models, facies at an age and slice sampling."""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import INTERVALS, PICKS, write_project
from edge_cases import replace_line
from hypothesis import given
from hypothesis import strategies as st

from paleomap.agemodel import (
    SAMPLE_COLUMNS,
    AgeModel,
    build_age_model,
    build_age_models,
    facies_at,
    sample_slices,
)
from paleomap.cores import Core, Interval, Pick
from paleomap.errors import PaleomapWarning
from paleomap.io.readers import load_project
from paleomap.project import Slice, Surface


def _core(picks, intervals=((0.0, 100.0, 2),), core_id="A"):
    return Core(
        core_id,
        0.0,
        0.0,
        intervals=tuple(Interval(t, b, r) for t, b, r in intervals),
        picks=tuple(Pick(s, d) for s, d in picks),
    )


def test_worked_example():
    # Linear age-depth between two dated surfaces: 10 m at 100 ka, 30 m at 300 ka gives
    # 0.1 m/kyr and a(20 m) = 200 ka (common practice; shared/REFERENCES.md, Age-depth).
    model = build_age_model(
        _core([("s1", 10.0), ("s2", 30.0)]), [Surface("s1", 100.0), Surface("s2", 300.0)]
    )
    assert model.age_at(20.0) == pytest.approx(200.0)
    assert model.rates() == (pytest.approx(0.1),)
    assert model.depth_at(200.0) == pytest.approx(20.0)


def test_no_extrapolation_beyond_first_and_last_pick():
    model = build_age_model(
        _core([("s1", 10.0), ("s2", 30.0)]), [Surface("s1", 100.0), Surface("s2", 300.0)]
    )
    assert math.isnan(model.age_at(9.99)) and math.isnan(model.age_at(30.01))
    assert math.isnan(model.depth_at(99.0)) and math.isnan(model.depth_at(301.0))
    assert model.age_at(10.0) == 100.0 and model.age_at(30.0) == 300.0


def test_vectorised_over_arrays():
    model = build_age_model(
        _core([("s1", 10.0), ("s2", 30.0), ("s3", 40.0)]),
        [Surface("s1", 100.0), Surface("s2", 300.0), Surface("s3", 350.0)],
    )
    ages = model.age_at(np.array([[10.0, 20.0], [35.0, 50.0]]))
    np.testing.assert_allclose(ages, [[100.0, 200.0], [325.0, np.nan]])
    depths = model.depth_at(np.array([100.0, 200.0, 325.0, 400.0]))
    np.testing.assert_allclose(depths, [10.0, 20.0, 35.0, np.nan])
    assert isinstance(model.age_at(12.0), float)


@given(
    gaps=st.lists(st.floats(0.1, 50.0), min_size=1, max_size=6),
    durations=st.lists(st.floats(0.5, 500.0), min_size=6, max_size=6),
    frac=st.floats(0.0, 1.0),
)
def test_conformable_model_inverts(gaps, durations, frac):
    depths = np.cumsum([1.0, *gaps])
    ages = np.cumsum([10.0, *durations[: len(gaps)]])
    surfaces = [Surface(f"s{i}", float(a)) for i, a in enumerate(ages)]
    core = _core(
        [(f"s{i}", float(d)) for i, d in enumerate(depths)],
        intervals=((0.0, float(depths[-1]) + 1, 1),),
    )
    model = build_age_model(core, surfaces)
    z = depths[0] + frac * (depths[-1] - depths[0])
    a = model.age_at(z)
    assert ages[0] <= a <= ages[-1]
    assert model.depth_at(a) == pytest.approx(z, rel=1e-9, abs=1e-9)
    assert np.all(np.diff(model.age_at(np.linspace(depths[0], depths[-1], 50))) >= 0)


ERO = [Surface("e", 100.0, erosional=True), Surface("b", 300.0), Surface("c", 400.0)]


def test_erosional_segment_borrows_the_rate_below_and_leaves_a_hiatus():
    # 10 m of section from the erosional surface (100 ka) to 30 m (300 ka); the
    # conformable segment below accumulates 20 m / 100 kyr = 0.2 m/kyr, so the section
    # below the surface spans 100 kyr and starts at 200 ka: 100-200 ka is missing.
    model = build_age_model(_core([("e", 10.0), ("b", 30.0), ("c", 50.0)]), ERO)
    assert model.segment_top_ages == (200.0, 300.0)
    assert model.borrowed == (True, False)
    assert model.hiatuses() == (("e", 100.0, 200.0),)
    assert model.age_at(10.0) == 100.0  # on the surface: its own age
    assert model.age_at(10.0 + 1e-9) == pytest.approx(200.0)  # just below: older
    assert model.age_at(20.0) == pytest.approx(250.0)
    assert math.isnan(model.depth_at(150.0))  # time missing: no record
    assert math.isnan(model.depth_at(200.0))  # the hiatus is open at its older end
    assert model.depth_at(250.0) == pytest.approx(20.0)
    assert model.depth_at(100.0) == 10.0


def test_erosional_segment_borrows_from_above_when_nothing_below():
    surfaces = [Surface("a", 50.0), Surface("e", 100.0, erosional=True), Surface("b", 300.0)]
    # Above: 10 m in 50 kyr = 0.2 m/kyr; below the surface 10 m -> 50 kyr -> 250 ka.
    model = build_age_model(_core([("a", 0.0), ("e", 10.0), ("b", 20.0)]), surfaces)
    assert model.segment_top_ages == (50.0, 250.0)
    assert model.hiatuses() == (("e", 100.0, 250.0),)


def test_borrowed_rate_that_needs_too_much_time_is_clipped_at_the_surface():
    # Below: 1 m in 100 kyr = 0.01 m/kyr; 20 m below the surface would need 2000 kyr,
    # more than the 200 kyr between the surfaces: the segment is the straight line.
    model = build_age_model(_core([("e", 10.0), ("b", 30.0), ("c", 31.0)]), ERO)
    assert model.segment_top_ages[0] == 100.0
    assert model.hiatuses() == ()
    assert model.age_at(20.0) == pytest.approx(200.0)


def test_no_conformable_segment_means_no_record():
    surfaces = [Surface("e", 100.0, erosional=True), Surface("b", 300.0)]
    model = build_age_model(_core([("e", 10.0), ("b", 30.0)]), surfaces)
    assert math.isnan(model.segment_top_ages[0])
    assert math.isnan(model.age_at(20.0)) and math.isnan(model.depth_at(200.0))
    # The picks themselves still date their depths.
    assert model.depth_at(100.0) == 10.0 and model.depth_at(300.0) == 30.0


def test_surfaces_at_one_depth_under_an_erosional_surface():
    surfaces = [Surface("e", 100.0, erosional=True), Surface("b", 300.0), Surface("c", 400.0)]
    model = build_age_model(_core([("e", 10.0), ("b", 10.0), ("c", 30.0)]), surfaces)
    assert model.age_at(10.0) == 100.0
    assert math.isnan(model.depth_at(200.0))
    assert model.depth_at(350.0) == pytest.approx(20.0)


@pytest.mark.parametrize(
    "picks",
    [[], [("s1", 10.0)]],
    ids=["no-picks", "one-pick"],
)
def test_cores_with_too_few_picks(picks):
    model = build_age_model(_core(picks), [Surface("s1", 100.0)])
    assert math.isnan(model.age_at(12.0))
    assert model.has_record == bool(picks)
    assert (model.depth_at(100.0) == 10.0) if picks else math.isnan(model.depth_at(100.0))


def test_facies_at_uses_the_contact_rule_and_gaps():
    core = _core(
        [("s1", 10.0), ("s2", 30.0)],
        intervals=((0.0, 20.0, 4), (20.0, 25.0, 3), (26.0, 40.0, 1)),
    )
    model = build_age_model(core, [Surface("s1", 100.0), Surface("s2", 300.0)])
    assert facies_at(core, model, 150.0) == 4
    assert facies_at(core, model, 200.0) == 4  # 20 m: on a contact, the interval above
    assert facies_at(core, model, 220.0) == 3
    assert facies_at(core, model, 255.0) is None  # 25.5 m: in a gap, no recovery
    assert facies_at(core, model, 290.0) == 1
    assert facies_at(core, model, 400.0) is None


def test_agemodel_is_a_frozen_value():
    model = build_age_model(_core([("s1", 10.0)]), [Surface("s1", 100.0)])
    assert isinstance(model, AgeModel)
    with pytest.raises(AttributeError):
        model.core_id = "B"


def test_sample_slices_on_the_default_project(project_path):
    project = load_project(project_path)
    table = sample_slices(project)
    assert tuple(table.columns) == SAMPLE_COLUMNS
    assert len(table) == 12
    assert table["slice"].unique().tolist() == ["s_old", "s_mid", "s_young"]
    old = table[table["slice"] == "s_old"].set_index("core_id")
    assert old.loc["C2", "belt"] == "coarse_sand" and old.loc["C2", "rank"] == 1
    assert old.loc["C2", "depth"] == 35.0
    assert (table.loc[table["slice"] == "s_young", "belt"] == "clay").all()
    assert table["rank"].dtype == np.int64
    assert old.loc["C3", "easting"] == 500000.0 and old.loc["C3", "northing"] == 4005000.0


def test_sample_slices_at_free_ages_and_many_ages(project_path):
    project = load_project(project_path)
    models = build_age_models(project)
    ages = np.linspace(90.0, 310.0, 45)
    slices = [Slice(f"{a:g}ka", float(a)) for a in ages]
    table = sample_slices(project, slices, models)
    # Only ages between the first and last picks (100-300 ka) have records.
    assert table["age"].min() >= 100.0 and table["age"].max() <= 300.0
    # C1: 150 ka is 10 m of 0.1 m/kyr below 5 m -> 10 m: on the clay|silt contact -> clay.
    one = sample_slices(project, [Slice("150ka", 150.0)], models).set_index("core_id")
    assert one.loc["C1", "depth"] == pytest.approx(10.0)
    assert one.loc["C1", "belt"] == "clay"
    assert one.loc["C2", "belt"] == "clay"


def test_cores_without_record_are_left_out(tmp_path):
    # C1 loses its silt (a gap from 10 to 20 m): no record at s_mid (15 m).
    path = write_project(tmp_path, intervals=replace_line(INTERVALS, 3, None))
    with pytest.warns(PaleomapWarning, match="gap"):
        project = load_project(path)
    table = sample_slices(project)
    mid = table[table["slice"] == "s_mid"]
    assert sorted(mid["core_id"]) == ["C2", "C3", "C4"]


def test_surface_slice_reads_the_pick_even_across_an_erosional_surface(tmp_path):
    path = write_project(
        tmp_path,
        keys={"surfaces[2].erosional": True},
        picks=replace_line(PICKS, 3, "C1,s_mid,20"),
    )
    project = load_project(path)
    table = sample_slices(project).set_index(["slice", "core_id"])
    # 20 m in C1 is the silt|fine_sand contact and s_mid is erosional: what rests on it
    # (the silt) came after the erosion, so the slice reads the fine sand beneath it, the
    # youngest record the erosion left (docs/inputs.md, slices at erosional surfaces).
    assert table.loc[("s_mid", "C1"), "belt"] == "fine_sand"
    assert table.loc[("s_mid", "C1"), "depth"] == 20.0
    # a conformable surface on a contact still reads the interval above it
    conformable = load_project(
        write_project(tmp_path / "c", picks=replace_line(PICKS, 3, "C1,s_mid,20"))
    )
    table = sample_slices(conformable).set_index(["slice", "core_id"])
    assert table.loc[("s_mid", "C1"), "belt"] == "silt"


def test_empty_sample_table_keeps_its_columns(project_path):
    project = load_project(project_path)
    table = sample_slices(project, [Slice("10ka", 10.0)])
    assert len(table) == 0 and tuple(table.columns) == SAMPLE_COLUMNS
