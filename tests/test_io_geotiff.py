"""Tests for paleomap.io.geotiff, read back with rasterio."""

from __future__ import annotations

import ctypes
import glob
import math
import os
import xml.etree.ElementTree as ET

import numpy as np
import pyproj
import pytest
import rasterio
from rasterio.transform import Affine

from paleomap.figures.palette import hex_to_rgb
from paleomap.io.geotiff import (
    CLASS_TAG_PREFIX,
    NODATA_NAME,
    reproject_grid,
    write_class_raster,
    write_float_raster,
)

CRS = "EPSG:32631"
TRANSFORM = Affine(250.0, 0.0, 500000.0, 0.0, -250.0, 6010000.0)
COLORS = ["#8f6234", "#d9b56e", "#f0dd93", "#6fb7b0", "#1d4f7c"]
NAMES = ["gravel", "coarse_sand", "fine_sand", "silt", "clay"]
NODATA = len(NAMES)  # the default: the first value after the classes


def _classes(rows=40, cols=70) -> np.ndarray:
    # Ranks grow basinward (east), nodata in a corner outside the mapped area.
    ranks = np.repeat((np.arange(cols) * len(NAMES) // cols)[None, :], rows, axis=0)
    ranks = ranks.astype(np.uint8)
    ranks[:5, :8] = NODATA
    return ranks


@pytest.fixture(scope="module")
def class_tif(tmp_path_factory):
    path = tmp_path_factory.mktemp("rasters") / "belt_S1.tif"
    write_class_raster(
        path, _classes(), TRANSFORM, CRS, COLORS, NAMES, tags={"slice": "S1", "age": 12.5}
    )
    return path


def test_class_raster_reads_back(class_tif):
    with rasterio.open(class_tif) as src:
        assert src.driver == "GTiff"
        assert src.count == 1
        assert src.dtypes == ("uint8",)
        assert (src.height, src.width) == (40, 70)
        assert pyproj.CRS.from_user_input(src.crs.to_wkt()).equals(pyproj.CRS(CRS))
        assert src.transform == TRANSFORM
        assert src.nodata == NODATA
        assert src.descriptions == ("most likely belt",)
        np.testing.assert_array_equal(src.read(1), _classes())
        assert src.read_masks(1)[:5, :8].max() == 0
        assert src.read_masks(1)[5:, :].min() == 255
        assert src.tags()["slice"] == "S1"
        assert float(src.tags()["age"]) == 12.5


def test_class_raster_colour_table(class_tif):
    # Exactly the classes and nodata (transparent), as GDAL reports the table.
    with rasterio.open(class_tif) as src:
        cmap = src.colormap(1)
        assert src.colorinterp[0] == rasterio.enums.ColorInterp.palette
    assert sorted(cmap) == list(range(len(NAMES) + 1))
    for i, color in enumerate(COLORS):
        assert cmap[i] == (*hex_to_rgb(color), 255)
    assert cmap[NODATA][3] == 0


def test_lone_tif_keeps_colours_and_names(class_tif, tmp_path):
    # Without its .aux.xml the TIFF still has its palette and the class names as band
    # metadata (the TIFF palette itself always has 256 entries for 8 bits).
    lone = tmp_path / "lone.tif"
    lone.write_bytes(class_tif.read_bytes())
    with rasterio.open(lone) as src:
        cmap = src.colormap(1)
        tags = src.tags(1)
    for i, color in enumerate(COLORS):
        assert cmap[i][:3] == hex_to_rgb(color)
    assert [tags[f"{CLASS_TAG_PREFIX}{i}"] for i in range(len(NAMES))] == NAMES


def test_class_raster_names_as_tags_and_categories(class_tif):
    with rasterio.open(class_tif) as src:
        tags = src.tags(1)
    assert [tags[f"{CLASS_TAG_PREFIX}{i}"] for i in range(len(NAMES))] == NAMES
    sidecar = class_tif.with_name(class_tif.name + ".aux.xml")
    root = ET.parse(sidecar).getroot()
    assert root.tag == "PAMDataset"
    band = root.find("PAMRasterBand")
    assert band.get("band") == "1"
    assert [c.text for c in band.find("CategoryNames")] == [*NAMES, NODATA_NAME]
    assert len(band.find("ColorTable")) == len(NAMES) + 1


def _gdal_category_names(path) -> list[str] | None:
    """Category names as GDAL itself reports them, through rasterio's bundled libgdal."""
    libs = glob.glob(os.path.join(os.path.dirname(rasterio.__file__) + ".libs", "libgdal*"))
    if not libs:
        return None
    gdal = ctypes.CDLL(libs[0])
    gdal.GDALOpen.restype = ctypes.c_void_p
    gdal.GDALOpen.argtypes = [ctypes.c_char_p, ctypes.c_int]
    gdal.GDALGetRasterBand.restype = ctypes.c_void_p
    gdal.GDALGetRasterBand.argtypes = [ctypes.c_void_p, ctypes.c_int]
    gdal.GDALGetMetadata.restype = ctypes.c_void_p
    gdal.GDALGetMetadata.argtypes = [ctypes.c_void_p, ctypes.c_char_p]
    gdal.GDALGetRasterCategoryNames.restype = ctypes.POINTER(ctypes.c_char_p)
    gdal.GDALGetRasterCategoryNames.argtypes = [ctypes.c_void_p]
    gdal.GDALClose.argtypes = [ctypes.c_void_p]
    gdal.GDALAllRegister()
    ds = gdal.GDALOpen(os.fsencode(path), 0)
    assert ds
    try:
        # GTiff reads the .aux.xml when metadata are first asked for, as a GIS does.
        gdal.GDALGetMetadata(ds, None)
        names = gdal.GDALGetRasterCategoryNames(gdal.GDALGetRasterBand(ds, 1))
        out = []
        while names and names[len(out)] is not None:
            out.append(names[len(out)].decode())
        return out
    finally:
        gdal.GDALClose(ds)


def test_gdal_reports_the_category_names(class_tif):
    names = _gdal_category_names(class_tif)
    if names is None:
        pytest.skip("rasterio was not installed from a wheel with a bundled libgdal")
    assert names == [*NAMES, NODATA_NAME]


def test_class_raster_is_tiled_and_compressed(class_tif):
    with rasterio.open(class_tif) as src:
        profile = src.profile
    assert profile["tiled"] is True
    assert profile["compress"] == "deflate"
    assert profile["blockxsize"] % 16 == 0 and profile["blockysize"] % 16 == 0


def test_large_raster_uses_256_tiles(tmp_path):
    path = write_class_raster(
        tmp_path / "big.tif", np.zeros((300, 520), np.uint8), TRANSFORM, CRS, COLORS, NAMES
    )
    with rasterio.open(path) as src:
        assert src.block_shapes == [(256, 256)]
        assert src.overviews(1) == []


def test_big_grids_get_overviews(tmp_path):
    ranks = np.zeros((300, 1100), np.uint8)
    path = write_class_raster(tmp_path / "big.tif", ranks, TRANSFORM, CRS, COLORS, NAMES)
    with rasterio.open(path) as src:
        assert src.overviews(1) == [2, 4]
        assert src.tags(ns="rio_overview")["resampling"] == "mode"
    path = write_float_raster(tmp_path / "p.tif", np.zeros((1100, 300)), TRANSFORM, CRS, ["p"])
    with rasterio.open(path) as src:
        assert src.overviews(1) == [2, 4]
        assert src.tags(ns="rio_overview")["resampling"] == "average"


def test_reproject_grid_to_geographic():
    ranks = _classes()
    out, transform = reproject_grid(
        ranks, TRANSFORM, CRS, "EPSG:4326", categorical=True, nodata=NODATA
    )
    assert out.dtype == np.uint8
    assert set(np.unique(out)) <= set(range(len(NAMES) + 1))
    # Every class survives nearest-cell resampling at about the same resolution.
    assert set(range(len(NAMES))) <= set(np.unique(out))
    west, north = transform @ (0, 0)
    lon, lat = pyproj.Transformer.from_crs(CRS, 4326, always_xy=True).transform(500000, 6010000)
    assert abs(west - lon) < 0.01 and abs(north - lat) < 0.01


def test_float_stack_reads_back(tmp_path):
    rng = np.random.default_rng(1)
    probs = rng.dirichlet(np.ones(len(NAMES)), size=(40, 70)).transpose(2, 0, 1)
    probs[:, :5, :8] = np.nan
    descriptions = [f"P({n})" for n in NAMES]
    path = write_float_raster(tmp_path / "p.tif", probs, TRANSFORM, CRS, descriptions)
    with rasterio.open(path) as src:
        assert src.count == len(NAMES)
        assert src.dtypes == ("float32",) * len(NAMES)
        assert math.isnan(src.nodata)
        assert src.descriptions == tuple(descriptions)
        assert src.transform == TRANSFORM
        assert pyproj.CRS.from_user_input(src.crs.to_wkt()).equals(pyproj.CRS(CRS))
        assert src.profile["compress"] == "deflate" and src.profile["tiled"] is True
        data = src.read()
    np.testing.assert_array_equal(data, probs.astype(np.float32))
    assert not path.with_name("p.tif.aux.xml").exists()


def test_single_band_with_finite_nodata(tmp_path):
    distal = np.linspace(0, 1, 40 * 70, dtype=np.float64).reshape(40, 70)
    distal[0, 0] = np.nan
    path = write_float_raster(
        tmp_path / "d.tif", distal, TRANSFORM, CRS, ["P(distal of fine_sand|silt)"], nodata=-9999
    )
    with rasterio.open(path) as src:
        assert src.count == 1
        assert src.nodata == -9999
        assert src.descriptions == ("P(distal of fine_sand|silt)",)
        band = src.read(1)
        masked = src.read(1, masked=True)
    assert band[0, 0] == -9999
    assert masked.mask[0, 0] and masked.mask.sum() == 1
    np.testing.assert_allclose(band.ravel()[1:], distal.ravel()[1:], rtol=1e-7)


def test_geographic_and_custom_crs(tmp_path):
    local = pyproj.CRS.from_proj4("+proj=aeqd +lat_0=-12.5 +lon_0=-38.2 +datum=WGS84 +units=m")
    path = write_float_raster(tmp_path / "l.tif", np.zeros((3, 4)), TRANSFORM, local, ["x"])
    with rasterio.open(path) as src:
        assert pyproj.CRS.from_user_input(src.crs.to_wkt()).equals(local)
    path = write_float_raster(
        tmp_path / "g.tif", np.zeros((3, 4)), (0.01, 0, -38, 0, -0.01, -12), 4326, ["x"]
    )
    with rasterio.open(path) as src:
        assert src.crs.to_epsg() == 4326
        assert src.transform == Affine(0.01, 0, -38, 0, -0.01, -12)


def test_rewrite_replaces_file_and_stale_sidecar(tmp_path):
    path = tmp_path / "belt.tif"
    write_class_raster(path, _classes(), TRANSFORM, CRS, COLORS, NAMES)
    # A float raster written over it must not inherit the old category names.
    write_float_raster(path, np.zeros((40, 70)), TRANSFORM, CRS, ["P(distal)"])
    assert sorted(p.name for p in tmp_path.iterdir()) == ["belt.tif"]
    with rasterio.open(path) as src:
        assert src.dtypes == ("float32",)
        assert src.descriptions == ("P(distal)",)
        assert CLASS_TAG_PREFIX + "0" not in src.tags(1)


def test_failed_write_keeps_old_raster(tmp_path, monkeypatch):
    path = tmp_path / "p.tif"
    write_float_raster(path, np.ones((3, 4)), TRANSFORM, CRS, ["old"])

    def fail(self, *args, **kwargs):
        raise RuntimeError("disk full")

    monkeypatch.setattr(rasterio.io.DatasetWriter, "set_band_description", fail)
    with pytest.raises(RuntimeError, match="disk full"):
        write_float_raster(path, np.zeros((3, 4)), TRANSFORM, CRS, ["new"])
    monkeypatch.undo()
    with rasterio.open(path) as src:
        assert src.descriptions == ("old",)
        assert src.read(1).max() == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["p.tif"]


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"array_uint8": np.zeros((2, 3, 4), np.uint8)}, "2-D"),
        ({"array_uint8": np.full((3, 4), 7, np.uint8)}, "neither class indices"),
        ({"array_uint8": np.zeros((3, 4))}, "integers"),
        ({"colors": COLORS[:2]}, "colours for"),
        ({"colors": ["red"] * 5}, "#rrggbb"),
        ({"nodata": 3}, "also a class index"),
        ({"array_uint8": np.full((3, 4), 255, np.uint8)}, "neither class indices"),
        ({"nodata": 300}, "0-255"),
        ({"crs": None}, "needs a CRS"),
        ({"transform": (1, 2, 3)}, "6 coefficients"),
        ({"colors": [], "names": []}, "at least one class"),
        ({"tags": {"bad key": 1}}, "tag names"),
    ],
    ids=[
        "3-d",
        "bad-value",
        "float-dtype",
        "colour-count",
        "colour-format",
        "nodata-is-class",
        "old-nodata",
        "nodata-range",
        "no-crs",
        "bad-transform",
        "no-classes",
        "bad-tag",
    ],
)
def test_class_raster_bad_input(tmp_path, kwargs, match):
    args = {
        "array_uint8": np.zeros((3, 4), np.uint8),
        "transform": TRANSFORM,
        "crs": CRS,
        "colors": COLORS,
        "names": NAMES,
    }
    args.update(kwargs)
    with pytest.raises(ValueError, match=match):
        write_class_raster(tmp_path / "c.tif", **args)
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize(
    ("array", "kwargs", "match"),
    [
        (np.zeros((2, 2, 3, 4)), {}, "bands, rows, columns"),
        (np.zeros((0, 3, 4)), {}, "bands, rows, columns"),
        (np.zeros((2, 3, 4)), {}, "2 bands"),
        (np.full((3, 4), np.inf), {"descriptions": ["a"]}, "infinite"),
        (np.full((3, 4), -9999.0), {"descriptions": ["a"], "nodata": -9999}, "nodata value"),
        (np.zeros((3, 4)), {"descriptions": ["a"], "nodata": 0.1}, "float32"),
        (np.zeros((3, 4)), {"descriptions": ["a"], "nodata": math.inf}, "NaN or finite"),
    ],
    ids=[
        "4-d",
        "no-bands",
        "description-count",
        "inf",
        "data-is-nodata",
        "nodata-f32",
        "inf-nodata",
    ],
)
def test_float_raster_bad_input(tmp_path, array, kwargs, match):
    args = {"descriptions": ["only"]}
    args.update(kwargs)
    with pytest.raises(ValueError, match=match):
        write_float_raster(tmp_path / "f.tif", array, TRANSFORM, CRS, **args)
    assert list(tmp_path.iterdir()) == []
