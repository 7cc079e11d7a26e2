"""Writing the build's rasters as GeoTIFF, atomically.

Two kinds of raster:

- :func:`write_class_raster`: one uint8 band of class indices (belt ranks), with a
  colour table of exactly the classes and nodata (nodata is the first value after the
  classes by default, drawn transparent), a band description and the class names. The
  names are inside the TIFF as band metadata ``CLASS_<index>=<name>`` (GDAL keeps them in
  its metadata tag, so ``gdalinfo`` and a GIS's layer information show them for a lone
  ``.tif``). A TIFF palette always has 2**bits entries (256 for uint8), so the exact
  colour table and the class names as GDAL category names, which desktop GIS use for the
  legend, are also written to the standard sidecar ``<file>.aux.xml``; GDAL then reports
  exactly the classes and nodata.
- :func:`write_float_raster`: float32 bands, e.g. a belt probability or the probability
  of the distal side of the tracked boundary, with a description per band.

Both write deflate-compressed, tiled GeoTIFFs (internal overviews on grids larger than
:data:`OVERVIEW_MIN_SIZE` cells a side: nearest-class "mode" for classes, average for
floats) to a temporary file beside the target and move it into place when complete
(:func:`paleomap.io.atomic.atomic_output_path`). A stale ``.aux.xml`` beside the target,
which GDAL would read over the new file's own metadata, is replaced or removed.

Examples
--------
>>> import tempfile, pathlib, numpy as np
>>> from rasterio.transform import Affine
>>> ranks = np.array([[0, 1], [1, 2]], dtype=np.uint8)
>>> p = pathlib.Path(tempfile.mkdtemp()) / "belts.tif"
>>> _ = write_class_raster(p, ranks, Affine(100, 0, 500000, 0, -100, 6000200), "EPSG:32631",
...                        ["#d9b56e", "#1d4f7c"], ["sand", "mud"])
>>> import rasterio
>>> with rasterio.open(p) as src:
...     src.nodata, src.colormap(1)[1][:3]
(2.0, (29, 79, 124))
"""

from __future__ import annotations

import contextlib
import logging
import math
import os
import xml.etree.ElementTree as ET
from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np

from ..figures.palette import hex_to_rgb
from .atomic import atomic_output_path, atomic_write_text

__all__ = [
    "CLASS_TAG_PREFIX",
    "NODATA_NAME",
    "OVERVIEW_MIN_SIZE",
    "reproject_grid",
    "write_class_raster",
    "write_float_raster",
]

_log = logging.getLogger(__name__)

CLASS_TAG_PREFIX = "CLASS_"
"""Band tags ``CLASS_<index>`` of a class raster hold the class names."""

NODATA_NAME = "no data"
"""Category name of the nodata value of a class raster."""

OVERVIEW_MIN_SIZE = 1024
"""Rasters with more cells than this on a side get internal overviews."""

# Colour-table entries that are no class (nodata, and padding up to 256 in the TIFF
# palette): transparent, where the reader honours alpha.
_UNUSED_ENTRY = (0, 0, 0, 0)


def write_class_raster(
    path: str | os.PathLike,
    array_uint8: np.ndarray,
    transform,
    crs,
    colors: Sequence[str],
    names: Sequence[str],
    nodata: int | None = None,
    *,
    description: str = "most likely belt",
    tags: Mapping[str, object] | None = None,
) -> Path:
    """Write a single-band class raster with a colour table, atomically.

    Parameters
    ----------
    path : path-like
        The GeoTIFF to write (``.tif``); its parent folder is created if missing.
    array_uint8 : numpy.ndarray
        2-D array (rows, columns) of class indices 0 to ``len(names) - 1``, and
        ``nodata`` outside the mapped area. Any integer dtype with values in that
        set is accepted and written as uint8.
    transform : affine.Affine or sequence of 6 floats
        Pixel-to-map transform, in ``Affine`` coefficient order (a, b, c, d, e, f).
    crs : object
        Anything ``pyproj.CRS.from_user_input`` accepts.
    colors : sequence of str
        ``#rrggbb`` per class, class 0 first.
    names : sequence of str
        Name per class, class 0 first.
    nodata : int or None
        Value for cells outside the mapped area, up to 255 and not a class index;
        None (default) for the first value after the classes, ``len(names)``, which
        keeps the colour table to exactly the classes and nodata.
    description : str
        Band description.
    tags : mapping, optional
        Extra dataset tags, e.g. ``{"slice": 3, "age": 12.5}``.

    Returns
    -------
    pathlib.Path
        ``path``.

    Raises
    ------
    ValueError
        Wrong shape, values that are neither a class nor nodata, mismatched colours
        and names, or a bad nodata value.

    Examples
    --------
    >>> import tempfile, pathlib, numpy as np
    >>> from rasterio.transform import Affine
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "c.tif"
    >>> write_class_raster(p, np.zeros((3, 4), np.uint8), Affine(10, 0, 0, 0, -10, 30),
    ...                    "EPSG:3857", ["#ff0000"], ["only"]).name
    'c.tif'
    """
    import rasterio

    path = Path(path)
    array = np.asarray(array_uint8)
    if array.ndim != 2:
        raise ValueError(f"a class raster is 2-D (rows, columns), got shape {array.shape}")
    if len(colors) != len(names):
        raise ValueError(f"got {len(colors)} colours for {len(names)} class names")
    if not names:
        raise ValueError("a class raster needs at least one class")
    nodata = len(names) if nodata is None else int(nodata)
    if not 0 <= nodata <= 255:
        raise ValueError(f"nodata must be 0-255 for a uint8 raster, got {nodata!r}")
    if nodata < len(names):
        raise ValueError(f"nodata {nodata} is also a class index (0-{len(names) - 1})")
    if not np.issubdtype(array.dtype, np.integer):
        raise ValueError(f"class indices must be integers, got dtype {array.dtype}")
    values = np.unique(array)
    bad = values[(values != nodata) & ((values < 0) | (values >= len(names)))]
    if bad.size:
        raise ValueError(
            f"class raster holds {bad[:5].tolist()}, which are neither class indices "
            f"(0-{len(names) - 1}) nor nodata ({nodata})"
        )
    rgb = [hex_to_rgb(_check_color(c)) for c in colors]
    # The table runs to nodata: the classes, then transparent entries up to and
    # including nodata (one entry, nodata itself, by default).
    table = [(*c, 255) for c in rgb] + [_UNUSED_ENTRY] * (nodata + 1 - len(rgb))
    colormap = dict.fromkeys(range(256), _UNUSED_ENTRY)
    colormap.update(enumerate(table))
    categories = [str(n) for n in names] + [""] * (nodata - len(names)) + [NODATA_NAME]
    band_tags = {f"{CLASS_TAG_PREFIX}{i}": str(n) for i, n in enumerate(names)}

    profile = _profile(array.shape, 1, "uint8", transform, crs, nodata)
    with atomic_output_path(path) as tmp:
        with _no_sidecars(), rasterio.open(tmp, "w", **profile) as dst:
            dst.write(array.astype(np.uint8, copy=False), 1)
            dst.write_colormap(1, colormap)
            dst.set_band_description(1, description)
            dst.update_tags(1, **band_tags)
            if tags:
                dst.update_tags(**_tag_strings(tags))
            _overviews(dst, "mode")
    atomic_write_text(_sidecar(path), _pam_xml(categories, table))
    _log.info("wrote class raster %s (%d x %d, %d classes)", path, *array.shape, len(names))
    return path


def write_float_raster(
    path: str | os.PathLike,
    array: np.ndarray,
    transform,
    crs,
    descriptions: Sequence[str],
    nodata: float = math.nan,
    *,
    tags: Mapping[str, object] | None = None,
) -> Path:
    """Write float32 bands (e.g. belt probabilities), atomically.

    Parameters
    ----------
    path : path-like
        The GeoTIFF to write (``.tif``); its parent folder is created if missing.
    array : numpy.ndarray
        (bands, rows, columns), or (rows, columns) for one band. NaN marks cells
        outside the mapped area; with a finite ``nodata`` they are written as it.
    transform : affine.Affine or sequence of 6 floats
        Pixel-to-map transform, in ``Affine`` coefficient order (a, b, c, d, e, f).
    crs : object
        Anything ``pyproj.CRS.from_user_input`` accepts.
    descriptions : sequence of str
        One description per band, e.g. ``"P(shoreface)"``.
    nodata : float
        NaN (default) or a finite value such as -9999.
    tags : mapping, optional
        Extra dataset tags, e.g. ``{"slice": 3, "age": 12.5}``.

    Returns
    -------
    pathlib.Path
        ``path``.

    Raises
    ------
    ValueError
        Wrong shape, a description count that does not match the bands, infinite
        values, or data equal to a finite ``nodata``.

    Examples
    --------
    >>> import tempfile, pathlib, numpy as np
    >>> from rasterio.transform import Affine
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "p.tif"
    >>> write_float_raster(p, np.full((2, 3, 4), 0.5), Affine(10, 0, 0, 0, -10, 30),
    ...                    "EPSG:3857", ["P(sand)", "P(mud)"]).name
    'p.tif'
    """
    import rasterio

    path = Path(path)
    data = np.asarray(array, dtype=np.float32)
    if data.ndim == 2:
        data = data[np.newaxis]
    if data.ndim != 3 or 0 in data.shape:
        raise ValueError(
            f"a float raster is (bands, rows, columns) or (rows, columns), got shape "
            f"{np.shape(array)}"
        )
    if len(descriptions) != data.shape[0]:
        raise ValueError(f"got {len(descriptions)} band descriptions for {data.shape[0]} bands")
    if np.isinf(data).any():
        raise ValueError("float raster holds infinite values")
    nodata = float(nodata)
    if math.isinf(nodata):
        raise ValueError(f"nodata must be NaN or finite, got {nodata!r}")
    if not math.isnan(nodata):
        if float(np.float32(nodata)) != nodata:
            raise ValueError(f"nodata {nodata!r} is not exactly representable as float32")
        if (data == nodata).any():
            raise ValueError(f"float raster data hold the nodata value {nodata!r}")
        data = np.where(np.isnan(data), np.float32(nodata), data)

    profile = _profile(data.shape[1:], data.shape[0], "float32", transform, crs, nodata)
    profile["predictor"] = 3  # floating-point predictor: better deflate ratio
    with atomic_output_path(path) as tmp:
        with _no_sidecars(), rasterio.open(tmp, "w", **profile) as dst:
            dst.write(data)
            for i, text in enumerate(descriptions, start=1):
                dst.set_band_description(i, str(text))
            if tags:
                dst.update_tags(**_tag_strings(tags))
            _overviews(dst, "average")
    # The new file carries its own metadata; an old sidecar would override it.
    with contextlib.suppress(FileNotFoundError):
        _sidecar(path).unlink()
    _log.info("wrote float raster %s (%d bands, %d x %d)", path, *data.shape)
    return path


def reproject_grid(
    array: np.ndarray,
    transform,
    src_crs,
    dst_crs,
    *,
    categorical: bool = False,
    nodata: float = math.nan,
):
    """A 2-D grid resampled into another CRS, on a grid of about the same resolution.

    Parameters
    ----------
    array : numpy.ndarray
        (rows, columns): class indices (``categorical``) or floats with NaN outside.
    transform : affine.Affine
        Pixel-to-map transform of ``array`` in ``src_crs``.
    src_crs, dst_crs : object
        Anything ``pyproj.CRS.from_user_input`` accepts.
    categorical : bool
        Nearest-cell resampling for classes; bilinear otherwise.
    nodata : float
        Value of cells outside the data (NaN for floats, the nodata class for classes).

    Returns
    -------
    (numpy.ndarray, affine.Affine)
        The grid in ``dst_crs`` (same dtype) and its transform.

    Examples
    --------
    >>> from rasterio.transform import Affine
    >>> a = np.ones((4, 4), np.float32)
    >>> out, t = reproject_grid(a, Affine(1000, 0, 500000, 0, -1000, 6000000),
    ...                         "EPSG:32631", "EPSG:4326")
    >>> out.dtype, bool(np.nanmax(out) == 1.0)
    (dtype('float32'), True)
    """
    import pyproj
    from rasterio.enums import Resampling
    from rasterio.transform import Affine
    from rasterio.warp import reproject

    array = np.asarray(array)
    src = _rasterio_crs(src_crs)
    dst = _rasterio_crs(dst_crs)
    rows, cols = array.shape
    west, north = transform @ (0, 0)
    east, south = transform @ (cols, rows)
    to_dst = pyproj.Transformer.from_crs(
        pyproj.CRS.from_user_input(src_crs), pyproj.CRS.from_user_input(dst_crs), always_xy=True
    )
    left, bottom, right, top = to_dst.transform_bounds(west, south, east, north, densify_pts=21)
    # Square cells, about as many as the source grid has.
    res = math.sqrt((right - left) * (top - bottom) / (rows * cols))
    width = max(1, math.ceil((right - left) / res))
    height = max(1, math.ceil((top - bottom) / res))
    dst_transform = Affine(res, 0.0, left, 0.0, -res, top)
    out = np.full((height, width), nodata, dtype=array.dtype)
    reproject(
        array,
        out,
        src_transform=transform,
        src_crs=src,
        dst_transform=dst_transform,
        dst_crs=dst,
        src_nodata=nodata,
        dst_nodata=nodata,
        resampling=Resampling.nearest if categorical else Resampling.bilinear,
    )
    return out, dst_transform


# ------------------------------------------------------------------ shared parts


def _profile(shape, count: int, dtype: str, transform, crs, nodata) -> dict:
    rows, cols = (int(n) for n in shape)
    if rows < 1 or cols < 1:
        raise ValueError(f"a raster needs at least one row and column, got {rows} x {cols}")
    block = _block_size(max(rows, cols))
    return {
        "driver": "GTiff",
        "width": cols,
        "height": rows,
        "count": count,
        "dtype": dtype,
        "crs": _rasterio_crs(crs),
        "transform": _affine(transform),
        "nodata": nodata,
        # DEFLATE opens in every GIS that reads GeoTIFF; level 1 writes about twice as
        # fast as the default 6 for a few per cent more bytes, and GDAL compresses the
        # tiles on all cores.
        "compress": "deflate",
        "zlevel": 1,
        "num_threads": "ALL_CPUS",
        "tiled": True,
        "blockxsize": block,
        "blockysize": block,
        "interleave": "band",
        # BigTIFF only where a classic TIFF could not hold the data.
        "BIGTIFF": "IF_SAFER",
    }


def _block_size(n: int) -> int:
    # TIFF tiles must be multiples of 16; 256 is GDAL's default, smaller rasters
    # get one tile that just covers them.
    return 256 if n >= 256 else max(16, 16 * math.ceil(n / 16))


def _affine(transform):
    from rasterio.transform import Affine

    if isinstance(transform, Affine):
        return transform
    coeffs = [float(c) for c in transform]
    if len(coeffs) not in (6, 9):
        raise ValueError(
            "transform must be an Affine or its 6 coefficients (a, b, c, d, e, f), "
            f"got {transform!r}"
        )
    return Affine(*coeffs[:6])


def _rasterio_crs(crs):
    import pyproj
    from rasterio.crs import CRS

    if crs is None:
        raise ValueError("a raster needs a CRS")
    proj = pyproj.CRS.from_user_input(crs)
    epsg = proj.to_epsg(min_confidence=100)
    return CRS.from_epsg(epsg) if epsg else CRS.from_wkt(proj.to_wkt())


def _check_color(color: str) -> str:
    if not (isinstance(color, str) and len(color) == 7 and color.startswith("#")):
        raise ValueError(f"colour must be '#rrggbb', got {color!r}")
    try:
        int(color[1:], 16)
    except ValueError:
        raise ValueError(f"colour must be '#rrggbb', got {color!r}") from None
    return color


def _tag_strings(tags: Mapping[str, object]) -> dict[str, str]:
    out = {}
    for key, value in tags.items():
        if not isinstance(key, str) or not key.replace("_", "").isalnum():
            raise ValueError(f"tag names must be letters, digits and underscores, got {key!r}")
        out[key] = str(value)
    return out


def _sidecar(path: Path) -> Path:
    return path.with_name(path.name + ".aux.xml")


def _pam_xml(categories: list[str], table: list[tuple[int, int, int, int]]) -> str:
    root = ET.Element("PAMDataset")
    band = ET.SubElement(root, "PAMRasterBand", {"band": "1"})
    cats = ET.SubElement(band, "CategoryNames")
    for name in categories:
        ET.SubElement(cats, "Category").text = name
    ET.SubElement(band, "ColorInterp").text = "Palette"
    colors = ET.SubElement(band, "ColorTable")
    for r, g, b, a in table:
        ET.SubElement(colors, "Entry", {"c1": str(r), "c2": str(g), "c3": str(b), "c4": str(a)})
    ET.indent(root, space="  ")
    return ET.tostring(root, encoding="unicode") + "\n"


def _overviews(dst, resampling: str) -> None:
    # Overviews only where a GIS would otherwise read every cell to draw a small map.
    from rasterio.enums import Resampling

    size = max(dst.width, dst.height)
    if size <= OVERVIEW_MIN_SIZE:
        return
    factors = []
    factor = 2
    while size / factor >= 256:
        factors.append(factor)
        factor *= 2
    dst.build_overviews(factors or [2], Resampling[resampling])
    dst.update_tags(ns="rio_overview", resampling=resampling)


@contextlib.contextmanager
def _no_sidecars():
    # Keep GDAL from writing a .aux.xml beside the temporary file, which would
    # not follow it into place.
    import rasterio

    with rasterio.Env(GDAL_PAM_ENABLED="NO"):
        yield
