"""Dated records of the cores: cut at picks, erosional gaps censored, end ages uncertain."""

from types import SimpleNamespace

import numpy as np
import pytest

from paleomap.agemodel import build_age_model
from paleomap.cores import Core, Interval, Pick
from paleomap.project import Surface
from paleomap.records import build_records


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


def _records(shore, **kw):
    core = _core()
    model = build_age_model(core, SURFACES)
    project = SimpleNamespace(
        cores=(core,), surfaces=SURFACES, scheme=SimpleNamespace(shoreline_boundary=shore)
    )
    return build_records(project, {"A": model}, **kw)


def test_spans_cut_at_picks_and_gap_censored():
    r = _records(2)
    spans = ~r.censored & (r.age_top < r.age_base)
    assert np.c_[r.age_top, r.age_base][spans].tolist() == [
        [0.0, 100.0],
        [200.0, 300.0],
        [300.0, 400.0],
    ]
    assert r.rank[spans].tolist() == [2, 3, 3]
    # the hiatus below the erosional surface (100-200 ka): non-marine then
    gap = r.censored
    assert np.c_[r.age_top, r.age_base, r.rank, r.rank_high][gap].tolist() == [[100.0, 200.0, 0, 1]]
    # engines that read the records at slice ages never see it
    assert r.ranks_at(150.0).tolist() == []
    assert r.ranks_at(250.0).tolist() == [3]


def test_age_sd_combines_pick_and_age_model():
    r = _records(None, age_model_sd=0.1)
    # no gap without a shoreline
    assert not r.censored.any()
    row = np.flatnonzero((r.age_top == 300.0) & (r.age_base == 400.0))[0]
    # at the pick: its own age_sd; at the next pick (no sd): zero
    assert r.age_sd_top[row] == pytest.approx(4.0)
    assert r.age_sd_base[row] == pytest.approx(0.0)
    # the borrowed segment's top lies 100 kyr above its base pick: 0.1 x 100, with
    # the pick's 4 at its base interpolated to 0 at the top (the erosional pick's)
    row = np.flatnonzero((r.age_top == 200.0) & (r.age_base == 300.0))[0]
    assert r.age_sd_top[row] == pytest.approx(10.0)
    # a pick's point record carries the surface's own sd
    point = np.flatnonzero((r.age_top == 300.0) & (r.age_base == 300.0))[0]
    assert r.age_sd_top[point] == pytest.approx(4.0)
