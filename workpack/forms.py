"""The two ways results come back: a YAML sheet to fill in, or the package PDF's own fields.

``results_template`` writes the sheet for one package: every reading, tick,
lock and tag and signature, with what is expected written beside it as a
comment. ``results_from_fields`` turns the filled AcroForm fields of the
package PDF (names as ``render.pdf`` documents them) into the same data, so a
technician with a tablet and one with paper end in the same record. Pure.
"""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from typing import Any

from workpack.model.package import (
    FinalTest,
    IsolationPoint,
    ProvingDead,
    Reading,
    Step,
    WorkPackage,
)
from workpack.numbers import format_quantity


def _quoted(text: str) -> str:
    return json.dumps(text, ensure_ascii=False)


def _expectation(reading: Reading) -> str:
    parts = []
    if reading.expected is not None:
        parts.append(f"expect {format_quantity(reading.expected, reading.unit)}")
        if reading.tolerance:
            parts[-1] += f" ± {format_quantity(reading.tolerance, reading.unit)}"
    if reading.limit is not None:
        parts.append(reading.limit.describe(reading.unit))
    return "; ".join(parts) or "record as found"


TIME_HINT = "YYYY-MM-DD HH:MM"


def _scope_lines(indent: str, isolation: Sequence[IsolationPoint],
                 proving_dead: Sequence[ProvingDead], steps: Sequence[Step],
                 restoration: Sequence[Step]) -> list[str]:
    """Tester, locks, proving dead and step ticks of one isolation (the package's own or
    a final test's), indented by ``indent``."""
    lines: list[str] = []
    if proving_dead:
        lines += [f"{indent}tester_proven_before: false   # on a known live source, before",
                  f"{indent}tester_proven_after: false    # and after"]
    removed_in = {d: step.number for step in restoration if step.kind == "remove_lock"
                  for d in step.devices}
    if isolation:
        lines.append(f"{indent}isolation:")
        for point in isolation:
            state = " (normally open: lock it open)" if point.already_open else ""
            if point.blocks:
                state = f" (set and lock: {' '.join(point.how.split()) if point.how else ''})"
            removal = (f"; removed at restoration step {removed_in[point.device]}, by "
                       "whoever applied it" if point.device in removed_in else "")
            key = _quoted(point.device) if ":" in point.device else point.device
            lines.append(f"{indent}  {key}:   # {point.order}. {point.device_kind}, "
                         f"{point.location or 'location not given'}{state}{removal}")
            lines += [f"{indent}    lock:", f"{indent}    tag:", f"{indent}    applied_by:",
                      f"{indent}    applied_at:   # {TIME_HINT}", f"{indent}    removed_by:",
                      f"{indent}    removed_at:   # {TIME_HINT}"]
    if proving_dead:
        lines.append(f"{indent}proving_dead:   # volts measured; expected 0 V")
        for index, dead in enumerate(proving_dead, start=1):
            lines.append(f"{indent}  {index}:   # {dead.where}")
            lines += [f"{indent}    {_quoted(pair)}:" for pair in dead.pairs]
    for section, numbered in (("steps", steps), ("restoration", restoration)):
        if not numbered:
            continue
        lines.append(f"{indent}{section}:")
        for step in numbered:
            text = " ".join(step.text.split())
            lines.append(f"{indent}  {step.number}: {{done: false}}   # {text[:70]}"
                         + ("…" if len(text) > 70 else ""))
    if any(step.kind == "gate" for step in restoration):
        lines.append(f"{indent}locks_left_on:   # only if the restoration's first step says "
                     "so: why every lock stays on")
    return lines


def results_template(package: WorkPackage, package_sha256: str) -> str:
    """A YAML results sheet for ``package`` with the expected values as comments."""
    lines = [
        f"# Results of {package.id}: {package.title}",
        f"# {package.plant}, {package.date.isoformat()}. Fill in, then: workpack record "
        "PACKAGE.json THIS-FILE",
        "# Readings: a bare number is in the unit shown; or write the unit (\"12 MΩ\").",
        "# Leave a blank where something was not done: it is reported, never guessed.",
        f"package: {package.id}",
        f"package_sha256: {package_sha256}",
        "completed_by:            # technician",
        "supervisor:",
        "completed_on:            # YYYY-MM-DD",
    ]
    lines += _scope_lines("", package.isolation, package.proving_dead, package.steps,
                          package.restoration)
    if package.final_tests:
        lines.append("final_tests:   # only those the search ended at; leave the others as "
                     "they are")
        for final in package.final_tests:
            lines.append(f"  {final.id}:   # {final.title}")
            lines += _scope_lines("    ", final.isolation, final.proving_dead, final.steps,
                                  final.restoration)
    readings = package.readings()
    if readings:
        lines.append("readings:")
        for reading in readings:
            lines.append(f"  {reading.id}:   # {reading.what} [{reading.unit or 'number'}]: "
                         f"{_expectation(reading)}")
            lines.append("    value:")
            if reading.needs_temperature:
                lines.append("    temperature:   # °C")
            lines.append("    instrument:   # its id in the instrument register")
    if package.job_kind in ("locate_ground", "clear_second_ground"):
        lines.append("ground_found_at:   # element id where the ground was found, if found")
    lines.append("remarks:")
    return "\n".join(lines) + "\n"


class FormFieldError(ValueError):
    """Form fields that are not the ones a workpack package has: (field name, why) each."""

    def __init__(self, problems: list[tuple[str, str]]):
        self.problems = problems
        super().__init__("; ".join(f"{name}: {why}" for name, why in problems))


# Each field kind: its number of parts, which parts are numbers (by position), and the
# words its last part may be (None: any). As ``render.pdf`` documents the names.
_FIELD_SHAPES: dict[str, tuple[int, tuple[int, ...], tuple[str, ...] | None]] = {
    "reading": (2, (), None),
    "temperature": (2, (), None),
    "instrument": (2, (), None),
    "step": (3, (1,), ("done",)),
    "restore": (3, (1,), ("done",)),
    "lock": (3, (), ("number", "applied_by", "applied_at", "removed_by", "removed_at")),
    "tag": (3, (), ("number",)),
    "dead": (3, (1,), None),
    "tester": (2, (), ("before", "after")),
    "sign": (2, (), ("technician", "supervisor", "date")),
    "remarks": (1, (), None),
    "locks_left_on": (1, (), None),
    "ground_found_at": (1, (), None),
    "final_at": (1, (), None),
}
# Fields of a final test of a ground search carry its scope first: final:<id>:<field…>.
_SCOPED = frozenset({"reading", "temperature", "instrument", "step", "restore", "lock", "tag",
                     "dead", "tester", "locks_left_on"})


def field_problem(parts: tuple[str, ...]) -> str | None:
    """Why a split field name is not one a workpack package has, or None."""
    if parts and parts[0] == "final":
        if len(parts) < 3 or not parts[1]:
            return "a final test's field is final:<test id>:<field>"
        if parts[2] not in _SCOPED:
            return (f"{parts[2]!r} is not a kind of field a final test has (expected one of "
                    f"{', '.join(sorted(_SCOPED))})")
        parts = parts[2:]
    shape = _FIELD_SHAPES.get(parts[0])
    if shape is None:
        return (f"{parts[0]!r} is not a kind of field a workpack package has (expected one "
                f"of {', '.join(sorted(_FIELD_SHAPES))})")
    count, numbers, words = shape
    if len(parts) != count:
        return f"a {parts[0]} field has {count} parts separated by ':', this has {len(parts)}"
    for position in numbers:
        if not (parts[position].isascii() and parts[position].isdigit()
                and len(parts[position]) <= 6):
            return f"part {position + 1} must be a number (got {parts[position]!r})"
    if words is not None and parts[-1] not in words:
        return f"the last part must be one of {', '.join(words)} (got {parts[-1]!r})"
    if any(not part for part in parts[1:]):
        return "a part of the name is empty"
    return None


# --- the one printed final-test procedure ------------------------------------------------
# A package prints its search's final tests once, for whichever circuit the search ends
# at: the technician writes that circuit's id (F4) in ``final_at`` and fills the blanks
# of scope ``final:chosen:``, whose lock, proving-dead and test rows are numbered as the
# circuit's row of the table lists them. ``chosen_final_fields`` says which of that final
# test's own fields each such blank stands for; a tick stands for every step of its kind.
CHOSEN = "chosen"
FINAL_PROCEDURE: tuple[tuple[str, int, str], ...] = (
    ("step", 1, "take_out_of_service"), ("step", 2, "disconnect"), ("step", 3, "test"),
    ("restore", 1, "gate"), ("restore", 2, "reconnect"), ("restore", 3, "close_up"),
    ("restore", 4, "remove_lock"), ("restore", 5, "energise"), ("restore", 6, "check"),
    ("restore", 7, "return_to_service"))
LOCK_FIELDS = ("number", "applied_by", "applied_at", "removed_by", "removed_at")


def final_step_kind(step: Step) -> str:
    """Which step of the printed final-test procedure a final test's own step is."""
    if step.kind == "work":
        return "test" if step.readings else "disconnect"
    return step.kind


def chosen_final_fields(final: FinalTest) -> dict[tuple[str, ...], tuple[tuple[str, ...], ...]]:
    """Each blank of the printed procedure (parts after ``final:chosen:``) → the parts of
    the final test's own fields it stands for (after ``final:<id>:``; readings unscoped)."""
    out: dict[tuple[str, ...], tuple[tuple[str, ...], ...]] = {}
    for kind, number, procedure_kind in FINAL_PROCEDURE:
        own = final.steps if kind == "step" else final.restoration
        out[(kind, str(number), "done")] = tuple(
            (kind, str(s.number), "done") for s in own if final_step_kind(s) == procedure_kind)
    for index, point in enumerate(sorted(final.isolation, key=lambda p: p.order), start=1):
        for what in LOCK_FIELDS:
            out[("lock", str(index), what)] = (("lock", point.device, what),)
        out[("tag", str(index), "number")] = (("tag", point.device, "number"),)
    for index, place in enumerate(final.proving_dead, start=1):
        for pair in place.pairs:
            out[("dead", str(index), pair)] = (("dead", str(index), pair),)
    for when in ("before", "after"):
        out[("tester", when)] = (("tester", when),)
    out[("locks_left_on",)] = (("locks_left_on",),)
    readings = [r for s in (*final.steps, *final.restoration) for r in s.readings]
    for index, reading in enumerate(readings, start=1):
        out[("reading", f"T{index}")] = (("reading", reading.id),)
        out[("temperature", f"T{index}")] = (("temperature", reading.id),)
    return out


def _unchosen(package: WorkPackage, fields: Mapping[str, str | None],
              split: Any) -> list[tuple[tuple[str, ...], str | None]]:
    """The printed procedure's blanks renamed to the final test written in ``final_at``;
    FormFieldError where one cannot be (no id written, an unknown id, a row the circuit
    does not have)."""
    chosen = {name: value for name, value in fields.items()
              if tuple(split(name))[:2] == ("final", CHOSEN)}
    out = [(tuple(split(name)), value) for name, value in sorted(fields.items())
           if name not in chosen and name != "final_at"]
    at = fields.get("final_at")
    at = at.strip() if isinstance(at, str) else at
    filled = {name: value for name, value in chosen.items()
              if value not in (None, "", "/Off", "Off")}
    if not filled:
        return out
    final = package.final_test(at) if at else None
    if final is None:
        why = ("the final tests' blanks are filled but 'final tests done on' names none"
               if not at else f"{package.id} has no final test {at!r}")
        raise FormFieldError([("final_at", why)])
    mapping = chosen_final_fields(final)
    problems: list[tuple[str, str]] = []
    for name, value in filled.items():
        parts = tuple(split(name))[2:]
        targets = mapping.get(parts)
        if targets is None:
            problems.append((name, f"final tests {final.id} have no such blank (its row of "
                                   "the table lists fewer)"))
            continue
        for target in targets:
            out.append((target if target[0] in ("reading", "temperature")
                        else ("final", final.id, *target), value))
    if problems:
        raise FormFieldError(problems)
    return out


def results_from_fields(package: WorkPackage, fields: Mapping[str, str | None],
                        split: Any) -> dict[str, Any]:
    """Filled AcroForm values (field name → text) as results data for the ``Results`` model.

    ``split`` takes a field name apart (``render.pdf.split_field_name``); a name that
    starts ``final:<id>:`` belongs to that final test. A field whose name is not one of a
    package's raises ``FormFieldError`` naming each.
    """
    problems = [(name, why) for name in sorted(fields)
                if (why := field_problem(tuple(split(name)))) is not None]
    if problems:
        raise FormFieldError(problems)
    data: dict[str, Any] = {"package": package.id}
    scopes: dict[str, dict[str, Any]] = {}

    def scope(final_id: str | None) -> dict[str, Any]:
        target = data if final_id is None else scopes.setdefault(final_id, {})
        for key in ("isolation", "proving_dead", "steps", "restoration"):
            target.setdefault(key, {})
        return target

    readings: dict[str, dict[str, Any]] = {}
    scope(None)
    for parts, raw in _unchosen(package, fields, split):
        value = raw.strip() if isinstance(raw, str) else raw
        final_id = None
        if parts[0] == "final" and len(parts) > 2:
            final_id, parts = parts[1], parts[2:]
        target = scope(final_id)
        kind = parts[0]
        ticked = value in ("/Yes", "Yes", "/On", "On", True)
        if kind == "reading" and value:
            readings.setdefault(parts[1], {})["value"] = value
        elif kind == "temperature" and value:
            readings.setdefault(parts[1], {})["temperature"] = value
        elif kind == "instrument" and value:
            readings.setdefault(parts[1], {})["instrument"] = value
        elif kind in ("step", "restore"):
            target["steps" if kind == "step" else "restoration"][int(parts[1])] = {
                "done": ticked}
        elif kind in ("lock", "tag") and value:
            device = parts[1]
            key = "tag" if kind == "tag" else ("lock" if parts[2] == "number" else parts[2])
            target["isolation"].setdefault(device, {})[key] = value
        elif kind == "dead" and value:
            target["proving_dead"].setdefault(int(parts[1]), {})[parts[2]] = value
        elif kind == "tester":
            target[f"tester_proven_{parts[1]}"] = ticked
        elif kind == "locks_left_on" and value:
            target["locks_left_on"] = value
        elif kind == "ground_found_at" and value:
            data["ground_found_at"] = value
        elif kind == "sign" and value:
            key = {"technician": "completed_by", "supervisor": "supervisor",
                   "date": "completed_on"}[parts[1]]
            data[key] = value
        elif kind == "remarks" and value:
            data["remarks"] = value
    data["readings"] = readings
    filled = {k: v for k, v in scopes.items() if _touched(v)}  # untouched ones stay out
    if filled:
        data["final_tests"] = filled
    return data


def _touched(scope: Mapping[str, Any]) -> bool:
    """Anything written or ticked in one final test's fields."""
    return bool(scope["isolation"] or scope["proving_dead"] or scope.get("locks_left_on")
                or scope.get("tester_proven_before") or scope.get("tester_proven_after")
                or any(s["done"] for s in (*scope["steps"].values(),
                                           *scope["restoration"].values())))
