"""Shipped data is found inside the package (importlib.resources), not beside a checkout."""

from __future__ import annotations

import zipfile
from pathlib import Path

import pytest
from conftest import ROOT

from workpack import shipped
from workpack.errors import WorkpackError


def test_the_shipped_rules_are_the_files_people_edit() -> None:
    """In a checkout the package's data/rules leads to the top-level rules/ itself."""
    assert shipped.rules_folder().resolve() == (ROOT / "rules").resolve()
    assert shipped.templates_folder().resolve() == (ROOT / "templates").resolve()
    assert shipped.asset_map().resolve() == (ROOT / "plants" / "asset-map.yaml").resolve()
    assert shipped.rules_folder().is_relative_to(ROOT / "workpack")
    assert sorted(p.name for p in shipped.standards_folder().glob("*.yaml"))


def test_a_zipped_install_is_refused_with_a_message(monkeypatch: pytest.MonkeyPatch,
                                                    tmp_path: Path) -> None:
    """Loaders need folders on disk; a zip import says so instead of failing later."""
    archive = tmp_path / "workpack.zip"
    with zipfile.ZipFile(archive, "w") as out:
        out.writestr("workpack/data/rules/ground.yaml", "rules: []\n")
    monkeypatch.setattr(shipped.resources, "files",
                        lambda package: zipfile.Path(archive, f"{package}/"))
    with pytest.raises(WorkpackError, match=r"shipped data \(rules\) is not in a folder"):
        shipped.rules_folder()
