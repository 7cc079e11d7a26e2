"""The ordinal (truncated-Gaussian) field of one or many time slices.

For each slice, the belt ranks at the cores become interval constraints on a
latent Gaussian ``Y = trend + Z`` (thresholds from the slice's pooled belt
proportions, see :mod:`paleomap.field.truncgauss`); the latent values at the cores
are sampled by Gibbs; ``Y`` is mapped by universal kriging of the samples; belt
probabilities per cell are the mean over samples of
``Phi((t_{k+1} - mu_s) / sigma) - Phi((t_k - mu_s) / sigma)``.

Choices, written down once:

* **Latent scale.** The residual ``Z`` has unit variance (``sill + nugget = 1``), so
  the thresholds are on the standard normal scale and ``t_k - trend(x)`` are the
  local standardised thresholds. The variogram fit estimates only the shape
  (model, range, anisotropy, nugget share).
* **Covariance fit.** Fitted once for all slices given together (pooled
  variograms), so that slices with the same cores share one factorisation. The
  major axis is the strike: perpendicular to the pooled gradient of a linear trend
  fitted to the initial latent values (truncated-interval means). The residual
  variograms of those values are fitted first; after a short Gibbs pass the
  variograms of the samples' residuals are fitted again. Any of ``model``,
  ``range_m``, ``anisotropy``, ``azimuth_deg`` and ``nugget`` can be fixed.
* **Models.** Without an override the model is chosen among exponential,
  spherical and matern32 (the gaussian model only on request: it makes the core
  covariance numerically singular at ranges of a few core spacings).
* **Nugget.** Fixed at 0 unless the caller asks for one: the latent is a
  continuous field, and with a zero nugget kriging is an exact interpolator, so
  the mean latent at a core is the mean of its samples, which lies inside the
  core's interval (an interval is convex): the mapped belts honour every core.
  With a nugget the map is smoothed and a core may fall outside its belt
  (reported by :attr:`SliceModel.honoured`).
* **Sharing.** Slices with the same set of cores share one kriging system: the
  cross-covariance of a grid chunk and its kriging variance are computed once per
  chunk for all of them, and their fields (mean and samples) go through one
  matrix product.
* **Probabilities.** ``probability="samples"`` averages over every sample (the
  definition). ``probability="moments"`` is the fast approximation for big runs:
  ``Phi((t - m) / s)`` with ``m`` the mean latent and ``s² = sigma_K² + v``, where
  ``v`` is the variance over samples of the kriged latent, computed from the
  leading principal components of the samples at the cores (at most
  ``moment_rank``).
* **Large core counts.** Above ``local_limit`` cores, the Gibbs sampler conditions
  each core on its ``gibbs_neighbours`` nearest cores, and the grid is cut into
  tiles each predicted from its ``kriging_neighbours`` nearest cores (still one
  matrix product per tile for all fields).

Examples
--------
>>> import numpy as np
>>> rng = np.random.default_rng(1)
>>> e, n = rng.uniform(0, 10_000, 40), rng.uniform(0, 10_000, 40)
>>> ranks = np.digitize(e + 1500 * np.sin(n / 2000), [3000, 6000])  # three belts
>>> field = OrdinalField(3, samples=20, burn_in=20).fit((e, n), ranks)
>>> out = field.predict((np.array([1000.0, 9000.0]), np.array([5000.0, 5000.0])))
>>> out.most_likely.tolist()
[0, 2]
>>> bool(np.all(belt_of(field.latent_mean_at_cores_, field.thresholds_) == ranks))
True
"""

from __future__ import annotations

import logging
from collections.abc import Hashable, Mapping
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import ArrayLike
from scipy import special
from scipy.spatial import cKDTree

from ..probability import belt_probabilities
from ..spacing import nearest_core_spacing
from .covariance import MODELS, Covariance
from .crossval import CrossValidation, leave_one_out
from .kriging import KrigingSystem
from .tiling import chunk_slices, default_chunk_size, square_tiles
from .truncgauss import (
    LatentPrior,
    belt_intervals,
    belt_of,
    gibbs_mean_field,
    gibbs_sample,
    proportions_of,
    thresholds,
    truncated_normal_mean,
)
from .variogram import (
    VariogramFit,
    experimental_variogram,
    fit_covariance,
    lag_edges,
    pool_variograms,
    strike_azimuth,
)

__all__ = [
    "FieldResult",
    "FieldSettings",
    "OrdinalField",
    "PerSliceEngine",
    "PerSliceModel",
    "SliceModel",
    "SlicesFit",
    "fit_slices",
    "map_slices",
    "predict_slices",
]

logger = logging.getLogger(__name__)

_OUTPUTS = ("latent_mean", "latent_sd", "probabilities", "most_likely", "belt_of_mean")
_COVARIANCE_KEYS = ("model", "range_m", "anisotropy", "azimuth_deg", "nugget")
_AUTO_MODELS = ("exponential", "spherical", "matern32")


@dataclass(frozen=True)
class FieldSettings:
    """Settings of the ordinal field (all slices of a run share them).

    Parameters
    ----------
    covariance : Covariance or mapping or None
        A complete :class:`Covariance` (used as is), or overrides (any of
        ``model``, ``range_m``, ``anisotropy``, ``azimuth_deg``, ``nugget``) with the
        rest fitted, or None to fit all (nugget fixed at 0, see module notes).
    samples : int
        Gibbs samples kept per slice.
    burn_in : int
        Sweeps discarded per chain.
    chains : int
        Independent chains per slice.
    thin : int
        Sweeps between kept samples.
    seed : int
        Seed of the random generator.
    deterministic : bool
        No sampling: latent values at the cores by iterated conditional means;
        probabilities from the kriging variance alone.
    drift : {"linear", "constant"}
        Trend of the latent (universal or ordinary kriging).
    drift_prior_sd : float
        Prior sd of the drift coefficients used by the sampler (anchoring).
    probability : {"samples", "moments"}
        Exact sample average, or the fast moment approximation.
    moment_rank : int
        Principal components used by ``probability="moments"``.
    local_limit : int
        Core count above which local neighbourhoods are used.
    gibbs_neighbours, kriging_neighbours : int
        Neighbourhood sizes above ``local_limit``.
    min_proportion : float
        Floor on belt proportions (thresholds stay finite).
    chunk_size : int or None
        Grid points per chunk (default from a 64 MB budget).
    float32 : bool
        Sample fields and probabilities in float32 (mean latent stays float64).
    n_lags : int
        Lag bins of the experimental variograms.
    cross_validate : bool
        Compute leave-one-out scores per slice.
    outputs : tuple of str
        Arrays to keep in each :class:`FieldResult` (memory on big grids).

    Examples
    --------
    >>> FieldSettings(samples=50, covariance={"model": "matern32"}).samples
    50
    """

    covariance: Covariance | Mapping[str, object] | None = None
    samples: int = 100
    burn_in: int = 50
    chains: int = 10
    thin: int = 2
    seed: int = 0
    deterministic: bool = False
    drift: str = "linear"
    drift_prior_sd: float = 3.0
    probability: str = "samples"
    moment_rank: int = 12
    local_limit: int = 1500
    gibbs_neighbours: int = 48
    kriging_neighbours: int = 256
    min_proportion: float = 1e-3
    chunk_size: int | None = None
    float32: bool = True
    n_lags: int = 10
    cross_validate: bool = True
    outputs: tuple[str, ...] = ("latent_mean", "latent_sd", "probabilities", "most_likely")

    def __post_init__(self) -> None:
        problems = []
        if self.samples < 1 or self.burn_in < 0 or self.chains < 1 or self.thin < 1:
            problems.append("samples, chains and thin must be >= 1 and burn_in >= 0")
        if self.drift not in ("linear", "constant"):
            problems.append(f"drift {self.drift!r} is not 'linear' or 'constant'")
        if self.probability not in ("samples", "moments"):
            problems.append(f"probability {self.probability!r} is not 'samples' or 'moments'")
        bad = set(self.outputs) - set(_OUTPUTS)
        if bad:
            problems.append(f"unknown outputs {sorted(bad)}; allowed: {', '.join(_OUTPUTS)}")
        cov = self.covariance
        if isinstance(cov, Mapping):
            bad = set(cov) - set(_COVARIANCE_KEYS)
            if bad:
                problems.append(
                    f"unknown covariance overrides {sorted(bad)}; "
                    f"allowed: {', '.join(_COVARIANCE_KEYS)}"
                )
            if "model" in cov and cov["model"] not in MODELS:
                problems.append(
                    f"covariance model {cov['model']!r} is not one of {', '.join(MODELS)}"
                )
        elif cov is not None and not isinstance(cov, Covariance):
            problems.append(f"covariance must be a Covariance, a mapping or None, not {cov!r}")
        if problems:
            raise ValueError("; ".join(problems))


@dataclass(frozen=True, eq=False)
class SliceModel:
    """The fitted latent model of one slice.

    Attributes
    ----------
    core_index : numpy.ndarray
        Indices (into the core arrays) of the cores in the slice.
    ranks : numpy.ndarray
        Logged rank at each of those cores.
    thresholds : numpy.ndarray
        (K-1,) thresholds.
    proportions : numpy.ndarray
        (K,) proportions the thresholds were taken from.
    lower, upper : numpy.ndarray
        Latent interval of each core.
    latent_samples : numpy.ndarray
        (n_samples, n) latent samples (one row in deterministic mode).
    latent_mean_at_cores : numpy.ndarray
        (n,) mean of the samples: the kriged mean latent at each core.
    honoured : numpy.ndarray
        (n,) whether the kriged mean latent at each core lies in its own belt.
    cross_validation : CrossValidation or None
        Leave-one-out scores.
    """

    core_index: np.ndarray
    ranks: np.ndarray
    thresholds: np.ndarray
    proportions: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    latent_samples: np.ndarray
    latent_mean_at_cores: np.ndarray
    honoured: np.ndarray
    cross_validation: CrossValidation | None


@dataclass(frozen=True, eq=False)
class SlicesFit:
    """Fitted models of a set of slices, ready to predict on any grid.

    Attributes
    ----------
    easting, northing : numpy.ndarray
        All core positions.
    n_belts : int
        Number of belts K.
    covariance : Covariance
        The covariance shared by all slices.
    variogram_fit : VariogramFit or None
        Diagnostics of the fit (None when the covariance was given).
    slices : dict
        Slice key -> :class:`SliceModel`.
    groups : dict
        Tuple of core indices -> list of slice keys sharing those cores.
    settings : FieldSettings
        The settings used.
    """

    easting: np.ndarray
    northing: np.ndarray
    n_belts: int
    covariance: Covariance
    variogram_fit: VariogramFit | None
    slices: dict
    groups: dict
    settings: FieldSettings


@dataclass(frozen=True, eq=False)
class FieldResult:
    """The mapped field of one slice at target points.

    Attributes
    ----------
    latent_mean : numpy.ndarray or None
        (n_points,) mean latent (float64); contour it at the thresholds for belts.
    latent_sd : numpy.ndarray or None
        (n_points,) predictive sd of the latent: kriging variance plus the spread
        of the kriged samples.
    probabilities : numpy.ndarray or None
        (n_points, K) belt probabilities (float32 by default), rows sum to 1.
    most_likely : numpy.ndarray or None
        (n_points,) belt of highest probability (uint8).
    belt_of_mean : numpy.ndarray or None
        (n_points,) belt holding the mean latent (what the contoured map shows).
    model : SliceModel
        The slice's fitted model.
    """

    latent_mean: np.ndarray | None
    latent_sd: np.ndarray | None
    probabilities: np.ndarray | None
    most_likely: np.ndarray | None
    belt_of_mean: np.ndarray | None
    model: SliceModel

    @property
    def thresholds(self) -> np.ndarray:
        """The slice's thresholds."""
        return self.model.thresholds


# -- fitting -------------------------------------------------------------------------


def _validate_slices(easting, northing, ranks_by_slice, n_belts):
    e = np.asarray(easting, dtype=float).ravel()
    n = np.asarray(northing, dtype=float).ravel()
    if e.shape != n.shape:
        raise ValueError(f"easting has {e.size} cores but northing has {n.size}")
    if not (np.all(np.isfinite(e)) and np.all(np.isfinite(n))):
        raise ValueError("core coordinates must be finite")
    if int(n_belts) != n_belts or n_belts < 2:
        raise ValueError(f"n_belts must be an integer >= 2 (got {n_belts!r})")
    pts = np.column_stack([e, n])
    if e.size > 1:
        pairs = cKDTree(pts).query_pairs(r=1e-6 * max(1.0, float(np.ptp(pts, axis=0).max())))
        if pairs:
            i, j = sorted(pairs)[0]
            raise ValueError(
                f"cores {i} and {j} share the position ({e[i]!r}, {n[i]!r}); merge them or drop one"
            )
    out = {}
    problems = []
    for key, (idx, r) in ranks_by_slice.items():
        idx = np.asarray(idx, dtype=int).ravel()
        r = np.asarray(r).ravel()
        if idx.size != r.size:
            problems.append(f"slice {key!r}: {idx.size} core indices but {r.size} ranks")
            continue
        if idx.size < 2:
            problems.append(f"slice {key!r}: needs at least 2 cores (got {idx.size})")
            continue
        if np.any((idx < 0) | (idx >= e.size)) or np.unique(idx).size != idx.size:
            problems.append(f"slice {key!r}: core indices out of range or repeated")
            continue
        if not np.all(np.equal(np.mod(r, 1), 0)) or r.min() < 0 or r.max() >= n_belts:
            problems.append(
                f"slice {key!r}: ranks must be integers in 0..{n_belts - 1} "
                f"(got {r.min()!r}..{r.max()!r})"
            )
            continue
        order = np.argsort(idx)
        out[key] = (idx[order], r[order].astype(int))
    if problems:
        raise ValueError("; ".join(problems))
    if not out:
        raise ValueError("no slices to map")
    return e, n, out


def _drift_for(n_cores: int, drift: str) -> str:
    # A linear drift needs a handful of cores beyond its three terms to be estimated
    # and cross-validated; below that fall back to a constant mean.
    return drift if n_cores >= 6 or drift == "constant" else "constant"


def _default_covariance(e, n) -> Covariance:
    extent = max(np.ptp(e), np.ptp(n))
    return Covariance("exponential", 1.0, max(0.5 * extent, 1.0))


def _residual_variograms(e, n, data, azimuth, edges):
    """Variograms of linear-trend residuals of each slice's latent values."""
    evs = []
    for idx, y in data:
        ee, nn = e[idx], n[idx]
        x = np.column_stack([np.ones_like(ee), ee - ee.mean(), nn - nn.mean()])
        coef, *_ = np.linalg.lstsq(x, y, rcond=None)
        evs.append(experimental_variogram(ee, nn, y - x @ coef, azimuth, edges))
    return pool_variograms(evs)


def _pooled_strike(e, n, data) -> float:
    """Strike from the gradients of linear trends, pooled as axial directions."""
    acc = 0.0 + 0.0j
    for idx, y in data:
        ee, nn = e[idx], n[idx]
        x = np.column_stack([np.ones_like(ee), ee - ee.mean(), nn - nn.mean()])
        coef, *_ = np.linalg.lstsq(x, y, rcond=None)
        ge, gn = np.atleast_1d(coef[1]).mean(), np.atleast_1d(coef[2]).mean()
        dip = np.arctan2(ge, gn)
        acc += (ge * ge + gn * gn) * idx.size * np.exp(2j * dip)
    if abs(acc) == 0:
        return 0.0
    dip = 0.5 * np.angle(acc)
    return strike_azimuth(np.sin(dip), np.cos(dip))


def _fit_covariance(e, n, data, overrides, n_lags, range_bounds):
    """Fit the shared covariance to per-slice latent values (data: [(idx, y)])."""
    overrides = dict(overrides or {})
    overrides.setdefault("nugget", 0.0)
    # The gaussian model is left out of the automatic choice: fitted with ranges of
    # several core spacings it makes the core covariance numerically singular and
    # implies an unrealistically smooth latent. It remains available as an override.
    overrides.setdefault("model", _AUTO_MODELS)
    azimuth = overrides.pop("azimuth_deg", None)
    if azimuth is None:
        azimuth = _pooled_strike(e, n, data)
    edges = lag_edges(e, n, n_lags)
    ev = _residual_variograms(e, n, data, float(azimuth), edges)
    if not all(np.all(np.isfinite(y)) for _, y in data):
        raise ValueError("latent values are not finite: the covariance is numerically singular")
    if not np.any(np.nan_to_num(ev.gamma) > 1e-12):
        logger.info("latent values show no spatial variation; using the default covariance")
        cov = _default_covariance(e, n).replace(azimuth_deg=float(azimuth))
        fixed = {k: v for k, v in overrides.items() if k in ("range_m", "anisotropy")}
        if isinstance(overrides["model"], str):
            fixed["model"] = overrides["model"]
        return cov.replace(**fixed) if fixed else cov, None
    fit = fit_covariance(ev, overrides, total_variance=1.0, range_bounds_m=range_bounds)
    return fit.covariance, fit


def _sample_group(prior, lo, hi, settings, rng, local_k, samples=None, burn_in=None):
    if settings.deterministic:
        y = gibbs_mean_field(prior, lo, hi, local_neighbours=local_k)
        return y[:, None, :]
    return gibbs_sample(
        prior,
        lo,
        hi,
        n_samples=samples or settings.samples,
        burn_in=settings.burn_in if burn_in is None else burn_in,
        n_chains=settings.chains,
        thin=settings.thin,
        rng=rng,
        local_neighbours=local_k,
    )


def fit_slices(
    easting: ArrayLike,
    northing: ArrayLike,
    ranks_by_slice: Mapping[Hashable, tuple[ArrayLike, ArrayLike]],
    n_belts: int,
    settings: FieldSettings | None = None,
    proportions: Mapping[Hashable, ArrayLike] | ArrayLike | None = None,
) -> SlicesFit:
    """Fit thresholds, the shared covariance and latent samples for many slices.

    Parameters
    ----------
    easting, northing : array_like
        Positions of all cores (n_cores,).
    ranks_by_slice : mapping
        Slice key -> (core indices, ranks) for the cores with a record in that slice.
    n_belts : int
        Number of belts K of the scheme.
    settings : FieldSettings, optional
        Defaults if omitted.
    proportions : mapping or array_like, optional
        Belt proportions per slice key, or one (K,) array for all; default: the
        pooled proportions of each slice's cores.

    Returns
    -------
    SlicesFit
    """
    settings = settings or FieldSettings()
    e, n, slices = _validate_slices(easting, northing, ranks_by_slice, n_belts)
    ss = np.random.SeedSequence(settings.seed)

    thr, props, bounds = {}, {}, {}
    for key, (_idx, r) in slices.items():
        if proportions is None:
            p = proportions_of(r, n_belts)
        elif isinstance(proportions, Mapping):
            p = np.asarray(proportions[key], dtype=float)
        else:
            p = np.asarray(proportions, dtype=float)
        if p.size != n_belts:
            raise ValueError(f"slice {key!r}: {p.size} proportions for {n_belts} belts")
        props[key] = p / p.sum()
        thr[key] = thresholds(p, settings.min_proportion)
        bounds[key] = belt_intervals(r, thr[key])

    groups: dict[tuple[int, ...], list] = {}
    for key, (idx, _) in slices.items():
        groups.setdefault(tuple(idx.tolist()), []).append(key)

    spacing = nearest_core_spacing(e, n) if e.size > 1 else 1.0
    extent = max(np.ptp(e), np.ptp(n))
    range_bounds = (max(0.5 * spacing, 1e-6 * extent), 3.0 * extent)

    def prior_for(idx, cov):
        return LatentPrior(
            cov, e[idx], n[idx], _drift_for(idx.size, settings.drift), settings.drift_prior_sd
        )

    def local_k(size):
        return settings.gibbs_neighbours if size > settings.local_limit else None

    given = settings.covariance
    vfit = None
    if isinstance(given, Covariance):
        cov = given
    else:
        overrides = dict(given or {})
        data0 = [(slices[k][0], truncated_normal_mean(0.0, 1.0, *bounds[k])) for k in slices]
        cov, vfit = _fit_covariance(e, n, data0, overrides, settings.n_lags, range_bounds)
        if set(_COVARIANCE_KEYS) - set(overrides) - {"nugget"}:
            # Second pass on the residuals of a short Gibbs run.
            data1 = []
            rng1 = np.random.default_rng(ss.spawn(1)[0])
            for idx_t, keys in groups.items():
                idx = np.asarray(idx_t)
                lo = np.stack([bounds[k][0] for k in keys])
                hi = np.stack([bounds[k][1] for k in keys])
                quick = replace(settings, chains=min(settings.chains, 5))
                s = _sample_group(
                    prior_for(idx, cov),
                    lo,
                    hi,
                    quick,
                    rng1,
                    local_k(idx.size),
                    samples=min(settings.samples, 10),
                    burn_in=min(settings.burn_in, 20),
                )
                data1 += [(idx, s[j].T) for j in range(len(keys))]
            if "azimuth_deg" not in overrides:
                overrides["azimuth_deg"] = cov.azimuth_deg
            cov, vfit = _fit_covariance(e, n, data1, overrides, settings.n_lags, range_bounds)
    logger.info("latent covariance: %s", cov.as_dict())

    models = {}
    group_rngs = ss.spawn(len(groups) + 1)[1:]
    for (idx_t, keys), seed in zip(groups.items(), group_rngs, strict=True):
        idx = np.asarray(idx_t)
        lo = np.stack([bounds[k][0] for k in keys])
        hi = np.stack([bounds[k][1] for k in keys])
        samples = _sample_group(
            prior_for(idx, cov), lo, hi, settings, np.random.default_rng(seed), local_k(idx.size)
        )
        need_system = settings.cross_validate or cov.nugget > 0
        system = None
        qd = None
        if need_system and idx.size <= settings.local_limit:
            system = KrigingSystem(cov, e[idx], n[idx], _drift_for(idx.size, settings.drift))
            if settings.cross_validate and idx.size > system.n_drift + 1:
                qd = np.diag(system.projected_precision())
        for j, key in enumerate(keys):
            y = samples[j]
            ybar = y.mean(axis=0)
            r = slices[key][1]
            if system is not None and cov.nugget > 0:
                alpha, beta = system.weights(ybar)
                at_cores = system.mean(e[idx], n[idx], alpha, beta)
            else:
                at_cores = ybar
            honoured = belt_of(at_cores, thr[key]) == r
            cv = None
            if qd is not None:
                cv = leave_one_out(system, y, thr[key], r, qd)
            models[key] = SliceModel(
                core_index=idx,
                ranks=r,
                thresholds=thr[key],
                proportions=props[key],
                lower=bounds[key][0],
                upper=bounds[key][1],
                latent_samples=y,
                latent_mean_at_cores=ybar,
                honoured=honoured,
                cross_validation=cv,
            )
            if not honoured.all():
                logger.warning(
                    "slice %r: %d cores fall outside their belt on the map (nugget %.3g)",
                    key,
                    int((~honoured).sum()),
                    cov.nugget,
                )
    return SlicesFit(e, n, int(n_belts), cov, vfit, models, groups, settings)


# -- prediction ----------------------------------------------------------------------


def _slice_fields(model: SliceModel, settings: FieldSettings) -> np.ndarray:
    """Fields to krige for one slice: the mean latent, then the spread fields."""
    y = model.latent_samples  # (S, n)
    ybar = y.mean(axis=0)
    if settings.deterministic or y.shape[0] == 1:
        return ybar[:, None]
    if settings.probability == "samples":
        return np.column_stack([ybar, y.T])
    d = (y - ybar).T / np.sqrt(max(y.shape[0] - 1, 1))  # (n, S)
    # Principal components through the small (S, S) Gram matrix: d V = U Sigma.
    lam, v = np.linalg.eigh(d.T @ d)
    order = np.argsort(lam)[::-1]
    lam, v = lam[order], v[:, order]
    r = min(settings.moment_rank, int(np.sum(lam > 1e-18 * max(lam[0], 1e-300))))
    return np.column_stack([ybar, d @ v[:, :r]])


def _empty_outputs(n_points: int, n_belts: int, settings: FieldSettings) -> dict:
    pdt = np.float32 if settings.float32 else np.float64
    want = settings.outputs
    out = {}
    if "latent_mean" in want:
        out["latent_mean"] = np.empty(n_points)
    if "latent_sd" in want:
        out["latent_sd"] = np.empty(n_points, dtype=pdt)
    if "probabilities" in want:
        out["probabilities"] = np.empty((n_points, n_belts), dtype=pdt)
    if "most_likely" in want:
        out["most_likely"] = np.empty(n_points, dtype=np.uint8 if n_belts < 256 else np.int32)
    if "belt_of_mean" in want:
        out["belt_of_mean"] = np.empty(n_points, dtype=np.uint8 if n_belts < 256 else np.int32)
    return out


def _fill(out, where, mean, fields, var, model, settings):
    """Outputs of one slice at one chunk from its kriged fields and the variance."""
    pdt = np.float32 if settings.float32 else np.float64
    t = model.thresholds.astype(pdt)
    sd_k = np.sqrt(var).astype(pdt)
    cdf = None
    if fields is None:  # deterministic
        sd = sd_k
    elif settings.probability == "samples":
        # sample_averaged_probabilities in float32, one threshold at a time in place:
        # (points x samples) is the largest array held
        buf = fields - mean[:, None].astype(pdt)
        spread = np.einsum("ij,ij->i", buf, buf) / fields.shape[1]
        sd = np.sqrt(sd_k * sd_k + spread)
        inv = (1.0 / _floor(sd_k))[:, None]
        cdf = np.empty((mean.size, t.size), dtype=pdt)
        for k in range(t.size):
            np.subtract(t[k], fields, out=buf)
            buf *= inv
            special.ndtr(buf, out=buf)
            cdf[:, k] = buf.mean(axis=1)
    else:
        sd = np.sqrt(sd_k * sd_k + np.einsum("ij,ij->i", fields, fields))
    if "latent_mean" in out:
        out["latent_mean"][where] = mean
    if "latent_sd" in out:
        out["latent_sd"][where] = sd
    if "probabilities" in out or "most_likely" in out:
        if cdf is None:  # from the moments
            prob = belt_probabilities(mean, _floor(sd), t, dtype=pdt)
        else:
            ones = np.ones((mean.size, 1), dtype=pdt)
            prob = np.diff(np.concatenate([0 * ones, cdf.astype(pdt), ones], axis=1), axis=1)
        np.maximum(prob, 0, out=prob)  # monotone cdf; guards rounding only
        if "probabilities" in out:
            out["probabilities"][where] = prob
        if "most_likely" in out:
            out["most_likely"][where] = np.argmax(prob, axis=1)
    if "belt_of_mean" in out:
        out["belt_of_mean"][where] = belt_of(mean, model.thresholds)


def _floor(sd):
    return np.maximum(sd, np.asarray(1e-6 if sd.dtype == np.float32 else 1e-12, sd.dtype))


def _predict_with_system(system, fields_by_key, models, outs, e, n, where, settings):
    """Krige every slice's fields at points ``where`` with one system (chunked)."""
    keys = list(fields_by_key)
    widths = [fields_by_key[k].shape[1] for k in keys]
    stacked = np.column_stack([fields_by_key[k] for k in keys])
    alpha, beta = system.weights(stacked)
    pdt = np.float32 if settings.float32 else np.float64
    mean_cols = np.cumsum([0] + widths[:-1])
    alpha_mean, beta_mean = alpha[:, mean_cols], beta[:, mean_cols]
    size = settings.chunk_size or default_chunk_size(system.n, stacked.shape[1])
    alpha_p = alpha.astype(pdt)
    for s in chunk_slices(where.size, size):
        idx = where[s]
        k = system.covariance.cross(e[idx], n[idx], system.easting, system.northing)
        f = system.drift_matrix(e[idx], n[idx])
        var = system._variance_from_k(k, f)
        means = k @ alpha_mean + f @ beta_mean  # float64 for contouring and honouring
        allf = None
        if stacked.shape[1] > len(keys):
            kp = k if pdt == np.float64 else k.astype(pdt)
            allf = kp @ alpha_p
            allf += (f @ beta).astype(pdt)
        col = 0
        for j, key in enumerate(keys):
            w = widths[j]
            extra = None if w == 1 else allf[:, col + 1 : col + w]
            _fill(outs[key], idx, means[:, j], extra, var, models[key], settings)
            col += w


def _tiles(e, n, core_e, core_n, neighbours):
    """Spatial tiles of the target points, each holding about neighbours/4 cores."""
    area = max(np.ptp(core_e) * np.ptp(core_n), 1.0)
    width = np.sqrt(area / core_e.size * max(neighbours / 4.0, 1.0))
    order, bounds = square_tiles(e, n, width)
    return [order[a:b] for a, b in zip(bounds[:-1], bounds[1:], strict=True)], width


def predict_slices(
    fit: SlicesFit,
    easting: ArrayLike,
    northing: ArrayLike,
    keys=None,
) -> dict:
    """Map fitted slices at target points.

    Parameters
    ----------
    fit : SlicesFit
        From :func:`fit_slices`.
    easting, northing : array_like
        Target points (e.g. grid cell centres, flattened).
    keys : iterable, optional
        Slices to map (default all).

    Returns
    -------
    dict
        Slice key -> :class:`FieldResult`.
    """
    settings = fit.settings
    e = np.asarray(easting, dtype=float).ravel()
    n = np.asarray(northing, dtype=float).ravel()
    if e.shape != n.shape:
        raise ValueError(f"easting has {e.size} points but northing has {n.size}")
    wanted = set(fit.slices) if keys is None else set(keys)
    outs = {k: _empty_outputs(e.size, fit.n_belts, settings) for k in wanted}
    everywhere = np.arange(e.size)
    for idx_t, group_keys in fit.groups.items():
        gkeys = [k for k in group_keys if k in wanted]
        if not gkeys:
            continue
        idx = np.asarray(idx_t)
        drift = _drift_for(idx.size, settings.drift)
        fields = {k: _slice_fields(fit.slices[k], settings) for k in gkeys}
        ce, cn = fit.easting[idx], fit.northing[idx]
        if idx.size <= settings.local_limit:
            system = KrigingSystem(fit.covariance, ce, cn, drift)
            _predict_with_system(system, fields, fit.slices, outs, e, n, everywhere, settings)
            continue
        k_nb = min(settings.kriging_neighbours, idx.size)
        tree = cKDTree(np.column_stack([ce, cn]))
        tiles, width = _tiles(e, n, ce, cn, k_nb)
        for where in tiles:
            cx, cy = e[where].mean(), n[where].mean()
            _, near = tree.query([cx, cy], k=k_nb)
            inside = tree.query_ball_point([cx, cy], r=width)  # cores in and by the tile
            near = np.unique(np.concatenate([np.atleast_1d(near), np.asarray(inside, int)]))
            system = KrigingSystem(fit.covariance, ce[near], cn[near], drift)
            local = {k: v[near] for k, v in fields.items()}
            _predict_with_system(system, local, fit.slices, outs, e, n, where, settings)
    return {
        k: FieldResult(
            outs[k].get("latent_mean"),
            outs[k].get("latent_sd"),
            outs[k].get("probabilities"),
            outs[k].get("most_likely"),
            outs[k].get("belt_of_mean"),
            fit.slices[k],
        )
        for k in fit.slices
        if k in wanted
    }


def map_slices(
    core_easting: ArrayLike,
    core_northing: ArrayLike,
    ranks_by_slice: Mapping[Hashable, tuple[ArrayLike, ArrayLike]],
    grid_easting: ArrayLike,
    grid_northing: ArrayLike,
    n_belts: int,
    settings: FieldSettings | None = None,
    proportions: Mapping[Hashable, ArrayLike] | ArrayLike | None = None,
) -> tuple[dict, SlicesFit]:
    """Fit and map many slices at once, sharing kriging work between slices.

    Slices with the same set of cores share one factorisation, one cross-covariance
    and one kriging variance per grid chunk. Thresholds come from each slice's
    pooled belt proportions unless ``proportions`` is given.

    Parameters
    ----------
    core_easting, core_northing : array_like
        Positions of all cores (n_cores,).
    ranks_by_slice : mapping
        Slice key -> (core indices, ranks).
    grid_easting, grid_northing : array_like
        Target points (any shape; flattened).
    n_belts : int
        Number of belts K.
    settings : FieldSettings, optional
        Run settings.
    proportions : mapping or array_like, optional
        See :func:`fit_slices`.

    Returns
    -------
    results : dict
        Slice key -> :class:`FieldResult` (arrays flat over the target points).
    fit : SlicesFit
        The fitted models (covariance, samples, cross-validation per slice).

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(3)
    >>> e, n = rng.uniform(0, 5000, 30), rng.uniform(0, 5000, 30)
    >>> slices = {"a": (np.arange(30), (e > 2500).astype(int)),
    ...           "b": (np.arange(30), (e > 1500).astype(int))}
    >>> res, fit = map_slices(e, n, slices, np.array([500.0, 4500.0]), np.array([2500.0] * 2),
    ...                       2, FieldSettings(samples=10, burn_in=10))
    >>> res["a"].most_likely.tolist(), len(fit.groups)
    ([0, 1], 1)
    """
    fit = fit_slices(core_easting, core_northing, ranks_by_slice, n_belts, settings, proportions)
    return predict_slices(fit, grid_easting, grid_northing), fit


class OrdinalField:
    """Truncated-Gaussian ordinal field of one slice (verde-style estimator).

    Parameters
    ----------
    n_belts : int
        Number of belts K (ranks 0..K-1).
    covariance : Covariance or mapping or None
        Full covariance, overrides, or None to fit (see :class:`FieldSettings`).
    samples, burn_in, seed : int
        Gibbs sampling settings.
    deterministic : bool
        No sampling (fast).
    neighbours : int, optional
        Kriging neighbourhood size for large core counts.
    proportions : array_like, optional
        Belt proportions; default those of the data.
    **options
        Any other :class:`FieldSettings` field.

    Attributes
    ----------
    thresholds_ : numpy.ndarray
    covariance_ : Covariance
    latent_samples_ : numpy.ndarray
        (n_samples, n_cores)
    latent_mean_at_cores_ : numpy.ndarray
    cross_validation_ : CrossValidation or None
    fit_ : SlicesFit

    Examples
    --------
    >>> import numpy as np
    >>> e = np.linspace(0, 9000, 10).repeat(3); n = np.tile([0.0, 4000.0, 8000.0], 10)
    >>> f = OrdinalField(2, deterministic=True).fit((e, n), (e > 4000).astype(int))
    >>> f.predict((np.array([0.0, 9000.0]), np.array([4000.0, 4000.0]))).most_likely.tolist()
    [0, 1]
    """

    def __init__(
        self,
        n_belts: int,
        covariance: Covariance | Mapping[str, object] | None = None,
        samples: int = 100,
        burn_in: int = 50,
        seed: int = 0,
        deterministic: bool = False,
        neighbours: int | None = None,
        proportions: ArrayLike | None = None,
        **options,
    ) -> None:
        self.n_belts = n_belts
        self.covariance = covariance
        self.samples = samples
        self.burn_in = burn_in
        self.seed = seed
        self.deterministic = deterministic
        self.neighbours = neighbours
        self.proportions = proportions
        self.options = options

    def _settings(self) -> FieldSettings:
        extra = dict(self.options)
        if self.neighbours is not None:
            extra.setdefault("kriging_neighbours", int(self.neighbours))
        return FieldSettings(
            covariance=self.covariance,
            samples=self.samples,
            burn_in=self.burn_in,
            seed=self.seed,
            deterministic=self.deterministic,
            **extra,
        )

    def fit(self, coordinates, data: ArrayLike) -> OrdinalField:
        """Fit thresholds, covariance and latent samples to ranks at the cores.

        Parameters
        ----------
        coordinates : tuple of array_like
            (easting, northing) of the cores.
        data : array_like
            Integer belt rank per core.

        Returns
        -------
        self
        """
        e, n = coordinates
        r = np.asarray(data).ravel()
        fit = fit_slices(
            e, n, {0: (np.arange(r.size), r)}, self.n_belts, self._settings(), self.proportions
        )
        m = fit.slices[0]
        self.fit_ = fit
        self.thresholds_ = m.thresholds
        self.covariance_ = fit.covariance
        self.latent_samples_ = m.latent_samples
        self.latent_mean_at_cores_ = m.latent_mean_at_cores
        self.cross_validation_ = m.cross_validation
        return self

    def predict(self, coordinates, chunk_size: int | None = None) -> FieldResult:
        """Mean latent, its sd, belt probabilities and most likely belt at points.

        Parameters
        ----------
        coordinates : tuple of array_like
            (easting, northing) of the targets.
        chunk_size : int, optional
            Targets per chunk.

        Returns
        -------
        FieldResult
        """
        fit = self.fit_
        if chunk_size is not None:
            fit = replace(fit, settings=replace(fit.settings, chunk_size=int(chunk_size)))
        e, n = coordinates
        return predict_slices(fit, e, n)[0]


# -- the engine ------------------------------------------------------------------------


class PerSliceEngine:
    """The per-slice field engine, ``[mapping] engine = "per_slice"``: each slice
    mapped on its own latent field, all slices sharing one fitted covariance.

    Examples
    --------
    >>> from paleomap.field.engine import FieldEngine
    >>> isinstance(PerSliceEngine(), FieldEngine)
    True
    """

    name = "per_slice"

    def settings(self, mapping) -> FieldSettings:
        """Settings from the project's ``[mapping]`` table."""
        from .engine import covariance_overrides

        kwargs = dict(
            covariance=covariance_overrides(mapping),
            samples=100 if mapping.samples is None else mapping.samples,
            burn_in=50 if mapping.burn_in is None else mapping.burn_in,
            seed=mapping.seed,
            deterministic=mapping.deterministic,
        )
        if mapping.neighbours is not None:
            kwargs["kriging_neighbours"] = mapping.neighbours
        return FieldSettings(**kwargs)

    def fit(self, records, n_belts: int, settings: FieldSettings, ages) -> PerSliceModel:
        """Fit to the records read at each slice age (ages with fewer than two cores
        recording them are left out)."""
        from .engine import ranks_by_age

        ages = np.asarray(ages, dtype=float).ravel()
        _ids, e, n, by_age = ranks_by_age(records, ages)
        if not by_age:
            raise ValueError("no age has a record in two or more cores")
        return PerSliceModel(fit_slices(e, n, by_age, n_belts, settings), records, ages)


class PerSliceModel:
    """The fitted per-slice model (:class:`paleomap.field.engine.FittedField`).

    At the fitted slice ages :meth:`predict` krige each slice's samples; at other ages
    it conditions a field on the cores recording them with the fitted covariance held,
    by iterated conditional means (deterministic, no probabilities stored).
    """

    def __init__(self, fit: SlicesFit, records, ages):
        self.fit, self.records, self.ages = fit, records, ages

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
        got = {}
        wanted = {j for j in slots.values() if j is not None}
        if wanted:
            out = predict_slices(self.fit, te, tn, keys=wanted)
            got.update({i: out[j] for i, j in slots.items() if j is not None})
        new = [i for i, j in slots.items() if j is None]
        if new:
            _ids, e, n, by_new = ranks_by_age(self.records, ages[new])
            if by_new:
                st = replace(
                    self.fit.settings,
                    covariance=self.fit.covariance,
                    deterministic=True,
                    cross_validate=False,
                    outputs=("latent_mean", "latent_sd"),
                )
                out = predict_slices(fit_slices(e, n, by_new, self.fit.n_belts, st), te, tn)
                got.update({new[j]: r for j, r in out.items()})
        nan = np.full(te.size, np.nan)
        t_nan = np.full(self.fit.n_belts - 1, np.nan)
        return Prediction(
            ages,
            tuple(got[i].latent_mean if i in got else nan for i in range(ages.size)),
            tuple(got[i].latent_sd if i in got else nan for i in range(ages.size)),
            tuple(got[i].thresholds if i in got else t_nan for i in range(ages.size)),
            tuple(got[i].probabilities if i in got else None for i in range(ages.size)),
        )

    def quality(self, age: float) -> dict:
        """Leave-one-out scores at a fitted age and the fitted covariance."""
        j = self._slot(float(age))
        cv = self.fit.slices[j].cross_validation if j is not None else None
        return dict(
            method=PerSliceEngine.name,
            loo_share_in_own_belt=float(cv.share_in_own_belt) if cv else np.nan,
            loo_mean_abs_rank_error=float(cv.mean_abs_rank_error) if cv else np.nan,
            **{f"relief_{k}": v for k, v in self.fit.covariance.as_dict().items()},
        )
