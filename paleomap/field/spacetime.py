"""The space-time field: one latent over position and age, fitted to every core's whole record.

A core's log, read through its age model, says which belt lay at the core over every
age it records; by Walther's Law the succession also says when each belt boundary
passed the core. This engine fits one latent ``Y(x, a)`` over position ``x`` and age
``a`` to all of it:

    Y(x, a) = R(x) + S(a) + G(a) . (x - x0) + E(x, a)

* ``R``: the inherited relief, a Gaussian field in space (anisotropic Matérn 3/2,
  longer along the regional strike), represented by its values on a lattice of knots
  (bilinear between them; a low-rank field whose cost does not grow with the cores);
* ``S``: the basin-wide term in time (relative sea level), piecewise linear in age
  with a random-walk prior;
* ``G``: the regional tilt, a gradient vector that may change in time (also piecewise
  linear with a random-walk prior);
* ``E``: a local space-time residual of unit variance (the scale of the latent),
  independent between observation points while sampling and kriged with a short
  range when mapping, so that every core's own record is honoured at its position.

Belts are cut from ``Y`` at thresholds ``0 = t_1 < t_2 < ... < t_{K-1}`` that are
*estimated with the field* (a Metropolis step on the thresholds with the latent
integrated out, Cowles 1996), not fixed from Gaussian proportions: how far belts move
between ages for a given change in sea level fixes how far apart the thresholds lie.

Observations. Every dated record (:class:`paleomap.records.Records`) gives observation
points spread over its age range, about ``age_steps`` over the whole time span (and
at least one per span); each point says ``Y`` at the core and that age lies in the
span's belt interval. A censored span (the gap below an erosional surface) says ``Y``
lay on the non-marine side of the shoreline. Age uncertainty is sampled, not
ignored: at every sweep each span is shifted in age by its ends' standard deviation
times one normal draw, so the whole span moves with its age model.

Sampling: Gibbs with data augmentation. Each sweep draws the span age shifts, the
thresholds (Metropolis, latent integrated out), the latent at every observation point
(truncated normal), the time terms ``S``, ``G`` (one Gaussian block; sparse basis),
the relief knots (one Gaussian block in whitened coordinates, its factor reused until
the covariance changes) and the random-walk variances (inverse gamma). During burn-in
the relief's sill, range, anisotropy and strike are re-estimated a few times by the
marginal likelihood of the cores' mean residuals (strike perpendicular to the mean
tilt).

Prediction at any positions and ages: the posterior mean of ``R + S + G . x`` over the
kept samples (a Rao-Blackwellised average: the linear terms' sample means, not a
thresholded draw) plus the kriged local residual, whose values at the cores are the
averages of their truncated-normal conditional means over the samples. The variance
adds the sample covariance of the smooth part (relief knots and time terms, with their
cross terms) and the local residual's kriging variance.

Examples
--------
A ramp dipping east with a sea level that rises and falls, three belts, cores logged
every 10 kyr:

>>> from paleomap.records import Records
>>> rng = np.random.default_rng(1)
>>> e, n = rng.uniform(0, 20_000, 30), rng.uniform(0, 20_000, 30)
>>> sea = lambda a: 1.5 * np.sin(a / 30.0)
>>> rows = []
>>> for i in range(30):
...     for a0 in range(0, 100, 10):
...         y = e[i] / 5000 - 2.0 + sea(a0 + 5.0)
...         rows.append((f"C{i}", e[i], n[i], a0, a0 + 10.0, int(np.digitize(y, [0.0, 1.5]))))
>>> c = list(zip(*rows))
>>> records = Records(np.array(c[0], object), *(np.array(v) for v in c[1:]),
...                   np.zeros(len(rows), bool))
>>> st = SpaceTimeField(SpaceTimeSettings(samples=40, burn_in=60)).fit(records, 3)
>>> p = st.predict(e, n, [45.0])
>>> p.mean.shape
(1, 30)
"""

from __future__ import annotations

import logging
import math
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd
from scipy import linalg, sparse, special
from scipy.spatial import cKDTree, distance

from ..spacing import mean_core_spacing
from .truncgauss import proportions_of, thresholds, truncated_normal, truncated_normal_mean

__all__ = [
    "SpaceTimeEngine",
    "SpaceTimeField",
    "SpaceTimeModel",
    "SpaceTimePrediction",
    "SpaceTimeSettings",
]

log = logging.getLogger(__name__)

_COLUMNS = (
    "core_id",
    "easting",
    "northing",
    "age_top",
    "age_base",
    "age_sd_top",
    "age_sd_base",
    "rank_low",
    "rank_high",
    "censored",
)

_RANGES = (0.5, 0.75, 1.0, 1.5, 2.0, 3.0, 4.5, 7.0)  # relief range candidates, core spacings
# anisotropy candidates: strike-to-dip range ratio (below 1: longer along dip)
_RATIOS = (0.12, 0.25, 0.4, 0.6, 1.0, 1.5, 2.5, 4.0, 8.0)
_SILLS = np.geomspace(0.02, 4.0, 11)  # relief sill candidates, times the residuals' variance
_HYPER_CORES = 250  # cores used by the hyperparameter search (a spread subset above it)


@dataclass(frozen=True)
class SpaceTimeSettings:
    """Settings of the space-time field.

    Parameters
    ----------
    samples, burn_in, thin, seed : int
        Gibbs sampler: kept samples, discarded sweeps, sweeps between kept samples,
        random seed.
    age_steps : int
        Observation points over the whole age span (each span gets at least one).
    time_knots : int
        Knots of the piecewise-linear sea-level and tilt terms.
    knots_per_spacing : float
        Relief knots per mean core spacing (along each axis).
    max_knots : int
        Cap on the relief knots (the lattice coarsens above it).
    anisotropy : float or None
        Ratio of the relief's range along strike to its range along dip (above 1:
        ridges and embayments stretched along strike; below 1: lobes and valleys
        stretched down dip); ``None`` estimates it.
    range_spacings : float or None
        Relief range in mean core spacings; ``None`` estimates it.
    local_range : float
        Range of the local residual when mapping, in mean core spacings.
    local_anisotropy : float
        Ratio of the local residual's range along strike to its range across.
    estimate_thresholds : bool
        Estimate the thresholds with the field (default) or keep them at the pooled
        Gaussian proportions.
    calibrate : bool
        Scale the predictive standard deviation so that it fits held-out cores
        (:meth:`SpaceTimeField.fit`); without it the scale is 1.
    """

    samples: int = 200
    burn_in: int = 200
    thin: int = 1
    seed: int = 0
    age_steps: int = 48
    time_knots: int = 25
    knots_per_spacing: float = 2.0
    max_knots: int = 1600
    anisotropy: float | None = None
    range_spacings: float | None = None
    local_range: float = 1.0
    local_anisotropy: float = 1.0
    estimate_thresholds: bool = True
    calibrate: bool = True

    def __post_init__(self) -> None:
        if self.samples < 1 or self.thin < 1 or self.burn_in < 0:
            raise ValueError("samples and thin must be >= 1 and burn_in >= 0")
        if self.age_steps < 1 or self.time_knots < 2 or self.max_knots < 4:
            raise ValueError("age_steps >= 1, time_knots >= 2 and max_knots >= 4 are needed")
        if self.anisotropy is not None and not self.anisotropy > 0:
            raise ValueError(f"anisotropy {self.anisotropy!r} must be > 0")


@dataclass(frozen=True, eq=False)
class SpaceTimePrediction:
    """The latent at positions and ages: ``mean`` and ``sd`` are (ages, points)."""

    mean: np.ndarray
    sd: np.ndarray
    thresholds: np.ndarray

    @property
    def probabilities(self) -> np.ndarray:
        """Belt probabilities (K, ages, points), from the latent's mean and sd."""
        t = np.concatenate([[-np.inf], self.thresholds, [np.inf]])
        sd = np.maximum(self.sd, 1e-12)
        cdf = np.stack([special.ndtr((tk - self.mean) / sd) for tk in t])
        return np.diff(cdf, axis=0)


def _log_interval(mu, lo, hi):
    """log(Phi(hi - mu) - Phi(lo - mu)) for unit variance, stable in the tails."""
    a, b = lo - mu, hi - mu
    flip = a > 0
    a2 = np.where(flip, -b, a)
    b2 = np.where(flip, -a, b)
    la, lb = special.log_ndtr(a2), special.log_ndtr(b2)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = lb + np.log1p(-np.exp(la - lb))
    return np.where(np.isfinite(out), out, -1e6)


def _matern32(d):
    s = math.sqrt(3.0) * d
    return (1.0 + s) * np.exp(-s)


def _spherical(d):
    d = np.minimum(d, 1.0)
    return 1.0 - 1.5 * d + 0.5 * d**3


class _Lattice:
    """Relief knots on a regular lattice, bilinear weights of any point."""

    def __init__(self, e, n, spacing, per_spacing, max_knots):
        pad = spacing
        w0, s0 = e.min() - pad, n.min() - pad
        width, height = max(np.ptp(e), spacing) + 2 * pad, max(np.ptp(n), spacing) + 2 * pad
        h = spacing / per_spacing
        nx, ny = int(math.ceil(width / h)) + 1, int(math.ceil(height / h)) + 1
        if nx * ny > max_knots:
            h *= math.sqrt(nx * ny / max_knots)
            nx, ny = int(math.ceil(width / h)) + 1, int(math.ceil(height / h)) + 1
        self.west, self.south, self.h, self.nx, self.ny = w0, s0, h, nx, ny
        gx, gy = np.meshgrid(w0 + h * np.arange(nx), s0 + h * np.arange(ny))
        self.e, self.n = gx.ravel(), gy.ravel()

    @property
    def size(self) -> int:
        return self.nx * self.ny

    def weights(self, e, n):
        """(points, 4) knot indices and bilinear weights (points outside are clamped)."""
        fx = np.clip((np.asarray(e, float) - self.west) / self.h, 0.0, self.nx - 1 - 1e-9)
        fy = np.clip((np.asarray(n, float) - self.south) / self.h, 0.0, self.ny - 1 - 1e-9)
        ix, iy = np.floor(fx).astype(np.int64), np.floor(fy).astype(np.int64)
        wx, wy = fx - ix, fy - iy
        k = iy * self.nx + ix
        idx = np.stack([k, k + 1, k + self.nx, k + self.nx + 1], axis=-1)
        w = np.stack([(1 - wx) * (1 - wy), wx * (1 - wy), (1 - wx) * wy, wx * wy], axis=-1)
        return idx, w

    def matrix(self, e, n):
        idx, w = self.weights(e, n)
        rows = np.repeat(np.arange(len(idx)), 4)
        return sparse.csr_matrix((w.ravel(), (rows, idx.ravel())), shape=(len(idx), self.size))


def _frame(azimuth_deg, ratio):
    """Scaling of (easting, northing) lags to an isotropic frame: along strike
    (``azimuth_deg``, clockwise from north) divided by sqrt(ratio), across by 1/sqrt."""
    th = math.radians(azimuth_deg)
    u = np.array([math.sin(th), math.cos(th)])  # along strike
    v = np.array([math.cos(th), -math.sin(th)])  # across (dip)
    s = math.sqrt(ratio)
    return np.stack([u / s, v * s])  # (2, 2): rows map (e, n) to scaled (u, v)


class SpaceTimeField:
    """The space-time ordinal field (see the module's description).

    Configure with :class:`SpaceTimeSettings`, :meth:`fit` to the cores' records
    (:class:`paleomap.records.Records`), then :meth:`predict` the latent at any
    positions and ages or :meth:`sample_latent` joint draws of its smooth part.

    Attributes (after fit)
    ----------------------
    thresholds_ : numpy.ndarray
        (K-1,) posterior-mean thresholds (the first is 0 by construction).
    threshold_samples_ : numpy.ndarray
        (samples, K-1).
    sea_level_ : tuple of numpy.ndarray
        Knot ages and the posterior-mean basin-wide term ``S`` at them.
    relief_ : dict
        The relief covariance: ``sill``, ``range_m``, ``anisotropy``, ``azimuth_deg``.
    spacing_m_ : float
        Mean core spacing.
    """

    def __init__(self, settings: SpaceTimeSettings | None = None):
        self.settings = settings or SpaceTimeSettings()

    # ------------------------------------------------------------------ fitting

    def fit(self, records, n_belts: int) -> SpaceTimeField:
        """Fit the field to every core's dated records.

        Parameters
        ----------
        records : paleomap.records.Records
            Every core's dated records, with their end ages' uncertainty and the
            censored records below erosional surfaces
            (:func:`paleomap.records.build_records`).
        n_belts : int
            Belts of the scheme (ranks 0..n_belts-1).

        Returns
        -------
        SpaceTimeField
            ``self``, fitted.
        """
        st = self.settings
        rec = self._validate(_table(records), n_belts)
        self.n_belts_ = n_belts
        ids, core_of = np.unique(rec["core_id"].to_numpy(object).astype(str), return_inverse=True)
        first = np.unique(core_of, return_index=True)[1]
        ce = rec["easting"].to_numpy(float)[first]
        cn = rec["northing"].to_numpy(float)[first]
        nc = len(ids)
        self.core_ids_, self.core_e_, self.core_n_ = tuple(ids), ce, cn
        spacing = mean_core_spacing(ce, cn) if nc > 1 else 1000.0
        if not np.isfinite(spacing) or spacing <= 0:
            spacing = 1000.0
        self.spacing_m_ = spacing
        self.centre_ = (float(ce.mean()), float(cn.mean()))
        self.scale_ = float(max(np.ptp(ce), np.ptp(cn), spacing) / 2)

        # observation points spread over every span
        top, base = rec["age_top"].to_numpy(float), rec["age_base"].to_numpy(float)
        a_min, a_max = float(top.min()), float(base.max())
        span = max(a_max - a_min, 1e-9)
        step = span / st.age_steps
        npts = np.maximum(1, np.ceil((base - top) / step - 1e-9).astype(np.int64))
        rec_of = np.repeat(np.arange(len(rec)), npts)
        start = np.concatenate([[0], np.cumsum(npts)[:-1]])
        j = np.arange(rec_of.size) - start[rec_of]
        frac = (j + 0.5) / npts[rec_of]
        age0 = top[rec_of] + frac * (base - top)[rec_of]
        sd_t, sd_b = rec["age_sd_top"].to_numpy(float), rec["age_sd_base"].to_numpy(float)
        age_sd = sd_t[rec_of] + frac * (sd_b - sd_t)[rec_of]
        ocore = core_of[rec_of]
        rlo = rec["rank_low"].to_numpy(np.int64)[rec_of]
        rhi = rec["rank_high"].to_numpy(np.int64)[rec_of] + 1
        self._obs = dict(rec=rec_of, start=start, npts=npts, age=age0, core=ocore, lo=rlo, hi=rhi)
        self._rec = dict(top=top, base=base, core=core_of)
        n_obs = rec_of.size

        # time basis
        M = st.time_knots
        self.age_knots_ = np.linspace(a_min, a_max, M)
        es = (ce - self.centre_[0]) / self.scale_
        ns = (cn - self.centre_[1]) / self.scale_
        oe, on = es[ocore], ns[ocore]

        # relief lattice
        lat = _Lattice(ce, cn, spacing, st.knots_per_spacing, st.max_knots)
        self._lattice = lat
        Bc = lat.matrix(ce, cn)
        counts = np.bincount(ocore, minlength=nc).astype(float)

        rng = np.random.default_rng(st.seed)
        # thresholds: start from the pooled proportions of the logged points
        logged = rlo == rhi - 1
        props = proportions_of(rlo[logged] if logged.any() else rlo, n_belts)
        t = thresholds(props) * 2.0
        t = t - t[0] if t.size else t
        free = st.estimate_thresholds and n_belts >= 3
        delta = 0.1
        accepted = 0

        def bounds(t):
            full = np.concatenate([[-np.inf], t, [np.inf]])
            return full[rlo], full[rhi]

        lo, hi = bounds(t)
        # a start inside every interval
        y = np.where(
            np.isfinite(lo) & np.isfinite(hi),
            (lo + hi) / 2,
            np.where(np.isfinite(lo), lo + 0.5, np.where(np.isfinite(hi), hi - 0.5, 0.0)),
        )
        theta = np.zeros(3 * M)
        q = np.array([1.0, 1.0, 1.0])  # random-walk variances per knot step
        Rc = np.zeros(nc)

        # relief hyperparameters
        hyper = dict(
            sill=1.0,
            range_m=(st.range_spacings or 1.5) * spacing,
            ratio=st.anisotropy or 1.0,
            azimuth=0.0,
        )
        relief = self._relief_factory(lat, Bc, counts)
        state = relief(hyper)

        checkpoints = set()
        if st.burn_in >= 20:
            checkpoints = {int(st.burn_in * f) for f in (0.15, 0.3, 0.5, 0.7)}
        total = st.burn_in + st.samples * st.thin
        keep_theta, keep_r, keep_t = [], [], []
        resid_sum = np.zeros(n_obs)
        D1 = np.diff(np.eye(M), axis=0)
        DtD = D1.T @ D1
        w = np.zeros(lat.size)
        u_acc, th_acc, n_acc = np.zeros(nc), np.zeros(3 * M), 0
        for sweep in range(total):
            # 1. age shifts of every span: the whole span moves with its age model
            z = rng.standard_normal(len(rec))
            age = np.clip(age0 + age_sd * z[rec_of], a_min, a_max)
            cols, vals = self._time_basis(age, oe, on)
            smooth = (theta[cols] * vals).sum(1)
            mu = Rc[ocore] + smooth
            # 2. thresholds with the latent integrated out (Cowles 1996)
            if free:
                prop = t.copy()
                prop[1:] += delta * rng.standard_normal(t.size - 1)
                if np.all(np.diff(prop) > 0):
                    plo, phi_ = bounds(prop)
                    lr = np.sum(_log_interval(mu, plo, phi_) - _log_interval(mu, lo, hi))
                    if math.log(rng.random()) < lr:
                        t, lo, hi = prop, plo, phi_
                        accepted += 1
                if sweep < st.burn_in and sweep % 20 == 19:
                    rate = accepted / 20
                    delta *= 1.5 if rate > 0.4 else (1 / 1.5 if rate < 0.15 else 1.0)
                    accepted = 0
            # 3. the latent at every observation point
            y = truncated_normal(mu, 1.0, lo, hi, rng)
            # 4. sea level and tilt: one Gaussian block
            PtP, Ptu = self._normal_equations(cols, vals, y - Rc[ocore], 3 * M)
            A = PtP + np.kron(np.diag(1.0 / q), DtD) + 1e-4 * np.eye(3 * M)
            theta = self._gauss_draw(A, Ptu, rng)
            smooth = (theta[cols] * vals).sum(1)
            # 5. relief knots (whitened)
            u = np.bincount(ocore, weights=y - smooth, minlength=nc)
            w = state.draw(u, rng)
            Rc = state.at_cores(w)
            # 6. the latent's scale, by parameter expansion (Liu & Wu 1999): every
            # latent quantity times one factor g leaves the belts unchanged, and g is
            # drawn from its conditional, so the chain moves along the scale ridge that
            # the thresholds' spread and the field's amplitude share.
            if free:
                Qt = np.kron(np.diag(1.0 / q), DtD)
                B = np.sum((y - Rc[ocore] - smooth) ** 2) + w @ w + theta @ Qt @ theta
                dim = n_obs + theta.size + w.size + t.size - 1
                g = math.sqrt(rng.gamma(dim / 2, 2.0 / B))
                y, theta, w, Rc, smooth, t = (v * g for v in (y, theta, w, Rc, smooth, t))
                lo, hi = bounds(t)
            # 7. random-walk variances
            for b in range(3):
                d = D1 @ theta[b * M : (b + 1) * M]
                q[b] = 1.0 / rng.gamma(1.0 + (M - 1) / 2, 1.0 / (1e-3 + d @ d / 2))
            # the cores' mean residuals and the tilt, averaged since the last
            # checkpoint: the hyperparameters follow the chain, not one draw of it
            u_acc += u
            th_acc += theta
            n_acc += 1
            if sweep in checkpoints:
                ubar = u_acc / n_acc / np.maximum(counts, 1)
                hyper = self._hyper(hyper, ubar, counts, th_acc / n_acc, M)
                u_acc[:] = 0.0
                th_acc[:] = 0.0
                n_acc = 0
                state = relief(hyper)
                w = state.draw(u, rng)
                Rc = state.at_cores(w)
            if sweep >= st.burn_in and (sweep - st.burn_in) % st.thin == 0:
                keep_theta.append(theta.copy())
                keep_r.append(state.knots(w))
                keep_t.append(t.copy())
                mu = Rc[ocore] + smooth
                resid_sum += truncated_normal_mean(mu, 1.0, lo, hi) - mu
        self.theta_samples_ = np.array(keep_theta)
        self.relief_samples_ = np.array(keep_r)
        self.threshold_samples_ = np.array(keep_t).reshape(len(keep_t), n_belts - 1)
        self.thresholds_ = self.threshold_samples_.mean(axis=0)
        self._resid = resid_sum / len(keep_t)
        self.relief_ = dict(
            sill=hyper["sill"],
            range_m=hyper["range_m"],
            anisotropy=hyper["ratio"],
            azimuth_deg=hyper["azimuth"],
        )
        self.sea_level_ = (self.age_knots_, self.theta_samples_[:, :M].mean(axis=0))
        # the local residual: stretched along strike by local_anisotropy
        self._frame = _frame(hyper["azimuth"], st.local_anisotropy)
        self.sd_scale_ = 1.0
        self._prepare_prediction()
        if st.calibrate:
            self.sd_scale_ = self._calibration(records, n_belts)
        log.info(
            "space-time field: %d cores, %d spans, %d points, %d knots; thresholds %s; "
            "relief sill %.3g range %.0f m anisotropy %.1f strike %.0f°",
            nc,
            len(rec),
            n_obs,
            lat.size,
            np.round(self.thresholds_, 3).tolist(),
            hyper["sill"],
            hyper["range_m"],
            hyper["ratio"],
            hyper["azimuth"],
        )
        return self

    @staticmethod
    def _validate(records, n_belts):
        # a point record (a pick: age_top == age_base) dates its belt exactly
        rec = records.loc[records["age_base"] >= records["age_top"]].reset_index(drop=True)
        if rec.empty:
            raise ValueError("no record with age_top <= age_base")
        lo, hi = rec["rank_low"].to_numpy(), rec["rank_high"].to_numpy()
        if lo.min() < 0 or hi.max() >= n_belts or np.any(lo > hi):
            raise ValueError(f"record ranks must satisfy 0 <= rank_low <= rank_high < {n_belts}")
        if n_belts < 2:
            raise ValueError("a scheme of at least two belts is needed")
        return rec

    def _time_basis(self, age, oe, on):
        """Hat-function basis of S, G_e, G_n at the given ages: (points, 6) columns
        into the 3M coefficients and their values."""
        k = self.age_knots_
        M = k.size
        u = np.clip((age - k[0]) / (k[1] - k[0]), 0.0, M - 1 - 1e-9)
        i = np.floor(u).astype(np.int64)
        f = u - i
        cols = np.stack([i, i + 1, M + i, M + i + 1, 2 * M + i, 2 * M + i + 1], axis=1)
        vals = np.stack([1 - f, f, (1 - f) * oe, f * oe, (1 - f) * on, f * on], axis=1)
        return cols, vals

    @staticmethod
    def _normal_equations(cols, vals, u, size):
        """Phi' Phi and Phi' u of the sparse time basis (:meth:`_time_basis`: a point's
        six columns are its age interval's index plus six fixed offsets), summed per
        interval with one ``bincount`` per product of two columns."""
        i = cols[:, 0]
        off = cols[0] - cols[0, 0] if len(cols) else np.zeros(6, np.int64)
        bins = int(i.max()) + 1 if i.size else 0
        at = np.arange(bins)
        PtP = np.zeros((size, size))
        for a in range(6):
            for b in range(a, 6):
                sums = np.bincount(i, weights=vals[:, a] * vals[:, b], minlength=bins)
                np.add.at(PtP, (at + off[a], at + off[b]), sums)
                if b != a:
                    np.add.at(PtP, (at + off[b], at + off[a]), sums)
        Ptu = np.zeros(size)
        for a in range(6):
            np.add.at(Ptu, at + off[a], np.bincount(i, weights=vals[:, a] * u, minlength=bins))
        return PtP, Ptu

    @staticmethod
    def _gauss_draw(A, b, rng):
        L = linalg.cholesky(A, lower=True)
        m = linalg.cho_solve((L, True), b)
        return m + linalg.solve_triangular(L.T, rng.standard_normal(b.size), lower=False)

    def _knot_correlation(self, lat, hyper):
        F = _frame(hyper["azimuth"], hyper["ratio"]) / hyper["range_m"]
        p = np.column_stack([lat.e, lat.n]) @ F.T
        K = _matern32(distance.cdist(p, p))
        K.flat[:: lat.size + 1] += 1e-6
        return K

    def _relief_factory(self, lat, Bc, counts):
        """A maker of the relief block's sampler for given hyperparameters."""
        field = self

        class _State:
            def __init__(self, hyper):
                K = field._knot_correlation(lat, hyper)
                self.L = linalg.cholesky(K, lower=True)
                self.s = math.sqrt(hyper["sill"])
                self.G = np.asarray(Bc @ self.L) * self.s  # cores x knots
                self.core_space = self.G.shape[0] < self.G.shape[1]
                if self.core_space:
                    # fewer cores than knots: the Gaussian update in core space
                    # (perturbation form), one n x n factor instead of m x m
                    S = self.G @ self.G.T
                    S.flat[:: S.shape[0] + 1] += 1.0 / counts
                    self.LS = linalg.cholesky(S, lower=True)
                else:
                    A = np.eye(lat.size) + self.G.T @ (counts[:, None] * self.G)
                    self.LA = linalg.cholesky(A, lower=True)

            def draw(self, u, rng):
                if self.core_space:
                    w0 = rng.standard_normal(self.G.shape[1])
                    e0 = rng.standard_normal(counts.size) / np.sqrt(counts)
                    r = u / counts - self.G @ w0 - e0
                    return w0 + self.G.T @ linalg.cho_solve((self.LS, True), r)
                m = linalg.cho_solve((self.LA, True), self.G.T @ u)
                z = rng.standard_normal(m.size)
                return m + linalg.solve_triangular(self.LA.T, z, lower=False)

            def at_cores(self, w):
                return self.G @ w

            def knots(self, w):
                return self.s * (self.L @ w)

        return _State

    def _hyper(self, hyper, ubar, counts, theta, M):
        """Relief sill, range, anisotropy and strike by the marginal likelihood of the
        cores' mean residuals (noise 1/count each); strike across the mean tilt."""
        st = self.settings
        ge, gn = theta[M : 2 * M].mean(), theta[2 * M :].mean()
        # the strike runs across the tilt's gradient
        azimuth = float(np.degrees(np.arctan2(gn, -ge)) % 180.0) if ge or gn else 0.0
        e, n = self.core_e_, self.core_n_
        keep = np.flatnonzero(counts > 0)
        if keep.size > _HYPER_CORES:
            keep = np.random.default_rng(0).choice(keep, _HYPER_CORES, replace=False)
        e, n, u, noise = e[keep], n[keep], ubar[keep], 1.0 / counts[keep]
        u = u - u.mean()
        sills = _SILLS * max(float(u @ u) / max(u.size, 1), float(noise.mean()))
        ranges = (st.range_spacings,) if st.range_spacings else _RANGES
        ratios = (st.anisotropy,) if st.anisotropy else _RATIOS
        geo = {}

        def score(ratio, rs, sill):
            if ratio not in geo:
                p = np.column_stack([e, n]) @ _frame(azimuth, ratio).T
                geo[ratio] = distance.cdist(p, p)
            K = sill * _matern32(geo[ratio] / (rs * self.spacing_m_)) + np.diag(noise)
            try:
                L = linalg.cholesky(K, lower=True)
            except linalg.LinAlgError:
                return -np.inf
            v = linalg.solve_triangular(L, u, lower=True)
            return -0.5 * v @ v - np.log(np.diag(L)).sum()

        # coordinate search: range and sill at the current ratio, then the ratio
        ratio = hyper["ratio"] if hyper["ratio"] in ratios else ratios[0]
        best = max((score(ratio, rs, s), rs, s) for rs in ranges for s in sills)
        _, rs, sill = best
        best = max((score(q, rs, s), q, s) for q in ratios for s in sills)
        _, ratio, sill = best
        best = (
            None,
            dict(
                sill=float(sill), range_m=rs * self.spacing_m_, ratio=float(ratio), azimuth=azimuth
            ),
        )
        return best[1]

    _HELD_OUT = 0.2  # share of the cores held out to calibrate the predictive sd
    _SCALES = np.geomspace(0.5, 6.0, 49)

    def _calibration(self, records, n_belts: int) -> float:
        """The factor on the predictive sd that best predicts held-out cores.

        A spread fifth of the cores (at least three, and only with ten or more) is held
        out; the field is fitted again to the rest with the relief's range and
        anisotropy held and a shorter chain, and predicts the latent at the held-out
        cores at the middle age of each of their records. The factor ``c`` maximises
        the held-out records' log probability of their own belt under ``N(mean,
        (c sd)^2)``, on a grid from 0.5 to 6 (cross-validated likelihood, a proper
        score: common practice for calibrating a predictive spread). Returns 1 where
        there are too few cores.
        """
        st = self.settings
        ids = np.asarray(self.core_ids_)
        n_out = int(round(self._HELD_OUT * ids.size))
        if ids.size < 10 or n_out < 3:
            return 1.0
        # spread: every k-th core in order of a random key from the seed
        rng = np.random.default_rng(st.seed + 7919)
        order = np.argsort(rng.random(ids.size))
        out = set(ids[order[:: max(ids.size // n_out, 2)][:n_out]].tolist())
        held = np.array([str(c) in out for c in records.core_id], dtype=bool)
        test = held & ~records.censored & (records.age_base > records.age_top)
        if test.sum() < 5:
            return 1.0
        sub = SpaceTimeField(
            replace(
                st,
                samples=max(40, st.samples // 4),
                burn_in=max(60, st.burn_in // 2),
                thin=1,
                seed=st.seed + 1,
                anisotropy=self.relief_["anisotropy"],
                range_spacings=self.relief_["range_m"] / self.spacing_m_,
                calibrate=False,
            )
        ).fit(records.select(~held), n_belts)
        e, n = records.easting[test], records.northing[test]
        age = 0.5 * (records.age_top[test] + records.age_base[test])
        mean, sd = np.empty(age.size), np.empty(age.size)
        for a in np.unique(age):
            k = age == a
            p = sub.predict(e[k], n[k], [a])
            mean[k], sd[k] = p.mean[0], p.sd[0]
        # each boundary's own event (the latent above or below its threshold), so the
        # boundaries near a record, whose positions the bands show, carry the score
        t = np.asarray(sub.thresholds_, dtype=float)
        above = records.rank[test][:, None] >= np.arange(1, t.size + 1)[None, :]
        z = (mean[:, None] - t[None, :]) / sd[:, None]
        scores = [
            np.where(above, special.log_ndtr(z / c), special.log_ndtr(-z / c)).sum()
            for c in self._SCALES
        ]
        c = float(self._SCALES[int(np.argmax(scores))])
        log.info("space-time field: predictive sd scaled by %.2f (held-out cores)", c)
        return c

    # ------------------------------------------------------------------ prediction

    def _prepare_prediction(self):
        r = self.relief_samples_
        self._r_mean = r.mean(axis=0)
        self._r_dev = (r - self._r_mean) / math.sqrt(max(len(r), 1))  # (S, knots)
        # local-residual frame: the relief's anisotropy, one local range
        self._local_scale = self.settings.local_range * self.spacing_m_
        pc = np.column_stack([self.core_e_, self.core_n_]) @ self._frame.T
        self._core_tree = cKDTree(pc / self._local_scale)

    def _core_residuals(self, age):
        """Each core's local residual at ``age`` (NaN without a record then)."""
        o, rc = self._obs, self._rec
        cover = np.flatnonzero((rc["top"] <= age) & (rc["base"] >= age))
        out = np.full(len(self.core_ids_), np.nan)
        if cover.size == 0:
            return out
        # the span just above a contact (the younger one) reads first
        cover = cover[np.argsort(rc["top"][cover], kind="stable")]
        cores, first = np.unique(rc["core"][cover], return_index=True)
        chosen = cover[first]
        dur = rc["base"][chosen] - rc["top"][chosen]
        frac = np.divide(age - rc["top"][chosen], dur, out=np.zeros(dur.size), where=dur > 0)
        j = np.clip(np.floor(frac * o["npts"][chosen]).astype(np.int64), 0, o["npts"][chosen] - 1)
        out[cores] = self._resid[o["start"][chosen] + j]
        return out

    def smooth_mean(self, easting, northing, age: float) -> np.ndarray:
        """The posterior mean of the smooth part (relief + sea level + tilt) at points
        and one age: the map's mean without the local residual."""
        e = np.asarray(easting, float).ravel()
        n = np.asarray(northing, float).ravel()
        g = self._time_terms(age).mean(axis=0)
        knots, wts = self._lattice.weights(e, n)
        return (
            (self._r_mean[knots] * wts).sum(-1)
            + g[0]
            + g[1] * (e - self.centre_[0]) / self.scale_
            + g[2] * (n - self.centre_[1]) / self.scale_
        )

    def sea_level_at(self, age: float) -> float:
        """The posterior mean of the basin-wide term ``S`` at ``age`` (latent units)."""
        return float(self._time_terms(age)[:, 0].mean())

    def _time_terms(self, age):
        """(samples, 3) draws of S(a), G_e(a), G_n(a)."""
        k = self.age_knots_
        M = k.size
        u = float(np.clip((age - k[0]) / (k[1] - k[0]), 0.0, M - 1 - 1e-9))
        i = int(u)
        f = u - i
        th = self.theta_samples_
        return np.stack(
            [(1 - f) * th[:, b * M + i] + f * th[:, b * M + i + 1] for b in range(3)], axis=1
        )

    def predict(self, easting, northing, ages, *, dtype=np.float64, chunk: int = 131_072):
        """The latent's posterior mean and sd at positions and ages.

        Parameters
        ----------
        easting, northing : array_like
            (points,) positions.
        ages : array_like
            (ages,) ages, any within the records' span (outside it the time terms hold
            their end values).
        dtype : numpy dtype
            Of the returned grids (float32 for large maps).
        chunk : int
            Points handled at a time (bounds the memory).

        Returns
        -------
        SpaceTimePrediction
        """
        e = np.asarray(easting, float).ravel()
        n = np.asarray(northing, float).ravel()
        ages = np.atleast_1d(np.asarray(ages, float))
        P, A = e.size, ages.size
        mean = np.empty((A, P), dtype)
        sd = np.empty((A, P), dtype)
        lat = self._lattice
        S = len(self._r_dev)
        # the smooth part's sample covariance: relief knots x knots (once), knots x
        # time terms and time terms x time terms (per age)
        cov_rr = self._r_dev.T @ self._r_dev
        per_age = []
        for a in ages:
            g = self._time_terms(a)  # (S, 3)
            gm = g.mean(axis=0)
            gd = (g - gm) / math.sqrt(S)
            dual, active = self._local_dual(self._core_residuals(a))
            per_age.append((gm, gd.T @ gd, self._r_dev.T @ gd, dual, active))
        for p0 in range(0, P, chunk):
            sl = slice(p0, min(P, p0 + chunk))
            pe, pn = e[sl], n[sl]
            idx, wts = lat.weights(pe, pn)
            r_at = (self._r_mean[idx] * wts).sum(-1)
            var_r = np.zeros(pe.size)
            for j in range(4):
                for k in range(4):
                    var_r += wts[:, j] * wts[:, k] * cov_rr[idx[:, j], idx[:, k]]
            f = np.stack(
                [
                    np.ones(pe.size),
                    (pe - self.centre_[0]) / self.scale_,
                    (pn - self.centre_[1]) / self.scale_,
                ],
                axis=1,
            )
            cross = self._local_cross(pe, pn)
            starts = cross.indptr[:-1]
            filled = np.diff(cross.indptr) > 0
            for ai, (gm, cov_gg, cov_rg, dual, active) in enumerate(per_age):
                c = (cov_rg[idx] * wts[:, :, None]).sum(1)  # (points, 3)
                var = var_r + 2 * (c * f).sum(1) + np.einsum("pi,ij,pj->p", f, cov_gg, f)
                if dual is None:
                    loc, v_e = 0.0, 1.0
                else:
                    loc = cross @ dual
                    on = np.zeros(len(self.core_ids_), bool)
                    on[active] = True
                    near = np.zeros(pe.size)
                    if cross.nnz:
                        vals = np.where(on[cross.indices], cross.data, 0.0)
                        near[filled] = np.maximum.reduceat(vals, starts[filled])
                    v_e = 1.0 - near**2
                mean[ai, sl] = r_at + f @ gm + loc
                sd[ai, sl] = self.sd_scale_ * np.sqrt(np.maximum(var, 0.0) + v_e)
        return SpaceTimePrediction(mean, sd, self.thresholds_.copy())

    def _local_cross(self, pe, pn):
        """Sparse (points, cores) correlation of the local residual (compact support)."""
        pts = (np.column_stack([pe, pn]) @ self._frame.T) / self._local_scale
        tree = cKDTree(pts)
        D = tree.sparse_distance_matrix(self._core_tree, 1.0, output_type="coo_matrix")
        vals = _spherical(D.data)
        # a point on a core: distance 0 is dropped by the sparse matrix, put it back
        d0, i0 = self._core_tree.query(pts, k=1, distance_upper_bound=1e-9)
        hit = np.isfinite(d0)
        rows = np.concatenate([D.row, np.flatnonzero(hit)])
        cols = np.concatenate([D.col, i0[hit]])
        vals = np.concatenate([vals, np.ones(int(hit.sum()))])
        M = sparse.csr_matrix((vals, (rows, cols)), shape=(len(pts), len(self.core_ids_)))
        M.sum_duplicates()
        M.data = np.minimum(M.data, 1.0)
        return M

    def _core_solver(self, active: np.ndarray):
        """Sparse LU of the local residual's correlation between the ``active`` cores
        (spherical, compact support; the diagonal with a 1e-6 jitter)."""
        tree = cKDTree(self._core_tree.data[active])
        D = tree.sparse_distance_matrix(tree, 1.0, output_type="coo_matrix")
        # off-diagonal entries only where distance > 0 (the diagonal comes from identity)
        C = sparse.csc_matrix((_spherical(D.data), (D.row, D.col)), shape=(active.size,) * 2)
        C = C + sparse.identity(active.size, format="csc") * (1.0 + 1e-6)
        return sparse.linalg.splu(C.tocsc())

    def _local_dual(self, res):
        """Dual kriging weights of the local residual on the cores with a value."""
        active = np.flatnonzero(np.isfinite(res))
        if active.size == 0:
            return None, active
        sol = self._core_solver(active).solve(res[active])
        dual = np.zeros(len(self.core_ids_))
        dual[active] = sol
        return dual, active

    def sample_latent(
        self, easting, northing, ages, draws: int | None = None, *, residual: bool = False, seed=0
    ):
        """Joint draws of the latent at points and ages: (draws, ages, points).

        Without ``residual``: the smooth part (relief + sea level + tilt) of each kept
        sample plus the local residual's mean. With ``residual``: also a draw of the
        local residual from its law given the cores (independent between ages, as the
        model has it), and every draw's deviation from the mean scaled by the held-out
        calibration factor, so the draws spread as the predictive sd says. The residual
        is drawn exactly at up to :attr:`RESIDUAL_POINTS` of the points (evenly picked
        in their order) and interpolated in order between them: give points in order
        along a line (a transect) when there are more.

        Differences between ages of one draw are what rates between slices are
        made of, so a shift and its sense come from the same draw.
        """
        e = np.asarray(easting, float).ravel()
        n = np.asarray(northing, float).ravel()
        ages = np.atleast_1d(np.asarray(ages, float))
        S = len(self.relief_samples_)
        pick = np.arange(S) if draws is None else np.linspace(0, S - 1, draws).astype(int)
        idx, wts = self._lattice.weights(e, n)
        r = np.einsum("pk,spk->sp", wts, self.relief_samples_[pick][:, idx], optimize=True)
        xs = (e - self.centre_[0]) / self.scale_
        ys = (n - self.centre_[1]) / self.scale_
        cross = self._local_cross(e, n)
        rng = np.random.default_rng(seed)
        out = np.empty((pick.size, ages.size, e.size))
        for ai, a in enumerate(ages):
            g = self._time_terms(a)[pick]
            res = self._core_residuals(a)
            dual, active = self._local_dual(res)
            loc = 0.0 if dual is None else cross @ dual
            out[:, ai] = r + g[:, :1] + g[:, 1:2] * xs + g[:, 2:3] * ys + loc
            if residual:
                mean = out[:, ai].mean(axis=0)
                at = np.unique(np.linspace(0, e.size - 1, self.RESIDUAL_POINTS).astype(int))
                noise = self._residual_draws(e[at], n[at], cross[at], active, pick.size, rng)
                if at.size < e.size:
                    noise = np.stack([np.interp(np.arange(e.size), at, d) for d in noise])
                out[:, ai] = mean + self.sd_scale_ * (out[:, ai] - mean + noise)
        return out

    RESIDUAL_POINTS = 160
    """Points at which :meth:`sample_latent` draws the local residual exactly."""

    def _residual_draws(self, e, n, cross, active, count: int, rng) -> np.ndarray:
        """(count, points) draws of the local residual at the points given its values at
        the ``active`` cores (spherical correlation, unit sill): the conditional law
        ``K_pp - K_pc C^-1 K_cp``."""
        pts = (np.column_stack([e, n]) @ self._frame.T) / self._local_scale
        K = _spherical(distance.cdist(pts, pts))
        if active.size:
            Kpc = cross[:, active].toarray()
            if np.any(Kpc):
                X = self._core_solver(active).solve(np.ascontiguousarray(Kpc.T))
                K = K - Kpc @ X
        w, V = np.linalg.eigh(0.5 * (K + K.T))
        root = V * np.sqrt(np.clip(w, 0.0, None))
        return rng.standard_normal((count, e.size)) @ root.T

    def transect_draws(self, line, ages, boundary: int, step_m: float, draws: int | None = None):
        """Joint draws of a boundary's position along a transect at several ages.

        The position is measured as :func:`paleomap.migration.transect_position` measures
        it on a map (the length of the line on the proximal side of the boundary), in
        every draw of the latent's smooth part with that draw's own threshold, so the
        positions of one draw at two ages make one possible shift.

        Parameters
        ----------
        line : shapely.LineString
            Landward to basinward.
        ages : array_like
        boundary : int
            The boundary ``b`` (between ranks ``b - 1`` and ``b``).
        step_m : float
            Sampling step along the line.
        draws : int or None
            Draws to use (spread over the kept samples); all by default.

        Returns
        -------
        numpy.ndarray
            (draws, ages) positions in metres along the line; NaN where the line does
            not cross the boundary in that draw.
        """
        import shapely

        length = line.length
        k = max(2, int(np.ceil(length / step_m)) + 1)
        s = np.linspace(0.0, length, k)
        xy = shapely.get_coordinates(shapely.line_interpolate_point(line, s))
        S = len(self.relief_samples_)
        pick = np.arange(S) if draws is None else np.linspace(0, S - 1, draws).astype(int)
        lat = self.sample_latent(xy[:, 0], xy[:, 1], ages, draws, residual=True)
        t = self.threshold_samples_[pick, boundary - 1]
        proximal = lat < t[:, None, None]
        w = np.full(k, length / (k - 1))
        w[0] = w[-1] = w[0] / 2
        pos = proximal @ w
        crossing = np.any(np.diff(proximal.astype(np.int8), axis=-1) != 0, axis=-1)
        return np.where(crossing, pos, np.nan)


def _table(records) -> pd.DataFrame:
    """The records (:class:`paleomap.records.Records`) as a table of :data:`_COLUMNS`."""
    return pd.DataFrame(
        dict(
            core_id=np.asarray(records.core_id, dtype=object),
            easting=np.asarray(records.easting, dtype=float),
            northing=np.asarray(records.northing, dtype=float),
            age_top=np.asarray(records.age_top, dtype=float),
            age_base=np.asarray(records.age_base, dtype=float),
            age_sd_top=np.asarray(records.age_sd_top, dtype=float),
            age_sd_base=np.asarray(records.age_sd_base, dtype=float),
            rank_low=np.asarray(records.rank, dtype=np.int64),
            rank_high=np.asarray(records.rank_high, dtype=np.int64),
            censored=np.asarray(records.censored, dtype=bool),
        )
    )


class SpaceTimeEngine:
    """The field engine over position and age, ``[mapping] engine = "space_time"``:
    one latent fitted to every core's whole record (see the module notes).

    Examples
    --------
    >>> from paleomap.field.engine import FieldEngine
    >>> isinstance(SpaceTimeEngine(), FieldEngine)
    True
    >>> from paleomap.project import MappingSettings
    >>> SpaceTimeEngine().settings(MappingSettings(samples=50, seed=3)).samples
    50
    """

    name = "space_time"

    def settings(self, mapping) -> SpaceTimeSettings:
        """Settings from the project's ``[mapping]`` table (``samples``, ``burn_in`` and
        ``seed``; the covariance keys are the slice engines' and are not used here)."""
        given = dict(samples=mapping.samples, burn_in=mapping.burn_in, seed=mapping.seed)
        return SpaceTimeSettings(**{k: v for k, v in given.items() if v is not None})

    def fit(self, records, n_belts: int, settings: SpaceTimeSettings, ages) -> SpaceTimeModel:
        """Fit to every record of every core (the slice ages only label the scores)."""
        field = SpaceTimeField(settings).fit(records, n_belts)
        return SpaceTimeModel(field, records, np.asarray(ages, dtype=float).ravel())


class SpaceTimeModel:
    """The fitted space-time field as a :class:`paleomap.field.engine.FittedField`.

    Slice maps, maps at any other age and the chronostratigraphic chart all come from
    :meth:`predict` of the one fitted field; :meth:`transect_draws` gives joint draws of
    a boundary's positions at several ages, from which the build takes the shifts and
    rates between slices.
    """

    LARGE = 20_000_000
    """Above this many point-ages the prediction is float32."""

    def __init__(self, field: SpaceTimeField, records, ages: np.ndarray):
        self.field, self.records, self.ages = field, records, ages

    def predict(self, easting, northing, ages):
        """The latent's mean and sd and the belt probabilities (derived from them) at
        points and ages."""
        from .engine import Prediction

        e = np.asarray(easting, dtype=float).ravel()
        ages = np.atleast_1d(np.asarray(ages, dtype=float))
        dtype = np.float32 if e.size * ages.size > self.LARGE else np.float64
        p = self.field.predict(e, northing, ages, dtype=dtype)
        t = np.asarray(p.thresholds, dtype=float)
        return Prediction(
            ages,
            tuple(p.mean[i] for i in range(ages.size)),
            tuple(p.sd[i] for i in range(ages.size)),
            tuple(t for _ in range(ages.size)),
            tuple(None for _ in range(ages.size)),
        )

    def transect_draws(self, line, ages, boundary: int, step_m: float) -> np.ndarray:
        """(draws, ages) joint draws of ``boundary``'s position along ``line``
        (:meth:`SpaceTimeField.transect_draws`)."""
        return self.field.transect_draws(line, ages, boundary, step_m)

    def quality(self, age: float) -> dict:
        """The fitted relief and time terms at ``age``, and how many of the cores
        recording it the smooth part alone (relief, sea level and tilt, without the
        local residual) puts in their own belt."""
        f = self.field
        idx = self.records.spanning(float(age))
        share = np.nan
        if idx.size:
            e, n = self.records.easting[idx], self.records.northing[idx]
            smooth = f.smooth_mean(e, n, float(age))
            belt = np.searchsorted(f.thresholds_, smooth, side="right")
            share = float(np.mean(belt == self.records.rank[idx]))
        return dict(
            method=SpaceTimeEngine.name,
            smooth_share_in_own_belt=share,
            relief_sill=float(f.relief_["sill"]),
            relief_range_m=float(f.relief_["range_m"]),
            relief_strike_to_dip=float(f.relief_["anisotropy"]),
            relief_azimuth_deg=float(f.relief_["azimuth_deg"]),
            sea_level_latent=float(f.sea_level_at(float(age))),
            sd_scale=float(f.sd_scale_),
        )
