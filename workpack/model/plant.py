"""The plant inventory: what a supervisor writes down about the installation.

Every element has a plant-wide unique ``id``. Elements other than sources say
what they are connected to on their supply side with ``from`` (one id or a
list); the rest of the wiring follows from that. A transformer's ``from`` is
its primary side; whatever names the transformer in its own ``from`` hangs on
the secondary. Switching state lives in the devices (``normally: open`` for a
tie), never in the wiring. Quantities are SI once loaded; in the file they may
carry units ("440 V", "2.2 uF", "150 m").
"""

from __future__ import annotations

import datetime as dt
import re
from enum import StrEnum
from typing import Annotated, Any, Literal

from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    ValidationInfo,
    WithJsonSchema,
    field_validator,
    model_validator,
)

from workpack.model.quantities import (
    Amperes,
    Farads,
    FaradsPerMetre,
    Hertz,
    Metres,
    Ohms,
    VoltAmperes,
    Volts,
    Watts,
)

Id = Annotated[str, Field(pattern=r"^[A-Za-z0-9][A-Za-z0-9_.\-/]*$", max_length=64)]


class Strict(BaseModel):
    """Base for hand-written data: a misspelled key is an error, not a silent default."""

    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True)


def _as_list(value: Any) -> Any:
    if value is None:
        return []
    return [value] if isinstance(value, str) else value


# --- plant -------------------------------------------------------------------------------


class PlantKind(StrEnum):
    vessel = "vessel"
    offshore_unit = "offshore_unit"
    industrial_site = "industrial_site"
    mine = "mine"
    hospital = "hospital"
    other = "other"


class CodeSet(Strict):
    """Which published tables decide test voltages and limits."""

    rotating_machines: Literal["ieee43-2013", "ieee43-2000"] = "ieee43-2013"
    apparatus: Literal["neta-mts-2019"] = "neta-mts-2019"
    installations: Literal["iec60364-6"] = "iec60364-6"
    approach_boundaries: Literal["nfpa70e-2021"] = "nfpa70e-2021"


class PlantInfo(Strict):
    name: str = Field(min_length=1)
    kind: PlantKind
    frequency: Hertz
    phase_labels: tuple[str, str, str] = ("A", "B", "C")
    phase_sequence: tuple[str, str, str] | None = Field(
        default=None,
        description="rotation order of the phases, e.g. [A, B, C]; defaults to phase_labels",
    )
    code_set: CodeSet = CodeSet()
    operator: str | None = None

    @model_validator(mode="after")
    def _sequence_uses_the_labels(self) -> PlantInfo:
        if len(set(self.phase_labels)) != 3:
            raise ValueError(f"phase_labels must be three different labels (got "
                             f"{list(self.phase_labels)})")
        if {"N", "E"} & set(self.phase_labels):
            raise ValueError(f"phase_labels {list(self.phase_labels)}: N and E name the "
                             "neutral and earth in the proving-dead pairs; label the phases "
                             "otherwise")
        if self.phase_sequence is not None and sorted(self.phase_sequence) != sorted(
            self.phase_labels
        ):
            raise ValueError(f"phase_sequence {list(self.phase_sequence)} must use the "
                             f"phase_labels {list(self.phase_labels)}")
        return self

    @property
    def sequence(self) -> tuple[str, str, str]:
        return self.phase_sequence or self.phase_labels


# --- common parts ---------------------------------------------------------------------


class Environment(StrEnum):
    wet = "wet"
    weather_exposed = "weather_exposed"
    hot = "hot"
    hazardous_area = "hazardous_area"
    vibration = "vibration"
    dusty = "dusty"
    galley = "galley"
    laundry = "laundry"


class Vitality(StrEnum):
    vital = "vital"
    important = "important"
    non_essential = "non_essential"


class RoutineTest(StrEnum):
    detector_test = "detector_test"
    insulation_resistance = "insulation_resistance"
    transformer_inspection = "transformer_inspection"
    insulation_monitor_test = "insulation_monitor_test"
    thermographic_survey = "thermographic_survey"


_INTERVAL = re.compile(r"^\s*(\d+)\s*(day|days|week|weeks|month|months|year|years)\s*$")
_DAYS_PER = {"day": 1, "week": 7, "month": 30, "year": 365}


class Routine(Strict):
    """A periodic test and when it was last done."""

    test: RoutineTest
    every: str = Field(description="interval such as '6 months', '30 days', '1 year'")
    last_done: dt.date | None = None

    @field_validator("every")
    @classmethod
    def _interval(cls, value: str) -> str:
        match = _INTERVAL.match(value)
        if not match:
            raise ValueError(f"expected an interval such as '6 months' or '30 days' "
                             f"(got {value!r})")
        if int(match.group(1)) == 0:
            raise ValueError(f"an interval of {value!r} would make the test due for ever; "
                             "give at least 1 day")
        return value

    @property
    def interval_days(self) -> int:
        match = _INTERVAL.match(self.every)
        assert match  # checked on loading
        return int(match.group(1)) * _DAYS_PER[match.group(2).rstrip("s")]


class Element(Strict):
    id: Id
    name: str | None = None
    location: str | None = None
    environment: tuple[Environment, ...] = ()
    routine: tuple[Routine, ...] = ()

    @property
    def label(self) -> str:
        return f"{self.id} ({self.name})" if self.name else self.id


_ID_SCHEMA = {"type": "string", "pattern": r"^[A-Za-z0-9][A-Za-z0-9_.\-/]*$"}
_ONE_OR_MANY_IDS = WithJsonSchema({
    "anyOf": [_ID_SCHEMA, {"type": "array", "items": _ID_SCHEMA, "minItems": 1}],
    "description": "supply-side connection: one element id, or a list of them",
})


class FedElement(Element):
    from_: Annotated[tuple[Id, ...], _ONE_OR_MANY_IDS] = Field(
        alias="from", min_length=1, description="supply-side connection(s): element ids")

    @field_validator("from_", mode="before")
    @classmethod
    def _one_or_many(cls, value: Any) -> Any:
        return _as_list(value)


# --- sources --------------------------------------------------------------------------


class SourceKind(StrEnum):
    generator = "generator"
    emergency_generator = "emergency_generator"
    shore_connection = "shore_connection"
    utility = "utility"
    battery = "battery"
    ups = "ups"


# Sources live whether or not anyone here closes anything: a UPS or battery holds its
# output up by itself and a shore supply is switched from ashore.
ALWAYS_LIVE = frozenset({SourceKind.ups, SourceKind.battery, SourceKind.shore_connection})


class ControlBlock(Strict):
    """A lockable control that keeps a source from starting, or a changeover from
    transferring, by itself: a mode or start selector, an inverter off switch."""

    id: Id
    name: str | None = None
    location: str | None = None
    how: str = Field(min_length=1, description="what to set and how to lock it, e.g. "
                                               "'engine mode selector to OFF; padlock it'")

    @property
    def label(self) -> str:
        return f"{self.id} ({self.name})" if self.name else self.id


class Source(Element):
    kind: SourceKind
    voltage: Volts
    rated_kva: VoltAmperes | None = Field(default=None,
                                          description="apparent power, e.g. '500 kVA'")
    starts_automatically: bool = Field(
        default=False, description="e.g. an emergency generator that starts on blackout")
    start_block: ControlBlock | None = Field(
        default=None, description="the lockable control that stops it starting or putting "
                                  "out power by itself (isolation locks it as a step)")

    @property
    def comes_on_by_itself(self) -> bool:
        """Starts by itself, or is live without anyone here closing anything."""
        return self.starts_automatically or self.kind in ALWAYS_LIVE


# --- buses and detectors ----------------------------------------------------------------


class Earthing(StrEnum):
    insulated = "insulated"
    high_resistance = "high_resistance"
    solid = "solid"


class DetectorKind(StrEnum):
    lamps = "lamps"
    voltmeters = "voltmeters"
    insulation_monitor = "insulation_monitor"


class BurdenConnection(StrEnum):
    """When a detector ties the phases to earth (and so loads the system it watches)."""

    always = "always"
    while_testing = "while_testing"  # e.g. lamps whose star point a push button earths


class Detector(Strict):
    id: Id
    kind: DetectorKind
    alarm: Ohms | None = Field(default=None,
                               description="insulation monitor alarm setting, e.g. '22 kΩ'")
    prewarning: Ohms | None = None
    meter_tolerance_percent: float = Field(default=2.5, gt=0, le=20,
                                           description="voltmeter accuracy class")
    # The detector's own burden: it is part of the circuit it watches (see diagnose.py).
    lamp_power: Watts | None = Field(
        default=None, description="rating of each lamp wired from a phase to earth, e.g. "
        "'15 W'; with lamp_voltage it gives the lamp's resistance R = V²/P")
    lamp_voltage: Volts | None = Field(default=None,
                                       description="rated voltage of each lamp, e.g. '250 V'")
    burden_per_phase: Ohms | None = Field(
        default=None, description="resistance from each phase to earth as the system sees "
        "it, e.g. '4.3 kΩ' for lamps behind small transformers, or each voltmeter's impedance")
    internal_impedance: Ohms | None = Field(
        default=None, description="insulation monitor's internal impedance from the system "
        "(all phases together) to earth, e.g. '120 kΩ'")
    connected: BurdenConnection | None = Field(
        default=None, description="when the burden is on the system: 'always', or "
        "'while_testing' (lamps whose star point a push button earths); default: lamps "
        "while_testing, voltmeters and monitors always")

    @model_validator(mode="after")
    def _monitor_has_alarm(self) -> Detector:
        if self.kind is DetectorKind.insulation_monitor and self.alarm is None:
            raise ValueError("an insulation_monitor needs its alarm setting (e.g. alarm: 22 kΩ)")
        if self.kind is not DetectorKind.insulation_monitor and (
            self.alarm is not None or self.prewarning is not None
        ):
            raise ValueError(f"alarm and prewarning are settings of an insulation_monitor, "
                             f"not of {self.kind}")
        return self

    @model_validator(mode="after")
    def _burden_fits_the_kind(self) -> Detector:
        lamp = (self.lamp_power, self.lamp_voltage)
        if any(v is not None for v in lamp):
            if self.kind is not DetectorKind.lamps:
                raise ValueError(f"lamp_power and lamp_voltage describe lamps, not {self.kind}")
            if None in lamp:
                raise ValueError("give both lamp_power and lamp_voltage (R = V²/P needs both)")
            if self.burden_per_phase is not None:
                raise ValueError("give the lamps' rating or burden_per_phase, not both")
        if self.internal_impedance is not None and (
            self.kind is not DetectorKind.insulation_monitor
        ):
            raise ValueError(f"internal_impedance belongs to an insulation_monitor, not to "
                             f"{self.kind}; use burden_per_phase")
        if self.burden_per_phase is not None and self.kind is DetectorKind.insulation_monitor:
            raise ValueError("give an insulation_monitor's internal_impedance, not "
                             "burden_per_phase")
        for name in ("burden_per_phase", "internal_impedance"):
            if getattr(self, name) == 0:
                raise ValueError(f"{name} of 0 Ω would be a bolted ground: give the "
                                 "detector's resistance")
        return self

    @property
    def burden_connection(self) -> BurdenConnection:
        if self.connected is not None:
            return self.connected
        return (BurdenConnection.while_testing if self.kind is DetectorKind.lamps
                else BurdenConnection.always)

    @field_validator("prewarning")
    @classmethod
    def _prewarning_above_alarm(cls, value: float | None, info: ValidationInfo) -> float | None:
        alarm = info.data.get("alarm")
        if value is not None and alarm is not None and value <= alarm:
            raise ValueError(f"prewarning ({value:g} Ω) must be above the alarm ({alarm:g} Ω): "
                             "resistance falls past the prewarning first")
        return value


class BusKind(StrEnum):
    switchboard = "switchboard"
    switchboard_section = "switchboard_section"
    distribution_panel = "distribution_panel"
    motor_control_centre = "motor_control_centre"
    lighting_panel = "lighting_panel"


class Bus(FedElement):
    kind: BusKind
    voltage: Volts
    earthing: Earthing
    detector: Detector | None = None
    four_wire: bool = Field(default=False, description="a neutral conductor runs with the "
                                                       "three phases (3 phases + N)")


# --- switching devices ------------------------------------------------------------------


class DeviceKind(StrEnum):
    circuit_breaker = "circuit_breaker"
    switch = "switch"
    disconnector = "disconnector"
    fuse = "fuse"
    contactor = "contactor"
    transfer_switch = "transfer_switch"
    connection_box = "connection_box"  # e.g. a shore-power plug box


# A fuse can be drawn and tagged but not locked unless its carrier says so; a
# contactor is control, not isolation; few transfer switches lock in a centre-off
# position, so their supply breakers are locked instead; a shore connection box is
# made safe by isolating ashore. Others lock unless the plant says not.
_LOCKABLE_BY_DEFAULT = {
    DeviceKind.circuit_breaker: True, DeviceKind.switch: True, DeviceKind.disconnector: True,
    DeviceKind.fuse: False, DeviceKind.contactor: False, DeviceKind.transfer_switch: False,
    DeviceKind.connection_box: False,
}


class Transition(StrEnum):
    """How a changeover passes from one input to the other."""

    open = "open"  # break-before-make: its inputs are never joined
    closed = "closed"  # make-before-break: it may join its inputs for a moment


class Device(FedElement):
    kind: DeviceKind
    normally: Literal["closed", "open"] = "closed"
    lockable: bool | None = Field(default=None,
                                  description="can be locked open; default by kind")
    rating: Amperes | None = None
    # Changeover (transfer_switch) only. The defaults are the cautious reading of a
    # switch nobody has described: it may join its two inputs (so a supply on one
    # input is locked off when working on the other) and it transfers by itself (so
    # its alternate is locked before its normal supply is opened).
    transition: Transition | None = Field(
        default=None, description="transfer_switch: 'open' (break-before-make, never joins "
                                  "its inputs) or 'closed' (may parallel them); default closed")
    transfers_automatically: bool | None = Field(
        default=None, description="transfer_switch: changes over by itself on loss of its "
                                  "normal supply; default true")
    transfer_block: ControlBlock | None = Field(
        default=None, description="transfer_switch: the lockable control that keeps it "
                                  "from changing over by itself (manual / blocked)")

    @model_validator(mode="after")
    def _transfer_switch_inputs(self) -> Device:
        if self.kind is DeviceKind.transfer_switch and len(self.from_) < 2:
            raise ValueError("a transfer_switch needs two supplies in 'from': "
                             "[normal, alternate]")
        if self.kind is not DeviceKind.transfer_switch and len(self.from_) != 1:
            raise ValueError(f"a {self.kind} connects to one supply-side element "
                             f"(got {len(self.from_)}); use a transfer_switch for two")
        if self.kind is not DeviceKind.transfer_switch:
            given = [name for name in ("transition", "transfers_automatically",
                                       "transfer_block") if getattr(self, name) is not None]
            if given:
                verb = "describes" if len(given) == 1 else "describe"
                raise ValueError(f"{', '.join(given)} {verb} a transfer_switch, not a "
                                 f"{self.kind}")
        if self.transfers_automatically is False and self.transfer_block is not None:
            raise ValueError("a transfer_block stops a switch changing over by itself; this "
                             "one is declared transfers_automatically: false")
        return self

    @property
    def joins_inputs(self) -> bool:
        """A changeover that can connect its inputs to each other (closed transition)."""
        return self.kind is DeviceKind.transfer_switch and self.transition is not Transition.open

    @property
    def changes_over_by_itself(self) -> bool:
        return (self.kind is DeviceKind.transfer_switch
                and self.transfers_automatically is not False)

    @property
    def can_lock(self) -> bool:
        return _LOCKABLE_BY_DEFAULT[self.kind] if self.lockable is None else self.lockable


# --- transformers -------------------------------------------------------------------------


class Construction(StrEnum):
    bank_of_single_phase = "bank_of_single_phase"
    three_phase = "three_phase"


class SecondaryNeutral(StrEnum):
    not_brought_out = "not_brought_out"
    insulated = "insulated"
    grounded = "grounded"


class TransformerInsulation(StrEnum):
    """What insulates the windings: it picks the insulation-resistance minimum and the
    temperature-correction column (ANSI/NETA MTS Tables 100.5 and 100.14)."""

    liquid_filled = "liquid_filled"
    dry_type = "dry_type"


_VECTOR_GROUP = re.compile(r"^(D|Y|YN|Z|ZN)(d|y|yn|z|zn)(\d{1,2})$")


class Transformer(FedElement):
    construction: Construction
    units: int = Field(default=3, ge=1, le=3, description="single-phase units in a bank")
    unit_kva: VoltAmperes | None = Field(default=None,
                                         description="rating of each unit of a bank")
    rated_kva: VoltAmperes | None = Field(default=None,
                                          description="rating of a three-phase unit")
    primary_voltage: Volts
    secondary_voltage: Volts
    vector_group: str = Field(description="IEC 60076-1 vector group, e.g. Dd0, Dyn11, Yd1")
    secondary_neutral: SecondaryNeutral = SecondaryNeutral.not_brought_out
    insulation: TransformerInsulation | None = Field(
        default=None, description="liquid_filled or dry_type; when absent, dry_type is "
        "assumed for insulation limits (the higher minimum) and the package says so")

    @field_validator("vector_group")
    @classmethod
    def _vector_group(cls, value: str) -> str:
        match = _VECTOR_GROUP.match(value)
        if not match or int(match.group(3)) > 11:
            raise ValueError(f"{value!r} is not an IEC 60076-1 vector group "
                             "(expected e.g. Dd0, Dyn11, Yd1, YNyn0)")
        return value

    @model_validator(mode="after")
    def _ratings(self) -> Transformer:
        if len(self.from_) != 1:
            raise ValueError("a transformer's 'from' names its one primary-side connection")
        if self.construction is Construction.bank_of_single_phase:
            if self.unit_kva is None:
                raise ValueError("a bank_of_single_phase needs unit_kva (rating of each unit)")
            if self.rated_kva is not None:
                raise ValueError("give unit_kva for a bank, not rated_kva")
        else:
            if self.rated_kva is None:
                raise ValueError("a three_phase transformer needs rated_kva")
            if self.units != 3:
                raise ValueError("units applies to a bank_of_single_phase only")
        match = _VECTOR_GROUP.match(self.vector_group)
        assert match  # checked by the field validator
        group = self.vector_group
        neutral_out = match.group(2) in ("yn", "zn")
        if self.secondary_neutral is not SecondaryNeutral.not_brought_out and not neutral_out:
            raise ValueError(f"secondary_neutral is {self.secondary_neutral} but vector group "
                             f"{group} brings out no secondary neutral")
        return self


# --- cables -----------------------------------------------------------------------------


class Cable(FedElement):
    length: Metres
    size: str | None = Field(default=None, description="conductor size as marked, e.g. '3x35 mm2'")
    cable_type: str | None = Field(
        default=None, description="key into the plant's cable_types table")
    capacitance_to_earth: FaradsPerMetre | None = Field(
        default=None, description="per conductor, per metre; overrides the cable type")
    installed: int | None = Field(default=None, ge=1900, le=2100, description="year")

    @model_validator(mode="after")
    def _one_feed(self) -> Cable:
        if len(self.from_) != 1:
            raise ValueError("a cable runs from one element; list its far end as the "
                             "element that names the cable in 'from'")
        return self


class CableType(Strict):
    id: Id
    capacitance_to_earth: FaradsPerMetre = Field(description="per conductor, per metre")
    source: str = Field(min_length=1,
                        description="where the figure comes from (maker's data sheet, handbook)")


# --- loads ------------------------------------------------------------------------------


class LoadKind(StrEnum):
    motor = "motor"
    heater = "heater"
    galley = "galley"
    laundry = "laundry"
    lighting = "lighting"
    socket_outlets = "socket_outlets"
    electronics = "electronics"
    deck_machinery = "deck_machinery"
    capacitor_bank = "capacitor_bank"
    other = "other"


class WindingType(StrEnum):
    random_wound = "random_wound"
    form_wound = "form_wound"


class AuxiliaryKind(StrEnum):
    anti_condensation_heater = "anti_condensation_heater"
    control_power = "control_power"
    space_heater = "space_heater"


class Auxiliary(Strict):
    """A supply into the item that is easy to forget: fed from another panel."""

    kind: AuxiliaryKind
    from_: Id = Field(alias="from", description="the device that feeds it")
    voltage: Volts | None = None


class Load(FedElement):
    kind: LoadKind
    vitality: Vitality = Vitality.non_essential
    rated_kw: Watts | None = None
    rated_kva: VoltAmperes | None = None
    rated_voltage: Volts | None = None
    full_load_current: Amperes | None = None
    insulation_class: Literal["A", "B", "F", "H"] | None = None
    winding: WindingType | None = None
    equipment_capacitance: Farads | None = Field(
        default=None, description="per phase to earth: EMC filters, suppression capacitors")
    auxiliaries: tuple[Auxiliary, ...] = ()
    recent_work: dt.date | None = Field(default=None,
                                        description="last time the circuit was worked on")

    @model_validator(mode="after")
    def _single_feed(self) -> Load:
        if len(self.from_) != 1:
            raise ValueError("a load has one feed; put a transfer_switch in front of it "
                             "for an alternate supply")
        if self.kind is LoadKind.motor and self.rated_voltage is None:
            raise ValueError("a motor needs rated_voltage (it selects the insulation test)")
        return self


# --- the whole plant ----------------------------------------------------------------------


class Plant(Strict):
    plant: PlantInfo
    cable_types: tuple[CableType, ...] = ()
    sources: tuple[Source, ...] = Field(min_length=1)
    buses: tuple[Bus, ...] = ()
    devices: tuple[Device, ...] = ()
    transformers: tuple[Transformer, ...] = ()
    cables: tuple[Cable, ...] = ()
    loads: tuple[Load, ...] = ()

    def elements(self) -> list[Element]:
        """Every element, sources first, in file order within each section."""
        return [*self.sources, *self.buses, *self.devices, *self.transformers,
                *self.cables, *self.loads]

    def index(self) -> dict[str, Element]:
        return {element.id: element for element in self.elements()}


SECTIONS = ("sources", "buses", "devices", "transformers", "cables", "loads")
