"""The audit's insulation trends: each element's insulation resistance over time.

Every reading of an element in a resistance unit, from the latest effective record of
each package up to ``until``, for each element measured in a package of the report. The
value plotted is the one the evaluation compared with the limit (corrected to the
reference temperature where the limit names a code set). A test (one record) may measure
several phases of one element; the weakest governs, so the trend line runs through the
lowest value of each test. The judgement is ``workpack.history``'s (the one planning acts
on): ``insulation_trend`` over the lowest reading of each day, corrected with the code set
the readings name or the plant's default; where its values differ from those plotted, the
report says so. Pure.
"""

from __future__ import annotations

import dataclasses
import math
from collections import defaultdict
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

from workpack.audit.report import AuditFilter, IrTrend, TrendPoint
from workpack.electrical.standards import CodeSet
from workpack.history import History, history_from_records
from workpack.model.evaluation import RESISTANCE_UNITS
from workpack.model.package import Reading, WorkPackage
from workpack.numbers import format_quantity
from workpack.records import ReadBack

if TYPE_CHECKING:
    from workpack.store import Record


@dataclass(frozen=True)
class _Taken:
    point: TrendPoint
    reading: Reading


def insulation_trends(packages: Mapping[str, WorkPackage],
                      latest: Mapping[str, ReadBack[Record]], listed: set[str],
                      flt: AuditFilter, standards: Mapping[str, CodeSet],
                      default_code_set: str) -> tuple[IrTrend, ...]:
    """The trend of every element measured in a package of the report (``listed``), from
    the latest effective record of each package (``latest``, package id → record read
    back); see the module docstring."""
    taken: dict[str, list[_Taken]] = defaultdict(list)
    left_out: dict[str, list[str]] = defaultdict(list)
    shown: set[str] = set()
    scope = []
    for pid in sorted(latest):
        package, read = packages.get(pid), latest[pid]
        if package is None or read.evaluation is None:
            continue
        if flt.plant is not None and package.plant != flt.plant:
            continue
        if flt.until is not None and package.date > flt.until:
            continue
        scope.append(read.record)
        verdicts = {v.id: v for v in read.evaluation.readings}
        taken_on = (read.results.completed_on if read.results is not None
                    and read.results.completed_on is not None
                    else read.record.recorded_at.date())
        points = []
        # a search's final tests at circuits it did not end at were never made
        written = {i for i, m in read.results.readings.items() if m.value is not None
                   } if read.results is not None else set()
        not_made: set[str] = set()
        for final in package.final_tests:
            ids = {r.id for s in (*final.steps, *final.restoration) for r in s.readings}
            if not (ids & written or (read.results is not None
                                      and final.id in read.results.final_tests)):
                not_made |= ids
        for reading in package.readings():
            if (reading.element is None or reading.unit not in RESISTANCE_UNITS
                    or reading.id in not_made):
                continue
            if pid in listed:
                shown.add(reading.element)
            verdict = verdicts.get(reading.id)
            if verdict is None or verdict.compared_si is None or verdict.measured_si is None:
                why = (verdict.note or verdict.outcome) if verdict is not None else "no value"
                left_out[reading.element].append(
                    f"{pid} {reading.id} ({taken_on.isoformat()}): {why}")
                continue
            points.append(_Taken(TrendPoint(
                taken_on, verdict.compared_si, verdict.measured_si, verdict.temperature_c,
                verdict.corrected, verdict.outcome, pid, reading.id, reading.what,
                read.record.sequence, lowest_of_test=False,
                as_found=not reading.acceptance), reading))
        # one test per element and stage: as found, and after the work
        by_element: dict[tuple[str, bool], list[_Taken]] = defaultdict(list)
        for t in points:
            by_element[(t.reading.element or "", t.point.as_found)].append(t)
        for (element, _), group in by_element.items():
            weakest = min(group, key=lambda t: t.point.compared_si)
            taken[element] += [t if t is not weakest else
                               _Taken(dataclasses.replace(t.point, lowest_of_test=True),
                                      t.reading) for t in group]
    # the judgement the planner acts on (workpack.history), from the same records
    history = history_from_records(scope, default_code_set)
    return tuple(_trend(element, taken.get(element, []), tuple(left_out.get(element, [])),
                        history, standards)
                 for element in sorted(shown) if taken.get(element) or left_out.get(element))


def _trend(element: str, taken: Sequence[_Taken], left_out: tuple[str, ...],
           history: History, standards: Mapping[str, CodeSet]) -> IrTrend:
    ordered = sorted(taken, key=lambda t: (t.point.taken_on, not t.point.as_found,
                                           t.point.record_sequence, t.point.reading_id))
    points = tuple(t.point for t in ordered)
    notes = list(left_out)
    series = history.insulation.get(element)
    code_set = series.code_set if series is not None else None
    if not ordered:
        return IrTrend(element, "MΩ", None, code_set, None, "", (), None,
                       ("no reading with a value to plot", *notes))
    last = ordered[-1].reading
    limit = last.limit
    minimum = limit.low if limit is not None else None
    basis = limit.basis if limit is not None else ""
    line = [t.point for t in ordered if t.point.lowest_of_test]
    all_corrected = all(t.point.corrected for t in ordered)
    references = {t.reading.limit.temperature_corrected_to_c
                  for t in ordered if t.reading.limit is not None}
    corrected_to = references.pop() if all_corrected and len(references) == 1 else None
    if not all_corrected and any(t.point.corrected for t in ordered):
        notes.append("some values are corrected to the reference temperature and some are "
                     "not: compare with care")
    if len({t.reading.limit.low for t in ordered if t.reading.limit is not None}) > 1:
        notes.append("the packages give different minimums; the line shows the latest")
    judgement = None
    if len(line) < 2:
        notes.append("one test: no trend yet")
    elif series is None or len(series.readings) < 2:
        notes.append("not judged: the records hold no dated series with a minimum for it")
    elif series.code_set not in standards:
        notes.append(f"not judged: code set {series.code_set!r} is not loaded")
    else:
        try:
            judgement = history.trend(element, standards)
        except ValueError as problem:
            notes.append(f"not judged: {problem}")
    if judgement is not None and (
            len(judgement.corrected_ohm) != len(line)
            or not all(math.isclose(j, p.compared_si, rel_tol=1e-9)
                       for j, p in zip(judgement.corrected_ohm, line, strict=False))):
        shown = ", ".join(format_quantity(v, last.unit) for v in judgement.corrected_ohm)
        notes.append(f"judged on {shown} ({series.code_set if series else ''}, the lowest "
                     "reading of each day, corrected with those tables), not on the values "
                     "plotted, which are as the evaluation compared them")
    return IrTrend(element, last.unit, corrected_to, code_set, minimum, basis, points,
                   judgement, tuple(notes))
