"""Tests of paleomap.field.variogram: directional variograms and the covariance fit."""

import numpy as np
import pytest

from paleomap.field.covariance import Covariance
from paleomap.field.variogram import (
    ExperimentalVariogram,
    experimental_variogram,
    fit_covariance,
    lag_edges,
    pool_variograms,
    strike_azimuth,
)


def _simulate(cov, n_points=250, n_fields=40, seed=0):
    rng = np.random.default_rng(seed)
    e, n = rng.uniform(0, 10_000, n_points), rng.uniform(0, 10_000, n_points)
    c = cov.matrix(e, n) + 1e-9 * np.eye(n_points)
    z = np.linalg.cholesky(c) @ rng.standard_normal((n_points, n_fields))
    return e, n, z


def test_strike_is_perpendicular_to_gradient():
    assert strike_azimuth(1.0, 0.0) == 0.0
    assert strike_azimuth(0.0, 1.0) == 90.0
    assert strike_azimuth(1.0, 1.0) == pytest.approx(135.0)
    assert strike_azimuth(-1.0, -1.0) == pytest.approx(135.0)


def test_semivariance_of_a_known_pair():
    ev = experimental_variogram([0.0, 0.0], [0.0, 100.0], [1.0, 3.0], 0.0, [0.0, 200.0])
    # One pair along north (the major axis at azimuth 0): gamma = (3 - 1)^2 / 2.
    assert ev.gamma[0, 0] == pytest.approx(2.0)
    assert ev.n_pairs[0, 0] == 1 and ev.n_pairs[1, 0] == 0
    assert ev.lag_major_m[0, 0] == pytest.approx(100.0)


def test_pooling_weights_by_pairs():
    e = np.array([0.0, 100.0, 0.0])
    n = np.array([0.0, 0.0, 100.0])
    a = experimental_variogram(e, n, [0.0, 1.0, 2.0], 0.0, [0.0, 150.0])
    b = experimental_variogram(e, n, [0.0, 3.0, 2.0], 0.0, [0.0, 150.0])
    pooled = pool_variograms([a, b])
    assert pooled.gamma[1, 0] == pytest.approx(0.5 * (a.gamma[1, 0] + b.gamma[1, 0]))
    with pytest.raises(ValueError, match="share lag edges"):
        pool_variograms([a, experimental_variogram(e, n, [0, 1, 2], 0.0, [0.0, 99.0])])


def test_fit_recovers_a_known_anisotropic_covariance():
    true = Covariance("exponential", 1.0, 4000.0, anisotropy=0.5, azimuth_deg=30.0)
    e, n, z = _simulate(true)
    ev = experimental_variogram(e, n, z, 30.0, lag_edges(e, n, 12))
    fit = fit_covariance(ev, fixed={"model": "exponential", "nugget": 0.0})
    assert fit.covariance.range_m == pytest.approx(4000.0, rel=0.3)
    assert fit.covariance.anisotropy == pytest.approx(0.5, abs=0.15)
    assert fit.covariance.azimuth_deg == 30.0
    assert fit.covariance.total_variance == pytest.approx(1.0)
    assert fit.fitted == ("range_m", "anisotropy")


def test_fit_prefers_the_right_model_shape():
    true = Covariance("gaussian", 1.0, 5000.0)
    e, n, z = _simulate(true, seed=1)
    ev = experimental_variogram(e, n, z, 0.0, lag_edges(e, n, 12))
    fit = fit_covariance(ev, fixed={"nugget": 0.0, "anisotropy": 1.0})
    assert fit.covariance.model in ("gaussian", "matern32")
    assert set(fit.models_tried) == {"exponential", "spherical", "gaussian", "matern32"}


def test_fixed_parameters_are_kept_and_total_variance_is_set():
    true = Covariance("spherical", 1.0, 3000.0)
    e, n, z = _simulate(true, seed=2, n_fields=10)
    ev = experimental_variogram(e, n, 2.0 * z, 0.0, lag_edges(e, n, 10))
    fit = fit_covariance(ev, fixed={"model": "spherical", "range_m": 2500.0, "nugget": 0.1})
    assert fit.covariance.range_m == 2500.0
    assert fit.covariance.nugget == pytest.approx(0.1)
    assert fit.covariance.sill == pytest.approx(0.9)
    assert fit.scale == pytest.approx(4.0, rel=0.5)  # variance of the values fitted


def test_fit_refuses_unknown_overrides_and_empty_variograms():
    edges = np.array([0.0, 1.0, 2.0])
    nan = np.full((2, 2), np.nan)
    empty = ExperimentalVariogram(0.0, edges, nan, np.zeros((2, 2)), nan, nan)
    with pytest.raises(ValueError, match="too few non-empty lag bins"):
        fit_covariance(empty)
    with pytest.raises(ValueError, match="cannot fix"):
        fit_covariance(empty, fixed={"sill": 1.0})
    with pytest.raises(ValueError, match="unknown covariance model"):
        fit_covariance(empty, fixed={"model": "cubic"})
