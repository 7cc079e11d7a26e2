"""Spreadsheet tables (.xlsx, .ods) and the column mapping of [inputs.columns]."""

from __future__ import annotations

import io

import pandas as pd
import pytest
from click.testing import CliRunner
from conftest import CORES, INTERVALS, PICKS, write_project

from paleomap.cli import main
from paleomap.errors import InputError
from paleomap.io.readers import load_project
from paleomap.io.sheets import read_sheet_table

# The default project's tables with the column names an interpretation package or a
# field sheet might use.
_RENAMED = {
    "cores": {"core_id": "UWI", "x": "Easting", "y": "Northing", "elevation": "GL"},
    "intervals": {"core_id": "UWI", "top": "From", "base": "To", "facies": "Lithofacies"},
    "picks": {"core_id": "UWI", "surface": "Horizon", "depth": "Depth"},
}


def _frame(text: str, table: str) -> pd.DataFrame:
    frame = pd.read_csv(io.StringIO(text), dtype=object, keep_default_na=False)
    return frame.rename(columns=_RENAMED[table])


def _write_book(path, sheets: dict[str, pd.DataFrame], startrow: int = 0) -> None:
    engine = "odf" if path.suffix == ".ods" else "openpyxl"
    with pd.ExcelWriter(path, engine=engine) as writer:
        for name, frame in sheets.items():
            frame.to_excel(writer, sheet_name=name, index=False, startrow=startrow)


def _numeric(frame: pd.DataFrame) -> pd.DataFrame:
    """Numbers as numbers, as a spreadsheet holds them."""
    out = frame.copy()
    for column in out:
        converted = pd.to_numeric(out[column], errors="coerce")
        if converted.notna().all():
            out[column] = converted
    return out


def _sheet_project(tmp_path, suffix: str, *, intervals=None, startrow=0):
    book = tmp_path / f"basin{suffix}"
    _write_book(
        book,
        {
            "Wells": _numeric(_frame(CORES, "cores")),
            "Tops": _numeric(_frame(PICKS, "picks")),
            "Facies": _numeric(
                intervals if intervals is not None else _frame(INTERVALS, "intervals")
            ),
        },
        startrow=startrow,
    )
    keys = {
        "inputs.cores": book.name,
        "inputs.intervals": book.name,
        "inputs.picks": book.name,
        "inputs.sheets": {"cores": "Wells", "intervals": "Facies", "picks": "Tops"},
        "inputs.columns": {
            "core_id": "UWI",
            "cores": {"x": "Easting", "y": "Northing", "elevation": "GL"},
            "intervals": {"top": "From", "base": "To", "facies": "Lithofacies"},
            "picks": {"surface": "Horizon", "depth": "Depth"},
        },
    }
    return write_project(tmp_path, keys=keys, cores=None, intervals=None, picks=None)


@pytest.mark.parametrize("suffix", [".xlsx", ".ods"])
def test_a_spreadsheet_project_with_renamed_columns_reads_like_the_csv_one(tmp_path, suffix):
    csv_project = load_project(write_project(tmp_path / "csv"))
    sheet_project = load_project(_sheet_project(tmp_path, suffix, startrow=2))
    assert sheet_project.cores == tuple(
        c.__class__(**{**c.__dict__, "intervals": s.intervals, "picks": s.picks, "line": s.line})
        for c, s in zip(csv_project.cores, sheet_project.cores, strict=True)
    )
    for a, b in zip(csv_project.cores, sheet_project.cores, strict=True):
        assert [(iv.top, iv.base, iv.rank) for iv in a.intervals] == [
            (iv.top, iv.base, iv.rank) for iv in b.intervals
        ]
        assert [(p.surface, p.depth) for p in a.picks] == [(p.surface, p.depth) for p in b.picks]
    # Rows as the spreadsheet shows them: two blank rows, the header on row 3.
    assert sheet_project.cores[0].line == 4


@pytest.mark.slow
def test_a_spreadsheet_project_with_renamed_columns_builds(tmp_path):
    path = _sheet_project(tmp_path, ".xlsx")
    out = tmp_path / "build"
    result = CliRunner().invoke(main, ["build", str(path), "--out", str(out), "--no-figures"])
    assert result.exit_code == 0, result.output
    assert (out / "paleomap.gpkg").is_file()


@pytest.mark.parametrize("suffix", [".xlsx", ".ods"])
def test_a_bad_cell_names_the_file_sheet_row_and_column_as_written(tmp_path, suffix):
    intervals = _frame(INTERVALS, "intervals")
    intervals.loc[3, "From"] = "abc"  # the 4th data row: sheet row 5
    intervals.loc[6, "Lithofacies"] = "marl"
    path = _sheet_project(tmp_path, suffix, intervals=intervals)
    with pytest.raises(InputError) as info:
        load_project(path)
    text = str(info.value)
    book = f"basin{suffix}"
    assert f"{book}, sheet 'Facies', row 5, column 'From': is not a number (got 'abc')" in text
    assert f"{book}, sheet 'Facies', row 8, column 'Lithofacies': is not a facies" in text


def test_a_missing_mapped_column_names_the_users_column(tmp_path):
    intervals = _frame(INTERVALS, "intervals").drop(columns=["To"])
    path = _sheet_project(tmp_path, ".xlsx", intervals=intervals)
    with pytest.raises(
        InputError, match=r"sheet 'Facies', row 1, column 'To': is a missing column"
    ):
        load_project(path)


def test_an_unknown_sheet_lists_the_sheets(tmp_path):
    path = _sheet_project(tmp_path, ".xlsx")
    text = path.read_text().replace('picks = "Tops"', 'picks = "Horizons"')
    path.write_text(text)
    with pytest.raises(InputError, match=r"has no such sheet \(got 'Horizons'\). Its sheets are"):
        load_project(path)


def test_a_file_that_is_not_a_spreadsheet(tmp_path):
    path = _sheet_project(tmp_path, ".xlsx")
    (tmp_path / "basin.xlsx").write_text("core_id,x,y\n")
    with pytest.raises(InputError, match=r"basin.xlsx: cannot be read as a spreadsheet"):
        load_project(path)


def test_the_csv_path_takes_the_column_mapping_too(tmp_path):
    cores = CORES.replace("core_id,x,y,elevation", "Well,X_utm,Y_utm,elevation")
    path = write_project(
        tmp_path,
        cores=cores.replace("C3,500000", "C3,5e5x"),
        keys={"inputs.columns": {"cores": {"core_id": "Well", "x": "X_utm", "y": "Y_utm"}}},
    )
    with pytest.raises(InputError, match=r"cores.csv, line 4, column 'X_utm': is not a number"):
        load_project(path)


def test_a_mapped_column_hides_the_column_of_paleomaps_name(tmp_path):
    # A file with both "core_id" (a running number) and "UWI": the mapping says which.
    cores = "core_id,UWI,x,y\n" + "".join(
        f"{i},{','.join(line.split(',')[:3])}\n" for i, line in enumerate(CORES.splitlines()[1:])
    )
    project = load_project(
        write_project(tmp_path, cores=cores, keys={"inputs.columns": {"cores": {"core_id": "UWI"}}})
    )
    assert [c.core_id for c in project.cores] == ["C1", "C2", "C3", "C4"]


@pytest.mark.parametrize(
    ("columns", "match"),
    [
        ({"depth_m": "Depth"}, r"column 'inputs.columns.depth_m': is not a column paleomap reads"),
        ({"cores": {"top": "From"}}, r"'inputs.columns.cores.top': is not a column of the cores"),
        ({"core_id": 5}, r"'inputs.columns.core_id': must be a column name in quotes"),
    ],
    ids=["unknown-name", "wrong-table", "not-text"],
)
def test_bad_column_mappings_are_refused(tmp_path, columns, match):
    with pytest.raises(InputError, match=match):
        load_project(write_project(tmp_path, keys={"inputs.columns": columns}))


def test_read_sheet_table_skips_blank_rows_and_ignores_trailing_empty_columns(tmp_path):
    path = tmp_path / "t.xlsx"
    frame = pd.DataFrame({"core_id": ["A", None, "B"], "x": [1.0, None, 2.5], "": [None] * 3})
    frame.to_excel(path, index=False)
    table = read_sheet_table(path, ("core_id", "x"))
    assert table.to_dict("list") == {"core_id": ["A", "B"], "x": ["1", "2.5"], "line": [2, 4]}
