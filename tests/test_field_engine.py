"""The field engines' one interface (paleomap.field.engine): the registry, both engines
through a whole build, prediction at any age, and the law of the default sampler's
conditional draws."""

from __future__ import annotations

import warnings

import numpy as np
import pyogrio
import pytest
from conftest import write_project
from scipy import stats

from paleomap import load_project
from paleomap.errors import PaleomapWarning
from paleomap.field.engine import (
    DEFAULT_ENGINE,
    ENGINES,
    FieldEngine,
    FittedField,
    Prediction,
    get_engine,
)
from paleomap.pipeline import compute


def test_registry_names_the_engines_and_refuses_unknown_ones():
    assert DEFAULT_ENGINE in ENGINES
    for name in ENGINES:
        engine = get_engine(name)
        assert isinstance(engine, FieldEngine) and engine.name == name
    with pytest.raises(KeyError, match="no field engine 'kriging'; known: per_slice"):
        get_engine("kriging")


@pytest.fixture(scope="module")
def per_slice(tmp_path_factory):
    path = write_project(
        tmp_path_factory.mktemp("e"), keys={"mapping.engine": "per_slice", "mapping.samples": 30}
    )
    with warnings.catch_warnings():
        # the small project has slices the shoreline does not cross
        warnings.simplefilter("ignore", PaleomapWarning)
        return compute(load_project(path))


@pytest.fixture(scope="module", params=["per_slice", "space_time"])
def basin_build(request, tmp_path_factory):
    """A synthetic basin whose shoreline crosses the area at every slice, built with
    each engine (few samples: the test is of the plumbing, not the accuracy)."""
    from paleomap.synthetic import make_basin
    from paleomap.synthetic import write_project as write_synthetic

    basin = make_basin(n_cores=30, seed=3, cell_size_m=1000.0, truth_cell_m=2000.0)
    folder = tmp_path_factory.mktemp(request.param)
    write_synthetic(basin, folder)
    path = folder / "project.toml"
    mapping = f'\n[mapping]\nengine = "{request.param}"\nsamples = 40\nburn_in = 60\n'
    path.write_text(path.read_text() + mapping)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)
        return request.param, compute(load_project(path))


def test_every_engine_through_a_whole_build(basin_build, tmp_path):
    from paleomap.pipeline import write_build

    engine, r = basin_build
    assert r.project.mapping.engine == engine
    assert isinstance(r.field, FittedField)
    for m in r.slice_maps:
        assert m.quality["method"] == engine
        # every core lies in its own mapped belt
        assert m.quality["cores_in_own_belt"] == m.quality["cores_used"]
        np.testing.assert_allclose(m.probabilities.sum(axis=0), 1.0, atol=1e-5)
    # one model: the chart meets the maps at the slices
    c = r.chart
    pos = r.positions[r.positions["transect"] == c.transect]
    for row in pos.itertuples():
        j = np.flatnonzero(c.ages == row.age)[0]
        if np.isfinite(row.position_m):
            assert abs(c.boundary_m[j] - row.position_m) <= r.grid.cell_size
    # a shift lies in its own P10-P90 range and its sense agrees with its rate
    s = r.shifts[r.shifts["shift_bound"] == ""].dropna(subset=["rate_m_per_kyr"])
    assert len(s)
    for row in s.itertuples():
        assert row.shift_low_m <= row.shift_m <= row.shift_high_m
        if row.sense == "transgression":
            assert row.shift_low_m >= 0 and row.rate_m_per_kyr > 0
        elif row.sense == "regression":
            assert row.shift_high_m <= 0 and row.rate_m_per_kyr < 0
    out = write_build(r, tmp_path / "build")
    assert (out / "paleomap.gpkg").is_file() and (out / "report.html").is_file()
    # which engine made the maps is on record: the run_info table and the report
    assert r.run_info["field_engine"] == engine
    info = pyogrio.read_dataframe(out / "paleomap.gpkg", layer="run_info")
    assert info.loc[info["key"] == "field_engine", "value"].tolist() == [engine]
    assert f"<td>{engine}</td>" in (out / "report.html").read_text(encoding="utf-8")


def test_predict_at_fitted_ages_is_the_slice_map_and_works_between_them(per_slice):
    r = per_slice
    m = r.slice_maps[0]
    ce, cn = r.grid.cell_centres()
    pred = r.field.predict(ce[:50], cn[:50], [m.slice.age])
    assert isinstance(pred, Prediction)
    np.testing.assert_allclose(pred.latent_mean[0], m.latent.ravel()[:50], rtol=0, atol=1e-9)
    ages = sorted(s.age for s in r.project.surfaces)
    between = 0.5 * (ages[0] + ages[1])
    p2 = r.field.predict(ce[:50], cn[:50], [between, 1e9])
    assert np.isfinite(p2.latent_mean[0]).all() and np.isnan(p2.latent_mean[1]).all()
    assert p2.probabilities(0).shape == (50, r.project.scheme.n_belts)


def test_joint_key_still_selects_the_engine_with_a_deprecation_warning(tmp_path):
    path = write_project(tmp_path / "p", keys={"mapping.joint": False})
    with pytest.warns(PaleomapWarning, match=r"joint is deprecated.*\n?.*engine = \"per_slice\""):
        project = load_project(path)
    assert project.mapping.engine == "per_slice"


def test_unknown_engine_is_an_input_error(tmp_path):
    from paleomap.errors import InputError

    path = write_project(tmp_path / "p", keys={"mapping.engine": "spline"})
    with pytest.raises(InputError, match="engine"):
        load_project(path)


def test_default_sampler_draws_the_latent_from_its_truncated_conditional_law():
    # Step 1 of the shared-relief sampler: y_si | Z, beta ~ N(F beta_s + Z_i, sigma_E²)
    # truncated to the record's belt interval. Reference: scipy.stats.truncnorm
    # (scipy 1.11+). Many chains at once give many independent draws per record; the
    # probability integral transform of each record's draws under its own law must be
    # uniform.
    from paleomap.field.covariance import Covariance
    from paleomap.field.shared import _Sampler

    rng = np.random.default_rng(11)
    e, n = rng.uniform(0, 10_000, 12), rng.uniform(0, 10_000, 12)
    t = np.array([-0.5, 0.7])
    lo_t, hi_t = np.concatenate([[-np.inf], t]), np.concatenate([t, [np.inf]])
    ranks = np.array([0, 1, 2, 1, 0, 2, 1, 1, 0, 2, 2, 0] * 2)
    oc = np.tile(np.arange(12), 2)
    os_ = np.repeat([0, 1], 12)
    sampler = _Sampler(
        e, n, oc, os_, lo_t[ranks], hi_t[ranks], 2, (5000.0, 5000.0), 5000.0, rng, False
    )
    sampler.set_covariance(Covariance("exponential", 0.8, 4000.0), 0.3)
    chains = 4000
    beta = np.tile(np.array([[0.2, 0.5, -0.3], [-0.4, 0.1, 0.6]]), (chains, 1, 1))
    z = np.tile(rng.normal(0, 0.8, 12), (chains, 1))
    y = sampler.draw_latent(beta, z)
    mean = sampler._drift_obs(beta[:1])[0] + z[0, oc]
    sd = np.sqrt(0.3)
    for i in range(oc.size):
        law = stats.truncnorm(
            (lo_t[ranks[i]] - mean[i]) / sd, (hi_t[ranks[i]] - mean[i]) / sd, mean[i], sd
        )
        assert stats.kstest(y[:, i], law.cdf).pvalue > 1e-4, i
        assert y[:, i].mean() == pytest.approx(law.mean(), abs=4 * law.std() / np.sqrt(chains))
