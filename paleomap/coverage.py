"""Whether the tracked boundary crosses the cores at each slice, and ages where it does.

A map places a boundary between cores on its two sides. Where every core with a record
at a slice lies on the same side of the tracked boundary (a maximum flooding that drowned
every core, a lowstand that exposed them all), the boundary is outside the cored area
and the slice's shoreline position is only a bound. ``paleomap check`` then suggests free
ages (slices between the surfaces) at which the boundary does cross the cores, nearest
the slice on either side.

Rule
----
* A slice **crosses** the boundary ``b`` when at least one core records a belt of rank
  below ``b`` (proximal side) and at least one a belt of rank ``b`` or more (distal side).
* Candidate free ages are taken every ``step`` (default: the span of the surfaces' ages
  over 200) between the oldest and the youngest surface; for a slice that does not cross,
  the suggestions are the nearest candidate older and the nearest younger than it at
  which the boundary crosses, rounded to three significant figures of the step.

Examples
--------
>>> import pandas as pd
>>> samples = pd.DataFrame({"slice": ["A", "A", "B", "B"], "rank": [1, 3, 3, 4]})
>>> t = boundary_coverage(samples, 2)
>>> t[["slice", "n_proximal", "n_distal", "crosses"]].values.tolist()
[['A', 1, 1, True], ['B', 0, 2, False]]
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np
import pandas as pd

from .agemodel import build_age_models, sample_slices
from .project import Project, Slice

__all__ = ["boundary_coverage", "suggest_free_ages"]


def boundary_coverage(samples: pd.DataFrame, boundary: int) -> pd.DataFrame:
    """Per slice, the cores on each side of boundary ``boundary`` and whether it crosses.

    Parameters
    ----------
    samples : pandas.DataFrame
        With ``slice`` and ``rank`` (as from :func:`paleomap.agemodel.sample_slices`).
    boundary : int
        Boundary index ``b`` (between ranks ``b - 1`` and ``b``).

    Returns
    -------
    pandas.DataFrame
        ``slice, n_proximal, n_distal, crosses``, slices in order of first appearance.
    """
    rows = []
    for name, g in samples.groupby("slice", sort=False):
        prox = int((g["rank"] < boundary).sum())
        dist = int((g["rank"] >= boundary).sum())
        rows.append(dict(slice=name, n_proximal=prox, n_distal=dist, crosses=prox > 0 and dist > 0))
    return pd.DataFrame(rows, columns=["slice", "n_proximal", "n_distal", "crosses"])


def _round(age: float, step: float) -> float:
    digits = max(0, 2 - int(math.floor(math.log10(step)))) if step > 0 else 3
    return round(age, digits)


def suggest_free_ages(
    project: Project,
    age_models: Mapping[str, object] | None = None,
    samples: pd.DataFrame | None = None,
    step: float | None = None,
) -> dict[str, list[float]]:
    """Free ages to add for each slice at which the tracked boundary crosses no core.

    Parameters
    ----------
    project : Project
    age_models : mapping, optional
        Built when not given.
    samples : pandas.DataFrame, optional
        The slices' samples (:func:`paleomap.agemodel.sample_slices`); made when not
        given.
    step : float, optional
        Spacing of the candidate ages (age unit).

    Returns
    -------
    dict of str to list of float
        Slice name -> up to two ages (the nearest older, then the nearest younger) at
        which the boundary crosses the cores; an empty list where none does; slices that
        cross are not listed.
    """
    models = build_age_models(project) if age_models is None else age_models
    if samples is None:
        samples = sample_slices(project, age_models=models)
    b = project.scheme.tracked_boundary
    cover = boundary_coverage(samples, b)
    missing = [
        sl
        for sl in project.slices
        if not cover[cover["slice"] == sl.name]["crosses"].any()
        and (samples["slice"] == sl.name).any()
    ]
    if not missing:
        return {}
    ages = [s.age for s in project.surfaces]
    lo, hi = min(ages), max(ages)
    if hi <= lo:
        return {sl.name: [] for sl in missing}
    step = (hi - lo) / 200 if step is None else step
    grid = np.arange(lo, hi + step / 2, step)
    candidates = [Slice(f"_age{i}", float(a)) for i, a in enumerate(grid)]
    table = sample_slices(project, slices=candidates, age_models=models)
    crossing = boundary_coverage(table, b)
    ok = set(crossing[crossing["crosses"]]["slice"])
    good = np.array([c.age for c in candidates if c.name in ok])
    out: dict[str, list[float]] = {}
    for sl in missing:
        older = good[good > sl.age]
        younger = good[good < sl.age]
        picks = []
        if older.size:
            picks.append(_round(float(older.min()), step))
        if younger.size:
            picks.append(_round(float(younger.max()), step))
        out[sl.name] = picks
    return out
