"""Stacking trends: deepening-upward, shallowing-upward, aggrading or mixed.

Rule
----
For a rank profile (a whole core, or the part of it between two picks):

1. With no logged interval the trend is ``""`` (no record).
2. If every interval has the same rank, the trend is ``"aggrading"``.
3. If the profile holds a turnaround (an MFS or MRS with at least ``min_change`` ranks,
   default 2, of change on both sides, found by
   :func:`~paleomap.stacking.turnarounds.find_turnarounds`), both directions are strong
   and the trend is ``"mixed"``.
4. Otherwise the slope ``b`` of rank against elevation-up (``-depth``) is the
   thickness-weighted Theil-Sen estimate: the weighted median of the pairwise slopes
   ``(r_j - r_i) / (u_j - u_i)`` between interval midpoints, each pair weighted by the
   product of the two thicknesses (pairs within one interval do not exist, so a thick
   interval counts for more but cannot vote on its own). The fitted rank change is
   ``b`` times the height between the lowest and highest midpoints. If it is at least
   ``min_trend`` ranks (default 0.5) the trend is ``"deepening-upward"`` (``b > 0``,
   more distal upward) or ``"shallowing-upward"`` (``b < 0``); else ``"aggrading"``.
   A profile of more than 2000 intervals is first resampled to 2000 equal-height cells
   (each taking the rank logged at its middle; cells in a gap are dropped), which keeps
   the thickness weighting and bounds the pair count (memory grows with its square).

Ranks grow distal, so deepening-upward is transgressive and, in a siliciclastic scheme
whose belts fine distally, fining-upward; shallowing-upward is regressive and
coarsening-upward (Catuneanu et al. 2009 for the terms).

Examples
--------
>>> from paleomap.stacking.profile import RankProfile
>>> p = RankProfile.from_arrays([0, 3, 6], [3, 6, 9], [4, 2, 0])  # coarse below, fine above
>>> classify_trend(p).trend
'deepening-upward'
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .profile import RankProfile
from .turnarounds import find_turnarounds

__all__ = [
    "TREND_CLASSES",
    "Trend",
    "classify_trend",
    "grain_word",
    "sense_word",
    "weighted_theil_sen",
]

TREND_CLASSES = ("deepening-upward", "shallowing-upward", "aggrading", "mixed")
"""The stacking trend classes; ``""`` stands for no record."""

_MAX_FIT = 2000

_GRAIN = {"deepening-upward": "fining-upward", "shallowing-upward": "coarsening-upward"}
_SENSE = {"deepening-upward": "transgression", "shallowing-upward": "regression"}


@dataclass(frozen=True)
class Trend:
    """The stacking trend of a rank profile.

    Parameters
    ----------
    trend : str
        One of :data:`TREND_CLASSES`, or ``""`` with no logged interval.
    slope : float
        Theil-Sen slope of rank against elevation-up, ranks per depth unit (positive =
        deepening upward); 0 for a single rank, NaN with no record.
    rank_change : float
        Fitted rank change between the lowest and highest midpoints (ranks).
    n_intervals : int
        Logged intervals in the profile.
    """

    trend: str
    slope: float
    rank_change: float
    n_intervals: int


def weighted_theil_sen(elevation, rank, weight) -> float:
    """Weighted median of pairwise slopes, pairs weighted by the product of weights.

    Parameters
    ----------
    elevation, rank, weight : array_like
        Same length; pairs with equal elevation are skipped.

    Returns
    -------
    float
        NaN with fewer than two distinct elevations.

    Examples
    --------
    >>> weighted_theil_sen([0, 1, 2, 3, 4], [0, 1, 2, 3, 40], [1, 1, 1, 1, 1])  # one outlier
    1.0
    """
    u = np.asarray(elevation, dtype=float)
    r = np.asarray(rank, dtype=float)
    w = np.asarray(weight, dtype=float)
    i, j = np.triu_indices(len(u), 1)
    du = u[j] - u[i]
    ok = du != 0
    if not ok.any():
        return float("nan")
    s = (r[j] - r[i])[ok] / du[ok]
    ww = (w[i] * w[j])[ok]
    order = np.argsort(s, kind="stable")
    s, ww = s[order], ww[order]
    cw = np.cumsum(ww)
    half = 0.5 * cw[-1]
    k = int(np.searchsorted(cw, half * (1 - 1e-12)))
    # On an exact tie at the half weight, average the two middle slopes.
    if abs(cw[k] - half) <= 1e-12 * cw[-1] and k + 1 < len(s):
        return float(0.5 * (s[k] + s[k + 1]))
    return float(s[k])


def classify_trend(
    profile: RankProfile,
    min_trend: float = 0.5,
    min_change: int = 2,
    spike_fraction: float = 0.25,
    noise_thickness: float = 0.0,
) -> Trend:
    """The stacking trend of a rank profile (rule in the module docstring).

    Parameters
    ----------
    profile : RankProfile
    min_trend : float
        Smallest fitted rank change called a trend (ranks).
    min_change, spike_fraction, noise_thickness
        Passed to :func:`~paleomap.stacking.turnarounds.find_turnarounds`.

    Examples
    --------
    >>> from paleomap.stacking.profile import RankProfile
    >>> classify_trend(RankProfile.from_arrays([0, 2], [2, 4], [3, 3])).trend
    'aggrading'
    """
    n = len(profile)
    if n == 0:
        return Trend("", float("nan"), float("nan"), 0)
    r = profile.ranks
    if r.min() == r.max():
        return Trend("aggrading", 0.0, 0.0, n)
    u, rr, w = -profile.mids, r, profile.thicknesses
    if n > _MAX_FIT:
        u, rr, w = _resampled(profile, _MAX_FIT)
    b = weighted_theil_sen(u, rr, w) + 0.0  # + 0.0 turns -0.0 into 0.0
    change = float(b * (u.max() - u.min())) + 0.0
    if find_turnarounds(profile, min_change, spike_fraction, noise_thickness):
        return Trend("mixed", b, change, n)
    if abs(change) < min_trend:
        return Trend("aggrading", b, change, n)
    return Trend("deepening-upward" if b > 0 else "shallowing-upward", b, change, n)


def _resampled(profile: RankProfile, cells: int):
    edges = np.linspace(profile.tops[0], profile.bases[-1], cells + 1)
    mids = 0.5 * (edges[:-1] + edges[1:])
    k = np.searchsorted(profile.tops, mids, side="right") - 1
    inside = (k >= 0) & (mids < profile.bases[np.clip(k, 0, None)])
    height = np.full(int(inside.sum()), edges[1] - edges[0])
    return -mids[inside], profile.ranks[k[inside]], height


def grain_word(trend: str, family: str) -> str:
    """``"fining-upward"`` / ``"coarsening-upward"`` beside a trend in a siliciclastic scheme.

    Examples
    --------
    >>> grain_word("deepening-upward", "siliciclastic"), grain_word("deepening-upward", "carbonate")
    ('fining-upward', '')
    """
    return _GRAIN.get(trend, "") if family == "siliciclastic" else ""


def sense_word(trend: str) -> str:
    """``"transgression"`` / ``"regression"`` for a deepening / shallowing trend, else "".

    Senses are nouns everywhere (cores and maps alike), so columns compare directly.

    Examples
    --------
    >>> sense_word("shallowing-upward")
    'regression'
    """
    return _SENSE.get(trend, "")
