"""Covariance models for the latent field, with geometric anisotropy.

A :class:`Covariance` is a stationary model of the latent residual ``Z(x)``:

    C(h) = sill * rho(r) + nugget * [h == 0],   r = |h| scaled by the anisotropy

where ``rho`` is a correlation function of the *practical range* ``range_m``
(the distance along the major axis at which the correlation falls to 0.05 for the
exponential, gaussian and matern32 models, and to exactly 0 for the spherical
model). The major axis points along ``azimuth_deg``, in degrees clockwise from
north; the range along the minor axis is ``anisotropy * range_m``.

Convention for the nugget (the same as gstools' ``exact=False``): the nugget
appears on the diagonal of a data-data matrix only. Cross-covariances between
distinct point sets (:meth:`Covariance.cross`) exclude it, so kriging predicts the
continuous part of the field; the prediction variance adds the nugget back.

Examples
--------
>>> import numpy as np
>>> cov = Covariance("exponential", sill=1.0, range_m=3000.0)
>>> float(np.round(cov.cross([0.0], [0.0], [3000.0], [0.0])[0, 0], 4))
0.0498
>>> aniso = Covariance("gaussian", 1.0, 1000.0, anisotropy=0.5, azimuth_deg=90.0)
>>> c = aniso.cross([0.0, 0.0], [0.0, 0.0], [500.0, 0.0], [0.0, 500.0])
>>> bool(c[0, 0] > c[0, 1])  # 500 m east (along the major axis) correlates more
True
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import ArrayLike
from scipy.optimize import brentq

__all__ = ["MODELS", "Covariance", "correlation", "scaled_distance"]

MODELS: tuple[str, ...] = ("exponential", "spherical", "gaussian", "matern32")
"""Names of the covariance models, in the order they are tried when fitting."""

# (1 + u) exp(-u) = 0.05: the Matern nu=3/2 correlation at its practical range.
_MATERN32_U95 = brentq(lambda u: (1.0 + u) * np.exp(-u) - 0.05, 1.0, 10.0)


def correlation(model: str, r: ArrayLike) -> np.ndarray:
    """Correlation at distance ``r`` expressed in practical ranges.

    Parameters
    ----------
    model : {"exponential", "spherical", "gaussian", "matern32"}
        Model name.
    r : array_like
        Distance divided by the practical range (already anisotropy-scaled).

    Returns
    -------
    numpy.ndarray
        Correlation, 1 at ``r = 0``; 0.05 at ``r = 1`` (0 for spherical).

    Examples
    --------
    >>> float(np.round(correlation("matern32", 1.0), 6))
    0.05
    >>> float(correlation("spherical", 1.0))
    0.0
    """
    r = np.abs(np.asarray(r, dtype=float))
    if model == "exponential":
        return np.exp(-3.0 * r)
    if model == "gaussian":
        return np.exp(-3.0 * r * r)
    if model == "spherical":
        rc = np.minimum(r, 1.0)
        return 1.0 - 1.5 * rc + 0.5 * rc**3
    if model == "matern32":
        u = _MATERN32_U95 * r
        return (1.0 + u) * np.exp(-u)
    raise ValueError(f"unknown covariance model {model!r}; allowed: {', '.join(MODELS)}")


def scaled_distance(
    de: ArrayLike, dn: ArrayLike, range_m: float, anisotropy: float, azimuth_deg: float
) -> np.ndarray:
    """Anisotropic distance in practical ranges for lag components (``de``, ``dn``).

    Parameters
    ----------
    de, dn : array_like
        Lag components in metres along easting and northing.
    range_m : float
        Practical range along the major axis.
    anisotropy : float
        Minor / major range ratio, in (0, 1].
    azimuth_deg : float
        Azimuth of the major axis in degrees clockwise from north.

    Returns
    -------
    numpy.ndarray
        ``sqrt((h_major / a)^2 + (h_minor / (anisotropy a))^2)``.

    Examples
    --------
    >>> float(scaled_distance(0.0, 100.0, 100.0, 0.5, 90.0))  # north is the minor axis
    2.0
    """
    az = np.deg2rad(azimuth_deg)
    de = np.asarray(de, dtype=float)
    dn = np.asarray(dn, dtype=float)
    major = de * np.sin(az) + dn * np.cos(az)
    minor = de * np.cos(az) - dn * np.sin(az)
    return np.sqrt((major / range_m) ** 2 + (minor / (anisotropy * range_m)) ** 2)


def _correlation_inplace(model: str, r: np.ndarray, sill: float) -> np.ndarray:
    """``sill * correlation(model, r)``, overwriting ``r`` (big chunk matrices)."""
    if model == "exponential":
        r *= -3.0
        np.exp(r, out=r)
    elif model == "gaussian":
        r *= r
        r *= -3.0
        np.exp(r, out=r)
    elif model == "matern32":
        r *= _MATERN32_U95
        tmp = np.exp(-r)
        r += 1.0
        r *= tmp
    else:
        r[:] = correlation(model, r)
    if sill != 1.0:
        r *= sill
    return r


@dataclass(frozen=True)
class Covariance:
    """Stationary anisotropic covariance model of the latent residual.

    Parameters
    ----------
    model : {"exponential", "spherical", "gaussian", "matern32"}
        Correlation model.
    sill : float
        Variance of the continuous part (partial sill); total variance is
        ``sill + nugget``.
    range_m : float
        Practical range along the major axis, in metres.
    anisotropy : float
        Minor / major range ratio, in (0, 1]. 1 is isotropic.
    azimuth_deg : float
        Azimuth of the major axis, degrees clockwise from north.
    nugget : float
        Nugget (discontinuous variance at zero lag).

    Examples
    --------
    >>> cov = Covariance("spherical", 0.9, 2000.0, nugget=0.1)
    >>> cov.total_variance
    1.0
    >>> cov.matrix([0.0, 100.0], [0.0, 0.0]).shape
    (2, 2)
    """

    model: str
    sill: float
    range_m: float
    anisotropy: float = 1.0
    azimuth_deg: float = 0.0
    nugget: float = 0.0

    def __post_init__(self) -> None:
        problems = []
        if self.model not in MODELS:
            problems.append(f"model {self.model!r} is not one of {', '.join(MODELS)}")
        if not (np.isfinite(self.sill) and self.sill > 0):
            problems.append(f"sill must be positive (got {self.sill!r})")
        if not (np.isfinite(self.range_m) and self.range_m > 0):
            problems.append(f"range_m must be positive (got {self.range_m!r})")
        if not (np.isfinite(self.anisotropy) and 0 < self.anisotropy <= 1):
            problems.append(f"anisotropy must be in (0, 1] (got {self.anisotropy!r})")
        if not np.isfinite(self.azimuth_deg):
            problems.append(f"azimuth_deg must be finite (got {self.azimuth_deg!r})")
        if not (np.isfinite(self.nugget) and self.nugget >= 0):
            problems.append(f"nugget must be zero or positive (got {self.nugget!r})")
        if problems:
            raise ValueError("; ".join(problems))

    @property
    def total_variance(self) -> float:
        """Variance at zero lag, ``sill + nugget``."""
        return float(self.sill + self.nugget)

    def replace(self, **changes) -> Covariance:
        """A copy with some parameters changed (``dataclasses.replace``)."""
        return replace(self, **changes)

    def from_lags(self, de: ArrayLike, dn: ArrayLike) -> np.ndarray:
        """Covariance of the continuous part at lag components (no nugget)."""
        r = scaled_distance(de, dn, self.range_m, self.anisotropy, self.azimuth_deg)
        return self.sill * correlation(self.model, r)

    def cross(self, e1: ArrayLike, n1: ArrayLike, e2: ArrayLike, n2: ArrayLike) -> np.ndarray:
        """Cross-covariance matrix (len(e1), len(e2)) of the continuous part.

        The nugget is left out, so kriging with these vectors predicts the
        continuous part (a smooth map even with a nugget).
        """
        u1, v1 = self._scaled(e1, n1)
        u2, v2 = self._scaled(e2, n2)
        # Rotate and scale the points first, then difference: fewer passes over the
        # (len(e1), len(e2)) arrays than differencing and rotating the lags.
        r = np.subtract.outer(u1, u2)
        r *= r
        dv = np.subtract.outer(v1, v2)
        dv *= dv
        r += dv
        del dv
        np.sqrt(r, out=r)
        return _correlation_inplace(self.model, r, self.sill)

    def _scaled(self, easting: ArrayLike, northing: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
        """Coordinates along the major and minor axes in practical ranges."""
        e = np.asarray(easting, dtype=float).ravel()
        n = np.asarray(northing, dtype=float).ravel()
        az = np.deg2rad(self.azimuth_deg)
        major = (e * np.sin(az) + n * np.cos(az)) / self.range_m
        minor = (e * np.cos(az) - n * np.sin(az)) / (self.anisotropy * self.range_m)
        return major, minor

    def matrix(self, easting: ArrayLike, northing: ArrayLike) -> np.ndarray:
        """Covariance matrix of one point set, nugget on the diagonal."""
        c = self.cross(easting, northing, easting, northing)
        c[np.diag_indices_from(c)] += self.nugget
        return c

    def __call__(self, e1: ArrayLike, n1: ArrayLike, e2: ArrayLike, n2: ArrayLike) -> np.ndarray:
        """Same as :meth:`cross`."""
        return self.cross(e1, n1, e2, n2)

    def as_dict(self) -> dict[str, float | str]:
        """Parameters as a plain dict (for tables and reports)."""
        return {
            "model": self.model,
            "sill": float(self.sill),
            "range_m": float(self.range_m),
            "anisotropy": float(self.anisotropy),
            "azimuth_deg": float(self.azimuth_deg),
            "nugget": float(self.nugget),
        }
