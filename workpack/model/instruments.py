"""The instrument register: the test instruments readings are taken with.

One hand-written YAML file per plant or fleet (``plants/*-instruments.yaml``). Each
instrument has a stable id (the one written beside a reading), its kind, serial number,
what it measures and over which range, and the date its calibration runs out. A reading
taken with an instrument out of calibration on the reading's day is refused when it is
recorded; one outside the instrument's range is recorded as not accepted, with the reason.
"""

from __future__ import annotations

import datetime as dt
from enum import StrEnum
from typing import Annotated, Any, Literal, get_args

from pydantic import Field, WithJsonSchema, model_validator

from workpack.model.plant import ID_RULE, Id, Strict
from workpack.units import UnitProblem, to_si

# A number in SI or a string with its unit, read in the kind ``measures`` names.
SiValue = Annotated[float, WithJsonSchema({
    "anyOf": [{"type": "number"}, {"type": "string", "pattern": r"^\s*[-+]?[0-9.]"}]})]
Measures = Literal["resistance", "voltage", "current", "frequency", "temperature", "time"]


class InstrumentKind(StrEnum):
    """What the instrument is: insulation_tester (a DC insulation resistance tester, a
    "megger"), voltage_tester (a two-pole voltage detector for proving dead), multimeter,
    clamp_meter, thermometer, other."""

    insulation_tester = "insulation_tester"
    voltage_tester = "voltage_tester"
    multimeter = "multimeter"
    clamp_meter = "clamp_meter"
    thermometer = "thermometer"
    other = "other"


class MeasuringRange(Strict):
    """What the instrument measures and between which values it reads (its data sheet)."""

    measures: Measures = Field(description="the quantity: resistance, voltage, current, "
                                           "frequency, temperature or time",
                               examples=["resistance"])
    low: SiValue = Field(description="lowest value it reads, in SI or with a unit ('10 kΩ')",
                       examples=["10 kΩ"])
    high: SiValue = Field(description="highest value it reads, in SI or with a unit ('10 GΩ')",
                        examples=["10 GΩ"])

    @model_validator(mode="before")
    @classmethod
    def _in_si(cls, data: Any) -> Any:
        """Both ends read in the unit kind ``measures`` names (a unit of another kind is a
        slip: 1000 V as a resistance range)."""
        if not isinstance(data, dict) or data.get("measures") not in get_args(Measures):
            return data
        converted = dict(data)
        for end in ("low", "high"):
            if end in data and not isinstance(data[end], bool):
                try:
                    converted[end] = to_si(data[end], data["measures"])
                except UnitProblem as problem:
                    raise ValueError(f"{end}: {problem}") from None
        return converted

    @model_validator(mode="after")
    def _in_order(self) -> MeasuringRange:
        if self.high <= self.low:
            raise ValueError(f"high {self.high:g} is not above low {self.low:g}")
        return self


class Instrument(Strict):
    """One test instrument."""

    id: Id = Field(description=f"the id written beside each reading taken with it: {ID_RULE}",
                   examples=["IT-03"])
    kind: InstrumentKind = Field(description="what it is (see its values)",
                                 examples=["insulation_tester"])
    make_model: str | None = Field(default=None, min_length=1,
                                   description="maker and model, as on the instrument",
                                   examples=["Trevose IR-5 (fictitious)"])
    serial: str = Field(min_length=1, description="the maker's serial number",
                        examples=["TR5-118204"])
    ranges: tuple[MeasuringRange, ...] = Field(
        min_length=1, description="what it measures, and between which values",
        examples=[[{"measures": "resistance", "low": "10 kΩ", "high": "10 GΩ"}]])
    calibrated_on: dt.date | None = Field(default=None, description="day of its last "
                                          "calibration, YYYY-MM-DD", examples=["2026-03-02"])
    calibration_due: dt.date = Field(
        description="the last day its calibration holds, YYYY-MM-DD (the 'cal due' date on "
                    "its label); a reading on a later day is out of calibration",
        examples=["2027-03-01"])
    certificate: str | None = Field(default=None, min_length=1,
                                    description="the calibration certificate's number",
                                    examples=["CAL-26-0311"])

    @model_validator(mode="after")
    def _dates_in_order(self) -> Instrument:
        if self.calibrated_on is not None and self.calibration_due < self.calibrated_on:
            raise ValueError(f"calibration_due {self.calibration_due} is before calibrated_on "
                             f"{self.calibrated_on}")
        return self

    def range_for(self, measures: str) -> MeasuringRange | None:
        return next((r for r in self.ranges if r.measures == measures), None)


class InstrumentRegister(Strict):
    """The test instruments of a plant or fleet."""

    name: str = Field(min_length=1, description="what this register is",
                      examples=["MV Skerry Lantern test instruments"])
    plants: tuple[str, ...] = Field(
        default=(), description="names of the plants it serves, as their inventories name "
                                "them (plant.name); empty: any plant",
        examples=[["MV Skerry Lantern"]])
    instruments: tuple[Instrument, ...] = Field(
        min_length=1, description="every instrument readings are taken with",
        examples=[[{"id": "IT-03", "kind": "insulation_tester", "serial": "TR5-118204",
                    "ranges": [{"measures": "resistance", "low": "10 kΩ", "high": "10 GΩ"}],
                    "calibration_due": "2027-03-01"}]])

    def instrument(self, instrument_id: str) -> Instrument | None:
        return next((i for i in self.instruments if i.id == instrument_id), None)
