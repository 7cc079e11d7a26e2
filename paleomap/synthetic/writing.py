"""Writing a synthetic basin as a project in the input contract, with its truth.

:func:`write_project` writes, into one folder:

- ``project.toml``, ``cores.csv``, ``intervals.csv``, ``picks.csv``: the project,
  as a user would write it (see ``docs/inputs.md``);
- ``truth.gpkg``: layers ``true_belts`` (slice, age, belt, rank, marine,
  area_km2), ``true_shorelines`` (slice, age, boundary, level_m, length_km) and
  ``true_transects`` (transect, strike_m, azimuth_deg), all with the basin's CRS;
- ``true_shifts.csv``: true boundary positions, shifts and rates per transect and
  pair of consecutive slices (positive landward = transgression).

Every file's content is made before the first one is written, and each is written
atomically, so a failure leaves no half-written file. Numbers are written with a
fixed number of decimals, so the same basin always gives the same bytes.

Examples
--------
>>> import tempfile, pathlib
>>> from paleomap.synthetic import make_basin
>>> basin = make_basin(n_cores=6, seed=4, truth_cell_m=1000.0)
>>> path = write_project(basin, pathlib.Path(tempfile.mkdtemp()) / "basin")
>>> path.name
'project.toml'
"""

from __future__ import annotations

import json
import logging
import math
import os
from pathlib import Path

import numpy as np

from ..errors import OutputExistsError
from ..io.atomic import atomic_write_text
from ..io.geopackage import write_layers
from .basin import SyntheticBasin

__all__ = ["PROJECT_FILES", "TRUTH_FILES", "project_toml", "write_project"]

_log = logging.getLogger(__name__)

PROJECT_FILES = ("project.toml", "cores.csv", "intervals.csv", "picks.csv")
"""The project's own files, as :func:`write_project` names them."""

TRUTH_FILES = ("truth.gpkg", "true_shifts.csv")
"""The truth files beside the project."""


def _num(v: float, decimals: int) -> str:
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return ""
    return f"{float(v):.{decimals}f}"


def _toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int | np.integer):
        return str(int(v))
    if isinstance(v, float | np.floating):
        return repr(float(v))
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list | tuple):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    raise TypeError(f"cannot write {v!r} to TOML")


def project_toml(basin: SyntheticBasin) -> str:
    """The text of the basin's ``project.toml`` (input contract, issue 2).

    Examples
    --------
    >>> from paleomap.synthetic import make_basin
    >>> text = project_toml(make_basin(n_cores=4, truth_cell_m=2000.0))
    >>> '[slices]\\nat = "surfaces"' in text
    True
    """
    s = basin.settings
    r = basin.ramp
    lines = [
        f"# {basin.name}: a synthetic project made by paleomap's forward model",
        "# (paleomap.synthetic.make_basin). The truth is in truth.gpkg and true_shifts.csv.",
        f"# Ramp dipping towards {r.dip_azimuth_deg:g} deg at {r.gradient_m_per_km:g} m/km;"
        f" relief {r.relief_amplitude_m:g} m over {r.relief_wavelength_m:g} m along strike;"
        f" subsidence {r.subsidence_m_per_kyr_per_km:g} m/kyr per km basinward.",
        f"# Cores: {len(basin.cores)} ({s.get('layout')} layout, seed {s.get('seed')});"
        f" time step {s.get('step_kyr'):g} kyr; erosion {s.get('erosion_m_per_kyr'):g} m/kyr.",
        "# Belt boundaries (m relative to sea level): "
        + ", ".join(
            f"{basin.scheme.boundary_name(b)} {basin.bands.boundary_level(b):g}"
            for b in range(1, basin.scheme.n_belts)
        )
        + ".",
        "# Accumulation (m/kyr): "
        + ", ".join(
            f"{i} {v:g}" for i, v in zip(basin.scheme.ids, basin.bands.rates_m_per_kyr, strict=True)
        )
        + ".",
        f"# Sea level ({basin.age_unit}, m): "
        + ", ".join(f"({a:g}, {lv:g})" for a, lv in basin.sea_level.points)
        + ".",
        "",
        "[project]",
        f"name = {_toml_value(basin.name)}",
        f"crs = {_toml_value(basin.ramp.crs)}",
        "",
        "[inputs]",
        'cores = "cores.csv"',
        'intervals = "intervals.csv"',
        'picks = "picks.csv"',
        'depth_unit = "m"',
        "",
        "[time]",
        f"age_unit = {_toml_value(basin.age_unit)}",
    ]
    for surf in basin.surfaces:
        lines += [
            "",
            "[[surfaces]]",
            f"name = {_toml_value(surf.name)}",
            f"age = {_toml_value(float(surf.age))}",
        ]
        if surf.erosional:
            lines.append("erosional = true")
    lines += ["", "[scheme]"]
    sch = basin.scheme
    if sch.family != "custom":
        lines.append(f"builtin = {_toml_value(sch.name)}")
        if sch.kind == "lithology":
            lines.append(f"track = {_toml_value(list(sch.track))}")
    else:
        lines.append("belts = [")
        for b in sch.belts:
            lines.append(
                f"  {{ id = {_toml_value(b.id)}, marine = {_toml_value(b.marine)}, "
                f"aliases = {_toml_value(list(b.aliases))}, color = {_toml_value(b.color)} }},"
            )
        lines.append("]")
        if sch.track is not None:
            lines.append(f"track = {_toml_value(list(sch.track))}")
    lines += [
        "",
        "[slices]",
        'at = "surfaces"',
        "",
        "[grid]",
        f"cell_size = {_toml_value(float(basin.cell_size_m))}",
        f"margin = {_toml_value(float(basin.margin_m))}",
        "",
    ]
    return "\n".join(lines)


def _csv(header, rows) -> str:
    out = [",".join(header)]
    out += [",".join(row) for row in rows]
    return "\n".join(out) + "\n"


def _tables(basin: SyntheticBasin) -> dict[str, str]:
    d = int(basin.settings.get("decimals", 3))
    cores = basin.cores
    texts = {
        "cores.csv": _csv(
            ["core_id", "x", "y", "elevation"],
            (
                [c, _num(x, 2), _num(y, 2), _num(z, d)]
                for c, x, y, z in cores[["core_id", "x", "y", "elevation"]].itertuples(index=False)
            ),
        ),
        "intervals.csv": _csv(
            ["core_id", "top", "base", "facies"],
            (
                [c, _num(t, d), _num(b, d), f]
                for c, t, b, f in basin.intervals[["core_id", "top", "base", "facies"]].itertuples(
                    index=False
                )
            ),
        ),
        "picks.csv": _csv(
            ["core_id", "surface", "depth"],
            (
                [c, s, _num(z, d)]
                for c, s, z in basin.picks[["core_id", "surface", "depth"]].itertuples(index=False)
            ),
        ),
    }
    sh = basin.true_shifts
    texts["true_shifts.csv"] = _csv(
        list(sh.columns),
        (
            [
                r.boundary,
                r.transect,
                _num(r.strike_m, 1),
                r.older_slice,
                r.younger_slice,
                repr(float(r.older_age)),
                repr(float(r.younger_age)),
                _num(r.older_position_m, 3),
                _num(r.younger_position_m, 3),
                _num(r.shift_m, 3),
                _num(r.rate_m_per_kyr, 4),
                r.sense,
            ]
            for r in sh.itertuples(index=False)
        ),
    )
    return texts


def write_project(
    basin: SyntheticBasin, directory: str | os.PathLike, *, overwrite: bool = False
) -> Path:
    """Write the basin as a project folder with its truth.

    Parameters
    ----------
    basin : SyntheticBasin
    directory : path-like
        Created if missing. Files of other names in it are left alone.
    overwrite : bool
        Replace the project and truth files if they exist.

    Returns
    -------
    pathlib.Path
        The written ``project.toml``.

    Raises
    ------
    OutputExistsError
        A project or truth file exists and ``overwrite`` is false (nothing is written).
    """
    directory = Path(directory)
    names = PROJECT_FILES + TRUTH_FILES
    if directory.exists() and not directory.is_dir():
        raise OutputExistsError(f"{directory} exists and is not a folder")
    existing = [n for n in names if (directory / n).exists()]
    if existing and not overwrite:
        raise OutputExistsError(
            f"{directory} already holds {', '.join(existing)}; "
            "pass overwrite=True (--overwrite) to replace them"
        )
    texts = {"project.toml": project_toml(basin), **_tables(basin)}
    directory.mkdir(parents=True, exist_ok=True)
    # The GeoPackage first: it is the write most likely to fail (GDAL).
    write_layers(
        directory / "truth.gpkg",
        {
            "true_belts": basin.true_belts,
            "true_shorelines": basin.true_shorelines,
            "true_transects": basin.true_transects,
        },
        geometry_types={
            "true_belts": "MultiPolygon",
            "true_shorelines": "MultiLineString",
            "true_transects": "LineString",
        },
    )
    for name in ("true_shifts.csv", "cores.csv", "intervals.csv", "picks.csv", "project.toml"):
        atomic_write_text(directory / name, texts[name])
    _log.info("wrote synthetic project %s", directory / "project.toml")
    return directory / "project.toml"
