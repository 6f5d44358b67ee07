"""A quick command is quick: it loads only what it uses (issue 15, point 5).

Each case runs the command in a fresh interpreter and reads ``sys.modules`` afterwards;
the wall-clock targets themselves are checked by ``bench/bench_startup.py`` (timing in a
test would fail on a busy machine, module lists do not).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
VESSEL = str(ROOT / "plants" / "demo-vessel.yaml")
QUICK = ["diagnose", "--volts", "440", "--hertz", "60", "--capacitance-per-phase", "2.2uF",
         "--reading", "A=460", "--reading", "B=60", "--reading", "C=400"]

# The planner, rules, search, templates, graphs, PDF, records and the heavy libraries.
HEAVY = {"workpack.plan", "workpack.rules", "workpack.search", "workpack.search_core",
         "workpack.isolation", "workpack.topology", "workpack.render.pdf", "workpack.store",
         "jinja2", "networkx", "reportlab", "pypdf", "openpyxl", "sqlite3", "scipy", "pint",
         "tqdm"}
# --help and the quick diagnose read no file and build no model either.
NO_FILES = HEAVY | {"pydantic", "yaml", "workpack.model.plant", "workpack.loading",
                    "workpack.diagnose"}

_PROBE = """
import json, sys
from workpack.cli import main
try:
    status = main(sys.argv[1:])
except SystemExit as leaving:
    status = leaving.code
sys.stdout.write("\\n@@" + json.dumps({"status": status, "modules": sorted(sys.modules)}))
"""


def loaded_by(arguments: list[str]) -> tuple[int, set[str]]:
    """Exit status and the modules loaded by ``workpack ARGUMENTS`` in a new interpreter."""
    result = subprocess.run([sys.executable, "-c", _PROBE, *arguments], capture_output=True,
                            text=True, cwd=ROOT, check=False)
    assert "@@" in result.stdout, result.stderr
    found = json.loads(result.stdout.rpartition("@@")[2])
    return found["status"], set(found["modules"])


def heavy(modules: set[str], forbidden: set[str]) -> set[str]:
    return {m for m in modules if m in forbidden or m.split(".")[0] in forbidden
            or any(m.startswith(f + ".") for f in forbidden)}


@pytest.mark.parametrize("arguments", [["--help"], ["--version"], ["plan", "--help"],
                                       QUICK, [*QUICK, "--json"]],
                         ids=["help", "version", "plan-help", "quick", "quick-json"])
def test_help_and_the_quick_diagnose_load_no_planner_model_or_heavy_library(
        arguments: list[str]) -> None:
    status, modules = loaded_by(arguments)
    assert status in (0, None)
    assert not heavy(modules, NO_FILES)
    if arguments[0] == "diagnose":  # it did the calculation, with the electrical core
        assert "workpack.electrical.ground_inverse" in modules


def test_check_of_the_demo_loads_no_planner_rules_templates_or_pdf() -> None:
    status, modules = loaded_by(["check", VESSEL])
    assert status == 0
    assert not heavy(modules, HEAVY - {"workpack.topology", "networkx"})
    assert "workpack.topology" in modules  # the summary is computed on the graph


def test_the_probe_sees_a_heavy_import_when_there_is_one() -> None:
    """The check can fail: a full diagnose of the day loads the plant model and graph."""
    status, modules = loaded_by(["diagnose", VESSEL,
                                 str(ROOT / "plants" / "demo-vessel-findings.yaml")])
    assert status == 0
    assert {"networkx", "pydantic", "workpack.topology"} <= heavy(modules, NO_FILES)
