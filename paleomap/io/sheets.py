"""Tables kept in spreadsheets: ``.xlsx`` (openpyxl) and ``.ods`` (odfpy), through pandas.

A sheet is read like a CSV file: the first row that is not blank is the header, column
names are matched ignoring case and surrounding spaces (after the column mapping of
``[inputs.columns]``), other columns are ignored and blank rows are skipped. Every cell
becomes text as a CSV file would hold it (a whole number without a decimal point, other
numbers as Python writes them, dates in ISO 8601), so the same validation reads both.
Rows are numbered as the spreadsheet shows them (the first row is 1); a problem names the
file, the sheet, the row and the column as written in the sheet.

Examples
--------
>>> import pandas as pd, tempfile, pathlib
>>> folder = pathlib.Path(tempfile.mkdtemp())
>>> frame = pd.DataFrame({"UWI": ["A-1", "B-2"], "Lon": [2.5, 3]})
>>> frame.to_excel(folder / "wells.xlsx", sheet_name="Wells", index=False)
>>> table = read_sheet_table(folder / "wells.xlsx", ("core_id", "x"),
...                          columns={"core_id": "UWI", "x": "Lon"})
>>> table.to_dict("list")
{'core_id': ['A-1', 'B-2'], 'x': ['2.5', '3'], 'line': [2, 3]}
"""

from __future__ import annotations

import datetime as _dt
import logging
import math
import os
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import ProblemLog
from .sources import header_names

__all__ = ["SHEET_SUFFIXES", "read_sheet_table", "sheet_place"]

logger = logging.getLogger(__name__)

SHEET_SUFFIXES = {".xlsx": "openpyxl", ".ods": "odf"}
"""Spreadsheet file suffixes paleomap reads and the pandas engine for each."""


def sheet_place(sheet: str, row: int | None = None) -> str:
    """How a problem's place in a spreadsheet is shown.

    >>> sheet_place("Cores", 5)
    "sheet 'Cores', row 5"
    """
    return f"sheet {sheet!r}" if row is None else f"sheet {sheet!r}, row {row}"


def read_sheet_table(
    path: str | os.PathLike,
    required: tuple[str, ...],
    optional: tuple[str, ...] = (),
    *,
    name: str | None = None,
    sheet: str | None = None,
    columns: dict | None = None,
    log: ProblemLog | None = None,
) -> pd.DataFrame | None:
    """Read one sheet of a spreadsheet as text cells, checking its structure.

    Parameters
    ----------
    path : str or path-like
        An ``.xlsx`` or ``.ods`` file.
    required, optional : tuple of str
        paleomap's column names. Other columns are ignored.
    name : str, optional
        The file's name in messages (default: ``path``).
    sheet : str, optional
        The sheet to read (default: the first).
    columns : dict, optional
        paleomap's column name to the name in the sheet.
    log : ProblemLog, optional
        Collects problems; without one an :class:`~paleomap.errors.InputError` is
        raised.

    Returns
    -------
    pandas.DataFrame or None
        The required and present optional columns as text, plus ``line`` (the row
        number the spreadsheet shows). The attribute ``attrs["sheet"]`` holds the sheet
        read and ``attrs["headers"]`` each column's name as written. None when the sheet
        cannot be used (the problem is logged).
    """
    own = log is None
    log = ProblemLog() if log is None else log
    path = Path(path)
    shown = name or str(path)
    table = _read(path, shown, required, optional, sheet, columns or {}, log)
    if own:
        log.raise_if_errors()
    return table


def _read(path, shown, required, optional, sheet, columns, log):
    engine = SHEET_SUFFIXES.get(path.suffix.lower())
    if engine is None:
        log.error(
            shown,
            None,
            None,
            path.suffix,
            "is not a spreadsheet paleomap reads",
            f"give an {' or '.join(SHEET_SUFFIXES)} file",
        )
        return None
    try:
        book = pd.ExcelFile(path, engine=engine)
    except Exception as exc:  # zip, XML and format errors all mean "cannot read this file"
        log.error(
            shown,
            None,
            None,
            None,
            f"cannot be read as a spreadsheet: {exc}",
            "save it again from the spreadsheet program as .xlsx or .ods",
        )
        return None
    with book:
        names = [str(s) for s in book.sheet_names]
        if sheet is None:
            if not names:
                log.error(shown, None, None, None, "has no sheet")
                return None
            sheet = names[0]
        elif sheet not in names:
            log.error(
                shown,
                None,
                None,
                sheet,
                "has no such sheet",
                f"its sheets are {names}; name one in [inputs.sheets]",
            )
            return None
        try:
            raw = book.parse(sheet, header=None, dtype=object)
        except Exception as exc:  # a damaged sheet
            log.error(
                shown,
                None,
                None,
                None,
                f"cannot be read as a spreadsheet: {exc}",
                "save it again from the spreadsheet program as .xlsx or .ods",
                place=sheet_place(sheet),
            )
            return None
    rows = [
        (i + 1, [_cell(v) for v in values])
        for i, values in enumerate(raw.itertuples(index=False, name=None))
    ]
    rows = [(row, cells) for row, cells in rows if any(cells)]
    example = ", ".join(columns.get(c, c) for c in required)
    if not rows:
        log.error(
            shown,
            None,
            None,
            None,
            "is empty",
            f"it needs a header row: {example}",
            place=sheet_place(sheet),
        )
        return None
    (header_row, header), *rows = rows
    # Trailing empty header cells are the sheet's used range, not unnamed columns.
    while header and not header[-1]:
        header.pop()
    names = header_names(header, columns)
    bad = False
    for i, n in enumerate(names):
        if not n:
            if any(len(cells) > i and cells[i] for _, cells in rows):
                log.error(
                    shown,
                    None,
                    None,
                    "",
                    f"column {i + 1} has no name",
                    "give every column with values a name",
                    place=sheet_place(sheet, header_row),
                )
                bad = True
        elif names.index(n) != i:
            log.error(
                shown,
                None,
                header[i],
                header[i],
                "is a column name used twice",
                place=sheet_place(sheet, header_row),
            )
            bad = True
    missing = [c for c in required if c not in names]
    for c in missing:
        log.error(
            shown,
            None,
            columns.get(c, c),
            None,
            "is a missing column",
            f"the header has {header}; required columns: {[columns.get(r, r) for r in required]}",
            place=sheet_place(sheet, header_row),
        )
    if missing or bad:
        return None
    if not rows:
        log.error(
            shown,
            None,
            None,
            None,
            "has a header but no rows",
            "add at least one row",
            place=sheet_place(sheet, header_row),
        )
        return None
    keep = list(required) + [c for c in optional if c in names]
    index = [names.index(c) for c in keep]
    records: dict[str, list] = {
        c: [cells[i] if i < len(cells) else "" for _, cells in rows]
        for c, i in zip(keep, index, strict=True)
    }
    table = pd.DataFrame(records, dtype=object)
    table["line"] = pd.Series([row for row, _ in rows], dtype="int64")
    table.attrs["sheet"] = sheet
    table.attrs["headers"] = {c: header[i] for c, i in zip(keep, index, strict=True)}
    logger.debug("read %d rows of sheet %r of %s", len(table), sheet, shown)
    return table


def _cell(value) -> str:
    """A spreadsheet cell as the text a CSV file would hold.

    >>> _cell(3.0), _cell(2.5), _cell(None), _cell(float("nan")), _cell(" a ")
    ('3', '2.5', '', '', 'a')
    """
    if value is None:
        return ""
    if isinstance(value, bool | np.bool_):
        return "TRUE" if value else "FALSE"
    if isinstance(value, int | np.integer):
        return str(int(value))
    if isinstance(value, float | np.floating):
        if math.isnan(value):
            return ""
        if math.isfinite(value) and float(value).is_integer() and abs(value) < 1e15:
            return str(int(value))
        return repr(float(value))
    if isinstance(value, pd.Timestamp | _dt.datetime | _dt.date):
        return value.isoformat()
    return str(value).strip()
