"""The demo build checked by the real clients: GDAL's GeoPackage validator and QGIS.

Both run in Debian's system Python (/usr/bin/python3), which holds PyQGIS (package
python3-qgis) and GDAL's Python samples (package python3-gdal); the project's own virtual
environment has neither. ``.ci/run`` installs the two packages where apt exists. A test
skips only where the client cannot be found, and never in CI (``CI=true``), where it fails
instead.

Sources of the checks: GDAL's ``validate_gpkg.py`` (python3-gdal, Debian 12: GDAL 3.6.2,
``/usr/lib/python3/dist-packages/osgeo_utils/samples/validate_gpkg.py``) run with
``--extra --warning-as-error``; QGIS 3.22 (python3-qgis, Debian 12) reading each layer's
default style as QGIS desktop adds a layer.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from paleomap.io.styles import DISTAL_STOPS, PROBABILITY_STOPS
from paleomap.io.timeslider import slider_times
from paleomap.io.writers import raster_names

SYSTEM_PYTHON = Path("/usr/bin/python3")
PROBE = Path(__file__).parent / "qgis_probe.py"
IN_CI = os.environ.get("CI", "").lower() in ("1", "true", "yes")
SLICE = "KS3"


def _client_missing(module: str) -> str | None:
    """Why the system Python cannot import ``module``, or None if it can."""
    if not SYSTEM_PYTHON.exists():
        return f"{SYSTEM_PYTHON} not found"
    probe = subprocess.run(
        [str(SYSTEM_PYTHON), "-c", f"import {module}"],
        capture_output=True,
        text=True,
        env={**os.environ, "QT_QPA_PLATFORM": "offscreen"},
    )
    if probe.returncode != 0:
        return f"{SYSTEM_PYTHON} cannot import {module}: {probe.stderr.strip()[-200:]}"
    return None


def _require(module: str, package: str) -> None:
    why = _client_missing(module)
    if why is None:
        return
    message = f"{why} (Debian package {package})"
    if IN_CI:
        pytest.fail(f"CI must run this test: {message}")
    pytest.skip(message)


@pytest.mark.parametrize("build", ["demo_build", "geographic_build"])
def test_gdal_geopackage_validator_passes(build, request):
    _require("osgeo_utils.samples.validate_gpkg", "python3-gdal")
    _, _, out = request.getfixturevalue(build)
    run = subprocess.run(
        [
            str(SYSTEM_PYTHON),
            "-m",
            "osgeo_utils.samples.validate_gpkg",
            "-k",
            "--extra",
            "--warning-as-error",
            str(out / "paleomap.gpkg"),
        ],
        capture_output=True,
        text=True,
    )
    assert run.returncode == 0, run.stdout + run.stderr
    assert run.stdout.strip() == ""


@pytest.fixture(scope="module")
def qgis_report(demo_build, geographic_build):
    _require("qgis.core", "python3-qgis")
    project, _, out = demo_build
    (age,) = [s.age for s in project.slices if s.name == SLICE]
    start, end = slider_times([age, age - 0.5])
    run = subprocess.run(
        [
            str(SYSTEM_PYTHON),
            str(PROBE),
            str(out),
            SLICE,
            start.strftime("%Y-%m-%dT%H:%M:%SZ"),
            end.strftime("%Y-%m-%dT%H:%M:%SZ"),
            str(geographic_build[2]),
            raster_names(SLICE)["belt"],  # slice names become file names through a slug
        ],
        capture_output=True,
        text=True,
        env={**os.environ, "QT_QPA_PLATFORM": "offscreen"},
        timeout=600,
    )
    assert run.returncode == 0, run.stderr[-2000:]
    report = json.loads(run.stdout.strip().splitlines()[-1])
    print(f"QGIS {report['qgis_version']}", file=sys.stderr)
    return project, report


SPATIAL = {
    "cores",
    "core_slices",
    "core_contacts",
    "facies_belts",
    "shorelines",
    "shoreline_bands",
    "transects",
    "shoreline_shifts",
}


def test_every_spatial_layer_opens_with_its_stored_style(qgis_report):
    project, report = qgis_report
    spatial = {k: v for k, v in report["layers"].items() if v.get("spatial")}
    assert SPATIAL <= set(spatial)
    belts = [[b.id, b.label or b.id, b.color.lower()] for b in project.scheme.belts]
    for name, info in spatial.items():
        assert info["valid"], name
        # "Loaded from Provider": the default style came from the layer_styles table.
        assert info["style"] == "Loaded from Provider", name
        assert info["size_units"] == ["MM"], name
        assert info["crs"] == "EPSG:32631", name
    for name in ("facies_belts", "core_slices"):
        assert spatial[name]["renderer"] == "categorizedSymbol"
        assert spatial[name]["field"] == "belt"
        assert spatial[name]["categories"] == belts
    assert spatial["shoreline_shifts"]["renderer"] == "categorizedSymbol"
    assert spatial["cores"]["renderer"] == "singleSymbol"


def test_time_slider_settings_come_with_the_style(qgis_report):
    _, report = qgis_report
    layers = report["layers"]
    for name in ("core_slices", "facies_belts", "shorelines", "shoreline_bands"):
        assert layers[name]["temporal"] == {
            "active": True,
            "mode": 1,
            "start": "slider_time",
            "end": "",
        }, name
    assert layers["shoreline_shifts"]["temporal"] == {
        "active": True,
        "mode": 2,
        "start": "slider_start",
        "end": "slider_end",
    }
    for name in ("cores", "core_contacts", "transects"):
        assert not layers[name]["temporal"]["active"], name
    # At the slice's instant the slider shows that slice's belts and no other.
    assert report["slider"]["slices_shown"] == [SLICE]


def test_rendered_slice_shows_each_core_in_its_belt_colour(qgis_report):
    project, report = qgis_report
    colors = {b.id: b.color.lower() for b in project.scheme.belts}
    for key in ("facies_belts", "belt_raster"):
        found = report["rendered"][key]
        assert len(found) == len(project.cores), key
        wrong = [(c, belt, got) for c, belt, got in found if got != colors[belt]]
        assert wrong == [], key


def test_rasters_open_paletted_or_pseudocolour(qgis_report):
    project, report = qgis_report
    rasters = report["rasters"]
    n_slices = len(project.slices)
    n_belts = project.scheme.n_belts
    # Per slice: the belt raster, one probability raster per belt, the distal probability.
    assert len(rasters) == n_slices * (n_belts + 2)
    classes = [[i, b.label or b.id, b.color.lower()] for i, b in enumerate(project.scheme.belts)]
    for name, info in rasters.items():
        assert info["valid"], name
        assert info["crs"] == "EPSG:32631", name
        # No probability raster opens as an RGB composite of three belts.
        assert info["renderer"] != "multibandcolor", name
        if name.startswith("belt_"):
            assert info["renderer"] == "paletted", name
            assert info["classes"] == classes, name
        else:
            assert info["renderer"] == "singlebandpseudocolor", name
            assert info["band"] == 1
            stops = DISTAL_STOPS if name.startswith("distal_") else PROBABILITY_STOPS
            assert info["ramp"] == [[float(v), c] for v, c in stops], name


def test_geographic_project_opens_in_epsg_4326(qgis_report):
    _, report = qgis_report
    crs = report["other_crs"]
    assert "facies_belts" in crs and any(k.endswith(".tif") for k in crs)
    assert set(crs.values()) == {"EPSG:4326"}
