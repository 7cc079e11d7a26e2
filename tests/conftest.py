"""Shared fixtures: a small valid project written to a temporary folder.

:func:`write_project` writes the project and returns the path of its TOML file. Every
part can be overridden, so a test breaks exactly one thing:

>>> path = write_project(tmp_path, keys={"grid.cell_size": -5})          # doctest: +SKIP
>>> path = write_project(tmp_path, intervals=INTERVALS + "C1,40,30,clay\\n")  # doctest: +SKIP
>>> path = write_project(tmp_path, keys={"surfaces[1].age": REMOVE})     # doctest: +SKIP

The default project (``DEFAULT_COUNTS``) has 4 cores, 16 intervals, 12 picks, 3
surfaces and 3 slices, each slice recorded by all 4 cores.
"""

from __future__ import annotations

import copy
import math
import re
from pathlib import Path

import pytest

__all__ = [
    "CORES",
    "DEFAULT_CONFIG",
    "DEFAULT_COUNTS",
    "INTERVALS",
    "PICKS",
    "REMOVE",
    "to_toml",
    "write_project",
]


class _Remove:
    def __repr__(self) -> str:
        return "REMOVE"

    def __copy__(self):
        return self

    def __deepcopy__(self, memo):
        return self


REMOVE = _Remove()
"""Marks a TOML key or table to leave out of the written project."""

DEFAULT_CONFIG: dict = {
    "project": {"name": "Test Basin", "crs": "EPSG:32631"},
    "inputs": {
        "cores": "cores.csv",
        "intervals": "intervals.csv",
        "picks": "picks.csv",
        "depth_unit": "m",
    },
    "time": {"age_unit": "ka"},
    "surfaces": [
        {"name": "s_young", "age": 100.0, "age_sd": 5.0},
        {"name": "s_mid", "age": 200.0},
        {"name": "s_old", "age": 300.0, "age_sd": 10.0},
    ],
    "scheme": {"builtin": "siliciclastic_lithology", "track": ["coarse_sand", "fine_sand"]},
    "slices": {"at": "surfaces"},
    "grid": {"cell_size": 500.0, "margin": 1000.0},
}

CORES = """core_id,x,y,elevation
C1,500000,4000000,10
C2,505000,4000000,12.5
C3,500000,4005000,
C4,505000,4005000,8
"""
# Each core: clay over silt over fine sand over coarse sand (shallowing downward
# means deepening upward: a transgression).
INTERVALS = """core_id,top,base,facies
C1,0,10,clay
C1,10,20,silt
C1,20,30,fine_sand
C1,30,40,coarse_sand
C2,0,10,clay
C2,10,20,silt
C2,20,30,Fine Sand
C2,30,40,coarse_sand
C3,0,12,clay
C3,12,20,silt
C3,20,28,fine_sand
C3,28,40,gravel
C4,0,10,mud
C4,10,20,silt
C4,20,30,fine_sand
C4,30,40,coarse_sand
"""
PICKS = """core_id,surface,depth
C1,s_young,5
C1,s_mid,15
C1,s_old,25
C2,s_young,5
C2,s_mid,15
C2,s_old,35
C3,s_young,6
C3,s_mid,16
C3,s_old,26
C4,s_young,4
C4,s_mid,14
C4,s_old,24
"""

DEFAULT_COUNTS = {"cores": 4, "intervals": 16, "picks": 12, "surfaces": 3, "slices": 3}


def _format_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        if isinstance(value, float) and math.isnan(value):
            return "nan"
        if isinstance(value, float) and math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, dict):
        inner = ", ".join(f"{k} = {_format_value(v)}" for k, v in value.items() if v is not REMOVE)
        return "{ " + inner + " }" if inner else "{}"
    if isinstance(value, (list, tuple)):
        if value and all(isinstance(v, dict) for v in value):
            return "[\n" + "".join(f"  {_format_value(v)},\n" for v in value) + "]"
        return "[" + ", ".join(_format_value(v) for v in value) + "]"
    raise TypeError(f"cannot write {value!r} as TOML")


def to_toml(config: dict) -> str:
    """A small TOML writer for test configurations (tables, arrays of tables, values)."""
    lines: list[str] = []
    for key, value in config.items():
        if value is REMOVE:
            continue
        if isinstance(value, dict):
            lines.append(f"[{key}]")
            lines += [f"{k} = {_format_value(v)}" for k, v in value.items() if v is not REMOVE]
            lines.append("")
        elif isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
            for item in value:
                lines.append(f"[[{key}]]")
                lines += [f"{k} = {_format_value(v)}" for k, v in item.items() if v is not REMOVE]
                lines.append("")
        else:
            lines.insert(0, f"{key} = {_format_value(value)}")
    return "\n".join(lines) + "\n"


def _set_key(config: dict, dotted: str, value) -> None:
    """Set ``"grid.cell_size"`` or ``"surfaces[2].age"`` (items count from 1)."""
    parts: list = []
    for token in dotted.split("."):
        m = re.fullmatch(r"([^\[\]]+)((?:\[\d+\])*)", token)
        if not m:
            raise ValueError(dotted)
        parts.append(m.group(1))
        parts += [int(i) - 1 for i in re.findall(r"\[(\d+)\]", m.group(2))]
    node = config
    for part, nxt in zip(parts, parts[1:], strict=False):
        if isinstance(part, int):
            node = node[part]
        else:
            if part not in node or node[part] is REMOVE:
                node[part] = [] if isinstance(nxt, int) else {}
            node = node[part]
    last = parts[-1]
    if value is REMOVE and not isinstance(last, int):
        node.pop(last, None)
    elif value is REMOVE:
        del node[last]
    else:
        node[last] = value


def _merge(base: dict, extra: dict) -> dict:
    for key, value in extra.items():
        if value is REMOVE:
            base.pop(key, None)
        elif isinstance(value, dict) and isinstance(base.get(key), dict):
            _merge(base[key], value)
        else:
            base[key] = value
    return base


def write_project(
    folder: Path,
    *,
    config: dict | None = None,
    keys: dict | None = None,
    toml: str | None = None,
    cores: str | bytes | None = CORES,
    intervals: str | bytes | None = INTERVALS,
    picks: str | bytes | None = PICKS,
    files: dict | None = None,
    name: str = "project.toml",
) -> Path:
    """Write a project to ``folder`` and return the path of its TOML file.

    Parameters
    ----------
    folder : Path
    config : dict, optional
        Merged into :data:`DEFAULT_CONFIG` (nested tables merge; ``REMOVE`` deletes).
    keys : dict, optional
        Dotted keys to set after merging, e.g. ``{"surfaces[2].erosional": True}``;
        ``REMOVE`` deletes the key.
    toml : str, optional
        The TOML text itself, replacing ``config`` and ``keys``.
    cores, intervals, picks : str, bytes or None
        The tables' content; None leaves the file out.
    files : dict, optional
        More files to write: relative name to text or bytes.
    name : str
        File name of the TOML file.
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    if toml is None:
        cfg = _merge(copy.deepcopy(DEFAULT_CONFIG), copy.deepcopy(config or {}))
        for dotted, value in (keys or {}).items():
            _set_key(cfg, dotted, value)
        toml = to_toml(cfg)
    contents = {name: toml, "cores.csv": cores, "intervals.csv": intervals, "picks.csv": picks}
    contents.update(files or {})
    for rel, content in contents.items():
        if content is None:
            continue
        target = folder / rel
        target.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, bytes):
            target.write_bytes(content)
        else:
            target.write_text(content, encoding="utf-8")
    return folder / name


@pytest.fixture
def project_path(tmp_path: Path) -> Path:
    """The default valid project, written to a temporary folder."""
    return write_project(tmp_path)
