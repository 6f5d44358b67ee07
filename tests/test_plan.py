"""Tomorrow's packages from the demo day: the right jobs, computed numbers, safe ranking."""

from __future__ import annotations

import datetime as dt
import math

import pytest
from conftest import ROOT

from workpack.loading import (
    load_findings,
    load_findings_text,
    load_plant_text,
    load_ruleset,
    load_weights,
)
from workpack.model.package import SignalWord, WorkPackage
from workpack.plan import DayPlan, plan_day
from workpack.plan.carry import Carried, IssuedIds
from workpack.topology import Topology

DAY = dt.date(2026, 12, 2)


@pytest.fixture(scope="module")
def ruleset():
    return load_ruleset(ROOT / "rules")


@pytest.fixture(scope="module")
def weights():
    return load_weights(ROOT / "rules" / "search-weights.yaml")


def day_plan(topology: Topology, findings, ruleset, standards, weights,
             crew_hours: float = 200.0) -> DayPlan:
    return plan_day(topology, findings, DAY, ruleset, standards, weights,
                    crew_hours)


@pytest.fixture(scope="module")
def demo(demo_vessel, ruleset, standards, weights) -> DayPlan:
    findings = load_findings(ROOT / "plants" / "demo-vessel-findings.yaml", demo_vessel)
    return day_plan(demo_vessel, findings, ruleset, standards, weights)


def package(plan: DayPlan, rule: str, item: str | None = None) -> WorkPackage:
    return next(p for p in plan.packages
                if p.origin.rule == rule and (item is None or p.item == item))


def test_demo_day_gives_the_jobs_a_supervisor_expects(demo: DayPlan) -> None:
    rules = {(p.origin.rule, p.item) for p in demo.packages}
    assert {("failed-unit-open-delta", "T1"), ("locate-ground", "MSB"),
            ("ground-behind-transformer", "LP-MAIN"), ("low-insulation", "WL-1"),
            ("tripped-breaker", "CR-1"), ("water-ingress-defect", "DK-SO")} <= rules
    # The detector tests fall due on systems that have a ground today: deferred, and said.
    assert ("detector-test", "MSB") not in rules
    assert any(c.text.startswith("detector-test on MSB (detector_test) is due but deferred: "
                                 "the MSB system has a ground today") for c in demo.conflicts)
    # Two findings on the MSB system (lamps and voltmeters) make one search, not two.
    assert sum(1 for p in demo.packages if p.origin.rule == "locate-ground") == 1
    assert package(demo, "locate-ground").origin.findings == ("F1", "F2")


def test_every_package_on_a_grounded_insulated_system_carries_the_second_ground_caution(
    demo: DayPlan,
) -> None:
    grounded = {"MSB", "LP-MAIN"}
    for work in demo.packages:
        if work.system in grounded:
            assert any(c.signal_word is SignalWord.danger and c.id == "second-ground"
                       for c in work.cautions), work.id


def test_open_delta_limit_is_the_computed_capacity(demo: DayPlan) -> None:
    """Three 25 kVA units: √3 × 25 kVA = 43.3 kVA = 57.7 % of 75 kVA (SOURCES.md)."""
    bank = package(demo, "failed-unit-open-delta")
    reading = next(r for r in bank.readings() if "open delta" in r.what)
    assert reading.limit.high == pytest.approx(math.sqrt(3) * 25e3)
    assert "43.3 kVA" in reading.limit.basis


def test_replaced_unit_ratio_and_secondary_voltage_come_from_the_nameplates(demo) -> None:
    """Dd0, 440/115 V: winding ratio 3.826; secondary 115 V line to line."""
    bank = package(demo, "failed-unit-open-delta")
    ratios = [r for s in bank.steps for r in s.readings if "turns ratio" in r.what]
    assert len(ratios) == 3 and ratios[0].expected == pytest.approx(440 / 115)
    secondary = [r for s in bank.restoration for r in s.readings if "secondary" in r.what]
    assert secondary[0].expected == pytest.approx(115.0)


def test_windlass_test_voltage_and_minimum_come_from_ieee_43(demo: DayPlan) -> None:
    """Below 1 kV: 500 V DC; random-wound stator minimum 5 MΩ at 40 °C (IEEE Std 43 (2013),
    test-voltage table and 12.3)."""
    windlass = package(demo, "low-insulation", "WL-1")
    reading = next(r for r in windlass.readings() if r.test_voltage_v is not None)
    assert "500 V DC" in reading.what
    assert reading.limit.low == pytest.approx(5e6)
    assert reading.limit.temperature_corrected_to_c == pytest.approx(40.0)
    assert [p.device for p in windlass.isolation] == ["CB-DK-H-WL1", "CB-WL1"]


def test_restoration_expects_the_computed_healthy_phase_to_earth(demo: DayPlan) -> None:
    """440 V insulated system, healthy: 440/√3 = 254 V each phase to earth."""
    search = package(demo, "locate-ground")
    # Expected only when the search found the ground and its circuit stays isolated.
    readings = next(s for s in search.restoration if s.search_outcome == "found").readings
    assert [r.expected for r in readings] == pytest.approx([440 / math.sqrt(3)] * 3)
    assert "254" in readings[0].basis


def test_hazard_fact_states_the_voltage_of_the_healthy_phases(demo: DayPlan) -> None:
    windlass = package(demo, "low-insulation", "WL-1")
    assert windlass.hazard_facts[0].startswith(
        "Phase B of the 440 V MSB system is grounded: phases A and C stand at up to 348 V")


def test_jobs_that_clear_a_ground_come_first_within_their_priority(demo: DayPlan) -> None:
    ranked = [(p.priority, not p.clears_ground) for p in demo.packages]
    assert ranked == sorted(ranked)
    assert [p.id for p in demo.packages] == sorted(p.id for p in demo.packages)


def test_crew_hours_are_never_overbooked(demo_vessel, ruleset, standards, weights) -> None:
    findings = load_findings(ROOT / "plants" / "demo-vessel-findings.yaml", demo_vessel)
    plan = day_plan(demo_vessel, findings, ruleset, standards, weights, crew_hours=16)
    booked = sum(p.duration_h * p.crew for p in plan.packages if p.id in plan.scheduled)
    assert 0 < booked <= 16
    assert plan.deferred and set(plan.scheduled).isdisjoint(plan.deferred)


def test_two_jobs_on_one_breaker_and_two_vital_loads_are_conflicts(
    demo_vessel, ruleset, standards, weights,
) -> None:
    findings = load_findings_text("""
date: 2026-12-01
findings:
  - {kind: insulation_resistance, at: 2026-12-01T09:00, by: x, where: WL-1,
     test_voltage: 500 V, reading: 1 MΩ, temperature: 20 °C}
  - {kind: breaker_tripped, at: 2026-12-01T09:30, by: x, where: CB-WL1}
  - {kind: insulation_resistance, at: 2026-12-01T10:00, by: x, where: SG-2,
     test_voltage: 500 V, reading: 1 MΩ, temperature: 20 °C}
""", "f.yaml", demo_vessel)
    plan = day_plan(demo_vessel, findings, ruleset, standards, weights)
    texts = [c.text for c in plan.conflicts]
    assert any("both isolate CB-WL1" in t for t in texts)
    # SG-2 (vital, from this day's finding) and FP-1/SG-1 (vital, routine tests due).
    assert any("two vital loads" in t and "SG-2" in t for t in texts)


def test_same_inputs_give_the_same_packages(demo_vessel, ruleset, standards, weights) -> None:
    findings = load_findings(ROOT / "plants" / "demo-vessel-findings.yaml", demo_vessel)
    first = day_plan(demo_vessel, findings, ruleset, standards, weights)
    second = day_plan(demo_vessel, findings, ruleset, standards, weights)
    assert [p.model_dump_json() for p in first.packages] == [
        p.model_dump_json() for p in second.packages]


def test_search_steps_point_at_the_right_package_steps(demo: DayPlan) -> None:
    """'go to step N', 'search its own circuits from step N' and 'test its sections from
    step N' each land on the step they promise."""
    import re

    for work in demo.packages:
        steps = {s.number: s for s in work.steps}
        for step in work.steps:
            for feeder, target in re.findall(
                    r"the ground is below (\S+): close what this step opened, then do final "
                    r"tests (F\d+) ", step.text):
                final = work.final_test(target)
                assert final is not None and final.feeder == feeder
            for feeder, target in re.findall(
                    r"the ground is below (\S+): close it; search its own circuits from step "
                    r"(\d+)", step.text):
                assert steps[int(target)].text.startswith(f"Search on {feeder} ")
            for target in re.findall(r"go to step (\d+)", step.text):
                assert steps[int(target)].text.startswith("Search on ")


def test_final_tests_are_real_isolations_with_the_discharge_warning(demo: DayPlan) -> None:
    """A final test locks (with record fields), proves dead and restores on its own."""
    search = package(demo, "locate-ground")
    final = next(f for f in search.final_tests if f.feeder == "CB-WL1")
    # the heater's feeder before the motor's normal supply, as WL-1's own isolation has it
    assert [p.device for p in final.isolation] == ["CB-DK-H-WL1", "CB-WL1"]
    assert [d.where for d in final.proving_dead] == [
        "both ends of cable C-WL1", "supply terminals of WL-1",
        "anti condensation heater terminals of WL-1"]
    tests = [s for s in final.steps if s.readings]
    assert tests and all(any(c.id == "stored-charge" for c in s.cautions) for s in tests)
    removed = [s.devices for s in final.restoration if s.kind == "remove_lock"]
    assert removed == [("CB-WL1",), ("CB-DK-H-WL1",)]  # in reverse order of application


def test_a_heater_circuit_test_locks_the_motors_main_supply(demo: DayPlan) -> None:
    """The windlass heater is tested in the windlass terminal box, where the 440 V main
    supply arrives too: the final test of the heater feeder locks both (common practice:
    every supply into the enclosure worked in)."""
    search = package(demo, "ground-behind-transformer")
    final = next(f for f in search.final_tests if f.feeder == "CB-DK-H-WL1")
    assert {p.device for p in final.isolation} == {"CB-DK-H-WL1", "CB-WL1"}
    test = next(s for s in final.steps if s.readings)
    assert "terminal box of WL-1" in test.text
    # 115 V heater circuit: IEC 60364-6 style, 500 V DC test for 50-500 V circuits.
    assert test.readings[0].test_voltage_v == pytest.approx(500.0)
    # The fire pump's heater is fed from the engine-room lighting way: its final test
    # locks the fire pump's main breaker, and says the vital load goes out with it.
    lighting = next(f for f in search.final_tests if f.feeder == "CB-ER-L1")
    assert "CB-FP1" in {p.device for p in lighting.isolation}
    assert "Vital load FP-1 goes dead with it" in lighting.steps[0].text


def test_a_tripped_breaker_is_not_opened_by_the_search(demo: DayPlan) -> None:
    search = package(demo, "locate-ground")
    assert "CB-CR1" not in search.switches  # F6: CB-CR1 found tripped
    assert "CB-WL1" in search.switches
    # The windlass job locks CB-WL1, which the search opens and recloses: a conflict.
    assert any("opens and recloses CB-WL1" in c.text for c in demo.conflicts)


def test_urgent_jobs_that_do_not_fit_and_findings_no_rule_takes_are_said(
    demo_vessel, ruleset, standards, weights,
) -> None:
    findings = load_findings_text("""
date: 2026-12-01
findings:
  - {kind: transformer_unit, at: 2026-12-01T10:00, by: x, where: T1, unit: BC, state: failed,
     load: 48 kVA}
  - {kind: defect, at: 2026-12-01T11:00, by: x, where: SCB, text: shore box flooded,
     severity: high}
""", "f.yaml", demo_vessel)
    plan = day_plan(demo_vessel, findings, ruleset, standards, weights, crew_hours=1)
    texts = [c.text for c in plan.conflicts]
    assert any("(priority 1" in t and "does not fit in 1 person-hours" in t for t in texts)
    assert any(t.startswith("finding F2 (defect at SCB, high) matched no rule") for t in texts)


def test_printed_bounds_are_the_judged_bounds(demo: DayPlan) -> None:
    """Bands are rounded inward to the three figures the package prints, so a reading on
    the printed bound passes and nothing outside the computed band does."""
    for work in demo.packages:
        for reading in work.readings():
            limit = reading.limit
            if limit is None or reading.expected is None or reading.tolerance is None:
                continue
            for bound in (limit.low, limit.high):
                assert bound is not None and float(f"{bound:.3g}") == bound
            assert limit.low >= reading.expected - reading.tolerance - 1e-9
            assert limit.high <= reading.expected + reading.tolerance + 1e-9


def test_a_search_step_says_the_ground_moves_with_a_load_transferred_onto_the_same_system(
        ruleset, standards, weights) -> None:
    """Issue 11.3: the package words its search steps with the same sentences as
    ``locate``, so it carries the caveat too: a vital load moved to an alternate supply
    on the same system takes its own ground along, and the indication stays."""
    text = (ROOT / "plants" / "demo-site.yaml").read_text(encoding="utf-8").replace(
        "{id: CB-GSB-VSB, kind: circuit_breaker, from: GSB,",
        "{id: CB-GSB-VSB, kind: circuit_breaker, from: MSB,")
    _, topology = load_plant_text(text, "site-one-system.yaml")
    findings = load_findings_text(
        "date: 2026-12-01\nfindings:\n  - {kind: insulation_monitor, at: 2026-12-01T09:00, "
        "by: A. Tester, where: IMD-MSB, reading: 12 kΩ}\n", "findings.yaml", topology)
    search = package(day_plan(topology, findings, ruleset, standards, weights),
                     "monitor-alarm")
    [step] = [s for s in search.steps if s.kind == "search" and "Open CB-VSB" in s.text]
    assert "First transfer DP-1, FP-1 to the alternate supply." in step.text
    clears = next(line for line in step.text.splitlines() if line.startswith("If it clears"))
    for load in ("DP-1", "FP-1"):
        assert (f"if the ground is in {load} itself it moves with the transfer, since its "
                "alternate supply is on this system: the indication will not clear") in clears


MERGED = """\
date: 2026-12-01
findings:
  - {kind: lamps, at: 2026-12-01T06:50, by: T. Marrow, where: GD-MSB,
     lamps: {A: bright, B: dim, C: normal}}
  - {kind: phase_voltages, at: 2026-12-01T07:05, by: T. Marrow, where: GD-ESB,
     volts: {A: 348 V, B: 236 V, C: 209 V}, intermittent: true}
  - {kind: defect, at: 2026-12-01T13:20, by: T. Marrow, where: DK-SO, severity: high,
     text: deck socket outlet cover cracked}
  - {kind: defect, at: 2026-12-01T14:05, by: S. Quayle, where: DK-SO, severity: urgent,
     text: water standing inside the enclosure}
  - {kind: breaker_tripped, at: 2026-12-01T11:00, by: S. Quayle, where: CB-CR1,
     indication: overcurrent}
  - {kind: breaker_tripped, at: 2026-12-01T15:30, by: S. Quayle, where: CB-CR1,
     indication: earth fault}
  - {kind: transformer_unit, at: 2026-12-01T10:15, by: S. Quayle, where: T1, unit: AB,
     state: overheating}
  - {kind: transformer_unit, at: 2026-12-01T10:20, by: S. Quayle, where: T1, unit: BC,
     state: noisy}
"""


def test_every_finding_of_a_merged_job_reaches_its_package(demo_vessel, ruleset, standards,
                                                           weights) -> None:
    """Review of issue 11: two findings that make one job (a rule's one_per) kept only the
    first finding's context, so the second defect's text appeared nowhere in the package,
    and a graver second finding did not raise the priority."""
    findings = load_findings_text(MERGED, "findings.yaml", demo_vessel)
    plan = day_plan(demo_vessel, findings, ruleset, standards, weights)
    texts = {p.origin.rule: "\n".join([p.title, *(s.text for s in p.steps)])
             for p in plan.packages}
    defect = package(plan, "water-ingress-defect", "DK-SO")
    assert defect.origin.findings == ("F3", "F4")
    assert ("Reported: deck socket outlet cover cracked; water standing inside the "
            "enclosure.") in texts["water-ingress-defect"]
    assert defect.priority_reason.startswith("urgent: ")
    assert "(overcurrent) (earth fault)" in texts["tripped-breaker"]
    assert "unit AB overheating, BC noisy" in texts["unit-running-hot"]
    # The search answers a lamp check and an intermittent (arcing) ground: urgent, so
    # priority 1 by the rule ("1 if diagnosis.severity == 'urgent'"), whichever came first.
    search = package(plan, "locate-ground")
    assert search.origin.findings == ("F1", "F2") and search.priority == 1


def test_a_job_carried_from_an_earlier_day_returns_above_new_routine_work(
        demo_vessel, ruleset, standards, weights, demo: DayPlan) -> None:
    """Issue 12.3: within a priority, a routine job planned before and not done comes
    before new routine work, and a job begun (locks on) comes before everything."""
    findings = load_findings(ROOT / "plants" / "demo-vessel-findings.yaml", demo_vessel)
    inspection, survey = package(demo, "bank-inspection"), package(
        demo, "periodic-insulation-survey", "SG-1")
    assert (inspection.priority, survey.priority) == (4, 4)
    order = [p.id for p in demo.packages]
    assert order.index(inspection.id) < order.index(survey.id)  # shorter first
    keys = demo.keys
    windlass = package(demo, "low-insulation", "WL-1")
    carried = Carried(issued=IssuedIds(open={keys[survey.id]: "WP-SKL-20261201-05",
                                             keys[windlass.id]: "WP-SKL-20261201-02"}),
                      returning=frozenset({keys[survey.id], keys[windlass.id]}),
                      held=frozenset({keys[windlass.id]}))
    again = plan_day(demo_vessel, findings, DAY, ruleset, standards, weights, 200.0,
                     carried=carried)
    ids = [p.id for p in again.packages]
    assert ids[0] == "WP-SKL-20261201-02"  # begun: first, under its own id
    by_rule = {(p.origin.rule, p.item): p.id for p in again.packages}
    assert ids.index("WP-SKL-20261201-05") < ids.index(by_rule["bank-inspection", "T1"])
    assert len(set(ids)) == len(ids) and "WP-SKL-20261202-01" in ids
