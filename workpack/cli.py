"""The command line: parse options, gather inputs, call the core, print or write.

No electrical or planning logic lives here. Every user mistake arrives as a
WorkpackError and leaves as one line per problem on stderr with exit status 2.
"""

from __future__ import annotations

import argparse
import dataclasses
import json
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from pydantic import BaseModel

from workpack.errors import UsageError, WorkpackError, did_you_mean


def _to_json(value: Any) -> str:
    def plain(obj: Any) -> Any:
        if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
            return {f.name: plain(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
        if isinstance(obj, dict):
            return {str(k): plain(v) for k, v in obj.items()}
        if isinstance(obj, list | tuple | set | frozenset):
            items = [plain(v) for v in obj]
            return sorted(items) if isinstance(obj, set | frozenset) else items
        if hasattr(obj, "value") and hasattr(obj, "name"):  # enums
            return obj.value
        return obj

    return json.dumps(plain(value), indent=2, sort_keys=True, ensure_ascii=False) + "\n"


def _cmd_check(args: argparse.Namespace) -> int:
    from workpack.loading import load_plant
    from workpack.render.text import plant_summary
    from workpack.summary import summarize

    plant, topology = load_plant(Path(args.plant))
    summary = summarize(plant, topology)
    sys.stdout.write(_to_json(summary) if args.json else plant_summary(summary))
    return 0


def _cmd_isolate(args: argparse.Namespace) -> int:
    from workpack.isolation import plan_isolation
    from workpack.loading import load_plant
    from workpack.render.text import isolation_plan

    plant, topology = load_plant(Path(args.plant))
    if args.item not in topology.elements:
        raise UsageError(f"ITEM: no element {args.item!r} in {args.plant}"
                         f"{did_you_mean(args.item, topology.elements)}")
    plan = plan_isolation(topology, args.item)
    if args.json:
        sys.stdout.write(_to_json(plan))
    else:
        sys.stdout.write(isolation_plan(plan, topology.elements[args.item].label))
    return 0


def _cmd_schema(args: argparse.Namespace) -> int:
    from workpack.model.findings import Findings
    from workpack.model.plant import Plant

    models: dict[str, type[BaseModel]] = {"plant": Plant, "findings": Findings}
    model = models[args.what]
    schema = model.model_json_schema(by_alias=True)
    schema["title"] = f"workpack {args.what} file"
    sys.stdout.write(json.dumps(schema, indent=2, sort_keys=True, ensure_ascii=False) + "\n")
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="workpack",
        description="Plans isolation, diagnosis and work packages for insulated "
                    "three-phase systems. Local codes, the employer's rules and licensed "
                    "practice prevail over anything it prints.",
    )
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    check = commands.add_parser("check", help="validate a plant and summarize its systems")
    check.add_argument("plant", metavar="PLANT", help="plant inventory (YAML)")
    check.add_argument("--json", action="store_true", help="print JSON")
    check.set_defaults(run=_cmd_check)

    isolate = commands.add_parser("isolate", help="what to open and lock to work on an item")
    isolate.add_argument("plant", metavar="PLANT", help="plant inventory (YAML)")
    isolate.add_argument("item", metavar="ITEM", help="element id")
    isolate.add_argument("--json", action="store_true", help="print JSON")
    isolate.set_defaults(run=_cmd_isolate)

    schema = commands.add_parser("schema", help="print the JSON Schema of an input file")
    schema.add_argument("what", choices=["plant", "findings"], help="which file")
    schema.set_defaults(run=_cmd_schema)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.run(args))
    except WorkpackError as error:
        sys.stderr.write(error.format_message() + "\n")
        return error.exit_code
    except KeyboardInterrupt:
        sys.stderr.write("interrupted\n")
        return 130
