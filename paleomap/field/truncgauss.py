"""The truncated-Gaussian model of ordered facies: thresholds, Gibbs sampler.

Belts are cut from a latent Gaussian ``Y`` at thresholds ``t_1 < ... < t_{K-1}``:
belt ``k`` is ``t_k <= Y < t_{k+1}`` with ``t_0 = -inf`` and ``t_K = +inf``
(Matheron et al. 1987; Armstrong et al. 2011). The thresholds come from the belt
proportions, ``t_k = Phi⁻¹(p_0 + ... + p_{k-1})``, so the latent is on the standard
normal scale.

**Belts never logged.** A zero proportion would give two equal thresholds (or an
infinite one at either end). Proportions are floored at ``min_proportion``
(default 0.001) and renormalised before the inverse, so every belt keeps a thin
but finite band and the thresholds stay finite and strictly increasing.

**Gibbs sampler** (Freulon & de Fouquet 1993). With ``Q`` the precision of the
latent at the cores, ``y_i`` given the others is normal with mean
``-sum_{j!=i} Q_ij y_j / Q_ii`` and variance ``1 / Q_ii``, truncated to core ``i``'s
belt interval. Sweeps draw each core in turn.

**Anchoring the drift.** The latent is ``Y = F beta + Z``. With a flat prior on
``beta`` the precision is the projected one, ``C⁻¹ - C⁻¹F(FᵀC⁻¹F)⁻¹FᵀC⁻¹``,
which is singular along the drift: when the ranks are separable by a line (a
common case: land cores on one side, marine on the other) the sampled trend grows
without bound. The sampler therefore uses a proper, weak Gaussian prior
``beta ~ N(0, drift_prior_sd² I)`` on the drift coefficients in centred coordinates
scaled to about [-1, 1] over the cores, i.e. the latent covariance
``C + drift_prior_sd² F Fᵀ``. The default ``drift_prior_sd = 3`` lets the trend change
by several latent standard deviations across the area (more than the threshold
span of any scheme) while keeping the sampler anchored; as it grows the
conditionals tend to the universal-kriging leave-one-out ones. Maps are then made
by universal kriging of the sampled values, where the data fix the drift.

**Tails.** Truncated-normal draws use the inverse CDF in log space
(``log_ndtr`` / ``ndtri_exp``) on the lower tail, flipping intervals that lie in
the upper tail, so intervals many standard deviations out are drawn correctly.

Examples
--------
>>> thresholds([0.2, 0.3, 0.5]).round(6).tolist()
[-0.841621, 0.0]
>>> round(float(indicator_variogram(0.5, 0.0)), 6)
0.166667
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy import linalg, special
from scipy.spatial import cKDTree

from ..probability import belt_probabilities
from .cholesky import cholesky_with_jitter
from .covariance import Covariance
from .drift import drift_basis, drift_frame

__all__ = [
    "LatentPrior",
    "belt_intervals",
    "belt_of",
    "belt_probabilities",
    "gibbs_conditional",
    "gibbs_mean_field",
    "gibbs_sample",
    "indicator_variogram",
    "proportions_of",
    "thresholds",
    "truncated_normal",
    "truncated_normal_mean",
]

logger = logging.getLogger(__name__)

DEFAULT_MIN_PROPORTION = 1e-3
_RELAX = 1.5


def proportions_of(ranks: ArrayLike, n_belts: int) -> np.ndarray:
    """Share of each belt among ranks 0..n_belts-1.

    Examples
    --------
    >>> proportions_of([0, 0, 1, 3], 4).tolist()
    [0.5, 0.25, 0.0, 0.25]
    """
    r = np.asarray(ranks, dtype=int).ravel()
    if r.size == 0:
        raise ValueError("no ranks to take proportions from")
    if r.min() < 0 or r.max() >= n_belts:
        raise ValueError(f"ranks must lie in 0..{n_belts - 1}; got {r.min()}..{r.max()}")
    return np.bincount(r, minlength=n_belts) / r.size


def thresholds(
    proportions: ArrayLike, min_proportion: float = DEFAULT_MIN_PROPORTION
) -> np.ndarray:
    """Thresholds ``t_k = Phi⁻¹(p_0 + ... + p_{k-1})`` for k = 1..K-1.

    Parameters
    ----------
    proportions : array_like
        Belt proportions (K,), non-negative, not all zero; normalised here.
    min_proportion : float
        Floor applied to every proportion before renormalising, so that a belt
        never logged keeps a thin band and every threshold is finite.

    Returns
    -------
    numpy.ndarray
        (K-1,) strictly increasing thresholds.

    Examples
    --------
    >>> thresholds([0.25, 0.25, 0.25, 0.25]).round(6).tolist()
    [-0.67449, 0.0, 0.67449]
    >>> bool(np.all(np.isfinite(thresholds([0.0, 0.6, 0.4, 0.0]))))
    True
    """
    p = np.asarray(proportions, dtype=float).ravel()
    if p.size < 2:
        raise ValueError(f"need at least two belts; got {p.size} proportions")
    if np.any(~np.isfinite(p)) or np.any(p < 0) or p.sum() <= 0:
        raise ValueError(f"proportions must be finite, >= 0 and not all zero; got {p.tolist()}")
    p = p / p.sum()
    if np.any(p < min_proportion):
        p = np.maximum(p, min_proportion)
        p = p / p.sum()
    return special.ndtri(np.cumsum(p)[:-1])


def belt_intervals(ranks: ArrayLike, threshold: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """Latent interval ``[t_rank, t_rank+1)`` of each rank, with +-inf at the ends.

    Examples
    --------
    >>> lo, hi = belt_intervals([0, 1, 2], [-0.5, 0.5])
    >>> lo.tolist(), hi.tolist()
    ([-inf, -0.5, 0.5], [-0.5, 0.5, inf])
    """
    t = np.concatenate([[-np.inf], np.asarray(threshold, dtype=float).ravel(), [np.inf]])
    r = np.asarray(ranks, dtype=int)
    if r.size and (r.min() < 0 or r.max() > t.size - 2):
        raise ValueError(f"ranks must lie in 0..{t.size - 2}")
    return t[r], t[r + 1]


def belt_of(latent: ArrayLike, threshold: ArrayLike) -> np.ndarray:
    """Rank of the belt holding each latent value.

    Examples
    --------
    >>> belt_of([-1.0, 0.0, 2.0], [-0.5, 0.5]).tolist()
    [0, 1, 2]
    """
    return np.searchsorted(np.asarray(threshold, dtype=float), np.asarray(latent), side="right")


def indicator_variogram(rho: ArrayLike, threshold: ArrayLike) -> np.ndarray:
    """Indicator variogram of ``1[Y < t]`` for a standard Gaussian of correlation ``rho``.

    ``gamma_I = p - P(Y1 < t, Y2 < t)`` with ``p = Phi(t)``, computed exactly as
    ``2 T(t, sqrt((1 - rho) / (1 + rho)))`` with Owen's T function.

    Examples
    --------
    >>> round(float(indicator_variogram(0.0, -0.841621)), 6)
    0.16
    """
    rho = np.clip(np.asarray(rho, dtype=float), -1.0, 1.0)
    t = np.asarray(threshold, dtype=float)
    with np.errstate(divide="ignore"):
        a = np.sqrt((1.0 - rho) / (1.0 + rho))
    return 2.0 * special.owens_t(t, a)


def gibbs_conditional(Q: ArrayLike, y: ArrayLike, i: int) -> tuple[float, float]:
    """Mean and variance of ``y_i`` given the other values, from the precision ``Q``.

    ``mean = -sum_{j != i} Q_ij y_j / Q_ii``, ``variance = 1 / Q_ii`` (Freulon &
    de Fouquet 1993). ``y[i]`` itself is ignored.

    Examples
    --------
    >>> C = np.array([[1, .5, .25], [.5, 1, .5], [.25, .5, 1]])
    >>> m, v = gibbs_conditional(np.linalg.inv(C), [0.0, 0.3, -0.2], 0)
    >>> round(m, 6), round(v, 6)
    (0.15, 0.75)
    """
    Q = np.asarray(Q, dtype=float)
    y = np.asarray(y, dtype=float)
    qi = Q[i]
    s = qi @ y - qi[i] * y[i]
    return float(-s / qi[i]), float(1.0 / qi[i])


def truncated_normal(
    mean: ArrayLike,
    sd: ArrayLike,
    lower: ArrayLike,
    upper: ArrayLike,
    rng: np.random.Generator,
) -> np.ndarray:
    """Draw from N(mean, sd²) truncated to [lower, upper], robust in the far tails.

    One plain normal draw per value first, kept where it falls inside its interval
    (exact: a draw from the untruncated law restricted to the interval is a draw from
    the truncated law, and the values that miss get an exact draw of their own, so
    the mixture is the truncated law). In a Gibbs sampler most latent values sit well
    inside their belt's interval, so most draws are settled by the first, cheap step.
    The rest use the inverse CDF, in log space where the interval lies in a far tail.

    Examples
    --------
    >>> x = truncated_normal(0.0, 1.0, 8.0, np.inf, np.random.default_rng(0))
    >>> bool(8.0 <= x < 9.0)
    True
    """
    mean, sd, lower, upper = np.broadcast_arrays(
        *(np.asarray(v, dtype=float) for v in (mean, sd, lower, upper))
    )
    shape = mean.shape
    mean, sd, lower, upper = np.atleast_1d(mean, sd, lower, upper)
    x = mean + sd * rng.standard_normal(mean.shape)
    miss = ~((x >= lower) & (x <= upper))
    idx = np.flatnonzero(miss)
    if idx.size:
        # index the broadcast views (no full-size copies of the broadcast inputs)
        where = np.unravel_index(idx, miss.shape)
        m, s, lo, hi = (v[where] for v in (mean, sd, lower, upper))
        x.reshape(-1)[idx] = _truncnorm_inverse(m, s, lo, hi, rng.random(idx.size))
    return x.reshape(shape)


def _truncnorm_inverse(mean, sd, lower, upper, u):
    """Inverse-CDF truncated-normal draw given a uniform ``u`` (1-D arrays).

    Intervals are flipped onto the lower half (where Phi keeps its precision); where
    the whole interval lies beyond the lower 1e-10 tail the draw is made in log space
    (see :func:`_truncnorm_from_uniform`).
    """
    a = (lower - mean) / sd
    b = (upper - mean) / sd
    flip = a > -b
    a2 = np.where(flip, -b, a)
    b2 = np.where(flip, -a, b)
    pa = special.ndtr(a2)
    pb = special.ndtr(b2)
    z = special.ndtri(pa + u * (pb - pa))
    t = np.flatnonzero(pb < 1e-10)
    if t.size:
        ut = u[t]
        z[t] = _truncnorm_from_uniform(0.0, 1.0, a2[t], b2[t], np.log(ut), np.log1p(-ut))
    z = np.clip(z, a2, b2)
    return mean + sd * np.where(flip, -z, z)


def _truncnorm_from_uniform(mean, sd, lower, upper, log_u, log_1mu):
    """Inverse-CDF truncated-normal draw given log(u) and log(1 - u).

    Intervals are flipped onto the lower tail (where log Phi is accurate) and the
    draw is ``Phi⁻¹((1 - u) Phi(a) + u Phi(b))`` evaluated in log space.
    """
    a = (lower - mean) / sd
    b = (upper - mean) / sd
    flip = a > -b  # the interval lies mostly above 0 (no inf - inf)
    a2 = np.where(flip, -b, a)
    b2 = np.where(flip, -a, b)
    lu = np.logaddexp(log_1mu + special.log_ndtr(a2), log_u + special.log_ndtr(b2))
    z = special.ndtri_exp(np.minimum(lu, 0.0))
    z = np.clip(z, a2, b2)
    return mean + sd * np.where(flip, -z, z)


def truncated_normal_mean(
    mean: ArrayLike, sd: ArrayLike, lower: ArrayLike, upper: ArrayLike
) -> np.ndarray:
    """Mean of N(mean, sd²) truncated to [lower, upper], stable in the tails.

    Examples
    --------
    >>> round(float(truncated_normal_mean(0.0, 1.0, 0.0, np.inf)), 6)  # sqrt(2/pi)
    0.797885
    """
    mean, sd, lower, upper = np.broadcast_arrays(
        *(np.asarray(v, dtype=float) for v in (mean, sd, lower, upper))
    )
    a = (lower - mean) / sd
    b = (upper - mean) / sd
    flip = a > 0
    a2 = np.where(flip, -b, a)
    b2 = np.where(flip, -a, b)
    # E[Z | a<Z<b] = (phi(a) - phi(b)) / (Phi(b) - Phi(a)), in log space.
    la = special.log_ndtr(a2)
    lb = special.log_ndtr(b2)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        lden = lb + np.log1p(-np.exp(la - lb))
        pa = np.exp(-0.5 * a2 * a2 - 0.5 * np.log(2 * np.pi) - lden)
        pb = np.exp(-0.5 * b2 * b2 - 0.5 * np.log(2 * np.pi) - lden)
    pa = np.where(np.isfinite(a2), pa, 0.0)
    pb = np.where(np.isfinite(b2), pb, 0.0)
    z = pa - pb
    # An interval too narrow for the ratio above: its midpoint is the mean.
    both = np.isfinite(a2) & np.isfinite(b2)
    narrow = both & ((b2 - a2 < 1e-8) | ~np.isfinite(z))
    mid = np.where(both, 0.5 * (np.where(both, a2, 0.0) + np.where(both, b2, 0.0)), 0.0)
    z = np.where(narrow, mid, z)
    z = np.clip(z, a2, b2)
    z = np.where(flip, -z, z)
    return mean + sd * z


@dataclass(frozen=True, eq=False)
class LatentPrior:
    """Gaussian prior of the latent at a set of cores: residual covariance plus drift.

    The latent covariance is ``C + drift_prior_sd² F Fᵀ`` with ``F`` the drift terms
    in centred coordinates divided by the half extent of the cores (see the module
    notes on anchoring).

    Parameters
    ----------
    covariance : Covariance
        Residual covariance (unit total variance by the model's convention).
    easting, northing : numpy.ndarray
        Core positions (n,).
    drift : {"linear", "constant", None}
        Drift terms.
    drift_prior_sd : float
        Prior standard deviation of each drift coefficient.

    Examples
    --------
    >>> from paleomap.field.covariance import Covariance
    >>> prior = LatentPrior(Covariance("exponential", 1.0, 100.0), np.array([0.0, 50.0]),
    ...                     np.array([0.0, 0.0]), drift="constant")
    >>> prior.matrix().round(3).tolist()
    [[10.0, 9.223], [9.223, 10.0]]
    """

    covariance: Covariance
    easting: np.ndarray
    northing: np.ndarray
    drift: str | None = "linear"
    drift_prior_sd: float = 3.0

    def drift_matrix(self, easting=None, northing=None) -> np.ndarray:
        """Drift terms (n, p) in the same centred, scaled coordinates as kriging."""
        centre, scale = drift_frame(self.easting, self.northing)
        e = self.easting if easting is None else easting
        n = self.northing if northing is None else northing
        return drift_basis(e, n, centre, scale, self.drift)

    def matrix(self) -> np.ndarray:
        """Latent covariance at the cores, ``C + s² F Fᵀ``."""
        f = self.drift_matrix()
        return self.covariance.matrix(self.easting, self.northing) + (self.drift_prior_sd**2) * (
            f @ f.T
        )

    def precision(self) -> np.ndarray:
        """Inverse of :meth:`matrix` (dense)."""
        c = self.matrix()
        # Symmetric positive definite: invert through Cholesky for accuracy.
        try:
            L, _ = cholesky_with_jitter(c, self.covariance.total_variance)
        except ValueError:
            raise ValueError(
                "latent covariance is not positive definite (duplicate cores?)"
            ) from None
        return linalg.cho_solve((L, True), np.eye(len(c)))


class _DenseConditionals:
    """Conditional means from a dense precision: ``y_i - (Q y)_i / Q_ii``."""

    def __init__(self, q: np.ndarray) -> None:
        self.q = q
        self.qdiag = np.diag(q).copy()
        self.sd = 1.0 / np.sqrt(self.qdiag)

    def mean(self, i: int, y: np.ndarray) -> np.ndarray:
        # y is (n, rows): row i holds core i for every chain and slice.
        return y[i] - (self.q[i] @ y) / self.qdiag[i]


class _LocalConditionals:
    """Conditional means from each core's nearest neighbours only.

    Core ``i`` given its ``k`` nearest cores ``N_i``: weights ``C_NN⁻¹ c_N`` and
    variance ``c_ii - c_Nᵀ C_NN⁻¹ c_N`` under the latent prior covariance. The set of
    local conditionals approximates the joint law; it is used when a dense
    precision would be too large.
    """

    def __init__(self, prior: LatentPrior, k: int) -> None:
        e, n = np.asarray(prior.easting), np.asarray(prior.northing)
        k = min(k, e.size - 1)
        tree = cKDTree(np.column_stack([e, n]))
        _, idx = tree.query(np.column_stack([e, n]), k=k + 1)
        self.idx = idx[:, 1:]
        f = prior.drift_matrix()
        s2 = prior.drift_prior_sd**2
        cov = prior.covariance
        self.w = np.empty((e.size, k))
        self.sd = np.empty(e.size)
        for i in range(e.size):
            nb = self.idx[i]
            cnn = cov.matrix(e[nb], n[nb]) + s2 * f[nb] @ f[nb].T
            cn = cov.cross(e[nb], n[nb], e[i : i + 1], n[i : i + 1])[:, 0] + s2 * f[nb] @ f[i]
            cnn[np.diag_indices_from(cnn)] += 1e-10 * cov.total_variance
            w = np.linalg.solve(cnn, cn)
            self.w[i] = w
            var = cov.total_variance + s2 * f[i] @ f[i] - w @ cn
            self.sd[i] = np.sqrt(max(var, 1e-12 * cov.total_variance))

    def mean(self, i: int, y: np.ndarray) -> np.ndarray:
        return self.w[i] @ y[self.idx[i]]


def _conditionals(prior_or_q, local_k: int | None):
    if isinstance(prior_or_q, LatentPrior):
        if local_k is not None and local_k < prior_or_q.easting.size - 1:
            return _LocalConditionals(prior_or_q, local_k)
        return _DenseConditionals(prior_or_q.precision())
    return _DenseConditionals(np.asarray(prior_or_q, dtype=float))


def _bounds_rows(lower, upper) -> tuple[np.ndarray, np.ndarray]:
    lo = np.atleast_2d(np.asarray(lower, dtype=float))
    hi = np.atleast_2d(np.asarray(upper, dtype=float))
    if lo.shape != hi.shape:
        raise ValueError(f"lower {lo.shape} and upper {hi.shape} bounds differ in shape")
    if np.any(~(lo < hi)):
        raise ValueError("every lower bound must be below its upper bound")
    return lo, hi


def gibbs_sample(
    prior: LatentPrior | ArrayLike,
    lower: ArrayLike,
    upper: ArrayLike,
    n_samples: int = 100,
    burn_in: int = 50,
    n_chains: int = 10,
    thin: int = 2,
    rng: np.random.Generator | int | None = 0,
    local_neighbours: int | None = None,
) -> np.ndarray:
    """Sample latent values at the cores, each truncated to its belt interval.

    Several independent chains run side by side, and several fields (slices that
    share the same cores) run in the same sweeps: each Gibbs step updates core ``i``
    in every chain and field at once, one O(n) product per step with the dense
    precision (or O(k) with ``local_neighbours``).

    Parameters
    ----------
    prior : LatentPrior or array_like
        Latent prior, or directly a precision matrix ``Q`` (n, n).
    lower, upper : array_like
        Interval bounds, (n,) for one field or (n_fields, n); +-inf allowed.
    n_samples : int
        Samples kept per field (spread over the chains).
    burn_in : int
        Sweeps discarded at the start of every chain.
    n_chains : int
        Independent chains per field.
    thin : int
        Sweeps between kept samples within a chain.
    rng : numpy.random.Generator or int or None
        Random generator or seed.
    local_neighbours : int, optional
        Use each core's nearest cores only (for large core counts; needs a
        :class:`LatentPrior`).

    Returns
    -------
    numpy.ndarray
        (n_samples, n) for 1-D bounds, else (n_fields, n_samples, n).

    Examples
    --------
    >>> from paleomap.field.covariance import Covariance
    >>> e = np.array([0.0, 100.0, 200.0]); n = np.zeros(3)
    >>> prior = LatentPrior(Covariance("exponential", 1.0, 300.0), e, n, drift="constant")
    >>> s = gibbs_sample(prior, [-np.inf, 0.0, 0.0], [0.0, np.inf, np.inf], n_samples=20)
    >>> s.shape, bool(np.all(s[:, 0] < 0) and np.all(s[:, 1:] >= 0))
    ((20, 3), True)
    """
    rng = np.random.default_rng(rng)
    one = np.ndim(lower) == 1
    lo, hi = _bounds_rows(lower, upper)
    n_fields, n = lo.shape
    cond = _conditionals(prior, local_neighbours)
    if cond.sd.size != n:
        raise ValueError(f"bounds have {n} cores but the prior has {cond.sd.size}")
    n_chains = max(1, min(int(n_chains), int(n_samples)))
    per_chain = -(-int(n_samples) // n_chains)
    # Layout (n, rows) with rows = field-major, chain-minor, so row i is contiguous.
    lo_r = np.repeat(lo.T, n_chains, axis=1)
    hi_r = np.repeat(hi.T, n_chains, axis=1)
    y = truncated_normal_mean(0.0, 1.0, lo_r, hi_r)
    y = y + 0.1 * rng.standard_normal(y.shape)
    y = np.clip(y, np.nextafter(lo_r, np.inf), np.nextafter(hi_r, -np.inf))
    kept = np.empty((per_chain, n, n_fields * n_chains))
    sweeps = burn_in + per_chain * thin
    k = 0
    for sweep in range(1, sweeps + 1):
        u = rng.random(y.shape)
        log_u, log_1mu = np.log(u), np.log1p(-u)
        for i in range(n):
            m = cond.mean(i, y)
            y[i] = _truncnorm_from_uniform(m, cond.sd[i], lo_r[i], hi_r[i], log_u[i], log_1mu[i])
        if not np.all(np.isfinite(y)):
            raise ValueError(
                "Gibbs sampler diverged: the latent covariance is numerically singular "
                "(a smooth model with a long range on closely spaced cores?)"
            )
        if sweep > burn_in and (sweep - burn_in) % thin == 0:
            kept[k] = y
            k += 1
    # kept: (per_chain, n, fields*chains) -> (fields, chains*per_chain, n)
    out = kept.reshape(per_chain, n, n_fields, n_chains).transpose(2, 3, 0, 1)
    out = out.reshape(n_fields, n_chains * per_chain, n)[:, :n_samples, :]
    return out[0] if one else out


def gibbs_mean_field(
    prior: LatentPrior | ArrayLike,
    lower: ArrayLike,
    upper: ArrayLike,
    sweeps: int = 200,
    tol: float = 1e-6,
    local_neighbours: int | None = None,
) -> np.ndarray:
    """Deterministic latent values at the cores: Gibbs with each draw replaced by its mean.

    Each step sets ``y_i`` to the mean of its truncated conditional, until the
    largest change in a sweep is below ``tol``. Every value lies inside its
    interval. Used by the deterministic (no sampling) mode.

    Returns
    -------
    numpy.ndarray
        (n,) for 1-D bounds, else (n_fields, n).

    Examples
    --------
    >>> C = np.array([[1.0, 0.8], [0.8, 1.0]])
    >>> y = gibbs_mean_field(np.linalg.inv(C), [0.0, -np.inf], [np.inf, 0.0])
    >>> bool(y[0] >= 0 and y[1] < 0)
    True
    """
    one = np.ndim(lower) == 1
    lo, hi = _bounds_rows(lower, upper)
    cond = _conditionals(prior, local_neighbours)
    lo_r, hi_r = lo.T.copy(), hi.T.copy()
    y = truncated_normal_mean(0.0, 1.0, lo_r, hi_r)
    # Each field stops on its own once converged, so a field's result does not
    # depend on which other fields were solved with it.
    active = np.arange(y.shape[1])
    done = 0
    for _ in range(sweeps):
        done += 1
        ya, la, ha = y[:, active], lo_r[:, active], hi_r[:, active]
        change = np.zeros(active.size)
        for i in range(y.shape[0]):
            new = truncated_normal_mean(cond.mean(i, ya), cond.sd[i], la[i], ha[i])
            np.maximum(change, np.abs(new - ya[i]), out=change)
            # Over-relaxed step (same fixed point, fewer sweeps), kept in the interval.
            ya[i] = np.clip(ya[i] + _RELAX * (new - ya[i]), la[i], np.nextafter(ha[i], -np.inf))
        y[:, active] = ya
        active = active[change >= tol]
        if active.size == 0:
            break
    logger.debug("mean-field latent: %d sweeps, %d fields unconverged", done, active.size)
    out = y.T
    return out[0] if one else out
