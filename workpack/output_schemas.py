"""JSON Schemas of what each command prints with ``--json``, derived from the result types.

Every ``--json`` output is one result object (a dataclass of the core, or a report of
``reports.py``) written by ``cli.to_json``; its schema follows from the type annotations,
so it cannot drift from the code unnoticed. The schemas ship in
``workpack/data/output-schemas/`` for people who read the output with other tools;
``tests/test_cli_conventions.py`` checks the shipped copies against the types and every
command's real output against its schema. Write them again after changing a result type:

    python -m workpack.output_schemas workpack/data/output-schemas

Pure apart from ``main``; loaded by tests and that command only, never by a command.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import enum
import importlib
import json
import sys
import types
import typing
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

# command (as typed, spaces for sub-commands) -> "module:Type" of its --json output
OUTPUTS: dict[str, str] = {
    "check": "workpack.summary:PlantSummary",
    "isolate": "workpack.isolation:IsolationPlan",
    "diagnose": "workpack.diagnose:DayDiagnosis",
    "diagnose quick": "workpack.quick_diagnose:ReadingSummary",
    "locate": "workpack.search:FaultSearch",
    "plan": "workpack.reports:PlanReport",
    "results-template": "workpack.reports:FilesReport",
    "record": "workpack.reports:RecordReport",
    "verify": "workpack.reports:VerifyReport",
    "audit": "workpack.reports:AuditReport",
    "closeout": "workpack.reports:CloseoutReport",
    "draw": "workpack.reports:DrawReport",
    "store init": "workpack.reports:StoreInitReport",
    "import-assets": "workpack.reports:ImportReport",
    "export": "workpack.reports:ExportReport",
    "crew check": "workpack.reports:CrewCheckReport",
    "sync export": "workpack.reports:SyncExportReport",
    "sync import": "workpack.reports:SyncImportReport",
    "locks": "workpack.reports:LocksReport",
    "status": "workpack.joblog:Status",
    "job": "workpack.reports:JobEventReport",
}
DIALECT = "https://json-schema.org/draft/2020-12/schema"


def file_name(command: str) -> str:
    return command.replace(" ", "-") + ".schema.json"


def output_type(command: str) -> Any:
    module, _, name = OUTPUTS[command].partition(":")
    return getattr(importlib.import_module(module), name)


def output_schema(command: str) -> dict[str, Any]:
    """The JSON Schema of ``workpack COMMAND --json``."""
    definitions: dict[str, Any] = {}
    root = _schema(output_type(command), definitions)
    schema: dict[str, Any] = {"$schema": DIALECT,
                              "title": f"workpack {command} --json",
                              "description": f"What `workpack {command} --json` prints.",
                              **root}
    if definitions:
        schema["$defs"] = dict(sorted(definitions.items()))
    return schema


def schema_text(command: str) -> str:
    return json.dumps(output_schema(command), indent=2, sort_keys=True,
                      ensure_ascii=False) + "\n"


def _hints(cls: type) -> dict[str, Any]:
    """Field types of a dataclass, names its module imports only for type checking
    included (they are imported here, where nothing needs to start fast)."""
    module = sys.modules[cls.__module__]
    namespace = dict(vars(module))
    source = Path(module.__file__ or "").read_text(encoding="utf-8")
    if "TYPE_CHECKING" in source:
        import ast

        tree = ast.parse(source)
        for node in ast.walk(tree):
            if (isinstance(node, ast.If) and isinstance(node.test, ast.Name)
                    and node.test.id == "TYPE_CHECKING"):
                for statement in node.body:
                    if isinstance(statement, ast.ImportFrom) and statement.module:
                        imported = importlib.import_module(statement.module)
                        for alias in statement.names:
                            namespace.setdefault(alias.asname or alias.name,
                                                 getattr(imported, alias.name))
    return typing.get_type_hints(cls, globalns=namespace)


def _schema(tp: Any, definitions: dict[str, Any]) -> dict[str, Any]:  # noqa: C901 -- one branch per kind of type
    origin = typing.get_origin(tp)
    arguments = typing.get_args(tp)
    if tp is Any or tp is object:
        return {}
    if tp is type(None):
        return {"type": "null"}
    if tp is bool:
        return {"type": "boolean"}
    if tp is int:
        return {"type": "integer"}
    if tp is float:
        return {"type": "number"}
    if tp is str:
        return {"type": "string"}
    if tp is complex:
        return {"type": "object", "required": ["imag", "real"], "additionalProperties": False,
                "properties": {"real": {"type": "number"}, "imag": {"type": "number"}}}
    if tp is dt.datetime:
        return {"type": "string", "format": "date-time"}
    if tp is dt.date:
        return {"type": "string", "format": "date"}
    if origin is typing.Literal:
        return {"enum": list(arguments)}
    if origin in (typing.Union, types.UnionType):
        options = [_schema(a, definitions) for a in arguments]
        return {"anyOf": options}
    if isinstance(tp, type) and issubclass(tp, enum.Enum):
        return {"enum": [member.value for member in tp]}
    if isinstance(tp, type) and dataclasses.is_dataclass(tp):
        return _definition(tp, definitions, lambda: _dataclass_schema(tp, definitions))
    if isinstance(tp, type) and hasattr(tp, "model_json_schema"):  # a pydantic model
        return _definition(tp, definitions, lambda: _model_schema(tp, definitions))
    if origin is tuple:
        if len(arguments) == 2 and arguments[1] is Ellipsis:
            return {"type": "array", "items": _schema(arguments[0], definitions)}
        return {"type": "array", "prefixItems": [_schema(a, definitions) for a in arguments],
                "items": False, "minItems": len(arguments)}
    if origin in (list, set, frozenset, Sequence) or tp in (list, tuple, set, frozenset):
        items = _schema(arguments[0], definitions) if arguments else {}
        return {"type": "array", "items": items}
    if origin in (dict, Mapping) or tp is dict:
        values = _schema(arguments[1], definitions) if arguments else {}
        return {"type": "object", "additionalProperties": values}
    raise TypeError(f"no JSON Schema for {tp!r}: add its kind to output_schemas._schema")


def _definition(tp: type, definitions: dict[str, Any], build: Any) -> dict[str, Any]:
    name = tp.__name__
    if name not in definitions:
        definitions[name] = {}  # placeholder: a type may contain itself
        definitions[name] = build()
    return {"$ref": f"#/$defs/{name}"}


def _dataclass_schema(tp: type, definitions: dict[str, Any]) -> dict[str, Any]:
    hints = _hints(tp)
    fields = [f for f in dataclasses.fields(tp)]
    return {"type": "object", "additionalProperties": False,
            "required": sorted(f.name for f in fields),
            "properties": {f.name: _schema(hints[f.name], definitions) for f in fields}}


def _model_schema(tp: Any, definitions: dict[str, Any]) -> dict[str, Any]:
    """A pydantic model as ``model_dump(mode="json")`` gives it; its own definitions
    join ours."""
    schema = tp.model_json_schema(mode="serialization", ref_template="#/$defs/{model}")
    for name, definition in schema.pop("$defs", {}).items():
        definitions.setdefault(name, definition)
    return dict(schema)


def main(argv: Sequence[str] | None = None) -> int:
    """Write every command's output schema into the folder given (default: the shipped
    one)."""
    arguments = list(sys.argv[1:] if argv is None else argv)
    folder = Path(arguments[0]) if arguments else Path(__file__).parent / "data" / \
        "output-schemas"
    folder.mkdir(parents=True, exist_ok=True)
    for command in OUTPUTS:
        (folder / file_name(command)).write_text(schema_text(command), encoding="utf-8")
        print(folder / file_name(command))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
