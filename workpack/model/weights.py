"""The fault-search weights (rules/search-weights.yaml): likelihood factors and test costs.

Judgement, not physics: each entry carries its basis so the plan can show why.
"""

from __future__ import annotations

from pydantic import Field

from workpack.model.plant import Environment, LoadKind, Strict


class Factor(Strict):
    factor: float = Field(gt=0, le=100)
    basis: str = Field(min_length=1)


class YearsFactor(Factor):
    years: int = Field(gt=0, le=100)


class DaysFactor(Factor):
    days: int = Field(gt=0, le=3650)


class CableFactors(Strict):
    per_100_m: Factor
    older_than_years: YearsFactor


class RecentWork(Strict):
    within_days: DaysFactor


class History(Strict):
    per_past_ground: Factor


class Likelihood(Strict):
    environment: dict[Environment, Factor] = {}
    load_kind: dict[LoadKind, Factor] = {}
    cable: CableFactors
    recent_work: RecentWork
    history: History


class Minutes(Strict):
    minutes: float = Field(ge=0, le=10_000)
    basis: str = Field(min_length=1)


class Interrupt(Strict):
    non_essential: Minutes
    important: Minutes
    vital: Minutes


class Costs(Strict):
    observe: Minutes
    interrupt: Interrupt
    transfer: Minutes
    permission: Minutes


class SearchWeights(Strict):
    likelihood: Likelihood
    cost: Costs
