"""Facies bands, accumulation and the time stepping of the forward model.

Each point of the surface evolves on its own (no lateral transport): at every time
step its elevation relative to sea level picks its belt from the belt's elevation
band, the belt's accumulation rate raises it, subsidence lowers it, and where
erosion is switched on, ground above sea level is cut down towards sea level while
sea level falls. Because points are independent, the cores and the truth maps are
the same computation on different sets of points, and agree exactly.

Walther's Law (Walther 1894; Middleton 1973) holds in the cores by construction:
every step is short enough that the elevation relative to sea level changes by less
than half the narrowest finite band, so a point's belt changes by at most one rank
per step, and every belt accumulates, so no step leaves an empty record (steps are
subdivided where needed).

Examples
--------
>>> from paleomap.scheme import builtin_scheme
>>> bands = FaciesBands.default(builtin_scheme("shoreface_shelf"))
>>> bands.levels_m
(10.0, 0.0, -3.0, -12.0, -30.0)
>>> bands.rank_of([20.0, 0.0, -1.0, -100.0]).tolist()
[0, 1, 2, 5]
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError, Problem
from ..scheme import Scheme

__all__ = ["DEFAULT_BANDS", "FaciesBands"]

DEFAULT_BANDS = {
    # Elevation of each boundary relative to sea level (m), proximal to distal, and the
    # accumulation rate of each belt (m/kyr).
    # Wave-dominated shoreface profile (common practice): alluvial plain above about
    # +10 m, coastal plain from sea level to +10 m, foreshore between low and high tide
    # (0 to -3 m), shoreface down to fair-weather wave base (-12 m), offshore transition
    # down to storm wave base (-30 m), offshore below. Rates are our choice: highest at
    # the shoreface, lower on the plains and offshore; over 1-100 kyr spans they are of
    # the order measured on shelves (Sadler 1981 shows rates fall as the span grows;
    # from memory).
    "shoreface_shelf": (
        (10.0, 0.0, -3.0, -12.0, -30.0),
        (0.03, 0.05, 0.12, 0.15, 0.10, 0.04),
    ),
    # Carbonate ramp after Burchette & Wright (1992, from memory): sabkha and tidal flat
    # above sea level, the inner ramp's lagoon (0 to -4 m) and shoal (to fair-weather
    # wave base, -10 m), mid ramp to storm wave base (-30 m), outer ramp to -80 m, basin
    # below. The carbonate factory is most productive in the shallow photic zone, so
    # rates peak on the shoal and fall basinward; a sabkha builds up slowly.
    "carbonate_ramp": (
        (0.0, -4.0, -10.0, -30.0, -80.0),
        (0.02, 0.15, 0.30, 0.15, 0.05, 0.02),
    ),
    # The lithology schemes, for a basin built with one of them and a track: grain-size
    # classes of a shelf (gravel above +15 m, coarse sand to sea level, fine sand to
    # -8 m, silt to -30 m, clay below), and Dunham textures of an all-marine ramp
    # (grainstone to -5 m, packstone to -20 m, wackestone to -50 m, mudstone below).
    "siliciclastic_lithology": ((15.0, 0.0, -8.0, -30.0), (0.03, 0.05, 0.15, 0.10, 0.04)),
    "carbonate_lithology": ((-5.0, -20.0, -50.0), (0.30, 0.20, 0.10, 0.03)),
}


@dataclass(frozen=True)
class FaciesBands:
    """Elevation bands (relative to sea level) and accumulation rates per belt.

    Parameters
    ----------
    scheme : Scheme
    levels_m : tuple of float
        The K-1 boundary elevations, m relative to sea level, strictly decreasing:
        ``levels_m[b - 1]`` is boundary ``b`` between ranks ``b - 1`` and ``b``. A belt
        holds the elevations from its lower boundary (included) up to its upper one.
        In a scheme with a shoreline, the shoreline boundary is at 0 m; in an
        all-marine scheme every boundary is at or below 0 m and nothing accumulates
        above sea level.
    rates_m_per_kyr : tuple of float
        Accumulation rate of each belt, >= 0. Belts with rate 0 leave no record.

    Examples
    --------
    >>> from paleomap.scheme import builtin_scheme
    >>> b = FaciesBands.default(builtin_scheme("carbonate_ramp"))
    >>> b.boundary_level(b.scheme.tracked_boundary), b.boundary_level(3)
    (0.0, -10.0)
    """

    scheme: Scheme
    levels_m: tuple[float, ...]
    rates_m_per_kyr: tuple[float, ...]

    def __post_init__(self) -> None:
        object.__setattr__(self, "levels_m", tuple(float(v) for v in self.levels_m))
        object.__setattr__(self, "rates_m_per_kyr", tuple(float(v) for v in self.rates_m_per_kyr))
        problems = _band_problems(self.scheme, self.levels_m, self.rates_m_per_kyr)
        if problems:
            raise InputError(problems)

    @classmethod
    def default(cls, scheme: Scheme, levels_m=None, rates_m_per_kyr=None) -> FaciesBands:
        """Bands of a built-in scheme, with either part optionally replaced.

        A custom scheme has no defaults: give both ``levels_m`` and ``rates_m_per_kyr``.
        """
        base = DEFAULT_BANDS.get(scheme.name) if scheme.family != "custom" else None
        if base is None and (levels_m is None or rates_m_per_kyr is None):
            raise InputError(
                [
                    Problem(
                        None,
                        None,
                        "levels_m",
                        levels_m,
                        f"scheme {scheme.name!r} has no default elevation bands",
                        f"give levels_m ({scheme.n_belts - 1} boundary elevations, m relative to "
                        f"sea level, decreasing) and rates_m_per_kyr ({scheme.n_belts} rates)",
                    )
                ]
            )
        levels = base[0] if levels_m is None else tuple(levels_m)
        rates = base[1] if rates_m_per_kyr is None else tuple(rates_m_per_kyr)
        return cls(scheme, levels, rates)

    @property
    def all_marine(self) -> bool:
        return self.scheme.shoreline_boundary is None

    def boundary_level(self, b: int) -> float:
        """Elevation (m relative to sea level) of boundary ``b`` (1 to K-1)."""
        return self.levels_m[b - 1]

    @property
    def min_band_width_m(self) -> float:
        """Width of the narrowest belt with two finite boundaries (inf if none)."""
        if len(self.levels_m) < 2:
            return math.inf
        return float(np.min(-np.diff(self.levels_m)))

    def rank_of(self, elevation_m) -> np.ndarray:
        """Belt rank of elevations relative to sea level (m)."""
        ascending = np.asarray(self.levels_m[::-1])
        e = np.asarray(elevation_m, dtype=float)
        return len(ascending) - np.searchsorted(ascending, e, side="right")


def _band_problems(scheme, levels, rates) -> list[Problem]:
    out: list[Problem] = []
    k = scheme.n_belts
    if len(levels) != k - 1:
        out.append(
            Problem(
                None,
                None,
                "levels_m",
                list(levels),
                f"needs {k - 1} boundary elevations for {k} belts",
            )
        )
    elif not all(math.isfinite(v) for v in levels) or any(
        a <= b for a, b in zip(levels, levels[1:], strict=False)
    ):
        out.append(
            Problem(
                None,
                None,
                "levels_m",
                list(levels),
                "must be finite and strictly decreasing (proximal to distal)",
            )
        )
    else:
        sb = scheme.shoreline_boundary
        if sb is not None and levels[sb - 1] != 0.0:
            out.append(
                Problem(
                    None,
                    None,
                    "levels_m",
                    list(levels),
                    f"the shoreline boundary {scheme.boundary_name(sb)!r} "
                    "must be at 0 m (sea level)",
                )
            )
        if sb is None and scheme.belts[0].marine and levels[0] > 0.0:
            out.append(
                Problem(
                    None,
                    None,
                    "levels_m",
                    list(levels),
                    "in an all-marine scheme every boundary must be at or below sea level (0 m)",
                )
            )
    if len(rates) != k:
        out.append(
            Problem(None, None, "rates_m_per_kyr", list(rates), f"needs one rate per belt ({k})")
        )
    elif not all(math.isfinite(r) and r >= 0 for r in rates):
        out.append(
            Problem(
                None, None, "rates_m_per_kyr", list(rates), "rates must be finite and >= 0 m/kyr"
            )
        )
    return out


def _time_grid(
    start_kyr: float,
    end_kyr: float,
    step_kyr: float,
    required_kyr,
    level_at_kyr,
    max_change_rate_m_per_kyr: float,
    min_band_width_m: float,
) -> np.ndarray:
    """Step boundaries (kyr, oldest first).

    Every required age (sea-level points, surfaces) is a boundary; between them the
    steps are at most ``step_kyr`` long, and shorter where needed so that elevation
    relative to sea level moves by less than half the narrowest band per step.
    """
    required = np.unique(np.concatenate([[start_kyr, end_kyr], np.asarray(required_kyr)]))
    required = required[(required <= start_kyr) & (required >= end_kyr)][::-1]
    nodes = [required[0]]
    limit = 0.5 * min_band_width_m
    for a, b in zip(required[:-1], required[1:], strict=True):
        span = a - b
        n = max(1, math.ceil(span / step_kyr - 1e-9))
        if math.isfinite(limit):
            d_sl = abs(float(level_at_kyr(b)) - float(level_at_kyr(a)))
            n = max(n, math.ceil((d_sl + max_change_rate_m_per_kyr * span) / limit))
        inner = a - span * np.arange(1, n) / n
        nodes.extend(inner.tolist())
        nodes.append(b)
    return np.asarray(nodes, dtype=float)


@dataclass
class _Evolution:
    """What one run of :func:`_evolve` keeps."""

    recorded: np.ndarray  # (n_record, n_points) elevation relative to sea level, m
    column: np.ndarray | None  # (n_steps + 1, n_points) column top above basement, m
    ranks: np.ndarray | None  # (n_steps, n_points) belt rank of each step's deposit
    surface: np.ndarray  # (n_points,) surface elevation at the end, m above datum


def _evolve(
    z0: np.ndarray,
    subsidence: np.ndarray,
    ages_kyr: np.ndarray,
    levels: np.ndarray,
    bands: FaciesBands,
    erosion_m_per_kyr: float,
    record: np.ndarray,
    keep_column: bool,
) -> _Evolution:
    """Run the forward model for independent points.

    Parameters
    ----------
    z0, subsidence : arrays (n_points,)
        Initial elevation (m above datum) and subsidence rate (m/kyr).
    ages_kyr, levels : arrays (n_steps + 1,)
        Step boundaries, oldest first, and sea level at each.
    record : int array
        Step-boundary indices at which to keep elevation relative to sea level.
    keep_column : bool
        Keep the column height at every boundary and the rank of every step (cores).
    """
    z0 = np.asarray(z0, dtype=float)
    subsidence = np.asarray(subsidence, dtype=float)
    n_steps = len(ages_kyr) - 1
    rates = np.asarray(bands.rates_m_per_kyr)
    where = {int(j): i for i, j in enumerate(record)}
    recorded = np.empty((len(record), z0.size))
    column = np.empty((n_steps + 1, z0.size)) if keep_column else None
    ranks = np.empty((n_steps, z0.size), dtype=np.int16) if keep_column else None
    top = np.zeros_like(z0)
    start = ages_kyr[0]
    exposed_dry = bands.all_marine
    for j in range(n_steps + 1):
        basement = z0 - subsidence * (start - ages_kyr[j])
        e = basement + top - levels[j]
        if j in where:
            recorded[where[j]] = e
        if keep_column:
            column[j] = top
        if j == n_steps:
            break
        rank = bands.rank_of(e)
        dt = ages_kyr[j] - ages_kyr[j + 1]
        gain = rates[rank] * dt
        if exposed_dry:
            # No carbonate factory on dry land: exposure is a hiatus.
            gain = np.where(e >= 0.0, 0.0, gain)
        if erosion_m_per_kyr > 0 and levels[j + 1] < levels[j]:
            # Falling sea level: ground above sea level is cut down, never below sea
            # level (base level) and never into the pre-existing basement.
            cut = np.minimum(np.minimum(erosion_m_per_kyr * dt, top), np.maximum(e, 0.0))
            gain = np.where(e > 0.0, -cut, gain)
        top = top + gain
        if keep_column:
            ranks[j] = rank
    surface = z0 - subsidence * (start - ages_kyr[-1]) + top
    return _Evolution(recorded, column, ranks, surface)
