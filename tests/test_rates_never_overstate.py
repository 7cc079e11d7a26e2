"""Rates that never overstate: bounds where the shoreline leaves the mapped area, sense
"uncertain" where the P10-P90 range spans zero, the dip-equivalent net shift.

Checks against the outside world: a relative rise of sea level on a ramp moves the
shoreline landward by the rise over the slope (REFERENCES.md, "Shoreline shift on a
slope", common practice); a rise of 60 m on 1.5 m/km puts it 40 km landward, beyond a
mapped area 40 km across, so the map can only say "at least this far".
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import shapely

from paleomap.errors import PaleomapWarning
from paleomap.io.readers import load_project
from paleomap.migration import TransectPosition, classify_sense, shift_statistics
from paleomap.pipeline import compute
from paleomap.scheme import builtin_scheme
from paleomap.synthetic import make_basin, write_project

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def flooded(tmp_path_factory):
    basin = make_basin(
        n_cores=30,
        seed=4,
        layout="grid",
        scheme=builtin_scheme("siliciclastic_lithology", ("coarse_sand", "fine_sand")),
        sea_level=[(100.0, -4.0), (60.0, 70.0), (20.0, -4.0), (0.0, -4.0)],
        surfaces=[90.0, 60.0, 25.0],
        relief_amplitude_m=2.0,
        gradient_m_per_km=1.5,
        cell_size_m=800.0,
        truth_cell_m=800.0,
    )
    folder = tmp_path_factory.mktemp("flooded") / "p"
    write_project(basin, folder)
    project = load_project(folder / "project.toml")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", PaleomapWarning)
        result = compute(project)
    return basin, project, result, [str(w.message) for w in caught]


def test_the_shoreline_is_landward_of_every_core_at_the_flooded_slice(flooded):
    basin, _, result, messages = flooded
    s2 = result.samples[result.samples["slice"] == "S2"]
    assert len(s2) > 10
    # every core records the distal (marine) side of the tracked boundary at S2
    assert (s2["rank"] >= 2).all()
    assert any("'S2'" in m and "given as bounds" in m for m in messages)
    p = result.positions[result.positions["slice"] == "S2"]
    assert set(p["outside"]) == {"landward"} and p["position_m"].isna().all()


def test_the_pairs_are_reported_as_bounds_with_their_flag(flooded):
    _, _, result, _ = flooded
    sh = result.shifts
    into = sh[(sh["older_slice"] == "S1") & (sh["younger_slice"] == "S2")]
    out = sh[(sh["older_slice"] == "S2") & (sh["younger_slice"] == "S3")]
    assert len(into) and (into["shift_bound"] == "at_least").all()
    assert (into["younger_outside"] == "landward").all()
    # at least as far landward as the older shoreline was from the landward end
    assert (into["shift_m"] > 0).all() and (into["sense"] == "transgression").all()
    assert into["shift_low_m"].isna().all() and into["rate_low_m_per_kyr"].isna().all()
    assert (out["shift_bound"] == "at_least").all() and (out["shift_m"] < 0).all()
    assert (out["older_outside"] == "landward").all()
    assert (out["sense"] == "regression").all()
    pairs = result.slice_pairs.set_index("older_slice")
    assert pairs.loc["S1", "net_shift_bound"] == "at_least"
    assert pairs.loc["S1", "sense"] == "transgression"
    assert pairs.loc["S2", "sense"] == "regression"
    assert pairs.loc["S1", "transects_bound"] == len(into)


def test_no_distance_exceeds_the_mapped_area(flooded):
    _, _, result, _ = flooded
    minx, miny, maxx, maxy = result.grid.area.bounds
    diagonal = float(np.hypot(maxx - minx, maxy - miny))
    values = np.concatenate(
        [
            result.positions[["position_m", "position_low_m", "position_high_m"]].to_numpy(),
            result.shifts[["shift_m", "shift_low_m", "shift_high_m"]].to_numpy(),
            result.slice_pairs[["net_shift_m", "net_normal_shift_m", "median_shift_m"]]
            .to_numpy()
            .ravel()[:, None]
            .repeat(3, axis=1),
        ]
    ).ravel()
    values = values[np.isfinite(values)]
    assert values.size > 20
    assert np.abs(values).max() <= diagonal
    lengths = [g.length for g in result.shifts["geometry"] if g is not None]
    assert max(lengths) <= diagonal


def test_bounds_by_hand():
    inside = TransectPosition(3000.0, 2500.0, 3500.0, 1, "", 10000.0)
    landward = TransectPosition(np.nan, np.nan, np.nan, 0, "landward", 10000.0)
    basinward = TransectPosition(np.nan, np.nan, np.nan, 0, "basinward", 10000.0)
    # flooded beyond the landward end: at least 3 km landward
    assert shift_statistics(inside, landward, 20.0, 10.0)["shift_m"] == 3000.0
    # built out beyond the basinward end: at least 7 km seaward
    assert shift_statistics(inside, basinward, 20.0, 10.0)["shift_m"] == -7000.0
    # from one end beyond to the other: at least the whole transect, never more
    s = shift_statistics(basinward, landward, 20.0, 10.0)
    assert (s["shift_m"], s["shift_bound"]) == (10000.0, "at_least")
    # the same side at both slices: nothing is known
    assert np.isnan(shift_statistics(landward, landward, 20.0, 10.0)["shift_m"])


def test_sense_is_uncertain_where_p10_p90_spans_zero():
    # the example: a P10-P90 range of -1166 to +65 m/kyr is not a regression
    assert classify_sense([-300.0], 0.1, [-1166.0], [65.0]) == ["uncertain"]
    assert classify_sense([-300.0], 0.1, [-1166.0], [-65.0]) == ["regression"]
    a = TransectPosition(5000.0, 3000.0, 7000.0, 1, "", 20000.0)
    b = TransectPosition(4800.0, 2800.0, 6800.0, 1, "", 20000.0)
    s = shift_statistics(a, b, 20.0, 10.0)
    assert s["shift_low_m"] < 0 < s["shift_high_m"]
    assert classify_sense([s["rate_m_per_kyr"]], 0.1, [s["shift_low_m"]], [s["shift_high_m"]]) == [
        "uncertain"
    ]


def test_a_shift_geometry_runs_to_the_area_edge_for_a_bound(flooded):
    _, _, result, _ = flooded
    sh = result.shifts[result.shifts["shift_bound"] == "at_least"]
    lines = {t.transect: t.line for t in result.transects}
    for r in sh.itertuples():
        if r.geometry is None:
            continue
        line = lines[r.transect]
        end = shapely.Point(line.coords[0])
        assert min(shapely.Point(c).distance(end) for c in r.geometry.coords) < 1.0


# ------------------------------------------------ check: free ages where the boundary crosses


def test_check_suggests_free_age_slices_where_the_boundary_crosses_the_cores(flooded):
    from paleomap.cli.check import coverage_lines
    from paleomap.coverage import boundary_coverage, suggest_free_ages
    from paleomap.project import Slice

    _, project, result, _ = flooded
    advice = suggest_free_ages(project, samples=result.samples)
    assert list(advice) == ["S2"]
    older, younger = advice["S2"]
    assert 60.0 < older <= 90.0 and 25.0 <= younger < 60.0
    # at each suggested age the tracked boundary has cores on both sides
    from paleomap.agemodel import sample_slices

    table = sample_slices(project, slices=[Slice("a", older), Slice("b", younger)])
    assert boundary_coverage(table, project.scheme.tracked_boundary)["crosses"].all()
    text = "\n".join(coverage_lines(project, result.samples))
    assert "crosses no core at 1 slice" in text and "S2" in text
    assert f"{older:g}" in text and "[slices] at = " in text


def test_check_prints_the_suggestion(flooded, tmp_path):
    from click.testing import CliRunner

    from paleomap.cli import main

    _, project, _, _ = flooded
    out = CliRunner().invoke(main, ["check", str(project.path)])
    assert out.exit_code == 0, out.output
    assert "crosses no core" in out.output and "Add free-age slices" in out.output
