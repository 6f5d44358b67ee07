"""Settings a user need not type every time: the records store, page size and crew hours.

Each comes from the first place that gives it: the command line; the environment
(``WORKPACK_DB``, ``WORKPACK_PAGE_SIZE``, ``WORKPACK_CREW_HOURS``); ``workpack.toml``
beside the plant file; the user's ``$XDG_CONFIG_HOME/workpack/workpack.toml`` (by default
``~/.config/workpack/workpack.toml``); the built-in default. A ``workpack.toml`` holds
top-level keys only (``db``, ``page_size``, ``crew_hours``); a relative ``db`` there is
taken from the file's own folder. A bad value anywhere is one located line, exit 2.
Shell: reads the environment and files.
"""

from __future__ import annotations

import argparse
import math
import os
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from workpack.errors import InputError, Problem, UsageError, did_you_mean

CONFIG_NAME = "workpack.toml"
COMMAND_LINE = "the command line"


def _page_size(value: Any) -> str:
    sizes = {"a4": "A4", "letter": "Letter"}
    if not isinstance(value, str) or value.lower() not in sizes:
        raise ValueError(f"expected A4 or Letter (got {value!r})")
    return sizes[value.lower()]


def _crew_hours(value: Any) -> float:
    try:
        hours = float(value) if not isinstance(value, bool) else math.nan
    except (TypeError, ValueError):
        hours = math.nan
    if not math.isfinite(hours) or hours <= 0:
        raise ValueError(f"must be a number of hours above zero (got {value!r})")
    return hours


def _store(value: Any) -> str:
    if not isinstance(value, str) or not value.strip():
        raise ValueError(f"expected an SQLite file or a postgresql:// URL (got {value!r})")
    return value


@dataclass(frozen=True)
class Setting:
    key: str  # in workpack.toml, and the attribute of the parsed options
    option: str
    environment: str
    convert: Callable[[Any], Any]
    default: Any  # None: the command works it out (the store beside the plant)


SETTINGS = (
    Setting("db", "--db", "WORKPACK_DB", _store, None),
    Setting("page_size", "--page-size", "WORKPACK_PAGE_SIZE", _page_size, "A4"),
    Setting("crew_hours", "--crew-hours", "WORKPACK_CREW_HOURS", _crew_hours, 16.0),
)

PRECEDENCE = (
    "settings: --db, --page-size and --crew-hours (where the command has them) come from "
    "the first of: the command line; the environment (WORKPACK_DB, WORKPACK_PAGE_SIZE, "
    "WORKPACK_CREW_HOURS); workpack.toml beside the plant file; the user's "
    "$XDG_CONFIG_HOME/workpack/workpack.toml (default ~/.config/workpack/workpack.toml); "
    "the built-in default. workpack.toml holds top-level keys: db = \"records.sqlite\" "
    "(relative to the file), page_size = \"Letter\", crew_hours = 40.")


def user_config(environment: Mapping[str, str]) -> Path:
    """The user's workpack.toml (it need not exist)."""
    base = environment.get("XDG_CONFIG_HOME") or str(Path.home() / ".config")
    return Path(base) / "workpack" / CONFIG_NAME


def read_config(path: Path) -> dict[str, tuple[Any, str]]:
    """``key -> (value, where)`` from one workpack.toml; {} when there is none.
    InputError naming the file, line and column for anything wrong in it."""
    import tomllib

    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        return {}
    except (OSError, UnicodeDecodeError) as error:
        raise InputError([Problem(str(path), 0, 0, "", f"cannot read: {error}")]) from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        found = re.fullmatch(r"(.*) \(at line (\d+), column (\d+)\)", str(error))
        message, line, column = ((found.group(1), int(found.group(2)), int(found.group(3)))
                                 if found else (str(error), 0, 0))
        raise InputError([Problem(str(path), line, column, "", message)]) from None
    known = {s.key: s for s in SETTINGS}
    problems: list[Problem] = []
    settings: dict[str, tuple[Any, str]] = {}
    for key, value in data.items():
        line, column = _place(text, key)
        if key not in known:
            problems.append(Problem(str(path), line, column, key, "unknown setting; known: "
                                    + ", ".join(known) + did_you_mean(key, known)))
            continue
        try:
            converted = known[key].convert(value)
        except ValueError as error:
            problems.append(Problem(str(path), line, column, key, str(error)))
            continue
        if key == "db" and "://" not in converted and not Path(converted).is_absolute():
            converted = str(path.parent / converted)
        settings[key] = (converted, str(path))
    if problems:
        raise InputError(problems)
    return settings


def _place(text: str, key: str) -> tuple[int, int]:
    """Line and column of ``key =`` in a TOML text (tomllib gives no places)."""
    pattern = re.compile(rf"^([ \t]*)[\"']?{re.escape(key)}[\"']?\s*=", re.MULTILINE)
    found = pattern.search(text) or re.search(rf"^[ \t]*\[+\s*{re.escape(key)}\b", text,
                                              re.MULTILINE)
    if not found:
        return 0, 0
    line = text.count("\n", 0, found.start()) + 1
    return line, len(found.group(0)) - len(found.group(0).lstrip()) + 1


def resolve(args: argparse.Namespace, environment: Mapping[str, str] | None = None) -> None:
    """Fill in each setting ``args`` has but the command line left out, from the first
    place that gives it; ``args.setting_sources`` says where each came from."""
    environment = os.environ if environment is None else environment
    wanted = [s for s in SETTINGS if hasattr(args, s.key)]
    if not wanted:
        return
    sources: dict[str, str] = {}
    beside = _beside_plant(args)
    layers: list[Callable[[], dict[str, tuple[Any, str]]]] = [  # read only when needed
        lambda: _from_environment(wanted, environment),
        lambda: read_config(beside) if beside else {},
        lambda: read_config(user_config(environment)),
    ]
    missing = []
    for setting in wanted:
        if getattr(args, setting.key) is not None:
            sources[setting.key] = COMMAND_LINE
        else:
            missing.append(setting)
    for layer in layers:
        if not missing:
            break
        found = layer()
        for setting in list(missing):
            if setting.key in found:
                value, where = found[setting.key]
                setattr(args, setting.key, value)
                sources[setting.key] = where
                missing.remove(setting)
    for setting in missing:
        setattr(args, setting.key, setting.default)
        sources[setting.key] = "the built-in default"
    args.setting_sources = sources


def _from_environment(wanted: list[Setting],
                      environment: Mapping[str, str]) -> dict[str, tuple[Any, str]]:
    found = {}
    for setting in wanted:
        text = environment.get(setting.environment)
        if text is None or text == "":
            continue
        try:
            found[setting.key] = (setting.convert(text), setting.environment)
        except ValueError as error:
            raise UsageError(f"{setting.environment}={text}: {error}") from None
    return found


def _beside_plant(args: argparse.Namespace) -> Path | None:
    plant = getattr(args, "plant", None)
    if not plant or "://" in str(plant) or not Path(plant).is_file():
        return None
    return Path(plant).parent / CONFIG_NAME
