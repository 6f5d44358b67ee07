"""A work package: everything a technician carries for one job, as plain data.

The planner fills it; the PDF renderer and the JSON twin only lay it out; the
results of the job are later judged against its own acceptance criteria, so
every number a technician is asked to compare with is here, computed, with
the source it came from. Quantities are SI (volts, ohms, amperes, metres,
°C); ``unit`` says how to show them.
"""

from __future__ import annotations

import datetime as dt
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field

from workpack.model.crew import Requirement

# Defined alone (the quick diagnose uses it without pydantic); re-exported here.
from workpack.model.signal_word import SignalWord as SignalWord
from workpack.numbers import format_quantity


class Plain(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class Caution(Plain):
    signal_word: SignalWord
    text: str
    id: str | None = None  # the caution library entry it came from, if any


class Limit(Plain):
    """What a reading must be. Bounds in SI units; either may be open."""

    low: float | None = None
    high: float | None = None
    basis: str  # where the numbers come from: "computed: 440 V / √3", "IEEE Std 43-2013 12.3"
    temperature_corrected_to_c: float | None = None  # compare after correcting to this
    code_set: str | None = None  # the tables whose temperature correction applies

    def describe(self, unit: str) -> str:
        """'at least 5 MΩ after correction to 40 °C', in the reading's unit."""
        if self.low is not None and self.high is not None:
            text = (f"between {format_quantity(self.low, unit)} and "
                    f"{format_quantity(self.high, unit)}")
        elif self.low is not None:
            text = f"at least {format_quantity(self.low, unit)}"
        elif self.high is not None:
            text = f"at most {format_quantity(self.high, unit)}"
        else:
            text = "any value"
        if self.temperature_corrected_to_c is not None:
            text += f" after correction to {self.temperature_corrected_to_c:g} °C"
        return text


class Reading(Plain):
    """One value the technician measures and writes down."""

    id: str  # unique in the package, e.g. "S3.R1"
    what: str  # "phase A to earth at MSB"
    unit: Literal["V", "A", "Ω", "kΩ", "MΩ", "°C", "Hz", "kVA", "", "s"]
    expected: float | None = None  # SI; None when only a limit applies
    tolerance: float | None = None  # ± around expected, SI
    limit: Limit | None = None
    basis: str = ""  # source of ``expected``
    needs_temperature: bool = False  # the record must also give the temperature
    element: str | None = None  # the element measured, where the reading is of one element
    acceptance: bool = True  # False: recorded against its limit, but not what the job is
    # judged by (e.g. a reading before a repair)
    test_voltage_v: float | None = None  # DC test voltage of an insulation reading


# What a step does. Work steps come from the rule; the restoration's own kinds are
# written by the planner from the isolation plan, so no rule can leave one out:
# gate (restore only when the acceptance is met), reconnect (undoes a work step that
# disconnected something), close_up, remove_lock (one per isolation point, in reverse
# order, by the person who applied it), energise (only after every lock is off), check
# (a rule's readings after energising), return_to_service; take_out_of_service comes
# before the isolation.
StepKind = Literal["work", "search", "take_out_of_service", "gate", "reconnect", "close_up",
                   "remove_lock", "energise", "check", "return_to_service"]
SearchOutcome = Literal["found", "not_found"]


class SearchGoto(Plain):
    """Where one outcome of a search step leads: another step of the package, the final
    tests of the circuit it ends at, or the end of the search at this level."""

    kind: Literal["step", "final", "not_found"]
    step: int | None = None  # kind "step": the package step to go to
    final: str | None = None  # kind "final": the final tests' id ("F4")
    below: str | None = None  # the device the ground is below, where the outcome says so
    text: str  # the outcome in words, as the step's text says it


class SearchDecision(Plain):
    """A search step's parts, for a decision table and a drawn search tree. The step's
    ``text`` says the same in sentences."""

    board: str
    opens: tuple[str, ...]  # "CB-MCC2 (MSB panel 6)"
    devices: tuple[str, ...]  # the device ids opened
    first: tuple[str, ...] = ()  # what to do before opening: transfer, permission
    cleared: str  # what the detectors show when the ground was below what was opened
    unchanged: str  # and while it is still connected
    on_clear: SearchGoto
    on_stay: SearchGoto


class Step(Plain):
    number: int
    text: str
    readings: tuple[Reading, ...] = ()
    cautions: tuple[Caution, ...] = ()
    check_only: bool = False  # a box to tick, no value to write
    optional: bool = False  # one branch of a search: done only if the search leads here
    kind: StepKind = "work"
    before_isolation: bool = False  # done (and printed) before the isolation is applied
    devices: tuple[str, ...] = ()  # remove_lock: its device; energise: the devices closed
    reconnect: str | None = None  # a work step that disconnects something: how the
    # restoration puts it back (a reconnect step there undoes this one)
    undoes: int | None = None  # reconnect: the number of the work step it undoes
    search_outcome: SearchOutcome | None = None  # done only when the search ended so:
    # "found" when a ground was found (results name ``ground_found_at``), else "not_found"
    decision: SearchDecision | None = None  # a search step's parts (kind "search")


class IsolationPoint(Plain):
    order: int
    device: str  # a device, or a start or transfer block (then ``blocks`` is set)
    device_kind: str
    location: str | None
    cuts: str  # which supply it cuts, or what the block stops
    voltage_v: float | None
    already_open: bool
    blocks: str | None = None  # a block: the source or changeover it stops
    how: str | None = None  # a block: what to set and how to lock it


class ProvingDead(Plain):
    where: str
    voltage_v: float | None
    pairs: tuple[str, ...]  # "A-B", "A-N", "A-E", "N-E", …; each expected 0 V


class FinalTest(Plain):
    """The insulation tests of one circuit a ground search can end at: a complete
    isolation of its own (locks, proving dead, tests, restoration), done only when the
    search leads there. Every supply that reaches an enclosure a test is made in is
    locked, the main supply of a motor whose heater circuit is tested included."""

    id: str  # "F1": unique in the package; results and form fields are keyed by it
    feeder: str  # the device the search opened when the indication cleared
    title: str
    condition: str  # when to do it, in words
    isolation: tuple[IsolationPoint, ...] = ()
    isolation_gaps: tuple[str, ...] = ()
    stored_energy: tuple[str, ...] = ()
    cautions: tuple[Caution, ...] = ()  # what this isolation adds to the package's cautions
    proving_dead: tuple[ProvingDead, ...] = ()
    steps: tuple[Step, ...] = ()
    restoration: tuple[Step, ...] = ()
    elements: tuple[str, ...] = ()  # what the tests are made on (sections)
    vital_loads: tuple[str, ...] = ()  # vital loads that go dead with the circuit
    disconnect: tuple[str, ...] = ()  # electronics taken off before the tests


class ApproachBoundaries(Plain):
    entered_at_v: float  # the voltage the table was entered with
    limited_movable: str
    limited_fixed: str
    restricted: str
    source: str


class SketchNode(Plain):
    id: str
    label: str
    kind: str  # source, bus, device, transformer, cable, load, item
    isolate: bool = False  # an isolation point of this package
    normally_open: bool = False  # a tie or alternate input, open in the normal state
    detail: str = ""  # a second line: a transformer's vector group and voltages
    search_step: int | None = None  # the package step that first opens it in a search


SketchRouteKind = Literal["lock", "supply", "tie", "secondary", "feeder"]


class SketchRoute(Plain):
    """One way drawn in the sketch, as the ids of its nodes from its far end.

    ``lock``: a source, through an isolation point, to the item; ``supply``: a normal
    supply path; ``tie``: an alternate supply through a normally open point;
    ``secondary``: a transformer item on to its secondary bus; ``feeder``: the searched
    board down to a feeder the search opens."""

    kind: SketchRouteKind
    nodes: tuple[str, ...]


class Sketch(Plain):
    """One-line sketch: the item, its supply paths, the isolation points."""

    nodes: tuple[SketchNode, ...]
    edges: tuple[tuple[str, str], ...]  # (supply side, load side)
    # Every way drawn, most important first: a sketch too big for its page draws the
    # first routes that fit and says how many of each kind it leaves out.
    routes: tuple[SketchRoute, ...] = ()


class Phasor(Plain):
    """Measured phase-to-earth voltages and the earth point, for a ground finding."""

    line_voltage_v: float
    sequence: tuple[str, str, str]
    readings_v: dict[str, float]
    earth_point_v: tuple[float, float] | None  # real, imag relative to the source neutral
    grounded_phase: str | None


class Origin(Plain):
    rule: str
    findings: tuple[str, ...] = ()
    routine: str | None = None  # routine test that fell due, if any


class LockStillOn(Plain):
    """A lock of this job put on an earlier day and not taken off: the job goes on."""

    device: str
    lock: str | None = None
    held_by: str | None = None
    since: str | None = None  # as written on the sheet
    text: str  # the whole of it, in words, as printed


class WorkPackage(Plain):
    id: str
    plant: str
    date: dt.date
    title: str
    job_kind: str
    clears_ground: bool = False
    priority: int = Field(ge=1, le=5, description="1 = most urgent")
    priority_reason: str
    duration_h: float = Field(gt=0)
    crew: int = Field(ge=1)
    permits: tuple[str, ...] = ()
    item: str
    item_label: str
    system: str | None = None
    origin: Origin
    hazard_facts: tuple[str, ...] = ()
    cautions: tuple[Caution, ...] = ()
    approach: ApproachBoundaries | None = None
    ppe: tuple[str, ...] = ()
    isolation: tuple[IsolationPoint, ...] = ()
    isolation_gaps: tuple[str, ...] = ()  # paths no lock can cut: DANGER, shown as such
    locks_on: tuple[LockStillOn, ...] = ()  # this job's locks still on from an earlier day
    # (a job carried over while suspended)
    stored_energy: tuple[str, ...] = ()
    proving_dead: tuple[ProvingDead, ...] = ()
    steps: tuple[Step, ...] = ()
    final_tests: tuple[FinalTest, ...] = ()  # a search's end: one isolation per circuit
    acceptance: tuple[str, ...] = ()
    restoration: tuple[Step, ...] = ()
    phasor: Phasor | None = None
    sketch: Sketch | None = None
    instrument_supply: str | None = None  # element whose supply a test instrument needs
    switches: tuple[str, ...] = ()  # devices the job opens for a while and closes again
    needs: tuple[Requirement, ...] = ()  # what the technician must hold (workpack.competence)
    supervisor_needed: bool = False  # another person supervises and countersigns
    assigned: tuple[str, ...] = ()  # "S. Quayle (LCS-0107)": the lead first (plan --crew)
    supervisor_assigned: str | None = None  # who supervises and countersigns (plan --crew)
    notice: str = ("Local codes, the employer's safety rules and licensed practice prevail "
                   "over this package.")

    def readings(self) -> tuple[Reading, ...]:
        """Every reading of the package in print order: steps, final tests, restoration."""
        final = [step for test in self.final_tests for step in (*test.steps, *test.restoration)]
        return tuple(r for step in (*self.steps, *final, *self.restoration)
                     for r in step.readings)

    def final_test(self, final_id: str) -> FinalTest | None:
        return next((f for f in self.final_tests if f.id == final_id), None)
