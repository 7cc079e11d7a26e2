"""Writing a bench basin as a paleomap project (and its truth beside it).

The project follows the input contract of docs/inputs.md: ``project.toml``,
``cores.csv``, ``intervals.csv``, ``picks.csv`` and the dip transects as
``transects.gpkg`` (so every engine is scored on the same lines). ``crs="geographic"``
writes the same basin in longitude and latitude (EPSG:4326), cores and transects
alike; ``mapping`` adds keys to the ``[mapping]`` table (the engine and its
settings). :func:`write_truth` writes the truth: the true boundary lines
(``truth/boundary.gpkg``), the true belt of every lattice cell (``truth/belts.npz``),
the true positions and shifts on the transects (``truth/positions.csv``,
``truth/shifts.csv``) and each core's contacts (``truth/contacts.csv``).

Examples
--------
>>> toml_value("a"), toml_value(True), toml_value(2.5)
('"a"', 'true', '2.5')
"""

from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely

from .basin import Basin
from .region import GEOGRAPHIC_CRS

__all__ = ["toml_value", "write_project", "write_truth"]


def toml_value(value) -> str:
    """A Python value as a TOML value."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return repr(float(value)) if isinstance(value, float) else str(value)
    if isinstance(value, list | tuple):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    return '"' + str(value).replace("\\", "\\\\").replace('"', '\\"') + '"'


def write_project(
    basin: Basin, folder, *, crs: str = "projected", mapping: dict | None = None
) -> Path:
    """Write ``basin`` as a project in ``folder`` (created); return the TOML path."""
    if crs not in ("projected", "geographic"):
        raise ValueError(f"crs must be 'projected' or 'geographic' (got {crs!r})")
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    model, logged = basin.model, basin.logged
    region = model.region
    cores = logged.cores
    lines = [line for _, line in basin.truth.transects]
    if crs == "geographic":
        x, y = region.to_geographic(cores["easting"], cores["northing"])
        lines = [_geographic(region, line) for line in lines]
        crs_name, fmt = GEOGRAPHIC_CRS, "{:.9f}"
    else:
        x, y = cores["easting"].to_numpy(), cores["northing"].to_numpy()
        crs_name, fmt = region.crs, "{:.3f}"
    table = pd.DataFrame(
        {"core_id": cores["core_id"], "x": [fmt.format(v) for v in x],
         "y": [fmt.format(v) for v in y]}
    )  # fmt: skip
    table.to_csv(folder / "cores.csv", index=False)
    iv = logged.intervals
    pd.DataFrame(
        {
            "core_id": iv["core_id"],
            "top": iv["top_m"].map("{:.3f}".format),
            "base": iv["base_m"].map("{:.3f}".format),
            "facies": iv["facies"],
        }
    ).to_csv(folder / "intervals.csv", index=False)
    pk = logged.picks
    pd.DataFrame(
        {"core_id": pk["core_id"], "surface": pk["surface"],
         "depth": pk["depth_m"].map("{:.3f}".format)}
    ).to_csv(folder / "picks.csv", index=False)  # fmt: skip
    gpd.GeoDataFrame(
        {"transect_id": [tid for tid, _ in basin.truth.transects]}, geometry=lines, crs=crs_name
    ).to_file(folder / "transects.gpkg", driver="GPKG")
    path = folder / "project.toml"
    path.write_text(_toml(basin, crs_name, mapping or {}), encoding="utf-8")
    return path


def _geographic(region, line):
    # densified so the line stays the same line after two changes of CRS
    s = np.linspace(0.0, line.length, 51)
    xy = shapely.get_coordinates(shapely.line_interpolate_point(line, s))
    lon, lat = region.to_geographic(xy[:, 0], xy[:, 1])
    return shapely.LineString(np.column_stack([lon, lat]))


def _toml(basin: Basin, crs_name: str, mapping: dict) -> str:
    model = basin.model
    bands = model.bands
    out = [
        f"# Bench basin {basin.label} (benchmarks/basins, family {model.family!r},",
        f"# seed {model.seed}, {basin.layout} cores); the truth is not part of the project.",
        "",
        "[project]",
        f"name = {toml_value(f'bench {basin.label}')}",
        f"crs = {toml_value(crs_name)}",
        "",
        "[inputs]",
        'cores = "cores.csv"',
        'intervals = "intervals.csv"',
        'picks = "picks.csv"',
        'depth_unit = "m"',
        "",
        "[time]",
        'age_unit = "ka"',
    ]
    for s in sorted(model.surfaces, key=lambda s: -s.age_ka):
        out += ["", "[[surfaces]]", f"name = {toml_value(s.name)}", f"age = {float(s.age_ka)!r}"]
        if s.age_sd_ka:
            out.append(f"age_sd = {float(s.age_sd_ka)!r}")
        if s.erosional:
            out.append("erosional = true")
    out += ["", "[scheme]"]
    if bands.builtin:
        out.append(f"builtin = {toml_value(bands.builtin)}")
        if bands.track is not None:  # a lithology scheme asks which boundary to track
            out.append(f"track = {toml_value(bands.boundary_name().split('|'))}")
    else:
        out.append(f"name = {toml_value(model.family)}")
        out.append("belts = [")
        for belt, marine in zip(bands.belt_ids, bands.marine, strict=True):
            out.append(f"  {{ id = {toml_value(belt)}, marine = {toml_value(bool(marine))} }},")
        out.append("]")
        if bands.track is not None:
            out.append(f"track = {toml_value(bands.boundary_name().split('|'))}")
    out += [
        "",
        "[slices]",
        'at = "surfaces"',
        "",
        "[grid]",
        f"cell_size = {basin.cell_size_m!r}",
        f"margin = {basin.margin_m!r}",
    ]
    if mapping:
        out += ["", "[mapping]"] + [f"{k} = {toml_value(v)}" for k, v in mapping.items()]
    out += ["", "[migration]", 'transects = "transects.gpkg"', ""]
    return "\n".join(out)


def write_truth(basin: Basin, folder) -> Path:
    """Write the truth of ``basin`` into ``folder`` (created); return the folder."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    truth = basin.truth
    names = [name for name, _ in truth.slices]
    gpd.GeoDataFrame(
        {
            "slice": names,
            "age": [a for _, a in truth.slices],
            "boundary": basin.model.bands.boundary_name(),
        },
        geometry=[truth.boundary[n] for n in names],
        crs=basin.model.region.crs,
    ).to_file(folder / "boundary.gpkg", driver="GPKG")
    np.savez_compressed(
        folder / "belts.npz",
        easting=truth.easting,
        northing=truth.northing,
        slices=np.array(names),
        belts=np.stack([truth.belts[n] for n in names]),
    )
    truth.positions.to_csv(folder / "positions.csv", index=False)
    truth.shifts.to_csv(folder / "shifts.csv", index=False)
    basin.logged.contacts.to_csv(folder / "contacts.csv", index=False)
    return folder
