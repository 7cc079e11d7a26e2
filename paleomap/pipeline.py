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
    others: dict = field(default_factory=dict)
    """Every further tracked boundary ``b`` -> ``{"line", "band", "distal"}``."""
    control: tuple = ()
    """Control points used at this slice: (point_id, easting, northing, rank, weight)."""

    def boundary(self, b: int) -> dict:
        """``{"line", "band", "distal"}`` of tracked boundary ``b``."""
        if b == self.tracked_boundary:
            return {"line": self.shoreline, "band": self.band, "distal": self.distal}
        return self.others[b]

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
        return self.distal_probability_of(self.tracked_boundary)

    def distal_probability_of(self, b: int) -> np.ndarray:
        """Probability of the distal side of boundary ``b``, (rows, cols) float32."""
        if self.stored_probabilities is not None:
            return self.stored_probabilities[b:].sum(axis=0)
        from .field.normalcdf import distal_probability

        return distal_probability(self.latent, self.latent_sd, self.thresholds[b - 1])

    def distal_probability_at(self, easting, northing, b: int | None = None) -> np.ndarray:
        """:attr:`distal_probability` (of boundary ``b``, default the tracked one)
        interpolated at points as its contouring nodes would give it, computed at the
        points' surrounding cells only."""
        b = self.tracked_boundary if b is None else b
        if self.stored_probabilities is not None:
            return node_field(self.distal_probability_of(b), self.grid).at(easting, northing)
        from .field.normalcdf import distal_probability

        t = self.thresholds[b - 1]

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
    other_boundaries: dict = field(default_factory=dict)
    """``positions``, ``shifts`` and ``slice_pairs`` of the further tracked boundaries
    (a carbonate ramp's shoal edge), with the main tables' columns."""


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
    beneath = _note_erosional_slices(project)
    with sw.stage("age models"):
        age_models = build_age_models(project)
        samples = sample_slices(project, age_models=age_models)
    with sw.stage("grid"):
        # the mapped area covers the control points too: they are data where they apply
        e = np.array(
            [c.easting for c in project.cores] + [p.easting for p in project.control_points]
        )
        n = np.array(
            [c.northing for c in project.cores] + [p.northing for p in project.control_points]
        )
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
        if any(p.weight < 1 for p in project.control_points):
            # a weight below 1: mix with the map made without the control points
            bare = {sl.name: fr for sl, fr in _map_fields(project, samples, grid, False)}
            fields = [(sl, _mixed(project, sl, fr, bare.get(sl.name))) for sl, fr in fields]
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
        for m in maps:
            m.quality["read_beneath_erosion"] = m.slice.name in beneath
    with sw.stage("shorelines"):
        dip = regional_dip_azimuth([m.latent for m in maps], grid) if maps else 90.0
        transects, positions = _positions(project, grid, maps, dip)
        shifts, pairs, transects = _shifts(project, grid, maps, transects, positions, dip)
        # the main tables are the tracked boundary's; further boundaries ride beside them
        name = scheme.boundary_name(b)
        others = {
            "positions": positions[positions["boundary"] != name].reset_index(drop=True),
            "shifts": shifts[shifts["boundary"] != name].reset_index(drop=True),
            "slice_pairs": pairs[pairs["boundary"] != name].reset_index(drop=True),
        }
        positions = positions[positions["boundary"] == name].reset_index(drop=True)
        shifts = shifts[shifts["boundary"] == name].reset_index(drop=True)
        pairs = pairs[pairs["boundary"] == name].reset_index(drop=True)
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
        others,
    )


def _note_erosional_slices(project: Project) -> set[str]:
    """Say how a slice at an erosional surface is read (docs/inputs.md): in the log, and
    as ``read_beneath_erosion`` in the slice's quality row. Returns those slices' names."""
    eros = {s.name for s in project.surfaces if s.erosional}
    names = set()
    for sl in project.slices:
        if sl.surface in eros:
            names.add(sl.name)
            log.info(
                "slice %r is at the erosional surface %r: each core that picks it is read "
                "in the deposit just beneath it, the youngest record the erosion left "
                "(older than %g %s by the missing time); the map shows that preserved "
                "record, not the landscape at the surface's age",
                sl.name,
                sl.surface,
                sl.age,
                project.age_unit,
            )
    return names


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
    control: tuple = ()  # (point_id, easting, northing, rank, weight) of control points


def _map_fields(project: Project, samples: pd.DataFrame, grid: Grid, use_control: bool = True):
    """Ordinal fields of every slice, sharing kriging work between slices with the same
    cores. Returns [(Slice, _SliceField)] in slice order (oldest first).

    Control points join the data of the slices at their ages (after the cores, under
    ids that no core can have), and are split off again into ``_SliceField.control``."""
    from .control import slice_points
    from .field import map_slices

    ids = [c.core_id for c in project.cores]
    index = {cid: i for i, cid in enumerate(ids)}
    e = np.array([c.easting for c in project.cores])
    n = np.array([c.northing for c in project.cores])
    control = project.control_points if use_control else ()
    where: dict[tuple, int] = {}
    for p in control:
        key = (p.point_id, p.easting, p.northing)
        if key not in where:
            where[key] = len(ids)
            ids.append(f"{_CONTROL_PREFIX}{p.point_id}")
    if where:
        e = np.r_[e, [k[1] for k in where]]
        n = np.r_[n, [k[2] for k in where]]
    by_slice = {}
    for sl in project.slices:
        rows = samples[samples["slice"] == sl.name]
        extra = slice_points(control, sl.age)
        extra_idx = [where[(p.point_id, p.easting, p.northing)] for p in extra]
        if len(rows) + len(extra) < 2:
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
            np.r_[np.array([index[c] for c in rows["core_id"]], dtype=int), extra_idx].astype(int),
            np.r_[rows["rank"].to_numpy(int), [p.rank for p in extra]].astype(int),
        )
    if not by_slice:
        return []
    ce, cn = grid.cell_centres()
    settings = field_settings(project)
    if project.mapping.joint:
        out = _joint_fields(project, by_slice, ids, e, n, ce, cn, settings)
        return [(sl, _split_control(project, sl, fr)) for sl, fr in out]
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
    return [(sl, _split_control(project, sl, fr)) for sl, fr in out]


_CONTROL_PREFIX = "\x00control:"  # no core id can start with a NUL


def _split_control(project: Project, sl: Slice, fr: _SliceField) -> _SliceField:
    """The slice's data split into cores and control points (never counted as cores)."""
    is_core = np.array([not str(c).startswith(_CONTROL_PREFIX) for c in fr.core_ids], bool)
    if is_core.all():
        return fr
    from dataclasses import replace as _replace

    from .control import slice_points

    weights = {p.point_id: p.weight for p in slice_points(project.control_points, sl.age)}
    control = tuple(
        (
            str(c)[len(_CONTROL_PREFIX) :],
            float(x),
            float(y),
            int(r),
            weights.get(str(c)[len(_CONTROL_PREFIX) :], 1.0),
        )
        for c, x, y, r, keep in zip(
            fr.core_ids, fr.easting, fr.northing, fr.ranks, is_core, strict=True
        )
        if not keep
    )
    return _replace(
        fr,
        core_ids=tuple(c for c, k in zip(fr.core_ids, is_core, strict=True) if k),
        easting=np.asarray(fr.easting)[is_core],
        northing=np.asarray(fr.northing)[is_core],
        ranks=np.asarray(fr.ranks)[is_core],
        control=control,
    )


def _mixed(project: Project, sl: Slice, fr: _SliceField, bare: _SliceField | None):
    """A slice's field as the mixture of the map with its control points (probability w,
    their mean weight) and without them (docs/inputs.md, control points)."""
    from dataclasses import replace as _replace

    from .control import mix_fields
    from .field.normalcdf import moment_probabilities

    if not fr.control or bare is None:
        return fr
    w = float(np.mean([c[4] for c in fr.control]))
    if w >= 1.0:
        return fr
    t = np.asarray(fr.thresholds, float)
    tb = np.asarray(bare.thresholds, float)

    def probs(f, thr):
        if f.probabilities is not None:
            return np.asarray(f.probabilities, np.float32)
        p = moment_probabilities(np.asarray(f.latent_mean), np.asarray(f.latent_sd), thr)
        return np.moveaxis(np.asarray(p, np.float32).reshape(len(thr) + 1, -1), 0, -1)

    mean, sd = mix_fields(w, fr.latent_mean, fr.latent_sd, bare.latent_mean, bare.latent_sd)
    mixed = w * probs(fr, t) + (1 - w) * probs(bare, tb)
    return _replace(fr, latent_mean=mean, latent_sd=sd, probabilities=mixed.astype(np.float32))


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
    # control points of weight 1 are imposed like cores; lighter ones only inform the mix
    imposed = [c for c in fr.control if c[4] >= 1.0]
    he = np.r_[np.asarray(fr.easting, float), [c[1] for c in imposed]]
    hn = np.r_[np.asarray(fr.northing, float), [c[2] for c in imposed]]
    hr = np.r_[np.asarray(fr.ranks, int), [c[3] for c in imposed]].astype(int)
    # honouring moves only the four nodes around a core: note those that moved
    c0, r0, _, _ = nodes._locate(he, hn)
    near = np.unique(np.concatenate([(r0 + dr) * nodes.values.shape[1] + c0 + dc
                                     for dr in (0, 1) for dc in (0, 1)]))  # fmt: skip
    before = nodes.values.ravel()[near].copy()
    honour_cores(nodes, he, hn, hr, t)
    moved = nodes.values.ravel()[near] != before
    rows, cols = np.divmod(near[moved], nodes.values.shape[1])
    adjustments = (rows, cols, nodes.values.ravel()[near[moved]] - before[moved])
    polygons = belt_polygons(None, grid, t, nodes=nodes)
    line = shoreline(nodes, float(t[b - 1]), grid.area)
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
        control=tuple(fr.control),
    )
    m.band = shoreline_band(m.distal_probability, grid)
    for other in project.scheme.tracked_boundaries[1:]:
        m.others[other] = {
            "line": shoreline(nodes, float(t[other - 1]), grid.area),
            "band": shoreline_band(m.distal_probability_of(other), grid),
            "distal": distal_region(polygons, other),
        }
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
        label = project.scheme.boundary_label(b)
        warnings.warn(
            f"slice {sl.name!r}: the tracked boundary "
            f"{project.scheme.boundary_name(b)!r} does not cross the mapped area (every core "
            f"records the same side of it); no {label} is drawn for this slice, and shifts "
            "to and from it are given as bounds",
            PaleomapWarning,
            stacklevel=2,
        )
    m.quality = dict(
        cores_used=len(fr.core_ids),
        control_points_used=len(fr.control),
        cores_in_own_belt=int(sum(inside)),
        walther_ok=not touching,
        has_boundary=not line.is_empty,
        **fr.quality,
    )
    return m


# ---------------------------------------------------------------------- migration


def _positions(project: Project, grid: Grid, maps: list[SliceMap], dip: float):
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
    scheme = project.scheme
    for m in maps:
        nodes = m.nodes
        for b in scheme.tracked_boundaries:
            t_b = float(m.thresholds[b - 1])

            def prob(e, n, m=m, b=b):
                return m.distal_probability_at(e, n, b)

            for tr in transects:
                pos = transect_position(tr.line, nodes.at, t_b, prob, step)
                rows.append(
                    dict(
                        transect=tr.transect,
                        boundary=scheme.boundary_name(b),
                        slice=m.slice.name,
                        age=m.slice.age,
                        position_m=pos.position_m,
                        position_low_m=pos.low_m,
                        position_high_m=pos.high_m,
                        crossings=pos.crossings,
                        outside=pos.outside,
                    )
                )
    return transects, pd.DataFrame(rows, columns=POSITION_COLUMNS)


POSITION_COLUMNS = [
    "transect",
    "boundary",
    "slice",
    "age",
    "position_m",
    "position_low_m",
    "position_high_m",
    "crossings",
    "outside",
]
"""Columns of the ``shoreline_positions`` table (``outside``: ``""``, ``"landward"`` or
``"basinward"``, where the boundary misses the transect)."""

SHIFT_COLUMNS = [
    "transect",
    "boundary",
    "older_slice",
    "younger_slice",
    "older_age",
    "younger_age",
    "shift_m",
    "shift_low_m",
    "shift_high_m",
    "rate_m_per_kyr",
    "rate_low_m_per_kyr",
    "rate_high_m_per_kyr",
    "shift_bound",
    "older_outside",
    "younger_outside",
    "sense",
    "older_crossings",
    "younger_crossings",
    "geometry",
]
"""Columns of the ``shoreline_shifts`` layer. ``shift_bound`` is ``"at_least"`` where the
boundary lies outside the mapped area at one slice: the shift is then at least
``shift_m`` in its direction."""

PAIR_COLUMNS = [
    "boundary",
    "older_slice",
    "younger_slice",
    "older_age",
    "younger_age",
    "flooded_km2",
    "exposed_km2",
    "net_shift_m",
    "net_rate_m_per_kyr",
    "net_shift_bound",
    "net_normal_shift_m",
    "median_shift_m",
    "median_shift_low_m",
    "median_shift_high_m",
    "median_rate_m_per_kyr",
    "transects_used",
    "transects_bound",
    "sense",
]
"""Columns of the ``slice_pairs`` table. ``net_shift_m`` is the dip-equivalent net shift
(net area over the boundary's extent along strike), the headline figure;
``net_normal_shift_m`` the same net area over the boundary's length."""


def _ordered_pairs(maps: list[SliceMap]):
    """Consecutive (older, younger) slice pairs, oldest first."""
    by_age = sorted(maps, key=lambda m: -m.slice.age)
    return list(zip(by_age[:-1], by_age[1:], strict=False))


def _area_extent_along(area, azimuth_deg: float) -> float:
    """Extent (m) of the mapped area along an azimuth: no distance may exceed it."""
    xy = shapely.get_coordinates(area)
    a = np.radians(azimuth_deg)
    d = xy @ np.array([np.sin(a), np.cos(a)])
    return float(d.max() - d.min()) if len(d) else float("nan")


def _edge_point(line, side: str):
    return line.coords[0] if side == "landward" else line.coords[-1]


def _shifts(project: Project, grid: Grid, maps, transects, positions, dip: float):
    from .migration import TransectPosition

    kyr = project.kyr_per_age_unit
    tol = project.migration.stillstand_m_per_kyr
    sd = {s.name: s.age_sd for s in project.surfaces}
    pos = {(r.transect, r.boundary, r.slice): r for r in positions.itertuples()}
    lines = {t.transect: t.line for t in transects}
    dip_extent = _area_extent_along(grid.area, dip)
    scheme = project.scheme
    rows = []
    pair_rows = []

    def tp(r, line):
        return TransectPosition(
            r.position_m, r.position_low_m, r.position_high_m, r.crossings, r.outside, line.length
        )

    for b in scheme.tracked_boundaries:
        bname = scheme.boundary_name(b)
        for k, (old, young) in enumerate(_ordered_pairs(maps)):
            first = len(rows)
            for tr in transects:
                line = lines[tr.transect]
                po = pos[(tr.transect, bname, old.slice.name)]
                py = pos[(tr.transect, bname, young.slice.name)]
                stats = shift_statistics(
                    tp(po, line),
                    tp(py, line),
                    old.slice.age * kyr,
                    young.slice.age * kyr,
                    sd.get(old.slice.surface or "", 0.0) * kyr,
                    sd.get(young.slice.surface or "", 0.0) * kyr,
                    seed=k,
                )
                if stats["shift_bound"]:
                    sense = _bound_sense(stats["shift_m"])
                else:
                    sense = classify_sense(
                        [stats["rate_m_per_kyr"]],
                        tol,
                        [stats["shift_low_m"]],
                        [stats["shift_high_m"]],
                    )[0]
                geom = None
                if np.isfinite(stats["shift_m"]):
                    ends = []
                    for r in (po, py):
                        if r.outside:
                            ends.append(_edge_point(line, r.outside))
                        else:
                            p = shapely.line_interpolate_point(line, r.position_m)
                            ends.append(p.coords[0])
                    if ends[0] != ends[1]:
                        geom = shapely.LineString(ends)
                rows.append(
                    dict(
                        transect=tr.transect,
                        boundary=bname,
                        older_slice=old.slice.name,
                        younger_slice=young.slice.name,
                        older_age=old.slice.age,
                        younger_age=young.slice.age,
                        **stats,
                        sense=sense,
                        older_crossings=po.crossings,
                        younger_crossings=py.crossings,
                        geometry=geom,
                    )
                )
            pair_rows.append(
                _pair_row(
                    old,
                    young,
                    b,
                    bname,
                    rows[first:],
                    dip,
                    dip_extent,
                    (old.slice.age - young.slice.age) * kyr,
                    tol,
                )
            )
    shifts = pd.DataFrame(rows, columns=SHIFT_COLUMNS)
    pairs = pd.DataFrame(pair_rows, columns=PAIR_COLUMNS)
    # least-squares rate per transect over every slice, of the tracked boundary
    main = positions[positions["boundary"] == scheme.boundary_name(scheme.tracked_boundary)]
    out = []
    for tr in transects:
        p = main[main["transect"] == tr.transect]
        rate = lsq_rate(p["age"].to_numpy() * kyr, p["position_m"].to_numpy())
        out.append(Transect(tr.transect, tr.line, tr.azimuth_deg, tr.source, rate))
    return shifts, pairs, out


def _bound_sense(bound: float) -> str:
    """A bound's sense: its direction is known (the shift is at least that far)."""
    if bound > 0:
        return "transgression"
    if bound < 0:
        return "regression"
    return "uncertain"


def _pair_row(old, young, b, bname, rows, dip, dip_extent, dt, tol) -> dict:
    """One slice pair of one boundary: areas, the dip-equivalent net shift (as a bound
    where the boundary leaves the mapped area), the transects' median and the sense."""
    bo, by = old.boundary(b), young.boundary(b)
    ext_o = strike_extent(bo["line"], dip) if not bo["line"].is_empty else 0.0
    ext_y = strike_extent(by["line"], dip) if not by["line"].is_empty else 0.0
    present = [e for e in (ext_o, ext_y) if e > 0]
    area = area_change(
        bo["distal"],
        by["distal"],
        bo["line"].length,
        by["line"].length,
        float(np.mean(present)) if present else None,
        float(np.mean(present)) if present else None,
    )
    net = area.get("net_dip_shift_m", np.nan)
    normal = area["net_shift_m"]
    # Where the boundary is missing at a slice, the areas stop at the mapped area's edge:
    # the net shift is a bound. Nothing may exceed the mapped area's extent along dip.
    bound = len(present) < 2
    if np.isfinite(net) and abs(net) > dip_extent:
        net, bound = float(np.sign(net) * dip_extent), True
    if np.isfinite(normal) and abs(normal) > dip_extent:
        normal = float(np.sign(normal) * dip_extent)
    exact = [r for r in rows if not r["shift_bound"] and np.isfinite(r["shift_m"])]
    bounds = [r for r in rows if r["shift_bound"]]
    if exact:
        shift = float(np.median([r["shift_m"] for r in exact]))
        low = float(np.median([r["shift_low_m"] for r in exact]))
        high = float(np.median([r["shift_high_m"] for r in exact]))
        rate = float(np.median([r["rate_m_per_kyr"] for r in exact]))
        sense = classify_sense([rate], tol, [low], [high])[0]
    else:
        shift = low = high = rate = np.nan
        signs = {_bound_sense(r["shift_m"]) for r in bounds}
        sense = signs.pop() if len(signs) == 1 else ("uncertain" if signs else "")
    return dict(
        boundary=bname,
        older_slice=old.slice.name,
        younger_slice=young.slice.name,
        older_age=old.slice.age,
        younger_age=young.slice.age,
        flooded_km2=area["flooded_km2"],
        exposed_km2=area["exposed_km2"],
        net_shift_m=net,
        net_rate_m_per_kyr=net / dt if dt > 0 and np.isfinite(net) else np.nan,
        net_shift_bound="at_least" if bound and np.isfinite(net) else "",
        net_normal_shift_m=normal,
        median_shift_m=shift,
        median_shift_low_m=low,
        median_shift_high_m=high,
        median_rate_m_per_kyr=rate,
        transects_used=len(exact),
        transects_bound=len(bounds),
        sense=sense,
    )


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

    The folder is written beside ``out`` and moved into place only when complete; an
    existing build is replaced only with ``overwrite``.
    """
    from .io.atomic import atomic_build_dir
    from .io.writers import write_deliverables

    out = Path(out)
    with atomic_build_dir(out, overwrite=overwrite) as tmp:
        write_deliverables(result, tmp, figures=figures, report=report)
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
