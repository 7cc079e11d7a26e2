"""Writes a computed build's data formats into a folder: GeoPackage, rasters, rates table.

Figures and the report are not written here: :func:`paleomap.pipeline.write_build`
calls this, then the figures, then the report.

The folder given is the temporary one of :func:`paleomap.io.atomic.atomic_build_dir`;
nothing here decides where a build ends up.
"""

from __future__ import annotations

import logging
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from .atomic import atomic_write_text
from .csvcells import csv_text
from .filenames import safe_name
from .geopackage import write_layers
from .geotiff import reproject_grid, write_class_raster, write_float_raster
from .qml import to_qml
from .styles import belt_categories, belt_palette, distal_ramp, layer_styles, probability_ramp
from .timeslider import PAIR_TIME, SLICE_TIME, with_slider_times

if TYPE_CHECKING:
    from ..results import BuildResult

__all__ = ["GPKG_NAME", "probability_name", "raster_names", "safe_name", "write_deliverables"]

log = logging.getLogger(__name__)

GPKG_NAME = "paleomap.gpkg"

PAIR_TIME_COLUMNS = ("slider_start", "slider_end")


def raster_names(slice_name: str) -> dict[str, str]:
    """File names (inside ``rasters/``) of one slice's belt and distal-probability rasters.

    >>> raster_names("ks3")["belt"]
    'belt_ks3.tif'
    >>> raster_names("KS3")["belt"]  # a capital or any changed character adds a hash
    'belt_KS3-3c04ed96.tif'
    """
    s = safe_name(slice_name)
    return {"belt": f"belt_{s}.tif", "distal": f"distal_probability_{s}.tif"}


def probability_name(slice_name: str, belt_id: str) -> str:
    """File name (inside ``rasters/``) of one belt's probability raster at one slice.

    >>> probability_name("ks3", "fine_sand")
    'probability_fine_sand_ks3.tif'
    """
    return f"probability_{safe_name(belt_id)}_{safe_name(slice_name)}.tif"


def write_deliverables(result: BuildResult, folder: Path) -> None:
    """Write the data formats of ``result`` into ``folder``: ``paleomap.gpkg``,
    ``rasters/`` and ``rates.csv``."""
    from ..layers import build_layers
    from ..results import GEOMETRY_TYPES

    folder = Path(folder)
    project = result.project
    scheme = project.scheme
    layers = with_slider_times(build_layers(result))
    # Lengths and areas are already measured in the working CRS; only the coordinates
    # are delivered in the output CRS.
    out_crs = project.delivery_crs
    layers = {
        k: v.to_crs(out_crs) if hasattr(v, "crs") and "geometry" in v.columns else v
        for k, v in layers.items()
    }
    styles = layer_styles(belt_categories(scheme), slice_time=SLICE_TIME, pair_time=PAIR_TIME)
    styles = {k: v for k, v in styles.items() if k in layers}
    log.info("writing %s", GPKG_NAME)
    write_layers(
        folder / GPKG_NAME,
        layers,
        styles=styles,
        metadata={k: v for k, v in result.run_info.items() if k != "project_text"},
        geometry_types={k: v for k, v in GEOMETRY_TYPES.items() if k in layers},
    )
    _write_rasters(result, folder / "rasters")
    shifts = layers["shoreline_shifts"].drop(columns=["geometry", *PAIR_TIME_COLUMNS])
    atomic_write_text(folder / "rates.csv", csv_text(shifts, float_format="%.6g"))


def _write_rasters(result: BuildResult, folder: Path) -> None:
    grid = result.grid
    project = result.project
    scheme = project.scheme
    out_crs = project.delivery_crs
    warp = not out_crs.equals(project.working_crs)
    mask = grid.mask
    b = scheme.tracked_boundary
    belts = belt_categories(scheme)
    ids = [i for i, _, _ in belts]
    nodata = len(ids)
    palette = to_qml(belt_palette(belts, title="Mapped belt"))
    boundary = scheme.boundary_name(b)
    for i, m in enumerate(result.slice_maps):
        log.info("rasters: slice %s (%d of %d)", m.slice.name, i + 1, len(result.slice_maps))
        files = raster_names(m.slice.name)
        tags = {"slice": m.slice.name, "age": m.slice.age, "age_unit": project.age_unit}
        belt = np.where(mask, m.mapped_belt(), nodata).astype(np.uint8)
        transform = grid.transform
        if warp:
            belt, out_transform = reproject_grid(
                belt, transform, project.working_crs, out_crs, categorical=True, nodata=nodata
            )
        else:
            out_transform = transform
        write_class_raster(
            folder / files["belt"],
            belt,
            out_transform,
            out_crs,
            scheme.colors,
            ids,
            nodata=nodata,
            description="mapped belt (rank)",
            tags=tags,
        )
        _qml_beside(folder / files["belt"], palette)
        # Read once: on large maps the probabilities are derived again at each access.
        probs = m.probabilities
        for k, (belt_id, label, _) in enumerate(belts):
            name = probability_name(m.slice.name, belt_id)
            p = np.where(mask, probs[k], np.nan).astype(np.float32)
            if warp:
                p, _ = reproject_grid(p, transform, project.working_crs, out_crs)
            write_float_raster(
                folder / name, p, out_transform, out_crs, [f"P({belt_id})"], tags=tags
            )
            _qml_beside(folder / name, to_qml(probability_ramp(f"P({label})")))
        distal = np.where(mask, m.distal_probability, np.nan).astype(np.float32)
        if warp:
            distal, _ = reproject_grid(distal, transform, project.working_crs, out_crs)
        write_float_raster(
            folder / files["distal"],
            distal,
            out_transform,
            out_crs,
            [f"P(distal of {boundary})"],
            tags=tags,
        )
        _qml_beside(folder / files["distal"], to_qml(distal_ramp(f"P(distal of {boundary})")))


def _qml_beside(tif: Path, qml: str) -> None:
    # QGIS loads <name>.qml beside <name>.tif as the raster's default style.
    atomic_write_text(tif.with_suffix(".qml"), qml)
