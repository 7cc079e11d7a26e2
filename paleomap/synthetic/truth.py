"""The exactly known truth of a synthetic basin: belt maps, boundaries, shifts.

At a slice age the true belt of every point is the band its elevation relative to
sea level falls in, and the true shoreline (or tracked boundary) is where that
elevation equals the boundary's level. Both are drawn from the same field, on a
fine grid of nodes covering the region, by filled and line contours with linear
interpolation between nodes (exact for a planar ramp).

Positions along a line are found by sampling the field exactly at points along it
and interpolating linearly between samples. Where a line crosses a boundary more
than once, the position is the crossing nearest the line's start (its landward
end for dip lines), always the same choice. The shift between an older and a
younger slice is ``older position - younger position``: positive when the
boundary moved landward (transgression), and the rate is shift / age difference
in m/kyr.

Examples
--------
>>> import numpy as np
>>> float(_first_crossing(np.array([0.0, 10.0, 20.0]), np.array([3.0, 1.0, -1.0]), 0.0))
15.0
"""

from __future__ import annotations

import contourpy
import numpy as np
import shapely

__all__ = ["STILLSTAND_M_PER_KYR"]

STILLSTAND_M_PER_KYR = 0.1
"""Rates smaller in magnitude are called ``stillstand`` in the truth tables (the same
default as ``[migration] stillstand_m_per_kyr``)."""

_KEEP_M = 0.001  # simplification tolerance of truth geometries, metres


def _sense(rate: float, tolerance: float = STILLSTAND_M_PER_KYR) -> str:
    if not np.isfinite(rate):
        return ""
    if abs(rate) < tolerance:
        return "stillstand"
    return "transgression" if rate > 0 else "regression"


def _first_crossing(distance: np.ndarray, values: np.ndarray, level: float) -> float:
    """Distance where ``values`` first passes from above ``level`` to at or below it.

    NaN when the start is already at or below the level, or it never gets there.
    """
    below = values <= level
    if below.size == 0 or below[0] or not below.any():
        return float("nan")
    i = int(np.argmax(below))
    v0, v1 = values[i - 1], values[i]
    f = (v0 - level) / (v0 - v1)
    return float(distance[i - 1] + f * (distance[i] - distance[i - 1]))


def _crossings(samples, values: np.ndarray, level: float) -> np.ndarray:
    """First crossing of ``level`` on each sampled line at each age.

    ``samples`` is a list of (points, distances) per line, whose points were stacked
    in that order into the columns of ``values`` (n_ages, n_points). Returns
    (n_ages, n_lines) distances, NaN where a line does not cross.
    """
    out = np.full((values.shape[0], len(samples)), np.nan)
    start = 0
    for i, (pts, dist) in enumerate(samples):
        stop = start + len(pts)
        for k in range(values.shape[0]):
            out[k, i] = _first_crossing(dist, values[k, start:stop], level)
        start = stop
    return out


def _line_samples(line: shapely.LineString, spacing_m: float) -> tuple[np.ndarray, np.ndarray]:
    """Points along a line (every vertex kept) and their distance from its start."""
    n = max(2, int(np.ceil(line.length / spacing_m)) + 1)
    d = np.unique(
        np.concatenate(
            [
                np.linspace(0.0, line.length, n),
                shapely.line_locate_point(line, shapely.points(np.asarray(line.coords))),
            ]
        )
    )
    pts = shapely.line_interpolate_point(line, d)
    return shapely.get_coordinates(pts), d


def _belt_geometries(easting, northing, field, levels, region) -> list:
    """One (Multi)Polygon per rank from a node field, clipped to the region."""
    gen = contourpy.contour_generator(easting, northing, field, fill_type="OuterOffset")
    edges = np.concatenate([[np.inf], np.asarray(levels, dtype=float), [-np.inf]])
    out = []
    for k in range(len(edges) - 1):
        lower, upper = edges[k + 1], edges[k]
        lo = lower if np.isfinite(lower) else min(np.nanmin(field), upper) - 1.0
        hi = upper if np.isfinite(upper) else max(np.nanmax(field), lower) + 1.0
        points, offsets = gen.filled(lo, hi)
        polys = []
        for pts, off in zip(points, offsets, strict=True):
            rings = [pts[off[i] : off[i + 1]] for i in range(len(off) - 1)]
            polys.append(shapely.Polygon(rings[0], rings[1:]))
        if polys:
            geom = shapely.union_all(shapely.make_valid(np.array(polys, dtype=object)))
            geom = shapely.intersection(geom, region)
        else:
            geom = shapely.MultiPolygon()
        # Drop the collinear vertices contouring leaves at every node along straight
        # runs (region edges, planar parts); 1 mm changes nothing a map can show.
        out.append(_polygonal(shapely.simplify(_polygonal(geom), _KEEP_M)))
    return out


def _polygonal(geom):
    if geom.is_empty:
        return shapely.MultiPolygon()
    parts = [g for g in shapely.get_parts(geom) if g.geom_type == "Polygon" and g.area > 0]
    return shapely.MultiPolygon(parts) if parts else shapely.MultiPolygon()


def _boundary_line(easting, northing, field, level) -> shapely.MultiLineString:
    """The contour of ``field`` at ``level`` as one MultiLineString."""
    gen = contourpy.contour_generator(easting, northing, field, line_type="Separate")
    lines = [
        shapely.simplify(shapely.LineString(p), _KEEP_M) for p in gen.lines(level) if len(p) >= 2
    ]
    return shapely.MultiLineString(lines) if lines else shapely.MultiLineString()
