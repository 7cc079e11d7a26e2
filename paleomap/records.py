"""Belt records of the cores in time: what a field engine is fitted to.

A record is one stretch of one core that logs one belt and is dated through the core's
age model: ``(core_id, easting, northing, age_top, age_base, rank)``, ``age_top`` the
age at its upper end (younger), ``age_base`` at its lower end (older). A logged interval
that crosses picks gives one record per age-model segment; a pick gives a point record
(``age_top == age_base``) since its depth records the surface's own age; stretches
without an age model (outside the picked range, below an erosional surface without a
borrowed rate) give none. A record holds the ages ``(age_top, age_base]``, and also
``age_top`` itself where ``closed_top`` (point records and the top of a core's first
interval), which is the contact rule of :meth:`paleomap.cores.Core.interval_at` in age:
at a contact the record above wins.

:meth:`Records.at` reads the records at any ages: at the ages of the slices it gives
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

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from collections.abc import Mapping

    from .agemodel import AgeModel
    from .project import Project

__all__ = ["Records", "build_records"]


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
        (n,) belt rank (0 = most proximal).
    closed_top : numpy.ndarray
        (n,) bool, whether ``age_top`` itself belongs to the record.
    """

    core_id: np.ndarray
    easting: np.ndarray
    northing: np.ndarray
    age_top: np.ndarray
    age_base: np.ndarray
    rank: np.ndarray
    closed_top: np.ndarray

    def __len__(self) -> int:
        return int(self.rank.size)

    def spanning(self, age: float) -> np.ndarray:
        """Indices of the records read at ``age``: at most one per core, in core order.

        Where a core has several records that hold the age (a pick point record and the
        stretch above it), the uppermost is read, as the contact rule says.
        """
        a = float(age)
        inside = (self.age_base >= a) & (
            (self.age_top < a) | (self.closed_top & (self.age_top == a))
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


def build_records(project: Project, age_models: Mapping[str, AgeModel]) -> Records:
    """Every dated belt record of every core of ``project``, cores in project order.

    Parameters
    ----------
    project : Project
    age_models : mapping of core id to AgeModel
        From :func:`paleomap.agemodel.build_age_models`.

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
    cols: dict[str, list] = {k: [] for k in ("id", "e", "n", "top", "base", "rank", "closed")}

    for core in project.cores:
        model = age_models.get(core.core_id)
        if model is None or not model.has_record or not core.intervals:
            continue
        tops, bases, ranks = core.rank_profile()
        zs = np.asarray(model.depths, dtype=float)
        nodes = np.asarray(model.ages, dtype=float)
        seg_top = np.asarray(model.segment_top_ages, dtype=float)
        seg_base = np.asarray(model.segment_base_ages, dtype=float)
        found = []  # (depth, order, top, base, rank, closed)
        for k, (z, a) in enumerate(zip(zs, nodes, strict=True)):
            r = core.interval_at(float(z))
            if r is not None:
                found.append((float(z), 0, k, float(a), float(a), r.rank, True))
        for k in range(zs.size - 1):
            t, b = seg_top[k], seg_base[k]
            z0, z1 = zs[k], zs[k + 1]
            if np.isnan(t) or z1 <= z0:
                continue
            for top, base, rank in zip(tops, bases, ranks, strict=True):
                u, lo = max(top, z0), min(base, z1)
                if lo <= u:
                    continue

                def age(z, t=t, b=b, z0=z0, z1=z1):
                    return float(t + (z - z0) / (z1 - z0) * (b - t))

                # the first interval's top holds its own depth (Core.interval_at)
                closed = bool(top == tops[0] and u == top and top > z0)
                found.append((float(u), 1, k, age(u), age(lo), int(rank), closed))
        # top down; at one depth the pick's point record before the stretch below it
        found.sort(key=lambda f: (f[0], f[1]))
        for _z, _o, _k, top, base, rank, closed in found:
            for key, v in zip(cols, (core.core_id, core.easting, core.northing, top, base,
                                     rank, closed), strict=True):  # fmt: skip
                cols[key].append(v)
    return Records(
        np.array(cols["id"], dtype=object),
        np.array(cols["e"], dtype=float),
        np.array(cols["n"], dtype=float),
        np.array(cols["top"], dtype=float),
        np.array(cols["base"], dtype=float),
        np.array(cols["rank"], dtype=np.int64),
        np.array(cols["closed"], dtype=bool),
    )
