"""Where a project's tables come from: the ``[inputs]`` settings beyond the three CSV paths.

The cores, intervals and picks tables may come from CSV files, spreadsheets (``.xlsx``,
``.ods``), LAS well-log files (:mod:`paleomap.io.las`) or an AGS4 borehole file
(:mod:`paleomap.io.ags`). Whatever the source, :mod:`paleomap.io.assemble` turns it into
the same three tables the CSV path produces, so the validation of
:func:`paleomap.cores.build_cores` is one for all.

This module reads the settings that say how (:class:`InputSources`): the column
mapping, the sheets, the depth reference, the LAS and AGS4 options.

Examples
--------
>>> InputSources().depth_reference
'core_top'
>>> InputSources(columns={"cores": {"core_id": "UWI"}}).column("cores", "core_id")
'UWI'
"""

from __future__ import annotations

from dataclasses import dataclass, field

__all__ = [
    "DEPTH_REFERENCES",
    "INPUT_KEYS",
    "TABLE_COLUMNS",
    "InputSources",
    "code_text",
    "header_names",
    "length_factor",
    "read_sources",
]

DEPTH_REFERENCES = ("core_top", "log")
"""Accepted ``[inputs] depth_reference`` values: depths below the core top, or log depth
measured below a datum whose elevation is known."""

TABLE_COLUMNS = {
    "cores": (("core_id", "x", "y"), ("elevation", "datum_elevation")),
    "intervals": (("core_id", "top", "base", "facies"), ()),
    "picks": (("core_id", "surface", "depth"), ()),
}
"""(required, optional) columns of each table, by the names paleomap uses."""

INPUT_KEYS = (
    "cores",
    "intervals",
    "picks",
    "depth_unit",
    "depth_reference",
    "columns",
    "sheets",
    "logs",
    "facies_curve",
    "facies_codes",
    "well_id",
    "position",
    "datum",
    "top_elevation",
    "ags",
    "ags_facies",
    "ags_legend",
    "ags_formation",
    "ags_surfaces",
)
"""Every key of the ``[inputs]`` table."""

_WELL_IDS = ("WELL", "UWI", "API", "LIC")
_AGS_FACIES = ("GEOL_LEG", "GEOL_DESC", "GEOL_GEOL", "GEOL_GEO2")


@dataclass(frozen=True)
class InputSources:
    """How the tables of a project are read (the ``[inputs]`` settings besides the paths).

    Parameters
    ----------
    depth_reference : str
        ``"core_top"`` (depths below each core's top) or ``"log"`` (depths below the
        log's datum, whose elevation comes from the LAS header or the cores table).
    columns : dict
        Per table (``"cores"``, ``"intervals"``, ``"picks"``) a mapping of paleomap's
        column name to the name in the user's file.
    sheets : dict
        Per table, the sheet of a spreadsheet to read (default: the first sheet).
    logs : str or None
        A folder or glob of LAS files, relative to the project file.
    facies_curve : str or None
        Mnemonic of the curve holding the facies codes.
    facies_codes : dict
        Code as text (``"1"``) to belt id or alias.
    well_id : str
        Header mnemonic (``~Well`` section) giving the core id.
    position : tuple of str or None
        Header mnemonics of x and y in the project CRS; None tries ``LONG``/``LATI``,
        then ``X``/``Y``.
    datum : str or None
        Header mnemonic of the log datum's elevation; None reads ``EREF``, else the one
        that ``LMF``/``DMF`` names (``EKB``, ``EDF``, ``EGL``), else ``EKB``, ``EDF``.
    top_elevation : str
        Header mnemonic of the core top's elevation (ground level).
    ags : str or None
        An AGS4 file giving cores (LOCA) and intervals (GEOL).
    ags_facies : str
        GEOL field mapped to a belt: ``GEOL_LEG`` (legend code) or ``GEOL_DESC``, ...
    ags_legend : dict
        Value of ``ags_facies`` (text) to belt id or alias.
    ags_formation : str or None
        GEOL field whose change down a hole is a pick (e.g. ``GEOL_GEOL``).
    ags_surfaces : dict or None
        Formation to surface name; without it a formation's own name is the surface.
    lines : dict
        TOML line of each key, for messages.
    """

    depth_reference: str = "core_top"
    columns: dict = field(default_factory=dict)
    sheets: dict = field(default_factory=dict)
    logs: str | None = None
    facies_curve: str | None = None
    facies_codes: dict = field(default_factory=dict)
    well_id: str = "WELL"
    position: tuple[str, str] | None = None
    datum: str | None = None
    top_elevation: str = "EGL"
    ags: str | None = None
    ags_facies: str = "GEOL_LEG"
    ags_legend: dict = field(default_factory=dict)
    ags_formation: str | None = None
    ags_surfaces: dict | None = None
    lines: dict = field(default_factory=dict)

    def column(self, table: str, name: str) -> str:
        """The user's name of paleomap's column ``name`` in ``table``."""
        return self.columns.get(table, {}).get(name, name)


def read_sources(reader, inputs: dict) -> InputSources:
    """Read the ``[inputs]`` settings besides the paths and ``depth_unit``.

    Parameters
    ----------
    reader
        The project file's reader: ``err(path, value, message, hint)``,
        ``text(table, path, key, required, choices)`` and ``locate.line_of(path)``.
    inputs : dict
        The parsed ``[inputs]`` table.

    Returns
    -------
    InputSources
        Settings that failed validation keep their default (the problem is logged).
    """
    p = ("inputs",)
    out: dict = {}
    lines = {}
    # Keys of readers not in INPUT_KEYS are reported as unknown by the caller.
    inputs = {k: v for k, v in inputs.items() if k in INPUT_KEYS}
    for key in ("logs", "ags", "facies_curve", "ags_formation", "datum"):
        value = reader.text(inputs, p, key, required=False)
        if value is not None:
            out[key] = value
        lines[f"inputs.{key}"] = reader.locate.line_of((*p, key))
    well = reader.text(inputs, p, "well_id", required=False)
    if well is not None:
        out["well_id"] = well.upper()
    top = reader.text(inputs, p, "top_elevation", required=False)
    if top is not None:
        out["top_elevation"] = top.upper()
    ags_facies = reader.text(inputs, p, "ags_facies", required=False)
    if ags_facies is not None:
        out["ags_facies"] = ags_facies.upper()
    if "position" in inputs:
        value = inputs["position"]
        if (
            isinstance(value, list)
            and len(value) == 2
            and all(isinstance(v, str) and v.strip() for v in value)
        ):
            out["position"] = (value[0].strip().upper(), value[1].strip().upper())
        else:
            reader.err(
                (*p, "position"),
                value,
                "must name two header mnemonics",
                'write position = ["LONG", "LATI"] (x first, then y) or ["X", "Y"]',
            )
    out["depth_reference"] = _depth_reference(reader, inputs)
    out["columns"] = _columns(reader, inputs)
    out["sheets"] = _per_table_names(reader, inputs, "sheets", 'write sheets = { cores = "Wells" }')
    for key, what in (
        ("facies_codes", "belt"),
        ("ags_legend", "belt"),
        ("ags_surfaces", "surface"),
    ):
        if key in inputs:
            value = _mapping(reader, inputs[key], (*p, key), what)
            if value is not None:
                out[key] = value
    if "facies_curve" in out and not out.get("facies_codes"):
        reader.err(
            (*p, "facies_curve"),
            out["facies_curve"],
            "needs a table [inputs.facies_codes]",
            'map each code of the curve to a belt, e.g. [inputs.facies_codes] 1 = "shoreface"',
        )
    if "logs" in out and "facies_curve" not in out:
        reader.err(
            (*p, "logs"),
            out["logs"],
            "needs facies_curve",
            'name the curve holding the facies codes, e.g. facies_curve = "FACIES"',
        )
    if "logs" in out and "ags" in out:
        reader.err(
            (*p, "ags"),
            out["ags"],
            "is given together with logs",
            "give the intervals from one source: LAS files (logs) or an AGS4 file (ags)",
        )
    for key in ("logs", "ags"):
        if key in out and "intervals" in inputs:
            reader.err(
                (*p, "intervals"),
                inputs["intervals"],
                f"is given together with {key}",
                f"the intervals come from one source: delete intervals, or {key}",
            )
    if out.get("depth_reference") == "log" and "ags" in out:
        reader.err(
            (*p, "depth_reference"),
            "log",
            "mixes depth references: AGS4 depths are below ground level",
            'AGS4 files give depths below the core top; use depth_reference = "core_top"',
        )
    if "ags_formation" in out and "picks" in inputs:
        reader.err(
            (*p, "picks"),
            inputs["picks"],
            "is given together with ags_formation",
            "the picks come from one source: delete picks, or ags_formation",
        )
    if "ags_surfaces" in out and "ags_formation" not in out:
        reader.err(
            (*p, "ags_surfaces"),
            None,
            "needs ags_formation",
            'name the GEOL field whose changes are picks, e.g. ags_formation = "GEOL_GEOL"',
        )
    return InputSources(lines=lines, **out)


def _depth_reference(reader, inputs: dict) -> str:
    path = ("inputs", "depth_reference")
    if "depth_reference" not in inputs:
        return "core_top"
    value = inputs["depth_reference"]
    if isinstance(value, dict):
        # A per-table form is accepted to make the reference explicit, but one project
        # has one reference: a pick below the core top next to an interval in log
        # depth would silently shift one against the other by the datum's height.
        bad = [k for k in value if k not in ("intervals", "picks")]
        for k in bad:
            reader.err((*path, k), k, "is not a known key", "allowed keys: intervals, picks")
        refs = {k: v for k, v in value.items() if k not in bad}
        for k, v in refs.items():
            if v not in DEPTH_REFERENCES:
                reader.err(
                    (*path, k), v, "is not allowed", f"choose one of {list(DEPTH_REFERENCES)}"
                )
                return "core_top"
        if len(set(refs.values())) > 1:
            reader.err(
                path,
                refs,
                "mixes depth references",
                "give every depth of a project in one reference: all below the core top, "
                'or all in log depth (depth_reference = "log")',
            )
            return "core_top"
        return next(iter(refs.values()), "core_top")
    if value not in DEPTH_REFERENCES:
        reader.err(path, value, "is not allowed", f"choose one of {list(DEPTH_REFERENCES)}")
        return "core_top"
    return value


def _columns(reader, inputs: dict) -> dict:
    """``[inputs.columns]``: flat keys apply to every table, sub-tables to one table."""
    path = ("inputs", "columns")
    if "columns" not in inputs:
        return {}
    raw = inputs["columns"]
    if not isinstance(raw, dict):
        reader.err(
            path,
            raw,
            "must be a table of column names",
            'write [inputs.columns] with lines such as core_id = "UWI"',
        )
        return {}
    every = {n for req, opt in TABLE_COLUMNS.values() for n in (*req, *opt)}
    flat: dict = {}
    own: dict = {t: {} for t in TABLE_COLUMNS}
    for key, value in raw.items():
        if isinstance(value, dict) and key in TABLE_COLUMNS:
            req, opt = TABLE_COLUMNS[key]
            for name, header in value.items():
                if name not in (*req, *opt):
                    reader.err(
                        (*path, key, name),
                        name,
                        f"is not a column of the {key} table",
                        f"columns: {', '.join((*req, *opt))}",
                    )
                elif _header(reader, (*path, key, name), header):
                    own[key][name] = header.strip()
        elif key not in every:
            reader.err(
                (*path, key),
                key,
                "is not a column paleomap reads",
                f"columns: {', '.join(sorted(every))}; or a table per file: "
                "[inputs.columns.cores], [inputs.columns.intervals], [inputs.columns.picks]",
            )
        elif _header(reader, (*path, key), value):
            flat[key] = value.strip()
    out = {}
    for table, (req, opt) in TABLE_COLUMNS.items():
        mapping = {k: v for k, v in flat.items() if k in (*req, *opt)}
        mapping.update(own[table])
        if mapping:
            out[table] = mapping
    return out


def _header(reader, path, value) -> bool:
    if isinstance(value, str) and value.strip():
        return True
    reader.err(path, value, "must be a column name in quotes", 'write e.g. core_id = "UWI"')
    return False


def _per_table_names(reader, inputs: dict, key: str, example: str) -> dict:
    path = ("inputs", key)
    if key not in inputs:
        return {}
    raw = inputs[key]
    if not isinstance(raw, dict):
        reader.err(path, raw, "must be a table of the tables cores, intervals, picks", example)
        return {}
    out = {}
    for table, value in raw.items():
        if table not in TABLE_COLUMNS:
            reader.err(
                (*path, table), table, "is not a known key", "allowed keys: cores, intervals, picks"
            )
        elif not isinstance(value, str) or not value.strip():
            reader.err((*path, table), value, "must be a non-empty text in quotes", example)
        else:
            out[table] = value.strip()
    return out


def _mapping(reader, raw, path: tuple, what: str) -> dict | None:
    """A table of codes (keys, as text) to names."""
    if not isinstance(raw, dict) or not raw:
        reader.err(
            path,
            raw,
            f"must be a table of codes and {what} names",
            f'write [{".".join(path)}] with lines such as 1 = "shoreface"',
        )
        return None
    out = {}
    for code, name in raw.items():
        if not isinstance(name, str) or not name.strip():
            reader.err((*path, code), name, f"must be a {what} name in quotes")
            continue
        out[code_text(code)] = name.strip()
    return out


def code_text(value) -> str:
    """A code as text, so ``1``, ``1.0`` and ``"1"`` are one code.

    >>> code_text("1.0"), code_text(" 7 "), code_text("SST")
    ('1', '7', 'sst')
    """
    text = str(value).strip()
    try:
        number = float(text)
    except ValueError:
        return text.lower()
    if number.is_integer():
        return str(int(number))
    return repr(number)


def header_names(header, columns: dict | None) -> list[str]:
    """The names paleomap gives the columns of a header, after the column mapping.

    Names are matched ignoring case and surrounding spaces. A mapped column takes
    paleomap's name; a column that already had that name is then not read.

    Parameters
    ----------
    header : sequence of str
        The header row as written.
    columns : dict or None
        paleomap's name to the user's name (one table's part of ``[inputs.columns]``).

    Examples
    --------
    >>> header_names(["UWI", "Core_ID", " Lon "], {"core_id": "uwi", "x": "Lon"})
    ['core_id', 'core_id (not read)', 'x']
    """
    names = [str(h).strip().lower() for h in header]
    if not columns:
        return names
    rename = {v.strip().lower(): k for k, v in columns.items()}
    out = []
    for n in names:
        if n in rename:
            out.append(rename[n])
        elif n in columns:
            out.append(f"{n} (not read)")
        else:
            out.append(n)
    return out


_LENGTH_M = {
    "M": 1.0,
    "METER": 1.0,
    "METERS": 1.0,
    "METRE": 1.0,
    "METRES": 1.0,
    "F": 0.3048,
    "FT": 0.3048,
    "FEET": 0.3048,
    "FOOT": 0.3048,
}
_DEPTH_UNIT_M = {"m": 1.0, "ft": 0.3048}


def length_factor(unit: str, depth_unit: str | None) -> float | None:
    """Length of one ``unit`` (as a LAS or AGS4 file writes it) in the project's depth unit.

    None when the unit is not a length paleomap knows; 1 when the project's unit is not
    known (the problem is reported elsewhere).

    Examples
    --------
    >>> length_factor("FT", "m"), length_factor("m", "m"), length_factor("s", "m")
    (0.3048, 1.0, None)
    """
    unit = str(unit).strip().upper()
    if unit not in _LENGTH_M:
        return None
    if depth_unit is None or depth_unit not in _DEPTH_UNIT_M:
        return 1.0
    return _LENGTH_M[unit] / _DEPTH_UNIT_M[depth_unit]
