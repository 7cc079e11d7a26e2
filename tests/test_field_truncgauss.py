"""Tests of paleomap.field.truncgauss: thresholds, indicator variogram, Gibbs sampler."""

import numpy as np
import pytest
from scipy import stats

from paleomap.field.covariance import Covariance
from paleomap.field.truncgauss import (
    LatentPrior,
    belt_intervals,
    belt_of,
    belt_probabilities,
    gibbs_conditional,
    gibbs_mean_field,
    gibbs_sample,
    indicator_variogram,
    proportions_of,
    thresholds,
    truncated_normal,
    truncated_normal_mean,
)


@pytest.mark.parametrize(
    "p, expected",
    [
        ((0.2, 0.3, 0.5), (-0.841621, 0.0)),
        ((0.25, 0.25, 0.25, 0.25), (-0.674490, 0.0, 0.674490)),
        ((0.1, 0.2, 0.3, 0.4), (-1.281552, -0.524401, 0.253347)),
    ],
)
def test_thresholds_check_values(p, expected):
    # Armstrong et al. 2011, Plurigaussian Simulations in Geosciences (REFERENCES.md).
    t = thresholds(p)
    assert t == pytest.approx(expected, abs=1e-6)
    # And scipy's norm.ppf of the cumulative proportions (reference library).
    assert t == pytest.approx(stats.norm.ppf(np.cumsum(p)[:-1]), abs=1e-12)


def test_thresholds_normalise_the_proportions():
    assert thresholds([2, 3, 5]) == pytest.approx(thresholds([0.2, 0.3, 0.5]))


@pytest.mark.parametrize(
    "p",
    [(0.0, 0.5, 0.5), (0.5, 0.5, 0.0), (0.4, 0.0, 0.6), (0.0, 0.0, 1.0, 0.0)],
    ids=["first", "last", "middle", "three-empty"],
)
def test_belt_never_logged_keeps_finite_increasing_thresholds(p):
    t = thresholds(p, min_proportion=1e-3)
    assert np.all(np.isfinite(t))
    assert np.all(np.diff(t) > 0)
    # The empty belt keeps a band of about the floor proportion.
    widths = np.diff(stats.norm.cdf(np.concatenate([[-np.inf], t, [np.inf]])))
    for k, pk in enumerate(p):
        if pk == 0:
            assert widths[k] == pytest.approx(1e-3 / (1 + 1e-3 * p.count(0.0)), rel=1e-6)


@pytest.mark.parametrize(
    "p, match",
    [((1.0,), "at least two"), ((0.0, 0.0), "not all zero"), ((0.5, -0.1, 0.6), ">= 0")],
)
def test_bad_proportions(p, match):
    with pytest.raises(ValueError, match=match):
        thresholds(p)


def test_proportions_and_intervals():
    assert proportions_of([0, 2, 2, 1], 4).tolist() == [0.25, 0.25, 0.5, 0.0]
    lo, hi = belt_intervals([0, 1, 2], [-1.0, 1.0])
    assert lo.tolist() == [-np.inf, -1.0, 1.0]
    assert hi.tolist() == [-1.0, 1.0, np.inf]
    assert belt_of([-1.0, -0.999, 1.0, 5.0], [-1.0, 1.0]).tolist() == [1, 1, 2, 2]
    with pytest.raises(ValueError, match="ranks must lie"):
        proportions_of([0, 3], 3)


@pytest.mark.parametrize(
    "rho, t, expected",
    [
        (0.5, 0.0, 1 / 6),
        (0.9, 0.0, 0.071783),
        (0.0, 0.0, 0.25),
        (0.0, -0.841621, 0.16),
        (0.5, -0.841621, 0.112849),
        (0.9, -0.841621, 0.050068),
    ],
)
def test_indicator_variogram_check_values(rho, t, expected):
    # Armstrong et al. 2011; at t = 0, gamma = arccos(rho) / (2 pi) (REFERENCES.md).
    assert indicator_variogram(rho, t) == pytest.approx(expected, abs=1e-6)


def test_indicator_variogram_equals_bivariate_normal_definition():
    # p - P(Y1 < t, Y2 < t) with scipy's bivariate normal CDF (reference library).
    for rho, t in [(0.3, 0.5), (0.7, -1.2), (-0.4, 0.2)]:
        p2 = stats.multivariate_normal([0, 0], [[1, rho], [rho, 1]]).cdf([t, t])
        assert indicator_variogram(rho, t) == pytest.approx(stats.norm.cdf(t) - p2, abs=1e-5)
    assert indicator_variogram(1.0, 0.3) == pytest.approx(0.0)


def test_gibbs_step_worked_example():
    # Freulon & de Fouquet 1993 (REFERENCES.md): mean 0.15, variance 0.75.
    c = np.array([[1, 0.5, 0.25], [0.5, 1, 0.5], [0.25, 0.5, 1]])
    mean, var = gibbs_conditional(np.linalg.inv(c), [123.0, 0.3, -0.2], 0)
    assert mean == pytest.approx(0.15, abs=1e-12)
    assert var == pytest.approx(0.75, abs=1e-12)


@pytest.mark.parametrize(
    "a, b", [(-1.0, 2.0), (2.5, np.inf), (-np.inf, -6.0), (9.0, 9.5), (-40.0, -39.0)]
)
def test_truncated_normal_draws_follow_the_law(a, b):
    # Kolmogorov-Smirnov against scipy.stats.truncnorm (reference library).
    x = truncated_normal(np.zeros(4000), 1.0, a, b, np.random.default_rng(1))
    assert np.all((x >= a) & (x <= b))
    assert stats.kstest(x, stats.truncnorm(a, b).cdf).pvalue > 1e-3
    assert truncated_normal_mean(0.0, 1.0, a, b) == pytest.approx(
        stats.truncnorm(a, b).mean(), rel=1e-6
    )


def test_truncated_normal_mixed_draws_follow_each_law():
    # Means inside, near and far outside their intervals, so some values keep the plain
    # normal draw and others take the inverse CDF (plain and log space). Each draw's
    # CDF under its own law (scipy.stats.truncnorm, reference library) must be uniform.
    rng = np.random.default_rng(4)
    n = 6000
    mean = rng.normal(0.0, 3.0, n)
    sd = rng.uniform(0.1, 1.5, n)
    lo = rng.choice([-np.inf, -1.0, 0.5, 7.0], n)
    width = rng.choice([0.3, 2.0, np.inf], n)
    hi = np.where(np.isinf(lo), rng.choice([-0.5, 2.0], n), np.where(np.isinf(lo), 0.0, lo) + width)
    x = truncated_normal(mean, sd, lo, hi, np.random.default_rng(5))
    assert np.all((x >= lo) & (x <= hi)) and np.all(np.isfinite(x))
    u = stats.truncnorm((lo - mean) / sd, (hi - mean) / sd, loc=mean, scale=sd).cdf(x)
    assert stats.kstest(u, "uniform").pvalue > 1e-3


def test_truncated_normal_far_tail_is_finite():
    x = truncated_normal(0.0, 1.0, np.full(100, 60.0), np.inf, np.random.default_rng(2))
    assert np.all(np.isfinite(x)) and np.all(x >= 60.0) and np.all(x < 61.0)


def test_belt_probabilities_sum_to_one_and_handle_zero_sd():
    p = belt_probabilities(np.array([-2.0, 0.0, 0.4]), np.array([1.0, 0.0, 0.3]), [-0.5, 0.5])
    assert np.allclose(p.sum(axis=1), 1.0)
    assert p[1].tolist() == [0.0, 1.0, 0.0]
    assert np.all((p >= 0) & (p <= 1))


def _chain_prior():
    e = np.array([0.0, 400.0, 800.0, 1200.0, 1600.0, 2000.0])
    return LatentPrior(Covariance("exponential", 1.0, 1500.0), e, np.zeros(6), "constant", 3.0)


def test_gibbs_sample_stays_in_intervals_and_is_seeded():
    prior = _chain_prior()
    lo, hi = belt_intervals([0, 0, 1, 1, 2, 2], [-0.5, 0.5])
    s1 = gibbs_sample(prior, lo, hi, n_samples=30, burn_in=10, rng=5)
    s2 = gibbs_sample(prior, lo, hi, n_samples=30, burn_in=10, rng=5)
    assert s1.shape == (30, 6)
    assert np.array_equal(s1, s2)
    assert np.all((s1 >= lo) & (s1 < hi))
    many = gibbs_sample(prior, np.stack([lo, lo]), np.stack([hi, hi]), n_samples=7, burn_in=5)
    assert many.shape == (2, 7, 6)


def test_gibbs_sample_matches_the_truncated_bivariate_law():
    # Two cores, both constrained above 0: compare sample moments with a large
    # rejection sample from the same bivariate normal (direct simulation).
    c = np.array([[1.0, 0.6], [0.6, 1.0]])
    q = np.linalg.inv(c)
    s = gibbs_sample(q, [0.0, -np.inf], [np.inf, 0.5], n_samples=4000, burn_in=20, n_chains=40)
    z = np.random.default_rng(3).multivariate_normal([0, 0], c, size=400_000)
    z = z[(z[:, 0] >= 0) & (z[:, 1] < 0.5)]
    assert s.mean(axis=0) == pytest.approx(z.mean(axis=0), abs=0.04)
    assert np.cov(s.T) == pytest.approx(np.cov(z.T), abs=0.04)


def test_unconstrained_gibbs_recovers_the_prior_covariance():
    prior = _chain_prior()
    inf = np.full(6, np.inf)
    s = gibbs_sample(prior, -inf, inf, n_samples=3000, burn_in=20, n_chains=30, thin=3)
    assert np.cov(s.T) == pytest.approx(prior.matrix(), abs=0.1 * prior.matrix().max())


def test_drift_prior_anchors_separable_ranks():
    # Ranks separable by a line: with a flat drift prior the trend would run away.
    e = np.linspace(0, 9000, 10).repeat(2)
    n = np.tile([0.0, 3000.0], 10)
    prior = LatentPrior(Covariance("exponential", 1.0, 3000.0), e, n, "linear", 3.0)
    lo, hi = belt_intervals((e > 4000).astype(int), [0.0])
    s = gibbs_sample(prior, lo, hi, n_samples=200, burn_in=50)
    assert np.all(np.abs(s) < 20.0)


def test_local_conditionals_approximate_dense_ones():
    rng = np.random.default_rng(4)
    e, n = rng.uniform(0, 10_000, 60), rng.uniform(0, 10_000, 60)
    prior = LatentPrior(Covariance("exponential", 1.0, 2000.0), e, n, "linear", 3.0)
    ranks = np.digitize(e, [3000, 7000])
    lo, hi = belt_intervals(ranks, [-0.5, 0.5])
    dense = gibbs_mean_field(prior, lo, hi)
    local = gibbs_mean_field(prior, lo, hi, local_neighbours=30)
    assert np.all((local >= lo) & (local < hi))
    # Close, not equal: each core sees the drift through its own neighbours only.
    assert np.median(np.abs(dense - local)) < 0.05
    assert np.max(np.abs(dense - local)) < 0.15 * np.max(np.abs(dense))


def test_mean_field_is_inside_intervals_and_deterministic():
    prior = _chain_prior()
    lo, hi = belt_intervals([0, 1, 1, 2, 1, 2], [-0.5, 0.5])
    y1 = gibbs_mean_field(prior, lo, hi)
    assert np.all((y1 >= lo) & (y1 < hi))
    assert np.array_equal(y1, gibbs_mean_field(prior, lo, hi))


def test_bounds_must_be_ordered():
    with pytest.raises(ValueError, match="below its upper"):
        gibbs_sample(np.eye(2), [0.0, 1.0], [1.0, 1.0], n_samples=2, burn_in=1)
