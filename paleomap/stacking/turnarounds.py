"""Suggested turnaround surfaces: maximum flooding and maximum regressive surfaces.

Catuneanu et al. (2009): the maximum flooding surface (MFS) marks the turnaround from
deepening-upward (transgressive) below to shallowing-upward (regressive) above; the
maximum regressive surface (MRS) marks the opposite turnaround.

Rule
----
The core's rank profile is cleaned (runs merged, runs thinner than the noise thickness
scale absorbed, thin spikes removed; see :mod:`paleomap.stacking.profile`) and read
**upward** with a hysteresis of ``min_change``
ranks (default 2): a rank extreme becomes a turnaround only once the profile has moved
at least ``min_change`` ranks towards it from the previous turnaround (or from the
lowest/highest rank seen since the base of the profile) *and* at least ``min_change``
ranks away from it above. So a one-belt wobble never makes a turnaround, and the base
and top of the profile are never turnarounds (nothing is known beyond them).

* An extreme of maximum rank is an **MFS**, of minimum rank an **MRS**.
* The extremes alternate, so each transgressive-regressive cycle (from one MRS to the
  next) holds at most one MFS and each regressive-transgressive cycle at most one MRS;
  more turnarounds than cycles appear only where the cleaned profile swings at least
  ``min_change`` ranks both ways over beds thicker than the noise scale.
* Each turnaround carries a **confidence** in [0, 1]: the product of an amplitude term,
  ``min(1, a / (min_change + 1))`` with ``a`` the smaller of its two rank changes (a
  turnaround of ``min_change`` ranks scores 2/3 at the default), and a thickness term,
  ``min(1, h / (5 * noise_thickness))`` with ``h`` the thinner of the two legs (the depth
  from the previous extreme to this one, and from this one to the next); with no noise
  scale the thickness term is 1.
* Where the extreme rank is held over several runs (a plateau, possibly interrupted by
  runs less than ``min_change`` ranks away), the suggestion spans from the base of the
  lowest to the top of the highest run at that rank; its ``depth`` is the middle of that
  span, and ``depth_top`` / ``depth_base`` give the span.

Examples
--------
>>> from paleomap.stacking.profile import RankProfile
>>> # top-down: shallowing above, deepening below -> an MFS in the rank-4 interval
>>> p = RankProfile.from_arrays([0, 2, 4, 6, 8], [2, 4, 6, 8, 10], [1, 3, 4, 2, 0])
>>> [(t.kind, t.depth, t.rank, t.confidence) for t in find_turnarounds(p)]
[('MFS', 5.0, 4, 1.0)]
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .profile import RankProfile

__all__ = ["TURNAROUND_KINDS", "Turnaround", "find_turnarounds"]

TURNAROUND_KINDS = ("MFS", "MRS")
"""Maximum flooding surface, maximum regressive surface."""


@dataclass(frozen=True)
class Turnaround:
    """One suggested turnaround in a core.

    Parameters
    ----------
    kind : {"MFS", "MRS"}
    depth : float
        Middle of the extreme-rank span (project depth unit).
    depth_top, depth_base : float
        The span of the extreme-rank runs.
    rank : int
        The extreme rank (most distal for an MFS, most proximal for an MRS).
    change_below, change_above : int
        Ranks of change from the previous turnaround (or profile extreme) below, and to
        the next one above; both at least ``min_change``.
    confidence : float
        In [0, 1]; the rule is in the module docstring.
    cycle : int
        The transgressive-regressive cycle it belongs to, counted upward from 1: a cycle
        starts at the base of the profile or at an MRS.
    """

    kind: str
    depth: float
    depth_top: float
    depth_base: float
    rank: int
    change_below: int
    change_above: int
    confidence: float = 1.0
    cycle: int = 1


def _pivots(r: np.ndarray, h: int) -> list[tuple[str, int, int]]:
    """Alternating extremes (kind, first, last) of an upward rank sequence.

    ``first`` and ``last`` are the lowest and highest run at the extreme rank. The first
    and last pivot are the ends of the profile, not turnarounds.
    """
    m = len(r)
    if m < 3:
        return []
    pivots: list[tuple[str, int, int]] = []
    lo = lo_last = hi = hi_last = 0
    direction = 0
    ext = ext_last = 0
    for i in range(1, m):
        if direction == 0:
            if r[i] > r[hi]:
                hi = hi_last = i
            elif r[i] == r[hi]:
                hi_last = i
            if r[i] < r[lo]:
                lo = lo_last = i
            elif r[i] == r[lo]:
                lo_last = i
            if r[hi] - r[lo] >= h:
                if lo < hi:
                    pivots.append(("min", lo, lo_last))
                    direction, ext, ext_last = 1, hi, hi_last
                else:
                    pivots.append(("max", hi, hi_last))
                    direction, ext, ext_last = -1, lo, lo_last
        elif direction == 1:
            if r[i] > r[ext]:
                ext = ext_last = i
            elif r[i] == r[ext]:
                ext_last = i
            elif r[ext] - r[i] >= h:
                pivots.append(("max", ext, ext_last))
                direction, ext, ext_last = -1, i, i
        else:
            if r[i] < r[ext]:
                ext = ext_last = i
            elif r[i] == r[ext]:
                ext_last = i
            elif r[i] - r[ext] >= h:
                pivots.append(("min", ext, ext_last))
                direction, ext, ext_last = 1, i, i
    if direction != 0:
        pivots.append(("max" if direction == 1 else "min", ext, ext_last))
    return pivots


def find_turnarounds(
    profile: RankProfile,
    min_change: int = 2,
    spike_fraction: float = 0.25,
    noise_thickness: float = 0.0,
) -> list[Turnaround]:
    """Suggested MFS and MRS of a rank profile, top down.

    Parameters
    ----------
    profile : RankProfile
    min_change : int
        Ranks of change needed on both sides of a turnaround (at least 1).
    spike_fraction : float
        Thin-spike threshold of the cleaning step (see :mod:`paleomap.stacking.profile`).
    noise_thickness : float
        Runs thinner than this (depth units) are noise (:meth:`RankProfile.smoothed`).

    Returns
    -------
    list of Turnaround
        Shallowest first.

    Examples
    --------
    >>> from paleomap.stacking.profile import RankProfile
    >>> p = RankProfile.from_arrays([0, 1, 2], [1, 2, 3], [0, 3, 0])  # upward: 0, 3, 0
    >>> find_turnarounds(p)[0].kind
    'MFS'
    """
    if min_change < 1:
        raise ValueError(f"min_change must be at least 1, got {min_change!r}")
    clean = profile.smoothed(noise_thickness).despiked(min_change, spike_fraction)
    # Read upward: index 0 is the deepest run.
    tops = clean.tops[::-1]
    bases = clean.bases[::-1]
    r = clean.ranks[::-1]
    piv = _pivots(r, min_change)
    mids = 0.5 * (tops + bases)

    def centre(p):
        return 0.5 * (mids[p[1]] + mids[p[2]])

    out: list[Turnaround] = []
    cycle = 1
    for k in range(1, len(piv) - 1):
        kind, first, last = piv[k]
        span_top = float(tops[last])
        span_base = float(bases[first])
        rank = int(r[first])
        below = int(abs(rank - r[piv[k - 1][1]]))
        above = int(abs(r[piv[k + 1][1]] - rank))
        amplitude = min(1.0, min(below, above) / (min_change + 1))
        if noise_thickness > 0:
            # the profile's ends stand for the extremes beyond the first and last pivots
            lo = float(bases[0]) if k == 1 else centre(piv[k - 1])
            hi = float(tops[-1]) if k == len(piv) - 2 else centre(piv[k + 1])
            legs = min(abs(lo - centre(piv[k])), abs(centre(piv[k]) - hi))
            thickness = min(1.0, legs / (5.0 * noise_thickness))
        else:
            thickness = 1.0
        if kind == "min" and k > 1:
            cycle += 1
        out.append(
            Turnaround(
                "MFS" if kind == "max" else "MRS",
                0.5 * (span_top + span_base),
                span_top,
                span_base,
                rank,
                below,
                above,
                round(amplitude * thickness, 3),
                cycle,
            )
        )
    return out[::-1]
