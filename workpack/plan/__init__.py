"""Tomorrow's jobs: diagnoses and due routine tests, through the rules, into work packages.

1. ``jobs``: each diagnosis, and each routine test that falls due, is offered to the
   rules of its kind; a rule whose condition holds gives a job on an item, and jobs of
   one rule on one item (or system) are one job that keeps every finding behind it.
2. ``package``: each job becomes a package, filled from the plant and the calculations:
   isolation and proving dead (``lockout``), steps with computed readings and limits,
   the search and its final tests (``fault_search``), cautions (``cautions``), hazard
   facts, approach boundaries and PPE (``protection``), a one-line sketch (``sketch``).
3. ``day``: packages ranked (second-ground risk first), fitted into the crew hours,
   conflicts named.

``context`` is the contract with the rule files: every name a rule may use, built from
the typed state of ``systems`` and ``jobs``. Pure: rules, tables and weights arrive
loaded; nothing here reads or writes.
"""

from workpack.plan.context import context_schema
from workpack.plan.day import Conflict, DayPlan, find_conflicts, plan_day
from workpack.plan.jobs import DueRoutine, due_routines

__all__ = ["Conflict", "DayPlan", "DueRoutine", "context_schema", "due_routines",
           "find_conflicts", "plan_day"]
