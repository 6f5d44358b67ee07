"""The JSON Schemas of the files people write by hand, for editors and other validators.

One schema per kind of input file, generated from its pydantic model: the models are the
truth, a schema is their published form. The shipped copies in
``workpack/data/schemas/`` are these texts, written by ``workpack schema --all --out``;
a test keeps them equal.
"""

from __future__ import annotations

import importlib
import json
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from pydantic import BaseModel

# name → (model, what the file is); the name is also the file name, <name>.schema.json.
# Models by import path: the command line lists the names without loading every model.
INPUT_FILES: dict[str, tuple[str, str]] = {
    "plant": ("workpack.model.plant:Plant", "plant inventory (plants/*.yaml)"),
    "findings": ("workpack.model.findings:Findings", "day's findings"),
    "results": ("workpack.model.results:Results", "results of one work package"),
    "rules": ("workpack.model.rules:RuleFile", "rule file (rules/*.yaml)"),
    "cautions": ("workpack.model.rules:CautionLibrary",
                 "caution library (rules/cautions.yaml)"),
    "search-weights": ("workpack.model.weights:SearchWeights",
                       "search weights (rules/search-weights.yaml)"),
    "asset-map": ("workpack.model.assetmap:AssetMap",
                  "asset map (how an asset list becomes a plant inventory)"),
    "crew": ("workpack.model.crew:CrewRegister",
             "crew register (plants/*-crew.yaml): people, qualifications, signing keys"),
    "instruments": ("workpack.model.instruments:InstrumentRegister",
                    "instrument register (plants/*-instruments.yaml): test instruments, "
                    "their ranges and calibration"),
}

# Draft 7: the YAML language server editors use validates draft 7 and below (its README:
# "Supports JSON Schema 7 and below"; newer drafts are its open issue 856), and it drops
# the words beside a "$ref" as draft 7 says (so a field's description goes in an allOf,
# below). The http:// form of the draft URI: the https:// one failed to resolve in
# vscode-yaml 1.16.0 (its issue 1096). What pydantic writes is draft 7 but for "$defs"
# (only a place "$ref" points at), "prefixItems" (fixed tuples; draft 7 still checks
# their length) and "discriminator" (an annotation); tests/test_schema.py validates under
# draft 7 and 2020-12 alike.
DIALECT = "http://json-schema.org/draft-07/schema#"


def file_name(name: str) -> str:
    return f"{name}.schema.json"


def input_model(name: str) -> type[BaseModel]:
    module, _, model = INPUT_FILES[name][0].partition(":")
    found: type[BaseModel] = getattr(importlib.import_module(module), model)
    return found


def input_schema(name: str) -> dict[str, Any]:
    """The JSON Schema of input file ``name`` (a key of ``INPUT_FILES``)."""
    schema = input_model(name).model_json_schema(by_alias=True)
    what = INPUT_FILES[name][1]
    schema["$schema"] = DIALECT
    schema["title"] = f"workpack {name} file"
    schema["description"] = f"workpack {what}. {schema.get('description', '')}"
    return _for_editors(schema)


def _for_editors(node: Any) -> Any:
    """Descriptions on one line (docstrings wrap at the code's line length; a hover should
    not), and a "$ref" with words beside it put in an "allOf": draft 7 ignores whatever
    stands beside a "$ref", so a field's own description and example would be lost."""
    if isinstance(node, list):
        return [_for_editors(item) for item in node]
    if not isinstance(node, dict):
        return node
    flat: dict[str, Any] = {}
    for key, value in node.items():
        if key in ("properties", "$defs", "patternProperties"):  # name → schema
            flat[key] = {name: _for_editors(sub) for name, sub in value.items()}
        elif key == "description" and isinstance(value, str):
            flat[key] = " ".join(value.split())
        elif key in ("examples", "default", "const", "enum"):  # data, kept as written
            flat[key] = value
        else:
            flat[key] = _for_editors(value)
    if "$ref" in flat and len(flat) > 1:
        flat["allOf"] = [{"$ref": flat.pop("$ref")}]
    return flat


def schema_text(name: str) -> str:
    """The schema as the bytes it is shipped in: sorted keys, two-space indent, UTF-8."""
    return json.dumps(input_schema(name), indent=2, sort_keys=True, ensure_ascii=False) + "\n"
