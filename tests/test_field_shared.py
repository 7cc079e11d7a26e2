"""Tests of the multi-slice model's prediction paths (paleomap.field.shared)."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

import paleomap.field.shared as shared
from paleomap.field.shared import PathSettings, SharedSettings, map_shared
from paleomap.field.tiling import square_tiles


def _basin(n_cores=30, n_slices=3, seed=0, drop=True):
    """Scattered cores over a ramp with a sinusoidal relief; belts cut from it."""
    rng = np.random.default_rng(seed)
    e = rng.uniform(0, 20_000, n_cores)
    n = rng.uniform(0, 20_000, n_cores)
    relief = 1.5 * np.sin(n / 3000.0)
    slices = {}
    for s in range(n_slices):
        idx = np.arange(n_cores)
        if drop and s % 2:  # some slices miss a few cores: several sets of cores
            idx = idx[3:]
        ranks = np.digitize(e[idx] / 4000 + relief[idx] + 0.6 * s - 0.6, [1.5, 3.0, 4.0])
        slices[f"s{s}"] = (idx, ranks)
    return e, n, slices


def _targets(step=1000.0):
    ge, gn = np.meshgrid(np.arange(-500, 20_600, step), np.arange(-500, 20_600, step))
    return ge.ravel(), gn.ravel()


SETTINGS = SharedSettings(samples=12, burn_in=10, chains=4)


@pytest.mark.parametrize("probability", ["samples", "moments"])
def test_shared_weights_equal_direct_solve_per_slice(probability):
    # The check: reusing one factorisation per set of cores for every slice,
    # sample and chunk gives the same numbers (to 1e-9, float64) as building and
    # solving every slice's systems from scratch.
    e, n, slices = _basin()
    te, tn = _targets()
    st = SharedSettings(samples=12, burn_in=10, chains=4, probability=probability, chunk_size=97)
    shared_res, _ = map_shared(e, n, slices, te, tn, 4, st)
    direct_res, _ = map_shared(
        e, n, slices, te, tn, 4, SharedSettings(**{**st.__dict__, "method": "direct"})
    )
    for k in slices:
        a, b = shared_res[k], direct_res[k]
        np.testing.assert_allclose(a.latent_mean, b.latent_mean, rtol=0, atol=1e-9)
        np.testing.assert_allclose(a.latent_sd, b.latent_sd, rtol=0, atol=1e-9)
        # probabilities are stored as float32
        np.testing.assert_allclose(a.probabilities, b.probabilities, rtol=0, atol=1e-6)


def test_fast_path_matches_exact_path():
    # float32 tiles, the local residual from nearby cores only and the spread in a
    # principal-component basis keep probabilities within 1e-4 of the float64 path.
    e, n, slices = _basin(n_cores=60, n_slices=4, seed=3)
    te, tn = _targets(500.0)
    st = SharedSettings(samples=16, burn_in=10, chains=4, probability="moments")
    exact, _ = map_shared(
        e, n, slices, te, tn, 4, replace(st, paths=PathSettings(fast_budget=1e30))
    )
    # many tiles
    fast_paths = PathSettings(fast_budget=0.0, tile_points=300)
    fast, _ = map_shared(e, n, slices, te, tn, 4, replace(st, paths=fast_paths))
    for k in slices:
        np.testing.assert_allclose(fast[k].latent_mean, exact[k].latent_mean, atol=1e-4)
        np.testing.assert_allclose(fast[k].latent_sd, exact[k].latent_sd, atol=1e-4)
        np.testing.assert_allclose(fast[k].probabilities, exact[k].probabilities, atol=1e-4)


@pytest.mark.parametrize("threads", [1, 2])
def test_fast_path_honours_cores_and_sums_to_one(threads):
    e, n, slices = _basin(n_cores=40, seed=5)
    st = replace(SETTINGS, paths=PathSettings(fast_budget=0.0, tile_points=64, threads=threads))
    res, fit = map_shared(e, n, slices, e, n, 4, st)
    for k, (idx, ranks) in slices.items():
        r = res[k]
        assert r.probabilities.shape == (e.size, 4)
        np.testing.assert_allclose(r.probabilities.sum(axis=1), 1.0, atol=1e-5)
        mapped = np.searchsorted(fit.thresholds, r.latent_mean[idx], side="right")
        assert np.array_equal(mapped, ranks)


def test_tiles_cover_every_point_once():
    rng = np.random.default_rng(1)
    te, tn = rng.uniform(0, 5000, 1000), rng.uniform(0, 300, 1000)
    order, bounds = square_tiles(te, tn, np.sqrt(5000 * 300 * 64 / 1000))
    assert np.array_equal(np.sort(order), np.arange(1000))
    assert bounds[0] == 0 and bounds[-1] == 1000 and np.all(np.diff(bounds) > 0)
    # a tile is compact: its points span about one tile side, not the whole area
    spans = [np.ptp(te[order[a:b]]) for a, b in zip(bounds[:-1], bounds[1:], strict=True)]
    assert np.median(spans) < 1000


def test_spread_basis_is_orthonormal_and_full_without_tail():
    e, n, slices = _basin()
    _, fit = map_shared(e, n, slices, e[:5], n[:5], 4, SETTINGS)
    v = shared._spread_basis(fit, 12)
    np.testing.assert_allclose(v.T @ v, np.eye(v.shape[1]), atol=1e-10)
    full = replace(fit, settings=replace(fit.settings, paths=PathSettings(spread_tail=0.0)))
    # centred samples span at most n_samples - 1 directions; all are kept
    assert shared._spread_basis(full, 12).shape[1] >= 11


def test_local_cutoff_below_level():
    from paleomap.field.covariance import Covariance, correlation

    for model in ("exponential", "spherical", "gaussian", "matern32"):
        cov = Covariance(model, 1.0, 1000.0)
        cut = shared._cutoff_m(cov, 1e-7)
        assert correlation(model, cut / 1000.0) < 1e-7
        assert correlation(model, 0.9 * cut / 1000.0) >= 1e-7 or model == "spherical"


def test_method_is_checked():
    with pytest.raises(ValueError, match="method 'fast' is not 'shared' or 'direct'"):
        SharedSettings(method="fast")


@pytest.mark.parametrize("resid_budget", [0, 2**40], ids=["resid-per-tile", "resid-global"])
def test_neighbourhood_mode_matches_global_when_it_holds_every_core(resid_budget):
    # Above PathSettings.global_cores the relief is kriged per tile from its nearest cores and the
    # slices' residuals either from a system of the cores near the tile or, while
    # their weights fit the budget, from the set's global factorisation; with
    # neighbourhoods as large as the data the maps agree with the global ones.
    e, n, slices = _basin(n_cores=60, n_slices=3, seed=7)
    te, tn = _targets(500.0)
    st = SharedSettings(samples=16, burn_in=10, chains=4, probability="moments")
    paths = PathSettings(fast_budget=0.0, local_weight_bytes=resid_budget)
    glob, _ = map_shared(e, n, slices, te, tn, 4, replace(st, paths=paths))
    paths = replace(paths, global_cores=10, neighbours=60, tile_points=100)
    near, _ = map_shared(e, n, slices, te, tn, 4, replace(st, paths=paths))
    for k in slices:
        np.testing.assert_allclose(near[k].latent_mean, glob[k].latent_mean, atol=1e-3)
        np.testing.assert_allclose(near[k].probabilities, glob[k].probabilities, atol=1e-3)
