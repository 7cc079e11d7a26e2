"""Boreholes in AGS4 files: the file python-ags4 ships, and files written with python-ags4."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import python_ags4
from click.testing import CliRunner
from conftest import CORES, INTERVALS, PICKS, REMOVE, write_project
from python_ags4 import AGS4

from paleomap.agemodel import sample_slices
from paleomap.cli import main
from paleomap.errors import InputError, ProblemLog
from paleomap.io.ags import read_ags, read_ags_groups
from paleomap.io.origins import Origins
from paleomap.io.readers import load_project
from paleomap.io.sources import InputSources

# python-ags4 1.2.0 ships an example file: python_ags4/data/test_data.ags (LGPL-3.0,
# read in place, not copied). It has a LOCA group of four borings and no GEOL group.
_SHIPPED = Path(python_ags4.__file__).parent / "data" / "test_data.ags"

_LEGEND = {"101": "clay", "102": "silt", "103": "fine_sand", "104": "coarse_sand", "105": "gravel"}
_CODE = {"clay": "101", "mud": "101", "silt": "102", "fine_sand": "103", "fine sand": "103"}
_CODE |= {"coarse_sand": "104", "gravel": "105"}
# Formation tops at the surfaces' picks: each formation's top is its surface.
_FORMATION_OF = {"s_young": "TARN_CLAY", "s_mid": "BRAE_SILT", "s_old": "HOLM_SAND"}


def _rows(text: str) -> list[list[str]]:
    return [r.split(",") for r in text.strip().splitlines()[1:]]


def _geol() -> list[dict]:
    """The default intervals split at the picks, each part with its formation."""
    picks: dict[str, list[tuple[float, str]]] = {}
    for cid, surface, depth in _rows(PICKS):
        picks.setdefault(cid, []).append((float(depth), _FORMATION_OF[surface]))
    out = []
    for cid, top, base, facies in _rows(INTERVALS):
        cuts = [float(top)] + [d for d, _ in picks[cid] if float(top) < d < float(base)]
        cuts.append(float(base))
        for a, b in zip(cuts, cuts[1:], strict=False):
            above = [f for d, f in picks[cid] if d <= a]
            out.append(
                {
                    "LOCA_ID": cid,
                    "GEOL_TOP": f"{a:.2f}",
                    "GEOL_BASE": f"{b:.2f}",
                    "GEOL_DESC": facies.replace(" ", "_") + "_as_logged",
                    "GEOL_LEG": _CODE[facies.lower()],
                    "GEOL_GEOL": above[-1] if above else "MADE_GROUND",
                }
            )
    return out


def _write_ags(path: Path, geol: list[dict] | None = None, loca_gl=True) -> None:
    """An AGS4 file of the default project, written with python-ags4's own writer."""
    headings = {
        "PROJ": ["HEADING", "PROJ_ID", "PROJ_NAME"],
        "UNIT": ["HEADING", "UNIT_UNIT", "UNIT_DESC"],
        "LOCA": ["HEADING", "LOCA_ID", "LOCA_TYPE", "LOCA_NATE", "LOCA_NATN", "LOCA_GL"],
        "GEOL": [
            "HEADING",
            "LOCA_ID",
            "GEOL_TOP",
            "GEOL_BASE",
            "GEOL_DESC",
            "GEOL_LEG",
            "GEOL_GEOL",
        ],
    }
    if not loca_gl:
        headings["LOCA"].remove("LOCA_GL")

    def table(group: str, units: list[str], types: list[str], rows: list[dict]) -> pd.DataFrame:
        head = headings[group]
        lines = [dict(zip(head, ["UNIT", *units], strict=False))]
        lines.append(dict(zip(head, ["TYPE", *types], strict=False)))
        lines += [{"HEADING": "DATA", **{k: v for k, v in r.items() if k in head}} for r in rows]
        return pd.DataFrame(lines, columns=head).fillna("")

    loca = [
        {
            "LOCA_ID": cid,
            "LOCA_TYPE": "CP",
            "LOCA_NATE": x,
            "LOCA_NATN": y,
            "LOCA_GL": elevation or "",
        }
        for cid, x, y, elevation in _rows(CORES)
    ]
    tables = {
        "PROJ": table("PROJ", ["", ""], ["ID", "X"], [{"PROJ_ID": "P17", "PROJ_NAME": "Test"}]),
        "UNIT": table("UNIT", ["", ""], ["X", "X"], [{"UNIT_UNIT": "m", "UNIT_DESC": "metre"}]),
        "LOCA": table("LOCA", ["", "", "m", "m", "m"], ["ID", "PA", "2DP", "2DP", "2DP"], loca),
        "GEOL": table(
            "GEOL",
            ["", "m", "m", "", "", ""],
            ["ID", "2DP", "2DP", "X", "PA", "PA"],
            _geol() if geol is None else geol,
        ),
    }
    AGS4.dataframe_to_AGS4(tables, headings, str(path), warnings=False)


def _ags_project(folder: Path, *, keys=None, geol=None, picks=True):
    folder.mkdir(parents=True, exist_ok=True)
    _write_ags(folder / "boreholes.ags", geol=geol)
    settings = {
        "inputs.cores": REMOVE,
        "inputs.intervals": REMOVE,
        "inputs.ags": "boreholes.ags",
        "inputs.ags_legend": _LEGEND,
        **({} if picks else {"inputs.picks": REMOVE}),
        **(keys or {}),
    }
    return write_project(folder, keys=settings, cores=None, intervals=None)


def test_the_shipped_example_file_gives_its_locations_as_cores(tmp_path):
    # python-ags4 1.2.0, python_ags4/data/test_data.ags: LOCA_NATE 100000.01 to
    # 103000.01 by 1000, LOCA_NATN 5000000.20, no LOCA_GL.
    log = ProblemLog()
    sources = InputSources(ags="test_data.ags")
    made = read_ags(_SHIPPED, sources, "project.toml", "m", log, Origins(), {"checksum": print})
    cores = made["cores"]
    assert list(cores["core_id"]) == ["Location_1", "Location_2", "Location_3", "Location_4"]
    assert [float(v) for v in cores["x"]] == [100000.01, 101000.01, 102000.01, 103000.01]
    assert {float(v) for v in cores["y"]} == {5000000.20}
    assert list(cores["line"]) == [60, 61, 62, 63]  # the file's own lines
    # It has no GEOL group: named, with the groups it does have.
    assert [str(p) for p in log.errors] == [
        "test_data.ags: has no such group (got 'GEOL'). Its groups: ['LLPL', 'LOCA', 'PROJ', "
        "'TEST', 'TRAN', 'TYPE', 'UNIT']; paleomap reads the cores from LOCA and the intervals "
        "from GEOL"
    ]


def test_groups_keep_units_and_lines():
    groups = read_ags_groups(_SHIPPED, "test_data.ags", ProblemLog())
    assert groups["LOCA"].attrs["units"]["LOCA_NATE"] == "m"
    assert groups["LOCA"].attrs["heading_line"] == 57
    assert list(groups["LLPL"]["line"]) == [69, 70]


def test_an_ags_project_reads_like_the_csv_project(tmp_path):
    from_csv = load_project(write_project(tmp_path / "csv"))
    from_ags = load_project(_ags_project(tmp_path / "ags"))
    for a, b in zip(from_csv.cores, from_ags.cores, strict=True):
        assert (a.core_id, a.easting, a.northing, a.elevation) == (
            b.core_id,
            b.easting,
            b.northing,
            b.elevation,
        )
        assert [p.depth for p in a.picks] == [p.depth for p in b.picks]
    cols = ["core_id", "slice", "belt", "rank"]
    pd.testing.assert_frame_equal(sample_slices(from_ags)[cols], sample_slices(from_csv)[cols])


def test_formation_changes_are_picks(tmp_path):
    surfaces = {name: s for s, name in _FORMATION_OF.items()}
    project = load_project(
        _ags_project(
            tmp_path,
            picks=False,
            keys={"inputs.ags_formation": "GEOL_GEOL", "inputs.ags_surfaces": surfaces},
        )
    )
    expected = {}
    for cid, surface, depth in _rows(PICKS):
        expected.setdefault(cid, []).append((surface, float(depth)))
    assert {c.core_id: [(p.surface, p.depth) for p in c.picks] for c in project.cores} == (expected)


@pytest.mark.slow
def test_an_ags_project_builds(tmp_path):
    surfaces = {name: s for s, name in _FORMATION_OF.items()}
    path = _ags_project(
        tmp_path,
        picks=False,
        keys={"inputs.ags_formation": "GEOL_GEOL", "inputs.ags_surfaces": surfaces},
    )
    out = tmp_path / "build"
    result = CliRunner().invoke(main, ["build", str(path), "--out", str(out), "--no-figures"])
    assert result.exit_code == 0, result.output
    import pyogrio

    layer = pyogrio.read_dataframe(out / "paleomap.gpkg", layer="core_slices")
    assert len(layer) == 12
    assert set(layer["core_id"]) == {"C1", "C2", "C3", "C4"}


def _merged(core) -> list[tuple[float, float, int]]:
    out: list[list] = []
    for iv in core.intervals:
        if out and out[-1][1] == iv.top and out[-1][2] == iv.rank:
            out[-1][1] = iv.base
        else:
            out.append([iv.top, iv.base, iv.rank])
    return [tuple(x) for x in out]


def test_descriptions_mapped_to_belts(tmp_path):
    # Matched ignoring case: "Fine_Sand_as_logged" and "fine_sand_as_logged" are one.
    legend = {f"{f}_as_logged": b for f, b in (("clay", "clay"), ("mud", "clay"), ("silt", "silt"))}
    legend |= {f"{b}_as_logged": b for b in ("fine_sand", "coarse_sand", "gravel")}
    project = load_project(
        _ags_project(tmp_path, keys={"inputs.ags_facies": "GEOL_DESC", "inputs.ags_legend": legend})
    )
    expected = load_project(write_project(tmp_path / "csv"))
    # The GEOL rows are the intervals split at the formation tops: merged, they are equal.
    assert [_merged(c) for c in project.cores] == [_merged(c) for c in expected.cores]
    assert project.cores[3].intervals[0].facies == "clay"


def test_an_unmapped_legend_code_names_file_line_group_and_heading(tmp_path):
    geol = _geol()
    geol[4]["GEOL_LEG"] = "199"
    geol[9]["GEOL_LEG"] = "199"
    path = _ags_project(tmp_path, geol=geol)
    result = CliRunner().invoke(main, ["check", str(path)])
    assert result.exit_code == 2
    text = (tmp_path / "boreholes.ags").read_text().splitlines()
    line = next(i for i, t in enumerate(text, 1) if '"199"' in t)
    second = [i for i, t in enumerate(text, 1) if '"199"' in t][1]
    assert (
        f"boreholes.ags, line {line}, group GEOL, column 'GEOL_LEG': is not in "
        f"[inputs.ags_legend] (also on line {second}) (got '199')" in result.output
    )


def test_a_bad_depth_is_named_at_its_ags_place(tmp_path):
    geol = _geol()
    geol[2]["GEOL_BASE"] = "deep"
    path = _ags_project(tmp_path, geol=geol)
    with pytest.raises(InputError) as info:
        load_project(path)
    text = (tmp_path / "boreholes.ags").read_text().splitlines()
    line = next(i for i, t in enumerate(text, 1) if '"deep"' in t)
    assert (
        f"boreholes.ags, line {line}, group GEOL, column 'GEOL_BASE': is not a number "
        "(got 'deep')" in str(info.value)
    )


def test_a_missing_heading_and_log_depth_are_refused(tmp_path):
    path = _ags_project(tmp_path, keys={"inputs.ags_facies": "GEOL_GEO2"})
    with pytest.raises(InputError, match=r"group GEOL, column 'GEOL_GEO2': is a missing heading"):
        load_project(path)
    path = _ags_project(tmp_path / "log", keys={"inputs.depth_reference": "log"})
    with pytest.raises(InputError, match=r"mixes depth references: AGS4 depths are below"):
        load_project(path)


def test_a_file_that_is_not_ags4(tmp_path):
    path = _ags_project(tmp_path)
    (tmp_path / "boreholes.ags").write_text("core_id,x,y\n")
    with pytest.raises(InputError, match=r"boreholes.ags: has no such group \(got 'LOCA'\)"):
        load_project(path)


def test_feet_in_the_unit_row_are_converted(tmp_path):
    path = _ags_project(tmp_path)
    ags = tmp_path / "boreholes.ags"
    text = ags.read_text().splitlines()
    geol_unit = next(
        i for i, t in enumerate(text) if t.startswith('"UNIT"') and text[i - 1].count("GEOL_TOP")
    )
    text[geol_unit] = '"UNIT","","ft","ft","","",""'
    ags.write_text("\n".join(text) + "\n")
    (tmp_path / "picks.csv").write_text(
        "core_id,surface,depth\n"
        + "".join(f"{c},{s},{float(d) * 0.3048!r}\n" for c, s, d in _rows(PICKS))
    )
    project = load_project(path)
    assert project.cores[0].intervals[-1].base == pytest.approx(40 * 0.3048)
    assert np.isclose(project.cores[0].picks[0].depth, 5 * 0.3048)
