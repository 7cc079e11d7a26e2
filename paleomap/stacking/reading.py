"""Reading every core: contacts, stacking trends and turnarounds, as tables.

:func:`read_cores` runs the per-core reading (:mod:`~paleomap.stacking.contacts`,
:mod:`~paleomap.stacking.trends`, :mod:`~paleomap.stacking.turnarounds`) over a project and
gathers the results, with the regional counts of :mod:`~paleomap.stacking.region`, into one
:class:`CoreReading`. :func:`summary_lines` turns it into the text ``paleomap check`` shows.

Depths are in the project's depth unit, ages in its age unit.

Examples
--------
>>> reading = read_cores(project)  # doctest: +SKIP
>>> reading.contacts[reading.contacts.flag == "possible_break"]  # doctest: +SKIP
"""

from __future__ import annotations

import logging
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..cores import Core
from ..project import DEPTH_UNITS, Project, Surface
from ..scheme import Scheme
from .contacts import core_contacts, core_gaps
from .profile import RankProfile
from .region import region_summary, surface_alignment, surface_pairs
from .trends import classify_trend, grain_word, sense_word
from .turnarounds import find_turnarounds

__all__ = ["DEFAULT_SCALES_M", "CoreReading", "ReadingSettings", "read_cores", "summary_lines"]

_log = logging.getLogger(__name__)

_CONTACT_COLUMNS = [
    "core_id",
    "depth",
    "lower",
    "upper",
    "lower_rank",
    "upper_rank",
    "jump",
    "flag",
    "nearest_surface",
    "surface_distance",
    "erosional_surface",
    "easting",
    "northing",
]
_GAP_COLUMNS = [
    "core_id",
    "top",
    "base",
    "thickness",
    "lower",
    "upper",
    "jump",
    "easting",
    "northing",
]
_INTERVAL_COLUMNS = [
    "core_id",
    "interval",
    "older_surface",
    "younger_surface",
    "top",
    "base",
    "trend",
    "trend_grain",
    "sense",
    "slope_rank_per_m",
    "rank_change",
    "n_intervals",
]
_CORE_COLUMNS = [
    "core_id",
    "easting",
    "northing",
    "n_intervals",
    "n_contacts",
    "n_possible_breaks",
    "n_gaps",
    "trend",
    "trend_grain",
    "sense",
    "slope_rank_per_m",
    "rank_change",
    "n_mfs",
    "n_mrs",
    "mfs_depth",
    "mfs_age",
    "mrs_depth",
    "mrs_age",
]
_TURN_COLUMNS = [
    "core_id",
    "kind",
    "depth",
    "depth_top",
    "depth_base",
    "age",
    "rank",
    "belt",
    "change_below",
    "change_above",
    "confidence",
    "cycle",
    "nearest_surface",
    "surface_distance",
    "easting",
    "northing",
]
_PAIR_COLUMNS = [
    "core_id",
    "interval",
    "older_surface",
    "younger_surface",
    "top",
    "base",
    "picked",
    "trend",
]


@dataclass(frozen=True)
class ReadingSettings:
    """The thresholds of the core reading (rules in ``docs/stacking.md``).

    Parameters
    ----------
    contact_tolerance : float
        Depth units within which an erosional pick lies at a contact (capped at half the
        thinner adjacent interval).
    min_trend : float
        Smallest fitted rank change called a deepening or shallowing trend (ranks).
    min_change : int
        Ranks of change needed on both sides of a turnaround.
    spike_fraction : float
        A run thinner than this fraction of both neighbours, and beyond both by
        ``min_change`` ranks, is a thin spike and ignored by the turnaround search.
    pick_tolerance : float
        Depth units by which a turnaround's span is widened when tied to a pick (the
        "at a pick" tolerance; ``[reading] pick_tolerance`` in the project).
    noise_thickness : float
        Depth units below which a run is noise to the turnaround search
        (``[reading] noise_thickness``).

    The defaults of the three depth scales are in metres
    (:data:`DEFAULT_SCALES_M`); :meth:`for_project` converts them to the project's depth
    unit and applies the project's ``[reading]`` table.

    Examples
    --------
    >>> ReadingSettings().min_change
    2
    >>> s = ReadingSettings.for_depth_unit("ft")
    >>> round(s.noise_thickness, 2), round(s.pick_tolerance, 2)
    (1.97, 3.28)
    """

    contact_tolerance: float = 0.1
    min_trend: float = 0.5
    min_change: int = 2
    spike_fraction: float = 0.25
    pick_tolerance: float = 1.0
    noise_thickness: float = 0.6

    @classmethod
    def for_depth_unit(cls, depth_unit: str, **overrides) -> ReadingSettings:
        """The defaults converted to ``depth_unit``, then ``overrides`` (depth unit)."""
        per_m = 1.0 / DEPTH_UNITS.get(depth_unit, 1.0)
        values = {k: v * per_m for k, v in DEFAULT_SCALES_M.items()}
        values.update({k: v for k, v in overrides.items() if v is not None})
        return cls(**values)

    @classmethod
    def for_project(cls, project: Project) -> ReadingSettings:
        """The settings of a project: defaults in its depth unit and its ``[reading]``."""
        r = getattr(project, "reading", None)
        over = {}
        if r is not None:
            over = dict(
                noise_thickness=r.noise_thickness,
                pick_tolerance=r.pick_tolerance,
                contact_tolerance=r.contact_tolerance,
            )
        return cls.for_depth_unit(project.depth_unit, **over)


DEFAULT_SCALES_M = {"contact_tolerance": 0.1, "pick_tolerance": 1.0, "noise_thickness": 0.6}
"""Default depth scales of the core reading, in metres. The noise scale, 0.6 m (about
2 ft), spans four steps of a log described every 0.5 ft, so an alternation of one or
two steps is noise while a bed of a metre is read."""


@dataclass(frozen=True)
class CoreReading:
    """Every core read: contacts, gaps, trends, turnarounds and the regional summary.

    Attributes
    ----------
    contacts : pandas.DataFrame
        One row per contact: ``core_id, depth, lower, upper`` (belt ids), ``lower_rank,
        upper_rank, jump`` (upper minus lower rank, positive = deepening upward),
        ``flag`` (conformable / possible_break / at_erosional_surface),
        ``nearest_surface, surface_distance, erosional_surface, easting, northing``.
    gaps : pandas.DataFrame
        Unrecovered ranges: ``core_id, top, base, thickness, lower, upper, jump, ...``.
    intervals : pandas.DataFrame
        One row per core and pair of consecutive picks in it: ``core_id, interval``
        (``"<older>-<younger>"``), ``older_surface, younger_surface, top, base, trend,
        trend_grain, sense, slope_rank_per_m, rank_change, n_intervals``.
    cores : pandas.DataFrame
        One row per core: whole-core ``trend`` and counts, and the most distal suggested
        MFS (``mfs_depth, mfs_age``) and most proximal MRS (``mrs_depth, mrs_age``).
    turnarounds : pandas.DataFrame
        Every suggested MFS / MRS: ``core_id, kind, depth, depth_top, depth_base, age,
        rank, belt, change_below, change_above, nearest_surface, surface_distance, ...``.
    surfaces : pandas.DataFrame
        Per surface, the cores that pick it and have a suggested MFS / MRS there.
    region : pandas.DataFrame
        Per consecutive surface pair by age, the counts of core trends.
    pair_trends : pandas.DataFrame
        The per-core trends behind ``region``: the interval between the two surfaces of
        each pair, at their picks or, where a surface is not picked, at the depth where the
        core's age model reaches its age (``picked`` is False then).
    depth_unit, age_unit : str
    settings : ReadingSettings
    """

    contacts: pd.DataFrame
    gaps: pd.DataFrame
    intervals: pd.DataFrame
    cores: pd.DataFrame
    turnarounds: pd.DataFrame
    surfaces: pd.DataFrame
    region: pd.DataFrame
    pair_trends: pd.DataFrame
    depth_unit: str = "m"
    age_unit: str = "ka"
    settings: ReadingSettings = field(default_factory=ReadingSettings)


def _age(model, depth: float) -> float:
    if model is None or not np.isfinite(depth):
        return float("nan")
    return float(np.asarray(model.age_at(np.asarray([depth], dtype=float)), dtype=float)[0])


def _nearest_pick(core: Core, depth: float) -> tuple[str, float]:
    best, dist = "", float("nan")
    for p in core.picks:
        d = abs(p.depth - depth)
        if not best or d < dist:
            best, dist = p.surface, d
    return best, dist


def _surface_depth(core: Core, surface: Surface, model, picked=None) -> tuple[float, bool]:
    """Depth of a surface in a core: its pick, else where the age model reaches its age.

    ``picked`` (surface name -> depth of its first pick) saves the search of the picks.
    """
    d = core.pick_depth(surface.name) if picked is None else picked.get(surface.name)
    if d is not None:
        return float(d), True
    if model is None or not core.intervals:
        return float("nan"), False
    # The age model is piecewise linear between picks, so sampling it densely with the
    # pick depths included and interpolating linearly is exact between samples.
    grid = np.unique(np.r_[np.linspace(core.top, core.base, 2001), [p.depth for p in core.picks]])
    grid = grid[(grid >= core.top) & (grid <= core.base)]
    ages = np.asarray(model.age_at(grid), dtype=float)
    diff = ages - surface.age
    ok = np.isfinite(diff)
    for i in range(len(grid) - 1):
        if not (ok[i] and ok[i + 1]):
            continue
        if diff[i] == 0:
            return float(grid[i]), False
        if diff[i] * diff[i + 1] < 0:
            f = diff[i] / (diff[i] - diff[i + 1])
            return float(grid[i] + f * (grid[i + 1] - grid[i])), False
    if len(grid) and ok[-1] and diff[-1] == 0:
        return float(grid[-1]), False
    return float("nan"), False


def _pick_best(turns, kind: str):
    cand = [t for t in turns if t.kind == kind]
    if not cand:
        return None
    sign = 1 if kind == "MFS" else -1
    # Most distal MFS (most proximal MRS); then the most pronounced; then the shallowest.
    return max(cand, key=lambda t: (sign * t.rank, min(t.change_below, t.change_above), -t.depth))


def read_cores(
    project: Project,
    age_models: Mapping[str, object] | None = None,
    settings: ReadingSettings | None = None,
) -> CoreReading:
    """Read every core of a project.

    Parameters
    ----------
    project : Project
    age_models : mapping of core_id to AgeModel, optional
        Objects with a vectorised ``age_at(depth)`` (NaN where undefined). Built with
        :func:`paleomap.agemodel.build_age_models` when not given.
    settings : ReadingSettings, optional

    Returns
    -------
    CoreReading

    Examples
    --------
    >>> reading = read_cores(project)  # doctest: +SKIP
    >>> reading.region[["interval", "n_deepening", "n_shallowing"]]  # doctest: +SKIP
    """
    st = settings or ReadingSettings.for_project(project)
    if age_models is None:
        from ..agemodel import build_age_models

        age_models = build_age_models(project)
    scheme = project.scheme
    ids = scheme.ids
    fam = scheme.family
    per_m = 1.0 / DEPTH_UNITS.get(project.depth_unit, 1.0)
    surfaces = {s.name: s for s in project.surfaces}
    pairs = surface_pairs(project.surfaces)

    contacts, gaps, intervals, cores, turns, picks, pair_rows = [], [], [], [], [], [], []

    def classify(profile: RankProfile):
        return classify_trend(
            profile, st.min_trend, st.min_change, st.spike_fraction, st.noise_thickness
        )

    for core in project.cores:
        model = age_models.get(core.core_id)
        pos = {"easting": core.easting, "northing": core.northing}
        cc = core_contacts(core, surfaces, st.contact_tolerance)
        for c in cc:
            contacts.append(
                {
                    "core_id": core.core_id,
                    "depth": c.depth,
                    "lower": ids[c.lower_rank],
                    "upper": ids[c.upper_rank],
                    "lower_rank": c.lower_rank,
                    "upper_rank": c.upper_rank,
                    "jump": c.jump,
                    "flag": c.flag,
                    "nearest_surface": c.nearest_surface,
                    "surface_distance": c.surface_distance,
                    "erosional_surface": c.erosional_surface,
                    **pos,
                }
            )
        gg = core_gaps(core)
        for g in gg:
            gaps.append(
                {
                    "core_id": core.core_id,
                    "top": g.top,
                    "base": g.base,
                    "thickness": g.thickness,
                    "lower": ids[g.lower_rank],
                    "upper": ids[g.upper_rank],
                    "jump": g.upper_rank - g.lower_rank,
                    **pos,
                }
            )
        for p in core.picks:
            picks.append({"core_id": core.core_id, "surface": p.surface, "depth": p.depth})

        full = RankProfile.from_core(core)
        trends: dict = {}  # (top, base) -> Trend: picked intervals and pairs share windows

        def trend(top, base, full=full, trends=trends):
            key = (float(top), float(base))
            if key not in trends:
                trends[key] = classify(full.clipped(top, base))
            return trends[key]

        ordered = sorted(core.picks, key=lambda p: p.depth)
        for young, old in zip(ordered[:-1], ordered[1:], strict=True):
            if old.depth <= young.depth:
                continue
            t = trend(young.depth, old.depth)
            intervals.append(
                {
                    "core_id": core.core_id,
                    "interval": f"{old.surface}-{young.surface}",
                    "older_surface": old.surface,
                    "younger_surface": young.surface,
                    "top": young.depth,
                    "base": old.depth,
                    "trend": t.trend,
                    "trend_grain": grain_word(t.trend, fam),
                    "sense": sense_word(t.trend),
                    "slope_rank_per_m": t.slope * per_m,
                    "rank_change": t.rank_change,
                    "n_intervals": t.n_intervals,
                }
            )

        picked = {p.surface: p.depth for p in reversed(core.picks)}  # first pick wins
        for older, younger in pairs:
            d_old, p_old = _surface_depth(core, older, model, picked)
            d_young, p_young = _surface_depth(core, younger, model, picked)
            if not (np.isfinite(d_old) and np.isfinite(d_young)) or d_old <= d_young:
                continue
            t = trend(d_young, d_old)
            pair_rows.append(
                {
                    "core_id": core.core_id,
                    "interval": f"{older.name}-{younger.name}",
                    "older_surface": older.name,
                    "younger_surface": younger.name,
                    "top": d_young,
                    "base": d_old,
                    "picked": p_old and p_young,
                    "trend": t.trend,
                }
            )

        whole = classify(full)
        tt = find_turnarounds(full, st.min_change, st.spike_fraction, st.noise_thickness)
        for ta in tt:
            name, dist = _nearest_pick(core, ta.depth)
            turns.append(
                {
                    "core_id": core.core_id,
                    "kind": ta.kind,
                    "depth": ta.depth,
                    "depth_top": ta.depth_top,
                    "depth_base": ta.depth_base,
                    "age": _age(model, ta.depth),
                    "rank": ta.rank,
                    "belt": ids[ta.rank],
                    "change_below": ta.change_below,
                    "change_above": ta.change_above,
                    "confidence": ta.confidence,
                    "cycle": ta.cycle,
                    "nearest_surface": name,
                    "surface_distance": dist,
                    **pos,
                }
            )
        mfs = _pick_best(tt, "MFS")
        mrs = _pick_best(tt, "MRS")
        nan = float("nan")
        cores.append(
            {
                "core_id": core.core_id,
                **pos,
                "n_intervals": len(core.intervals),
                "n_contacts": len(cc),
                "n_possible_breaks": sum(c.flag == "possible_break" for c in cc),
                "n_gaps": len(gg),
                "trend": whole.trend,
                "trend_grain": grain_word(whole.trend, fam),
                "sense": sense_word(whole.trend),
                "slope_rank_per_m": whole.slope * per_m,
                "rank_change": whole.rank_change,
                "n_mfs": sum(t.kind == "MFS" for t in tt),
                "n_mrs": sum(t.kind == "MRS" for t in tt),
                "mfs_depth": mfs.depth if mfs else nan,
                "mfs_age": _age(model, mfs.depth) if mfs else nan,
                "mrs_depth": mrs.depth if mrs else nan,
                "mrs_age": _age(model, mrs.depth) if mrs else nan,
            }
        )

    turn_df = pd.DataFrame(turns, columns=_TURN_COLUMNS)
    pick_df = pd.DataFrame(picks, columns=["core_id", "surface", "depth"])
    pair_df = pd.DataFrame(pair_rows, columns=_PAIR_COLUMNS)
    contact_df = pd.DataFrame(contacts, columns=_CONTACT_COLUMNS)
    reading = CoreReading(
        contacts=contact_df,
        gaps=pd.DataFrame(gaps, columns=_GAP_COLUMNS),
        intervals=pd.DataFrame(intervals, columns=_INTERVAL_COLUMNS),
        cores=pd.DataFrame(cores, columns=_CORE_COLUMNS),
        turnarounds=turn_df,
        surfaces=surface_alignment(turn_df, pick_df, project.surfaces, st.pick_tolerance),
        region=region_summary(pair_df, project.surfaces),
        pair_trends=pair_df,
        depth_unit=project.depth_unit,
        age_unit=project.age_unit,
        settings=st,
    )
    _log.debug(
        "read %d cores: %d contacts (%d possible breaks), %d suggested turnarounds",
        len(project.cores),
        len(contact_df),
        int((contact_df["flag"] == "possible_break").sum()),
        len(turn_df),
    )
    return reading


def _fmt(v: float) -> str:
    return f"{v:.2f}" if np.isfinite(v) else "n/a"


def summary_lines(reading: CoreReading, scheme: Scheme) -> list[str]:
    """The core reading as the lines ``paleomap check`` prints.

    Parameters
    ----------
    reading : CoreReading
    scheme : Scheme
        For the fining/coarsening words of a siliciclastic scheme.

    Returns
    -------
    list of str

    Examples
    --------
    >>> for line in summary_lines(read_cores(project), project.scheme):  # doctest: +SKIP
    ...     print(line)
    """
    u = reading.depth_unit
    c = reading.contacts
    flagged = c[c["flag"] == "possible_break"]
    n_eros = int((c["flag"] == "at_erosional_surface").sum())
    lines = [
        f"Core reading: {len(reading.cores)} cores, {len(c)} contacts, "
        f"{len(flagged)} possible breaks, {n_eros} belt jumps at erosional surfaces, "
        f"{len(reading.gaps)} gaps (no recovery)"
    ]
    if len(flagged):
        lines.append("Possible breaks (belts skipped with no erosional surface picked):")
        for r in flagged.itertuples(index=False):
            near = (
                f"nearest surface {r.nearest_surface} {_fmt(r.surface_distance)} {u} away"
                if r.nearest_surface
                else "no surface picked in this core"
            )
            lines.append(
                f"  {r.core_id} at {_fmt(r.depth)} {u}: {r.lower} -> {r.upper} "
                f"(jump {r.jump:+d}); {near}"
            )
    if len(reading.region):
        lines.append(
            "Stacking per interval (cores deepening / shallowing / aggrading / mixed upward):"
        )
        for r in reading.region.itertuples(index=False):
            text = (
                f"  {r.interval}: {r.n_deepening} / {r.n_shallowing} / {r.n_aggrading} / "
                f"{r.n_mixed} of {r.n_cores} cores"
            )
            if r.core_sense:
                trend = (
                    "deepening-upward" if r.core_sense == "transgression" else ("shallowing-upward")
                )
                word = grain_word(trend, scheme.family)
                text += f"; mostly {trend}" + (f" ({word})" if word else "")
                text += f", {r.core_sense}"
            lines.append(text)
    t = reading.turnarounds
    if len(t):
        n_mfs = int((t["kind"] == "MFS").sum())
        n_mrs = int((t["kind"] == "MRS").sum())
        lines.append(
            f"Suggested turnarounds: {n_mfs} maximum flooding, {n_mrs} maximum regressive "
            f"in {t['core_id'].nunique()} cores"
        )
        for r in reading.surfaces.itertuples(index=False):
            if r.n_picked and (r.n_mfs or r.n_mrs):
                lines.append(
                    f"  {r.surface}: picked in {r.n_picked} cores; suggested MFS at it in "
                    f"{r.n_mfs}, MRS in {r.n_mrs}"
                )
    else:
        lines.append("Suggested turnarounds: none")
    return lines
