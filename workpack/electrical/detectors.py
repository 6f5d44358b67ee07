"""Ground detectors: lamps (qualitative) and insulation monitoring devices (a reading in Ω).

Lamps are part of the circuit they watch. Each lamp ties its phase to earth through its
own resistance (R = V²/P at its rating, or as seen through its transformer), which on a
small system is of the same order as 1/(3ωC0): with the capacitance it sets where the earth
point sits for a given ground, and so which lamp goes dim. Lamps are read against the
single-ground model with that burden (``ground_inverse.locus_readings`` at the locus angle
φ = arg(1/R + jωC0)): for each phase and each fault resistance the model gives the voltage
across each lamp, a lamp's power goes as V² (its resistance taken as constant), and the
bands below turn that power, relative to the healthy system's, into what a person would
see. The observed pattern is then matched against every (phase, resistance), and the
guidance printed (which lamp dims, how far) is read off the same model.

The bands are our assumption about how a lamp looks at a given power (incandescent light
rises more steeply than power; lamps on small transformers vary): a modelling choice, not
a published value, and a plant may set its own. A tungsten filament's resistance falls at
lower voltage; the constant-resistance lamp is a simplification (common practice in
circuit models of indicator lamps).

Units: volts, ohms, watts, siemens, hertz, farads.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from enum import StrEnum
from typing import Any

import numpy as np

from workpack.electrical.ground_inverse import (
    lag_crossover_ratio,
    locus_angle,
    locus_readings,
    theta_to_ratio,
)
from workpack.electrical.threephase import PhaseSequence
from workpack.numbers import format_number, format_quantity

LAMP_STATES = ("dark", "dim", "normal", "bright")
_SYNONYMS = {"off": "dark", "out": "dark", "unlit": "dark", "low": "dim", "high": "bright"}
_HALF_PI = math.pi / 2.0
_LOCUS_POINTS = 2001


def lamp_resistance(rated_power_w: float, rated_voltage_v: float) -> float:
    """A lamp's resistance (Ω) at its rating: R = V²/P (Ohm's law and P = V·I)."""
    for name, value in (("lamp power", rated_power_w), ("lamp voltage", rated_voltage_v)):
        if not math.isfinite(value) or value <= 0:
            raise ValueError(f"{name} must be a positive number (got {value!r})")
    return rated_voltage_v**2 / rated_power_w


def parallel_conductance(resistances_ohm: Mapping[str, float] | tuple[float, ...]) -> float:
    """Total conductance (S) of resistances (Ω) side by side from one phase to earth."""
    values = list(resistances_ohm.values()) if isinstance(resistances_ohm, Mapping) else list(
        resistances_ohm)
    for value in values:
        if math.isnan(value) or value <= 0:
            raise ValueError(f"a burden resistance must be positive ohms (got {value!r})")
    return sum(1.0 / value for value in values)


class Confidence(StrEnum):
    """How far a diagnosis can be trusted."""

    HIGH = "high"
    MEDIUM = "medium"
    LOW = "low"
    NONE = "none"


@dataclass(frozen=True)
class LampBands:
    """Lamp power relative to the healthy system's ((V/V_LN)², since P ∝ V² in a lamp of
    constant resistance) at which a lamp is seen dark / dim / bright.

    Our modelling assumption, not a published value: tune per installation.
    """

    dark_below: float = 0.1
    dim_below: float = 0.7
    bright_above: float = 1.3

    def __post_init__(self) -> None:
        """Refuse bands out of order."""
        if not 0 < self.dark_below < self.dim_below < 1.0 < self.bright_above:
            raise ValueError(
                "lamp bands must satisfy 0 < dark_below < dim_below < 1 < bright_above "
                f"(got {self.dark_below}, {self.dim_below}, {self.bright_above})"
            )

    def classify_power(self, relative_power: float) -> str:
        """The state a lamp at ``relative_power`` × its healthy power shows."""
        if relative_power < self.dark_below:
            return "dark"
        if relative_power < self.dim_below:
            return "dim"
        if relative_power > self.bright_above:
            return "bright"
        return "normal"

    def classify(self, per_unit: float) -> str:
        """The state a lamp at ``per_unit`` × V_LN across it shows (power ∝ V²)."""
        return self.classify_power(per_unit * per_unit)


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
    # Per suspected phase, each lamp's power relative to healthy (min, max) over the
    # matching grounds, from the model: what the printed guidance says.
    brightness: dict[str, dict[str, tuple[float, float]]] = field(default_factory=dict)
    locus_angle_rad: float = _HALF_PI  # arg(1/R_burden + jωC0); π/2 without lamp burden
    burden_ohm: float | None = None  # lamps' (and other detectors') resistance per phase
    # 3ωC0·Rf past which the lamp of the phase lagging the ground is the dimmest: inf when
    # the burden makes that impossible (the dimmest lamp is then the grounded phase).
    lag_dimmest_above_ratio: float = math.inf
    # 3ωC0·Rf above which no lamp leaves "normal": a ground the lamps cannot show.
    invisible_above_ratio: float | None = None
    resistance_per_ratio_ohm: float | None = None  # 1/(3ωC0): turns ratios into ohms


def _normalise_state(label: str, state: str) -> str:
    """One lamp state in canonical form ('off' → 'dark'); ValueError if unknown."""
    s = state.strip().lower()
    s = _SYNONYMS.get(s, s)
    if s not in LAMP_STATES:
        raise ValueError(
            f"lamp {label}: state {state!r} must be one of {', '.join(LAMP_STATES)}"
        )
    return s


def _two_figures(value: float) -> str:
    """A number to two significant figures, never in exponent form (530, 5.4, 0.41)."""
    return f"{float(f'{value:.2g}'):g}"


def _ohm_text(value: float) -> str:
    """Ohms for a person: Ω, kΩ or MΩ to two figures."""
    for scale, unit in ((1e6, "MΩ"), (1e3, "kΩ")):
        if value >= scale:
            return f"{_two_figures(value / scale)} {unit}"
    return f"{_two_figures(value)} Ω"


def _resistance_text(ratio: float, per_ratio: float | None) -> str:
    """A 3ωC0·Rf value in ohms when C0 is known, else as the ratio."""
    if per_ratio is not None:
        return f"about {_ohm_text(ratio * per_ratio)}"
    return f"3ωC0·Rf {format_number(ratio)}"


def _range_text(low: float, high: float) -> str:
    """'0.31×' or '0.2–0.6×' of normal brightness."""
    if _two_figures(low) == _two_figures(high):
        return f"{_two_figures(low)}×"
    return f"{_two_figures(low)}–{_two_figures(high)}×"


def diagnose_lamps(
    observations: Mapping[str, str],
    sequence: PhaseSequence | str = "ABC",
    bands: LampBands = LampBands(),  # noqa: B008 - frozen, so a safe default
    *,
    frequency_hz: float | None = None,
    capacitance_f: float | None = None,
    burden_ohm: float | None = None,
) -> LampDiagnosis:
    """Match lamp states (dark / dim / normal / bright, per phase) to single-ground cases.

    ``burden_ohm`` is the resistance from each phase to earth of the lamps themselves (and
    any other detector connected while they were looked at); with the system's C0
    (``capacitance_f``, F) and ``frequency_hz`` it fixes the fault locus. Without them the
    lamps are taken as no burden on a purely capacitive system, and resistances cannot be
    given. Which lamp is dimmest for a ground on a phase is read off that model: without
    burden the phase lagging the ground goes dimmest once 3ωC0·Rf > √3; a heavy lamp
    burden (φ ≤ 60°) makes the grounded phase always the dimmest. Confidence says how far
    to trust the answer; the next step says what to measure.
    """
    seq = PhaseSequence.parse(sequence)
    seq.check_labels(list(observations), "lamp observations")
    obs = {lbl: _normalise_state(lbl, observations[lbl]) for lbl in seq.labels}
    rank = {s: i for i, s in enumerate(LAMP_STATES)}
    if (frequency_hz is None) != (capacitance_f is None):
        raise ValueError("give both frequency and capacitance, or neither")
    if burden_ohm is not None and capacitance_f is None:
        raise ValueError("a lamp burden needs the frequency and capacitance: the locus depends "
                         "on the ratio of the two")
    phi = _HALF_PI
    per_ratio: float | None = None
    if frequency_hz is not None and capacitance_f is not None:
        conductance = 0.0 if burden_ohm is None else parallel_conductance((burden_ohm,))
        phi = locus_angle(frequency_hz, capacitance_f, conductance)
        per_ratio = 1.0 / (3.0 * 2.0 * math.pi * frequency_hz * capacitance_f)
    crossover = lag_crossover_ratio(phi)

    theta = np.linspace(0.0, phi, _LOCUS_POINTS)
    faulted, lag, lead = locus_readings(theta, phi)
    power = {"faulted": faulted**2, "lag": lag**2, "lead": lead**2}
    ratios = theta_to_ratio(theta, phi)

    def seen(values: np.ndarray) -> np.ndarray:
        """Lamp state ranks at relative powers ``values``."""
        return np.where(
            values < bands.dark_below,
            rank["dark"],
            np.where(
                values < bands.dim_below,
                rank["dim"],
                np.where(values > bands.bright_above, rank["bright"], rank["normal"]),
            ),
        )

    states = {role: seen(values) for role, values in power.items()}
    healthy_looking = np.all([st == rank["normal"] for st in states.values()], axis=0)
    visible = theta[~healthy_looking]
    invisible_above = (float(theta_to_ratio(np.array(visible.max()), phi))
                       if visible.size else 0.0)
    distance: dict[str, np.ndarray] = {}
    roles_of: dict[str, dict[str, str]] = {}
    for k in seq.labels:
        roles = {k: "faulted", seq.lagging(k): "lag", seq.leading(k): "lead"}
        roles_of[k] = roles
        total = np.zeros_like(theta)
        for lbl, role in roles.items():
            total += np.abs(states[role] - rank[obs[lbl]])
        # A ground so high in resistance that every lamp looks normal explains nothing
        # about a lamp seen abnormal: leave those cases out of the near-matches.
        distance[k] = np.where(healthy_looking, np.inf, total)

    model = ("the model of these lamps on this system" if per_ratio is not None
             and burden_ohm is not None else "the model without lamp burden")
    common: dict[str, Any] = {"locus_angle_rad": phi, "burden_ohm": burden_ohm,
              "lag_dimmest_above_ratio": crossover, "invisible_above_ratio": invisible_above,
              "resistance_per_ratio_ohm": per_ratio}
    if all(s == "normal" for s in obs.values()):
        hidden = (f"a ground above {_resistance_text(invisible_above, per_ratio)} leaves all "
                  f"three lamps looking normal ({model})"
                  if per_ratio is not None else "a high-resistance ground does not show on "
                  "lamps")
        return LampDiagnosis(
            observations=obs,
            finding="No ground indicated: the three lamps are equal.",
            suspected_phases=(),
            confidence=Confidence.MEDIUM,
            exact_match=True,
            ratio_range={},
            next_step=f"Press the test button to prove the lamps; {hidden}: check the "
            "insulation monitor or voltmeters.",
            **common,
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
            **common,
        )
    suspects: list[tuple[float, float, str]] = []
    ranges: dict[str, tuple[float, float]] = {}
    brightness: dict[str, dict[str, tuple[float, float]]] = {}
    for k, d in distance.items():
        hit = d == best
        hits = theta[hit]
        if hits.size:
            # Wider matching range first: the more fault resistances fit, the likelier.
            suspects.append((-float(hits.size), float(hits.min()), k))
            ranges[k] = (float(ratios[hit].min()), float(ratios[hit].max()))
            brightness[k] = {
                lbl: (float(power[role][hit].min()), float(power[role][hit].max()))
                for lbl, role in sorted(roles_of[k].items())
            }
    ordered = tuple(k for _, _, k in sorted(suspects))
    exact = best == 0
    solid = any(s == "dark" for s in obs.values())

    def expected(phase: str) -> str:
        """What the model says each lamp shows for the grounds on ``phase`` that fit."""
        parts = [f"{lbl} {_range_text(*brightness[phase][lbl])}" for lbl in seq.labels]
        low, high = ranges[phase]
        span = (f" (fault {_resistance_text(low, per_ratio)} to "
                f"{'no fault' if math.isinf(high) else _resistance_text(high, per_ratio)})")
        return (f"a ground on {phase} that fits gives lamp power {', '.join(parts)} of "
                f"normal{span if per_ratio is not None else ''}, by {model}")

    if len(ordered) == 1:
        phase = ordered[0]
        if solid and exact:
            confidence = Confidence.HIGH
            finding = f"Solid (low-resistance) ground on {phase}: {expected(phase)}."
            step = (
                f"Confirm with phase-to-earth voltmeter readings ({phase} near 0 V, the others "
                "near line voltage), then find the circuit feeder by feeder."
            )
        else:
            confidence = Confidence.MEDIUM if exact else Confidence.LOW
            finding = f"Partial ground, probably on {phase}: {expected(phase)}."
            dimmest = min(obs.values(), key=lambda st: rank[st])
            if rank[obs[phase]] > rank[dimmest]:
                darker = [lbl for lbl in seq.labels if obs[lbl] == dimmest]
                finding += (
                    f" The {dimmest} lamp ({', '.join(darker)}) is not the grounded phase: "
                    f"above {_resistance_text(crossover, per_ratio)} the phase lagging the "
                    "ground has the dimmest lamp."
                )
            step = (
                "Measure each phase to earth with a voltmeter and run the ground diagnosis: "
                "lamps cannot give the resistance"
                + (", and the dimmest lamp is not always the grounded phase."
                   if math.isfinite(crossover) else ".")
            )
    else:
        confidence = Confidence.LOW
        finding = ("Partial ground on " + " or ".join(ordered) + ": the lamps cannot tell "
                   "which; " + "; ".join(expected(k) for k in ordered) + ".")
        step = (
            "Dim lamps cannot say which phase is grounded here: measure each phase to earth "
            "with a voltmeter (phase sequence known) and run the ground diagnosis."
        )
    if math.isinf(crossover):
        finding += (" With this lamp burden the dimmest lamp is always the grounded phase "
                    "(the phase lagging it never reads lower).")
    return LampDiagnosis(
        observations=obs,
        finding=finding,
        suspected_phases=ordered,
        confidence=confidence,
        exact_match=exact,
        ratio_range={k: ranges[k] for k in ordered},
        next_step=step,
        brightness={k: brightness[k] for k in ordered},
        **common,
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
            f"insulation {format_quantity(reading_ohm, 'kΩ')} is at or below the alarm "
            f"setting {format_quantity(alarm_setting_ohm, 'kΩ')}: a ground is present; the "
            "monitor does not tell the phase or the circuit"
        )
    elif reading_ohm <= prewarning:
        severity = MonitorSeverity.PREWARNING
        note = (
            f"insulation {format_quantity(reading_ohm, 'kΩ')} is within "
            f"{prewarning_factor:g}× of the alarm setting: insulation deteriorating"
        )
    else:
        severity = MonitorSeverity.NORMAL
        note = f"insulation {format_quantity(reading_ohm, 'kΩ')} is above the prewarning level"
    below = alarm_setting_ohm < guide
    if below:
        note += (
            f"; the alarm setting is below the response guide of "
            f"{response_ohm_per_v:g} Ω/V × {system_voltage_v:g} V = {format_quantity(guide, 'kΩ')}"
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
