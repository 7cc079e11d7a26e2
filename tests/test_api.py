"""The public API is exactly what paleomap/__init__.py exports, and docs/api.md lists it."""

import re
import subprocess
import sys
from pathlib import Path

import paleomap

ROOT = Path(__file__).resolve().parents[1]


def test_docs_api_page_lists_exactly_the_exported_names():
    text = (ROOT / "docs" / "api.md").read_text()
    listed = set(re.findall(r"^\| `([A-Za-z_]+)` \|", text, flags=re.M))
    assert listed == set(paleomap.__all__)


def test_every_exported_name_exists_and_has_a_docstring():
    for name in paleomap.__all__:
        obj = getattr(paleomap, name)
        if name != "__version__":
            assert obj.__doc__, name


def test_import_does_not_load_matplotlib():
    code = "import sys, paleomap; print('matplotlib' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_every_module_declares_all():
    for path in (ROOT / "paleomap").rglob("*.py"):
        if path.name == "_version.py":
            continue
        assert "__all__" in path.read_text(), path


def test_versions_command_names_paleomap_and_gdal():
    from click.testing import CliRunner

    from paleomap.cli import main

    out = CliRunner().invoke(main, ["versions"])
    assert out.exit_code == 0
    assert "paleomap" in out.output and "GDAL" in out.output
