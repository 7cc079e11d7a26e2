"""The rank profile of a core: belt rank against depth, and its cleaning for turnarounds.

A rank profile is the list of logged intervals of a core (or of a depth window of it) as
three top-down arrays: ``tops``, ``bases`` and ``ranks``. Gaps (no recovery) stay gaps:
nothing is interpolated across them.

Cleaning (used by the turnaround search and by the ``mixed`` test of the trends) has three
steps, all documented in ``docs/stacking.md``:

1. **Runs**: consecutive intervals of the same rank are merged into one run (across a
   gap too, since the belt is the same on both sides).
2. **Noise**: runs thinner than the noise thickness scale are absorbed by their
   neighbours, thinnest first (:meth:`RankProfile.smoothed`).
3. **Thin spikes** are removed: a run that lies beyond both its neighbours (more distal
   than both, or more proximal than both) by at least ``min_change`` ranks and is thinner
   than ``spike_fraction`` times the thinner neighbour is dropped, its thickness shared
   equally by the two neighbours, and the runs are merged again; this repeats until none
   is left. Such a spike is reached and left without the intermediate belts that a
   gradual change of water depth lays down (Walther 1894), so it reads as an event bed or
   a logging slip rather than a turnaround. A thin condensed interval reached through
   intermediate belts is *not* a spike and is kept.

Examples
--------
>>> p = RankProfile.from_arrays([0, 4, 4.1], [4, 4.1, 8], [1, 4, 1])
>>> q = p.runs().despiked(min_change=2, spike_fraction=0.25)
>>> q.ranks.tolist(), q.tops.tolist(), q.bases.tolist()
([1], [0.0], [8.0])
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..cores import Core

__all__ = ["RankProfile"]


@dataclass(frozen=True)
class RankProfile:
    """Belt rank against depth, top down.

    Parameters
    ----------
    tops, bases : numpy.ndarray of float
        Depths of each interval's top and base, ``tops < bases``, sorted top down.
    ranks : numpy.ndarray of int
        Belt ranks (0 = most proximal).
    """

    tops: np.ndarray
    bases: np.ndarray
    ranks: np.ndarray

    @classmethod
    def from_arrays(cls, tops, bases, ranks) -> RankProfile:
        """Build from sequences; sorts top down."""
        t = np.asarray(tops, dtype=float)
        b = np.asarray(bases, dtype=float)
        r = np.asarray(ranks, dtype=int)
        order = np.argsort(t, kind="stable")
        return cls(t[order], b[order], r[order])

    @classmethod
    def from_core(cls, core: Core, top: float = -np.inf, base: float = np.inf) -> RankProfile:
        """The core's intervals clipped to the depth window ``[top, base]``.

        Examples
        --------
        >>> from paleomap.cores import Core, Interval
        >>> core = Core("C", 0, 0, intervals=(Interval(0, 4, 1), Interval(4, 10, 2)))
        >>> RankProfile.from_core(core, 2, 6).bases.tolist()
        [4.0, 6.0]
        """
        t, b, r = core.rank_profile()
        return cls(np.asarray(t, float), np.asarray(b, float), np.asarray(r, int)).clipped(
            top, base
        )

    def clipped(self, top: float = -np.inf, base: float = np.inf) -> RankProfile:
        """The profile clipped to the depth window ``[top, base]``.

        >>> RankProfile.from_arrays([0, 4], [4, 10], [1, 2]).clipped(2, 6).tops.tolist()
        [2.0, 4.0]
        """
        tt = np.maximum(self.tops, top)
        bb = np.minimum(self.bases, base)
        keep = bb > tt
        return RankProfile(tt[keep], bb[keep], self.ranks[keep])

    def __len__(self) -> int:
        return len(self.ranks)

    @property
    def thicknesses(self) -> np.ndarray:
        return self.bases - self.tops

    @property
    def mids(self) -> np.ndarray:
        return 0.5 * (self.tops + self.bases)

    def runs(self) -> RankProfile:
        """Consecutive intervals of the same rank merged into one."""
        if len(self) == 0:
            return self
        starts = np.r_[True, self.ranks[1:] != self.ranks[:-1]]
        idx = np.flatnonzero(starts)
        ends = np.r_[idx[1:], len(self)] - 1
        return RankProfile(self.tops[idx], self.bases[ends], self.ranks[idx])

    def smoothed(self, noise_thickness: float) -> RankProfile:
        """Runs thinner than ``noise_thickness`` removed, thinnest first.

        An alternation of beds thinner than the noise scale (thin storm beds, a logging
        step flipping between two belts) is not a change of environment at the scale a
        turnaround is read. The thinnest run thinner than ``noise_thickness`` is dropped,
        its thickness shared equally by its two neighbours (or given whole to its one
        neighbour at the top or base of the profile), the runs are merged again, and this
        repeats until every run is at least ``noise_thickness`` thick or one run is left.
        Gaps stay where they are: a run is only ever widened into its neighbour's side.

        Examples
        --------
        >>> p = RankProfile.from_arrays([0, 3, 3.5, 4, 4.5, 8], [3, 3.5, 4, 4.5, 8, 11],
        ...                             [1, 2, 1, 2, 3, 3])
        >>> q = p.smoothed(1.0)
        >>> q.ranks.tolist(), q.tops.tolist()
        ([1, 3], [0.0, 4.25])
        """
        prof = self.runs()
        if noise_thickness <= 0:
            return prof
        while len(prof) >= 2:
            th = prof.thicknesses
            thin = np.flatnonzero(th < noise_thickness)
            if thin.size == 0:
                break
            k = int(thin[np.argmin(th[thin])])
            tops = prof.tops.copy()
            bases = prof.bases.copy()
            if k == 0:
                tops[1] = tops[0]
            elif k == len(prof) - 1:
                bases[k - 1] = bases[k]
            else:
                split = 0.5 * (prof.tops[k] + prof.bases[k])
                bases[k - 1] = split
                tops[k + 1] = split
            keep = np.ones(len(prof), dtype=bool)
            keep[k] = False
            prof = RankProfile(tops[keep], bases[keep], prof.ranks[keep]).runs()
        return prof

    def despiked(self, min_change: int = 2, spike_fraction: float = 0.25) -> RankProfile:
        """Runs with thin spikes removed (see the module docstring)."""
        prof = self.runs()
        while len(prof) >= 3:
            r = prof.ranks
            th = prof.thicknesses
            # A spike must be thin against *both* neighbours and exceed both by min_change.
            above = np.minimum(r[:-2], r[2:])
            below = np.maximum(r[:-2], r[2:])
            mid = r[1:-1]
            beyond = (mid - below >= min_change) | (above - mid >= min_change)
            thin = th[1:-1] < spike_fraction * np.minimum(th[:-2], th[2:])
            cand = np.flatnonzero(beyond & thin)
            if cand.size == 0:
                break
            # Drop the thinnest spike first, so a cluster is cleaned from its weakest member.
            k = int(cand[np.argmin(th[1:-1][cand])]) + 1
            split = 0.5 * (prof.tops[k] + prof.bases[k])
            tops = prof.tops.copy()
            bases = prof.bases.copy()
            bases[k - 1] = split
            tops[k + 1] = split
            keep = np.ones(len(prof), dtype=bool)
            keep[k] = False
            prof = RankProfile(tops[keep], bases[keep], r[keep]).runs()
        return prof
