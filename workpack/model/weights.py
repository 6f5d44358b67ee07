"""The fault-search weights (rules/search-weights.yaml): likelihood factors and test costs.

Judgement, not physics: each entry carries its basis so the plan can show why.
"""

from __future__ import annotations

from pydantic import Field

from workpack.model.plant import Environment, LoadKind, Strict

BASIS = ("where the number comes from: a named source, or 'common practice' and why; "
         "printed where the plan shows its reasons")
_BASIS_EXAMPLE = "common practice - moisture is the usual cause of falling insulation resistance"


class Factor(Strict):
    """A weight and its reason."""

    factor: float = Field(gt=0, le=100, description="how many times more likely (above 1) "
                          "or less likely (below 1) a ground is there; 1 changes nothing",
                          examples=[3.0, 1.5])
    basis: str = Field(min_length=1, description=BASIS, examples=[_BASIS_EXAMPLE])


class YearsFactor(Factor):
    """A factor for cables older than a number of years."""

    years: int = Field(gt=0, le=100, description="age in years beyond which the factor "
                       "applies (counted from the cable's 'installed' year)", examples=[25])


class DaysFactor(Factor):
    """A factor for loads worked on within a number of days."""

    days: int = Field(gt=0, le=3650, description="days since the load's recent_work within "
                      "which the factor applies", examples=[14])


class CableFactors(Strict):
    """What makes a cable run more likely to carry the ground."""

    per_100_m: Factor = Field(description="length: the run's weight is multiplied by 1 + "
                              "factor × length / 100 m",
                              examples=[{"factor": 0.5, "basis": "common practice - more "
                                         "insulation, more chances"}])
    older_than_years: YearsFactor = Field(
        description="age: a cable installed more than 'years' years ago is multiplied by "
                    "the factor", examples=[{"years": 25, "factor": 1.5,
                                             "basis": "common practice - aged insulation"}])


class RecentWork(Strict):
    """Recent work on a circuit: a ground that appears after work is often at that work."""

    within_days: DaysFactor = Field(
        description="a load worked on (its recent_work) within 'days' days is multiplied by "
                    "the factor", examples=[{"days": 14, "factor": 2.5,
                                             "basis": "common practice - after work"}])


class History(Strict):
    """Past grounds on an element, from the records store."""

    per_past_ground: Factor = Field(
        description="multiplied once for every ground found on the element before",
        examples=[{"factor": 2.0, "basis": "common practice - circuits that grounded before "
                                           "tend to ground again"}])


class Likelihood(Strict):
    """How likely a ground is to lie downstream of a circuit. Every element starts at 1 and
    is multiplied by each factor that applies to it; a circuit's share is the sum over its
    elements, divided by the sum over the whole system."""

    environment: dict[Environment, Factor] = Field(
        default={}, description="environment tag → its factor; an element with several "
                                "tags gets each; a tag not listed counts 1",
        examples=[{"wet": {"factor": 3.0, "basis": _BASIS_EXAMPLE}}])
    load_kind: dict[LoadKind, Factor] = Field(
        default={}, description="load kind → its factor; a kind not listed counts 1",
        examples=[{"heater": {"factor": 2.0, "basis": "common practice - sheathed elements "
                                                      "crack and take in moisture"}}])
    cable: CableFactors = Field(description="factors for cable runs by length and age",
                                examples=[{
                                    "per_100_m": {"factor": 0.5, "basis": "common practice"},
                                    "older_than_years": {"years": 25, "factor": 1.5,
                                                         "basis": "common practice"}}])
    recent_work: RecentWork = Field(description="the factor for loads worked on lately",
                                    examples=[{"within_days": {
                                        "days": 14, "factor": 2.5,
                                        "basis": "common practice"}}])
    history: History = Field(description="the factor for past grounds on the element",
                             examples=[{"per_past_ground": {"factor": 2.0,
                                                            "basis": "common practice"}}])


class Minutes(Strict):
    """A cost in minutes of disruption, and its reason."""

    minutes: float = Field(ge=0, le=10_000, description="minutes of disruption (one unit "
                           "for every cost, so they add up)", examples=[3, 20])
    basis: str = Field(min_length=1, description=BASIS,
                       examples=["common practice - tell the watch; the standby takes over"])


class Interrupt(Strict):
    """The cost of each load a test leaves without supply, by how much it matters."""

    non_essential: Minutes = Field(description="per non_essential load that loses supply",
                                   examples=[{"minutes": 1, "basis": "common practice - off "
                                              "for a few minutes, nobody minds"}])
    important: Minutes = Field(description="per important load that loses supply",
                               examples=[{"minutes": 8, "basis": "common practice - tell the "
                                          "watch; the standby takes over"}])
    vital: Minutes = Field(description="per vital load that loses supply with no alternate",
                           examples=[{"minutes": 20, "basis": "common practice - bridge and "
                                      "engine room informed first"}])


class Costs(Strict):
    """What one test of the search costs, in minutes of disruption."""

    observe: Minutes = Field(description="opening a circuit, watching the detector and "
                             "closing it again",
                             examples=[{"minutes": 3, "basis": "common practice - open, "
                                        "watch the detector for about a minute, close"}])
    interrupt: Interrupt = Field(
        description="per load left without supply, by vitality",
        examples=[{"non_essential": {"minutes": 1, "basis": "common practice"},
                   "important": {"minutes": 8, "basis": "common practice"},
                   "vital": {"minutes": 20, "basis": "common practice"}}])
    transfer: Minutes = Field(description="per vital load moved to its alternate supply and "
                              "back", examples=[{"minutes": 15, "basis": "common practice - "
                                                 "change over and back, with the watch"}])
    permission: Minutes = Field(description="getting permission to open a circuit with a "
                                "vital load that has no alternate supply",
                                examples=[{"minutes": 60, "basis": "common practice - at a "
                                           "quiet time, with the duty engineer's leave"}])


class SearchWeights(Strict):
    """The fault-search weights (rules/search-weights.yaml): how likely a ground is to lie
    downstream of each circuit, and what testing it costs. Judgement, not physics: each
    number carries its basis so the plan can show why."""

    likelihood: Likelihood = Field(description="factors that make a ground more or less "
                                   "likely downstream of a circuit",
                                   examples=[{
                                       "cable": {
                                           "per_100_m": {"factor": 0.5,
                                                         "basis": "common practice"},
                                           "older_than_years": {"years": 25, "factor": 1.5,
                                                                "basis": "common practice"}},
                                       "recent_work": {"within_days": {
                                           "days": 14, "factor": 2.5,
                                           "basis": "common practice"}},
                                       "history": {"per_past_ground": {
                                           "factor": 2.0, "basis": "common practice"}}}])
    cost: Costs = Field(description="what each test of the search costs, in minutes",
                        examples=[{
                            "observe": {"minutes": 3, "basis": "common practice"},
                            "interrupt": {
                                "non_essential": {"minutes": 1, "basis": "common practice"},
                                "important": {"minutes": 8, "basis": "common practice"},
                                "vital": {"minutes": 20, "basis": "common practice"}},
                            "transfer": {"minutes": 15, "basis": "common practice"},
                            "permission": {"minutes": 60, "basis": "common practice"}}])
