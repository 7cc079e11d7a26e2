"""Cores, their logged intervals and their surface picks.

A core is a borehole or outcrop section at a map position with a depth scale
positive down from its top. Depths keep the project's ``depth_unit``.

This module holds the typed values every later stage reads; no file handling.
Building them from the user's tables (and validating them) is
:func:`paleomap.io.core_tables.build_cores`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Core", "Interval", "Pick"]


@dataclass(frozen=True)
class Interval:
    """A depth range of one core logged as one facies belt.

    Parameters
    ----------
    top, base : float
        Depths down from the core top, ``top < base``.
    rank : int
        Belt rank in the scheme (0 = most proximal).
    facies : str
        The facies name as logged.
    line : int or None
        Line of ``intervals.csv`` it came from.
    """

    top: float
    base: float
    rank: int
    facies: str = ""
    line: int | None = None

    @property
    def thickness(self) -> float:
        return self.base - self.top


@dataclass(frozen=True)
class Pick:
    """The depth of a correlated surface in one core."""

    surface: str
    depth: float
    line: int | None = None


@dataclass(frozen=True)
class Core:
    """One core: position, logged intervals (sorted top down) and picks (sorted top down).

    Parameters
    ----------
    core_id : str
    easting, northing : float
        Position in the project's working CRS (metres).
    elevation : float or None
        Elevation of the core top, if given.
    intervals : tuple of Interval
        Sorted by depth, not overlapping; gaps are unrecovered sections.
    picks : tuple of Pick
        Sorted by depth.
    x, y : float
        Position as given, in the project CRS.
    line : int or None
        Line of the cores table it came from.
    """

    core_id: str
    easting: float
    northing: float
    elevation: float | None = None
    intervals: tuple[Interval, ...] = ()
    picks: tuple[Pick, ...] = ()
    x: float = float("nan")
    y: float = float("nan")
    line: int | None = None

    @property
    def top(self) -> float:
        """Shallowest logged depth (NaN if nothing is logged)."""
        return self.intervals[0].top if self.intervals else float("nan")

    @property
    def base(self) -> float:
        """Deepest logged depth (NaN if nothing is logged)."""
        return self.intervals[-1].base if self.intervals else float("nan")

    def pick_depth(self, surface: str) -> float | None:
        for p in self.picks:
            if p.surface == surface:
                return p.depth
        return None

    def interval_at(self, depth: float) -> Interval | None:
        """The interval logged at ``depth``.

        At a contact (a depth that is the base of one interval and the top of the next)
        the interval just above is returned, since a surface picked on a contact marks
        the end of what was deposited above it. At the core top the first interval is
        returned. In a gap (no recovery) or outside the logged range: None.
        """
        for iv in self.intervals:
            if iv.top < depth <= iv.base:
                return iv
        if self.intervals and depth == self.intervals[0].top:
            return self.intervals[0]
        return None

    def rank_profile(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Arrays (top, base, rank) of the logged intervals, top down."""
        tops = np.array([iv.top for iv in self.intervals], dtype=float)
        bases = np.array([iv.base for iv in self.intervals], dtype=float)
        ranks = np.array([iv.rank for iv in self.intervals], dtype=int)
        return tops, bases, ranks
