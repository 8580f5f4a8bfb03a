"""The layout rules of docs/design.md, checked on the source: types below the readers, engines
free of file readers, exporters free of the campaign runner, tests free of outside files."""

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "src" / "vigil"
FILE_READERS = {"vigil.catalog", "vigil.textfile", "vigil.campaign.spec", "vigil.journal", "vigil.target_source",
                "vigil.table_formats", "vigil.column_map"}


def _imports(path: Path) -> set[str]:
    """Every module a source file imports, as dotted names (`from a import b` gives a and a.b)."""
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module:
            found.add(node.module)
            found.update(f"{node.module}.{alias.name}" for alias in node.names)
    return found


def _modules(folder: str):
    return sorted((PACKAGE / folder).rglob("*.py"))


@pytest.mark.parametrize("path", _modules("engines"), ids=lambda p: p.name)
def test_engines_import_no_file_reader(path):
    assert not _imports(path) & FILE_READERS


@pytest.mark.parametrize("path", _modules("export"), ids=lambda p: p.name)
def test_exporters_do_not_import_the_campaign_runner(path):
    assert "vigil.campaign.run" not in _imports(path)


@pytest.mark.parametrize("path", _modules("ephemeris"), ids=lambda p: p.name)
def test_the_ephemeris_imports_nothing_downstream(path):
    assert not {m for m in _imports(path) if m.startswith(("vigil.visibility", "vigil.windows", "vigil.engines"))}


@pytest.mark.parametrize("name", ["sites.py", "constraints.py", "journal.py", "visibility.py", "timescales.py"])
def test_types_and_stages_below_the_readers_import_no_reader(name):
    assert not _imports(PACKAGE / name) & {"vigil.catalog", "vigil.campaign.spec"}


def test_tests_cite_no_file_outside_the_repository():
    # Spelled in pieces so that this file does not mention them either.
    outside = (".." + "/shared", "/work" + "/shared", "REFERENCES" + ".md")
    for path in sorted((ROOT / "tests").rglob("*.py")):
        text = path.read_text(encoding="utf-8")
        assert not any(mark in text for mark in outside), path.name
