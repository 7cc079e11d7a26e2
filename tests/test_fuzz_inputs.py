"""Fuzzing the input half: malformed tables and project files never crash paleomap.

Each example takes the valid default project of ``conftest.write_project`` and breaks
it at random: lines deleted, duplicated or cut short, cells replaced by junk (text,
NaN and infinity, huge and negative numbers, decimal commas, stray quotes), other
separators, extra or missing columns, a missing header, odd encodings (latin-1, UTF-16
with a byte-order mark, binary junk) and empty files; in the project file, keys set to
values of the wrong type, keys removed, and lines deleted or duplicated. Whatever comes
in, the outcome is a loaded project or paleomap's own :class:`InputError` whose every
problem names its file and line, and nothing is written. The command line answers
exit 2 with the file named and no traceback, and ``paleomap build`` does not create
its output folder.

The examples are bounded and derandomized so that the suite is quick and stable in CI.
"""

from __future__ import annotations

import copy
import tempfile
import warnings
from pathlib import Path

import pytest
from click.testing import CliRunner
from conftest import (
    CORES,
    DEFAULT_CONFIG,
    INTERVALS,
    PICKS,
    REMOVE,
    _merge,
    _set_key,
    to_toml,
    write_project,
)
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from paleomap.cli import main
from paleomap.errors import InputError, PaleomapWarning
from paleomap.io.readers import load_project

_SETTINGS = settings(
    max_examples=40,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow],
)
_CLI_SETTINGS = settings(_SETTINGS, max_examples=20)

_TABLES = {"cores": CORES, "intervals": INTERVALS, "picks": PICKS}

# Cell values a spreadsheet or an old database may produce.
_JUNK_CELLS = [
    "",
    " ",
    "abc",
    "nan",
    "NaN",
    "-nan",
    "inf",
    "-Infinity",
    "1e400",
    "-1e400",
    "1e308",
    "-5",
    "-0",
    "0",
    "1,5",
    "12 m",
    "3.4.5",
    "0x1A",
    "1_000",
    "N/A",
    "NULL",
    "#DIV/0!",
    "\u00e9",
    "\u2212" + "5",  # a minus sign from a word processor
    "99999999999999999999999999999",
    '"',
    '"unterminated',
    '"a""b"',
    "\x00",
    "C1",
    "s_mid",
    "clay",
]

_cells = st.one_of(
    st.sampled_from(_JUNK_CELLS),
    st.text(max_size=6),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(min_value=-(10**25), max_value=10**25).map(str),
)


@st.composite
def _csv_text(draw, original: str) -> str:
    """``original`` with one to three random edits of its lines and cells."""
    lines = original.splitlines()
    for _ in range(draw(st.integers(1, 3))):
        kind = draw(
            st.sampled_from(
                [
                    "delete",
                    "duplicate",
                    "cell",
                    "cell",
                    "cell",
                    "extra_column",
                    "drop_column",
                    "junk_line",
                    "no_header",
                    "truncate",
                ]
            )
        )
        if not lines:
            break
        i = draw(st.integers(0, len(lines) - 1))
        if kind == "delete":
            del lines[i]
        elif kind == "duplicate":
            lines.insert(i, lines[i])
        elif kind == "cell":
            cells = lines[i].split(",")
            j = draw(st.integers(0, len(cells) - 1))
            cells[j] = draw(_cells).replace("\n", " ").replace("\r", " ")
            lines[i] = ",".join(cells)
        elif kind == "extra_column":
            lines[i] += "," + draw(_cells).replace("\n", " ").replace("\r", " ")
        elif kind == "drop_column":
            cells = lines[i].split(",")
            del cells[draw(st.integers(0, len(cells) - 1))]
            lines[i] = ",".join(cells)
        elif kind == "junk_line":
            lines.insert(i, draw(st.text(max_size=20)).replace("\r", ""))
        elif kind == "no_header":
            lines = lines[1:]
        elif kind == "truncate":
            lines[i] = lines[i][: draw(st.integers(0, len(lines[i])))]
    separator = draw(st.sampled_from([",", ",", ",", ";", "\t", "|"]))
    text = "\n".join(line.replace(",", separator) for line in lines)
    if draw(st.booleans()):
        text += "\n"
    if draw(st.booleans()):
        text = text.replace("\n", "\r\n")
    return text


@st.composite
def _encoded(draw, text: str) -> bytes:
    """``text`` as a spreadsheet might save it."""
    kind = draw(
        st.sampled_from(
            ["utf-8", "utf-8", "utf-8-sig", "latin-1", "utf-16", "cp1252", "binary", "empty"]
        )
    )
    if kind == "empty":
        return draw(st.sampled_from([b"", b"\n", b"  \r\n", b"\xef\xbb\xbf"]))
    if kind == "binary":
        junk = draw(st.binary(min_size=1, max_size=64))
        at = draw(st.integers(0, len(text)))
        return text[:at].encode() + junk + text[at:].encode()
    if kind in ("latin-1", "cp1252"):
        # An accented core id is what turns a latin-1 file into a non-UTF-8 one.
        text = text.replace("C1", "C\u00e91", 1)
    return text.encode(kind, errors="replace")


@st.composite
def _broken_tables(draw) -> dict:
    """Keyword arguments for write_project with one or two tables broken."""
    names = draw(st.lists(st.sampled_from(sorted(_TABLES)), min_size=1, max_size=2, unique=True))
    out = {}
    for name in names:
        text = draw(_csv_text(_TABLES[name]))
        out[name] = draw(_encoded(text))
    return out


# Dotted keys of the default project file, and values of every TOML type.
_KEYS = [
    "project.name",
    "project.crs",
    "inputs.cores",
    "inputs.intervals",
    "inputs.picks",
    "inputs.depth_unit",
    "time.age_unit",
    "surfaces[1].name",
    "surfaces[1].age",
    "surfaces[2].age",
    "surfaces[2].age_sd",
    "surfaces[3].erosional",
    "scheme.builtin",
    "scheme.track",
    "slices.at",
    "grid.cell_size",
    "grid.margin",
    "grid.area",
    "mapping.model",
    "mapping.samples",
    "mapping.nugget",
    "mapping.anisotropy",
    "migration.transects",
    "migration.stillstand_m_per_kyr",
    "grid.celsize",
    "unknown_table.key",
]
_values = st.one_of(
    st.just(REMOVE),
    st.booleans(),
    st.integers(min_value=-(10**18), max_value=10**18),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=12),
    st.sampled_from(["EPSG:4326", "EPSG:2263", "s_mid", "siliciclastic", "surfaces", "nope.csv"]),
    st.lists(st.one_of(st.integers(-5, 500), st.text(max_size=5)), max_size=3),
    st.dictionaries(st.sampled_from(["a", "gravel", "id"]), st.integers(), max_size=2),
)


@st.composite
def _broken_config(draw) -> dict:
    """Keyword arguments for write_project with the project file broken."""
    keys = draw(st.dictionaries(st.sampled_from(_KEYS), _values, min_size=1, max_size=3))
    out: dict = {"keys": keys}
    if draw(st.booleans()):
        # Also break the text itself: a line deleted, duplicated or cut short.
        cfg = _merge(copy.deepcopy(DEFAULT_CONFIG), {})
        for dotted, value in keys.items():
            _set_key(cfg, dotted, value)
        lines = to_toml(cfg).splitlines()
        i = draw(st.integers(0, len(lines) - 1))
        kind = draw(st.sampled_from(["delete", "duplicate", "truncate", "junk"]))
        if kind == "delete":
            del lines[i]
        elif kind == "duplicate":
            lines.insert(i, lines[i])
        elif kind == "truncate":
            lines[i] = lines[i][: draw(st.integers(0, len(lines[i])))]
        else:
            lines.insert(i, draw(st.text(max_size=20)).replace("\r", ""))
        out = {"toml": "\n".join(lines) + "\n"}
    return out


# -------------------------------------------------------------------------------- checks


def _listing(folder: Path) -> dict:
    return {p.relative_to(folder).as_posix(): p.stat().st_mtime_ns for p in folder.rglob("*")}


def _load(path: Path):
    """Load a project; return it or the InputError (anything else propagates)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)
        try:
            return load_project(path)
        except InputError as exc:
            return exc


def _assert_clean_refusal(exc: InputError, folder: Path) -> None:
    assert exc.problems, "an InputError holds at least one problem"
    names = {p.name for p in folder.iterdir()}
    for p in exc.problems:
        assert p.file is not None, f"problem without a file: {p}"
        assert Path(p.file).name in names, f"problem names a file that is not there: {p}"
        assert p.line is not None and p.line >= 1, f"problem without a line: {p}"
        assert f"line {p.line}" in str(p)


def _check_library(folder: Path, kwargs: dict):
    path = write_project(folder, **kwargs)
    before = _listing(folder)
    outcome = _load(path)
    assert _listing(folder) == before, "loading a project must not write anything"
    if isinstance(outcome, InputError):
        _assert_clean_refusal(outcome, folder)
    return path, outcome


def _check_cli(path: Path, outcome) -> None:
    folder = path.parent
    before = _listing(folder)
    result = CliRunner().invoke(main, ["check", str(path)])
    assert _listing(folder) == before
    assert "Traceback" not in result.output + result.stderr
    if isinstance(outcome, InputError):
        assert result.exit_code == 2, result.output + result.stderr
        assert result.stderr.startswith("Error: ")
        files = {Path(p.file).name for p in outcome.problems}
        assert any(name in result.stderr for name in files)
        assert "line " in result.stderr
    else:
        assert result.exit_code == 0, result.output + result.stderr
        assert "The project is valid." in result.output


# --------------------------------------------------------------------------------- tests


@_SETTINGS
@given(_broken_tables())
def test_broken_tables_give_input_errors_with_file_and_line(tables):
    with tempfile.TemporaryDirectory() as tmp:
        _check_library(Path(tmp), tables)


@_SETTINGS
@given(_broken_config())
def test_broken_project_files_give_input_errors_with_file_and_line(config):
    with tempfile.TemporaryDirectory() as tmp:
        _check_library(Path(tmp), config)


@_CLI_SETTINGS
@given(st.one_of(_broken_tables(), _broken_config()))
def test_check_command_exits_2_naming_the_file(kwargs):
    with tempfile.TemporaryDirectory() as tmp:
        path, outcome = _check_library(Path(tmp), kwargs)
        _check_cli(path, outcome)


@_CLI_SETTINGS
@given(st.one_of(_broken_tables(), _broken_config()))
def test_build_command_on_a_broken_project_writes_no_folder(kwargs):
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp) / "project"
        path, outcome = _check_library(folder, kwargs)
        if not isinstance(outcome, InputError):
            return  # a valid project is built elsewhere; here only refusals matter
        out = Path(tmp) / "build"
        result = CliRunner().invoke(main, ["build", str(path), "--out", str(out), "--no-figures"])
        assert result.exit_code == 2, result.output + result.stderr
        assert "Traceback" not in result.output + result.stderr
        assert not out.exists()
        assert sorted(p.name for p in Path(tmp).iterdir()) == ["project"]


# A few hand-picked cases that random edits reach only rarely.
_SPECIAL = {
    "utf16-bom": {"intervals": "\ufeff".encode("utf-16-le") + INTERVALS.encode("utf-16-le")},
    "utf16-auto-bom": {"picks": PICKS.encode("utf-16")},
    "semicolons": {"cores": CORES.replace(",", ";")},
    "tabs": {"intervals": INTERVALS.replace(",", "\t")},
    "decimal-commas-semicolons": {
        "picks": PICKS.replace(",", ";").replace(";5\n", ";5,5\n"),
    },
    "binary-junk": {"cores": bytes(range(256))},
    "nul-bytes": {"picks": PICKS.encode().replace(b",", b"\x00")},
    "empty": {"cores": b""},
    "bom-only": {"intervals": b"\xef\xbb\xbf"},
    "whitespace-only": {"picks": "  \n\t\n"},
    "header-only-crlf": {"cores": "core_id,x,y\r\n"},
    "no-header": {"intervals": "\n".join(INTERVALS.splitlines()[1:]) + "\n"},
    "unbalanced-quote": {"intervals": INTERVALS.replace("C1,10,20,silt", 'C1,10,20,"silt')},
    "huge-coordinate": {"cores": CORES.replace("500000,4000000", "1e308,4000000", 1)},
    "overflowing-coordinate": {"cores": CORES.replace("500000,4000000", "1e999,4000000", 1)},
    "negative-everything": {"intervals": INTERVALS.replace("C2,0,10", "C2,-10,-0")},
    "nan-strings": {"picks": PICKS.replace("C1,s_young,5", "C1,s_young,NaN")},
    "extra-columns": {"cores": CORES.replace("elevation", "elevation,comment,,")},
    "duplicate-header": {"picks": "core_id,surface,depth\n" + PICKS},
    "duplicate-column": {"cores": CORES.replace("elevation", "x")},
    "only-commas": {"cores": ",,,\n,,,\n"},
    "toml-binary": {"toml": "\x00\x01\x02 = \xff"},
    "toml-empty": {"toml": ""},
    "toml-only-comment": {"toml": "# nothing here\n"},
    "toml-array-of-surfaces-is-a-table": {
        "toml": "[surfaces]\nname = 'x'\n[project]\nname='a'\ncrs='EPSG:32631'\n"
    },
    "toml-surfaces-not-tables": {"keys": {"surfaces": [1, 2]}},
    "toml-tiny-cell": {"keys": {"grid.cell_size": 1e-300}},
    "toml-nan-margin": {"keys": {"grid.margin": float("nan")}},
    "toml-inf-age": {"keys": {"surfaces[1].age": float("inf")}},
    "toml-crs-number-huge": {"keys": {"project.crs": 10**15}},
    "toml-crs-negative": {"keys": {"project.crs": -4326}},
    "toml-crs-empty": {"keys": {"project.crs": " "}},
    "toml-path-is-folder": {"keys": {"inputs.cores": "."}},
    "toml-path-absolute-missing": {"keys": {"inputs.picks": "/nonexistent/picks.csv"}},
    "toml-path-nul": {"keys": {"inputs.picks": "pi\x00cks.csv"}},
    "toml-area-is-csv": {"keys": {"grid.area": "cores.csv"}},
    "toml-transects-junk": {
        "keys": {"migration.transects": "lines.geojson"},
        "files": {"lines.geojson": "{not json"},
    },
    "toml-slices-empty-list": {"keys": {"slices.at": []}},
    "toml-slices-nested": {"keys": {"slices.at": [[1, 2]]}},
    "toml-belts-empty": {
        "keys": {"scheme.builtin": REMOVE, "scheme.track": REMOVE, "scheme.belts": []}
    },
    "toml-latin1": {
        "toml": 'name = "caf\u00e9"\n'.encode("latin-1"),
    },
    "toml-utf16": {"toml": "[project]\nname = 'x'\n".encode("utf-16")},
}


# Odd but within the contract: they load (what a build makes of them is tested elsewhere).
_ODD_BUT_VALID = {
    "quote-at-end": {"picks": PICKS + '"'},
    "huge-depth": {"intervals": INTERVALS.replace("C1,30,40", "C1,30,1e300")},
    "toml-huge-age": {"keys": {"surfaces[3].age": 1e308}},
    "toml-huge-int-age": {"keys": {"surfaces[3].age": 10**18}},
    "crlf-and-bom": {"cores": b"\xef\xbb\xbf" + CORES.replace("\n", "\r\n").encode()},
    "untouched": {},
}


@pytest.mark.filterwarnings("ignore::paleomap.errors.PaleomapWarning")
@pytest.mark.parametrize("kwargs", list(_ODD_BUT_VALID.values()), ids=list(_ODD_BUT_VALID))
def test_odd_but_valid_inputs_load(tmp_path, kwargs):
    path, outcome = _check_library(tmp_path, kwargs)
    assert not isinstance(outcome, InputError), str(outcome)
    _check_cli(path, outcome)


@pytest.mark.filterwarnings("ignore::paleomap.errors.PaleomapWarning")
@pytest.mark.parametrize("kwargs", list(_SPECIAL.values()), ids=list(_SPECIAL))
def test_special_malformed_inputs(tmp_path, kwargs):
    kwargs = dict(kwargs)
    toml = kwargs.pop("toml", None)
    path = write_project(tmp_path, **kwargs)
    if toml is not None:
        path.write_bytes(toml if isinstance(toml, bytes) else toml.encode())
    before = _listing(tmp_path)
    outcome = _load(path)
    assert _listing(tmp_path) == before
    assert isinstance(outcome, InputError), "every special case breaks the contract"
    _assert_clean_refusal(outcome, tmp_path)
    _check_cli(path, outcome)


def test_the_random_edits_reach_refusals():
    """The strategies are not vacuous: random edits do break the contract."""
    seen = set()

    @settings(_SETTINGS, max_examples=20)
    @given(_broken_tables())
    def collect(tables):
        with tempfile.TemporaryDirectory() as tmp:
            _, outcome = _check_library(Path(tmp), tables)
            seen.add(type(outcome).__name__)

    collect()
    assert "InputError" in seen


# ------------------------------------------------------------------ the error catalogue

_CATALOGUED = (
    "io/project_file.py",
    "io/core_tables.py",
    "crs.py",
    "scheme.py",
    "grid.py",
    "io/readers.py",
    "io/sources.py",
    "io/sheets.py",
    "io/assemble.py",
    "io/origins.py",
    "io/las.py",
    "io/ags.py",
    "io/atomic.py",
    "io/inputfiles.py",
    "cli/demo.py",
)
# Call name -> position of the message argument.
_MESSAGE_ARG = {
    "error": 4,
    "err": 2,
    "Problem": 4,
    "bad": 2,
    "OutputExistsError": 0,
    "BuildWriteError": 0,
    "BuildBusyError": 0,
    "FileProblem": 0,
}


def _fixed_text(node) -> str | None:
    """The fixed wording of a message: a string, or the longest literal part of an f-string."""
    import ast

    if isinstance(node, ast.Constant) and isinstance(node.value, str):
        return node.value
    if isinstance(node, ast.JoinedStr):
        parts = [v.value for v in node.values if isinstance(v, ast.Constant)]
        return max(parts, key=len) if parts else None
    return None


def _message_templates() -> set[str]:
    """Every message wording in the modules that read a project or guard a build."""
    import ast

    import paleomap

    root = Path(paleomap.__file__).parent
    found = set()
    for rel in _CATALOGUED:
        tree = ast.parse((root / rel).read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Call):
                f = node.func
                name = f.attr if isinstance(f, ast.Attribute) else getattr(f, "id", None)
                i = _MESSAGE_ARG.get(name)
                if name == "PaleomapError" and node.args:
                    i = 0
                if i is not None and len(node.args) > i:
                    text = _fixed_text(node.args[i])
                    if text:
                        found.add(text)
            elif isinstance(node, ast.FunctionDef) and node.name in (
                "parse_number",
                "crs_problem",
            ):
                # Messages made here reach the user through a variable.
                for sub in ast.walk(node):
                    if isinstance(sub, ast.Raise) and isinstance(sub.exc, ast.Call):
                        text = _fixed_text(sub.exc.args[0]) if sub.exc.args else None
                    elif isinstance(sub, ast.Return) and isinstance(sub.value, ast.Tuple):
                        text = _fixed_text(sub.value.elts[0])
                    else:
                        continue
                    if text:
                        found.add(text)
    return found


def test_every_input_error_is_in_the_catalogue():
    import paleomap

    doc = (Path(paleomap.__file__).parents[1] / "docs" / "errors.md").read_text(encoding="utf-8")
    templates = _message_templates()
    assert len(templates) > 80  # the extraction finds the messages, not nothing
    missing = sorted(t for t in templates if t.strip() and t not in doc)
    assert not missing, f"docs/errors.md has no entry for: {missing}"
