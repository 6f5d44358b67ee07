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
from dataclasses import dataclass
from typing import Any, Literal

from workpack.electrical import correct_to_reference
from workpack.electrical.standards import CodeSet
from workpack.errors import did_you_mean
from workpack.model.package import UNIT_SCALE, Reading, WorkPackage, in_unit
from workpack.model.results import Results
from workpack.units import UnitProblem, plausible, to_si

# Common practice: a proving-dead reading is the tester's "no voltage"; anything above
# the resolution of a two-pole tester (about a volt) means the conductor is not dead.
DEAD_BELOW_V = 1.0

UNIT_KIND = {"V": "voltage", "A": "current", "Ω": "resistance", "kΩ": "resistance",
             "MΩ": "resistance", "kVA": "apparent_power", "kW": "real_power",
             "Hz": "frequency", "s": "time", "°C": "temperature"}

Verdict = Literal["passed", "failed", "incomplete"]
Path = tuple[str | int, ...]


@dataclass(frozen=True)
class ReadingVerdict:
    id: str
    what: str
    unit: str
    measured_si: float | None
    temperature_c: float | None
    compared_si: float | None  # after temperature correction, where the limit asks for it
    corrected_to_c: float | None
    low: float | None
    high: float | None
    basis: str
    outcome: Literal["pass", "fail", "not recorded", "recorded"]
    note: str = ""
    element: str | None = None  # the element measured (insulation readings)
    judged: bool = True  # False: recorded against its limit but not deciding the verdict
    code_set: str | None = None  # the tables that corrected it for temperature


@dataclass(frozen=True)
class Deviation:
    kind: str  # reading, step, lock, dead, tester, signature
    ref: str
    text: str
    fails: bool  # True: the job failed; False: the job is incomplete


@dataclass(frozen=True)
class Evaluation:
    package_id: str
    plant: str
    item: str
    date: dt.date
    verdict: Verdict
    readings: tuple[ReadingVerdict, ...]
    deviations: tuple[Deviation, ...]
    locks_not_removed: tuple[str, ...]
    completed_by: str | None
    supervisor: str | None
    ground_found_at: str | None
    followups: tuple[dict[str, Any], ...]  # findings for tomorrow, as a findings file holds them


# --- checking the results against the package (errors a person made while filling in) ------


def check_results(package: WorkPackage, results: Results,
                  package_sha256: str | None = None) -> Iterator[tuple[Path, str]]:
    """Every place the results do not fit the package: (field path, message)."""
    if results.package != package.id:
        yield ("package",), (f"these results answer {results.package!r}, not the package "
                             f"given ({package.id!r})")
        return
    if package_sha256 and results.package_sha256 and results.package_sha256 != package_sha256:
        yield ("package_sha256",), ("the package was changed after these results were "
                                    "started: its hash differs; fill in a fresh template")
    readings = {r.id: r for r in package.readings()}
    for reading_id, measured in results.readings.items():
        if reading_id not in readings:
            yield ("readings", reading_id), (f"no reading {reading_id!r} in {package.id}"
                                             f"{did_you_mean(reading_id, readings)}")
            continue
        reading = readings[reading_id]
        if measured.value is not None:
            try:
                measured_value(reading, measured.value)
            except UnitProblem as problem:
                yield ("readings", reading_id, "value"), str(problem)
        if measured.temperature is not None:
            try:
                plausible(to_si(measured.temperature, "temperature"), "temperature")
            except UnitProblem as problem:
                yield ("readings", reading_id, "temperature"), str(problem)
    devices = {point.device for point in package.isolation}
    for device in results.isolation:
        if device not in devices:
            yield ("isolation", device), (f"{device!r} is not an isolation point of "
                                          f"{package.id}{did_you_mean(device, devices)}")
    for index, pairs in results.proving_dead.items():
        if not 1 <= index <= len(package.proving_dead):
            yield ("proving_dead", index), (f"{package.id} has {len(package.proving_dead)} "
                                            "proving-dead points, numbered from 1")
            continue
        known = package.proving_dead[index - 1].pairs
        for pair, value in pairs.items():
            if pair not in known:
                yield ("proving_dead", index, pair), (f"no pair {pair!r} here"
                                                      f"{did_you_mean(pair, known)}")
            elif value is not None and str(value).strip():
                try:
                    plausible(to_si(value, "voltage"), "voltage")
                except UnitProblem as problem:
                    yield ("proving_dead", index, pair), str(problem)
    for section, steps, name in (("steps", package.steps, "step"),
                                 ("restoration", package.restoration, "restoration step")):
        numbers = {step.number for step in steps}
        for number in getattr(results, section):
            if number not in numbers:
                yield (section, number), (f"{package.id} has no {name} {number} (it has 1 to "
                                          f"{max(numbers, default=0)})")


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
        return float(value) * UNIT_SCALE.get(reading.unit, 1.0)
    if reading.unit == "":
        try:
            return float(value)
        except ValueError:
            raise UnitProblem(f"expected a plain number for {reading.id} (got {value!r})") \
                from None
    text = str(value).strip()
    try:
        return float(text) * UNIT_SCALE.get(reading.unit, 1.0)
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


def evaluate(package: WorkPackage, results: Results,
             standards: Mapping[str, CodeSet]) -> Evaluation:
    """Judge checked results (``check_results`` found nothing) against their package."""
    verdicts = tuple(_judge(reading, results, standards) for reading in package.readings())
    deciding = {reading.id for reading in package.readings() if reading.acceptance}
    # A branch of a search is done only if the search led there: unrecorded, it is no gap.
    optional_steps = {s.number for s in package.steps if s.optional}
    optional = {r.id for s in package.steps if s.optional for r in s.readings}
    deviations: list[Deviation] = []
    for judged in verdicts:
        if judged.id not in deciding:
            continue  # recorded against its limit, but the job is not judged by it
        if judged.outcome == "fail":
            deviations.append(Deviation("reading", judged.id, f"{judged.id} {judged.what}: "
                                        f"{judged.note}", fails=True))
        elif judged.outcome == "not recorded" and judged.id not in optional:
            deviations.append(Deviation("reading", judged.id, f"{judged.id} {judged.what}: "
                                        "not recorded", fails=False))
    for section, steps in (("steps", package.steps), ("restoration", package.restoration)):
        done = getattr(results, section)
        for step in steps:
            if section == "steps" and step.number in optional_steps:
                continue
            if not (step.number in done and done[step.number].done):
                name = "step" if section == "steps" else "restoration step"
                deviations.append(Deviation(name, str(step.number),
                                            f"{name} {step.number} not ticked as done",
                                            fails=False))
    not_removed = []
    for point in package.isolation:
        record = results.isolation.get(point.device)
        if record is None or not (record.lock and record.applied_by):
            deviations.append(Deviation("lock", point.device, f"{point.device}: no lock "
                                        "recorded as applied", fails=False))
            continue
        if not record.removed_by:
            not_removed.append(point.device)
            deviations.append(Deviation(
                "lock", point.device, f"{point.device}: lock {record.lock} applied by "
                f"{record.applied_by} was never recorded as removed", fails=True))
    for index, dead in enumerate(package.proving_dead, start=1):
        measured = results.proving_dead.get(index, {})
        for pair in dead.pairs:
            value = measured.get(pair)
            if value is None or not str(value).strip():
                deviations.append(Deviation("dead", f"{index}:{pair}", f"{dead.where} {pair}: "
                                            "absence of voltage not recorded", fails=False))
            elif to_si(value, "voltage") > DEAD_BELOW_V:
                deviations.append(Deviation(
                    "dead", f"{index}:{pair}", f"{dead.where} {pair}: "
                    f"{to_si(value, 'voltage'):g} V measured: NOT dead", fails=True))
    if package.proving_dead and not (results.tester_proven_before and
                                     results.tester_proven_after):
        deviations.append(Deviation("tester", "tester", "tester not recorded as proven on a "
                                    "known live source both before and after", fails=False))
    for who, signed in (("technician", results.completed_by),
                        ("supervisor", results.supervisor)):
        if not signed:
            deviations.append(Deviation("signature", who, f"no {who} signature", fails=False))
    verdict: Verdict = ("failed" if any(d.fails for d in deviations)
                        else "incomplete" if deviations else "passed")
    return Evaluation(
        package_id=package.id, plant=package.plant, item=package.item, date=package.date,
        verdict=verdict, readings=verdicts, deviations=tuple(deviations),
        locks_not_removed=tuple(not_removed), completed_by=results.completed_by,
        supervisor=results.supervisor, ground_found_at=results.ground_found_at,
        followups=tuple(_followups(package, results, verdicts)))


def _judge(reading: Reading, results: Results,
           standards: Mapping[str, CodeSet]) -> ReadingVerdict:
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
    compared = value
    note = ""
    if corrected_to is not None and limit is not None and limit.code_set:
        if temperature is None:
            return ReadingVerdict(**base, measured_si=value, temperature_c=None,
                                  compared_si=None, outcome="not recorded",
                                  note="temperature not recorded: cannot correct")
        try:
            corrected = correct_to_reference(standards[limit.code_set], value, temperature)
        except ValueError as error:  # a temperature outside the correction table
            return ReadingVerdict(**base, measured_si=value, temperature_c=temperature,
                                  compared_si=None, outcome="not recorded",
                                  note=f"cannot be corrected: {error}")
        compared = corrected.corrected_ohm
        note = (f"{in_unit(value, reading.unit)} at {temperature:g} °C is "
                f"{in_unit(compared, reading.unit)} at {corrected.reference_c:g} °C "
                f"({corrected.citation})")
    if limit is None:
        return ReadingVerdict(**base, measured_si=value, temperature_c=temperature,
                              compared_si=compared, outcome="recorded", note=note)
    broken = []
    if low is not None and compared < low:
        broken.append(f"below the minimum {in_unit(low, reading.unit)}")
    if high is not None and compared > high:
        broken.append(f"above the maximum {in_unit(high, reading.unit)}")
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
               verdicts: tuple[ReadingVerdict, ...]) -> list[dict[str, Any]]:
    """A failing insulation reading is a finding for tomorrow's plan, once per element."""
    readings = {r.id: r for r in package.readings()}
    seen: set[str] = set()
    found = []
    for verdict in verdicts:
        reading = readings[verdict.id]
        if verdict.outcome != "fail" or not reading.acceptance or reading.element is None \
                or reading.element in seen:
            continue
        if reading.unit not in ("MΩ", "kΩ", "Ω") or verdict.measured_si is None:
            continue
        seen.add(reading.element)
        found.append({
            "kind": "insulation_resistance",
            "at": dt.datetime.combine(results.completed_on or package.date,
                                      dt.time(0, 0)).isoformat(timespec="minutes"),
            "by": results.completed_by or "unknown",
            "where": reading.element,
            "test_voltage": f"{reading.test_voltage_v:g} V" if reading.test_voltage_v
            else "500 V",
            "reading": f"{verdict.measured_si:g} ohm",
            "temperature": f"{verdict.temperature_c:g} degC"
            if verdict.temperature_c is not None else "20 degC",
            "note": f"from {package.id} ({verdict.id}): {verdict.note}",
        })
    return found




def record_payload(results: Results, evaluation: Evaluation) -> dict[str, Any]:
    """What the records store keeps for one recorded job: the results exactly as entered
    and their evaluation, both as plain JSON data."""
    from dataclasses import asdict

    def plain(value: Any) -> Any:
        if isinstance(value, dict):
            return {str(k): plain(v) for k, v in value.items()}
        if isinstance(value, list | tuple):
            return [plain(v) for v in value]
        if isinstance(value, dt.date):
            return value.isoformat()
        return value

    return {"results": results.model_dump(mode="json"),
            "evaluation": plain(asdict(evaluation))}
