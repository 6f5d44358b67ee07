"""Acceptance lines: a step's readings under one limit from one source on one line, each
id, wording and the limit kept (issue 14: the restoration's three phases were three
near-identical bullets)."""

from __future__ import annotations

from workpack.model.package import Limit, Reading
from workpack.plan.package import _readings_named


def reading(rid: str, what: str) -> Reading:
    return Reading(id=rid, what=what, unit="V",
                   limit=Limit(low=229.0, high=279.0, basis="computed (invented)"))


def test_one_reading_is_named_in_full() -> None:
    assert _readings_named([reading("X3.R1", "phase A to earth at MSB")]) == \
        "X3.R1 phase A to earth at MSB"


def test_the_shared_end_is_said_once() -> None:
    named = _readings_named([reading(f"X3.R{n}", f"phase {p} to earth at MSB")
                             for n, p in ((1, "A"), (2, "B"), (3, "C"))])
    assert named == "X3.R1 phase A, X3.R2 phase B and X3.R3 phase C to earth at MSB"


def test_the_shared_end_never_starts_inside_brackets() -> None:
    named = _readings_named([
        reading("S6.R1", "T1 primary winding (440 V) to the other winding and earth"),
        reading("S6.R2", "T1 secondary winding (115 V) to the other winding and earth")])
    assert named == ("S6.R1 T1 primary winding (440 V) and S6.R2 T1 secondary winding "
                     "(115 V) to the other winding and earth")


def test_a_comma_before_the_shared_end_is_written_once() -> None:
    named = _readings_named([reading("S5.R1", "C-CR1 A-B, 500 V DC for 1 min"),
                             reading("S5.R2", "C-CR1 B-C, 500 V DC for 1 min")])
    assert named == "S5.R1 C-CR1 A-B and S5.R2 C-CR1 B-C, 500 V DC for 1 min"


def test_wordings_with_nothing_in_common_are_each_given_whole() -> None:
    named = _readings_named([reading("S4.R1", "ratio across HV A-B (LV a-b)"),
                             reading("S4.R2", "ratio across HV B-C (LV b-c)")])
    assert named == "S4.R1 ratio across HV A-B (LV a-b) and S4.R2 ratio across HV B-C (LV b-c)"
