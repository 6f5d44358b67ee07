"""Where the data workpack ships lives: inside the package, found with importlib.resources.

``workpack/data/`` holds the standards tables, and links to the files people edit at the
top of the repository: ``rules/``, ``templates/`` and ``plants/asset-map.yaml``. An
editable install follows the links to those files; a wheel carries copies of them (the
build copies what a link points to). So the repository has one copy of each, and an
installed workpack finds its data wherever it is installed, with no checkout beside it.
Locates; reads nothing.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

from workpack.errors import WorkpackError


def shipped(*parts: str) -> Path:
    """The shipped file or folder ``workpack/data/<parts…>``, e.g. ``shipped("rules")``."""
    found = resources.files("workpack").joinpath("data", *parts)
    if not isinstance(found, Path):  # a zipped install: loaders and --rules need a folder
        raise WorkpackError(f"workpack's shipped data ({'/'.join(parts)}) is not in a folder "
                            "on disk; install workpack with pip, which unpacks it")
    return found


def rules_folder() -> Path:
    """The shipped rule set: rule files, ``cautions.yaml`` and ``search-weights.yaml``."""
    return shipped("rules")


def templates_folder() -> Path:
    """The Jinja2 templates (the HTML audit report)."""
    return shipped("templates")


def standards_folder() -> Path:
    """The standards tables, one YAML file per code set (read by electrical.tables)."""
    return shipped("standards")


def asset_map() -> Path:
    """The column map that reads an asset list written by ``export --what assets``."""
    return shipped("asset-map.yaml")
