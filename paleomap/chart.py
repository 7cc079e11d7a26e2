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

* **Ages**: ``n_ages`` ages evenly spread from the youngest to the oldest surface, and
  every mapped slice's own age.
* **Belts along the line**: the build's fitted field engine is asked for the latent
  at points along the transect, half a cell apart, at every chart age
  (:meth:`paleomap.field.engine.FittedField.predict`); each point takes the belt of
  its mean latent. At a slice's age that is the slice map's own field, so the chart's
  trajectory meets the map's shoreline position there (within a grid cell: the map's
  position is read from its contouring nodes); between slices the engine conditions
  on the records at that age (:mod:`paleomap.records`).
* **No record**: a point has no record at an age where fewer than :data:`MIN_CORES`
  cores record that age at all, or where fewer than half of its nearby cores record it
  (the cores within one mean core spacing of the point, or the three nearest when none
  is that close), for instance because the age falls in a hiatus below an erosional
  surface there or outside those cores' dated range. No-record areas are grey and
  hatched.
* **Trajectory**: at each age, the tracked boundary's position on the line, measured as
  in :func:`paleomap.migration.transect_position` (length on its proximal side, from
  the landward end); left out where the boundary does not cross the line or falls in
  a no-record area. The positions from the slice maps are marked on it.

The transect is the user's first one, or else the middle default dip transect.

Examples
--------
>>> section = wheeler_section(project, grid, transects, records, fitted)   # doctest: +SKIP
"""

from __future__ import annotations

import logging
from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np
import shapely

from .results import Transect, WheelerSection, chart_transect
from .spacing import mean_core_spacing

if TYPE_CHECKING:
    from .field.engine import FittedField
    from .grid import Grid
    from .project import Project
    from .records import Records

__all__ = ["DEFAULT_AGES", "MIN_CORES", "chart_ages", "wheeler_section"]

log = logging.getLogger(__name__)

DEFAULT_AGES = 60
"""Ages of a chart evenly spread between the youngest and the oldest surface (the
slices' own ages are added to them)."""

MIN_CORES = 3
"""Fewest cores that must record an age for it to be mapped along the chart."""


def chart_ages(project: Project, n_ages: int = DEFAULT_AGES, slice_ages=()) -> np.ndarray:
    """The chart's ages, increasing: ``n_ages`` from the youngest to the oldest surface,
    with ``slice_ages`` added.

    >>> class P: surfaces = [type("S", (), {"age": a})() for a in (10.0, 20.0)]
    >>> chart_ages(P, 3, [12.5]).tolist()
    [10.0, 12.5, 15.0, 20.0]
    """
    ages = sorted(s.age for s in project.surfaces)
    young, old = ages[0], ages[-1]
    even = np.linspace(young, old, max(int(n_ages), 2)) if old > young else np.array([young])
    return np.union1d(even, np.asarray(list(slice_ages), dtype=float))


def wheeler_section(
    project: Project,
    grid: Grid,
    transects: Sequence[Transect],
    records: Records,
    fitted: FittedField,
    transect: str | None = None,
    *,
    slice_ages: Sequence[float] = (),
    n_ages: int = DEFAULT_AGES,
    step_m: float | None = None,
) -> WheelerSection:
    """Belts along a transect at the chart's ages, with no-record areas and the trajectory.

    Parameters
    ----------
    project : Project
    grid : Grid
        The build's grid (half its cell size is the default step along the line).
    transects : sequence of Transect
        The build's transects.
    records : Records
        The cores' dated belt records (what the engine was fitted to).
    fitted : FittedField
        The build's fitted field engine.
    transect : str, optional
        Transect id; default :func:`paleomap.results.chart_transect`.
    slice_ages : sequence of float
        The mapped slices' ages, charted besides the ``n_ages`` even ones.
    n_ages : int
        Number of even ages between the youngest and the oldest surface.
    step_m : float, optional
        Spacing of the points along the transect; default half a grid cell (the
        spacing the slice maps' positions are read at).

    Returns
    -------
    WheelerSection

    Examples
    --------
    >>> s = wheeler_section(project, grid, transects, records, fitted)   # doctest: +SKIP
    >>> s.ranks.shape                                                    # doctest: +SKIP
    (68, 360)
    """
    from scipy.spatial import cKDTree

    tr = chart_transect(transects, transect)
    line = tr.line
    step = float(step_m or grid.cell_size / 2)
    n_pts = max(2, int(np.ceil(line.length / step)) + 1)
    dist = np.linspace(0.0, line.length, n_pts)
    xy = shapely.get_coordinates(shapely.line_interpolate_point(line, dist))
    ages = chart_ages(project, n_ages, slice_ages)

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

    # which cores record each age (the records may hold control points too: not cores)
    has = np.zeros((ages.size, len(ids)), dtype=bool)
    for j, a in enumerate(ages):
        has[j, [index[c] for c in records.core_id[records.spanning(a)] if c in index]] = True
    recording = has.sum(axis=1)

    ranks = np.full((ages.size, n_pts), -1, dtype=int)
    mapped_rows = np.flatnonzero(recording >= MIN_CORES)
    if mapped_rows.size:
        pred = fitted.predict(xy[:, 0], xy[:, 1], ages[mapped_rows])
        for i, j in enumerate(mapped_rows):
            ranks[j] = pred.belts(i)
    mapped = ranks.copy()
    # no record where most nearby cores do not record the age
    for i, nb in enumerate(neighbours):
        share = has[:, nb].mean(axis=1)
        ranks[share < 0.5, i] = -1

    b = project.scheme.tracked_boundary
    ds = line.length / (n_pts - 1)
    w = np.full(n_pts, ds)
    w[0] = w[-1] = ds / 2
    boundary = np.full(ages.size, np.nan)
    for j in range(ages.size):
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
        ages.size,
        n_pts,
        100 * np.mean(ranks >= 0),
    )
    return WheelerSection(tr.transect, dist, ages, ranks, boundary, recording, tuple(close))
