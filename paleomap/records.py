"""Belt records of the cores in time: what a field engine is fitted to.

A record is one stretch of one core that logs one belt and is dated through the core's
age model: ``(core_id, easting, northing, age_top, age_base, rank)``, ``age_top`` the
age at its upper end (younger), ``age_base`` at its lower end (older). A logged interval
that crosses picks gives one record per age-model segment; a pick gives a point record
(``age_top == age_base``) since its depth records the surface's own age; stretches
without an age model (outside the picked range, below an erosional surface without a
borrowed rate) give none.

A record holds the ages ``(age_top, age_base]``, and also
``age_top`` itself where ``closed_top`` (point records and the top of a core's first
interval), which is the contact rule of :meth:`paleomap.cores.Core.interval_at` in age:
at a contact the record above wins.

Each record also carries the standard deviation of its two end ages: the surfaces' own
``age_sd`` (interpolated between the two picks of its segment) combined with the age
model's error, since constant accumulation between picks is an assumption whose error
grows away from the picks (``age_model_sd``, a fraction, times the age distance to the
nearer pick; for a segment whose rate is borrowed below an erosional surface, to the
pick below it). The time missing below an erosional surface becomes a *censored*
record: the core recorded nothing then, but the erosion says the place stood above
base level, so the belt was on the non-marine side of the shoreline (``rank`` to
``rank_high``, every non-marine belt). Engines that read the records at slice ages
skip censored records; an engine over the whole succession uses them.

:meth:`Records.spanning` reads the records at any ages: at the ages of the slices it gives
exactly what :func:`paleomap.agemodel.sample_slices` gives (a test holds the two
together), which is how an engine that maps slice by slice conditions on them, while
an engine over the whole succession can use every record's span.

Examples
--------
>>> r = Records(np.array(["A", "A"], object), np.zeros(2), np.zeros(2),
...             np.array([100.0, 150.0]), np.array([150.0, 300.0]), np.array([2, 0]),
...             np.array([True, False]))
>>> r.ranks_at(150.0).tolist(), r.ranks_at(151.0).tolist(), r.ranks_at(99.0).tolist()
([2], [0], [])
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from collections.abc import Mapping

    from .agemodel import AgeModel
    from .project import Project

__all__ = ["AGE_MODEL_SD", "Records", "build_records"]

AGE_MODEL_SD = 0.1
"""Standard deviation of the age model's own error, as a fraction of the age distance
to the nearer pick (common practice for a constant-accumulation age model; no single
source)."""


@dataclass(frozen=True, eq=False)
class Records:
    """Dated belt records of the cores, core by core, top down within a core.

    Attributes
    ----------
    core_id : numpy.ndarray
        (n,) core id of each record (object).
    easting, northing : numpy.ndarray
        (n,) core position, working CRS metres.
    age_top, age_base : numpy.ndarray
        (n,) ages at the record's upper and lower end, project age unit,
        ``age_top <= age_base``.
    rank : numpy.ndarray
        (n,) belt rank (0 = most proximal); the lowest rank a censored record allows.
    closed_top : numpy.ndarray
        (n,) bool, whether ``age_top`` itself belongs to the record.
    age_sd_top, age_sd_base : numpy.ndarray, optional
        (n,) standard deviation of the end ages (zeros when not given).
    rank_high : numpy.ndarray, optional
        (n,) the highest rank the record allows (``rank`` when not given).
    censored : numpy.ndarray, optional
        (n,) bool, a censored record below an erosional surface (False when not given).
    """

    core_id: np.ndarray
    easting: np.ndarray
    northing: np.ndarray
    age_top: np.ndarray
    age_base: np.ndarray
    rank: np.ndarray
    closed_top: np.ndarray
    age_sd_top: np.ndarray | None = None
    age_sd_base: np.ndarray | None = None
    rank_high: np.ndarray | None = None
    censored: np.ndarray | None = None

    def __post_init__(self) -> None:
        n = self.rank.size
        defaults = {
            "age_sd_top": np.zeros(n),
            "age_sd_base": np.zeros(n),
            "rank_high": self.rank,
            "censored": np.zeros(n, dtype=bool),
        }
        for name, value in defaults.items():
            if getattr(self, name) is None:
                object.__setattr__(self, name, value)

    def __len__(self) -> int:
        return int(self.rank.size)

    def appended(self, other: Records) -> Records:
        """These records followed by ``other``'s (every column)."""
        return Records(*(np.r_[getattr(self, f), getattr(other, f)] for f in _FIELDS))

    def select(self, keep: np.ndarray) -> Records:
        """The records where the boolean mask ``keep`` is true (every column)."""
        return Records(*(getattr(self, f)[keep] for f in _FIELDS))

    def spanning(self, age: float) -> np.ndarray:
        """Indices of the records read at ``age``: at most one per core, in core order.

        Where a core has several records that hold the age (a pick point record and the
        stretch above it), the uppermost is read, as the contact rule says.
        """
        a = float(age)
        inside = (
            (self.age_base >= a)
            & ((self.age_top < a) | (self.closed_top & (self.age_top == a)))
            & ~self.censored
        )
        idx = np.flatnonzero(inside)
        if idx.size < 2:
            return idx
        first = np.ones(idx.size, dtype=bool)
        first[1:] = self.core_id[idx[1:]] != self.core_id[idx[:-1]]
        return idx[first]

    def ranks_at(self, age: float) -> np.ndarray:
        """Belt rank of every core with a record at ``age``, in core order."""
        return self.rank[self.spanning(age)]

    def cores(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(core ids, easting, northing) of the cores with at least one record, in order."""
        if not len(self):
            return np.array([], object), np.array([]), np.array([])
        first = np.ones(self.rank.size, dtype=bool)
        first[1:] = self.core_id[1:] != self.core_id[:-1]
        return self.core_id[first], self.easting[first], self.northing[first]


def build_records(
    project: Project,
    age_models: Mapping[str, AgeModel],
    *,
    age_model_sd: float = AGE_MODEL_SD,
) -> Records:
    """Every dated belt record of every core of ``project``, cores in project order,
    with the end ages' uncertainty and the censored records below erosional surfaces.

    Parameters
    ----------
    project : Project
    age_models : mapping of core id to AgeModel
        From :func:`paleomap.agemodel.build_age_models`.
    age_model_sd : float
        The age model's own error, a fraction of the age distance to the nearer pick.

    Returns
    -------
    Records

    Examples
    --------
    >>> from paleomap.agemodel import build_age_model
    >>> from paleomap.cores import Core, Interval, Pick
    >>> from paleomap.project import Surface
    >>> core = Core("A", 0.0, 0.0, intervals=(Interval(0.0, 20.0, 3), Interval(20.0, 40.0, 1)),
    ...             picks=(Pick("s1", 10.0), Pick("s2", 30.0)))
    >>> m = build_age_model(core, [Surface("s1", 100.0), Surface("s2", 300.0)])
    >>> class P: cores = (core,)
    >>> r = build_records(P, {"A": m})
    >>> list(zip(r.age_top.tolist(), r.age_base.tolist(), r.rank.tolist()))
    [(100.0, 100.0, 3), (100.0, 200.0, 3), (200.0, 300.0, 1), (300.0, 300.0, 1)]
    """
    keys = ("id", "e", "n", "top", "base", "rank", "closed", "sd_top", "sd_base", "high", "cens")
    cols: dict[str, list] = {k: [] for k in keys}
    age_sd = {s.name: float(s.age_sd or 0.0) for s in getattr(project, "surfaces", ())}
    scheme = getattr(project, "scheme", None)
    shore = scheme.shoreline_boundary if scheme is not None else None

    for core in project.cores:
        model = age_models.get(core.core_id)
        if model is None or not model.has_record or not core.intervals:
            continue
        tops, bases, ranks = core.rank_profile()
        zs = np.asarray(model.depths, dtype=float)
        nodes = np.asarray(model.ages, dtype=float)
        seg_top = np.asarray(model.segment_top_ages, dtype=float)
        seg_base = np.asarray(model.segment_base_ages, dtype=float)
        # (depth, order, top, base, rank, closed, sd_top, sd_base, rank_high, censored)
        found = []
        for k, (z, a) in enumerate(zip(zs, nodes, strict=True)):
            r = core.interval_at(float(z))
            if r is not None:
                sd = age_sd.get(model.surfaces[k], 0.0)
                found.append((float(z), 0, float(a), float(a), r.rank, True, sd, sd, r.rank, False))
        for k in range(zs.size - 1):
            t, b = seg_top[k], seg_base[k]
            z0, z1 = zs[k], zs[k + 1]
            if np.isnan(t) or z1 <= z0:
                continue
            sd = _EndAgeSd(
                t,
                b,
                age_sd.get(model.surfaces[k], 0.0),
                age_sd.get(model.surfaces[k + 1], 0.0),
                bool(model.borrowed[k]),
                age_model_sd,
            )
            if shore is not None and shore > 0 and t > nodes[k]:
                # the time missing below an erosional surface: non-marine then
                found.append((float(z0), 0.5, float(nodes[k]), float(t), 0, False,
                              sd.sd_top, sd.at(t), shore - 1, True))  # fmt: skip
            for top, base, rank in zip(tops, bases, ranks, strict=True):
                u, lo = max(top, z0), min(base, z1)
                if lo <= u:
                    continue

                def age(z, t=t, b=b, z0=z0, z1=z1):
                    return float(t + (z - z0) / (z1 - z0) * (b - t))

                # the first interval's top holds its own depth (Core.interval_at)
                closed = bool(top == tops[0] and u == top and top > z0)
                a0, a1 = age(u), age(lo)
                found.append((float(u), 1, a0, a1, int(rank), closed, sd.at(a0), sd.at(a1),
                              int(rank), False))  # fmt: skip
        # top down; at one depth the pick's point record, the erosional gap, then the
        # stretch below it
        found.sort(key=lambda f: (f[0], f[1]))
        for f in found:
            values = (core.core_id, core.easting, core.northing, *f[2:])
            for key, v in zip(cols, values, strict=True):
                cols[key].append(v)
    return Records(
        np.array(cols["id"], dtype=object),
        np.array(cols["e"], dtype=float),
        np.array(cols["n"], dtype=float),
        np.array(cols["top"], dtype=float),
        np.array(cols["base"], dtype=float),
        np.array(cols["rank"], dtype=np.int64),
        np.array(cols["closed"], dtype=bool),
        np.array(cols["sd_top"], dtype=float),
        np.array(cols["sd_base"], dtype=float),
        np.array(cols["high"], dtype=np.int64),
        np.array(cols["cens"], dtype=bool),
    )


_FIELDS = (
    "core_id",
    "easting",
    "northing",
    "age_top",
    "age_base",
    "rank",
    "closed_top",
    "age_sd_top",
    "age_sd_base",
    "rank_high",
    "censored",
)


@dataclass(frozen=True)
class _EndAgeSd:
    """Standard deviation of an age inside one age-model segment (top to base)."""

    top: float
    base: float
    sd_top: float
    sd_base: float
    borrowed: bool
    fraction: float

    def at(self, age: float) -> float:
        span = self.base - self.top
        f = (age - self.top) / span if span > 0 else 0.0
        own = (self.base - age) if self.borrowed else min(age - self.top, self.base - age)
        own = max(own, 0.0)
        return math.hypot(self.sd_top + f * (self.sd_base - self.sd_top), self.fraction * own)
