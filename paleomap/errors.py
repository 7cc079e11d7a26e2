"""Errors and warnings raised by paleomap.

Every error paleomap raises on purpose derives from :class:`PaleomapError`; the
subclasses also inherit the built-in exception they mean, so ``except ValueError``
keeps working for callers who do not know paleomap.

Input validation collects every problem it finds into :class:`Problem` records and
raises one :class:`InputError` holding all of them, so a user can fix a file in one
pass.

Examples
--------
>>> from paleomap.errors import InputError, Problem
>>> p = Problem("intervals.csv", 7, "top", "abc", "is not a number")
>>> str(p)
"intervals.csv, line 7, column 'top': is not a number (got 'abc')"
"""

from __future__ import annotations

import warnings
from collections.abc import Iterable
from dataclasses import dataclass

__all__ = [
    "InputError",
    "BuildBusyError",
    "BuildWriteError",
    "OutputExistsError",
    "PaleomapError",
    "PaleomapWarning",
    "Problem",
    "ProblemLog",
]


class PaleomapError(Exception):
    """Root of every error paleomap raises on purpose."""


class OutputExistsError(PaleomapError, FileExistsError):
    """An output already exists and replacing it was not asked for."""


class BuildBusyError(PaleomapError, BlockingIOError):
    """Another paleomap process is writing the same build folder right now."""


class BuildWriteError(PaleomapError, OSError):
    """The system refused to write a build (no permission, disk full, busy mount point).

    Raised only after the temporary folder is removed; the previous build is whole.
    """


class PaleomapWarning(UserWarning):
    """Something in the data deserves a look but does not stop the work."""


_MISSING = object()


@dataclass(frozen=True)
class Problem:
    """One problem found in the user's input.

    Parameters
    ----------
    file : str or None
        The file, as the user named it (relative to the project file where possible).
    line : int or None
        CSV row number counting the header as line 1, or the TOML line.
    column : str or None
        CSV column or TOML key (dotted, e.g. ``"grid.cell_size"``).
    value : object
        The offending value, repeated with ``!r`` in the message.
    message : str
        What is wrong, e.g. ``"is not a number"``.
    hint : str or None
        What is allowed, or how to fix it.
    place : str or None
        Where in the file, for files that are not plain text tables: a spreadsheet's
        ``"sheet 'Cores', row 5"``, a LAS file's ``"~Well section, mnemonic 'WELL'"``,
        an AGS4 file's ``"group GEOL, row 3"``. Shown after the line.

    Examples
    --------
    >>> str(Problem("wells.xlsx", None, "UWI", "", "is empty", place="sheet 'Cores', row 4"))
    "wells.xlsx, sheet 'Cores', row 4, column 'UWI': is empty (got '')"
    """

    file: str | None
    line: int | None
    column: str | None
    value: object
    message: str
    hint: str | None = None
    place: str | None = None

    def location(self) -> str:
        parts = []
        if self.file:
            parts.append(str(self.file))
        if self.line is not None:
            parts.append(f"line {self.line}")
        if self.place:
            parts.append(self.place)
        if self.column:
            parts.append(f"column {self.column!r}")
        return ", ".join(parts)

    def __str__(self) -> str:
        where = self.location()
        text = f"{where}: {self.message}" if where else self.message
        if self.value is not _MISSING and self.value is not None:
            text += f" (got {self.value!r})"
        if self.hint:
            text += f". {self.hint[:1].upper()}{self.hint[1:]}"
        return text


class InputError(PaleomapError, ValueError):
    """The user's input breaks the input contract.

    Holds every :class:`Problem` found, in the order found.

    Examples
    --------
    >>> err = InputError([Problem("cores.csv", 3, "x", "", "is empty")])
    >>> err.problems[0].line
    3
    """

    def __init__(self, problems: Iterable[Problem] | str):
        if isinstance(problems, str):
            problems = [Problem(None, None, None, None, problems)]
        self.problems: tuple[Problem, ...] = tuple(problems)
        super().__init__(self._text())

    def _text(self) -> str:
        if len(self.problems) == 1:
            return str(self.problems[0])
        lines = [f"{len(self.problems)} problems in the input:"]
        lines += [f"  - {p}" for p in self.problems]
        return "\n".join(lines)


class ProblemLog:
    """Collects problems and warnings during validation, then raises once.

    Examples
    --------
    >>> log = ProblemLog()
    >>> log.error("picks.csv", 4, "depth", "nan", "is not a number")
    >>> log.has_errors
    True
    """

    def __init__(self) -> None:
        self.errors: list[Problem] = []
        self.warnings: list[Problem] = []

    def error(self, file, line, column, value, message, hint=None, *, place=None) -> None:
        self.errors.append(Problem(_s(file), line, column, value, message, hint, place))

    def warn(self, file, line, column, value, message, hint=None, *, place=None) -> None:
        self.warnings.append(Problem(_s(file), line, column, value, message, hint, place))

    @property
    def has_errors(self) -> bool:
        return bool(self.errors)

    def raise_if_errors(self) -> None:
        """Raise one :class:`InputError` holding every error collected so far."""
        if self.errors:
            raise InputError(self.errors)

    def emit_warnings(self, stacklevel: int = 3) -> None:
        """Issue each collected warning as a :class:`PaleomapWarning`."""
        for w in self.warnings:
            warnings.warn(str(w), PaleomapWarning, stacklevel=stacklevel)


def _s(file) -> str | None:
    return None if file is None else str(file)
