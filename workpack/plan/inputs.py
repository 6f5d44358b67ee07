"""What every package of the day is built from. Pure data."""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from dataclasses import dataclass

from workpack.electrical.standards import CodeSet
from workpack.model.weights import SearchWeights
from workpack.plan.lockout import Isolations
from workpack.plan.systems import SystemState
from workpack.rules import RuleSet
from workpack.topology import Topology


@dataclass(frozen=True)
class DayInputs:
    """The plant, the rules, the tables and weights, and what the day's findings say."""

    topology: Topology
    ruleset: RuleSet
    standards: Mapping[str, CodeSet]
    weights: SearchWeights
    day: dt.date
    states: Mapping[str, SystemState]  # by system id: the day's grounds
    past_grounds: Mapping[str, int]  # element id: grounds recorded on it before
    tripped: frozenset[str]  # breakers found tripped: open; a search neither opens nor
    # recloses them
    isolations: Isolations  # each item's isolation, planned once for the day
