"""The wheel carries everything workpack needs: built from a copy of the checkout,
installed in a fresh virtual environment outside it, it plans the demo vessel.

Slow on purpose (marked ``wheel``; about 15 s): it builds a wheel and installs it with
its dependencies, which pip takes from its cache (or the package registry).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import venv
import zipfile
from pathlib import Path

import pytest
from conftest import ROOT

pytestmark = pytest.mark.wheel

# What a wheel is built from; the rest of the checkout (tests, caches, outputs) is not.
NOT_BUILT_FROM = shutil.ignore_patterns(".git", ".venv", "out", "build", "tests", "bench",
                                        "*.egg-info", "__pycache__", ".*_cache", ".hypothesis",
                                        ".coverage*")
# The files people edit, and where each lands in the wheel (workpack/data/…).
SHIPPED = {"rules": "workpack/data/rules", "templates": "workpack/data/templates",
           "plants/asset-map.yaml": "workpack/data/asset-map.yaml"}


def run(*command: str | Path, cwd: Path) -> str:
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "VIRTUAL_ENV")}
    done = subprocess.run([str(c) for c in command], cwd=cwd, env=env, capture_output=True,
                          text=True, timeout=300, check=False)
    assert done.returncode == 0, f"{command}: {done.stderr[-3000:]}"
    return done.stdout


@pytest.fixture(scope="module")
def wheel(tmp_path_factory: pytest.TempPathFactory) -> Path:
    source = tmp_path_factory.mktemp("source") / "workpack"
    shutil.copytree(ROOT, source, symlinks=True, ignore=NOT_BUILT_FROM)
    dist = tmp_path_factory.mktemp("dist")
    run(sys.executable, "-m", "pip", "wheel", "--no-deps", "--quiet", "--wheel-dir", dist,
        source, cwd=source)
    [built] = dist.glob("workpack-*.whl")
    return built


@pytest.fixture(scope="module")
def installed(wheel: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A fresh virtual environment holding the wheel and its dependencies: its bin folder."""
    environment = tmp_path_factory.mktemp("venv")
    venv.create(environment, with_pip=False)
    python = environment / "bin" / "python"
    run(sys.executable, "-m", "pip", "--python", python, "install", "--quiet", wheel,
        cwd=environment)
    return environment / "bin"


def test_the_wheel_carries_the_files_people_edit_unchanged(wheel: Path) -> None:
    """rules/, templates/ and the asset map are in the wheel, byte for byte."""
    with zipfile.ZipFile(wheel) as archive:
        inside = {name: archive.read(name) for name in archive.namelist()}
    for edited, packaged in SHIPPED.items():
        files = sorted(p for p in (ROOT / edited).rglob("*") if p.is_file()) \
            if (ROOT / edited).is_dir() else [ROOT / edited]
        assert files
        for file in files:
            name = packaged + file.as_posix().removeprefix((ROOT / edited).as_posix())
            assert inside.get(name) == file.read_bytes(), f"{name} missing or different"
    standards = sorted((ROOT / "workpack" / "data" / "standards").glob("*.yaml"))
    assert standards and all(f"workpack/data/standards/{p.name}" in inside for p in standards)


def test_the_installed_command_plans_the_demo_outside_the_checkout(
        installed: Path, demo_plan: Path, tmp_path: Path) -> None:
    """`workpack plan` from the installed wheel, in a folder with nothing but the two demo
    files, writes the same packages, byte for byte, as the checkout does."""
    for name in ("demo-vessel.yaml", "demo-vessel-findings.yaml"):
        shutil.copy(ROOT / "plants" / name, tmp_path / name)
    where = run(installed / "python", "-c", "import workpack; print(workpack.__file__)",
                cwd=tmp_path)
    assert Path(where.strip()).is_relative_to(installed.parent), where
    said = run(installed / "workpack", "plan", "demo-vessel.yaml",
               "demo-vessel-findings.yaml", "--crew-hours", "40", "--out", "out", cwd=tmp_path)
    assert said.rstrip().endswith("files written to out"), said
    written = {p.name: p.read_bytes() for p in (tmp_path / "out").iterdir()}
    assert written == {p.name: p.read_bytes() for p in demo_plan.iterdir()}
