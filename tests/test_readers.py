"""Tests of paleomap.io.readers: loading a project and refusing bad input clearly."""

from __future__ import annotations

import hashlib
import warnings
from pathlib import Path

import numpy as np
import pyproj
import pytest
from conftest import CORES, DEFAULT_COUNTS, INTERVALS, PICKS, write_project
from edge_cases import INVALID, ids, replace_line

from paleomap.errors import InputError, PaleomapWarning
from paleomap.io.readers import load_project, read_csv_table


def _snapshot(folder: Path) -> dict:
    return {p: p.stat().st_mtime_ns for p in sorted(folder.rglob("*"))}


def _matching(exc: InputError, case, toml_text: str):
    line = case.expected_line(toml_text)
    found = [
        p
        for p in exc.problems
        if p.file is not None
        and Path(p.file).name == case.file
        and p.line == line
        and (case.column is None or p.column == case.column)
        and case.message in p.message + (p.hint or "")
    ]
    return found, line


@pytest.mark.parametrize("case", INVALID, ids=ids(INVALID))
def test_each_broken_project_is_refused_with_file_line_and_value(tmp_path, case):
    path = write_project(tmp_path, **case.project)
    before = _snapshot(tmp_path)
    with pytest.raises(InputError) as info:
        load_project(path)
    toml_text = path.read_text(encoding="utf-8")
    found, line = _matching(info.value, case, toml_text)
    assert found, f"expected {case.file} line {line} {case.column}: {case.message}\n{info.value}"
    text = str(found[0])
    assert case.file in text
    if line is not None:
        assert f"line {line}" in text
    if case.value is not None:
        assert f"(got {case.value!r})" in text
    # Loading never writes anything.
    assert _snapshot(tmp_path) == before


def test_default_project_loads_with_the_right_counts(project_path):
    project = load_project(project_path)
    assert project.name == "Test Basin"
    assert len(project.cores) == DEFAULT_COUNTS["cores"]
    assert sum(len(c.intervals) for c in project.cores) == DEFAULT_COUNTS["intervals"]
    assert sum(len(c.picks) for c in project.cores) == DEFAULT_COUNTS["picks"]
    assert len(project.surfaces) == DEFAULT_COUNTS["surfaces"]
    assert [s.name for s in project.slices] == ["s_old", "s_mid", "s_young"]
    assert project.working_crs == project.crs == pyproj.CRS("EPSG:32631")
    assert project.depth_unit == "m" and project.age_unit == "ka"
    assert project.warnings == ()
    c3 = project.cores[2]
    assert c3.core_id == "C3" and c3.elevation is None
    assert (c3.easting, c3.northing) == (500000.0, 4005000.0) == (c3.x, c3.y)
    assert project.cores[1].elevation == 12.5
    assert project.grid.cell_size == 500.0 and project.grid.margin == 1000.0


def test_config_text_and_checksums_record_every_input(project_path):
    project = load_project(project_path)
    assert project.config_text == project_path.read_text(encoding="utf-8")
    assert set(project.checksums) == {"project.toml", "cores.csv", "intervals.csv", "picks.csv"}
    for rel, digest in project.checksums.items():
        assert digest == hashlib.sha256((project_path.parent / rel).read_bytes()).hexdigest()


def test_bom_whitespace_blank_lines_and_header_case_are_tolerated(tmp_path):
    intervals = "\ufeff Core_ID , Top ,BASE, facies \n\n" + "\n".join(
        "  " + ",  ".join(line.split(",")) + "  " for line in INTERVALS.splitlines()[1:]
    )
    path = write_project(tmp_path, intervals=intervals + "\n\n", cores=CORES.replace("\n", "\r\n"))
    project = load_project(path)
    assert sum(len(c.intervals) for c in project.cores) == 16
    # Lines still count as an editor shows them: header 1, blank 2, first row 3.
    assert project.cores[0].intervals[0].line == 3


def test_quoted_cells_and_extra_columns(tmp_path):
    intervals = "core_id,top,base,facies,notes\n" + "\n".join(
        f'{line},"note, with comma"' for line in INTERVALS.splitlines()[1:]
    )
    project = load_project(write_project(tmp_path, intervals=intervals + "\n"))
    assert project.cores[0].intervals[0].facies == "clay"


def test_all_problems_of_all_files_are_reported_together(tmp_path):
    path = write_project(
        tmp_path,
        keys={"grid.cell_size": -1, "surfaces[2].age": "old"},
        intervals=replace_line(INTERVALS, 2, "C1,0,10,marl"),
        picks=replace_line(PICKS, 5, "C2,s_young,x"),
        cores=replace_line(CORES, 3, "C2,abc,4000000,12.5"),
    )
    with pytest.raises(InputError) as info:
        load_project(path)
    where = {(Path(p.file).name, p.column) for p in info.value.problems}
    assert {
        ("project.toml", "grid.cell_size"),
        ("project.toml", "surfaces[2].age"),
        ("intervals.csv", "facies"),
        ("picks.csv", "depth"),
        ("cores.csv", "x"),
    } <= where
    assert str(info.value).startswith(f"{len(info.value.problems)} problems in the input:")


def test_facies_are_checked_even_when_the_scheme_breaks_a_rule(tmp_path):
    path = write_project(
        tmp_path,
        keys={"scheme.track": ["gravel", "silt"]},
        intervals=replace_line(INTERVALS, 2, "C1,0,10,marl"),
    )
    with pytest.raises(InputError) as info:
        load_project(path)
    columns = {p.column for p in info.value.problems}
    assert {"scheme.track", "facies"} <= columns


def test_missing_project_file(tmp_path):
    with pytest.raises(InputError, match=r"nowhere\.toml: file not found"):
        load_project(tmp_path / "nowhere.toml")


def test_paths_are_relative_to_the_project_file(tmp_path):
    path = write_project(
        tmp_path / "basin",
        keys={"inputs.cores": "data/wells.csv"},
        cores=None,
        files={"data/wells.csv": CORES},
    )
    project = load_project(path)
    assert len(project.cores) == 4
    assert "data/wells.csv" in project.checksums


def test_core_in_cores_without_intervals_warns(tmp_path):
    path = write_project(tmp_path, cores=CORES + "C5,510000,4000000,3\n")
    with pytest.warns(PaleomapWarning, match=r"cores\.csv, line 6, column 'core_id'.*no intervals"):
        project = load_project(path)
    assert any("C5" in str(w) for w in project.warnings)
    assert [c.core_id for c in project.cores][-1] == "C5"


def test_gap_in_a_core_warns_as_no_recovery(tmp_path):
    path = write_project(tmp_path, intervals=replace_line(INTERVALS, 3, "C1,11,20,silt"))
    with pytest.warns(PaleomapWarning, match=r"intervals\.csv, line 3.*'C1' has 1 gap.*10-11"):
        project = load_project(path)
    assert len(project.warnings) == 1


def test_unpicked_surface_and_unrecorded_slice_warn(tmp_path):
    path = write_project(
        tmp_path,
        config={"surfaces": [*_surfaces(), {"name": "s_top", "age": 50.0}]},
        keys={"slices.at": [250.0, 20.0]},
    )
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        project = load_project(path)
    text = [str(w.message) for w in caught]
    assert any("'s_top'" in t and "is not picked in any core" in t for t in text)
    assert any("'20ka'" in t and "no core has a record" in t for t in text)
    assert len(project.warnings) == 2


def _surfaces():
    return [
        {"name": "s_young", "age": 100.0},
        {"name": "s_mid", "age": 200.0},
        {"name": "s_old", "age": 300.0},
    ]


def test_depths_stay_in_feet(tmp_path):
    project = load_project(write_project(tmp_path, keys={"inputs.depth_unit": "ft"}))
    assert project.depth_unit == "ft"
    assert project.cores[0].intervals[-1].base == 40.0


def test_geographic_crs_is_projected_and_distances_agree_with_geod(tmp_path):
    # pyproj.Geod (Karney 2013 geodesics on WGS 84) is the reference distance.
    cores = "core_id,x,y\nC1,2.00,41.00\nC2,2.60,41.35\nC3,1.90,41.20\nC4,2.40,40.90\n"
    project = load_project(write_project(tmp_path, keys={"project.crs": "EPSG:4326"}, cores=cores))
    assert project.crs.is_geographic and project.working_crs.is_projected
    assert "Azimuthal Equidistant" in project.working_crs.coordinate_operation.method_name
    geod = pyproj.Geod(ellps="WGS84")
    for a, b in [(0, 1), (2, 3), (1, 2)]:
        ca, cb = project.cores[a], project.cores[b]
        _, _, reference = geod.inv(ca.x, ca.y, cb.x, cb.y)
        planar = np.hypot(ca.easting - cb.easting, ca.northing - cb.northing)
        assert abs(planar - reference) / reference < 1e-3
    # The working CRS is centred on the cores.
    e = np.array([c.easting for c in project.cores])
    n = np.array([c.northing for c in project.cores])
    assert abs(e.mean()) < 20_000 and abs(n.mean()) < 20_000


def test_cores_from_a_geopackage(tmp_path):
    gpd = pytest.importorskip("geopandas")
    from shapely.geometry import Point

    frame = gpd.GeoDataFrame(
        {"Core_ID": ["C1", "C2", "C3", "C4"], "elevation": [1.0, 2.0, None, 4.0]},
        geometry=[
            Point(500000, 4000000),
            Point(505000, 4000000),
            Point(500000, 4005000),
            Point(505000, 4005000),
        ],
        crs="EPSG:32631",
    )
    frame.to_file(tmp_path / "wells.gpkg", driver="GPKG")
    path = write_project(tmp_path, keys={"inputs.cores": "wells.gpkg"}, cores=None)
    project = load_project(path)
    assert [c.core_id for c in project.cores] == ["C1", "C2", "C3", "C4"]
    assert project.cores[1].easting == 505000.0 and project.cores[2].elevation is None
    assert project.cores[3].line == 4
    assert "wells.gpkg" in project.checksums


def test_vector_cores_in_another_crs_are_transformed(tmp_path):
    gpd = pytest.importorskip("geopandas")
    from shapely.geometry import Point

    points = [
        Point(500000, 4000000),
        Point(505000, 4000000),
        Point(500000, 4005000),
        Point(505000, 4005000),
    ]
    frame = gpd.GeoDataFrame(
        {"core_id": ["C1", "C2", "C3", "C4"]}, geometry=points, crs="EPSG:32631"
    ).to_crs("EPSG:4326")
    frame.to_file(tmp_path / "wells.geojson", driver="GeoJSON")
    path = write_project(tmp_path, keys={"inputs.cores": "wells.geojson"}, cores=None)
    project = load_project(path)
    assert project.cores[3].easting == pytest.approx(505000.0, abs=0.01)
    assert project.cores[3].northing == pytest.approx(4005000.0, abs=0.01)


def test_vector_cores_without_core_id_field(tmp_path):
    gpd = pytest.importorskip("geopandas")
    from shapely.geometry import Point

    gpd.GeoDataFrame({"name": ["C1"]}, geometry=[Point(0, 0)], crs="EPSG:32631").to_file(
        tmp_path / "wells.gpkg", driver="GPKG"
    )
    path = write_project(tmp_path, keys={"inputs.cores": "wells.gpkg"}, cores=None)
    with pytest.raises(
        InputError,
        match=r"project\.toml, line \d+, column 'inputs\.cores': names a file without the "
        r"field 'core_id' \(got 'wells\.gpkg'\)",
    ):
        load_project(path)


def test_area_polygon_and_transect_lines(tmp_path):
    gpd = pytest.importorskip("geopandas")
    from shapely.geometry import LineString, box

    area = box(499000, 3999000, 506000, 4006000)
    gpd.GeoDataFrame(geometry=[area], crs="EPSG:32631").to_file(tmp_path / "aoi.gpkg")
    lines = [
        LineString([(499000, 4002000), (506000, 4002000)]),
        LineString([(502000, 3999000), (502000, 4006000)]),
    ]
    gpd.GeoDataFrame({"transect_id": ["east", "north"]}, geometry=lines, crs="EPSG:32631").to_file(
        tmp_path / "transects.gpkg"
    )
    path = write_project(
        tmp_path,
        keys={
            "grid.area": "aoi.gpkg",
            "migration.transects": "transects.gpkg",
            "migration.transect_spacing_m": 1000.0,
        },
    )
    project = load_project(path)
    assert project.area.equals(area)
    assert [t for t, _ in project.transect_lines] == ["east", "north"]
    assert project.transect_lines[0][1].length == pytest.approx(7000.0)
    assert project.grid.area == tmp_path / "aoi.gpkg"
    assert {"aoi.gpkg", "transects.gpkg"} <= set(project.checksums)


def test_area_must_be_polygons(tmp_path):
    gpd = pytest.importorskip("geopandas")
    from shapely.geometry import Point

    gpd.GeoDataFrame(geometry=[Point(0, 0)], crs="EPSG:32631").to_file(tmp_path / "aoi.gpkg")
    path = write_project(tmp_path, keys={"grid.area": "aoi.gpkg"})
    with pytest.raises(InputError, match=r"aoi\.gpkg, line 1.*feature 1 is not a polygon"):
        load_project(path)


def test_missing_area_file_names_the_toml_key(tmp_path):
    path = write_project(tmp_path, keys={"grid.area": "aoi.gpkg"})
    with pytest.raises(InputError, match=r"column 'grid.area': names a file that does not exist"):
        load_project(path)


def test_read_csv_table_keeps_text_and_lines(tmp_path):
    (tmp_path / "t.csv").write_text("core_id,depth,surface,other\nA, 1.5 ,s,x\n\nB,2,t,y\n")
    table = read_csv_table(tmp_path / "t.csv", ("core_id", "surface", "depth"))
    assert list(table.columns) == ["core_id", "surface", "depth", "line"]
    assert table["depth"].tolist() == ["1.5", "2"]
    assert table["line"].tolist() == [2, 4]


def test_read_csv_table_raises_without_a_log(tmp_path):
    (tmp_path / "t.csv").write_text("a;b\n1;2\n")
    with pytest.raises(InputError, match="another separator"):
        read_csv_table(tmp_path / "t.csv", ("a", "b"))


def _documented_example() -> dict[str, str]:
    """The example project of docs/inputs.md: file name -> content of its code block."""
    import re

    text = (Path(__file__).parents[1] / "docs" / "inputs.md").read_text(encoding="utf-8")
    blocks = re.findall(r"^`([\w.]+)`:\n\n```\w*\n(.*?)^```", text, flags=re.M | re.S)
    return dict(blocks)


def test_the_documented_example_project_checks_as_documented(tmp_path):
    files = _documented_example()
    assert set(files) == {"project.toml", "cores.csv", "intervals.csv", "picks.csv"}
    for name, content in files.items():
        (tmp_path / name).write_text(content, encoding="utf-8")
    with pytest.warns(PaleomapWarning, match=r"'LB-02' has 1 gap.*11\.5-12"):
        project = load_project(tmp_path / "project.toml")
    assert project.name == "Lagoon Bay"
    assert len(project.cores) == 4
    assert sum(len(c.intervals) for c in project.cores) == 10
    assert sum(len(c.picks) for c in project.cores) == 10
    assert len(project.surfaces) == 3 and len(project.slices) == 3
    assert len(project.warnings) == 1
    assert project.scheme.name == "shoreface_shelf"
    assert project.scheme.belts[5].color == "#2b4b7a"  # offshore, the documented override
    # the example's facies words are ids and aliases in several spellings
    ranks = {c.core_id: [i.rank for i in c.intervals] for c in project.cores}
    assert ranks["LB-01"] == [4, 3, 1] and ranks["LB-02"] == [5, 3, 0]
    assert [s.erosional for s in project.surfaces] == [False, True, False]
