"""Laying down a basin's strata point by point: water depth, accumulation, erosion.

Every point of a bench basin evolves on its own, from an initial ground surface,
through time steps short enough that the water depth changes by much less than the
narrowest belt's depth range:

1. sea level and the ground's elevation give the water depth, and the water depth
   gives the belt (:class:`~basins.bands.Bands`);
2. the belt's accumulation rate (times a delta lobe's supply, where there is one)
   raises the ground, never above sea level plus ``build_above_m`` (or the lobe's
   sloping plain);
3. while sea level falls, exposed ground is cut down towards sea level at
   ``erosion_m_per_kyr``, never closer to it than ``erosion_floor_m`` (the non-marine
   tops of a lowstand), which removes the youngest strata of the point's column
   first;
4. subsidence lowers the ground.

Because points do not talk to each other, the cores and the truth maps are the same
computation at different points and agree exactly.

Examples
--------
>>> from basins.bands import Bands
>>> from basins.region import Region
>>> from basins.relief import Ramp, Subsidence
>>> from basins.sealevel import SeaLevel
>>> model = BasinModel(
...     family="example", seed=0, region=Region(),
...     bands=Bands(("plain", "sea"), (False, True), (0.0,), (0.1, 0.1)),
...     sea_level=SeaLevel(((20.0, 0.0), (10.0, 5.0))), ground=(Ramp(1.0),),
...     subsidence=Subsidence(), surfaces=(Surface("A", 20.0), Surface("B", 10.0)),
...     start_ka=22.0, end_ka=8.0)
>>> e, n = model.region.world([0.0, 3000.0], [0.0, 0.0])
>>> sim = simulate(model, e, n, record=True)
>>> [round(float(v), 3) for v in sim.water_depth[10.0]]   # 5 m rise on 1 m/km, 1.2 m accumulated
[3.8, 6.8]
>>> sim.thickness.sum(axis=0).round(3).tolist()
[1.4, 1.4]
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .bands import Bands
from .region import Region
from .relief import LobeSupply, Subsidence, ValleyFill
from .sealevel import SeaLevel

__all__ = ["BasinModel", "Simulation", "Surface", "simulate"]


@dataclass(frozen=True)
class Surface:
    """A dated time surface; ``erosional`` when time may be missing below it."""

    name: str
    age_ka: float
    erosional: bool = False
    age_sd_ka: float = 0.0


@dataclass(frozen=True)
class BasinModel:
    """Everything that decides a bench basin's strata.

    Parameters
    ----------
    family, seed : str, int
        Which family and seed made it (for labels).
    region : Region
    bands : Bands
    sea_level : SeaLevel
    ground : tuple of callables
        Shapes ``f(dip_m, strike_m) -> m`` added up into the initial ground elevation.
    subsidence : Subsidence
    surfaces : tuple of Surface
        The dated surfaces; each becomes a time slice.
    start_ka, end_ka : float
        The run starts at ``start_ka`` and ends at ``end_ka`` (the core tops).
    supply : ValleyFill, LobeSupply or None
        A multiplier of the accumulation rates (valleys that fill, a delta lobe).
    erosion_m_per_kyr : float
        Cut rate of exposed ground while sea level falls.
    erosion_floor_m : float
        Erosion stops this far above the falling sea level.
    plain_keeps_pace : bool
        Non-marine belts accumulate at least as fast as the ground subsides (a
        floodplain that keeps pace with subsidence), so they hold a record everywhere.
    build_above_m : float or None
        Accumulation never raises the ground above sea level plus this; None for no
        limit. A delta lobe's supply sets its own limit instead.
    max_step_kyr : float
        Longest time step.
    notes : dict
        Free description written into the project file's header.
    """

    family: str
    seed: int
    region: Region
    bands: Bands
    sea_level: SeaLevel
    ground: tuple
    subsidence: Subsidence
    surfaces: tuple
    start_ka: float
    end_ka: float
    supply: ValleyFill | LobeSupply | None = None
    erosion_m_per_kyr: float = 0.0
    erosion_floor_m: float = 0.5
    plain_keeps_pace: bool = False
    build_above_m: float | None = None
    max_step_kyr: float = 0.25
    notes: dict = field(default_factory=dict, compare=False)

    def initial_elevation(self, easting, northing) -> np.ndarray:
        """Ground elevation at the start of the run (m above the sea-level datum)."""
        dip, strike = self.region.local(easting, northing)
        return sum(shape(dip, strike) for shape in self.ground) + 0.0 * dip

    def time_steps(self) -> np.ndarray:
        """Step boundaries (ka, decreasing) from start to end, through every surface age."""
        keys = sorted({self.start_ka, self.end_ka, *(s.age_ka for s in self.surfaces)})[::-1]
        out = [keys[0]]
        for a, b in zip(keys[:-1], keys[1:], strict=True):
            n = max(1, math.ceil((a - b) / self.max_step_kyr - 1e-9))
            out.extend(np.linspace(a, b, n + 1)[1:].tolist())
        return np.array(out)


@dataclass(eq=False)
class Simulation:
    """What a run leaves at a set of points.

    ``water_depth[age]`` is the water depth at each point at each surface age (and at
    the run's end). With ``record``, ``thickness`` (steps, points) is what is left of
    each step's deposit after later erosion, ``deposited`` what it laid down, ``ranks``
    its belt, ``erosion`` (steps, points) how much each step cut, and ``lowest_cut``
    (steps, points) the oldest step each step's erosion reached (-1 where it cut
    nothing); step ``i`` runs from ``times[i]`` to ``times[i + 1]``.
    """

    times: np.ndarray
    water_depth: dict
    ground: np.ndarray
    thickness: np.ndarray | None = None
    deposited: np.ndarray | None = None
    ranks: np.ndarray | None = None
    erosion: np.ndarray | None = None
    lowest_cut: np.ndarray | None = None


def simulate(model: BasinModel, easting, northing, *, record: bool = False) -> Simulation:
    """Run ``model`` at the given points.

    Parameters
    ----------
    model : BasinModel
    easting, northing : array_like
        Points in the region's CRS.
    record : bool
        Keep every step's deposit (for cores); costs memory of steps x points.
    """
    e = np.asarray(easting, dtype=float).ravel()
    n = np.asarray(northing, dtype=float).ravel()
    dip, strike = model.region.local(e, n)
    z = model.initial_elevation(e, n).astype(float)
    times = model.time_steps()
    wanted = {s.age_ka for s in model.surfaces} | {model.end_ka}
    depth_at = {}
    steps = len(times) - 1
    if record:
        kept = np.zeros((steps, e.size))
        laid = np.zeros((steps, e.size))
        ranks = np.zeros((steps, e.size), dtype=np.int16)
        cut = np.zeros((steps, e.size))
        lowest = np.full((steps, e.size), -1, dtype=np.int32)
    bands = model.bands
    exposed_at = 0.0 if bands.exposed_at_m is None else bands.exposed_at_m
    marine = np.asarray(bands.marine, dtype=bool)
    for i in range(steps):
        t, t1 = float(times[i]), float(times[i + 1])
        dt = t - t1
        sl, sl1 = float(model.sea_level(t)), float(model.sea_level(t1))
        d = sl - z
        if t in wanted:
            depth_at[t] = d.copy()
        r = bands.rank(d)
        rate = bands.rate(r)
        if model.supply is not None:
            rate = rate * model.supply(dip, strike, t)
        acc = rate * dt
        if hasattr(model.supply, "limit_m"):
            acc = np.minimum(acc, np.maximum(0.0, sl + model.supply.limit_m(dip, strike, t) - z))
        elif model.build_above_m is not None:
            acc = np.minimum(acc, np.maximum(0.0, sl + model.build_above_m - z))
        subsidence = model.subsidence(dip, strike, t)
        if model.plain_keeps_pace:
            land = (r >= 0) & ~marine[np.maximum(r, 0)]
            acc = np.where(land, np.maximum(acc, subsidence * dt), acc)
        ero = np.zeros_like(z)
        if model.erosion_m_per_kyr > 0 and sl1 < sl:
            # cut exposed ground, never below the erosion floor above the new sea level:
            # a planed surface follows the falling sea level down, it is not a flat
            floor = sl1 + model.erosion_floor_m
            exposed = d <= exposed_at
            ero = np.where(exposed, np.clip(z - floor, 0.0, model.erosion_m_per_kyr * dt), 0.0)
            acc = np.where(ero > 0, 0.0, acc)
        z = z + acc - ero - subsidence * dt
        if record:
            laid[i] = acc
            kept[i] = acc
            ranks[i] = r
            cut[i] = ero
            for p in np.flatnonzero(ero > 0):
                lowest[i, p] = _erode(kept[:i, p], ero[p])
    depth_at[float(times[-1])] = float(model.sea_level(times[-1])) - z
    if not record:
        return Simulation(times, depth_at, z)
    return Simulation(times, depth_at, z, kept, laid, ranks, cut, lowest)


def _erode(column: np.ndarray, amount: float) -> int:
    """Remove ``amount`` from the top (the end) of ``column`` in place; return the index
    of the oldest step touched, or -1 when there was nothing to remove."""
    lowest = -1
    k = column.size - 1
    while amount > 1e-12 and k >= 0:
        take = min(column[k], amount)
        if take > 0:
            column[k] -= take
            amount -= take
            lowest = k
        k -= 1
    return lowest
