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
    beneath = _note_erosional_slices(project)
    with sw.stage("age models"):
        age_models = build_age_models(project)
        samples = sample_slices(project, age_models=age_models)
        records = build_records(project, age_models)
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
        fitted, fields = _map_fields(project, records, grid, settings)
        if any(p.weight < 1 for p in project.control_points):
            # a weight below 1: mix with the map made without the control points
            _, bare = _map_fields(project, records, grid, settings, False)
            bare = {sl.name: fr for sl, fr in bare}
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
        shifts, pairs, transects = _shifts(project, grid, maps, transects, positions, dip, fitted)
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
    with sw.stage("chart"):
        chart = _chart(project, grid, transects, fitted, maps)
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
        chart=chart,
        records=records,
        field=fitted,
    )


def _chart(project: Project, grid: Grid, transects, fitted, maps):
    """The chronostratigraphic chart along the chart transect (None without transects)."""
    if not transects:
        log.info("no transects: no chronostratigraphic chart")
        return None
    from .chart import wheeler_section

    slice_ages = [m.slice.age for m in maps]
    return wheeler_section(project, grid, transects, fitted.records, fitted, slice_ages=slice_ages)


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


def _with_control(project: Project, records: Records) -> Records:
    """The records with the project's control points added as point records at their
    ages (under ids that no core can have, after the cores)."""
    pts = project.control_points
    if not pts:
        return records
    points = Records(
        np.array([f"{_CONTROL_PREFIX}{p.point_id}" for p in pts], object),
        np.array([p.easting for p in pts], float),
        np.array([p.northing for p in pts], float),
        np.array([float(p.age) for p in pts]),
        np.array([float(p.age) for p in pts]),
        np.array([int(p.rank) for p in pts], np.int64),
        np.ones(len(pts), bool),
    )
    return records.appended(points)


def _map_fields(
    project: Project, records: Records, grid: Grid, settings=None, use_control: bool = True
):
    """Fit the project's field engine to the records (and the control points, which
    join the data at their ages) for every slice with a record in two or more cores or
    points, and predict it on the grid. Returns the fitted model and
    [(Slice, _SliceField)] in slice order (oldest first); control points are split off
    into ``_SliceField.control``."""
    data = _with_control(project, records) if use_control else records
    ids = [c.core_id for c in project.cores]
    mapped = []
    for sl in project.slices:
        idx = data.spanning(sl.age)
        n_cores = int(sum(not str(c).startswith(_CONTROL_PREFIX) for c in data.core_id[idx]))
        if idx.size < 2:
            warnings.warn(
                f"slice {sl.name!r}: only {n_cores} core(s) have a record at "
                f"{sl.age:g} {project.age_unit}; the slice is not mapped",
                PaleomapWarning,
                stacklevel=2,
            )
            continue
        if n_cores < len(ids) / 2:
            warnings.warn(
                f"slice {sl.name!r}: only {n_cores} of {len(ids)} cores have a record at "
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
        len(data),
        len(data.cores()[0]),
        len(mapped),
        grid.n_rows * grid.n_cols,
    )
    fitted = engine.fit(data, project.scheme.n_belts, settings, ages)
    ce, cn = grid.cell_centres()
    pred = fitted.predict(ce, cn, ages)
    del ce, cn
    out = []
    for i, sl in enumerate(mapped):
        idx = data.spanning(sl.age)
        fr = _SliceField(
            tuple(data.core_id[idx]),
            data.easting[idx],
            data.northing[idx],
            data.rank[idx],
            np.asarray(pred.thresholds[i]),
            pred.latent_mean[i],
            pred.latent_sd[i],
            pred.stored_probabilities[i],
            fitted.quality(sl.age),
        )
        out.append((sl, _split_control(project, sl, fr)))
    return fitted, out


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
    from .probability import moment_probabilities

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


def _shifts(project: Project, grid: Grid, maps, transects, positions, dip: float, fitted=None):
    """Shifts per transect and per slice pair. Where the engine gives joint draws of a
    boundary's positions over ages (``transect_draws``), a shift whose two positions lie
    on the transect keeps the maps' shift and takes its P10-P90 from the spread of those
    draws (one draw, one possible history), so the range reflects how the two positions
    move together; otherwise the two positions' P10-P90 are combined as independent."""
    from .migration import TransectPosition, joint_shift_statistics

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

    draw = getattr(fitted, "transect_draws", None)
    slice_ages = [m.slice.age for m in maps]
    column = {m.slice.name: i for i, m in enumerate(maps)}
    for b in scheme.tracked_boundaries:
        bname = scheme.boundary_name(b)
        draws = {}
        if draw is not None:
            step = grid.cell_size / 2
            draws = {t.transect: draw(t.line, slice_ages, b, step) for t in transects}
        for k, (old, young) in enumerate(_ordered_pairs(maps)):
            first = len(rows)
            for tr in transects:
                line = lines[tr.transect]
                po = pos[(tr.transect, bname, old.slice.name)]
                py = pos[(tr.transect, bname, young.slice.name)]
                ages_sd = (
                    old.slice.age * kyr,
                    young.slice.age * kyr,
                    sd.get(old.slice.surface or "", 0.0) * kyr,
                    sd.get(young.slice.surface or "", 0.0) * kyr,
                )
                stats = shift_statistics(tp(po, line), tp(py, line), *ages_sd, seed=k)
                if draws and not stats["shift_bound"] and np.isfinite(stats["shift_m"]):
                    d = draws[tr.transect]
                    joint = joint_shift_statistics(
                        d[:, column[old.slice.name]],
                        d[:, column[young.slice.name]],
                        *ages_sd,
                        centre=stats["shift_m"],
                        seed=k,
                    )
                    if np.isfinite(joint["shift_m"]):
                        stats.update(joint)
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
        "output_crs": project.delivery_crs.to_string(),
        "age_unit": project.age_unit,
        "depth_unit": project.depth_unit,
        "scheme": project.scheme.name,
        "field_engine": project.mapping.engine,
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

    The one place that orders the deliverables: the data formats first
    (:func:`paleomap.io.writers.write_deliverables`: GeoPackage, rasters, rates
    table), then the figures (:func:`paleomap.figures.all.draw_all`), then the report
    (:func:`paleomap.report.write_report`). Each only reads ``result``. The folder is
    written beside ``out`` and moved into place only when complete; an existing build
    is replaced only with ``overwrite``. ``figure_settings``
    (:class:`paleomap.figures.all.FigureSettings`) asks for vector figures and sets the
    core panel's datum and spacing.
    """
    from .io.atomic import atomic_build_dir
    from .io.writers import write_deliverables

    out = Path(out)
    with atomic_build_dir(out, overwrite=overwrite) as tmp:
        write_deliverables(result, tmp)
        if figures:
            from .figures.all import draw_all

            draw_all(result, tmp / "figures", settings=figure_settings)
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
