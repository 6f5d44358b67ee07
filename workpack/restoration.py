"""Taking an item out of service and putting it back, written from its isolation plan.

A technician follows a package to the letter, in the order printed. The restoration
of anything that was isolated is therefore not left to each rule's prose, where one
forgotten line leaves a cable off or a lock on: it is built here, for every package
and every final test of a search, in this order:

1. gate: restore only when the acceptance is met; otherwise every lock stays on;
2. reconnect what the work steps disconnected, last disconnected first;
3. the rule's own steps for before the locks come off;
4. close up: leads, temporary earths and tools out, covers closed, people clear;
5. remove each lock and tag, in reverse order of application, each by the person who
   applied it (one step per lock, each with its own record fields);
6. energise from the normal supply, only now that every lock is off (a breaker found
   tripped is reset here);
7. the rule's steps for the normal supply alone (e.g. a bank's secondary voltages
   before its secondary breaker closes);
8. return every other isolation point to its normal position;
9. the rule's checks once everything is back (readings, running the load);
10. return to service: tell whoever was told it went out, vital loads back from their
    standby or alternate supply.

Only the readings a rule asks for differ when the system still has a ground; none of
the steps above depend on it. The release from lockout follows OSHA 29 CFR
1910.147(e) (each lock removed by whoever applied it; area checked, people clear
and told) as SOURCES.md records it; vessels follow their flag and class rules and
the package defers to local codes. Pure: plain data in, steps out.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

from workpack.model.package import IsolationPoint, Step

# Restoration stages a rule's own step may ask for (model.rules.StepRule.stage).
BEFORE_LOCKS_OFF, AFTER_NORMAL_SUPPLY, IN_SERVICE = (
    "before_locks_off", "after_normal_supply", "in_service")


@dataclass(frozen=True)
class Restoring:
    """What the restoration of one isolation needs to know."""

    item_label: str  # what goes back into service, as printed
    points: Sequence[IsolationPoint]  # the isolation, in the order it was applied
    normal_devices: frozenset[str]  # devices on the normal supply path of the work places
    tripped: Sequence[str] = ()  # breakers found tripped on that path: reset, then close
    reconnects: Sequence[tuple[int, str]] = ()  # (work step, how to put it back), in order
    vital_loads: Sequence[str] = ()  # vital loads the isolation takes out of service
    gate: str | None = None  # the gate's text; None: no gate (nothing to withhold)
    rule_steps: dict[str, list[Step]] = field(default_factory=dict)  # by stage
    return_text: str | None = None  # None: no return-to-service step (e.g. a final test)


def take_out_of_service(item_label: str, vital_loads: Sequence[str]) -> str:
    """The step before any lock goes on: tell, and move vital loads first."""
    text = (f"Tell the bridge or control room (the watch) and the users of {item_label} "
            "that it goes out of service now.")
    if vital_loads:
        text += (f" Vital load{'s' if len(vital_loads) > 1 else ''} "
                 f"{', '.join(vital_loads)} go{'' if len(vital_loads) > 1 else 'es'} dead "
                 "with it: start the standby or change over to the alternate supply first, "
                 "or get permission; note who agreed.")
    return text


def return_to_service(item_label: str, vital_loads: Sequence[str]) -> str:
    text = (f"Return {item_label} to service: tell the bridge or control room (the watch) and "
            "its users that it is back, and note the time.")
    if vital_loads:
        text += (f" Vital load{'s' if len(vital_loads) > 1 else ''} "
                 f"{', '.join(vital_loads)}: change back from the standby or alternate "
                 "supply as the bridge or control room directs.")
    return text


def gate_text(acceptance_met: str, withheld: str) -> str:
    return (f"Restore only when {acceptance_met}. If not: do not restore. Leave every lock "
            f"and tag of this isolation on and hang a tag at each saying why; write why under "
            f"'locks left on'; {withheld}; skip the rest of this restoration.")


def restoration_steps(spec: Restoring) -> list[Step]:
    """The restoration of ``spec`` in the order above (numbers and reading ids are set by
    ``number_steps``)."""
    steps: list[Step] = []

    def add(text: str, kind: str, **extra: object) -> None:
        steps.append(Step(number=len(steps) + 1, text=text, kind=kind,  # type: ignore[arg-type]
                          check_only=True, **extra))  # type: ignore[arg-type]

    if spec.gate:
        add(spec.gate, "gate")
    for number, text in reversed(spec.reconnects):
        add(text, "reconnect", undoes=number)
    steps += spec.rule_steps.get(BEFORE_LOCKS_OFF, [])
    if spec.points:
        add(f"Work on {spec.item_label} finished: take out test leads, temporary earths, "
            "shorting links and discharge sticks; count tools and materials out; close and "
            "secure every cover, door and terminal box that was opened; tell everyone at "
            "the work and at each isolation point that it is about to be energised, and see "
            "them clear.", "close_up")
    for point in sorted(spec.points, key=lambda p: p.order, reverse=True):
        where = f" ({point.location})" if point.location else ""
        stays = " It stays open: that is its normal position." if point.already_open else ""
        add(f"Remove lock and tag from {point.device}{where}, isolation point "
            f"{point.order}: only the person who applied them removes them, and writes name "
            f"and time here.{stays}", "remove_lock", devices=(point.device,))
    closed = [p.device for p in sorted(spec.points, key=lambda p: p.order)
              if not p.already_open and p.device in spec.normal_devices]
    reset = [d for d in spec.tripped if d not in closed]
    if spec.points:
        actions = [f"reset {d} (it tripped) and close it" for d in reset]
        actions += [f"reset {d} (it tripped) and close it" if d in spec.tripped
                    else f"close {d}" for d in closed]
        lead = "Every lock and tag is now off: only now energise"
        if actions:
            add(f"{lead} {spec.item_label} from its normal supply: {'; then '.join(actions)}.",
                "energise", devices=tuple([*reset, *closed]))
        else:
            add(f"{lead} {spec.item_label} from its normal supply.", "energise")
    steps += spec.rule_steps.get(AFTER_NORMAL_SUPPLY, [])
    others = [p for p in sorted(spec.points, key=lambda p: p.order)
              if not p.already_open and p.device not in spec.normal_devices]
    if others:
        add("Return each of these to its normal position: "
            + "; ".join(f"{p.device}, {_normal_position(p)} ({p.cuts})" for p in others)
            + ".", "energise", devices=tuple(p.device for p in others))
    steps += spec.rule_steps.get(IN_SERVICE, [])
    if spec.return_text:
        add(spec.return_text, "return_to_service")
    return steps


# Device kinds whose normal position, when not normally open, is closed; anything else
# an isolation locks (a start block, a mode switch) goes back to its normal setting.
_SWITCHING = frozenset({"circuit_breaker", "switch", "disconnector", "fuse"})


def _normal_position(point: IsolationPoint) -> str:
    return "closed" if point.device_kind in _SWITCHING else "its normal setting"


def number_steps(steps: Sequence[Step], prefix: str, first: int = 1) -> tuple[Step, ...]:
    """Steps numbered from ``first``; reading ids ``<prefix><n>.R<k>`` to match; a reconnect
    keeps pointing at the work step it undoes."""
    out = []
    for n, step in enumerate(steps, start=first):
        update: dict[str, object] = {"number": n}
        if step.readings:
            update["readings"] = tuple(r.model_copy(update={"id": f"{prefix}{n}.R{k}"})
                                       for k, r in enumerate(step.readings, start=1))
        out.append(step.model_copy(update=update))
    return tuple(out)
