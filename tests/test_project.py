"""Tests of the project's settings: parsing the project file (paleomap.io.project_file),
key lines, slices, the working CRS (paleomap.crs)."""

from __future__ import annotations

import numpy as np
import pyproj
import pytest
from conftest import DEFAULT_CONFIG, to_toml

from paleomap.crs import working_crs_for
from paleomap.errors import InputError, ProblemLog
from paleomap.io.project_file import TomlLocator, parse_config
from paleomap.project import MappingSettings, MigrationSettings, Slice, age_name


def _config(**tables) -> str:
    cfg = {**DEFAULT_CONFIG, **tables}
    return to_toml(cfg)


def test_defaults_for_optional_tables():
    cfg = parse_config(_config())
    assert cfg.mapping == MappingSettings()
    assert cfg.migration == MigrationSettings()
    assert cfg.scheme.name == "siliciclastic_lithology"
    assert cfg.crs == pyproj.CRS("EPSG:32631")
    assert [s.name for s in cfg.surfaces] == ["s_young", "s_mid", "s_old"]
    assert cfg.surfaces[0].age_sd == 5.0 and cfg.surfaces[1].age_sd == 0.0
    assert cfg.surfaces[1].line == 19


def test_slices_default_to_surfaces_oldest_first():
    text = _config(slices={})
    assert [s.name for s in parse_config(text.replace("[slices]\n", "")).slices] == [
        "s_old",
        "s_mid",
        "s_young",
    ]


def test_slices_from_ages_and_surface_names():
    cfg = parse_config(_config(slices={"at": [125, "s_mid", 300.0, 2.5]}))
    assert cfg.slices == (
        Slice("s_old", 300.0, "s_old"),  # a free age equal to a surface's age is that slice
        Slice("s_mid", 200.0, "s_mid"),
        Slice("125ka", 125.0, None),
        Slice("2.5ka", 2.5, None),
    )


def test_slice_listed_twice():
    with pytest.raises(InputError, match=r"slices\.at\[2\]'.*is listed twice"):
        parse_config(_config(slices={"at": [200, "s_mid"]}))


@pytest.mark.parametrize(
    ("age", "unit", "name"),
    [(125.0, "ka", "125ka"), (2.5, "Ma", "2.5Ma"), (0.0117, "Ma", "0.0117Ma")],
    ids=["ka", "Ma", "holocene"],
)
def test_age_names(age, unit, name):
    assert age_name(age, unit) == name


def test_mapping_and_migration_settings_are_read():
    cfg = parse_config(
        _config(
            mapping={
                "model": "spherical",
                "range_m": 5000,
                "anisotropy": 0.5,
                "azimuth_deg": 30,
                "nugget": 0.1,
                "samples": 20,
                "burn_in": 5,
                "seed": 7,
                "deterministic": True,
                "neighbours": 12,
            },
            migration={"transect_spacing_m": 2000, "stillstand_m_per_kyr": 0.5},
        )
    )
    assert cfg.mapping == MappingSettings("spherical", 5000.0, 0.5, 30.0, 0.1, 20, 5, 7, True, 12)
    assert cfg.migration.transect_spacing_m == 2000.0
    assert cfg.migration.stillstand_m_per_kyr == 0.5


@pytest.mark.parametrize(
    ("key", "value", "message"),
    [
        ("nugget", 1.0, "Allowed: \\[0, 1\\)"),
        ("azimuth_deg", 360, "Allowed: \\[0, 360\\)"),
        ("samples", 0, "Allowed: \\[1, 10000\\]"),
        ("burn_in", -1, "Allowed: \\[0, 10000\\]"),
        ("neighbours", 2, "Allowed: \\[3, 1000\\]"),
        ("range_m", -5.0, "Allowed: \\(0, 1e\\+08\\]"),
        ("deterministic", "yes", "must be true or false"),
        ("seed", True, "must be a whole number"),
    ],
    ids=["nugget", "azimuth", "samples", "burn-in", "neighbours", "range", "flag", "bool-seed"],
)
def test_mapping_range_checks(key, value, message):
    with pytest.raises(InputError, match=rf"column 'mapping\.{key}'.*{message}"):
        parse_config(_config(mapping={key: value}))


def test_builtin_scheme_with_track_and_colour_overrides():
    cfg = parse_config(
        _config(
            scheme={
                "builtin": "siliciclastic_lithology",
                "track": ["fine_sand", "silt"],
                "colors": {"clay": "#102030"},
            }
        )
    )
    assert cfg.scheme.tracked_boundary == 3 and not cfg.scheme.tracks_shoreline
    assert cfg.scheme.belts[4].color == "#102030"
    assert cfg.scheme.belts[0].grain_size_mm == (2.0, 4096.0)  # built-in details are kept


def test_custom_scheme():
    belts = [
        {"id": "alluvial", "marine": False, "aliases": ["river", "floodplain"]},
        {"id": "shoreface", "marine": True, "color": "#eedd88", "label": "Shoreface sand"},
        {"id": "shelf", "marine": True},
    ]
    cfg = parse_config(_config(scheme={"belts": belts, "name": "delta"}))
    s = cfg.scheme
    assert s.name == "delta" and s.family == "custom"
    assert s.ids == ("alluvial", "shoreface", "shelf")
    assert s.rank("Floodplain") == 0 and s.shoreline_boundary == 1
    assert s.belts[1].color == "#eedd88" and s.belts[1].label == "Shoreface sand"
    assert s.belts[2].label == "shelf" and s.belts[0].color.startswith("#")


def test_scheme_needs_exactly_one_of_builtin_and_belts():
    with pytest.raises(InputError, match="needs exactly one of 'builtin' and 'belts'"):
        parse_config(_config(scheme={"name": "x"}))


def test_syntax_error_stops_early_but_cleanly():
    log = ProblemLog()
    cfg = parse_config("[project\nname = 1\n", "p.toml", log)
    assert cfg.name is None
    assert len(log.errors) == 1 and log.errors[0].line == 1


def test_every_problem_in_one_pass():
    text = _config(grid={"cell_size": -1, "margn": 5}, time={"age_unit": "years"})
    with pytest.raises(InputError) as info:
        parse_config(text, "x.toml")
    columns = {p.column for p in info.value.problems}
    assert {"grid.cell_size", "grid.margn", "time.age_unit"} <= columns
    assert all(p.file == "x.toml" for p in info.value.problems)


# -- locating keys ------------------------------------------------------------------------

LOCATOR_TEXT = """\
# a comment
title = "x"
[grid]
cell_size = 5   # metres
"quoted" = 1

[[surfaces]]
name = "a"
age = 1

[[surfaces]]
name = "b"
age = 2

[scheme]
belts = [
  { id = "land", marine = false },  # a comment, with a comma
  { id = "sea", marine = true, aliases = ["a, b", "c"] },
  {
    id = "deep",
    marine = true,
  },
]
colors = { land = "#000000", sea = "#ffffff" }

[[scheme.extra]]
key = 1
[[scheme.extra]]
key = 2
"""


@pytest.mark.parametrize(
    ("path", "line"),
    [
        (("title",), 2),
        (("grid",), 3),
        (("grid", "cell_size"), 4),
        (("grid", "quoted"), 5),
        (("grid", "missing"), 3),
        (("surfaces", 0, "age"), 9),
        (("surfaces", 1), 11),
        (("surfaces", 1, "age"), 13),
        (("scheme", "belts"), 16),
        (("scheme", "belts", 0), 17),
        (("scheme", "belts", 1, "aliases"), 18),
        (("scheme", "belts", 2), 19),
        (("scheme", "belts", 2, "marine"), 21),
        (("scheme", "colors", "sea"), 24),
        (("scheme", "extra", 1, "key"), 29),
        (("nowhere", "key"), None),
    ],
    ids=lambda v: str(v),
)
def test_toml_locator(path, line):
    assert TomlLocator(LOCATOR_TEXT).line_of(path) == line


def test_locator_finds_inline_surfaces():
    text = 'surfaces = [\n  { name = "a", age = 1 },\n  { name = "b", age = -2 },\n]\n'
    assert TomlLocator(text).line_of(("surfaces", 1, "age")) == 3


# -- working CRS --------------------------------------------------------------------------


def test_projected_crs_is_its_own_working_crs():
    crs = pyproj.CRS("EPSG:32631")
    assert working_crs_for(crs) == crs


def test_geographic_working_crs_is_true_azimuthal_equidistant_centred_on_the_cores():
    w = working_crs_for(pyproj.CRS("EPSG:4326"), [10.0, 12.0], [50.0, 52.0])
    assert w.coordinate_operation.method_code == "1125"  # EPSG: Azimuthal Equidistant
    t = pyproj.Transformer.from_crs("EPSG:4326", w, always_xy=True)
    e, n = t.transform([10.0, 12.0], [50.0, 52.0])
    assert abs(np.mean(e)) < 2000 and abs(np.mean(n)) < 2000
    assert [a.unit_name for a in w.axis_info] == ["metre", "metre"]


def test_working_crs_across_the_antimeridian():
    w = working_crs_for(pyproj.CRS("EPSG:4326"), [179.5, -179.5], [-16.0, -16.0])
    params = {p.name: p.value for p in w.coordinate_operation.params}
    assert abs(abs(params["Longitude of natural origin"]) - 180.0) < 1e-6


def test_geographic_working_crs_needs_positions():
    with pytest.raises(ValueError, match="needs core positions"):
        working_crs_for(pyproj.CRS("EPSG:4326"))


def test_compound_crs_uses_its_horizontal_part():
    crs = pyproj.CRS("EPSG:5555")  # ETRS89 / UTM 32N + DHHN92 height
    assert working_crs_for(crs).is_projected
    assert not working_crs_for(crs).is_compound


def test_crs_as_a_bare_epsg_number():
    text = _config().replace('crs = "EPSG:32631"', "crs = 32631")
    assert parse_config(text).crs == pyproj.CRS("EPSG:32631")
