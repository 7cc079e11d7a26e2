"""The drift (trend) basis every engine uses: ``1, e', n'`` in centred scaled coordinates.

``e' = (easting - centre_e) / scale`` and ``n' = (northing - centre_n) / scale`` with
the centre the mean of the cores and the scale half their largest extent (1 when they
have none), so ``e', n'`` run over about [-1, 1] across the cores whatever the
coordinates' magnitude, which keeps the kriging and sampling systems well scaled.

Examples
--------
>>> import numpy as np
>>> e, n = np.array([0.0, 200.0]), np.array([0.0, 100.0])
>>> centre, scale = drift_frame(e, n)
>>> drift_basis(e, n, centre, scale).tolist()
[[1.0, -1.0, -0.5], [1.0, 1.0, 0.5]]
"""

from __future__ import annotations

import numpy as np

__all__ = ["DRIFTS", "drift_basis", "drift_frame", "n_drift_terms"]

DRIFTS: tuple[str | None, ...] = ("linear", "constant", None)
"""Drift kinds: universal (``linear``), ordinary (``constant``), simple (None, zero mean)."""


def drift_frame(easting, northing) -> tuple[tuple[float, float], float]:
    """Centre (mean of the points) and scale (half their largest extent, 1 when zero).

    >>> drift_frame(np.array([0.0, 10.0]), np.array([5.0, 5.0]))
    ((5.0, 5.0), 5.0)
    """
    e = np.asarray(easting, dtype=float).ravel()
    n = np.asarray(northing, dtype=float).ravel()
    if e.size == 0:
        return (0.0, 0.0), 1.0
    half = 0.5 * max(np.ptp(e), np.ptp(n))
    return (float(e.mean()), float(n.mean())), float(half) if half > 0 else 1.0


def n_drift_terms(kind: str | None) -> int:
    """Number of drift terms of a drift kind (3, 1 or 0).

    >>> [n_drift_terms(k) for k in DRIFTS]
    [3, 1, 0]
    """
    return {"linear": 3, "constant": 1, None: 0}[kind]


def drift_basis(easting, northing, centre, scale, kind: str | None = "linear") -> np.ndarray:
    """Drift terms at points, (n_points, n_terms), in the frame ``centre``, ``scale``."""
    e = np.asarray(easting, dtype=float).ravel()
    n = np.asarray(northing, dtype=float).ravel()
    cols = []
    if kind in ("linear", "constant"):
        cols.append(np.ones_like(e))
    if kind == "linear":
        cols.append((e - centre[0]) / scale)
        cols.append((n - centre[1]) / scale)
    return np.stack(cols, axis=1) if cols else np.zeros((e.size, 0))
