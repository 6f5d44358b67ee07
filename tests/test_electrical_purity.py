"""The electrical calculations do no I/O: only tables.py reads files."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "workpack" / "electrical"
LOADER = "tables.py"
FORBIDDEN = {"os", "pathlib", "io", "shutil", "sqlite3", "yaml", "importlib", "socket",
             "subprocess", "tempfile", "urllib", "requests", "workpack.electrical.tables"}


@pytest.mark.parametrize(
    "path", sorted(p for p in PACKAGE.glob("*.py") if p.name not in (LOADER, "__init__.py")),
    ids=lambda p: p.name,
)
def test_calculation_module_imports_nothing_that_reads_files(path: Path) -> None:
    """No file, network or database module, no open(), no import of the table loader."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module:
            found.add(node.module)
        elif isinstance(node, ast.Call) and getattr(node.func, "id", None) == "open":
            found.add("open()")
    bad = {n for n in found if n in FORBIDDEN or n.split(".")[0] in FORBIDDEN or n == "open()"}
    assert not bad, f"{path.name} imports {sorted(bad)}"


def test_public_api_is_sorted_and_complete() -> None:
    """__all__ is sorted and every name in it exists (keeps the public surface honest)."""
    import workpack.electrical as pkg

    assert pkg.__all__ == sorted(pkg.__all__)
    for name in pkg.__all__:
        assert hasattr(pkg, name), name
