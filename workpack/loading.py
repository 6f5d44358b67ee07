"""Files to models: read, validate, check, and report every problem with its place.

This is the shell's edge: it reads files. Everything it returns is plain,
validated data for the pure core.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any, TypeVar

from pydantic import BaseModel, ValidationError

from workpack.checks import Mismatch, check_findings, run_checks
from workpack.collector import collector_paused
from workpack.errors import InputError, Problem, did_you_mean
from workpack.model.findings import Findings
from workpack.model.package import WorkPackage
from workpack.model.plant import Plant
from workpack.model.results import Results
from workpack.model.rules import CautionLibrary, RuleFile
from workpack.model.weights import SearchWeights
from workpack.rules import RuleSet, build_ruleset
from workpack.topology import Topology
from workpack.yamlsource import Marks, TableMarks, parse_yaml

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
        raise InputError(_problems(error, marks, data, model)) from None


def _problems(error: ValidationError, marks: Marks, data: Any,
              model: type[BaseModel]) -> list[Problem]:
    problems = []
    details = error.errors(include_url=False)
    paths = [_data_path(detail["loc"], data) for detail in details]
    for detail, path in zip(details, paths, strict=True):
        if detail["type"] == "too_short" and any(
            other[: len(path)] == path and other != path for other in paths
        ):
            continue  # an item inside was refused; saying the list is short only misleads
        if len(path) == 1 and detail["type"] == "extra_forbidden":
            names = [f.alias or name for name, f in model.model_fields.items()]
            problems.append(marks.problem(path, "unknown section" + did_you_mean(
                str(path[0]), names), at_key=True))
            continue
        problems.append(marks.problem(path, _message(detail),
                                      at_key=detail["type"] == "extra_forbidden"))
    return problems


def _data_path(loc: tuple[Any, ...], data: Any) -> tuple[str | int, ...]:
    """The error's place in the file's own terms.

    pydantic puts the tag of a tagged union (a finding's ``kind``) and the
    names of validators into its paths; they are not keys of the file, so
    they are dropped by following the data.
    """
    path: list[str | int] = []
    node = data
    for position, part in enumerate(loc):
        part = "from" if part == "from_" else part
        last = position == len(loc) - 1
        if isinstance(node, dict) and part in node:
            node = node[part]
        elif isinstance(node, list) and isinstance(part, int) and 0 <= part < len(node):
            node = node[part]
        elif not last or not isinstance(part, str | int):
            continue
        path.append(part)
    return tuple(path)


def _message(detail: Any) -> str:
    kind = detail["type"]
    message = str(detail["msg"])
    if kind == "extra_forbidden":
        if detail["input"] is None and " " in str(detail["loc"][-1]):
            return ("unknown field: looks like the rest of a text cut at a comma inside "
                    "{ }; put that text in quotes")
        return "unknown field (check its spelling; `workpack schema` lists the fields)"
    if kind == "missing":
        return "required field is missing"
    if detail.get("input", "") is None and kind not in ("none_required",):
        return "no value given (nothing after the colon)"
    if kind in ("string_type",) and isinstance(detail.get("input"), bool):
        return f"expected text (got {detail['input']}); put it in quotes"
    if kind in ("string_type",) and isinstance(detail.get("input"), int | float):
        return f"expected text (got the number {detail['input']}); put it in quotes"
    if "Keys should be strings" in message:
        return "a field name must be text (a number stands where a name should)"
    if kind in ("enum", "literal_error"):
        expected = detail.get("ctx", {}).get("expected", "")
        return f"{detail['input']!r} is not allowed; expected {expected}"
    if kind == "value_error":
        return message.removeprefix("Value error, ")
    if kind == "string_pattern_mismatch":
        return (f"{detail['input']!r} is not a valid id (letters, digits and _ . - /, "
                "starting with a letter or digit)")
    if "input" in detail and not isinstance(detail["input"], dict | list):
        shown = detail["input"]
        return f"{message} (got {shown!r})" if isinstance(shown, str) else (
            f"{message} (got {shown})")
    return message


def _located(marks: Marks, mismatches: list[Mismatch]) -> list[Problem]:
    problems = []
    for mismatch in mismatches:
        message = mismatch.message
        if mismatch.related is not None:
            message += f" (first given on line {marks.locate(mismatch.related)[0]})"
        problems.append(marks.problem(mismatch.path, message))
    return problems


@collector_paused()
def load_plant_text(text: str, file: str) -> tuple[Plant, Topology]:
    """Parse, validate and check a plant; raise InputError listing every problem."""
    data, marks = parse_yaml(text, file)
    plant = validate(Plant, data, marks, "plant inventory")
    findings, topology = run_checks(plant)
    if findings:
        raise InputError(_located(marks, findings))
    assert topology is not None
    return plant, topology


def load_plant(path: Path) -> tuple[Plant, Topology]:
    return load_plant_text(read_text(path), str(path))


def load_findings_text(text: str, file: str, topology: Topology) -> Findings:
    """Parse findings (YAML, or CSV when ``file`` ends in .csv) and check them against a plant."""
    if file.lower().endswith(".csv"):
        data, marks = findings_from_csv(text, file, topology.plant.plant.phase_labels)
    else:
        data, marks = parse_yaml(text, file)
    findings = validate(Findings, data, marks, "findings file")
    mismatches = list(check_findings(findings, topology))
    if mismatches:
        raise InputError(_located(marks, mismatches))
    return findings


def load_findings(path: Path, topology: Topology) -> Findings:
    return load_findings_text(read_text(path), str(path), topology)


# Columns of a rounds-log CSV besides the three phase columns (named by the plant's
# phase labels). Empty cells are left out.
CSV_COLUMNS = ("id", "at", "by", "where", "kind", "reading", "test_voltage", "temperature",
               "duration", "note")


def findings_from_csv(text: str, file: str,
                      phase_labels: tuple[str, str, str]) -> tuple[dict[str, Any], Marks]:
    """Rows of a rounds log to findings data, keeping each cell's line and column."""
    import csv

    lines = text.splitlines()
    rows = list(csv.reader(lines))
    if len(rows) != len(lines):
        raise InputError([Problem(file, 0, 0, "", "a cell spans lines; keep each finding "
                                                  "on one line of the CSV")])
    if not rows:
        raise InputError([Problem(file, 0, 0, "", "empty CSV file; expected a header row")])
    header = [cell.strip() for cell in rows[0]]
    allowed = set(CSV_COLUMNS) | set(phase_labels)
    unknown = [name for name in header if name not in allowed]
    if unknown:
        column = header.index(unknown[0]) + 1
        raise InputError([Problem(file, 1, column, "", f"unknown column {unknown[0]!r}; "
                                  f"expected some of {', '.join(sorted(allowed))}")])
    places: dict[tuple[str | int, ...], tuple[int, int]] = {}
    findings: list[dict[str, Any]] = []
    for line, row in enumerate(rows[1:], start=2):
        if not any(cell.strip() for cell in row):
            continue
        index = len(findings)
        entry: dict[str, Any] = {}
        places[("findings", index)] = (line, 1)
        phases: dict[str, str] = {}
        starts = _cell_starts(lines[line - 1])
        for position, (name, cell) in enumerate(zip(header, row, strict=False)):
            column = starts[position] if position < len(starts) else 1
            cell = cell.strip()
            if not cell:
                continue
            if name in phase_labels:
                phases[name] = cell
                places[("findings", index, "phases", name)] = (line, column)
            else:
                entry[name] = cell
                places[("findings", index, name)] = (line, column)
        if phases:
            field = "lamps" if entry.get("kind") == "lamps" else "volts"
            entry[field] = phases
            for name in phases:
                places[("findings", index, field, name)] = places.pop(
                    ("findings", index, "phases", name))
            places[("findings", index, field)] = (line, 1)
        findings.append(entry)
    return {"findings": findings}, TableMarks(file, places=places)


def _cell_starts(raw: str) -> list[int]:
    """1-based character column where each cell of a CSV line begins."""
    starts = [1]
    quoted = False
    for offset, char in enumerate(raw):
        if char == '"':
            quoted = not quoted
        elif char == "," and not quoted:
            starts.append(offset + 2)
    return starts


def load_model(path: Path, model: type[Model], what: str,
               after: Callable[[Model, Marks], None] | None = None) -> Model:
    """Read a YAML file as ``model``; ``after`` may raise located problems of its own."""
    data, marks = parse_yaml(read_text(path), str(path))
    loaded = validate(model, data, marks, what)
    if after is not None:
        after(loaded, marks)
    return loaded


def load_weights(path: Path) -> SearchWeights:
    return load_model(path, SearchWeights, "search weights file")


# Files in a rules folder that are not rule files.
CAUTIONS_FILE = "cautions.yaml"
NOT_RULES = {CAUTIONS_FILE, "search-weights.yaml"}


def load_ruleset(folder: Path) -> RuleSet:
    """Every rules/*.yaml (but the caution library and weights), linted and compiled."""
    from workpack.calculations import CALCULATIONS, parameters
    from workpack.plan import context_schema

    if not folder.is_dir():
        raise InputError([Problem(str(folder), 0, 0, "", "no such rules folder")])
    library_path = folder / CAUTIONS_FILE
    library_data, library_marks = parse_yaml(read_text(library_path), str(library_path))
    library = validate(CautionLibrary, library_data, library_marks, "caution library")
    files = []
    problems: list[Problem] = []
    for path in sorted(folder.glob("*.yaml")):
        if path.name in NOT_RULES:
            continue
        data, marks = parse_yaml(read_text(path), str(path))
        try:
            files.append((validate(RuleFile, data, marks, "rule file"), marks.problem))
        except InputError as error:
            problems.extend(error.problems)
    if problems:
        raise InputError(problems)
    if not files:
        raise InputError([Problem(str(folder), 0, 0, "", "no rule files (*.yaml) here")])
    return build_ruleset(files, (library, library_marks.problem), context_schema,
                         {name: parameters(name) for name in CALCULATIONS})


def load_package(path: Path) -> tuple[WorkPackage, str]:
    """A package's JSON twin, validated, and the hash its records will carry."""
    import json

    from workpack.store import package_sha256

    text = read_text(path)
    try:
        data = json.loads(text)
    except json.JSONDecodeError as error:
        raise InputError([Problem(str(path), error.lineno, error.colno, "",
                                  f"not a package JSON file: {error.msg}")]) from None
    try:
        package = WorkPackage.model_validate(data)
    except ValidationError as error:
        first = error.errors(include_url=False)[0]
        where = ".".join(str(p) for p in first["loc"])
        raise InputError([Problem(str(path), 0, 0, where,
                                  f"not a workpack package: {first['msg']}")]) from None
    return package, package_sha256(data)


def load_results(path: Path, package: WorkPackage, package_hash: str) -> Results:
    """Results from a filled YAML sheet or a filled package PDF, checked against the package."""
    from workpack.evaluate import check_results

    if path.suffix.lower() == ".pdf":
        data, marks = _results_from_pdf(path, package)
    else:
        data, marks = parse_yaml(read_text(path), str(path))
    results = validate(Results, data, marks, "results file")
    mismatches = [Mismatch(where, message)
                  for where, message in check_results(package, results, package_hash)]
    if mismatches:
        raise InputError(_located(marks, mismatches))
    return results


def _results_from_pdf(path: Path, package: WorkPackage) -> tuple[dict[str, Any], Marks]:
    from pypdf import PdfReader
    from pypdf.errors import PdfReadError

    from workpack.forms import results_from_fields
    from workpack.render.pdf import split_field_name

    try:
        fields = PdfReader(path).get_fields() or {}
    except (PdfReadError, OSError, ValueError) as error:
        raise InputError([Problem(str(path), 0, 0, "", f"cannot read the PDF: {error}")]) \
            from None
    if not fields:
        raise InputError([Problem(str(path), 0, 0, "", "this PDF has no form fields: is it a "
                                                      "workpack package?")])
    values = {name: field.get("/V") for name, field in fields.items()}
    data = results_from_fields(package, {k: (str(v) if v is not None else None)
                                         for k, v in values.items()}, split_field_name)
    return data, TableMarks(str(path), places={})
