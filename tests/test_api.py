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


def _declared_all(path: Path):
    """The names a module's ``__all__ = [...]`` assigns at module level (None if none)."""
    import ast

    for node in ast.parse(path.read_text(encoding="utf-8")).body:
        targets = (
            node.targets
            if isinstance(node, ast.Assign)
            else [node.target]
            if isinstance(node, ast.AnnAssign)
            else []
        )
        if any(isinstance(t, ast.Name) and t.id == "__all__" for t in targets):
            return ast.literal_eval(node.value)
    return None


def test_every_module_declares_all_and_defines_what_it_lists():
    import importlib

    for path in (ROOT / "paleomap").rglob("*.py"):
        if path.name == "_version.py":
            continue
        names = _declared_all(path)
        assert names is not None, f"{path}: no module-level __all__ assignment"
        assert len(set(names)) == len(names), f"{path}: __all__ repeats a name"
        parts = path.relative_to(ROOT).with_suffix("").parts
        module = importlib.import_module(".".join(p for p in parts if p != "__init__"))
        for name in names:
            assert hasattr(module, name), f"{path}: __all__ lists {name!r}, which is not defined"


def test_the_all_reader_is_not_fooled_by_the_text(tmp_path):
    text = '"""Mentions __all__ only in prose."""\n\ndef f():\n    __all__ = ["f"]\n'
    (tmp_path / "m.py").write_text(text)
    assert _declared_all(tmp_path / "m.py") is None
    (tmp_path / "n.py").write_text('__all__: list[str] = ["a", "b"]\n')
    assert _declared_all(tmp_path / "n.py") == ["a", "b"]


def test_versions_command_names_paleomap_and_gdal():
    from click.testing import CliRunner

    from paleomap.cli import main

    out = CliRunner().invoke(main, ["versions"])
    assert out.exit_code == 0
    assert "paleomap" in out.output and "GDAL" in out.output
