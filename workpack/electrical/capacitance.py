"""System capacitance to earth of an insulated system, and its charging current.

Units: farads, metres, farads per metre, volts, hertz, amperes.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass


@dataclass(frozen=True)
class CableRun:
    """A three-phase cable: each phase conductor has ``capacitance_f_per_m`` to earth."""

    length_m: float
    capacitance_f_per_m: float
    name: str = ""

    def __post_init__(self) -> None:
        """Refuse negative lengths and capacitances."""
        if not math.isfinite(self.length_m) or self.length_m < 0:
            raise ValueError(
                f"cable {self.name or '(unnamed)'}: length must be zero or positive metres "
                f"(got {self.length_m!r})"
            )
        if not math.isfinite(self.capacitance_f_per_m) or self.capacitance_f_per_m < 0:
            raise ValueError(
                f"cable {self.name or '(unnamed)'}: capacitance per metre must be zero or "
                f"positive F/m (got {self.capacitance_f_per_m!r})"
            )

    @property
    def per_phase_f(self) -> float:
        """Capacitance of one conductor to earth (F)."""
        return self.length_m * self.capacitance_f_per_m


@dataclass(frozen=True)
class SystemCapacitance:
    """Per-phase capacitance to earth (F), split by where it comes from."""

    cables_f: float
    equipment_f: float
    per_phase_f: float  # C0, the sum


def system_capacitance(
    cables: Iterable[CableRun] = (),
    equipment_per_phase_f: Iterable[float] = (),
) -> SystemCapacitance:
    """C0 (F) of one phase to earth: Σ cable length × per-metre capacitance + lumped equipment.

    ``equipment_per_phase_f`` holds lumped capacitances from one phase to earth (e.g. the
    suppression capacitors of drives and filters), one number per item, each present on
    every phase.
    """
    cable_total = sum((c.per_phase_f for c in cables), 0.0)
    equipment_total = 0.0
    for value in equipment_per_phase_f:
        if not math.isfinite(value) or value < 0:
            raise ValueError(f"equipment capacitance must be zero or positive F (got {value!r})")
        equipment_total += value
    return SystemCapacitance(
        cables_f=cable_total,
        equipment_f=equipment_total,
        per_phase_f=cable_total + equipment_total,
    )


def charging_current(
    line_voltage_v: float, frequency_hz: float, capacitance_per_phase_f: float
) -> float:
    """Current (A) in a bolted ground: 3·ω·C0·V_LN (Mitolo, ch. 9, eq. 9.15 with R_G = 0)."""
    if not math.isfinite(line_voltage_v) or line_voltage_v <= 0:
        raise ValueError(f"line voltage must be positive volts (got {line_voltage_v!r})")
    if not math.isfinite(frequency_hz) or frequency_hz <= 0:
        raise ValueError(f"frequency must be positive hertz (got {frequency_hz!r})")
    if not math.isfinite(capacitance_per_phase_f) or capacitance_per_phase_f < 0:
        raise ValueError(
            f"capacitance must be zero or positive farads (got {capacitance_per_phase_f!r})"
        )
    omega = 2.0 * math.pi * frequency_hz
    return 3.0 * omega * capacitance_per_phase_f * line_voltage_v / math.sqrt(3.0)
