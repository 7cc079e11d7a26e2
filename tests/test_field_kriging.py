"""Tests of paleomap.field.kriging against gstools and against a direct solve."""

import gstools as gs
import numpy as np
import pytest

from paleomap.field.covariance import _MATERN32_U95, Covariance
from paleomap.field.kriging import KrigingSystem, OrdinaryKriging, UniversalKriging


def _points(seed=1, n_data=25, n_target=40):
    rng = np.random.default_rng(seed)
    e = rng.uniform(0, 5000, n_data) + 600_000.0  # real-world magnitudes of a projected CRS
    n = rng.uniform(0, 4000, n_data) + 5_200_000.0
    y = rng.normal(size=n_data) + (e - 600_000) / 2000
    ge = rng.uniform(-500, 5500, n_target) + 600_000.0
    gn = rng.uniform(-500, 4500, n_target) + 5_200_000.0
    return e, n, y, ge, gn


def _gstools_model(cov: Covariance):
    """The same covariance in gstools' conventions.

    gstools' ``len_scale`` with ``rescale=1`` enters as exp(-r/l), exp(-(r/l)^2), the
    spherical polynomial on r/l and the Matern with argument sqrt(nu) r / l; ``anis`` is
    minor/major; ``angles`` is counter-clockwise from the x (east) axis in radians.
    """
    kw = dict(
        dim=2,
        var=cov.sill,
        nugget=cov.nugget,
        anis=cov.anisotropy,
        angles=np.deg2rad(90.0 - cov.azimuth_deg),
        rescale=1.0,
    )
    a = cov.range_m
    if cov.model == "exponential":
        return gs.Exponential(len_scale=a / 3.0, **kw)
    if cov.model == "gaussian":
        return gs.Gaussian(len_scale=a / np.sqrt(3.0), **kw)
    if cov.model == "spherical":
        return gs.Spherical(len_scale=a, **kw)
    return gs.Matern(nu=1.5, len_scale=a * np.sqrt(1.5) / _MATERN32_U95, **kw)


CASES = [
    ("exponential", 1.0, 1.0, 0.0, 0.0),
    ("spherical", 1.3, 1.0, 0.0, 0.0),
    ("gaussian", 0.9, 0.6, 60.0, 0.0),
    ("matern32", 1.0, 0.4, 30.0, 0.0),
    ("exponential", 0.8, 0.5, 120.0, 0.2),
]


@pytest.mark.parametrize("drift", ["constant", "linear"], ids=["ordinary", "universal"])
@pytest.mark.parametrize(
    "model, sill, anis, azimuth, nugget",
    CASES,
    ids=["exp-iso", "sph-iso", "gau-aniso", "mat-aniso", "exp-aniso-nugget"],
)
def test_matches_gstools(drift, model, sill, anis, azimuth, nugget):
    # Reference library: gstools 1.7 (Mueller et al. 2022), Ordinary and Universal
    # (drift_functions="linear") kriging with exact=False (nugget as in paleomap:
    # on the data diagonal only), no pseudo-inverse.
    e, n, y, ge, gn = _points()
    cov = Covariance(model, sill, 2500.0, anis, azimuth, nugget)
    model_gs = _gstools_model(cov)
    pos = (e - 600_000.0, n - 5_200_000.0)  # gstools' linear drift is unscaled: centre it
    tgt = (ge - 600_000.0, gn - 5_200_000.0)
    if drift == "constant":
        ref = gs.krige.Ordinary(model_gs, pos, y, exact=False, pseudo_inv=False)
    else:
        ref = gs.krige.Universal(
            model_gs, pos, y, drift_functions="linear", exact=False, pseudo_inv=False
        )
    ref_mean, ref_var = ref(tgt, mesh_type="unstructured", return_var=True)
    mean, var = (
        UniversalKriging(cov, drift=drift).fit((e, n), y).predict((ge, gn), return_variance=True)
    )
    assert mean == pytest.approx(ref_mean, rel=1e-6, abs=1e-6 * np.abs(ref_mean).max())
    assert var == pytest.approx(ref_var, rel=1e-6, abs=1e-6 * ref_var.max())


@pytest.mark.parametrize("drift", ["linear", "constant", None])
def test_reused_weights_equal_direct_solve(drift):
    e, n, y, ge, gn = _points(seed=4)
    fields = np.column_stack([y, y**2, np.sin(e / 700.0)])
    cov = Covariance("matern32", 1.0, 1800.0, 0.6, 75.0)
    fast = UniversalKriging(cov, drift=drift).fit((e, n), fields)
    slow = UniversalKriging(cov, drift=drift, method="direct").fit((e, n), fields)
    m1, v1 = fast.predict((ge, gn), return_variance=True, chunk_size=7)
    m2, v2 = slow.predict((ge, gn), return_variance=True)
    assert np.max(np.abs(m1 - m2)) < 1e-9
    assert np.max(np.abs(v1 - v2)) < 1e-9


def test_chunking_does_not_change_results():
    e, n, y, ge, gn = _points(seed=5)
    uk = UniversalKriging(Covariance("exponential", 1.0, 2000.0)).fit((e, n), y)
    a = uk.predict((ge, gn), return_variance=True, chunk_size=3)
    b = uk.predict((ge, gn), return_variance=True, chunk_size=10_000)
    assert np.array_equal(a[0], b[0]) or np.allclose(a[0], b[0], rtol=0, atol=1e-13)
    assert np.allclose(a[1], b[1], rtol=0, atol=1e-13)


def test_exact_interpolator_without_nugget():
    e, n, y, *_ = _points(seed=6)
    uk = UniversalKriging(Covariance("spherical", 1.0, 3000.0)).fit((e, n), y)
    mean, var = uk.predict((e, n), return_variance=True)
    assert np.allclose(mean, y, atol=1e-9)
    assert np.allclose(var, 0.0, atol=1e-9)


def test_float32_means_stay_close():
    e, n, y, ge, gn = _points(seed=7)
    uk = UniversalKriging(Covariance("exponential", 1.0, 2000.0)).fit((e, n), y)
    m64 = uk.predict((ge, gn))
    m32 = uk.predict((ge, gn), dtype=np.float32)
    assert m32.dtype == np.float32
    assert np.max(np.abs(m64 - m32)) < 1e-4


@pytest.mark.parametrize("drift", ["linear", "constant"])
def test_leave_one_out_formula_equals_refits(drift):
    e, n, y, *_ = _points(seed=8, n_data=15)
    cov = Covariance("exponential", 1.0, 2500.0, 0.7, 20.0)
    pred, var = UniversalKriging(cov, drift=drift).fit((e, n), y).leave_one_out()
    for i in range(e.size):
        keep = np.arange(e.size) != i
        uk = UniversalKriging(cov, drift=drift).fit((e[keep], n[keep]), y[keep])
        m, v = uk.predict((e[i : i + 1], n[i : i + 1]), return_variance=True)
        assert pred[i] == pytest.approx(m[0], abs=1e-9)
        assert var[i] == pytest.approx(v[0], abs=1e-9)


def test_jitter_only_when_needed():
    e, n, *_ = _points(seed=9)
    assert KrigingSystem(Covariance("exponential", 1.0, 2000.0), e, n).jitter == 0.0
    # Two coincident points make the matrix singular: a tiny jitter rescues it.
    e2 = np.array([0.0, 0.0, 500.0, 900.0, 100.0])
    n2 = np.array([0.0, 0.0, 300.0, 800.0, 900.0])
    sys = KrigingSystem(Covariance("gaussian", 1.0, 5000.0), e2, n2)
    assert 0.0 < sys.jitter <= 1e-6


def test_ordinary_kriging_reproduces_a_constant():
    e, n, _, ge, gn = _points(seed=10)
    ok = OrdinaryKriging(Covariance("gaussian", 1.0, 1500.0)).fit((e, n), np.full(e.size, 2.5))
    assert np.allclose(ok.predict((ge, gn)), 2.5)


def test_bad_input_messages():
    cov = Covariance("exponential", 1.0, 100.0)
    with pytest.raises(ValueError, match="data must have shape"):
        UniversalKriging(cov).fit(([0.0, 1.0, 2.0, 3.0], [0.0, 1.0, 0.0, 1.0]), [1.0, 2.0])
    with pytest.raises(ValueError, match="drift 'quadratic'"):
        KrigingSystem(cov, [0.0, 1.0], [0.0, 1.0], drift="quadratic")
    with pytest.raises(ValueError, match="cannot resolve the drift"):
        KrigingSystem(cov, [0.0, 1.0, 2.0, 3.0], [0.0, 1.0, 2.0, 3.0], drift="linear")
    with pytest.raises(ValueError, match="method 'fast'"):
        UniversalKriging(cov, method="fast").fit(([0.0, 1.0], [0.0, 0.0]), [1.0, 2.0])
