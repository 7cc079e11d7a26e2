"""Data safety: paleomap never deletes what it did not write, and a fault of the system
leaves the previous build whole with no temporary folder behind.

Each test reproduces one case of a careless or hostile user: files of their own in a
build folder, the inputs of a build inside its output folder, ``demo`` onto an earlier
build, a second writer that cannot see the first one's process, SIGTERM, no
permission, a full disk, a busy mount point.
"""

from __future__ import annotations

import errno
import hashlib
import os
import resource
import shutil
import signal
import subprocess
import sys
import textwrap
import time
import warnings
from pathlib import Path

import pytest
from click.testing import CliRunner
from conftest import write_project

from paleomap.cli import main
from paleomap.errors import BuildBusyError, BuildWriteError, OutputExistsError, PaleomapWarning
from paleomap.io import atomic
from paleomap.io.atomic import (
    BUILD_MARKER,
    atomic_build_dir,
    atomic_write_text,
    read_manifest,
    recover_leftovers,
)
from paleomap.io.readers import load_project
from paleomap.pipeline import build


def _digest(folder: Path) -> dict:
    return {
        p.relative_to(folder).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(folder.rglob("*"))
        if p.is_file()
    }


def _beside(target: Path) -> list[str]:
    """Hidden entries beside ``target`` that belong to it (temporary folders, locks)."""
    return sorted(p.name for p in target.parent.iterdir() if p.name.startswith(f".{target.name}."))


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    """(project file, a complete build) made once for the module."""
    root = tmp_path_factory.mktemp("safety")
    project = write_project(root / "project")
    out = root / "build"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)
        build(load_project(project), out, figures=False, report=False)
    return project, out


@pytest.fixture
def old_build(reference, tmp_path):
    """(project file, a copy of the reference build in a fresh folder, its digest)."""
    project, out = reference
    target = tmp_path / "build"
    shutil.copytree(out, target)
    return project, target, _digest(target)


def _cli(*args):
    return CliRunner().invoke(main, ["-q", *map(str, args)])


# ------------------------------------------------------------------ the manifest


def test_a_build_lists_every_file_it_wrote(old_build):
    _, target, digest = old_build
    listed = read_manifest(target)
    assert sorted(listed) == sorted(k for k in digest if k != BUILD_MARKER)
    assert "paleomap.gpkg" in listed and "rates.csv" in listed


@pytest.mark.parametrize(
    "extra",
    ["notes.txt", "map.qgz", "rasters/my_edit.tif", "inputs/project.toml", "empty_folder/"],
)
def test_overwrite_stops_before_any_work_naming_files_it_did_not_write(
    old_build, extra, monkeypatch
):
    project, target, digest = old_build
    path = target / extra
    path.parent.mkdir(parents=True, exist_ok=True)
    if extra.endswith("/"):
        path.mkdir(exist_ok=True)
    else:
        path.write_text("the user's own")
    digest = _digest(target)
    started = []
    monkeypatch.setattr("paleomap.pipeline.compute", lambda p: started.append(p))
    result = _cli("build", project, "--out", target, "--overwrite", "--no-figures")
    assert result.exit_code == 2, result.output
    assert "paleomap did not write" in result.stderr
    top = extra.split("/")[0] + ("/" if "/" in extra.rstrip("/") or extra.endswith("/") else "")
    shown = extra if extra.startswith("rasters/") else top
    assert repr(shown) in result.stderr
    assert "Traceback" not in result.stderr
    assert started == []  # refused before any work
    assert _digest(target) == digest
    assert path.exists()
    assert _beside(target) == []


def test_inputs_kept_inside_the_build_folder_are_never_deleted(old_build, tmp_path):
    # The case of the issue: inputs in b/inputs/, then build b/inputs/project.toml --out b.
    project, target, _ = old_build
    inputs = target / "inputs"
    shutil.copytree(project.parent, inputs)
    before = _digest(inputs)
    result = _cli("build", inputs / "project.toml", "--out", target, "--overwrite", "--no-figures")
    assert result.exit_code == 2, result.output
    assert "holds inputs of this build" in result.stderr
    assert _digest(inputs) == before
    # Even the library refuses, without the manifest's help, a target holding an input.
    fresh = tmp_path / "fresh"
    fresh.mkdir()
    shutil.copytree(project.parent, fresh / "in")
    with pytest.raises(OutputExistsError, match="holds inputs of this build"):
        build(load_project(fresh / "in" / "project.toml"), fresh, overwrite=True)
    assert sorted(p.name for p in (fresh / "in").iterdir()) == sorted(
        p.name for p in project.parent.iterdir()
    )


def test_overwrite_replaces_a_build_that_holds_only_its_own_files(old_build):
    project, target, digest = old_build
    result = _cli("build", project, "--out", target, "--overwrite", "--no-figures")
    assert result.exit_code == 0, result.output + result.stderr
    assert set(_digest(target)) == set(digest)
    assert _beside(target) == []


def test_a_build_without_a_file_list_is_not_replaced(old_build):
    project, target, digest = old_build
    (target / BUILD_MARKER).write_text('{"paleomap": "0.0.1"}\n')
    result = _cli("build", project, "--out", target, "--overwrite", "--no-figures")
    assert result.exit_code == 2
    assert "has no readable list of the files" in result.stderr
    assert (target / "paleomap.gpkg").exists()


def test_a_list_naming_paths_outside_the_folder_is_not_trusted(tmp_path):
    target = tmp_path / "b"
    target.mkdir()
    (tmp_path / "precious.txt").write_text("mine")
    (target / BUILD_MARKER).write_text('{"files": ["../precious.txt"]}')
    assert read_manifest(target) is None
    with pytest.raises(OutputExistsError, match="no readable list"):
        atomic.check_build_target(target, overwrite=True)
    assert (tmp_path / "precious.txt").read_text() == "mine"


def test_a_file_added_during_the_build_is_kept_not_deleted(tmp_path):
    target = tmp_path / "b"
    with atomic_build_dir(target, overwrite=False) as tmp:
        atomic_write_text(tmp / "a.txt", "old")
    with pytest.warns(PaleomapWarning, match="kept in"):
        with atomic_build_dir(target, overwrite=True) as tmp:
            atomic_write_text(tmp / "a.txt", "new")
            # The user saves a note into the old build while the new one is written,
            # after every check paleomap could make before the swap.
            real = atomic._check_replaceable

            def late_note(*args):
                real(*args)
                (target / "late_note.txt").write_text("written during the build")

            atomic._check_replaceable = late_note
    atomic._check_replaceable = real
    assert (target / "a.txt").read_text() == "new"
    (kept,) = tmp_path.glob("b.kept-*")
    assert (kept / "late_note.txt").read_text() == "written during the build"
    assert not (kept / "a.txt").exists()  # paleomap's own old file is gone
    assert _beside(target) == []


# ------------------------------------------------------------------ demo


def test_demo_does_not_replace_a_build_without_overwrite(old_build, monkeypatch):
    _, target, digest = old_build
    started = []
    monkeypatch.setattr("paleomap.pipeline.compute", lambda p: started.append(p))
    result = _cli("demo", "--out", target)
    assert result.exit_code == 2, result.output
    assert "already exists" in result.stderr and "--overwrite" in result.stderr
    assert started == []
    assert _digest(target) == digest


def test_demo_with_overwrite_follows_the_manifest_rule(old_build, monkeypatch):
    _, target, _ = old_build
    (target / "notes.txt").write_text("mine")
    started = []
    monkeypatch.setattr("paleomap.pipeline.compute", lambda p: started.append(p))
    result = _cli("demo", "--out", target, "--overwrite")
    assert result.exit_code == 2
    assert "'notes.txt'" in result.stderr
    assert started == []
    assert (target / "notes.txt").read_text() == "mine"


# ------------------------------------------------------------------ ownership

_HOLDER = textwrap.dedent(
    """
    import sys, time
    from pathlib import Path
    from paleomap.io.atomic import atomic_build_dir, atomic_write_text

    target = Path(sys.argv[1])
    with atomic_build_dir(target, overwrite=True) as tmp:
        atomic_write_text(tmp / "first.txt", "1")
        print("writing", flush=True)
        sys.stdin.readline()  # the test says when to go on
        atomic_write_text(tmp / "second.txt", "2")
    print("done", flush=True)
    """
)


def _start_holder(tmp_path: Path, target: Path) -> subprocess.Popen:
    script = tmp_path / "holder.py"
    script.write_text(_HOLDER)
    proc = subprocess.Popen(
        [sys.executable, str(script), str(target)],
        stdin=subprocess.PIPE,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    assert proc.stdout.readline().strip() == "writing", proc.stderr.read()
    return proc


def _finish(proc: subprocess.Popen) -> tuple[int, str, str]:
    out, err = proc.communicate("go\n", timeout=60)
    return proc.returncode, out, err


def test_a_writer_in_another_pid_namespace_is_not_judged_dead(tmp_path, monkeypatch):
    target = tmp_path / "b"
    proc = _start_holder(tmp_path, target)
    try:
        # As seen from another container: no process id is alive.
        monkeypatch.setattr(atomic, "_process_alive", lambda pid: False)
        (partial,) = tmp_path.glob(".b.partial-*")
        with pytest.raises(BuildBusyError, match="another paleomap process is writing"):
            recover_leftovers(target)
        with pytest.raises(BuildBusyError), atomic_build_dir(target, overwrite=True):
            pass
        assert (partial / "first.txt").read_text() == "1"
    finally:
        rc, out, err = _finish(proc)
    assert rc == 0, err
    assert out.strip() == "done"
    assert sorted(p.name for p in target.iterdir()) == [BUILD_MARKER, "first.txt", "second.txt"]
    assert _beside(target) == []


def test_a_writer_never_installs_a_folder_removed_under_it(tmp_path):
    # Something that ignores the lock (an older paleomap, a user) removes the
    # temporary folder; the writer must notice and install nothing.
    target = tmp_path / "b"
    proc = _start_holder(tmp_path, target)
    (partial,) = tmp_path.glob(".b.partial-*")
    shutil.rmtree(partial)
    partial.mkdir()  # and even puts an impostor folder of the same name there
    (partial / "first.txt").write_text("1")
    rc, _, err = _finish(proc)
    assert rc != 0
    assert "was removed or replaced by another process" in err
    assert not target.exists()


def test_the_cli_refuses_a_folder_another_build_is_writing(old_build, tmp_path):
    project, target, digest = old_build
    proc = _start_holder(tmp_path, target)
    try:
        result = _cli("build", project, "--out", target, "--overwrite", "--no-figures")
        assert result.exit_code == 2
        assert "another paleomap process is writing" in result.stderr
    finally:
        rc, _, err = _finish(proc)
    assert rc == 0, err


# ------------------------------------------------------------------ signals and faults


def _start_build(project: Path, out: Path, **kwargs) -> subprocess.Popen:
    code = "import sys; from paleomap.cli import main; sys.exit(main())"
    return subprocess.Popen(
        [sys.executable, "-c", code, "-q", "build", str(project), "--out", str(out)]
        + ["--overwrite", "--no-figures"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        **kwargs,
    )


@pytest.mark.slow
def test_sigterm_leaves_the_previous_build_whole_and_no_temporary_folder(old_build):
    project, target, digest = old_build
    proc = _start_build(project, target)
    deadline = time.monotonic() + 120
    while not list(target.parent.glob(".build.partial-*")):
        assert proc.poll() is None, proc.stderr.read()
        assert time.monotonic() < deadline
        time.sleep(0.01)
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 143, err
    assert "Terminated; nothing was replaced" in err
    assert "Traceback" not in err
    assert _digest(target) == digest
    assert _beside(target) == []


def _limit_file_size() -> None:
    # A file may grow to 64 kB: the GeoPackage cannot, like on a full disk.
    signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
    resource.setrlimit(resource.RLIMIT_FSIZE, (64_000, 64_000))


@pytest.mark.slow
def test_a_full_disk_gives_a_clean_message_and_keeps_the_previous_build(old_build):
    project, target, digest = old_build
    proc = _start_build(project, target, preexec_fn=_limit_file_size)
    _, err = proc.communicate(timeout=300)
    assert proc.returncode == 2, err
    assert "cannot write the build" in err and "File too large" in err
    assert "The previous build is unchanged" in err
    assert "Traceback" not in err
    assert _digest(target) == digest
    assert _beside(target) == []


@pytest.mark.parametrize("code", [errno.ENOSPC, errno.EACCES, errno.EROFS])
def test_a_refused_write_inside_the_build_is_a_clean_error(tmp_path, code):
    target = tmp_path / "b"
    with atomic_build_dir(target, overwrite=False) as tmp:
        atomic_write_text(tmp / "a.txt", "old")
    with pytest.raises(BuildWriteError, match=os.strerror(code)) as info:
        with atomic_build_dir(target, overwrite=True):
            raise OSError(code, os.strerror(code))
    assert "The previous build is unchanged" in str(info.value)
    assert (target / "a.txt").read_text() == "old"
    assert _beside(target) == []


def test_a_gdal_style_disk_full_message_is_recognised(tmp_path):
    with pytest.raises(BuildWriteError, match="(?i)disk is full"):
        with atomic_build_dir(tmp_path / "b", overwrite=False):
            raise RuntimeError("sqlite3_exec failed: database or disk is full")
    assert list(tmp_path.iterdir()) == []


def test_a_bug_is_not_dressed_as_a_system_fault(tmp_path):
    with pytest.raises(ZeroDivisionError), atomic_build_dir(tmp_path / "b", overwrite=False):
        raise ZeroDivisionError
    assert list(tmp_path.iterdir()) == []


def test_out_in_a_folder_without_write_permission(old_build, tmp_path, monkeypatch):
    # The tests may run as root, which ignores permissions: the check is what matters.
    project, _, _ = old_build
    locked = tmp_path / "readonly"
    locked.mkdir()
    real = os.access
    monkeypatch.setattr(
        atomic.os, "access", lambda p, mode: False if Path(p) == locked else real(p, mode)
    )
    result = _cli("build", project, "--out", locked / "sub" / "b", "--no-figures")
    assert result.exit_code == 2, result.output
    assert "no permission to create files in" in result.stderr
    assert "Traceback" not in result.stderr
    assert list(locked.iterdir()) == []


@pytest.mark.skipif(os.geteuid() == 0, reason="root ignores file permissions")
def test_out_in_a_read_only_folder_for_real(old_build, tmp_path):
    project, _, _ = old_build
    locked = tmp_path / "readonly"
    locked.mkdir()
    locked.chmod(0o555)
    try:
        result = _cli("build", project, "--out", locked / "b", "--no-figures")
    finally:
        locked.chmod(0o755)
    assert result.exit_code == 2
    assert "no permission" in result.stderr


def test_a_read_only_old_build_is_refused_before_any_work(old_build, monkeypatch):
    project, target, digest = old_build
    rasters = target / "rasters"
    real = os.access
    monkeypatch.setattr(
        atomic.os, "access", lambda p, mode: False if Path(p) == rasters else real(p, mode)
    )
    started = []
    monkeypatch.setattr("paleomap.pipeline.compute", lambda p: started.append(p))
    result = _cli("build", project, "--out", target, "--overwrite", "--no-figures")
    assert result.exit_code == 2
    assert "no permission to remove the files in" in result.stderr
    assert started == []
    assert _digest(target) == digest
    assert _beside(target) == []


def test_an_empty_mount_point_is_refused_cleanly(tmp_path, monkeypatch):
    target = tmp_path / "mnt"
    target.mkdir()
    monkeypatch.setattr(atomic.os.path, "ismount", lambda p: Path(p) == target)
    with pytest.raises(BuildWriteError, match="is a mount point"):
        atomic.check_build_target(target, overwrite=True)
    assert list(target.iterdir()) == []


def test_a_busy_target_at_swap_time_is_a_clean_error(tmp_path, monkeypatch):
    target = tmp_path / "b"
    target.mkdir()

    def busy(a, b):
        raise OSError(errno.EBUSY, os.strerror(errno.EBUSY), str(b))

    monkeypatch.setattr(atomic, "_exchange", busy)
    with pytest.raises(BuildWriteError, match="Device or resource busy"):
        with atomic_build_dir(target, overwrite=True) as tmp:
            atomic_write_text(tmp / "a.txt", "a")
    assert target.is_dir() and list(target.iterdir()) == []
    assert _beside(target) == []
