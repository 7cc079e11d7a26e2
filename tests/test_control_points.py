"""Control points: pseudo-cores that impose an interpretation, never mistaken for cores."""

from __future__ import annotations

import warnings

import pyogrio
import pytest
import shapely
from conftest import write_project

from paleomap.errors import InputError, PaleomapWarning
from paleomap.io.readers import load_project
from paleomap.pipeline import compute, write_build

pytestmark = pytest.mark.slow

# The fixture's four cores sit at 500-505 km E, 4000-4005 km N; at s_mid (200 ka) they
# log silt (rank 3). A control point 6 km east imposes clay (rank 4) there.
CONTROL = "point_id,x,y,age,facies,weight\nCP1,511000,4002500,s_mid,clay,{w}\n"


def _project(tmp_path, weight=1.0, text=None):
    return load_project(
        write_project(
            tmp_path,
            keys={"inputs.control_points": "control.csv", "mapping.deterministic": True},
            files={"control.csv": text if text is not None else CONTROL.format(w=weight)},
        )
    )


def _compute(project):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)  # tiny project, few crossings
        return compute(project)


@pytest.fixture(scope="module")
def imposed(tmp_path_factory):
    project = _project(tmp_path_factory.mktemp("cp1"), 1.0)
    result = _compute(project)
    out = tmp_path_factory.mktemp("cp1out") / "build"
    write_build(result, out, figures=False, report=False)
    return project, result, out


def test_control_points_are_read_and_validated(tmp_path):
    project = _project(tmp_path / "a", 0.5)
    (p,) = project.control_points
    assert (p.point_id, p.surface, p.age, p.rank, p.weight) == ("CP1", "s_mid", 200.0, 4, 0.5)
    bad = "point_id,x,y,age,facies,weight\nCP1,511000,4002500,s_mid,clai,1.5\n"
    with pytest.raises(InputError) as err:
        _project(tmp_path / "b", text=bad)
    text = str(err.value)
    assert "control.csv, line 2, column 'facies'" in text and "did you mean 'clay'" in text.lower()
    assert "column 'weight'" in text and "is not in (0, 1]" in text


def test_a_control_point_of_weight_one_is_imposed(imposed):
    _, result, _ = imposed
    m = next(m for m in result.slice_maps if m.slice.name == "s_mid")
    assert [c[0] for c in m.control] == ["CP1"]
    assert shapely.contains_xy(m.polygons[4], 511000.0, 4002500.0)
    # it is not a core: neither counted nor listed as one
    assert "CP1" not in m.core_ids and m.quality["cores_used"] == 4
    assert m.quality["control_points_used"] == 1
    assert "CP1" not in set(result.samples["core_id"])


def test_control_points_are_exported_as_such(imposed):
    _, _, out = imposed
    gpkg = out / "paleomap.gpkg"
    cp = pyogrio.read_dataframe(gpkg, layer="control_points")
    assert cp["point_id"].tolist() == ["CP1"] and cp["source"].tolist() == ["control point"]
    assert cp["belt"].tolist() == ["clay"] and bool(cp["imposed"].iloc[0])
    cores = pyogrio.read_dataframe(gpkg, layer="cores")
    assert "CP1" not in set(cores["core_id"])
    slices = pyogrio.read_dataframe(gpkg, layer="core_slices")
    assert "CP1" not in set(slices["core_id"])
    # its own style, a different mark from the cores'
    sld = (out / "styles" / "control_points.sld").read_text()
    assert "<se:WellKnownName>star</se:WellKnownName>" in sld


def test_a_lighter_weight_mixes_the_two_interpretations(tmp_path, imposed):
    # weight 0.5: P = 0.5 P(with the point) + 0.5 P(without), so at the point the
    # probability of its belt is at least half the imposed map's and below it
    _, full, _ = imposed
    half = _compute(_project(tmp_path / "half", 0.5))

    def p_at(result):
        m = next(m for m in result.slice_maps if m.slice.name == "s_mid")
        row = int((m.grid.north - 4002500.0) // m.grid.cell_size)
        col = int((511000.0 - m.grid.west) // m.grid.cell_size)
        return float(m.probabilities[4][row, col])

    mid, hi = p_at(half), p_at(full)
    assert 0.5 * hi - 0.02 <= mid < hi
    m = next(m for m in half.slice_maps if m.slice.name == "s_mid")
    assert m.control[0][4] == 0.5
