"""What a module imports, read from its source: for the tests that keep the core pure."""

from __future__ import annotations

import ast
from pathlib import Path
from typing import Any


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


# --- what importing a module really loads ------------------------------------------------

# What no core module may load, directly or through another: databases, PDF and
# spreadsheet libraries, the YAML parser, and workpack's own shell (files, the records
# store's backends, rendering, the command line). Not os, socket or tempfile: pydantic
# and the interpreter load those whatever the core does; the import-line test covers them.
LOADS_NOTHING_OF = {
    "sqlite3", "_sqlite3", "psycopg", "psycopg2", "reportlab", "pypdf", "openpyxl", "yaml",
    "_yaml", "workpack.cli", "workpack.loading", "workpack.output", "workpack.yamlsource",
    "workpack.render", "workpack.sheets", "workpack.crew_shell", "workpack.store._sqlite",
    "workpack.store._postgres",
}
# Libraries the core uses, imported once before each module is checked (see loaded_by).
ALLOWED_LIBRARIES = ("pydantic", "networkx", "numpy", "jinja2")

# Run by ``loaded_by`` in one child interpreter: it imports the allowed heavy libraries
# once, then forks a fresh copy of itself for each module, so that every module is
# imported alone into the same clean ``sys.modules`` and nothing one import loads can
# hide or excuse what another loads. Prints {module: {"loaded": [...]} or {"error": "…"}}.
_CHILD = r"""
import importlib, json, os, sys

forbidden, modules, preload = (json.loads(arg) for arg in sys.argv[1:4])

def hits(name):
    return any(name == f or name.startswith(f + ".") for f in forbidden)

for library in preload:
    importlib.import_module(library)
baseline = set(sys.modules)
already = sorted(name for name in baseline if hits(name))
if already:
    sys.exit(f"the modules loaded before the checks ({preload}) load {already} "
             "themselves")
results = {}
for module in modules:
    read, write = os.pipe()
    pid = os.fork()
    if pid == 0:
        os.close(read)
        try:
            importlib.import_module(module)
            found = {"loaded": sorted(n for n in sys.modules if n not in baseline and hits(n))}
        except BaseException as error:  # a module that cannot be imported is a finding
            found = {"error": f"{type(error).__name__}: {error}"}
        os.write(write, json.dumps(found).encode())
        os._exit(0)
    os.close(write)
    chunks = []
    while chunk := os.read(read, 65536):
        chunks.append(chunk)
    os.close(read)
    os.waitpid(pid, 0)
    results[module] = json.loads(b"".join(chunks) or b'{"error": "the child died"}')
print(json.dumps(results))
"""


def loaded_by(modules: list[str], forbidden: set[str], preload: tuple[str, ...] = (),
              path: tuple[Path, ...] = ()) -> dict[str, dict[str, Any]]:
    """For each module, the ``forbidden`` modules (or their submodules) that importing it
    alone in a fresh interpreter puts in ``sys.modules``: ``{"loaded": [...]}``, or
    ``{"error": "…"}`` when it cannot be imported (a listed module that does not exist).

    ``preload`` names libraries the modules may use, imported once before the forks to
    keep the check fast; they must load nothing forbidden themselves (else it fails).
    ``path`` goes in front of ``sys.path`` (a temporary package in the checker's own test).
    """
    import json
    import os
    import subprocess
    import sys

    env = {**os.environ, "PYTHONPATH": os.pathsep.join(
        [*map(str, path), *filter(None, [os.environ.get("PYTHONPATH")])])}
    run = subprocess.run([sys.executable, "-c", _CHILD, json.dumps(sorted(forbidden)),
                          json.dumps(modules), json.dumps(list(preload))],
                         capture_output=True, text=True, env=env, timeout=300, check=False)
    assert run.returncode == 0, f"the import checker failed: {run.stderr}"
    return dict(json.loads(run.stdout))
