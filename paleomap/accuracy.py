"""Scoring maps against a synthetic basin's known truth.

A forward-modelled basin (:mod:`paleomap.synthetic`) knows its true shorelines and
shoreline rates exactly, so a build of its cores can be scored, and so can the quick
alternative a geologist might script instead:

* **mapped**: paleomap's shoreline (the tracked boundary of the ordinal field);
* **spline of ranks**: a thin-plate-spline interpolation (scipy ``RBFInterpolator``) of
  the logged belt ranks, contoured half-way between the two belts of the boundary;
* **information limit**: the same spline fitted to the true, continuous elevation
  relative to sea level at the cores, contoured at the boundary's level. Facies ranks
  hold less than that, so no method working from facies should expect to beat it.

The shoreline error is the mean distance between a mapped and the true boundary
inside the core hull, both directions averaged (from points every ``step_m`` along
each line to the other line), and it is reported as a share of the mean core spacing
(square root of the hull area per core).

Examples
--------
>>> import shapely
>>> a = shapely.LineString([(0, 0), (0, 1000)])
>>> b = shapely.LineString([(100, 0), (100, 1000)])
>>> round(line_distance(a, b, shapely.box(-500, 0, 500, 1000)), 6)
100.0
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import shapely
from scipy.interpolate import RBFInterpolator

from .belts import node_field
from .grid import mean_core_spacing
from .shoreline import shoreline

__all__ = ["line_distance", "rate_scores", "shoreline_scores", "spline_boundary"]


def _points_along(geom, step_m: float) -> np.ndarray:
    pts = []
    for part in shapely.get_parts(geom):
        if part.length == 0:
            continue
        s = np.arange(0.0, part.length + step_m / 2, step_m)
        pts.append(shapely.get_coordinates(shapely.line_interpolate_point(part, s)))
    return np.concatenate(pts) if pts else np.empty((0, 2))


def line_distance(mapped, true, within, step_m: float = 50.0) -> float:
    """Mean distance between two lines inside ``within``, both directions averaged.

    NaN when either line has no part inside ``within``.
    """
    a = shapely.intersection(mapped, within)
    b = shapely.intersection(true, within)
    pa, pb = _points_along(a, step_m), _points_along(b, step_m)
    if len(pa) == 0 or len(pb) == 0:
        return float("nan")
    da = shapely.distance(shapely.points(pa), true).mean()
    db = shapely.distance(shapely.points(pb), mapped).mean()
    return float((da + db) / 2)


def spline_boundary(easting, northing, values, level: float, grid):
    """Thin-plate spline of ``values`` at the cores, contoured at ``level`` on ``grid``."""
    rbf = RBFInterpolator(
        np.column_stack([easting, northing]), np.asarray(values, float), kernel="thin_plate_spline"
    )
    ce, cn = grid.cell_centres()
    z = rbf(np.column_stack([ce, cn])).reshape(grid.shape)
    return shoreline(node_field(z, grid), level, grid.area)


def shoreline_scores(result, basin, step_m: float = 50.0) -> pd.DataFrame:
    """Per slice: shoreline errors of the map, of the rank spline and of the
    information limit, in metres and as shares of the mean core spacing.

    Parameters
    ----------
    result : paleomap.pipeline.BuildResult
        A build of ``basin``'s project.
    basin : paleomap.synthetic.SyntheticBasin
    """
    project = result.project
    scheme = project.scheme
    b = scheme.tracked_boundary
    level = basin.boundary_level(b)
    e_all = np.array([c.easting for c in project.cores])
    n_all = np.array([c.northing for c in project.cores])
    hull = shapely.convex_hull(shapely.multipoints(np.column_stack([e_all, n_all])))
    spacing = mean_core_spacing(e_all, n_all)
    rows = []
    for m in result.slice_maps:
        s = result.samples[result.samples["slice"] == m.slice.name]
        e, n = s["easting"].to_numpy(), s["northing"].to_numpy()
        true = basin.shoreline(m.slice.age, b)
        tps = spline_boundary(e, n, s["rank"].to_numpy(float), b - 0.5, result.grid)
        elev = basin.elevation_above_sea_level(e, n, m.slice.age)
        limit = spline_boundary(e, n, -elev, -level, result.grid)
        d_map = line_distance(m.shoreline, true, hull, step_m)
        d_tps = line_distance(tps, true, hull, step_m)
        d_lim = line_distance(limit, true, hull, step_m)
        rows.append(
            dict(
                slice=m.slice.name,
                age=m.slice.age,
                spacing_m=spacing,
                mapped_m=d_map,
                spline_m=d_tps,
                limit_m=d_lim,
                mapped_share=d_map / spacing,
                spline_share=d_tps / spacing,
                limit_share=d_lim / spacing,
            )
        )
    return pd.DataFrame(rows)


def rate_scores(result, basin) -> pd.DataFrame:
    """Per slice pair: the median transect rate against the true rate on the same
    transects, and its relative error; the sense against the true sense.

    ``sense_ok`` is True where the sense is the true one; ``sense_wrong`` where the map
    claims the opposite direction (an ``uncertain`` sense, whose P10-P90 spans zero, is
    neither: it does not overstate)."""
    kyr = result.project.kyr_per_age_unit
    lines = [t.line for t in result.transects]
    rows = []
    for r in result.slice_pairs.itertuples():
        true_pos = basin.shoreline_positions(lines, [r.older_age, r.younger_age])
        dt = (r.older_age - r.younger_age) * kyr
        true_rates = (true_pos[0] - true_pos[1]) / dt
        true_rates = true_rates[np.isfinite(true_rates)]
        true_rate = float(np.median(true_rates)) if true_rates.size else np.nan
        rel = abs(r.median_rate_m_per_kyr - true_rate) / abs(true_rate)
        true_sense = "transgression" if true_rate > 0 else "regression"
        rows.append(
            dict(
                older_slice=r.older_slice,
                younger_slice=r.younger_slice,
                rate_m_per_kyr=r.median_rate_m_per_kyr,
                true_rate_m_per_kyr=true_rate,
                relative_error=rel,
                sense=r.sense,
                true_sense=true_sense,
                sense_ok=r.sense == true_sense,
                sense_wrong=r.sense in ("transgression", "regression") and r.sense != true_sense,
            )
        )
    return pd.DataFrame(rows)
