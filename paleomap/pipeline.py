"""The build: every stage in order, from a validated project to the deliverables.

``compute(project)`` runs the stages and returns a :class:`BuildResult` of plain
values; ``write_build(result, out)`` writes them into a build folder atomically;
``build(project, out)`` does both. Each stage is a plain function over plain data; only
the writers touch files.

Examples
--------
>>> from paleomap import load_project, build               # doctest: +SKIP
>>> result = build(load_project("basin/project.toml"), "basin/build")  # doctest: +SKIP
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import logging
import time
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import shapely

from ._version import __version__
from .agemodel import build_age_models, sample_slices
from .belts import (
    belt_polygons,
    honour_cores,
    node_field,
    walther_contacts,
)
from .errors import InputError, PaleomapWarning, Problem
from .field.engine import get_engine
from .field.tiling import default_threads
from .grid import Grid, make_grid
from .migration import (
    area_change,
    classify_sense,
    default_transects,
    lsq_rate,
    regional_dip_azimuth,
    shift_statistics,
    strike_extent,
    transect_position,
)
from .project import Project, Slice
from .records import Records, build_records
from .results import (
    PAIR_COLUMNS,
    POSITION_COLUMNS,
    SHIFT_COLUMNS,
    BuildResult,
    SliceMap,
    Transect,
)
from .shoreline import distal_region, shoreline, shoreline_band

__all__ = [
    "BuildResult",
    "SliceMap",
    "Transect",
    "build",
    "compute",
    "write_build",
]

log = logging.getLogger(__name__)


class _Stopwatch:
    """Wall time per stage, with a progress line as each stage starts."""

    def __init__(self):
        self.times: dict[str, float] = {}

    @contextlib.contextmanager
    def stage(self, name: str):
        log.info("%s ...", name)
        t = time.perf_counter()
        try:
            yield
        finally:
            self.times[name] = self.times.get(name, 0.0) + time.perf_counter() - t


def compute(project: Project, *, settings=None) -> BuildResult:
    """Run every stage of a build on a validated project; write nothing.

    Parameters
    ----------
    project : Project
        From :func:`paleomap.load_project`.
    settings : optional
        The field engine's settings, instead of those the project's ``[mapping]``
        table gives (``engine.settings(project.mapping)``): for studies and benchmarks
        that set what the project file does not (e.g. the shared-relief engine's
        :class:`~paleomap.field.shared.PathSettings`).

    Returns
    -------
    BuildResult
    """
    sw = _Stopwatch()
    scheme = project.scheme
    with sw.stage("age models"):
        age_models = build_age_models(project)
        samples = sample_slices(project, age_models=age_models)
        records = build_records(project, age_models)
    with sw.stage("grid"):
        e = np.array([c.easting for c in project.cores])
        n = np.array([c.northing for c in project.cores])
        grid = make_grid(
            e,
            n,
            cell_size=project.grid.cell_size,
            margin=project.grid.margin,
            area=project.area,
            crs=project.working_crs,
        )
    with sw.stage("field"):
        fitted, fields = _map_fields(project, records, grid, settings)
    if not fields:
        raise InputError(
            [
                Problem(
                    project.path.name,
                    None,
                    "slices",
                    [s.name for s in project.slices],
                    "no slice has a record in two or more cores, so nothing can be mapped",
                    "check that the picks bracket the slice ages (paleomap check lists the cores "
                    "with a record at each slice)",
                )
            ]
        )
    b = scheme.tracked_boundary
    with sw.stage("belts"):
        maps = _belt_maps(project, grid, fields, b)
    with sw.stage("shorelines"):
        dip = regional_dip_azimuth([m.latent for m in maps], grid) if maps else 90.0
        transects, positions = _positions(project, grid, maps, b, dip)
        shifts, pairs, transects = _shifts(project, maps, transects, positions, dip)
    with sw.stage("chart"):
        chart = _chart(project, grid, transects, records, fitted, maps)
    with sw.stage("core reading"):
        reading = _read_cores(project, age_models, pairs)
        if reading is not None and len(pairs):
            pairs = _with_core_counts(pairs, reading)
    run_info = _run_info(project, grid, maps)
    return BuildResult(
        project,
        grid,
        samples,
        maps,
        transects,
        positions,
        shifts,
        pairs,
        reading,
        run_info,
        sw.times,
        age_models,
        chart,
        records,
        fitted,
    )


def _chart(project: Project, grid: Grid, transects, records, fitted, maps):
    """The chronostratigraphic chart along the chart transect (None without transects)."""
    if not transects:
        log.info("no transects: no chronostratigraphic chart")
        return None
    from .chart import wheeler_section

    slice_ages = [m.slice.age for m in maps]
    return wheeler_section(project, grid, transects, records, fitted, slice_ages=slice_ages)


# --------------------------------------------------------------------------- field


@dataclass(frozen=True, eq=False)
class _SliceField:
    """What the belts stage needs of one slice's field."""

    core_ids: tuple
    easting: np.ndarray
    northing: np.ndarray
    ranks: np.ndarray
    thresholds: np.ndarray
    latent_mean: np.ndarray
    latent_sd: np.ndarray
    probabilities: np.ndarray | None  # None: they follow from mean and sd
    quality: dict


def _map_fields(project: Project, records: Records, grid: Grid, settings=None):
    """Fit the project's field engine to the records for every slice with a record in
    two or more cores and predict it on the grid. Returns the fitted model and
    [(Slice, _SliceField)] in slice order (oldest first)."""
    ids = [c.core_id for c in project.cores]
    mapped = []
    for sl in project.slices:
        count = records.spanning(sl.age).size
        if count < 2:
            warnings.warn(
                f"slice {sl.name!r}: only {count} core(s) have a record at "
                f"{sl.age:g} {project.age_unit}; the slice is not mapped",
                PaleomapWarning,
                stacklevel=2,
            )
            continue
        if count < len(ids) / 2:
            warnings.warn(
                f"slice {sl.name!r}: only {count} of {len(ids)} cores have a record at "
                f"{sl.age:g} {project.age_unit} (a hiatus or erosion removed the rest, or "
                "their picks do not bracket the age); the map rests on those cores alone",
                PaleomapWarning,
                stacklevel=2,
            )
        mapped.append(sl)
    if not mapped:
        return None, []
    engine = get_engine(project.mapping.engine)
    if settings is None:
        settings = engine.settings(project.mapping)
    ages = [sl.age for sl in mapped]
    log.info(
        "field (%s): %d records of %d cores, %d slices, %d cells per slice",
        engine.name,
        len(records),
        len(records.cores()[0]),
        len(mapped),
        grid.n_rows * grid.n_cols,
    )
    fitted = engine.fit(records, project.scheme.n_belts, settings, ages)
    ce, cn = grid.cell_centres()
    pred = fitted.predict(ce, cn, ages)
    del ce, cn
    out = []
    for i, sl in enumerate(mapped):
        idx = records.spanning(sl.age)
        out.append(
            (
                sl,
                _SliceField(
                    tuple(records.core_id[idx]),
                    records.easting[idx],
                    records.northing[idx],
                    records.rank[idx],
                    np.asarray(pred.thresholds[i]),
                    pred.latent_mean[i],
                    pred.latent_sd[i],
                    pred.stored_probabilities[i],
                    fitted.quality(sl.age),
                ),
            )
        )
    return fitted, out


def _belt_maps(project: Project, grid: Grid, fields, b: int) -> list[SliceMap]:
    """Every slice's belts, shoreline and band; two slices at a time on two cores
    (contouring and geometry release the interpreter lock), in slice order."""
    count = len(fields)

    def one(i):
        sl, fr = fields[i]
        log.info("belts: slice %s (%d of %d)", sl.name, i + 1, count)
        return _slice_map(project, grid, sl, fr, b)

    threads = default_threads()
    if threads < 2 or count < 2:
        return [one(i) for i in range(count)]
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(threads) as pool:
        return list(pool.map(one, range(count)))


def _slice_map(project: Project, grid: Grid, sl: Slice, fr, b: int) -> SliceMap:
    shape = grid.shape
    latent = np.asarray(fr.latent_mean).reshape(shape)
    latent_sd = np.asarray(fr.latent_sd).reshape(shape)
    probs = None
    if fr.probabilities is not None:
        probs = np.moveaxis(np.asarray(fr.probabilities, np.float32).reshape(*shape, -1), -1, 0)
    t = np.asarray(fr.thresholds, dtype=float)
    nodes = node_field(latent, grid)
    # honouring moves only the four nodes around a core: note those that moved
    c0, r0, _, _ = nodes._locate(fr.easting, fr.northing)
    near = np.unique(np.concatenate([(r0 + dr) * nodes.values.shape[1] + c0 + dc
                                     for dr in (0, 1) for dc in (0, 1)]))  # fmt: skip
    before = nodes.values.ravel()[near].copy()
    honour_cores(nodes, fr.easting, fr.northing, fr.ranks, t)
    moved = nodes.values.ravel()[near] != before
    rows, cols = np.divmod(near[moved], nodes.values.shape[1])
    adjustments = (rows, cols, nodes.values.ravel()[near[moved]] - before[moved])
    polygons = belt_polygons(None, grid, t, nodes=nodes)
    line = shoreline(nodes, float(t[b - 1]), grid.area)
    del nodes
    m = SliceMap(
        sl,
        tuple(fr.core_ids),
        np.asarray(fr.ranks),
        t,
        latent,
        latent_sd,
        grid,
        b,
        adjustments,
        polygons,
        line,
        None,
        distal_region(polygons, b),
        probs,
    )
    m.band = shoreline_band(m.distal_probability, grid)
    inside = [
        bool(shapely.contains_xy(polygons[r], e, n)) if not polygons[r].is_empty else False
        for e, n, r in zip(fr.easting, fr.northing, fr.ranks, strict=True)
    ]
    touching = walther_contacts(polygons)
    if touching:
        warnings.warn(
            f"slice {sl.name}: belts {touching} touch though they are not neighbours in the scheme",
            PaleomapWarning,
            stacklevel=2,
        )
    if line.is_empty:
        warnings.warn(
            f"slice {sl.name!r}: the tracked boundary "
            f"{project.scheme.boundary_name(b)!r} does not cross the mapped area (every core "
            "records the same side of it); no shoreline is drawn for this slice",
            PaleomapWarning,
            stacklevel=2,
        )
    m.quality = dict(
        cores_used=len(fr.core_ids),
        cores_in_own_belt=int(sum(inside)),
        walther_ok=not touching,
        has_boundary=not line.is_empty,
        **fr.quality,
    )
    return m


# ---------------------------------------------------------------------- migration


def _positions(project: Project, grid: Grid, maps: list[SliceMap], b: int, dip: float):
    if project.transect_lines:
        transects = []
        for tid, line in project.transect_lines:
            (x0, y0), (x1, y1) = line.coords[0], line.coords[-1]
            az = float(np.degrees(np.arctan2(x1 - x0, y1 - y0)) % 360.0)
            transects.append(Transect(str(tid), line, az, "user"))
    else:
        lines = default_transects(grid.area, dip, project.migration.transect_spacing_m)
        transects = [Transect(tid, line, dip, "dip") for tid, line in lines]
    rows = []
    step = grid.cell_size / 2
    for m in maps:
        t_b = float(m.thresholds[b - 1])
        nodes = m.nodes
        for tr in transects:
            pos = transect_position(tr.line, nodes.at, t_b, m.distal_probability_at, step)
            rows.append(
                dict(
                    transect=tr.transect,
                    slice=m.slice.name,
                    age=m.slice.age,
                    position_m=pos.position_m,
                    position_low_m=pos.low_m,
                    position_high_m=pos.high_m,
                    crossings=pos.crossings,
                )
            )
    return transects, pd.DataFrame(rows, columns=list(POSITION_COLUMNS))


def _ordered_pairs(maps: list[SliceMap]):
    """Consecutive (older, younger) slice pairs, oldest first."""
    by_age = sorted(maps, key=lambda m: -m.slice.age)
    return list(zip(by_age[:-1], by_age[1:], strict=False))


def _shifts(project: Project, maps, transects, positions, dip: float):
    from .migration import TransectPosition

    kyr = project.kyr_per_age_unit
    tol = project.migration.stillstand_m_per_kyr
    sd = {s.name: s.age_sd for s in project.surfaces}
    pos = {(r.transect, r.slice): r for r in positions.itertuples()}
    lines = {t.transect: t.line for t in transects}
    rows = []
    pair_rows = []
    for k, (old, young) in enumerate(_ordered_pairs(maps)):
        for tr in transects:
            po, py = pos[(tr.transect, old.slice.name)], pos[(tr.transect, young.slice.name)]
            stats = shift_statistics(
                TransectPosition(
                    po.position_m, po.position_low_m, po.position_high_m, po.crossings
                ),
                TransectPosition(
                    py.position_m, py.position_low_m, py.position_high_m, py.crossings
                ),
                old.slice.age * kyr,
                young.slice.age * kyr,
                sd.get(old.slice.surface or "", 0.0) * kyr,
                sd.get(young.slice.surface or "", 0.0) * kyr,
                seed=k,
            )
            if np.isfinite(stats["shift_m"]):
                line = lines[tr.transect]
                geom = shapely.LineString(
                    [
                        shapely.line_interpolate_point(line, po.position_m).coords[0],
                        shapely.line_interpolate_point(line, py.position_m).coords[0],
                    ]
                )
            else:
                geom = None
            rows.append(
                dict(
                    transect=tr.transect,
                    older_slice=old.slice.name,
                    younger_slice=young.slice.name,
                    older_age=old.slice.age,
                    younger_age=young.slice.age,
                    **stats,
                    sense=classify_sense([stats["rate_m_per_kyr"]], tol)[0],
                    older_crossings=po.crossings,
                    younger_crossings=py.crossings,
                    geometry=geom,
                )
            )
        area = area_change(
            old.distal,
            young.distal,
            old.shoreline.length,
            young.shoreline.length,
            strike_extent(old.shoreline, dip),
            strike_extent(young.shoreline, dip),
        )
        dt = (old.slice.age - young.slice.age) * kyr
        rates = [r["rate_m_per_kyr"] for r in rows[-len(transects) :]] if transects else []
        rates = np.array([r for r in rates if np.isfinite(r)])
        median = float(np.median(rates)) if rates.size else np.nan
        pair_rows.append(
            dict(
                older_slice=old.slice.name,
                younger_slice=young.slice.name,
                older_age=old.slice.age,
                younger_age=young.slice.age,
                **area,
                net_rate_m_per_kyr=area["net_shift_m"] / dt if dt > 0 else np.nan,
                net_dip_rate_m_per_kyr=area["net_dip_shift_m"] / dt if dt > 0 else np.nan,
                median_rate_m_per_kyr=median,
                transects_used=int(rates.size),
                sense=classify_sense([median], tol)[0],
            )
        )
    shifts = pd.DataFrame(rows, columns=list(SHIFT_COLUMNS))
    pairs = pd.DataFrame(pair_rows, columns=list(PAIR_COLUMNS))
    # least-squares rate per transect over every slice
    out = []
    for tr in transects:
        p = positions[positions["transect"] == tr.transect]
        rate = lsq_rate(p["age"].to_numpy() * kyr, p["position_m"].to_numpy())
        out.append(Transect(tr.transect, tr.line, tr.azimuth_deg, tr.source, rate))
    return shifts, pairs, out


# ---------------------------------------------------------------------- core reading


def _read_cores(project: Project, age_models, pairs: pd.DataFrame):
    from .stacking import read_cores

    return read_cores(project, age_models=age_models)


def _with_core_counts(pairs: pd.DataFrame, reading) -> pd.DataFrame:
    from .stacking import cross_check

    mapped = {}
    for r in pairs.itertuples():
        mapped[(r.older_slice, r.younger_slice)] = r.sense or None
    checked = cross_check(reading.region, mapped)
    keep = [c for c in checked.columns if c not in ("older_age", "younger_age")]
    merged = pairs.merge(
        checked[keep],
        how="left",
        left_on=["older_slice", "younger_slice"],
        right_on=["older_surface", "younger_surface"],
    )
    return merged.drop(
        columns=[c for c in ("older_surface", "younger_surface") if c in merged.columns]
    )


# ---------------------------------------------------------------------- provenance


def _run_info(project: Project, grid: Grid, maps) -> dict:
    return {
        "paleomap_version": __version__,
        "built_at": _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds"),
        "project_name": project.name,
        "project_file": str(project.path.name),
        "project_text": project.config_text,
        "input_sha256": dict(project.checksums),
        "crs": project.crs.to_string(),
        "working_crs": project.working_crs.to_wkt(),
        "age_unit": project.age_unit,
        "depth_unit": project.depth_unit,
        "scheme": project.scheme.name,
        "tracked_boundary": project.scheme.boundary_name(project.scheme.tracked_boundary),
        "grid": dict(
            cell_size_m=grid.cell_size,
            rows=grid.n_rows,
            cols=grid.n_cols,
            west=grid.west,
            north=grid.north,
        ),
        "slices": [m.slice.name for m in maps],
    }


# ---------------------------------------------------------------------- writing


def write_build(
    result: BuildResult,
    out: str | Path,
    *,
    overwrite: bool = False,
    figures: bool = True,
    report: bool = True,
) -> Path:
    """Write a computed build into ``out`` atomically.

    The one place that orders the deliverables: the data formats first
    (:func:`paleomap.io.writers.write_deliverables`: GeoPackage, rasters, rates
    table), then the figures (:func:`paleomap.figures.all.draw_all`), then the report
    (:func:`paleomap.report.write_report`). Each only reads ``result``. The folder is
    written beside ``out`` and moved into place only when complete; an existing build
    is replaced only with ``overwrite``.
    """
    from .io.atomic import atomic_build_dir
    from .io.writers import write_deliverables

    out = Path(out)
    with atomic_build_dir(out, overwrite=overwrite) as tmp:
        write_deliverables(result, tmp)
        if figures:
            from .figures.all import draw_all

            draw_all(result, tmp / "figures")
        if report:
            from .report import write_report

            write_report(result, tmp)
    return out


def build(
    project: Project,
    out: str | Path,
    *,
    overwrite: bool = False,
    figures: bool = True,
    report: bool = True,
) -> BuildResult:
    """Compute every map of ``project`` and write the build folder ``out``.

    Refuses to replace an existing build unless ``overwrite``, and to replace a folder
    holding anything the earlier build did not write or any input of ``project``
    (checked before any work). The folder's lock is held from the check to the end.

    Returns
    -------
    BuildResult
    """
    from .io.atomic import build_lock, check_build_target

    root = Path(project.path).parent
    inputs = [Path(project.path), *(root / name for name in project.checksums)]
    with build_lock(out):
        check_build_target(out, overwrite=overwrite, inputs=inputs)
        result = compute(project)
        t = time.perf_counter()
        write_build(result, out, overwrite=overwrite, figures=figures, report=report)
    result.timings["writing"] = time.perf_counter() - t
    return result
