"""Every shipped rule's package is safe to follow to the letter, in the order printed.

Planned on generated plants (tests/scenariogen.py) with and without a ground on the
system, every package of every rule in rules/ is checked: what a step disconnects is
reconnected; each lock comes off in its own step, in reverse order, by whoever applied
it, and has record fields (results sheet and PDF form); nothing is energised before the
last lock is off; the item goes back into service (vital loads back from their standby);
no caution states a fact the package contradicts; with a ground on the system only the
expected readings change. The lock-out and release order is the energy-control sequence
of OSHA 29 CFR 1910.147(d)-(e) and NFPA 70E (2021) 120.5 as SOURCES.md records them
(each lock removed by whoever applied it; everyone clear and told before energising);
the rest is common practice.
"""

from __future__ import annotations

import datetime as dt
import re
from collections import defaultdict
from collections.abc import Iterator, Sequence
from pathlib import Path

import pytest
import yaml
from conftest import ROOT
from pypdf import PdfReader
from scenariogen import scenario

from workpack.calculations import unit_windings
from workpack.checks import run_checks
from workpack.forms import CHOSEN, chosen_final_fields, results_template
from workpack.loading import load_ruleset, load_weights
from workpack.model.findings import Findings
from workpack.model.package import FinalTest, IsolationPoint, ProvingDead, Step, WorkPackage
from workpack.model.plant import Plant, Transformer
from workpack.plan import DayPlan, plan_day
from workpack.render.pdf import field_name, render_package
from workpack.topology import Topology

DAY = dt.date(2026, 12, 2)
SEEDS = range(4)


def shipped_rule_ids() -> set[str]:
    """Rule ids as written in rules/*.yaml, read without the loader."""
    ids = set()
    for path in sorted((ROOT / "rules").glob("*.yaml")):
        data = yaml.safe_load(path.read_text(encoding="utf-8"))
        ids |= {rule["id"] for rule in data.get("rules", ())}
    return ids


def library_needs() -> dict[str, set[str]]:
    data = yaml.safe_load((ROOT / "rules" / "cautions.yaml").read_text(encoding="utf-8"))
    return {entry["id"]: set(entry.get("needs", ())) for entry in data["cautions"]}


@pytest.fixture(scope="module")
def days(standards) -> list[tuple[int, bool, Topology, DayPlan]]:
    ruleset = load_ruleset(ROOT / "rules")
    weights = load_weights(ROOT / "rules" / "search-weights.yaml")
    out = []
    for seed in SEEDS:
        for ground in (False, True):
            plant_data, findings_data = scenario(seed, ground)
            plant = Plant.model_validate(plant_data)
            problems, topology = run_checks(plant)
            assert not problems and topology is not None, problems
            findings = Findings.model_validate(findings_data)
            day = plan_day(topology, findings, DAY, ruleset, standards, weights, 1e4)
            out.append((seed, ground, topology, day))
    return out


def packages(days) -> Iterator[tuple[bool, Topology, WorkPackage]]:
    for _, ground, topology, day in days:
        for work in day.packages:
            yield ground, topology, work


# --- every rule is exercised ------------------------------------------------------------


def test_every_shipped_rule_gives_packages_on_the_generated_plants(days) -> None:
    shipped = shipped_rule_ids()
    assert len(shipped) >= 14  # the rule files hold at least the set
    made = {work.origin.rule for _, _, work in packages(days)}
    assert shipped - made == set(), f"rules never exercised: {sorted(shipped - made)}"
    grounded = {work.origin.rule for ground, _, work in packages(days) if ground}
    healthy = {work.origin.rule for ground, _, work in packages(days) if not ground}
    # Most rules are exercised both ways; the ground rules need a ground, the detector
    # and monitor tests are deferred on a system that has one.
    assert {"locate-ground", "ground-behind-transformer", "second-ground",
            "monitor-alarm"} <= grounded - healthy
    assert shipped - {"locate-ground", "ground-behind-transformer", "second-ground",
                      "monitor-alarm", "monitor-test"} <= grounded & healthy


# --- the order a technician follows ---------------------------------------------------


def scopes(work: WorkPackage) -> Iterator[tuple[str, Sequence[IsolationPoint],
                                                 Sequence[ProvingDead], Sequence[Step],
                                                 Sequence[Step]]]:
    """The package's own isolation, then each final test's: (name, isolation, proving
    dead, steps, restoration)."""
    yield work.id, work.isolation, work.proving_dead, work.steps, work.restoration
    for final in work.final_tests:
        yield (f"{work.id} {final.id}", final.isolation, final.proving_dead, final.steps,
               final.restoration)


DISCONNECTS = re.compile(r"\bdisconnect", re.I)


def test_what_a_step_disconnects_is_reconnected_before_the_locks_come_off(days) -> None:
    checked = 0
    for _, _, work in packages(days):
        for name, isolation, _, steps, restoration in scopes(work):
            kinds = [s.kind for s in restoration]
            for step in steps:
                if not DISCONNECTS.search(step.text):
                    continue
                checked += 1
                undo = [s for s in restoration if s.kind == "reconnect" and
                        s.undoes == step.number]
                assert len(undo) == 1, f"{name} step {step.number}: never reconnected"
                assert step.reconnect == undo[0].text
                if isolation:
                    assert restoration.index(undo[0]) < kinds.index("remove_lock"), name
    assert checked > 20


def test_each_lock_comes_off_in_its_own_step_in_reverse_order_by_who_applied_it(days) -> None:
    checked = 0
    for _, _, work in packages(days):
        for name, isolation, _, _, restoration in scopes(work):
            removals = [s for s in restoration if s.kind == "remove_lock"]
            if not isolation:
                assert not removals, name
                continue
            checked += 1
            order = [p.device for p in sorted(isolation, key=lambda p: p.order)]
            assert [s.devices for s in removals] == [(d,) for d in reversed(order)], name
            for step in removals:
                assert "only the person who applied them removes them" in step.text


def test_nothing_is_energised_before_the_last_lock_is_off(days) -> None:
    """Gate first; reconnect and close-up before any lock comes off; every energising
    step, every rule check and the return to service after the last lock."""
    for _, _, work in packages(days):
        for name, isolation, _, _, restoration in scopes(work):
            if not isolation:
                continue
            kinds = [s.kind for s in restoration]
            first_off = kinds.index("remove_lock")
            last_off = len(kinds) - 1 - kinds[::-1].index("remove_lock")
            assert kinds[0] == "gate", name
            assert kinds[first_off:last_off + 1] == ["remove_lock"] * len(isolation), name
            assert {"reconnect", "close_up"} >= set(kinds[1:first_off]) - {"check"}, name
            assert "close_up" in kinds[1:first_off], name
            energise = [i for i, k in enumerate(kinds) if k == "energise"]
            assert energise and min(energise) > last_off, name
            assert kinds[-1] == "return_to_service", name
            for step in restoration[:last_off + 1]:
                assert not re.search(r"\b(close|energi[sz]e) (it|cb|[A-Z]{1,4}-)", step.text,
                                     re.I) or step.kind == "gate", (name, step.text)


def test_every_isolation_returns_its_item_to_service_vital_loads_from_standby(days) -> None:
    vital_checked = 0
    for _, topology, work in packages(days):
        for name, isolation, _, steps, restoration in scopes(work):
            if not isolation:
                continue
            back = restoration[-1]
            out = next(s for s in steps if s.kind == "take_out_of_service")
            assert out.before_isolation and out.number == 1, name
            vital = {load.id for load in topology.plant.loads
                     if load.vitality.value == "vital"}
            dead = {p.device for p in isolation}
            named = {v for v in vital if re.search(rf"\b{re.escape(v)}\b", out.text)}
            if named:
                vital_checked += 1
                assert "standby or alternate supply" in back.text, name
                assert all(v in back.text for v in named), name
            assert dead  # an isolation without points would have nothing to return
    assert vital_checked > 0


def test_a_ground_on_the_system_changes_only_the_expected_readings(days) -> None:
    """Same seed, same rule, same item: with and without a ground the restoration has
    the same steps in the same order; only the expected readings differ (healthy V_LL/√3
    against as found)."""
    restorations: dict[tuple[int, str, str, bool], WorkPackage] = {}
    for seed, ground, _, day in days:
        for work in day.packages:
            restorations[(seed, work.origin.rule, work.item, ground)] = work
    compared = 0
    for (seed, rule, item, ground), work in restorations.items():
        other = restorations.get((seed, rule, item, not ground))
        if ground or other is None or not work.isolation:
            continue
        compared += 1
        assert [s.kind for s in work.restoration] == [s.kind for s in other.restoration]
        healthy = [r for s in work.restoration for r in s.readings if "to earth at" in r.what]
        found = [r for s in other.restoration for r in s.readings if "to earth at" in r.what]
        assert len(healthy) == len(found)
        grounded_system = other.hazard_facts != ()
        if grounded_system:
            assert all(r.expected is None for r in found), (rule, item)
    assert compared > 20


# --- record fields ------------------------------------------------------------------------


def test_every_lock_has_its_record_fields_in_the_results_sheet(days) -> None:
    for _, _, work in packages(days):
        sheet = results_template(work, "0" * 64)
        data = yaml.safe_load(sheet)
        for name, isolation, _, _, _ in scopes(work):
            scope = data
            if " F" in name:
                scope = data["final_tests"][name.split()[-1]]
            for point in isolation:
                assert set(scope["isolation"][point.device]) == {
                    "lock", "tag", "applied_by", "applied_at", "removed_by", "removed_at"}


def test_every_lock_has_its_pdf_form_fields(days) -> None:
    """One package of each rule, with and without a ground, rendered: each lock's number,
    tag, who and when applied it, and who and when removed it (in its restoration step),
    in the package and in each final test."""
    first: dict[tuple[str, bool], WorkPackage] = {}
    for ground, _, work in packages(days):
        first.setdefault((work.origin.rule, ground), work)
    for work in first.values():
        fields = set(PdfReader(_pdf(work)).get_fields() or {})
        # The final tests are printed once, for whichever circuit the search ends at: each
        # final test's own field is then one that a printed blank of that procedure stands
        # for (``forms.chosen_final_fields``), with the circuit's id in ``final_at``.
        for final in work.final_tests:
            assert field_name("final_at") in fields
            fields |= {field_name("final", final.id, *target)
                       for generic, targets in chosen_final_fields(final).items()
                       if field_name("final", CHOSEN, *generic) in fields
                       for target in targets}
        for name, isolation, proving, _, restoration in scopes(work):
            scope = ("final", name.split()[-1]) if " F" in name else ()
            for point in isolation:
                for part in ("number", "applied_by", "applied_at", "removed_by",
                             "removed_at"):
                    assert field_name(*scope, "lock", point.device, part) in fields, name
                assert field_name(*scope, "tag", point.device, "number") in fields
            for step in restoration:
                assert field_name(*scope, "restore", step.number, "done") in fields
            if proving:
                assert field_name(*scope, "tester", "before") in fields


def _pdf(work: WorkPackage) -> Path:
    import io

    return io.BytesIO(render_package(work))  # type: ignore[return-value]


# --- cautions never contradict the package ------------------------------------------------


def facts(topology: Topology, work: WorkPackage, final: FinalTest | None) -> set[str]:
    """What the package (or one final test) does, read from the package itself."""
    isolation = final.isolation if final else work.isolation
    proving = final.proving_dead if final else work.proving_dead
    steps = [*(final.steps if final else work.steps),
             *(final.restoration if final else work.restoration)]
    found = {"isolated" if isolation else "live"}
    if proving:
        found.add("proves_dead")
    if any(r.test_voltage_v for s in steps for r in s.readings):
        found.add("insulation_test")
    places = final.elements if final else (work.item,)
    if isolation and any(isinstance(topology.elements[p], Transformer) for p in places):
        found.add("isolates_transformer")
    if any(s.kind == "search" for s in work.steps) and final is None:
        found.add("search")
    return found


CLAIMS = re.compile(r"in the isolation|prove dead|proved dead|isolated and proved|"
                    r"only when isolated|locked open above", re.I)


def test_no_caution_states_a_fact_the_package_contradicts(days) -> None:
    needs = library_needs()
    live_inspections = 0
    for _, topology, work in packages(days):
        for final in (None, *work.final_tests):
            have = facts(topology, work, final)
            cautions = list(final.cautions if final else work.cautions)
            steps = final.steps if final else work.steps
            cautions += [c for s in steps for c in s.cautions]
            for caution in cautions:
                if caution.id is not None:
                    assert needs[caution.id] <= have, (work.id, caution.id, have)
                if CLAIMS.search(caution.text):
                    assert {"isolated", "proves_dead"} <= have, (work.id, caution.text)
            if final is None and not work.isolation and not work.final_tests:
                live_inspections += work.origin.rule in ("bank-inspection",
                                                         "unit-running-hot")
                for step in work.steps:
                    assert not CLAIMS.search(step.text), (work.id, step.text)
    assert live_inspections > 0


def test_the_bank_inspection_is_live_with_live_cautions_and_the_replacement_is_isolated(
    days,
) -> None:
    for _, _, work in packages(days):
        ids = {c.id for c in work.cautions}
        if work.origin.rule == "bank-inspection":
            assert not work.isolation and not work.proving_dead
            assert "live-inspection" in ids and "transformer-backfeed" not in ids
        if work.origin.rule.startswith("failed-unit"):
            assert work.isolation and work.proving_dead
            assert {"transformer-backfeed", "stored-charge"} <= ids
            assert "live-inspection" not in ids


# --- the day's findings and the job -------------------------------------------------------


def test_detector_and_monitor_tests_wait_for_the_ground_to_be_cleared(days) -> None:
    for _, ground, _, day in days:
        tests = [p for p in day.packages if p.origin.rule in ("detector-test", "monitor-test")]
        deferred = [c.text for c in day.conflicts if "is due but deferred" in c.text]
        if ground:
            # MAIN0, MAIN1 and L1 have a ground; L2 does not and is tested.
            assert {p.item for p in tests} == {"L2"}
            assert len(deferred) == 4 and all("has a ground today" in t for t in deferred)
        else:
            assert {p.item for p in tests} == {"MAIN0", "MAIN1", "L1", "L2", "PM"}
            assert not deferred
        for work in tests:  # what is issued expects a healthy system, and it is one
            assert work.system not in {"MAIN0", "MAIN1", "L1"} or not ground


def test_a_search_keeps_the_faulted_circuit_isolated_and_expects_healthy_only_then(
    days,
) -> None:
    searches = [w for _, _, w in packages(days) if w.origin.rule in (
        "locate-ground", "ground-behind-transformer", "monitor-alarm", "second-ground")]
    assert {w.origin.rule for w in searches} == {"locate-ground", "ground-behind-transformer",
                                                  "monitor-alarm", "second-ground"}
    for work in searches:
        close = work.restoration[0].text
        assert "except one whose final tests found the ground" in close
        assert "stays open, locked and tagged" in close
        for step in work.restoration:
            expects = [r for r in step.readings if r.expected is not None or (
                r.limit is not None and r.limit.low is not None)]
            if expects:  # healthy expected only once the faulted circuit stays isolated
                assert step.search_outcome == "found", (work.id, step.text)
                assert work.origin.rule != "second-ground"
        for final in work.final_tests:
            assert final.restoration[0].kind == "gate"
            assert "stays isolated for its repair" in final.restoration[0].text


def test_a_tripped_breaker_on_an_insulated_system_is_tested_phase_to_phase(days) -> None:
    """A single ground does not trip an insulated system: test between phases too, and
    look for a second ground (DOMAIN.md; SOURCES.md, Mitolo ch. 9)."""
    for _, _, work in packages(days):
        if work.origin.rule != "tripped-breaker":
            continue
        whats = [r.what for r in work.readings()]
        assert any(re.search(r"\bC-\S+ A-B,", w) for w in whats) or any(
            w.startswith("conductors ") and " A-B," in w for w in whats)
        assert any(c.id == "trip-on-insulated-system" for c in work.cautions)
        assert any("second ground" in line for line in work.acceptance)


def test_megger_cautions_name_what_a_dc_test_voltage_damages_or_falsifies(days) -> None:
    text = next(c.text for _, _, w in packages(days) for c in w.cautions
                if c.id == "disconnect-electronics")
    for thing in ("ground-detector lamps and their transformers", "insulation monitors",
                  "voltage transformers", "meters", "voltage-regulator sensing",
                  "surge protective devices", "electronics and drives"):
        assert thing in text
    boards = [w for _, _, w in packages(days)
              if w.origin.rule == "periodic-insulation-survey" and w.item == "PM"]
    assert boards
    for work in boards:
        assert any(c.id == "insulation-test-board" for c in work.cautions)
        opened = next(s for s in work.steps if s.reconnect)
        assert opened.text.startswith("Open every outgoing feeder of PM")
        assert any("Close the outgoing feeders of PM" in s.text for s in work.restoration)


# --- turns ratio: what is actually compared ------------------------------------------------


@pytest.mark.parametrize(("group", "expected"), [
    # IEC 60076-1 (SOURCES.md): clock number × 30° is the lag of LV behind HV. Dyn11: LV
    # a-n leads HV phase A by 30°, in phase with the HV line voltage A-B; Dyn1: a-n lags
    # by 30°, in phase with A-C; Dd0: a-b with A-B; Yd1: a-b (V_ab leads V_a by 30°, V_a
    # lags V_A by 30°) in phase with A-N. Pairings derived from the clock definition.
    ("Dyn11", (("A-B", "a-n"), ("B-C", "b-n"), ("C-A", "c-n"))),
    ("Dyn1", (("B-A", "b-n"), ("C-B", "c-n"), ("A-C", "a-n"))),
    ("Dd0", (("A-B", "a-b"), ("B-C", "b-c"), ("C-A", "c-a"))),
    ("Yd1", (("A-N", "a-b"), ("B-N", "b-c"), ("C-N", "c-a"))),
])
def test_each_unit_pairs_the_windings_the_vector_group_puts_on_one_core(
    group: str, expected: tuple[tuple[str, str], ...],
) -> None:
    assert unit_windings(group, ("A", "B", "C")) == expected
    # Independently: the LV winding's phasor is parallel to its HV winding's, at the
    # clock angle, with numpy's complex arithmetic.
    import numpy as np

    clock = int(re.sub(r"\D", "", group))
    hv = {p: np.exp(1j * np.radians(a)) for p, a in (("A", 0), ("B", -120), ("C", 120))}
    lv = {p.lower(): v * np.exp(-1j * np.radians(30 * clock)) for p, v in hv.items()}
    hv["N"] = lv["n"] = 0

    def phasor(pair: str, side: dict) -> complex:
        x, y = pair.split("-")
        return side[x] - side[y]

    for hv_pair, lv_pair in expected:
        ratio = phasor(lv_pair, lv) / phasor(hv_pair, hv)
        assert abs(np.angle(ratio)) < 1e-9


def test_dyn11_turns_ratio_compares_the_440_v_delta_with_the_120_v_wye_winding(days) -> None:
    """A 440 V delta / 208 V wye bank: each unit's HV winding carries the 440 V line
    voltage, its LV winding 208/√3 = 120.1 V (SOURCES.md: wye from 120 V windings gives
    208 V): ratio 3.664, not 440/208."""
    work = next(w for _, _, w in packages(days) if w.origin.rule == "failed-unit-no-fallback")
    ratios = [r for r in work.readings() if r.what.startswith("turns ratio")]
    assert len(ratios) == 3
    assert ratios[0].expected == pytest.approx(440 / (208 / 3 ** 0.5))
    assert "HV A-B (LV a-n)" in ratios[0].what
    assert "HV winding 440 V (delta: the line voltage)" in ratios[0].basis
    assert "LV winding 120.1 V (wye: 208 V / √3)" in ratios[0].basis


def test_a_rule_that_disconnects_without_saying_how_it_is_reconnected_is_refused(
    tmp_path,
) -> None:
    import shutil

    from workpack.errors import InputError

    folder = tmp_path / "rules"
    folder.mkdir()
    shutil.copy(ROOT / "rules" / "cautions.yaml", folder / "cautions.yaml")
    (folder / "mine.yaml").write_text("""rules:
  - id: loose
    title: "Fix {{ item.id }}"
    applies_to: {findings: [defect]}
    job: {kind: fix, priority: "3", crew: 1, hours: 1}
    isolate: true
    steps:
      - text: Disconnect the supply cable and clean the terminals.
    restoration:
      - text: Remove the locks and close the breaker.
""", encoding="utf-8")
    with pytest.raises(InputError) as caught:
        load_ruleset(folder)
    message = caught.value.format_message()
    assert "rules[0].steps[0].reconnect: rule loose: the step disconnects something" in message
    assert "the planner writes the removal of locks" in message


def test_grouped_by_rule_each_package_has_a_complete_restoration(days) -> None:
    """A summary that reads well on failure: rule → packages that isolate but whose
    restoration lacks a step kind."""
    missing: dict[str, set[str]] = defaultdict(set)
    for _, _, work in packages(days):
        if not work.isolation:
            continue
        kinds = {s.kind for s in work.restoration}
        for kind in ("gate", "close_up", "remove_lock", "energise", "return_to_service"):
            if kind not in kinds:
                missing[work.origin.rule].add(kind)
    assert dict(missing) == {}


# --- a final test's results: recorded, judged, closed out, audited -----------------------


def _search_with_final(days) -> tuple[WorkPackage, FinalTest]:
    work = next(w for g, _, w in packages(days) if g and w.origin.rule == "locate-ground")
    final = next(f for f in work.final_tests if len(f.isolation) > 1 or f.steps[-1].readings)
    return work, final


def _found_in(work: WorkPackage, final: FinalTest, left_on: bool = True,
              removed_by: str = "S. Quayle"):
    from workpack.model.results import FinalTestResults, LockRecord, Results

    found = next(s for s in final.steps if s.readings)
    readings = {r.id: {"value": "0.05", "temperature": "20"} for r in found.readings}
    readings |= {r.id: {"value": "254"} for s in work.restoration
                 if s.search_outcome == "found" for r in s.readings}
    readings |= {r.id: {"value": "300"} for s in work.steps if not s.optional
                 for r in s.readings}
    locks = {p.device: LockRecord(lock=f"L-{p.order}", tag=f"T-{p.order}",
                                  applied_by="S. Quayle", applied_at="09:00",
                                  removed_by=None if left_on else removed_by,
                                  removed_at=None if left_on else "11:00")
             for p in final.isolation}
    record = FinalTestResults(
        tester_proven_before=True, tester_proven_after=True, isolation=locks,
        proving_dead={i: dict.fromkeys(d.pairs, "0") for i, d in
                      enumerate(final.proving_dead, start=1)},
        steps={s.number: {"done": True} for s in final.steps},
        restoration={} if left_on else {s.number: {"done": True}
                                        for s in final.restoration},
        locks_left_on="ground found: stays isolated for its repair" if left_on else None)
    return Results(
        package=work.id, completed_by="S. Quayle", supervisor="R. Tamsin",
        completed_on=DAY, ground_found_at=found.readings[0].element or final.feeder,
        steps={s.number: {"done": True} for s in work.steps if not s.optional},
        restoration={s.number: {"done": True} for s in work.restoration
                     if s.search_outcome != "not_found"},
        readings=readings, final_tests={final.id: record})


def test_a_final_test_that_finds_the_ground_keeps_its_locks_on_and_the_audit_sees_them(
    days, standards,
) -> None:
    from workpack.evaluate import check_results, evaluate
    from workpack.render.closeout import render_closeout

    work, final = _search_with_final(days)
    results = _found_in(work, final)
    assert list(check_results(work, results)) == []
    judged = evaluate(work, results, standards)
    # The reading that found the ground is below its minimum: that is the find, and it
    # becomes tomorrow's finding; no lock, step or proving-dead entry is missing.
    assert {d.kind for d in judged.deviations} == {"reading"}
    left = [f"{final.id}:{p.device}" for p in final.isolation]
    assert list(judged.locks_not_removed) == left
    assert all(entry.split(": ")[0] in left for entry in judged.locks_left_on)
    assert judged.followups
    # Final tests the search did not end at ask for nothing.
    assert not any(d.ref.startswith(("F", "reading")) and not d.ref.startswith(final.id)
                   for d in judged.deviations if d.kind != "reading")
    text = "\n".join(p.extract_text() for p in PdfReader(_pdf_bytes(
        render_closeout(work, judged, None, results=results))).pages)
    assert "LEFT ON" in text and "L-1" in text


def test_a_final_test_restored_by_someone_else_or_not_at_all_is_a_deviation(
    days, standards,
) -> None:
    from workpack.evaluate import evaluate
    from workpack.model.results import Results

    work, final = _search_with_final(days)
    other = evaluate(work, _found_in(work, final, left_on=False, removed_by="A. Other"),
                     standards)
    texts = [d.text for d in other.deviations if d.kind == "lock"]
    assert texts and all("each lock is removed by whoever applied it" in t for t in texts)
    assert all(not d.fails for d in other.deviations if d.kind == "lock")
    data = _found_in(work, final, left_on=False).model_dump()
    data["final_tests"][final.id]["isolation"][final.isolation[0].device]["removed_by"] = None
    never = evaluate(work, Results.model_validate(data), standards)
    assert any(d.fails and "never recorded as removed" in d.text for d in never.deviations)


def test_final_test_fields_of_the_pdf_read_back_into_the_same_results(days) -> None:
    from workpack.forms import results_from_fields
    from workpack.model.results import Results
    from workpack.render.pdf import split_field_name

    work, final = _search_with_final(days)
    device = final.isolation[0].device
    fields = {field_name("final", final.id, "lock", device, "number"): "L-1",
              field_name("final", final.id, "lock", device, "applied_by"): "S. Quayle",
              field_name("final", final.id, "lock", device, "removed_by"): "S. Quayle",
              field_name("final", final.id, "dead", 1, final.proving_dead[0].pairs[0]): "0",
              field_name("final", final.id, "tester", "before"): "/Yes",
              field_name("final", final.id, "restore", 2, "done"): "/Yes",
              field_name("final", "F99", "step", 1, "done"): "/Off",
              field_name("ground_found_at"): final.feeder}
    results = Results.model_validate(results_from_fields(work, fields, split_field_name))
    record = results.final_tests[final.id]
    assert record.isolation[device].lock == "L-1" and record.tester_proven_before
    assert record.restoration[2].done and "F99" not in results.final_tests
    assert results.ground_found_at == final.feeder


def test_the_one_printed_final_procedure_reads_back_as_the_circuit_written_in_it(
        days) -> None:
    """The final tests are printed once: blanks of scope final:chosen: filled for the
    circuit whose id is written in final_at read back as that final test's own record; a
    filled procedure with no id, or a lock row the circuit does not have, is refused."""
    from workpack.forms import FormFieldError, results_from_fields
    from workpack.model.results import Results
    from workpack.render.pdf import split_field_name

    work, final = _search_with_final(days)
    points = sorted(final.isolation, key=lambda p: p.order)
    readings = [r for s in (*final.steps, *final.restoration) for r in s.readings]
    pair = final.proving_dead[0].pairs[0]
    fields = {field_name("final_at"): final.id,
              field_name("final", CHOSEN, "lock", 1, "number"): "L-1",
              field_name("final", CHOSEN, "lock", 1, "applied_by"): "S. Quayle",
              field_name("final", CHOSEN, "dead", 1, pair): "0",
              field_name("final", CHOSEN, "tester", "before"): "/Yes",
              field_name("final", CHOSEN, "restore", 4, "done"): "/Yes",
              field_name("final", CHOSEN, "reading", "T1"): "0.2",
              field_name("final", CHOSEN, "step", 2, "done"): "/Off"}
    results = Results.model_validate(results_from_fields(work, fields, split_field_name))
    record = results.final_tests[final.id]
    assert record.isolation[points[0].device].lock == "L-1"
    assert str(record.proving_dead[1][pair]) == "0" and record.tester_proven_before
    removals = [s.number for s in final.restoration if s.kind == "remove_lock"]
    assert removals and all(record.restoration[n].done for n in removals)
    assert str(results.readings[readings[0].id].value) == "0.2"
    assert list(results.final_tests) == [final.id]
    with pytest.raises(FormFieldError, match="final_at"):
        results_from_fields(work, {k: v for k, v in fields.items() if k != "final_at"},
                            split_field_name)
    extra = field_name("final", CHOSEN, "lock", len(points) + 1, "number")
    with pytest.raises(FormFieldError, match="no such blank"):
        results_from_fields(work, {**fields, extra: "L-9"}, split_field_name)


def _pdf_bytes(data: bytes):
    import io

    return io.BytesIO(data)


def test_every_blank_of_a_package_is_made_by_one_method(days) -> None:
    """Issue 11.6: the close-out record fills the package's blanks by overriding the one
    method that makes them, so that method must make every form field of the PDF (the
    final tests' included) and nothing else."""
    from pypdf import PdfReader

    from workpack.render.pdf import Blank, Cell, PackagePdf

    made: list[str] = []

    class Recording(PackagePdf):
        def blank(self, blank: Blank) -> Cell:
            made.append(blank.name)
            return super().blank(blank)

    work, _ = _search_with_final(days)
    fields = PdfReader(_pdf_bytes(Recording(work).render())).get_fields() or {}
    assert made and sorted(made) == sorted(fields)
