"""A small seeded fuzz run (tests/fuzz/fuzz_inputs.py): every mutated input ends in a
result or in located error lines; no traceback, no hang, nothing written on refusal.
`make fuzz N=2000` runs the long version."""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent / "fuzz"))

import fuzz_inputs  # noqa: E402

CASES = 60


def test_a_seeded_fuzz_run_has_no_traceback_hang_or_unlocated_error() -> None:
    outcomes = fuzz_inputs.fuzz(CASES, seed=20261202, jobs=2, timeout=20)
    assert len(outcomes) == CASES
    bad = [o for o in outcomes if o.verdict not in ("ok", "located")]
    assert not bad, fuzz_inputs.report(outcomes)
    verdicts = {o.verdict for o in outcomes}
    kinds = {o.kind for o in outcomes}
    assert verdicts == {"ok", "located"}  # the mutations reach both ends
    assert kinds == set(fuzz_inputs.KINDS)  # every kind of input was tried


def test_the_located_check_refuses_what_it_should(tmp_path) -> None:
    """The classifier itself: a place is a file of the case or an option, on one line."""
    assert fuzz_inputs._located(f"{tmp_path}/plant.yaml:3:4: loads[0].id: x", tmp_path)
    assert fuzz_inputs._located(f"{tmp_path}/filled.pdf: cannot read the PDF: x", tmp_path)
    assert fuzz_inputs._located("--date: expected YYYY-MM-DD", tmp_path)
    assert not fuzz_inputs._located("ValueError: invalid literal", tmp_path)
    assert not fuzz_inputs._located(f"  {tmp_path}/plant.yaml:3:4: x", tmp_path)
    assert not fuzz_inputs._located("/elsewhere/plant.yaml:3:4: x", tmp_path)
