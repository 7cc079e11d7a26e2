"""Belt probabilities from a Gaussian latent's mean and standard deviation, fast.

Where a map's belt probabilities follow from the latent's predictive mean and standard
deviation alone (``P(belt k) = Phi((t_k+1 - m) / s) - Phi((t_k - m) / s)``), they need
not be stored: :func:`moment_probabilities` derives them again from the two grids when
a writer or a figure asks for them. With millions of cells and dozens of slices that
is the difference between holding two float32 grids per slice and holding seven.

The normal CDF here is float32 and about five times faster than ``scipy.special.ndtr``:
``Phi(x) = erfc(-x / sqrt 2) / 2`` with the Chebyshev fit of ``erfc`` from Press et al.
(*Numerical Recipes*, 2nd ed., 1992, §6.2, function ``erfcc``; fractional error below
1.2e-7 everywhere). In float32 the absolute error stays below 1e-6 (a test compares it
with ``scipy.special.ndtr``), far inside the 1e-4 that the float32 maps promise. It runs
in blocks that stay in the processor's cache, two blocks at a time on two threads
(numpy releases the interpreter lock inside its loops).

Examples
--------
>>> import numpy as np
>>> p = moment_probabilities(np.array([0.0]), np.array([1.0]), np.array([0.0]))
>>> [round(float(v), 6) for v in p[:, 0]]
[0.5, 0.5]
"""

from __future__ import annotations

import os

import numpy as np

__all__ = ["distal_probability", "moment_probabilities", "normal_cdf32"]

# erfcc coefficients (Press et al. 1992, section 6.2), highest order first for Horner.
_ERFCC = (
    0.17087277,
    -0.82215223,
    1.48851587,
    -1.13520398,
    0.27886807,
    -0.18628806,
    0.09678418,
    0.37409196,
    1.00002368,
    -1.26551223,
)
_BLOCK = 1 << 15  # values per block: a few arrays of it fit in a core's L2 cache
_THREADS = min(2, os.cpu_count() or 1)


def _cdf_block(x: np.ndarray, out: np.ndarray) -> None:
    """Phi of a float32 block, written into ``out`` (may be ``x`` itself)."""
    f = np.float32
    z = np.abs(x) * f(1.0 / np.sqrt(2.0))  # |x| / sqrt 2
    t = z * f(0.5)
    t += f(1.0)
    np.reciprocal(t, out=t)
    poly = np.full_like(t, f(_ERFCC[0]))
    for c in _ERFCC[1:]:
        poly *= t
        poly += f(c)
    np.square(z, out=z)
    np.subtract(poly, z, out=poly)  # -z² + poly
    np.exp(poly, out=poly)
    poly *= t  # erfc(|x| / sqrt 2)
    poly *= f(0.5)  # Phi(-|x|)
    # Phi(x) = Phi(-|x|) for x < 0, 1 - Phi(-|x|) otherwise
    np.subtract(f(1.0), poly, out=t)
    np.copyto(out, np.where(x < 0, poly, t))


def _blocked(fn, n: int) -> None:
    spans = [(a, min(a + _BLOCK, n)) for a in range(0, n, _BLOCK)]
    if _THREADS > 1 and len(spans) > 4:
        from concurrent.futures import ThreadPoolExecutor

        half = (len(spans) + 1) // 2
        with ThreadPoolExecutor(2) as pool:
            jobs = [
                pool.submit(lambda s=s: [fn(a, b) for a, b in s])
                for s in (spans[:half], spans[half:])
            ]
            for j in jobs:
                j.result()
    else:
        for a, b in spans:
            fn(a, b)


def normal_cdf32(x) -> np.ndarray:
    """Standard normal CDF in float32 (absolute error below 1e-6).

    NaN stays NaN; ``±inf`` give 1 and 0.

    >>> [round(float(v), 5) for v in normal_cdf32(np.array([-np.inf, -1.0, 0.0, 1.959964, np.inf]))]
    [0.0, 0.15866, 0.5, 0.975, 1.0]
    """
    x = np.ascontiguousarray(x, dtype=np.float32)
    out = np.empty_like(x)
    xf, of = x.reshape(-1), out.reshape(-1)

    def block(a, b):
        with np.errstate(over="ignore", invalid="ignore"):
            _cdf_block(xf[a:b], of[a:b])

    _blocked(block, xf.size)
    return out


def moment_probabilities(mean, sd, thresholds) -> np.ndarray:
    """Belt probabilities (K, ...) float32 from the latent's mean and sd (any shape).

    ``sd`` must be positive. Every cell's probabilities sum to 1 within float32
    rounding.

    >>> p = moment_probabilities(np.zeros((2, 2)), np.ones((2, 2)), np.array([-1.0, 1.0]))
    >>> p.shape, [round(float(v), 4) for v in p[:, 0, 0]]
    ((3, 2, 2), [0.1587, 0.6827, 0.1587])
    """
    m = np.ascontiguousarray(mean, dtype=np.float32)
    s = np.ascontiguousarray(sd, dtype=np.float32)
    t = np.asarray(thresholds, dtype=np.float32).ravel()
    K = t.size + 1
    out = np.empty((K,) + m.shape, np.float32)
    mf, sf = m.reshape(-1), s.reshape(-1)
    of = out.reshape(K, -1)

    def block(a, b):
        inv = np.reciprocal(sf[a:b])
        prev = None
        with np.errstate(over="ignore", invalid="ignore"):
            for k in range(K - 1):
                z = (t[k] - mf[a:b]) * inv
                cdf = np.empty_like(z)
                _cdf_block(z, cdf)
                if prev is None:
                    of[k, a:b] = cdf
                else:
                    np.subtract(cdf, prev, out=of[k, a:b])
                prev = cdf
        np.subtract(np.float32(1.0), prev, out=of[K - 1, a:b])

    if K == 1:
        out[0] = 1.0
        return out
    _blocked(block, mf.size)
    return out


def distal_probability(mean, sd, threshold: float) -> np.ndarray:
    """``P(latent > threshold)`` float32 from the latent's mean and sd: the probability
    of the distal side of a boundary (the sum of the belts beyond it).

    >>> round(float(distal_probability(np.array([1.0]), np.array([1.0]), 1.0)[0]), 6)
    0.5
    """
    m = np.asarray(mean, dtype=np.float32)
    s = np.asarray(sd, dtype=np.float32)
    return normal_cdf32((m - np.float32(threshold)) / s)
