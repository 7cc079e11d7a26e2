"""Tests of paleomap.field.ordinal: the per-slice ordinal field and map_slices."""

from dataclasses import replace

import numpy as np
import pytest

from paleomap.field.covariance import Covariance
from paleomap.field.kriging import UniversalKriging
from paleomap.field.ordinal import (
    FieldSettings,
    OrdinalField,
    fit_slices,
    map_slices,
    predict_slices,
)
from paleomap.field.truncgauss import belt_of


def _basin(seed=0, n_cores=40, size=20_000.0):
    """Cores over a basin whose belts run north-south, with along-strike relief."""
    rng = np.random.default_rng(seed)
    e, n = rng.uniform(0, size, n_cores), rng.uniform(0, size, n_cores)
    relief = 0.08 * size * np.sin(2 * np.pi * n / (0.4 * size))
    ranks = np.digitize(e + relief, [0.3 * size, 0.5 * size, 0.7 * size])
    return e, n, ranks


def _grid(size=20_000.0, cells=40):
    g = np.linspace(0, size, cells)
    ge, gn = np.meshgrid(g, g)
    return ge.ravel(), gn.ravel()


FAST = dict(samples=30, burn_in=20)


@pytest.mark.parametrize("deterministic", [False, True], ids=["sampled", "deterministic"])
def test_cores_are_honoured(deterministic):
    e, n, ranks = _basin()
    field = OrdinalField(4, deterministic=deterministic, **FAST).fit((e, n), ranks)
    m = field.latent_mean_at_cores_
    lo = np.concatenate([[-np.inf], field.thresholds_])[ranks]
    hi = np.concatenate([field.thresholds_, [np.inf]])[ranks]
    assert np.all((m >= lo) & (m < hi))
    out = field.predict((e, n))
    # The mapped mean latent at each core lies in the core's own belt.
    assert np.array_equal(belt_of(out.latent_mean, field.thresholds_), ranks)
    assert np.all(field.latent_samples_ >= lo) and np.all(field.latent_samples_ < hi)


def test_probabilities_are_a_distribution_with_order_relations():
    e, n, ranks = _basin(seed=1)
    field = OrdinalField(4, **FAST).fit((e, n), ranks)
    out = field.predict(_grid(), chunk_size=333)
    p = out.probabilities
    assert p.shape == (1600, 4) and p.dtype == np.float32
    assert np.all((p >= 0) & (p <= 1))
    assert np.allclose(p.sum(axis=1), 1.0, atol=1e-5)
    # Order relations (Journel 1983; Deutsch & Journel 1998, GSLIB): the cumulative
    # probabilities P(rank <= k) never decrease with k. Truncated-Gaussian
    # probabilities satisfy them by construction, so no correction is needed.
    assert np.all(np.diff(np.cumsum(p, axis=1), axis=1) >= -1e-7)
    assert np.array_equal(out.most_likely, np.argmax(p, axis=1))
    assert np.all(out.latent_sd > 0)


def test_boundary_of_a_noiseless_linear_field_is_where_it_should_be():
    # Cores on a regular lattice; the true latent is linear in easting, so the true
    # belt boundaries (at e = 2500 and e = 6500) run north-south, half-way between
    # core columns. The mapped boundaries must fall near them.
    cols = np.arange(0.0, 10_000.0, 1000.0) + 500.0
    e, n = np.meshgrid(cols, np.arange(0.0, 10_000.0, 1000.0) + 500.0)
    e, n = e.ravel(), n.ravel()
    ranks = np.digitize(e, [3000.0, 7000.0])
    field = OrdinalField(3, samples=40, burn_in=30).fit((e, n), ranks)
    assert field.covariance_.azimuth_deg == pytest.approx(0.0, abs=5.0) or (
        field.covariance_.azimuth_deg == pytest.approx(180.0, abs=5.0)
    )
    ge = np.linspace(500.0, 9500.0, 1801)
    for northing in (2500.0, 5000.0, 7500.0):
        out = field.predict((ge, np.full(ge.size, northing)))
        belt = belt_of(out.latent_mean, field.thresholds_)
        edges = ge[np.flatnonzero(np.diff(belt)) + 1]
        assert edges.size == 2
        assert edges == pytest.approx([3000.0, 7000.0], abs=250.0)  # a quarter spacing


def test_shared_weights_equal_a_direct_solve_per_slice():
    # issue 8: reused-weights path identical (1e-9, float64) to a direct solve per slice.
    e, n, ranks = _basin(seed=2, n_cores=25)
    cov = Covariance("matern32", 1.0, 8000.0, 0.6, 10.0)
    slices = {s: (np.arange(e.size), np.clip(ranks + s - 1, 0, 3)) for s in range(3)}
    settings = FieldSettings(covariance=cov, float32=False, **FAST)
    ge, gn = _grid(cells=9)
    res, fit = map_slices(e, n, slices, ge, gn, 4, settings)
    assert len(fit.groups) == 1
    for key, r in res.items():
        m = fit.slices[key]
        direct = UniversalKriging(cov, method="direct").fit((e, n), m.latent_samples.T)
        means, var = direct.predict((ge, gn), return_variance=True)
        assert np.max(np.abs(r.latent_mean - means.mean(axis=1))) < 1e-9
        sd = np.sqrt(var + means.var(axis=1))
        assert np.max(np.abs(r.latent_sd - sd)) < 1e-9


def test_slices_with_different_cores_form_groups():
    e, n, ranks = _basin(seed=3)
    keep = np.arange(e.size) % 4 != 0
    slices = {
        "all": (np.arange(e.size), ranks),
        "all_again": (np.arange(e.size)[::-1], ranks[::-1]),  # order does not matter
        "some": (np.flatnonzero(keep), ranks[keep]),
    }
    res, fit = map_slices(e, n, slices, *_grid(cells=10), 4, FieldSettings(**FAST))
    assert sorted(map(sorted, fit.groups.values())) == [["all", "all_again"], ["some"]]
    assert set(res) == set(slices)
    assert res["some"].model.core_index.size == keep.sum()


def test_group_results_equal_mapping_each_slice_alone():
    e, n, ranks = _basin(seed=4)
    cov = Covariance("exponential", 1.0, 9000.0, 0.5, 0.0)
    settings = FieldSettings(covariance=cov, deterministic=True)
    slices = {0: (np.arange(e.size), ranks), 1: (np.arange(e.size), np.minimum(ranks, 2))}
    ge, gn = _grid(cells=12)
    together, _ = map_slices(e, n, slices, ge, gn, 4, settings)
    for key, value in slices.items():
        alone, _ = map_slices(e, n, {key: value}, ge, gn, 4, settings)
        assert np.allclose(alone[key].latent_mean, together[key].latent_mean, atol=1e-12)
        assert np.allclose(alone[key].probabilities, together[key].probabilities, atol=1e-6)


def test_float32_probabilities_stay_within_1e4_of_float64():
    e, n, ranks = _basin(seed=5)
    fit = fit_slices(e, n, {0: (np.arange(e.size), ranks)}, 4, FieldSettings(**FAST))
    ge, gn = _grid(cells=15)
    p32 = predict_slices(fit, ge, gn)[0].probabilities
    fit64 = replace(fit, settings=replace(fit.settings, float32=False))
    p64 = predict_slices(fit64, ge, gn)[0].probabilities
    assert p64.dtype == np.float64
    assert np.max(np.abs(p32 - p64)) < 1e-4


def test_moments_approximation_is_close_to_the_sample_average():
    e, n, ranks = _basin(seed=6)
    fit = fit_slices(e, n, {0: (np.arange(e.size), ranks)}, 4, FieldSettings(samples=60))
    ge, gn = _grid(cells=20)
    exact = predict_slices(fit, ge, gn)[0]
    fast_fit = replace(fit, settings=replace(fit.settings, probability="moments"))
    fast = predict_slices(fast_fit, ge, gn)[0]
    assert np.array_equal(exact.latent_mean, fast.latent_mean)
    assert np.mean(np.abs(exact.probabilities - fast.probabilities)) < 0.01
    assert np.allclose(fast.probabilities.sum(axis=1), 1.0, atol=1e-5)


def test_local_neighbourhoods_approximate_the_global_system():
    e, n, ranks = _basin(seed=7, n_cores=120)
    cov = Covariance("exponential", 1.0, 6000.0, 0.6, 0.0)
    base = FieldSettings(covariance=cov, deterministic=True)
    local = replace(base, local_limit=50, gibbs_neighbours=40, kriging_neighbours=60)
    slices = {0: (np.arange(e.size), ranks)}
    ge, gn = _grid(cells=25)
    g, _ = map_slices(e, n, slices, ge, gn, 4, base)
    loc, fit = map_slices(e, n, slices, ge, gn, 4, local)
    # Compare where it matters, around the thresholds; deep inside the end belts the
    # extrapolated latent of a local drift may differ more.
    clip = np.clip(g[0].latent_mean, -1.5, 1.5) - np.clip(loc[0].latent_mean, -1.5, 1.5)
    assert np.mean(np.abs(clip)) < 0.05
    assert np.mean(g[0].most_likely == loc[0].most_likely) > 0.97
    at_cores, _ = map_slices(e, n, slices, e, n, 4, local)
    assert np.array_equal(belt_of(at_cores[0].latent_mean, fit.slices[0].thresholds), ranks)


def test_covariance_overrides_are_kept():
    e, n, ranks = _basin(seed=8)
    over = {"model": "spherical", "anisotropy": 0.4, "azimuth_deg": 15.0}
    field = OrdinalField(4, covariance=over, **FAST).fit((e, n), ranks)
    cov = field.covariance_
    assert (cov.model, cov.anisotropy, cov.azimuth_deg, cov.nugget) == ("spherical", 0.4, 15.0, 0)
    assert cov.total_variance == pytest.approx(1.0)


def test_fitted_major_axis_runs_along_strike():
    e, n, ranks = _basin(seed=9, n_cores=60)
    field = OrdinalField(4, **FAST).fit((e, n), ranks)
    az = field.covariance_.azimuth_deg % 180.0
    assert min(az, 180.0 - az) < 15.0  # belts run north-south


def test_seed_reproduces_and_changes_samples():
    e, n, ranks = _basin(seed=10)
    a = OrdinalField(4, seed=1, **FAST).fit((e, n), ranks).latent_samples_
    b = OrdinalField(4, seed=1, **FAST).fit((e, n), ranks).latent_samples_
    c = OrdinalField(4, seed=2, **FAST).fit((e, n), ranks).latent_samples_
    assert np.array_equal(a, b) and not np.array_equal(a, c)
    assert a.shape == (30, e.size)


def test_given_proportions_set_the_thresholds():
    e, n, ranks = _basin(seed=11)
    field = OrdinalField(4, proportions=[0.25] * 4, **FAST).fit((e, n), ranks)
    assert field.thresholds_ == pytest.approx([-0.674490, 0.0, 0.674490], abs=1e-6)


def test_cross_validation_scores_are_reported():
    e, n, ranks = _basin(seed=12)
    cv = OrdinalField(4, **FAST).fit((e, n), ranks).cross_validation_
    assert 0.5 < cv.share_in_own_belt <= 1.0
    assert 0.0 <= cv.mean_abs_rank_error < 0.6
    assert np.allclose(cv.probabilities.sum(axis=1), 1.0)


def test_outputs_can_be_limited():
    e, n, ranks = _basin(seed=13)
    settings = FieldSettings(outputs=("most_likely", "belt_of_mean"), **FAST)
    res, _ = map_slices(e, n, {0: (np.arange(e.size), ranks)}, *_grid(cells=8), 4, settings)
    assert res[0].probabilities is None and res[0].latent_mean is None
    assert res[0].most_likely.dtype == np.uint8 and res[0].belt_of_mean.shape == (64,)


@pytest.mark.parametrize(
    "call, match",
    [
        (
            lambda e, n, r: map_slices(e, n, {0: (np.arange(e.size), r + 5)}, e, n, 4),
            "ranks must be integers in 0..3",
        ),
        (
            lambda e, n, r: map_slices(
                np.r_[e, e[:1]],
                np.r_[n, n[:1]],
                {0: (np.arange(e.size + 1), np.r_[r, r[:1]])},
                e,
                n,
                4,
            ),
            "share the position",
        ),
        (lambda e, n, r: map_slices(e, n, {0: (np.arange(3), r)}, e, n, 4), "core indices but"),
        (lambda e, n, r: map_slices(e, n, {0: (np.arange(e.size), r)}, e, n, 1), "n_belts must be"),
        (lambda e, n, r: FieldSettings(probability="exact"), "probability 'exact'"),
        (lambda e, n, r: FieldSettings(covariance={"sill": 2.0}), "unknown covariance overrides"),
    ],
    ids=[
        "rank-range",
        "duplicate-position",
        "length-mismatch",
        "one-belt",
        "probability",
        "override",
    ],
)
def test_bad_input_is_refused_with_a_clear_message(call, match):
    e, n, ranks = _basin(seed=14, n_cores=12)
    with pytest.raises(ValueError, match=match):
        call(e, n, ranks)
