"""Universal and ordinary kriging with one factorisation shared by many fields.

The kriging weights depend only on the data positions and the covariance, so a
:class:`KrigingSystem` factorises the data covariance once (Cholesky, ``C = L Lᵀ``)
and then serves any number of fields (time slices x Gibbs samples):

* **means by dual kriging**: for each field solve once for the dual weights
  ``alpha = C⁻¹ (y - F beta)`` and the generalised-least-squares drift ``beta``;
  the mean at a chunk of targets is then ``K_chunk @ alpha + F_chunk @ beta``, one
  BLAS product per chunk for all fields together;
* **variance once per set of data points**, by a triangular solve
  ``V = L⁻¹ K_chunkᵀ``: ``sigma² = c0 - |v|² + |R⁻ᵀ (f - Aᵀ v)|²`` with
  ``A = L⁻¹ F = Q R`` (the last term is the price of estimating the drift).

Drift terms are ``1`` (``drift="constant"``, ordinary kriging) or ``1, e', n'``
(``drift="linear"``, universal kriging) where ``e', n'`` are the coordinates centred
on the data and divided by their half extent, which keeps ``FᵀC⁻¹F`` well scaled
whatever the coordinate magnitudes. ``drift=None`` is simple kriging with a known
zero mean.

Numerical care (:mod:`paleomap.field.cholesky`): a jitter is added to the diagonal of
``C`` only when the Cholesky factorisation fails (smooth models with close points),
starting at ``1e-12`` of the total variance and growing tenfold up to ``1e-6``; the
amount used is kept in :attr:`KrigingSystem.jitter` and the direct-solve path uses the same matrix.

Examples
--------
>>> import numpy as np
>>> from paleomap.field.covariance import Covariance
>>> cov = Covariance("exponential", 1.0, 500.0)
>>> e = np.array([0.0, 300.0, 0.0, 300.0]); n = np.array([0.0, 0.0, 300.0, 300.0])
>>> uk = UniversalKriging(cov, drift="linear").fit((e, n), e / 300.0)
>>> mean, var = uk.predict((np.array([150.0]), np.array([150.0])), return_variance=True)
>>> float(np.round(mean[0], 6))
0.5
"""

from __future__ import annotations

import logging

import numpy as np
from numpy.typing import ArrayLike
from scipy import linalg

from .cholesky import cholesky_with_jitter
from .covariance import Covariance
from .drift import DRIFTS, drift_basis, drift_frame, n_drift_terms
from .tiling import chunk_slices, default_chunk_size

__all__ = [
    "DRIFTS",
    "KrigingSystem",
    "OrdinaryKriging",
    "UniversalKriging",
    "chunk_slices",
    "default_chunk_size",
]

logger = logging.getLogger(__name__)


def _as_coordinates(coordinates, name: str = "coordinates") -> tuple[np.ndarray, np.ndarray]:
    if len(coordinates) != 2:
        raise ValueError(f"{name} must be (easting, northing); got {len(coordinates)} arrays")
    e = np.asarray(coordinates[0], dtype=float).ravel()
    n = np.asarray(coordinates[1], dtype=float).ravel()
    if e.shape != n.shape:
        raise ValueError(f"{name}: easting has {e.size} values but northing has {n.size}")
    if not (np.all(np.isfinite(e)) and np.all(np.isfinite(n))):
        raise ValueError(f"{name} must be finite")
    return e, n


class KrigingSystem:
    """The factorised kriging system of one set of data points under one covariance.

    Parameters
    ----------
    covariance : Covariance
        Covariance of the residual.
    easting, northing : array_like
        Data positions (n,).
    drift : {"linear", "constant", None}
        Drift terms: universal (1, e, n), ordinary (1) or simple kriging (none).

    Attributes
    ----------
    n : int
        Number of data points.
    jitter : float
        Diagonal jitter that was added to the covariance (0 if none was needed).

    Examples
    --------
    >>> import numpy as np
    >>> from paleomap.field.covariance import Covariance
    >>> sys = KrigingSystem(Covariance("exponential", 1.0, 100.0), [0, 50, 90], [0, 10, 0])
    >>> alpha, beta = sys.weights(np.array([0.0, 1.0, 2.0]))
    >>> m = sys.mean([0.0, 50.0, 90.0], [0.0, 10.0, 0.0], alpha, beta)
    >>> np.allclose(m, [0.0, 1.0, 2.0])
    True
    """

    def __init__(
        self,
        covariance: Covariance,
        easting: ArrayLike,
        northing: ArrayLike,
        drift: str | None = "linear",
    ) -> None:
        if drift not in DRIFTS:
            raise ValueError(f"drift {drift!r} is not one of {DRIFTS}")
        self.covariance = covariance
        self.drift = drift
        self.easting, self.northing = _as_coordinates((easting, northing), "data coordinates")
        self.n = self.easting.size
        p = self.n_drift
        if self.n < max(p, 1):
            raise ValueError(
                f"{self.n} data points cannot fit a {drift!r} drift with {p} terms; "
                f"need at least {max(p, 1)}"
            )
        self._centre, self._scale = drift_frame(self.easting, self.northing)
        c = covariance.matrix(self.easting, self.northing)
        self.L, self.jitter = cholesky_with_jitter(c, covariance.total_variance)
        if self.jitter:
            logger.debug("kriging matrix needed a jitter of %.3g on the diagonal", self.jitter)
        self.F = self.drift_matrix(self.easting, self.northing)
        if p:
            self.A = linalg.solve_triangular(self.L, self.F, lower=True)
            self.QA, self.RA = linalg.qr(self.A, mode="economic")
            if np.min(np.abs(np.diag(self.RA))) < 1e-10 * np.max(np.abs(np.diag(self.RA))):
                raise ValueError(
                    "the data positions cannot resolve the drift (all points on a line?); "
                    "use drift='constant'"
                )

    @property
    def n_drift(self) -> int:
        """Number of drift terms (3, 1 or 0)."""
        return n_drift_terms(self.drift)

    def drift_matrix(self, easting: ArrayLike, northing: ArrayLike) -> np.ndarray:
        """Drift terms at points, (n_points, n_drift), in centred scaled coordinates."""
        return drift_basis(easting, northing, self._centre, self._scale, self.drift)

    def covariance_matrix(self) -> np.ndarray:
        """Data covariance including the nugget and any jitter, ``L Lᵀ``."""
        return self.L @ self.L.T

    # -- means -------------------------------------------------------------------
    def weights(self, data: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
        """Dual weights and GLS drift coefficients for one or many fields.

        Parameters
        ----------
        data : array_like
            Values at the data points, (n,) or (n, n_fields).

        Returns
        -------
        alpha : numpy.ndarray
            ``C⁻¹ (y - F beta)``, same shape as ``data``.
        beta : numpy.ndarray
            Drift coefficients, (n_drift,) or (n_drift, n_fields).
        """
        y = np.asarray(data, dtype=float)
        if y.shape[0] != self.n:
            raise ValueError(f"data has {y.shape[0]} rows but the system has {self.n} points")
        b = linalg.solve_triangular(self.L, y, lower=True)
        if self.n_drift:
            beta = linalg.solve_triangular(self.RA, self.QA.T @ b, lower=False)
            r = b - self.A @ beta
        else:
            beta = np.zeros((0,) + y.shape[1:])
            r = b
        alpha = linalg.solve_triangular(self.L, r, lower=True, trans="T")
        return alpha, beta

    def mean(
        self,
        easting: ArrayLike,
        northing: ArrayLike,
        alpha: np.ndarray,
        beta: np.ndarray,
        dtype=np.float64,
    ) -> np.ndarray:
        """Kriged means at points from dual weights: ``K @ alpha + F @ beta``."""
        k = self.covariance.cross(easting, northing, self.easting, self.northing)
        f = self.drift_matrix(easting, northing)
        if dtype == np.float64:
            return k @ alpha + f @ beta
        return (k.astype(dtype) @ alpha.astype(dtype)) + (f @ beta).astype(dtype)

    # -- variance ----------------------------------------------------------------
    def variance(self, easting: ArrayLike, northing: ArrayLike) -> np.ndarray:
        """Kriging (prediction) variance of the field, nugget included, at points."""
        k = self.covariance.cross(easting, northing, self.easting, self.northing)
        return self._variance_from_k(k, self.drift_matrix(easting, northing))

    def _variance_from_k(self, k: np.ndarray, f: np.ndarray) -> np.ndarray:
        v = linalg.solve_triangular(self.L, k.T, lower=True, check_finite=False)
        var = self.covariance.total_variance - np.einsum("ij,ij->j", v, v)
        if self.n_drift:
            g = f.T - self.A.T @ v
            w = linalg.solve_triangular(self.RA, g, lower=False, trans="T", check_finite=False)
            var += np.einsum("ij,ij->j", w, w)
        return np.maximum(var, 0.0)

    def mean_and_variance(
        self,
        easting: ArrayLike,
        northing: ArrayLike,
        alpha: np.ndarray,
        beta: np.ndarray,
        dtype=np.float64,
    ) -> tuple[np.ndarray, np.ndarray]:
        """Means and variance at points, sharing one cross-covariance matrix."""
        k = self.covariance.cross(easting, northing, self.easting, self.northing)
        f = self.drift_matrix(easting, northing)
        if dtype == np.float64:
            mean = k @ alpha + f @ beta
        else:
            mean = (k.astype(dtype) @ alpha.astype(dtype)) + (f @ beta).astype(dtype)
        return mean, self._variance_from_k(k, f)

    # -- reference path ----------------------------------------------------------
    def direct(
        self, easting: ArrayLike, northing: ArrayLike, data: ArrayLike
    ) -> tuple[np.ndarray, np.ndarray]:
        """Mean and variance by solving the full kriging system for every target.

        Builds ``[[C, F], [Fᵀ, 0]] [lambda; mu] = [k; f]`` per target and forms
        ``lambdaᵀ y`` and ``c0 - lambdaᵀ k - muᵀ f``. Slow; kept as the reference
        the shared-weights path is tested against.
        """
        y = np.asarray(data, dtype=float)
        p = self.n_drift
        m = np.zeros((self.n + p, self.n + p))
        m[: self.n, : self.n] = self.covariance_matrix()
        m[: self.n, self.n :] = self.F
        m[self.n :, : self.n] = self.F.T
        e = np.asarray(easting, dtype=float).ravel()
        n = np.asarray(northing, dtype=float).ravel()
        means = np.empty((e.size,) + y.shape[1:])
        var = np.empty(e.size)
        for j in range(e.size):
            k = self.covariance.cross(e[j : j + 1], n[j : j + 1], self.easting, self.northing)[0]
            f = self.drift_matrix(e[j : j + 1], n[j : j + 1])[0]
            sol = np.linalg.solve(m, np.concatenate([k, f]))
            lam, mu = sol[: self.n], sol[self.n :]
            means[j] = lam @ y
            var[j] = self.covariance.total_variance - lam @ k - mu @ f
        return means, np.maximum(var, 0.0)

    # -- precision and leave-one-out ---------------------------------------------
    def projected_precision(self) -> np.ndarray:
        """``C⁻¹ - C⁻¹F (FᵀC⁻¹F)⁻¹ FᵀC⁻¹``: the precision with the drift filtered out.

        Its diagonal gives the leave-one-out kriging variances (``1 / Q_ii``) and
        ``Q y = alpha`` the leave-one-out residuals (``alpha_i / Q_ii``).
        """
        linv = linalg.solve_triangular(self.L, np.eye(self.n), lower=True)
        if self.n_drift:
            linv = linv - self.QA @ (self.QA.T @ linv)
        return linv.T @ linv

    def leave_one_out(self, data: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
        """Leave-one-out predictions and variances at the data points.

        Uses ``y_i - yhat_{-i} = alpha_i / Q_ii`` and ``var_{-i} = 1 / Q_ii`` (with
        ``Q`` the projected precision), which equal refitting without point ``i``.

        Returns
        -------
        prediction : numpy.ndarray
            Same shape as ``data``.
        variance : numpy.ndarray
            (n,)
        """
        y = np.asarray(data, dtype=float)
        alpha, _ = self.weights(y)
        qdiag = np.diag(self.projected_precision())
        scale = qdiag if y.ndim == 1 else qdiag[:, None]
        return y - alpha / scale, 1.0 / qdiag


class UniversalKriging:
    """Universal kriging estimator (verde style): configure, ``fit``, ``predict``.

    Parameters
    ----------
    covariance : Covariance
        Covariance of the residual.
    drift : {"linear", "constant", None}
        ``"linear"`` (1, easting, northing) is universal kriging, ``"constant"``
        ordinary kriging, ``None`` simple kriging with zero mean.
    method : {"dual", "direct"}
        ``"dual"`` (the fast path: shared factorisation, dual weights, chunked BLAS
        products) or ``"direct"`` (full system solved per target; reference only).

    Attributes
    ----------
    system_ : KrigingSystem
        The factorised system (after ``fit``).
    alpha_, beta_ : numpy.ndarray
        Dual weights (n, n_fields) and drift coefficients (n_drift, n_fields).

    Examples
    --------
    >>> import numpy as np
    >>> from paleomap.field.covariance import Covariance
    >>> e = np.array([0.0, 1000.0, 0.0, 1000.0, 500.0])
    >>> n = np.array([0.0, 0.0, 1000.0, 1000.0, 500.0])
    >>> fields = np.stack([e / 1000.0, n / 1000.0], axis=1)  # two fields, one factorisation
    >>> uk = UniversalKriging(Covariance("matern32", 1.0, 800.0)).fit((e, n), fields)
    >>> uk.predict((np.array([250.0]), np.array([750.0]))).round(6).tolist()
    [[0.25, 0.75]]
    """

    def __init__(
        self, covariance: Covariance, drift: str | None = "linear", method: str = "dual"
    ) -> None:
        self.covariance = covariance
        self.drift = drift
        self.method = method

    def fit(self, coordinates, data: ArrayLike) -> UniversalKriging:
        """Factorise the system at the data points and solve for the weights.

        Parameters
        ----------
        coordinates : tuple of array_like
            (easting, northing) of the data, each (n,).
        data : array_like
            (n,) or (n, n_fields).

        Returns
        -------
        self
        """
        if self.method not in ("dual", "direct"):
            raise ValueError(f"method {self.method!r} is not one of 'dual', 'direct'")
        e, n = _as_coordinates(coordinates)
        y = np.asarray(data, dtype=float)
        if y.ndim not in (1, 2) or y.shape[0] != e.size:
            raise ValueError(
                f"data must have shape ({e.size},) or ({e.size}, n_fields); got {y.shape}"
            )
        if not np.all(np.isfinite(y)):
            raise ValueError("data must be finite")
        self.system_ = KrigingSystem(self.covariance, e, n, self.drift)
        self.data_ = y
        self.alpha_, self.beta_ = self.system_.weights(y)
        return self

    def predict(
        self,
        coordinates,
        return_variance: bool = False,
        chunk_size: int | None = None,
        dtype=np.float64,
    ):
        """Kriged means (and variance) at target points, in chunks.

        Parameters
        ----------
        coordinates : tuple of array_like
            (easting, northing) of the targets.
        return_variance : bool
            Also return the kriging variance (one per target, shared by all fields).
        chunk_size : int, optional
            Targets per chunk; default keeps a chunk within about 64 MB.
        dtype : numpy dtype
            Dtype of the mean product (float32 halves the time of big products).

        Returns
        -------
        mean : numpy.ndarray
            (n_points,) for 1-D data, else (n_points, n_fields).
        variance : numpy.ndarray
            (n_points,), only if ``return_variance``.
        """
        e, n = _as_coordinates(coordinates)
        sys = self.system_
        n_fields = 1 if self.data_.ndim == 1 else self.data_.shape[1]
        if self.method == "direct":
            mean, var = sys.direct(e, n, self.data_)
            return (mean, var) if return_variance else mean
        size = chunk_size or default_chunk_size(sys.n, n_fields)
        mean = np.empty((e.size,) + self.data_.shape[1:], dtype=dtype)
        var = np.empty(e.size) if return_variance else None
        for s in chunk_slices(e.size, size):
            if return_variance:
                mean[s], var[s] = sys.mean_and_variance(e[s], n[s], self.alpha_, self.beta_, dtype)
            else:
                mean[s] = sys.mean(e[s], n[s], self.alpha_, self.beta_, dtype)
        return (mean, var) if return_variance else mean

    def leave_one_out(self) -> tuple[np.ndarray, np.ndarray]:
        """Leave-one-out predictions and variances at the data (fast formula)."""
        return self.system_.leave_one_out(self.data_)


class OrdinaryKriging(UniversalKriging):
    """Ordinary kriging: :class:`UniversalKriging` with a constant drift.

    Examples
    --------
    >>> import numpy as np
    >>> from paleomap.field.covariance import Covariance
    >>> ok = OrdinaryKriging(Covariance("spherical", 1.0, 50.0))
    >>> ok.fit(([0.0, 10.0, 20.0], [0.0, 0.0, 5.0]), [1.0, 1.0, 1.0]).predict(([5.0], [1.0]))
    array([1.])
    """

    def __init__(self, covariance: Covariance, method: str = "dual") -> None:
        super().__init__(covariance, drift="constant", method=method)
