"""Files to models: read, validate, check, and report every problem with its place.

This is the shell's edge: it reads files. Everything it returns is plain,
validated data for the pure core.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any, TypeVar

from pydantic import BaseModel, ValidationError

from workpack.checks import run_checks
from workpack.errors import InputError, Problem
from workpack.model.plant import Plant
from workpack.topology import Topology
from workpack.yamlsource import Marks, parse_yaml

Model = TypeVar("Model", bound=BaseModel)


def read_text(path: Path) -> str:
    try:
        return path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError([Problem(str(path), 0, 0, "", "no such file")]) from None
    except IsADirectoryError:
        raise InputError([Problem(str(path), 0, 0, "", "is a folder, expected a file")]) from None
    except UnicodeDecodeError as error:
        raise InputError([Problem(str(path), 0, 0, "",
                                  f"not UTF-8 text (byte {error.start})")]) from None
    except OSError as error:
        raise InputError([Problem(str(path), 0, 0, "", error.strerror or str(error))]) from None


def validate(model: type[Model], data: Any, marks: Marks, what: str) -> Model:
    """Validate plain data into ``model``; every schema error becomes a located Problem."""
    if not isinstance(data, dict):
        found = "an empty file" if data is None else f"a {type(data).__name__}"
        raise InputError([marks.problem((), f"expected a {what} (a mapping of sections), "
                                            f"found {found}")])
    try:
        return model.model_validate(data)
    except ValidationError as error:
        raise InputError(_problems(error, marks)) from None


def _problems(error: ValidationError, marks: Marks) -> list[Problem]:
    problems = []
    for detail in error.errors(include_url=False):
        path = tuple(p for p in detail["loc"] if isinstance(p, str | int))
        path = tuple("from" if p == "from_" else p for p in path)
        problems.append(marks.problem(path, _message(detail),
                                      at_key=detail["type"] == "extra_forbidden"))
    return problems


def _message(detail: Any) -> str:
    kind = detail["type"]
    message = str(detail["msg"])
    if kind == "extra_forbidden":
        if detail["input"] is None and " " in str(detail["loc"][-1]):
            return ("unknown field: looks like the rest of a text cut at a comma inside "
                    "{ }; put that text in quotes")
        return "unknown field (check its spelling; `workpack schema plant` lists the fields)"
    if kind == "missing":
        return "required field is missing"
    if kind in ("enum", "literal_error"):
        expected = detail.get("ctx", {}).get("expected", "")
        return f"{detail['input']!r} is not allowed; expected {expected}"
    if kind == "value_error":
        return message.removeprefix("Value error, ")
    if kind == "string_pattern_mismatch":
        return (f"{detail['input']!r} is not a valid id (letters, digits and _ . - /, "
                "starting with a letter or digit)")
    return f"{message} (got {detail['input']!r})" if "input" in detail and not isinstance(
        detail["input"], dict | list) else message


def load_plant_text(text: str, file: str) -> tuple[Plant, Topology]:
    """Parse, validate and check a plant; raise InputError listing every problem."""
    data, marks = parse_yaml(text, file)
    plant = validate(Plant, data, marks, "plant inventory")
    findings, topology = run_checks(plant)
    if findings:
        raise InputError(marks.problem(f.path, f.message) for f in findings)
    assert topology is not None
    return plant, topology


def load_plant(path: Path) -> tuple[Plant, Topology]:
    return load_plant_text(read_text(path), str(path))


def load_model(path: Path, model: type[Model], what: str,
               after: Callable[[Model, Marks], None] | None = None) -> Model:
    """Read a YAML file as ``model``; ``after`` may raise located problems of its own."""
    data, marks = parse_yaml(read_text(path), str(path))
    loaded = validate(model, data, marks, what)
    if after is not None:
        after(loaded, marks)
    return loaded
