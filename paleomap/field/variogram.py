"""Directional experimental variograms and weighted least-squares covariance fitting.

Pairs of cores are split into two direction classes with a 45 degree tolerance:
along the major axis (strike) and along the minor axis (dip), and binned by lag
distance. For each bin the mean lag components along both axes are kept so that the
anisotropic model is evaluated where the pairs actually are.

The fit is weighted least squares with Cressie's weights (pairs per bin over the
squared model value): it fits the *shape* of the covariance (model, range,
anisotropy, nugget share) together with a free scale, because the values it sees
(truncated-interval means, or Gibbs samples) do not have exactly unit variance.
The returned :class:`~paleomap.field.covariance.Covariance` then has
``sill + nugget = total_variance`` (1 for the latent of the truncated-Gaussian
model, whose thresholds are on the standard normal scale).

Examples
--------
>>> import numpy as np
>>> rng = np.random.default_rng(0)
>>> e, n = rng.uniform(0, 1000, 60), rng.uniform(0, 1000, 60)
>>> v = np.sin(e / 200.0)
>>> ev = experimental_variogram(e, n, v, azimuth_deg=0.0, lag_edges_m=lag_edges(e, n, 8))
>>> ev.gamma.shape
(2, 8)
"""

from __future__ import annotations

import logging
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy.optimize import least_squares

from .covariance import MODELS, Covariance, correlation, scaled_distance

__all__ = [
    "ExperimentalVariogram",
    "VariogramFit",
    "experimental_variogram",
    "fit_covariance",
    "lag_edges",
    "pool_variograms",
    "strike_azimuth",
]

logger = logging.getLogger(__name__)

_MAX_CORES_FOR_PAIRS = 1500


@dataclass(frozen=True, eq=False)
class ExperimentalVariogram:
    """Binned semivariances in two directions.

    Attributes
    ----------
    azimuth_deg : float
        Azimuth of the major axis (direction 0); direction 1 is perpendicular.
    lag_edges_m : numpy.ndarray
        (n_lags + 1,) bin edges.
    gamma : numpy.ndarray
        (2, n_lags) mean semivariance (nan where a bin is empty).
    n_pairs : numpy.ndarray
        (2, n_lags) pairs per bin (times fields when several fields are pooled).
    lag_major_m, lag_minor_m : numpy.ndarray
        (2, n_lags) mean absolute lag components along the major and minor axes.
    """

    azimuth_deg: float
    lag_edges_m: np.ndarray
    gamma: np.ndarray
    n_pairs: np.ndarray
    lag_major_m: np.ndarray
    lag_minor_m: np.ndarray


def strike_azimuth(gradient_easting: float, gradient_northing: float) -> float:
    """Azimuth of the strike (perpendicular to a gradient), degrees in [0, 180).

    Examples
    --------
    >>> strike_azimuth(1.0, 0.0)  # values grow eastward: strike runs north-south
    0.0
    >>> strike_azimuth(0.0, -2.0)
    90.0
    """
    dip = np.degrees(np.arctan2(gradient_easting, gradient_northing))
    return float(np.round((dip + 90.0) % 180.0, 12) % 180.0)


def lag_edges(easting: ArrayLike, northing: ArrayLike, n_lags: int = 10) -> np.ndarray:
    """Lag bin edges from 0 to half the largest extent of the points.

    Examples
    --------
    >>> lag_edges([0, 1000], [0, 0], 4).tolist()
    [0.0, 125.0, 250.0, 375.0, 500.0]
    """
    e = np.asarray(easting, dtype=float)
    n = np.asarray(northing, dtype=float)
    extent = max(np.ptp(e), np.ptp(n))
    if extent <= 0:
        raise ValueError("points have no extent: cannot form lag bins")
    return np.linspace(0.0, 0.5 * extent, n_lags + 1)


def experimental_variogram(
    easting: ArrayLike,
    northing: ArrayLike,
    values: ArrayLike,
    azimuth_deg: float,
    lag_edges_m: ArrayLike,
    rng: np.random.Generator | int | None = 0,
) -> ExperimentalVariogram:
    """Directional semivariances along ``azimuth_deg`` and across it.

    Parameters
    ----------
    easting, northing : array_like
        Positions (n,).
    values : array_like
        (n,) or (n, n_fields); with several fields the semivariances are pooled
        over fields (e.g. Gibbs samples).
    azimuth_deg : float
        Major axis, degrees clockwise from north.
    lag_edges_m : array_like
        Bin edges.
    rng : numpy.random.Generator or int or None
        Used only to subsample cores above 1500 (pairs grow as n²).

    Returns
    -------
    ExperimentalVariogram
    """
    e = np.asarray(easting, dtype=float).ravel()
    n = np.asarray(northing, dtype=float).ravel()
    v = np.asarray(values, dtype=float)
    v = v[:, None] if v.ndim == 1 else v
    if e.size > _MAX_CORES_FOR_PAIRS:
        keep = np.random.default_rng(rng).choice(e.size, _MAX_CORES_FOR_PAIRS, replace=False)
        e, n, v = e[keep], n[keep], v[keep]
    edges = np.asarray(lag_edges_m, dtype=float)
    n_lags = edges.size - 1
    i, j = np.triu_indices(e.size, k=1)
    de, dn = e[j] - e[i], n[j] - n[i]
    az = np.deg2rad(azimuth_deg)
    major = np.abs(de * np.sin(az) + dn * np.cos(az))
    minor = np.abs(de * np.cos(az) - dn * np.sin(az))
    dist = np.hypot(major, minor)
    direction = (minor > major).astype(int)  # 45 degree tolerance either side
    lag = np.searchsorted(edges, dist, side="right") - 1
    ok = (lag >= 0) & (lag < n_lags) & (dist > 0)
    sv = 0.5 * np.mean((v[j] - v[i]) ** 2, axis=1)
    bins = direction[ok] * n_lags + lag[ok]
    size = 2 * n_lags
    count = np.bincount(bins, minlength=size).astype(float)
    with np.errstate(invalid="ignore"):
        gamma = np.bincount(bins, sv[ok], size) / count
        mj = np.bincount(bins, major[ok], size) / count
        mn = np.bincount(bins, minor[ok], size) / count
    nf = v.shape[1]
    return ExperimentalVariogram(
        float(azimuth_deg),
        edges,
        gamma.reshape(2, n_lags),
        (count * nf).reshape(2, n_lags),
        mj.reshape(2, n_lags),
        mn.reshape(2, n_lags),
    )


def pool_variograms(variograms: Iterable[ExperimentalVariogram]) -> ExperimentalVariogram:
    """Pair-weighted pool of variograms that share azimuth and lag edges.

    Examples
    --------
    >>> import numpy as np
    >>> e = np.array([0.0, 100.0, 0.0]); n = np.array([0.0, 0.0, 100.0])
    >>> ev = experimental_variogram(e, n, [0.0, 1.0, 2.0], 0.0, [0.0, 150.0])
    >>> pool_variograms([ev, ev]).n_pairs.tolist()
    [[4.0], [2.0]]
    """
    vs = list(variograms)
    if not vs:
        raise ValueError("no variograms to pool")
    first = vs[0]
    num = np.zeros_like(first.gamma)
    mj = np.zeros_like(first.gamma)
    mn = np.zeros_like(first.gamma)
    cnt = np.zeros_like(first.gamma)
    for ev in vs:
        if not np.allclose(ev.lag_edges_m, first.lag_edges_m):
            raise ValueError("variograms to pool must share lag edges")
        w = ev.n_pairs
        num += np.nan_to_num(ev.gamma) * w
        mj += np.nan_to_num(ev.lag_major_m) * w
        mn += np.nan_to_num(ev.lag_minor_m) * w
        cnt += w
    with np.errstate(invalid="ignore"):
        return ExperimentalVariogram(
            first.azimuth_deg, first.lag_edges_m, num / cnt, cnt, mj / cnt, mn / cnt
        )


@dataclass(frozen=True, eq=False)
class VariogramFit:
    """Diagnostics of a covariance fit.

    Attributes
    ----------
    covariance : Covariance
        The fitted model.
    scale : float
        Fitted variance of the values the variogram was computed from (the model
        itself is rescaled to the requested total variance).
    cost : float
        Weighted sum of squares at the optimum.
    fitted : tuple of str
        Parameters that were fitted (the rest were fixed).
    models_tried : dict
        Cost per model tried.
    variogram : ExperimentalVariogram
        The experimental variogram that was fitted.
    """

    covariance: Covariance
    scale: float
    cost: float
    fitted: tuple[str, ...]
    models_tried: Mapping[str, float]
    variogram: ExperimentalVariogram


_FITTABLE = ("model", "range_m", "anisotropy", "nugget")


def fit_covariance(
    variogram: ExperimentalVariogram,
    fixed: Mapping[str, object] | None = None,
    total_variance: float = 1.0,
    range_bounds_m: tuple[float, float] | None = None,
) -> VariogramFit:
    """Fit an anisotropic covariance to a directional experimental variogram.

    Parameters
    ----------
    variogram : ExperimentalVariogram
        Its ``azimuth_deg`` becomes the model's major axis.
    fixed : mapping, optional
        Any of ``model``, ``range_m``, ``anisotropy``, ``nugget`` held fixed (nugget
        in units of ``total_variance``); the rest are fitted. ``model`` may also be a
        tuple of candidate models (the best is kept).
    total_variance : float
        ``sill + nugget`` of the returned model.
    range_bounds_m : (float, float), optional
        Bounds for a fitted range; default from the lag edges.

    Returns
    -------
    VariogramFit

    Examples
    --------
    >>> import numpy as np
    >>> from paleomap.field.covariance import Covariance
    >>> true = Covariance("exponential", 1.0, 400.0, anisotropy=0.5, azimuth_deg=0.0)
    >>> edges = np.linspace(0, 600, 13)
    >>> mid = 0.5 * (edges[1:] + edges[:-1])
    >>> z = np.zeros(12)
    >>> g = np.stack([1 - true.from_lags(z, mid), 1 - true.from_lags(mid, z)])
    >>> ev = ExperimentalVariogram(0.0, edges, g, np.full((2, 12), 50.0),
    ...                            np.stack([mid, z]), np.stack([z, mid]))
    >>> fit = fit_covariance(ev, fixed={"model": "exponential", "nugget": 0.0})
    >>> round(fit.covariance.range_m), round(fit.covariance.anisotropy, 2)
    (400, 0.5)
    """
    fixed = dict(fixed or {})
    unknown = set(fixed) - set(_FITTABLE) - {"azimuth_deg"}
    if unknown:
        raise ValueError(
            f"cannot fix {sorted(unknown)}; allowed: {', '.join(_FITTABLE + ('azimuth_deg',))}"
        )
    models = fixed.get("model", MODELS)
    models = (models,) if isinstance(models, str) else tuple(models)
    for m in models:
        if m not in MODELS:
            raise ValueError(f"unknown covariance model {m!r}; allowed: {', '.join(MODELS)}")
    ev = variogram
    ok = np.isfinite(ev.gamma) & (ev.n_pairs > 0)
    if ok.sum() < 2:
        raise ValueError("too few non-empty lag bins to fit a covariance")
    g = ev.gamma[ok]
    w = ev.n_pairs[ok]
    hmj = ev.lag_major_m[ok]
    hmn = ev.lag_minor_m[ok]
    edges = ev.lag_edges_m
    lo_r, hi_r = range_bounds_m or (0.5 * edges[1], 6.0 * edges[-1])
    gmax = float(np.nanmax(g))

    names = [k for k in ("range_m", "anisotropy", "nugget") if k not in fixed] + ["scale"]
    start = {
        "range_m": np.log(np.clip(0.5 * edges[-1], lo_r, hi_r)),
        "anisotropy": 0.7,
        "nugget": 0.02,
        "scale": max(float(np.average(g, weights=w)), 1e-6),
    }
    bounds = {
        "range_m": (np.log(lo_r), np.log(hi_r)),
        "anisotropy": (0.1, 1.0),
        "nugget": (0.0, 0.6),
        "scale": (1e-8, 10.0 * gmax + 1e-6),
    }
    nug_fixed = fixed.get("nugget")

    def unpack(x):
        p = dict(zip(names, x, strict=True))
        rng_m = float(np.exp(p["range_m"])) if "range_m" in p else float(fixed["range_m"])
        ani = float(p.get("anisotropy", fixed.get("anisotropy", 1.0)))
        nug = float(p["nugget"]) if "nugget" in p else float(nug_fixed) / total_variance
        return rng_m, ani, nug, float(p["scale"])

    def model_gamma(model, x):
        rng_m, ani, nug, s = unpack(x)
        r = scaled_distance(hmj, hmn, rng_m, ani, 90.0)  # rotated frame: major along east
        return s * (nug + (1.0 - nug) * (1.0 - correlation(model, r)))

    best = None
    tried = {}
    for model in models:
        x0 = np.array([start[k] for k in names], dtype=float)
        lb = np.array([bounds[k][0] for k in names])
        ub = np.array([bounds[k][1] for k in names])
        x0 = np.clip(x0, lb + 1e-9, ub - 1e-9)

        def resid(x, model=model):
            gm = model_gamma(model, x)
            return np.sqrt(w) * (g - gm) / (gm + 0.05 * x[-1])

        res = least_squares(resid, x0, bounds=(lb, ub), method="trf")
        tried[model] = float(res.cost)
        if best is None or res.cost < best[1].cost:
            best = (model, res)
    model, res = best
    rng_m, ani, nug, s = unpack(res.x)
    cov = Covariance(
        model,
        sill=(1.0 - nug) * total_variance,
        range_m=rng_m,
        anisotropy=min(max(ani, 1e-3), 1.0),
        azimuth_deg=float(ev.azimuth_deg),
        nugget=nug * total_variance,
    )
    fitted = tuple(k for k in _FITTABLE if k not in fixed or (k == "model" and len(models) > 1))
    logger.debug("fitted covariance %s (cost %.4g)", cov, res.cost)
    return VariogramFit(cov, s, float(res.cost), fitted, tried, ev)
