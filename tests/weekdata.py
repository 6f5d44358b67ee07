"""A results sheet filled as a technician would, for tests and benches of the working
week. The names and readings are invented; the limits are the package's own."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from workpack.store import package_sha256


def filled_results(data: Mapping[str, Any], day: str, *, by: str, supervisor: str,
                   megohms: str = "500 MΩ", locks_left_on: str | None = None,
                   locked_on: str | None = None) -> dict[str, Any]:
    """Results for the package ``data`` (its JSON twin, parsed): every lock on (and off
    again unless ``locks_left_on``), dead proven, steps done, each insulation reading
    ``megohms`` at 20 °C and any other reading inside its own limit. Each point's lock is
    numbered after the package and the point, so a job keeps its locks from day to day;
    ``locked_on`` is the day they went on (default ``day``)."""
    sheet: dict[str, Any] = {
        "package": data["id"], "package_sha256": package_sha256(data),
        "completed_by": by, "supervisor": supervisor, "completed_on": day,
        "tester_proven_before": True, "tester_proven_after": True,
        "proving_dead": {n: {pair: 0 for pair in check["pairs"]}
                         for n, check in enumerate(data["proving_dead"], start=1)},
        "steps": {step["number"]: {"done": True} for step in data["steps"]}}
    sheet["isolation"] = {}
    for n, point in enumerate(data["isolation"], start=1):
        mark = f"{data['id'].rsplit('-', 2)[-2][4:]}-{data['id'].rsplit('-', 1)[-1]}-{n}"
        lock = {"lock": f"L{mark}", "tag": f"T{mark}", "applied_by": by,
                "applied_at": f"{locked_on or day} 08:{n:02d}"}
        if locks_left_on is None:
            lock |= {"removed_by": by, "removed_at": f"{day} 15:{n:02d}"}
        sheet["isolation"][point["device"]] = lock
    steps = list(data["steps"])
    if locks_left_on is None:
        sheet["restoration"] = {s["number"]: {"done": True} for s in data["restoration"]}
        steps += data["restoration"]
    else:  # the gate: the acceptance is not met, the item stays isolated
        sheet["locks_left_on"] = locks_left_on
        sheet["restoration"] = {data["restoration"][0]["number"]: {"done": True}}
    sheet["readings"] = {}
    for reading in (r for step in steps for r in step["readings"]):
        limit = reading.get("limit") or {}
        if reading["unit"] in ("MΩ", "kΩ", "Ω"):
            value: Any = megohms
        elif reading.get("expected") is not None:
            value = reading["expected"]
        elif limit.get("low") is not None:
            value = limit["low"] * 2
        else:
            value = 253
        entry = {"value": value}
        if reading.get("needs_temperature"):
            entry["temperature"] = 20
        sheet["readings"][reading["id"]] = entry
    return sheet
