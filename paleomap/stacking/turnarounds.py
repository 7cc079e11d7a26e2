"""Suggested turnaround surfaces: maximum flooding and maximum regressive surfaces.

Catuneanu et al. (2009): the maximum flooding surface (MFS) marks the turnaround from
deepening-upward (transgressive) below to shallowing-upward (regressive) above; the
maximum regressive surface (MRS) marks the opposite turnaround.

Rule
----
The core's rank profile is cleaned (runs merged, thin spikes removed; see
:mod:`paleomap.stacking.profile`) and read **upward** with a hysteresis of ``min_change``
ranks (default 2): a rank extreme becomes a turnaround only once the profile has moved
at least ``min_change`` ranks towards it from the previous turnaround (or from the
lowest/highest rank seen since the base of the profile) *and* at least ``min_change``
ranks away from it above. So a one-belt wobble never makes a turnaround, and the base
and top of the profile are never turnarounds (nothing is known beyond them).

* An extreme of maximum rank is an **MFS**, of minimum rank an **MRS**.
* Where the extreme rank is held over several runs (a plateau, possibly interrupted by
  runs less than ``min_change`` ranks away), the suggestion spans from the base of the
  lowest to the top of the highest run at that rank; its ``depth`` is the middle of that
  span, and ``depth_top`` / ``depth_base`` give the span.

Examples
--------
>>> from paleomap.stacking.profile import RankProfile
>>> # top-down: shallowing above, deepening below -> an MFS in the rank-4 interval
>>> p = RankProfile.from_arrays([0, 2, 4, 6, 8], [2, 4, 6, 8, 10], [1, 3, 4, 2, 0])
>>> [(t.kind, t.depth, t.rank) for t in find_turnarounds(p)]
[('MFS', 5.0, 4)]
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
    """

    kind: str
    depth: float
    depth_top: float
    depth_base: float
    rank: int
    change_below: int
    change_above: int


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
    profile: RankProfile, min_change: int = 2, spike_fraction: float = 0.25
) -> list[Turnaround]:
    """Suggested MFS and MRS of a rank profile, top down.

    Parameters
    ----------
    profile : RankProfile
    min_change : int
        Ranks of change needed on both sides of a turnaround (at least 1).
    spike_fraction : float
        Thin-spike threshold of the cleaning step (see :mod:`paleomap.stacking.profile`).

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
    clean = profile.despiked(min_change, spike_fraction)
    # Read upward: index 0 is the deepest run.
    tops = clean.tops[::-1]
    bases = clean.bases[::-1]
    r = clean.ranks[::-1]
    piv = _pivots(r, min_change)
    out: list[Turnaround] = []
    for k in range(1, len(piv) - 1):
        kind, first, last = piv[k]
        span_top = float(tops[last])
        span_base = float(bases[first])
        rank = int(r[first])
        out.append(
            Turnaround(
                "MFS" if kind == "max" else "MRS",
                0.5 * (span_top + span_base),
                span_top,
                span_base,
                rank,
                int(abs(rank - r[piv[k - 1][1]])),
                int(abs(r[piv[k + 1][1]] - rank)),
            )
        )
    return out[::-1]
