"""Depth references: depths in log depth below a datum, brought below the core top."""

from __future__ import annotations

import pytest
from conftest import CORES, INTERVALS, PICKS, write_project

from paleomap.errors import InputError
from paleomap.io.readers import load_project

# Datum (kelly bushing) elevations: C1 5 m above its top at 10 m, C2 4.5 m above 12.5 m,
# C3 without a top elevation (the datum is then its top), C4 3 m above 8 m.
_DATUM = {"C1": 15.0, "C2": 17.0, "C3": 20.0, "C4": 11.0}
_TOP = {"C1": 10.0, "C2": 12.5, "C3": None, "C4": 8.0}


def _offset(cid: str) -> float:
    return _DATUM[cid] - (_TOP[cid] if _TOP[cid] is not None else _DATUM[cid])


def _in_log_depth(text: str, columns: tuple[int, ...]) -> str:
    header, *rows = text.strip().splitlines()
    out = [header]
    for row in rows:
        cells = row.split(",")
        for i in columns:
            cells[i] = repr(float(cells[i]) + _offset(cells[0]))
        out.append(",".join(cells))
    return "\n".join(out) + "\n"


def _cores_with_datum() -> str:
    header, *rows = CORES.strip().splitlines()
    return (
        "\n".join([header + ",datum_elevation"] + [r + f",{_DATUM[r.split(',')[0]]}" for r in rows])
        + "\n"
    )


def test_log_depths_are_brought_below_the_core_top(tmp_path):
    expected = load_project(write_project(tmp_path / "top"))
    project = load_project(
        write_project(
            tmp_path / "log",
            cores=_cores_with_datum(),
            intervals=_in_log_depth(INTERVALS, (1, 2)),
            picks=_in_log_depth(PICKS, (2,)),
            keys={"inputs.depth_reference": "log"},
        )
    )
    for a, b in zip(expected.cores, project.cores, strict=True):
        # pytest.approx takes flat sequences only (pytest >= 9.2 refuses nested ones)
        assert [iv.rank for iv in a.intervals] == [iv.rank for iv in b.intervals]
        assert [v for iv in a.intervals for v in (iv.top, iv.base)] == pytest.approx(
            [v for iv in b.intervals for v in (iv.top, iv.base)]
        )
        assert [(p.surface, p.depth) for p in a.picks] == [(p.surface, p.depth) for p in b.picks]
    # A core without a top elevation has its top at the datum.
    assert project.cores[2].elevation == 20.0
    assert project.cores[0].elevation == 10.0


def test_a_core_without_datum_is_refused_in_log_depth(tmp_path):
    cores = _cores_with_datum().replace("C2,505000,4000000,12.5,17.0", "C2,505000,4000000,12.5,")
    path = write_project(tmp_path, cores=cores, keys={"inputs.depth_reference": "log"})
    with pytest.raises(InputError, match=r"cores.csv, line 3, column 'datum_elevation': has no da"):
        load_project(path)


def test_a_depth_above_the_core_top_is_refused(tmp_path):
    # C1's datum is 5 m above its top: a log depth of 3 lies above the top.
    picks = PICKS.replace("C1,s_young,5", "C1,s_young,3")
    path = write_project(
        tmp_path, cores=_cores_with_datum(), picks=picks, keys={"inputs.depth_reference": "log"}
    )
    with pytest.raises(
        InputError, match=r"picks.csv, line 2, column 'depth': core 'C1': lies above the core top"
    ):
        load_project(path)


@pytest.mark.parametrize(
    ("value", "match"),
    [
        ({"intervals": "log", "picks": "core_top"}, r"mixes depth references"),
        ("kb", r"'inputs.depth_reference': is not allowed \(got 'kb'\)"),
    ],
    ids=["mixed", "unknown"],
)
def test_depth_reference_settings(tmp_path, value, match):
    with pytest.raises(InputError, match=match):
        load_project(write_project(tmp_path, keys={"inputs.depth_reference": value}))


def test_one_reference_written_per_table_is_accepted(tmp_path):
    path = write_project(
        tmp_path, keys={"inputs.depth_reference": {"intervals": "core_top", "picks": "core_top"}}
    )
    assert len(load_project(path).cores) == 4
