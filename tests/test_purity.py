"""The functional core does no I/O: it imports no file, database, PDF or YAML module."""

from pathlib import Path

import pytest
from imports import forbidden_in

PACKAGE = Path(__file__).resolve().parent.parent / "workpack"
CORE = ["topology.py", "isolation.py", "checks.py", "summary.py", "model", "diagnose.py",
        "search_core.py", "search.py", "search_wording.py", "rules.py", "calculations.py",
        "plan", "forms.py", "restoration.py",
        "evaluate.py", "records.py", "history.py", "audit", "store/_chain.py", "crew.py",
        "signing.py"]
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
    assert not forbidden_in(path, FORBIDDEN)
