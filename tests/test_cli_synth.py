"""Tests of ``paleomap synth DIR``."""

from __future__ import annotations

import pandas as pd
import pyogrio
import pytest
from click.testing import CliRunner

from paleomap.cli import main


def _run(*args):
    return CliRunner().invoke(main, ["-q", *args], catch_exceptions=False)


def test_synth_writes_a_project_that_passes_check(tmp_path):
    out = tmp_path / "basin"
    result = CliRunner().invoke(
        main,
        [
            "synth",
            str(out),
            "--cores",
            "25",
            "--layout",
            "grid",
            "--seed",
            "4",
            "--surfaces",
            "6",
            "--relief",
            "6",
        ],
    )
    assert result.exit_code == 0, result.output
    assert f"Wrote synthetic project {out / 'project.toml'}" in result.output
    assert "25 cores in cores.csv" in result.output
    assert "True mean shift" in result.output
    for name in (
        "project.toml",
        "cores.csv",
        "intervals.csv",
        "picks.csv",
        "truth.gpkg",
        "true_shifts.csv",
    ):
        assert (out / name).is_file()
    layers = {str(n) for n, _ in pyogrio.list_layers(out / "truth.gpkg")}
    assert {"true_belts", "true_shorelines"} <= layers
    # Issue 3 acceptance: the output passes `paleomap check` with the counts it was made with.
    check = CliRunner().invoke(main, ["check", str(out / "project.toml")])
    assert check.exit_code == 0, check.output
    assert "Cores: 25" in check.output
    intervals = pd.read_csv(out / "intervals.csv")
    picks = pd.read_csv(out / "picks.csv")
    assert f"intervals: {len(intervals)}; picks: {len(picks)}" in check.output
    assert "Surfaces: 6" in check.output and "Slices: 6" in check.output


def test_synth_carbonate_with_a_sea_level_file(tmp_path):
    sl = tmp_path / "sl.csv"
    sl.write_text("age,level\n40,0\n25,-12\n10,6\n0,2\n")
    out = tmp_path / "ramp"
    result = _run(
        "synth",
        str(out),
        "--scheme",
        "carbonate_ramp",
        "--sea-level",
        str(sl),
        "--cores",
        "20",
        "--gradient",
        "2",
    )
    assert result.exit_code == 0, result.output
    text = (out / "project.toml").read_text()
    assert 'builtin = "carbonate_ramp"' in text
    assert "Sea level (ka, m): (40, 0), (25, -12), (10, 6), (0, 2)" in text
    assert CliRunner().invoke(main, ["check", str(out / "project.toml")]).exit_code == 0


def test_synth_refuses_to_replace_without_overwrite(tmp_path):
    out = tmp_path / "basin"
    assert _run("synth", str(out), "--cores", "8").exit_code == 0
    before = (out / "cores.csv").read_bytes()
    result = CliRunner().invoke(main, ["synth", str(out), "--cores", "9"])
    assert result.exit_code == 2
    assert "already holds project.toml" in result.output and "--overwrite" in result.output
    assert (out / "cores.csv").read_bytes() == before
    assert _run("synth", str(out), "--cores", "9", "--overwrite").exit_code == 0
    assert len(pd.read_csv(out / "cores.csv")) == 9


@pytest.mark.parametrize(
    ("args", "expected"),
    [
        (["--cores", "many"], "column '--cores': is not a whole number (got 'many')"),
        (["--cores", "0"], "column '--cores': must be at least 1 (got '0')"),
        (["--layout", "hex"], "column '--layout': is not allowed (got 'hex')"),
        (["--scheme", "reef"], "hoose one of ['shoreface_shelf', 'carbonate_ramp']"),
        (["--gradient", "-1"], "column '--gradient': must be greater than 0 (got '-1')"),
        (["--relief", "nan"], "column '--relief': is not a finite number (got 'nan')"),
        (["--relief-wavelength", "0"], "column '--relief-wavelength': must be greater than 0"),
        (["--demo", "--cores", "5"], "column '--demo'"),
    ],
    ids=[
        "cores-text",
        "cores-zero",
        "layout",
        "scheme",
        "gradient",
        "relief",
        "wavelength",
        "demo-with-options",
    ],
)
def test_bad_options_exit_2_with_the_value(tmp_path, args, expected):
    out = tmp_path / "basin"
    result = CliRunner().invoke(main, ["synth", str(out), *args])
    assert result.exit_code == 2
    assert expected in result.output
    assert "Traceback" not in result.output
    assert not out.exists()


def test_all_bad_options_are_reported_together(tmp_path):
    result = CliRunner().invoke(
        main, ["synth", str(tmp_path / "b"), "--cores", "x", "--gradient", "0", "--layout", "ring"]
    )
    assert result.exit_code == 2
    assert "3 problems in the input" in result.output


def test_bad_sea_level_file_names_file_line_and_value(tmp_path):
    sl = tmp_path / "sl.csv"
    sl.write_text("age,level\n30,-5\n20,high\n-4,2\n")
    out = tmp_path / "basin"
    result = CliRunner().invoke(main, ["synth", str(out), "--sea-level", str(sl)])
    assert result.exit_code == 2
    assert "sl.csv, line 3, column 'level': is not a number (got 'high')" in result.output
    assert "sl.csv, line 4, column 'age': is not a finite age >= 0 (got -4.0)" in result.output
    assert not out.exists()
    missing = CliRunner().invoke(
        main, ["synth", str(out), "--sea-level", str(tmp_path / "none.csv")]
    )
    assert missing.exit_code == 2 and "file not found" in missing.output
