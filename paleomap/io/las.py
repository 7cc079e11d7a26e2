"""Facies logged as a discrete curve in LAS well-log files, read through lasio.

LAS (the Canadian Well Logging Society's Log ASCII Standard) 2.0, and 3.0 where lasio
reads it. One well per file. From each file paleomap takes:

- the core id from a ``~Well`` mnemonic (``WELL``, or another set by ``well_id``);
- the position from ``LONG``/``LATI`` (else ``X``/``Y``, or the pair set by ``position``),
  in the project CRS, unless a cores table gives the positions;
- the elevation of the core top (``EGL``, or ``top_elevation``) and of the log's datum
  (``datum``, else ``EREF``, else the elevation that ``LMF`` or ``DMF`` names, ``EKB``,
  ``EDF``), for depths in log depth;
- the facies from the curve ``facies_curve``, each code mapped to a belt by
  ``[inputs.facies_codes]``.

A sampled curve becomes intervals. Each sample stands for the depths half a step either
side of it: the boundary between two samples is the midpoint between their depths, and
the first and last samples reach half their neighbour's step beyond (the first never above
depth 0). Consecutive samples with one code make one interval; a null value (the file's
``NULL``) is no record, a gap. Depths come in the unit of the depth curve (``M``, ``FT``)
and are converted to the project's ``depth_unit``. Depths may increase or decrease down
the file, but never repeat or turn back.

Problems name the file, the line, the section and the mnemonic, and the value:
``W-07.las, line 41, ~ASCII section, column 'FACIES': is not a code of
[inputs.facies_codes] (got 7.0)``.

Examples
--------
>>> import numpy as np
>>> intervals_from_samples(np.array([100.0, 100.5, 101.0, 101.5, 102.0]),
...                        ["1", "1", None, "2", "2"])
[(99.75, 100.75, '1', 0), (101.25, 102.25, '2', 3)]
"""

from __future__ import annotations

import glob
import io
import logging
import math
import os
import re
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import ProblemLog
from .origins import Origins, Where
from .sources import InputSources, code_text, length_factor

__all__ = ["LAS_SUFFIXES", "intervals_from_samples", "parse_coordinate", "read_logs"]

logger = logging.getLogger(__name__)

LAS_SUFFIXES = (".las",)
"""Suffixes of the LAS files taken from a folder (any case)."""

_SECTIONS = {
    "V": "~Version section",
    "W": "~Well section",
    "C": "~Curve section",
    "P": "~Parameter section",
    "O": "~Other section",
    "A": "~ASCII section",
}


def read_logs(
    sources: InputSources,
    root: Path,
    project_file: str,
    depth_unit: str | None,
    log: ProblemLog,
    origins: Origins,
    checksum,
    *,
    scheme=None,
    crs=None,
    positions: bool = True,
) -> tuple[pd.DataFrame | None, pd.DataFrame | None]:
    """Read every LAS file of ``[inputs] logs`` into a cores table and an intervals table.

    Parameters
    ----------
    sources : InputSources
        The ``[inputs]`` settings.
    root : Path
        The project file's folder.
    project_file : str
        The project file as named in messages.
    depth_unit : str or None
        The project's depth unit; depths are converted to it (None: left as in the file).
    log : ProblemLog
    origins : Origins
        Where each row came from, for messages.
    checksum : callable
        Records a file's checksum.
    scheme : Scheme, optional
        Checks that every belt of ``[inputs.facies_codes]`` is in the scheme.
    crs : pyproj.CRS, optional
        The project CRS: header longitudes and latitudes need a geographic one.
    positions : bool
        Whether the positions come from the headers (no cores table).

    Returns
    -------
    cores, intervals : pandas.DataFrame or None
        The tables :func:`paleomap.io.core_tables.build_cores` reads, with ``attrs["name"]``
        naming them in messages; lines are keys of ``origins``.
    """
    where_key = (project_file, sources.lines.get("inputs.logs"), "inputs.logs")
    files = _find(sources.logs, root)
    if not files:
        log.error(
            where_key[0],
            where_key[1],
            where_key[2],
            sources.logs,
            "matches no LAS file",
            f"looked for {os.path.abspath(root / sources.logs)}; give a folder of .las files "
            "or a glob such as logs/*.las, relative to the project file",
        )
        return None, None
    codes = dict(sources.facies_codes)
    if scheme is not None:
        for code, belt in list(codes.items()):
            if scheme.rank(belt) is None:
                log.error(
                    project_file,
                    sources.lines.get("inputs.facies_codes"),
                    f"inputs.facies_codes.{code}",
                    belt,
                    f"is not a facies of the {scheme.name!r} scheme",
                    f"known ids: {list(scheme.ids)} (or their aliases, any case)",
                )
                codes.pop(code)
    cores_name = f"the LAS files {sources.logs}"
    iv_name = f"the {sources.facies_curve} curves of {sources.logs}"
    cores_rows: list[dict] = []
    iv_rows: list[dict] = []
    seen: dict[str, str] = {}
    failed: set[str] = set()
    for path in files:
        shown = Path(os.path.relpath(path, root)).as_posix()
        well = _read_one(path, shown, sources, depth_unit, log, codes, crs, positions, checksum)
        if well is None:
            continue
        cid, header, intervals = well
        if intervals is None:
            failed.add(cid)
            continue
        if cid in seen:
            log.error(
                shown,
                header["core_id"].line,
                None,
                cid,
                f"is also the well of {seen[cid]}",
                "one well per file: give each file its own well id",
                place=header["core_id"].place,
            )
            continue
        seen[cid] = shown
        line = len(cores_rows) + 1
        values = {k: v for k, v in header.items() if not isinstance(v, Where)}
        cores_rows.append({"core_id": cid, **values, "line": line})
        anchor = header["core_id"]
        origins.add_row(
            cores_name,
            line,
            Where(
                shown,
                anchor.line,
                anchor.place,
                {k.lstrip("@"): v for k, v in header.items() if isinstance(v, Where)},
            ),
        )
        for top, base, facies, where in intervals:
            line = len(iv_rows) + 1
            iv_rows.append(
                {"core_id": cid, "top": top, "base": base, "facies": facies, "line": line}
            )
            origins.add_row(iv_name, line, where)
    cores = _frame(cores_rows, ("core_id", "x", "y", "elevation", "datum_elevation"))
    cores.attrs["name"] = cores_name
    # Wells whose file has a problem: their picks are checked once the file is fixed.
    cores.attrs["failed"] = failed - set(seen)
    intervals = _frame(iv_rows, ("core_id", "top", "base", "facies"))
    intervals.attrs["name"] = iv_name
    return cores, intervals


def _frame(rows: list[dict], columns: tuple[str, ...]) -> pd.DataFrame:
    table = pd.DataFrame(
        {c: [r.get(c, "") for r in rows] for c in columns}, dtype=object, columns=list(columns)
    )
    table["line"] = pd.Series([r["line"] for r in rows], dtype="int64")
    return table


def _find(pattern: str, root: Path) -> list[Path]:
    target = root / pattern
    try:
        if target.is_dir():
            return sorted(
                p for p in target.iterdir() if p.suffix.lower() in LAS_SUFFIXES and p.is_file()
            )
    except OSError:
        return []
    return sorted(Path(p) for p in glob.glob(str(target)) if Path(p).is_file())


class _Layout:
    """Lines of a LAS file's sections, mnemonics and data rows, for messages."""

    def __init__(self, text: str):
        self.sections: dict[str, int] = {}
        self.items: dict[tuple[str, str], int] = {}
        self.data: list[int] = []
        section = None
        for number, raw in enumerate(text.splitlines(), start=1):
            line = raw.strip()
            if not line or line.startswith("#"):
                continue
            if line.startswith("~"):
                section = _section_key(line)
                self.sections.setdefault(section, number)
                continue
            if section == "A":
                self.data.append(number)
            elif section is not None and "." in line:
                mnemonic = line.split(".", 1)[0].strip().upper()
                self.items.setdefault((section, mnemonic), number)

    def item(self, section: str, mnemonic: str) -> Where:
        return Where(
            "",
            self.items.get((section, mnemonic), self.sections.get(section)),
            f"{_SECTIONS[section]}, mnemonic {mnemonic!r}",
        )


def _section_key(line: str) -> str:
    name = line[1:].split()[0].upper() if len(line) > 1 and line[1:].split() else ""
    if name.startswith(("LOG_DEFINITION", "CURVE", "C")) and not name.startswith("CORE"):
        return "C"
    if name.startswith(("LOG_DATA", "ASCII", "A")):
        return "A"
    if name.startswith(("LOG_PARAMETER", "PARAM", "P")):
        return "P"
    return name[:1] if name[:1] in _SECTIONS else "O"


def _read_one(path, shown, sources, depth_unit, log, codes, crs, positions, checksum):
    """(core id, header values and places, intervals) of one LAS file, or None."""
    import lasio

    from ..errors import InputError
    from .inputfiles import read_input_bytes

    try:
        # The shared guard: a regular file within the size limit, read without blocking.
        raw = read_input_bytes(path, shown=shown)
    except InputError as exc:
        for p in exc.problems:
            log.error(shown, None, None, None, p.message, p.hint)
        return None
    checksum(path)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        # LAS files are ASCII; older ones carry Latin-1 in their descriptions.
        text = raw.decode("latin-1")
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            las = lasio.read(io.StringIO(text), ignore_header_errors=False)
        for w in caught:
            logger.debug("%s: lasio: %s", shown, w.message)
    except Exception as exc:  # lasio raises many kinds; all mean "cannot read this file"
        log.error(
            shown,
            None,
            None,
            None,
            f"cannot be read as a LAS file: {exc}",
            "check that it is a LAS 2.0 or 3.0 file (sections ~Version, ~Well, ~Curve, ~ASCII)",
        )
        return None
    layout = _Layout(text)

    def at(section: str, mnemonic: str) -> Where:
        w = layout.item(section, mnemonic)
        return Where(shown, w.line, w.place)

    def section(key: str) -> Where:
        return Where(shown, layout.sections.get(key), _SECTIONS[key])

    def bad(where: Where, value, message: str, hint: str | None = None, column=None):
        log.error(where.file, where.line, column, value, message, hint, place=where.place)

    ok = True
    header: dict = {}
    # -- the well's id ---------------------------------------------------------------------
    found = _header(las, sources.well_id)
    if found is None:
        bad(
            section("W"),
            sources.well_id,
            "has no well id mnemonic",
            f"add {sources.well_id} to the ~Well section, or name the mnemonic that holds "
            'the id with well_id = "UWI"',
        )
        return None
    key, item = found
    cid = _text(item.value)
    header["core_id"] = at(key, sources.well_id)
    if not cid:
        bad(
            header["core_id"],
            item.value,
            "is empty",
            f'give the well\'s id, or set well_id = "UWI" (or another mnemonic) in [inputs]; '
            f"tried {sources.well_id}",
        )
        return None

    # -- position --------------------------------------------------------------------------
    pairs = [sources.position] if sources.position else [("LONG", "LATI"), ("X", "Y")]
    pair = next(
        (
            p
            for p in pairs
            if all(_header(las, m) is not None and _text(_header(las, m)[1].value) for m in p)
        ),
        None,
    )
    if pair is not None:
        for column, mnemonic in zip(("x", "y"), pair, strict=True):
            key, item = _header(las, mnemonic)
            value = parse_coordinate(item.value)
            header[column] = _text(item.value) if value is None else value
            header[f"@{column}"] = at(key, mnemonic)
        if (
            positions
            and sources.position is None
            and pair == ("LONG", "LATI")
            and crs is not None
            and not _geographic(crs)
        ):
            bad(
                header["@x"],
                (header["x"], header["y"]),
                "is a longitude and latitude, but the project CRS is projected",
                "positions are read in the project CRS: use a geographic project CRS, give "
                'X and Y (position = ["X", "Y"]), or give the positions in a cores table',
            )
            ok = False
    elif positions:
        bad(
            section("W"),
            None,
            "has no position",
            f"give {' and '.join(pairs[0])} in the header (in the project CRS), name other "
            'mnemonics with position = ["X", "Y"], or give the positions in a cores table',
        )
        ok = False

    # -- elevations ------------------------------------------------------------------------
    def elevation(mnemonic: str, column: str) -> None:
        found = _header(las, mnemonic)
        if found is None or not _text(found[1].value):
            return
        key, item = found
        where = at(key, mnemonic)
        header[f"@{column}"] = where
        value = _number(item.value)
        factor = length_factor(item.unit, depth_unit) if item.unit else 1.0
        if value is None or factor is None:
            header[column] = _text(item.value)
            if factor is None:
                bad(
                    where,
                    item.unit,
                    "is not a length unit paleomap knows",
                    "write the unit as M or FT",
                )
            return
        header[column] = value * factor

    elevation(sources.top_elevation, "elevation")
    for mnemonic in _datum_mnemonics(las, sources.datum):
        found = _header(las, mnemonic)
        if found is not None and _text(found[1].value):
            elevation(mnemonic, "datum_elevation")
            break
    else:
        if sources.datum is not None and sources.depth_reference == "log":
            bad(
                section("P"),
                sources.datum,
                "has no datum elevation mnemonic",
                f"add {sources.datum} with the datum's elevation, or name another with datum",
            )
            ok = False
    if "@datum_elevation" not in header:
        header["@datum_elevation"] = section("P")
    datum, top = header.get("datum_elevation"), header.get("elevation")
    if (
        sources.depth_reference == "core_top"
        and isinstance(datum, float)
        and isinstance(top, float)
        and datum - top > 1e-6
    ):
        # The file's depths are below a datum above the core top, the project's below the
        # top: read together, every depth of this well would be off by the datum's height.
        bad(
            header["@datum_elevation"],
            datum,
            f"mixes depth references: the log's depths are measured from a datum "
            f"{datum - top:g} above the core top ({top:g})",
            'set depth_reference = "log" (and give the picks in log depth too), or give '
            "the datum as the core top",
        )
        ok = False

    # -- the curves ------------------------------------------------------------------------
    mnemonics = [c.mnemonic for c in las.curves]
    upper = [m.upper() for m in mnemonics]
    curve = sources.facies_curve.upper()
    if curve not in upper:
        bad(
            section("C"),
            sources.facies_curve,
            "has no curve of this mnemonic",
            f"its curves: {mnemonics}; name the facies curve with facies_curve",
        )
        return cid, header, None
    if not mnemonics or upper.index(curve) == 0:
        bad(
            section("C"),
            sources.facies_curve,
            "has no depth curve before the facies curve",
            "the first curve of a LAS file is its depth",
        )
        return cid, header, None
    index_item = las.curves[0]
    index_where = at("C", index_item.mnemonic.upper())
    unit = (index_item.unit or "").strip().upper()
    if not unit:
        strt = _header(las, "STRT")
        unit = (strt[1].unit or "").strip().upper() if strt is not None else ""
    if not unit:
        bad(
            index_where,
            index_item.mnemonic,
            "has no depth unit",
            "give the unit of the depth curve in the ~Curve section, e.g. DEPT.M or DEPT.FT",
        )
        return cid, header, None
    factor = length_factor(unit, depth_unit)
    if factor is None:
        bad(
            index_where,
            unit,
            "is not a depth unit paleomap knows",
            "write the depth curve's unit as M or FT",
        )
        return cid, header, None
    depths = np.asarray(las.index, dtype=float)
    values = las.curves[upper.index(curve)].data
    name = mnemonics[upper.index(curve)]
    rows_have_lines = len(layout.data) == len(depths)
    wrapped = _text(las.version["WRAP"].value).upper() == "YES" if "WRAP" in las.version else False
    if not rows_have_lines and not wrapped:
        bad(
            section("A"),
            len(depths),
            f"has {len(layout.data)} data lines but lasio read another number of rows",
            "the values could not be split into the curves: check the delimiter (DLM; "
            "with COMMA write a space after each comma) and that every line has one value "
            "per curve",
        )
        return cid, header, None

    def row_where(i: int, column: str) -> Where:
        if rows_have_lines:
            return Where(shown, layout.data[i], _SECTIONS["A"], {})
        # A wrapped file spreads one row over several lines.
        return Where(shown, None, f"{_SECTIONS['A']}, row {i + 1}", {})

    if len(depths) == 0:
        bad(section("A"), None, "has no data rows", "the ~ASCII section holds the samples")
        return cid, header, None
    null = _header(las, "NULL")
    null = _number(null[1].value) if null is not None else None
    # lasio keeps the NULL value in the depth curve; a depth of NULL is no depth.
    null_rows = np.flatnonzero(
        ~np.isfinite(depths) | (depths == null if null is not None else False)
    )
    if null_rows.size:
        bad(
            row_where(int(null_rows[0]), index_item.mnemonic),
            None,
            "has a null or missing depth",
            "every row needs a depth",
            column=index_item.mnemonic,
        )
        return cid, header, None
    step = np.diff(depths)
    if step.size:
        sign = np.sign(step[0]) if step[0] != 0 else 1.0
        wrong = np.flatnonzero(np.sign(step) != sign)
        if wrong.size:
            i = int(wrong[0]) + 1
            bad(
                row_where(i, index_item.mnemonic),
                float(depths[i]),
                f"breaks the depth order: the depths are not monotonic (the row before "
                f"has {depths[i - 1]:g})",
                "the depths of a LAS file must increase (or decrease) from row to row "
                "without repeating",
                column=index_item.mnemonic,
            )
            return cid, header, None
    order = np.arange(len(depths))
    if step.size and step[0] < 0:
        order = order[::-1]  # logged upward: read it top down
    single_step = None
    if len(depths) == 1:
        strt_step = _header(las, "STEP")
        single_step = _number(strt_step[1].value) if strt_step is not None else None
        if not single_step:
            bad(
                section("A"),
                float(depths[0]),
                "has one sample and no step",
                "give STEP in the ~Well section, so the sample's thickness is known",
            )
            return cid, header, None

    codes_seen: list[str | None] = []
    unknown: dict[str, tuple[object, list[int]]] = {}
    for i in order:
        value = values[i]
        if value is None or (isinstance(value, float | np.floating) and math.isnan(value)):
            codes_seen.append(None)
            continue
        code = code_text(value)
        if code not in codes:
            unknown.setdefault(code, (_plain(value), []))[1].append(int(i))
            codes_seen.append(None)
        else:
            codes_seen.append(code)
    for _code, (value, rows) in unknown.items():
        first = row_where(rows[0], name)
        also = [layout.data[r] for r in rows[1:]] if rows_have_lines else [r + 1 for r in rows[1:]]
        bad(
            first,
            value,
            f"is not a code of [inputs.facies_codes]{_also(also, rows_have_lines)}",
            f"codes: {list(codes)}; add the code to [inputs.facies_codes] or correct the curve",
            column=name,
        )
    if unknown:
        ok = False
    if not ok:
        return cid, header, None

    intervals = []
    for top, base, code, k in intervals_from_samples(
        depths[order], codes_seen, step=abs(single_step) if single_step else None
    ):
        where = row_where(int(order[k]), name)
        where = Where(
            where.file,
            where.line,
            where.place,
            {"top": index_item.mnemonic, "base": index_item.mnemonic, "facies": name},
        )
        intervals.append((max(top, 0.0) * factor, base * factor, codes[code], where))
    return cid, header, intervals


def intervals_from_samples(depths, codes, step: float | None = None) -> list[tuple]:
    """Intervals from a sampled, discrete curve: runs of one code.

    Parameters
    ----------
    depths : array_like
        Sample depths, increasing.
    codes : sequence
        The code of each sample, None where it has no record (a null value).
    step : float, optional
        The sampling step, needed only for a single sample.

    Returns
    -------
    list of (top, base, code, first sample index)
        Each sample covers the depths half a step either side of it: boundaries lie
        midway between samples, and the first and last samples reach half their
        neighbour's step beyond themselves.

    Examples
    --------
    >>> intervals_from_samples([10.0, 10.2, 10.4, 10.6], ["a", "a", "b", "b"])
    [(9.9, 10.3, 'a', 0), (10.3, 10.7, 'b', 2)]
    >>> intervals_from_samples([5.0], ["a"], step=0.5)
    [(4.75, 5.25, 'a', 0)]
    """
    d = np.asarray(depths, dtype=float)
    n = len(d)
    if n == 0:
        return []
    bounds = np.empty(n + 1)
    if n == 1:
        half = 0.5 * float(step or 0.0)
        bounds[:] = (d[0] - half, d[0] + half)
    else:
        bounds[1:-1] = 0.5 * (d[1:] + d[:-1])
        bounds[0] = d[0] - 0.5 * (d[1] - d[0])
        bounds[-1] = d[-1] + 0.5 * (d[-1] - d[-2])
    out = []
    start = None
    for i in range(n + 1):
        code = codes[i] if i < n else None
        if start is not None and (code is None or code != codes[start]):
            out.append((float(bounds[start]), float(bounds[i]), codes[start], start))
            start = None
        if start is None and code is not None:
            start = i
    return out


_DMS = re.compile(
    r"^\s*([+-]?\d+(?:\.\d+)?)\s*(?:°|deg|d|\s)\s*(?:(\d+(?:\.\d+)?)\s*(?:'|′|m|\s)\s*"
    r"(?:(\d+(?:\.\d+)?)\s*(?:\"|″|''|s)?\s*)?)?([NSEWnsew])?\s*$"
)


def parse_coordinate(value) -> float | None:
    """A header coordinate as a number: decimal, or degrees, minutes, seconds.

    A trailing ``S`` or ``W`` makes it negative. None when it cannot be read.

    Examples
    --------
    >>> parse_coordinate("45.25 N"), parse_coordinate("-63.5"), parse_coordinate(12)
    (45.25, -63.5, 12.0)
    >>> parse_coordinate("63 30' 36\\" W"), parse_coordinate("45°15'N")
    (-63.51, 45.25)
    >>> parse_coordinate("near the river") is None
    True
    """
    number = _number(value)
    if number is not None:
        return number
    text = _text(value)
    m = re.fullmatch(r"\s*([+-]?\d+(?:\.\d+)?)\s*°?\s*([NSEWnsew])\s*", text)
    if m:
        number = float(m.group(1))
        return -abs(number) if m.group(2).upper() in "SW" else number
    m = _DMS.match(text)
    if not m:
        return None
    degrees = float(m.group(1))
    minutes = float(m.group(2) or 0.0)
    seconds = float(m.group(3) or 0.0)
    if minutes >= 60 or seconds >= 60:
        return None
    number = abs(degrees) + minutes / 60.0 + seconds / 3600.0
    negative = degrees < 0 or (m.group(4) or "").upper() in ("S", "W")
    return round(-number if negative else number, 10)


def _header(las, mnemonic: str):
    """(section key, item) of a header mnemonic in ~Well, then ~Parameter; else None."""
    for key, section in (("W", las.well), ("P", las.params)):
        for item in section:
            if item.mnemonic.upper() == mnemonic.upper():
                return key, item
    return None


def _datum_mnemonics(las, chosen: str | None) -> list[str]:
    if chosen is not None:
        return [chosen.upper()]
    out = ["EREF"]
    for name in ("LMF", "DMF", "PDAT"):
        found = _header(las, name)
        if found is not None and _text(found[1].value):
            # "KB" -> EKB, "Kelly Bushing" -> EKB, "DF" -> EDF, "GL" -> EGL.
            text = _text(found[1].value).upper()
            short = {"KELLY BUSHING": "KB", "DERRICK FLOOR": "DF", "GROUND LEVEL": "GL"}
            out.append("E" + short.get(text, text.replace(" ", "")))
    return [*out, "EKB", "EDF"]


def _geographic(crs) -> bool:
    if crs.is_compound:
        return any(s.is_geographic for s in crs.sub_crs_list)
    return crs.is_geographic


def _number(value) -> float | None:
    if isinstance(value, bool):
        return None
    if isinstance(value, int | float | np.integer | np.floating):
        return float(value) if math.isfinite(value) else None
    try:
        number = float(str(value).strip())
    except ValueError:
        return None
    return number if math.isfinite(number) else None


def _plain(value):
    if isinstance(value, np.floating | np.integer):
        return value.item()
    return value


def _text(value) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    return str(value).strip()


def _also(rows: list[int], lines: bool) -> str:
    if not rows:
        return ""
    word = "line" if lines else "row"
    shown = ", ".join(str(r) for r in rows[:8]) + (", ..." if len(rows) > 8 else "")
    return f" (also on {word}{'s' if len(rows) > 1 else ''} {shown})"
