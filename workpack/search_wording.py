"""Every sentence of a ground search, for the terminal (``locate``) and the package alike.

``search`` decides what to open and in which order; this module only words it. The two
readers number the steps their own way, and nothing else differs: ``locate`` prints
each board's steps from 1 (``BoardNumbering``); a package numbers them on from its own
work steps and names the final tests of each circuit F1, F2, … (``PackageNumbering``).
A step's words come apart (``StepWords``: what to prepare, what to open, where each
outcome leads) so a layout can put them in paragraphs or in the columns of a table.
Pure.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Protocol

from workpack.model.plant import DetectorKind
from workpack.model.weights import SearchWeights
from workpack.numbers import format_ohms, format_quantity
from workpack.search_core import Branch
from workpack.topology import Island

if TYPE_CHECKING:
    from workpack.model.package import SearchGoto
    from workpack.search import FaultSearch, FinalTests, SearchStep, SectionTest

NOT_FOUND = ("not found at this level: the ground is on this board's own busbars or "
             "incoming cables, or the indication is false: prove the detector, then test the "
             "board isolated")
WATCH = "watch the detector for about a minute"


# --- what the detectors show ------------------------------------------------------------

def cleared_indication(island: Island, healthy_v: float) -> str:
    """What the system's own detectors show once the ground is no longer connected."""
    shows = []
    for detector in island.detectors:
        if detector.kind is DetectorKind.lamps:
            shows.append(f"{detector.id} lamps equal")
        elif detector.kind is DetectorKind.voltmeters:
            shows.append(f"{detector.id} each phase about {healthy_v:.0f} V to earth "
                         "(V_LL/√3)")
        elif detector.alarm is not None:
            shows.append(f"{detector.id} reading back above its alarm setting "
                         f"({detector.alarm / 1e3:g} kΩ; allow the monitor its response time)")
    if not shows:
        shows.append(f"each phase about {healthy_v:.0f} V to earth (V_LL/√3)")
    return "; ".join(shows)


def unchanged_indication(as_found_v: Mapping[str, float] | None) -> str:
    """What the detectors show while the ground is still connected: as found."""
    if not as_found_v:
        return "(as found)"
    return "(as found: " + ", ".join(
        f"{phase} {value:.0f} V" for phase, value in sorted(as_found_v.items())) + ")"


# --- how each reader numbers the steps ------------------------------------------------------

class Numbering(Protocol):
    """How a reader refers to a step, to where a board's own search starts, and to the
    final tests of a circuit."""

    def step(self, level: str, number: int) -> str: ...

    def level_start(self, board: str) -> str: ...

    def final_tests(self, feeder: str) -> str: ...


class BoardNumbering:
    """``locate``: each board's steps from 1, under the board's name."""

    def step(self, level: str, number: int) -> str:
        return f"step {number} of this board"

    def level_start(self, board: str) -> str:
        return f"step 1 of the {board} level"

    def final_tests(self, feeder: str) -> str:
        return f"the final tests below {feeder}"


class PackageNumbering:
    """A package: the search's steps numbered on from ``first``; final tests F1, F2, …"""

    def __init__(self, search: FaultSearch, first: int) -> None:
        self.number = {(s.level, s.number): first + n for n, s in enumerate(search.steps)}
        self.starts: dict[str, int] = {}
        for (level, _), number in sorted(self.number.items(), key=lambda kv: kv[1]):
            self.starts.setdefault(level, number)
        self.final_ids = {final.feeder: f"F{n}"
                          for n, final in enumerate(search.final_tests, start=1)}

    def step(self, level: str, number: int) -> str:
        return f"step {self.number[(level, number)]}"

    def level_start(self, board: str) -> str:
        return f"step {self.starts[board]}"

    def final_tests(self, feeder: str) -> str:
        return f"final tests {self.final_ids[feeder]} (below {feeder})"


# --- one step ---------------------------------------------------------------------------------

@dataclass(frozen=True)
class StepWords:
    """One search step in words, in parts a layout can put in paragraphs or in the
    columns of a table. ``transfer``, ``permission`` and ``dead`` are empty where the step
    needs none."""

    transfer: str  # what to move to its alternate supply first
    permission: str  # whose permission is needed first
    open: str  # what to open, and to watch the detector
    dead: str  # what goes dead for the minute
    cleared: str  # what the detectors show once the ground is no longer connected
    unchanged: str  # and while it still is
    on_clear: str  # where to go when it clears (and why it may not, after a transfer)
    on_stay: str  # where to go when it stays

    @property
    def if_clears(self) -> str:
        return f"If it clears ({self.cleared}): {self.on_clear}."

    @property
    def if_stays(self) -> str:
        return f"If it stays {self.unchanged}: {self.on_stay}."


def step_words(search: FaultSearch, step: SearchStep, numbering: Numbering) -> StepWords:
    """The sentences of ``step`` of ``search``, its outcomes sent where ``numbering``
    says."""
    searched = search.searched_boards
    opened = ", ".join(f"{d} ({w})" if w else d
                       for d, w in zip(step.open_devices, step.where, strict=True))
    moves = "".join(f" (if the ground is in {load} itself it moves with the transfer, since "
                    "its alternate supply is on this system: the indication will not clear)"
                    for load in step.moves_ground_with_it)
    shown = ", ".join(step.dead_loads[:8])
    more = f" and {len(step.dead_loads) - 8} more" if len(step.dead_loads) > 8 else ""
    return StepWords(
        transfer=(f"First transfer {', '.join(step.transfer_first)} to the alternate supply."
                  if step.transfer_first else ""),
        permission=(f"Get permission first: {', '.join(step.permission_for)} is vital and "
                    "has no alternate supply." if step.permission_for else ""),
        open=f"Open {opened}; {WATCH}.",
        dead=f"Goes dead for about a minute: {shown}{more}." if step.dead_loads else "",
        cleared=search.cleared, unchanged=unchanged_indication(search.as_found_v),
        on_clear=_outcome(step.level, step.on_clear, searched, numbering) + moves,
        on_stay=_outcome(step.level, step.on_stay, searched, numbering),
    )


def _outcome(level: str, branch: Branch, searched: frozenset[str],
             numbering: Numbering) -> str:
    if branch.kind == "step":
        return f"close what was opened; go to {numbering.step(level, branch.step)}"
    if branch.kind == "found" and branch.candidate_id in searched:
        return (f"the ground is below {branch.candidate_id}: close it; search its own "
                f"circuits from {numbering.level_start(branch.candidate_id)}")
    if branch.kind == "found":
        return (f"the ground is below {branch.candidate_id}: close what this step opened, "
                f"then do {numbering.final_tests(branch.candidate_id)}: they isolate, prove "
                "dead and test that circuit")
    return NOT_FOUND


def search_table_note(cleared: str, unchanged: str) -> str:
    """What the decision table's two outcome columns mean, said once above it."""
    return (f"Open what the row says and watch the detector for about a minute. Clears: "
            f"{cleared}. Stays: the detector shows the ground still there {unchanged}. "
            "Either way, close what the step opened before you go on. Tick each step when "
            "done.")


def goto_cell(goto: SearchGoto, opened_alone: str | None = None) -> str:
    """One outcome of a search step, short enough for a table cell (the note above the
    table says to close what the step opened). ``opened_alone``: the one device the
    step opens, where the column's heading already says the ground is below it."""
    moves = ""
    if " (if the ground is in" in goto.text:
        moves = goto.text[goto.text.index(" (if the ground is in"):]
    below = "" if goto.below == opened_alone else f"Below {goto.below}: "
    if goto.kind == "step" and goto.below:
        return f"{below}{'go' if below else 'Go'} to step {goto.step} (its circuits).{moves}"
    if goto.kind == "step":
        return f"Go to step {goto.step}.{moves}"
    if goto.kind == "final":
        return f"{below}{'final' if below else 'Final'} tests {goto.final}.{moves}"
    return "Not found at this level (see under the table)."


def board_heading(level: str, steps: int) -> str:
    return f"Search on {level} ({steps} steps on this board):"


# --- why the search leaves a feeder alone -----------------------------------------------------

def already_open_note(device: str) -> str:
    return (f"{device} is already open (tripped or locked by another job): what it feeds "
            "cannot carry this indication")


def not_opened_note(device: str, circuits_inside: bool) -> str:
    return (f"{device} is not opened: it would drop two or more vital loads that have no "
            "alternate supply; " + ("its own circuits are tried instead" if circuits_inside
                                    else "what it feeds on this system is left to an "
                                         "isolation test at a planned time"))


# --- final tests of the circuit a search ends at ------------------------------------------

def circuit_below(feeder: str) -> str:
    return f"the circuit below {feeder}"


def final_tests_title(final_id: str, feeder: str) -> str:
    return f"Final tests {final_id}: {circuit_below(feeder)}"


def final_tests_condition(feeder: str) -> str:
    return (f"Only when the search ends at {feeder} (a search step sends you here); "
            "otherwise skip these final tests.")


def test_voltage(section: SectionTest) -> str:
    """The DC test voltage, or its range where the table gives one: "500 V", "500–1000 V"."""
    low, high = section.test_voltage_v
    if low == high:
        return format_quantity(low, "V")
    return f"{format_quantity(low, '')}–{format_quantity(high, 'V')}"


def section_reading(section: SectionTest) -> str:
    """What the reading of one section's insulation test is of."""
    if section.circuit:
        return f"{section.label} to earth at {test_voltage(section)} DC (conductors joined)"
    return f"{section.element} to earth at {test_voltage(section)} DC"


def section_test(section: SectionTest) -> str:
    """How one section is tested."""
    if section.circuit:
        return (f"Test the {section.label} at its terminals in the terminal box of "
                f"{section.element} (every supply into that box is locked above): its "
                "conductors joined, to earth.")
    return f"Test {section.label}: each conductor to earth."


def disconnect_electronics(elements: Sequence[str]) -> tuple[str, str]:
    """Taking electronics off a circuit before its insulation test, and putting them back:
    the step and its ``reconnect``."""
    names = ", ".join(elements)
    return (f"Disconnect {names} (electronics) at its terminals, leads marked, so the test "
            "voltage cannot reach it: it is not insulation-tested.",
            f"Reconnect {names} as marked when it was disconnected; tighten and check each "
            "lead.")


def indication_back(feeder: str) -> str:
    """The check once a circuit's tests pass and it is back in service."""
    return (f"{WATCH.capitalize()}: if the indication comes back, the ground is in "
            f"{circuit_below(feeder)} after all, in a part these tests do not reach: open "
            f"{feeder} again, tag it and report; the search's restoration keeps it open.")


def ground_found_gate(feeder: str) -> str:
    """The restoration's gate of a circuit's final tests: a section below its minimum
    keeps the circuit isolated."""
    circuit = circuit_below(feeder)
    return (f"If a section read below its minimum, the ground is in {circuit}: it stays "
            "isolated for its repair. Then do not restore: leave every lock and tag of these "
            f"final tests on, hang a tag at {feeder} saying 'ground found: do not close', "
            "write the section under 'ground found at' and why under 'locks left on', and "
            "skip the rest of this restoration. Otherwise restore as follows.")


def final_test_line(final: FinalTests, section: SectionTest) -> str:
    """One section's test on one line, for the terminal."""
    at = f" at {section.reference_c:g} °C" if section.reference_c is not None else ""
    what = section.label if section.circuit else section.element
    return (f"{final.feeder} → {what}: {test_voltage(section)} DC, minimum "
            f"{format_ohms(section.minimum_ohm)}{at} ({section.basis})")


# --- the weights behind the order ---------------------------------------------------------

def weights_used(weights: SearchWeights) -> tuple[str, ...]:
    """Every factor and cost the search used, with its basis."""
    likelihood, cost = weights.likelihood, weights.cost
    lines = [f"{name.value}: ×{f.factor:g} ({f.basis})"
             for name, f in sorted(likelihood.environment.items())]
    lines += [f"{name.value} loads: ×{f.factor:g} ({f.basis})"
              for name, f in sorted(likelihood.load_kind.items())]
    lines.append(f"cable: +{likelihood.cable.per_100_m.factor:g} per 100 m "
                 f"({likelihood.cable.per_100_m.basis})")
    lines.append(f"observe: {cost.observe.minutes:g} min ({cost.observe.basis})")
    lines.append(f"transfer a vital load: {cost.transfer.minutes:g} min "
                 f"({cost.transfer.basis})")
    lines.append(f"permission: {cost.permission.minutes:g} min ({cost.permission.basis})")
    return tuple(lines)


# --- the one printed procedure for whichever circuit the search ends at -------------------

FINAL_TESTS_TITLE = "Final tests: the circuit the search ends at"


def final_tests_once(first: str, last: str) -> str:
    return (f"Only when a search step sends you to final tests {first} to {last}: do this "
            "procedure once, for that circuit only, with its row of the table below. Write "
            "its id here; each row numbered 1, 2, … below is that row's item of the same "
            "number (lock 1 is its first device to lock, test T1 its first test).")


FINAL_TESTS_ACCEPTANCE = (
    "Final tests: each test of the circuit the search ends at reads at least the minimum "
    "its row of the final tests' table gives (after the temperature correction where the "
    "row says so), from the source numbered there.")


# The procedure's steps, keyed as ``forms.FINAL_PROCEDURE`` keys them.
FINAL_PROCEDURE_TEXT: dict[str, str] = {
    "take_out_of_service": (
        "Tell the bridge or control room (the watch) and the users of the circuit that it "
        "goes out of service now. Where its row names vital loads, they go dead with it: "
        "start the standby or change over to the alternate supply first, or get "
        "permission; note who agreed."),
    "disconnect": (
        "Only where the row says 'disconnect': disconnect the electronics it names at "
        "their terminals, leads marked, so the test voltage cannot reach them: they are not "
        "insulation-tested."),
    "test": (
        "Make each test of the row, T1 first, at the DC test voltage it gives; write each "
        "reading and, where asked, the temperature below. Discharge after each test as the "
        "cautions above say."),
    "gate": (
        "If a test read below its minimum, the ground is in this circuit: it stays isolated "
        "for its repair. Then do not restore: leave every lock and tag of these final tests "
        "on, hang a tag at the device the search ends at saying 'ground found: do not "
        "close', write the section under 'ground found at' (sign-off) and why under 'locks "
        "left on', and skip the rest of this restoration. Otherwise restore as follows."),
    "reconnect": (
        "Only where the row said 'disconnect': reconnect the electronics as marked when they "
        "were disconnected; tighten and check each lead."),
    "close_up": (
        "Work on the circuit finished: take out test leads, temporary earths, shorting "
        "links and discharge sticks; count tools and materials out; close and secure every "
        "cover, door and terminal box that was opened; tell everyone at the work and at "
        "each isolation point that it is about to be energised, and see them clear."),
    "remove_lock": (
        "Remove each lock and tag, the last one applied first (the highest number in the "
        "isolation table above first): only the person who applied it removes it, and "
        "writes name and time in its row. A device the row marks 'already open' stays "
        "open: that is its normal position."),
    "energise": (
        "Every lock and tag is now off: only now energise the circuit as its row's last "
        "column says, in that order."),
    "check": (
        "Watch the detector for about a minute: if the indication comes back, the ground "
        "is in the circuit after all, in a part these tests do not reach: open the device "
        "the search ends at again, tag it and report; the search's restoration keeps it "
        "open."),
    "return_to_service": (
        "Return the circuit to service: tell the bridge or control room (the watch) and its "
        "users that it is back, and note the time. Vital loads of its row: change back from "
        "the standby or alternate supply as the bridge or control room directs."),
}
