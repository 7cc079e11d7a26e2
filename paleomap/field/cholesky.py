"""The jitter policy of every covariance factorisation.

A covariance matrix of cores is factorised as it is; only when the Cholesky
factorisation fails (smooth models with close cores make it numerically singular) is a
jitter added to its diagonal, starting at :data:`JITTER_START` of the total variance and
growing tenfold up to :data:`JITTER_MAX`. Beyond that the cores are taken to be
duplicates, which the inputs' validation should have caught, and an error says so.

Examples
--------
>>> import numpy as np
>>> L, jitter = cholesky_with_jitter(np.ones((2, 2)), 1.0)  # singular: two equal rows
>>> bool(jitter > 0), bool(np.allclose(L @ L.T, np.ones((2, 2)) + jitter * np.eye(2)))
(True, True)
"""

from __future__ import annotations

import numpy as np
from scipy import linalg

__all__ = ["JITTER_MAX", "JITTER_START", "cholesky_with_jitter"]

JITTER_START = 1e-12
"""First jitter tried, as a fraction of the total variance."""

JITTER_MAX = 1e-6
"""Largest jitter tried, as a fraction of the total variance."""


def cholesky_with_jitter(c: np.ndarray, total_variance: float) -> tuple[np.ndarray, float]:
    """Lower Cholesky factor of ``c`` (with the smallest jitter that works) and the jitter.

    Raises
    ------
    ValueError
        Not positive definite even with :data:`JITTER_MAX` of the variance.
    """
    try:
        return linalg.cholesky(c, lower=True), 0.0
    except linalg.LinAlgError:
        pass
    jitter = JITTER_START * total_variance
    while jitter <= JITTER_MAX * total_variance * (1 + 1e-9):
        try:
            cj = c.copy()
            cj[np.diag_indices_from(cj)] += jitter
            return linalg.cholesky(cj, lower=True), jitter
        except linalg.LinAlgError:
            jitter *= 10.0
    raise ValueError(
        "the data covariance matrix is not positive definite even with a jitter of "
        f"{JITTER_MAX:g} of the variance: are two data points at the same position?"
    )
