"""Hostile input: no input hangs paleomap, ends in a traceback, makes two slices share a
file, or puts a formula into a CSV cell.

Each case of a careless or hostile user is reproduced: FIFOs and devices as inputs,
huge files, paths outside the project folder, names that are mathtext, formulas,
control characters or 240 characters long, slice names that make one file name.
"""

from __future__ import annotations

import csv
import io
import os
import subprocess
import sys
import warnings

import pyogrio
import pytest
from click.testing import CliRunner
from conftest import CORES, PICKS, REMOVE, write_project
from hypothesis import given, settings
from hypothesis import strategies as st

from paleomap.cli import main
from paleomap.errors import InputError, PaleomapWarning
from paleomap.io.csvcells import FORMULA_STARTS, csv_text
from paleomap.io.filenames import safe_name
from paleomap.io.inputfiles import input_file_problem, read_input_bytes
from paleomap.io.readers import load_project
from paleomap.io.writers import raster_names


def _check(*args):
    return CliRunner().invoke(main, ["check", *map(str, args)])


def _run_cli(args: list[str], timeout: float = 60.0) -> subprocess.CompletedProcess:
    """The CLI in a subprocess, so that a hang fails the test instead of blocking it."""
    code = "import sys; from paleomap.cli import main; sys.exit(main())"
    return subprocess.run(
        [sys.executable, "-c", code, *map(str, args)],
        capture_output=True,
        text=True,
        timeout=timeout,
    )


# ------------------------------------------------------------------ input files


@pytest.mark.parametrize("which", ["cores", "intervals", "picks", "project"])
def test_a_fifo_as_any_input_is_refused_at_once(tmp_path, which):
    project = write_project(tmp_path)
    name = "project.toml" if which == "project" else f"{which}.csv"
    (tmp_path / name).unlink()
    os.mkfifo(tmp_path / name)
    # Nobody ever writes to the FIFO: reading it would block forever.
    result = _run_cli(["check", project], timeout=60)
    assert result.returncode == 2, result.stderr
    assert "is not a regular file (a FIFO)" in result.stderr
    assert "Traceback" not in result.stderr


def test_dev_zero_as_an_input_is_refused_not_read(tmp_path):
    project = write_project(tmp_path)
    (tmp_path / "cores.csv").unlink()
    (tmp_path / "cores.csv").symlink_to("/dev/zero")
    result = _run_cli(["check", project, "--allow-outside-inputs"], timeout=60)
    assert result.returncode == 2
    assert "is not a regular file (a character device)" in result.stderr
    # Named directly as the project file too.
    result = _run_cli(["check", "/dev/zero"], timeout=60)
    assert result.returncode == 2
    assert "is not a regular file (a character device)" in result.stderr


def test_a_file_over_the_size_limit_is_refused_with_its_size(tmp_path):
    project = write_project(tmp_path, cores=CORES + "".join(f"X{i},1,1,\n" for i in range(4000)))
    with pytest.raises(
        InputError, match=r"inputs.cores.*is larger than the 10 KiB paleomap reads \(42 KiB\)"
    ):
        load_project(project, max_input_bytes=10_000)
    assert load_project(write_project(tmp_path / "ok"), max_input_bytes=10_000).cores


def test_paths_outside_the_project_folder_need_the_users_word(tmp_path):
    secret = tmp_path / "secret.csv"
    secret.write_text("core_id,x,y\nTOPSECRET-LINE,1,2\n")
    project = write_project(tmp_path / "p", keys={"inputs.cores": "../secret.csv"})
    result = _check(project)
    assert result.exit_code == 2
    assert "names a file outside the project folder" in result.output
    assert "--allow-outside-inputs" in result.output
    assert "TOPSECRET" not in result.output  # nothing of the file is shown
    # A symbolic link inside the folder that points out of it is the same thing.
    linked = write_project(tmp_path / "q")
    (tmp_path / "q" / "cores.csv").unlink()
    (tmp_path / "q" / "cores.csv").symlink_to(tmp_path / "p" / "cores.csv")
    assert "outside the project folder" in _check(linked).output
    # With the user's word, an ordinary file elsewhere is read.
    (tmp_path / "shared").mkdir()
    (tmp_path / "shared" / "cores.csv").write_text(CORES)
    allowed = write_project(tmp_path / "r", keys={"inputs.cores": "../shared/cores.csv"})
    assert _check(allowed).exit_code == 2
    result = _check(allowed, "--allow-outside-inputs")
    assert result.exit_code == 0, result.output


def test_etc_passwd_is_neither_read_nor_echoed(tmp_path):
    project = write_project(tmp_path, keys={"inputs.picks": "../../../../../../../etc/passwd"})
    result = _check(project)
    assert result.exit_code == 2
    assert "outside the project folder" in result.output
    assert "root:" not in result.output


def test_a_bad_header_does_not_echo_the_whole_file(tmp_path):
    passwd = "root:x:0:0:root:/root:/bin/bash\ndaemon:x:1:1:daemon:/usr/sbin\n"
    project = write_project(tmp_path, picks=passwd)
    result = _check(project)
    assert result.exit_code == 2
    assert "daemon" not in result.output  # only the header line may be named


def test_the_guard_reads_a_regular_file_and_refuses_the_rest(tmp_path):
    f = tmp_path / "a.csv"
    f.write_bytes(b"x" * 10)
    assert read_input_bytes(f) == b"x" * 10
    with pytest.raises(InputError, match="larger than"):
        read_input_bytes(f, max_bytes=5)
    assert input_file_problem(tmp_path).message == "is a folder, not a file"
    assert input_file_problem(tmp_path / "none").message == "file not found"


def test_a_shapefile_with_a_fifo_companion_is_refused(tmp_path):
    for ext in (".shp", ".shx", ".prj"):
        (tmp_path / f"cores{ext}").write_bytes(b"")
    os.mkfifo(tmp_path / "cores.dbf")
    problem = input_file_problem(tmp_path / "cores.shp", root=tmp_path)
    assert problem.message == "cores.dbf is not a regular file (a FIFO)"


# ------------------------------------------------------------------ names


def test_control_characters_in_names_are_refused_by_check(tmp_path):
    project = write_project(
        tmp_path,
        config={
            "scheme": {
                "builtin": REMOVE,
                "belts": [
                    {"id": "gravel", "marine": False, "label": "gr\x07avel"},
                    {"id": "sa\x01nd", "marine": False, "aliases": ["coarse_sand"]},
                    {"id": "fine_sand", "marine": True, "aliases": ["fine sand"]},
                    {"id": "silt", "marine": True},
                    {"id": "clay", "marine": True, "aliases": ["mud"]},
                ],
            }
        },
    )
    text = project.read_text().replace("\x07", "\\u0007").replace("\x01", "\\u0001")
    project.write_text(text)
    result = _check(project)
    assert result.exit_code == 2, result.output
    assert "'scheme.belts[1].label': contains a control character (U+0007)" in result.output
    assert "'scheme.belts[2].id': contains a control character (U+0001)" in result.output


def test_a_colour_with_a_trailing_newline_is_refused_by_check(tmp_path):
    project = write_project(tmp_path, keys={"scheme.colors": {"clay": "#2b4b7a\n"}})
    project.write_text(project.read_text().replace("#2b4b7a\n", "#2b4b7a\\n"))
    result = _check(project)
    assert result.exit_code == 2
    assert "is not a colour" in result.output


@settings(max_examples=300, deadline=None)
@given(st.lists(st.text(max_size=300), min_size=2, max_size=6, unique=True))
def test_distinct_names_never_share_a_file(names):
    stems = [safe_name(n) for n in names]
    # Distinct even on a file system that ignores case.
    assert len({s.lower() for s in stems}) == len(names)
    for s in stems:
        assert s and len(s) <= 60 and not s.startswith(".")
        assert all(c.isascii() and (c.isalnum() or c in "._-") for c in s)
        assert s.split(".")[0].lower() not in {"con", "nul", "prn", "aux"}
    assert [safe_name(n) for n in names] == stems  # stable


@pytest.mark.parametrize("names", [("Ω", "Δ", "Σ"), ("S 1", "S_1"), ("a" * 240, "a" * 241)])
def test_the_cases_of_the_issue_get_distinct_raster_names(names):
    files = [raster_names(n)["belt"] for n in names]
    assert len(set(files)) == len(names)


@settings(max_examples=300, deadline=None)
@given(
    st.lists(
        st.tuples(st.text(max_size=40), st.floats(allow_nan=False, width=32)),
        min_size=1,
        max_size=8,
    )
)
def test_no_csv_cell_starts_a_formula(rows):
    import pandas as pd

    frame = pd.DataFrame(rows, columns=["=name", "shift_m"])
    text = csv_text(frame)
    parsed = list(csv.reader(io.StringIO(text, newline="")))
    header, body = parsed[0], parsed[1:]
    assert header == ["'=name", "shift_m"]
    for (name, value), (cell, number) in zip(rows, body, strict=True):
        assert not cell.startswith(FORMULA_STARTS)
        name = name.replace("\r\n", "\n").replace("\r", "\n")
        assert cell in (name, "'" + name)
        assert float(number) == pytest.approx(value, rel=1e-5, abs=1e-30) or not number


# ------------------------------------------------------------------ whole builds

_HOSTILE = {
    "s_young": '=HYPERLINK("http://example.invalid/","click")',
    "s_mid": r"$\cmd$ and $x^$",
    "s_old": "S" * 240,
}


def _rename(text: str, names: dict) -> str:
    for old, new in names.items():
        cell = '"' + new.replace('"', '""') + '"' if any(c in new for c in ',"') else new
        text = text.replace(old, cell)
    return text


@pytest.fixture(scope="module", params=["hostile", "greek"])
def hostile_build(request, tmp_path_factory):
    """A build with figures and report whose surface (slice) names are hostile."""
    names = _HOSTILE if request.param == "hostile" else dict(zip(_HOSTILE, "ΩΔΣ", strict=True))
    root = tmp_path_factory.mktemp(request.param)
    surfaces = [
        {"name": names["s_young"], "age": 100.0, "age_sd": 5.0},
        {"name": names["s_mid"], "age": 200.0},
        {"name": names["s_old"], "age": 300.0},
    ]
    project = write_project(root / "p", config={"surfaces": surfaces}, picks=_rename(PICKS, names))
    out = root / "b"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)
        result = CliRunner().invoke(main, ["-q", "build", str(project), "--out", str(out)])
    return names, out, result


@pytest.mark.slow
def test_hostile_slice_names_build_without_a_traceback(hostile_build):
    names, out, result = hostile_build
    assert result.exit_code == 0, result.output + result.stderr
    assert "Traceback" not in result.stderr


@pytest.mark.slow
def test_every_slice_has_its_own_files_recorded_in_the_layers(hostile_build):
    names, out, result = hostile_build
    quality = pyogrio.read_dataframe(out / "paleomap.gpkg", layer="slice_quality")
    stems = dict(zip(quality["slice"], quality["file_stem"], strict=True))
    assert set(stems) == set(names.values())
    assert len(set(stems.values())) == 3
    for stem in stems.values():
        for kind in ("belt", "distal_probability"):
            assert (out / "rasters" / f"{kind}_{stem}.tif").is_file()
        assert len(list((out / "rasters").glob(f"probability_*_{stem}.tif"))) >= 2
        assert (out / "figures" / f"slice_{stem}.png").is_file()
    # The report shows each slice's own map: three figures, three different images.
    report = (out / "report.html").read_text(encoding="utf-8")
    images = set()
    for stem in stems.values():
        start = report.index(f'<figure id="fig-slice_{stem}">')
        images.add(report[start : report.index("</figure>", start)].split('src="')[1][:2000])
    assert len(images) == 3


@pytest.mark.slow
def test_no_rates_cell_starts_a_formula(hostile_build):
    names, out, result = hostile_build
    rows = list(csv.reader(io.StringIO((out / "rates.csv").read_text(encoding="utf-8"))))
    cells = [c for row in rows[1:] for c in row]
    assert not any(c.startswith(("=", "+", "@", "\t", "\r")) for c in cells)
    assert not any(c.startswith("-") and not _is_number(c) for c in cells)
    if names["s_young"].startswith("="):
        assert "'" + names["s_young"] in cells


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


# ------------------------------------------------------------------ numbers and geometry


@pytest.mark.parametrize(
    ("key", "value", "allowed"),
    [
        ("mapping.samples", 1_000_000_000, "[1, 10000]"),
        ("mapping.burn_in", 10**7, "[0, 10000]"),
        ("mapping.neighbours", 10**6, "[3, 1000]"),
        ("mapping.range_m", 1e300, "(0, 1e+08]"),
        ("migration.transect_spacing_m", 1e300, "(0, 1e+08]"),
        ("grid.cell_size", 0.0, "> 0"),
    ],
)
def test_every_numeric_setting_has_a_range_checked_by_check(tmp_path, key, value, allowed):
    project = write_project(tmp_path, keys={key: value})
    result = _check(project)
    assert result.exit_code == 2, result.output
    assert f"column {key!r}: is out of range" in result.output
    assert f"Allowed: {allowed}" in result.output


@pytest.mark.parametrize(
    ("keys", "message"),
    [
        ({"grid.cell_size": 30000.0}, "fewer than 3 a side"),
        ({"grid.cell_size": 1e308}, "fewer than 3 a side"),
        ({"migration.transect_spacing_m": 1e-300}, "transects across the"),
    ],
    ids=["cell-larger-than-area", "cell-1e308", "tiny-transect-spacing"],
)
def test_check_and_build_agree_on_degenerate_settings(tmp_path, keys, message):
    project = write_project(tmp_path, keys=keys)
    checked = _check(project)
    assert checked.exit_code == 2 and message in checked.output
    built = CliRunner().invoke(
        main, ["-q", "build", str(project), "--out", str(tmp_path / "b"), "--no-figures"]
    )
    assert built.exit_code == 2 and message in built.stderr
    assert "Traceback" not in built.stderr
    assert not (tmp_path / "b").exists()


@pytest.mark.slow
def test_the_largest_cell_check_allows_is_mapped(tmp_path):
    project = write_project(tmp_path, keys={"grid.cell_size": 2333.0})
    assert _check(project).exit_code == 0
    built = CliRunner().invoke(
        main, ["-q", "build", str(project), "--out", str(tmp_path / "b"), "--no-figures"]
    )
    assert built.exit_code == 0, built.output + built.stderr


@pytest.mark.slow
def test_collinear_cores_on_a_diagonal_are_mapped(tmp_path):
    cores = "core_id,x,y\nC1,500000,4000000\nC2,505000,4005000\nC3,502000,4002000\n"
    cores += "C4,507000,4007000\n"
    project = write_project(tmp_path, cores=cores)
    built = CliRunner().invoke(
        main, ["-q", "build", str(project), "--out", str(tmp_path / "b"), "--no-figures"]
    )
    assert built.exit_code == 0, built.output + built.stderr
    assert (tmp_path / "b" / "paleomap.gpkg").is_file()


def test_tiny_ages_are_mapped_or_refused_never_a_traceback(tmp_path):
    keys = {"surfaces[1].age": 1e-300, "surfaces[2].age": 2e-300, "surfaces[3].age": 3e-300}
    project = write_project(tmp_path, keys={**keys, "surfaces[1].age_sd": 0.0})
    checked = _check(project)
    assert checked.exit_code in (0, 2)
    assert "Traceback" not in checked.output


def test_degrees_under_a_projected_crs_get_a_warning(tmp_path):
    cores = "core_id,x,y\nC1,5.0,40.0\nC2,5.05,40.0\nC3,5.0,40.05\nC4,5.05,40.05\n"
    project = write_project(tmp_path, cores=cores)
    with pytest.warns(PaleomapWarning, match="like longitudes and latitudes"):
        load_project(project)
    # Real metres give no such warning.
    with warnings.catch_warnings():
        warnings.simplefilter("error", PaleomapWarning)
        load_project(write_project(tmp_path / "metres"))
