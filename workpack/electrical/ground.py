"""Forward model of an insulated (IT) three-phase system's voltages to earth.

The source is a balanced set of phase-to-neutral EMFs with a floating neutral. Each phase
conductor is tied to earth by its capacitance, its insulation leakage and any faults. One
node equation (Kirchhoff's current law at the earth node) gives the earth potential
relative to the source neutral:

    V_g = Σ Y_b·E_b / Σ Y_b      (sum over every branch b from a phase to earth)

and from it each phase-to-earth voltage E_k − V_g, the neutral displacement −V_g and the
current in each fault. A single fault of resistance Rf on phase k with equal capacitance C0
reduces to V_g = E_k/(1 + j·3ωC0·Rf) and I_f = j3ωC0·E_k/(1 + j3ωC0·Rf) (Mitolo,
Electrical Safety of Low-Voltage Systems, ch. 9, eqs. 9.14-9.15). A bolted (0 Ω) fault is
solved exactly as its own case: earth takes that phase's potential.

The ground detector is part of that circuit: lamps (R = V²/P each, or as seen through
their transformers), voltmeters and an insulation monitor's internal impedance tie the
phases to earth too. They enter as ``burden_ohm``, one more branch per phase.

Units: volts (RMS phasors), amperes, ohms, farads, hertz.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from workpack.electrical.threephase import PhaseSequence, source_phasors

_BOLTED_BELOW_OHM = 1e-100


@dataclass(frozen=True)
class Fault:
    """A connection from one phase to earth; ``resistance_ohm`` 0 means a bolted fault."""

    phase: str
    resistance_ohm: float

    def __post_init__(self) -> None:
        """Refuse negative or non-finite resistance."""
        if not math.isfinite(self.resistance_ohm) or self.resistance_ohm < 0:
            raise ValueError(
                f"fault resistance on {self.phase} must be 0 (bolted) or a positive "
                f"number of ohms (got {self.resistance_ohm!r})"
            )


@dataclass(frozen=True)
class GroundSolution:
    """Voltages to earth and fault currents of an insulated system (V, A, complex RMS)."""

    line_voltage_v: float
    frequency_hz: float
    sequence: PhaseSequence
    source_v: dict[str, complex]  # phase-to-neutral EMFs
    phase_to_earth_v: dict[str, complex]
    earth_potential_v: complex  # earth relative to the source neutral
    neutral_to_earth_v: complex  # the neutral displacement, = -earth_potential_v
    faults: tuple[Fault, ...]
    fault_currents_a: tuple[complex, ...]  # phase -> fault -> earth, in the order of faults
    ground_current_a: complex  # sum of the fault currents

    @property
    def phase_to_earth_magnitude_v(self) -> dict[str, float]:
        """|V| of each phase to earth (V), what a voltmeter to earth shows."""
        return {k: abs(v) for k, v in self.phase_to_earth_v.items()}

    @property
    def neutral_shift_v(self) -> float:
        """Magnitude of the neutral displacement (V)."""
        return abs(self.neutral_to_earth_v)


def _per_phase(
    value: Mapping[str, float] | float | None,
    seq: PhaseSequence,
    what: str,
    partial: bool = False,
) -> dict[str, float | None]:
    """One value per phase label from a number, a mapping or None (none)."""
    if value is None:
        return dict.fromkeys(seq.labels)
    if isinstance(value, Mapping):
        unknown = sorted(set(value) - set(seq.labels))
        if unknown or (not partial and len(value) != 3):
            seq.check_labels(list(value), what)
        return {k: None if value.get(k) is None else float(value[k]) for k in seq.labels}
    return dict.fromkeys(seq.labels, float(value))


def solve_ground(
    line_voltage_v: float,
    frequency_hz: float,
    capacitance_f: Mapping[str, float] | float,
    sequence: PhaseSequence | str = "ABC",
    leakage_ohm: Mapping[str, float] | float | None = None,
    faults: Sequence[Fault] = (),
    burden_ohm: Mapping[str, float] | float | None = None,
) -> GroundSolution:
    """Solve the earth node of an insulated system (V, A) for any capacitances and faults.

    ``capacitance_f`` is each phase's capacitance to earth (F; one number for all three or a
    mapping by label); ``leakage_ohm`` each phase's insulation resistance to earth (Ω; None,
    or a phase left out of the mapping, for none); ``burden_ohm`` the resistance from each
    phase to earth of the detectors connected (lamps, voltmeters, an insulation monitor's
    share; same forms as leakage); ``faults`` any number of faults on any phases, 0 Ω
    allowed. Two bolted faults on different phases short the source through
    earth: the current is then set by impedances this model does not hold, so that case is
    refused.
    """
    seq = PhaseSequence.parse(sequence)
    if not math.isfinite(line_voltage_v) or line_voltage_v <= 0:
        raise ValueError(f"line voltage must be positive volts (got {line_voltage_v!r})")
    if not math.isfinite(frequency_hz) or frequency_hz <= 0:
        raise ValueError(f"frequency must be a positive number of hertz (got {frequency_hz!r})")
    caps = _per_phase(capacitance_f, seq, "capacitance")
    for label, c in caps.items():
        if c is None or not math.isfinite(c) or c < 0:
            raise ValueError(
                f"capacitance to earth of phase {label} must be zero or a positive number "
                f"of farads (got {c!r})"
            )
    leaks = _per_phase(leakage_ohm, seq, "leakage resistance", partial=True)
    burdens = _per_phase(burden_ohm, seq, "detector burden", partial=True)
    for what, values in (("leakage resistance", leaks), ("detector burden", burdens)):
        for label, r in values.items():
            if r is not None and (math.isnan(r) or r <= 0):
                raise ValueError(
                    f"{what} of phase {label} must be a positive number of ohms "
                    f"(got {r!r}); give a 0 Ω connection as a Fault"
                )
    for fault in faults:
        if fault.phase not in seq.order:
            raise ValueError(
                f"fault on phase {fault.phase!r}: the system's phases are {', '.join(seq.labels)}"
            )

    omega = 2.0 * math.pi * frequency_hz
    sources = source_phasors(line_voltage_v, seq)

    # Every finite branch from a phase to earth: (phase, admittance in S).
    branches: list[tuple[str, complex]] = []
    for label in seq.labels:
        c = caps[label]
        assert c is not None
        if c > 0:
            branches.append((label, 1j * omega * c))
        for r in (leaks[label], burdens[label]):
            if r is not None and math.isfinite(r):
                branches.append((label, complex(1.0 / r)))
    fault_admittance: list[complex | None] = []
    for fault in faults:
        # Below 1e-100 Ω a fault is bolted to double precision (and 1/R·E would overflow).
        if fault.resistance_ohm < _BOLTED_BELOW_OHM:
            fault_admittance.append(None)
        else:
            fault_admittance.append(complex(1.0 / fault.resistance_ohm))

    bolted = [i for i, y in enumerate(fault_admittance) if y is None]
    bolted_phases = {faults[i].phase for i in bolted}
    if len(bolted_phases) > 1:
        raise ValueError(
            "bolted faults on two different phases ("
            + " and ".join(sorted(bolted_phases))
            + ") short the source through earth; give their resistances"
        )
    if len(bolted) > 1:
        raise ValueError(
            f"two bolted faults on phase {faults[bolted[0]].phase}: the split of current "
            "between them is undetermined; give their resistances or merge them"
        )

    all_branches = branches + [
        (faults[i].phase, y) for i, y in enumerate(fault_admittance) if y is not None
    ]
    if bolted:
        earth = sources[faults[bolted[0]].phase]
    else:
        total = sum((y for _, y in all_branches), 0j)
        if total == 0:
            raise ValueError(
                "the system has no path to earth (no capacitance, leakage or fault): "
                "the earth potential is undetermined"
            )
        earth = sum((y * sources[p] for p, y in all_branches), 0j) / total

    if bolted:
        to_earth = {label: sources[label] - earth for label in seq.labels}
    else:
        # E_k - V_g written as Σ Y_b·(E_k - E_b)/Σ Y_b: differences of source phasors, so a
        # near-bolted fault's small voltage keeps its precision (no cancellation).
        to_earth = {
            label: sum((y * (sources[label] - sources[p]) for p, y in all_branches), 0j) / total
            for label in seq.labels
        }
    currents: list[complex] = []
    for fault, y in zip(faults, fault_admittance, strict=True):
        if y is not None:
            currents.append(y * to_earth[fault.phase])
        else:
            # KCL at earth: the bolted fault returns every other branch's current.
            others = sum((yb * to_earth[p] for p, yb in all_branches), 0j)
            currents.append(-others)
    return GroundSolution(
        line_voltage_v=line_voltage_v,
        frequency_hz=frequency_hz,
        sequence=seq,
        source_v=sources,
        phase_to_earth_v=to_earth,
        earth_potential_v=earth,
        neutral_to_earth_v=-earth,
        faults=tuple(faults),
        fault_currents_a=tuple(currents),
        ground_current_a=sum(currents, 0j),
    )


def single_ground(
    line_voltage_v: float,
    frequency_hz: float,
    capacitance_f: float,
    phase: str,
    fault_ohm: float,
    sequence: PhaseSequence | str = "ABC",
    burden_ohm: float | None = None,
) -> GroundSolution:
    """One fault of ``fault_ohm`` (Ω, 0 = bolted) on ``phase`` with equal capacitance C0 (F)
    and, if given, an equal detector burden ``burden_ohm`` (Ω) from each phase to earth."""
    return solve_ground(
        line_voltage_v,
        frequency_hz,
        capacitance_f,
        sequence=sequence,
        faults=(Fault(phase, fault_ohm),),
        burden_ohm=burden_ohm,
    )


def fault_ratio(frequency_hz: float, capacitance_f: float, fault_ohm: float) -> float:
    """The dimensionless 3ωC0·Rf that fixes where the earth point sits on its locus."""
    if frequency_hz <= 0 or capacitance_f < 0 or fault_ohm < 0:
        raise ValueError(
            "frequency must be positive, capacitance and fault resistance zero or positive "
            f"(got {frequency_hz!r} Hz, {capacitance_f!r} F, {fault_ohm!r} Ω)"
        )
    return 3.0 * 2.0 * math.pi * frequency_hz * capacitance_f * fault_ohm
