"""Reading a project file's TOML text into validated settings.

:func:`parse_config` checks every key of every table of ``project.toml`` and returns a
:class:`ProjectConfig` (the settings, with the tables it names not yet read); every
problem names the file, the TOML line of the key (:class:`TomlLocator`) and the dotted
key. :func:`paleomap.io.readers.load_project` then reads the tables and builds the
:class:`paleomap.project.Project`.

Examples
--------
>>> cfg = parse_config(open("basin/project.toml").read())   # doctest: +SKIP
"""

from __future__ import annotations

import bisect
import difflib
import math
import re
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path

import pyproj

from ..crs import crs_problem
from ..errors import InputError, ProblemLog
from ..field.engine import ENGINES
from ..palette import belt_colors
from ..project import (
    AGE_UNITS,
    DEPTH_UNITS,
    GridSettings,
    MappingSettings,
    MigrationSettings,
    ReadingOptions,
    Slice,
    Surface,
    age_name,
)
from ..scheme import (
    _HEX,
    BUILTIN_SCHEMES,
    LITHOLOGY_SCHEMES,
    Belt,
    Scheme,
    _scheme_problems,
    builtin_belts,
    builtin_scheme,
    lithology_track_problem,
)
from .sources import INPUT_KEYS, InputSources, read_sources

__all__ = ["MAPPING_MODELS", "ProjectConfig", "TomlLocator", "parse_config"]


MAPPING_MODELS = ("auto", "exponential", "spherical", "gaussian", "matern32")
"""Accepted ``[mapping] model`` values."""

_TABLES = {
    "project": ("name", "crs"),
    "output": ("crs",),
    "inputs": (*INPUT_KEYS, "control_points"),
    "time": ("age_unit",),
    "surfaces": ("name", "age", "age_sd", "erosional"),
    "scheme": ("builtin", "belts", "track", "colors", "name"),
    "slices": ("at",),
    "grid": ("cell_size", "margin", "area"),
    "mapping": (
        "model",
        "range_m",
        "anisotropy",
        "azimuth_deg",
        "nugget",
        "samples",
        "burn_in",
        "seed",
        "deterministic",
        "neighbours",
        "engine",
        "joint",
    ),
    "migration": ("transects", "transect_spacing_m", "stillstand_m_per_kyr"),
    "reading": ("noise_thickness", "pick_tolerance", "contact_tolerance"),
}

_BELT_KEYS = ("id", "marine", "aliases", "color", "label")

_REQUIRED_TABLES = ("project", "inputs", "time", "surfaces", "scheme", "grid")


@dataclass(frozen=True)
class ProjectConfig:
    """The project file's settings, validated but with the tables not yet read.

    Produced by :func:`parse_config`; :func:`paleomap.io.readers.load_project` reads the
    files it names. A setting that failed validation is ``None`` (the problem is in the
    log), so the tables can still be checked in the same pass.

    Parameters
    ----------
    file : str
        The project file as named in messages.
    name : str or None
    crs : pyproj.CRS or None
    cores, intervals, picks : str or None
        Paths as written, relative to the project file.
    depth_unit, age_unit : str or None
    surfaces : tuple of Surface or None
    scheme : Scheme or None
    slices : tuple of Slice or None
    grid : GridSettings or None
        ``area`` is the path as written (relative).
    mapping : MappingSettings
    migration : MigrationSettings
        ``transects`` is the path as written (relative).
    lines : dict
        TOML line of each input path key, e.g. ``{"inputs.cores": 6}``, for messages
        about missing files.
    belts : tuple of Belt or None
        The scheme's belts as read, also when the scheme breaks a rule (so that the
        facies of the intervals can still be checked in the same pass).
    sources : InputSources
        How the tables are read: column mapping, sheets, depth reference, LAS and AGS4
        settings (:mod:`paleomap.io.sources`).
    """

    file: str
    name: str | None = None
    crs: pyproj.CRS | None = None
    cores: str | None = None
    intervals: str | None = None
    picks: str | None = None
    depth_unit: str | None = None
    age_unit: str | None = None
    surfaces: tuple[Surface, ...] | None = None
    scheme: Scheme | None = None
    slices: tuple[Slice, ...] | None = None
    grid: GridSettings | None = None
    mapping: MappingSettings = field(default_factory=MappingSettings)
    migration: MigrationSettings = field(default_factory=MigrationSettings)
    reading: ReadingOptions = field(default_factory=ReadingOptions)
    control_points: str | None = None
    lines: dict = field(default_factory=dict)
    belts: tuple[Belt, ...] | None = None
    sources: InputSources = field(default_factory=InputSources)
    output_crs: pyproj.CRS | None = None


def parse_config(
    text: str, file: str = "project.toml", log: ProblemLog | None = None
) -> ProjectConfig:
    """Validate the text of a project file.

    Every problem is reported with the file, the TOML line of the key and the dotted key
    (``surfaces[2].age`` counts tables from 1). Unknown keys are errors that list the
    allowed keys, so typos are caught.

    Parameters
    ----------
    text : str
        The TOML text.
    file : str
        Name of the file, for messages.
    log : ProblemLog, optional
        Collects the problems. Without one, an :class:`~paleomap.errors.InputError`
        holding every problem is raised at the end.

    Returns
    -------
    ProjectConfig

    Examples
    --------
    >>> cfg = parse_config('''
    ... [project]
    ... name = "Demo"
    ... crs = "EPSG:32631"
    ... [inputs]
    ... cores = "cores.csv"
    ... intervals = "intervals.csv"
    ... picks = "picks.csv"
    ... depth_unit = "m"
    ... [time]
    ... age_unit = "ka"
    ... [[surfaces]]
    ... name = "top"
    ... age = 100
    ... [scheme]
    ... builtin = "shoreface_shelf"
    ... [grid]
    ... cell_size = 250
    ... ''')
    >>> cfg.slices
    (Slice(name='top', age=100.0, surface='top'),)
    """
    own_log = log is None
    log = ProblemLog() if log is None else log
    locate = TomlLocator(text)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        message = str(exc)
        m = re.search(r"\s*\(at line (\d+), column (\d+)\)\s*$", message)
        line = int(m.group(1)) if m else None
        if m:
            message = message[: m.start()]
        text_lines = text.splitlines()
        end = re.search(r"\s*\(at end of document\)\s*$", message)
        if line is None and end:
            # Something opened (a quote, a bracket) is never closed: the problem shows
            # at the end of the file.
            message = message[: end.start()] + " at the end of the file"
            line = _last_line(text_lines)
        bad = text_lines[line - 1].strip() if line and line <= len(text_lines) else None
        log.error(
            file,
            line,
            None,
            bad,
            f"is not valid TOML: {message}",
            "check the quotes, brackets and '=' on that line",
        )
        if own_log:
            log.raise_if_errors()
        return ProjectConfig(file)
    cfg = _ConfigReader(data, locate, file, log).read()
    if own_log:
        log.raise_if_errors()
    return cfg


def _last_line(lines: list[str]) -> int:
    """1-based number of the last line that is not blank (1 for a blank file)."""
    for i in range(len(lines), 0, -1):
        if lines[i - 1].strip():
            return i
    return 1


def _key(path: tuple) -> str:
    """Dotted display form of a key path; array items count from 1."""
    out = ""
    for part in path:
        if isinstance(part, int):
            out += f"[{part + 1}]"
        else:
            out += ("." if out else "") + part
    return out


class _ConfigReader:
    """Walks the parsed TOML, checking types, ranges and names key by key."""

    def __init__(self, data: dict, locate: TomlLocator, file: str, log: ProblemLog):
        self.data = data
        self.locate = locate
        self.file = file
        self.log = log

    # -- reporting ---------------------------------------------------------------------
    def err(self, path: tuple, value, message: str, hint: str | None = None) -> None:
        self.log.error(self.file, self.locate.line_of(path), _key(path), value, message, hint)

    def warn(self, path: tuple, value, message: str, hint: str | None = None) -> None:
        self.log.warn(self.file, self.locate.line_of(path), _key(path), value, message, hint)

    def check_keys(self, table: dict, path: tuple, allowed: tuple[str, ...], what: str) -> None:
        for key in table:
            if key not in allowed:
                close = difflib.get_close_matches(key, allowed, n=1)
                hint = f"did you mean {close[0]!r}? " if close else ""
                hint += f"allowed keys in {what}: {', '.join(allowed)}"
                self.err((*path, key), key, "is not a known key", hint)

    def table(self, name: str) -> dict | None:
        value = self.data.get(name)
        if value is None:
            return None
        if not isinstance(value, dict):
            self.err((name,), value, f"must be a table [{name}]")
            return None
        self.check_keys(value, (name,), _TABLES[name], f"[{name}]")
        return value

    # -- typed values ------------------------------------------------------------------
    def text(self, table, path, key, required=True, choices=None, name=False) -> str | None:
        if key not in table:
            if required:
                hint = f"choose one of {list(choices)}" if choices else None
                self.err((*path, key), None, "is missing", hint)
            return None
        value = table[key]
        if not isinstance(value, str) or not value.strip():
            self.err((*path, key), value, "must be a non-empty text in quotes")
            return None
        if name and not self.printable((*path, key), value):
            return None
        if choices is not None and value not in choices:
            self.err((*path, key), value, "is not allowed", f"choose one of {list(choices)}")
            return None
        return value.strip()

    def printable(self, path, value: str) -> bool:
        """Names and labels reach figures, XML styles, file names and the report: a
        control character (a bell, an escape, a line break) is refused here."""
        bad = next((c for c in value if not c.isprintable()), None)
        if bad is None:
            return True
        self.err(
            path,
            value,
            f"contains a control character (U+{ord(bad):04X})",
            "names and labels are one line of visible characters",
        )
        return False

    def number(
        self,
        table,
        path,
        key,
        required=False,
        minimum=None,
        maximum=None,
        min_open=False,
        max_open=False,
        integer=False,
    ):
        if key not in table:
            if required:
                self.err((*path, key), None, "is missing")
            return None
        value = table[key]
        kind = "a whole number" if integer else "a number"
        ok_type = isinstance(value, int) if integer else isinstance(value, (int, float))
        if isinstance(value, bool) or not ok_type:
            self.err((*path, key), value, f"must be {kind}")
            return None
        if not math.isfinite(value):
            self.err((*path, key), value, "must be a finite number")
            return None
        low_bad = minimum is not None and (value <= minimum if min_open else value < minimum)
        high_bad = maximum is not None and (value >= maximum if max_open else value > maximum)
        if low_bad or high_bad:
            lo = "" if minimum is None else ("(" if min_open else "[") + f"{minimum:g}"
            hi = "" if maximum is None else f"{maximum:g}" + (")" if max_open else "]")
            if minimum is not None and maximum is not None:
                allowed = f"{lo}, {hi}"
            elif minimum is not None:
                allowed = f"{'>' if min_open else '>='} {minimum:g}"
            else:
                allowed = f"{'<' if max_open else '<='} {maximum:g}"
            self.err((*path, key), value, "is out of range", f"allowed: {allowed}")
            return None
        return int(value) if integer else float(value)

    def boolean(self, table, path, key, default=None):
        if key not in table:
            return default
        value = table[key]
        if not isinstance(value, bool):
            self.err((*path, key), value, "must be true or false (no quotes)")
            return default
        return value

    # -- sections ----------------------------------------------------------------------
    def read(self) -> ProjectConfig:
        for key in self.data:
            if key not in _TABLES:
                close = difflib.get_close_matches(key, list(_TABLES), n=1)
                hint = f"did you mean [{close[0]}]? " if close else ""
                hint += f"allowed tables: {', '.join(f'[{t}]' for t in _TABLES)}"
                self.err((key,), key, "is not a known table", hint)
        for name in _REQUIRED_TABLES:
            if name not in self.data:
                what = "[[surfaces]]" if name == "surfaces" else f"[{name}]"
                # An absent table has no line of its own: point at the end of the file,
                # where it can be added.
                self.log.error(
                    self.file,
                    _last_line(self.locate.lines),
                    name,
                    None,
                    f"the table {what} is missing",
                    "add it, e.g. at the end of the file; see docs/inputs.md for a complete "
                    "example",
                )

        out: dict = {}
        project = self.table("project") or {}
        has_project = "project" in self.data
        out["name"] = self.text(project, ("project",), "name", name=True) if has_project else None
        out["crs"] = self.read_crs(project) if "project" in self.data else None
        output = self.table("output") or {}
        if "crs" in output:
            out["output_crs"] = self.read_crs(output, ("output",), projected_in_metres=False)

        inputs = self.table("inputs") or {}
        lines = {}
        if "inputs" in self.data:
            sources = read_sources(self, inputs)
            out["sources"] = sources
            # LAS files and AGS4 files give cores and intervals; an AGS4 file with a
            # formation field gives picks.
            given = {
                "cores": bool(sources.logs or sources.ags),
                "intervals": bool(sources.logs or sources.ags),
                "picks": bool(sources.ags and sources.ags_formation),
            }
            for key in ("cores", "intervals", "picks"):
                out[key] = self.text(inputs, ("inputs",), key, required=not given[key])
                lines[f"inputs.{key}"] = self.locate.line_of(("inputs", key))
            out["depth_unit"] = self.text(
                inputs, ("inputs",), "depth_unit", choices=tuple(DEPTH_UNITS)
            )
            out["control_points"] = self.text(inputs, ("inputs",), "control_points", False)
            lines["inputs.control_points"] = self.locate.line_of(("inputs", "control_points"))
        time = self.table("time") or {}
        if "time" in self.data:
            out["age_unit"] = self.text(time, ("time",), "age_unit", choices=tuple(AGE_UNITS))

        out["surfaces"] = self.read_surfaces(out.get("age_unit"))
        self.belts = None
        out["scheme"] = self.read_scheme()
        # The belts as read, even when the scheme breaks a rule: facies are still checked.
        out["belts"] = self.belts
        out["slices"] = self.read_slices(out["surfaces"], out.get("age_unit"))
        out["grid"] = self.read_grid(lines)
        out["mapping"] = self.read_mapping()
        out["migration"] = self.read_migration(lines)
        out["reading"] = self.read_reading()
        return ProjectConfig(self.file, lines=lines, **out)

    def read_crs(
        self, project: dict, where: tuple = ("project",), projected_in_metres: bool = True
    ) -> pyproj.CRS | None:
        value = project.get("crs")
        if isinstance(value, int) and not isinstance(value, bool) and value > 0:
            project = {**project, "crs": f"EPSG:{value}"}  # a bare EPSG code
        text = self.text(project, where, "crs")
        if text is None:
            if "crs" not in project:
                # Replace the generic message with one that says why.
                self.log.errors.pop()
                self.err(
                    (*where, "crs"),
                    None,
                    "is missing: paleomap never assumes a CRS",
                    'give any CRS pyproj reads, e.g. crs = "EPSG:32631" or "EPSG:4326"',
                )
            return None
        try:
            crs = pyproj.CRS.from_user_input(text)
        except pyproj.exceptions.CRSError:
            self.err(
                (*where, "crs"),
                text,
                "is not a CRS pyproj knows",
                'give an EPSG code such as "EPSG:32631", a WKT or a PROJ string',
            )
            return None
        problem = crs_problem(crs, projected_in_metres)
        if problem is not None:
            self.err((*where, "crs"), text, *problem)
            return None
        return crs

    def read_surfaces(self, age_unit: str | None) -> tuple[Surface, ...] | None:
        raw = self.data.get("surfaces")
        if raw is None:
            return None
        if not isinstance(raw, list) or not all(isinstance(s, dict) for s in raw):
            self.err(("surfaces",), None, "must be written as [[surfaces]] tables")
            return None
        if not raw:
            self.err(("surfaces",), None, "lists no surface")
            return None
        unit = age_unit or "age unit"
        out: list[Surface] = []
        seen: dict[str, int] = {}
        ages: dict[float, tuple[int, str]] = {}
        ok = True
        for i, table in enumerate(raw):
            path = ("surfaces", i)
            self.check_keys(table, path, _TABLES["surfaces"], "[[surfaces]]")
            name = self.text(table, path, "name", name=True)
            age = self.number(table, path, "age", required=True, minimum=0, min_open=True)
            if "age" in table and age is None and isinstance(table["age"], (int, float)):
                # Replace the range message with the contract's wording.
                self.log.errors.pop()
                self.err(
                    (*path, "age"),
                    table["age"],
                    "is not a positive number",
                    f"ages are in {unit}, positive into the past",
                )
            age_sd = self.number(table, path, "age_sd", minimum=0)
            if "age_sd" in table and age_sd is None and isinstance(table["age_sd"], (int, float)):
                self.log.errors.pop()
                self.err(
                    (*path, "age_sd"),
                    table["age_sd"],
                    "is negative",
                    "an age standard deviation is zero or positive",
                )
            erosional = self.boolean(table, path, "erosional", default=False)
            if name is not None and name in seen:
                self.err(
                    (*path, "name"),
                    name,
                    f"is used by two surfaces (also surface {seen[name] + 1})",
                    "give each surface its own name",
                )
                name = None
            if name is not None and age in ages:
                j, other = ages[age]
                # Two surfaces at one age are one time line: their slices would be the
                # same map, and a rate between them would divide by zero.
                self.err(
                    (*path, "age"),
                    table["age"],
                    f"is also the age of surface {other!r} (surface {j + 1})",
                    "surfaces at one age are one time line: pick them under one name, or "
                    "correct the age",
                )
                ok = False
                continue
            if name is None or age is None:
                ok = False
                continue
            seen[name] = i
            ages[age] = (i, name)
            out.append(Surface(name, age, age_sd or 0.0, erosional, self.locate.line_of(path)))
        return tuple(out) if ok else None

    def read_scheme(self) -> Scheme | None:
        table = self.table("scheme")
        if table is None:
            return None
        path = ("scheme",)
        has_builtin, has_belts = "builtin" in table, "belts" in table
        if has_builtin == has_belts:
            self.err(
                path,
                None,
                "needs exactly one of 'builtin' and 'belts'",
                f"write builtin = one of {list(BUILTIN_SCHEMES)}, or list belts = [{{ id = "
                '"...", marine = false }, ...] proximal to distal',
            )
            return None
        track = None
        if "track" in table:
            value = table["track"]
            if (
                not isinstance(value, list)
                or len(value) != 2
                or not all(isinstance(v, str) for v in value)
            ):
                self.err(
                    (*path, "track"),
                    value,
                    "must name two belts",
                    'write track = ["proximal_belt", "distal_belt"]',
                )
                return None
            track = (value[0].strip(), value[1].strip())
        colors = table.get("colors", {})
        if not isinstance(colors, dict):
            self.err(
                (*path, "colors"),
                colors,
                "must be a table of belt ids and colours",
                'write colors = { gravel = "#6b4423" }',
            )
            return None
        name = self.text(table, path, "name", required=False, name=True)

        also_track: tuple = ()
        kind = "custom"
        if has_builtin:
            builtin = self.text(table, path, "builtin")
            if builtin is None:
                return None
            if builtin in LITHOLOGY_SCHEMES and track is None:
                p = lithology_track_problem(builtin)
                self.belts = builtin_belts(builtin)
                self.err((*path, "builtin"), builtin, p.message, p.hint)
                return None
            try:
                base = builtin_scheme(builtin, track)
            except InputError as exc:
                # the belts as read still let the facies be checked in the same pass
                belts_as_read = builtin_belts(builtin)
                if belts_as_read is not None:
                    self.belts = belts_as_read
                for p in exc.problems:
                    key = tuple(p.column.split(".")) if p.column else path
                    self.err(key, p.value, p.message, p.hint)
                return None
            belts = list(base.belts)
            name = name or base.name
            family = base.family
            kind = base.kind
            if track is None:
                track = base.track
                # a ramp's second boundary goes with the scheme's own choice of track
                also_track = base.also_track
        else:
            belts = self.read_belts(table["belts"])
            if belts is None:
                return None
            name = name or "custom"
            family = "custom"

        ids = [b.id for b in belts]
        ok = True
        for belt_id, color in colors.items():
            if belt_id not in ids:
                self.err(
                    (*path, "colors", belt_id),
                    belt_id,
                    "is not a belt of the scheme",
                    f"belts: {ids}",
                )
                ok = False
            elif not isinstance(color, str) or not _HEX.match(color):
                self.err((*path, "colors", belt_id), color, "is not a colour", 'write "#rrggbb"')
                ok = False
            else:
                i = ids.index(belt_id)
                belts[i] = replace(belts[i], color=color)
        if not ok:
            return None
        self.belts = tuple(belts)
        problems = _scheme_problems(tuple(belts), track, "scheme")
        for p in problems:
            parts = tuple(p.column.split(".")) if p.column else path
            self.log.error(
                self.file, self.locate.line_of(parts), p.column, p.value, p.message, p.hint
            )
        if problems:
            return None
        return Scheme(name, tuple(belts), track, family, also_track, kind)

    def read_belts(self, raw) -> list[Belt] | None:
        path = ("scheme", "belts")
        if not isinstance(raw, list) or not all(isinstance(b, dict) for b in raw):
            self.err(
                path,
                None,
                "must be a list of belt tables",
                'write belts = [{ id = "sand", marine = false }, ...]',
            )
            return None
        belts: list[Belt] = []
        ok = True
        # Belts without a colour get the default palette's colour for their place.
        flags = [t.get("marine") is True for t in raw]
        palette = belt_colors(flags) if raw else ()
        for i, table in enumerate(raw):
            bpath = (*path, i)
            self.check_keys(table, bpath, _BELT_KEYS, "a belt")
            belt_id = self.text(table, bpath, "id", name=True)
            if "marine" not in table:
                self.err(
                    (*bpath, "marine"), None, "is missing", "write marine = true or marine = false"
                )
                marine = None
            else:
                marine = self.boolean(table, bpath, "marine")
            aliases = table.get("aliases", [])
            if not isinstance(aliases, list) or not all(
                isinstance(a, str) and a.strip() for a in aliases
            ):
                self.err(
                    (*bpath, "aliases"),
                    aliases,
                    "must be a list of names",
                    'write aliases = ["name", ...]',
                )
                aliases = None
            color = table.get("color", palette[i])
            if not isinstance(color, str) or not _HEX.match(color):
                self.err((*bpath, "color"), color, "is not a colour", 'write "#rrggbb"')
                color = None
            label = self.text(table, bpath, "label", required=False, name=True)
            if belt_id is not None and label is None:
                label = belt_id.replace("_", " ")
            if belt_id is None or marine is None or aliases is None or color is None:
                ok = False
                continue
            belts.append(
                Belt(belt_id, marine, tuple(a.strip() for a in aliases), color, label or "")
            )
        return belts if ok else None

    def read_slices(self, surfaces, age_unit) -> tuple[Slice, ...] | None:
        table = self.table("slices")
        at = "surfaces" if table is None or "at" not in table else table["at"]
        path = ("slices", "at")
        if surfaces is None:
            return None
        unit = age_unit or ""
        by_name = {s.name: s for s in surfaces}
        if isinstance(at, str):
            if at != "surfaces":
                self.err(
                    path,
                    at,
                    "is not allowed",
                    'write at = "surfaces" or a list of ages, e.g. at = [120, 135.5]',
                )
                return None
            items = [(None, Slice(s.name, s.age, s.name)) for s in surfaces]
        elif isinstance(at, list) and at:
            items = []
            for i, value in enumerate(at):
                if isinstance(value, str):
                    s = by_name.get(value)
                    if s is None:
                        self.err(
                            (*path, i),
                            value,
                            "is not a surface name",
                            f"surfaces: {list(by_name)}; free ages are plain numbers "
                            f"in {unit or 'the age unit'}",
                        )
                        continue
                    items.append((i, Slice(s.name, s.age, s.name)))
                elif isinstance(value, (int, float)) and not isinstance(value, bool):
                    if not math.isfinite(value) or value <= 0:
                        self.err(
                            (*path, i),
                            value,
                            "is not a positive number",
                            "slice ages are positive into the past",
                        )
                        continue
                    # A free age that is a surface's age is that surface's slice.
                    same = [s for s in surfaces if s.age == float(value)]
                    if same:
                        items.append((i, Slice(same[0].name, same[0].age, same[0].name)))
                    else:
                        items.append((i, Slice(age_name(value, unit), float(value), None)))
                else:
                    self.err((*path, i), value, "must be an age or a surface name")
        else:
            self.err(path, at, 'must be "surfaces" or a non-empty list of ages')
            return None
        seen: dict[str, Slice] = {}
        for i, sl in items:
            if sl.name in seen:
                self.err(
                    path if i is None else (*path, i),
                    sl.name,
                    "is listed twice",
                    "list each slice once",
                )
                continue
            seen[sl.name] = sl
        # Oldest first: the order in which the slices formed.
        return tuple(sorted(seen.values(), key=lambda s: -s.age))

    def read_grid(self, lines: dict) -> GridSettings | None:
        table = self.table("grid")
        if table is None:
            return None
        path = ("grid",)
        cell = self.number(table, path, "cell_size", required=True, minimum=0, min_open=True)
        margin = self.number(table, path, "margin", minimum=0)
        area = self.text(table, path, "area", required=False)
        lines["grid.area"] = self.locate.line_of(("grid", "area"))
        if cell is None or (margin is None and "margin" in table):
            return None
        if "area" in table and area is None:
            return None
        return GridSettings(cell, margin, Path(area) if area else None)

    def read_mapping(self) -> MappingSettings:
        table = self.table("mapping")
        if table is None:
            return MappingSettings()
        p = ("mapping",)
        d = MappingSettings()
        values = {
            "model": self.text(table, p, "model", required=False, choices=MAPPING_MODELS),
            "range_m": self.number(table, p, "range_m", minimum=0, maximum=1e8, min_open=True),
            "anisotropy": self.number(table, p, "anisotropy", minimum=0, maximum=1, min_open=True),
            "azimuth_deg": self.number(
                table, p, "azimuth_deg", minimum=0, maximum=360, max_open=True
            ),
            "nugget": self.number(table, p, "nugget", minimum=0, maximum=1, max_open=True),
            # Upper bounds: far above any useful value, low enough that a typo (1e9
            # samples) is an error at once rather than a run that never ends.
            "samples": self.number(table, p, "samples", minimum=1, maximum=10_000, integer=True),
            "burn_in": self.number(table, p, "burn_in", minimum=0, maximum=10_000, integer=True),
            "seed": self.number(table, p, "seed", minimum=0, maximum=2**63 - 1, integer=True),
            "deterministic": self.boolean(table, p, "deterministic"),
            "neighbours": self.number(
                table, p, "neighbours", minimum=3, maximum=1000, integer=True
            ),
            "engine": self.text(table, p, "engine", required=False, choices=tuple(ENGINES)),
        }
        joint = self.boolean(table, p, "joint")
        if joint is not None:
            engine = "shared_relief" if joint else "per_slice"
            if "engine" in table:
                self.warn(
                    ("mapping", "joint"),
                    joint,
                    "[mapping] joint is deprecated and ignored beside engine",
                    "delete the joint line",
                )
            else:
                self.warn(
                    ("mapping", "joint"),
                    joint,
                    "[mapping] joint is deprecated (it will be removed in the next release)",
                    f'write engine = "{engine}" instead',
                )
                values["engine"] = engine
        return replace(d, **{k: v for k, v in values.items() if v is not None})

    def read_migration(self, lines: dict) -> MigrationSettings:
        table = self.table("migration")
        if table is None:
            return MigrationSettings()
        p = ("migration",)
        transects = self.text(table, p, "transects", required=False)
        lines["migration.transects"] = self.locate.line_of(("migration", "transects"))
        values = {
            "transects": Path(transects) if transects else None,
            "transect_spacing_m": self.number(
                table, p, "transect_spacing_m", minimum=0, maximum=1e8, min_open=True
            ),
            "stillstand_m_per_kyr": self.number(
                table, p, "stillstand_m_per_kyr", minimum=0, maximum=1e6
            ),
        }
        return replace(MigrationSettings(), **{k: v for k, v in values.items() if v is not None})

    def read_reading(self) -> ReadingOptions:
        table = self.table("reading")
        if table is None:
            return ReadingOptions()
        p = ("reading",)
        return ReadingOptions(
            noise_thickness=self.number(table, p, "noise_thickness", minimum=0),
            pick_tolerance=self.number(table, p, "pick_tolerance", minimum=0),
            contact_tolerance=self.number(table, p, "contact_tolerance", minimum=0),
        )


class TomlLocator:
    """Finds the line of a key in TOML text, for messages.

    A key path is a tuple of table and key names and 0-based array indices, e.g.
    ``("surfaces", 1, "age")`` or ``("scheme", "belts", 2, "color")``. Works for
    ``[table]`` and ``[[array]]`` headers, plain keys and inline arrays of inline tables;
    when a key is absent the line of its table is returned, and None when even that is
    absent.

    Examples
    --------
    >>> text = "[grid]\\ncell_size = 5\\n[[surfaces]]\\nage = 1\\n[[surfaces]]\\nage = 2\\n"
    >>> loc = TomlLocator(text)
    >>> loc.line_of(("grid", "cell_size")), loc.line_of(("surfaces", 1, "age"))
    (2, 6)
    """

    _HEADER = re.compile(r"^\s*(\[\[?)([^\[\]]+)\]\]?\s*(#.*)?$")

    def __init__(self, text: str):
        self.text = text
        self.lines = text.splitlines()
        self.starts = [0]
        for line in text.splitlines(keepends=True):
            self.starts.append(self.starts[-1] + len(line))
        # (line index, parts, is_array)
        self.headers: list[tuple[int, tuple[str, ...], bool]] = []
        for i, line in enumerate(self.lines):
            m = self._HEADER.match(line)
            if m and "=" not in line.split("]")[0]:
                parts = tuple(p.strip().strip("\"'") for p in m.group(2).split("."))
                self.headers.append((i, parts, m.group(1) == "[["))

    def line_of(self, path: tuple) -> int | None:
        """1-based line of ``path``, the line of its table, or None."""
        for j in range(len(path), -1, -1):
            region = self._region(tuple(path[:j]))
            if region is None:
                continue
            header_line, start, end = region
            found = self._in_region(start, end, tuple(path[j:]))
            return found if found is not None else header_line
        return None

    def _region(self, head: tuple):
        """(header line or None, first line index, end line index) of a table."""
        if not head:
            end = self.headers[0][0] if self.headers else len(self.lines)
            return None, 0, end
        if any(isinstance(p, int) for p in head[:-1]):
            return None
        if isinstance(head[-1], int):
            parts, want, array = tuple(head[:-1]), head[-1], True
        else:
            parts, want, array = tuple(head), 0, False
        count = 0
        for k, (i, hparts, is_array) in enumerate(self.headers):
            if hparts == parts and is_array == array:
                if count == want:
                    end = self.headers[k + 1][0] if k + 1 < len(self.headers) else len(self.lines)
                    return i + 1, i + 1, end
                count += 1
        return None

    def _in_region(self, start: int, end: int, rest: tuple) -> int | None:
        if not rest:
            return None
        key = rest[0]
        if not isinstance(key, str):
            return None
        pattern = re.compile(
            rf"^\s*(?:{re.escape(key)}|\"{re.escape(key)}\"|'{re.escape(key)}')\s*="
        )
        for i in range(start, end):
            m = pattern.match(self.lines[i])
            if m:
                if len(rest) == 1:
                    return i + 1
                offset = self.starts[i] + m.end()
                return self._in_value(offset, rest[1:], i + 1)
        return None

    def _in_value(self, offset: int, rest: tuple, fallback: int) -> int:
        """Line of an array element or inline-table key inside a value starting at offset."""
        text = self.text
        span = self._element_span(offset, rest[0]) if isinstance(rest[0], int) else None
        if isinstance(rest[0], int):
            if span is None:
                return fallback
            a, b = span
            if len(rest) == 1:
                return self._line_at(a)
            key = rest[1]
            if isinstance(key, str):
                m = re.search(rf"(?:^|[{{,\s]){re.escape(key)}\s*=", text[a:b])
                if m:
                    return self._line_at(a + m.end() - 1)
            return self._line_at(a)
        # An inline-table key, e.g. colors = { gravel = "#..." }.
        key = rest[0]
        end = text.find("\n", offset)
        m = re.search(
            rf"(?:^|[{{,\s]){re.escape(key)}\s*=", text[offset : end if end > 0 else None]
        )
        return self._line_at(offset + m.start()) if m else fallback

    def _element_span(self, offset: int, index: int):
        text = self.text
        n = len(text)
        i = offset
        while i < n and text[i] in " \t":
            i += 1
        if i >= n or text[i] != "[":
            return None
        i += 1
        depth = 1
        count = 0
        begin = None
        while i < n:
            c = text[i]
            if c in "\"'":
                if begin is None and depth == 1:
                    begin = i
                quote = text[i : i + 3] if text[i : i + 3] in ('"""', "'''") else c
                j = i + len(quote)
                while j < n and text[j : j + len(quote)] != quote:
                    j += 2 if (c == '"' and text[j] == "\\") else 1
                i = j + len(quote)
                continue
            if c == "#":
                while i < n and text[i] != "\n":
                    i += 1
                continue
            if c in "[{":
                if begin is None and depth == 1:
                    begin = i
                depth += 1
            elif c in "]}":
                depth -= 1
                if depth == 0:
                    return (begin, i) if begin is not None and count == index else None
            elif c == "," and depth == 1:
                if count == index and begin is not None:
                    return begin, i
                count += 1
                begin = None
            elif not c.isspace() and begin is None and depth == 1:
                begin = i
            i += 1
        return None

    def _line_at(self, offset: int) -> int:
        return bisect.bisect_right(self.starts, offset)
