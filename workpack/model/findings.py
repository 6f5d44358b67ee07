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
from typing import Annotated, Any, Literal

from pydantic import Field, model_validator

from workpack.model.plant import ID_RULE, Id, Strict
from workpack.model.quantities import (
    Celsius,
    MeasuredVolts,
    Ohms,
    Seconds,
    VoltAmperes,
    Volts,
)


class LampState(StrEnum):
    """How bright a ground-detector lamp looks against its normal brightness: normal (as
    the others on a healthy system), dim (clearly less), dark (out or nearly so), bright
    (brighter than normal: its phase is further from earth)."""

    normal = "normal"
    dim = "dim"
    dark = "dark"
    bright = "bright"


class Severity(StrEnum):
    """How soon a defect needs work, most pressing first: urgent (at once), high (soon: the
    shipped rules plan a repair of a high or urgent defect on a load, cable or board),
    routine (in the normal run
    of work), low (when convenient). Rules read it as diagnosis.severity."""

    urgent = "urgent"
    high = "high"
    routine = "routine"
    low = "low"


def _local_time(schema: dict[str, Any]) -> None:
    """The times people write (2026-12-01T07:40, no seconds, no zone) are not the strict
    RFC 3339 an editor checks "format: date-time" against: describe them by a pattern."""
    schema.pop("format", None)
    schema["pattern"] = r"^[0-9]{4}-[0-9]{2}-[0-9]{2}[Tt ][0-9]{2}:[0-9]{2}"


class Observation(Strict):
    """What every finding says: when, by whom, where."""

    id: Id | None = Field(default=None, description=f"the finding's own id; defaults to F1, "
                          f"F2… in file order: {ID_RULE}", examples=["F1"])
    at: dt.datetime = Field(description="when it was seen: date and local time, "
                            "YYYY-MM-DDTHH:MM, e.g. 2026-12-01T07:40",
                            examples=["2026-12-01T07:40"], json_schema_extra=_local_time)
    by: str = Field(min_length=1, description="who saw or measured it",
                    examples=["T. Marrow (3/E)"])
    where: Id = Field(description="id of the element or ground detector it concerns",
                      examples=["GD-MSB", "WL-1"])
    note: str | None = Field(default=None, description="anything else worth knowing, in words",
                             examples=["changed since the evening rounds"])
    intermittent: bool = Field(default=False,
                               description="true when the indication comes and goes "
                                           "(an arcing ground: a ground that comes and goes "
                                           "is urgent)",
                               examples=[True])


class LampsSeen(Observation):
    """Ground-detector lamps seen: how bright each phase's lamp is."""

    kind: Literal["lamps"] = Field(description="lamps: the ground-detector lamps as seen",
                                   examples=["lamps"])
    lamps: dict[str, LampState] = Field(description="brightness per phase label, e.g. "
                                        "{A: dark, B: bright, C: bright}",
                                        examples=[{"A": "bright", "B": "dim", "C": "normal"}])
    test_button_pressed: bool = Field(
        default=True, description="true (the default) when the test button was held, "
                                  "connecting the lamps' star point to earth, while looking",
        examples=[True])


class PhaseVoltages(Observation):
    """Phase-to-earth voltages read at a board."""

    kind: Literal["phase_voltages"] = Field(
        description="phase_voltages: phase-to-earth voltmeter readings",
        examples=["phase_voltages"])
    volts: dict[str, MeasuredVolts] = Field(description="phase-to-earth voltage per phase "
                                            "label, in volts, e.g. {A: 348 V, B: 236 V}",
                                            examples=[{"A": "348 V", "B": "236 V",
                                                       "C": "209 V"}])
    meter_tolerance_percent: float | None = Field(
        default=None, gt=0, le=20, description="accuracy of the meter used, in percent of "
                                               "the reading; defaults to the detector's",
        examples=[2.5])


class MonitorReading(Observation):
    """What an insulation monitor shows."""

    kind: Literal["insulation_monitor"] = Field(
        description="insulation_monitor: an insulation monitor's reading",
        examples=["insulation_monitor"])
    reading: Ohms = Field(description="insulation resistance shown, in ohms, e.g. '18 kΩ'",
                          examples=["18 kΩ"])
    alarm_active: bool | None = Field(default=None, description="whether its alarm was on; "
                                      "leave out if not noted", examples=[True])


class Megger(Observation):
    """An insulation-resistance test of one item, with the temperature it was made at."""

    kind: Literal["insulation_resistance"] = Field(
        description="insulation_resistance: an insulation-resistance test result",
        examples=["insulation_resistance"])
    test_voltage: Volts = Field(description="DC test voltage applied, e.g. '500 V'",
                                examples=["500 V"])
    reading: Ohms = Field(description="one-minute reading in ohms, e.g. '2.1 MΩ'",
                          examples=["1.2 MΩ"])
    reading_10min: Ohms | None = Field(default=None, description="ten-minute reading in "
                                       "ohms, for the polarization index", examples=["2.6 MΩ"])
    temperature: Celsius = Field(description="winding or equipment temperature during the "
                                 "test, in °C, e.g. '30 °C' (the reading is corrected to a "
                                 "reference temperature)", examples=["30 °C"])
    duration: Seconds = Field(default=60.0, description="how long the voltage was applied, "
                              "default 1 min", examples=["1 min"])
    conductors: str = Field(default="all phases to earth", description="which conductors "
                            "were tested against what", examples=["all phases to earth"])


class BreakerTripped(Observation):
    """A breaker or other device found tripped."""

    kind: Literal["breaker_tripped"] = Field(
        description="breaker_tripped: a device found tripped", examples=["breaker_tripped"])
    indication: str | None = Field(default=None,
                                   description="what the trip unit showed, if anything",
                                   examples=["earth fault flag"])
    reset_attempted: bool = Field(default=False, description="true when someone already "
                                  "tried to reset it", examples=[False])


class UnitState(StrEnum):
    """What is wrong with one unit of a transformer bank: failed (out of service: the
    bank runs open delta or not at all), overheating, noisy."""

    failed = "failed"
    overheating = "overheating"
    noisy = "noisy"


class TransformerUnit(Observation):
    """A failed or overheating unit of a transformer bank."""

    kind: Literal["transformer_unit"] = Field(
        description="transformer_unit: a problem with one unit of a bank",
        examples=["transformer_unit"])
    unit: str = Field(description="which single-phase unit, by the phase pair it serves "
                                  "or its mark, e.g. 'AB' or 'unit 2'", examples=["BC"])
    state: UnitState = Field(description="what is wrong with it", examples=["failed"])
    load: VoltAmperes | None = Field(default=None,
                               description="bank load now, in kVA, e.g. '30 kVA'; estimated "
                                           "from the connected loads if absent",
                               examples=["48 kVA"])


class Defect(Observation):
    """Anything else found wrong, in words."""

    kind: Literal["defect"] = Field(description="defect: anything else, in words",
                                    examples=["defect"])
    text: str = Field(min_length=1, description="what was found", examples=[
        "deck socket outlet cover cracked, water inside the enclosure"])
    severity: Severity = Field(default=Severity.routine, description="how soon it needs work",
                               examples=["high"])


Finding = Annotated[
    LampsSeen | PhaseVoltages | MonitorReading | Megger | BreakerTripped | TransformerUnit
    | Defect,
    Field(discriminator="kind"),
]


class Findings(Strict):
    """One day's observations, each with a kind that decides its fields: lamps,
    phase_voltages, insulation_monitor, insulation_resistance, breaker_tripped,
    transformer_unit, defect. Quantities may carry units ("400 V", "18 kΩ", "35 °C")."""

    date: dt.date | None = Field(default=None, description="the day the findings belong to, "
                                 "YYYY-MM-DD", examples=["2026-12-01"])
    findings: tuple[Finding, ...] = Field(
        default=(), description="the observations, in the order they were made",
        examples=[[{"kind": "lamps", "at": "2026-12-01T06:50", "by": "T. Marrow (3/E)",
                    "where": "GD-MSB", "lamps": {"A": "bright", "B": "dim", "C": "normal"}}]])

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
