"""Eustatic sea-level histories of several shapes.

A history passes through nodes (age in ka, level in m above the datum). Between two
nodes it runs straight (``"linear"``: the saw-teeth and steps of glacio-eustasy) or
along half a cosine (``"smooth"``: no corner at the turning points). Cycles (a sine of
given amplitude and period) may ride on top, for high-frequency sea-level change.
Ages grow into the past; before the oldest node and after the youngest the level is
held.

Examples
--------
>>> h = SeaLevel(((100.0, 0.0), (90.0, 10.0)))
>>> [float(h(a)) for a in (110.0, 100.0, 95.0, 90.0, 80.0)]
[0.0, 0.0, 5.0, 10.0, 10.0]
>>> s = SeaLevel(((100.0, 0.0), (90.0, 10.0)), shape="smooth")
>>> round(float(s(97.5)), 6)
1.464466
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["SeaLevel"]


@dataclass(frozen=True)
class SeaLevel:
    """A sea-level history.

    Parameters
    ----------
    nodes : tuple of (age_ka, level_m)
        In any order; ages distinct.
    shape : {"linear", "smooth"}
        How the level runs between nodes.
    cycles : tuple of (amplitude_m, period_kyr, phase_rad)
        Sines added on top.
    """

    nodes: tuple
    shape: str = "linear"
    cycles: tuple = ()

    def __post_init__(self):
        if self.shape not in ("linear", "smooth"):
            raise ValueError(f"shape must be 'linear' or 'smooth' (got {self.shape!r})")

    def __call__(self, age_ka):
        a = np.asarray(age_ka, dtype=float)
        nodes = np.array(sorted(self.nodes), dtype=float)  # oldest last
        ages, levels = nodes[:, 0], nodes[:, 1]
        if self.shape == "linear":
            out = np.interp(a, ages, levels)
        else:
            i = np.clip(np.searchsorted(ages, a) - 1, 0, len(ages) - 2)
            f = np.clip((a - ages[i]) / (ages[i + 1] - ages[i]), 0.0, 1.0)
            w = (1.0 - np.cos(np.pi * f)) / 2.0
            out = levels[i] + (levels[i + 1] - levels[i]) * w
        for amplitude, period, phase in self.cycles:
            out = out + amplitude * np.sin(2 * np.pi * a / period + phase)
        return out

    def falling(self, age_ka, step_kyr: float):
        """True where the level falls over the step from ``age_ka`` to ``age_ka - step``."""
        a = np.asarray(age_ka, dtype=float)
        return self(a - step_kyr) < self(a)

    def max_rate_m_per_kyr(self, start_ka: float, end_ka: float) -> float:
        """Largest rate of change between ``start_ka`` and ``end_ka`` (sampled finely)."""
        a = np.linspace(start_ka, end_ka, 4001)
        return float(np.max(np.abs(np.diff(self(a)))) / abs(a[1] - a[0]))
