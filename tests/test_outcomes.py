"""A job's outcome apart from its readings' verdicts, and follow-ups that only carry what
was entered: on the demo day's packages, with invented results (tests/demodocs.py)."""

from __future__ import annotations

import json
from pathlib import Path

from demodocs import filled

from workpack.evaluate import evaluate
from workpack.model.package import WorkPackage
from workpack.model.results import MeasuredValue


def _package(plan: Path, title_part: str) -> WorkPackage:
    for path in sorted(plan.glob("WP-*.json")):
        package = WorkPackage.model_validate(json.loads(path.read_text(encoding="utf-8")))
        if title_part in package.title:
            return package
    raise AssertionError(f"no demo package titled with {title_part!r}")


def test_a_search_that_found_its_ground_is_not_a_failed_job(demo_plan: Path,
                                                             standards: dict) -> None:
    """The final test's reading below its minimum is the search's result: that reading
    fails and becomes tomorrow's finding, the job does not."""
    package = _package(demo_plan, "Find the ground on the MSB system")
    results = filled(package)
    judged = evaluate(package, results, standards)
    final = package.final_tests[0]
    first = next(r for s in final.steps for r in s.readings)
    verdicts = {v.id: v for v in judged.readings}
    assert results.ground_found_at and verdicts[first.id].outcome == "fail"
    assert judged.verdict != "failed", [d.text for d in judged.deviations]
    assert judged.followups and judged.followups[0].where == (first.element or final.feeder)


def test_a_follow_up_never_invents_a_temperature(demo_plan: Path, standards: dict) -> None:
    """A failing reading entered without a temperature: the follow-up finding leaves the
    temperature blank and says to write it in, instead of a made-up 20 °C."""
    package = next(p for p in (_package(demo_plan, t) for t in ("CB-CR1", "Find why"))
                   if any(not r.needs_temperature and r.unit == "MΩ" and r.element
                          and r.acceptance for r in p.readings()))
    reading = next(r for r in package.readings() if not r.needs_temperature
                   and r.unit == "MΩ" and r.element and r.acceptance and r.limit is not None
                   and r.limit.low)
    results = filled(package)
    low = MeasuredValue(value=f"{reading.limit.low / 10 / 1e6:g} MΩ")  # type: ignore[union-attr]
    results = results.model_copy(update={"readings": {**results.readings, reading.id: low}})
    judged = evaluate(package, results, standards)
    [followup] = [f for f in judged.followups if f.where == reading.element]
    assert followup.temperature is None
    assert "no temperature was entered" in followup.note
