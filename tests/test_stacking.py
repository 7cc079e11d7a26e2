"""Tests for paleomap.stacking: contacts, trends, turnarounds, region summary.

Depth is positive down; "upward" means decreasing depth. In the built-in siliciclastic
scheme the ranks are gravel 0, coarse_sand 1, fine_sand 2, silt 3, clay 4.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pyproj
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from paleomap.agemodel import build_age_models
from paleomap.cores import Core, Interval, Pick
from paleomap.project import GridSettings, Project, Surface
from paleomap.scheme import builtin_scheme
from paleomap.stacking import (
    RankProfile,
    ReadingSettings,
    classify_trend,
    core_contacts,
    core_gaps,
    cross_check,
    find_turnarounds,
    read_cores,
    region_summary,
    summary_lines,
    weighted_theil_sen,
)

GRAVEL, COARSE, FINE, SILT, CLAY = range(5)


def _core(core_id, ranks_top_down, thickness=2.0, picks=(), gaps=(), easting=0.0):
    """A core of equal-thickness intervals; ``gaps`` lists interval indices preceded by a gap."""
    ivs, depth = [], 0.0
    for i, r in enumerate(ranks_top_down):
        if i in gaps:
            depth += 1.0
        ivs.append(Interval(depth, depth + thickness, r))
        depth += thickness
    pk = tuple(sorted((Pick(n, d) for n, d in picks), key=lambda p: p.depth))
    return Core(core_id, easting, 0.0, intervals=tuple(ivs), picks=pk)


# The lithology schemes ask which boundary to track; these tests read ranks only.
_TRACKS = {
    "siliciclastic_lithology": ("coarse_sand", "fine_sand"),
    "carbonate_lithology": ("grainstone", "packstone"),
}


def _project(cores, surfaces=(), scheme="siliciclastic_lithology", depth_unit="m"):
    crs = pyproj.CRS.from_user_input("EPSG:32631")
    return Project(
        name="test",
        path=Path("/nonexistent/project.toml"),
        crs=crs,
        working_crs=crs,
        depth_unit=depth_unit,
        age_unit="ka",
        scheme=builtin_scheme(scheme, _TRACKS.get(scheme)),
        surfaces=tuple(surfaces),
        slices=(),
        cores=tuple(cores),
        grid=GridSettings(cell_size=100.0),
    )


def _read(cores, surfaces=(), **kw):
    # Age models come from paleomap.agemodel (read_cores builds them when not given).
    project = _project(cores, surfaces, **kw)
    return read_cores(project), project


# --- trends: facts of the trade ------------------------------------------------------


def test_coarse_to_fine_upward_is_deepening_transgressive_and_fining():
    # Catuneanu et al. 2009: a succession that becomes more distal (finer) upward is
    # deepening-upward and transgressive; fining-upward in a siliciclastic scheme.
    core = _core("C1", [CLAY, SILT, FINE, COARSE, GRAVEL])  # top down: fine above coarse
    reading, _ = _read([core])
    row = reading.cores.iloc[0]
    assert row["trend"] == "deepening-upward"
    assert row["sense"] == "transgression"
    assert row["trend_grain"] == "fining-upward"
    assert row["slope_rank_per_m"] > 0
    assert row["rank_change"] == pytest.approx(4.0)


def test_fine_to_coarse_upward_is_shallowing_regressive_and_coarsening():
    # Catuneanu et al. 2009: more proximal (coarser) upward = shallowing-upward, regressive.
    core = _core("C1", [GRAVEL, COARSE, FINE, SILT, CLAY])
    reading, _ = _read([core])
    row = reading.cores.iloc[0]
    assert row["trend"] == "shallowing-upward"
    assert row["sense"] == "regression"
    assert row["trend_grain"] == "coarsening-upward"
    assert row["slope_rank_per_m"] < 0


def test_carbonate_scheme_has_no_grain_words():
    # Fining/coarsening are siliciclastic words (Wentworth 1922 grain sizes); a carbonate
    # ramp (Dunham 1962 textures) gets the depth words only.
    core = _core("C1", [3, 2, 1, 0])
    reading, _ = _read([core], scheme="carbonate_ramp")
    row = reading.cores.iloc[0]
    assert row["trend"] == "deepening-upward"
    assert row["trend_grain"] == ""


def test_single_rank_and_one_belt_wobble_aggrade():
    assert classify_trend(RankProfile.from_arrays([0, 2], [2, 4], [3, 3])).trend == "aggrading"
    wobble = RankProfile.from_arrays(np.arange(8.0), np.arange(1.0, 9.0), [2, 3] * 4)
    t = classify_trend(wobble)
    assert t.trend == "aggrading"
    assert abs(t.rank_change) < 0.5


def test_deepening_then_shallowing_core_is_mixed():
    # Both directions strong (an MFS inside): neither trend describes the core.
    core = _core("C1", [GRAVEL, COARSE, FINE, SILT, CLAY, SILT, FINE, COARSE, GRAVEL])
    reading, _ = _read([core])
    assert reading.cores.iloc[0]["trend"] == "mixed"
    assert reading.cores.iloc[0]["trend_grain"] == ""


def test_trend_is_robust_to_one_thin_outlier():
    # A thin distal bed inside a thick coarsening-upward succession does not turn it.
    p = RankProfile.from_arrays(
        [0, 5, 5.2, 10, 15], [5, 5.2, 10, 15, 20], [COARSE, CLAY, FINE, SILT, CLAY]
    )
    assert classify_trend(p).trend == "shallowing-upward"


def test_weighted_theil_sen_resists_outlier_and_uses_weights():
    assert weighted_theil_sen([0, 1, 2, 3, 4], [0, 1, 2, 3, 40], [1] * 5) == pytest.approx(1.0)
    # Pairwise slopes (0, 2, 4): the plain median is 2; two heavy intervals whose pair has
    # slope 0 pull the weighted median to 0.
    assert weighted_theil_sen([0, 1, 2], [0, 0, 4], [1, 1, 1]) == pytest.approx(2.0)
    assert weighted_theil_sen([0, 1, 2], [0, 0, 4], [10, 10, 1]) == pytest.approx(0.0)
    assert np.isnan(weighted_theil_sen([1.0], [2.0], [1.0]))


def test_feet_slope_is_reported_per_metre():
    core = _core("C1", [CLAY, SILT, FINE, COARSE, GRAVEL])
    m, _ = _read([core])
    ft, _ = _read([core], depth_unit="ft")
    # Same numbers read as feet: the slope per metre is larger by 1 / 0.3048 (exact foot).
    assert ft.cores.iloc[0]["slope_rank_per_m"] == pytest.approx(
        m.cores.iloc[0]["slope_rank_per_m"] / 0.3048
    )


# --- contacts: Walther's Law ---------------------------------------------------------


def test_proximal_to_distal_jump_without_surface_is_flagged():
    # Walther 1894 / Middleton 1973: belts that skip ranks in a vertical succession were
    # not laterally adjacent; without an erosional surface it is a possible break.
    core = _core("C1", [CLAY, GRAVEL], picks=[("S1", 0.5)])
    reading, _ = _read([core], [Surface("S1", 10.0)])
    c = reading.contacts.iloc[0]
    assert (c["lower"], c["upper"], c["jump"], c["flag"]) == ("gravel", "clay", 4, "possible_break")
    assert c["depth"] == pytest.approx(2.0)
    assert c["nearest_surface"] == "S1"
    assert c["surface_distance"] == pytest.approx(1.5)
    assert reading.cores.iloc[0]["n_possible_breaks"] == 1


def test_same_jump_at_erosional_surface_is_not_a_break():
    # Walther's Law does not hold across an erosional surface (Middleton 1973).
    surfaces = [Surface("SB", 10.0, erosional=True), Surface("T", 5.0)]
    core = _core("C1", [CLAY, GRAVEL], picks=[("SB", 2.05), ("T", 0.0)])
    reading, _ = _read([core], surfaces)
    c = reading.contacts.iloc[0]
    assert c["flag"] == "at_erosional_surface"
    assert c["erosional_surface"] == "SB"
    assert reading.cores.iloc[0]["n_possible_breaks"] == 0


def test_jump_near_but_outside_tolerance_or_at_conformable_surface_is_flagged():
    eros = {"SB": Surface("SB", 10.0, erosional=True), "M": Surface("M", 9.0)}
    far = _core("C1", [CLAY, GRAVEL], picks=[("SB", 2.5)])
    assert core_contacts(far, eros)[0].flag == "possible_break"
    assert core_contacts(far, eros, contact_tolerance=1.0)[0].flag == "at_erosional_surface"
    conformable_pick = _core("C2", [CLAY, GRAVEL], picks=[("M", 2.0)])
    c = core_contacts(conformable_pick, eros)[0]
    assert c.flag == "possible_break"
    assert (c.nearest_surface, c.surface_distance) == ("M", 0.0)


def test_tolerance_is_capped_by_thin_intervals():
    # An erosional pick on the next contact is not taken for this one.
    eros = {"SB": Surface("SB", 10.0, erosional=True)}
    core = Core(
        "C",
        0,
        0,
        intervals=(Interval(0, 2, CLAY), Interval(2, 2.1, GRAVEL), Interval(2.1, 4, FINE)),
        picks=(Pick("SB", 2.1),),
    )
    flags = [c.flag for c in core_contacts(core, eros, contact_tolerance=0.5)]
    assert flags == ["possible_break", "at_erosional_surface"]


def test_one_rank_steps_are_conformable_and_jump_sign_is_upper_minus_lower():
    core = _core("C1", [FINE, SILT, FINE])  # top down
    cc = core_contacts(core, {})
    assert [c.jump for c in cc] == [-1, 1]
    assert {c.flag for c in cc} == {"conformable"}


# --- edge cases ----------------------------------------------------------------------


def test_single_interval_core():
    core = _core("C1", [SILT], picks=[("S2", 0.0), ("S1", 2.0)])
    reading, _ = _read([core], [Surface("S1", 20.0), Surface("S2", 10.0)])
    assert reading.contacts.empty and reading.turnarounds.empty
    assert reading.cores.iloc[0]["trend"] == "aggrading"
    assert reading.intervals["interval"].tolist() == ["S1-S2"]
    assert reading.intervals.iloc[0]["trend"] == "aggrading"


def test_gaps_are_noted_not_contacts():
    # Clay over gravel across a gap skips belts but is not a contact, so it is not flagged.
    core = _core("C1", [CLAY, GRAVEL, COARSE], gaps=(1,))
    reading, _ = _read([core])
    assert reading.contacts["depth"].tolist() == [pytest.approx(5.0)]
    assert reading.contacts.iloc[0]["jump"] == GRAVEL - COARSE
    g = reading.gaps.iloc[0]
    assert (g["top"], g["base"], g["lower"], g["upper"]) == (2.0, 3.0, "gravel", "clay")
    assert reading.cores.iloc[0]["n_gaps"] == 1
    assert reading.cores.iloc[0]["n_possible_breaks"] == 0
    assert len(core_gaps(core)) == 1


def test_core_without_picks_is_read_whole():
    core = _core("C1", [CLAY, SILT, FINE, COARSE])
    reading, _ = _read([core], [Surface("S1", 20.0), Surface("S2", 10.0)])
    assert reading.intervals.empty
    assert reading.cores.iloc[0]["trend"] == "deepening-upward"
    assert reading.region["n_cores"].tolist() == [0]


def test_core_with_nothing_logged():
    reading, _ = _read([Core("E", 0.0, 0.0)])
    assert reading.cores.iloc[0]["trend"] == ""
    assert reading.contacts.empty and reading.gaps.empty


# --- turnarounds ---------------------------------------------------------------------

_MFS_CORE = [GRAVEL, COARSE, FINE, SILT, CLAY, SILT, FINE, COARSE]  # top down


def test_deepening_then_shallowing_has_mfs_at_most_distal_facies():
    # Catuneanu et al. 2009: the MFS is the turnaround from deepening-upward below to
    # shallowing-upward above; it lies in the most distal facies of the succession.
    core = _core("C1", _MFS_CORE[::-1][::-1], thickness=2.0)
    turns = find_turnarounds(RankProfile.from_core(core))
    assert [t.kind for t in turns] == ["MFS"]
    t = turns[0]
    clay = core.intervals[4]
    assert t.rank == CLAY
    assert (t.depth_top, t.depth_base) == (clay.top, clay.base)
    assert t.depth == pytest.approx(9.0)
    assert (t.change_below, t.change_above) == (CLAY - COARSE, CLAY - GRAVEL)


def test_shallowing_then_deepening_has_mrs_at_most_proximal_facies():
    # Catuneanu et al. 2009: the MRS is the opposite turnaround.
    core = _core("C1", [CLAY, SILT, FINE, COARSE, GRAVEL, COARSE, FINE, SILT])
    turns = find_turnarounds(RankProfile.from_core(core))
    assert [(t.kind, t.rank, t.depth) for t in turns] == [("MRS", GRAVEL, 9.0)]


def test_turnaround_age_from_age_model_and_nan_where_undefined():
    surfaces = [Surface("A", 100.0), Surface("B", 20.0)]
    defined = _core("C1", _MFS_CORE, picks=[("B", 0.0), ("A", 16.0)])
    undefined = _core("C2", _MFS_CORE, picks=[("B", 0.0), ("A", 4.0)], easting=1000.0)
    reading, _ = _read([defined, undefined], surfaces)
    cores = reading.cores.set_index("core_id")
    assert cores.loc["C1", "mfs_depth"] == pytest.approx(9.0)
    # Age linear between the picks: 20 + 9/16 * 80 (common practice, REFERENCES "Age-depth").
    assert cores.loc["C1", "mfs_age"] == pytest.approx(65.0)
    assert np.isnan(cores.loc["C2", "mfs_age"])
    assert np.isnan(cores.loc["C1", "mrs_depth"])
    assert reading.turnarounds["belt"].tolist() == ["clay", "clay"]


def test_one_belt_wobbles_and_thin_spikes_are_not_turnarounds():
    wobble = RankProfile.from_arrays(np.arange(10.0), np.arange(1.0, 11.0), [2, 3] * 5)
    assert find_turnarounds(wobble) == []
    # A 0.2-thick clay bed in thick shoreface sand: reached without the silt belt, thin.
    spike = RankProfile.from_arrays([0, 5, 5.2], [5, 5.2, 10], [FINE, CLAY, FINE])
    assert find_turnarounds(spike) == []
    # The same clay, as thick as its neighbours, is a real excursion.
    thick = RankProfile.from_arrays([0, 5, 10], [5, 10, 15], [FINE, CLAY, FINE])
    assert [t.kind for t in find_turnarounds(thick)] == ["MFS"]
    # A thin condensed clay reached through silt is kept (not a spike).
    condensed = RankProfile.from_arrays(
        [0, 4, 8, 8.2, 12], [4, 8, 8.2, 12, 16], [FINE, SILT, CLAY, SILT, FINE]
    )
    t = find_turnarounds(condensed)
    assert [(x.kind, x.rank, x.depth) for x in t] == [("MFS", CLAY, pytest.approx(8.1))]


def test_min_change_must_be_positive():
    with pytest.raises(ValueError, match="min_change must be at least 1"):
        find_turnarounds(RankProfile.from_arrays([0], [1], [0]), min_change=0)


def test_two_cycles_give_alternating_turnarounds():
    ranks = [COARSE, FINE, SILT, CLAY, SILT, FINE, COARSE, FINE, SILT, CLAY, SILT, FINE]
    core = _core("C1", ranks)  # top down
    kinds = [t.kind for t in find_turnarounds(RankProfile.from_core(core))]
    assert kinds == ["MFS", "MRS", "MFS"]
    # Without the basal fine sand the lower clay has only one rank of deepening below it,
    # fewer than min_change = 2, so it is not suggested.
    core = _core("C1", ranks[:-1])
    kinds = [t.kind for t in find_turnarounds(RankProfile.from_core(core))]
    assert kinds == ["MFS", "MRS"]


def test_turnarounds_line_up_with_picks():
    surfaces = [Surface("SB", 100.0), Surface("MFS1", 60.0), Surface("TOP", 20.0)]
    cores = [
        _core("C1", _MFS_CORE, picks=[("TOP", 0.0), ("MFS1", 9.5), ("SB", 16.0)]),
        _core("C2", _MFS_CORE, picks=[("TOP", 0.0), ("MFS1", 3.0), ("SB", 16.0)], easting=1.0),
    ]
    reading, _ = _read(cores, surfaces)
    s = reading.surfaces.set_index("surface")
    assert s.loc["MFS1", "n_picked"] == 2
    assert s.loc["MFS1", "n_mfs"] == 1  # C2's pick lies 5 m above its clay
    assert s.loc["SB", "n_mfs"] == 0
    near = reading.turnarounds.set_index("core_id")
    assert near.loc["C1", "nearest_surface"] == "MFS1"
    assert near.loc["C1", "surface_distance"] == pytest.approx(0.5)


# --- intervals and region ------------------------------------------------------------


def test_intervals_between_picks_are_named_older_younger():
    surfaces = [Surface("S1", 100.0), Surface("S2", 60.0), Surface("S3", 20.0)]
    core = _core("C1", _MFS_CORE, picks=[("S3", 0.0), ("S2", 9.0), ("S1", 16.0)])
    reading, _ = _read([core], surfaces)
    iv = reading.intervals.set_index("interval")
    assert list(iv.index) == ["S2-S3", "S1-S2"]
    assert iv.loc["S1-S2", "trend"] == "deepening-upward"  # below the clay
    assert iv.loc["S1-S2", "trend_grain"] == "fining-upward"
    assert iv.loc["S2-S3", "trend"] == "shallowing-upward"
    assert (iv.loc["S1-S2", "top"], iv.loc["S1-S2", "base"]) == (9.0, 16.0)


def test_region_counts_and_missing_pick_located_by_age_model():
    surfaces = [Surface("S1", 100.0), Surface("S2", 60.0), Surface("S3", 20.0)]
    full = _core("A", _MFS_CORE, picks=[("S3", 0.0), ("S2", 9.0), ("S1", 16.0)])
    # B lacks S2; its linear age model puts 60 ka at 8 m (midway between 0 and 16 m).
    missing = _core("B", _MFS_CORE, picks=[("S3", 0.0), ("S1", 16.0)], easting=1.0)
    flat = _core("C", [SILT] * 8, picks=[("S3", 0.0), ("S2", 9.0), ("S1", 16.0)], easting=2.0)
    reading, _ = _read([full, missing, flat], surfaces)
    region = reading.region.set_index("interval")
    assert list(region.index) == ["S1-S2", "S2-S3"]
    assert region.loc[
        "S1-S2", ["n_cores", "n_deepening", "n_shallowing", "n_aggrading", "n_mixed"]
    ].tolist() == [3, 2, 0, 1, 0]
    assert region.loc["S1-S2", "core_sense"] == "transgression"
    assert region.loc["S2-S3", "core_sense"] == "regression"
    b = reading.pair_trends.set_index(["core_id", "interval"])
    assert b.loc[("B", "S1-S2"), "top"] == pytest.approx(8.0)
    assert not b.loc[("B", "S1-S2"), "picked"]
    # B's own interval list holds its one pick pair.
    assert reading.intervals[reading.intervals.core_id == "B"]["interval"].tolist() == ["S1-S3"]


def test_cross_check_flags():
    region = pd.DataFrame(
        {
            "older_surface": ["S1", "S2", "S3", "S4", "S5"],
            "younger_surface": ["S2", "S3", "S4", "S5", "S6"],
            "n_cores": [4, 4, 4, 0, 4],
            "n_deepening": [3, 3, 0, 0, 2],
            "n_shallowing": [1, 0, 4, 0, 2],
        }
    )
    mapped = {
        ("S1", "S2"): "transgression",
        ("S2", "S3"): "regression",
        ("S3", "S4"): "transgression",
        ("S4", "S5"): "regression",
        ("S5", "S6"): "regression",
    }
    out = cross_check(region, mapped)
    assert out["agreement"].tolist() == ["agree", "disagree", "disagree", "no_data", "agree"]
    assert out["core_sense"].tolist() == ["transgression", "transgression", "regression", "", ""]
    # A missing or None mapped sense is no data; a stillstand contradicts no core trend.
    out2 = cross_check(region.iloc[:2], {("S1", "S2"): None, ("S2", "S3"): "stillstand"})
    assert out2["agreement"].tolist() == ["no_data", "agree"]
    with pytest.raises(ValueError, match="allowed"):
        cross_check(region, {("S1", "S2"): "seaward"})


def test_region_summary_keeps_pairs_without_cores():
    rows = pd.DataFrame(columns=["core_id", "older_surface", "younger_surface", "trend"])
    t = region_summary(rows, [Surface("A", 3.0), Surface("B", 2.0), Surface("C", 1.0)])
    assert t["interval"].tolist() == ["A-B", "B-C"]
    assert t["n_cores"].tolist() == [0, 0]


# --- summary text --------------------------------------------------------------------


def test_summary_lines_list_breaks_and_intervals():
    surfaces = [Surface("S1", 100.0), Surface("S2", 20.0)]
    core = _core("CORE-7", [CLAY, GRAVEL, GRAVEL], picks=[("S2", 0.0), ("S1", 6.0)])
    reading, project = _read([core], surfaces)
    lines = summary_lines(reading, project.scheme)
    text = "\n".join(lines)
    assert "1 possible breaks" in lines[0]
    assert any("CORE-7 at 2.00 m: gravel -> clay (jump +4)" in ln for ln in lines)
    assert "nearest surface S2 2.00 m away" in text
    assert "S1-S2: 1 / 0 / 0 / 0 of 1 cores" in text
    assert "deepening-upward (fining-upward), transgression" in text


def test_settings_change_thresholds():
    core = _core("C1", [FINE, SILT, FINE])  # a one-rank excursion
    project = _project([core])
    models = build_age_models(project)
    loose = read_cores(project, models, ReadingSettings(min_change=1))
    strict = read_cores(project, models)
    assert loose.turnarounds["kind"].tolist() == ["MFS"]
    assert strict.turnarounds.empty


def test_long_profile_is_resampled_for_the_fit():
    # 3000 intervals grading proximal to distal upward (top down: distal first).
    n = 3000
    ranks = np.repeat(np.arange(4, -1, -1), n // 5)
    p = RankProfile.from_arrays(np.arange(n) * 0.5, np.arange(1, n + 1) * 0.5, ranks)
    t = classify_trend(p)
    assert t.trend == "deepening-upward"
    assert t.n_intervals == n
    assert 3.0 < t.rank_change < 6.0


# --- properties ----------------------------------------------------------------------

_profiles = st.lists(st.tuples(st.floats(0.1, 10.0), st.integers(0, 4)), min_size=1, max_size=25)


def _from_pairs(pairs, mirror=False):
    th = np.array([p[0] for p in pairs])
    r = np.array([p[1] for p in pairs])
    base = np.cumsum(th)
    return RankProfile.from_arrays(base - th, base, 4 - r if mirror else r)


@settings(max_examples=150, deadline=None)
@given(_profiles)
def test_mirroring_the_ranks_swaps_the_readings(pairs):
    # Common practice: deepening and shallowing, MFS and MRS are mirror images.
    p, q = _from_pairs(pairs), _from_pairs(pairs, mirror=True)
    swap = {"deepening-upward": "shallowing-upward", "shallowing-upward": "deepening-upward"}
    tp, tq = classify_trend(p), classify_trend(q)
    assert tq.trend == swap.get(tp.trend, tp.trend)
    kinds = {"MFS": "MRS", "MRS": "MFS"}
    fp, fq = find_turnarounds(p), find_turnarounds(q)
    assert [(kinds[t.kind], t.depth) for t in fp] == [(t.kind, t.depth) for t in fq]


@settings(max_examples=150, deadline=None)
@given(_profiles, st.integers(1, 3))
def test_turnarounds_alternate_and_have_min_change_both_sides(pairs, h):
    turns = find_turnarounds(_from_pairs(pairs), min_change=h)
    kinds = [t.kind for t in turns]
    assert all(a != b for a, b in zip(kinds, kinds[1:], strict=False))
    assert all(t.change_below >= h and t.change_above >= h for t in turns)
    assert all(t.depth_top <= t.depth <= t.depth_base for t in turns)
    p = _from_pairs(pairs)
    assert all(p.tops[0] < t.depth < p.bases[-1] for t in turns)


# --- synthetic basin with known truth ------------------------------------------------


@pytest.fixture(scope="module")
def basin_reading(tmp_path_factory):
    from paleomap.io.readers import load_project
    from paleomap.synthetic import make_basin, write_project

    basin = make_basin(n_cores=30, seed=3, truth_cell_m=1000.0)
    path = write_project(basin, tmp_path_factory.mktemp("basin"))
    project = load_project(path)
    return basin, project, read_cores(project)


def _extremes(history, sign):
    """Ages of the interior maxima (sign=1) or minima (sign=-1) of a sea-level history."""
    a, lv = np.asarray(history.ages), sign * np.asarray(history.levels)
    return [float(a[i]) for i in range(1, len(a) - 1) if lv[i] > lv[i - 1] and lv[i] > lv[i + 1]]


@pytest.mark.parametrize("kind, sign", [("MFS", 1), ("MRS", -1)], ids=["highstand", "lowstand"])
def test_synthetic_turnarounds_bracket_true_sea_level_extremes(basin_reading, kind, sign):
    # Catuneanu et al. 2009: the MFS caps the deepening of a transgression; in the forward
    # model sea-level rise outpaces accumulation, so the deepest water (the most distal
    # belt) is laid down at the highstand, the shallowest at the lowstand. A suggested
    # turnaround spans the extreme belt; the true extreme's deposit (the model's time step
    # at that age) must lie within that span widened by one sampling step.
    basin, _, reading = basin_reading
    ages = _extremes(basin.sea_level, sign)
    turns = reading.turnarounds[reading.turnarounds["kind"] == kind]
    assert len(turns) >= 4
    for t in turns.itertuples(index=False):
        rec = basin.core_record(t.core_id)
        hits = []
        for age in ages:
            step = rec[(rec["older_age"] >= age) & (rec["younger_age"] <= age)]
            if len(step):
                s = step.iloc[0]
                dz = s["base"] - s["top"]
                hits.append(t.depth_top - dz <= s["top"] and s["base"] <= t.depth_base + dz)
        assert any(hits), (t.core_id, t.depth, t.depth_top, t.depth_base)


def test_synthetic_trends_never_oppose_the_true_shoreline_shift(basin_reading):
    # Walther 1894: landward shift of the belts (transgression) stacks more distal facies
    # upward, seaward shift more proximal; so no core should deepen in a regressive pair
    # or shallow in a transgressive one.
    basin, _, reading = basin_reading
    shifts = basin.true_shifts[basin.true_shifts["transect"] == "mean"]
    mapped = {(r.older_slice, r.younger_slice): r.sense for r in shifts.itertuples(index=False)}
    check = cross_check(reading.region, mapped)
    assert set(check["agreement"]) == {"agree"}
    region = reading.region.set_index("interval")
    for (older, younger), sense in mapped.items():
        row = region.loc[f"{older}-{younger}"]
        assert row["n_cores"] == len(basin.cores)
        opposed = row["n_deepening"] if sense == "regression" else row["n_shallowing"]
        assert opposed == 0, (older, younger, sense)
    assert (region["n_deepening"] + region["n_shallowing"]).sum() > 50


def test_check_command_prints_the_core_reading(basin_reading):
    from click.testing import CliRunner

    from paleomap.cli import main

    _, project, reading = basin_reading
    out = CliRunner().invoke(main, ["check", str(project.path)])
    assert out.exit_code == 0, out.output
    for line in summary_lines(reading, project.scheme):
        assert line in out.output
    assert "Stacking per interval" in out.output
