"""The functional core does no I/O: it imports no file, database, PDF or YAML module."""

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "workpack"
CORE = ["topology.py", "isolation.py", "checks.py", "summary.py", "model", "diagnose.py",
        "search_core.py", "search.py", "rules.py", "calculations.py", "plan.py", "forms.py",
        "evaluate.py", "history.py", "audit.py", "store/_chain.py"]
FORBIDDEN = {"os", "pathlib", "io", "shutil", "sqlite3", "yaml", "reportlab", "subprocess",
             "socket", "tempfile", "workpack.loading", "workpack.cli", "workpack.yamlsource"}


def core_files() -> list[Path]:
    files: list[Path] = []
    for name in CORE:
        path = PACKAGE / name
        files.extend(sorted(path.rglob("*.py")) if path.is_dir() else [path])
    return files


@pytest.mark.parametrize("path", core_files(), ids=lambda p: p.name)
def test_core_module_imports_no_io(path: Path) -> None:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    imported: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            imported.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module:
            imported.add(node.module)
        elif isinstance(node, ast.Call) and getattr(node.func, "id", None) == "open":
            imported.add("open()")
    assert not {name for name in imported if name.split(".")[0] in FORBIDDEN
                or name in FORBIDDEN or name == "open()"}
