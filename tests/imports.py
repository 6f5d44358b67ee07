"""What a module imports, read from its source: for the tests that keep the core pure."""

from __future__ import annotations

import ast
from pathlib import Path


def imported_names(path: Path) -> set[str]:
    """Modules a file imports, plus "open()" where it calls the built-in open."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module:
            found.add(node.module)
        elif isinstance(node, ast.Call) and getattr(node.func, "id", None) == "open":
            found.add("open()")
    return found


def forbidden_in(path: Path, forbidden: set[str]) -> set[str]:
    """The imports of ``path`` that ``forbidden`` names (by module or its top package)."""
    return {name for name in imported_names(path)
            if name in forbidden or name.split(".")[0] in forbidden or name == "open()"}
