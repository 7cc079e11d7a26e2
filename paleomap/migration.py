"""Shoreline migration: transects, positions, shifts, rates and areas.

Sign convention: a shift is positive landward (transgression) and negative seaward
(regression). Rates are in m/kyr whatever the project's age unit
(1 m/kyr = 1 mm/yr = 1 km/Myr).

Position along a transect
    Each transect runs landward to basinward. The tracked boundary's position on it is
    the length of transect lying on the proximal side of the boundary, measured from
    the landward end. Where the transect crosses the boundary once this is exactly the
    distance to the crossing; where it crosses several times (an embayment or a lobe
    cut obliquely) it is the single-crossing position that leaves the same length on
    each side, which moves continuously as the map changes and never jumps between
    crossings. The number of crossings is reported beside it. A transect that never
    reaches the boundary has no position (NaN) for that slice, but the side is known:
    where the whole transect lies on the distal side the boundary is **landward** of the
    mapped area (its position is at most 0), where it lies wholly on the proximal side
    the boundary is **basinward** of it (at least the transect's length).

Bounds
    A shift between a slice whose boundary crosses the transect and one whose boundary is
    outside the mapped area is known only as a bound: with the boundary landward of the
    area at the younger slice, the shoreline moved *at least* as far landward as the
    older position (the distance to the landward end). Such a shift is reported as that
    bound, ``shift_bound = "at_least"``, with the side in ``older_outside`` /
    ``younger_outside``; its P10-P90 range is not given (NaN). So no reported distance
    exceeds the transect, and no transect exceeds the mapped area.

Uncertainty
    P10 and P90 (``*_low*`` and ``*_high*`` fields): the values that 10 % and 90 % of the
    probability lie below (some readers use the opposite convention, the values exceeded
    with 10 % and 90 % probability; here the P10 is always the lower one). Along a
    transect, the probability of the distal side is the cumulative distribution of the
    boundary's position, so the P10 and P90 positions are the lengths on which that
    probability is below 0.1 and below 0.9. The shift's and the rate's P10-P90
    ranges combine both slices' position ranges and the surfaces' ``age_sd`` by Monte
    Carlo, each position drawn from a split normal through its P10, median and P90.

Sense
    ``"transgression"`` (landward) or ``"regression"`` (seaward) where the rate's
    magnitude exceeds the stillstand tolerance, ``"stillstand"`` where it does not, and
    ``"uncertain"`` wherever the P10-P90 range of the shift spans zero: the map cannot
    tell the direction.

Examples
--------
>>> classify_sense(np.array([2.0, -0.05, -3.0]), tolerance=0.1)
['transgression', 'stillstand', 'regression']
>>> classify_sense([2.0], 0.1, low=[-50.0], high=[400.0])
['uncertain']
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np
import shapely

__all__ = [
    "OUTSIDE_SIDES",
    "TransectPosition",
    "area_change",
    "classify_sense",
    "default_transects",
    "joint_shift_statistics",
    "lsq_rate",
    "one_directional",
    "regional_dip_azimuth",
    "shift_statistics",
    "strike_extent",
    "transect_position",
    "trend_rate",
]

log = logging.getLogger(__name__)

_Z90 = 1.2815515655446004  # standard normal quantile at 0.9

OUTSIDE_SIDES = ("landward", "basinward")
"""Where a boundary that does not cross a transect lies: beyond its landward end or
beyond its basinward end."""


def regional_dip_azimuth(latent_grids, grid) -> float:
    """Azimuth (degrees clockwise from north) of the regional basinward dip.

    Fits a plane to each slice's mean latent field over the mapped cells; the latent
    grows basinward, so the plane's gradient points down dip. The slices' unit
    gradients are averaged.
    """
    ce, cn = grid.cell_centres()
    inside = grid.mask.ravel()
    e = ce[inside] - ce[inside].mean()
    n = cn[inside] - cn[inside].mean()
    design = np.column_stack([np.ones_like(e), e, n])
    total = np.zeros(2)
    # one small normal-equations system for every slice whose cells are all finite
    # (the usual case); the centred design keeps it well conditioned
    gram = design.T @ design
    for latent in latent_grids:
        z = np.asarray(latent).ravel()[inside]
        ok = np.isfinite(z)
        if ok.all():
            coef = np.linalg.solve(gram, design.T @ z)
        else:
            coef, *_ = np.linalg.lstsq(design[ok], z[ok], rcond=None)
        g = coef[1:]
        norm = np.hypot(*g)
        if norm > 0:
            total += g / norm
    if not np.any(total):
        return 90.0  # no trend at all: east, documented fallback
    az = float(np.degrees(np.arctan2(total[0], total[1])) % 360.0)
    return 0.0 if np.isclose(az, 360.0) else az


def _nice(x: float) -> float:
    """The nearest (in ratio) of 1, 2, 2.5 and 5 times a power of ten.

    >>> _nice(4700.0), _nice(3100.0)
    (5000.0, 2500.0)
    """
    if x <= 0:
        return x
    p = 10 ** np.floor(np.log10(x))
    options = np.array([1.0, 2.0, 2.5, 5.0, 10.0]) * p
    return float(options[np.argmin(np.abs(np.log(options / x)))])


def default_transects(
    area, dip_azimuth_deg: float, spacing_m: float | None = None, *, count: int = 10
):
    """Parallel dip transects, landward to basinward, evenly spaced across ``area``.

    Parameters
    ----------
    area : shapely geometry
        Where the transects may run (they are clipped to it; the longest piece is kept).
    dip_azimuth_deg : float
        Basinward direction, degrees clockwise from north.
    spacing_m : float or None
        Spacing along strike; None for the strike width over ``count``, rounded down to
        a round number.

    Returns
    -------
    list of (str, shapely.LineString)
        Transect ids ``T01``, ``T02``, ... ordered along strike, with their lines.
    """
    a = np.radians(dip_azimuth_deg)
    dip = np.array([np.sin(a), np.cos(a)])  # (east, north) unit vector down dip
    strike = np.array([dip[1], -dip[0]])
    cx, cy = area.centroid.x, area.centroid.y
    coords = np.asarray(
        shapely.get_coordinates(
            area.exterior if hasattr(area, "exterior") else shapely.convex_hull(area).exterior
        )
    )
    rel = coords - [cx, cy]
    s_min, s_max = (rel @ strike).min(), (rel @ strike).max()
    d_min, d_max = (rel @ dip).min(), (rel @ dip).max()
    width = s_max - s_min
    if spacing_m is None:
        spacing_m = _nice(width / count)
    n = max(1, int(np.floor(width / spacing_m)))
    offsets = (
        s_min + (width - (n - 1) * spacing_m) / 2 + spacing_m * np.arange(n)
        if n > 1
        else np.array([(s_min + s_max) / 2])
    )
    out = []
    for s in offsets:
        p0 = np.array([cx, cy]) + s * strike + (d_min - 1.0) * dip
        p1 = np.array([cx, cy]) + s * strike + (d_max + 1.0) * dip
        line = shapely.intersection(shapely.LineString([p0, p1]), area)
        parts = [g for g in shapely.get_parts(line) if g.geom_type == "LineString"]
        if not parts:
            continue
        piece = max(parts, key=lambda g: g.length)
        # keep the landward-to-basinward direction
        c = np.asarray(piece.coords)
        if (c[-1] - c[0]) @ dip < 0:
            piece = shapely.LineString(c[::-1])
        out.append((f"T{len(out) + 1:02d}", piece))
    return out


@dataclass(frozen=True)
class TransectPosition:
    """The tracked boundary's position on one transect at one slice (metres from the
    landward end); ``low_m``/``high_m`` are the P10 and P90 positions."""

    position_m: float
    low_m: float
    high_m: float
    crossings: int
    outside: str = ""
    """``""`` where the boundary crosses the transect, else one of :data:`OUTSIDE_SIDES`."""
    length_m: float = float("nan")
    """The transect's length (m)."""


def transect_position(
    line, latent_at, threshold: float, distal_probability_at, step_m: float
) -> TransectPosition:
    """Position of the boundary along ``line``.

    Parameters
    ----------
    line : shapely.LineString
        Landward to basinward.
    latent_at, distal_probability_at : callable
        ``f(easting, northing) -> values`` of the mean latent and of the probability of
        the distal side.
    threshold : float
        The tracked threshold.
    step_m : float
        Sampling step along the line.
    """
    length = line.length
    n = max(2, int(np.ceil(length / step_m)) + 1)
    s = np.linspace(0.0, length, n)
    pts = shapely.line_interpolate_point(line, s)
    xy = shapely.get_coordinates(pts)
    z = latent_at(xy[:, 0], xy[:, 1])
    p = distal_probability_at(xy[:, 0], xy[:, 1])
    proximal = z < threshold
    crossings = int(np.count_nonzero(np.diff(proximal.astype(int))))
    if crossings == 0:
        side = "basinward" if bool(proximal.all()) else "landward"
        return TransectPosition(np.nan, np.nan, np.nan, 0, side, float(length))
    ds = length / (n - 1)

    def length_where(mask):
        # trapezoid-consistent: each sample stands for ds, the two ends for ds/2
        w = np.full(n, ds)
        w[0] = w[-1] = ds / 2
        return float(np.sum(w[mask]))

    pos = length_where(proximal)
    low = length_where(p < 0.1)
    high = length_where(p < 0.9)
    return TransectPosition(pos, min(low, pos), max(high, pos), crossings, "", float(length))


def _split_normal(rng, median, low, high, size):
    z = rng.standard_normal(size)
    sd_low = max(median - low, 0.0) / _Z90
    sd_high = max(high - median, 0.0) / _Z90
    return median + np.where(z < 0, z * sd_low, z * sd_high)


_NO_SHIFT = dict.fromkeys(
    (
        "shift_m",
        "shift_low_m",
        "shift_high_m",
        "rate_m_per_kyr",
        "rate_low_m_per_kyr",
        "rate_high_m_per_kyr",
    ),
    np.nan,
)
"""The numbers of a shift that cannot be measured."""


def shift_statistics(
    older: TransectPosition,
    younger: TransectPosition,
    older_age_kyr: float,
    younger_age_kyr: float,
    older_sd_kyr: float = 0.0,
    younger_sd_kyr: float = 0.0,
    *,
    draws: int = 4000,
    seed: int = 0,
) -> dict:
    """Signed shift (positive landward) and rate between two slices, with P10-P90.

    Returns a dict with shift_m, shift_low_m, shift_high_m, rate_m_per_kyr,
    rate_low_m_per_kyr, rate_high_m_per_kyr, shift_bound, older_outside and
    younger_outside. Where the boundary is outside the transect at one slice (or on
    opposite sides at the two), the shift is the bound the other position gives
    (``shift_bound = "at_least"``: at least that far, in that direction) and its P10-P90
    range is NaN; where it is outside on the same side at both, or either position is
    unknown, every number is NaN.

    Examples
    --------
    >>> inside = TransectPosition(3000.0, 2500.0, 3500.0, 1, "", 10000.0)
    >>> gone = TransectPosition(np.nan, np.nan, np.nan, 0, "landward", 10000.0)
    >>> s = shift_statistics(inside, gone, 20.0, 10.0)
    >>> s["shift_m"], s["shift_bound"], s["younger_outside"], s["rate_m_per_kyr"]
    (3000.0, 'at_least', 'landward', 300.0)
    """
    dt = older_age_kyr - younger_age_kyr
    nan = dict(
        _NO_SHIFT,
        shift_bound="",
        older_outside=older.outside,
        younger_outside=younger.outside,
    )
    if older.outside or younger.outside:
        bound = _bound(older, younger)
        if np.isfinite(bound):
            nan.update(
                shift_m=bound,
                rate_m_per_kyr=float(bound / dt) if dt > 0 else np.nan,
                shift_bound="at_least",
            )
        return nan
    if not (np.isfinite(older.position_m) and np.isfinite(younger.position_m)):
        return nan
    shift = older.position_m - younger.position_m
    rng = np.random.default_rng(seed)
    po = _split_normal(rng, older.position_m, older.low_m, older.high_m, draws)
    py = _split_normal(rng, younger.position_m, younger.low_m, younger.high_m, draws)
    s = po - py
    ao = older_age_kyr + older_sd_kyr * rng.standard_normal(draws)
    ay = younger_age_kyr + younger_sd_kyr * rng.standard_normal(draws)
    span = ao - ay
    # a draw that reverses the two ages is not a possible history; drop it
    ok = span > 0
    rate = s[ok] / span[ok] if ok.any() else np.array([np.nan])
    return dict(
        shift_m=float(shift),
        shift_low_m=float(np.percentile(s, 10)),
        shift_high_m=float(np.percentile(s, 90)),
        rate_m_per_kyr=float(shift / dt) if dt > 0 else np.nan,
        rate_low_m_per_kyr=float(np.percentile(rate, 10)),
        rate_high_m_per_kyr=float(np.percentile(rate, 90)),
        shift_bound="",
        older_outside="",
        younger_outside="",
    )


def joint_shift_statistics(
    older_draws,
    younger_draws,
    older_age_kyr: float,
    younger_age_kyr: float,
    older_sd_kyr: float = 0.0,
    younger_sd_kyr: float = 0.0,
    *,
    centre: float | None = None,
    seed: int = 0,
) -> dict:
    """Shift and rate between two slices from joint draws of the two positions.

    Each draw of a fitted model gives both positions, so each draw's shift is one
    possible history: the shift is the median of the draws' shifts (or ``centre``, the
    shift the mean maps give, with the draws' spread placed around it), its P10-P90 the
    draws' spread, the rate the shift over the time between the slices, and the rate's
    P10-P90 adds the two ages' uncertainty. The shift always lies in its P10-P90 range,
    so a sense read from the range never contradicts the rate. Same keys as
    :func:`shift_statistics`; NaN where fewer than half the draws cross the boundary
    at both ages.

    Examples
    --------
    >>> d = joint_shift_statistics([1000.0, 1100.0, 1200.0], [400.0, 450.0, 500.0], 20.0, 10.0)
    >>> d["shift_m"], d["rate_m_per_kyr"]
    (650.0, 65.0)
    >>> d = joint_shift_statistics([1000.0, 1100.0, 1200.0], [400.0, 450.0, 500.0], 20.0, 10.0,
    ...                            centre=600.0)
    >>> d["shift_m"], d["shift_low_m"] < 600.0 < d["shift_high_m"]
    (600.0, True)
    """
    po = np.asarray(older_draws, dtype=float)
    py = np.asarray(younger_draws, dtype=float)
    s = po - py
    ok = np.isfinite(s)
    dt = older_age_kyr - younger_age_kyr
    if ok.sum() * 2 < s.size or not dt > 0:
        return dict(_NO_SHIFT)
    s = s[ok]
    if centre is not None and np.isfinite(centre):
        s = s - np.median(s) + float(centre)
    rng = np.random.default_rng(seed)
    span = (older_age_kyr + older_sd_kyr * rng.standard_normal(s.size)) - (
        younger_age_kyr + younger_sd_kyr * rng.standard_normal(s.size)
    )
    good = span > 0
    rate = s[good] / span[good] if good.any() else np.array([np.nan])
    shift = float(np.median(s))
    return dict(
        shift_m=shift,
        shift_low_m=float(np.percentile(s, 10)),
        shift_high_m=float(np.percentile(s, 90)),
        rate_m_per_kyr=shift / dt,
        rate_low_m_per_kyr=float(np.percentile(rate, 10)),
        rate_high_m_per_kyr=float(np.percentile(rate, 90)),
    )


def _bound(older: TransectPosition, younger: TransectPosition) -> float:
    """The signed shift bound where the boundary leaves the transect at one slice or both.

    Positions run from 0 (landward end) to the length; outside landward means at most 0,
    basinward at least the length. The shift (older minus younger position) is then at
    least (landward, positive) or at most (seaward, negative) the value returned; NaN
    where nothing is known (both outside on one side, or a position missing).
    """

    def edge(p: TransectPosition) -> float:
        if p.outside == "landward":
            return 0.0
        if p.outside == "basinward":
            return p.length_m
        return p.position_m

    if older.outside and older.outside == younger.outside:
        return float("nan")
    o, y = edge(older), edge(younger)
    if not (np.isfinite(o) and np.isfinite(y)):
        return float("nan")
    # landward at the younger slice or basinward at the older: the shift is at least o - y
    # (landward); the other cases give at most o - y (seaward); either way o - y is the
    # bound nearest zero, so its magnitude never overstates
    return float(o - y)


def lsq_rate(ages_kyr, positions_m) -> float:
    """Least-squares rate (m/kyr, positive landward) of one transect over all slices.

    Position grows basinward and age grows into the past, so a transgression (the
    shoreline moving landward as age decreases) is a positive slope of position
    against age.
    """
    a = np.asarray(ages_kyr, dtype=float)
    p = np.asarray(positions_m, dtype=float)
    ok = np.isfinite(a) & np.isfinite(p)
    if ok.sum() < 2 or np.ptp(a[ok]) == 0:
        return float("nan")
    return float(np.polyfit(a[ok], p[ok], 1)[0])


def one_directional(ages_kyr, positions_m) -> bool:
    """Whether the positions, in age order, never turn back (each step the same way or
    not at all). At least two finite positions are needed.

    >>> one_directional([30, 20, 10], [5.0, 3.0, 3.0]), one_directional([30, 20, 10], [5, 3, 4])
    (True, False)
    """
    a = np.asarray(ages_kyr, dtype=float)
    p = np.asarray(positions_m, dtype=float)
    ok = np.isfinite(a) & np.isfinite(p)
    if ok.sum() < 2:
        return False
    d = np.diff(p[ok][np.argsort(a[ok], kind="stable")])
    return bool((d >= 0).all() or (d <= 0).all())


def trend_rate(ages_kyr, positions_m) -> tuple[float, str]:
    """One rate (m/kyr, positive landward) for a whole series of positions, and how it
    was found.

    A least-squares line through a series that goes back and forth describes none of its
    steps, so the least-squares rate (:func:`lsq_rate`) is given only where the series
    is one-directional (:func:`one_directional`); otherwise the net rate, from the
    oldest to the youngest position over the time between them. The method is
    ``"least-squares"``, ``"net"``, or ``""`` when there is no rate.

    >>> rate, how = trend_rate([30, 20, 10], [5000.0, 3000.0, 1000.0])
    >>> round(rate, 6), how
    (200.0, 'least-squares')
    >>> trend_rate([30, 20, 10], [5000.0, 1000.0, 4000.0])
    (50.0, 'net')
    """
    a = np.asarray(ages_kyr, dtype=float)
    p = np.asarray(positions_m, dtype=float)
    ok = np.isfinite(a) & np.isfinite(p)
    if ok.sum() < 2 or np.ptp(a[ok]) == 0:
        return float("nan"), ""
    if one_directional(a, p):
        return lsq_rate(a, p), "least-squares"
    a, p = a[ok], p[ok]
    old, young = np.argmax(a), np.argmin(a)
    return float((p[old] - p[young]) / (a[old] - a[young])), "net"


def classify_sense(rates, tolerance: float, low=None, high=None) -> list[str]:
    """``transgression`` above ``tolerance`` m/kyr, ``regression`` below minus it, else
    ``stillstand``; ``uncertain`` where the P10-P90 range ``low``-``high`` (of the
    shift or of the rate) spans zero; NaN rates give ``""``."""
    rates = np.atleast_1d(np.asarray(rates, dtype=float))
    lo = np.full(rates.shape, np.nan) if low is None else np.atleast_1d(np.asarray(low, float))
    hi = np.full(rates.shape, np.nan) if high is None else np.atleast_1d(np.asarray(high, float))
    out = []
    for r, a, b in zip(rates, lo, hi, strict=True):
        if not np.isfinite(r):
            out.append("")
        elif np.isfinite(a) and np.isfinite(b) and a < 0 < b:
            out.append("uncertain")
        elif r > tolerance:
            out.append("transgression")
        elif r < -tolerance:
            out.append("regression")
        else:
            out.append("stillstand")
    return out


def strike_extent(line, dip_azimuth_deg: float) -> float:
    """Extent (m) of a line along strike: the span of its projection on the strike axis."""
    xy = shapely.get_coordinates(line)
    if len(xy) < 2:
        return 0.0
    a = np.radians(dip_azimuth_deg)
    strike = np.array([np.cos(a), -np.sin(a)])  # perpendicular to (sin a, cos a)
    s = xy @ strike
    return float(s.max() - s.min())


def area_change(
    distal_older,
    distal_younger,
    length_older_m: float,
    length_younger_m: float,
    extent_older_m: float | None = None,
    extent_younger_m: float | None = None,
) -> dict:
    """Areas flooded and exposed between two slices, and the net shift they imply.

    Flooded: on the distal side at the younger slice but not at the older; exposed: the
    reverse. The net shift is (flooded − exposed) / mean boundary length, positive
    landward: the mean displacement normal to the boundary, an estimate independent
    of the transects. A sinuous boundary is longer than it is wide, so this is smaller
    than the shift along dip; dividing by the boundary's mean extent along strike
    instead gives the dip-equivalent ``net_dip_shift_m``, comparable with the transects.
    """
    flooded = shapely.difference(distal_younger, distal_older).area
    exposed = shapely.difference(distal_older, distal_younger).area
    # slivers below a square metre are rounding in the polygon overlay, not land or sea
    flooded = flooded if flooded >= 1.0 else 0.0
    exposed = exposed if exposed >= 1.0 else 0.0
    mean_len = (length_older_m + length_younger_m) / 2
    net = (flooded - exposed) / mean_len if mean_len > 0 else np.nan
    out = dict(flooded_km2=flooded / 1e6, exposed_km2=exposed / 1e6, net_shift_m=float(net))
    if extent_older_m is not None and extent_younger_m is not None:
        ext = (extent_older_m + extent_younger_m) / 2
        out["net_dip_shift_m"] = float((flooded - exposed) / ext) if ext > 0 else np.nan
    return out
