"""Cutting many target points into chunks and tiles, and running tiles on threads.

* :func:`chunk_slices` / :func:`default_chunk_size`: consecutive chunks of points whose
  arrays fit a memory budget (the float64 paths);
* :func:`square_tiles`: the points ordered by square tiles of a given side, so a tile's
  points are close together and share their nearby cores (the tiled paths);
* :func:`run_tiles`: independent tiles on a few threads, each with a single-threaded
  BLAS (``threadpoolctl``), since numpy's elementwise work is single-threaded and the
  BLAS's own threads would only compete with the tile threads.

Examples
--------
>>> import numpy as np
>>> order, bounds = square_tiles(np.array([0.0, 10.0, 1.0]), np.array([0.0, 0.0, 1.0]), 5.0)
>>> [order[a:b].tolist() for a, b in zip(bounds[:-1], bounds[1:])]
[[0, 2], [1]]
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator, Sequence

import numpy as np

__all__ = ["chunk_slices", "default_chunk_size", "default_threads", "run_tiles", "square_tiles"]


def default_threads() -> int:
    """Threads for tiled work: two where the machine has them (common practice on the
    small machines paleomap targets; more gains little against memory bandwidth)."""
    return min(2, os.cpu_count() or 1)


def default_chunk_size(n_data: int, n_fields: int = 1, budget_mb: float = 64.0) -> int:
    """Number of target points per chunk so one chunk's arrays stay within a budget.

    A chunk holds the cross-covariance (points x data), its triangular solve and the
    means (points x fields), all float64.

    Examples
    --------
    >>> default_chunk_size(500, 100)
    7570
    """
    per_point = 8.0 * (2 * n_data + n_fields + 8)
    return int(max(256, budget_mb * 2**20 // per_point))


def chunk_slices(n_points: int, chunk_size: int) -> Iterator[slice]:
    """Consecutive slices of at most ``chunk_size`` over ``range(n_points)``.

    Examples
    --------
    >>> [(s.start, s.stop) for s in chunk_slices(5, 2)]
    [(0, 2), (2, 4), (4, 5)]
    """
    chunk_size = max(1, int(chunk_size))
    for start in range(0, n_points, chunk_size):
        yield slice(start, min(start + chunk_size, n_points))


def square_tiles(easting, northing, side: float) -> tuple[np.ndarray, np.ndarray]:
    """Order of the points by square tiles of ``side`` metres (from the points' south-west
    corner, row by row), and the tiles' bounds in that order.

    Returns
    -------
    order : numpy.ndarray
        Point indices, tile by tile (stable within a tile).
    bounds : numpy.ndarray
        Tile ``k`` holds ``order[bounds[k]:bounds[k + 1]]``; every point is in exactly
        one tile and no tile is empty.
    """
    e = np.asarray(easting, dtype=float).ravel()
    n = np.asarray(northing, dtype=float).ravel()
    if e.size == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(1, dtype=np.int64)
    side = float(side) if side > 0 else 1.0
    ci = np.floor((e - e.min()) / side).astype(np.int64)
    ri = np.floor((n - n.min()) / side).astype(np.int64)
    key = ri * (ci.max() + 1) + ci
    order = np.argsort(key, kind="stable")
    cuts = np.flatnonzero(np.diff(key[order])) + 1
    return order, np.concatenate([[0], cuts, [e.size]]).astype(np.int64)


def run_tiles(
    work: Callable[[int, int], None], spans: Sequence[tuple[int, int]], threads: int
) -> None:
    """Call ``work(a0, a1)`` for every span, on ``threads`` threads with one BLAS thread
    each (in order, on this thread, when ``threads`` is 1 or there is one span)."""
    if threads < 2 or len(spans) < 2:
        for a0, a1 in spans:
            work(a0, a1)
        return
    from concurrent.futures import ThreadPoolExecutor

    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"), ThreadPoolExecutor(threads) as pool:
        for f in [pool.submit(work, a0, a1) for a0, a1 in spans]:
            f.result()
