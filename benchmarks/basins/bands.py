"""Facies belts as bands of water depth, each with its accumulation rate.

A belt is where it is because of how deep the water is (or how high the ground stands
above sea level): the bands are the depositional environments of a facies scheme
ordered from the most proximal (highest ground) to the most distal (deepest water).
Water depth is positive below sea level and negative above it, so non-marine belts
have negative bounds. A scheme with only marine belts (a carbonate ramp) leaves the
ground at or above ``exposed_at_m`` without a belt: it is exposed and takes no
sediment.

Examples
--------
>>> b = Bands(("plain", "shoreface", "offshore"), (False, True, True), (0.0, 6.0),
...           (0.1, 0.4, 0.05))
>>> b.rank([-3.0, 0.0, 5.9, 6.0, 40.0]).tolist()
[0, 1, 1, 2, 2]
>>> b.tracked_level_m, b.boundary_name()
(0.0, 'plain|shoreface')
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Bands"]


@dataclass(frozen=True)
class Bands:
    """The belts of a scheme as water-depth bands.

    Parameters
    ----------
    belt_ids : tuple of str
        Proximal to distal, as written in ``intervals.csv``.
    marine : tuple of bool
        Marine flag of each belt (the marine belts are one distal run).
    levels_m : tuple of float
        Water depth of each boundary, increasing: the boundary between ranks ``k - 1``
        and ``k`` lies at ``levels_m[k - 1]``.
    rates_m_per_kyr : tuple of float
        Accumulation rate of each belt where nothing else limits it.
    track : int or None
        The tracked boundary ``b`` (between ranks ``b - 1`` and ``b``); None for the
        shoreline (the boundary between the last non-marine and first marine belt).
    exposed_at_m : float or None
        Water depth at or above which (shallower) the ground is exposed and has no belt;
        None when the scheme has non-marine belts for it.
    builtin : str or None
        The paleomap built-in scheme with these belt ids, written as ``builtin`` in the
        project; None to write the belts themselves.
    """

    belt_ids: tuple
    marine: tuple
    levels_m: tuple
    rates_m_per_kyr: tuple
    track: int | None = None
    exposed_at_m: float | None = None
    builtin: str | None = None

    def __post_init__(self):
        k = len(self.belt_ids)
        if len(self.marine) != k or len(self.rates_m_per_kyr) != k or len(self.levels_m) != k - 1:
            raise ValueError("belt_ids, marine and rates need one entry per belt, levels one fewer")
        if np.any(np.diff(self.levels_m) <= 0):
            raise ValueError(f"levels_m must increase (got {self.levels_m!r})")

    @property
    def n_belts(self) -> int:
        """Number of belts."""
        return len(self.belt_ids)

    @property
    def tracked_boundary(self) -> int:
        """The tracked boundary ``b`` (1-based, between ranks ``b - 1`` and ``b``)."""
        if self.track is not None:
            return self.track
        return int(np.flatnonzero(self.marine)[0])

    @property
    def tracked_level_m(self) -> float:
        """Water depth of the tracked boundary."""
        return float(self.levels_m[self.tracked_boundary - 1])

    @property
    def narrowest_m(self) -> float:
        """Depth range of the narrowest finite band."""
        return float(np.min(np.diff(self.levels_m))) if len(self.levels_m) > 1 else np.inf

    def boundary_name(self, b: int | None = None) -> str:
        """``"proximal|distal"`` ids of boundary ``b`` (default: the tracked one)."""
        b = self.tracked_boundary if b is None else b
        return f"{self.belt_ids[b - 1]}|{self.belt_ids[b]}"

    def rank(self, water_depth_m) -> np.ndarray:
        """Belt rank at each water depth; -1 where the ground is exposed without a belt."""
        d = np.asarray(water_depth_m, dtype=float)
        r = np.searchsorted(np.asarray(self.levels_m), d, side="right").astype(np.int16)
        if self.exposed_at_m is not None:
            r = np.where(d <= self.exposed_at_m, np.int16(-1), r)
        return r

    def rate(self, ranks) -> np.ndarray:
        """Accumulation rate (m/kyr) of each rank; 0 where exposed (rank -1)."""
        ranks = np.asarray(ranks)
        rates = np.append(np.asarray(self.rates_m_per_kyr, dtype=float), 0.0)
        return rates[np.where(ranks < 0, len(rates) - 1, ranks)]
