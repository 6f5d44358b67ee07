"""The forward ground model agrees with an independent circuit solver (lcapy) to 1e-6.

lcapy (SOURCES.md: "a general-purpose circuit-analysis library ... use it as a reference")
builds its own modified nodal analysis from a netlist and solves it symbolically with the
element values as exact rationals; we only read off the phasors. Skipped, with the reason,
only where lcapy is not installed (it is the `reference` extra).
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import pytest

from workpack.electrical import Fault, PhaseSequence, solve_ground

lcapy = pytest.importorskip("lcapy", reason="lcapy (the 'reference' extra) is not installed")

REL = 1e-6


def _phasor(quantity: object) -> complex:
    """The AC phasor of an lcapy voltage or current (0 when it has no AC part)."""
    parts = quantity.ac  # type: ignore[attr-defined]
    return sum((complex(expr.sympy.evalf(30)) for expr in parts.values()), 0j)


def _lcapy_solve(
    line_voltage_v: float,
    frequency_hz: float,
    capacitance_f: Mapping[str, float],
    sequence: str,
    leakage_ohm: Mapping[str, float],
    faults: list[Fault],
    burden_ohm: Mapping[str, float] | None = None,
) -> tuple[dict[str, complex], list[complex]]:
    """Phase-to-earth phasors and fault currents from lcapy; earth is lcapy's node 0."""
    seq = PhaseSequence.parse(sequence)
    omega = 2 * math.pi * frequency_hz
    v_ln = line_voltage_v / math.sqrt(3)
    node = {lbl: f"p{lbl}" for lbl in seq.labels}
    lines = []
    for lbl in seq.labels:
        lines.append(f"V{lbl} {node[lbl]} n ac {v_ln!r} {seq.angle_rad(lbl)!r} {omega!r}")
        if capacitance_f[lbl] > 0:
            lines.append(f"C{lbl} {node[lbl]} 0 {capacitance_f[lbl]!r}")
        if lbl in leakage_ohm:
            lines.append(f"Rg{lbl} {node[lbl]} 0 {leakage_ohm[lbl]!r}")
        if burden_ohm and lbl in burden_ohm:
            lines.append(f"Rb{lbl} {node[lbl]} 0 {burden_ohm[lbl]!r}")
    for i, fault in enumerate(faults):
        if fault.resistance_ohm == 0:
            lines.append(f"Vq{i} {node[fault.phase]} 0 0")  # a 0 V source: bolted, and an ammeter
        else:
            lines.append(f"Rf{i} {node[fault.phase]} f{i} {fault.resistance_ohm!r}")
            lines.append(f"Vq{i} f{i} 0 0")
    cct = lcapy.Circuit("\n".join(lines))
    volts = {lbl: _phasor(cct[node[lbl]].V) for lbl in seq.labels}
    currents = [_phasor(getattr(cct, f"Vq{i}").I) for i in range(len(faults))]
    return volts, currents


def _close(a: complex, b: complex, scale: float) -> bool:
    return abs(a - b) <= REL * scale


# A spread of cases: 50/60 Hz, 115-690 V, 0.2-10 µF, faults from 0 Ω to 1 MΩ, unequal
# capacitance, leakage, double faults, both sequences, L1/L2/L3 labels. Values are
# arbitrary test inputs; the expected answer is lcapy's, not ours.
CASES = [
    pytest.param(440, 60, {"A": 2.2e-6, "B": 2.2e-6, "C": 2.2e-6}, "ABC", {}, [("A", 0.0)],
                 id="440V-60Hz-bolted-A"),
    pytest.param(440, 60, {"A": 2.2e-6, "B": 2.2e-6, "C": 2.2e-6}, "ABC", {}, [("B", 300.0)],
                 id="440V-60Hz-300ohm-B"),
    pytest.param(480, 60, {"A": 1.0e-6, "B": 1.0e-6, "C": 1.0e-6}, "ACB", {}, [("C", 5e3)],
                 id="480V-ACB-5k-C"),
    pytest.param(400, 50, {"A": 0.2e-6, "B": 0.2e-6, "C": 0.2e-6}, "ABC", {}, [("A", 1e6)],
                 id="400V-50Hz-1M-A"),
    pytest.param(690, 50, {"A": 10e-6, "B": 10e-6, "C": 10e-6}, "ABC", {}, [("C", 1e-3)],
                 id="690V-10uF-1mohm-C"),
    pytest.param(115, 60, {"A": 0.5e-6, "B": 0.5e-6, "C": 0.5e-6}, "ABC", {}, [("B", 0.0)],
                 id="115V-bolted-B"),
    pytest.param(440, 60, {"A": 1.0e-6, "B": 3.0e-6, "C": 2.0e-6}, "ABC", {}, [],
                 id="unequal-C-no-fault"),
    pytest.param(440, 60, {"A": 1.0e-6, "B": 3.0e-6, "C": 2.0e-6}, "ACB", {}, [("A", 800.0)],
                 id="unequal-C-ACB-800ohm-A"),
    pytest.param(230, 50, {"A": 2e-6, "B": 2e-6, "C": 2e-6}, "ABC",
                 {"A": 200e3, "B": 1e6, "C": 50e3}, [("B", 2e3)], id="leakage-2k-B"),
    pytest.param(440, 60, {"A": 2.2e-6, "B": 2.2e-6, "C": 2.2e-6}, "ABC", {},
                 [("A", 100.0), ("B", 250.0)], id="double-fault-A-B"),
    pytest.param(690, 60, {"A": 5e-6, "B": 4e-6, "C": 6e-6}, "ACB", {"A": 1e5},
                 [("C", 10.0), ("A", 1e4)], id="double-fault-unequal-leak"),
    pytest.param(440, 60, {"A": 2.2e-6, "B": 2.2e-6, "C": 2.2e-6}, "ABC", {},
                 [("A", 0.0), ("C", 40.0)], id="bolted-A-plus-40ohm-C"),
    pytest.param(400, 50, {"L1": 3e-6, "L2": 3e-6, "L3": 3e-6}, "L1-L2-L3", {},
                 [("L2", 1.5e3)], id="L1L2L3-labels"),
    pytest.param(440, 60, {"A": 0.0, "B": 2e-6, "C": 2e-6}, "ABC", {}, [("A", 500.0)],
                 id="no-capacitance-on-faulted-phase"),
]


@pytest.mark.parametrize(("v_ll", "freq", "caps", "seq", "leaks", "faults"), CASES)
def test_forward_model_matches_lcapy(
    v_ll: float,
    freq: float,
    caps: dict[str, float],
    seq: str,
    leaks: dict[str, float],
    faults: list[tuple[str, float]],
) -> None:
    """Phase-to-earth phasors and every fault current agree with lcapy within 1e-6."""
    fault_list = [Fault(p, r) for p, r in faults]
    ours = solve_ground(v_ll, freq, caps, seq, leaks or None, fault_list)
    volts, currents = _lcapy_solve(v_ll, freq, caps, seq, leaks, fault_list)
    for lbl, v in volts.items():
        assert _close(ours.phase_to_earth_v[lbl], v, v_ll), (lbl, ours.phase_to_earth_v[lbl], v)
    scale = max([abs(i) for i in currents] + [1e-12])
    for mine, ref in zip(ours.fault_currents_a, currents, strict=True):
        assert _close(mine, ref, scale), (mine, ref)


# The detector's own burden from each phase to earth: lamps (R = V²/P of the lamp, Ohm's law),
# lamps behind transformers or voltmeters (a declared resistance), an insulation monitor's
# share (3 × its internal impedance per phase). 50 and 60 Hz; small systems, where the lamp
# resistance is of the order of 1/(3ωC0) or below, and large ones, where it is far above.
LAMP_15W_250V = 250.0**2 / 15.0  # 4167 Ω
LAMP_15W_130V = 130.0**2 / 15.0  # 1127 Ω
BURDEN_CASES = [
    pytest.param(440, 60, 0.05e-6, "ABC", LAMP_15W_250V, [("B", 10e3)],
                 id="small-C0-60Hz-lamps-10k-B"),
    pytest.param(440, 50, 0.05e-6, "ABC", LAMP_15W_250V, [("B", 10e3)],
                 id="small-C0-50Hz-lamps-10k-B"),
    pytest.param(440, 60, 5e-6, "ABC", LAMP_15W_250V, [("A", 300.0)],
                 id="large-C0-60Hz-lamps-300ohm-A"),
    pytest.param(400, 50, 5e-6, "ACB", LAMP_15W_250V, [("C", 50.0)],
                 id="large-C0-50Hz-ACB-lamps-50ohm-C"),
    pytest.param(115, 60, 0.02e-6, "ACB", LAMP_15W_130V, [("C", 2e3)],
                 id="115V-lamps-2k-C"),
    pytest.param(115, 50, 0.063e-6, "ABC", LAMP_15W_130V, [("A", 0.0)],
                 id="115V-lamps-bolted-A"),
    pytest.param(230, 50, 0.5e-6, "ABC", 1 / (1 / 6.5e3 + 1 / (3 * 120e3)), [("B", 20e3)],
                 id="lamps-and-monitor-20k-B"),
    pytest.param(440, 60, 0.39e-6, "ABC", 200e3, [("A", 2e3), ("C", 9e3)],
                 id="voltmeters-double-fault"),
    pytest.param(690, 60, 1e-6, "ABC", {"A": 100e3}, [("B", 5e3)],
                 id="one-voltmeter-on-a-selector-A"),
    pytest.param(440, 60, 0.39e-6, "ABC", LAMP_15W_250V, [], id="lamps-no-fault"),
]


@pytest.mark.parametrize(("v_ll", "freq", "c0", "seq", "burden", "faults"), BURDEN_CASES)
def test_forward_model_with_detector_burden_matches_lcapy(
    v_ll: float,
    freq: float,
    c0: float,
    seq: str,
    burden: float | dict[str, float],
    faults: list[tuple[str, float]],
) -> None:
    """With lamp, meter and monitor resistances to earth, the phase-to-earth phasors and
    fault currents agree with lcapy (an independent circuit solver) within 1e-6."""
    labels = PhaseSequence.parse(seq).labels
    caps = dict.fromkeys(labels, c0)
    per_phase = burden if isinstance(burden, dict) else dict.fromkeys(labels, burden)
    fault_list = [Fault(p, r) for p, r in faults]
    ours = solve_ground(v_ll, freq, c0, seq, faults=fault_list, burden_ohm=burden)
    volts, currents = _lcapy_solve(v_ll, freq, caps, seq, {}, fault_list, per_phase)
    for lbl, v in volts.items():
        assert _close(ours.phase_to_earth_v[lbl], v, v_ll), (lbl, ours.phase_to_earth_v[lbl], v)
    scale = max([abs(i) for i in currents] + [1e-12])
    for mine, ref in zip(ours.fault_currents_a, currents, strict=True):
        assert _close(mine, ref, scale), (mine, ref)


def test_lamps_change_which_lamp_is_dimmest_as_lcapy_solves_it() -> None:
    """The issue's point, on lcapy's numbers alone: 440 V, 60 Hz, C0 0.1 µF, 30 kΩ on B.
    Without lamps (3ωC0·Rf = 3.4 > √3) phase C, lagging B, reads lowest; with 15 W 250 V
    lamps to earth (R = V²/P = 4.2 kΩ) phase B itself is lowest, and so is its lamp."""
    caps = dict.fromkeys("ABC", 0.1e-6)
    fault = [Fault("B", 30e3)]
    bare, _ = _lcapy_solve(440, 60, caps, "ABC", {}, fault)
    lamps, _ = _lcapy_solve(440, 60, caps, "ABC", {}, fault, dict.fromkeys("ABC", LAMP_15W_250V))
    assert min(bare, key=lambda k: abs(bare[k])) == "C"
    assert min(lamps, key=lambda k: abs(lamps[k])) == "B"
