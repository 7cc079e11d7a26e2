"""Reading a project: the project file and every table and vector file it names.

This is the only module that opens the user's input files. :func:`load_project`
reads everything, hands the content to the validators
(:func:`paleomap.io.project_file.parse_config`, :func:`paleomap.io.core_tables.build_cores`)
and collects every problem of every file into one :class:`~paleomap.errors.InputError`.
Loading never writes anything.

CSV files are UTF-8 (a byte-order mark is tolerated), comma separated, with a header
row; whitespace around cells and column names is ignored, column names are matched
ignoring case, extra columns are ignored, and blank lines are skipped. Lines are
numbered as a text editor shows them, counting the header as line 1. In a vector file
(GeoPackage, shapefile, GeoJSON, ...) "line" is the feature number, counting from 1.

Examples
--------
>>> project = load_project("basin/project.toml")  # doctest: +SKIP
>>> project.name, len(project.cores)  # doctest: +SKIP
('North Basin', 42)
"""

from __future__ import annotations

import csv
import hashlib
import io
import logging
import os
from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd
import pyproj

from ..agemodel import build_age_models, sample_slices
from ..crs import delivery_crs_for, working_crs_for
from ..errors import InputError, ProblemLog
from ..project import Project
from ..scheme import name_key, suggest_names
from .assemble import read_tables
from .core_tables import build_cores, parse_number
from .inputfiles import MAX_INPUT_BYTES, input_file_problem, read_input_bytes
from .project_file import ProjectConfig, TomlLocator, parse_config
from .sources import header_names

__all__ = ["CORE_COLUMNS", "INTERVAL_COLUMNS", "PICK_COLUMNS", "load_project", "read_csv_table"]

logger = logging.getLogger(__name__)

CORE_COLUMNS = (("core_id", "x", "y"), ("elevation",))
"""(required, optional) columns of ``cores.csv``."""
INTERVAL_COLUMNS = (("core_id", "top", "base", "facies"), ())
"""(required, optional) columns of ``intervals.csv``."""
PICK_COLUMNS = (("core_id", "surface", "depth"), ())
"""(required, optional) columns of ``picks.csv``."""

_CSV_SUFFIXES = {".csv", ".txt"}


def load_project(
    path: str | os.PathLike,
    *,
    allow_outside_inputs: bool = False,
    max_input_bytes: int = MAX_INPUT_BYTES,
) -> Project:
    """Read and validate a project file and every file it names.

    Every file goes through :mod:`paleomap.io.inputfiles` first: only regular files
    (a FIFO or a device is refused at once), at most ``max_input_bytes`` each, and only
    inside the project file's folder unless ``allow_outside_inputs``.

    Parameters
    ----------
    path : str or path-like
        The project's TOML file. Paths inside it are relative to it.
    allow_outside_inputs : bool
        Allow the project file to name files outside its own folder (the CLI's
        ``--allow-outside-inputs``).
    max_input_bytes : int
        Size limit of each input file.

    Returns
    -------
    Project
        Cores in the working CRS (a geographic project CRS is projected to a local
        azimuthal equidistant CRS centred on the cores), the TOML text in
        ``config_text``, the sha256 of every input file in ``checksums`` and the
        warnings in ``warnings``.

    Raises
    ------
    InputError
        Holding every problem of every file, each with its file, line, column and value.

    Warns
    -----
    PaleomapWarning
        For each warning (gaps in a core, a core with no intervals, a slice no core
        records, ...); they are also kept in ``Project.warnings``.

    Examples
    --------
    >>> project = load_project("basin/project.toml")  # doctest: +SKIP
    >>> [s.name for s in project.slices]  # doctest: +SKIP
    ['base_sequence', 'mfs', '125ka']
    """
    path = Path(path)
    shown = str(path)
    log = ProblemLog()
    checksums: dict[str, str] = {}
    raw = _read_bytes(path, shown, None, None, log)
    if raw is None:
        log.raise_if_errors()
    text = _decode(raw, shown, log)
    if text is None:
        log.raise_if_errors()
    checksums[path.name] = hashlib.sha256(raw).hexdigest()
    cfg = parse_config(text, shown, log)
    root = path.parent

    def source(key: str, value: str | None):
        """Resolve a path of the project file; log a missing file."""
        if value is None:
            return None
        target = root / value
        try:
            exists, folder = target.exists(), target.is_dir()
        except (OSError, ValueError):  # e.g. a NUL byte or a name too long for the system
            exists = folder = False
        if not exists:
            log.error(
                shown,
                cfg.lines.get(key),
                key,
                value,
                "names a file that does not exist",
                f"looked for {os.path.abspath(target)}; paths are relative to the project file",
            )
            return None
        if folder:
            log.error(
                shown,
                cfg.lines.get(key),
                key,
                value,
                "names a folder, not a file",
                "give the path of the file itself, relative to the project file",
            )
            return None
        problem = input_file_problem(
            target, root=root, allow_outside=allow_outside_inputs, max_bytes=max_input_bytes
        )
        if problem is not None:
            log.error(shown, cfg.lines.get(key), key, value, problem.message, problem.hint)
            return None
        return target

    tables = read_tables(
        cfg,
        root,
        shown,
        log,
        source=source,
        readers={
            "csv": lambda target, name, required, optional, log, columns: _read_csv_checked(
                target, name, required, optional, log, checksums, root, columns
            ),
            "vector": lambda target, name, where: _read_core_vector(
                target, name, cfg.crs, log, checksums, root, where
            ),
            "checksum": lambda target: _checksum(target, root, checksums),
        },
    )
    cores_table = tables.cores

    working = None
    if cfg.crs is not None:
        xy = _quiet_xy(cores_table)
        if cfg.crs.is_geographic or _is_geographic(cfg.crs):
            if xy is not None and len(xy[0]):
                working = working_crs_for(cfg.crs, *xy)
        else:
            working = working_crs_for(cfg.crs)
        if cores_table is not None and working is not None:
            cores_table = _project_cores(cores_table, cfg.crs, working)
        elif cores_table is not None:
            # No position could be projected: every core is reported as such.
            cores_table = cores_table.assign(easting=np.nan, northing=np.nan)

    cores = ()
    if cores_table is not None and tables.intervals is not None and tables.picks is not None:
        cores = build_cores(
            cores_table,
            tables.intervals,
            tables.picks,
            cfg.scheme if cfg.scheme is not None else _belt_names(cfg),
            cfg.surfaces,
            files=tables.files,
            log=log,
        )
    elif cores_table is not None or tables.intervals is not None or tables.picks is not None:
        logger.debug("a core table is missing; cross-table checks are skipped")

    control = ()
    if cfg.control_points is not None:
        control = _read_control_points(cfg, source, working, log, checksums, root)

    area = None
    grid = cfg.grid
    if grid is not None and grid.area is not None:
        target = source("grid.area", str(grid.area))
        if target is not None:
            grid = replace(grid, area=target)
            where = (shown, cfg.lines.get("grid.area"), "grid.area")
            area = _read_area(
                target, str(cfg.grid.area), cfg.crs, working, log, checksums, root, where
            )
    migration = cfg.migration
    transect_lines: tuple = ()
    if migration.transects is not None:
        target = source("migration.transects", str(migration.transects))
        if target is not None:
            migration = replace(migration, transects=target)
            where = (shown, cfg.lines.get("migration.transects"), "migration.transects")
            transect_lines = _read_transects(
                target, str(cfg.migration.transects), cfg.crs, working, log, checksums, root, where
            )

    cores_file = tables.files.get("cores", cfg.cores)
    if not log.has_errors and not cores:
        log.error(cores_file, 1, None, None, "lists no core", "add at least two cores")
    elif not log.has_errors and len(cores) == 1:
        # One point fixes no direction and no distance: there is nothing to map.
        log.error(
            cores_file,
            cores[0].line or 1,
            "core_id",
            cores[0].core_id,
            "is the only core",
            "a map needs at least two cores with a record at a slice (three or more to fit "
            "a trend)",
        )
    if not log.has_errors and cfg.crs is not None and not _is_geographic(cfg.crs):
        _warn_degrees(cores, cfg, log)
    if not log.has_errors:
        _check_grid_size(cores, grid, area, shown, TomlLocator(text), log, migration)
    # Problems of spreadsheets, LAS and AGS4 files named at their place in those files.
    tables.origins.relocate(log)
    log.raise_if_errors()
    project = Project(
        name=cfg.name,
        path=path,
        crs=cfg.crs,
        working_crs=working,
        depth_unit=cfg.depth_unit,
        age_unit=cfg.age_unit,
        scheme=cfg.scheme,
        surfaces=cfg.surfaces,
        slices=cfg.slices,
        cores=cores,
        grid=grid,
        mapping=cfg.mapping,
        migration=migration,
        reading=cfg.reading,
        control_points=control,
        area=area,
        transect_lines=transect_lines,
        config_text=text,
        checksums=checksums,
        output_crs=delivery_crs_for(cfg.crs, cfg.output_crs),
    )
    _check_records(project, cfg, log)
    log.emit_warnings(stacklevel=3)
    return replace(project, warnings=tuple(log.warnings))


def read_csv_table(
    path: str | os.PathLike,
    required: tuple[str, ...],
    optional: tuple[str, ...] = (),
    *,
    name: str | None = None,
    log: ProblemLog | None = None,
) -> pd.DataFrame | None:
    """Read a CSV table as text cells, checking its structure.

    Parameters
    ----------
    path : str or path-like
    required, optional : tuple of str
        Column names (lower case). Other columns are ignored.
    name : str, optional
        The file's name in messages (default: ``path``).
    log : ProblemLog, optional
        Collects problems; without one an :class:`~paleomap.errors.InputError` is
        raised.

    Returns
    -------
    pandas.DataFrame or None
        The required and present optional columns as stripped text, plus ``line``
        (the line each row starts on, header = 1). None when the file cannot be used.

    Examples
    --------
    >>> table = read_csv_table("intervals.csv", ("core_id", "top", "base", "facies"))
    ... # doctest: +SKIP
    """
    own = log is None
    log = ProblemLog() if log is None else log
    path = Path(path)
    shown = name or str(path)
    raw = _read_bytes(path, shown, None, None, log)
    table = None
    if raw is not None:
        text = _decode(raw, shown, log)
        if text is not None:
            table = _parse_csv(text, shown, required, optional, log)
    if own:
        log.raise_if_errors()
    return table


# -- files -------------------------------------------------------------------------------


def _read_bytes(path: Path, shown: str, key_line, key, log: ProblemLog) -> bytes | None:
    # Where a file may lie was checked where its path was read (``source``); here only
    # what it is: a regular file within the size limit, read without blocking.
    try:
        if not path.exists():
            log.error(shown, key_line, key, None, "file not found", f"looked for {path}")
            return None
        if path.is_dir():
            log.error(shown, key_line, key, None, "is a folder, not a file")
            return None
    except (OSError, ValueError) as exc:
        log.error(shown, key_line, key, None, f"cannot be read: {exc}")
        return None
    try:
        return read_input_bytes(path, shown=shown)
    except InputError as exc:
        for p in exc.problems:
            log.error(shown, key_line, key, None, p.message, p.hint)
    return None


def _decode(raw: bytes, shown: str, log: ProblemLog) -> str | None:
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        log.error(
            shown,
            line,
            None,
            raw[exc.start : exc.start + 4],
            "is not UTF-8 text",
            "save the file as UTF-8 (in a spreadsheet: CSV UTF-8)",
        )
        return None


def _checksum(path: Path, root: Path, checksums: dict) -> None:
    paths = [path]
    if path.suffix.lower() == ".shp":
        # A shapefile is several files; each one changes the data.
        paths = sorted(p for p in path.parent.glob(path.stem + ".*") if p.is_file())
    for p in paths:
        key = Path(os.path.relpath(p, root)).as_posix()
        checksums[key] = hashlib.sha256(p.read_bytes()).hexdigest()


def _read_csv_checked(path, name, required, optional, log, checksums, root, columns=None):
    raw = _read_bytes(path, name, None, None, log)
    if raw is None:
        return None
    checksums[Path(os.path.relpath(path, root)).as_posix()] = hashlib.sha256(raw).hexdigest()
    text = _decode(raw, name, log)
    if text is None:
        return None
    return _parse_csv(text, name, required, optional, log, columns)


def _parse_csv(text: str, shown: str, required, optional, log: ProblemLog, columns=None):
    """Text cells of a CSV file, with the line each row starts on."""
    example = ",".join(required)
    if not text.strip():
        log.error(shown, 1, None, None, "is empty", f"it needs a header row: {example}")
        return None
    reader = csv.reader(io.StringIO(text, newline=""), skipinitialspace=True)
    header = None
    header_line = None
    rows: list[tuple[int, list[str]]] = []
    try:
        while True:
            start = reader.line_num + 1
            try:
                row = next(reader)
            except StopIteration:
                break
            cells = [c.strip() for c in row]
            if not any(cells):
                continue
            if header is None:
                header, header_line = cells, start
                continue
            rows.append((start, cells))
    except csv.Error as exc:
        log.error(
            shown,
            reader.line_num,
            None,
            None,
            f"is not valid CSV: {exc}",
            "check the quotes on that line",
        )
        return None

    if header is None:  # only blank rows, e.g. ",,,"
        log.error(shown, 1, None, None, "has no header row", f"it needs a header row: {example}")
        return None
    names = header_names(header, columns)
    problems = False
    for i, n in enumerate(names):
        if not n:
            log.error(shown, header_line, None, header[i], f"column {i + 1} has no name")
            problems = True
        elif names.index(n) != i:
            log.error(shown, header_line, n, n, "is a column name used twice")
            problems = True
    missing = [c for c in required if c not in names]
    if missing:
        wanted = [(columns or {}).get(c, c) for c in required]
        hint = f"the header has {header}; required columns: {wanted}"
        if len(header) == 1 and any(sep in header[0] for sep in (";", "\t", "|")):
            hint = "the file seems to use another separator; paleomap reads comma-separated files"
        for c in missing:
            log.error(
                shown, header_line, (columns or {}).get(c, c), None, "is a missing column", hint
            )
        return None
    if problems:
        return None
    if not rows:
        log.error(
            shown, header_line, None, None, "has a header but no rows", "add at least one row"
        )
        return None
    keep = list(required) + [c for c in optional if c in names]
    index = [names.index(c) for c in keep]
    records: dict[str, list] = {c: [] for c in keep}
    lines = []
    for line, cells in rows:
        if len(cells) != len(header):
            log.error(
                shown,
                line,
                None,
                ",".join(cells),
                f"has {len(cells)} fields but the header has {len(header)}",
                "check for a missing or extra comma (a decimal comma needs quotes, or use a point)",
            )
            continue
        for c, i in zip(keep, index, strict=True):
            records[c].append(cells[i])
        lines.append(line)
    table = pd.DataFrame(records, dtype=object)
    table["line"] = pd.Series(lines, dtype="int64")
    return table


def _read_vector(path: Path, shown: str, log: ProblemLog, where):
    try:
        import pyogrio

        frame = pyogrio.read_dataframe(path)
    except Exception as exc:  # GDAL raises many kinds; all mean "cannot read this file"
        _file_problem(
            log,
            where,
            shown,
            f"names a file that cannot be read as a vector file: {exc}",
            "give a CSV file or a vector file GDAL reads (GeoPackage, shapefile, GeoJSON)",
        )
        return None
    if not hasattr(frame, "geometry"):
        # GDAL reads some tables (CSV, spreadsheets) as attributes only.
        _file_problem(
            log,
            where,
            shown,
            "names a file without geometries",
            "give a vector file with the geometries (GeoPackage, shapefile, GeoJSON)",
        )
        return None
    return frame


def _file_problem(log: ProblemLog, where, shown: str, message: str, hint: str) -> None:
    """A problem with a vector file as a whole, reported at the project-file key naming it.

    A vector file has no text lines; its "lines" are features. A problem of the whole
    file is shown at the line of the project file that names it.
    """
    project_file, line, key = where
    log.error(project_file, line, key, shown, message, hint)


def _file_crs(frame, project_crs, shown) -> pyproj.CRS | None:
    """The CRS of a vector file's coordinates (the project CRS when it has none)."""
    if frame.crs is None:
        logger.info("%s has no CRS; its coordinates are taken to be in the project CRS", shown)
        return project_crs
    return pyproj.CRS.from_user_input(frame.crs)


def _read_core_vector(path, shown, project_crs, log, checksums, root, where):
    frame = _read_vector(path, shown, log, where)
    if frame is None:
        return None
    _checksum(path, root, checksums)
    columns = {c.lower(): c for c in frame.columns if c != "geometry"}
    if "core_id" not in columns:
        _file_problem(
            log,
            where,
            shown,
            "names a file without the field 'core_id'",
            f"the file has the fields {list(columns.values())}",
        )
        return None
    if len(frame) == 0:
        _file_problem(log, where, shown, "names a file with no features", "add at least one core")
        return None
    xs, ys, ok_rows = [], [], []
    for i, geom in enumerate(frame.geometry):
        line = i + 1
        if geom is None or geom.is_empty:
            log.error(shown, line, "geometry", None, f"feature {line} has no geometry")
            xs.append(None)
            ys.append(None)
            continue
        if geom.geom_type == "MultiPoint" and len(geom.geoms) == 1:
            geom = geom.geoms[0]
        if geom.geom_type != "Point":
            log.error(
                shown,
                line,
                "geometry",
                geom.geom_type,
                f"feature {line} is not a point",
                "cores are points",
            )
            xs.append(None)
            ys.append(None)
            continue
        xs.append(geom.x)
        ys.append(geom.y)
        ok_rows.append(i)
    source_crs = _file_crs(frame, project_crs, shown)
    x = np.array([np.nan if v is None else v for v in xs], dtype=float)
    y = np.array([np.nan if v is None else v for v in ys], dtype=float)
    if project_crs is not None and source_crs is not None and source_crs != project_crs:
        logger.info(
            "%s is in %s; its cores are transformed to the project CRS", shown, source_crs.name
        )
        t = pyproj.Transformer.from_crs(source_crs, project_crs, always_xy=True)
        x, y = t.transform(x, y)
    table = pd.DataFrame(
        {
            "core_id": [str(v) if v is not None else "" for v in frame[columns["core_id"]]],
            "x": [v if np.isfinite(v) else "" for v in x],
            "y": [v if np.isfinite(v) else "" for v in y],
            "line": np.arange(1, len(frame) + 1),
        },
        dtype=object,
    )
    if "elevation" in columns:
        table["elevation"] = [
            "" if v is None or (isinstance(v, float) and np.isnan(v)) else v
            for v in frame[columns["elevation"]]
        ]
    table["line"] = table["line"].astype("int64")
    return table


def _is_geographic(crs: pyproj.CRS) -> bool:
    if crs.is_compound:
        return any(s.is_geographic for s in crs.sub_crs_list)
    return crs.is_geographic


def _quiet_xy(table) -> tuple[np.ndarray, np.ndarray] | None:
    """Finite x, y of the core rows whose coordinates parse (problems are logged later)."""
    if table is None:
        return None
    xs, ys = [], []
    for x, y in zip(table["x"], table["y"], strict=True):
        try:
            fx, fy = parse_number(x), parse_number(y)
        except ValueError:
            continue
        if -180.0 <= fx <= 180.0 and -90.0 <= fy <= 90.0:
            xs.append(fx)
            ys.append(fy)
    return np.array(xs), np.array(ys)


def _project_cores(table: pd.DataFrame, crs: pyproj.CRS, working: pyproj.CRS) -> pd.DataFrame:
    """Add easting, northing (working CRS); NaN where a position does not project."""
    x = np.full(len(table), np.nan)
    y = np.full(len(table), np.nan)
    for i, (vx, vy) in enumerate(zip(table["x"], table["y"], strict=True)):
        try:
            x[i], y[i] = parse_number(vx), parse_number(vy)
        except ValueError:
            pass
    table = table.copy()
    if _is_geographic(crs):
        bad = (x < -180) | (x > 180) | (y < -90) | (y > 90)
        x[bad] = np.nan
        y[bad] = np.nan
        t = pyproj.Transformer.from_crs(crs, working, always_xy=True)
        e, n = t.transform(x, y)
        e, n = np.asarray(e, dtype=float), np.asarray(n, dtype=float)
    else:
        e, n = x, y
    e[~np.isfinite(e)] = np.nan
    n[~np.isfinite(n)] = np.nan
    table["easting"] = e
    table["northing"] = n
    return table


def _to_working(frame, shown, project_crs, working, log):
    source_crs = _file_crs(frame, project_crs, shown)
    if source_crs is None or working is None:
        return None
    if source_crs != working:
        frame = frame.set_crs(source_crs, allow_override=True).to_crs(working)
    return frame


def _read_area(path, shown, project_crs, working, log, checksums, root, where):
    frame = _read_vector(path, shown, log, where)
    if frame is None:
        return None
    _checksum(path, root, checksums)
    if len(frame) == 0:
        _file_problem(
            log, where, shown, "names a file with no features", "give one or more polygons"
        )
        return None
    ok = True
    for i, geom in enumerate(frame.geometry):
        kind = None if geom is None else geom.geom_type
        if kind not in ("Polygon", "MultiPolygon"):
            log.error(
                shown,
                i + 1,
                "geometry",
                kind,
                f"feature {i + 1} is not a polygon",
                "the area of interest is one or more polygons",
            )
            ok = False
        elif not geom.is_valid:
            from shapely import is_valid_reason

            log.error(
                shown,
                i + 1,
                "geometry",
                is_valid_reason(geom),
                f"feature {i + 1} is not a valid polygon",
                "repair it in a GIS (e.g. fix self-intersections)",
            )
            ok = False
    if not ok:
        return None
    frame = _to_working(frame, shown, project_crs, working, log)
    if frame is None:
        return None
    from shapely import union_all

    return union_all(list(frame.geometry))


def _read_transects(path, shown, project_crs, working, log, checksums, root, where) -> tuple:
    frame = _read_vector(path, shown, log, where)
    if frame is None:
        return ()
    _checksum(path, root, checksums)
    if len(frame) == 0:
        _file_problem(log, where, shown, "names a file with no features", "give one or more lines")
        return ()
    columns = {c.lower(): c for c in frame.columns if c != "geometry"}
    id_column = next((columns[c] for c in ("transect_id", "id", "name") if c in columns), None)
    ids = []
    ok = True
    for i, geom in enumerate(frame.geometry):
        kind = None if geom is None else geom.geom_type
        if kind == "MultiLineString" and len(geom.geoms) == 1:
            kind = "LineString"
        if kind != "LineString" or geom.length == 0:
            log.error(
                shown,
                i + 1,
                "geometry",
                kind,
                f"feature {i + 1} is not a line",
                "each transect is one line, drawn landward to basinward or back",
            )
            ok = False
        value = frame[id_column].iloc[i] if id_column else None
        tid = f"T{i + 1}" if value is None or str(value).strip() in ("", "nan") else str(value)
        if tid in ids:
            log.error(shown, i + 1, id_column, tid, "is a duplicate transect id")
            ok = False
        ids.append(tid)
    if not ok:
        return ()
    frame = _to_working(frame, shown, project_crs, working, log)
    if frame is None:
        return ()
    out = []
    for tid, geom in zip(ids, frame.geometry, strict=True):
        if geom.geom_type == "MultiLineString":
            geom = geom.geoms[0]
        out.append((tid, geom))
    return tuple(out)


def _check_grid_size(
    cores, grid, area, shown: str, locate: TomlLocator, log, migration=None
) -> None:
    """Refuse, before any work, a grid with more cells than paleomap allocates.

    The extent is the one :func:`paleomap.grid.make_grid` takes (the area's bounds, or
    the cores' convex hull grown by the margin), so ``paleomap check`` reports the
    problem at the line of ``cell_size`` and names a cell size that fits.
    """
    import shapely

    from ..grid import MAX_GRID_CELLS, default_margin

    cell = grid.cell_size
    if area is not None:
        minx, miny, maxx, maxy = area.bounds
    else:
        e = np.array([c.easting for c in cores], dtype=float)
        n = np.array([c.northing for c in cores], dtype=float)
        margin = grid.margin if grid.margin is not None else default_margin(e, n)
        with np.errstate(all="ignore"):  # absurd coordinates (1e308) are reported below
            hull = shapely.convex_hull(shapely.multipoints(np.column_stack([e, n])))
        grow = max(margin, cell) if hull.area == 0 else margin
        minx, miny, maxx, maxy = hull.bounds
        minx, miny, maxx, maxy = minx - grow, miny - grow, maxx + grow, maxy + grow

    def shape(size: float) -> tuple[float, float]:
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            cols = max(1.0, float(np.ceil(maxx / size) - np.floor(minx / size)))
            rows = max(1.0, float(np.ceil(maxy / size) - np.floor(miny / size)))
        return rows, cols

    rows, cols = shape(cell)
    cells = rows * cols
    if np.isfinite(cells) and cells <= MAX_GRID_CELLS:
        _check_small_grid(rows, cols, minx, miny, maxx, maxy, cell, shown, locate, log)
        _check_transect_spacing(minx, miny, maxx, maxy, migration, shown, locate, log)
        return
    line = locate.line_of(("grid", "cell_size"))
    width, height = maxx - minx, maxy - miny
    with np.errstate(over="ignore", invalid="ignore"):
        fit = float(np.ceil(np.sqrt(width * height / MAX_GRID_CELLS)))
    # Wider than the Earth is round: the coordinates are not metres of a real place.
    if not (np.isfinite(fit) and fit > 0) or max(width, height) > _EARTH_CIRCUMFERENCE_M:
        log.error(
            shown,
            line,
            "grid.cell_size",
            cell,
            f"cannot grid an area of {width:.3g} x {height:.3g} m",
            "check the core coordinates and the project CRS",
        )
        return
    # The grid snaps outward to whole cells, so the size that fits may be a little larger.
    while np.prod(shape(fit)) > MAX_GRID_CELLS:
        fit = float(np.ceil(fit * 1.01))
    log.error(
        shown,
        line,
        "grid.cell_size",
        cell,
        f"gives a grid of {_count(rows)} x {_count(cols)} = {_count(cells)} cells, more than the "
        f"{MAX_GRID_CELLS:,} paleomap allocates",
        f"use cell_size = {fit:.0f} or larger",
    )


def _warn_degrees(cores, cfg, log: ProblemLog) -> None:
    """Warn when every core of a projected project sits where degrees would.

    Longitudes and latitudes given under a projected CRS map a basin a few hundred
    metres wide near the CRS origin: the build runs, the map is nonsense.
    """
    e = np.array([c.easting for c in cores], dtype=float)
    n = np.array([c.northing for c in cores], dtype=float)
    if not len(e) or np.any(np.abs(e) > 180.0) or np.any(np.abs(n) > 90.0):
        return
    log.warn(
        cfg.cores,
        cores[0].line or 1,
        "x",
        (float(e[0]), float(n[0])),
        f"every core lies within ±180 and ±90, like longitudes and latitudes, but the project "
        f"CRS {cfg.crs.name!r} is projected (metres)",
        "if the coordinates are degrees, give their geographic CRS (e.g. EPSG:4326)",
    )


MIN_GRID_SIDE_CELLS = 3
"""Fewest cells along each side of a grid: fewer cannot show a belt boundary between cores."""
MAX_DEFAULT_TRANSECTS = 1000
"""Most dip transects ``transect_spacing_m`` may ask for across the mapped area."""


def _check_small_grid(rows, cols, minx, miny, maxx, maxy, cell, shown, locate, log) -> None:
    """Refuse a cell as large as the mapped area (one cell cannot hold a map)."""
    if min(rows, cols) >= MIN_GRID_SIDE_CELLS:
        return
    fit = float(min(maxx - minx, maxy - miny)) / MIN_GRID_SIDE_CELLS
    log.error(
        shown,
        locate.line_of(("grid", "cell_size")),
        "grid.cell_size",
        cell,
        f"gives a grid of {rows:.0f} x {cols:.0f} cells over an area of "
        f"{maxx - minx:.4g} x {maxy - miny:.4g} m, fewer than {MIN_GRID_SIDE_CELLS} a side",
        f"use cell_size = {fit:.4g} or smaller, or a larger margin or area",
    )


def _check_transect_spacing(minx, miny, maxx, maxy, migration, shown, locate, log) -> None:
    """Refuse a transect spacing that would draw more transects than anyone could read."""
    spacing = None if migration is None else migration.transect_spacing_m
    if spacing is None or migration.transects is not None:
        return
    span = float(np.hypot(maxx - minx, maxy - miny))
    with np.errstate(over="ignore", divide="ignore"):
        count = span / spacing
    if np.isfinite(count) and count <= MAX_DEFAULT_TRANSECTS:
        return
    log.error(
        shown,
        locate.line_of(("migration", "transect_spacing_m")),
        "migration.transect_spacing_m",
        spacing,
        f"gives {_count(count)} transects across the {span:.4g} m wide mapped area, more than "
        f"the {MAX_DEFAULT_TRANSECTS:,} paleomap draws",
        f"use transect_spacing_m = {span / MAX_DEFAULT_TRANSECTS:.4g} or larger",
    )


_EARTH_CIRCUMFERENCE_M = 40_075_017.0  # equatorial, WGS 84 (common practice)


def _count(value: float) -> str:
    if not np.isfinite(value):
        return "more than 1e308"
    return f"{value:,.0f}" if value < 1e15 else f"{value:.3g}"


def _read_control_points(cfg, source, working, log, checksums, root) -> tuple:
    """The control-points file, validated; () when it cannot be read (problems logged)."""
    from ..control import CONTROL_COLUMNS, build_control_points

    name = cfg.control_points
    target = source("inputs.control_points", name)
    if target is None:
        return ()
    table = _read_csv_checked(target, name, *CONTROL_COLUMNS, log, checksums, root)
    if table is None or cfg.crs is None or working is None:
        return ()
    table = _project_cores(table, cfg.crs, working)
    scheme = cfg.scheme if cfg.scheme is not None else _belt_names(cfg)
    if scheme is None:
        return ()
    return build_control_points(table, scheme, cfg.surfaces or (), cfg.slices or (), name, log)


class _BeltNames:
    """Facies lookup over the belts of a scheme that broke a rule (see Scheme.rank)."""

    def __init__(self, belts):
        self.name = "custom"
        self.ids = tuple(b.id for b in belts)
        self._names = [n for b in belts for n in b.names()]
        self._lookup = {k: r for r, b in enumerate(belts) for k in b.keys()}

    def rank(self, facies: str) -> int | None:
        return self._lookup.get(name_key(facies))

    def names(self) -> list[str]:
        return list(self._names)

    def suggest(self, facies: str) -> list[str]:
        return suggest_names(facies, self._names)


def _belt_names(cfg: ProjectConfig):
    return _BeltNames(cfg.belts) if cfg.belts else None


def _check_records(project: Project, cfg: ProjectConfig, log: ProblemLog) -> None:
    """Warn about slices that no core records and surfaces that no core picks."""
    picked = {p.surface for c in project.cores for p in c.picks}
    for i, s in enumerate(project.surfaces):
        if s.name not in picked:
            log.warn(
                cfg.file, s.line, f"surfaces[{i + 1}].name", s.name, "is not picked in any core"
            )
    at_line = TomlLocator(project.config_text).line_of(("slices", "at"))
    table = sample_slices(project, age_models=build_age_models(project))
    counts = table.groupby("slice").size().to_dict() if len(table) else {}
    for sl in project.slices:
        if counts.get(sl.name, 0) == 0:
            log.warn(
                cfg.file,
                at_line,
                "slices.at",
                sl.name,
                "no core has a record at this slice",
                "it cannot be mapped",
            )
