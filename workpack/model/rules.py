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


class AppliesTo(Strict):
    """What a rule is about: findings of these kinds, or routine tests that fell due."""

    findings: tuple[FindingKind, ...] = ()
    routine: tuple[RoutineTest, ...] = ()
    items: tuple[ItemKind, ...] = Field(
        default=(), description="element kinds of the item; empty: any")


class Job(Strict):
    kind: str = Field(min_length=1)
    priority: str = Field(description="expression giving 1 (most urgent) to 5")
    crew: int = Field(ge=1, le=20)
    hours: float = Field(gt=0, le=72)
    permits: tuple[str, ...] = ()
    clears_ground: bool = Field(
        default=False, description="the job removes a ground: among jobs of equal priority "
                                   "it goes first (the second-ground risk)")


class CalcRef(Strict):
    """A named calculation that yields the readings and limits of a step."""

    calc: str = Field(min_length=1)
    params: dict[str, str] = Field(default_factory=dict,
                                   description="parameter name → expression")
    judge: bool = Field(default=True, description="false: the readings are recorded against "
                                                  "their limits but do not decide the job "
                                                  "(e.g. before a repair)")


def _yes_no_as_text(value: Any) -> Any:
    """``when: true`` in YAML is a boolean; as an expression it is the same thing."""
    return ("true" if value else "false") if isinstance(value, bool) else value


class StepRule(Strict):
    text: str = Field(min_length=1, description="template")
    when: str | None = Field(default=None, description="expression; the step is left out "
                                                       "when it is false")

    _when_text = field_validator("when", mode="before")(_yes_no_as_text)
    readings: tuple[CalcRef, ...] = ()
    cautions: tuple[str, ...] = ()  # caution library ids
    check_only: bool = False
    # --- work steps
    reconnect: str | None = Field(
        default=None, min_length=1,
        description="template: the restoration step that puts back what this step "
                    "disconnects; required when the step's text disconnects something")
    before_isolation: bool = Field(
        default=False, description="done (and printed) before the isolation goes on, "
                                   "e.g. a load measured while the item is still live")
    # --- restoration steps (the planner writes the locks and the energising itself)
    stage: Literal["before_locks_off", "after_normal_supply", "in_service"] = Field(
        default="in_service",
        description="where the step goes in the restoration: before the locks come off, "
                    "once the normal supply is closed (other devices still open), or "
                    "once everything is back in its normal state")
    search_outcome: Literal["found", "not_found"] | None = Field(
        default=None, description="a search's restoration: done only when the ground was "
                                  "found, or only when it was not")


class Rule(Strict):
    id: str = Field(pattern=r"^[a-z0-9][a-z0-9-]*$")
    title: str = Field(min_length=1, description="template")
    applies_to: AppliesTo
    when: str = Field(default="true", description="expression over the context")
    item: str | None = Field(
        default=None, description="template giving the element id the job is on; default: "
                                  "the finding's place, or the element whose test fell due")
    one_per: Literal["item", "system", "finding"] = "item"
    job: Job
    isolate: bool = Field(default=False, description="isolate the item before the steps")
    search_plan: bool = Field(default=False,
                              description="add the fault-search steps for the item's system")
    cautions: tuple[str, ...] = ()
    steps: tuple[StepRule, ...] = Field(min_length=1)
    acceptance: tuple[str, ...] = ()
    restoration: tuple[StepRule, ...] = ()
    instrument_supply: str | None = Field(
        default=None, description="template: element whose supply a test instrument needs")
    defer_when: str | None = Field(
        default=None, description="expression: the job is not issued today but named on the "
                                  "day plan as deferred, with defer_reason")
    defer_reason: str | None = Field(default=None, min_length=1,
                                     description="template: why it is deferred")

    _when_text = field_validator("when", mode="before")(_yes_no_as_text)


class RuleFile(Strict):
    rules: tuple[Rule, ...] = Field(min_length=1)


# Facts about a package (or one final test of it) that a caution's text may rely on.
PackageFact = Literal["isolated", "proves_dead", "insulation_test", "isolates_transformer",
                      "live", "search"]


class CautionEntry(Strict):
    id: str = Field(pattern=r"^[a-z0-9][a-z0-9-]*$")
    signal_word: SignalWord
    text: str = Field(min_length=1, description="template")
    when: str = Field(default="true", description="expression: where it applies")
    needs: tuple[PackageFact, ...] = Field(
        default=(), description="what the package must do for the text to be true (e.g. "
                                "'isolated'): where it does not, the caution is left out, "
                                "so a caution never states what the package contradicts")
    automatic: bool = Field(default=False,
                            description="added to every package where 'when' holds, "
                                        "whether a rule names it or not")

    _when_text = field_validator("when", mode="before")(_yes_no_as_text)


class CautionLibrary(Strict):
    cautions: tuple[CautionEntry, ...] = Field(min_length=1)
