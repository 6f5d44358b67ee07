"""The cautions of a package: the caution library's (named by the rule, or automatic),
the ground's and the isolation's hazards, and the steps' own.

A library caution is printed only where its text is true: the package does what the
caution ``needs`` (``package_facts``) and its ``when`` holds. Pure.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from workpack.electrical import GroundHazard
from workpack.isolation import IsolationPlan
from workpack.model.package import Caution, ProvingDead, SignalWord, Step
from workpack.model.package import IsolationPoint as PrintedPoint
from workpack.model.rules import PackageFact
from workpack.plan.context import evaluate, evaluate_text
from workpack.plan.systems import SystemState
from workpack.restoration import IN_SERVICE
from workpack.rules import CompiledRule, RuleSet

_WORD_ORDER = {SignalWord.danger: 0, SignalWord.warning: 1, SignalWord.caution: 2,
               SignalWord.notice: 3}


def package_facts(points: Sequence[PrintedPoint], proving: Sequence[ProvingDead],
                  steps: Iterable[Step], isolates_transformer: bool,
                  search: bool) -> frozenset[PackageFact]:
    """What a package (or one final test) does, as the caution library's ``needs`` name
    it."""
    facts: set[PackageFact] = {"isolated" if points else "live"}
    if proving:
        facts.add("proves_dead")
    if any(r.test_voltage_v is not None for step in steps for r in step.readings):
        facts.add("insulation_test")
    if isolates_transformer and points:
        facts.add("isolates_transformer")
    if search:
        facts.add("search")
    return frozenset(facts)


def merge_cautions(first: Iterable[Caution], more: Iterable[Caution]) -> tuple[Caution, ...]:
    """One of each text, the gravest first (stable within a signal word)."""
    unique: dict[str, Caution] = {}
    for caution in (*first, *more):
        unique.setdefault(caution.text, caution)
    return tuple(sorted(unique.values(), key=lambda c: _WORD_ORDER[c.signal_word]))


def isolation_cautions(plan: IsolationPlan | None) -> list[Caution]:
    """What the isolation cannot do by locks alone."""
    if plan is None:
        return []
    return [Caution(signal_word=h.signal_word, text=h.text) for h in plan.hazards]


def ground_cautions(state: SystemState) -> list[Caution]:
    """The day's ground on the system; the second-ground one is left to the library's
    caution, which says it on every package of a grounded system."""
    return [Caution(signal_word=note.signal_word, text=note.text) for note in state.cautions
            if note.kind is not GroundHazard.second_ground]


@dataclass(frozen=True)
class DraftStep:
    """A rule's step before it is numbered: the cautions it names are attached once the
    package's facts are known; ``stage`` places a restoration step."""

    step: Step
    cautions: tuple[str, ...] = ()
    stage: str = IN_SERVICE


class CautionWriter:
    """The caution library applied to one rule's package."""

    def __init__(self, ruleset: RuleSet, rule: CompiledRule) -> None:
        self.library = ruleset.cautions
        self.rule = rule

    def named(self, caution_id: str, context: Mapping[str, Any],
              facts: frozenset[PackageFact]) -> Caution | None:
        """The library's caution, where its text is true: the package does what it needs
        and its condition holds; else None."""
        entry = self.library[caution_id]
        if not set(entry.needs) <= facts or not evaluate(self.rule, entry.when, context):
            return None
        return Caution(signal_word=entry.signal_word,
                       text=evaluate_text(self.rule, entry.text, context), id=entry.id)

    def automatic(self, context: Mapping[str, Any], facts: frozenset[PackageFact],
                  only_needing: bool = False) -> list[Caution]:
        """Every automatic caution that holds; ``only_needing``: only those that depend
        on what the package does."""
        found = [self.named(entry.id, context, facts) for entry in self.library.values()
                 if entry.automatic and (entry.needs or not only_needing)]
        return [c for c in found if c is not None]

    def on_step(self, draft: DraftStep, context: Mapping[str, Any],
                facts: frozenset[PackageFact]) -> Step:
        """The draft's step with the cautions it names, where they hold."""
        found = [self.named(cid, context, facts) for cid in draft.cautions]
        return draft.step.model_copy(update={"cautions": tuple(c for c in found if c)})

    def for_package(self, context: Mapping[str, Any], facts: frozenset[PackageFact],
                    state: SystemState, isolation: IsolationPlan | None = None,
                    steps: Iterable[Step] = ()) -> tuple[Caution, ...]:
        """The package's cautions: the rule's, the automatic ones, the ground's, the
        isolation's and every step's, once each, the gravest first."""
        found = [c for c in (self.named(cid, context, facts) for cid in self.rule.cautions)
                 if c is not None]
        found += self.automatic(context, facts)
        found += ground_cautions(state)
        found += isolation_cautions(isolation)
        found += [c for step in steps for c in step.cautions]
        return merge_cautions((), found)
