"""The restoration sequence written from an isolation: order and wording on small cases.

Release from lockout as SOURCES.md records OSHA 29 CFR 1910.147(e) and NFPA 70E (2021)
120.5: work area checked, people clear and told, each lock removed by whoever applied
it; then energise. The rest (reconnect before close-up, normal supply first) is common
practice.
"""

from __future__ import annotations

from workpack.model.package import IsolationPoint, Reading, Step
from workpack.restoration import (
    AFTER_NORMAL_SUPPLY,
    IN_SERVICE,
    Restoring,
    number_steps,
    restoration_steps,
)


def point(order: int, device: str, kind: str = "circuit_breaker", *,
          already_open: bool = False, cuts: str = "normal supply") -> IsolationPoint:
    return IsolationPoint(order=order, device=device, device_kind=kind, location=None,
                          cuts=cuts, voltage_v=440.0, already_open=already_open)


def check(text: str, *readings: Reading) -> Step:
    return Step(number=0, text=text, kind="check", readings=readings)


def test_the_order_is_gate_reconnect_close_up_locks_energise_checks_return() -> None:
    steps = restoration_steps(Restoring(
        item_label="M-1", gate="Restore only when accepted.",
        points=[point(1, "CB-1"), point(2, "CB-H", cuts="heater supply into M-1"),
                point(3, "CB-TIE", already_open=True, cuts="tie")],
        normal_devices=frozenset({"CB-1"}), reconnects=[(2, "Reconnect the cable."),
                                                      (4, "Reconnect the filter.")],
        rule_steps={AFTER_NORMAL_SUPPLY: [check("Rotation.")], IN_SERVICE: [check("Run.")]},
        return_text="Back in service."))
    assert [s.kind for s in steps] == [
        "gate", "reconnect", "reconnect", "close_up", "remove_lock", "remove_lock",
        "remove_lock", "energise", "check", "energise", "check", "return_to_service"]
    assert [s.undoes for s in steps if s.kind == "reconnect"] == [4, 2]  # last undone first
    assert [s.devices for s in steps if s.kind == "remove_lock"] == [
        ("CB-TIE",), ("CB-H",), ("CB-1",)]
    tie = next(s for s in steps if s.devices == ("CB-TIE",))
    assert "It stays open: that is its normal position." in tie.text
    energise = [s for s in steps if s.kind == "energise"]
    assert energise[0].text.endswith("from its normal supply: close CB-1.")
    assert energise[1].devices == ("CB-H",) and "CB-H, closed" in energise[1].text
    assert all("CB-TIE" not in s.devices for s in energise)  # a normally open tie stays open


def test_a_tripped_breaker_is_reset_only_after_the_locks_and_a_start_block_is_set_back(
) -> None:
    steps = restoration_steps(Restoring(
        item_label="M-2", points=[point(1, "CB-2"), point(2, "EG-START", "start_block",
                                                            cuts="start of EG")],
        normal_devices=frozenset({"CB-2"}), tripped=["CB-2"]))
    energise = [s for s in steps if s.kind == "energise"]
    assert "reset CB-2 (it tripped) and close it" in energise[0].text
    assert "EG-START, its normal setting (start of EG)" in energise[1].text
    assert steps[0].kind == "close_up"  # no gate asked for: none printed


def test_numbering_sets_reading_ids_to_the_step() -> None:
    reading = Reading(id="", what="phase A to earth", unit="V")
    steps = number_steps([check("a"), check("b", reading, reading)], "F2.X", first=3)
    assert [s.number for s in steps] == [3, 4]
    assert [r.id for r in steps[1].readings] == ["F2.X4.R1", "F2.X4.R2"]
