"""The JSON Schemas of the files people write by hand, for editors and other validators.

One schema per kind of input file, generated from its pydantic model: the models are the
truth, a schema is their published form. The shipped copies in
``workpack/data/schemas/`` are these texts, written by ``workpack schema --all --out``;
a test keeps them equal.
"""

from __future__ import annotations

import json
from typing import Any

from pydantic import BaseModel

from workpack.model.assetmap import AssetMap
from workpack.model.findings import Findings
from workpack.model.plant import Plant
from workpack.model.results import Results
from workpack.model.rules import CautionLibrary, RuleFile
from workpack.model.weights import SearchWeights

# name → (model, what the file is); the name is also the file name, <name>.schema.json.
INPUT_FILES: dict[str, tuple[type[BaseModel], str]] = {
    "plant": (Plant, "plant inventory (plants/*.yaml)"),
    "findings": (Findings, "day's findings"),
    "results": (Results, "results of one work package"),
    "rules": (RuleFile, "rule file (rules/*.yaml)"),
    "cautions": (CautionLibrary, "caution library (rules/cautions.yaml)"),
    "search-weights": (SearchWeights, "search weights (rules/search-weights.yaml)"),
    "asset-map": (AssetMap, "asset map (how an asset list becomes a plant inventory)"),
}

DIALECT = "https://json-schema.org/draft/2020-12/schema"


def file_name(name: str) -> str:
    return f"{name}.schema.json"


def input_schema(name: str) -> dict[str, Any]:
    """The JSON Schema of input file ``name`` (a key of ``INPUT_FILES``)."""
    model, what = INPUT_FILES[name]
    schema = model.model_json_schema(by_alias=True)
    schema["$schema"] = DIALECT
    schema["title"] = f"workpack {name} file"
    schema["description"] = f"workpack {what}. {schema.get('description', '')}"
    return _one_line_descriptions(schema)


def _one_line_descriptions(node: Any) -> Any:
    """Docstrings wrap at the code's line length; an editor's hover should not."""
    if isinstance(node, dict):
        return {key: " ".join(value.split()) if key == "description" and isinstance(value, str)
                else value if key in ("examples", "default") else _one_line_descriptions(value)
                for key, value in node.items()}
    if isinstance(node, list):
        return [_one_line_descriptions(item) for item in node]
    return node


def schema_text(name: str) -> str:
    """The schema as the bytes it is shipped in: sorted keys, two-space indent, UTF-8."""
    return json.dumps(input_schema(name), indent=2, sort_keys=True, ensure_ascii=False) + "\n"
