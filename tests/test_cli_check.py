"""Tests of ``paleomap check``: the summary of a valid project and exit 2 on bad input."""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner
from conftest import CORES, INTERVALS, write_project
from edge_cases import INVALID, ids, replace_line

from paleomap.cli import main
from paleomap.cli.check import summary_lines
from paleomap.io.readers import load_project


def _run(*args):
    return CliRunner().invoke(main, ["check", *map(str, args)])


def test_valid_project_exits_0_with_a_summary(project_path):
    result = _run(project_path)
    assert result.exit_code == 0, result.output
    out = result.output
    assert "Project: Test Basin" in out
    assert "CRS: WGS 84 / UTM zone 31N (EPSG:32631)" in out
    assert "Working CRS" not in out
    assert "gravel (non-marine), coarse_sand (non-marine), fine_sand (marine)" in out
    assert "tracked boundary: coarse_sand|fine_sand (the shoreline)" in out
    assert "Cores: 4; intervals: 16; picks: 12" in out
    assert "Surfaces: 3" in out
    assert "s_young  100 ka ± 5; picked in 4 cores" in out
    assert "Slices: 3, oldest first" in out
    assert "s_old    300 ka (at a surface): 4 of 4 cores have a record" in out
    assert "Warnings: none" in out
    assert out.rstrip().endswith("The project is valid.")


def test_summary_shows_erosional_surfaces_free_slices_and_warnings(tmp_path):
    path = write_project(
        tmp_path,
        keys={"surfaces[2].erosional": True, "slices.at": [150.0, "s_mid", 50.0]},
        intervals=replace_line(INTERVALS, 3, "C1,11,20,silt"),
        cores=CORES + "C5,510000,4000000,1\n",
    )
    result = _run(path)
    assert result.exit_code == 0, result.output
    out = result.output
    assert "s_mid    200 ka, erosional; picked in 4 cores" in out
    assert "150ka  150 ka (free age): 4 of 5 cores have a record" in out
    assert "50ka   50 ka (free age): 0 of 5 cores have a record" in out
    assert "Warnings: 3" in out
    assert "'C1' has 1 gap(s)" in out and "'C5'" in out and "'50ka'" in out
    # The warnings are listed once, in the summary.
    assert out.count("'C5'") == 1


def test_geographic_project_reports_its_working_crs(tmp_path):
    cores = "core_id,x,y\nC1,2.00,41.00\nC2,2.60,41.35\nC3,1.90,41.20\nC4,2.40,40.90\n"
    path = write_project(tmp_path, keys={"project.crs": "EPSG:4326"}, cores=cores)
    result = _run(path)
    assert result.exit_code == 0, result.output
    assert "CRS: WGS 84 (EPSG:4326)" in result.output
    assert "Working CRS: paleomap local azimuthal equidistant" in result.output


@pytest.mark.parametrize("case", INVALID, ids=ids(INVALID))
def test_broken_project_exits_2_naming_file_and_line(tmp_path, case):
    path = write_project(tmp_path, **case.project)
    before = sorted(p.name for p in tmp_path.rglob("*"))
    result = _run(path)
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    assert result.output.startswith("Error: ")
    line = case.expected_line(path.read_text(encoding="utf-8"))
    expected = case.file if line is None else f"{case.file}, line {line}"
    assert expected in result.output
    assert case.message in result.output
    assert sorted(p.name for p in tmp_path.rglob("*")) == before  # nothing written


def test_missing_project_file_exits_2(tmp_path):
    result = _run(tmp_path / "none.toml")
    assert result.exit_code == 2
    assert "none.toml: file not found" in result.output


def test_summary_lines_can_be_extended(project_path):
    project = load_project(project_path)
    lines = summary_lines(project)
    assert lines[0] == f"Project: Test Basin ({Path(project_path)})"
    assert lines[-1] == "Warnings: none"
    assert isinstance(lines, list) and all(isinstance(x, str) for x in lines)
