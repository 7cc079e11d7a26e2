"""Tests of paleomap.cores: core values, the cell number parser and build_cores."""

from __future__ import annotations

import math

import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from paleomap.cores import Core, Interval, Pick, build_cores, parse_number
from paleomap.errors import InputError, PaleomapWarning, ProblemLog
from paleomap.project import Surface
from paleomap.scheme import builtin_scheme

SCHEME = builtin_scheme("siliciclastic_lithology", ("coarse_sand", "fine_sand"))
SURFACES = [Surface("s1", 100.0), Surface("s2", 200.0, erosional=True), Surface("s3", 300.0)]


def _tables(cores=None, intervals=None, picks=None):
    cores = cores or [("A", 0.0, 0.0), ("B", 1000.0, 0.0)]
    intervals = intervals or [
        ("A", 0, 10, "clay"),
        ("A", 10, 20, "silt"),
        ("B", 0, 15, "Fine Sand"),
        ("B", 15, 30, "gravel"),
    ]
    picks = picks or [("A", "s1", 2), ("A", "s3", 18), ("B", "s1", 1), ("B", "s2", 20)]
    return (
        pd.DataFrame(cores, columns=["core_id", "x", "y"]).assign(line=range(2, 2 + len(cores))),
        pd.DataFrame(intervals, columns=["core_id", "top", "base", "facies"]).assign(
            line=range(2, 2 + len(intervals))
        ),
        pd.DataFrame(picks, columns=["core_id", "surface", "depth"]).assign(
            line=range(2, 2 + len(picks))
        ),
    )


# -- the number parser --------------------------------------------------------------------


@given(st.floats(allow_nan=False, allow_infinity=False))
def test_parse_number_reads_back_any_finite_float(value):
    assert parse_number(repr(value)) == value
    assert parse_number(f"  {value!r}\t") == value
    assert parse_number(value) == value


@given(st.integers(min_value=-(10**15), max_value=10**15))
def test_parse_number_reads_integers(value):
    assert parse_number(str(value)) == float(value)
    assert parse_number(f"+{abs(value)}") == float(abs(value))


@given(st.text())
def test_parse_number_accepts_only_finite_decimal_numbers(text):
    try:
        number = parse_number(text)
    except ValueError as exc:
        assert str(exc).startswith("is ")
    else:
        assert math.isfinite(number)
        assert number == float(text.strip())
        assert not any(c.isalpha() and c not in "eE" for c in text)
        assert "_" not in text


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("", "is empty"),
        ("   ", "is empty"),
        (None, "is empty"),
        ("nan", "NaN or infinity"),
        ("-Infinity", "NaN or infinity"),
        (float("nan"), "NaN or infinity"),
        ("1e999", "too large"),
        ("12,5", "decimal separator"),
        ("1_000", "is not a number"),
        ("0x10", "is not a number"),
        ("ten", "is not a number"),
        (True, "is not a number"),
    ],
    ids=[
        "empty",
        "blank",
        "none",
        "nan",
        "inf",
        "float-nan",
        "overflow",
        "decimal-comma",
        "underscore",
        "hex",
        "word",
        "bool",
    ],
)
def test_parse_number_rejects(text, message):
    with pytest.raises(ValueError, match=message):
        parse_number(text)


# -- core values ---------------------------------------------------------------------------


def test_interval_at_contact_gap_and_ends():
    core = Core("A", 0, 0, intervals=(Interval(0, 10, 4), Interval(10, 20, 3), Interval(22, 30, 1)))
    assert core.interval_at(0).rank == 4  # core top
    assert core.interval_at(10).rank == 4  # contact: the interval above
    assert core.interval_at(10.001).rank == 3
    assert core.interval_at(21) is None  # gap: no recovery
    assert core.interval_at(22) is None  # top of the interval below a gap
    assert core.interval_at(30).rank == 1
    assert core.interval_at(30.1) is None
    assert (core.top, core.base) == (0, 30)


# -- build_cores ------------------------------------------------------------------------------


def test_build_cores_sorts_and_ranks():
    cores, intervals, picks = _tables(
        intervals=[("A", 10, 20, "silt"), ("A", 0, 10, "clay")],
        picks=[("A", "s3", 18), ("A", "s1", 2)],
    )
    with pytest.warns(PaleomapWarning, match=r"line 3, column 'core_id'.*no intervals"):
        (a, b) = build_cores(cores, intervals, picks, SCHEME, SURFACES)
    assert [iv.top for iv in a.intervals] == [0.0, 10.0]
    assert [iv.rank for iv in a.intervals] == [4, 3]
    assert [p.surface for p in a.picks] == ["s1", "s3"]
    assert a.intervals[0].line == 3 and a.picks[0].line == 3
    assert (a.easting, a.northing, a.x, a.y) == (0.0, 0.0, 0.0, 0.0)
    assert b.intervals == () and b.picks == ()


def test_build_cores_uses_projected_coordinates_when_given():
    cores, intervals, picks = _tables()
    cores = cores.assign(easting=[10.0, 20.0], northing=[30.0, 40.0])
    a, b = build_cores(cores, intervals, picks, SCHEME, SURFACES)
    assert (b.x, b.y, b.easting, b.northing) == (1000.0, 0.0, 20.0, 40.0)


def test_build_cores_accepts_text_cells():
    cores = pd.DataFrame({"core_id": ["A"], "x": ["1.5"], "y": [" 2 "], "elevation": [""]})
    intervals = pd.DataFrame({"core_id": ["A"], "top": ["0"], "base": ["5e0"], "facies": ["mud"]})
    picks = pd.DataFrame({"core_id": ["A"], "surface": ["s1"], "depth": ["2.5"]})
    (a,) = build_cores(cores, intervals, picks, SCHEME, SURFACES)
    assert (a.x, a.y, a.elevation) == (1.5, 2.0, None)
    assert a.intervals[0].base == 5.0 and a.pick_depth("s1") == 2.5


def test_build_cores_raises_all_problems_and_warns_without_a_log():
    cores, intervals, picks = _tables(
        intervals=[("A", 0, 10, "clay"), ("A", 12, 20, "marl"), ("Z", 0, 1, "clay")],
        picks=[("A", "s1", 2), ("A", "s9", 5)],
    )
    with pytest.raises(InputError) as info, pytest.warns(PaleomapWarning, match="no intervals"):
        build_cores(cores, intervals, picks, SCHEME, SURFACES, files={"intervals": "logs.csv"})
    text = str(info.value)
    assert "logs.csv, line 3, column 'facies'" in text and "'marl'" in text
    assert "logs.csv, line 4, column 'core_id'" in text and "'Z'" in text
    assert "picks.csv, line 3, column 'surface'" in text and "'s9'" in text


def test_build_cores_with_a_log_collects_warnings():
    cores, intervals, picks = _tables(
        intervals=[("A", 0, 10, "clay"), ("A", 12, 20, "silt"), ("B", 0, 30, "clay")],
        picks=[("A", "s1", 2), ("B", "s1", 2)],
    )
    log = ProblemLog()
    build_cores(cores, intervals, picks, SCHEME, SURFACES, log=log)
    assert not log.has_errors
    assert [w.line for w in log.warnings] == [3]
    assert "gap" in log.warnings[0].message and "10-12" in log.warnings[0].message


def test_unknown_facies_repeated_on_many_lines_is_one_problem():
    rows = [("A", float(i), float(i + 1), "marl") for i in range(12)]
    cores, intervals, picks = _tables(intervals=rows, picks=[("A", "s1", 2)])
    log = ProblemLog()
    build_cores(cores, intervals, picks, SCHEME, SURFACES, log=log)
    facies = [p for p in log.errors if p.column == "facies"]
    assert len(facies) == 1
    assert facies[0].line == 2 and "also on lines 3, 4" in facies[0].message
    assert facies[0].message.endswith(", ...)")


def test_erosional_younger_surface_may_share_a_depth_with_an_older_one():
    cores, intervals, picks = _tables(picks=[("B", "s2", 10), ("B", "s3", 10)])
    a, b = build_cores(cores, intervals, picks, SCHEME, SURFACES)
    assert [p.surface for p in b.picks] == ["s2", "s3"]


def test_scheme_and_surfaces_may_be_skipped():
    cores, intervals, picks = _tables(intervals=[("A", 0, 10, "anything")], picks=[("A", "zz", 1)])
    log = ProblemLog()
    (a, _) = build_cores(cores, intervals, picks, None, None, log=log)
    assert not log.has_errors
    assert a.intervals[0].rank == -1 and a.picks[0].surface == "zz"


def test_pick_value_types():
    p = Pick("s1", 2.0, 5)
    assert (p.surface, p.depth, p.line) == ("s1", 2.0, 5)
    assert Interval(1.0, 3.5, 2).thickness == 2.5


def test_unknown_surface_suggests_a_close_name():
    cores, intervals, picks = _tables(picks=[("A", "S1", 2)])
    log = ProblemLog()
    build_cores(cores, intervals, picks, SCHEME, SURFACES, log=log)
    assert "did you mean 's1'?" in log.errors[0].hint
