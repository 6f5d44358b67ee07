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

# What an id may look like, said once for every id field's description.
ID_RULE = ("letters, digits and _ . - /, starting with a letter or digit, at most 64 "
           "characters")


class Strict(BaseModel):
    """Base for hand-written data: a misspelled key is an error, not a silent default."""

    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True)


def _as_list(value: Any) -> Any:
    if value is None:
        return []
    return [value] if isinstance(value, str) else value


# --- plant -------------------------------------------------------------------------------


class PlantKind(StrEnum):
    """What kind of installation: vessel (a ship), offshore_unit (a rig, platform or
    floating unit), industrial_site (a factory, works or process plant), mine, hospital
    (including isolated power for operating theatres), other. Rules may use it."""

    vessel = "vessel"
    offshore_unit = "offshore_unit"
    industrial_site = "industrial_site"
    mine = "mine"
    hospital = "hospital"
    other = "other"


class CodeSet(Strict):
    """Which published tables decide test voltages and limits."""

    rotating_machines: Literal["ieee43-2013", "ieee43-2000"] = Field(
        default="ieee43-2013",
        description="table for motors and generators: 'ieee43-2013' (IEEE Std 43, 2013 "
                    "edition, the default) or 'ieee43-2000' (its 2000 edition)",
        examples=["ieee43-2013"])
    apparatus: Literal["neta-mts-2019"] = Field(
        default="neta-mts-2019",
        description="table for transformers, switchboards and switchgear: 'neta-mts-2019' "
                    "(ANSI/NETA MTS, 2019 edition), the only one so far",
        examples=["neta-mts-2019"])
    installations: Literal["iec60364-6"] = Field(
        default="iec60364-6",
        description="table for cables, lighting and other installation circuits: "
                    "'iec60364-6' (IEC 60364-6), the only one so far",
        examples=["iec60364-6"])
    approach_boundaries: Literal["nfpa70e-2021"] = Field(
        default="nfpa70e-2021",
        description="table of shock approach distances printed on live work: "
                    "'nfpa70e-2021' (NFPA 70E, 2021 edition), the only one so far",
        examples=["nfpa70e-2021"])


class PlantInfo(Strict):
    """The installation as a whole: its name, kind, frequency and phase names."""

    code: str = Field(pattern=r"^[A-Z0-9]{2,8}$",
                      description="the plant's short code: 2 to 8 capital letters or digits, "
                      "unique in the fleet or company. Every work package id carries it "
                      "(WP-SKL-20261202-03), so ids never repeat across plants",
                      examples=["SKL"])
    name: str = Field(min_length=1, description="name of the vessel, unit or site, printed on "
                      "every package", examples=["MV Skerry Lantern"])
    kind: PlantKind = Field(description="what kind of installation", examples=["vessel"])
    frequency: Hertz = Field(description="system frequency in hertz, e.g. '60 Hz'",
                             examples=["60 Hz", 50])
    phase_labels: tuple[str, str, str] = Field(
        default=("A", "B", "C"),
        description="the three phase names as marked on this plant, e.g. [A, B, C] or "
                    "[L1, L2, L3]; N and E are kept for neutral and earth",
        examples=[["A", "B", "C"], ["L1", "L2", "L3"]])
    phase_sequence: tuple[str, str, str] | None = Field(
        default=None,
        description="rotation order of the phases, e.g. [A, B, C]; defaults to "
                    "phase_labels. It decides which phase a partial ground is on",
        examples=[["A", "B", "C"]])
    code_set: CodeSet = Field(
        default=CodeSet(),
        description="which published tables decide test voltages and limits; leave out for "
                    "the defaults", examples=[{"rotating_machines": "ieee43-2013"}])
    operator: str | None = Field(default=None, description="who runs the plant (owner, "
                                 "operator or manager), for the record",
                                 examples=["Lantern Coastal Shipping (fictitious)"])

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
    """Conditions around an element that make a ground more likely there (the search
    weights give each a factor): wet (water, bilges, wash-down), weather_exposed (open
    deck or outdoors), hot (engine rooms, near boilers), hazardous_area (explosive
    atmosphere zone), vibration (on or near machinery), dusty (dust that can track across
    terminals), galley (water, grease and heat of a kitchen), laundry (water and lint)."""

    wet = "wet"
    weather_exposed = "weather_exposed"
    hot = "hot"
    hazardous_area = "hazardous_area"
    vibration = "vibration"
    dusty = "dusty"
    galley = "galley"
    laundry = "laundry"


class Vitality(StrEnum):
    """How much a load matters when its supply is opened during a ground search: vital
    (steering, fire pumps, navigation and emergency lighting, safety and process-critical
    loads; opened only after transfer to an alternate supply or with permission, never
    two at once), important (tell the watch first; a standby usually takes over),
    non_essential (may be off for a few minutes)."""

    vital = "vital"
    important = "important"
    non_essential = "non_essential"


class RoutineTest(StrEnum):
    """Periodic tests the planner knows: detector_test (a ground detector's test: lamps,
    voltmeters and their test button), insulation_resistance (insulation-resistance test
    of the element), transformer_inspection (visual and thermal inspection of a
    transformer or bank), insulation_monitor_test (an insulation monitor's own test
    function), thermographic_survey (infrared survey of connections under load)."""

    detector_test = "detector_test"
    insulation_resistance = "insulation_resistance"
    transformer_inspection = "transformer_inspection"
    insulation_monitor_test = "insulation_monitor_test"
    thermographic_survey = "thermographic_survey"


_INTERVAL = re.compile(r"^\s*(\d+)\s*(day|days|week|weeks|month|months|year|years)\s*$")
_DAYS_PER = {"day": 1, "week": 7, "month": 30, "year": 365}


class Routine(Strict):
    """A periodic test and when it was last done."""

    test: RoutineTest = Field(description="which test", examples=["insulation_resistance"])
    every: str = Field(description="interval: a whole number and day(s), week(s), month(s) "
                                   "or year(s); a month counts 30 days, a year 365",
                       examples=["6 months", "30 days", "1 year"])
    last_done: dt.date | None = Field(
        default=None, description="day it was last done, YYYY-MM-DD; left out: never done, "
                                  "so it is due now", examples=["2026-05-20"])

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
    """Any part of the plant; every kind below adds its own fields."""

    id: Id = Field(description=f"unique id of the element in the whole plant, as marked on "
                               f"it where possible: {ID_RULE}", examples=["MSB", "CB-MCC1", "SG-1"])
    name: str | None = Field(default=None, description="plain name, printed beside the id",
                             examples=["main switchboard", "steering gear pump 1"])
    location: str | None = Field(
        default=None, description="where to find it, as a technician would look for it "
                                  "(printed in packages)",
        examples=["engine room, 2nd deck", "MSB panel 6"])
    environment: tuple[Environment, ...] = Field(
        default=(), description="conditions around it that make a ground more likely there",
        examples=[["weather_exposed", "wet"]])
    routine: tuple[Routine, ...] = Field(
        default=(), description="periodic tests of this element and when each was last done",
        examples=[[{"test": "insulation_resistance", "every": "6 months",
                    "last_done": "2026-05-20"}]])

    @property
    def label(self) -> str:
        return f"{self.id} ({self.name})" if self.name else self.id


_ID_SCHEMA = {"type": "string", "pattern": r"^[A-Za-z0-9][A-Za-z0-9_.\-/]*$"}
_ONE_OR_MANY_IDS = WithJsonSchema({
    "anyOf": [_ID_SCHEMA, {"type": "array", "items": _ID_SCHEMA, "minItems": 1}],
    "description": "supply-side connection: one element id, or a list of them",
})


class FedElement(Element):
    """An element connected on its supply side to others (everything but a source)."""

    from_: Annotated[tuple[Id, ...], _ONE_OR_MANY_IDS] = Field(
        alias="from", min_length=1,
        description="what feeds it: the id of the element on its supply side, or a list of "
                    "ids where several feed it (a switchboard's incomers, a transfer "
                    "switch's [normal, alternate])",
        examples=["CB-MCC1", ["CB-T1S", "CB-LTIE"]])

    @field_validator("from_", mode="before")
    @classmethod
    def _one_or_many(cls, value: Any) -> Any:
        return _as_list(value)


# --- sources --------------------------------------------------------------------------


class SourceKind(StrEnum):
    """Where energy comes from: generator (a service or main generator),
    emergency_generator (started for the emergency board), shore_connection (supply from
    ashore; switched from ashore, so always live), utility (a public or site supply),
    battery, ups (an uninterruptible power supply; live from its own battery whatever
    the breakers upstream do)."""

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

    id: Id = Field(description=f"id of the control, printed as a lock point: {ID_RULE}",
                   examples=["EDG-START"])
    name: str | None = Field(default=None, description="plain name of the control",
                             examples=["emergency generator mode selector"])
    location: str | None = Field(default=None, description="where the control is",
                                 examples=["EDG local control panel"])
    how: str = Field(min_length=1, description="what to set and how to lock it, e.g. "
                                               "'engine mode selector to OFF; padlock it'",
                     examples=["turn the mode selector from AUTO to BLOCKED and padlock it"])

    @property
    def label(self) -> str:
        return f"{self.id} ({self.name})" if self.name else self.id


class Source(Element):
    """Where energy comes from: a generator, a shore or utility supply, a battery, a UPS."""

    kind: SourceKind = Field(description="what kind of source", examples=["generator"])
    voltage: Volts = Field(description="rated line-to-line output voltage, e.g. '450 V'",
                           examples=["450 V"])
    rated_kva: VoltAmperes | None = Field(default=None, description="rated apparent power in "
                                          "kVA, e.g. '625 kVA'", examples=["625 kVA"])
    starts_automatically: bool = Field(
        default=False, description="true when it starts by itself, e.g. an emergency "
                                   "generator that starts on blackout", examples=[True])
    start_block: ControlBlock | None = Field(
        default=None, description="the lockable control that stops it starting or putting "
                                  "out power by itself (isolation locks it as a step)",
        examples=[{"id": "EDG-START", "name": "emergency generator mode selector",
                   "how": "turn the mode selector from AUTO to BLOCKED and padlock it"}])

    @property
    def comes_on_by_itself(self) -> bool:
        """Starts by itself, or is live without anyone here closing anything."""
        return self.starts_automatically or self.kind in ALWAYS_LIVE


# --- buses and detectors ----------------------------------------------------------------


class Earthing(StrEnum):
    """How the system's neutral is connected to earth: insulated (not at all: an IT
    system; a first ground only alarms), high_resistance (through a resistor that limits
    the ground current), solid (directly: a ground fault trips)."""

    insulated = "insulated"
    high_resistance = "high_resistance"
    solid = "solid"


class DetectorKind(StrEnum):
    """How the ground detector shows a ground: lamps (three lamps from the phases to
    earth, dim or dark on a grounded phase), voltmeters (phase-to-earth voltmeters, or one
    with a selector switch), insulation_monitor (a device that measures the whole
    system's insulation resistance to earth and alarms below its setting)."""

    lamps = "lamps"
    voltmeters = "voltmeters"
    insulation_monitor = "insulation_monitor"


class BurdenConnection(StrEnum):
    """When a detector ties the phases to earth (and so loads the system it watches):
    always (voltmeters and monitors wired all the time), while_testing (lamps whose star
    point a push button earths only while it is pressed)."""

    always = "always"
    while_testing = "while_testing"  # e.g. lamps whose star point a push button earths


class Detector(Strict):
    """The ground detector of a switchboard: lamps, voltmeters or an insulation monitor."""

    id: Id = Field(description=f"id of the detector, used in findings' 'where': {ID_RULE}",
                   examples=["GD-MSB"])
    kind: DetectorKind = Field(description="what kind of detector", examples=["lamps"])
    alarm: Ohms | None = Field(default=None,
                               description="insulation monitor alarm setting in ohms, e.g. "
                                           "'22 kΩ'", examples=["22 kΩ"])
    prewarning: Ohms | None = Field(
        default=None, description="insulation monitor's earlier warning setting in ohms, "
                                  "above the alarm, e.g. '50 kΩ'", examples=["50 kΩ"])
    meter_tolerance_percent: float = Field(default=2.5, gt=0, le=20,
                                           description="voltmeter accuracy in percent of the "
                                                       "reading (the diagnosis allows it on "
                                                       "each reading)", examples=[2.5])
    # The detector's own burden: it is part of the circuit it watches (see diagnose.py).
    lamp_power: Watts | None = Field(
        default=None, description="rating of each lamp wired from a phase to earth, in "
        "watts, e.g. '15 W'; with lamp_voltage it gives the lamp's resistance R = V²/P",
        examples=["15 W"])
    lamp_voltage: Volts | None = Field(default=None,
                                       description="rated voltage of each lamp, e.g. '250 V'",
                                       examples=["130 V"])
    burden_per_phase: Ohms | None = Field(
        default=None, description="resistance from each phase to earth as the system sees "
        "it, in ohms, e.g. '4.3 kΩ' for lamps behind small transformers, or each "
        "voltmeter's impedance", examples=["6.5 kΩ", "200 kΩ"])
    internal_impedance: Ohms | None = Field(
        default=None, description="insulation monitor's internal impedance from the system "
        "(all phases together) to earth, in ohms, e.g. '120 kΩ'", examples=["120 kΩ"])
    connected: BurdenConnection | None = Field(
        default=None, description="when the burden is on the system: 'always', or "
        "'while_testing' (lamps whose star point a push button earths); default: lamps "
        "while_testing, voltmeters and monitors always", examples=["while_testing"])

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
    """What kind of board: switchboard (a main or emergency switchboard),
    switchboard_section (one section of a switchboard split by a bus tie),
    distribution_panel (a power distribution board), motor_control_centre (motor
    starters and their breakers), lighting_panel (a lighting or small-power board)."""

    switchboard = "switchboard"
    switchboard_section = "switchboard_section"
    distribution_panel = "distribution_panel"
    motor_control_centre = "motor_control_centre"
    lighting_panel = "lighting_panel"


class Bus(FedElement):
    """A switchboard, panel or motor control centre: busbars that feed circuits."""

    kind: BusKind = Field(description="what kind of board", examples=["switchboard"])
    voltage: Volts = Field(description="rated line-to-line voltage, e.g. '440 V'",
                           examples=["440 V"])
    earthing: Earthing = Field(description="how the system's neutral is earthed; every "
                               "board of one galvanic system must say the same",
                               examples=["insulated"])
    detector: Detector | None = Field(
        default=None, description="the ground detector on this board, if it has one",
        examples=[{"id": "GD-MSB", "kind": "lamps", "burden_per_phase": "6.5 kΩ",
                   "connected": "while_testing"}])
    four_wire: bool = Field(default=False, description="a neutral conductor runs with the "
                                                       "three phases (3 phases + N)",
                            examples=[True])


# --- switching devices ------------------------------------------------------------------


class DeviceKind(StrEnum):
    """What kind of switching device: circuit_breaker, switch (a load switch),
    disconnector (an isolator, opened off load), fuse (a fuse or fuse-switch; drawn and
    tagged, locked only if its carrier can be), contactor (control, not isolation),
    transfer_switch (a changeover between a normal and an
    alternate supply), connection_box (e.g. a shore-power plug box, made safe by
    isolating ashore). A circuit breaker, switch or disconnector is taken to lock open
    unless the device says lockable: false; the others only where it says lockable: true."""

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
    """How a changeover passes from one input to the other: open (break-before-make: its
    inputs are never joined), closed (make-before-break: it may join its inputs for a
    moment)."""

    open = "open"  # break-before-make: its inputs are never joined
    closed = "closed"  # make-before-break: it may join its inputs for a moment


class Device(FedElement):
    """A breaker, switch, disconnector, fuse, contactor or changeover."""

    kind: DeviceKind = Field(description="what kind of device", examples=["circuit_breaker"])
    normally: Literal["closed", "open"] = Field(
        default="closed", description="its normal position: 'closed', or 'open' for a tie, "
                                      "a back-feed or a standby incomer",
        examples=["open"])
    lockable: bool | None = Field(default=None,
                                  description="true when it can be locked open; left out: "
                                              "by kind (breakers, switches and disconnectors "
                                              "yes, others no)", examples=[False])
    rating: Amperes | None = Field(default=None, description="rated current in amperes, e.g. "
                                   "'63 A'", examples=["63 A"])
    # Changeover (transfer_switch) only. The defaults are the cautious reading of a
    # switch nobody has described: it may join its two inputs (so a supply on one
    # input is locked off when working on the other) and it transfers by itself (so
    # its alternate is locked before its normal supply is opened).
    transition: Transition | None = Field(
        default=None, description="transfer_switch: 'open' (break-before-make, never joins "
                                  "its inputs) or 'closed' (may parallel them); default closed",
        examples=["open"])
    transfers_automatically: bool | None = Field(
        default=None, description="transfer_switch: changes over by itself on loss of its "
                                  "normal supply; default true", examples=[True])
    transfer_block: ControlBlock | None = Field(
        default=None, description="transfer_switch: the lockable control that keeps it "
                                  "from changing over by itself (manual / blocked)",
        examples=[{"id": "TS-NAV-MAN", "name": "changeover mode switch",
                   "how": "turn the mode switch to MANUAL and padlock it"}])

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
    """How a transformer is built: bank_of_single_phase (three, or two in open delta,
    single-phase units connected as one three-phase transformer), three_phase (one
    three-phase unit)."""

    bank_of_single_phase = "bank_of_single_phase"
    three_phase = "three_phase"


class SecondaryNeutral(StrEnum):
    """The secondary star point of a wye or zigzag secondary: not_brought_out (no neutral
    terminal), insulated (brought out, not earthed), grounded (brought out and earthed: the
    secondary is then a grounded system, where a ground fault trips)."""

    not_brought_out = "not_brought_out"
    insulated = "insulated"
    grounded = "grounded"


class TransformerInsulation(StrEnum):
    """What insulates the windings: liquid_filled (oil or other liquid) or dry_type (air,
    cast resin). It picks the insulation-resistance minimum and the temperature-correction
    column (ANSI/NETA MTS Tables 100.5 and 100.14)."""

    liquid_filled = "liquid_filled"
    dry_type = "dry_type"


_VECTOR_GROUP = re.compile(r"^(D|Y|YN|Z|ZN)(d|y|yn|z|zn)(\d{1,2})$")


class Transformer(FedElement):
    """A transformer or a bank of single-phase units; its 'from' is its primary side."""

    construction: Construction = Field(description="a bank of single-phase units or one "
                                       "three-phase unit", examples=["bank_of_single_phase"])
    units: int = Field(default=3, ge=1, le=3,
                       description="number of single-phase units in a bank", examples=[3])
    unit_kva: VoltAmperes | None = Field(default=None, description="rating of each unit of a "
                                         "bank, in kVA, e.g. '25 kVA'", examples=["25 kVA"])
    rated_kva: VoltAmperes | None = Field(default=None, description="rating of a three-phase "
                                          "unit, in kVA, e.g. '100 kVA'",
                                          examples=["100 kVA"])
    primary_voltage: Volts = Field(description="rated line-to-line voltage of the primary "
                                   "(supply) side, e.g. '440 V'", examples=["440 V"])
    secondary_voltage: Volts = Field(description="rated line-to-line voltage of the "
                                     "secondary (load) side, e.g. '115 V'", examples=["115 V"])
    vector_group: str = Field(description="IEC 60076-1 vector group, e.g. Dd0, Dyn11, Yd1",
                              examples=["Dd0", "Dyn11"],
                              # The validator's rule, for editors: clock number 0 to 11.
                              json_schema_extra={"pattern": r"^(D|Y|YN|Z|ZN)(d|y|yn|z|zn)"
                                                            r"([0-9]|1[01])$"})
    secondary_neutral: SecondaryNeutral = Field(
        default=SecondaryNeutral.not_brought_out,
        description="the secondary star point: only a vector group with yn or zn brings one "
                    "out", examples=["grounded"])
    insulation: TransformerInsulation | None = Field(
        default=None, description="liquid_filled or dry_type; when absent, dry_type is "
        "assumed for insulation limits (the higher minimum) and the package says so",
        examples=["dry_type"])

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
    """A cable run; list the long or exposed ones (their capacitance and their risk)."""

    length: Metres = Field(description="route length in metres, e.g. '120 m'",
                           examples=["120 m"])
    size: str | None = Field(default=None, description="conductor size as marked, e.g. "
                             "'3x35 mm2'", examples=["3x35 mm2"])
    cable_type: str | None = Field(
        default=None, description="id of an entry in the plant's cable_types table",
        examples=["ship-3c"])
    capacitance_to_earth: FaradsPerMetre | None = Field(
        default=None, description="capacitance of each conductor to earth, per metre, e.g. "
                                  "'150 pF/m'; overrides the cable type",
        examples=["150 pF/m"])
    installed: int | None = Field(default=None, ge=1900, le=2100,
                                  description="year it was installed (old cables weigh more "
                                              "in a ground search)", examples=[2009])

    @model_validator(mode="after")
    def _one_feed(self) -> Cable:
        if len(self.from_) != 1:
            raise ValueError("a cable runs from one element; list its far end as the "
                             "element that names the cable in 'from'")
        return self


class CableType(Strict):
    """A kind of cable and its capacitance to earth, shared by the cables that name it."""

    id: Id = Field(description=f"id the cables give as their cable_type: {ID_RULE}",
                   examples=["ship-3c"])
    capacitance_to_earth: FaradsPerMetre = Field(
        description="capacitance of each conductor to earth, per metre, e.g. '150 pF/m'",
        examples=["150 pF/m"])
    source: str = Field(min_length=1,
                        description="where the figure comes from (maker's data sheet, "
                                    "handbook)", examples=["maker's data sheet, table 4"])


# --- loads ------------------------------------------------------------------------------


class LoadKind(StrEnum):
    """What a load is: motor, heater, galley (kitchen equipment), laundry (washers and
    dryers), lighting, socket_outlets (outlets for portable tools and appliances),
    electronics (control, navigation or computer equipment: disconnected before an
    insulation test), deck_machinery (winches, windlasses, cranes), capacitor_bank (power
    factor correction), other. Motors and deck machinery are tested as rotating machines;
    the search weights may weigh a kind."""

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
    """How a machine's windings are made; it picks the IEEE 43 minimum: random_wound
    (round wire, nearly all low-voltage motors), form_wound (preformed coils, usual above
    1 kV)."""

    random_wound = "random_wound"
    form_wound = "form_wound"


class AuxiliaryKind(StrEnum):
    """A supply into an item from elsewhere: anti_condensation_heater (a motor or panel
    heater that is on while the item is off), control_power (a control or interlock
    supply), space_heater (a heater in the item's enclosure or room)."""

    anti_condensation_heater = "anti_condensation_heater"
    control_power = "control_power"
    space_heater = "space_heater"


class Auxiliary(Strict):
    """A supply into the item that is easy to forget: fed from another panel."""

    kind: AuxiliaryKind = Field(description="what the supply is for",
                                examples=["anti_condensation_heater"])
    from_: Id = Field(alias="from", description="id of the device that feeds it (its "
                      "supply is isolated too when the item is)", examples=["CB-DK-H-WL1"])
    voltage: Volts | None = Field(default=None, description="its voltage, e.g. '115 V'",
                                  examples=["115 V"])


class Load(FedElement):
    """Equipment at the end of a circuit: a motor, heater, lighting, outlets and so on."""

    kind: LoadKind = Field(description="what the load is", examples=["motor"])
    vitality: Vitality = Field(default=Vitality.non_essential,
                               description="how much it matters when its supply is opened",
                               examples=["vital"])
    rated_kw: Watts | None = Field(default=None, description="rated power in kW, e.g. "
                                   "'22 kW' (a motor's output)", examples=["22 kW"])
    rated_kva: VoltAmperes | None = Field(default=None, description="rated apparent power in "
                                          "kVA, e.g. '5 kVA'", examples=["5 kVA"])
    rated_voltage: Volts | None = Field(default=None, description="rated line-to-line "
                                        "voltage, e.g. '440 V'; a motor needs it (it picks "
                                        "the insulation test voltage)", examples=["440 V"])
    full_load_current: Amperes | None = Field(default=None, description="nameplate full-load "
                                              "current in amperes, e.g. '38 A'",
                                              examples=["38 A"])
    insulation_class: Literal["A", "B", "F", "H"] | None = Field(
        default=None, description="thermal class of a machine's insulation as on its "
                                  "nameplate: A, B, F or H; it picks the polarization index "
                                  "minimum", examples=["F"])
    winding: WindingType | None = Field(default=None, description="how a machine is wound; "
                                        "left out: random_wound below 1 kV, form_wound above, "
                                        "and the package says it was assumed",
                                        examples=["random_wound"])
    equipment_capacitance: Farads | None = Field(
        default=None, description="capacitance per phase to earth inside the equipment (EMC "
                                  "filters, suppression capacitors), e.g. '100 nF'",
        examples=["100 nF"])
    auxiliaries: tuple[Auxiliary, ...] = Field(
        default=(), description="supplies into it from elsewhere (heaters, control power), "
                                "locked with it when it is isolated",
        examples=[[{"kind": "anti_condensation_heater", "from": "CB-DK-H-WL1",
                    "voltage": "115 V"}]])
    recent_work: dt.date | None = Field(default=None,
                                        description="last day the circuit was worked on, "
                                                    "YYYY-MM-DD (a ground after work is often "
                                                    "at that work)", examples=["2026-11-27"])

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
    """What a supervisor writes down about the installation: its sources, boards, devices,
    transformers, cables and loads. Every element has a unique id; all but sources say
    what feeds them with 'from'. Quantities may carry units ("440 V", "2.2 uF")."""

    plant: PlantInfo = Field(description="the installation as a whole",
                             examples=[{"code": "SKL", "name": "MV Skerry Lantern",
                                        "kind": "vessel", "frequency": "60 Hz"}])
    cable_types: tuple[CableType, ...] = Field(
        default=(), description="kinds of cable and their capacitance to earth, named by "
                                "cables' cable_type",
        examples=[[{"id": "ship-3c", "capacitance_to_earth": "150 pF/m",
                    "source": "maker's data sheet"}]])
    sources: tuple[Source, ...] = Field(
        min_length=1, description="where energy comes from (at least one)",
        examples=[[{"id": "SSG-1", "kind": "generator", "voltage": "450 V",
                    "rated_kva": "625 kVA"}]])
    buses: tuple[Bus, ...] = Field(
        default=(), description="switchboards, panels and motor control centres",
        examples=[[{"id": "MSB", "kind": "switchboard", "voltage": "440 V",
                    "earthing": "insulated", "from": "CB-SSG1"}]])
    devices: tuple[Device, ...] = Field(
        default=(), description="breakers, switches, fuses and changeovers",
        examples=[[{"id": "CB-SSG1", "kind": "circuit_breaker", "from": "SSG-1",
                    "rating": "1000 A"}]])
    transformers: tuple[Transformer, ...] = Field(
        default=(), description="transformers and banks of single-phase units",
        examples=[[{"id": "T1", "construction": "bank_of_single_phase", "unit_kva": "25 kVA",
                    "primary_voltage": "440 V", "secondary_voltage": "115 V",
                    "vector_group": "Dd0", "from": "CB-T1"}]])
    cables: tuple[Cable, ...] = Field(
        default=(), description="cable runs worth listing: the long and the exposed ones",
        examples=[[{"id": "C-SG1", "from": "CB-SG1", "length": "110 m",
                    "cable_type": "ship-3c"}]])
    loads: tuple[Load, ...] = Field(
        default=(), description="motors, heaters, lighting, outlets and other equipment",
        examples=[[{"id": "SG-1", "kind": "motor", "from": "C-SG1", "vitality": "vital",
                    "rated_kw": "22 kW", "rated_voltage": "440 V"}]])

    def elements(self) -> list[Element]:
        """Every element, sources first, in file order within each section."""
        return [*self.sources, *self.buses, *self.devices, *self.transformers,
                *self.cables, *self.loads]

    def index(self) -> dict[str, Element]:
        return {element.id: element for element in self.elements()}


SECTIONS = ("sources", "buses", "devices", "transformers", "cables", "loads")
