"""Every core's whole record as dated spans: the input of the space-time field.

A core's log, read through its age model, says which belt lay at the core over every
age range the core records, not only at the slice ages. :func:`core_records` turns
each interval into one span per age-model segment it crosses (an interval that crosses
a pick is cut there, since the age model bends at picks and jumps at an erosional
one), with the age uncertainty at its two ends. The time missing below an erosional
surface becomes a *censored* span: the core recorded nothing then, but the erosion
says that the place stood above base level, so the belt was on the non-marine side
of the shoreline.

Age uncertainty of a span end combines the surfaces' own ``age_sd`` (interpolated
between the two picks of its segment) with the age model's: constant accumulation
between picks is an assumption whose error grows away from the picks, taken as
``age_model_sd`` (a fraction) times the age distance to the nearer pick, and for a
segment whose rate is borrowed (below an erosional surface) times the distance to the
pick below it.

Examples
--------
>>> from paleomap.cores import Core, Interval, Pick
>>> from paleomap.agemodel import build_age_model
>>> from paleomap.project import Surface
>>> core = Core("A", 10.0, 20.0, intervals=(Interval(10.0, 20.0, 2), Interval(20.0, 30.0, 1)),
...             picks=(Pick("s1", 10.0), Pick("s2", 30.0)))
>>> m = build_age_model(core, [Surface("s1", 100.0), Surface("s2", 300.0)])
>>> t = core_records([core], {"A": m}, {"s1": 0.0, "s2": 0.0}, n_belts=3, shore_rank=2)
>>> t[["age_top", "age_base", "rank_low", "rank_high"]].to_numpy().tolist()
[[100.0, 200.0, 2.0, 2.0], [200.0, 300.0, 1.0, 1.0]]
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import pandas as pd

__all__ = ["RECORD_COLUMNS", "core_records", "project_records"]

RECORD_COLUMNS = (
    "core_id",
    "easting",
    "northing",
    "age_top",
    "age_base",
    "age_sd_top",
    "age_sd_base",
    "rank_low",
    "rank_high",
    "censored",
)
"""Columns of a records table: one dated span of one core per row. ``rank_low`` to
``rank_high`` (inclusive) are the belts the span allows: one logged belt, or every
non-marine belt for a censored span below an erosional surface."""


def core_records(
    cores: Sequence,
    age_models: Mapping,
    age_sd: Mapping[str, float],
    *,
    n_belts: int,
    shore_rank: int | None,
    age_model_sd: float = 0.1,
) -> pd.DataFrame:
    """Dated spans of every core's logged intervals and erosional gaps.

    Parameters
    ----------
    cores : sequence of Core
    age_models : mapping of core id to AgeModel
    age_sd : mapping of surface name to its age's standard deviation
    n_belts : int
    shore_rank : int or None
        Rank of the most proximal marine belt; ``None`` (an all-marine or
        all-non-marine scheme) leaves erosional gaps out.
    age_model_sd : float
        Standard deviation of the age model's own error, as a fraction of the age
        distance to the nearer pick.

    Returns
    -------
    pandas.DataFrame
        Columns :data:`RECORD_COLUMNS`, cores in the given order, spans top down.
    """
    rows: dict[str, list] = {c: [] for c in RECORD_COLUMNS}

    def add(core, a0, a1, s0, s1, lo, hi, censored):
        rows["core_id"].append(core.core_id)
        rows["easting"].append(float(core.easting))
        rows["northing"].append(float(core.northing))
        rows["age_top"].append(float(a0))
        rows["age_base"].append(float(a1))
        rows["age_sd_top"].append(float(s0))
        rows["age_sd_base"].append(float(s1))
        rows["rank_low"].append(int(lo))
        rows["rank_high"].append(int(hi))
        rows["censored"].append(bool(censored))

    for core in cores:
        model = age_models.get(core.core_id)
        if model is None or model.n_segments == 0:
            continue
        zs = model.depths
        for k in range(model.n_segments):
            top, base = model.segment_top_ages[k], model.segment_base_ages[k]
            if math.isnan(top) or not zs[k + 1] > zs[k]:
                continue
            sd_top = age_sd.get(model.surfaces[k], 0.0)
            sd_base = age_sd.get(model.surfaces[k + 1], 0.0)
            borrowed = model.borrowed[k]

            def sd_at(age, top=top, base=base, sd_top=sd_top, sd_base=sd_base, b=borrowed):
                f = (age - top) / (base - top) if base > top else 0.0
                own = (base - age) if b else min(age - top, base - age)
                return math.hypot(sd_top + f * (sd_base - sd_top), age_model_sd * own)

            if shore_rank is not None and top > model.ages[k]:
                # the hiatus below an erosional surface: non-marine then
                add(core, model.ages[k], top, sd_top, sd_at(top), 0, shore_rank - 1, True)
            for iv in core.intervals:
                z0, z1 = max(iv.top, zs[k]), min(iv.base, zs[k + 1])
                if not z1 > z0:
                    continue
                a0 = top + (z0 - zs[k]) / (zs[k + 1] - zs[k]) * (base - top)
                a1 = top + (z1 - zs[k]) / (zs[k + 1] - zs[k]) * (base - top)
                add(core, a0, a1, sd_at(a0), sd_at(a1), iv.rank, iv.rank, False)
    table = pd.DataFrame(rows)
    return table.astype(
        {
            "core_id": object,
            "easting": float,
            "northing": float,
            "age_top": float,
            "age_base": float,
            "age_sd_top": float,
            "age_sd_base": float,
            "rank_low": "int64",
            "rank_high": "int64",
            "censored": bool,
        }
    )


def project_records(project, age_models: Mapping, *, age_model_sd: float = 0.1) -> pd.DataFrame:
    """:func:`core_records` of a whole project (its cores, surfaces and scheme).

    Examples
    --------
    >>> table = project_records(project, build_age_models(project))  # doctest: +SKIP
    """
    scheme = project.scheme
    return core_records(
        project.cores,
        age_models,
        {s.name: float(s.age_sd or 0.0) for s in project.surfaces},
        n_belts=scheme.n_belts,
        shore_rank=scheme.shoreline_boundary,
        age_model_sd=age_model_sd,
    )
