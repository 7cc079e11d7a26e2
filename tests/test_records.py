"""Dated belt records (paleomap.records): read at the slice ages they give exactly what
sample_slices gives, on the demo, small test projects and synthetic basins."""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
import pytest

from paleomap import load_project
from paleomap.agemodel import build_age_models, sample_slices
from paleomap.errors import PaleomapWarning
from paleomap.project import Slice
from paleomap.records import Records, build_records

DEMO = Path(__file__).resolve().parents[1] / "demo_region" / "project.toml"


def _same_as_samples(project, slices):
    models = build_age_models(project)
    records = build_records(project, models)
    table = sample_slices(project, slices, models)
    for sl in slices:
        rows = table[table["slice"] == sl.name]
        idx = records.spanning(sl.age)
        assert list(records.core_id[idx]) == list(rows["core_id"]), sl.name
        assert records.rank[idx].tolist() == rows["rank"].tolist(), sl.name
    return records


def test_demo_records_read_as_the_slice_samples():
    project = load_project(DEMO)
    records = _same_as_samples(project, project.slices)
    # and at many ages between the surfaces (the chart's), surface ages included
    ages = sorted({s.age for s in project.surfaces})
    many = np.union1d(np.linspace(ages[0], ages[-1], 97), ages)
    _same_as_samples(project, [Slice(f"a{i}", float(a), None) for i, a in enumerate(many)])
    assert (records.age_top <= records.age_base).all()


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_synthetic_records_read_as_the_slice_samples(tmp_path, seed):
    from paleomap.synthetic import make_basin
    from paleomap.synthetic.writing import write_project

    basin = make_basin(seed=seed)
    path = write_project(basin, tmp_path / "p")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)
        project = load_project(path)
    _same_as_samples(project, project.slices)
    ages = sorted({s.age for s in project.surfaces})
    many = np.union1d(np.linspace(ages[0], ages[-1], 61), ages)
    _same_as_samples(project, [Slice(f"a{i}", float(a), None) for i, a in enumerate(many)])


def test_contact_rule_in_age_the_record_above_wins():
    # two records meeting at 150: at 150 the upper one (rank 2) is read
    r = Records(
        np.array(["A", "A"], object),
        np.zeros(2),
        np.zeros(2),
        np.array([100.0, 150.0]),
        np.array([150.0, 300.0]),
        np.array([2, 0]),
        np.array([True, False]),
    )
    assert r.ranks_at(150.0).tolist() == [2]
    assert r.ranks_at(100.0).tolist() == [2]  # closed top
    assert r.ranks_at(300.0).tolist() == [0]
    assert r.ranks_at(300.5).tolist() == []
