"""Files to models: read, validate, check, and report every problem with its place.

This is the shell's edge: it reads files. Everything it returns is plain,
validated data for the pure core.
"""

from __future__ import annotations

import io
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TYPE_CHECKING, Any, TypeVar

from pydantic import BaseModel, ValidationError

from workpack.checks import (
    Mismatch,
    check_findings,
    check_references,
    check_unique_ids,
    run_checks,
)
from workpack.collector import collector_paused
from workpack.errors import InputError, Problem, did_you_mean
from workpack.model.findings import Findings
from workpack.model.package import WorkPackage
from workpack.model.plant import (
    Auxiliary,
    Bus,
    Cable,
    CableType,
    Detector,
    Device,
    Load,
    Plant,
    Source,
    Transformer,
)
from workpack.model.results import Results
from workpack.model.rules import CautionLibrary, RuleFile
from workpack.model.weights import SearchWeights
from workpack.topology import Topology
from workpack.yamlsource import Marks, TableMarks, find_unprintable, format_path, parse_yaml

if TYPE_CHECKING:  # the rules (and Jinja2) load only when a rule set is read
    from workpack.rules import RuleSet

Model = TypeVar("Model", bound=BaseModel)

PLANT_SECTIONS: dict[str, type[BaseModel]] = {
    "sources": Source, "buses": Bus, "devices": Device, "transformers": Transformer,
    "cables": Cable, "loads": Load}


def read_text(path: Path) -> str:
    try:
        return path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError([Problem(str(path), 0, 0, "", "no such file")]) from None
    except IsADirectoryError:
        raise InputError([Problem(str(path), 0, 0, "", "is a folder, expected a file")]) from None
    except UnicodeDecodeError as error:
        data = error.object if isinstance(error.object, bytes) else b""
        line_start = data.rfind(b"\n", 0, error.start) + 1
        line = data.count(b"\n", 0, error.start) + 1
        column = len(data[line_start:error.start].decode("utf-8", "replace")) + 1
        raise InputError([Problem(str(path), line, column, "", f"not UTF-8 text: byte "
                                  f"0x{data[error.start]:02X} (save the file as UTF-8)"
                                  if data else "not UTF-8 text")]) from None
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


def _shown(value: Any, limit: int = 60) -> str:
    """A value as quoted in a message: repr, shortened when long (numbers too)."""
    text = repr(value) if isinstance(value, str) else str(value) if not isinstance(
        value, int) or value.bit_length() < 200 else f"a number of {value.bit_length()} bits"
    return text if len(text) <= limit else text[: limit - 1] + "…"


# pydantic's words for a value of the wrong shape, in the file's terms.
_SHAPES = {"dict_type": "expected a mapping of fields here", "model_type":
           "expected a mapping of fields here", "model_attributes_type":
           "expected a mapping of fields here", "tuple_type": "expected a list",
           "list_type": "expected a list", "bool_type": "expected true or false",
           "bool_parsing": "expected true or false", "int_type": "expected a whole number",
           "int_parsing": "expected a whole number", "int_from_float": "expected a whole number",
           "float_type": "expected a number", "float_parsing": "expected a number"}


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
        return f"expected text (got the number {_shown(detail['input'])}); put it in quotes"
    if kind in _SHAPES and "input" in detail:
        found = detail["input"]
        what = ("a list" if isinstance(found, list) else "a mapping" if isinstance(found, dict)
                else _shown(found))
        return f"{_SHAPES[kind]} (got {what})"
    if "Keys should be strings" in message:
        return "a field name must be text (a number stands where a name should)"
    if kind in ("enum", "literal_error"):
        expected = detail.get("ctx", {}).get("expected", "")
        return f"{_shown(detail['input'])} is not allowed; expected {expected}"
    if kind == "value_error":
        return message.removeprefix("Value error, ")
    if kind == "string_pattern_mismatch":
        return (f"{_shown(detail['input'])} is not a valid id (letters, digits and _ . - /, "
                "starting with a letter or digit)")
    if "input" in detail and not isinstance(detail["input"], dict | list):
        return f"{message} (got {_shown(detail['input'])})"
    return message


def located(marks: Marks, mismatches: list[Mismatch]) -> list[Problem]:
    """Each check's mismatch with its file place (and the place it repeats, if any)."""
    problems = []
    for mismatch in mismatches:
        message = mismatch.message
        if mismatch.related is not None:
            message += f" (first given on line {marks.locate(mismatch.related)[0]})"
        problems.append(marks.problem(mismatch.path, message))
    return problems


def _below(path: str, problems: list[Problem]) -> bool:
    """True when ``path`` lies at or below a field some problem already reports."""
    return any(path == p.path or path.startswith((p.path + ".", p.path + "["))
               for p in problems if p.path)


def _standing_in(model: type[Model], entry: dict[str, Any]) -> Model | None:
    """``entry`` as ``model`` when it is valid; else a stand-in with only its names.

    The stand-in keeps the id and the references (when they are well-formed) so
    that the reference checks can run on a plant with schema errors: other
    entries that name it find it, and its own references are still checked.
    """
    try:
        return model.model_validate(entry)
    except ValidationError:
        pass
    if not isinstance(entry.get("id"), str):
        return None
    fields: dict[str, Any] = {"id": entry["id"]}
    supply = entry.get("from")
    supplies = [supply] if isinstance(supply, str) else supply
    if "from_" in model.model_fields:
        fields["from_"] = (tuple(supplies) if isinstance(supplies, list) and supplies
                           and all(isinstance(s, str) for s in supplies) else ())
    if isinstance(entry.get("cable_type"), str):
        fields["cable_type"] = entry["cable_type"]
    if "auxiliaries" in model.model_fields:
        auxiliaries: Any = entry.get("auxiliaries")
        readable = isinstance(auxiliaries, list) and all(
            isinstance(a, dict) and isinstance(a.get("from"), str) for a in auxiliaries)
        fields["auxiliaries"] = tuple(
            Auxiliary.model_construct(from_=a["from"])  # type: ignore[call-arg]
            for a in auxiliaries) if readable else ()
    if "detector" in model.model_fields:
        detector: Any = entry.get("detector")
        readable = isinstance(detector, dict) and isinstance(detector.get("id"), str)
        fields["detector"] = (Detector.model_construct(id=detector["id"])  # type: ignore[call-arg]
                              if readable else None)
    return model.model_construct(**fields)


def _references_despite_schema(data: Any, schema: list[Problem]) -> list[Mismatch]:
    """The reference checks, run on what of a schema-invalid plant is readable.

    Only when the file's outline is sound (known sections, each a list of
    entries): with a section misspelled or malformed, every reference into it
    would look broken and the real mistake would drown.
    """
    if not isinstance(data, dict) or set(data) - set(Plant.model_fields):
        return []
    sections: dict[str, Any] = {}
    models: dict[str, type[BaseModel]] = {"cable_types": CableType, **PLANT_SECTIONS}
    for section, model in models.items():
        entries = data.get(section) or []
        if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
            return []
        standing = [_standing_in(model, entry) for entry in entries]
        if any(s is None for s in standing):
            return []  # an entry without an id: references to it cannot be judged
        sections[section] = tuple(standing)
    partial = Plant.model_construct(**sections)
    found = [*check_unique_ids(partial), *check_references(partial)]
    return [m for m in found if not _below(format_path(m.path), schema)]


@collector_paused()
def load_plant_text(text: str, file: str) -> tuple[Plant, Topology]:
    """Parse, validate and check a plant; raise InputError listing every problem.

    Schema problems and reference problems come in the same run where the file
    parses; the checks that need a whole plant (loops, voltages, what is fed) wait
    for a valid one.
    """
    data, marks = parse_yaml(text, file)
    try:
        plant = validate(Plant, data, marks, "plant inventory")
    except InputError as error:
        schema = list(error.problems)
        raise InputError([*schema, *located(marks, _references_despite_schema(data, schema))]
                         ) from None
    findings, topology = run_checks(plant)
    if findings:
        raise InputError(located(marks, findings))
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
    try:
        findings = validate(Findings, data, marks, "findings file")
    except InputError as error:
        schema = list(error.problems)
        raise InputError([*schema, *located(marks, _places_despite_schema(data, schema,
                                                                           topology))]) from None
    mismatches = list(check_findings(findings, topology))
    if mismatches:
        raise InputError(located(marks, mismatches))
    return findings


def _places_despite_schema(data: Any, schema: list[Problem],
                           topology: Topology) -> list[Mismatch]:
    """The place checks of findings, run on the findings that are readable.

    A finding the schema refused still has its ``where`` checked, when it is text.
    """
    from pydantic import TypeAdapter

    from workpack.model.findings import Defect, Finding

    if not isinstance(data, dict) or set(data) - set(Findings.model_fields):
        return []
    entries = data.get("findings") or []
    if not isinstance(entries, list):
        return []
    adapter: TypeAdapter[Any] = TypeAdapter(Finding)
    readable: list[Any] = []
    index_of: list[int] = []
    for index, entry in enumerate(entries):
        try:
            readable.append(adapter.validate_python(entry))
        except ValidationError:
            if not (isinstance(entry, dict) and isinstance(entry.get("where"), str)):
                continue
            readable.append(Defect.model_construct(where=entry["where"]))  # type: ignore[call-arg]
        index_of.append(index)
    partial = Findings.model_construct(findings=tuple(readable))
    found = [Mismatch(("findings", index_of[int(m.path[1])], *m.path[2:]), m.message)
             for m in check_findings(partial, topology)]
    return [m for m in found if not _below(format_path(m.path), schema)]


def load_findings(path: Path, topology: Topology) -> Findings:
    return load_findings_text(read_text(path), str(path), topology)


# Columns of a rounds-log CSV besides the three phase columns (named by the plant's
# phase labels). Empty cells are left out.
CSV_COLUMNS = ("id", "at", "by", "where", "kind", "reading", "test_voltage", "temperature",
               "duration", "note")


def findings_from_csv(text: str, file: str,
                      phase_labels: tuple[str, str, str]) -> tuple[dict[str, Any], Marks]:
    """Rows of a rounds log to findings data, keeping each cell's line and column."""
    text = text.removeprefix("\ufeff")  # a spreadsheet's byte-order mark
    unprintable = find_unprintable(text)
    if unprintable is not None:
        line, column, char = unprintable
        raise InputError([Problem(file, line, column, "", f"character U+{ord(char):04X} is "
                                  "not allowed (a control character)")])
    lines = io.StringIO(text, newline="").readlines()
    rows = _csv_rows(lines, file)
    if not rows:
        raise InputError([Problem(file, 0, 0, "", "empty CSV file; expected a header row")])
    header = [cell.strip() for cell in rows[0][1]]
    allowed = set(CSV_COLUMNS) | set(phase_labels)
    header_starts = _cell_starts(lines[rows[0][0] - 1])
    for position, name in enumerate(header):
        column = header_starts[position] if position < len(header_starts) else 1
        if name not in allowed:
            raise InputError([Problem(file, rows[0][0], column, "", f"unknown column "
                                      f"{name!r}; expected some of "
                                      f"{', '.join(sorted(allowed))}")])
        if name in header[:position]:
            raise InputError([Problem(file, rows[0][0], column, "",
                                      f"column {name!r} is named twice")])
    places: dict[tuple[str | int, ...], tuple[int, int]] = {}
    findings: list[dict[str, Any]] = []
    for line, row in rows[1:]:
        if not any(cell.strip() for cell in row):
            continue
        if len(row) > len(header):
            starts = _cell_starts(lines[line - 1])
            column = starts[len(header)] if len(header) < len(starts) else 1
            raise InputError([Problem(file, line, column, "",
                                      f"this row has {len(row)} cells but the header names "
                                      f"{len(header)} columns (a comma inside a note? put "
                                      "the note in double quotes)")])
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


def _csv_rows(lines: list[str], file: str) -> list[tuple[int, list[str]]]:
    """(line number, cells) of each CSV row; a row must stand on one line."""
    import csv

    reader = csv.reader(lines)
    rows: list[tuple[int, list[str]]] = []
    previous = 0
    try:
        for row in reader:
            first = previous + 1
            if reader.line_num > first:
                raise InputError([Problem(
                    file, first, 1, "", f"this row runs on to line {reader.line_num}: a "
                    "quoted cell is not closed on its line, or holds a line break; keep "
                    "each finding on one line of the CSV")])
            rows.append((first, row))
            previous = reader.line_num
    except csv.Error as error:
        message = str(error)
        if "field limit" in message:
            message = (f"a cell is longer than {csv.field_size_limit():,} characters; a "
                       "finding's cell holds a short value or note")
        raise InputError([Problem(file, reader.line_num, 0, "", f"CSV: {message}")]) from None
    return rows


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


def load_model(path: Path, model: type[Model], what: str) -> Model:
    """Read a YAML file as ``model``."""
    data, marks = parse_yaml(read_text(path), str(path))
    return validate(model, data, marks, what)


def load_weights(path: Path) -> SearchWeights:
    return load_model(path, SearchWeights, "search weights file")


# Files in a rules folder that are not rule files.
CAUTIONS_FILE = "cautions.yaml"
NOT_RULES = {CAUTIONS_FILE, "search-weights.yaml"}


def load_ruleset(folder: Path) -> RuleSet:
    """Every rules/*.yaml (but the caution library and weights), linted and compiled."""
    from workpack.calculations import CALCULATIONS, parameters
    from workpack.plan import context_schema
    from workpack.rules import build_ruleset

    if not folder.is_dir():
        raise InputError([Problem(str(folder), 0, 0, "", "no such rules folder")])
    library_path = folder / CAUTIONS_FILE
    library_data, library_marks = parse_yaml(read_text(library_path), str(library_path))
    library = validate(CautionLibrary, library_data, library_marks, "caution library")
    files: list[tuple[RuleFile, Any]] = []
    problems: list[Problem] = []
    for path in sorted(folder.glob("*.yaml")):
        if path.name in NOT_RULES:
            continue
        try:
            data, marks = parse_yaml(read_text(path), str(path))
        except InputError as error:
            problems.extend(error.problems)
            continue
        try:
            files.append((validate(RuleFile, data, marks, "rule file"), marks.problem))
        except InputError as error:
            problems.extend(error.problems)
            readable = _readable_rules(data, marks)
            if readable is not None:
                files.append(readable)
    if not files and not problems:
        raise InputError([Problem(str(folder), 0, 0, "", "no rule files (*.yaml) here")])
    try:
        ruleset = build_ruleset(files, (library, library_marks.problem), context_schema,
                                {name: parameters(name) for name in CALCULATIONS})
    except InputError as error:
        schema = list(problems)
        problems.extend(p for p in error.problems if not _below(
            p.path, [s for s in schema if s.file == p.file]))
    if problems:
        raise InputError(problems)
    return ruleset


def _readable_rules(data: Any, marks: Marks) -> tuple[RuleFile, Any] | None:
    """The rules of a schema-invalid rule file that are valid on their own, with a place
    function that maps their new positions back to the file's, so they are linted in
    the same run (unknown cautions, calculations and names beside the schema problems)."""
    from workpack.model.rules import Rule

    if not isinstance(data, dict) or not isinstance(data.get("rules"), list):
        return None
    valid: list[Rule] = []
    index_of: list[int] = []
    for index, entry in enumerate(data["rules"]):
        try:
            valid.append(Rule.model_validate(entry))
        except ValidationError:
            continue
        index_of.append(index)
    if not valid:
        return None

    def place(path: tuple[str | int, ...], message: str) -> Problem:
        if len(path) >= 2 and path[0] == "rules" and isinstance(path[1], int):
            path = ("rules", index_of[path[1]], *path[2:])
        return marks.problem(path, message)

    return RuleFile.model_construct(rules=tuple(valid)), place


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
    return load_results_marked(path, package, package_hash)[0]


def load_results_marked(path: Path, package: WorkPackage,
                        package_hash: str) -> tuple[Results, Marks]:
    """``load_results``, with the places of the fields: for the record's later checks
    (locks against the store, signers against the crew register)."""
    from workpack.evaluate import check_results

    if path.suffix.lower() == ".pdf":
        data, marks = _results_from_pdf(path, package)
    else:
        data, marks = parse_yaml(read_text(path), str(path))
    results = validate(Results, data, marks, "results file")
    mismatches = list(check_results(package, results, package_hash))
    if mismatches:
        raise InputError(located(marks, mismatches))
    return results, marks


# Far above a filled package (a few hundred kB); PdfReader reads the whole file.
MAX_PDF_BYTES = 50 * 1024 * 1024


def _results_from_pdf(path: Path, package: WorkPackage) -> tuple[dict[str, Any], Marks]:
    """The filled fields of a package PDF as results data; any unreadable PDF is one line.

    pypdf parses whatever the file holds, and a hostile file can make it raise nearly
    anything (encryption it cannot undo, streams that expand past its limits, broken
    objects), or log warnings: these become one error naming the file, and the
    warnings are kept off the terminal.
    """
    from workpack.forms import FormFieldError, results_from_fields
    from workpack.render.pdf import split_field_name

    file = str(path)
    try:
        size = path.stat().st_size
    except OSError as error:
        raise InputError([Problem(file, 0, 0, "", error.strerror or str(error))]) from None
    if size > MAX_PDF_BYTES:
        raise InputError([Problem(file, 0, 0, "", f"{size:,} bytes is larger than a filled "
                                  f"package PDF can be ({MAX_PDF_BYTES:,})")])
    with _pypdf_quiet() as heard:
        try:
            values = _pdf_field_values(path)
        except InputError:
            raise
        except Exception as error:  # noqa: BLE001 -- a hostile file; see the docstring
            said = f" ({heard[0]})" if heard else ""
            raise InputError([Problem(file, 0, 0, "", f"cannot read the PDF: "
                                      f"{_pdf_reason(error)}{said}")]) from None
    if not values:
        raise InputError([Problem(file, 0, 0, "", "this PDF has no form fields: is it a "
                                                  "workpack package?")])
    try:
        data = results_from_fields(package, values, split_field_name)
    except FormFieldError as error:
        raise InputError([Problem(file, 0, 0, "", f"form field {name!r}: {why}")
                          for name, why in error.problems]) from None
    return data, TableMarks(file, places={})


def _pdf_field_values(path: Path) -> dict[str, str | None]:
    from pypdf import PdfReader

    reader = PdfReader(path)
    if reader.is_encrypted:
        # Some form apps lock editing with an owner password and no user password.
        if not reader.decrypt(""):
            raise InputError([Problem(str(path), 0, 0, "", "the PDF is password-protected; "
                                      "save an unprotected copy of the filled package")])
    fields = reader.get_fields() or {}
    values: dict[str, str | None] = {}
    for name, field in fields.items():
        value = field.get("/V")
        values[str(name)] = None if value is None else str(value)
    return values


def _pdf_reason(error: Exception) -> str:
    from pypdf.errors import DependencyError, FileNotDecryptedError, LimitReachedError

    if isinstance(error, DependencyError | FileNotDecryptedError) or (
            isinstance(error, NotImplementedError) and "encryption" in str(error)):
        return ("the PDF is encrypted in a way workpack cannot open; save an unprotected "
                "copy of the filled package")
    if isinstance(error, LimitReachedError) or "Limit reached" in str(error):
        return ("a compressed part of it expands past the reader's limit (a filled package "
                "has nothing like it)")
    text = str(error).strip() or type(error).__name__
    return text if len(text) < 200 else text[:200] + "…"


@contextmanager
def _pypdf_quiet() -> Iterator[list[str]]:
    """Collects what pypdf logs or warns while a PDF is read, instead of printing it."""
    import logging
    import warnings

    heard: list[str] = []

    class Keep(logging.Handler):
        def emit(self, record: logging.LogRecord) -> None:
            heard.append(record.getMessage())

    logger = logging.getLogger("pypdf")
    handler, propagate = Keep(), logger.propagate
    logger.addHandler(handler)
    logger.propagate = False
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                yield heard
            finally:
                heard.extend(str(w.message) for w in caught)
    finally:
        logger.removeHandler(handler)
        logger.propagate = propagate
