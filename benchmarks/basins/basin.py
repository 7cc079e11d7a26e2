"""One bench basin: its model, its logged cores and its truth.

:func:`make_basin` draws a basin of a family for a seed, drills and logs its cores,
places the dip transects across the cores' hull and computes the truth. Sizes:

* ``"bench"``: the mapping grid at 250 m (about 150 x 150 cells over the cores'
  hull and margin), the truth lattice at 125 m, transects sampled every 20 m;
* ``"tiny"``: 600 m, 400 m and 50 m, for the fast tests.

Examples
--------
>>> basin = make_basin("planar_ramp", 1, size="tiny")
>>> basin.label, len(basin.logged.cores), len(basin.truth.slices)
('planar_ramp/1', 40, 7)
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import shapely

from .drilling import LoggedCores, core_layout, log_cores
from .families import FAMILIES
from .relief import Ramp
from .stratigraphy import BasinModel, simulate
from .truth import Truth, make_truth, proximal_length

__all__ = ["SIZES", "Basin", "make_basin"]

SIZES = {
    # cell_size_m, margin_m, truth lattice m, transect step m
    "bench": (250.0, 1_000.0, 125.0, 20.0),
    "tiny": (600.0, 1_200.0, 400.0, 50.0),
}
"""Grid settings per size: (cell_size_m, margin_m, truth_lattice_m, transect_step_m)."""


@dataclass(eq=False)
class Basin:
    """A bench basin: ``model``, ``logged`` cores, ``truth``, and the mapping grid's
    ``cell_size_m`` and ``margin_m``; ``hull`` is the cores' convex hull and
    ``spacing_m`` their mean spacing (square root of the hull's area per core)."""

    model: BasinModel
    logged: LoggedCores
    truth: Truth
    cell_size_m: float
    margin_m: float
    layout: str

    @property
    def label(self) -> str:
        """``family/seed``."""
        return f"{self.model.family}/{self.model.seed}"

    @property
    def hull(self):
        """Convex hull of the cores."""
        c = self.logged.cores
        return shapely.convex_hull(shapely.multipoints(c[["easting", "northing"]].to_numpy()))

    @property
    def spacing_m(self) -> float:
        """Mean core spacing: the square root of the hull's area per core."""
        return float(np.sqrt(self.hull.area / len(self.logged.cores)))


def make_basin(family: str, seed: int, *, size: str = "bench", **options) -> Basin:
    """Draw, drill and log a basin of ``family`` for ``seed``; compute its truth.

    ``options`` go to the family's function (``relief=False`` for a planar
    ``planar_ramp``).
    """
    if family not in FAMILIES:
        raise ValueError(f"unknown family {family!r}; known: {sorted(FAMILIES)}")
    if size not in SIZES:
        raise ValueError(f"unknown size {size!r}; known: {sorted(SIZES)}")
    cell, margin, lattice, step = SIZES[size]
    index = sorted(FAMILIES).index(family)
    rng = np.random.default_rng([index, seed])
    model, layout, count = FAMILIES[family](rng, **options)
    model = _centred(dataclasses.replace(model, seed=seed))
    # draw more candidates than needed: cores that stood above base level all the
    # time hold no record and are not drilled
    logged = None
    for extra in (1.5, 3.0, 6.0):
        e, n = core_layout(model.region, layout, int(np.ceil(count * extra)), rng)
        order = rng.permutation(e.size) if layout != "lines" else np.arange(e.size)
        e, n = e[order], n[order]
        ids = [f"{family[:2].upper()}{seed}-{k + 1:03d}" for k in range(e.size)]
        logged = log_cores(model, e, n, ids)
        if len(logged.cores) >= count:
            break
    logged = _first(logged, count, layout)
    hull = shapely.convex_hull(
        shapely.multipoints(logged.cores[["easting", "northing"]].to_numpy())
    )
    truth = make_truth(model, hull, lattice_m=lattice, transect_step_m=step)
    return Basin(model, logged, truth, cell, margin, layout)


def _centred(model: BasinModel) -> BasinModel:
    """The model with its ground raised or lowered so that the tracked boundary's
    range of positions through the slices is centred on the region (along three dip
    lines); the ramp's gradient comes from ``model.notes``."""
    g = model.notes["gradient_m_per_km"] / 1000.0
    half = model.region.size_m / 2
    dip = np.arange(-half, half + 1.0, 100.0)
    lines = (-0.25 * half, 0.0, 0.25 * half)
    e, n = model.region.world(np.tile(dip, len(lines)), np.repeat(lines, dip.size))
    level = model.bands.tracked_level_m
    offset = 0.0
    for _ in range(4):
        trial = dataclasses.replace(model, ground=(*model.ground, Ramp(0.0, offset)))
        sim = simulate(trial, e, n)
        found = []
        for s in trial.surfaces:
            for d in sim.water_depth[s.age_ka].reshape(len(lines), dip.size):
                prox = d < level
                if prox.all():
                    found.append(half)
                elif not prox.any():
                    found.append(-half)
                else:
                    found.append(-half + proximal_length(d, level, 100.0)[0])
        mid = (min(found) + max(found)) / 2
        if abs(mid) < 250.0:
            break
        offset -= mid * g
    return dataclasses.replace(model, ground=(*model.ground, Ramp(0.0, offset)))


def _first(logged: LoggedCores, count: int, layout: str) -> LoggedCores:
    """The first ``count`` cores (spread along the lines for a ``lines`` layout)."""
    cores = logged.cores
    if len(cores) > count:
        if layout == "lines":
            keep = np.round(np.linspace(0, len(cores) - 1, count)).astype(int)
            cores = cores.iloc[keep]
        else:
            cores = cores.iloc[:count]
    ids = set(cores["core_id"])
    return LoggedCores(
        cores.reset_index(drop=True),
        logged.intervals[logged.intervals["core_id"].isin(ids)].reset_index(drop=True),
        logged.picks[logged.picks["core_id"].isin(ids)].reset_index(drop=True),
        logged.contacts[logged.contacts["core_id"].isin(ids)].reset_index(drop=True),
        tuple(c for c in logged.conformable if c in ids),
    )
