"""Where the cores are, and what a geologist logs in them.

Layouts (all inside the region, ``inset_m`` from its edges):

* ``"random"``: uniformly at random, no two cores closer than half the mean spacing;
* ``"lines"``: along a few straight lines at random places and directions (the wells
  of old exploration lines, or sections along a valley side), evenly spaced along
  each line with a little scatter, so cores cluster along lines with wide gaps between;
* ``"sparse"``: at random like ``"random"``, for few cores (15).

Logging turns a point's record into the three tables of a project: the intervals
(adjacent steps of one belt merged, depths from the core top rounded to the
millimetre), the picks of the surfaces that survive in the core, and the contacts
between intervals with a flag saying whether time is missing at them (a hiatus, where
nothing was laid down, or an erosional cut).

A surface is picked at the depth of the core's top at its age, unless later erosion
cut below that level (then the surface is not in the core). Two surfaces at one depth
(nothing laid down between them) are both picked only when the younger is erosional
(it cuts the older); otherwise one pick stays on the contact: the older surface's if
it is erosional (the unconformity), else the younger's.

Examples
--------
>>> from basins.region import Region
>>> rng = np.random.default_rng(0)
>>> e, n = core_layout(Region(), "lines", 30, rng)
>>> e.size, bool(np.all((e > 480_000) & (e < 520_000)))
(30, True)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .stratigraphy import BasinModel, Simulation, simulate

__all__ = ["LAYOUTS", "LoggedCores", "core_layout", "log_cores"]

LAYOUTS = ("random", "lines", "sparse")
"""The core layouts of :func:`core_layout`."""


def core_layout(region, layout: str, count: int, rng, *, inset_m: float = 3_000.0):
    """Candidate core positions (easting, northing arrays of ``count`` points)."""
    lo_e, lo_n = region.west + inset_m, region.south + inset_m
    side = region.size_m - 2 * inset_m
    if layout in ("random", "sparse"):
        spacing = side / np.sqrt(count)
        pts = []
        tries = 0
        while len(pts) < count:
            p = rng.uniform(0.0, side, 2)
            tries += 1
            limit = 0.5 * spacing if tries < 100 * count else 0.0
            if all(np.hypot(*(p - q)) >= limit for q in pts):
                pts.append(p)
        pts = np.array(pts)
        return lo_e + pts[:, 0], lo_n + pts[:, 1]
    if layout == "lines":
        lines = max(3, round(count / 8))
        per = np.full(lines, count // lines)
        per[: count - per.sum()] += 1
        e, n = [], []
        centre = np.array([lo_e + side / 2, lo_n + side / 2])
        for k in range(lines):
            # lines at spread-out directions, offset from the centre
            angle = np.pi * (k + rng.uniform(0.2, 0.8)) / lines
            u = np.array([np.cos(angle), np.sin(angle)])
            v = np.array([-u[1], u[0]])
            offset = rng.uniform(-0.3, 0.3) * side
            half = 0.5 * side
            s = np.linspace(-half, half, per[k]) + rng.normal(0, 0.02 * side, per[k])
            xy = centre + offset * v + s[:, None] * u + rng.normal(0, 0.01 * side, (per[k], 2))
            # fold points that leave the square back inside it
            xy[:, 0] = lo_e + np.abs((xy[:, 0] - lo_e + side) % (2 * side) - side)
            xy[:, 1] = lo_n + np.abs((xy[:, 1] - lo_n + side) % (2 * side) - side)
            e.append(xy[:, 0])
            n.append(xy[:, 1])
        return np.concatenate(e), np.concatenate(n)
    raise ValueError(f"layout must be one of {LAYOUTS} (got {layout!r})")


@dataclass(eq=False)
class LoggedCores:
    """The logged cores of a basin.

    ``cores`` (core_id, easting, northing), ``intervals`` (core_id, top_m, base_m,
    facies, rank), ``picks`` (core_id, surface, depth_m) and ``contacts`` (core_id,
    depth_m, upper_rank, lower_rank, missing_time: True where a hiatus or an erosional
    cut lies at the contact). ``conformable`` lists the cores in which no time is
    missing anywhere between their base and top.
    """

    cores: pd.DataFrame
    intervals: pd.DataFrame
    picks: pd.DataFrame
    contacts: pd.DataFrame
    conformable: tuple


def log_cores(model: BasinModel, easting, northing, ids) -> LoggedCores:
    """Drill and log cores at the given points; cores with no record are left out."""
    sim = simulate(model, easting, northing, record=True)
    keep_cores, intervals, picks, contacts, conformable = [], [], [], [], []
    for p, cid in enumerate(ids):
        iv, pk, ct, ok = _log_one(model, sim, p, cid)
        if not iv:
            continue
        keep_cores.append(dict(core_id=cid, easting=float(easting[p]), northing=float(northing[p])))
        intervals += iv
        picks += pk
        contacts += ct
        if ok:
            conformable.append(cid)
    return LoggedCores(
        pd.DataFrame(keep_cores, columns=["core_id", "easting", "northing"]),
        pd.DataFrame(intervals, columns=["core_id", "top_m", "base_m", "facies", "rank"]),
        pd.DataFrame(picks, columns=["core_id", "surface", "depth_m"]),
        pd.DataFrame(
            contacts, columns=["core_id", "depth_m", "upper_rank", "lower_rank", "missing_time"]
        ),
        tuple(conformable),
    )


def _log_one(model: BasinModel, sim: Simulation, p: int, cid: str):
    th = sim.thickness[:, p]
    ranks = sim.ranks[:, p]
    steps = th.size
    # depth of the base of step k: everything step k and younger left behind
    base = np.round(np.cumsum(th[::-1])[::-1], 3)
    top = np.append(base[1:], 0.0)
    intervals = []
    present = np.flatnonzero(base > top)  # steps with a logged thickness, oldest first
    for k in present[::-1]:  # youngest first: top of the core downwards
        facies = model.bands.belt_ids[ranks[k]]
        if intervals and intervals[-1]["rank"] == ranks[k] and intervals[-1]["base_m"] == top[k]:
            intervals[-1]["base_m"] = float(base[k])
        else:
            intervals.append(
                dict(
                    core_id=cid,
                    top_m=float(top[k]),
                    base_m=float(base[k]),
                    facies=facies,
                    rank=int(ranks[k]),
                )
            )
    # time is missing at a contact when a step between the two deposits left nothing
    # (no deposition, or all of it cut away) or when erosion cut there
    missing = (th <= 1e-9) | (sim.erosion[:, p] > 0)
    contacts = []
    for upper, lower in zip(intervals[:-1], intervals[1:], strict=True):
        depth = upper["base_m"]
        k_lower = int(present[base[present] > depth][-1])  # youngest step below the contact
        k_upper = int(present[base[present] <= depth][0])  # oldest step above it
        gap = bool(np.any(missing[k_lower + 1 : k_upper]))
        contacts.append(
            dict(
                core_id=cid,
                depth_m=depth,
                upper_rank=upper["rank"],
                lower_rank=lower["rank"],
                missing_time=gap,
            )
        )
    if present.size:
        first, last = int(present[0]), int(present[-1])
        conformable = not bool(
            np.any(missing[first : last + 1]) or np.any(sim.erosion[first:, p] > 0)
        )
    else:
        conformable = False
    picks = _picks(model, sim, p, cid, base, steps, bool(intervals))
    return intervals, picks, contacts, conformable


def _picks(model, sim, p, cid, base, steps, logged):
    if not logged:
        return []
    total = float(base[0])
    index = {float(t): i for i, t in enumerate(sim.times)}
    lowest = sim.lowest_cut[:, p]
    found = []
    for s in sorted(model.surfaces, key=lambda s: s.age_ka):  # youngest first
        j = index[float(s.age_ka)]
        # the horizon survives unless erosion at step j or later cut below it
        later = lowest[j:]
        if np.any((later >= 0) & (later < j)):
            continue
        depth = min(float(base[j]) if j < steps else 0.0, total)
        if found and depth <= found[-1][1] and not found[-1][0].erosional:
            # nothing laid down between them: one pick only, the erosional one if the
            # older is (the unconformity), else the younger
            if s.erosional:
                found[-1] = (s, depth)
            continue
        found.append((s, depth))
    return [dict(core_id=cid, surface=s.name, depth_m=d) for s, d in found]
