"""Ground detectors: lamps (qualitative) and insulation monitoring devices (a reading in Ω).

Lamps are read against the single-ground model: for each phase and each fault resistance
the model gives three voltages to earth, and the lamp bands below turn them into what a
person would see. The observed pattern is then matched against every (phase, resistance).
The bands are our assumption about how a lamp looks at a given voltage (incandescent light
rises steeply with voltage; lamps on small transformers vary): they are a modelling choice,
not a published value, and a plant may set its own.

Units: volts, ohms.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from enum import StrEnum

import numpy as np

from workpack.electrical.ground_inverse import locus_readings
from workpack.electrical.threephase import PhaseSequence

LAMP_STATES = ("dark", "dim", "normal", "bright")
_SYNONYMS = {"off": "dark", "out": "dark", "unlit": "dark", "low": "dim", "high": "bright"}


class Confidence(StrEnum):
    """How far a diagnosis can be trusted."""

    HIGH = "high"
    MEDIUM = "medium"
    LOW = "low"
    NONE = "none"


@dataclass(frozen=True)
class LampBands:
    """Voltage to earth, per unit of V_LN, at which a lamp is seen dark / dim / bright.

    Our modelling assumption, not a published value: tune per installation.
    """

    dark_below: float = 0.3
    dim_below: float = 0.85
    bright_above: float = 1.15

    def __post_init__(self) -> None:
        """Refuse bands out of order."""
        if not 0 < self.dark_below < self.dim_below < 1.0 < self.bright_above:
            raise ValueError(
                "lamp bands must satisfy 0 < dark_below < dim_below < 1 < bright_above "
                f"(got {self.dark_below}, {self.dim_below}, {self.bright_above})"
            )

    def classify(self, per_unit: float) -> str:
        """The state a lamp at ``per_unit`` × V_LN shows."""
        if per_unit < self.dark_below:
            return "dark"
        if per_unit < self.dim_below:
            return "dim"
        if per_unit > self.bright_above:
            return "bright"
        return "normal"


@dataclass(frozen=True)
class LampDiagnosis:
    """What a set of ground-detector lamps says, and what to do next."""

    observations: dict[str, str]
    finding: str
    suspected_phases: tuple[str, ...]  # most likely first
    confidence: Confidence
    exact_match: bool  # some single ground reproduces every lamp exactly
    ratio_range: dict[str, tuple[float, float]]  # 3ωC0·Rf range per suspected phase
    next_step: str


def _normalise_state(label: str, state: str) -> str:
    """One lamp state in canonical form ('off' → 'dark'); ValueError if unknown."""
    s = state.strip().lower()
    s = _SYNONYMS.get(s, s)
    if s not in LAMP_STATES:
        raise ValueError(
            f"lamp {label}: state {state!r} must be one of {', '.join(LAMP_STATES)}"
        )
    return s


def diagnose_lamps(
    observations: Mapping[str, str],
    sequence: PhaseSequence | str = "ABC",
    bands: LampBands = LampBands(),  # noqa: B008 - frozen, so a safe default
) -> LampDiagnosis:
    """Match lamp states (dark / dim / normal / bright, per phase) to single-ground cases.

    The phase lagging a grounded phase reads lowest once 3ωC0·Rf > √3, so a dim lamp alone
    cannot say which phase is grounded; the bright lamp (the phase leading the ground)
    often can. Confidence says how far to trust the answer; the next step says what to
    measure.
    """
    seq = PhaseSequence.parse(sequence)
    seq.check_labels(list(observations), "lamp observations")
    obs = {lbl: _normalise_state(lbl, observations[lbl]) for lbl in seq.labels}
    rank = {s: i for i, s in enumerate(LAMP_STATES)}

    theta = np.linspace(0.0, math.pi / 2.0, 2001)
    faulted, lag, lead = locus_readings(theta)
    distance: dict[str, np.ndarray] = {}
    for k in seq.labels:
        roles = {k: faulted, seq.lagging(k): lag, seq.leading(k): lead}
        total = np.zeros_like(theta)
        healthy_looking = np.ones(theta.shape, dtype=bool)
        for lbl, values in roles.items():
            seen = np.where(
                values < bands.dark_below,
                rank["dark"],
                np.where(
                    values < bands.dim_below,
                    rank["dim"],
                    np.where(values > bands.bright_above, rank["bright"], rank["normal"]),
                ),
            )
            total += np.abs(seen - rank[obs[lbl]])
            healthy_looking &= seen == rank["normal"]
        # A ground so high in resistance that every lamp looks normal explains nothing
        # about a lamp seen abnormal: leave those cases out of the near-matches.
        distance[k] = np.where(healthy_looking, np.inf, total)

    if all(s == "normal" for s in obs.values()):
        return LampDiagnosis(
            observations=obs,
            finding="No ground indicated: the three lamps are equal.",
            suspected_phases=(),
            confidence=Confidence.MEDIUM,
            exact_match=True,
            ratio_range={},
            next_step="Press the test button to prove the lamps; a high-resistance ground "
            "does not show on lamps: check the insulation monitor or voltmeters.",
        )
    best = min(float(d.min()) for d in distance.values())
    if best >= 2:
        dark = [lbl for lbl, s in obs.items() if s == "dark"]
        return LampDiagnosis(
            observations=obs,
            finding="No single ground explains these lamps"
            + (" (a dark lamp with the others not bright suggests a failed lamp)" if dark else "")
            + ": possibly a lamp or its supply, two grounds, or unequal capacitance.",
            suspected_phases=(),
            confidence=Confidence.NONE,
            exact_match=False,
            ratio_range={},
            next_step="Press the test button to prove the lamps, then measure each phase "
            "to earth with a voltmeter and run the ground diagnosis.",
        )
    suspects: list[tuple[float, float, str]] = []
    ranges: dict[str, tuple[float, float]] = {}
    for k, d in distance.items():
        hits = theta[d == best]
        if hits.size:
            # Wider matching range first: the more fault resistances fit, the likelier.
            suspects.append((-float(hits.size), float(hits.min()), k))
            lo, hi = float(hits.min()), float(hits.max())
            ranges[k] = (math.tan(lo), math.inf if hi >= math.pi / 2 - 1e-12 else math.tan(hi))
    ordered = tuple(k for _, _, k in sorted(suspects))
    exact = best == 0
    solid = any(s == "dark" for s in obs.values())
    if len(ordered) == 1:
        phase = ordered[0]
        if solid and exact:
            confidence = Confidence.HIGH
            finding = f"Solid (low-resistance) ground on {phase}."
            step = (
                f"Confirm with phase-to-earth voltmeter readings ({phase} near 0 V, the others "
                "near line voltage), then find the circuit feeder by feeder."
            )
        else:
            confidence = Confidence.MEDIUM if exact else Confidence.LOW
            finding = f"Partial ground, probably on {phase}."
            dimmest = min(obs.values(), key=lambda st: rank[st])
            if rank[obs[phase]] > rank[dimmest]:
                darker = [lbl for lbl in seq.labels if obs[lbl] == dimmest]
                finding += (
                    f" The {dimmest} lamp ({', '.join(darker)}) is not the grounded phase: "
                    "with a high-resistance ground the phase lagging it reads lowest."
                )
            step = (
                "Measure each phase to earth with a voltmeter and run the ground diagnosis: "
                "lamps cannot give the resistance, and the dimmest lamp is not always the "
                "grounded phase."
            )
    else:
        confidence = Confidence.LOW
        finding = "Partial ground on " + " or ".join(ordered) + ": the lamps cannot tell which."
        step = (
            "A dim lamp cannot say which phase is grounded: measure each phase to earth "
            "with a voltmeter (phase sequence known) and run the ground diagnosis."
        )
    return LampDiagnosis(
        observations=obs,
        finding=finding,
        suspected_phases=ordered,
        confidence=confidence,
        exact_match=exact,
        ratio_range={k: ranges[k] for k in ordered},
        next_step=step,
    )


class MonitorSeverity(StrEnum):
    """What an insulation monitor's reading means against its settings."""

    NORMAL = "normal"
    PREWARNING = "prewarning"
    ALARM = "alarm"


@dataclass(frozen=True)
class MonitorAssessment:
    """An insulation monitor reading (Ω) against its alarm setting and the response guide."""

    reading_ohm: float
    alarm_setting_ohm: float
    prewarning_ohm: float
    severity: MonitorSeverity
    guide_response_ohm: float  # response value guide × system voltage
    setting_below_guide: bool
    note: str


def assess_insulation_monitor(
    reading_ohm: float,
    alarm_setting_ohm: float,
    system_voltage_v: float,
    response_ohm_per_v: float,
    prewarning_factor: float = 2.0,
) -> MonitorAssessment:
    """Severity of an insulation-monitor reading (Ω) against its alarm setting (Ω).

    ``response_ohm_per_v`` is the response value guide (50 Ω/V per IEC 60364-5-53 guidance
    as stated by an insulation-monitor maker; code set "it-system-guides"): 440 V -> 22 kΩ.
    A reading at or below the setting is an alarm; below ``prewarning_factor`` × the setting
    a prewarning (a two-stage setting is common practice; the factor is ours).
    """
    if math.isnan(reading_ohm) or reading_ohm < 0:
        raise ValueError(f"monitor reading must be zero or positive ohms (got {reading_ohm!r})")
    for name, value in (
        ("alarm setting", alarm_setting_ohm),
        ("system voltage", system_voltage_v),
        ("response value per volt", response_ohm_per_v),
    ):
        if not math.isfinite(value) or value <= 0:
            raise ValueError(f"{name} must be a positive number (got {value!r})")
    if not math.isfinite(prewarning_factor) or prewarning_factor < 1:
        raise ValueError(f"prewarning factor must be 1 or more (got {prewarning_factor!r})")
    guide = response_ohm_per_v * system_voltage_v
    prewarning = prewarning_factor * alarm_setting_ohm
    if reading_ohm <= alarm_setting_ohm:
        severity = MonitorSeverity.ALARM
        note = (
            f"insulation {reading_ohm / 1e3:.3g} kΩ is at or below the alarm setting "
            f"{alarm_setting_ohm / 1e3:.3g} kΩ: a ground is present; the monitor does not "
            "tell the phase or the circuit"
        )
    elif reading_ohm <= prewarning:
        severity = MonitorSeverity.PREWARNING
        note = (
            f"insulation {reading_ohm / 1e3:.3g} kΩ is within {prewarning_factor:g}× of the "
            "alarm setting: insulation deteriorating"
        )
    else:
        severity = MonitorSeverity.NORMAL
        note = f"insulation {reading_ohm / 1e3:.3g} kΩ is above the prewarning level"
    below = alarm_setting_ohm < guide
    if below:
        note += (
            f"; the alarm setting is below the response guide of "
            f"{response_ohm_per_v:g} Ω/V × {system_voltage_v:g} V = {guide / 1e3:.3g} kΩ"
        )
    return MonitorAssessment(
        reading_ohm=reading_ohm,
        alarm_setting_ohm=alarm_setting_ohm,
        prewarning_ohm=prewarning,
        severity=severity,
        guide_response_ohm=guide,
        setting_below_guide=below,
        note=note,
    )
