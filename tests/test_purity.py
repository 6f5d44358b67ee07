"""The functional core does no I/O: it imports no file, database, PDF or YAML module.

Two checks. The first reads each core file's import lines (it sees ``os``, ``pathlib``
and ``open()``, which every interpreter has loaded anyway). The second imports each core
module alone in a fresh interpreter and looks at ``sys.modules``: it sees what the
module loads through other modules, which the import lines do not show.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from imports import ALLOWED_LIBRARIES, LOADS_NOTHING_OF, forbidden_in, loaded_by

ROOT = Path(__file__).resolve().parent.parent
# The core, as importable names; a package stands for itself and every module in it.
# Keep this list up to date when modules are split or renamed: a name that does not
# exist fails the tests below.
CORE = [
    "workpack.topology", "workpack.isolation", "workpack.checks", "workpack.summary",
    "workpack.model", "workpack.diagnose", "workpack.search_core", "workpack.search",
    "workpack.search_wording", "workpack.rules", "workpack.calculations", "workpack.plan",
    "workpack.forms", "workpack.restoration", "workpack.evaluate", "workpack.records",
    "workpack.history", "workpack.audit", "workpack.store._chain", "workpack.crew",
    "workpack.signing", "workpack.quick_diagnose", "workpack.reports", "workpack.anchors",
    "workpack.rejudge", "workpack.record_signatures", "workpack.sync", "workpack.lockregister",
    "workpack.competence", "workpack.recordchecks", "workpack.joblog", "workpack.store._events",
]
# Core modules nearly every other imports, loaded once before the checks to keep them
# fast. Sound: the checker fails if these (with the libraries) load anything forbidden.
SHARED_CORE = ("workpack.model", "workpack.electrical", "workpack.topology")
FORBIDDEN = {"os", "pathlib", "io", "shutil", "sqlite3", "yaml", "reportlab", "subprocess",
             "socket", "tempfile", "workpack.loading", "workpack.cli", "workpack.yamlsource"}


def module_file(name: str) -> Path:
    """The source of a dotted module name: ``name.py``, or the package folder."""
    path = ROOT.joinpath(*name.split("."))
    return path if path.is_dir() else path.with_suffix(".py")


def core_modules(names: list[str]) -> list[str]:
    """Every module the names stand for, packages expanded; a missing one stays in, to fail."""
    modules: list[str] = []
    for name in names:
        path = module_file(name)
        if path.is_dir():
            modules.extend(".".join(p.relative_to(ROOT).with_suffix("").parts).removesuffix(
                ".__init__") for p in sorted(path.rglob("*.py")))
        else:
            modules.append(name)
    return modules


@pytest.mark.parametrize("name", CORE)
def test_every_listed_core_module_exists(name: str) -> None:
    """A module renamed or split away must be renamed here too, not silently unchecked."""
    assert module_file(name).exists(), (
        f"{name} is listed as core in tests/test_purity.py but there is no "
        f"{module_file(name).relative_to(ROOT)}: update CORE")


@pytest.mark.parametrize("name", core_modules(CORE))
def test_core_module_imports_no_io(name: str) -> None:
    path = module_file(name)
    if path.is_dir():
        path = path / "__init__.py"
    assert path.exists(), f"{path}: no such core module (update CORE)"
    assert not forbidden_in(path, FORBIDDEN)


def test_no_core_module_loads_io_modules_when_imported() -> None:
    """Each core module, imported alone, puts no database, PDF, YAML or shell module in
    sys.modules (e.g. the audit once loaded sqlite3 through the records store)."""
    found = loaded_by(core_modules(CORE), LOADS_NOTHING_OF, ALLOWED_LIBRARIES + SHARED_CORE)
    broken = {name: result["error"] for name, result in found.items() if "error" in result}
    assert not broken, f"core modules that cannot be imported (update CORE?): {broken}"
    leaks = {name: shortest(result["loaded"]) for name, result in found.items()
             if result["loaded"]}
    assert not leaks, f"core modules that load I/O modules: {leaks}"


def shortest(names: list[str]) -> list[str]:
    """The names without their submodules (``yaml``, not also ``yaml.parser`` …)."""
    return [n for n in names if not any(n.startswith(other + ".") for other in names)]


# --- the runtime check itself can fail ----------------------------------------------------

LEAKY_PACKAGE = {
    "__init__.py": "",
    "clean.py": "import json\nVALUE = json.dumps(1)\n",
    "direct.py": "import sqlite3\n",
    # Through another module of the package, and in a function's default: only running
    # the import shows these; neither file's own import lines name the library.
    "helper.py": "from reportlab.lib.units import mm\n",
    "indirect.py": "from leakypkg import helper\n",
    "hidden.py": "import importlib\nREADER = importlib.import_module('pypdf')\n",
}


@pytest.fixture(scope="module")
def leaky_root(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("purity")
    package = root / "leakypkg"
    package.mkdir()
    for name, text in LEAKY_PACKAGE.items():
        (package / name).write_text(text, encoding="utf-8")
    return root


@pytest.fixture(scope="module")
def leaky_results(leaky_root: Path) -> dict[str, dict[str, object]]:
    modules = ["leakypkg.clean", "leakypkg.direct", "leakypkg.indirect", "leakypkg.hidden",
               "leakypkg.clean", "leakypkg.missing"]
    return loaded_by(modules, LOADS_NOTHING_OF, ALLOWED_LIBRARIES, path=(leaky_root,))


def test_the_check_flags_a_module_that_loads_sqlite3(leaky_results) -> None:
    assert leaky_results["leakypkg.direct"] == {"loaded": ["_sqlite3", "sqlite3",
                                                           "sqlite3.dbapi2"]}


def test_the_check_flags_a_library_loaded_through_another_module(leaky_results) -> None:
    loaded = leaky_results["leakypkg.indirect"]["loaded"]
    assert isinstance(loaded, list) and "reportlab" in loaded


def test_the_check_flags_a_library_loaded_without_an_import_line(leaky_results,
                                                                 tmp_path: Path) -> None:
    loaded = leaky_results["leakypkg.hidden"]["loaded"]
    assert isinstance(loaded, list) and "pypdf" in loaded
    hidden = tmp_path / "hidden.py"  # what the import-line test alone would have said
    hidden.write_text(LEAKY_PACKAGE["hidden.py"], encoding="utf-8")
    assert not forbidden_in(hidden, LOADS_NOTHING_OF)


def test_each_module_is_checked_alone(leaky_results) -> None:
    """The clean module, checked after the leaky ones, is charged with none of their loads."""
    assert leaky_results["leakypkg.clean"] == {"loaded": []}


def test_a_listed_module_that_does_not_exist_is_an_error(leaky_results) -> None:
    assert "ModuleNotFoundError" in str(leaky_results["leakypkg.missing"]["error"])


def test_a_module_loaded_before_the_checks_is_checked_too(leaky_root: Path) -> None:
    """Loading modules once up front (SHARED_CORE) cannot hide what they load."""
    with pytest.raises(AssertionError, match=r"load \['_sqlite3', 'sqlite3'"):
        loaded_by(["leakypkg.clean"], LOADS_NOTHING_OF, ("leakypkg.direct",),
                  path=(leaky_root,))
