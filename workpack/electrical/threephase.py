"""Balanced three-phase relations: phase labels and sequence, line and phase quantities.

Units: volts, amperes, volt-amperes, degrees for angles shown to people, radians inside.
Phasors are RMS complex values.
"""

from __future__ import annotations

import cmath
import math
import re
from collections.abc import Sequence
from dataclasses import dataclass

SQRT3 = math.sqrt(3.0)

_LABEL_TOKEN = re.compile(r"L\d|[A-Za-z]|\d")


def _check_positive(name: str, value: float) -> None:
    """ValueError unless ``value`` is positive and finite."""
    if not math.isfinite(value) or value <= 0:
        raise ValueError(f"{name} must be a positive finite number (got {value!r})")


def _check_non_negative(name: str, value: float) -> None:
    """ValueError unless ``value`` is zero or positive and finite."""
    if not math.isfinite(value) or value < 0:
        raise ValueError(f"{name} must be zero or a positive finite number (got {value!r})")


@dataclass(frozen=True)
class PhaseSequence:
    """The order in which the phases reach their positive peak.

    ``order[0]`` is the reference at 0°, ``order[1]`` lags it by 120°, ``order[2]`` leads it
    by 120° (lags ``order[1]`` by 120°). "ABC" and "ACB" use the same labels in opposite
    rotation; labels are whatever the plant declares (A/B/C, L1/L2/L3, R/S/T, U/V/W).
    """

    order: tuple[str, str, str]

    def __post_init__(self) -> None:
        """Refuse anything but three different labels."""
        if len(self.order) != 3 or len(set(self.order)) != 3:
            raise ValueError(
                f"a phase sequence names three different phases (got {self.order!r})"
            )

    @classmethod
    def parse(cls, text: str | Sequence[str] | PhaseSequence) -> PhaseSequence:
        """Read "ABC", "ACB", "L1-L2-L3", "L1 L3 L2" or a sequence of three labels."""
        if isinstance(text, PhaseSequence):
            return text
        if isinstance(text, str):
            tokens = _LABEL_TOKEN.findall(text.strip().upper())
            leftover = _LABEL_TOKEN.sub("", text.strip().upper())
            if leftover.strip(" -,/>") != "":
                raise ValueError(
                    f"phase sequence {text!r} must be three phase labels such as 'ABC' "
                    "or 'L1-L2-L3'"
                )
        else:
            tokens = [str(t) for t in text]
        if len(tokens) != 3 or len(set(tokens)) != 3:
            raise ValueError(
                f"phase sequence {text!r} must name three different phases, "
                "such as 'ABC', 'ACB' or 'L1-L2-L3'"
            )
        return cls((tokens[0], tokens[1], tokens[2]))

    @property
    def labels(self) -> tuple[str, str, str]:
        """The three labels in sorted order (the order used for tables and arrays)."""
        a, b, c = sorted(self.order)
        return (a, b, c)

    @property
    def follows_label_order(self) -> bool:
        """True when the rotation is the labels' own order (ABC, BCA, L1-L2-L3...)."""
        a, b, c = self.labels
        return self.order in ((a, b, c), (b, c, a), (c, a, b))

    def reversed(self) -> PhaseSequence:
        """The opposite rotation with the same labels (ABC -> ACB)."""
        return PhaseSequence((self.order[0], self.order[2], self.order[1]))

    def angle_rad(self, label: str) -> float:
        """Angle of a phase's source voltage in radians: 0, -2π/3 or +2π/3."""
        try:
            position = self.order.index(label)
        except ValueError:
            raise ValueError(
                f"phase {label!r} is not in the sequence {''.join(self.order)!r}"
            ) from None
        return (0.0, -2.0 * math.pi / 3.0, 2.0 * math.pi / 3.0)[position]

    def leading(self, label: str) -> str:
        """The phase that leads ``label`` by 120°."""
        return self.order[(self.order.index(label) - 1) % 3]

    def lagging(self, label: str) -> str:
        """The phase that lags ``label`` by 120°."""
        return self.order[(self.order.index(label) + 1) % 3]

    def check_labels(self, labels: Sequence[str], what: str) -> None:
        """Raise ValueError unless ``labels`` are exactly this sequence's phases."""
        if sorted(labels) != sorted(self.order):
            raise ValueError(
                f"{what} must name the phases {', '.join(self.labels)} "
                f"(got {', '.join(sorted(map(str, labels))) or 'none'})"
            )


def line_to_neutral(line_voltage_v: float) -> float:
    """Phase-to-neutral voltage (V) of a balanced system from its line voltage (V): V/√3."""
    _check_positive("line voltage", line_voltage_v)
    return line_voltage_v / SQRT3


def line_to_line(phase_voltage_v: float) -> float:
    """Line voltage (V) of a balanced wye from its phase-to-neutral voltage (V): √3·V."""
    _check_positive("phase voltage", phase_voltage_v)
    return phase_voltage_v * SQRT3


def source_phasors(line_voltage_v: float, sequence: PhaseSequence | str) -> dict[str, complex]:
    """Balanced phase-to-neutral source phasors (V RMS), keyed by label, first phase at 0°."""
    seq = PhaseSequence.parse(sequence)
    v_ln = line_to_neutral(line_voltage_v)
    return {label: cmath.rect(v_ln, seq.angle_rad(label)) for label in seq.labels}


@dataclass(frozen=True)
class ConnectionQuantities:
    """Line and phase (winding) quantities of one balanced wye or delta connection."""

    connection: str  # "wye" or "delta"
    line_voltage_v: float
    line_current_a: float
    phase_voltage_v: float  # across one winding or load element
    phase_current_a: float  # through one winding or load element
    apparent_power_va: float


def wye_quantities(line_voltage_v: float, line_current_a: float) -> ConnectionQuantities:
    """Wye: phase voltage = V_LL/√3 (V), phase current = line current (A)."""
    _check_positive("line voltage", line_voltage_v)
    _check_non_negative("line current", line_current_a)
    return ConnectionQuantities(
        connection="wye",
        line_voltage_v=line_voltage_v,
        line_current_a=line_current_a,
        phase_voltage_v=line_voltage_v / SQRT3,
        phase_current_a=line_current_a,
        apparent_power_va=SQRT3 * line_voltage_v * line_current_a,
    )


def delta_quantities(line_voltage_v: float, line_current_a: float) -> ConnectionQuantities:
    """Delta: phase voltage = V_LL (V), phase (winding) current = line current/√3 (A)."""
    _check_positive("line voltage", line_voltage_v)
    _check_non_negative("line current", line_current_a)
    return ConnectionQuantities(
        connection="delta",
        line_voltage_v=line_voltage_v,
        line_current_a=line_current_a,
        phase_voltage_v=line_voltage_v,
        phase_current_a=line_current_a / SQRT3,
        apparent_power_va=SQRT3 * line_voltage_v * line_current_a,
    )


def line_current(apparent_power_va: float, line_voltage_v: float) -> float:
    """Line current (A) of a balanced three-phase load: S/(√3·V_LL)."""
    _check_non_negative("apparent power", apparent_power_va)
    _check_positive("line voltage", line_voltage_v)
    return apparent_power_va / (SQRT3 * line_voltage_v)
