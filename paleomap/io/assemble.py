"""The cores, intervals and picks tables of a project, from whichever files hold them.

:func:`read_tables` reads each table from its source (CSV file, spreadsheet, point
vector file, LAS files, AGS4 file), renames the user's columns, and brings depths given
in log depth to depths below the core top. The result is the three tables the CSV path
has always produced (text or number cells and a ``line`` per row), so one validation
(:func:`paleomap.io.core_tables.build_cores`) serves every source.

Problems of tables that are not plain CSV files are put back in place by
:class:`paleomap.io.origins.Origins`.

Examples
--------
>>> Tables().files
{}
"""

from __future__ import annotations

import logging
import math
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from ..errors import ProblemLog
from .core_tables import parse_number
from .origins import Origins
from .sheets import SHEET_SUFFIXES, read_sheet_table
from .sources import TABLE_COLUMNS, InputSources

__all__ = ["Tables", "read_tables"]

logger = logging.getLogger(__name__)

_CSV_SUFFIXES = {".csv", ".txt"}


@dataclass
class Tables:
    """The three tables of a project, as :func:`paleomap.io.core_tables.build_cores` reads them.

    ``files`` names each table in messages; ``origins`` maps problems back to the files.
    """

    cores: pd.DataFrame | None = None
    intervals: pd.DataFrame | None = None
    picks: pd.DataFrame | None = None
    files: dict = field(default_factory=dict)
    origins: Origins = field(default_factory=Origins)


def read_tables(cfg, root: Path, project_file: str, log: ProblemLog, *, source, readers) -> Tables:
    """Read the cores, intervals and picks tables from their sources.

    Parameters
    ----------
    cfg : ProjectConfig
        The validated project file.
    root : Path
        The project file's folder.
    project_file : str
        The project file as named in messages.
    log : ProblemLog
    source : callable
        ``source(key, value)`` resolves a path of the project file, logging a missing
        file and returning None.
    readers : mapping
        ``"csv"``: ``(path, name, required, optional, log, columns) -> DataFrame``;
        ``"vector"``: ``(path, name, where) -> DataFrame`` (a point vector file of cores);
        ``"checksum"``: ``(path) -> None`` records a file's checksum.

    Returns
    -------
    Tables
        A table is None when it could not be read (the problem is logged).
    """
    sources: InputSources = cfg.sources
    out = Tables()
    names = {"cores": cfg.cores, "intervals": cfg.intervals, "picks": cfg.picks}
    wells = None
    made = {}
    if sources.logs is not None:
        from .las import read_logs

        wells, made["intervals"] = read_logs(
            sources,
            root,
            project_file,
            cfg.depth_unit,
            log,
            out.origins,
            readers["checksum"],
            scheme=cfg.scheme,
            crs=cfg.crs,
            positions=cfg.cores is None,
        )
        made["cores"] = wells
        for key, table in made.items():
            if table is not None and names.get(key) is None:
                names[key] = table.attrs["name"]
    elif sources.ags is not None:
        from .ags import read_ags

        target = source("inputs.ags", sources.ags)
        if target is not None:
            made = read_ags(
                target,
                sources,
                project_file,
                cfg.depth_unit,
                log,
                out.origins,
                readers,
                scheme=cfg.scheme,
            )
            for key, table in made.items():
                if table is not None and names.get(key) is None:
                    names[key] = table.attrs["name"]
    for key in ("cores", "intervals", "picks"):
        value = getattr(cfg, key)
        if value is None:
            setattr(out, key, made.get(key))
            continue
        target = source(f"inputs.{key}", value)
        if target is None:
            continue
        table = _read_table(key, target, value, cfg, log, out, readers)
        setattr(out, key, table)
        if table is not None:
            names[key] = table.attrs.get("name", value)
    failed = wells.attrs.get("failed", set()) if wells is not None else set()
    if failed and out.picks is not None:
        # A well whose LAS file has a problem is not read; its picks wait for the fix.
        keep = [str(c).strip() not in failed for c in out.picks["core_id"]]
        out.picks = out.picks[keep].reset_index(drop=True)
    if wells is not None and cfg.cores is not None and out.cores is not None:
        out.cores = _datum_from_wells(out.cores, wells)
        _wells_not_in_cores(out, wells, names["cores"], log)
    out.files = {k: v for k, v in names.items() if v is not None}
    if sources.depth_reference == "log" and out.cores is not None:
        _from_log_depth(out, log)
    return out


def _read_table(key, target: Path, value: str, cfg, log, out: Tables, readers):
    required, optional = TABLE_COLUMNS[key]
    columns = cfg.sources.columns.get(key, {})
    suffix = target.suffix.lower()
    if suffix in SHEET_SUFFIXES:
        readers["checksum"](target)
        sheet = cfg.sources.sheets.get(key)
        table = read_sheet_table(
            target, required, optional, name=value, sheet=sheet, columns=columns, log=log
        )
        if table is None:
            return None
        # Each table gets its own name, so two sheets of one workbook stay apart.
        name = f"{value}, sheet {table.attrs['sheet']!r}"
        out.origins.add_sheet(name, value, table.attrs["sheet"], table.attrs["headers"])
        table.attrs["name"] = name
        return table
    if key == "cores" and suffix not in _CSV_SUFFIXES:
        where = (cfg.file, cfg.lines.get("inputs.cores"), "inputs.cores")
        return readers["vector"](target, value, where)
    table = readers["csv"](target, value, required, optional, log, columns)
    out.origins.add_columns(value, columns)
    return table


def _datum_from_wells(cores: pd.DataFrame, wells: pd.DataFrame) -> pd.DataFrame:
    """Elevations of the LAS headers for the cores whose table gives none."""
    cores = cores.copy()
    for column in ("elevation", "datum_elevation"):
        header = dict(zip(wells["core_id"], wells[column], strict=True))
        if column not in cores:
            cores[column] = ""
        cores[column] = [
            v if str(v).strip() else header.get(str(cid).strip(), "")
            for cid, v in zip(cores["core_id"], cores[column], strict=True)
        ]
    return cores


def _wells_not_in_cores(out: Tables, wells: pd.DataFrame, cores_name: str, log) -> None:
    """Report once, at its WELL mnemonic, each LAS well the cores table lacks.

    Its intervals are dropped: the validation would name each of them, at lines of no file.
    """
    known = {str(c).strip() for c in out.cores["core_id"]}
    missing = {}
    for cid, line in zip(wells["core_id"], wells["line"], strict=True):
        if cid not in known:
            missing[cid] = out.origins.where(wells.attrs["name"], int(line))
    for cid, where in missing.items():
        anchor = where.columns.get("core_id", where) if where is not None else None
        log.error(
            anchor.file if anchor else wells.attrs["name"],
            anchor.line if anchor else None,
            None,
            cid,
            f"is not in {cores_name}",
            "add the well to the cores table (it gives the positions) or correct its id",
            place=anchor.place if anchor else None,
        )
    if missing and out.intervals is not None:
        keep = [str(c).strip() not in missing for c in out.intervals["core_id"]]
        out.intervals = out.intervals[keep].reset_index(drop=True)


def _number(value) -> float | None:
    try:
        return parse_number(value)
    except ValueError:
        return None


def _from_log_depth(out: Tables, log: ProblemLog) -> None:
    """Depths below the log datum to depths below the core top, in place.

    The datum (kelly bushing, derrick floor, ground level) lies ``datum - top``
    above the core top, so a log depth ``d`` is ``d - (datum - top)`` below the top.
    Without a top elevation the datum is the core top (and its elevation the core's).
    """
    f_cores = out.files.get("cores")
    offsets: dict[str, float] = {}
    missing: dict[str, int | None] = {}
    cores = out.cores.copy()
    has_datum = "datum_elevation" in cores
    has_top = "elevation" in cores
    elevations = []
    for i, row in enumerate(cores.to_dict("records")):
        cid = str(row.get("core_id", "")).strip()
        top = _number(row.get("elevation")) if has_top else None
        datum_cell = row.get("datum_elevation") if has_datum else None
        datum = _number(datum_cell)
        elevations.append(cores["elevation"].iloc[i] if has_top else "")
        if datum is None:
            if datum_cell is not None and str(datum_cell).strip():
                log.error(
                    f_cores,
                    row.get("line"),
                    "datum_elevation",
                    datum_cell,
                    "is not a number",
                    "the elevation of the log datum, in the depth unit",
                )
            missing[cid] = row.get("line")
            continue
        if top is None:
            elevations[-1] = datum
            top = datum
        offsets[cid] = datum - top
    if has_top or offsets:
        cores["elevation"] = elevations
    out.cores = cores
    needed: set[str] = set()
    for key, columns in (("intervals", ("top", "base")), ("picks", ("depth",))):
        table = getattr(out, key)
        if table is None:
            continue
        table = table.copy()
        for column in columns:
            values = list(table[column])
            for i, (cid, value, line) in enumerate(
                zip(table["core_id"], values, table["line"], strict=True)
            ):
                cid = str(cid).strip()
                depth = _number(value)
                if depth is None:
                    continue  # reported by the validation
                if cid not in offsets:
                    needed.add(cid)
                    continue
                below = depth - offsets[cid]
                if below < 0 and not math.isclose(below, 0.0, abs_tol=1e-9):
                    log.error(
                        out.files.get(key),
                        line,
                        column,
                        value,
                        f"core {cid!r}: lies above the core top (log depth "
                        f"{offsets[cid]:g} below the datum)",
                        "a log depth is measured down from the datum; check the depth, the "
                        "datum elevation and the core top elevation",
                    )
                    below = 0.0
                values[i] = max(below, 0.0)
            table[column] = values
        setattr(out, key, table)
    for cid in sorted(needed & set(missing)):
        log.error(
            f_cores,
            missing[cid],
            "datum_elevation",
            cid,
            'has no datum elevation, which depth_reference = "log" needs',
            "give the elevation of the log's datum (kelly bushing, derrick floor) in a "
            "datum_elevation column of the cores table or in the LAS header",
        )
