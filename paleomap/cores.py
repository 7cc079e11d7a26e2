"""Cores, their logged intervals and their surface picks.

A core is a borehole or outcrop section at a map position with a depth scale
positive down from its top. Depths keep the project's ``depth_unit``.

This module holds the typed values every later stage reads. Building them from the
user's tables (and validating them) is :func:`build_cores`.
"""

from __future__ import annotations

import difflib
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from .errors import ProblemLog
from .scheme import name_key

if TYPE_CHECKING:  # only for annotations: project.py imports this module
    import pandas as pd

    from .project import Surface
    from .scheme import Scheme

__all__ = ["Core", "Interval", "Pick", "build_cores", "parse_number"]


@dataclass(frozen=True)
class Interval:
    """A depth range of one core logged as one facies belt.

    Parameters
    ----------
    top, base : float
        Depths down from the core top, ``top < base``.
    rank : int
        Belt rank in the scheme (0 = most proximal).
    facies : str
        The facies name as logged.
    line : int or None
        Line of ``intervals.csv`` it came from.
    """

    top: float
    base: float
    rank: int
    facies: str = ""
    line: int | None = None

    @property
    def thickness(self) -> float:
        return self.base - self.top


@dataclass(frozen=True)
class Pick:
    """The depth of a correlated surface in one core."""

    surface: str
    depth: float
    line: int | None = None


@dataclass(frozen=True)
class Core:
    """One core: position, logged intervals (sorted top down) and picks (sorted top down).

    Parameters
    ----------
    core_id : str
    easting, northing : float
        Position in the project's working CRS (metres).
    elevation : float or None
        Elevation of the core top, if given.
    intervals : tuple of Interval
        Sorted by depth, not overlapping; gaps are unrecovered sections.
    picks : tuple of Pick
        Sorted by depth.
    x, y : float
        Position as given, in the project CRS.
    line : int or None
        Line of the cores table it came from.
    """

    core_id: str
    easting: float
    northing: float
    elevation: float | None = None
    intervals: tuple[Interval, ...] = ()
    picks: tuple[Pick, ...] = ()
    x: float = float("nan")
    y: float = float("nan")
    line: int | None = None

    @property
    def top(self) -> float:
        """Shallowest logged depth (NaN if nothing is logged)."""
        return self.intervals[0].top if self.intervals else float("nan")

    @property
    def base(self) -> float:
        """Deepest logged depth (NaN if nothing is logged)."""
        return self.intervals[-1].base if self.intervals else float("nan")

    def pick_depth(self, surface: str) -> float | None:
        for p in self.picks:
            if p.surface == surface:
                return p.depth
        return None

    def interval_at(self, depth: float) -> Interval | None:
        """The interval logged at ``depth``.

        At a contact (a depth that is the base of one interval and the top of the next)
        the interval just above is returned, since a surface picked on a contact marks
        the end of what was deposited above it. At the core top the first interval is
        returned. In a gap (no recovery) or outside the logged range: None.
        """
        for iv in self.intervals:
            if iv.top < depth <= iv.base:
                return iv
        if self.intervals and depth == self.intervals[0].top:
            return self.intervals[0]
        return None

    def rank_profile(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Arrays (top, base, rank) of the logged intervals, top down."""
        tops = np.array([iv.top for iv in self.intervals], dtype=float)
        bases = np.array([iv.base for iv in self.intervals], dtype=float)
        ranks = np.array([iv.rank for iv in self.intervals], dtype=int)
        return tops, bases, ranks


_DEFAULT_FILES = {"cores": "cores.csv", "intervals": "intervals.csv", "picks": "picks.csv"}


def build_cores(
    cores: pd.DataFrame,
    intervals: pd.DataFrame,
    picks: pd.DataFrame,
    scheme: Scheme | None,
    surfaces: Sequence[Surface] | None,
    *,
    files: Mapping[str, str] | None = None,
    log: ProblemLog | None = None,
) -> tuple[Core, ...]:
    """Validate the three core tables against each other, the scheme and the surfaces.

    Parameters
    ----------
    cores : pandas.DataFrame
        Columns ``core_id``, ``x``, ``y`` (as given) and optionally ``easting``,
        ``northing`` (working CRS; default ``x``, ``y``; NaN where projection failed),
        ``elevation`` and ``line`` (source line for messages). Either ``x, y`` or
        ``easting, northing`` must be present.
    intervals : pandas.DataFrame
        Columns ``core_id``, ``top``, ``base``, ``facies`` and optionally ``line``.
    picks : pandas.DataFrame
        Columns ``core_id``, ``surface``, ``depth`` and optionally ``line``.

        Cells may be numbers or text as read from a CSV file (see :func:`parse_number`);
        every cell that is not a finite number is reported.
    scheme : Scheme or None
        Facies are matched to its belt ids and aliases, ignoring case. None skips the
        facies check (used when the scheme itself failed validation; ranks are then -1).
    surfaces : sequence of Surface or None
        Picks must name one of them. None skips the surface checks.
    files : mapping, optional
        Names of the three tables for messages (keys ``cores``, ``intervals``,
        ``picks``).
    log : ProblemLog, optional
        Collects errors and warnings. Without one, warnings are issued as
        :class:`~paleomap.errors.PaleomapWarning` and an
        :class:`~paleomap.errors.InputError` holding every error is raised.

    Returns
    -------
    tuple of Core
        In the order of the cores table; intervals and picks sorted top down.

    Notes
    -----
    Errors: empty or duplicate core id; a position, depth or number that is not finite;
    a negative depth; ``top >= base``; overlapping intervals; an unknown facies; a core
    in ``intervals`` or ``picks`` but not in ``cores``; an unknown surface; a surface
    picked twice in one core; two cores at one position; a pick outside its core's
    logged range; picks whose depth
    order contradicts their surfaces' ages (a deeper pick must be older; two surfaces at
    one depth need the younger one to be erosional). Warnings: gaps between intervals
    (no recovery); a core with no intervals.

    Examples
    --------
    >>> import pandas as pd
    >>> from paleomap.scheme import builtin_scheme
    >>> from paleomap.project import Surface
    >>> cores = pd.DataFrame({"core_id": ["A"], "easting": [0.0], "northing": [0.0]})
    >>> intervals = pd.DataFrame(
    ...     {"core_id": ["A", "A"], "top": [0.0, 4.0], "base": [4.0, 9.0],
    ...      "facies": ["offshore", "Upper Shoreface"]})
    >>> picks = pd.DataFrame({"core_id": ["A", "A"], "surface": ["s1", "s2"],
    ...                       "depth": [1.0, 8.0]})
    >>> (core,) = build_cores(cores, intervals, picks, builtin_scheme("shoreface_shelf"),
    ...                       [Surface("s1", 100.0), Surface("s2", 200.0)])
    >>> [iv.rank for iv in core.intervals], core.pick_depth("s2")
    ([5, 3], 8.0)
    """
    own_log = log is None
    log = ProblemLog() if log is None else log
    names = {**_DEFAULT_FILES, **(dict(files) if files else {})}
    f_cores, f_iv, f_picks = names["cores"], names["intervals"], names["picks"]

    # -- cores ---------------------------------------------------------------------------
    known: dict[str, dict] = {}
    for row in _rows(cores):
        cid = _text(row.get("core_id"))
        line = row["line"]
        if not cid:
            log.error(
                f_cores, line, "core_id", row.get("core_id"), "is empty", "every core needs an id"
            )
            continue
        if cid in known:
            log.error(
                f_cores,
                line,
                "core_id",
                cid,
                f"is a duplicate core id (first on line {known[cid]['line']})",
                "give each core its own id",
            )
            continue
        ok = True
        x = _number(row, "x" if "x" in row else "easting", f_cores, line, log)
        y = _number(row, "y" if "y" in row else "northing", f_cores, line, log)
        easting, northing = row.get("easting", x), row.get("northing", y)
        if x is None or y is None:
            ok = False
        elif not (_finite(easting) and _finite(northing)):
            log.error(
                f_cores,
                line,
                "x",
                (x, y),
                "could not be projected to the working CRS",
                "for a geographic CRS x is the longitude (-180 to 180) and y the latitude "
                "(-90 to 90), in degrees",
            )
            ok = False
        elevation = None
        if _text(row.get("elevation")):
            elevation = _number(row, "elevation", f_cores, line, log)
            ok = ok and elevation is not None
        known[cid] = {
            "line": line,
            "ok": ok,
            "x": float("nan") if x is None else x,
            "y": float("nan") if y is None else y,
            "easting": float(easting) if ok else float("nan"),
            "northing": float(northing) if ok else float("nan"),
            "elevation": elevation,
        }

    # Two cores at one position cannot both constrain the map (the field would have two
    # values at one point); an exact copy of a position is most often a pasting slip.
    # "One position" is within a millionth of the cores' extent (floating-point noise of
    # a reprojection), as the mapping engine reads it.
    placed = [(cid, info["easting"], info["northing"]) for cid, info in known.items() if info["ok"]]
    extent = 0.0
    if placed:
        pos = np.array([(e, n) for _, e, n in placed])
        extent = float(np.ptp(pos, axis=0).max())
    # Capped so that one absurd coordinate (reported later) does not merge all the others.
    tol = 1e-6 * min(max(1.0, extent), 1e7)
    at: dict[tuple[int, int], str] = {}
    for cid, e, n in placed:
        info = known[cid]
        cell = (int(np.floor(e / tol)), int(np.floor(n / tol)))
        near = [
            at[(cell[0] + i, cell[1] + j)]
            for i in (-1, 0, 1)
            for j in (-1, 0, 1)
            if (cell[0] + i, cell[1] + j) in at
        ]
        near = [
            o for o in near if np.hypot(known[o]["easting"] - e, known[o]["northing"] - n) <= tol
        ]
        if near:
            first = near[0]
            log.error(
                f_cores,
                info["line"],
                "x",
                (info["x"], info["y"]),
                f"core {cid!r} is at the same position as core {first!r} "
                f"(line {known[first]['line']})",
                "two cores at one point cannot both be mapped: merge their logs into one "
                "core or correct the coordinates",
            )
            info["ok"] = False
        else:
            at[cell] = cid

    # -- intervals -------------------------------------------------------------------------
    by_core: dict[str, list[Interval]] = {cid: [] for cid in known}
    bad_iv_cores: set[str] = set()
    orphans: dict[tuple[str, str], list[int | None]] = {}
    unknown: dict[str, tuple[str, list[int | None]]] = {}
    for row in _rows(intervals):
        cid = _text(row.get("core_id"))
        line = row["line"]
        if not cid:
            log.error(f_iv, line, "core_id", row.get("core_id"), "is empty")
            continue
        if cid not in known:
            orphans.setdefault((f_iv, cid), []).append(line)
            continue
        top = _number(row, "top", f_iv, line, log)
        base = _number(row, "base", f_iv, line, log)
        ok = top is not None and base is not None
        for col, value in (("top", top), ("base", base)):
            if value is not None and value < 0:
                log.error(
                    f_iv,
                    line,
                    col,
                    value,
                    "is a negative depth",
                    "depths are measured down from the core top",
                )
                ok = False
        if ok and top >= base:
            log.error(
                f_iv,
                line,
                "base",
                base,
                f"is not below the top ({top!r})",
                "each interval needs top < base (depth grows downward)",
            )
            ok = False
        facies = _text(row.get("facies"))
        rank = -1
        if not facies:
            log.error(f_iv, line, "facies", row.get("facies"), "is empty")
            ok = False
        elif scheme is not None:
            r = scheme.rank(facies)
            if r is None:
                # One message per unknown name, so a typo repeated on many lines is one fix.
                unknown.setdefault(name_key(facies), (facies, []))[1].append(line)
                ok = False
            else:
                rank = r
        if not ok:
            bad_iv_cores.add(cid)
            continue
        by_core[cid].append(Interval(float(top), float(base), rank, facies, line))

    for facies, lines in unknown.values():
        close = scheme.suggest(facies)
        hint = f"did you mean {' or '.join(repr(c) for c in close)}? " if close else ""
        log.error(
            f_iv,
            lines[0],
            "facies",
            facies,
            f"is not a facies of the {scheme.name!r} scheme{_on_lines(lines)}",
            hint + f"accepted names: {', '.join(scheme.names())} (case, spaces, hyphens and "
            "underscores ignored; paleomap schemes lists them by belt)",
        )

    for cid, ivs in by_core.items():
        ivs.sort(key=lambda iv: (iv.top, iv.base))
        gaps = []
        kept: list[Interval] = []
        for iv in ivs:
            if kept and iv.top < kept[-1].base:
                prev = kept[-1]
                log.error(
                    f_iv,
                    iv.line,
                    "top",
                    iv.top,
                    f"core {cid!r}: overlaps the interval {prev.top:g}-{prev.base:g} "
                    f"on line {prev.line}",
                    "intervals of one core must not overlap",
                )
                bad_iv_cores.add(cid)
                continue
            if kept and iv.top > kept[-1].base:
                gaps.append((kept[-1].base, iv.top, iv.line))
            kept.append(iv)
        by_core[cid] = kept
        if gaps:
            listed = ", ".join(f"{a:g}-{b:g}" for a, b, _ in gaps)
            log.warn(
                f_iv,
                gaps[0][2],
                "top",
                None,
                f"core {cid!r} has {len(gaps)} gap(s) treated as no recovery: {listed}",
            )
        if not ivs and cid not in bad_iv_cores:
            log.warn(
                f_cores,
                known[cid]["line"],
                "core_id",
                cid,
                f"core has no intervals in {f_iv}",
                "it has no record at any slice",
            )

    # -- picks -----------------------------------------------------------------------------
    ages = {s.name: s for s in surfaces} if surfaces is not None else None
    core_picks: dict[str, list[Pick]] = {cid: [] for cid in known}
    first_line: dict[tuple[str, str], int | None] = {}
    for row in _rows(picks):
        cid = _text(row.get("core_id"))
        line = row["line"]
        if not cid:
            log.error(f_picks, line, "core_id", row.get("core_id"), "is empty")
            continue
        if cid not in known:
            orphans.setdefault((f_picks, cid), []).append(line)
            continue
        name = _text(row.get("surface"))
        depth = _number(row, "depth", f_picks, line, log)
        ok = depth is not None
        if not name:
            log.error(f_picks, line, "surface", row.get("surface"), "is empty")
            ok = False
        elif ages is not None and name not in ages:
            log.error(
                f_picks,
                line,
                "surface",
                name,
                "is not a surface of the project",
                _did_you_mean(name, list(ages)) + f"surfaces in the project file: {list(ages)}",
            )
            ok = False
        if depth is not None and depth < 0:
            log.error(
                f_picks,
                line,
                "depth",
                depth,
                "is a negative depth",
                "depths are measured down from the core top",
            )
            ok = False
        if name and (cid, name) in first_line:
            log.error(
                f_picks,
                line,
                "surface",
                name,
                f"core {cid!r}: is picked twice (first on line {first_line[(cid, name)]})",
                "pick each surface once per core",
            )
            continue
        if name:
            first_line[(cid, name)] = line
        if not ok:
            continue
        depth = float(depth)
        ivs = by_core[cid]
        if cid not in bad_iv_cores:
            if not ivs:
                log.error(
                    f_picks,
                    line,
                    "depth",
                    depth,
                    f"core {cid!r} has no logged intervals, so no pick can lie in it",
                )
                continue
            if depth < ivs[0].top or depth > ivs[-1].base:
                log.error(
                    f_picks,
                    line,
                    "depth",
                    depth,
                    f"core {cid!r}: is outside the logged range {ivs[0].top:g}-{ivs[-1].base:g}",
                    "a pick must lie within the core's logged intervals",
                )
                continue
        core_picks[cid].append(Pick(name, depth, line))

    for (fname, cid), lines in orphans.items():
        log.error(
            fname,
            lines[0],
            "core_id",
            cid,
            f"is not in {f_cores}{_on_lines(lines)}",
            "add the core to the cores table or correct the id",
        )

    if ages is not None:
        for cid, plist in core_picks.items():
            plist.sort(key=lambda p: (p.depth, ages[p.surface].age))
            for upper, lower in zip(plist, plist[1:], strict=False):
                su, sl = ages[upper.surface], ages[lower.surface]
                if lower.depth > upper.depth and sl.age <= su.age:
                    log.error(
                        f_picks,
                        lower.line,
                        "depth",
                        lower.depth,
                        f"core {cid!r}: surface {sl.name!r} (age {sl.age:g}) lies below "
                        f"surface {su.name!r} (age {su.age:g}, depth {upper.depth:g}, "
                        f"line {upper.line}) but is not older",
                        "a deeper surface must be older; check the picks and the ages",
                    )
                elif lower.depth == upper.depth and sl.age != su.age and not su.erosional:
                    log.error(
                        f_picks,
                        lower.line,
                        "depth",
                        lower.depth,
                        f"core {cid!r}: surfaces {su.name!r} and {sl.name!r} of "
                        f"different ages are picked at one depth (line {upper.line})",
                        f"only an erosional younger surface ({su.name!r}) may cut down "
                        "onto an older one; mark it erosional = true or correct the pick",
                    )
    else:
        for plist in core_picks.values():
            plist.sort(key=lambda p: p.depth)

    if own_log:
        log.emit_warnings(stacklevel=3)
        log.raise_if_errors()

    out = []
    for cid, info in known.items():
        out.append(
            Core(
                cid,
                info["easting"],
                info["northing"],
                info["elevation"],
                tuple(by_core[cid]),
                tuple(core_picks[cid]),
                info["x"],
                info["y"],
                info["line"],
            )
        )
    return tuple(out)


def _did_you_mean(name: str, known: list[str]) -> str:
    folded = {k.lower(): k for k in known}
    close = difflib.get_close_matches(name.lower(), list(folded), n=1)
    return f"did you mean {folded[close[0]]!r}? " if close else ""


def _on_lines(lines: list[int | None]) -> str:
    """`` (also on lines 6, 9)`` for a problem that repeats on several lines."""
    rest = [str(n) for n in lines[1:] if n is not None]
    if not rest:
        return ""
    shown = ", ".join(rest[:8]) + (", ..." if len(rest) > 8 else "")
    return f" (also on line{'s' if len(rest) > 1 else ''} {shown})"


def _rows(table) -> list[dict]:
    """Records of a table with a ``line`` key (None when the table has no line column)."""
    if table is None:
        return []
    records = table.to_dict("records") if hasattr(table, "to_dict") else list(table)
    for rec in records:
        line = rec.get("line")
        rec["line"] = None if line is None or _isnan(line) else int(line)
    return records


def _text(value) -> str:
    if value is None or _isnan(value):
        return ""
    return str(value).strip()


def _isnan(value) -> bool:
    return isinstance(value, float) and math.isnan(value)


def _finite(value) -> bool:
    return (
        isinstance(value, (int, float, np.integer, np.floating))
        and not isinstance(value, bool)
        and math.isfinite(value)
    )


_NUMBER = re.compile(r"^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$")


def parse_number(value) -> float:
    """A table cell as a finite number.

    Accepts numbers and decimal text with a point (``"12"``, ``"-3.5"``, ``"1.2e3"``),
    with surrounding whitespace. Rejects empty cells, other text, NaN and infinity.

    Raises
    ------
    ValueError
        With a message saying what is wrong (``"is empty"``, ``"is not a number"``, ...).

    Examples
    --------
    >>> parse_number(" 12.5 "), parse_number("1e3"), parse_number(7)
    (12.5, 1000.0, 7.0)
    >>> parse_number("nan")
    Traceback (most recent call last):
    ...
    ValueError: is not a finite number (NaN or infinity)
    """
    if isinstance(value, bool):
        raise ValueError("is not a number")
    if isinstance(value, (int, float, np.integer, np.floating)):
        if not math.isfinite(value):
            raise ValueError("is not a finite number (NaN or infinity)")
        return float(value)
    if value is None:
        raise ValueError("is empty")
    text = str(value).strip()
    if not text:
        raise ValueError("is empty")
    if text.lower().lstrip("+-") in {"nan", "inf", "infinity"}:
        raise ValueError("is not a finite number (NaN or infinity)")
    if not _NUMBER.match(text):
        if re.match(r"^[+-]?\d+,\d+$", text):
            raise ValueError("is not a number: write a point as the decimal separator")
        raise ValueError("is not a number")
    number = float(text)
    if not math.isfinite(number):
        raise ValueError("is not a finite number (too large)")
    return number


def _number(row: dict, column: str, file, line, log: ProblemLog) -> float | None:
    """Parse one cell; log a problem and return None when it is not a finite number."""
    value = row.get(column)
    try:
        return parse_number(value)
    except ValueError as exc:
        shown = None if value is None or _isnan(value) else value
        log.error(file, line, column, shown, str(exc))
        return None
