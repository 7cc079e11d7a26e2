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
import os
import time
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import shapely

from ._version import __version__
from .agemodel import build_age_models, sample_slices
from .belts import (
    belt_polygons,
    cell_field_at,
    classify,
    honour_cores,
    node_field,
    walther_contacts,
)
from .errors import InputError, PaleomapWarning, Problem
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
from .shoreline import distal_region, shoreline, shoreline_band

__all__ = [
    "BuildResult",
    "SliceMap",
    "Transect",
    "build",
    "compute",
    "field_settings",
    "write_build",
]

log = logging.getLogger(__name__)


@dataclass(eq=False)
class SliceMap:
    """The map of one time slice.

    Grids have the grid's shape (rows north to south): ``latent`` and ``latent_sd``
    are the latent's predictive mean and standard deviation (float32 on large maps).
    :attr:`probabilities` (n_belts, rows, cols) float32 and :attr:`distal_probability`
    (the probability of the distal side of the tracked boundary) are either stored
    (where the engine averaged them over its samples) or derived from the mean and sd
    on each access, which is what keeps a build of many large slices in memory.
    ``polygons[k]`` is belt ``k``'s geometry; ``distal`` the union of the belts on the
    distal side; :attr:`nodes` the contouring nodes (adjusted so every core lies in its
    own belt; rebuilt from the latent and the adjustments on each access).
    """

    slice: Slice
    core_ids: tuple[str, ...]
    ranks: np.ndarray
    thresholds: np.ndarray
    latent: np.ndarray
    latent_sd: np.ndarray
    grid: Grid
    tracked_boundary: int
    node_adjustments: tuple
    polygons: list
    shoreline: object
    band: object
    distal: object
    stored_probabilities: np.ndarray | None = None
    quality: dict = field(default_factory=dict)

    def mapped_belt(self) -> np.ndarray:
        """Belt rank of each cell from the mean latent (the class the polygons show)."""
        return classify(self.latent, self.thresholds)

    @property
    def probabilities(self) -> np.ndarray:
        """Belt probabilities, (n_belts, rows, cols) float32."""
        if self.stored_probabilities is not None:
            return self.stored_probabilities
        from .field.normalcdf import moment_probabilities

        return moment_probabilities(self.latent, self.latent_sd, self.thresholds)

    @property
    def distal_probability(self) -> np.ndarray:
        """Probability of the distal side of the tracked boundary, (rows, cols) float32."""
        b = self.tracked_boundary
        if self.stored_probabilities is not None:
            return self.stored_probabilities[b:].sum(axis=0)
        from .field.normalcdf import distal_probability

        return distal_probability(self.latent, self.latent_sd, self.thresholds[b - 1])

    def distal_probability_at(self, easting, northing) -> np.ndarray:
        """:attr:`distal_probability` interpolated at points as its contouring nodes
        would give it, computed at the points' surrounding cells only."""
        if self.stored_probabilities is not None:
            return node_field(self.distal_probability, self.grid).at(easting, northing)
        from .field.normalcdf import distal_probability

        t = self.thresholds[self.tracked_boundary - 1]

        def cells(rows, cols):
            return distal_probability(self.latent[rows, cols], self.latent_sd[rows, cols], t)

        return cell_field_at(self.grid, easting, northing, cells)

    @property
    def nodes(self):
        """The contouring nodes (:class:`paleomap.belts.NodeField`), cores honoured."""
        nodes = node_field(self.latent, self.grid)
        rows, cols, shift = self.node_adjustments
        nodes.values[rows, cols] += shift
        return nodes


@dataclass(frozen=True)
class Transect:
    """A migration transect, landward to basinward."""

    transect: str
    line: object
    azimuth_deg: float
    source: str  # "dip" (default) or "user"
    lsq_rate_m_per_kyr: float = float("nan")


@dataclass(eq=False)
class BuildResult:
    """Everything a build computed, ready for the writers."""

    project: Project
    grid: Grid
    samples: pd.DataFrame
    slice_maps: list[SliceMap]
    transects: list[Transect]
    positions: pd.DataFrame
    shifts: pd.DataFrame
    slice_pairs: pd.DataFrame
    reading: object
    run_info: dict
    timings: dict
    age_models: dict = field(default_factory=dict)


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


def compute(project: Project) -> BuildResult:
    """Run every stage of a build on a validated project; write nothing.

    Parameters
    ----------
    project : Project
        From :func:`paleomap.load_project`.

    Returns
    -------
    BuildResult
    """
    sw = _Stopwatch()
    scheme = project.scheme
    with sw.stage("age models"):
        age_models = build_age_models(project)
        samples = sample_slices(project, age_models=age_models)
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
        fields = _map_fields(project, samples, grid)
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
    )


# --------------------------------------------------------------------------- field


def field_settings(project: Project):
    """The engine's settings from the project's ``[mapping]`` table.

    Returns a :class:`~paleomap.field.shared.SharedSettings` when ``joint`` (the
    default), else a :class:`~paleomap.field.ordinal.FieldSettings`.
    """
    from .field import FieldSettings
    from .field.shared import SharedSettings

    m = project.mapping
    overrides = {
        k: v
        for k, v in dict(
            model=None if m.model == "auto" else m.model,
            range_m=m.range_m,
            anisotropy=m.anisotropy,
            azimuth_deg=m.azimuth_deg,
            nugget=m.nugget,
        ).items()
        if v is not None
    }
    kwargs = dict(
        covariance=overrides or None,
        samples=m.samples,
        burn_in=m.burn_in,
        seed=m.seed,
        deterministic=m.deterministic,
    )
    if m.joint:
        return SharedSettings(**kwargs)
    if m.neighbours is not None:
        kwargs["kriging_neighbours"] = m.neighbours
    return FieldSettings(**kwargs)


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


def _map_fields(project: Project, samples: pd.DataFrame, grid: Grid):
    """Ordinal fields of every slice, sharing kriging work between slices with the same
    cores. Returns [(Slice, _SliceField)] in slice order (oldest first)."""
    from .field import map_slices

    ids = [c.core_id for c in project.cores]
    index = {cid: i for i, cid in enumerate(ids)}
    e = np.array([c.easting for c in project.cores])
    n = np.array([c.northing for c in project.cores])
    by_slice = {}
    for sl in project.slices:
        rows = samples[samples["slice"] == sl.name]
        if len(rows) < 2:
            warnings.warn(
                f"slice {sl.name!r}: only {len(rows)} core(s) have a record at "
                f"{sl.age:g} {project.age_unit}; the slice is not mapped",
                PaleomapWarning,
                stacklevel=2,
            )
            continue
        if len(rows) < len(ids) / 2:
            warnings.warn(
                f"slice {sl.name!r}: only {len(rows)} of {len(ids)} cores have a record at "
                f"{sl.age:g} {project.age_unit} (a hiatus or erosion removed the rest, or "
                "their picks do not bracket the age); the map rests on those cores alone",
                PaleomapWarning,
                stacklevel=2,
            )
        by_slice[sl.name] = (
            np.array([index[c] for c in rows["core_id"]]),
            rows["rank"].to_numpy(int),
        )
    if not by_slice:
        return []
    ce, cn = grid.cell_centres()
    settings = field_settings(project)
    if project.mapping.joint:
        return _joint_fields(project, by_slice, ids, e, n, ce, cn, settings)
    results, fit = map_slices(e, n, by_slice, ce, cn, project.scheme.n_belts, settings)
    cov = fit.covariance.as_dict()
    out = []
    for sl in project.slices:
        if sl.name not in results:
            continue
        r = results[sl.name]
        model = r.model
        idx = np.asarray(model.core_index)
        cv = model.cross_validation
        quality = dict(
            method="per_slice",
            loo_share_in_own_belt=float(cv.share_in_own_belt) if cv else np.nan,
            loo_mean_abs_rank_error=float(cv.mean_abs_rank_error) if cv else np.nan,
            **_cov_fields(cov, "relief"),
        )
        out.append(
            (
                sl,
                _SliceField(
                    tuple(ids[i] for i in idx),
                    e[idx],
                    n[idx],
                    np.asarray(model.ranks),
                    np.asarray(model.thresholds),
                    r.latent_mean,
                    r.latent_sd,
                    r.probabilities,
                    quality,
                ),
            )
        )
    return out


def _cov_fields(cov: dict, prefix: str) -> dict:
    return {f"{prefix}_{k}": v for k, v in cov.items()}


def _joint_fields(project, by_slice, ids, e, n, ce, cn, settings):
    from .field.shared import map_shared

    records = sum(len(idx) for idx, _ in by_slice.values())
    log.info(
        "field: sampling the latent at %d records of %d slices, then mapping %d cells per slice",
        records,
        len(by_slice),
        ce.size,
    )
    results, fit = map_shared(e, n, by_slice, ce, cn, project.scheme.n_belts, settings)
    relief = _cov_fields(fit.relief.as_dict(), "relief")
    local = {
        "slice_residual_variance": float(fit.local.sill),
        "slice_residual_range_m": float(fit.local.range_m),
    }
    out = []
    for sl in project.slices:
        if sl.name not in results:
            continue
        r = results[sl.name]
        idx = np.asarray(r.core_index)
        quality = dict(
            method="joint",
            loo_share_in_own_belt=r.share_in_own_belt,
            loo_mean_abs_rank_error=r.mean_abs_rank_error,
            **relief,
            **local,
        )
        out.append(
            (
                sl,
                _SliceField(
                    tuple(ids[i] for i in idx),
                    e[idx],
                    n[idx],
                    r.ranks,
                    r.thresholds,
                    r.latent_mean,
                    r.latent_sd,
                    r.stored_probabilities,
                    quality,
                ),
            )
        )
    return out


def _belt_maps(project: Project, grid: Grid, fields, b: int) -> list[SliceMap]:
    """Every slice's belts, shoreline and band; two slices at a time on two cores
    (contouring and geometry release the interpreter lock), in slice order."""
    count = len(fields)

    def one(i):
        sl, fr = fields[i]
        log.info("belts: slice %s (%d of %d)", sl.name, i + 1, count)
        return _slice_map(project, grid, sl, fr, b)

    if _THREADS < 2 or count < 2:
        return [one(i) for i in range(count)]
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(_THREADS) as pool:
        return list(pool.map(one, range(count)))


_THREADS = min(2, os.cpu_count() or 1)


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
    return transects, pd.DataFrame(
        rows,
        columns=[
            "transect",
            "slice",
            "age",
            "position_m",
            "position_low_m",
            "position_high_m",
            "crossings",
        ],
    )


_SHIFT_COLUMNS = [
    "transect",
    "older_slice",
    "younger_slice",
    "older_age",
    "younger_age",
    "shift_m",
    "shift_low_m",
    "shift_high_m",
    "rate_m_per_kyr",
    "rate_low",
    "rate_high",
    "sense",
    "older_crossings",
    "younger_crossings",
    "geometry",
]
_PAIR_COLUMNS = [
    "older_slice",
    "younger_slice",
    "older_age",
    "younger_age",
    "flooded_km2",
    "exposed_km2",
    "net_shift_m",
    "net_rate_m_per_kyr",
    "net_dip_shift_m",
    "net_dip_rate_m_per_kyr",
    "median_rate_m_per_kyr",
    "transects_used",
    "sense",
]


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
    shifts = pd.DataFrame(rows, columns=_SHIFT_COLUMNS)
    pairs = pd.DataFrame(pair_rows, columns=_PAIR_COLUMNS)
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
    figure_settings=None,
) -> Path:
    """Write a computed build into ``out`` atomically.

    The folder is written beside ``out`` and moved into place only when complete; an
    existing build is replaced only with ``overwrite``. ``figure_settings``
    (:class:`paleomap.figures.all.FigureSettings`) asks for vector figures and sets the
    core panel's datum and spacing.
    """
    from .io.atomic import atomic_build_dir
    from .io.writers import write_deliverables

    out = Path(out)
    with atomic_build_dir(out, overwrite=overwrite) as tmp:
        write_deliverables(
            result, tmp, figures=figures, report=report, figure_settings=figure_settings
        )
    return out


def build(
    project: Project,
    out: str | Path,
    *,
    overwrite: bool = False,
    figures: bool = True,
    report: bool = True,
    figure_settings=None,
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
        write_build(
            result,
            out,
            overwrite=overwrite,
            figures=figures,
            report=report,
            figure_settings=figure_settings,
        )
    result.timings["writing"] = time.perf_counter() - t
    return result
