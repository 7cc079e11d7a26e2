"""Tests of paleomap.field.crossval: leave-one-out at the cores."""

import numpy as np
import pytest
from scipy import stats

from paleomap.field.covariance import Covariance
from paleomap.field.crossval import leave_one_out
from paleomap.field.kriging import KrigingSystem, UniversalKriging


def _setup(seed=0, n=20):
    rng = np.random.default_rng(seed)
    e, nn = rng.uniform(0, 8000, n), rng.uniform(0, 8000, n)
    cov = Covariance("exponential", 1.0, 5000.0, 0.7, 0.0)
    samples = rng.normal(size=(5, n)) + (e - 4000) / 3000
    return e, nn, cov, samples


def test_leave_one_out_equals_brute_force_refits():
    e, n, cov, samples = _setup()
    t = np.array([-0.5, 0.5])
    ranks = np.digitize(samples.mean(axis=0), t)
    cv = leave_one_out(KrigingSystem(cov, e, n), samples, t, ranks)
    for i in range(e.size):
        keep = np.arange(e.size) != i
        uk = UniversalKriging(cov).fit((e[keep], n[keep]), samples[:, keep].T)
        m, v = uk.predict((e[i : i + 1], n[i : i + 1]), return_variance=True)
        assert cv.latent_prediction[i] == pytest.approx(m[0].mean(), abs=1e-9)
        assert cv.latent_sd[i] == pytest.approx(np.sqrt(v[0]), abs=1e-9)
        cdf = stats.norm.cdf((t[None, :] - m[0][:, None]) / np.sqrt(v[0])).mean(axis=0)
        prob = np.diff(np.concatenate([[0.0], cdf, [1.0]]))
        assert cv.probabilities[i] == pytest.approx(prob, abs=1e-9)
    assert cv.predicted_rank.tolist() == np.argmax(cv.probabilities, axis=1).tolist()


def test_scores():
    e, n, cov, samples = _setup(seed=1)
    t = np.array([0.0])
    ranks = np.digitize(samples.mean(axis=0), t)
    cv = leave_one_out(KrigingSystem(cov, e, n), samples, t, ranks)
    assert cv.share_in_own_belt == pytest.approx(np.mean(cv.predicted_rank == ranks))
    assert cv.mean_abs_rank_error == pytest.approx(np.mean(np.abs(cv.predicted_rank - ranks)))
    wrong = leave_one_out(KrigingSystem(cov, e, n), samples, t, 1 - ranks)
    assert wrong.share_in_own_belt == pytest.approx(1.0 - cv.share_in_own_belt)


def test_shape_mismatch_is_refused():
    e, n, cov, samples = _setup()
    with pytest.raises(ValueError, match="must match"):
        leave_one_out(KrigingSystem(cov, e, n), samples[:, :5], [0.0], np.zeros(5, int))
