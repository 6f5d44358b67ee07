"""A filled-in package judged against its own acceptance criteria.

Every reading against the limit the package printed (after the temperature
correction the limit names), every step ticked or not, every lock applied and
removed, absence of voltage proven with a tester proven before and after, the
signatures. The verdict is ``passed``, ``failed`` (a reading broke its limit,
or something is still live) or ``incomplete`` (something was not done or not
recorded). A failing insulation reading becomes a finding for tomorrow. Pure.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any

from workpack.checks import Mismatch
from workpack.electrical import correct_to_reference
from workpack.electrical.standards import CodeSet
from workpack.errors import did_you_mean
from workpack.model.evaluation import (
    RESISTANCE_UNITS,
    Deviation,
    Evaluation,
    FollowUp,
    ReadingVerdict,
    Verdict,
)
from workpack.model.package import FinalTest, Reading, Step, WorkPackage
from workpack.model.results import FinalTestResults, Results
from workpack.numbers import format_quantity, unit_scale
from workpack.units import UnitProblem, plausible, to_si

# Common practice: a proving-dead reading is the tester's "no voltage"; anything above
# the resolution of a two-pole tester (about a volt) means the conductor is not dead.
DEAD_BELOW_V = 1.0

UNIT_KIND = {"V": "voltage", "A": "current", "Ω": "resistance", "kΩ": "resistance",
             "MΩ": "resistance", "kVA": "apparent_power", "kW": "real_power",
             "Hz": "frequency", "s": "time", "°C": "temperature"}

FieldPath = tuple[str | int, ...]  # a place in the results file: keys and indexes


# --- checking the results against the package (errors a person made while filling in) ------


def check_results(package: WorkPackage, results: Results,
                  package_sha256: str | None = None) -> Iterator[Mismatch]:
    """Every place the results do not fit the package, as a field path and a message."""
    if results.package != package.id:
        yield Mismatch(("package",), f"these results answer {results.package!r}, not the "
                                     f"package given ({package.id!r})")
        return
    if package_sha256 and results.package_sha256 and results.package_sha256 != package_sha256:
        yield Mismatch(("package_sha256",), "the package was changed after these results "
                                            "were started: its hash differs; fill in a "
                                            "fresh template")
    readings = {r.id: r for r in package.readings()}
    for reading_id, measured in results.readings.items():
        if reading_id not in readings:
            yield Mismatch(("readings", reading_id), f"no reading {reading_id!r} in "
                           f"{package.id}{did_you_mean(reading_id, readings)}")
            continue
        reading = readings[reading_id]
        if measured.value is not None:
            try:
                measured_value(reading, measured.value)
            except UnitProblem as problem:
                yield Mismatch(("readings", reading_id, "value"), str(problem))
        if measured.temperature is not None:
            try:
                plausible(to_si(measured.temperature, "temperature"), "temperature")
            except UnitProblem as problem:
                yield Mismatch(("readings", reading_id, "temperature"), str(problem))
    yield from _check_scope((), package.id, package, results)
    finals = {final.id: final for final in package.final_tests}
    for final_id, record in results.final_tests.items():
        final = finals.get(final_id)
        if final is None:
            yield Mismatch(("final_tests", final_id), f"{package.id} has no final test "
                           f"{final_id!r}{did_you_mean(final_id, finals)}")
            continue
        yield from _check_scope(("final_tests", final_id), f"{package.id} {final_id}", final,
                                record)


def _check_scope(base: FieldPath, name: str, scope: WorkPackage | FinalTest,
                 record: Results | FinalTestResults) -> Iterator[Mismatch]:
    """The results of one isolation: the package's own, or one final test's."""
    proving_dead = scope.proving_dead
    devices = {point.device for point in scope.isolation}
    for device in record.isolation:
        if device not in devices:
            yield Mismatch((*base, "isolation", device), f"{device!r} is not an isolation "
                           f"point of {name}{did_you_mean(device, devices)}")
    for index, pairs in record.proving_dead.items():
        if not 1 <= index <= len(proving_dead):
            yield Mismatch((*base, "proving_dead", index), f"{name} has {len(proving_dead)} "
                           "proving-dead points, numbered from 1")
            continue
        known = proving_dead[index - 1].pairs
        for pair, value in pairs.items():
            if pair not in known:
                yield Mismatch((*base, "proving_dead", index, pair),
                               f"no pair {pair!r} here{did_you_mean(pair, known)}")
            elif value is not None and str(value).strip():
                try:
                    plausible(to_si(value, "voltage"), "voltage")
                except UnitProblem as problem:
                    yield Mismatch((*base, "proving_dead", index, pair), str(problem))
    for section, numbered, what in (("steps", scope.steps, "step"),
                                    ("restoration", scope.restoration, "restoration step")):
        numbers = {step.number for step in numbered}
        for number in getattr(record, section):
            if number not in numbers:
                yield Mismatch((*base, section, number), f"{name} has no {what} {number} (it "
                               f"has 1 to {max(numbers, default=0)})")


def measured_value(reading: Reading, value: float | str) -> float:
    """A filled-in value in SI: a bare number is in the unit printed beside the box.

    Refuses (UnitProblem) a value no instrument gives: NaN, infinity, 20,000 °C.
    """
    si = _measured_si(reading, value)
    kind = UNIT_KIND.get(reading.unit)
    if kind is None:
        if not (math.isfinite(si) and abs(si) <= 1.0e12):
            raise UnitProblem(f"{si:g} is not a reading an instrument gives")
        return si
    try:
        return plausible(si, kind)
    except UnitProblem as problem:
        raise UnitProblem(f"{problem} ({reading.id} is measured in {reading.unit})") from None


def _measured_si(reading: Reading, value: float | str) -> float:
    if isinstance(value, int | float) and not isinstance(value, bool):
        return float(value) * unit_scale(reading.unit)
    if reading.unit == "":
        try:
            return float(value)
        except ValueError:
            raise UnitProblem(f"expected a plain number for {reading.id} (got {value!r})") \
                from None
    text = str(value).strip()
    try:
        return float(text) * unit_scale(reading.unit)
    except ValueError:
        pass
    kind = UNIT_KIND.get(reading.unit)
    if kind is None:
        raise UnitProblem(f"cannot read {value!r} for {reading.id}")
    try:
        return to_si(text, kind)
    except UnitProblem as problem:
        raise UnitProblem(f"{problem} ({reading.id} is measured in {reading.unit})") from None


# --- judging ---------------------------------------------------------------------------------


def evaluate(package: WorkPackage, results: Results, standards: Mapping[str, CodeSet],
             not_accepted: Mapping[str, str] | None = None) -> Evaluation:
    """Judge checked results (``check_results`` found nothing) against their package.
    ``not_accepted``: reading id → why its value cannot be accepted (an instrument's range,
    ``recordchecks.instrument_check``); such a reading counts as not recorded, with why."""
    refused = not_accepted or {}
    verdicts = tuple(_judge(reading, results, standards, refused.get(reading.id))
                     for reading in package.readings())
    deciding = {reading.id for reading in package.readings() if reading.acceptance}
    found = results.ground_found_at is not None
    # A branch of a search is done only if the search led there: unrecorded, it is no gap.
    optional = {r.id for s in package.steps if s.optional for r in s.readings}
    optional |= {r.id for s in package.restoration if not _outcome_applies(s, found)
                 for r in s.readings}
    recorded = {r.id for r in package.readings()
                if (m := results.readings.get(r.id)) is not None and m.value is not None}
    taken = []
    for final in package.final_tests:
        ids = {r.id for s in (*final.steps, *final.restoration) for r in s.readings}
        record = results.final_tests.get(final.id)
        if (record is not None and record.anything_filled_in()) or ids & recorded:
            taken.append(final)
        else:
            optional |= ids  # the search did not end there
    # A final test's reading below its minimum where the search names the ground found
    # is the search's result, not a failure of the job (the reading keeps its own
    # verdict, and becomes tomorrow's finding).
    the_find = {r.id for final in taken for s in (*final.steps, *final.restoration)
                for r in s.readings} if found else set()
    deviations: list[Deviation] = []
    for judged in verdicts:
        if judged.id not in deciding:
            continue  # recorded against its limit, but the job is not judged by it
        if judged.outcome == "fail" and judged.id in the_find:
            continue
        if judged.outcome == "fail":
            deviations.append(Deviation(kind="reading", ref=judged.id, text=f"{judged.id} "
                                        f"{judged.what}: {judged.note}", fails=True))
        elif judged.outcome == "not recorded" and judged.id not in optional:
            why = f" ({judged.note})" if judged.note else ""
            deviations.append(Deviation(kind="reading", ref=judged.id, text=f"{judged.id} "
                                        f"{judged.what}: not recorded{why}", fails=False))
    scopes = [_check_isolation("", package, results, found)]
    scopes += [_check_isolation(f"{final.id}:", final,
                                results.final_tests.get(final.id) or FinalTestResults(), found)
               for final in taken]
    deviations += [d for scope in scopes for d in scope.deviations]
    for who, signed in (("technician", results.completed_by),
                        ("supervisor", results.supervisor)):
        if not signed:
            deviations.append(Deviation(kind="signature", ref=who,
                                        text=f"no {who} signature", fails=False))
    verdict: Verdict = ("failed" if any(d.fails for d in deviations)
                        else "incomplete" if deviations else "passed")
    return Evaluation(
        package_id=package.id, plant=package.plant, item=package.item, date=package.date,
        verdict=verdict, readings=verdicts, deviations=tuple(deviations),
        locks_not_removed=tuple(ref for scope in scopes for ref in scope.not_removed),
        completed_by=results.completed_by, supervisor=results.supervisor,
        ground_found_at=results.ground_found_at,
        followups=tuple(_followups(package, results, verdicts)),
        locks_left_on=tuple(kept for scope in scopes for kept in scope.left_on))


def _outcome_applies(step: Step, found: bool) -> bool:
    """A restoration step for one outcome of a search is due only for that outcome."""
    return step.search_outcome is None or (step.search_outcome == "found") == found


@dataclass
class _IsolationCheck:
    """What one isolation's results show (see ``_check_isolation``)."""

    deviations: list[Deviation] = field(default_factory=list)
    not_removed: list[str] = field(default_factory=list)  # "CB-7", "F2:CB-7"
    left_on: list[str] = field(default_factory=list)  # "CB-7: why", kept on by the gate

    def add(self, kind: str, ref: str, text: str, *, fails: bool) -> None:
        self.deviations.append(Deviation(kind=kind, ref=ref, text=text, fails=fails))


def _check_isolation(prefix: str, scope: WorkPackage | FinalTest,
                     record: Results | FinalTestResults, found: bool) -> _IsolationCheck:
    """Steps, locks, proving dead and tester of one isolation: the package's own
    (``prefix`` "") or one final test's ("F2:"), with the locks never removed and those
    the restoration's gate kept on for a reason."""
    out = _IsolationCheck()
    kept = record.locks_left_on if any(s.kind == "gate" for s in scope.restoration) else None
    for section, numbered in (("steps", scope.steps), ("restoration", scope.restoration)):
        done = getattr(record, section)
        for step in numbered:
            if step.optional or (section == "restoration" and (
                    kept or not _outcome_applies(step, found))):
                continue  # a branch not taken, or a restoration the gate withheld
            if not (step.number in done and done[step.number].done):
                name = f"{prefix}{'step' if section == 'steps' else 'restoration step'}"
                out.add(name.replace(":", " "), f"{prefix}{step.number}",
                        f"{name.replace(':', ' ')} {step.number} not ticked as done",
                        fails=False)
    for point in scope.isolation:
        ref = f"{prefix}{point.device}"
        lock = record.isolation.get(point.device)
        if lock is None or not (lock.lock and lock.applied_by):
            out.add("lock", ref, f"{ref}: no lock recorded as applied", fails=False)
            continue
        if not lock.removed_by:
            out.not_removed.append(ref)
            if kept:
                out.left_on.append(f"{ref}: {kept}")
                continue
            out.add("lock", ref, f"{ref}: lock {lock.lock} applied by {lock.applied_by} was "
                    "never recorded as removed", fails=True)
        elif lock.transfers and _person(lock.removed_by) != _person(
                lock.transfers[-1].to_holder):
            # 29 CFR 1910.147(f)(4): after a recorded transfer the oncoming holder removes it.
            out.add("lock", ref, f"{ref}: lock {lock.lock} held by "
                    f"{lock.transfers[-1].to_holder} (transferred from "
                    f"{lock.transfers[-1].from_holder}) was removed by {lock.removed_by}: each "
                    "lock is removed by whoever holds it", fails=False)
        elif not lock.transfers and _person(lock.removed_by) != _person(lock.applied_by):
            out.add("lock", ref, f"{ref}: lock {lock.lock} applied by {lock.applied_by} was "
                    f"removed by {lock.removed_by}: each lock is removed by whoever applied it "
                    "(record the employer's procedure for removal by another in the remarks)",
                    fails=False)
    for index, dead in enumerate(scope.proving_dead, start=1):
        measured = record.proving_dead.get(index, {})
        for pair in dead.pairs:
            value = measured.get(pair)
            ref = f"{prefix}{index}:{pair}"
            if value is None or not str(value).strip():
                out.add("dead", ref, f"{prefix}{dead.where} {pair}: absence of voltage not "
                        "recorded", fails=False)
            elif to_si(value, "voltage") > DEAD_BELOW_V:
                out.add("dead", ref, f"{prefix}{dead.where} {pair}: "
                        f"{to_si(value, 'voltage'):g} V measured: NOT dead", fails=True)
    if scope.proving_dead and not (record.tester_proven_before and record.tester_proven_after):
        out.add("tester", f"{prefix}tester", f"{prefix}tester not recorded as proven on a "
                "known live source both before and after", fails=False)
    return out


def _person(name: str) -> str:
    """A name as written, for comparing who applied and who removed a lock."""
    return " ".join(name.split()).casefold()


def _judge(reading: Reading, results: Results, standards: Mapping[str, CodeSet],
           refused: str | None = None) -> ReadingVerdict:
    measured = results.readings.get(reading.id)
    limit = reading.limit
    low = limit.low if limit else None
    high = limit.high if limit else None
    corrected_to = limit.temperature_corrected_to_c if limit else None
    base: dict[str, Any] = {
        "id": reading.id, "what": reading.what, "unit": reading.unit, "low": low, "high": high,
        "basis": limit.basis if limit else reading.basis, "corrected_to_c": corrected_to,
        "element": reading.element, "judged": reading.acceptance,
        "code_set": limit.code_set if limit else None}
    if measured is None or measured.value is None:
        return ReadingVerdict(**base, measured_si=None, temperature_c=None, compared_si=None,
                              outcome="not recorded")
    value = measured_value(reading, measured.value)
    temperature = (to_si(measured.temperature, "temperature")
                   if measured.temperature is not None else None)
    if refused is not None:
        return ReadingVerdict(**base, measured_si=value, temperature_c=temperature,
                              compared_si=None, outcome="not recorded",
                              note=f"not accepted: {refused}")
    compared = value
    note = ""
    if corrected_to is not None and limit is not None and limit.code_set:
        if temperature is None:
            return ReadingVerdict(**base, measured_si=value, temperature_c=None,
                                  compared_si=None, outcome="not recorded",
                                  note="temperature not recorded: cannot correct")
        # The same tables (with the same column) the package printed its limit from, and
        # the same correct_to_reference that decided the printed range: one code path.
        try:
            if limit.code_set not in standards:
                raise ValueError(f"code set {limit.code_set!r} is not loaded")
            corrected = correct_to_reference(standards[limit.code_set], value, temperature)
        except ValueError as error:  # a temperature outside the correction's range
            return ReadingVerdict(**base, measured_si=value, temperature_c=temperature,
                                  compared_si=None, outcome="not recorded",
                                  note=f"cannot be judged: {error}")
        compared = corrected.corrected_ohm
        note = (f"{format_quantity(value, reading.unit)} at {temperature:g} °C is "
                f"{format_quantity(compared, reading.unit)} at {corrected.reference_c:g} °C "
                f"({corrected.citation})")
    if limit is None:
        return ReadingVerdict(**base, measured_si=value, temperature_c=temperature,
                              compared_si=compared, outcome="recorded", note=note)
    broken = []
    if low is not None and compared < low:
        broken.append(f"below the minimum {format_quantity(low, reading.unit)}")
    if high is not None and compared > high:
        broken.append(f"above the maximum {format_quantity(high, reading.unit)}")
    if broken:
        note = (note + "; " if note else "") + " and ".join(broken) + f" ({limit.basis})"
    if not reading.acceptance:
        # Recorded against its limit for the record and the trend; the job is judged by
        # the readings after the work.
        return ReadingVerdict(**base, measured_si=value, temperature_c=temperature,
                              compared_si=compared, outcome="recorded",
                              note="as found, not judged" + (f": {note}" if note else ""))
    return ReadingVerdict(**base, measured_si=value, temperature_c=temperature,
                          compared_si=compared, outcome="fail" if broken else "pass", note=note)


def _followups(package: WorkPackage, results: Results,
               verdicts: tuple[ReadingVerdict, ...]) -> list[FollowUp]:
    """A failing insulation reading is a finding for tomorrow's plan, once per element."""
    readings = {r.id: r for r in package.readings()}
    seen: set[str] = set()
    found = []
    for verdict in verdicts:
        reading = readings[verdict.id]
        if verdict.outcome != "fail" or not reading.acceptance or reading.element is None \
                or reading.element in seen:
            continue
        if reading.unit not in RESISTANCE_UNITS or verdict.measured_si is None:
            continue
        seen.add(reading.element)
        found.append(FollowUp(
            kind="insulation_resistance",
            at=dt.datetime.combine(results.completed_on or package.date,
                                   dt.time(0, 0)).isoformat(timespec="minutes"),
            by=results.completed_by or "unknown",
            where=reading.element,
            test_voltage=f"{reading.test_voltage_v:g} V" if reading.test_voltage_v else None,
            reading=f"{verdict.measured_si:g} ohm",
            temperature=f"{verdict.temperature_c:g} degC"
            if verdict.temperature_c is not None else None,
            note=f"from {package.id} ({verdict.id}): {verdict.note}"
            + ("" if verdict.temperature_c is not None else
               "; no temperature was entered with this reading: write the one the test "
               "was made at under temperature before planning with this finding"),
        ))
    return found
