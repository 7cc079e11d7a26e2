"""The bench of independent basin families (``benchmarks/basins``), fast subset.

One seed of every family on tiny grids: each generator's truth must be consistent with
itself and with the cores it logs (Walther's Law in every conformable succession, the
sense of each shoreline shift that a large sea-level change dictates, the planar-ramp
shift, the reading of each core at each surface), its project must load cleanly, and
paleomap's default engine must beat the thin-plate spline of the belt ranks on at least
one family. The whole bench (every family, five seeds, every engine) is
``benchmarks/families.py``; docs/accuracy.md gives its table.
"""

from __future__ import annotations

import doctest
import importlib
import sys
from pathlib import Path

import numpy as np
import pytest
import shapely

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))

from basins.basin import make_basin  # noqa: E402
from basins.families import FAMILIES  # noqa: E402
from basins.scoring import (  # noqa: E402
    build_outputs,
    pair_scores,
    read_ranks,
    slice_scores,
    summarise,
)
from basins.stratigraphy import simulate  # noqa: E402
from basins.writing import write_project  # noqa: E402

from paleomap import compute, load_project  # noqa: E402

MODULES = [
    "bands",
    "basin",
    "drilling",
    "families",
    "region",
    "relief",
    "scoring",
    "sealevel",
    "stratigraphy",
    "truth",
    "writing",
]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(f"basins.{name}")
    assert module.__all__
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert result.failed == 0


@pytest.fixture(scope="module", params=sorted(FAMILIES))
def basin(request):
    return make_basin(request.param, 1, size="tiny")


def test_every_family_has_its_layout_and_slices(basin):
    assert basin.layout in ("random", "lines", "sparse")
    assert len(basin.logged.cores) == (15 if basin.layout == "sparse" else 40)
    assert 6 <= len(basin.truth.slices) <= 8
    # every slice's true boundary crosses the cores' hull
    for name, _ in basin.truth.slices:
        assert shapely.intersection(basin.truth.boundary[name], basin.hull).length > 0, name


@pytest.mark.parametrize("crs", ["projected", "geographic"])
def test_project_loads_without_problems(basin, tmp_path, crs):
    # warnings are errors in this suite: a clean load means no gap, no unpicked surface
    project = load_project(write_project(basin, tmp_path / crs, crs=crs))
    assert len(project.cores) == len(basin.logged.cores)
    assert sum(len(c.intervals) for c in project.cores) == len(basin.logged.intervals)
    assert sum(len(c.picks) for c in project.cores) == len(basin.logged.picks)
    assert len(project.transect_lines) == len(basin.truth.transects)


def test_walther_law_in_every_conformable_succession(basin):
    # Walther (1894), restated by Middleton (1973): vertically adjacent facies of a
    # conformable succession were laterally adjacent, so their ranks differ by one
    contacts = basin.logged.contacts
    jump = (contacts["upper_rank"] - contacts["lower_rank"]).abs()
    conformable = ~contacts["missing_time"]
    assert (jump[conformable] == 1).all(), contacts[conformable & (jump != 1)]
    whole = contacts["core_id"].isin(basin.logged.conformable)
    assert (jump[whole] == 1).all()
    assert basin.logged.conformable, "no core without missing time"


def test_large_sea_level_change_sets_the_sense(basin):
    # common practice: a rise (fall) of sea level far larger than what accumulation and
    # subsidence do over the same time moves the shoreline landward (basinward)
    model, truth = basin.model, basin.truth
    checked = 0
    for (old, a_old), (young, a_young) in zip(truth.slices[:-1], truth.slices[1:], strict=True):
        rise = float(model.sea_level(a_young) - model.sea_level(a_old))
        if abs(rise) < 3.0:
            continue
        shifts = truth.shifts[truth.shifts["older_slice"] == old]["shift_m"]
        assert np.sign(np.nanmedian(shifts)) == np.sign(rise), (old, young, rise)
        checked += 1
    assert checked >= 3


def test_planar_ramp_shift_is_relative_rise_over_slope():
    # common practice (REFERENCES.md): on a planar slope, horizontal shift = vertical
    # rise / tan(slope); here the relative rise is sea level plus subsidence minus the
    # accumulation that every belt shares
    basin = make_basin("planar_ramp", 1, size="tiny", relief=False)
    notes = basin.model.notes
    tan = notes["gradient_m_per_km"] / 1000.0
    net = notes["subsidence_m_per_kyr"] - notes["accumulation_m_per_kyr"]
    shifts = basin.truth.shifts.dropna(subset=["shift_m"])
    assert len(shifts) >= 20
    for r in shifts.itertuples():
        sea = basin.model.sea_level
        rise = float(sea(r.younger_age) - sea(r.older_age)) + net * (r.older_age - r.younger_age)
        assert r.shift_m == pytest.approx(rise / tan, abs=1.0)


def test_cores_read_their_true_belt_where_nothing_is_missing(basin):
    cores = basin.logged.cores.set_index("core_id")
    sim = simulate(basin.model, cores["easting"], cores["northing"])
    position = {cid: k for k, cid in enumerate(cores.index)}
    checked = 0
    for name, age in basin.truth.slices:
        ranks = read_ranks(basin, name)
        picked = set(basin.logged.picks.query("surface == @name")["core_id"])
        for r in ranks.itertuples():
            if r.core_id in basin.logged.conformable and r.core_id in picked:
                true = basin.model.bands.rank(sim.water_depth[age][position[r.core_id]])
                assert r.rank == int(true), (name, r.core_id)
                checked += 1
    assert checked > 0


def test_transect_positions_lie_on_the_true_boundary(basin):
    lattice = basin.truth.easting[1] - basin.truth.easting[0]
    lines = dict(basin.truth.transects)
    single = basin.truth.positions.query("crossings == 1")
    assert len(single) >= 10
    for r in single.itertuples():
        point = shapely.line_interpolate_point(lines[r.transect], r.position_m)
        # the contour is linear between lattice nodes, the profile sampled finely
        assert shapely.distance(point, basin.truth.boundary[r.slice]) < lattice


@pytest.mark.slow
def test_default_engine_beats_the_rank_spline_on_a_family(tmp_path):
    # a generous bound: a mapping that ignored the cores' belts would be far off it
    ratios = {}
    for family in ("carbonate_ramp", "fault_step"):
        basin = make_basin(family, 1, size="tiny")
        result = compute(load_project(write_project(basin, tmp_path / family)))
        outputs = build_outputs(result)
        row = summarise(slice_scores(basin, outputs), pair_scores(basin, outputs))
        assert row["shoreline_error"] < 0.4, (family, row)
        # never the wrong direction but for one pair; "uncertain" (P10-P90 spans zero)
        # is not wrong
        assert row["senses_wrong"] <= 1, (family, row)
        assert row["senses_right"] + row["senses_uncertain"] >= row["pairs"] - 1, (family, row)
        ratios[family] = row["ratio_spline"]
    assert min(ratios.values()) < 0.9, ratios


@pytest.mark.slow
def test_space_time_engine_on_a_planar_ramp_beats_the_spline_and_gets_the_rates(tmp_path):
    # The whole-succession engine on a family it is built for (inherited relief, many
    # dated surfaces): well under the rank spline's shoreline error, rates within the
    # bench's target, every sense right. Its full scores on every family are in
    # docs/accuracy.md.
    basin = make_basin("planar_ramp", 1, size="tiny")
    path = write_project(basin, tmp_path / "p", mapping={"engine": "space_time"})
    outputs = build_outputs(compute(load_project(path)))
    row = summarise(slice_scores(basin, outputs), pair_scores(basin, outputs))
    assert row["ratio_spline"] <= 0.6, row
    assert row["rate_error_median"] <= 0.10, row
    assert row["senses_right"] == row["pairs"], row
