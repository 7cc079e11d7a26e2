"""Interrupted and repeated builds: a killed build never harms the previous one.

A small synthetic basin (12 cores, three surfaces, 1 km cells) is built once; then
``paleomap build --overwrite`` is started in a subprocess onto the same folder and
killed with SIGKILL while it writes. The previous GeoPackage must still open with all
its layers and unchanged content, and the next build must succeed. Without
``--overwrite`` an existing build is refused with exit 2 and left untouched.
"""

from __future__ import annotations

import hashlib
import os
import signal
import subprocess
import sys
import time
import warnings
from pathlib import Path

import pyogrio
import pytest
from click.testing import CliRunner

from paleomap.cli import main
from paleomap.errors import PaleomapWarning
from paleomap.io.atomic import BUILD_MARKER
from paleomap.io.readers import load_project
from paleomap.pipeline import build
from paleomap.synthetic import make_basin, write_project


def _digest(folder: Path) -> dict:
    return {
        p.relative_to(folder).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(folder.rglob("*"))
        if p.is_file()
    }


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    """(project file, build folder, layers, file digests) of one complete build."""
    root = tmp_path_factory.mktemp("interrupted")
    basin = make_basin(n_cores=12, surfaces=3, seed=1, size_m=20_000.0, cell_size_m=1000.0)
    project = write_project(basin, root / "basin")
    out = root / "build"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)
        build(load_project(project), out, figures=False)
    layers = {name for name, _ in pyogrio.list_layers(out / "paleomap.gpkg")}
    return project, out, layers, _digest(out)


def _assert_intact(out: Path, layers: set, digest: dict) -> None:
    assert (out / BUILD_MARKER).is_file()
    assert {name for name, _ in pyogrio.list_layers(out / "paleomap.gpkg")} == layers
    for name in layers:
        pyogrio.read_info(out / "paleomap.gpkg", layer=name)  # every layer opens
    assert _digest(out) == digest


def _leftovers(out: Path) -> list[str]:
    return sorted(p.name for p in out.parent.iterdir() if p.name.startswith(f".{out.name}."))


def test_an_existing_build_is_replaced_only_with_overwrite(built):
    project, out, layers, digest = built
    result = CliRunner().invoke(main, ["build", str(project), "--out", str(out), "--no-figures"])
    assert result.exit_code == 2, result.output + result.stderr
    assert "already exists" in result.stderr and "--overwrite" in result.stderr
    assert "Traceback" not in result.stderr
    _assert_intact(out, layers, digest)
    assert _leftovers(out) == []


def _start_build(project: Path, out: Path) -> subprocess.Popen:
    code = "import sys; from paleomap.cli import main; sys.exit(main())"
    args = [sys.executable, "-c", code, "-q", "build", str(project), "--out", str(out)]
    return subprocess.Popen(
        [*args, "--overwrite", "--no-figures"],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
    )


def _kill_when(proc: subprocess.Popen, ready, timeout: float = 120.0) -> bool:
    """SIGKILL ``proc`` as soon as ``ready()``; False if it finished first."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if proc.poll() is not None:
            return False
        if ready():
            os.kill(proc.pid, signal.SIGKILL)
            proc.wait(timeout=30)
            return True
        time.sleep(0.005)
    proc.kill()
    raise AssertionError("the build neither wrote nor finished in time")


@pytest.mark.slow
@pytest.mark.parametrize(
    "moment",
    ["partial-folder", "geopackage-being-written"],
    ids=["folder-appears", "mid-geopackage"],
)
def test_a_killed_build_leaves_the_previous_build_intact(built, moment):
    project, out, layers, digest = built
    partial = out.parent / f".{out.name}.partial-"

    def partial_folders():
        return [p for p in out.parent.iterdir() if p.name.startswith(partial.name)]

    def ready():
        folders = partial_folders()
        if moment == "partial-folder":
            return bool(folders)
        # A GeoPackage (or its temporary) being written inside the partial folder.
        return any(f.is_dir() and any(f.glob("*.gpkg*")) for f in folders)

    proc = _start_build(project, out)
    killed = _kill_when(proc, ready)
    stderr = proc.stderr.read().decode(errors="replace")
    proc.stderr.close()
    assert killed, f"the build finished before it could be killed: {stderr}"
    assert proc.returncode == -signal.SIGKILL
    _assert_intact(out, layers, digest)

    # The next build tidies the leftovers of the killed one and replaces the old build.
    result = CliRunner().invoke(
        main, ["-q", "build", str(project), "--out", str(out), "--overwrite", "--no-figures"]
    )
    assert result.exit_code == 0, result.output + result.stderr
    assert _leftovers(out) == []
    assert {name for name, _ in pyogrio.list_layers(out / "paleomap.gpkg")} == layers
    assert (out / BUILD_MARKER).is_file()
    # Keep the module's reference build for the other tests: the new one replaced it.
    digest.clear()
    digest.update(_digest(out))
