"""Tests of the float32 normal CDF and of belt probabilities derived from the latent's
mean and standard deviation (what large maps keep instead of the probabilities)."""

import numpy as np
import pytest
from scipy import special

from paleomap.field.truncgauss import belt_probabilities
from paleomap.probability import distal_probability, moment_probabilities, normal_cdf32


def test_normal_cdf32_matches_scipy_within_1e6():
    # Reference library: scipy.special.ndtr in float64.
    x = np.linspace(-40.0, 40.0, 400_001)
    got = normal_cdf32(x).astype(float)
    assert np.abs(got - special.ndtr(x)).max() < 1e-6
    assert normal_cdf32(np.array([-np.inf, np.inf])).tolist() == [0.0, 1.0]
    assert np.isnan(normal_cdf32(np.array([np.nan]))[0])


def test_normal_cdf32_keeps_shape_and_is_the_same_in_one_or_two_threads():
    x = np.random.default_rng(0).normal(size=(300, 700))
    two = normal_cdf32(x, threads=2)
    one = normal_cdf32(x, threads=1)
    assert two.shape == x.shape and two.dtype == np.float32
    assert np.array_equal(one, two)


def test_moment_probabilities_match_the_float64_belt_probabilities():
    rng = np.random.default_rng(1)
    mean = rng.normal(0.0, 1.5, (120, 90))
    sd = rng.uniform(0.01, 2.0, (120, 90))
    t = np.array([-1.2, -0.3, 0.4, 1.1])
    got = moment_probabilities(mean, sd, t)
    ref = np.moveaxis(belt_probabilities(mean, sd, t), -1, 0)
    assert got.shape == (5, 120, 90) and got.dtype == np.float32
    np.testing.assert_allclose(got, ref, rtol=0, atol=2e-6)
    np.testing.assert_allclose(got.sum(axis=0), 1.0, rtol=0, atol=1e-6)


def test_distal_probability_is_the_sum_of_the_belts_beyond_the_boundary():
    rng = np.random.default_rng(2)
    mean, sd = rng.normal(size=5000), rng.uniform(0.05, 1.0, 5000)
    t = np.array([-0.5, 0.2, 0.9])
    p = moment_probabilities(mean, sd, t)
    for b in (1, 2, 3):
        np.testing.assert_allclose(
            distal_probability(mean, sd, t[b - 1]), p[b:].sum(axis=0), rtol=0, atol=1e-6
        )


@pytest.mark.parametrize("k", [1, 2])
def test_moment_probabilities_with_few_belts(k):
    p = moment_probabilities(np.array([0.3]), np.array([1.0]), np.zeros(k - 1))
    assert p.shape == (k, 1)
    assert p.sum() == pytest.approx(1.0, abs=1e-6)
