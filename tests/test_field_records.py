"""Dated spans of cores' records: cut at picks, erosional gaps censored."""

import pytest

from paleomap.agemodel import build_age_model
from paleomap.cores import Core, Interval, Pick
from paleomap.field.records import core_records
from paleomap.project import Surface


def _core():
    # 0-10 m: shoreface (rank 2) on an erosional surface at 10 m; below it
    # 10-30 m offshore (rank 3) down to a conformable pick at 30 m and on to 50 m
    return Core(
        "A",
        1.0,
        2.0,
        intervals=(Interval(0.0, 10.0, 2), Interval(10.0, 50.0, 3)),
        picks=(Pick("top", 0.0), Pick("e", 10.0), Pick("b", 30.0), Pick("c", 50.0)),
    )


SURFACES = [
    Surface("top", 0.0),
    Surface("e", 100.0, erosional=True),
    Surface("b", 300.0, age_sd=4.0),
    Surface("c", 400.0),
]


def test_spans_cut_at_picks_and_gap_censored():
    core = _core()
    model = build_age_model(core, SURFACES)
    t = core_records([core], {"A": model}, {"b": 4.0}, n_belts=4, shore_rank=2)
    spans = t[~t["censored"]]
    assert spans[["age_top", "age_base"]].to_numpy().tolist() == [
        [0.0, 100.0],
        [200.0, 300.0],
        [300.0, 400.0],
    ]
    assert spans["rank_low"].tolist() == [2, 3, 3]
    # the hiatus below the erosional surface (100-200 ka): non-marine then
    gap = t[t["censored"]]
    assert gap[["age_top", "age_base", "rank_low", "rank_high"]].to_numpy().tolist() == [
        [100.0, 200.0, 0, 1]
    ]


def test_age_sd_combines_pick_and_age_model():
    core = _core()
    model = build_age_model(core, SURFACES)
    t = core_records([core], {"A": model}, {"b": 4.0}, n_belts=4, shore_rank=None, age_model_sd=0.1)
    # no gap without a shoreline
    assert not t["censored"].any()
    row = t[(t["age_top"] == 300.0)].iloc[0]
    # at the pick: its own age_sd; at the next pick (no sd): zero
    assert row["age_sd_top"] == pytest.approx(4.0)
    assert row["age_sd_base"] == pytest.approx(0.0)
    # the borrowed segment's top lies 100 kyr above its base pick: 0.1 x 100, with
    # the pick's 4 at its base interpolated to 0 at the top (the erosional pick's)
    row = t[(t["age_top"] == 200.0)].iloc[0]
    assert row["age_sd_top"] == pytest.approx(10.0)
