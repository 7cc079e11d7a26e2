"""The exact truth of a bench basin: boundary lines, belts, positions and shifts.

From the same point-by-point model that laid down the cores (so the two agree
exactly):

* the true tracked boundary (the shoreline, or the shoal edge of a carbonate ramp)
  at every slice: the contour of water depth at the boundary's depth, on a fine
  lattice over the whole region;
* the true belt of every lattice cell at every slice;
* the true position of the boundary along each dip transect at every slice, and the
  true shift and rate between consecutive slices. A position is paleomap's
  (docs/conventions.md): the length of the transect on the proximal side of the
  boundary, from its landward end, so a single crossing sits at its distance and
  several crossings (an embayment cut obliquely) at the single-crossing equivalent;
  no crossing gives no position. Shifts are positive landward (transgression).

Examples
--------
>>> line = shapely.LineString([(0, 0), (1000, 0)])
>>> d = np.linspace(-5.0, 5.0, 11)          # water depth every 100 m, crossing 0 at 500 m
>>> proximal_length(d, 0.0, 100.0)
(500.0, 1)
"""

from __future__ import annotations

from dataclasses import dataclass

import contourpy
import numpy as np
import pandas as pd
import shapely

from .stratigraphy import BasinModel, simulate

__all__ = ["Truth", "dip_transects", "make_truth", "proximal_length"]


@dataclass(eq=False)
class Truth:
    """The truth of a basin at its slices (oldest first).

    ``easting``/``northing`` are the lattice's vectors; ``water_depth[name]`` and
    ``belts[name]`` are (rows, cols) grids with rows along ``northing`` (south to
    north); ``boundary[name]`` the true tracked boundary (shapely MultiLineString) over
    the whole region. ``positions`` (transect, slice, age, position_m, crossings) and
    ``shifts`` (transect, older_slice, younger_slice, older_age, younger_age, shift_m,
    rate_m_per_kyr) are on ``transects`` [(id, LineString)].
    """

    slices: tuple
    level_m: float
    easting: np.ndarray
    northing: np.ndarray
    water_depth: dict
    belts: dict
    boundary: dict
    transects: list
    positions: pd.DataFrame
    shifts: pd.DataFrame

    def age(self, name: str) -> float:
        """Age (ka) of slice ``name``."""
        return dict(self.slices)[name]


def proximal_length(water_depth, level: float, step_m: float) -> tuple[float, int]:
    """Length on the proximal side (water shallower than ``level``) of a profile
    sampled every ``step_m`` from its landward end, with linear interpolation between
    samples; and the number of crossings. NaN and 0 when it never crosses."""
    d = np.asarray(water_depth, dtype=float)
    prox = d < level
    crossings = int(np.count_nonzero(prox[1:] != prox[:-1]))
    if crossings == 0:
        return float("nan"), 0
    d0, d1 = d[:-1], d[1:]
    both = prox[:-1] & prox[1:]
    cross = prox[:-1] != prox[1:]
    with np.errstate(divide="ignore", invalid="ignore"):
        f = np.where(cross, (level - d0) / (d1 - d0), 0.0)
    part = np.where(prox[:-1], f, 1.0 - f)
    return float(step_m * (both.sum() + part[cross].sum())), crossings


def dip_transects(model: BasinModel, hull, count: int = 8):
    """``count`` transects down the regional dip, evenly across ``hull`` along strike,
    each the longest piece of its line inside ``hull``, landward to basinward."""
    region = model.region
    xy = shapely.get_coordinates(hull.exterior)
    dip, strike = region.local(xy[:, 0], xy[:, 1])
    lo, hi = strike.min(), strike.max()
    pad = 0.06 * (hi - lo)
    out = []
    for s in np.linspace(lo + pad, hi - pad, count):
        e, n = region.world([dip.min() - 1000.0, dip.max() + 1000.0], [s, s])
        line = shapely.intersection(shapely.LineString(np.column_stack([e, n])), hull)
        parts = [g for g in shapely.get_parts(line) if g.geom_type == "LineString"]
        if not parts:
            continue
        piece = max(parts, key=lambda g: g.length)
        c = np.asarray(piece.coords)
        d0, _ = region.local(c[0, 0], c[0, 1])
        d1, _ = region.local(c[-1, 0], c[-1, 1])
        if d1 < d0:
            piece = shapely.LineString(c[::-1])
        out.append((f"T{len(out) + 1:02d}", piece))
    return out


def make_truth(
    model: BasinModel, hull, *, lattice_m: float, transect_step_m: float, transects: int = 8
) -> Truth:
    """The truth of ``model`` at its surfaces, transects placed across ``hull``."""
    bands = model.bands
    level = bands.tracked_level_m
    slices = tuple((s.name, s.age_ka) for s in sorted(model.surfaces, key=lambda s: -s.age_ka))
    e, n = model.region.nodes(lattice_m)
    ee, nn = np.meshgrid(e, n)
    sim = simulate(model, ee, nn)
    water, belts, boundary = {}, {}, {}
    for name, age in slices:
        d = sim.water_depth[age].reshape(ee.shape)
        water[name] = d
        belts[name] = bands.rank(d).astype(np.int8)
        boundary[name] = _contour(e, n, d, level)
    lines = dip_transects(model, hull, transects)
    rows = []
    if lines:
        pts, owner = [], []
        for k, (_, line) in enumerate(lines):
            count = max(2, int(np.ceil(line.length / transect_step_m)) + 1)
            s = np.linspace(0.0, line.length, count)
            pts.append(shapely.get_coordinates(shapely.line_interpolate_point(line, s)))
            owner.append(np.full(count, k))
        pts = np.concatenate(pts)
        owner = np.concatenate(owner)
        tsim = simulate(model, pts[:, 0], pts[:, 1])
        for k, (tid, line) in enumerate(lines):
            sel = owner == k
            step = line.length / (sel.sum() - 1)
            for name, age in slices:
                pos, crossings = proximal_length(tsim.water_depth[age][sel], level, step)
                rows.append(
                    dict(transect=tid, slice=name, age=age, position_m=pos, crossings=crossings)
                )
    positions = pd.DataFrame(rows, columns=["transect", "slice", "age", "position_m", "crossings"])
    shifts = []
    for (old, a_old), (young, a_young) in zip(slices[:-1], slices[1:], strict=True):
        po = positions[positions["slice"] == old].set_index("transect")["position_m"]
        py = positions[positions["slice"] == young].set_index("transect")["position_m"]
        for tid, _ in lines:
            shift = float(po[tid] - py[tid])
            shifts.append(
                dict(
                    transect=tid,
                    older_slice=old,
                    younger_slice=young,
                    older_age=a_old,
                    younger_age=a_young,
                    shift_m=shift,
                    rate_m_per_kyr=shift / (a_old - a_young),
                )
            )
    shifts = pd.DataFrame(
        shifts,
        columns=[
            "transect",
            "older_slice",
            "younger_slice",
            "older_age",
            "younger_age",
            "shift_m",
            "rate_m_per_kyr",
        ],
    )
    return Truth(slices, level, e, n, water, belts, boundary, lines, positions, shifts)


def _contour(e, n, z, level):
    gen = contourpy.contour_generator(e, n, z, line_type="Separate")
    lines = [shapely.LineString(p) for p in gen.lines(level) if len(p) >= 2]
    if not lines:
        return shapely.MultiLineString()
    merged = shapely.line_merge(shapely.MultiLineString(lines))
    if merged.geom_type == "LineString":
        return shapely.MultiLineString([merged])
    return merged
