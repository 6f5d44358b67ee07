"""The JSON Schemas of the input files: shipped, current, described, and in agreement.

The schemas are generated from the pydantic models (``workpack schema``); the copies in
workpack/data/schemas/ are what editors read through the demo files' first-line modeline.
jsonschema (an independent validator, a test dependency) reads the demo files against them:
where it and the models disagree about a file the models accept, the schema is wrong.
"""

from __future__ import annotations

import json
import re
import tomllib
from collections.abc import Iterator
from fnmatch import fnmatch
from pathlib import Path
from typing import Any

import pytest
import yaml

from workpack.cli import main
from workpack.loading import load_findings, load_plant, load_ruleset, load_weights
from workpack.model.schemas import INPUT_FILES, file_name, schema_text

jsonschema = pytest.importorskip("jsonschema")

ROOT = Path(__file__).resolve().parent.parent
SHIPPED = ROOT / "workpack" / "data" / "schemas"
REGENERATE = "workpack schema --all --out workpack/data/schemas"


def shipped(name: str) -> dict[str, Any]:
    return json.loads((SHIPPED / file_name(name)).read_text(encoding="utf-8"))


# --- generated, written, shipped ----------------------------------------------------------------


def test_schema_all_writes_every_schema_once_and_the_same_bytes_twice(tmp_path, capsys):
    first, again = tmp_path / "a", tmp_path / "b"
    assert main(["schema", "--all", "--out", str(first)]) == 0
    assert capsys.readouterr().out == "".join(f"{first / file_name(n)}\n" for n in INPUT_FILES)
    assert main(["schema", "--all", "--out", str(again)]) == 0
    assert sorted(p.name for p in first.iterdir()) == sorted(map(file_name, INPUT_FILES))
    for name in INPUT_FILES:
        text = (first / file_name(name)).read_bytes()
        assert text == (again / file_name(name)).read_bytes()
        assert text.endswith(b"}\n") and b"\r" not in text
        assert text == json.dumps(json.loads(text), indent=2, sort_keys=True,
                                  ensure_ascii=False).encode("utf-8") + b"\n"  # sorted keys


@pytest.mark.parametrize("name", list(INPUT_FILES))
def test_printing_one_schema_gives_the_shipped_bytes(name: str, capsys) -> None:
    assert main(["schema", name]) == 0
    assert capsys.readouterr().out == schema_text(name)


def test_the_shipped_schemas_are_those_the_models_give(tmp_path) -> None:
    """Fails when a model changes and the shipped schemas were not written again."""
    assert main(["schema", "--all", "--out", str(tmp_path)]) == 0
    stale = [file_name(name) for name in INPUT_FILES
             if not (SHIPPED / file_name(name)).is_file()
             or (SHIPPED / file_name(name)).read_bytes()
             != (tmp_path / file_name(name)).read_bytes()]
    assert not stale, (f"workpack/data/schemas/ is out of date with the models ({', '.join(stale)})"
                       f": run `{REGENERATE}` and commit the result")


def test_the_schemas_are_package_data() -> None:
    """An installed workpack carries them (editors can point at site-packages too)."""
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    patterns = config["tool"]["setuptools"]["package-data"]["workpack"]
    for name in INPUT_FILES:
        relative = f"data/schemas/{file_name(name)}"
        assert any(fnmatch(relative, pattern) for pattern in patterns), relative


@pytest.mark.parametrize(("argv", "message"), [
    (["schema"], "schema: name one file (plant, findings, results, rules, cautions, "
                 "search-weights, asset-map, crew, instruments) or give --all\n"),
    (["schema", "plant", "--all", "--out", "x"], "schema: name one file (plant, findings, "
     "results, rules, cautions, search-weights, asset-map, crew, instruments) or give "
     "--all\n"),
    (["schema", "--all"], "schema --all writes one file per schema: give --out DIR\n"),
])
def test_schema_usage_mistakes_are_one_line(argv: list[str], message: str, capsys) -> None:
    assert main(argv) == 2
    captured = capsys.readouterr()
    assert (captured.out, captured.err) == ("", message)


def test_a_folder_that_cannot_be_written_is_one_line_and_nothing_written(tmp_path,
                                                                         capsys) -> None:
    blocker = tmp_path / "schemas"
    blocker.write_text("a file, not a folder", encoding="utf-8")
    assert main(["schema", "--all", "--out", str(blocker)]) == 2
    captured = capsys.readouterr()
    assert (captured.out, captured.err) == ("", f"{blocker}: cannot write here (File exists)\n")
    assert blocker.read_text(encoding="utf-8") == "a file, not a folder"


def test_one_schema_can_be_written_to_a_folder(tmp_path, capsys) -> None:
    assert main(["schema", "rules", "--out", str(tmp_path)]) == 0
    assert [p.name for p in tmp_path.iterdir()] == ["rules.schema.json"]
    assert (tmp_path / "rules.schema.json").read_text(encoding="utf-8") == schema_text("rules")


# --- every field described, with an example that fits --------------------------------------------


def properties(schema: dict[str, Any]) -> Iterator[tuple[str, dict[str, Any]]]:
    """Every property of every object in the schema, $defs included, with its path."""

    def walk(node: Any, path: str) -> Iterator[tuple[str, dict[str, Any]]]:
        if isinstance(node, dict):
            for key, value in node.items():
                if key == "properties" and isinstance(value, dict):
                    for name, prop in value.items():
                        yield f"{path}.{name}", prop
                        yield from walk(prop, f"{path}.{name}")
                elif key == "$defs":
                    for defname, definition in value.items():
                        yield from walk(definition, f"/$defs/{defname}")
                elif key not in ("examples", "default", "const", "enum"):
                    yield from walk(value, path)
        elif isinstance(node, list):
            for item in node:
                yield from walk(item, path)

    yield from walk(schema, "")


def definitions(schema: dict[str, Any]) -> Iterator[tuple[str, dict[str, Any]]]:
    yield "(root)", schema
    yield from schema.get("$defs", {}).items()


ALL_PROPERTIES = [pytest.param(name, path, prop, id=f"{name}{path}")
                  for name in INPUT_FILES for path, prop in properties(shipped(name))]

# Properties where no example makes sense (their description says so). None today: every
# field of every input file has one; an entry needs its reason beside it.
NO_EXAMPLE: dict[str, str] = {}


def test_the_walk_finds_the_properties_it_should() -> None:
    """The property walk is not vacuous: nested $defs and the top level are both reached."""
    found = {(name, path) for name in INPUT_FILES for path, _ in properties(shipped(name))}
    for expected in [("plant", ".sources"), ("plant", "/$defs/Detector.lamp_power"),
                     ("findings", "/$defs/Megger.temperature"),
                     ("rules", "/$defs/StepRule.reconnect"),
                     ("search-weights", "/$defs/YearsFactor.years"),
                     ("results", "/$defs/LockRecord.applied_by"),
                     ("asset-map", "/$defs/ColumnSpec.unit"),
                     ("crew", "/$defs/SigningKey.revoked_at")]:
        assert expected in found
    assert len(found) > 200


@pytest.mark.parametrize(("name", "path", "prop"), ALL_PROPERTIES)
def test_every_property_has_a_description_and_an_example(name: str, path: str,
                                                         prop: dict[str, Any]) -> None:
    description = prop.get("description", "")
    assert description.strip(), f"{name}{path}: no description"
    assert description == " ".join(description.split()), f"{name}{path}: one line, please"
    if f"{name}{path}" in NO_EXAMPLE:
        assert "no example" in description, f"{name}{path}: say why there is no example"
    else:
        assert prop.get("examples"), f"{name}{path}: no example"


@pytest.mark.parametrize(("name", "path", "prop"), ALL_PROPERTIES)
def test_every_example_and_default_fits_its_own_property(name: str, path: str,
                                                         prop: dict[str, Any]) -> None:
    """Checked by jsonschema against the property's schema (its $refs resolved)."""
    root = shipped(name)
    alone = {k: v for k, v in prop.items() if k not in ("examples", "default")}
    for validator in validators({**alone, "$defs": root.get("$defs", {})}):
        for example in prop.get("examples", []):
            errors = [e.message for e in validator.iter_errors(example)]
            assert not errors, f"{name}{path}: example {example!r}: {errors}"
        if "default" in prop:
            errors = [e.message for e in validator.iter_errors(prop["default"])]
            assert not errors, f"{name}{path}: default {prop['default']!r}: {errors}"


def mentions(text: str, value: Any) -> bool:
    return re.search(rf"(?<![\w-]){re.escape(str(value))}(?![\w-])", text) is not None


def inline_enums(node: Any) -> Iterator[list[Any]]:
    """Value lists written inside a property (Literal types), not behind a $ref."""
    if isinstance(node, dict):
        if isinstance(node.get("enum"), list):
            yield node["enum"]
        for key, value in node.items():
            if key not in ("examples", "default", "enum"):
                yield from inline_enums(value)
    elif isinstance(node, list):
        for item in node:
            yield from inline_enums(item)


@pytest.mark.parametrize("name", list(INPUT_FILES))
def test_every_choice_is_explained_where_it_is_offered(name: str) -> None:
    """An enum's description names each of its values; so does a property's with a list of
    its own (a Literal). Every definition says what it is."""
    schema = shipped(name)
    for defname, definition in definitions(schema):
        description = definition.get("description", "")
        assert description.strip(), f"{name}: {defname} has no description"
        assert description == " ".join(description.split()), f"{name}: {defname}: one line"
        for value in definition.get("enum", []):
            assert mentions(description, value), f"{name}: {defname} does not explain {value}"
    for path, prop in properties(schema):
        for values in inline_enums(prop):
            for value in values:
                if value is not None:
                    assert mentions(prop["description"], value), (
                        f"{name}{path}: the description does not explain {value!r}")


def test_the_choice_check_can_fail() -> None:
    assert mentions("a dry_type or liquid_filled bank", "dry_type")
    assert not mentions("a dry_type_x bank", "dry_type")
    assert not mentions("insulated-ish", "insulated")
    assert list(inline_enums({"anyOf": [{"enum": ["a", "b"]}, {"type": "null"}]})) == [["a", "b"]]


# --- the demo files against the shipped schemas, read by an independent validator ---------------

# A date-time as strict RFC 3339 (section 5.6) wants it, as editors check "format: date-time":
# the schemas must not claim that format for times the files write as 2026-12-01T07:40.
RFC3339 = re.compile(r"^\d{4}-\d{2}-\d{2}[Tt ]\d{2}:\d{2}:\d{2}(\.\d+)?([Zz]|[+-]\d{2}:\d{2})$")


def validators(schema: dict[str, Any]) -> list[Any]:
    """Draft 7 (as the schema declares, and as editors read it) and 2020-12 (the draft
    pydantic writes for), both checking formats as strictly as an editor does."""
    checker = jsonschema.FormatChecker()
    checker.checks("date-time")(lambda text: not isinstance(text, str)
                                or RFC3339.match(text) is not None)
    return [jsonschema.Draft7Validator(schema, format_checker=checker),
            jsonschema.Draft202012Validator(schema, format_checker=checker)]


@pytest.mark.parametrize("name", list(INPUT_FILES))
def test_the_schema_is_a_valid_draft_7_schema(name: str) -> None:
    schema = shipped(name)
    # http://, not https://: vscode-yaml 1.16.0 could not resolve the https:// form (#1096)
    assert schema["$schema"] == "http://json-schema.org/draft-07/schema#"
    jsonschema.Draft7Validator.check_schema(schema)
    jsonschema.Draft202012Validator.check_schema(schema)


# Keywords draft 7 defines (Draft 7 validation and core, sections 6-10), and the three
# pydantic adds that draft 7 does not know, each harmless there (see model/schemas.py).
DRAFT_7 = {"$schema", "$id", "$ref", "$comment", "title", "description", "default",
           "examples", "readOnly", "writeOnly", "type", "enum", "const", "multipleOf",
           "maximum", "exclusiveMaximum", "minimum", "exclusiveMinimum", "maxLength",
           "minLength", "pattern", "items", "additionalItems", "maxItems", "minItems",
           "uniqueItems", "contains", "maxProperties", "minProperties", "required",
           "properties", "patternProperties", "additionalProperties", "dependencies",
           "propertyNames", "if", "then", "else", "allOf", "anyOf", "oneOf", "not", "format",
           "contentMediaType", "contentEncoding", "definitions"}
UNKNOWN_TO_DRAFT_7 = {"$defs", "prefixItems", "discriminator"}


def schema_nodes(node: Any) -> Iterator[dict[str, Any]]:
    if isinstance(node, list):
        for item in node:
            yield from schema_nodes(item)
    elif isinstance(node, dict):
        yield node
        for key, value in node.items():
            if key in ("properties", "$defs", "patternProperties"):
                for sub in value.values():
                    yield from schema_nodes(sub)
            elif key not in ("examples", "default", "const", "enum", "discriminator"):
                yield from schema_nodes(value)


@pytest.mark.parametrize("name", list(INPUT_FILES))
def test_the_schema_uses_only_what_draft_7_editors_read(name: str) -> None:
    """Draft 7 ignores every word beside a "$ref": a field's description must not sit there."""
    nodes = list(schema_nodes(shipped(name)))
    used = {key for node in nodes for key in node}
    assert used - DRAFT_7 <= UNKNOWN_TO_DRAFT_7, used - DRAFT_7 - UNKNOWN_TO_DRAFT_7
    beside_a_ref = [node for node in nodes if "$ref" in node and len(node) > 1]
    assert not beside_a_ref, beside_a_ref[:3]


class EditorLoader(yaml.SafeLoader):
    """YAML as an editor's language server reads it (YAML 1.2 core): no timestamps."""


EditorLoader.yaml_implicit_resolvers = {
    first: [(tag, regexp) for tag, regexp in resolvers if tag != "tag:yaml.org,2002:timestamp"]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()}


def read_as_an_editor(path: Path) -> Any:
    return yaml.load(path.read_text(encoding="utf-8"), Loader=EditorLoader)


def schema_name_of(path: Path) -> str:
    if path.parent.name == "rules":
        return {"cautions.yaml": "cautions", "search-weights.yaml": "search-weights"}.get(
            path.name, "rules")
    if path.name.endswith("-findings.yaml"):
        return "findings"
    if path.name.endswith("-crew.yaml"):
        return "crew"
    if path.name.endswith("-instruments.yaml"):
        return "instruments"
    return "asset-map" if path.name == "asset-map.yaml" else "plant"


DEMO_FILES = sorted([*(ROOT / "plants").glob("*.yaml"), *(ROOT / "rules").glob("*.yaml")])


def test_every_kind_of_demo_file_is_covered() -> None:
    kinds = {schema_name_of(path) for path in DEMO_FILES}
    assert kinds == set(INPUT_FILES) - {"results"}  # results are filled in, not shipped


@pytest.mark.parametrize("path", DEMO_FILES, ids=lambda p: f"{p.parent.name}/{p.name}")
def test_the_demo_file_validates_against_its_shipped_schema(path: Path) -> None:
    """jsonschema, not pydantic: the schema and the models agree about the demo files."""
    data = read_as_an_editor(path)
    for validator in validators(shipped(schema_name_of(path))):
        errors = [f"{'.'.join(map(str, e.absolute_path))}: {e.message}"
                  for e in validator.iter_errors(data)]
        assert not errors, (type(validator).__name__, errors[:5])


@pytest.mark.parametrize("path", DEMO_FILES, ids=lambda p: f"{p.parent.name}/{p.name}")
def test_the_demo_file_points_editors_at_its_schema(path: Path) -> None:
    first = path.read_text(encoding="utf-8").splitlines()[0]
    match = re.fullmatch(r"# yaml-language-server: \$schema=(\S+)", first)
    assert match, f"{path.name}: first line is not the schema modeline: {first!r}"
    target = (path.parent / match.group(1)).resolve()
    assert target == SHIPPED / file_name(schema_name_of(path))
    assert not Path(match.group(1)).is_absolute()


def test_the_demo_files_still_load(demo_vessel) -> None:
    """The modeline is a comment to the loaders: the demo files load as before."""
    plant, _ = load_plant(ROOT / "plants" / "demo-vessel.yaml")
    assert plant.plant.name == "MV Skerry Lantern"
    assert len(load_findings(ROOT / "plants" / "demo-vessel-findings.yaml",
                             demo_vessel).findings) == 7
    assert load_weights(ROOT / "rules" / "search-weights.yaml").cost.observe.minutes == 3
    assert load_ruleset(ROOT / "rules")


def test_error_lines_count_the_modeline(tmp_path, capsys) -> None:
    """A mistake in a demo file is reported on its line in the file as the editor shows it."""
    text = (ROOT / "plants" / "demo-vessel.yaml").read_text(encoding="utf-8")
    lines = text.splitlines()
    number = next(i for i, line in enumerate(lines, start=1) if "vector_group: Dd0" in line)
    copy = tmp_path / "demo-vessel.yaml"
    copy.write_text(text.replace("vector_group: Dd0", "vector_group: Dd13", 1), encoding="utf-8")
    assert main(["check", str(copy)]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"{copy}:{number}:19: transformers[0].vector_group: "), err


# Broken inventories whose mistake is a matter of shape, so an editor marks it too: the
# schema refuses each (and the loader does, tests/test_broken_inventories.py).
SHAPE_MISTAKES = ["unknown_top_level_key.yaml", "unknown_deep_key.yaml",
                  "load_without_from.yaml", "top_level_list.yaml",
                  "wrong_type_text_for_number.yaml", "vector_group_not_iec.yaml"]


@pytest.mark.parametrize("name", SHAPE_MISTAKES)
def test_the_schema_refuses_a_mistake_of_shape(name: str) -> None:
    data = read_as_an_editor(ROOT / "tests" / "fixtures" / "broken" / name)
    for validator in validators(shipped("plant")):
        assert not validator.is_valid(data), type(validator).__name__


def test_a_finding_time_without_seconds_is_valid_and_a_wrong_one_is_not() -> None:
    """Editors check a claimed format; the findings schema describes the times people write."""
    finding = {"kind": "defect", "by": "x", "where": "MSB", "text": "cover cracked"}
    for validator in validators(shipped("findings")):
        assert validator.is_valid({"findings": [{**finding, "at": "2026-12-01T07:40"}]})
        assert not validator.is_valid({"findings": [{**finding, "at": "yesterday"}]})
    # the strict check itself: what an editor would say of a format: date-time claim
    assert not validators({"format": "date-time"})[0].is_valid("2026-12-01T07:40")
    assert validators({"format": "date-time"})[0].is_valid("2026-12-01T07:40:00Z")
