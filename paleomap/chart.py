"""The chronostratigraphic (Wheeler) chart's data, computed once in the build.

A Wheeler chart (Wheeler 1958, "Time-stratigraphy", AAPG Bulletin 42) draws a section
with time instead of depth on the vertical axis: distance along a line across the
basin against age, youngest at the top, so that each horizontal row is the
paleogeography along the line at one instant, missing time (hiatus, erosion, no
deposit) shows as blank area, and the shoreline's path through time (its trajectory)
is one line.

How the chart is computed (:func:`wheeler_section`, called by
:func:`paleomap.pipeline.compute`; the result is
:attr:`paleomap.results.BuildResult.chart`, which
:func:`paleomap.figures.wheeler.wheeler_chart` draws):

* **Ages**: ``n_ages`` ages evenly spread from the youngest to the oldest surface (not
  only the surfaces), each read in every core through its age model
  (:func:`paleomap.agemodel.sample_slices`; at a surface's own age, at its pick).
* **Belts along the line**: every charted age is mapped with the build's own model —
  by default the joint model with a shared relief (:func:`paleomap.field.shared.map_shared`,
  all charted ages at once, 40 samples), else the per-slice ordinal field
  (:func:`paleomap.field.map_slices`, deterministic latent means) — kriged only at
  points along the transect, one cell size apart, which is cheap; each point takes the
  belt of its mean latent.
* **No record**: a point has no record at an age where fewer than :data:`MIN_CORES`
  cores record that age at all, or where fewer than half of its nearby cores record it
  (the cores within one mean core spacing of the point, or the three nearest when none
  is that close), for instance because the age falls in a hiatus below an erosional
  surface there or outside those cores' dated range. No-record areas are grey and
  hatched.
* **Trajectory**: at each age, the tracked boundary's position on the line, measured as
  in :mod:`paleomap.migration` (length on its proximal side, from the landward end);
  left out where the boundary does not cross the line or falls in a no-record area.
  The positions from the slice maps are marked on it.

The transect is the user's first one, or else the middle default dip transect.

Examples
--------
>>> section = wheeler_section(project, grid, transects, n_ages=60)   # doctest: +SKIP
"""

from __future__ import annotations

import logging
from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import TYPE_CHECKING

import numpy as np
import shapely

from .agemodel import sample_slices
from .field import belt_of, map_slices
from .field.engine import field_settings
from .grid import mean_core_spacing
from .results import Transect, WheelerSection, chart_transect

if TYPE_CHECKING:
    from .grid import Grid
    from .project import Project

__all__ = ["DEFAULT_AGES", "MIN_CORES", "wheeler_section"]

log = logging.getLogger(__name__)

DEFAULT_AGES = 60
"""Ages of a chart, evenly spread between the youngest and the oldest surface."""

MIN_CORES = 3
"""Fewest cores that must record an age for it to be mapped along the chart."""


def _chart_slices(project, n_ages: int):
    from .project import Slice

    surfaces = sorted(project.surfaces, key=lambda s: s.age)
    young, old = surfaces[0].age, surfaces[-1].age
    ages = np.linspace(young, old, max(int(n_ages), 2)) if old > young else np.array([young])
    by_age = {s.age: s.name for s in surfaces}
    out = []
    for i, a in enumerate(ages):
        name = next(
            (
                n
                for sa, n in by_age.items()
                if np.isclose(sa, a, rtol=0, atol=1e-9 * max(abs(old), 1.0))
            ),
            None,
        )
        out.append(Slice(f"_chart_{i:03d}", float(a), name))
    return out


def _field_settings(mapping):
    from .field import FieldSettings

    overrides = {}
    if mapping.model not in (None, "auto"):
        overrides["model"] = mapping.model
    for key in ("range_m", "anisotropy", "azimuth_deg", "nugget"):
        v = getattr(mapping, key)
        if v is not None:
            overrides[key] = v
    return FieldSettings(
        covariance=overrides or None,
        deterministic=True,
        seed=mapping.seed,
        cross_validate=False,
        outputs=("latent_mean",),
    )


def wheeler_section(
    project: Project,
    grid: Grid,
    transects: Sequence[Transect],
    age_models: Mapping | None = None,
    transect: str | None = None,
    *,
    n_ages: int = DEFAULT_AGES,
    step_m: float | None = None,
) -> WheelerSection:
    """Belts along a transect at ``n_ages`` ages, with no-record areas and the trajectory.

    Parameters
    ----------
    project : Project
    grid : Grid
        The build's grid (its cell size is the default step along the line).
    transects : sequence of Transect
        The build's transects.
    age_models : mapping, optional
        The build's age models (built again when not given).
    transect : str, optional
        Transect id; default :func:`paleomap.results.chart_transect`.
    n_ages : int
        Number of ages between the youngest and the oldest surface.
    step_m : float, optional
        Spacing of the points along the transect; default one grid cell.

    Returns
    -------
    WheelerSection

    Examples
    --------
    >>> s = wheeler_section(project, grid, transects, n_ages=40)   # doctest: +SKIP
    >>> s.ranks.shape                            # doctest: +SKIP
    (40, 180)
    """
    from scipy.spatial import cKDTree

    tr = chart_transect(transects, transect)
    line = tr.line
    step = float(step_m or grid.cell_size)
    n_pts = max(2, int(np.ceil(line.length / step)) + 1)
    dist = np.linspace(0.0, line.length, n_pts)
    xy = shapely.get_coordinates(shapely.line_interpolate_point(line, dist))

    slices = _chart_slices(project, n_ages)
    ages = np.array([s.age for s in slices])
    samples = sample_slices(project, slices, age_models or None)

    ids = [c.core_id for c in project.cores]
    index = {c: i for i, c in enumerate(ids)}
    ce = np.array([c.easting for c in project.cores])
    cn = np.array([c.northing for c in project.cores])
    spacing = mean_core_spacing(ce, cn)
    if not np.isfinite(spacing) or spacing <= 0:
        spacing = line.length
    tree = cKDTree(np.column_stack([ce, cn]))
    near = tree.query_ball_point(xy, r=spacing)
    k = min(3, len(ids))
    _, nearest = tree.query(xy, k=k)
    nearest = np.atleast_2d(nearest).reshape(len(xy), k)
    neighbours = [np.asarray(nb if nb else nearest[i], dtype=int) for i, nb in enumerate(near)]

    n_belts = project.scheme.n_belts
    ranks = np.full((len(slices), n_pts), -1, dtype=int)
    recording = np.zeros(len(slices), dtype=int)
    by_slice, uniform = {}, {}
    groups = samples.groupby("slice", sort=False)
    for j, sl in enumerate(slices):
        if sl.name not in groups.groups:
            continue
        rows = groups.get_group(sl.name)
        recording[j] = len(rows)
        if len(rows) < MIN_CORES:
            continue
        idx = np.array([index[c] for c in rows["core_id"]])
        r = rows["rank"].to_numpy(int)
        if np.unique(r).size == 1:
            uniform[j] = int(r[0])
        else:
            by_slice[j] = (idx, r)
    if project.mapping.joint and (by_slice or uniform):
        # The same joint model as the slice maps, over every charted age at once, so
        # the chart and the maps tell one story.
        from .field.shared import map_shared

        every = dict(by_slice)
        for j in uniform:
            rows = groups.get_group(slices[j].name)
            every[j] = (np.array([index[c] for c in rows["core_id"]]), rows["rank"].to_numpy(int))
        settings = replace(field_settings(project), samples=40, burn_in=60)
        fields, _fit = map_shared(ce, cn, every, xy[:, 0], xy[:, 1], n_belts, settings)
        for j, fr in fields.items():
            ranks[j] = belt_of(fr.latent_mean, fr.thresholds)
        uniform = {}
    elif by_slice:
        fields, _fit = map_slices(
            ce, cn, by_slice, xy[:, 0], xy[:, 1], n_belts, _field_settings(project.mapping)
        )
        for j, fr in fields.items():
            ranks[j] = belt_of(fr.latent_mean, fr.thresholds)
    for j, r in uniform.items():
        ranks[j] = r

    mapped = ranks.copy()
    # no record where most nearby cores do not record the age
    has = np.zeros((len(slices), len(ids)), dtype=bool)
    slice_pos = {s.name: j for j, s in enumerate(slices)}
    if len(samples):
        has[
            samples["slice"].map(slice_pos).to_numpy(int),
            samples["core_id"].map(index).to_numpy(int),
        ] = True
    for i, nb in enumerate(neighbours):
        share = has[:, nb].mean(axis=1)
        ranks[share < 0.5, i] = -1
    ranks[recording < MIN_CORES] = -1

    b = project.scheme.tracked_boundary
    ds = line.length / (n_pts - 1)
    w = np.full(n_pts, ds)
    w[0] = w[-1] = ds / 2
    boundary = np.full(len(slices), np.nan)
    for j in range(len(slices)):
        row = mapped[j]
        if (row < 0).any():
            continue  # not mapped at this age
        proximal = row < b
        if not np.any(np.diff(proximal.astype(int))):
            continue  # the boundary does not cross the line
        pos = float(np.sum(w[proximal]))
        at = min(int(round(pos / ds)), n_pts - 1)
        if ranks[j, at] >= 0:  # the trajectory is drawn only where there is a record
            boundary[j] = pos

    off = shapely.distance(shapely.points(ce, cn), line)
    along = shapely.line_locate_point(line, shapely.points(ce, cn))
    close = [
        (ids[i], float(along[i]), float(off[i]))
        for i in np.argsort(along)
        if off[i] <= spacing and 0.0 < along[i] < line.length
    ]
    log.debug(
        "chart along %s: %d ages x %d points, %.0f%% with a record",
        tr.transect,
        len(slices),
        n_pts,
        100 * np.mean(ranks >= 0),
    )
    return WheelerSection(tr.transect, dist, ages, ranks, boundary, recording, tuple(close))
