"""Age models of cores and the facies each core records at a time slice.

An age model turns depth in a core into age and back. It is piecewise linear through
the core's picks (constant accumulation between two dated surfaces) and is defined
only from the first to the last pick: paleomap never extrapolates.

Erosional surfaces
------------------
Time is missing below an erosional surface, so the ages above and below it do not
join. The segment just below an erosional surface (from its pick down to the next
pick) is given the accumulation rate of the nearest conformable segment of the same
core, searching downward first, then upward, and is anchored at the pick below it.
Its youngest preserved sediment is then older than the surface; the ages between are
a hiatus with no record. Where the borrowed rate would need more time than the two
surfaces span, the segment's top is clipped at the surface age: the segment is the
straight line between the two picks and no missing time can be resolved. A core with no
conformable segment to borrow from has no age model in that segment (no record).

Depths exactly at a pick take the surface's age; a depth just below an erosional pick
takes the older age of the segment below. A slice at a surface is sampled at the
surface's pick depth in each core that has the pick (through the age model in a core
that has not), and a depth that falls on a contact between two intervals reads the
interval just above it (:meth:`paleomap.cores.Core.interval_at`): the sediment resting on
the surface is what was being laid down at the surface's age.

An **erosional** surface is different: what rests on it was laid down after the erosion,
and what lay at the surface when it formed was cut away. A slice at an erosional surface
therefore reads, in each core that picks it, the deposit just **beneath** the pick: the
youngest record the erosion left, older than the surface by the missing time. The build
notes that such a slice maps the preserved record beneath the surface, not the
landscape at its age (``docs/inputs.md``; ``read_beneath_erosion`` in its quality row).

Examples
--------
Two surfaces, 10 m at 100 ka and 30 m at 300 ka (common practice; see REFERENCES.md):

>>> from paleomap.cores import Core, Interval, Pick
>>> from paleomap.project import Surface
>>> core = Core("A", 0.0, 0.0, intervals=(Interval(0.0, 40.0, 2),),
...             picks=(Pick("s1", 10.0), Pick("s2", 30.0)))
>>> model = build_age_model(core, [Surface("s1", 100.0), Surface("s2", 300.0)])
>>> float(model.age_at(20.0)), float(model.depth_at(200.0))
(200.0, 20.0)
>>> model.rates()
(0.1,)
"""

from __future__ import annotations

import logging
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from .cores import Core

if TYPE_CHECKING:
    from .project import Project, Slice, Surface

__all__ = [
    "SAMPLE_COLUMNS",
    "AgeModel",
    "build_age_model",
    "build_age_models",
    "facies_at",
    "sample_slices",
]

logger = logging.getLogger(__name__)

SAMPLE_COLUMNS = ("core_id", "slice", "age", "belt", "rank", "depth", "easting", "northing")
"""Columns of the table :func:`sample_slices` returns."""


@dataclass(frozen=True)
class AgeModel:
    """Piecewise-linear age-depth model of one core.

    Built by :func:`build_age_model`. Depths are in the project's depth unit, ages in
    its age unit.

    Parameters
    ----------
    core_id : str
    depths : tuple of float
        Pick depths, top down (the nodes of the model).
    ages : tuple of float
        Age of the surface at each pick.
    surfaces : tuple of str
        Surface name at each pick.
    erosional : tuple of bool
        Whether the surface at each pick is erosional.
    segment_top_ages, segment_base_ages : tuple of float
        Age at the top and base of each segment between consecutive picks; NaN where the
        segment has no age model. Below an erosional pick the top age is older than
        the surface (the hiatus).
    borrowed : tuple of bool
        Whether each segment's rate was borrowed from a conformable segment.
    """

    core_id: str
    depths: tuple[float, ...]
    ages: tuple[float, ...]
    surfaces: tuple[str, ...]
    erosional: tuple[bool, ...]
    segment_top_ages: tuple[float, ...]
    segment_base_ages: tuple[float, ...]
    borrowed: tuple[bool, ...]
    _arrays: tuple = field(default=(), init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        arrays = (
            np.asarray(self.depths, dtype=float),
            np.asarray(self.ages, dtype=float),
            np.asarray(self.segment_top_ages, dtype=float),
            np.asarray(self.segment_base_ages, dtype=float),
        )
        object.__setattr__(self, "_arrays", arrays)

    @property
    def n_segments(self) -> int:
        return max(len(self.depths) - 1, 0)

    @property
    def has_record(self) -> bool:
        """Whether the model dates anything (at least one pick)."""
        return bool(self.depths)

    def age_at(self, depth):
        """Age at a depth (NaN outside the first-to-last pick range or without a model).

        Parameters
        ----------
        depth : float or array_like

        Returns
        -------
        float or numpy.ndarray
            Same shape as ``depth``.

        Examples
        --------
        >>> m = AgeModel("A", (10.0, 30.0), (100.0, 300.0), ("a", "b"), (False, False),
        ...              (100.0,), (300.0,), (False,))
        >>> m.age_at([10.0, 20.0, 31.0]).tolist()
        [100.0, 200.0, nan]
        """
        z = np.asarray(depth, dtype=float)
        zs, nodes, top, base = self._arrays
        out = np.full(z.shape, np.nan)
        if zs.size == 0:
            return _scalar(out, depth)
        at_first = z == zs[0]
        out[at_first] = nodes[0]
        if zs.size > 1:
            # Segment k holds depths in (zs[k], zs[k+1]]: a depth on a pick belongs to
            # the segment above it, so it takes the surface's own age.
            k = np.searchsorted(zs, z, side="left") - 1
            inside = (k >= 0) & (k < zs.size - 1) & ~at_first
            kk = np.where(inside, k, 0)
            thick = zs[kk + 1] - zs[kk]
            frac = np.divide(z - zs[kk], thick, out=np.zeros(z.shape), where=thick > 0)
            value = top[kk] + frac * (base[kk] - top[kk])
            out = np.where(inside, value, out)
        return _scalar(out, depth)

    def depth_at(self, age):
        """Depth that records an age (NaN where the core has no record of it).

        Ages in a hiatus below an erosional surface, outside the first-to-last pick
        range or in a segment without a model have no record.

        Parameters
        ----------
        age : float or array_like

        Returns
        -------
        float or numpy.ndarray
            Same shape as ``age``.

        Examples
        --------
        >>> m = AgeModel("A", (10.0, 30.0), (100.0, 300.0), ("a", "b"), (False, False),
        ...              (100.0,), (300.0,), (False,))
        >>> m.depth_at([100.0, 250.0, 50.0]).tolist()
        [10.0, 25.0, nan]
        """
        a = np.asarray(age, dtype=float)
        zs, nodes, top, base = self._arrays
        out = np.full(a.shape, np.nan)
        done = np.zeros(a.shape, dtype=bool)
        # A surface's age is recorded at its pick, the shallowest one first.
        for k in range(zs.size):
            hit = ~done & (a == nodes[k])
            out[hit] = zs[k]
            done |= hit
        for k in range(self.n_segments):
            t, b = top[k], base[k]
            if math.isnan(t):
                continue
            hiatus = t > nodes[k]
            lower_ok = (a > t) if hiatus else (a >= t)
            hit = ~done & lower_ok & (a <= b)
            if not hit.any():
                continue
            span = b - t
            frac = (a[hit] - t) / span if span > 0 else np.zeros(int(hit.sum()))
            out[hit] = zs[k] + frac * (zs[k + 1] - zs[k])
            done |= hit
        return _scalar(out, age)

    def rates(self) -> tuple[float, ...]:
        """Accumulation rate of each segment, depth unit per age unit (NaN without a model).

        >>> m = AgeModel("A", (10.0, 30.0), (100.0, 300.0), ("a", "b"), (False, False),
        ...              (100.0,), (300.0,), (False,))
        >>> m.rates()
        (0.1,)
        """
        zs, _, top, base = self._arrays
        out = []
        for k in range(self.n_segments):
            duration = base[k] - top[k]
            thick = zs[k + 1] - zs[k]
            out.append(float(thick / duration) if duration > 0 else float("nan"))
        return tuple(out)

    def hiatuses(self) -> tuple[tuple[str, float, float], ...]:
        """Missing time below each erosional pick: (surface, younger age, older age).

        The younger age is the surface's; the older is the youngest preserved sediment
        below it. A segment without a model is reported with NaN as its older age.
        """
        out = []
        for k in range(self.n_segments):
            if self.erosional[k]:
                t = self.segment_top_ages[k]
                if math.isnan(t) or t > self.ages[k]:
                    out.append((self.surfaces[k], self.ages[k], t))
        return tuple(out)


def _scalar(out: np.ndarray, given):
    return float(out) if np.ndim(given) == 0 else out


def build_age_model(core: Core, surfaces: Sequence[Surface] | Mapping[str, Surface]) -> AgeModel:
    """Age model of a core from its picks and the surfaces' ages.

    Parameters
    ----------
    core : Core
        A validated core (its picks name known surfaces, in a consistent order).
    surfaces : sequence of Surface, or mapping of name to Surface

    Returns
    -------
    AgeModel

    Raises
    ------
    KeyError
        If a pick names a surface that is not given.

    Examples
    --------
    An erosional surface at 10 m (100 ka) over 20 m of section down to 300 ka, with a
    conformable segment below accumulating 0.2 m/kyr: the section just below the
    surface is anchored at 30 m with the borrowed rate, so it starts at 200 ka.

    >>> from paleomap.cores import Core, Interval, Pick
    >>> from paleomap.project import Surface
    >>> core = Core("A", 0.0, 0.0, intervals=(Interval(0.0, 60.0, 1),),
    ...             picks=(Pick("e", 10.0), Pick("b", 30.0), Pick("c", 50.0)))
    >>> s = [Surface("e", 100.0, erosional=True), Surface("b", 300.0), Surface("c", 400.0)]
    >>> m = build_age_model(core, s)
    >>> m.segment_top_ages, m.hiatuses()
    ((200.0, 300.0), (('e', 100.0, 200.0),))
    """
    lookup = surfaces if isinstance(surfaces, Mapping) else {s.name: s for s in surfaces}
    picks = sorted(core.picks, key=lambda p: (p.depth, lookup[p.surface].age))
    depths = tuple(float(p.depth) for p in picks)
    ages = tuple(float(lookup[p.surface].age) for p in picks)
    names = tuple(p.surface for p in picks)
    erosional = tuple(bool(lookup[p.surface].erosional) for p in picks)
    n = len(picks)

    def conformable_rate(j: int) -> float | None:
        if erosional[j]:
            return None
        dz, da = depths[j + 1] - depths[j], ages[j + 1] - ages[j]
        return dz / da if dz > 0 and da > 0 else None

    tops, bases, borrowed = [], [], []
    for k in range(n - 1):
        if not erosional[k]:
            tops.append(ages[k])
            bases.append(ages[k + 1])
            borrowed.append(False)
            continue
        rate = None
        for j in [*range(k + 1, n - 1), *range(k - 1, -1, -1)]:
            rate = conformable_rate(j)
            if rate is not None:
                break
        if rate is None:
            tops.append(float("nan"))
            bases.append(float("nan"))
            borrowed.append(False)
            continue
        anchored = ages[k + 1] - (depths[k + 1] - depths[k]) / rate
        tops.append(max(anchored, ages[k]))
        bases.append(ages[k + 1])
        borrowed.append(True)
    return AgeModel(
        core.core_id, depths, ages, names, erosional, tuple(tops), tuple(bases), tuple(borrowed)
    )


def build_age_models(project: Project) -> dict[str, AgeModel]:
    """Age model of every core of a project, keyed by core id.

    Examples
    --------
    >>> models = build_age_models(project)  # doctest: +SKIP
    >>> models["C-01"].age_at(12.5)  # doctest: +SKIP
    """
    return {core.core_id: build_age_model(core, project.surfaces) for core in project.cores}


def facies_at(core: Core, model: AgeModel, age: float) -> int | None:
    """Belt rank a core records at an age, or None for no record.

    No record: the age is outside the core's dated range, in a hiatus, or falls in a
    gap of the log.

    Examples
    --------
    >>> from paleomap.cores import Core, Interval, Pick
    >>> from paleomap.project import Surface
    >>> core = Core("A", 0.0, 0.0, intervals=(Interval(0.0, 20.0, 3), Interval(20.0, 40.0, 1)),
    ...             picks=(Pick("s1", 10.0), Pick("s2", 30.0)))
    >>> m = build_age_model(core, [Surface("s1", 100.0), Surface("s2", 300.0)])
    >>> facies_at(core, m, 150.0), facies_at(core, m, 250.0), facies_at(core, m, 50.0)
    (3, 1, None)
    """
    depth = model.depth_at(float(age))
    if math.isnan(depth):
        return None
    interval = core.interval_at(depth)
    return None if interval is None else interval.rank


def _ranks_at(core: Core, depths: np.ndarray) -> np.ndarray:
    """Rank at each depth (-1 for no record), with the contact rule of Core.interval_at."""
    tops, bases, ranks = core.rank_profile()
    out = np.full(depths.shape, -1, dtype=int)
    if tops.size == 0:
        return out
    valid = ~np.isnan(depths)
    d = np.where(valid, depths, tops[0] - 1.0)
    i = np.searchsorted(bases, d, side="left")
    inside = i < tops.size
    ii = np.where(inside, i, 0)
    hit = valid & inside & ((tops[ii] < d) | ((ii == 0) & (d == tops[0])))
    out[hit] = ranks[ii[hit]]
    return out


def sample_slices(
    project: Project,
    slices: Sequence[Slice] | None = None,
    age_models: Mapping[str, AgeModel] | None = None,
) -> pd.DataFrame:
    """The belt each core records at each slice.

    Parameters
    ----------
    project : Project
    slices : sequence of Slice, optional
        Defaults to ``project.slices``. Any ages work (e.g. many ages for a
        chronostratigraphic chart); a slice with ``surface`` set is read at the pick of
        that surface where a core has it.
    age_models : mapping of core id to AgeModel, optional
        Defaults to :func:`build_age_models`.

    Returns
    -------
    pandas.DataFrame
        One row per (core, slice) with a record, slices in the given order and cores in
        project order: ``core_id``, ``slice``, ``age``, ``belt`` (belt id), ``rank``,
        ``depth`` (depth unit), ``easting``, ``northing`` (working CRS). Cores with no
        record at a slice are left out of it.

    Examples
    --------
    >>> table = sample_slices(project)  # doctest: +SKIP
    >>> table.groupby("slice").size()  # doctest: +SKIP
    """
    slices = tuple(project.slices if slices is None else slices)
    models = build_age_models(project) if age_models is None else age_models
    ids = project.scheme.ids
    ages = np.array([s.age for s in slices], dtype=float)
    columns: dict[str, list] = {c: [] for c in SAMPLE_COLUMNS}
    per_slice_depths = []
    for core in project.cores:
        model = models.get(core.core_id)
        if model is None:
            per_slice_depths.append(np.full(len(slices), np.nan))
            continue
        depths = np.atleast_1d(model.depth_at(ages)).astype(float)
        for j, sl in enumerate(slices):
            if sl.surface is not None:
                pick = core.pick_depth(sl.surface)
                if pick is not None:
                    depths[j] = pick
        per_slice_depths.append(depths)
    # at an erosional surface's pick, read the deposit beneath it: a depth a hair below
    # the pick reads the interval under a contact (Core.interval_at reads the one above)
    erosional = {s.name for s in project.surfaces if s.erosional}
    ranks = []
    for core, depths in zip(project.cores, per_slice_depths, strict=True):
        read = depths.copy()
        span = max(abs(core.base - core.top), 1.0) if core.intervals else 1.0
        for j, sl in enumerate(slices):
            if sl.surface in erosional and core.pick_depth(sl.surface) is not None:
                read[j] = depths[j] + 1e-9 * span
        ranks.append(_ranks_at(core, read))
    for j, sl in enumerate(slices):
        for c, core in enumerate(project.cores):
            r = int(ranks[c][j])
            if r < 0:
                continue
            columns["core_id"].append(core.core_id)
            columns["slice"].append(sl.name)
            columns["age"].append(float(sl.age))
            columns["belt"].append(ids[r])
            columns["rank"].append(r)
            columns["depth"].append(float(per_slice_depths[c][j]))
            columns["easting"].append(core.easting)
            columns["northing"].append(core.northing)
    table = pd.DataFrame(columns)
    table = table.astype(
        {
            "core_id": object,
            "slice": object,
            "age": float,
            "belt": object,
            "rank": "int64",
            "depth": float,
            "easting": float,
            "northing": float,
        }
    )
    logger.debug("sampled %d slices: %d records", len(slices), len(table))
    return table
