"""The context a rule's expressions and templates see: the contract between rules and code.

Every name a rule may use is listed in ``context_schema`` (the lint refuses anything
else) and filled by the builders here from the planner's typed state. The dictionaries
are for the rules only: the planner never reads them back.

``plant``: name, kind, frequency. ``item``: every element field (None where the element
has none), its ``element`` kind, ``label``, what it ``feeds`` directly and the
``loads_below`` it. ``system``: the galvanic system of the item (``SYSTEM_FIELDS``).
Finding rules: ``findings``, every finding of the job in the order found; ``finding``
and ``diagnosis``, the gravest of them (the first among equals). While a rule is
matched, one finding at a time, ``findings`` holds that finding alone. Routine rules:
``routine`` (``ROUTINE_FIELDS``). Pure.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping, Sequence
from typing import Any, get_args

from workpack.diagnose import Diagnosis, downstream_loads
from workpack.model.findings import Finding, Severity
from workpack.model.plant import (
    Bus,
    Cable,
    Device,
    Element,
    Load,
    Plant,
    Routine,
    Source,
    Transformer,
)
from workpack.plan.systems import System
from workpack.rules import Compiled, CompiledRule, ListOf, RuleError, Schema
from workpack.topology import Topology

ELEMENT_KINDS: dict[type[Element], str] = {
    Source: "source", Bus: "bus", Device: "device", Transformer: "transformer",
    Cable: "cable", Load: "load",
}
ITEM_FIELDS = sorted({name for model in ELEMENT_KINDS for name in model.model_fields}
                     | {"element", "label", "from", "feeds", "loads_below"} - {"from_"})
FINDING_FIELDS = sorted({name for model in get_args(get_args(Finding)[0])
                         for name in model.model_fields})
SYSTEM_FIELDS = ("id", "voltage", "earthing", "insulated", "detectors", "monitor", "board",
                 "grounded", "ground_phases", "second_ground", "highest_phase_to_earth_v",
                 "transformer_fed")
DIAGNOSIS_FIELDS = ("severity", "summary", "ground_present", "grounded_phase", "certain",
                    "fault_resistance_ohm", "notes", "next_steps")
ROUTINE_FIELDS = ("test", "every", "last_done", "due_on", "days_overdue")

# Graver first: which finding of a job speaks for it as ``finding`` and ``diagnosis``.
SEVERITY_ORDER = {Severity.urgent: 0, Severity.high: 1, Severity.routine: 2, Severity.low: 3}


def context_schema(finding: bool, routine: bool) -> Schema:
    """What a rule's expressions may name, for the lint."""
    schema: dict[str, Any] = {
        "plant": dict.fromkeys(("name", "kind", "frequency")),
        "item": dict.fromkeys(ITEM_FIELDS),
        "system": dict.fromkeys(SYSTEM_FIELDS),
        "true": None, "false": None, "none": None,
        "True": None, "False": None, "None": None,
    }
    if finding:
        one = dict.fromkeys([*FINDING_FIELDS, "kind"])
        schema["finding"] = one
        schema["findings"] = ListOf(one)
        schema["diagnosis"] = dict.fromkeys(DIAGNOSIS_FIELDS)
    if routine:
        schema["routine"] = dict.fromkeys(ROUTINE_FIELDS)
    return schema


# --- the parts of a context ---------------------------------------------------------------

def plant_context(plant: Plant) -> dict[str, Any]:
    return {"name": plant.plant.name, "kind": plant.plant.kind.value,
            "frequency": plant.plant.frequency}


def item_context(topology: Topology, element: Element) -> dict[str, Any]:
    """The item as rules see it: every element field (None where it has none), what it
    feeds directly and the loads below it in the normal state."""
    data: dict[str, Any] = dict.fromkeys(ITEM_FIELDS)
    data.update(element.model_dump(mode="json", by_alias=True))
    data["element"] = ELEMENT_KINDS[type(element)]
    data["label"] = element.label
    data["feeds"] = list(topology.normal_children.get(element.id, ()))
    data["loads_below"] = [load.id for load in downstream_loads(topology, element.id)]
    return data


def system_context(system: System) -> dict[str, Any]:
    voltage = system.voltage
    return {
        "id": system.id,
        "voltage": int(voltage) if voltage is not None and voltage.is_integer() else voltage,
        "earthing": system.earthing.value if system.earthing else None,
        "insulated": system.insulated,
        "detectors": [d.id for d in system.island.detectors], "monitor": system.monitor,
        "board": system.board, "grounded": system.state.grounded,
        "ground_phases": list(system.state.ground_phases),
        "second_ground": system.second_ground,
        "highest_phase_to_earth_v": system.state.highest_phase_to_earth_v,
        "transformer_fed": system.island.transformer_fed,
    }


def diagnosis_context(diagnosis: Diagnosis) -> dict[str, Any]:
    ground = diagnosis.ground
    return {
        "severity": diagnosis.severity.value, "summary": diagnosis.summary,
        "ground_present": ground is not None,
        "grounded_phase": ground.phase if ground else None,
        "certain": bool(ground and ground.certain),
        "fault_resistance_ohm": ground.resistance_ohm if ground else None,
        "notes": list(diagnosis.notes), "next_steps": list(diagnosis.next_steps),
    }


def finding_context(finding: Finding) -> dict[str, Any]:
    data: dict[str, Any] = dict.fromkeys(FINDING_FIELDS)
    data.update(finding.model_dump(mode="json"))
    return data


def routine_context(routine: Routine, due_on: dt.date, day: dt.date) -> dict[str, Any]:
    return {"test": routine.test.value, "every": routine.every,
            "last_done": routine.last_done.isoformat() if routine.last_done else None,
            "due_on": due_on.isoformat(), "days_overdue": (day - due_on).days}


# --- whole contexts ---------------------------------------------------------------------------

def finding_rule_context(topology: Topology, item: Element, system: System,
                         findings: Sequence[Finding],
                         diagnoses: Sequence[Diagnosis]) -> dict[str, Any]:
    """A finding rule's context: ``findings`` and ``diagnoses`` in the order found, one
    diagnosis per finding."""
    gravest = min(range(len(diagnoses)), key=lambda n: SEVERITY_ORDER[diagnoses[n].severity])
    every = [finding_context(f) for f in findings]
    return {"plant": plant_context(topology.plant), "finding": every[gravest],
            "findings": every, "diagnosis": diagnosis_context(diagnoses[gravest]),
            "item": item_context(topology, item), "system": system_context(system)}


def routine_rule_context(topology: Topology, item: Element, system: System, routine: Routine,
                         due_on: dt.date, day: dt.date) -> dict[str, Any]:
    return {"plant": plant_context(topology.plant),
            "routine": routine_context(routine, due_on, day),
            "item": item_context(topology, item), "system": system_context(system)}


def with_item(context: Mapping[str, Any], topology: Topology,
              item: Element) -> dict[str, Any]:
    """The same context about another item (a section a final test is made on)."""
    return {**context, "item": item_context(topology, item)}


def with_system(context: Mapping[str, Any], system: System) -> dict[str, Any]:
    """The same context about another system the item touches (a bank's other side)."""
    return {**context, "system": system_context(system)}


# --- evaluating a rule's text ---------------------------------------------------------------

def evaluate(rule: CompiledRule, compiled: Compiled, context: Mapping[str, Any]) -> Any:
    """A rule's expression or template over ``context``; errors name the rule."""
    try:
        return compiled(context)
    except RuleError as error:
        raise RuleError(f"{rule.place}: rule {rule.id}: {error}") from None


def evaluate_text(rule: CompiledRule, compiled: Compiled, context: Mapping[str, Any]) -> str:
    """A rule's template as one line of text, without the spaces around it."""
    return str(evaluate(rule, compiled, context)).strip()
