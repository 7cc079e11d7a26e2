"""Facies curves in LAS files (written here with lasio, and by hand as the standard lays out)."""

from __future__ import annotations

import lasio
import numpy as np
import pandas as pd
import pyogrio
import pyproj
import pytest
from click.testing import CliRunner
from conftest import CORES, INTERVALS, PICKS, REMOVE, write_project
from hypothesis import given, settings
from hypothesis import strategies as st

from paleomap.agemodel import sample_slices
from paleomap.cli import main
from paleomap.errors import InputError
from paleomap.io.las import intervals_from_samples
from paleomap.io.readers import load_project

# The default project's belts as codes of a discrete facies curve.
_CODES = {1: "clay", 2: "silt", 3: "fine_sand", 4: "coarse_sand", 5: "gravel"}
_RANK_CODE = {"clay": 1, "mud": 1, "silt": 2, "fine_sand": 3, "fine sand": 3, "coarse_sand": 4}
_RANK_CODE["gravel"] = 5
# Ground level and kelly bushing of each well (m): the log datum lies EKB - EGL above the top.
_EGL = {"C1": 10.0, "C2": 12.5, "C3": 3.0, "C4": 8.0}
_EKB = {"C1": 15.3, "C2": 17.0, "C3": 7.25, "C4": 12.0}
_STEP = 0.5


def _lonlat() -> dict[str, tuple[float, float]]:
    to_geo = pyproj.Transformer.from_crs("EPSG:32631", "EPSG:4326", always_xy=True)
    out = {}
    for row in CORES.strip().splitlines()[1:]:
        cid, x, y = row.split(",")[:3]
        lon, lat = to_geo.transform(float(x), float(y))
        out[cid] = (round(lon, 7), round(lat, 7))
    return out


def _intervals(cid: str) -> list[tuple[float, float, int]]:
    rows = [r.split(",") for r in INTERVALS.strip().splitlines()[1:]]
    return [(float(t), float(b), _RANK_CODE[f.lower()]) for c, t, b, f in rows if c == cid]


def _las(cid: str, *, feet: bool = False, header=None, curve="FACIES") -> lasio.LASFile:
    """A LAS 2.0 well with the core's facies sampled every 0.5 m in log depth (below KB)."""
    offset = _EKB[cid] - _EGL[cid]
    ivs = _intervals(cid)
    depth = np.arange(ivs[0][0] + _STEP / 2, ivs[-1][1], _STEP)  # midpoints fall on contacts
    code = np.array([next(c for t, b, c in ivs if t <= d < b) for d in depth], dtype=float)
    log_depth = depth + offset
    las = lasio.LASFile()
    lon, lat = _lonlat()[cid]
    las.well["WELL"].value = cid
    las.well["UWI"].value = f"100/{cid}"
    las.well.append(lasio.HeaderItem("LATI", "DEG", lat, "latitude"))
    las.well.append(lasio.HeaderItem("LONG", "DEG", lon, "longitude"))
    unit = "F" if feet else "M"
    factor = 1 / 0.3048 if feet else 1.0
    las.params.append(lasio.HeaderItem("EKB", unit, _EKB[cid] * factor, "kelly bushing"))
    las.params.append(lasio.HeaderItem("EGL", unit, _EGL[cid] * factor, "ground level"))
    las.params.append(lasio.HeaderItem("LMF", "", "KB", "log measured from"))
    for key, value in (header or {}).items():
        las.well[key].value = value
    las.append_curve("DEPT", log_depth * factor, unit=unit, descr="depth")
    las.append_curve("GR", 40 + 10 * code, unit="API", descr="gamma ray")
    las.append_curve(curve, code, descr="facies code")
    return las


def _write(las: lasio.LASFile, path) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    with open(path, "w") as f:
        las.write(f, version=2.0, fmt="%.12g")


def _log_picks() -> str:
    header, *rows = PICKS.strip().splitlines()
    out = [header]
    for row in rows:
        cid, surface, depth = row.split(",")
        out.append(f"{cid},{surface},{float(depth) + _EKB[cid] - _EGL[cid]!r}")
    return "\n".join(out) + "\n"


def _las_project(folder, *, feet=("C3",), wells=None, keys=None, picks=None):
    for cid in _EGL:
        las = (wells or {}).get(cid) or _las(cid, feet=cid in feet)
        _write(las, folder / "logs" / f"{cid}.las")
    settings = {
        "project.crs": "EPSG:4326",
        "grid.cell_size": 500.0,
        "inputs.cores": REMOVE,
        "inputs.intervals": REMOVE,
        "inputs.logs": "logs",
        "inputs.facies_curve": "FACIES",
        "inputs.depth_reference": "log",
        "inputs.facies_codes": {str(k): v for k, v in _CODES.items()},
        **(keys or {}),
    }
    return write_project(
        folder,
        keys=settings,
        cores=None,
        intervals=None,
        picks=_log_picks() if picks is None else picks,
    )


def _csv_project(folder):
    """The same project as CSV: positions in lon/lat, depths below the core top."""
    lonlat = _lonlat()
    cores = "core_id,x,y,elevation\n" + "".join(
        f"{cid},{lon!r},{lat!r},{_EGL[cid]}\n" for cid, (lon, lat) in lonlat.items()
    )
    return write_project(folder, cores=cores, keys={"project.crs": "EPSG:4326"})


def test_intervals_from_samples_cover_half_a_step_either_side():
    # Samples every 0.5 m from 100 m: codes 1 1 2 2 2 then a null, then 1.
    got = intervals_from_samples(
        [100.0, 100.5, 101.0, 101.5, 102.0, 102.5, 103.0], ["1", "1", "2", "2", "2", None, "1"]
    )
    assert got == [(99.75, 100.75, "1", 0), (100.75, 102.25, "2", 2), (102.75, 103.25, "1", 6)]
    # Uneven sampling: the boundary is the midpoint between neighbours.
    assert intervals_from_samples([1.0, 2.0, 4.0], ["a", "b", "b"]) == [
        (0.5, 1.5, "a", 0),
        (1.5, 5.0, "b", 1),
    ]


def test_las_project_in_log_depth_reads_like_the_csv_project(tmp_path):
    from_las = load_project(_las_project(tmp_path / "las"))
    from_csv = load_project(_csv_project(tmp_path / "csv"))
    assert [c.core_id for c in from_las.cores] == [c.core_id for c in from_csv.cores]
    for a, b in zip(from_csv.cores, from_las.cores, strict=True):
        assert (b.easting, b.northing, b.elevation) == pytest.approx(
            (a.easting, a.northing, a.elevation), abs=1e-6
        )
        np.testing.assert_allclose(
            np.column_stack(b.rank_profile()), np.column_stack(a.rank_profile()), atol=1e-9
        )
        assert [p.surface for p in b.picks] == [p.surface for p in a.picks]
        np.testing.assert_allclose(
            [p.depth for p in b.picks], [p.depth for p in a.picks], atol=1e-9
        )
    las_read = sample_slices(from_las)[["core_id", "slice", "belt", "rank"]]
    csv_read = sample_slices(from_csv)[["core_id", "slice", "belt", "rank"]]
    assert len(csv_read) == 12
    pd.testing.assert_frame_equal(las_read, csv_read)


@pytest.mark.slow
def test_las_project_builds_and_reads_the_same_belts_at_the_picks_as_csv(tmp_path):
    layers = []
    for kind, path in (
        ("las", _las_project(tmp_path / "las")),
        ("csv", _csv_project(tmp_path / "csv")),
    ):
        out = tmp_path / f"build_{kind}"
        result = CliRunner().invoke(main, ["build", str(path), "--out", str(out), "--no-figures"])
        assert result.exit_code == 0, result.output
        frame = pyogrio.read_dataframe(out / "paleomap.gpkg", layer="core_slices")
        layers.append(frame.sort_values(["core_id", "slice"]).reset_index(drop=True))
    las_layer, csv_layer = layers
    assert len(csv_layer) == 12
    assert list(las_layer["belt"]) == list(csv_layer["belt"])
    assert list(las_layer["rank"]) == list(csv_layer["rank"])
    # depth fields carry the project's depth unit (docs/conventions.md)
    depth = next(c for c in csv_layer.columns if c.startswith("depth_"))
    assert np.allclose(las_layer[depth], csv_layer[depth], atol=1e-9)


def _check(path):
    return CliRunner().invoke(main, ["check", str(path)])


def test_unknown_facies_code_names_file_line_curve_and_value(tmp_path):
    las = _las("C2")
    data = las.curves["FACIES"].data.copy()
    data[[3, 9]] = 7.0
    las.curves["FACIES"].data = data
    path = _las_project(tmp_path, wells={"C2": las})
    result = _check(path)
    assert result.exit_code == 2
    text = (tmp_path / "logs" / "C2.las").read_text().splitlines()
    first = next(i for i, line in enumerate(text, 1) if line.startswith("~A")) + 4
    assert (
        f"logs/C2.las, line {first}, ~ASCII section, column 'FACIES': is not a code of "
        f"[inputs.facies_codes] (also on line {first + 6}) (got 7.0)" in result.output
    )
    assert not (tmp_path / "build").exists()


def test_missing_facies_curve_names_the_curve_section(tmp_path):
    path = _las_project(tmp_path, wells={"C4": _las("C4", curve="LITH")})
    result = _check(path)
    assert result.exit_code == 2
    text = (tmp_path / "logs" / "C4.las").read_text().splitlines()
    line = next(i for i, t in enumerate(text, 1) if t.startswith("~C"))
    assert (
        f"logs/C4.las, line {line}, ~Curve section: has no curve of this mnemonic (got 'FACIES')."
        " Its curves: ['DEPT', 'GR', 'LITH']" in result.output
    )


def test_non_monotonic_depths_name_the_row_and_depth(tmp_path):
    las = _las("C1")
    depth = las.index.copy()
    depth[5], depth[6] = depth[6], depth[5]
    las.curves["DEPT"].data = depth
    path = _las_project(tmp_path, wells={"C1": las})
    result = _check(path)
    assert result.exit_code == 2
    # One problem: the picks of a well whose file failed are not reported again.
    assert result.output.startswith("Error: logs/C1.las, line")
    text = (tmp_path / "logs" / "C1.las").read_text().splitlines()
    row6 = next(i for i, t in enumerate(text, 1) if t.startswith("~A")) + 7
    assert (
        f"logs/C1.las, line {row6}, ~ASCII section, column 'DEPT': breaks the depth order: "
        f"the depths are not monotonic (the row before has {depth[5]:g}) (got {float(depth[6])!r})"
        in result.output
    )


def test_null_values_are_gaps(tmp_path):
    las = _las("C1")
    data = las.curves["FACIES"].data.copy()
    data[10:14] = np.nan  # 4 samples of 0.5 m: a 2 m gap
    las.curves["FACIES"].data = data
    with pytest.warns(UserWarning, match=r"core 'C1' has 1 gap\(s\) treated as no recovery"):
        project = load_project(_las_project(tmp_path, wells={"C1": las}))
    c1 = project.cores[0]
    gaps = [
        (a.base, b.top)
        for a, b in zip(c1.intervals, c1.intervals[1:], strict=False)
        if b.top > a.base
    ]
    assert gaps == [pytest.approx((5.0, 7.0))]


def test_a_log_recorded_upward_is_read_top_down(tmp_path):
    las = _las("C2")
    for curve in las.curves:
        curve.data = curve.data[::-1].copy()
    project = load_project(_las_project(tmp_path, wells={"C2": las}))
    expected = load_project(_las_project(tmp_path / "down"))
    assert project.cores[1].intervals == expected.cores[1].intervals


def test_positions_in_a_cores_table_and_the_well_id_from_uwi(tmp_path):
    lonlat = _lonlat()
    cores = "core_id,x,y\n" + "".join(
        f"100/{cid},{lon},{lat}\n" for cid, (lon, lat) in lonlat.items()
    )
    picks = _log_picks().replace("\nC", "\n100/C")
    path = _las_project(
        tmp_path,
        keys={"inputs.cores": "cores.csv", "inputs.well_id": "UWI"},
        picks=picks,
    )
    (tmp_path / "cores.csv").write_text(cores)
    project = load_project(path)
    assert [c.core_id for c in project.cores] == ["100/C1", "100/C2", "100/C3", "100/C4"]
    # The datum still comes from each LAS header.
    assert project.cores[0].intervals[0].top == pytest.approx(0.0)


def test_lat_long_headers_in_a_projected_project_are_refused(tmp_path):
    path = _las_project(tmp_path, keys={"project.crs": "EPSG:32631"})
    result = _check(path)
    assert result.exit_code == 2
    assert "mnemonic 'LONG': is a longitude and latitude, but the project CRS is projected" in (
        result.output
    )


def test_a_file_without_position_or_datum(tmp_path):
    las = _las("C3")
    del las.well["LONG"]
    for mnemonic in ("EKB", "EGL", "LMF"):
        del las.params[mnemonic]
    result = _check(_las_project(tmp_path, wells={"C3": las}))
    assert result.exit_code == 2
    text = (tmp_path / "logs" / "C3.las").read_text().splitlines()
    well = next(i for i, t in enumerate(text, 1) if t.startswith("~W"))
    assert (
        f"logs/C3.las, line {well}, ~Well section: has no position. Give LONG and LATI in the "
        "header" in result.output
    )
    # Its picks are not read; a well with a position but no datum is named at ~Parameter.
    assert "picks.csv" not in result.output
    las = _las("C3")
    for mnemonic in ("EKB", "EGL", "LMF"):
        del las.params[mnemonic]
    result = _check(_las_project(tmp_path / "datum", wells={"C3": las}))
    assert result.exit_code == 2
    text = (tmp_path / "datum" / "logs" / "C3.las").read_text().splitlines()
    params = next(i for i, t in enumerate(text, 1) if t.startswith("~P"))
    assert (
        f"logs/C3.las, line {params}, ~Parameter section: has no datum elevation, which "
        "depth_reference = \"log\" needs (got 'C3')" in result.output
    )


def test_a_duplicate_well_and_an_unreadable_file(tmp_path):
    path = _las_project(tmp_path, wells={"C4": _las("C4", header={"WELL": "C1"})})
    (tmp_path / "logs" / "notes.las").write_text("this is not a log\n")
    result = _check(path)
    assert result.exit_code == 2
    assert "logs/C4.las, line " in result.output
    assert "mnemonic 'WELL': is also the well of logs/C1.las (got 'C1')" in result.output
    assert "logs/notes.las: cannot be read as a LAS file" in result.output


def test_a_glob_that_matches_nothing(tmp_path):
    path = _las_project(tmp_path, keys={"inputs.logs": "wells/*.las"})
    with pytest.raises(InputError, match=r"'inputs.logs': matches no LAS file"):
        load_project(path)


def test_a_code_mapped_to_an_unknown_belt(tmp_path):
    codes = {str(k): v for k, v in _CODES.items()} | {"6": "reef"}
    path = _las_project(tmp_path, keys={"inputs.facies_codes": codes})
    with pytest.raises(InputError, match=r"'inputs.facies_codes.6': is not a facies of the"):
        load_project(path)


# A LAS 2.0 file written by hand in the layout of the standard's examples: comment lines,
# a ~Parameter section, depths in feet, a NULL value.
_HAND_WRITTEN = """\
~VERSION INFORMATION
 VERS.                  2.0 :   CWLS LOG ASCII STANDARD -VERSION 2.0
 WRAP.                  NO  :   ONE LINE PER DEPTH STEP
~WELL INFORMATION
#MNEM.UNIT       DATA                 DESCRIPTION
#----- -----     ----------           -------------------------
 STRT.F          1000.0000            :START DEPTH
 STOP.F          1004.0000            :STOP DEPTH
 STEP.F             1.0000            :STEP
 NULL.           -999.25              :NULL VALUE
 COMP.           ANY OIL COMPANY      :COMPANY
 WELL.           HAND-1               :WELL
 LATI.           45 30' 00" N         :LATITUDE
 LONG.           63 15' 00" W         :LONGITUDE
~CURVE INFORMATION
 DEPT.F                               :  1  DEPTH
 FACIES.                              :  2  FACIES CODE
~PARAMETER INFORMATION
 EKB .F          1010.0               :KELLY BUSHING
~A  DEPTH     FACIES
1000.000   1
1001.000   1
1002.000   -999.25
1003.000   2
1004.000   2
"""


def test_a_hand_written_las_2_file(tmp_path):
    (tmp_path / "logs").mkdir()
    (tmp_path / "logs" / "hand.las").write_text(_HAND_WRITTEN)
    from paleomap.errors import ProblemLog
    from paleomap.io.las import read_logs
    from paleomap.io.origins import Origins
    from paleomap.io.sources import InputSources

    sources = InputSources(
        logs="logs", facies_curve="FACIES", facies_codes={"1": "clay", "2": "silt"}
    )
    log = ProblemLog()
    cores, intervals = read_logs(
        sources, tmp_path, "project.toml", "m", log, Origins(), lambda p: None
    )
    assert not log.errors, log.errors
    assert cores.to_dict("records") == [
        {
            "core_id": "HAND-1",
            "x": -63.25,
            "y": 45.5,
            "elevation": "",
            "datum_elevation": pytest.approx(1010.0 * 0.3048),
            "line": 1,
        }
    ]
    ft = 0.3048
    assert intervals[["top", "base", "facies"]].to_dict("list") == {
        "top": pytest.approx([999.5 * ft, 1002.5 * ft]),
        "base": pytest.approx([1001.5 * ft, 1004.5 * ft]),
        "facies": ["clay", "silt"],
    }


# A LAS 3.0 file as the standard writes one: ~Parameter, comma-delimited data (lasio 0.32
# splits "500.0, 1"; without the space after the comma it reads one column, which
# paleomap refuses below).
_LAS3 = """\
~Version
VERS.   3.0 : CWLS LOG ASCII STANDARD - VERSION 3.0
WRAP.   NO  : ONE LINE PER DEPTH STEP
DLM .   COMMA : DELIMITING CHARACTER
~Well
STRT.M  500.0 : START DEPTH
STOP.M  502.0 : STOP DEPTH
STEP.M  0.5   : STEP
NULL.   -999.25 : NULL VALUE
WELL.   V3-1  : WELL
LATI.DEG 45.5 : LATITUDE
LONG.DEG -63.25 : LONGITUDE
~Parameter
EKB .M  20.0 : KELLY BUSHING
EGL .M  15.0 : GROUND LEVEL
~Curve
DEPT .M      : DEPTH
FACIES.      : FACIES CODE
~Ascii
500.0, 1
500.5, 1
501.0, 2
501.5, 2
502.0, -999.25
"""


def _read_one_file(tmp_path, text: str, **settings):
    from paleomap.errors import ProblemLog
    from paleomap.io.las import read_logs
    from paleomap.io.origins import Origins
    from paleomap.io.sources import InputSources

    (tmp_path / "logs").mkdir(exist_ok=True)
    (tmp_path / "logs" / "one.las").write_text(text)
    sources = InputSources(
        logs="logs",
        facies_curve="FACIES",
        facies_codes={"1": "clay", "2": "silt"},
        **settings,
    )
    log = ProblemLog()
    cores, intervals = read_logs(
        sources, tmp_path, "project.toml", "m", log, Origins(), lambda p: None
    )
    return cores, intervals, [str(p) for p in log.errors]


def test_a_las_3_file_in_log_depth(tmp_path):
    cores, intervals, errors = _read_one_file(tmp_path, _LAS3, depth_reference="log")
    assert errors == []
    row = cores.iloc[0]
    assert (row["core_id"], row["x"], row["y"]) == ("V3-1", -63.25, 45.5)
    assert (row["elevation"], row["datum_elevation"]) == (15.0, 20.0)
    # The last sample is null: the run of 2 ends half a step below 501.5.
    assert intervals[["top", "base", "facies"]].values.tolist() == [
        [499.75, 500.75, "clay"],
        [500.75, 501.75, "silt"],
    ]


def test_comma_data_lasio_cannot_split_is_refused(tmp_path):
    text = _LAS3.replace(", ", ",")
    _, _, errors = _read_one_file(tmp_path, text, depth_reference="log")
    assert errors == [
        "logs/one.las, line 19, ~ASCII section: has 5 data lines but lasio read another "
        "number of rows (got 10). The values could not be split into the curves: check the "
        "delimiter (DLM; with COMMA write a space after each comma) and that every line has "
        "one value per curve"
    ]


def test_log_depths_read_as_below_the_core_top_are_refused(tmp_path):
    # The file is measured from the kelly bushing 5 m above ground: mixing references.
    _, _, errors = _read_one_file(tmp_path, _LAS3)
    assert errors == [
        "logs/one.las, line 14, ~Parameter section, mnemonic 'EKB': mixes depth references: "
        "the log's depths are measured from a datum 5 above the core top (15) (got 20.0). "
        'Set depth_reference = "log" (and give the picks in log depth too), or give the '
        "datum as the core top"
    ]


def test_a_null_depth_is_refused(tmp_path):
    text = _LAS3.replace("501.0, 2", "-999.25, 2")
    _, _, errors = _read_one_file(tmp_path, text, depth_reference="log")
    assert errors == [
        "logs/one.las, line 22, ~ASCII section, column 'DEPT': has a null or missing depth. "
        "Every row needs a depth"
    ]


@given(
    steps=st.lists(st.floats(0.01, 5.0), min_size=1, max_size=30),
    codes=st.lists(st.sampled_from(["a", "b", None]), min_size=2, max_size=31),
)
@settings(max_examples=100, deadline=None)
def test_intervals_from_samples_honour_every_sample(steps, codes):
    n = min(len(steps) + 1, len(codes))
    depths = np.concatenate([[100.0], 100.0 + np.cumsum(steps)])[:n]
    codes = codes[:n]
    got = intervals_from_samples(depths, codes, step=1.0)
    # Ordered, not overlapping, one code each, never two touching runs of one code.
    for (_, b0, c0, _), (t1, _, c1, _) in zip(got, got[1:], strict=False):
        assert b0 <= t1
        assert not (b0 == t1 and c0 == c1)
    # Every sample with a code lies in an interval of its code; nulls in none.
    for d, c in zip(depths, codes, strict=True):
        inside = [code for top, base, code, _ in got if top < d < base]
        assert inside == ([] if c is None else [c])


def test_a_well_missing_from_the_cores_table_is_named_once_at_its_header(tmp_path):
    lonlat = _lonlat()
    cores = "core_id,x,y\n" + "".join(
        f"{cid},{lon},{lat}\n" for cid, (lon, lat) in lonlat.items() if cid != "C2"
    )
    picks = "\n".join(r for r in _log_picks().splitlines() if not r.startswith("C2")) + "\n"
    path = _las_project(tmp_path, keys={"inputs.cores": "cores.csv"}, picks=picks)
    (tmp_path / "cores.csv").write_text(cores)
    result = _check(path)
    assert result.exit_code == 2
    text = (tmp_path / "logs" / "C2.las").read_text().splitlines()
    well = next(i for i, t in enumerate(text, 1) if t.startswith("WELL"))
    assert result.output == (
        f"Error: logs/C2.las, line {well}, ~Well section, mnemonic 'WELL': is not in cores.csv "
        "(got 'C2'). Add the well to the cores table (it gives the positions) or correct its "
        "id\n"
    )
