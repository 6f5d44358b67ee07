"""The isolation as a package prints it: lock points, proving-dead points, the paths no
lock can cut, and what goes dead while the locks are on. Pure."""

from __future__ import annotations

import weakref
from collections.abc import Iterable

from workpack.diagnose import downstream_loads
from workpack.isolation import HazardKind, IsolationPlan, plan_isolation
from workpack.model.package import IsolationPoint, ProvingDead
from workpack.model.plant import Load, Vitality
from workpack.topology import Topology, element_of


class Isolations:
    """``isolation.plan_isolation``, once per item for the day: the final tests of several
    searches (and packages on the same item) share it."""

    def __init__(self) -> None:
        self._plans: dict[str, IsolationPlan] = {}

    def __call__(self, topology: Topology, item_id: str) -> IsolationPlan:
        if item_id not in self._plans:
            self._plans[item_id] = plan_isolation(topology, item_id)
        return self._plans[item_id]


def isolation_points(plan: IsolationPlan | None) -> tuple[IsolationPoint, ...]:
    if plan is None:
        return ()
    return tuple(IsolationPoint(order=p.order, device=p.device, device_kind=p.device_kind,
                                location=p.location, cuts=p.reason, voltage_v=p.voltage,
                                already_open=p.already_open, blocks=p.blocks, how=p.how)
                 for p in plan.points)


def isolation_gaps(plan: IsolationPlan | None) -> tuple[str, ...]:
    """Paths no lock can cut: printed as DANGER beside the isolation."""
    if plan is None:
        return ()
    return tuple(h.text for h in plan.hazards if h.kind is HazardKind.no_lock)


def proving_dead(topology: Topology, plan: IsolationPlan | None) -> tuple[ProvingDead, ...]:
    """Each point where absence of voltage is proven, with every pair to test."""
    if plan is None:
        return ()
    a, b, c = topology.plant.plant.sequence
    pairs = {
        2: ("1-2", "1-E", "2-E"),
        3: (f"{a}-{b}", f"{b}-{c}", f"{c}-{a}", f"{a}-E", f"{b}-E", f"{c}-E"),
        # with a neutral: phase-to-neutral and neutral-to-earth as well (common practice)
        4: (f"{a}-{b}", f"{b}-{c}", f"{c}-{a}", f"{a}-N", f"{b}-N", f"{c}-N",
            f"{a}-E", f"{b}-E", f"{c}-E", "N-E"),
    }
    return tuple(ProvingDead(where=v.where, voltage_v=v.voltage, pairs=pairs[v.wires])
                 for v in plan.verify)


def vital_loads(topology: Topology, points: Iterable[IsolationPoint],
                places: Iterable[str]) -> tuple[str, ...]:
    """Vital loads an isolation takes out: below any device it opens (a heater's circuit
    test can lock a fire pump's main supply), and the places of work."""
    vital = {load for point in points if not point.already_open
             for load in _vital_below(topology, point.device)}
    vital.update(e.id for e in (topology.elements[p] for p in places)
                 if isinstance(e, Load) and e.vitality is Vitality.vital)
    return tuple(sorted(vital))


# device → the vital loads below it, per topology: a ground search's final tests lock the
# same devices again and again (hundreds of circuits a search)
_VITAL_BELOW: weakref.WeakKeyDictionary[Topology, dict[str, frozenset[str]]] = (
    weakref.WeakKeyDictionary())


def _vital_below(topology: Topology, device: str) -> frozenset[str]:
    known = _VITAL_BELOW.get(topology)
    if known is None:
        known = _VITAL_BELOW[topology] = {}
    ids = known.get(device)
    if ids is None:
        ids = known[device] = frozenset(load.id for load in downstream_loads(topology, device)
                                        if load.vitality is Vitality.vital)
    return ids


def normal_devices(topology: Topology, places: Iterable[str]) -> frozenset[str]:
    """Devices on the normal supply paths of the places of work."""
    return frozenset(element_of(node) for place in places
                     for path in topology.normal_supply_paths(place) for node in path)
