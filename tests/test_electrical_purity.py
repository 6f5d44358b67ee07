"""The electrical calculations do no I/O: only tables.py reads files."""

from __future__ import annotations

from pathlib import Path

import pytest
from imports import ALLOWED_LIBRARIES, LOADS_NOTHING_OF, forbidden_in, loaded_by

PACKAGE = Path(__file__).resolve().parent.parent / "workpack" / "electrical"
LOADER = "tables.py"
FORBIDDEN = {"os", "pathlib", "io", "shutil", "sqlite3", "yaml", "importlib", "socket",
             "subprocess", "tempfile", "urllib", "requests", "workpack.electrical.tables"}
CALCULATIONS = sorted(p for p in PACKAGE.glob("*.py") if p.name not in (LOADER, "__init__.py"))


@pytest.mark.parametrize("path", CALCULATIONS, ids=lambda p: p.name)
def test_calculation_module_imports_nothing_that_reads_files(path: Path) -> None:
    """No file, network or database module, no open(), no import of the table loader."""
    bad = forbidden_in(path, FORBIDDEN)
    assert not bad, f"{path.name} imports {sorted(bad)}"


def test_no_calculation_module_loads_io_modules_when_imported() -> None:
    """Imported alone in a fresh interpreter (the package and its table loader with it),
    no calculation module loads a YAML parser, database, PDF or shell module."""
    modules = ["workpack.electrical", *(f"workpack.electrical.{p.stem}" for p in CALCULATIONS)]
    found = loaded_by(modules, LOADS_NOTHING_OF, ALLOWED_LIBRARIES)
    assert found == {name: {"loaded": []} for name in modules}


def test_public_api_is_sorted_and_complete() -> None:
    """__all__ is sorted and every name in it exists (keeps the public surface honest)."""
    import workpack.electrical as pkg

    assert pkg.__all__ == sorted(pkg.__all__)
    for name in pkg.__all__:
        assert hasattr(pkg, name), name
