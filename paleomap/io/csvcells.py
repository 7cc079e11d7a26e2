"""CSV files a spreadsheet opens safely: no text cell starts a formula.

A spreadsheet evaluates a cell that starts with ``=``, ``+``, ``-`` or ``@`` (and some
treat a leading tab or carriage return the same way), so a surface named
``=HYPERLINK(...)`` would run as a formula when ``rates.csv`` is opened. Every text
cell starting with one of those characters is written with a leading apostrophe,
which spreadsheets show as text (common practice for CSV exports, as in OWASP's
guidance on CSV injection, from memory). Numbers are written as numbers, so a
negative shift stays ``-120``.

Examples
--------
>>> import pandas as pd
>>> frame = pd.DataFrame({"surface": ["=1+1", "mfs"], "shift_m": [-120.0, 3.5]})
>>> print(csv_text(frame), end="")
surface,shift_m
'=1+1,-120
mfs,3.5
"""

from __future__ import annotations

import pandas as pd

__all__ = ["FORMULA_STARTS", "csv_text", "neutralise_cell"]

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
"""First characters that make a spreadsheet read a cell as a formula."""


def neutralise_cell(value):
    """``value`` with a leading apostrophe if it is text that would start a formula.

    Carriage returns inside text become line breaks (the cell is then quoted).

    Examples
    --------
    >>> neutralise_cell("@SUM(A1)"), neutralise_cell("s_mid"), neutralise_cell(-3.0)
    ("'@SUM(A1)", 's_mid', -3.0)
    """
    if not isinstance(value, str):
        return value
    if value.startswith(FORMULA_STARTS):
        value = "'" + value
    # A bare carriage return inside a cell is not quoted by the CSV writer and would
    # end the row early; as a line break it is quoted and read back whole.
    return value.replace("\r\n", "\n").replace("\r", "\n")


def csv_text(frame: pd.DataFrame, *, float_format: str = "%.6g") -> str:
    """The CSV text of ``frame`` (no index) with every text cell and header neutralised.

    Parameters
    ----------
    frame : pandas.DataFrame
    float_format : str
        Format of floating-point numbers.

    Returns
    -------
    str
    """
    out = frame.copy()
    for column in out.columns:
        if out[column].dtype == object or pd.api.types.is_string_dtype(out[column]):
            out[column] = out[column].map(neutralise_cell)
    out.columns = [neutralise_cell(str(c)) for c in out.columns]
    return out.to_csv(index=False, float_format=float_format)
