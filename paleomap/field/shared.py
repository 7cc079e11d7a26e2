"""The multi-slice ordinal model: a latent relief shared by every slice.

Paleotopography is inherited: the lobes and embayments that bend one slice's
shoreline bend the next one's too, while sea level and the regional trend move the
belts as a whole. The latent of slice ``s`` is therefore

    Y_s(x) = F(x) beta_s + Z(x) + E_s(x)

with ``F(x) beta_s`` the slice's own linear trend (universal kriging drift: the
regional dip and the slice's sea level), ``Z`` a stationary Gaussian residual shared
by all slices (the inherited relief) and ``E_s`` the slice's own residual. In the
space-time covariance ``C((x, s), (x', s')) = C_Z(x - x') + [s = s'] C_E(x - x')`` this
is universal kriging with a drift per slice; every core with records at several
slices constrains ``Z`` at its position through all of them, which is what lets
facies at scattered cores locate a shoreline between them. Thresholds are common to
all slices, ``t_k = Phi⁻¹`` of the proportions pooled over every core and slice
(Armstrong et al. 2011), since the belts are cut from one latent scale.

Sampling (Gibbs with data augmentation; Freulon & de Fouquet 1993 for the truncated
steps). The latent values ``y_si`` at the cores are drawn in blocks:

1. ``y | Z, beta``: independent normals ``N(F beta_s + Z_i, sigma_E²)`` truncated to
   each record's belt interval (the slice's own residual is taken as uncorrelated
   between cores while sampling);
2. ``beta_s | y, Z``: the least-squares posterior of each slice's drift (flat prior);
3. ``Z | y, beta``: the Gaussian posterior of the relief at the cores given the mean
   residual of each core over its ``n_i`` records, of variance ``sigma_E² / n_i``,
   drawn by Matheron's perturbation rule with one Cholesky factor of ``C_Z + D``;
4. the linear part of ``Z`` is moved into the drifts, which leaves every ``y``
   unchanged and keeps the chain from drifting along that ridge.

Mapping. For every kept sample, ``Z`` is kriged from its values at the cores (simple
kriging, one factorisation for the whole run) and each slice's residual
``y - F beta - Z`` is kriged with a short-range covariance (one factorisation per set
of cores), so the mean latent at every core is the mean of its samples, which lies in
the core's own belt interval: the map honours every core. All samples and slices go
through the same cross-covariance matrices, chunk by chunk.

Covariances. ``C_Z`` (model, range, anisotropy, azimuth) is fitted to the
directional variograms of the cores' mean residuals, along strike and along dip,
keeping whichever axis fits better as the major one; its sill and ``sigma_E²`` split
the residual variance into its between-core and within-core parts. Both are fitted
once from interval means and again after a short Gibbs pass. ``C_E`` has the model
of ``C_Z``, isotropic, with a range of one mean core spacing.

Probabilities. ``P_k(x) = Phi((t_{k+1} - mu)/sigma) - Phi((t_k - mu)/sigma)`` averaged
over the samples (``probability="samples"``), or from the predictive mean and
variance (``"moments"``), whose variance adds the spread of the kriged samples;
``"auto"`` takes the exact average while it costs less than about 2e7 evaluations
of Phi (the two agree closely, since the kriged samples at a cell are nearly Gaussian).

Examples
--------
>>> rng = np.random.default_rng(0)
>>> e, n = rng.uniform(0, 20_000, 40), rng.uniform(0, 20_000, 40)
>>> relief = 1.5 * np.sin(n / 3000.0)
>>> slices = {s: (np.arange(40), np.digitize(e / 4000 + relief + shift, [1.5, 3.0]))
...           for s, shift in (("a", 0.0), ("b", 0.8), ("c", -0.6))}
>>> res, fit = map_shared(e, n, slices, e, n, 3, SharedSettings(samples=20, burn_in=20))
>>> all(np.array_equal(np.digitize(res[s].latent_mean, fit.thresholds), slices[s][1])
...     for s in slices)
True
"""

from __future__ import annotations

import logging
from collections.abc import Hashable, Mapping
from dataclasses import dataclass, field, replace

import numpy as np
from numpy.typing import ArrayLike
from scipy import linalg

from ..grid import mean_core_spacing
from ..probability import belt_probabilities, sample_averaged_probabilities
from .cholesky import cholesky_with_jitter
from .covariance import Covariance
from .drift import drift_basis, drift_frame
from .tiling import chunk_slices, default_chunk_size, default_threads, run_tiles, square_tiles
from .truncgauss import belt_intervals, thresholds, truncated_normal, truncated_normal_mean
from .variogram import experimental_variogram, fit_covariance, lag_edges

__all__ = [
    "PathSettings",
    "SharedFit",
    "SharedReliefEngine",
    "SharedReliefModel",
    "SharedResult",
    "SharedSettings",
    "fit_shared",
    "map_shared",
]

logger = logging.getLogger(__name__)

_AUTO_MODELS = ("exponential", "spherical", "matern32")


@dataclass(frozen=True)
class PathSettings:
    """Where the shared-relief engine switches between its computation paths.

    All are sizes, not results: every path computes the same map (the float32 tiled
    path to within 1e-4 in probability), so these trade time and memory only.

    Parameters
    ----------
    fast_budget : float
        Points x samples x slices above which a map takes the float32 tiled path
        (below it the float64 exact path).
    exact_budget : float
        Points x samples x slices x belts below which the exact path averages the belt
        probabilities over the samples (``probability="auto"``).
    tile_points : int
        Target points per tile on the tiled path (four times as many in neighbourhoods).
    spread_tail : float
        Share of the samples' energy left out of the low-rank spread basis.
    local_weight_bytes : int
        Largest size of the slices' global residual weights; above it (and above
        ``global_cores``) each tile gets a system of its nearby cores instead.
    global_cores : int
        Cores above which the relief is kriged in neighbourhoods and the sampler's
        matrices are read in float32.
    neighbours : int
        Cores of a relief neighbourhood.
    loo_cores : int
        Cores above which the leave-one-out scores (a dense inverse) are skipped.
    threads : int or None
        Threads of the tiled path (each with one BLAS thread); None: up to two.

    Examples
    --------
    >>> PathSettings(fast_budget=0.0).tile_points
    1024
    """

    fast_budget: float = 1e7
    exact_budget: float = 2e7
    tile_points: int = 1024
    spread_tail: float = 1e-5
    local_weight_bytes: int = 512 * 2**20
    global_cores: int = 2000
    neighbours: int = 200
    loo_cores: int = 3000
    threads: int | None = None


@dataclass(frozen=True)
class SharedSettings:
    """Settings of the multi-slice model.

    Parameters
    ----------
    covariance : mapping or None
        Overrides of the shared relief's covariance (any of ``model``, ``range_m``,
        ``anisotropy``, ``azimuth_deg``, ``nugget``); the rest are fitted.
    samples, burn_in, chains, thin, seed : int
        Gibbs sampler: kept samples, discarded sweeps per chain, chains run side by
        side, sweeps between kept samples, random seed.
    deterministic : bool
        No random draws: each block is set to its conditional mean (fast).
    probability : {"auto", "samples", "moments"}
    min_proportion : float
        Floor on the pooled proportions (a belt never logged keeps a thin band).
    local_range : float
        Range of the slices' own residual covariance, in mean core spacings.
    chunk_size : int or None
        Target points per chunk.
    method : {"shared", "direct"}
        ``"shared"`` (default) factorises each set of cores once and reuses the
        weights for every slice, sample and chunk; ``"direct"`` builds and solves
        every slice's kriging systems from scratch (slow; a check of the first).
    paths : PathSettings
        Where the computation switches paths (time and memory only).
    condition_samples, condition_burn_in : int
        Sampler run when the fitted model is asked for ages it was not fitted at
        (:meth:`SharedReliefModel.predict`).
    """

    covariance: Mapping[str, object] | None = None
    samples: int = 100
    burn_in: int = 100
    chains: int = 8
    thin: int = 2
    seed: int = 0
    deterministic: bool = False
    probability: str = "auto"
    min_proportion: float = 1e-3
    local_range: float = 1.0
    chunk_size: int | None = None
    method: str = "shared"
    paths: PathSettings = PathSettings()
    condition_samples: int = 40
    condition_burn_in: int = 60

    def __post_init__(self) -> None:
        if self.method not in ("shared", "direct"):
            raise ValueError(f"method {self.method!r} is not 'shared' or 'direct'")
        if self.probability not in ("auto", "samples", "moments"):
            raise ValueError(
                f"probability {self.probability!r} is not 'auto', 'samples' or 'moments'"
            )
        if self.samples < 1 or self.chains < 1 or self.thin < 1 or self.burn_in < 0:
            raise ValueError("samples, chains and thin must be >= 1 and burn_in >= 0")


@dataclass(frozen=True, eq=False)
class SharedFit:
    """The fitted multi-slice model.

    Attributes
    ----------
    thresholds : numpy.ndarray
        (K-1,) common thresholds.
    proportions : numpy.ndarray
        (K,) pooled proportions.
    relief : Covariance
        Covariance of the shared relief ``Z``.
    local : Covariance
        Covariance of each slice's own residual.
    relief_at_cores : numpy.ndarray
        (n_samples, n_cores) samples of ``Z`` at the cores used.
    cores : numpy.ndarray
        Indices of the cores with at least one record.
    slices : dict
        Slice key -> dict with ``index`` (core indices), ``ranks``, ``drift``
        (n_samples, 3), ``latent`` (n_samples, n) and ``cv`` (leave-one-out scores).
    centre, scale : tuple of float, float
        The drift's frame (:func:`paleomap.field.drift.drift_frame` of the cores).
    settings : SharedSettings
    easting, northing : numpy.ndarray
        Positions of the cores used (``cores``).
    """

    thresholds: np.ndarray
    proportions: np.ndarray
    relief: Covariance
    local: Covariance
    relief_at_cores: np.ndarray
    cores: np.ndarray
    slices: dict
    centre: tuple[float, float]
    scale: float
    settings: SharedSettings = field(default_factory=SharedSettings)
    easting: np.ndarray | None = None
    northing: np.ndarray | None = None


@dataclass(frozen=True, eq=False)
class SharedResult:
    """One slice mapped at target points (flat arrays).

    ``stored_probabilities`` is (points, K) where the belt probabilities are averaged
    over the samples (the float64 path); ``None`` where they follow from the latent's
    mean and sd alone (the float32 path), in which case :attr:`probabilities` derives
    them on each access (:func:`paleomap.probability.moment_probabilities`).
    """

    latent_mean: np.ndarray
    latent_sd: np.ndarray
    stored_probabilities: np.ndarray | None
    thresholds: np.ndarray
    core_index: np.ndarray
    ranks: np.ndarray
    share_in_own_belt: float
    mean_abs_rank_error: float

    @property
    def probabilities(self) -> np.ndarray:
        """Belt probabilities, (points, K) float32."""
        if self.stored_probabilities is not None:
            return self.stored_probabilities
        from ..probability import moment_probabilities

        return moment_probabilities(self.latent_mean, self.latent_sd, self.thresholds).T


def _drift(e, n, centre, scale):
    return drift_basis(e, n, centre, scale, "linear")


def _chol(c, total):
    return cholesky_with_jitter(c, total)[0]


def _fit_relief(e, n, values, weights, overrides, strike_deg):
    """Fit C_Z's shape to the cores' mean residuals; try the strike and the dip as the
    major axis and keep the better fit."""
    overrides = dict(overrides or {})
    overrides.setdefault("nugget", 0.0)
    overrides.setdefault("model", _AUTO_MODELS)
    azimuths = (
        [overrides.pop("azimuth_deg")]
        if "azimuth_deg" in overrides
        else [strike_deg, (strike_deg + 90.0) % 180.0]
    )
    edges = lag_edges(e, n, 10)
    best = None
    for az in azimuths:
        ev = experimental_variogram(e, n, values, float(az), edges)
        if not np.any(np.nan_to_num(ev.gamma) > 1e-12):
            continue
        try:
            f = fit_covariance(ev, overrides, total_variance=1.0)
        except ValueError:
            continue
        if best is None or f.cost < best.cost:
            best = f
    if best is None:
        span = max(np.ptp(e), np.ptp(n), 1.0)
        model = overrides["model"] if isinstance(overrides["model"], str) else "exponential"
        return Covariance(
            model,
            1.0,
            float(overrides.get("range_m", span / 2)),
            float(overrides.get("anisotropy", 1.0)),
            float(strike_deg),
        )
    return best.covariance


class _Sampler:
    """The blocked Gibbs sampler of the multi-slice model (all chains at once)."""

    def __init__(
        self,
        e,
        n,
        obs_core,
        obs_slice,
        lo,
        hi,
        n_slices,
        centre,
        scale,
        rng,
        deterministic,
        global_cores=PathSettings.global_cores,
    ):
        self.e, self.n = e, n
        self.global_cores = global_cores
        self.oc, self.os = obs_core, obs_slice
        self.lo, self.hi = lo, hi
        self.S = n_slices
        self.F = _drift(e, n, centre, scale)
        self.Fo = self.F[obs_core]
        self.flat = obs_slice * e.size + obs_core  # (slice, core) of each observation
        self.rng = rng
        self.det = deterministic
        self.count = np.bincount(obs_core, minlength=e.size).astype(float)
        # per-slice least-squares pieces
        self.slice_rows = [np.flatnonzero(obs_slice == s) for s in range(n_slices)]
        self.slice_pinv = []
        self.slice_chol = []
        for rows in self.slice_rows:
            fs = self.Fo[rows]
            if len(rows) >= 3 and np.linalg.matrix_rank(fs) == 3:
                g = fs.T @ fs
            else:  # too few or collinear cores: a weak prior keeps the drift defined
                g = fs.T @ fs + 1e-3 * np.eye(3)
            gi = np.linalg.inv(g)
            self.slice_pinv.append(gi @ fs.T)
            self.slice_chol.append(np.linalg.cholesky(gi))
        # reparametrisation: linear part of Z over the cores
        self.Fpinv = np.linalg.pinv(self.F)

    def set_covariance(self, relief: Covariance, sigma_e2: float):
        self.relief = relief
        self.s2 = sigma_e2
        c = relief.matrix(self.e, self.n)
        d = self.s2 / self.count
        Lm = _chol(c + np.diag(d), relief.total_variance)
        # Z's update is C M^-1 rhs: one matrix product per sweep instead of two
        # triangular solves and a product (with 8 right-hand sides all three are bound
        # by reading the cores² matrix, not by arithmetic)
        at = linalg.cho_solve((Lm, True), c, check_finite=False)  # M^-1 C = (C M^-1)^T
        del Lm
        lc = _chol(c, relief.total_variance)
        del c
        if self.e.size > self.global_cores:
            # Many cores: the two products per sweep read the matrices in float32,
            # half the memory traffic; a random draw does not need float64 rounding.
            at, lc = at.astype(np.float32), lc.astype(np.float32)
        self.AT, self.Lc = at, lc
        self.d = d

    def init(self, chains):
        y0 = truncated_normal_mean(0.0, 1.0, self.lo, self.hi)
        y = np.repeat(y0[None], chains, axis=0)
        beta = np.zeros((chains, self.S, 3))
        z = np.zeros((chains, self.e.size))
        return y, beta, z

    def draw_latent(self, beta, z):
        """Step 1, ``y | Z, beta``: each record's latent from ``N(F beta_s + Z_i,
        sigma_E²)`` truncated to its belt's interval, every chain at once."""
        # drift of every (slice, core), then gathered: cheaper than per observation
        mean = self._drift_obs(beta) + np.take(z, self.oc, axis=1)
        sd = np.sqrt(self.s2)
        if self.det:
            return truncated_normal_mean(mean, sd, self.lo, self.hi)
        return truncated_normal(mean, sd, self.lo, self.hi, self.rng)

    def sweep(self, y, beta, z):
        chains = y.shape[0]
        # 1. y | Z, beta
        y = self.draw_latent(beta, z)
        # 2. beta | y, Z
        u = y - np.take(z, self.oc, axis=1)
        for s, rows in enumerate(self.slice_rows):
            if rows.size == 0:
                continue
            b = u[:, rows] @ self.slice_pinv[s].T
            if not self.det:
                b = (
                    b
                    + np.sqrt(self.s2)
                    * self.rng.standard_normal((chains, 3))
                    @ self.slice_chol[s].T
                )
            beta[:, s, :] = b
        # 3. Z | y, beta (Matheron's rule: Z = Z* + C M^-1 (ubar - Z* - e*))
        r = y - self._drift_obs(beta)
        ubar = np.zeros((chains, self.e.size))
        for c in range(chains):
            ubar[c] = np.bincount(self.oc, weights=r[c], minlength=self.e.size)
        ubar /= self.count
        if self.det:
            rhs = ubar
            zs = 0.0
        else:
            xi = self.rng.standard_normal((self.e.size, chains))
            zs = (self.Lc @ xi.astype(self.Lc.dtype, copy=False)).T.astype(float)
            es = np.sqrt(self.d)[None] * self.rng.standard_normal((chains, self.e.size))
            rhs = ubar - zs - es
        z = zs + rhs.astype(self.AT.dtype, copy=False) @ self.AT
        # 4. move Z's linear part into the drifts
        g = z @ self.Fpinv.T
        z = z - g @ self.F.T
        beta = beta + g[:, None, :]
        return y, beta, z

    def _drift_obs(self, beta):
        """Each chain's drift at every observation, (chains, observations)."""
        per_cell = (beta @ self.F.T).reshape(beta.shape[0], -1)  # (chains, slices x cores)
        return np.take(per_cell, self.flat, axis=1)

    def run(self, chains, burn_in, keep, thin):
        y, beta, z = self.init(chains)
        for _ in range(burn_in):
            y, beta, z = self.sweep(y, beta, z)
        ys, bs, zs = [], [], []
        per = -(-keep // chains)
        for _ in range(per):
            for _ in range(thin):
                y, beta, z = self.sweep(y, beta, z)
            ys.append(y.copy())
            bs.append(beta.copy())
            zs.append(z.copy())
        cat = lambda a: np.concatenate(a, axis=0)[:keep]  # noqa: E731
        return cat(ys), cat(bs), cat(zs)


def _split_variance(oc, r_mean, count):
    """Between-core and within-core parts of the residual variance."""
    n_cores = count.size
    means = np.bincount(oc, weights=r_mean, minlength=n_cores) / count
    dev = r_mean - means[oc]
    multi = count[oc] > 1
    if multi.sum() > 1:
        dof = np.sum(count[count > 1] - 1)
        within = float(np.sum(dev[multi] ** 2) / max(dof, 1))
    else:
        within = 0.1
    between = float(np.var(means))
    return means, max(between - within / max(count.mean(), 1.0), 1e-4), max(within, 1e-4)


def map_shared(
    core_easting: ArrayLike,
    core_northing: ArrayLike,
    ranks_by_slice: Mapping[Hashable, tuple[ArrayLike, ArrayLike]],
    easting: ArrayLike,
    northing: ArrayLike,
    n_belts: int,
    settings: SharedSettings | None = None,
) -> tuple[dict, SharedFit]:
    """Fit the multi-slice model to every slice at once and map it at target points.

    Parameters
    ----------
    core_easting, core_northing : array_like
        Positions of all cores (n_cores,).
    ranks_by_slice : mapping
        Slice key -> (core indices, belt ranks) of the cores with a record.
    easting, northing : array_like
        Target points (flattened).
    n_belts : int
    settings : SharedSettings, optional

    Returns
    -------
    results : dict
        Slice key -> :class:`SharedResult`.
    fit : SharedFit
    """
    fit = fit_shared(core_easting, core_northing, ranks_by_slice, n_belts, settings)
    te = np.asarray(easting, float).ravel()
    tn = np.asarray(northing, float).ravel()
    out = _predict(fit, fit.easting, fit.northing, te, tn)
    scores = _scores(fit)
    results = {}
    for k, sl in fit.slices.items():
        o = out[k]
        share, mae = scores.get(k, (np.nan, np.nan))
        results[k] = SharedResult(
            o["mean"], o["sd"], o["prob"], fit.thresholds, sl["index"], sl["ranks"], share, mae
        )
    return results, fit


def fit_shared(
    core_easting: ArrayLike,
    core_northing: ArrayLike,
    ranks_by_slice: Mapping[Hashable, tuple[ArrayLike, ArrayLike]],
    n_belts: int,
    settings: SharedSettings | None = None,
    given: SharedFit | None = None,
) -> SharedFit:
    """Fit the multi-slice model to every slice at once (see the module notes).

    Parameters
    ----------
    core_easting, core_northing : array_like
        Positions of all cores (n_cores,).
    ranks_by_slice : mapping
        Slice key -> (core indices, belt ranks) of the cores with a record.
    n_belts : int
    settings : SharedSettings, optional
    given : SharedFit, optional
        A model fitted before: its thresholds, covariances and drift frame are kept and
        only the latent at these slices' cores is sampled (the model conditioned on
        other slices' records, e.g. at other ages).

    Returns
    -------
    SharedFit
    """
    st = settings or SharedSettings()
    rng = np.random.default_rng(st.seed)
    ce_all = np.asarray(core_easting, dtype=float)
    cn_all = np.asarray(core_northing, dtype=float)
    keys = list(ranks_by_slice)
    used = np.unique(np.concatenate([np.asarray(ranks_by_slice[k][0], int) for k in keys]))
    remap = -np.ones(ce_all.size, dtype=int)
    remap[used] = np.arange(used.size)
    e, n = ce_all[used], cn_all[used]
    oc, os_, rk = [], [], []
    for s, k in enumerate(keys):
        idx, ranks = ranks_by_slice[k]
        oc.append(remap[np.asarray(idx, int)])
        os_.append(np.full(len(idx), s))
        rk.append(np.asarray(ranks, int))
    oc, os_, rk = np.concatenate(oc), np.concatenate(os_), np.concatenate(rk)
    if given is None:
        counts = np.bincount(rk, minlength=n_belts).astype(float)
        t = thresholds(counts, st.min_proportion)
        props = counts / counts.sum()
        centre, scale = drift_frame(e, n)
    else:
        props, t, centre, scale = given.proportions, given.thresholds, given.centre, given.scale
    lo, hi = belt_intervals(rk, t)

    sampler = _Sampler(
        e, n, oc, os_, lo, hi, len(keys), centre, scale, rng, st.deterministic,
        st.paths.global_cores,
    )  # fmt: skip
    chains = 1 if st.deterministic else st.chains
    if given is None:
        # First fit: from interval means, with per-slice least-squares drifts.
        y0 = truncated_normal_mean(0.0, 1.0, lo, hi)
        relief, s2 = _fit_from(sampler, y0[None], np.zeros((1, e.size)), st, None)
        sampler.set_covariance(relief, s2)
        # Short pass, refit from the samples, then the real run.
        y, beta, z = sampler.run(chains, max(st.burn_in // 2, 10), chains, 1)
        relief, s2 = _fit_from(sampler, y, z, st, relief)
        local = None
    else:
        relief, s2, local = given.relief, float(given.local.sill), given.local
    sampler.set_covariance(relief, s2)
    keep = 1 if st.deterministic else st.samples
    ys, betas, zs = sampler.run(chains, st.burn_in, keep, st.thin)
    logger.info("shared relief covariance: %s; slice residual variance %.3f", relief.as_dict(), s2)
    del sampler  # its covariance factors (3 x cores² floats) are not needed to map

    if local is None:
        local = Covariance(relief.model, s2, st.local_range * mean_core_spacing(e, n), 1.0, 0.0)
    slices = {}
    for s, k in enumerate(keys):
        rows = np.flatnonzero(os_ == s)
        slices[k] = dict(
            index=used[oc[rows]],
            local_index=oc[rows],
            ranks=rk[rows],
            drift=betas[:, s, :],
            latent=ys[:, rows],
        )
    return SharedFit(t, props, relief, local, zs, used, slices, centre, scale, st, e, n)


def _scores(fit: SharedFit) -> dict:
    """Leave-one-out scores per slice (none above ``paths.loo_cores`` cores)."""
    e, n = fit.easting, fit.northing
    if e.size > fit.settings.paths.loo_cores:
        return {}
    Lr = _chol(fit.relief.matrix(e, n), fit.relief.total_variance)
    return _loo(fit, e, n, Lr)


def _fit_from(sampler, ys, zs, st, previous):
    """Covariance of Z and sigma_E² from latent values (samples x observations)."""
    # per-slice drift by least squares of y - Z, then residuals
    r_all = []
    for y, z in zip(ys, zs, strict=True):
        u = y - z[sampler.oc]
        beta = np.zeros((sampler.S, 3))
        for s, rows in enumerate(sampler.slice_rows):
            if rows.size:
                beta[s] = sampler.slice_pinv[s] @ u[rows]
        r_all.append(y - np.einsum("ok,ok->o", sampler.Fo, beta[sampler.os]))
    r = np.mean(r_all, axis=0)
    means, between, within = _split_variance(sampler.oc, r, sampler.count)
    strike = _strike_of(sampler, ys[0])
    shape = _fit_relief(sampler.e, sampler.n, means, sampler.count, st.covariance, strike)
    return shape.replace(
        sill=between * (1 - shape.nugget) / max(shape.total_variance, 1e-12),
        nugget=between * shape.nugget / max(shape.total_variance, 1e-12),
    ), within


def _strike_of(sampler, y):
    """Strike: perpendicular to the mean gradient of the slices' drifts."""
    g = np.zeros(2)
    for s, rows in enumerate(sampler.slice_rows):
        if rows.size >= 3:
            b = sampler.slice_pinv[s] @ y[rows]
            norm = np.hypot(b[1], b[2])
            if norm > 0:
                g += b[1:] / norm
    dip = float(np.degrees(np.arctan2(g[0], g[1]))) if np.any(g) else 90.0
    return (dip + 90.0) % 180.0


def _loo(fit: SharedFit, e, n, Lr):
    """Leave-one-core-out scores per slice.

    Core ``i`` is held out of the relief (its ``Z`` predicted from the other cores'
    sampled values, by the simple-kriging identity ``z_i - (Q z)_i / Q_ii`` with
    ``Q = C_Z⁻¹``) and out of the slice's own residual (likewise with ``C_E``), and the
    held-out mean latent is classified at the thresholds. The drifts and the other
    cores' samples were conditioned on core ``i`` too, so the scores lean optimistic.
    """
    q = linalg.cho_solve((Lr, True), np.eye(Lr.shape[0]))
    z = fit.relief_at_cores  # (S, N)
    z_loo = z - (z @ q) / np.diag(q)[None]
    out = {}
    for k, sl in fit.slices.items():
        idx = sl["local_index"]
        F = _drift(e[idx], n[idx], fit.centre, fit.scale)
        trend = np.einsum("ok,sk->so", F, sl["drift"])
        resid = sl["latent"] - trend - z[:, idx]
        ql = np.linalg.inv(fit.local.matrix(e[idx], n[idx]) + 1e-10 * np.eye(idx.size))
        r_loo = resid - (resid @ ql) / np.diag(ql)[None]
        mu = (trend + z_loo[:, idx] + r_loo).mean(axis=0)
        pred = np.searchsorted(fit.thresholds, mu, side="right")
        out[k] = (float(np.mean(pred == sl["ranks"])), float(np.mean(np.abs(pred - sl["ranks"]))))
    return out


def _predict_exact(fit: SharedFit, e, n, te, tn):
    """Map every slice at the target points, chunk by chunk."""
    st = fit.settings
    t = fit.thresholds
    K = t.size + 1
    m_pts = te.size
    n_samples = fit.relief_at_cores.shape[0]
    # relief: simple kriging from its sampled values at the cores (one factorisation)
    Lr = _chol(fit.relief.matrix(e, n), fit.relief.total_variance)
    alpha_z = linalg.cho_solve((Lr, True), fit.relief_at_cores.T)  # (n_cores, S)
    z_var0 = fit.relief.total_variance
    # each slice: residual y - F beta - Z at its cores, kriged with the local covariance
    groups: dict[tuple, list] = {}
    for k, sl in fit.slices.items():
        groups.setdefault(tuple(sl["local_index"]), []).append(k)
    alpha_l, chol_l = {}, {}
    for idx_t, ks in groups.items():
        idx = np.asarray(idx_t)
        Ll = _chol(fit.local.matrix(e[idx], n[idx]), fit.local.total_variance)
        chol_l[idx_t] = Ll
        for k in ks:
            sl = fit.slices[k]
            F = _drift(e[idx], n[idx], fit.centre, fit.scale)
            resid = (
                sl["latent"] - np.einsum("ok,sk->so", F, sl["drift"]) - fit.relief_at_cores[:, idx]
            )
            alpha_l[k] = linalg.cho_solve((Ll, True), resid.T)  # (n_i, S)
    exact = st.probability == "samples" or (
        st.probability == "auto" and m_pts * n_samples * len(fit.slices) * K < st.paths.exact_budget
    )
    out = {
        k: dict(mean=np.empty(m_pts), sd=np.empty(m_pts), prob=np.empty((m_pts, K), np.float32))
        for k in fit.slices
    }
    chunk = st.chunk_size or default_chunk_size(e.size, n_samples)
    for sl_ in chunk_slices(m_pts, chunk):
        pe, pn = te[sl_], tn[sl_]
        kz = fit.relief.cross(pe, pn, e, n)  # (m, n_cores)
        zhat = kz @ alpha_z  # (m, S)
        vz = linalg.solve_triangular(Lr, kz.T, lower=True)
        var_z = np.maximum(z_var0 - np.einsum("ij,ij->j", vz, vz), 0.0)
        F = _drift(pe, pn, fit.centre, fit.scale)
        for idx_t, ks in groups.items():
            idx = np.asarray(idx_t)
            kl = fit.local.cross(pe, pn, e[idx], n[idx])
            vl = linalg.solve_triangular(chol_l[idx_t], kl.T, lower=True)
            var_l = np.maximum(fit.local.total_variance - np.einsum("ij,ij->j", vl, vl), 0.0)
            base_var = var_z + var_l
            for k in ks:
                sl = fit.slices[k]
                mu = F @ sl["drift"].T + zhat + kl @ alpha_l[k]  # (m, S)
                mean = mu.mean(axis=1)
                spread = mu.var(axis=1) if n_samples > 1 else 0.0
                sd = np.sqrt(np.maximum(base_var + spread, 1e-12))
                o = out[k]
                o["mean"][sl_] = mean
                o["sd"][sl_] = sd
                if exact and n_samples > 1:
                    s0 = np.sqrt(np.maximum(base_var, 1e-12))
                    o["prob"][sl_] = sample_averaged_probabilities(mu, s0, t)
                else:
                    o["prob"][sl_] = belt_probabilities(mean, sd, t)
    return out


def _predict(fit: SharedFit, e, n, te, tn):
    """Every slice of ``fit`` at the target points: slice key -> dict of ``mean``,
    ``sd`` and ``prob`` (None on the float32 path, where they follow from the two)."""
    st = fit.settings
    n_samples = fit.relief_at_cores.shape[0]
    if st.method == "direct":
        return _predict_direct(fit, e, n, te, tn)
    if st.probability != "samples" and te.size * n_samples * len(fit.slices) > st.paths.fast_budget:
        return _predict_fast(fit, e, n, te, tn)
    return _predict_exact(fit, e, n, te, tn)


def _residual_samples(fit: SharedFit, k, e, n):
    """Slice ``k``'s own residual ``y - F beta - Z`` at its cores, (n_samples, n_i)."""
    sl = fit.slices[k]
    idx = sl["local_index"]
    F = _drift(e[idx], n[idx], fit.centre, fit.scale)
    return sl["latent"] - np.einsum("ok,sk->so", F, sl["drift"]) - fit.relief_at_cores[:, idx]


def _predict_direct(fit: SharedFit, e, n, te, tn):
    """Every slice from scratch: its own systems built and solved by LU, no reuse.

    The reference for :func:`_predict_exact` (same formulas, nothing shared between
    slices, samples or points), used by the tests; cost grows with slices x cores³.
    """
    st = fit.settings
    t = fit.thresholds
    n_samples = fit.relief_at_cores.shape[0]
    exact_budget = te.size * n_samples * len(fit.slices) * (t.size + 1) < st.paths.exact_budget
    exact = st.probability == "samples" or (st.probability == "auto" and exact_budget)
    out = {}
    for k, sl in fit.slices.items():
        idx = sl["local_index"]
        cz = fit.relief.matrix(e, n)
        kz = fit.relief.cross(te, tn, e, n)
        zhat = kz @ linalg.solve(cz, fit.relief_at_cores.T, assume_a="gen")
        var_z = fit.relief.total_variance - np.sum(kz * linalg.solve(cz, kz.T).T, axis=1)
        cl = fit.local.matrix(e[idx], n[idx])
        kl = fit.local.cross(te, tn, e[idx], n[idx])
        resid = _residual_samples(fit, k, e, n)
        lhat = kl @ linalg.solve(cl, resid.T, assume_a="gen")
        var_l = fit.local.total_variance - np.sum(kl * linalg.solve(cl, kl.T).T, axis=1)
        base_var = np.maximum(var_z, 0.0) + np.maximum(var_l, 0.0)
        mu = _drift(te, tn, fit.centre, fit.scale) @ sl["drift"].T + zhat + lhat
        mean = mu.mean(axis=1)
        spread = mu.var(axis=1) if n_samples > 1 else 0.0
        sd = np.sqrt(np.maximum(base_var + spread, 1e-12))
        if exact and n_samples > 1:
            prob = sample_averaged_probabilities(mu, np.sqrt(np.maximum(base_var, 1e-12)), t)
        else:
            prob = belt_probabilities(mean, sd, t)
        out[k] = dict(mean=mean, sd=sd, prob=prob.astype(np.float32))
    return out


# ----------------------------------------------------------------------- fast path
#
# Large maps (points x samples x slices above ``PathSettings.fast_budget``) go through one pass over
# spatial tiles of the target points, in float32 where it keeps the probabilities
# within 1e-4:
#
# * the relief's mean, kriging variance and sample spread come from one matrix
#   product of the tile's cross-covariance with [mean weights | L⁻ᵀ | spread basis]
#   (the variance once per set of cores, as a sum of squares against the inverse
#   Cholesky factor);
# * each slice's own residual has a covariance of about one core spacing, so a tile
#   only sees the cores within the distance where it falls below _LOCAL_CUTOFF of its
#   sill; its weights and inverse come from the global factorisation of the slice's
#   cores (one per set of cores), restricted to those cores;
# * the spread over samples is computed in a low-rank basis of the sample space (the
#   principal components of the sampled latent values at the cores, all slices
#   together, keeping all but ``PathSettings.spread_tail`` of their energy), never as
#   (points x samples) per slice.

_LOCAL_CUTOFF = 1e-5
_CACHE_VALUES = 32768  # float32 values per block of elementwise work (128 KiB)
_VARIANCE_TOL = 1e-6


def _cross32(cov: Covariance, pe, pn, ce, cn, dtype, rhs=None):
    """Cross-covariance of the continuous part in ``dtype`` (float32 halves the passes),
    or its product with ``rhs`` when given.

    Computed in blocks of rows small enough to stay in the processor's cache through
    the dozen elementwise passes (about 2.5 times faster than whole-tile passes); with
    ``rhs`` each block is multiplied while it is still there and the full
    cross-covariance is never held.
    """
    if np.size(ce) == 0:  # no core near a tile
        return np.zeros((np.size(pe), 0 if rhs is None else rhs.shape[1]), dtype)
    az = np.deg2rad(cov.azimuth_deg)
    sa, ca = np.sin(az), np.cos(az)
    a, b = cov.range_m, cov.anisotropy * cov.range_m
    # Rotate and scale in float64 about the cores' centre, then difference in dtype.
    e0, n0 = float(np.mean(ce)), float(np.mean(cn))
    u1 = (((pe - e0) * sa + (pn - n0) * ca) / a).astype(dtype)
    v1 = (((pe - e0) * ca - (pn - n0) * sa) / b).astype(dtype)
    u2 = (((ce - e0) * sa + (cn - n0) * ca) / a).astype(dtype)
    v2 = (((ce - e0) * ca - (cn - n0) * sa) / b).astype(dtype)
    m, n = u1.size, u2.size
    out = np.empty((m, n if rhs is None else rhs.shape[1]), dtype)
    rows = max(8, _CACHE_VALUES // max(n, 1))
    r_buf = np.empty((min(rows, m), n), dtype)
    t_buf = np.empty_like(r_buf)
    for i0 in range(0, m, rows):
        i1 = min(m, i0 + rows)
        r, tmp = r_buf[: i1 - i0], t_buf[: i1 - i0]
        np.subtract.outer(u1[i0:i1], u2, out=r)
        np.square(r, out=r)
        np.subtract.outer(v1[i0:i1], v2, out=tmp)
        np.square(tmp, out=tmp)
        r += tmp
        np.sqrt(r, out=r)
        _correlation32(cov.model, r, tmp, dtype)
        r *= dtype(cov.sill)
        if rhs is None:
            out[i0:i1] = r
        else:
            np.matmul(r, rhs, out=out[i0:i1])
    return out


def _correlation32(model: str, r, tmp, dtype) -> None:
    """The model's correlation of scaled distances ``r``, in place (``tmp`` is scratch)."""
    if model == "exponential":
        r *= dtype(-3.0)
        np.exp(r, out=r)
    elif model == "gaussian":
        np.square(r, out=r)
        r *= dtype(-3.0)
        np.exp(r, out=r)
    elif model == "matern32":
        from .covariance import _MATERN32_U95

        r *= dtype(_MATERN32_U95)
        np.negative(r, out=tmp)
        np.exp(tmp, out=tmp)
        r += dtype(1.0)
        r *= tmp
    else:
        from .covariance import correlation

        r[:] = correlation(model, r)


def _cutoff_m(cov: Covariance, level: float) -> float:
    """Distance beyond which the (isotropic) correlation stays below ``level``."""
    from .covariance import correlation

    r = np.linspace(0.0, 20.0, 20001)
    above = np.flatnonzero(correlation(cov.model, r) >= level)
    return float(r[min(above[-1] + 1, r.size - 1)] * cov.range_m)


def _spread_basis(fit: SharedFit, n_samples: int):
    """Orthonormal sample-space basis (n_samples, r) of the sampled deviations."""
    parts = [fit.relief_at_cores - fit.relief_at_cores.mean(axis=0)]
    for sl in fit.slices.values():
        y = sl["latent"]
        parts.append(y - y.mean(axis=0))
        parts.append(sl["drift"] - sl["drift"].mean(axis=0))
    gram = sum(p @ p.T for p in parts)
    w, v = np.linalg.eigh(gram)
    w, v = w[::-1], v[:, ::-1]
    w = np.maximum(w, 0.0)
    total = w.sum()
    if total <= 0:
        return np.zeros((n_samples, 0))
    kept = int(np.searchsorted(np.cumsum(w) / total, 1.0 - fit.settings.paths.spread_tail) + 1)
    return v[:, : min(kept, n_samples)]


def _variance_basis(cov: Covariance, e, n, te, tn):
    """Weights ``W`` (n_cores, R) with kriging variance ``C0 - |k(x) W|²`` at any point.

    From the eigenvectors of the cores' covariance, ``W = U Λ^(-1/2)``, largest
    eigenvalues first; a component contributes about its eigenvalue to the variance
    reduction, so the tail is dropped where it changes the variance at the cores and at
    up to 2000 probe targets by less than ``_VARIANCE_TOL`` of the sill (all
    components for rough covariances, few for smooth ones).
    """
    lam, u = np.linalg.eigh(cov.matrix(e, n))
    lam, u = lam[::-1], u[:, ::-1]
    pos = lam > 1e-13 * lam[0]
    w = u[:, pos] / np.sqrt(lam[pos])
    pick = np.random.default_rng(0).choice(te.size, min(2000, te.size), replace=False)
    q = cov.cross(np.concatenate([e, te[pick]]), np.concatenate([n, tn[pick]]), e, n) @ w
    tail = np.cumsum((q * q)[:, ::-1], axis=1)[:, ::-1]  # tail[:, i]: components i..
    ok = np.all(tail <= _VARIANCE_TOL * cov.total_variance, axis=0)
    kept = int(np.argmax(ok)) if ok.any() else w.shape[1]
    return w[:, :kept]


def _predict_fast(fit: SharedFit, e, n, te, tn):
    m_pts = te.size
    n_samples = fit.relief_at_cores.shape[0]
    dt = np.float32
    V = _spread_basis(fit, n_samples) if n_samples > 1 else np.zeros((n_samples, 0))
    r = V.shape[1]
    logger.info("prediction: %d points, spread in %d of %d sample components", m_pts, r, n_samples)
    keys = list(fit.slices)
    pos = {k: i for i, k in enumerate(keys)}
    groups: dict[tuple, list] = {}
    for k, sl in fit.slices.items():
        groups.setdefault(tuple(sl["local_index"]), []).append(k)
    paths = fit.settings.paths
    local = e.size > paths.global_cores
    if local:
        logger.info("%d cores: kriging in neighbourhoods of %d cores", e.size, paths.neighbours)
        relief = _ReliefNeighbourhoods(fit, e, n, V)
    else:
        relief = _ReliefGlobal(fit, e, n, te, tn, V)
    cut = _cutoff_m(fit.local, _LOCAL_CUTOFF)
    # The slices' own residuals: one global factorisation per set of cores while their
    # weights fit the budget (exact, and the cheapest per tile); else a system of the
    # cores near each tile.
    weight_bytes = 4 * sum((len(i) + 3) * (len(i) + len(ks) * (1 + r)) for i, ks in groups.items())
    local_resid = local and weight_bytes > paths.local_weight_bytes
    gdata = [
        _LocalGroup(fit, e, n, np.asarray(idx_t), ks, V, cut, local_resid)
        for idx_t, ks in groups.items()
    ]
    # outputs in point order, float32; the belt probabilities follow from the two
    # (moments) and are derived when asked for (SharedResult.probabilities)
    mean_o = [np.empty(m_pts, dt) for _ in keys]
    sd_o = [np.empty(m_pts, dt) for _ in keys]
    per_tile = fit.settings.chunk_size or (4 * paths.tile_points if local else paths.tile_points)
    side = np.sqrt(max(np.ptp(te), 1.0) * max(np.ptp(tn), 1.0) * per_tile / max(m_pts, 1))
    order, bounds = square_tiles(te, tn, side)
    tile = _TileJob(fit, te, tn, order, relief, gdata, pos, mean_o, sd_o)
    spans = list(zip(bounds[:-1], bounds[1:], strict=True))
    run_tiles(tile, spans, paths.threads or default_threads())
    return {k: dict(mean=mean_o[j], sd=sd_o[j], prob=None) for j, k in enumerate(keys)}


class _TileJob:
    """Maps one tile of target points for every slice (float32), writing the latent's
    mean and sd into the outputs at the tile's points."""

    def __init__(self, fit, te, tn, order, relief, groups, pos, mean_o, sd_o):
        self.fit, self.te, self.tn, self.order = fit, te, tn, order
        self.relief, self.groups, self.pos = relief, groups, pos
        self.mean_o, self.sd_o = mean_o, sd_o
        self.inv_s = np.float32(1.0 / fit.relief_at_cores.shape[0])

    def __call__(self, a0, a1):
        dt = np.float32
        fit = self.fit
        sel = self.order[a0:a1]
        pe, pn = self.te[sel], self.tn[sel]
        F = _drift(pe, pn, fit.centre, fit.scale).astype(dt)
        zmean, var_z, hz = self.relief.at(pe, pn)
        hh = np.einsum("ir,ir->i", hz, hz)
        for grp in self.groups:
            for ks, var_l, mean, d in grp.at(pe, pn, F):
                mean += zmean
                # |own + relief|² over the sample basis, expanded: no (points,
                # slices, samples) temporary beyond the own part's
                spread = np.einsum("ilr,ilr->il", d, d)
                spread += dt(2.0) * np.matmul(d, hz[:, :, None])[..., 0]
                spread += hh[:, None]
                spread *= self.inv_s
                spread += (var_z + var_l)[:, None]
                np.maximum(spread, dt(1e-12), out=spread)
                sd = np.sqrt(spread)
                for jj, k in enumerate(ks):
                    j = self.pos[k]
                    self.mean_o[j][sel] = mean[:, jj]
                    self.sd_o[j][sel] = sd[:, jj]


class _ReliefGlobal:
    """The relief from all cores: [mean weights | variance basis | spread weights]."""

    def __init__(self, fit, e, n, te, tn, V):
        Lr = _chol(fit.relief.matrix(e, n), fit.relief.total_variance)
        alpha = linalg.cho_solve((Lr, True), fit.relief_at_cores.T)  # (N, S)
        wv = _variance_basis(fit.relief, e, n, te, tn)
        mean = alpha.mean(axis=1, keepdims=True)
        self.w = np.hstack([mean, wv, (alpha - mean) @ V]).astype(np.float32)
        self.nv = wv.shape[1]
        logger.info("relief variance in %d of %d components", self.nv, e.size)
        self.fit, self.e, self.n = fit, e, n

    def at(self, pe, pn):
        g = _cross32(self.fit.relief, pe, pn, self.e, self.n, np.float32, self.w)
        q = g[:, 1 : self.nv + 1]
        var = np.maximum(self.fit.relief.total_variance - np.einsum("ij,ij->i", q, q), 0.0)
        return g[:, :1], var, np.ascontiguousarray(g[:, self.nv + 1 :])


class _ReliefNeighbourhoods:
    """The relief from the cores nearest a tile (in the covariance's own metric)."""

    def __init__(self, fit, e, n, V):
        from scipy.spatial import cKDTree

        self.fit, self.e, self.n, self.V = fit, e, n, V
        self.uv = np.column_stack(fit.relief._scaled(e, n))
        self.tree = cKDTree(self.uv)

    def at(self, pe, pn):
        cov = self.fit.relief
        u, v = cov._scaled(np.array([pe.min(), pe.max()]), np.array([pn.min(), pn.max()]))
        cu, cv = cov._scaled(np.array([pe.mean()]), np.array([pn.mean()]))
        corners = np.array([[u[i], v[j]] for i in (0, 1) for j in (0, 1)])
        k = min(self.fit.settings.paths.neighbours, self.e.size)
        near = [self.tree.query([cu[0], cv[0]], k=k)[1]]
        near += [self.tree.query(c, k=max(k // 4, 1))[1] for c in corners]
        J = np.unique(np.concatenate([np.atleast_1d(x) for x in near]))
        L = _chol(cov.matrix(self.e[J], self.n[J]), cov.total_variance)
        alpha = linalg.cho_solve((L, True), self.fit.relief_at_cores[:, J].T)
        mean = alpha.mean(axis=1, keepdims=True)
        linv = linalg.solve_triangular(L, np.eye(J.size), lower=True)
        w = np.hstack([mean, linv.T, (alpha - mean) @ self.V]).astype(np.float32)
        g = _cross32(cov, pe, pn, self.e[J], self.n[J], np.float32, w)
        q = g[:, 1 : J.size + 1]
        var = np.maximum(cov.total_variance - np.einsum("ij,ij->i", q, q), 0.0)
        return g[:, :1], var, np.ascontiguousarray(g[:, J.size + 1 :])


def _inverse_from_cholesky(L: np.ndarray) -> np.ndarray:
    """The inverse of ``L Lᵀ`` from its lower Cholesky factor (LAPACK potri: a third of
    the work of solving against the identity)."""
    inv, info = linalg.lapack.dpotri(L, lower=1)
    if info != 0:
        return linalg.cho_solve((L, True), np.eye(L.shape[0]))
    upper = np.triu_indices(L.shape[0], 1)
    inv[upper] = inv.T[upper]
    return inv


class _LocalGroup:
    """The slices' own residuals for one set of cores: only cores within ``cut`` of a
    tile count. With ``local`` the weights come from a system of the cores within
    twice that distance (per tile), else from the set's global factorisation."""

    def __init__(self, fit, e, n, idx, ks, V, cut, local):
        self.fit, self.idx, self.ks, self.cut, self.local = fit, idx, ks, cut, local
        self.e, self.n = e[idx], n[idx]
        self.r = V.shape[1]
        # Each slice's residual samples enter only through their mean and their
        # deviations in the spread basis, and kriging is linear in them: project once,
        # (n_i, nk + nk r) in the weights' column order [means | spreads per slice].
        means, spreads, d_mean, d_spread = [], [], [], []
        for k in ks:
            res = _residual_samples(fit, k, e, n)  # (S, n_i)
            mu = res.mean(axis=0)
            means.append(mu[:, None])
            spreads.append((res - mu).T @ V)
            drift = fit.slices[k]["drift"]  # (S, 3)
            dm = drift.mean(axis=0)
            d_mean.append(dm[:, None])
            d_spread.append((drift - dm).T @ V)
        self.proj = np.hstack(means + spreads)
        self.drift = np.hstack(d_mean + d_spread)  # (3, nk + nk r), same order
        if not local:
            self.w = self._weights(np.arange(idx.size))

    def _weights(self, sub):
        """[inverse | mean weight per slice | spread weights per slice] over ``sub``,
        three more rows for the drifts (multiplied by F(x)); float32, built without a
        float64 copy of the whole."""
        fit, n_s = self.fit, sub.size
        L = _chol(fit.local.matrix(self.e[sub], self.n[sub]), fit.local.total_variance)
        w = np.empty((n_s + 3, n_s + self.proj.shape[1]), np.float32)
        w[:n_s, :n_s] = _inverse_from_cholesky(L)
        w[n_s:, :n_s] = 0.0
        step = max(1, _CACHE_VALUES * 64 // max(n_s, 1))  # columns per solve
        for c0 in range(0, self.proj.shape[1], step):
            c1 = min(self.proj.shape[1], c0 + step)
            w[:n_s, n_s + c0 : n_s + c1] = linalg.cho_solve((L, True), self.proj[sub, c0:c1])
        w[n_s:, n_s:] = self.drift
        return w

    def _within(self, pe, pn, d):
        de = np.maximum(np.maximum(pe.min() - self.e, self.e - pe.max()), 0.0)
        dn = np.maximum(np.maximum(pn.min() - self.n, self.n - pn.max()), 0.0)
        return np.flatnonzero(de * de + dn * dn <= d * d)

    def at(self, pe, pn, F):
        """Yields (slice keys, own variance, own mean, own spread weights) per batch."""
        near = self._within(pe, pn, self.cut)
        if self.local:
            halo = self._within(pe, pn, 2.0 * self.cut)
            w = self._weights(halo)
            rows_of = np.searchsorted(halo, near)
            base = halo.size
        else:
            w, rows_of, base = self.w, near, self.idx.size
        nn_, nk, r, m = near.size, len(self.ks), self.r, pe.size
        kl = np.empty((m, nn_ + 3), np.float32)
        kl[:, :nn_] = _cross32(self.fit.local, pe, pn, self.e[near], self.n[near], np.float32)
        kl[:, nn_:] = F
        rows = np.concatenate([rows_of, base + np.arange(3)])
        gi = kl @ w[np.ix_(rows, rows_of)] if nn_ else np.zeros((m, 0), np.float32)
        var_l = np.maximum(
            self.fit.local.total_variance - np.einsum("ij,ij->i", gi, kl[:, :nn_]), 0.0
        )
        # slices in batches: (points, slices, samples) stays within about 16 M values
        step = max(1, int(16e6 // max(m * max(r, 1), 1)))
        for j0 in range(0, nk, step):
            j1 = min(nk, j0 + step)
            cols = np.concatenate([base + np.arange(j0, j1), base + nk + np.arange(j0 * r, j1 * r)])
            g = kl @ w[np.ix_(rows, cols)]
            b = j1 - j0
            yield self.ks[j0:j1], var_l, g[:, :b].copy(), g[:, b:].reshape(m, b, r)


# ----------------------------------------------------------------------- the engine


class SharedReliefEngine:
    """The default field engine, ``[mapping] engine = "shared_relief"``: every slice
    mapped together with a latent relief shared between them (see the module notes).

    Examples
    --------
    >>> from paleomap.field.engine import FieldEngine
    >>> isinstance(SharedReliefEngine(), FieldEngine)
    True
    """

    name = "shared_relief"

    def settings(self, mapping) -> SharedSettings:
        """Settings from the project's ``[mapping]`` table."""
        from .engine import covariance_overrides

        return SharedSettings(
            covariance=covariance_overrides(mapping),
            samples=100 if mapping.samples is None else mapping.samples,
            burn_in=50 if mapping.burn_in is None else mapping.burn_in,
            seed=mapping.seed,
            deterministic=mapping.deterministic,
        )

    def fit(self, records, n_belts: int, settings: SharedSettings, ages) -> SharedReliefModel:
        """Fit to the records read at each slice age (ages with fewer than two cores
        recording them are left out)."""
        from .engine import ranks_by_age

        ages = np.asarray(ages, dtype=float).ravel()
        _ids, e, n, by_age = ranks_by_age(records, ages)
        if not by_age:
            raise ValueError("no age has a record in two or more cores")
        fit = fit_shared(e, n, by_age, n_belts, settings)
        return SharedReliefModel(fit, records, ages, n_belts, _scores(fit))


class SharedReliefModel:
    """The fitted shared-relief model (:class:`paleomap.field.engine.FittedField`).

    At the fitted slice ages :meth:`predict` krige the sampled latent; at other ages
    it samples the latent at the cores recording them with the fitted thresholds,
    covariances and drift frame held (``settings.condition_samples`` samples after
    ``settings.condition_burn_in`` sweeps), then kriges it the same way.
    """

    def __init__(self, fit: SharedFit, records, ages, n_belts: int, scores: dict):
        self.fit, self.records, self.ages = fit, records, ages
        self.n_belts, self.scores = n_belts, scores

    def _slot(self, age: float):
        hits = [j for j in np.flatnonzero(self.ages == age) if j in self.fit.slices]
        return int(hits[0]) if hits else None

    def predict(self, easting, northing, ages):
        """The latent's mean and sd and belt probabilities at points and ages."""
        from .engine import Prediction, ranks_by_age

        te = np.asarray(easting, dtype=float).ravel()
        tn = np.asarray(northing, dtype=float).ravel()
        ages = np.atleast_1d(np.asarray(ages, dtype=float))
        slots = {i: self._slot(a) for i, a in enumerate(ages)}
        got: dict[int, dict] = {}
        wanted = sorted({j for j in slots.values() if j is not None})
        if wanted:
            sub = replace(self.fit, slices={j: self.fit.slices[j] for j in wanted})
            out = _predict(sub, sub.easting, sub.northing, te, tn)
            got.update({i: out[j] for i, j in slots.items() if j is not None})
        new = [i for i, j in slots.items() if j is None]
        if new:
            st = self.fit.settings
            st = replace(st, samples=st.condition_samples, burn_in=st.condition_burn_in)
            _ids, e, n, by_new = ranks_by_age(self.records, ages[new])
            if by_new:
                cond = fit_shared(e, n, by_new, self.n_belts, st, given=self.fit)
                out = _predict(cond, cond.easting, cond.northing, te, tn)
                got.update({new[j]: o for j, o in out.items()})
        nan = np.full(te.size, np.nan)
        rows = [got.get(i, dict(mean=nan, sd=nan, prob=None)) for i in range(ages.size)]
        return Prediction(
            ages,
            tuple(r["mean"] for r in rows),
            tuple(r["sd"] for r in rows),
            tuple(self.fit.thresholds for _ in rows),
            tuple(r["prob"] for r in rows),
        )

    def quality(self, age: float) -> dict:
        """Leave-one-out scores at a fitted age and the fitted covariances."""
        j = self._slot(float(age))
        share, mae = self.scores.get(j, (np.nan, np.nan))
        return dict(
            method=SharedReliefEngine.name,
            loo_share_in_own_belt=share,
            loo_mean_abs_rank_error=mae,
            **{f"relief_{k}": v for k, v in self.fit.relief.as_dict().items()},
            slice_residual_variance=float(self.fit.local.sill),
            slice_residual_range_m=float(self.fit.local.range_m),
        )
