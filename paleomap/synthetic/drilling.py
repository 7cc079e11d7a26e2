"""Drilling the synthetic basin: core positions and logged cores.

Layouts: ``"random"`` (uniform with a minimum spacing, by dart throwing),
``"grid"`` (a regular grid of about the number asked for) and ``"clusters"``
(groups of cores around a few random centres, as around fields or well pads).

A core is logged as a geologist logs one: merged facies intervals with depths down
from the core top, and picks of the dated surfaces. Depths are rounded to
``decimals`` places once, and the intervals and picks are made from the same
rounded depths, so a pick on a contact sits exactly on it.

Examples
--------
>>> import numpy as np
>>> from paleomap.synthetic.surface import Ramp
>>> e, n = core_positions(Ramp(), 10, "grid", np.random.default_rng(0))
>>> e.size
9
"""

from __future__ import annotations

import logging
import math

import numpy as np
import pandas as pd

from ..errors import InputError, Problem
from .surface import Ramp

__all__ = ["LAYOUTS", "core_positions"]

_log = logging.getLogger(__name__)

LAYOUTS = ("random", "grid", "clusters")
"""Core layouts accepted by :func:`core_positions`."""


def core_positions(
    ramp: Ramp,
    n_cores: int,
    layout: str,
    rng: np.random.Generator,
    min_spacing_m: float | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Easting and northing of cores in the ramp's region.

    Parameters
    ----------
    ramp : Ramp
    n_cores : int
        Cores asked for. ``"grid"`` gives the nearest full grid,
        ``round(sqrt(n))`` columns by ``round(n / columns)`` rows.
    layout : {"random", "grid", "clusters"}
    rng : numpy.random.Generator
    min_spacing_m : float, optional
        Minimum distance between cores; default half the mean spacing
        ``sqrt(area / n)`` for ``"random"`` and a tenth of it for ``"clusters"``.

    Returns
    -------
    easting, northing : numpy.ndarray
    """
    if layout not in LAYOUTS:
        raise InputError(
            [
                Problem(
                    None,
                    None,
                    "layout",
                    layout,
                    "is not a core layout",
                    f"choose one of {list(LAYOUTS)}",
                )
            ]
        )
    size = ramp.size_m
    mean_spacing = size / math.sqrt(n_cores)
    # Keep cores off the very edge of the region, where maps are least constrained.
    inset = 0.02 * size
    lo = np.array([ramp.origin_easting, ramp.origin_northing]) + inset
    span = size - 2 * inset
    if layout == "grid":
        nx = max(1, round(math.sqrt(n_cores)))
        ny = max(1, round(n_cores / nx))
        ix, iy = np.meshgrid((np.arange(nx) + 0.5) / nx, (np.arange(ny) + 0.5) / ny)
        return lo[0] + span * ix.ravel(), lo[1] + span * iy.ravel()
    if layout == "random":
        spacing = 0.5 * mean_spacing if min_spacing_m is None else min_spacing_m
        pts = _dart_throw(rng, n_cores, lo, span, spacing, lambda k: rng.random((k, 2)) * span)
    else:
        n_clusters = max(2, round(math.sqrt(n_cores) / 2))
        spacing = 0.1 * mean_spacing if min_spacing_m is None else min_spacing_m
        centres = (
            _dart_throw(
                rng,
                n_clusters,
                lo + 0.1 * span,
                0.8 * span,
                0.8 * span / math.sqrt(n_clusters),
                lambda k: rng.random((k, 2)) * 0.8 * span,
            )
            - lo
        )
        sd = size / 16.0

        def candidates(k):
            c = centres[rng.integers(0, n_clusters, size=k)]
            return c + rng.normal(0.0, sd, size=(k, 2))

        pts = _dart_throw(rng, n_cores, lo, span, spacing, candidates)
    return pts[:, 0], pts[:, 1]


def _dart_throw(rng, n, lo, span, spacing, draw) -> np.ndarray:
    """Accept candidate points in order unless closer than ``spacing`` to one kept."""
    cell = max(spacing, 1e-9)
    buckets: dict[tuple[int, int], list[np.ndarray]] = {}
    kept: list[np.ndarray] = []
    tried = 0
    while len(kept) < n and tried < 1000 * n + 10000:
        batch = draw(4 * n)
        tried += len(batch)
        for p in batch:
            if not (0.0 <= p[0] <= span and 0.0 <= p[1] <= span):
                continue
            key = (int(p[0] // cell), int(p[1] // cell))
            near = False
            for dx in (-1, 0, 1):
                for dy in (-1, 0, 1):
                    for q in buckets.get((key[0] + dx, key[1] + dy), ()):
                        if (p[0] - q[0]) ** 2 + (p[1] - q[1]) ** 2 < spacing * spacing:
                            near = True
                            break
                    if near:
                        break
                if near:
                    break
            if near:
                continue
            kept.append(p)
            buckets.setdefault(key, []).append(p)
            if len(kept) == n:
                break
    if len(kept) < n:
        raise InputError(
            [
                Problem(
                    None,
                    None,
                    "min_spacing_m",
                    spacing,
                    f"cannot place {n} cores this far apart in the region",
                    "ask for fewer cores or a smaller minimum spacing",
                )
            ]
        )
    return np.asarray(kept) + lo


def _log_cores(core_ids, column, ranks, scheme, surface_index, surface_names, decimals):
    """Intervals and picks of every core from its column history.

    Parameters
    ----------
    column : array (n_steps + 1, n_cores)
        Height of the column top above the basement at every step boundary.
    ranks : array (n_steps, n_cores)
        Belt rank of each step's deposit.
    surface_index : sequence of int
        Step-boundary index of each surface.

    Returns
    -------
    intervals, picks : pandas.DataFrame
    depths : array (n_steps + 1, n_cores)
        Rounded depth below the core top of every step boundary as preserved.
    """
    # What survives of a boundary is cut to the lowest later top (erosion).
    preserved = np.minimum.accumulate(column[::-1], axis=0)[::-1]
    depths = np.round(preserved[-1] - preserved, decimals) + 0.0  # +0.0: no "-0.0"
    kept = depths[:-1] > depths[1:]  # steps with a preserved, non-zero thickness
    ids = scheme.ids
    iv_rows = []
    for c, core_id in enumerate(core_ids):
        steps = np.flatnonzero(kept[:, c])[::-1]  # youngest (shallowest) first
        if steps.size == 0:
            continue
        r = ranks[steps, c]
        starts = np.concatenate([[0], np.flatnonzero(np.diff(r) != 0) + 1])
        ends = np.concatenate([starts[1:], [steps.size]])
        for s, e in zip(starts, ends, strict=True):
            top = depths[steps[s] + 1, c]
            base = depths[steps[e - 1], c]
            iv_rows.append((core_id, top, base, ids[int(r[s])]))
    intervals = pd.DataFrame(iv_rows, columns=["core_id", "top", "base", "facies"])
    pk_rows = []
    for name, j in zip(surface_names, surface_index, strict=True):
        has = kept[j] if j < kept.shape[0] else np.zeros(len(core_ids), bool)
        for c in np.flatnonzero(has):
            pk_rows.append((core_ids[c], name, depths[j, c]))
    picks = pd.DataFrame(pk_rows, columns=["core_id", "surface", "depth"])
    if not picks.empty:
        order = {cid: i for i, cid in enumerate(core_ids)}
        picks = (
            picks.assign(_o=picks["core_id"].map(order))
            .sort_values(["_o", "depth"], kind="stable")
            .drop(columns="_o")
            .reset_index(drop=True)
        )
    return intervals, picks, depths
