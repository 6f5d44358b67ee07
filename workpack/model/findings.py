"""A day's findings: what was seen or measured, when, by whom, where.

One list of observations, each with a ``kind`` that decides its fields:

- ``lamps``: ground-detector lamp brightness per phase (normal / dim / dark / bright);
- ``phase_voltages``: phase-to-earth voltmeter readings per phase;
- ``insulation_monitor``: the insulation resistance an insulation monitor shows;
- ``insulation_resistance``: a megger reading of one item, with its temperature;
- ``breaker_tripped``: a device found tripped;
- ``transformer_unit``: a failed or overheating unit of a transformer bank;
- ``defect``: anything else, in words.

``where`` names a plant element or a ground detector. Quantities may carry
units ("400 V", "18 kΩ", "35 °C").
"""

from __future__ import annotations

import datetime as dt
from enum import StrEnum
from typing import Annotated, Literal

from pydantic import Field, model_validator

from workpack.model.plant import Id, Strict
from workpack.model.quantities import (
    Celsius,
    MeasuredVolts,
    Ohms,
    Seconds,
    VoltAmperes,
    Volts,
)


class LampState(StrEnum):
    normal = "normal"
    dim = "dim"
    dark = "dark"
    bright = "bright"


class Severity(StrEnum):
    urgent = "urgent"
    high = "high"
    routine = "routine"
    low = "low"


class Observation(Strict):
    id: Id | None = Field(default=None, description="defaults to F1, F2… in file order")
    at: dt.datetime = Field(description="when it was seen, e.g. 2026-12-01T07:40")
    by: str = Field(min_length=1, description="who saw or measured it")
    where: Id = Field(description="the element or ground detector it concerns")
    note: str | None = None
    intermittent: bool = Field(default=False,
                               description="indication comes and goes (arcing ground?)")


class LampsSeen(Observation):
    kind: Literal["lamps"]
    lamps: dict[str, LampState] = Field(description="per phase label, e.g. {A: dark, B: bright}")
    test_button_pressed: bool = Field(
        default=True, description="the star point was connected to earth while looking")


class PhaseVoltages(Observation):
    kind: Literal["phase_voltages"]
    volts: dict[str, MeasuredVolts] = Field(description="phase-to-earth per phase label")
    meter_tolerance_percent: float | None = Field(
        default=None, gt=0, le=20, description="defaults to the detector's stated accuracy")


class MonitorReading(Observation):
    kind: Literal["insulation_monitor"]
    reading: Ohms = Field(description="insulation resistance shown, e.g. '18 kΩ'")
    alarm_active: bool | None = None


class Megger(Observation):
    kind: Literal["insulation_resistance"]
    test_voltage: Volts
    reading: Ohms = Field(description="one-minute reading, e.g. '2.1 MΩ'")
    reading_10min: Ohms | None = Field(default=None, description="for polarization index")
    temperature: Celsius = Field(description="winding or equipment temperature")
    duration: Seconds = Field(default=60.0, description="test duration, default 1 min")
    conductors: str = Field(default="all phases to earth")


class BreakerTripped(Observation):
    kind: Literal["breaker_tripped"]
    indication: str | None = Field(default=None,
                                   description="what the trip unit showed, if anything")
    reset_attempted: bool = False


class UnitState(StrEnum):
    failed = "failed"
    overheating = "overheating"
    noisy = "noisy"


class TransformerUnit(Observation):
    kind: Literal["transformer_unit"]
    unit: str = Field(description="which single-phase unit, by the phase pair it serves "
                                  "or its mark, e.g. 'AB' or 'unit 2'")
    state: UnitState
    load: VoltAmperes | None = Field(default=None,
                               description="bank load now, e.g. '30 kVA'; estimated if absent")


class Defect(Observation):
    kind: Literal["defect"]
    text: str = Field(min_length=1)
    severity: Severity = Severity.routine


Finding = Annotated[
    LampsSeen | PhaseVoltages | MonitorReading | Megger | BreakerTripped | TransformerUnit
    | Defect,
    Field(discriminator="kind"),
]


class Findings(Strict):
    date: dt.date | None = Field(default=None, description="the day the findings belong to")
    findings: tuple[Finding, ...] = ()

    @model_validator(mode="after")
    def _number_them(self) -> Findings:
        numbered = []
        seen: set[str] = set()
        for index, finding in enumerate(self.findings, start=1):
            if finding.id is None:
                finding = finding.model_copy(update={"id": f"F{index}"})
            if finding.id in seen:
                raise ValueError(f"finding id {finding.id!r} is used twice")
            seen.add(str(finding.id))
            numbered.append(finding)
        object.__setattr__(self, "findings", tuple(numbered))
        return self
