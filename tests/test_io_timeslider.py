"""Tests for paleomap.io.timeslider: ages on the stand-in clock of GIS time sliders."""

from __future__ import annotations

import math

import pandas as pd
import pytest

from paleomap.io import timeslider
from paleomap.io.timeslider import PRESENT, slider_times, with_slider_times


def test_one_day_per_age_unit_before_1950():
    got = slider_times([0.0, 1.0, 90.5, 700_000.0])
    assert str(got.dtype) == "datetime64[ms, UTC]"
    assert got[0] == pd.Timestamp("1950-01-01T00:00:00Z")
    assert got[1] == pd.Timestamp("1949-12-31T00:00:00Z")
    assert got[2] == pd.Timestamp("1949-10-02T12:00:00Z")
    # 700 000 days before 1950 is still in the first century AD.
    assert got[3].year >= 1
    assert str(PRESENT) == "1950-01-01T00:00:00.000"


def test_older_is_earlier_and_nan_is_missing():
    got = slider_times([10.0, 20.0, math.nan])
    assert got[1] < got[0]
    assert pd.isna(got[2])


def test_too_old_for_the_clock():
    with pytest.raises(ValueError, match="too large for the time-slider clock"):
        slider_times([700_001.0])


def test_fields_added_after_the_ages():
    layers = {
        "facies_belts": pd.DataFrame({"slice": ["a"], "age": [16.0], "belt": ["sand"]}),
        "shoreline_shifts": pd.DataFrame({"older_age": [30.0], "younger_age": [16.0]}),
        "cores": pd.DataFrame({"core_id": ["C1"]}),
    }
    out = with_slider_times(layers)
    assert list(out["facies_belts"].columns) == ["slice", "age", "slider_time", "belt"]
    assert list(out["shoreline_shifts"].columns) == [
        "older_age",
        "slider_start",
        "younger_age",
        "slider_end",
    ]
    assert out["shoreline_shifts"]["slider_start"][0] < out["shoreline_shifts"]["slider_end"][0]
    assert out["cores"] is layers["cores"]
    assert "slider_time" not in layers["facies_belts"]  # the input is not changed


def test_public_names_are_listed():
    for name in timeslider.__all__:
        assert hasattr(timeslider, name)
