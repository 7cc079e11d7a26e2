"""Shared edge cases, reused across test files with ``parametrize(ids=...)``.

``INVALID`` lists projects broken in one way each, built from the default project of
``conftest.write_project``, with where the problem must be reported: the file, the line
(a CSV line counting the header as 1, or the TOML line holding ``toml_line``), the
column and the offending value.
"""

from __future__ import annotations

from dataclasses import dataclass

from conftest import CORES, INTERVALS, PICKS, REMOVE

__all__ = ["INVALID", "Broken", "ids", "replace_line"]


def replace_line(text: str, line: int, new: str | None) -> str:
    """``text`` with its ``line`` (1-based) replaced by ``new`` (None deletes it)."""
    lines = text.splitlines()
    if new is None:
        del lines[line - 1]
    else:
        lines[line - 1] = new
    return "\n".join(lines) + "\n"


@dataclass(frozen=True)
class Broken:
    """A project broken in one way and where the problem must be reported.

    ``line`` is a CSV line; for the TOML file give ``toml_line``, a piece of text whose
    first line in the written TOML is the expected line (None: no line expected).
    """

    id: str
    project: dict
    file: str
    message: str
    value: object = None
    column: str | None = None
    line: int | None = None
    toml_line: str | None = None
    occurrence: int = 1

    def expected_line(self, toml_text: str) -> int | None:
        if self.toml_line is None:
            return self.line
        seen = 0
        for i, text in enumerate(toml_text.splitlines(), start=1):
            if self.toml_line in text:
                seen += 1
                if seen == self.occurrence:
                    return i
        raise AssertionError(f"{self.toml_line!r} is not in the TOML text")


_CUSTOM_BELTS = [
    {"id": "alluvial", "marine": False},
    {"id": "beach", "marine": True},
    {"id": "lagoon", "marine": False},
    {"id": "offshore", "marine": True},
]

INVALID = [
    # -- files and columns ------------------------------------------------------------------
    Broken(
        "missing-file",
        {"picks": None},
        "project.toml",
        "names a file that does not exist",
        "picks.csv",
        "inputs.picks",
        toml_line='picks = "picks.csv"',
    ),
    Broken(
        "missing-column",
        {"intervals": replace_line(INTERVALS, 1, "core_id,top,base,lithology")},
        "intervals.csv",
        "is a missing column",
        None,
        "facies",
        1,
    ),
    Broken("empty-file", {"intervals": ""}, "intervals.csv", "is empty", line=1),
    Broken(
        "header-only",
        {"picks": "core_id,surface,depth\n"},
        "picks.csv",
        "has a header but no rows",
        line=1,
    ),
    Broken(
        "wrong-field-count",
        {"intervals": replace_line(INTERVALS, 3, "C1,10,20,silt,extra")},
        "intervals.csv",
        "has 5 fields but the header has 4",
        "C1,10,20,silt,extra",
        None,
        3,
    ),
    Broken(
        "not-utf8",
        {"cores": CORES.encode() + "C5,1,2,caf\u00e9\n".encode("latin-1")},
        "cores.csv",
        "is not UTF-8 text",
        line=6,
    ),
    # -- numbers ------------------------------------------------------------------------------
    Broken(
        "non-numeric",
        {"intervals": replace_line(INTERVALS, 2, "C1,abc,10,clay")},
        "intervals.csv",
        "is not a number",
        "abc",
        "top",
        2,
    ),
    Broken(
        "decimal-comma",
        {"picks": replace_line(PICKS, 2, 'C1,s_young,"5,5"')},
        "picks.csv",
        "write a point as the decimal separator",
        "5,5",
        "depth",
        2,
    ),
    Broken(
        "nan-depth",
        {"picks": replace_line(PICKS, 2, "C1,s_young,nan")},
        "picks.csv",
        "is not a finite number",
        "nan",
        "depth",
        2,
    ),
    Broken(
        "inf-coordinate",
        {"cores": replace_line(CORES, 2, "C1,inf,4000000,10")},
        "cores.csv",
        "is not a finite number",
        "inf",
        "x",
        2,
    ),
    Broken(
        "empty-number",
        {"intervals": replace_line(INTERVALS, 4, "C1,20,,fine_sand")},
        "intervals.csv",
        "is empty",
        "",
        "base",
        4,
    ),
    Broken(
        "negative-depth",
        {"intervals": replace_line(INTERVALS, 2, "C1,-2,10,clay")},
        "intervals.csv",
        "is a negative depth",
        -2.0,
        "top",
        2,
    ),
    # -- intervals ------------------------------------------------------------------------------
    Broken(
        "top-not-above-base",
        {"intervals": replace_line(INTERVALS, 3, "C1,20,10,silt")},
        "intervals.csv",
        "is not below the top",
        10.0,
        "base",
        3,
    ),
    Broken(
        "top-equals-base",
        {"intervals": replace_line(INTERVALS, 3, "C1,10,10,silt")},
        "intervals.csv",
        "is not below the top",
        10.0,
        "base",
        3,
    ),
    Broken(
        "overlap",
        {"intervals": replace_line(INTERVALS, 3, "C1,8,20,silt")},
        "intervals.csv",
        "overlaps the interval 0-10 on line 2",
        8.0,
        "top",
        3,
    ),
    Broken(
        "unknown-facies",
        {"intervals": replace_line(INTERVALS, 2, "C1,0,10,marl")},
        "intervals.csv",
        "is not a facies of the 'siliciclastic_lithology' scheme",
        "marl",
        "facies",
        2,
    ),
    # -- cores ----------------------------------------------------------------------------------
    Broken(
        "duplicate-core",
        {"cores": CORES + "C1,510000,4000000,3\n"},
        "cores.csv",
        "is a duplicate core id (first on line 2)",
        "C1",
        "core_id",
        6,
    ),
    Broken(
        "interval-core-not-in-cores",
        {"intervals": INTERVALS + "C9,0,10,clay\n"},
        "intervals.csv",
        "is not in cores.csv",
        "C9",
        "core_id",
        18,
    ),
    Broken(
        "pick-core-not-in-cores",
        {"picks": PICKS + "C9,s_young,5\n"},
        "picks.csv",
        "is not in cores.csv",
        "C9",
        "core_id",
        14,
    ),
    Broken(
        "geographic-out-of-range",
        {
            "keys": {"project.crs": "EPSG:4326"},
            "cores": "core_id,x,y\nC1,2.0,40.0\nC2,2.1,95.0\nC3,2.0,40.1\nC4,2.1,40.1\n",
        },
        "cores.csv",
        "could not be projected to the working CRS",
        (2.1, 95.0),
        "x",
        3,
    ),
    # -- picks ----------------------------------------------------------------------------------
    Broken(
        "pick-outside-core",
        {"picks": replace_line(PICKS, 2, "C1,s_young,45")},
        "picks.csv",
        "is outside the logged range 0-40",
        45.0,
        "depth",
        2,
    ),
    Broken(
        "surface-order",
        {"picks": replace_line(PICKS, 3, "C1,s_mid,26")},
        "picks.csv",
        "surface 's_mid' (age 200) lies below surface 's_old' (age 300",
        26.0,
        "depth",
        3,
    ),
    Broken(
        "same-depth-not-erosional",
        {"picks": replace_line(PICKS, 3, "C1,s_mid,5")},
        "picks.csv",
        "of different ages are picked at one depth",
        5.0,
        "depth",
        3,
    ),
    Broken(
        "unknown-surface",
        {"picks": replace_line(PICKS, 2, "C1,s_unknown,5")},
        "picks.csv",
        "is not a surface of the project",
        "s_unknown",
        "surface",
        2,
    ),
    Broken(
        "duplicate-pick",
        {"picks": PICKS + "C1,s_young,6\n"},
        "picks.csv",
        "is picked twice (first on line 2)",
        "s_young",
        "surface",
        14,
    ),
    # -- project file -----------------------------------------------------------------------------
    Broken(
        "age-negative",
        {"keys": {"surfaces[2].age": -200.0}},
        "project.toml",
        "is not a positive number",
        -200.0,
        "surfaces[2].age",
        toml_line="age = -200.0",
    ),
    Broken(
        "age-zero",
        {"keys": {"surfaces[1].age": 0}},
        "project.toml",
        "is not a positive number",
        0,
        "surfaces[1].age",
        toml_line="age = 0",
    ),
    Broken(
        "age-not-a-number",
        {"keys": {"surfaces[1].age": "100"}},
        "project.toml",
        "must be a number",
        "100",
        "surfaces[1].age",
        toml_line='age = "100"',
    ),
    Broken(
        "age-sd-negative",
        {"keys": {"surfaces[3].age_sd": -1.0}},
        "project.toml",
        "is negative",
        -1.0,
        "surfaces[3].age_sd",
        toml_line="age_sd = -1.0",
    ),
    Broken(
        "duplicate-surface",
        {"keys": {"surfaces[3].name": "s_young"}},
        "project.toml",
        "is used by two surfaces (also surface 1)",
        "s_young",
        "surfaces[3].name",
        toml_line='name = "s_young"',
        occurrence=2,
    ),
    Broken(
        "unknown-crs",
        {"keys": {"project.crs": "EPSG:999999"}},
        "project.toml",
        "is not a CRS pyproj knows",
        "EPSG:999999",
        "project.crs",
        toml_line="crs =",
    ),
    Broken(
        "missing-crs",
        {"keys": {"project.crs": REMOVE}},
        "project.toml",
        "is missing: paleomap never assumes a CRS",
        None,
        "project.crs",
        toml_line="[project]",
    ),
    Broken(
        "crs-in-feet",
        {"keys": {"project.crs": "EPSG:2236"}},
        "project.toml",
        "not metres",
        "EPSG:2236",
        "project.crs",
        toml_line="crs =",
    ),
    Broken(
        "toml-syntax",
        {"toml": '[project]\nname = "x"\ncrs = "EPSG:32631\n[grid]\ncell_size = 5\n'},
        "project.toml",
        "is not valid TOML",
        line=3,
    ),
    Broken(
        "toml-syntax-missing-value",
        {"toml": '[project]\nname = "x"\n\n[grid]\ncell_size =\n'},
        "project.toml",
        "is not valid TOML",
        "cell_size =",
        line=5,
    ),
    Broken(
        "unknown-key",
        {"keys": {"grid.cel_size": 5}},
        "project.toml",
        "is not a known key",
        "cel_size",
        "grid.cel_size",
        toml_line="cel_size",
    ),
    Broken(
        "unknown-table",
        {"config": {"maping": {"model": "auto"}}},
        "project.toml",
        "is not a known table",
        "maping",
        "maping",
        toml_line="[maping]",
    ),
    Broken(
        "bad-depth-unit",
        {"keys": {"inputs.depth_unit": "km"}},
        "project.toml",
        "is not allowed",
        "km",
        "inputs.depth_unit",
        toml_line="depth_unit",
    ),
    Broken(
        "bad-age-unit",
        {"keys": {"time.age_unit": "yr"}},
        "project.toml",
        "is not allowed",
        "yr",
        "time.age_unit",
        toml_line="age_unit",
    ),
    Broken(
        "missing-table",
        {"keys": {"grid": REMOVE}},
        "project.toml",
        "the table [grid] is missing",
        None,
        "grid",
        toml_line='at = "surfaces"',  # [grid] is gone: the last line of the file
    ),
    Broken(
        "cell-size-zero",
        {"keys": {"grid.cell_size": 0}},
        "project.toml",
        "is out of range",
        0,
        "grid.cell_size",
        toml_line="cell_size",
    ),
    Broken(
        "anisotropy-too-large",
        {"config": {"mapping": {"anisotropy": 1.5}}},
        "project.toml",
        "is out of range",
        1.5,
        "mapping.anisotropy",
        toml_line="anisotropy",
    ),
    Broken(
        "samples-not-whole",
        {"config": {"mapping": {"samples": 10.5}}},
        "project.toml",
        "must be a whole number",
        10.5,
        "mapping.samples",
        toml_line="samples",
    ),
    Broken(
        "bad-model",
        {"config": {"mapping": {"model": "cubic"}}},
        "project.toml",
        "is not allowed",
        "cubic",
        "mapping.model",
        toml_line="model",
    ),
    Broken(
        "bad-slice-name",
        {"keys": {"slices.at": [150.0, "s_mid", "nope"]}},
        "project.toml",
        "is not a surface name",
        "nope",
        "slices.at[3]",
        toml_line="at =",
    ),
    Broken(
        "slice-age-negative",
        {"keys": {"slices.at": [-5.0]}},
        "project.toml",
        "is not a positive number",
        -5.0,
        "slices.at[1]",
        toml_line="at =",
    ),
    # -- schemes ----------------------------------------------------------------------------------
    Broken(
        "marine-not-contiguous",
        {"config": {"scheme": {"builtin": REMOVE, "track": REMOVE, "belts": _CUSTOM_BELTS}}},
        "project.toml",
        "marine belts are not one contiguous distal run",
        ["beach", "offshore"],
        "scheme.belts",
        toml_line="belts =",
    ),
    Broken(
        "track-not-adjacent",
        {"keys": {"scheme.track": ["gravel", "silt"]}},
        "project.toml",
        "the two belts are not adjacent in the scheme",
        ["gravel", "silt"],
        "scheme.track",
        toml_line="track =",
    ),
    Broken(
        "track-unknown-belt",
        {"keys": {"scheme.track": ["gravel", "sandstone"]}},
        "project.toml",
        "names unknown belts",
        ["gravel", "sandstone"],
        "scheme.track",
        toml_line="track =",
    ),
    Broken(
        "unknown-builtin",
        {"keys": {"scheme.builtin": "evaporite"}},
        "project.toml",
        "is not a built-in scheme",
        "evaporite",
        "scheme.builtin",
        toml_line="builtin =",
    ),
    Broken(
        "belt-unknown-key",
        {
            "config": {
                "scheme": {
                    "builtin": REMOVE,
                    "track": REMOVE,
                    "belts": [
                        {"id": "land", "marine": False},
                        {"id": "sea", "marine": True, "colour": "#112233"},
                    ],
                }
            }
        },
        "project.toml",
        "is not a known key",
        "colour",
        "scheme.belts[2].colour",
        toml_line='id = "sea"',
    ),
    Broken(
        "bad-color-override",
        {"keys": {"scheme.colors": {"gravel": "brown"}}},
        "project.toml",
        "is not a colour",
        "brown",
        "scheme.colors.gravel",
        toml_line="colors =",
    ),
]


def ids(cases) -> list[str]:
    """Test ids of a list of cases."""
    return [c.id for c in cases]
