"""Degenerate data: each gives a map with a warning or a clear refusal, never a crash.

Built from the default project of ``conftest.write_project`` (4 cores on a 5 km square,
3 surfaces, the siliciclastic scheme) with one thing made degenerate: few cores, cores
sharing a position, a slice where every core logs the same belt, a belt never logged,
a core with a single interval, surfaces with equal ages, a grid too large to allocate.
"""

from __future__ import annotations

import re
import warnings
from pathlib import Path

import numpy as np
import pyogrio
import pytest
from click.testing import CliRunner
from conftest import CORES, INTERVALS, PICKS, write_project

from paleomap.cli import main
from paleomap.errors import InputError, PaleomapWarning
from paleomap.grid import MAX_GRID_CELLS
from paleomap.io.readers import load_project
from paleomap.pipeline import compute


def _only(text: str, ids: list[str]) -> str:
    """The rows of a table whose core is in ``ids`` (with the header)."""
    lines = text.splitlines()
    return "\n".join([lines[0]] + [r for r in lines[1:] if r.split(",")[0] in ids]) + "\n"


def _cores(ids: list[str]) -> dict:
    return {
        "cores": _only(CORES, ids),
        "intervals": _only(INTERVALS, ids),
        "picks": _only(PICKS, ids),
    }


def _compute(path: Path):
    """Load and compute, returning the result and the PaleomapWarning texts."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", PaleomapWarning)
        result = compute(load_project(path))
    texts = [str(w.message) for w in caught if issubclass(w.category, PaleomapWarning)]
    other = [w for w in caught if not issubclass(w.category, PaleomapWarning)]
    assert not other, [str(w.message) for w in other]
    return result, texts


def _refusal(path: Path) -> InputError:
    with pytest.raises(InputError) as info:
        load_project(path)
    return info.value


def _build(path: Path, out: Path):
    return CliRunner().invoke(main, ["build", str(path), "--out", str(out), "--no-figures"])


def _in_own_belt(result) -> None:
    for m in result.slice_maps:
        assert m.quality["cores_in_own_belt"] == m.quality["cores_used"], m.slice.name


# ----------------------------------------------------------------------- few cores


def test_one_core_is_refused_naming_the_core(tmp_path):
    path = write_project(tmp_path / "p", **_cores(["C1"]))
    err = _refusal(path)
    (problem,) = err.problems
    assert (problem.file, problem.line, problem.value) == ("cores.csv", 2, "C1")
    assert "is the only core" in problem.message and "at least two cores" in problem.hint
    result = _build(path, tmp_path / "out")
    assert result.exit_code == 2, result.output + result.stderr
    assert "cores.csv, line 2" in result.stderr and "Traceback" not in result.stderr
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("ids", [["C1", "C2"], ["C1", "C2", "C3"]], ids=["two", "three"])
def test_two_or_three_cores_map_every_slice(tmp_path, ids):
    result, texts = _compute(write_project(tmp_path, **_cores(ids)))
    assert [m.slice.name for m in result.slice_maps] == ["s_old", "s_mid", "s_young"]
    for m in result.slice_maps:
        assert m.core_ids == tuple(ids)
        assert np.isfinite(m.latent).all()
        assert np.isfinite(m.probabilities).all()
        np.testing.assert_allclose(m.probabilities.sum(axis=0), 1.0, atol=1e-4)
    _in_own_belt(result)
    # At s_mid and s_young every core is marine (silt, clay): no shoreline, and it is said.
    for m in result.slice_maps[1:]:
        assert m.shoreline.is_empty and not m.quality["has_boundary"]
        assert any(f"slice {m.slice.name!r}" in t and "no shoreline" in t for t in texts)
    assert result.slice_maps[0].quality["has_boundary"]


# ---------------------------------------------------------------- shared positions


@pytest.mark.parametrize("facies", ["clay", "gravel"], ids=["same-facies", "different-facies"])
def test_two_cores_at_one_position_are_refused(tmp_path, facies):
    cores = CORES.replace("C2,505000,4000000", "C2,500000,4000000")
    intervals = INTERVALS.replace("C2,0,10,clay", f"C2,0,10,{facies}")
    err = _refusal(write_project(tmp_path, cores=cores, intervals=intervals))
    (problem,) = err.problems
    assert (problem.file, problem.line, problem.column) == ("cores.csv", 3, "x")
    assert "core 'C2' is at the same position as core 'C1' (line 2)" in problem.message
    assert "merge their logs" in problem.hint


# -------------------------------------------------------- one belt, belt never logged


def _all_clay() -> str:
    rows = [INTERVALS.splitlines()[0]]
    for row in INTERVALS.splitlines()[1:]:
        cid, top, base, _ = row.split(",")
        rows.append(f"{cid},{top},{base},clay")
    return "\n".join(rows) + "\n"


def test_every_core_in_one_belt_draws_no_shoreline_and_records_it(tmp_path):
    path = write_project(tmp_path / "p", intervals=_all_clay())
    out = tmp_path / "out"
    result = _build(path, out)
    assert result.exit_code == 0, result.output + result.stderr
    for name in ("s_old", "s_mid", "s_young"):
        assert re.search(rf"slice '{name}'.*no shoreline is drawn", result.stderr)
    gpkg = out / "paleomap.gpkg"
    lines = pyogrio.read_dataframe(gpkg, layer="shorelines")
    assert sorted(lines["slice"]) == ["s_mid", "s_old", "s_young"]
    assert all(g is None or g.is_empty for g in lines.geometry)
    assert (lines["length_km"] == 0).all()
    quality = pyogrio.read_dataframe(gpkg, layer="slice_quality", read_geometry=False)
    assert not quality["has_boundary"].astype(bool).any()
    belts = pyogrio.read_dataframe(gpkg, layer="facies_belts")
    mapped = belts[~belts.geometry.is_empty & belts.geometry.notna()]
    assert set(mapped["belt"]) == {"clay"}


def test_a_belt_never_logged_is_never_mapped(tmp_path):
    # C3's gravel becomes coarse sand: no core logs gravel at all.
    intervals = INTERVALS.replace("C3,28,40,gravel", "C3,28,40,coarse_sand")
    result, _ = _compute(write_project(tmp_path, intervals=intervals))
    assert len(result.slice_maps) == 3
    for m in result.slice_maps:
        assert m.polygons[0].is_empty, m.slice.name
        assert (m.mapped_belt() != 0).all()
    _in_own_belt(result)


def test_a_core_with_a_single_interval_is_mapped_in_its_belt(tmp_path):
    intervals = _only(INTERVALS, ["C2", "C3", "C4"]) + "C1,0,40,silt\n"
    result, _ = _compute(write_project(tmp_path, intervals=intervals))
    silt = 3
    for m in result.slice_maps:
        i = m.core_ids.index("C1")
        assert m.ranks[i] == silt
    _in_own_belt(result)


# ------------------------------------------------------------------- equal ages


def test_surfaces_with_equal_ages_are_refused_at_the_age(tmp_path):
    # Refused, not merged: two surfaces at one age map the same instant twice, and the
    # rate between them would divide by zero.
    path = write_project(tmp_path, keys={"surfaces[2].age": 100.0})
    err = _refusal(path)
    text = path.read_text()
    line = text.splitlines().index("age = 100.0", text.splitlines().index('name = "s_mid"')) + 1
    found = [p for p in err.problems if p.column == "surfaces[2].age"]
    assert found and found[0].line == line
    assert "is also the age of surface 's_young' (surface 1)" in found[0].message


def test_equal_ages_in_another_unit_spelling_are_refused(tmp_path):
    path = write_project(tmp_path, keys={"surfaces[2].age": 100})  # an integer
    err = _refusal(path)
    assert any("is also the age of surface 's_young'" in p.message for p in err.problems)


# ------------------------------------------------------------------- huge grids


def test_a_grid_too_large_is_refused_with_a_cell_size_that_fits(tmp_path):
    big = {"grid.margin": 20000.0}  # 45 km square: fits at 7 m cells, not at 6 m
    path = write_project(tmp_path / "p", keys={**big, "grid.cell_size": 1.0})
    out = tmp_path / "out"
    for args in (["check", str(path)], ["build", str(path), "--out", str(out)]):
        result = CliRunner().invoke(main, args)
        assert result.exit_code == 2, result.output + result.stderr
        assert "Traceback" not in result.stderr
        m = re.search(
            r"project\.toml, line (\d+), column 'grid\.cell_size': gives a grid of [\d,]+ x "
            r"[\d,]+ = ([\d,]+) cells, more than the ([\d,]+) paleomap allocates "
            r"\(got 1\.0\)\. Use cell_size = (\d+) or larger",
            result.stderr,
        )
        assert m, result.stderr
        assert path.read_text().splitlines()[int(m.group(1)) - 1].startswith("cell_size")
        assert int(m.group(2).replace(",", "")) > MAX_GRID_CELLS
    assert not out.exists()
    # The suggested size is accepted (loading does not allocate the grid).
    fit = float(m.group(4))
    assert fit == 7
    ok = write_project(tmp_path / "q", keys={**big, "grid.cell_size": fit})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)
        load_project(ok)
    # ... and is the smallest whole size that is.
    smaller = write_project(tmp_path / "r", keys={**big, "grid.cell_size": fit - 1})
    assert any(p.column == "grid.cell_size" for p in _refusal(smaller).problems)


def test_absurd_coordinates_are_refused_not_gridded(tmp_path):
    cores = CORES.replace("C1,500000,4000000", "C1,1e300,4000000")
    err = _refusal(write_project(tmp_path, cores=cores))
    (problem,) = err.problems
    assert problem.column == "grid.cell_size" and "cannot grid an area" in problem.message
