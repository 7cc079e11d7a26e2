"""Relative sea-level histories for the forward model.

A history is a list of (age, level) points joined by straight lines. Ages grow into
the past (ka by default, Ma supported); levels are metres above the model's datum.
The history runs from its oldest point (the start) to its youngest (the end).

Examples
--------
>>> h = SeaLevelHistory([(100, -5.0), (50, 10.0), (0, 0.0)])
>>> float(h.level_at(75))
2.5
>>> h.start_age, h.end_age
(100.0, 0.0)
"""

from __future__ import annotations

import csv
import math
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError, Problem, ProblemLog
from ..project import AGE_UNITS

__all__ = ["DEFAULT_SEA_LEVEL", "SeaLevelHistory", "read_sea_level"]

DEFAULT_SEA_LEVEL = (
    (100.0, -6.0),
    (88.0, 4.0),
    (72.0, -8.0),
    (60.0, -12.0),
    (46.0, 4.0),
    (34.0, 12.0),
    (20.0, 0.0),
    (8.0, -6.0),
    (0.0, 6.0),
)
"""Default history (ka, m): an invented glacio-eustatic-like record over 100 kyr,
three rises and two falls of 10-24 m at 0.3-1.5 m/kyr (the order of the last
deglaciation's average rise, about 12 mm/yr, Lambeck et al. 2014), small enough that
the shoreline stays inside the default region on the default ramp."""


@dataclass(frozen=True)
class SeaLevelHistory:
    """A piecewise-linear relative sea-level history.

    Parameters
    ----------
    points : iterable of (age, level)
        At least two points with distinct, finite, non-negative ages; any order.
    age_unit : {"ka", "Ma"}
        Unit of the ages.

    Examples
    --------
    >>> SeaLevelHistory([(2.0, 0.0), (1.0, 5.0)], age_unit="Ma").ages_kyr.tolist()
    [2000.0, 1000.0]
    """

    points: tuple[tuple[float, float], ...]
    age_unit: str = "ka"

    def __init__(self, points: Iterable[tuple[float, float]], age_unit: str = "ka"):
        pts = tuple((float(a), float(lv)) for a, lv in points)
        object.__setattr__(self, "points", tuple(sorted(pts, key=lambda p: -p[0])))
        object.__setattr__(self, "age_unit", age_unit)
        problems = _history_problems(self.points, age_unit)
        if problems:
            raise InputError(problems)

    @property
    def ages(self) -> np.ndarray:
        """Ages of the points, oldest first, in ``age_unit``."""
        return np.array([p[0] for p in self.points])

    @property
    def levels(self) -> np.ndarray:
        """Levels of the points (m), oldest first."""
        return np.array([p[1] for p in self.points])

    @property
    def ages_kyr(self) -> np.ndarray:
        return self.ages * AGE_UNITS[self.age_unit]

    @property
    def start_age(self) -> float:
        return float(self.points[0][0])

    @property
    def end_age(self) -> float:
        return float(self.points[-1][0])

    def level_at(self, age):
        """Sea level (m) at ``age`` (in ``age_unit``), linear between points."""
        # np.interp needs increasing x: ages are stored oldest first.
        return np.interp(np.asarray(age, dtype=float), self.ages[::-1], self.levels[::-1])


def _history_problems(points, age_unit, file=None, lines=None) -> list[Problem]:
    out: list[Problem] = []
    if age_unit not in AGE_UNITS:
        out.append(
            Problem(
                file,
                None,
                "age_unit",
                age_unit,
                "is not an age unit",
                f"choose one of {list(AGE_UNITS)}",
            )
        )
    if len(points) < 2:
        out.append(
            Problem(file, None, "age", len(points), "a sea-level history needs at least two points")
        )
    seen: dict[float, int | None] = {}
    for i, (age, level) in enumerate(points):
        line = lines[i] if lines else None
        if not math.isfinite(age) or age < 0:
            out.append(
                Problem(
                    file, line, "age", age, "is not a finite age >= 0", "ages grow into the past"
                )
            )
        elif age in seen:
            out.append(
                Problem(file, line, "age", age, "is given twice", "each age may appear once")
            )
        seen[age] = line
        if not math.isfinite(level):
            out.append(Problem(file, line, "level", level, "is not a finite number"))
    return out


def read_sea_level(path: str | Path, age_unit: str = "ka") -> SeaLevelHistory:
    """Read a sea-level history from a CSV file with columns ``age`` and ``level``.

    Every problem (missing column, non-numeric or non-finite value, negative or
    repeated age, fewer than two rows) is collected and raised together as one
    :class:`~paleomap.errors.InputError` naming the file, line and column.

    Parameters
    ----------
    path : path-like
        UTF-8 CSV with a header row; other columns are ignored.
    age_unit : {"ka", "Ma"}
        Unit of the ``age`` column.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "sl.csv"
    >>> _ = p.write_text("age,level\\n20,-10\\n0,0\\n")
    >>> read_sea_level(p).points
    ((20.0, -10.0), (0.0, 0.0))
    """
    path = Path(path)
    log = ProblemLog()
    name = str(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputError([Problem(name, None, None, None, "file not found")]) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError([Problem(name, None, None, None, f"cannot be read ({exc})")]) from None
    rows = list(csv.reader(text.splitlines()))
    if not rows:
        raise InputError(
            [
                Problem(
                    name,
                    1,
                    None,
                    None,
                    "is empty",
                    "write a header row 'age,level' and one row per point",
                )
            ]
        )
    header = [h.strip().lower() for h in rows[0]]
    for col in ("age", "level"):
        if col not in header:
            log.error(
                name,
                1,
                col,
                rows[0],
                f"column {col!r} is missing",
                "the header must name the columns 'age' and 'level'",
            )
    log.raise_if_errors()
    ia, il = header.index("age"), header.index("level")
    points, seen = [], {}
    for lineno, row in enumerate(rows[1:], start=2):
        if not any(c.strip() for c in row):
            continue
        values = {}
        for col, idx in (("age", ia), ("level", il)):
            raw = row[idx].strip() if idx < len(row) else ""
            try:
                v = float(raw)
            except ValueError:
                log.error(name, lineno, col, raw, "is not a number")
                continue
            if not math.isfinite(v):
                log.error(name, lineno, col, raw, "is not a finite number")
                continue
            values[col] = v
        age = values.get("age")
        if age is not None:
            if age < 0:
                log.error(
                    name, lineno, "age", age, "is not a finite age >= 0", "ages grow into the past"
                )
            elif age in seen:
                log.error(
                    name,
                    lineno,
                    "age",
                    age,
                    f"is given twice (also on line {seen[age]})",
                    "each age may appear once",
                )
            else:
                seen[age] = lineno
                if "level" in values:
                    points.append((age, values["level"]))
    if not log.has_errors:
        for p in _history_problems(points, age_unit, name):
            log.errors.append(p)
    log.raise_if_errors()
    return SeaLevelHistory(points, age_unit)
