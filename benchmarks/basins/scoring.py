"""Scoring a build of a bench basin against its truth, beside two splines.

Written for the bench on its own (it uses only a build's deliverable values: the
shoreline and its P10-P90 band per slice, the rate per transect and per slice pair),
so it scores any engine the same way:

* **shoreline error**: mean distance between the mapped and the true tracked
  boundary inside the cores' convex hull, both directions averaged (points every
  50 m along each line, distance to the other line), as a share of the mean core
  spacing (square root of the hull's area per core): the measure of
  ``paleomap.accuracy``, computed again here;
* **rank spline**: a thin-plate spline (scipy ``RBFInterpolator``) of the belt ranks
  the cores record at the slice, contoured half-way between the boundary's belts.
  The ranks are read from the written tables as a script would: the interval resting
  on the surface's pick, or, where the core lacks the pick, at the depth interpolated
  linearly between the picks above and below;
* **information limit**: the same spline fed the true, continuous water depth at
  every core at the slice's age, contoured at the boundary's depth: what perfect
  depth data at the cores would give;
* **rates**: per slice pair, the median over the transects of the build's rates
  against the median of the true rates on the same transects (transects where both
  have a position); relative error; sense against the true sense;
* **band**: the share of the true boundary's length inside the hull that lies in the
  build's P10-P90 band (nominal 0.8), and the band's mean width (its area inside the
  hull over the mapped line's length there) in core spacings;
* **geographic vs projected**: per pair, the difference between the median rates of
  the same basin given in EPSG:4326 and in its projected CRS, relative to the
  latter.

Examples
--------
>>> a = shapely.LineString([(0, 0), (0, 1000)])
>>> b = shapely.LineString([(100, 0), (100, 1000)])
>>> round(line_distance(a, b, shapely.box(-500, 0, 500, 1000)), 6)
100.0
>>> round(share_covered(b, shapely.box(0, 0, 200, 500), shapely.box(-500, 0, 500, 1000)), 2)
0.5
"""

from __future__ import annotations

from dataclasses import dataclass

import contourpy
import numpy as np
import pandas as pd
import shapely
from scipy.interpolate import RBFInterpolator

from .basin import Basin
from .stratigraphy import simulate

__all__ = [
    "BuildOutputs",
    "build_outputs",
    "line_distance",
    "pair_scores",
    "read_ranks",
    "share_covered",
    "slice_scores",
    "spline_line",
    "summarise",
]

_STEP_M = 50.0


@dataclass(eq=False)
class BuildOutputs:
    """What the scorer reads of a build.

    ``slices``: [(name, age, shoreline, band)] in working-CRS metres; ``shifts``
    (transect, older_slice, younger_slice, rate_m_per_kyr); ``pairs`` (older_slice,
    younger_slice, rate_m_per_kyr, sense).
    """

    slices: list
    shifts: pd.DataFrame
    pairs: pd.DataFrame


def build_outputs(result) -> BuildOutputs:
    """The deliverable values of a paleomap build result."""
    slices = [(m.slice.name, float(m.slice.age), m.shoreline, m.band) for m in result.slice_maps]
    shifts = result.shifts[["transect", "older_slice", "younger_slice", "rate_m_per_kyr"]]
    pairs = result.slice_pairs.rename(columns={"median_rate_m_per_kyr": "rate_m_per_kyr"})[
        ["older_slice", "younger_slice", "rate_m_per_kyr", "sense"]
    ]
    return BuildOutputs(slices, shifts.copy(), pairs.copy())


def _points_along(geom, step_m: float) -> np.ndarray:
    pts = []
    for part in shapely.get_parts(geom):
        if part.geom_type != "LineString" or part.length == 0:
            continue
        s = np.arange(0.0, part.length + step_m / 2, step_m)
        pts.append(shapely.get_coordinates(shapely.line_interpolate_point(part, s)))
    return np.concatenate(pts) if pts else np.empty((0, 2))


def line_distance(mapped, true, within, step_m: float = _STEP_M) -> float:
    """Mean distance between two lines inside ``within``, both directions averaged;
    NaN when either has no part inside."""
    pa = _points_along(shapely.intersection(mapped, within), step_m)
    pb = _points_along(shapely.intersection(true, within), step_m)
    if len(pa) == 0 or len(pb) == 0:
        return float("nan")
    da = shapely.distance(shapely.points(pa), true).mean()
    db = shapely.distance(shapely.points(pb), mapped).mean()
    return float((da + db) / 2)


def share_covered(true, band, within) -> float:
    """Share of the length of ``true`` inside ``within`` that lies in ``band``."""
    line = shapely.intersection(true, within)
    if line.length == 0:
        return float("nan")
    if band is None or band.is_empty:
        return 0.0
    return float(shapely.intersection(line, band).length / line.length)


def spline_line(easting, northing, values, level: float, hull, cell_m: float, margin_m: float):
    """Thin-plate spline of ``values`` at the cores, contoured at ``level`` on a grid of
    ``cell_m`` over the hull's bounds grown by ``margin_m``."""
    xy = np.column_stack([easting, northing])
    values = np.asarray(values, dtype=float)
    if len(np.unique(values)) < 2 or len(xy) < 3:
        return shapely.MultiLineString()
    rbf = RBFInterpolator(xy, values, kernel="thin_plate_spline")
    w, s, e, n = hull.bounds
    ge = np.arange(w - margin_m, e + margin_m + cell_m, cell_m)
    gn = np.arange(s - margin_m, n + margin_m + cell_m, cell_m)
    ee, nn = np.meshgrid(ge, gn)
    z = rbf(np.column_stack([ee.ravel(), nn.ravel()])).reshape(ee.shape)
    gen = contourpy.contour_generator(ge, gn, z, line_type="Separate")
    lines = [shapely.LineString(p) for p in gen.lines(level) if len(p) >= 2]
    return shapely.MultiLineString(lines) if lines else shapely.MultiLineString()


def read_ranks(basin: Basin, surface: str) -> pd.DataFrame:
    """Belt rank each core records at ``surface`` (core_id, easting, northing, rank)."""
    logged = basin.logged
    ages = {s.name: s.age_ka for s in basin.model.surfaces}
    age = ages[surface]
    picks = {
        cid: list(zip(g["surface"].map(ages), g["depth_m"], g["surface"], strict=True))
        for cid, g in logged.picks.groupby("core_id")
    }
    intervals = {
        cid: (g["top_m"].to_numpy(), g["base_m"].to_numpy(), g["rank"].to_numpy())
        for cid, g in logged.intervals.groupby("core_id")
    }
    rows = []
    for core in logged.cores.itertuples():
        pk = picks.get(core.core_id, [])
        here = [d for _, d, name in pk if name == surface]
        if here:
            depth = here[0]
        else:
            older = sorted((a, d) for a, d, _ in pk if a > age)
            younger = sorted(((a, d) for a, d, _ in pk if a < age), reverse=True)
            if not older or not younger:
                continue
            (a0, d0), (a1, d1) = older[0], younger[0]
            depth = d1 + (d0 - d1) * (age - a1) / (a0 - a1)
        top, base, rank = intervals[core.core_id]
        # the interval resting on the depth (just above it), else the one holding it
        k = np.flatnonzero((top < depth) & (base >= depth))
        if k.size == 0:
            k = np.flatnonzero((top <= depth) & (base > depth))
        if k.size == 0:
            continue
        rows.append(
            dict(
                core_id=core.core_id,
                easting=core.easting,
                northing=core.northing,
                rank=int(rank[k[0]]),
            )
        )
    return pd.DataFrame(rows, columns=["core_id", "easting", "northing", "rank"])


def slice_scores(basin: Basin, outputs: BuildOutputs) -> pd.DataFrame:
    """Per slice: errors (m and share of the core spacing) of the build, the rank
    spline and the information limit; band coverage and width."""
    truth, bands = basin.truth, basin.model.bands
    hull, spacing = basin.hull, basin.spacing_m
    cores = basin.logged.cores
    e, n = cores["easting"].to_numpy(), cores["northing"].to_numpy()
    depth = simulate(basin.model, e, n).water_depth
    b = bands.tracked_boundary
    mapped = {name: (line, band) for name, _, line, band in outputs.slices}
    rows = []
    for name, age in truth.slices:
        true = truth.boundary[name]
        ranks = read_ranks(basin, name)
        tps = spline_line(
            ranks["easting"], ranks["northing"], ranks["rank"], b - 0.5, hull,
            basin.cell_size_m, basin.margin_m,
        )  # fmt: skip
        limit = spline_line(
            e, n, depth[age], bands.tracked_level_m, hull, basin.cell_size_m, basin.margin_m
        )
        line, band = mapped.get(name, (shapely.MultiLineString(), None))
        d_map = line_distance(line, true, hull) if not line.is_empty else float("nan")
        inside = shapely.intersection(line, hull).length if not line.is_empty else 0.0
        width = (
            shapely.intersection(band, hull).area / inside
            if band is not None and not band.is_empty and inside > 0
            else float("nan")
        )
        rows.append(
            dict(
                slice=name,
                age=age,
                spacing_m=spacing,
                mapped_m=d_map,
                spline_m=line_distance(tps, true, hull),
                limit_m=line_distance(limit, true, hull),
                coverage=share_covered(true, band, hull),
                band_width_m=width,
            )
        )
    out = pd.DataFrame(rows)
    for c in ("mapped", "spline", "limit"):
        out[f"{c}_share"] = out[f"{c}_m"] / spacing
    out["band_width_spacings"] = out["band_width_m"] / spacing
    return out


def pair_scores(basin: Basin, outputs: BuildOutputs) -> pd.DataFrame:
    """Per slice pair: median rates of the build and of the truth on the transects where
    both have a position, relative error, senses."""
    truth = basin.truth.shifts
    rows = []
    for old, young in zip(basin.truth.slices[:-1], basin.truth.slices[1:], strict=True):
        t = truth[(truth["older_slice"] == old[0]) & (truth["younger_slice"] == young[0])]
        m = outputs.shifts[
            (outputs.shifts["older_slice"] == old[0])
            & (outputs.shifts["younger_slice"] == young[0])
        ]
        both = t.merge(m, on="transect", suffixes=("_true", "_map"))
        both = both[
            np.isfinite(both["rate_m_per_kyr_true"]) & np.isfinite(both["rate_m_per_kyr_map"])
        ]
        true_rate = float(np.median(both["rate_m_per_kyr_true"])) if len(both) else np.nan
        rate = float(np.median(both["rate_m_per_kyr_map"])) if len(both) else np.nan
        p = outputs.pairs[
            (outputs.pairs["older_slice"] == old[0]) & (outputs.pairs["younger_slice"] == young[0])
        ]
        sense = str(p["sense"].iloc[0]) if len(p) else ""
        true_sense = "transgression" if true_rate > 0 else "regression"
        rows.append(
            dict(
                older_slice=old[0],
                younger_slice=young[0],
                transects=len(both),
                rate_m_per_kyr=rate,
                true_rate_m_per_kyr=true_rate,
                relative_error=abs(rate - true_rate) / abs(true_rate),
                sense=sense,
                true_sense=true_sense,
                sense_ok=sense == true_sense,
                # "uncertain" (P10-P90 spans zero) does not claim a direction
                sense_wrong=sense in ("transgression", "regression") and sense != true_sense,
                pair_rate_m_per_kyr=float(p["rate_m_per_kyr"].iloc[0]) if len(p) else np.nan,
            )
        )
    return pd.DataFrame(rows)


def summarise(slices: pd.DataFrame, pairs: pd.DataFrame, geographic: BuildOutputs | None = None):
    """One row of the bench table from a build's slice and pair scores; with the
    geographic build's outputs, the largest relative rate difference between the two."""
    m, s, lim = (slices[f"{c}_share"].mean() for c in ("mapped", "spline", "limit"))
    row = dict(
        spacing_km=float(slices["spacing_m"].iloc[0]) / 1000.0,
        shoreline_error=m,
        spline_error=s,
        limit_error=lim,
        ratio_limit=m / lim,
        ratio_spline=m / s,
        missing_slices=int(slices["mapped_m"].isna().sum()),
        rate_error_median=float(np.nanmedian(pairs["relative_error"])),
        rate_error_worst=float(np.nanmax(pairs["relative_error"])),
        senses_right=int(pairs["sense_ok"].sum()),
        senses_wrong=int(pairs["sense_wrong"].sum()),
        senses_uncertain=int((pairs["sense"] == "uncertain").sum()),
        pairs=len(pairs),
        band_coverage=float(slices["coverage"].mean()),
        band_width=float(slices["band_width_spacings"].mean()),
        geo_rate_difference=np.nan,
    )
    if geographic is not None:
        g = geographic.pairs.set_index(["older_slice", "younger_slice"])["rate_m_per_kyr"]
        diffs = []
        for p in pairs.itertuples():
            key = (p.older_slice, p.younger_slice)
            if key in g.index and np.isfinite(p.pair_rate_m_per_kyr):
                diffs.append(abs(g[key] - p.pair_rate_m_per_kyr) / abs(p.pair_rate_m_per_kyr))
        row["geo_rate_difference"] = float(max(diffs)) if diffs else np.nan
    return row
