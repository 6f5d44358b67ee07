"""The two ways results come back: a YAML sheet to fill in, or the package PDF's own fields.

``results_template`` writes the sheet for one package: every reading, tick,
lock and tag and signature, with what is expected written beside it as a
comment. ``results_from_fields`` turns the filled AcroForm fields of the
package PDF (names as ``render.pdf`` documents them) into the same data, so a
technician with a tablet and one with paper end in the same record. Pure.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from typing import Any

from workpack.model.package import Reading, WorkPackage, in_unit


def _quoted(text: str) -> str:
    return json.dumps(text, ensure_ascii=False)


def _expectation(reading: Reading) -> str:
    parts = []
    if reading.expected is not None:
        parts.append(f"expect {in_unit(reading.expected, reading.unit)}")
        if reading.tolerance:
            parts[-1] += f" ± {in_unit(reading.tolerance, reading.unit)}"
    if reading.limit is not None:
        parts.append(reading.limit.describe(reading.unit))
    return "; ".join(parts) or "record as found"


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
    if package.proving_dead:
        lines += ["tester_proven_before: false   # on a known live source, before",
                  "tester_proven_after: false    # and after"]
    if package.isolation:
        lines.append("isolation:")
        for point in package.isolation:
            state = " (normally open: lock it open)" if point.already_open else ""
            if point.blocks:
                state = f" (set and lock: {' '.join(point.how.split()) if point.how else ''})"
            key = _quoted(point.device) if ":" in point.device else point.device
            lines.append(f"  {key}:   # {point.order}. {point.device_kind}, "
                         f"{point.location or 'location not given'}{state}")
            lines += [f"    {name}:" for name in ("lock", "tag", "applied_by", "applied_at",
                                                   "removed_by", "removed_at")]
    if package.proving_dead:
        lines.append("proving_dead:   # volts measured; expected 0 V")
        for index, dead in enumerate(package.proving_dead, start=1):
            lines.append(f"  {index}:   # {dead.where}")
            lines += [f"    {_quoted(pair)}:" for pair in dead.pairs]
    for section, steps in (("steps", package.steps), ("restoration", package.restoration)):
        if not steps:
            continue
        lines.append(f"{section}:")
        for step in steps:
            text = " ".join(step.text.split())
            lines.append(f"  {step.number}: {{done: false}}   # {text[:70]}"
                         + ("…" if len(text) > 70 else ""))
    readings = package.readings()
    if readings:
        lines.append("readings:")
        for reading in readings:
            lines.append(f"  {reading.id}:   # {reading.what} [{reading.unit or 'number'}]: "
                         f"{_expectation(reading)}")
            lines.append("    value:")
            if reading.needs_temperature:
                lines.append("    temperature:   # °C")
    if package.job_kind in ("locate_ground", "clear_second_ground"):
        lines.append("ground_found_at:   # element id where the ground was found, if found")
    lines.append("remarks:")
    return "\n".join(lines) + "\n"


def results_from_fields(package: WorkPackage, fields: Mapping[str, str | None],
                        split: Any) -> dict[str, Any]:
    """Filled AcroForm values (field name → text) as results data for the ``Results`` model.

    ``split`` takes a field name apart (``render.pdf.split_field_name``).
    """
    data: dict[str, Any] = {"package": package.id}
    isolation: dict[str, dict[str, Any]] = {}
    dead: dict[int, dict[str, Any]] = {}
    steps: dict[int, dict[str, bool]] = {}
    restoration: dict[int, dict[str, bool]] = {}
    readings: dict[str, dict[str, Any]] = {}
    for name, raw in sorted(fields.items()):
        value = raw.strip() if isinstance(raw, str) else raw
        parts = split(name)
        kind = parts[0]
        ticked = value in ("/Yes", "Yes", "/On", "On", True)
        if kind == "reading" and value:
            readings.setdefault(parts[1], {})["value"] = value
        elif kind == "temperature" and value:
            readings.setdefault(parts[1], {})["temperature"] = value
        elif kind in ("step", "restore"):
            target = steps if kind == "step" else restoration
            target[int(parts[1])] = {"done": ticked}
        elif kind in ("lock", "tag") and value:
            device = parts[1]
            key = "tag" if kind == "tag" else ("lock" if parts[2] == "number" else parts[2])
            isolation.setdefault(device, {})[key] = value
        elif kind == "dead" and value:
            dead.setdefault(int(parts[1]), {})[parts[2]] = value
        elif kind == "tester":
            data[f"tester_proven_{parts[1]}"] = ticked
        elif kind == "sign" and value:
            key = {"technician": "completed_by", "supervisor": "supervisor",
                   "date": "completed_on"}[parts[1]]
            data[key] = value
        elif kind == "remarks" and value:
            data["remarks"] = value
    data.update({"isolation": isolation, "proving_dead": dead, "steps": steps,
                 "restoration": restoration, "readings": readings})
    return data
