"""Writes a computed build into a folder: GeoPackage, rasters, rates table, figures, report.

The folder given is the temporary one of :func:`paleomap.io.atomic.atomic_build_dir`;
nothing here decides where a build ends up.
"""

from __future__ import annotations

import logging
import re
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from .atomic import atomic_write_text
from .geopackage import write_layers
from .geotiff import write_class_raster, write_float_raster
from .styles import belt_categories, layer_styles

if TYPE_CHECKING:
    from ..pipeline import BuildResult

__all__ = ["GPKG_NAME", "raster_names", "safe_name", "write_deliverables"]

log = logging.getLogger(__name__)

GPKG_NAME = "paleomap.gpkg"


def safe_name(name: str) -> str:
    """A slice name made safe for a file name.

    >>> safe_name("MFS 2 / upper")
    'MFS_2_upper'
    """
    s = re.sub(r"[^A-Za-z0-9._-]+", "_", str(name)).strip("_")
    return s or "slice"


def raster_names(slice_name: str) -> dict[str, str]:
    """File names (inside ``rasters/``) of one slice's rasters."""
    s = safe_name(slice_name)
    return {
        "belt": f"belt_{s}.tif",
        "probabilities": f"probabilities_{s}.tif",
        "distal": f"distal_probability_{s}.tif",
    }


def write_deliverables(
    result: BuildResult,
    folder: Path,
    *,
    figures: bool = True,
    report: bool = True,
    figure_settings=None,
) -> None:
    """Write every deliverable of ``result`` into ``folder``.

    ``figure_settings`` (:class:`paleomap.figures.all.FigureSettings`) asks for vector
    figures and sets the core panel's datum and spacing.
    """
    from ..layers import GEOMETRY_TYPES, build_layers

    folder = Path(folder)
    project = result.project
    scheme = project.scheme
    layers = build_layers(result)
    styles = layer_styles(belt_categories(scheme))
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
    shifts = layers["shoreline_shifts"].drop(columns="geometry")
    atomic_write_text(folder / "rates.csv", shifts.to_csv(index=False, float_format="%.6g"))
    if figures:
        from ..figures.all import draw_all

        draw_all(result, folder / "figures", settings=figure_settings)
    if report:
        from ..report import write_report

        write_report(result, folder)


def _write_rasters(result: BuildResult, folder: Path) -> None:
    grid = result.grid
    scheme = result.project.scheme
    crs = result.project.working_crs
    mask = grid.mask
    b = scheme.tracked_boundary
    names = [b_.id for b_ in scheme.belts]
    for i, m in enumerate(result.slice_maps):
        log.info("rasters: slice %s (%d of %d)", m.slice.name, i + 1, len(result.slice_maps))
        files = raster_names(m.slice.name)
        tags = {"slice": m.slice.name, "age": m.slice.age, "age_unit": result.project.age_unit}
        belt = np.where(mask, m.mapped_belt(), 255).astype(np.uint8)
        write_class_raster(
            folder / files["belt"],
            belt,
            grid.transform,
            crs,
            scheme.colors,
            names,
            nodata=255,
            description="mapped belt (rank)",
            tags=tags,
        )
        probs = np.where(mask[None], m.probabilities, np.nan).astype(np.float32)
        write_float_raster(
            folder / files["probabilities"],
            probs,
            grid.transform,
            crs,
            [f"P({n})" for n in names],
            tags=tags,
        )
        distal = np.where(mask, m.distal_probability, np.nan).astype(np.float32)
        write_float_raster(
            folder / files["distal"],
            distal,
            grid.transform,
            crs,
            [f"P(distal of {scheme.boundary_name(b)})"],
            tags=tags,
        )
