"""Output CRS: the project's CRS by default or ``[output] crs``; geographic projects are
mapped in a local working CRS and delivered in their own registered CRS.

EPSG codes as registered in the EPSG dataset shipped with PROJ (through pyproj).
"""

from __future__ import annotations

import warnings

import geopandas as gpd
import numpy as np
import pyogrio
import pyproj
import pytest
import rasterio
from conftest import write_project

from paleomap.errors import InputError, PaleomapWarning
from paleomap.io.readers import load_project
from paleomap.io.writers import GPKG_NAME, raster_names
from paleomap.pipeline import compute, write_build
from paleomap.project import delivery_crs_for

SPATIAL = ("cores", "core_slices", "facies_belts", "shorelines", "shoreline_bands", "transects")


def test_geographic_project_is_delivered_in_epsg_4326(geographic_build):
    project, result, out = geographic_build
    # Mapped in a local azimuthal equidistant CRS that has no code of its own ...
    assert project.working_crs.to_authority() is None
    assert project.delivery_crs.to_epsg() == 4326
    # ... and delivered in the project's registered CRS.
    for name in SPATIAL:
        crs = pyproj.CRS.from_user_input(pyogrio.read_info(out / GPKG_NAME, layer=name)["crs"])
        assert crs.to_authority() == ("EPSG", "4326"), name
    for m in result.slice_maps:
        with rasterio.open(out / "rasters" / raster_names(m.slice.name)["belt"]) as src:
            assert src.crs.to_epsg() == 4326
            assert abs(src.transform.a) < 0.01  # degrees, not metres


def test_lengths_and_areas_are_measured_in_the_working_crs(geographic_build):
    project, result, out = geographic_build
    belts = gpd.read_file(out / GPKG_NAME, layer="facies_belts")
    assert belts.crs.to_epsg() == 4326
    measured = belts.to_crs(project.working_crs).area / 1e6
    np.testing.assert_allclose(belts["area_km2"], measured, rtol=1e-6)
    # The belts of a slice still cover the mapped area, measured in the working CRS.
    for _, group in belts.groupby("slice"):
        assert group["area_km2"].sum() == pytest.approx(result.grid.area.area / 1e6, rel=1e-6)


def test_output_crs_setting(tmp_path):
    path = write_project(tmp_path, keys={"output.crs": "EPSG:3035"})
    project = load_project(path)
    assert project.delivery_crs.to_epsg() == 3035
    out = tmp_path / "build"
    with warnings.catch_warnings():
        # The small test project has slices without a shoreline; not the point here.
        warnings.simplefilter("ignore", PaleomapWarning)
        write_build(compute(project), out, figures=False, report=False)
    crs = pyogrio.read_info(out / GPKG_NAME, layer="facies_belts")["crs"]
    assert pyproj.CRS.from_user_input(crs).to_epsg() == 3035


def test_bad_output_crs_is_an_input_error(tmp_path):
    path = write_project(tmp_path, keys={"output.crs": "EPSG:999999"})
    with pytest.raises(InputError, match=r"output\.crs.*is not a CRS pyproj knows"):
        load_project(path)


def test_delivery_crs_finds_the_registered_code():
    # A PROJ string for UTM 31N on WGS 84 is EPSG:32631 (EPSG dataset, through pyproj).
    utm = pyproj.CRS("+proj=utm +zone=31 +datum=WGS84 +units=m +no_defs")
    assert delivery_crs_for(utm).to_authority() == ("EPSG", "32631")
    local = pyproj.CRS("+proj=aeqd +lat_0=36 +lon_0=3 +datum=WGS84 +units=m")
    assert delivery_crs_for(local).to_authority() is None
