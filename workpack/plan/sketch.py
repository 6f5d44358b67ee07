"""The one-line sketch of a package: the item, its normal supply, and every isolation
point with the path to it. Pure."""

from __future__ import annotations

from collections.abc import Sequence

from workpack.isolation import IsolationPlan
from workpack.model.package import Sketch, SketchNode
from workpack.model.plant import Bus, Source, Transformer
from workpack.plan.context import ELEMENT_KINDS
from workpack.topology import Topology, element_of


def package_sketch(topology: Topology, item_id: str,
                   plan: IsolationPlan | None) -> Sketch | None:
    """Item, its normal supply, and every isolation point with the path to it; None when
    there is nothing but the item to draw."""
    nodes: dict[str, SketchNode] = {}
    edges: list[tuple[str, str]] = []
    locked = set(plan.devices) if plan else set()

    def add(element_id: str) -> None:
        if element_id in nodes:
            return
        element = topology.elements[element_id]
        kind = "item" if element_id == item_id else ELEMENT_KINDS[type(element)]
        label = element_id
        if isinstance(element, Bus):
            label = f"{element_id} {element.voltage:g} V"
        nodes[element_id] = SketchNode(id=element_id, label=label, kind=kind,
                                       isolate=element_id in locked)

    def chain(path: Sequence[str]) -> None:
        kept = [p for p in dict.fromkeys(element_of(n) for n in path)
                if p == item_id or p in locked
                or isinstance(topology.elements[p], Source | Bus | Transformer)]
        for element_id in kept:
            add(element_id)
        for upstream, downstream in zip(kept, kept[1:], strict=False):
            if (upstream, downstream) not in edges and upstream != downstream:
                edges.append((upstream, downstream))

    for path in topology.normal_supply_paths(item_id):  # all: the renderer fits them
        chain(path)
    if plan is not None:
        for point in plan.points:
            if point.blocks is not None:
                continue  # a start or transfer block is a control, not a place in the wiring
            upstream = topology.normal_supply_paths(point.device)[:1]
            chain([*(upstream[0] if upstream else (point.device,)),
                   *reversed(point.via)])
    add(item_id)
    if len(nodes) < 2:
        return None
    return Sketch(nodes=tuple(nodes.values()), edges=tuple(edges))
