"""Boreholes in an AGS4 file (the Association of Geotechnical and Geoenvironmental
Specialists' transfer format), read through python-ags4.

- ``LOCA`` gives the cores: ``LOCA_ID``, the position ``LOCA_NATE``, ``LOCA_NATN`` (in the
  project CRS) and the ground level ``LOCA_GL`` (the core top's elevation).
- ``GEOL`` gives the intervals: ``LOCA_ID``, ``GEOL_TOP``, ``GEOL_BASE`` (depths below
  ground level, so below the core top) and the field named by ``ags_facies``
  (``GEOL_LEG``, the legend code, by default; or ``GEOL_DESC``, ...), mapped to a belt by
  ``[inputs.ags_legend]`` (without the table the value itself is the facies).
- With ``ags_formation`` (e.g. ``GEOL_GEOL``) the top of each formation that follows a
  different one down a hole is a pick of the surface ``[inputs.ags_surfaces]`` maps it to
  (without the table, the formation's own name).

Depths come in the unit of the ``UNIT`` row (``m``, or ``ft``; an empty unit is the
standard's metre) and are converted to the project's ``depth_unit``. Problems name the
file, the line, the group and the heading: ``site.ags, line 63, group GEOL, column
'GEOL_LEG': is not in [inputs.ags_legend] (got '102')``.

Examples
--------
>>> import python_ags4, pathlib
>>> shipped = pathlib.Path(python_ags4.__file__).parent / "data" / "test_data.ags"
>>> tables = read_ags_groups(shipped, "test_data.ags", ProblemLog())
>>> list(tables["LOCA"]["LOCA_ID"])
['Location_1', 'Location_2', 'Location_3', 'Location_4']
"""

from __future__ import annotations

import logging
import math
from pathlib import Path

import pandas as pd

from ..errors import ProblemLog
from .origins import Origins, Where
from .sources import InputSources, code_text, length_factor

__all__ = ["read_ags", "read_ags_groups"]

logger = logging.getLogger(__name__)

_LOCA = {"core_id": "LOCA_ID", "x": "LOCA_NATE", "y": "LOCA_NATN", "elevation": "LOCA_GL"}


def read_ags_groups(path: Path, shown: str, log: ProblemLog) -> dict[str, pd.DataFrame] | None:
    """The groups of an AGS4 file as tables of text cells, DATA rows only.

    Each table has the group's headings, ``line`` (the file's line of the row), and in
    ``attrs`` the ``UNIT`` row (``"units"``) and the lines of the ``GROUP`` and
    ``HEADING`` rows (``"group_line"``, ``"heading_line"``). None when the file cannot
    be read (the problem is logged).
    """
    from python_ags4 import AGS4

    try:
        tables, _headings, lines = AGS4.AGS4_to_dataframe(
            str(path), encoding="utf-8-sig", get_line_numbers=True
        )
    except Exception as exc:  # python-ags4 raises many kinds; all mean "cannot read this file"
        log.error(
            shown,
            None,
            None,
            None,
            f"cannot be read as an AGS4 file: {exc}",
            'check that it is an AGS4 file ("GROUP", "HEADING", "UNIT", "TYPE", "DATA" rows)',
        )
        return None
    out = {}
    for group, table in tables.items():
        if "HEADING" not in table:
            continue
        kind = table["HEADING"].astype(str)
        units = table[kind == "UNIT"]
        data = table[kind == "DATA"].drop(columns=["HEADING"])
        data = data.rename(columns={"line_number": "line"})
        data = data.astype({c: object for c in data.columns if c != "line"})
        data["line"] = pd.to_numeric(data["line"], errors="coerce").astype("Int64")
        data = data.reset_index(drop=True)
        data.attrs["units"] = units.iloc[0].to_dict() if len(units) else {}
        data.attrs["group_line"] = lines.get(group, {}).get("GROUP")
        data.attrs["heading_line"] = lines.get(group, {}).get("HEADING")
        out[group] = data
    return out


def read_ags(
    path: Path,
    sources: InputSources,
    project_file: str,
    depth_unit: str | None,
    log: ProblemLog,
    origins: Origins,
    readers,
    *,
    scheme=None,
) -> dict[str, pd.DataFrame | None]:
    """Cores, intervals and (with ``ags_formation``) picks tables from an AGS4 file.

    Parameters
    ----------
    path : Path
        The AGS4 file.
    sources : InputSources
        The ``[inputs]`` settings.
    project_file : str
        The project file as named in messages.
    depth_unit : str or None
        The project's depth unit.
    log : ProblemLog
    origins : Origins
        Where each row came from, for messages.
    readers : mapping
        ``"checksum"`` records the file's checksum.
    scheme : Scheme, optional
        Checks that every belt of ``[inputs.ags_legend]`` is in the scheme.

    Returns
    -------
    dict
        ``"cores"``, ``"intervals"`` and ``"picks"`` (absent without ``ags_formation``):
        the tables :func:`paleomap.cores.build_cores` reads, with ``attrs["name"]``;
        their lines are the file's lines.
    """
    shown = sources.ags
    readers["checksum"](path)
    groups = read_ags_groups(path, shown, log)
    out: dict[str, pd.DataFrame | None] = {"cores": None, "intervals": None}
    if sources.ags_formation:
        out["picks"] = None
    if groups is None:
        return out
    legend = dict(sources.ags_legend)
    if scheme is not None:
        for code, belt in list(legend.items()):
            if scheme.rank(belt) is None:
                log.error(
                    project_file,
                    sources.lines.get("inputs.ags_legend"),
                    f"inputs.ags_legend.{code}",
                    belt,
                    f"is not a facies of the {scheme.name!r} scheme",
                    f"known ids: {list(scheme.ids)} (or their aliases, any case)",
                )
                legend.pop(code)
    loca = _group(groups, "LOCA", ("LOCA_ID", "LOCA_NATE", "LOCA_NATN"), shown, log)
    geol_fields = ("LOCA_ID", "GEOL_TOP", "GEOL_BASE", sources.ags_facies)
    if sources.ags_formation:
        geol_fields = (*geol_fields, sources.ags_formation)
    geol = _group(groups, "GEOL", geol_fields, shown, log)

    if loca is not None:
        name = f"{shown} (LOCA)"
        columns = {k: v for k, v in _LOCA.items() if v in loca}
        factor = _unit(loca, "LOCA_GL", depth_unit, shown, log) if "LOCA_GL" in loca else 1.0
        rows = {k: list(loca[v]) for k, v in columns.items()}
        if "elevation" in rows and factor is not None and factor != 1.0:
            rows["elevation"] = [_scaled(v, factor) for v in rows["elevation"]]
        cores = pd.DataFrame(rows, dtype=object)
        cores["line"] = pd.Series([int(v) for v in loca["line"]], dtype="int64")
        for line in cores["line"]:
            origins.add_row(name, int(line), Where(shown, int(line), "group LOCA", columns))
        cores.attrs["name"] = name
        out["cores"] = cores

    if geol is not None:
        factor = _unit(geol, "GEOL_TOP", depth_unit, shown, log)
        base_factor = _unit(geol, "GEOL_BASE", depth_unit, shown, log)
        if factor is None or base_factor is None:
            return out
        name = f"{shown} (GEOL)"
        columns = {
            "core_id": "LOCA_ID",
            "top": "GEOL_TOP",
            "base": "GEOL_BASE",
            "facies": sources.ags_facies,
        }
        facies = []
        unknown: dict[str, tuple[str, list[int]]] = {}
        for value, line in zip(geol[sources.ags_facies], geol["line"], strict=True):
            text = _text(value)
            if not legend or not text:
                facies.append(text)  # empty: reported by the validation
                continue
            belt = legend.get(code_text(text))
            if belt is None:
                unknown.setdefault(code_text(text), (text, []))[1].append(int(line))
                facies.append("")
            else:
                facies.append(belt)
        for text, lines in unknown.values():
            also = ", ".join(str(n) for n in lines[1:9]) + (", ..." if len(lines) > 9 else "")
            also = f" (also on line{'s' if len(lines) > 2 else ''} {also})" if also else ""
            log.error(
                shown,
                lines[0],
                sources.ags_facies,
                text,
                f"is not in [inputs.ags_legend]{also}",
                f"values mapped: {list(legend)}; add it to [inputs.ags_legend]",
                place="group GEOL",
            )
        bad = {n for _, lines in unknown.values() for n in lines}
        keep = [int(line) not in bad for line in geol["line"]]
        intervals = pd.DataFrame(
            {
                "core_id": list(geol["LOCA_ID"]),
                "top": [_scaled(v, factor) for v in geol["GEOL_TOP"]],
                "base": [_scaled(v, base_factor) for v in geol["GEOL_BASE"]],
                "facies": facies,
            },
            dtype=object,
        )
        intervals["line"] = pd.Series([int(v) for v in geol["line"]], dtype="int64")
        intervals = intervals[keep].reset_index(drop=True)
        for line in intervals["line"]:
            origins.add_row(name, int(line), Where(shown, int(line), "group GEOL", columns))
        intervals.attrs["name"] = name
        out["intervals"] = intervals
        if sources.ags_formation:
            out["picks"] = _picks(geol, sources, factor, shown, origins)
    return out


def _picks(geol, sources: InputSources, factor: float, shown: str, origins: Origins):
    """A pick at the top of each formation that follows a different one down a hole."""
    name = f"{shown} (GEOL picks)"
    surfaces = sources.ags_surfaces
    rows = []
    table = geol.assign(_top=[_float(v) for v in geol["GEOL_TOP"]])
    for cid, hole in table.groupby("LOCA_ID", sort=False):
        hole = hole[hole["_top"].notna()].sort_values("_top", kind="stable")
        previous = None
        for formation, top, line in zip(
            hole[sources.ags_formation], hole["_top"], hole["line"], strict=True
        ):
            formation = _text(formation)
            if not formation:
                continue
            if previous is not None and code_text(formation) != code_text(previous):
                surface = surfaces.get(code_text(formation)) if surfaces else formation
                if surface is not None:
                    rows.append((cid, surface, top * factor, int(line)))
            previous = formation
    picks = pd.DataFrame(
        {
            "core_id": [r[0] for r in rows],
            "surface": [r[1] for r in rows],
            "depth": [r[2] for r in rows],
        },
        dtype=object,
    )
    picks["line"] = pd.Series([r[3] for r in rows], dtype="int64")
    columns = {"core_id": "LOCA_ID", "surface": sources.ags_formation, "depth": "GEOL_TOP"}
    for line in picks["line"]:
        origins.add_row(name, int(line), Where(shown, int(line), "group GEOL", columns))
    picks.attrs["name"] = name
    return picks


def _group(groups, group: str, fields: tuple[str, ...], shown: str, log: ProblemLog):
    table = groups.get(group)
    if table is None:
        log.error(
            shown,
            None,
            None,
            group,
            "has no such group",
            f"its groups: {sorted(groups)}; paleomap reads the cores from LOCA and the "
            "intervals from GEOL",
        )
        return None
    missing = [f for f in fields if f not in table]
    for f in missing:
        log.error(
            shown,
            table.attrs.get("heading_line"),
            f,
            None,
            "is a missing heading",
            f"the group's headings: {[c for c in table.columns if c != 'line']}",
            place=f"group {group}",
        )
    if missing:
        return None
    if len(table) == 0:
        log.error(
            shown,
            table.attrs.get("group_line"),
            None,
            None,
            "has no DATA rows",
            "add the rows",
            place=f"group {group}",
        )
        return None
    return table


def _unit(table, heading: str, depth_unit, shown: str, log: ProblemLog) -> float | None:
    unit = _text(table.attrs.get("units", {}).get(heading, ""))
    if not unit:
        return 1.0 if depth_unit in (None, "m") else length_factor("m", depth_unit)
    factor = length_factor(unit, depth_unit)
    if factor is None:
        log.error(
            shown,
            table.attrs.get("heading_line"),
            heading,
            unit,
            "is not a length unit paleomap knows",
            "give depths and levels in m or ft in the UNIT row",
            place="UNIT row",
        )
    return factor


def _float(value) -> float | None:
    try:
        number = float(str(value).strip())
    except ValueError:
        return None
    return number if math.isfinite(number) else None


def _scaled(value, factor: float):
    """A depth cell in the project's unit; text that is not a number is left for the checks."""
    number = _float(value)
    if number is None or factor == 1.0:
        return value
    return number * factor


def _text(value) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    return str(value).strip()
