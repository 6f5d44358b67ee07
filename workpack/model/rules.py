"""The rule files (rules/*.yaml) and the caution library (rules/cautions.yaml).

A rule says when a job is needed and what its package holds. Conditions and
texts are Jinja2 expressions and templates, evaluated in a sandbox over plain
data: the finding, its diagnosis, the item, its system, the plant, the routine
test that fell due. Numbers never come from a rule's text: expected readings
and limits come from named calculations (``calc``) with parameters.
"""

from __future__ import annotations

from typing import Any, Literal

from pydantic import Field, field_validator

from workpack.model.package import SignalWord
from workpack.model.plant import RoutineTest, Strict

FindingKind = Literal["lamps", "phase_voltages", "insulation_monitor", "insulation_resistance",
                      "breaker_tripped", "transformer_unit", "defect"]
ItemKind = Literal["source", "bus", "device", "transformer", "cable", "load"]


def _also_yes_no(schema: dict[str, Any]) -> None:
    """An expression field also takes a plain true or false (read as that expression)."""
    if "anyOf" in schema:
        schema["anyOf"].insert(-1, {"type": "boolean"})
    else:
        schema["type"] = ["string", "boolean"]


EXPRESSION = ("a Jinja2 expression over what the rule sees (plant, item, system, and finding "
              "with diagnosis, or routine), or plain true or false")
TEMPLATE = "a Jinja2 template over what the rule sees, e.g. {{ item.label }}"


class AppliesTo(Strict):
    """What a rule is about: findings of these kinds, or routine tests that fell due."""

    findings: tuple[FindingKind, ...] = Field(
        default=(), description="finding kinds that call for this rule: lamps, "
                                "phase_voltages, insulation_monitor, insulation_resistance, "
                                "breaker_tripped, transformer_unit, defect",
        examples=[["phase_voltages", "lamps"]])
    routine: tuple[RoutineTest, ...] = Field(
        default=(), description="routine tests that call for this rule when they fall due",
        examples=[["insulation_resistance"]])
    items: tuple[ItemKind, ...] = Field(
        default=(), description="element kinds of the item: source, bus, device, "
                                "transformer, cable, load; empty: any",
        examples=[["load", "cable"]])


class Job(Strict):
    """The job a rule plans: its kind, priority, crew and time."""

    kind: str = Field(min_length=1, description="kind of job in a word or two with "
                      "underscores, printed on the package; locate_ground and "
                      "clear_second_ground add the 'ground found at' box to the results",
                      examples=["insulation_repair", "locate_ground"])
    priority: str = Field(description="expression giving 1 (most urgent) to 5; a system "
                                      "with two grounds makes it 1 whatever it says",
                          examples=["1 if diagnosis.severity == 'urgent' else 2", "3"])
    crew: int = Field(ge=1, le=20, description="people needed at the same time",
                      examples=[2])
    hours: float = Field(gt=0, le=72, description="expected duration in hours (crew hours "
                         "are crew × hours)", examples=[3, 1.5])
    permits: tuple[str, ...] = Field(default=(), description="permits the job needs, in "
                                     "words, printed on the package",
                                     examples=[["electrical isolation"]])
    clears_ground: bool = Field(
        default=False, description="the job removes a ground: among jobs of equal priority "
                                   "it goes first (the second-ground risk)", examples=[True])


class CalcRef(Strict):
    """A named calculation that yields the readings and limits of a step."""

    calc: str = Field(min_length=1, description="name of the calculation (the lint lists "
                      "the known ones), e.g. insulation_resistance, healthy_phase_to_earth",
                      examples=["insulation_resistance", "record_phase_to_earth"])
    params: dict[str, str] = Field(default_factory=dict,
                                   description="parameter name → template giving its value",
                                   examples=[{"element": "{{ item.id }}"}])
    judge: bool = Field(default=True, description="false: the readings are recorded against "
                                                  "their limits but do not decide the job "
                                                  "(e.g. before a repair)", examples=[False])


def _yes_no_as_text(value: Any) -> Any:
    """``when: true`` in YAML is a boolean; as an expression it is the same thing."""
    return ("true" if value else "false") if isinstance(value, bool) else value


class StepRule(Strict):
    """One step of a rule's work or restoration, as printed in the package."""

    text: str = Field(min_length=1, description=f"what to do, in words: {TEMPLATE}",
                      examples=["Read and record each phase to earth at {{ system.board }} "
                                "before starting."])
    when: str | None = Field(default=None, description=f"{EXPRESSION}; the step is left out "
                                                       "when it is false",
                             examples=["item.element == 'load'"],
                             json_schema_extra=_also_yes_no)

    _when_text = field_validator("when", mode="before")(_yes_no_as_text)
    readings: tuple[CalcRef, ...] = Field(
        default=(), description="readings to take in this step, from named calculations "
                                "(they bring the expected values and limits)",
        examples=[[{"calc": "insulation_resistance", "params": {"element": "{{ item.id }}"}}]])
    cautions: tuple[str, ...] = Field(default=(), description="ids of cautions from the "
                                      "caution library printed at this step",
                                      examples=[["stored-charge"]])
    check_only: bool = Field(default=False, description="true: a box to tick, no value to "
                             "write (a step with readings still gets their boxes)",
                             examples=[True])
    # --- work steps
    reconnect: str | None = Field(
        default=None, min_length=1,
        description="template: the restoration step that puts back what this step "
                    "disconnects; required when the step's text disconnects something",
        examples=["Reconnect {{ item.id }} at its load end as marked; tighten and check "
                  "each connection."])
    before_isolation: bool = Field(
        default=False, description="done (and printed) before the isolation goes on, "
                                   "e.g. a load measured while the item is still live",
        examples=[True])
    # --- restoration steps (the planner writes the locks and the energising itself)
    stage: Literal["before_locks_off", "after_normal_supply", "in_service"] = Field(
        default="in_service",
        description="where the step goes in the restoration: before_locks_off (before "
                    "the locks come off), after_normal_supply (once the normal supply is "
                    "closed, other devices still open), or in_service (the default: once "
                    "everything is back in its normal state)",
        examples=["before_locks_off"])
    search_outcome: Literal["found", "not_found"] | None = Field(
        default=None, description="a search's restoration: done only when the ground was "
                                  "found, or only when it was not_found; left out: always",
        examples=["found"])


class Rule(Strict):
    """When a job is needed and what its package holds."""

    id: str = Field(pattern=r"^[a-z0-9][a-z0-9-]*$",
                    description="the rule's id: lower-case letters, digits and hyphens, "
                                "unique over all rule files", examples=["locate-ground"])
    title: str = Field(min_length=1, description=f"the package title: {TEMPLATE}",
                       examples=["Find the ground on the {{ system.id }} system"])
    applies_to: AppliesTo = Field(description="the finding kinds or routine tests (and item "
                                  "kinds) the rule is about",
                                  examples=[{"findings": ["insulation_resistance"]}])
    when: str = Field(default="true", description=f"{EXPRESSION}: the rule applies only "
                      "where it is true", examples=["diagnosis.severity in ['high', 'urgent']"],
                      json_schema_extra=_also_yes_no)
    item: str | None = Field(
        default=None, description="template giving the element id the job is on; default: "
                                  "the finding's place, or the element whose test fell due",
        examples=["{{ system.board }}"])
    one_per: Literal["item", "system", "finding"] = Field(
        default="item", description="one job per item (the default), per system (one "
                                    "galvanic system, e.g. one ground search), or per "
                                    "finding", examples=["system"])
    job: Job = Field(description="the job: kind, priority, crew and hours",
                     examples=[{"kind": "insulation_repair", "priority": "3", "crew": 2,
                                "hours": 4}])
    isolate: bool = Field(default=False, description="isolate the item before the steps: "
                          "the planner adds the locks, proving dead and their restoration",
                          examples=[True])
    search_plan: bool = Field(default=False,
                              description="add the fault-search steps for the item's system",
                              examples=[True])
    cautions: tuple[str, ...] = Field(default=(), description="ids of cautions from the "
                                      "caution library printed at the head of the package",
                                      examples=[["switching-with-ground"]])
    steps: tuple[StepRule, ...] = Field(min_length=1, description="the work steps, in order "
                                        "(at least one)",
                                        examples=[[{"text": "Test {{ item.id }}, each phase "
                                                            "to earth, for one minute."}]])
    acceptance: tuple[str, ...] = Field(default=(), description="what must hold for the job "
                                        "to be accepted, in words", examples=[[
                                            "Every phase meets its minimum after temperature "
                                            "correction."]])
    restoration: tuple[StepRule, ...] = Field(
        default=(), description="the rule's own restoration checks; the planner writes the "
                                "rest (locks off, energising, return to service)",
        examples=[[{"text": "Run {{ item.id }} and check its current.", "check_only": True}]])
    instrument_supply: str | None = Field(
        default=None, description="template: element whose supply a test instrument needs "
                                  "(a package that isolates it the same day is named as a "
                                  "conflict)",
        examples=["{{ item.id }}"])
    defer_when: str | None = Field(
        default=None, description="expression: the job is not issued today but named on the "
                                  "day plan as deferred, with defer_reason",
        examples=["item.vitality == 'vital'"])
    defer_reason: str | None = Field(default=None, min_length=1,
                                     description="template: why it is deferred",
                                     examples=["{{ item.label }} is vital: plan it with the "
                                               "watch"])

    _when_text = field_validator("when", mode="before")(_yes_no_as_text)


class RuleFile(Strict):
    """A file of rules (rules/*.yaml but cautions.yaml and search-weights.yaml). Expressions
    and templates are Jinja2, run in a sandbox; numbers come only from named calculations."""

    rules: tuple[Rule, ...] = Field(min_length=1, description="the rules of this file (at "
                                    "least one)", examples=[[{
                                        "id": "low-insulation",
                                        "title": "Test {{ item.label }}",
                                        "applies_to": {"findings": ["insulation_resistance"]},
                                        "job": {"kind": "insulation_repair", "priority": "3",
                                                "crew": 2, "hours": 4},
                                        "steps": [{"text": "Test {{ item.id }}."}]}]])


# Facts about a package (or one final test of it) that a caution's text may rely on.
PackageFact = Literal["isolated", "proves_dead", "insulation_test", "isolates_transformer",
                      "live", "search"]


class CautionEntry(Strict):
    """One caution: its signal word, text, and where it applies."""

    id: str = Field(pattern=r"^[a-z0-9][a-z0-9-]*$", description="the caution's id, named "
                    "by rules: lower-case letters, digits and hyphens",
                    examples=["stored-charge"])
    signal_word: SignalWord = Field(description="how serious the hazard is",
                                    examples=["WARNING"])
    text: str = Field(min_length=1, description="what to watch out for: a Jinja2 template "
                      "over the package's item, system and plant",
                      examples=["{{ item.label }} is a vital load. Tell the bridge before it "
                                "is taken out of service."])
    when: str = Field(default="true", description="expression: where it applies (over item, "
                      "system and plant), or plain true or false",
                      examples=["item.vitality == 'vital'"], json_schema_extra=_also_yes_no)
    needs: tuple[PackageFact, ...] = Field(
        default=(), description="what the package must do for the text to be true: "
                                "isolated (it locks something off), live (it isolates "
                                "nothing), proves_dead, insulation_test (it applies a DC test "
                                "voltage), isolates_transformer, search (a ground search); "
                                "where it does not, the caution is left out, so a caution "
                                "never states what the package contradicts",
        examples=[["insulation_test"]])
    automatic: bool = Field(default=False,
                            description="added to every package where 'when' holds, "
                                        "whether a rule names it or not", examples=[True])

    _when_text = field_validator("when", mode="before")(_yes_no_as_text)


class CautionLibrary(Strict):
    """The cautions rules name by id (rules/cautions.yaml); automatic ones are added
    wherever their 'when' holds."""

    cautions: tuple[CautionEntry, ...] = Field(
        min_length=1, description="the cautions (at least one)",
        examples=[[{"id": "stored-charge", "signal_word": "WARNING",
                    "needs": ["insulation_test"],
                    "text": "After an insulation test the conductors hold charge."}]])
