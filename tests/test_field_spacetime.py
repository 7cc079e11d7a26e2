"""The space-time field on small synthetic truths with a known answer."""

import numpy as np
import pytest

from paleomap.field.spacetime import SpaceTimeField, SpaceTimeSettings
from paleomap.records import Records

AGES = np.arange(0.0, 120.0, 0.5)


def _records(e, n, latent, cuts, ages=AGES):
    """Spans of constant belt from a latent sampled at fine ages (noise-free logs)."""
    rows = []
    step = ages[1] - ages[0]
    for i in range(e.size):
        r = np.digitize(latent(e[i], n[i], ages), cuts)
        edges = np.flatnonzero(np.diff(r)) + 1
        for a, b in zip(np.r_[0, edges], np.r_[edges, ages.size], strict=True):
            rows.append((f"C{i:02d}", e[i], n[i], ages[a], ages[b - 1] + step, r[a]))
    return _as_records(rows)


def _as_records(rows):
    """Records of (core_id, easting, northing, age_top, age_base, rank) rows."""
    cols = list(zip(*rows, strict=True))
    return Records(
        np.array(cols[0], object),
        *(np.array(v, float) for v in cols[1:5]),
        np.array(cols[5], np.int64),
        np.zeros(len(rows), bool),
    )


def _sea(a):
    return 3.0 * np.sin(a / 20.0)


def _ramp(e, n, a):
    # east-dipping ramp (strike north-south), sea level moving the belts
    return e / 6000.0 - 3.0 + _sea(a) + 0.6 * np.sin(n / 7000.0)


CUTS = np.array([0.0, 3.0, 4.0])  # unequal belt widths in the truth


@pytest.fixture(scope="module")
def ramp_fit():
    rng = np.random.default_rng(5)
    e, n = rng.uniform(0, 36_000, 30), rng.uniform(0, 36_000, 30)
    rec = _records(e, n, _ramp, CUTS)
    st = SpaceTimeField(SpaceTimeSettings(samples=60, burn_in=150, seed=1)).fit(rec, 4)
    return st, rec, e, n


def test_recovers_sea_level_and_thresholds(ramp_fit):
    st, *_ = ramp_fit
    ages, sea = st.sea_level_
    assert np.corrcoef(sea, _sea(ages))[0, 1] > 0.97
    # the latent's scale is free; the thresholds against the ramp's gradient are
    # not: the truth has 1 latent unit per 6 km and thresholds 0, 3 and 4
    xs = np.linspace(6000.0, 30_000.0, 9)
    gx, gy = (v.ravel() for v in np.meshgrid(xs, xs))
    step = st.predict(gx + 6000.0, gy, [60.0]).mean - st.predict(gx, gy, [60.0]).mean
    t = st.thresholds_ / step.mean()
    assert t[0] == 0.0
    assert t[1] == pytest.approx(3.0, rel=0.15)
    assert t[2] == pytest.approx(4.0, rel=0.15)


def test_core_belts_honoured_at_their_positions(ramp_fit):
    st, rec, *_ = ramp_fit
    mid = (rec.age_top + rec.age_base) / 2
    ok = []
    for a in np.unique(np.round(mid[::7], 1))[:12]:
        at = (rec.age_top <= a) & (rec.age_base > a)
        p = st.predict(rec.easting[at], rec.northing[at], [a])
        belt = np.searchsorted(st.thresholds_, p.mean[0], side="right")
        ok.append(belt == rec.rank[at])
    assert np.concatenate(ok).mean() >= 0.97


def test_probabilities_sum_to_one(ramp_fit):
    st, _, e, n = ramp_fit
    p = st.predict(e[:5], n[:5], [10.0, 50.0]).probabilities
    assert p.shape == (4, 2, 5)
    np.testing.assert_allclose(p.sum(axis=0), 1.0, atol=1e-9)


def test_joint_draws_average_to_the_mean(ramp_fit):
    st, _, e, n = ramp_fit
    draws = st.sample_latent(e[:4], n[:4], [20.0, 60.0])
    mean = st.predict(e[:4], n[:4], [20.0, 60.0]).mean
    np.testing.assert_allclose(draws.mean(axis=0), mean, atol=1e-8)


def test_isolated_core_belt_stretches_along_strike():
    """No bull's-eye: one core logging a deeper belt than the ramp around it gives a
    patch longer along the regional strike (north-south) than across it (common
    practice: belts follow strike)."""
    g = np.arange(0.0, 40_001.0, 8000.0)
    e, n = (v.ravel() for v in np.meshgrid(g, g))
    keep = ~((e == 24_000.0) & (n == 24_000.0))
    e, n = np.r_[e[keep], 21_000.0], np.r_[n[keep], 20_000.0]

    def latent(x, y, a):
        bump = 2.5 * ((x == 21_000.0) & (y == 20_000.0))
        return x / 8000.0 - 2.5 + 0.8 * np.sin(a / 15.0) + bump

    rec = _records(e, n, latent, np.array([0.0]), ages=np.arange(0.0, 60.0, 0.5))
    st = SpaceTimeField(SpaceTimeSettings(samples=60, burn_in=100, seed=0)).fit(rec, 2)
    xs = np.arange(5_000.0, 37_000.0, 250.0)
    gx, gy = np.meshgrid(xs, xs)
    m = st.predict(gx.ravel(), gy.ravel(), [30.0]).mean[0].reshape(gx.shape)
    # the patch of the distal belt west of the regional shoreline, around the core
    t = st.thresholds_[0]
    distal = m > t
    base = np.median(m, axis=0) > t  # the regional belt by column
    patch = distal & ~base[None, :]
    rows, cols = np.nonzero(patch)
    assert rows.size > 0
    along = np.ptp(rows) + 1
    across = np.ptp(cols) + 1
    assert along >= 1.3 * across


def test_records_validated():
    rec = _as_records([("A", 0.0, 0.0, 0.0, 10.0, 3)])
    with pytest.raises(ValueError, match="rank"):
        SpaceTimeField().fit(rec, 3)
    with pytest.raises(ValueError, match="no record"):
        SpaceTimeField().fit(_as_records([("A", 0.0, 0.0, 10.0, 0.0, 1)]), 3)
    with pytest.raises(ValueError, match="anisotropy"):
        SpaceTimeSettings(anisotropy=0.0)


def test_held_out_calibration_scales_the_sd_and_leaves_the_mean(ramp_fit):
    st, rec, e, n = ramp_fit
    settings = SpaceTimeSettings(samples=60, burn_in=150, seed=1, calibrate=False)
    raw = SpaceTimeField(settings).fit(rec, 4)
    assert raw.sd_scale_ == 1.0
    assert 0.5 <= st.sd_scale_ <= 6.0
    a, b = st.predict(e, n, [30.0, 70.0]), raw.predict(e, n, [30.0, 70.0])
    np.testing.assert_allclose(a.mean, b.mean, rtol=0, atol=1e-9)
    np.testing.assert_allclose(a.sd, st.sd_scale_ * b.sd, rtol=1e-9)


def test_draws_with_the_residual_spread_as_the_predictive_sd(ramp_fit):
    # Rates come from these draws: their spread at one age must be the map's own
    # predictive sd (the mean part averages to the map; the local residual is drawn
    # from its law given the cores; both scaled by the held-out calibration).
    st, _, e, n = ramp_fit
    pe, pn = (e[:6] + e[6:12]) / 2, (n[:6] + n[6:12]) / 2  # between cores
    draws = st.sample_latent(pe, pn, [30.0, 70.0], residual=True, seed=3)
    p = st.predict(pe, pn, [30.0, 70.0])
    assert draws.shape == (60, 2, 6)
    np.testing.assert_allclose(draws.mean(axis=0), p.mean, atol=0.5 * p.sd.max())
    ratio = draws.std(axis=0) / p.sd
    assert 0.65 < np.median(ratio) < 1.35, ratio
