"""Where the rows of an assembled table came from, to report problems in place.

Validation (:func:`paleomap.io.core_tables.build_cores`) reports a problem at a table's name,
line and column. For a table that is not a plain CSV file that place means little, so
:class:`Origins` remembers where each row came from (a spreadsheet's sheet and row, a LAS
file's line and section, an AGS4 group's row) and :meth:`Origins.relocate` puts each
problem back where the user can find it.

Examples
--------
>>> from paleomap.errors import ProblemLog
>>> origins = Origins()
>>> origins.add_sheet("wells.xlsx, sheet 'W'", "wells.xlsx", "W", {"core_id": "UWI"})
>>> log = ProblemLog()
>>> log.error("wells.xlsx, sheet 'W'", 4, "core_id", "", "is empty")
>>> origins.relocate(log)
>>> str(log.errors[0])
"wells.xlsx, sheet 'W', row 4, column 'UWI': is empty (got '')"
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

from ..errors import Problem, ProblemLog
from .sheets import sheet_place

__all__ = ["Origins", "Where"]


@dataclass(frozen=True)
class Where:
    """Where one row of an assembled table came from.

    Parameters
    ----------
    file : str
        The file as named in messages.
    line : int or None
        Its text line, where it has one.
    place : str or None
        Where in the file besides the line (``"~ASCII section"``, ``"group GEOL, row 3"``).
    columns : dict
        paleomap's column name to the name the file uses (a curve mnemonic, an AGS4
        heading), or to the :class:`Where` of a value kept elsewhere in the file (a LAS
        header mnemonic), for this row.
    """

    file: str
    line: int | None = None
    place: str | None = None
    columns: dict = field(default_factory=dict)


class Origins:
    """Where the rows of assembled tables came from, to report problems in place."""

    def __init__(self) -> None:
        self._columns: dict[str, dict] = {}
        self._sheets: dict[str, tuple[str, str]] = {}
        self._rows: dict[str, dict[int, Where]] = {}

    def add_columns(self, table: str, columns: dict) -> None:
        """A CSV table whose columns the user renamed."""
        if columns:
            self._columns[table] = dict(columns)

    def add_sheet(self, table: str, file: str, sheet: str, columns: dict) -> None:
        """A table read from a sheet: its lines are the sheet's rows."""
        self._sheets[table] = (file, sheet)
        self._columns[table] = dict(columns)

    def add_row(self, table: str, line: int, where: Where) -> None:
        """One row of a table made from a LAS or AGS4 file, under a line number of its own."""
        self._rows.setdefault(table, {})[line] = where

    def where(self, table: str, line: int) -> Where | None:
        """Where a row of a table made from a LAS or AGS4 file came from."""
        return self._rows.get(table, {}).get(line)

    def relocate(self, log: ProblemLog) -> None:
        """Rewrite the log's problems to name the place in the user's file."""
        log.errors[:] = [self.relocated(p) for p in log.errors]
        log.warnings[:] = [self.relocated(p) for p in log.warnings]

    def relocated(self, p: Problem) -> Problem:
        """One problem at its place in the user's file (unchanged when not assembled)."""
        table = p.file
        if table in self._rows:
            where = self._rows[table].get(p.line)
            if where is None:
                return p
            target = where.columns.get(p.column, p.column)
            if isinstance(target, Where):
                # A header value: its own line and place (a LAS mnemonic).
                return replace(
                    p, file=target.file, line=target.line, place=target.place, column=None
                )
            return replace(p, file=where.file, line=where.line, place=where.place, column=target)
        column = self._columns.get(table, {}).get(p.column, p.column)
        if table in self._sheets:
            file, sheet = self._sheets[table]
            return replace(p, file=file, line=None, place=sheet_place(sheet, p.line), column=column)
        return replace(p, column=column)
