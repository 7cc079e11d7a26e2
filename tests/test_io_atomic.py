"""Tests for paleomap.io.atomic: atomic files, build folders, and killed writers."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import geopandas as gpd
import pandas as pd
import pyogrio
import pytest
from shapely.geometry import Point, Polygon

from paleomap.errors import OutputExistsError, PaleomapError, PaleomapWarning
from paleomap.io import atomic
from paleomap.io.atomic import (
    BUILD_MARKER,
    atomic_build_dir,
    atomic_output_path,
    atomic_write_bytes,
    atomic_write_text,
    check_build_target,
    recover_leftovers,
)
from paleomap.io.geopackage import write_layers

OLD_LAYERS = ["cores", "facies_belts", "run_info"]


def _dead_pid() -> int:
    """The pid of a process that has exited and been reaped."""
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


def _beside(target: Path) -> list[str]:
    """Every entry in the target's folder other than the target itself."""
    return sorted(p.name for p in target.parent.iterdir() if p.name != target.name)


def _make_old_build(target: Path) -> None:
    cores = gpd.GeoDataFrame(
        {"core_id": ["A", "B"]},
        geometry=[Point(500000, 6000000), Point(501000, 6000500)],
        crs=32631,
    )
    belts = gpd.GeoDataFrame(
        {"slice": [1], "belt": ["sand"]},
        geometry=[Polygon([(500000, 6000000), (501000, 6000000), (501000, 6001000)])],
        crs=32631,
    )
    info = pd.DataFrame({"version": ["old"]})
    with atomic_build_dir(target, overwrite=False) as tmp:
        write_layers(
            tmp / "paleomap.gpkg", {"cores": cores, "facies_belts": belts, "run_info": info}
        )


def _assert_old_build_intact(target: Path) -> None:
    gpkg = target / "paleomap.gpkg"
    assert [str(n) for n, _ in pyogrio.list_layers(gpkg)] == OLD_LAYERS
    assert pyogrio.read_dataframe(gpkg, layer="run_info")["version"].tolist() == ["old"]
    assert len(pyogrio.read_dataframe(gpkg, layer="cores")) == 2


# ------------------------------------------------------------------ files


def test_atomic_write_text_and_bytes(tmp_path):
    p = tmp_path / "sub" / "a.txt"
    assert atomic_write_text(p, "héllo\n") == p
    assert p.read_text(encoding="utf-8") == "héllo\n"
    atomic_write_bytes(p, b"\x00\x01")
    assert p.read_bytes() == b"\x00\x01"
    assert _beside(p) == []


def test_failed_file_write_leaves_old_file(tmp_path):
    p = tmp_path / "a.gpkg"
    p.write_bytes(b"old")
    with pytest.raises(RuntimeError, match="boom"), atomic_output_path(p) as tmp:
        assert tmp.parent == tmp_path and tmp.suffix == ".gpkg" and tmp.name.startswith(".a.")
        tmp.write_bytes(b"half")
        tmp.with_name(tmp.name + "-journal").write_bytes(b"j")
        raise RuntimeError("boom")
    assert p.read_bytes() == b"old"
    assert _beside(p) == []


def test_interrupted_file_write_leaves_old_file(tmp_path):
    p = tmp_path / "a.txt"
    p.write_text("old")
    with pytest.raises(KeyboardInterrupt), atomic_output_path(p) as tmp:
        tmp.write_text("half")
        raise KeyboardInterrupt
    assert p.read_text() == "old"
    assert _beside(p) == []


def test_writer_that_writes_nothing_is_an_error(tmp_path):
    p = tmp_path / "a.txt"
    p.write_text("old")
    with pytest.raises(FileNotFoundError, match="did not create"), atomic_output_path(p):
        pass
    assert p.read_text() == "old"


def test_cannot_write_file_over_folder(tmp_path):
    with pytest.raises(IsADirectoryError, match="is a folder"), atomic_output_path(tmp_path):
        pass


def test_stale_partial_files_of_dead_processes_are_removed(tmp_path):
    p = tmp_path / "paleomap.gpkg"
    dead = tmp_path / f".paleomap.partial-{_dead_pid()}-abcd.gpkg"
    dead.write_bytes(b"half")
    (tmp_path / (dead.name + "-journal")).write_bytes(b"j")
    alive = tmp_path / f".paleomap.partial-{os.getppid()}-abcd.gpkg"
    alive.write_bytes(b"someone else is writing")
    unrelated = tmp_path / ".other.partial-1-abcd.gpkg"
    unrelated.write_bytes(b"x")
    atomic_write_bytes(p, b"new")
    assert p.read_bytes() == b"new"
    assert _beside(p) == sorted([alive.name, unrelated.name])


# ------------------------------------------------------------------ build folders


def test_new_build_moves_into_place(tmp_path):
    target = tmp_path / "out" / "build"
    with atomic_build_dir(target, overwrite=False) as tmp:
        assert tmp.parent == target.parent
        assert tmp.name.startswith(f".build.partial-{os.getpid()}-")
        assert not target.exists()
        # The writer holds the folder's lock while it writes.
        assert atomic.lock_path(target).is_file()
        (tmp / "rasters").mkdir()
        atomic_write_text(tmp / "rasters" / "a.txt", "x")
    assert (target / "rasters" / "a.txt").read_text() == "x"
    marker = json.loads((target / BUILD_MARKER).read_text())
    assert set(marker) == {"paleomap", "completed_utc", "files"}
    assert marker["files"] == ["rasters/a.txt"]
    assert _beside(target) == []


def test_existing_build_is_refused_before_work_starts(tmp_path):
    target = tmp_path / "build"
    _make_old_build(target)
    started = False
    with pytest.raises(OutputExistsError, match=r"build.*already exists.*--overwrite") as info:
        with atomic_build_dir(target, overwrite=False):
            started = True
    assert not started
    assert isinstance(info.value, PaleomapError) and isinstance(info.value, FileExistsError)
    _assert_old_build_intact(target)
    assert _beside(target) == []


@pytest.mark.parametrize("exchange", [True, False], ids=["exchange", "two-renames"])
def test_overwrite_replaces_old_build(tmp_path, monkeypatch, exchange):
    if not exchange:
        monkeypatch.setattr(atomic, "_exchange", lambda a, b: False)
    target = tmp_path / "build"
    _make_old_build(target)
    with atomic_build_dir(target, overwrite=True) as tmp:
        # The old build stays complete while the new one is written.
        _assert_old_build_intact(target)
        atomic_write_text(tmp / "new.txt", "new")
    assert (target / "new.txt").read_text() == "new"
    assert not (target / "paleomap.gpkg").exists()
    assert _beside(target) == []


def test_failed_swap_restores_old_build(tmp_path, monkeypatch):
    monkeypatch.setattr(atomic, "_exchange", lambda a, b: False)
    target = tmp_path / "build"
    _make_old_build(target)
    real_rename = os.rename

    def rename(src, dst):
        if Path(src).name.startswith(".build.partial-") and Path(dst) == target:
            raise OSError("disk gone")
        return real_rename(src, dst)

    with pytest.raises(OSError, match="disk gone"):
        with atomic_build_dir(target, overwrite=True) as tmp:
            atomic_write_text(tmp / "new.txt", "new")
            monkeypatch.setattr(atomic.os, "rename", rename)
    monkeypatch.setattr(atomic.os, "rename", real_rename)
    _assert_old_build_intact(target)
    assert _beside(target) == []


@pytest.mark.parametrize("error", [RuntimeError, KeyboardInterrupt], ids=["error", "ctrl-c"])
def test_failed_build_leaves_old_build_untouched(tmp_path, error):
    target = tmp_path / "build"
    _make_old_build(target)
    with pytest.raises(error), atomic_build_dir(target, overwrite=True) as tmp:
        atomic_write_text(tmp / "half.txt", "half")
        raise error()
    _assert_old_build_intact(target)
    assert not (target / "half.txt").exists()
    assert _beside(target) == []


def test_failed_first_build_leaves_nothing(tmp_path):
    target = tmp_path / "build"
    with pytest.raises(RuntimeError), atomic_build_dir(target, overwrite=False):
        raise RuntimeError
    assert list(tmp_path.iterdir()) == []


def test_overwrite_refuses_folder_that_is_not_a_build(tmp_path):
    target = tmp_path / "thesis"
    target.mkdir()
    (target / "chapter1.docx").write_text("precious")
    with pytest.raises(OutputExistsError, match="does not look like a paleomap build"):
        with atomic_build_dir(target, overwrite=True):
            pass
    assert (target / "chapter1.docx").read_text() == "precious"
    # Without the marker check the folder is replaced, but its files are still kept.
    with pytest.warns(PaleomapWarning, match="kept in"):
        with atomic_build_dir(target, overwrite=True, marker=None) as tmp:
            atomic_write_text(tmp / "a.txt", "a")
    assert sorted(p.name for p in target.iterdir()) == ["a.txt"]
    (kept,) = tmp_path.glob("thesis.kept-*")
    assert (kept / "chapter1.docx").read_text() == "precious"


def test_overwrite_accepts_empty_folder(tmp_path):
    target = tmp_path / "build"
    target.mkdir()
    with atomic_build_dir(target, overwrite=True) as tmp:
        atomic_write_text(tmp / "a.txt", "a")
    assert (target / "a.txt").exists()


def test_target_that_is_a_file_is_refused(tmp_path):
    target = tmp_path / "build"
    target.write_text("a file")
    with pytest.raises(OutputExistsError, match="not a folder"):
        with atomic_build_dir(target, overwrite=True):
            pass
    assert target.read_text() == "a file"


def test_target_created_meanwhile_is_not_clobbered(tmp_path):
    target = tmp_path / "build"
    with pytest.raises(OutputExistsError, match="already exists"):
        with atomic_build_dir(target, overwrite=False):
            target.mkdir()
            (target / "theirs.txt").write_text("theirs")
    assert (target / "theirs.txt").read_text() == "theirs"
    assert _beside(target) == []


# ------------------------------------------------------------------ leftovers


def test_killed_between_renames_is_restored(tmp_path):
    # What a run killed between "old aside" and "new in" leaves behind.
    target = tmp_path / "build"
    _make_old_build(target)
    old = tmp_path / f".build.old-{_dead_pid()}"
    os.rename(target, old)
    recover_leftovers(target)
    _assert_old_build_intact(target)
    assert _beside(target) == []


def test_restored_build_is_still_protected(tmp_path):
    target = tmp_path / "build"
    _make_old_build(target)
    os.rename(target, tmp_path / f".build.old-{_dead_pid()}")
    with pytest.raises(OutputExistsError, match="already exists"):
        with atomic_build_dir(target, overwrite=False):
            pass
    _assert_old_build_intact(target)


def test_check_build_target_restores_then_refuses(tmp_path):
    target = tmp_path / "build"
    assert check_build_target(target, overwrite=False) == target
    assert list(tmp_path.iterdir()) == []  # a check writes nothing
    _make_old_build(target)
    os.rename(target, tmp_path / f".build.old-{_dead_pid()}")
    with pytest.raises(OutputExistsError, match="already exists"):
        check_build_target(target, overwrite=False)
    _assert_old_build_intact(target)
    assert check_build_target(target, overwrite=True) == target


def test_leftovers_after_swap_are_removed(tmp_path):
    target = tmp_path / "build"
    _make_old_build(target)
    dead = _dead_pid()
    (tmp_path / f".build.old-{dead}").mkdir()
    (tmp_path / f".build.partial-{dead}").mkdir()
    (tmp_path / f".build.partial-{dead}" / "half.gpkg").write_bytes(b"x")
    # A process id that is running means nothing: only the lock says who writes.
    running = tmp_path / f".build.partial-{os.getppid()}-00ff"
    running.mkdir()
    (tmp_path / ".other.partial-1").mkdir()
    recover_leftovers(target)
    _assert_old_build_intact(target)
    assert _beside(target) == [".other.partial-1"]


def test_recover_leftovers_without_parent_is_harmless(tmp_path):
    recover_leftovers(tmp_path / "missing" / "build")
    assert list(tmp_path.iterdir()) == []


# ------------------------------------------------------------------ killed writers

_WRITER = textwrap.dedent(
    """
    import sys, time
    import geopandas as gpd, numpy as np, pandas as pd, pyogrio
    from paleomap.io import geopackage
    from paleomap.io.atomic import atomic_build_dir

    target, mode, n = sys.argv[1], sys.argv[2], int(sys.argv[3])
    real_write = pyogrio.write_dataframe

    def write_then_hang(*args, **kwargs):
        real_write(*args, **kwargs)
        print("layer written", flush=True)
        time.sleep(60)

    if mode == "hang":
        pyogrio.write_dataframe = write_then_hang
    rng = np.random.default_rng(0)
    pts = gpd.GeoDataFrame(
        {"core_id": [f"C{i}" for i in range(n)], "value": rng.normal(size=n)},
        geometry=gpd.points_from_xy(rng.uniform(0, 1e5, n), rng.uniform(0, 1e5, n)),
        crs=32631,
    )
    layers = {"cores": pts, "core_slices": pts, "run_info": pd.DataFrame({"version": ["new"]})}
    with atomic_build_dir(target, overwrite=True) as tmp:
        print("writing", flush=True)
        geopackage.write_layers(tmp / "paleomap.gpkg", layers)
    print("done", flush=True)
    """
)


def _start_writer(tmp_path: Path, target: Path, mode: str, n: int) -> subprocess.Popen:
    script = tmp_path / "writer.py"
    script.write_text(_WRITER)
    return subprocess.Popen(
        [sys.executable, str(script), str(target), mode, str(n)],
        stdout=subprocess.PIPE,
        text=True,
    )


def _wait_for(proc: subprocess.Popen, line: str) -> None:
    for got in proc.stdout:
        if got.strip() == line:
            return
    raise AssertionError(f"writer exited (status {proc.wait()}) before printing {line!r}")


def test_build_killed_mid_write_keeps_old_build(tmp_path):
    target = tmp_path / "build"
    _make_old_build(target)
    proc = _start_writer(tmp_path, target, "hang", 2000)
    try:
        # The first layer is in the half-written GeoPackage when the writer dies.
        _wait_for(proc, "layer written")
        (partial,) = tmp_path.glob(f".build.partial-{proc.pid}-*")
        assert any(p.suffix == ".gpkg" for p in partial.iterdir())
        proc.send_signal(signal.SIGKILL)
    finally:
        proc.kill()
        proc.wait()
        proc.stdout.close()
    assert proc.returncode == -signal.SIGKILL
    _assert_old_build_intact(target)
    assert partial.exists()  # SIGKILL leaves no chance to tidy up
    # The dead writer's lock file stays, but nobody holds it any more.
    assert atomic.lock_path(target).is_file()

    # The leftover does not confuse the next run, and is removed by it.
    with atomic_build_dir(target, overwrite=True) as tmp:
        atomic_write_text(tmp / "new.txt", "new")
    assert (target / "new.txt").read_text() == "new"
    assert _beside(target) == ["writer.py"]


@pytest.mark.parametrize("delay_s", [0.05, 0.4])
def test_build_killed_at_any_moment_leaves_a_complete_build(tmp_path, delay_s):
    target = tmp_path / "build"
    _make_old_build(target)
    proc = _start_writer(tmp_path, target, "plain", 100_000)
    try:
        _wait_for(proc, "writing")
        time.sleep(delay_s)
        proc.send_signal(signal.SIGKILL)
    finally:
        proc.kill()
        proc.wait()
        proc.stdout.close()
    # Killed before or after the move: either the old or the new build is complete.
    layers = [str(n) for n, _ in pyogrio.list_layers(target / "paleomap.gpkg")]
    if layers == OLD_LAYERS:
        _assert_old_build_intact(target)
    else:
        assert layers == ["cores", "core_slices", "run_info"]
        assert len(pyogrio.read_dataframe(target / "paleomap.gpkg", layer="cores")) == 100_000
    recover_leftovers(target)
    assert _beside(target) == ["writer.py"]
