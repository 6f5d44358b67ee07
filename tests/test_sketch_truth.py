"""Package sketches tell the truth (issue 14, point 2): every way energy could reach the
item is drawn or counted as not shown; a lock point sits on the conductor it cuts, with
the secondary bus and the ties behind it; a ground search shows the board's feeders
numbered with the step that opens them; and every sketch passes the drawing geometry
checks (no line through a box it does not end at, no label overlap, all inside the
frame). Over every demo package and over generated plants (``tests/plantgen.py``:
invented data, no check values).
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from plantgen import findings_data, random_findings_data, random_plant_data, shaped_plant_data
from test_plan_shapes import plan_files

from workpack.loading import load_plant
from workpack.model.package import Sketch, SketchNode, SketchRoute, WorkPackage
from workpack.render.figures import FittedSketch, fit_sketch
from workpack.render.geometry import problems
from workpack.render.pdf import FONT, FONT_BOLD, register_fonts, render_package
from workpack.topology import Topology, element_of

ROOT = Path(__file__).resolve().parent.parent
# (narrowest, widest) and height in points: the package page's full and half widths,
# a roomy page and a tight one
SIZES = [((250.0, 515.0), 560.0), ((250.0, 250.0), 560.0), ((250.0, 515.0), 200.0)]


@pytest.fixture(autouse=True, scope="module")
def fonts() -> None:
    register_fonts()


def packages(folder: Path) -> list[WorkPackage]:
    return [WorkPackage.model_validate_json(p.read_text())
            for p in sorted(folder.glob("WP-*.json"))]


def planned(tmp_path: Path, plant: dict[str, Any], findings: dict[str, Any]) -> Path:
    plan_files(tmp_path, plant, findings)
    return tmp_path


# --- what each fault looked like, as a check --------------------------------------------


def geometry_faults(fitted: FittedSketch) -> list[str]:
    assert fitted.layout is not None
    return [str(p) for p in problems(fitted.layout.picture())]


def uncounted_routes(sketch: Sketch, fitted: FittedSketch) -> list[str]:
    """Routes neither drawn whole (a dashed box standing for some of its nodes) nor
    counted by a "more not shown" note."""
    assert fitted.layout is not None
    boxes = {placed.node.id for placed in fitted.layout.nodes}
    drawn = boxes | {node for node, box in fitted.stands_for.items() if box in boxes}
    not_shown = sum(int(n) for note in fitted.notes
                    for n in re.findall(r"\((\d+) more not shown\)", note))
    whole = sum(1 for route in sketch.routes if set(route.nodes) <= drawn)
    if whole + not_shown != len(sketch.routes):
        return [f"{len(sketch.routes)} routes: {whole} drawn, {not_shown} said not shown"]
    return []


def misplaced_locks(package: WorkPackage, topology: Topology) -> list[str]:
    """A lock point must sit between its own far side and the item: the node before it
    on its route is not on the item's side, the node after it is the item or on the way
    to it, and each isolation point of the package has such a route."""
    assert package.sketch is not None
    faults = []
    routes = [r for r in package.sketch.routes if r.kind == "lock"]
    for point in package.isolation:
        if point.blocks is not None:
            continue
        on_route = [r for r in routes if point.device in r.nodes]
        if not on_route:
            faults.append(f"{point.device}: no route through it")
            continue
        # the item's side: everything on a normal supply path between it and the item
        item_side = {package.item}
        for path in topology.possible_supply_paths(package.item, limit=200):
            elements = [element_of(n) for n in path]
            if point.device in elements:
                item_side.update(elements[elements.index(point.device) + 1:])
        for route in on_route:
            at = route.nodes.index(point.device)
            if at == len(route.nodes) - 1:
                faults.append(f"{point.device}: drawn at the end of its route")
            elif at > 0 and route.nodes[at - 1] in item_side - {point.device}:
                faults.append(f"{point.device}: drawn fed from the item's side "
                              f"({route.nodes[at - 1]})")
    return faults


def unnumbered_feeders(package: WorkPackage) -> list[str]:
    """Every feeder the search's first board opens is drawn with the number of the step
    that first opens it, as the steps print it."""
    assert package.sketch is not None
    board = next((r.nodes[0] for r in package.sketch.routes if r.kind == "feeder"), None)
    if board is None:
        return ["no feeder in the search sketch"]
    first: dict[str, int] = {}
    for step in package.steps:
        lines = step.text.splitlines()
        if step.kind != "search" or not lines[0].startswith(f"Search on {board} "):
            continue
        opened = next(line for line in lines if line.startswith("Open "))
        for device in re.findall(r"([^\s,(]+)(?: \([^)]*\))?(?:,|;)", opened[5:]):
            first.setdefault(device, step.number)
    nodes = {node.id: node for node in package.sketch.nodes}
    return [f"{device}: step {number}, drawn as "
            f"{nodes[device].search_step if device in nodes else 'missing'}"
            for device, number in first.items()
            if device not in nodes or nodes[device].search_step != number]


def fitted_sizes(sketch: Sketch) -> Iterator[FittedSketch]:
    for width, height in SIZES:
        yield fit_sketch(sketch, width, height, FONT, FONT_BOLD)


def all_faults(package: WorkPackage, topology: Topology) -> list[str]:
    sketch = package.sketch
    if sketch is None:
        return []
    faults = [f"{package.id}: {f}" for f in misplaced_locks(package, topology)]
    if package.switches and package.steps:
        faults += [f"{package.id}: {f}" for f in unnumbered_feeders(package)]
    for fitted in fitted_sizes(sketch):
        faults += [f"{package.id} {fitted.drawing.width:.0f} pt: {f}"
                   for f in geometry_faults(fitted) + uncounted_routes(sketch, fitted)]
    return faults


# --- the demo ------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def demo(demo_plan: Path) -> dict[str, WorkPackage]:
    return {p.item + ("/search" if p.switches else "") + f"/{p.id}": p
            for p in packages(demo_plan)}


@pytest.fixture(scope="module")
def vessel() -> Topology:
    return load_plant(ROOT / "plants" / "demo-vessel.yaml")[1]


def by_title(demo: dict[str, WorkPackage], start: str) -> WorkPackage:
    return next(p for p in demo.values() if p.title.startswith(start))


def test_every_demo_sketch_is_true_and_clean(demo: dict[str, WorkPackage],
                                             vessel: Topology) -> None:
    assert sum(p.sketch is not None for p in demo.values()) >= 8
    faults = [f for p in demo.values() for f in all_faults(p, vessel)]
    assert faults == []


def test_the_bank_sketch_locks_its_secondary_breaker_below_the_secondary_bus(
        demo: dict[str, WorkPackage]) -> None:
    """The fault seen: CB-T1S drawn beside T1, fed from T1, a line across its lock; no
    LP-MAIN, no tie behind it. Now the back-feed route runs from the emergency
    generator through the normally open ties down to the bank."""
    package = by_title(demo, "T1 (main lighting bank): run open delta")
    assert package.sketch is not None
    nodes = {n.id: n for n in package.sketch.nodes}
    edges = set(package.sketch.edges)
    assert {("LP-MAIN", "CB-T1S"), ("CB-T1S", "T1"), ("CB-LTIE", "LP-MAIN"),
            ("MSB", "CB-T1"), ("CB-T1", "T1")} <= edges
    assert ("T1", "CB-T1S") not in edges
    assert nodes["CB-T1S"].isolate and nodes["CB-T1"].isolate
    assert nodes["CB-LTIE"].normally_open and nodes["LP-MAIN"].kind == "bus"
    assert nodes["T1"].detail == "Dd0 440/115 V"
    back_feed = next(r for r in package.sketch.routes if "CB-T1S" in r.nodes)
    assert back_feed.nodes[0] == "EDG" and back_feed.nodes[-1] == "T1"


def test_the_live_bank_sketch_shows_its_secondary_bus_and_the_boards_ties(
        demo: dict[str, WorkPackage]) -> None:
    package = by_title(demo, "Periodic inspection of T1")
    assert package.sketch is not None
    kinds = {r.kind: r.nodes for r in package.sketch.routes}
    assert kinds["secondary"] == ("T1", "LP-MAIN")
    ties = [r.nodes for r in package.sketch.routes if r.kind == "tie"]
    assert ("SHORE", "CB-SHORE", "MSB") in ties
    assert any(r[-2:] == ("CB-BACKFEED", "MSB") for r in ties)


def test_every_normal_supply_path_is_a_route(demo: dict[str, WorkPackage],
                                             vessel: Topology) -> None:
    """The fault seen: ``normal_supply_paths(...)[:2]`` drew two of three generators."""
    for package in demo.values():
        if package.sketch is None:
            continue
        sources = {r.nodes[0] for r in package.sketch.routes}
        wanted = {path[0] for path in vessel.normal_supply_paths(package.item)}
        assert wanted <= sources, package.id


def test_the_main_board_search_sketch_numbers_all_its_feeders(
        demo: dict[str, WorkPackage], tmp_path: Path) -> None:
    """The fault seen: the generators and the board, no feeders. Now every feeder the
    board's search opens, with its step, drawn on the page."""
    package = by_title(demo, "Find the ground on the MSB system")
    assert package.sketch is not None
    numbered = {n.id: n.search_step for n in package.sketch.nodes if n.search_step}
    assert len(numbered) == 21  # the demo's board level opens 21 feeders
    assert numbered["CB-MCC2"] == min(numbered.values())
    assert unnumbered_feeders(package) == []
    fitted = fit_sketch(package.sketch, (250.0, 515.0), 560.0, FONT, FONT_BOLD)
    assert fitted.layout is not None
    shown = {p.node.id for p in fitted.layout.nodes}
    assert set(numbered) <= shown
    pdf = render_package(package)
    assert render_package(package) == pdf  # same package, same bytes


def test_the_checks_find_the_faults_they_are_for(demo: dict[str, WorkPackage],
                                                 vessel: Topology) -> None:
    """Each check, given the old sketch's fault, names it."""
    bank = by_title(demo, "T1 (main lighting bank): run open delta")
    assert bank.sketch is not None
    beside = [SketchRoute(kind="lock", nodes=("SSG-1", "MSB", "CB-T1", "T1", "CB-T1S")),
              *(r for r in bank.sketch.routes if "CB-T1S" not in r.nodes)]
    old = bank.model_copy(update={"sketch": bank.sketch.model_copy(
        update={"routes": tuple(beside)})})
    assert misplaced_locks(old, vessel) == ["CB-T1S: drawn at the end of its route"]
    search = by_title(demo, "Find the ground on the MSB system")
    assert search.sketch is not None
    bare = search.sketch.model_copy(update={"nodes": tuple(
        n.model_copy(update={"search_step": None}) for n in search.sketch.nodes)})
    assert len(unnumbered_feeders(search.model_copy(update={"sketch": bare}))) == 21
    fitted = fit_sketch(search.sketch, (250.0, 515.0), 300.0, FONT, FONT_BOLD)
    assert "more not shown" in fitted.notes[-1]  # not all feeders fit 300 pt
    silent = FittedSketch(fitted.drawing, fitted.notes[:-1], fitted.layout,
                          fitted.stands_for)
    assert uncounted_routes(search.sketch, fitted) == []
    assert uncounted_routes(search.sketch, silent) != []
    assert fitted.layout is not None
    crossing = fitted.layout.wires[0]
    through = crossing.__class__(crossing.id, (crossing.points[0], (
        crossing.points[0][0], fitted.layout.height - 1)), crossing.start, crossing.end)
    broken = FittedSketch(fitted.drawing, fitted.notes, fitted.layout.__class__(
        fitted.layout.width, fitted.layout.height, fitted.layout.nodes,
        (through, *fitted.layout.wires[1:])))
    assert any("wire-through-box" in f or "wire-detached" in f
               for f in geometry_faults(broken))


# --- generated plants ------------------------------------------------------------------------

SHAPES = [("deep", 6), ("deep", 30), ("parallel", 4), ("parallel", 30), ("wide", 12),
          ("wide", 60)]


@pytest.mark.parametrize(("shape", "size"), SHAPES)
def test_sketches_of_shaped_plants_are_true_and_clean(tmp_path: Path, shape: str,
                                                      size: int) -> None:
    plant = shaped_plant_data(shape, size)
    folder = planned(tmp_path, plant, findings_data(plant))
    topology = load_plant(folder / "plant.yaml")[1]
    planned_packages = packages(folder / "out")
    assert any(p.switches for p in planned_packages)  # a ground search is among them
    faults = [f for p in planned_packages for f in all_faults(p, topology)]
    assert faults == []


@pytest.mark.parametrize("seed", range(8))
def test_sketches_of_random_plants_are_true_and_clean(tmp_path: Path, seed: int) -> None:
    plant = random_plant_data(seed=seed, size=60)
    folder = planned(tmp_path, plant, random_findings_data(plant, 12))
    topology = load_plant(folder / "plant.yaml")[1]
    faults = [f for p in packages(folder / "out") for f in all_faults(p, topology)]
    assert faults == []


def test_a_lock_between_two_boards_is_never_stacked_out_of_its_line() -> None:
    """Three feeders of one board that feed nothing are stacked; a lock point never is:
    its contact and padlock sit on the vertical conductor between its two sides."""
    nodes = (SketchNode(id="G1", label="G1", kind="source"),
             SketchNode(id="B1", label="B1 440 V", kind="bus"),
             *(SketchNode(id=f"CB-{n}", label=f"CB-{n}", kind="device", isolate=n == 2)
               for n in range(1, 5)))
    edges = (("G1", "B1"), *(("B1", f"CB-{n}") for n in range(1, 5)))
    fitted = fit_sketch(Sketch(nodes=nodes, edges=edges), (250.0, 515.0), 400.0, FONT,
                        FONT_BOLD)
    assert fitted.layout is not None and geometry_faults(fitted) == []
    assert fitted.layout.stacked == {"CB-1", "CB-3", "CB-4"}
    lock = next(p for p in fitted.layout.nodes if p.node.id == "CB-2")
    ends = [w.points[-1] for w in fitted.layout.wires if w.end == "CB-2"]
    assert lock.conductor_x is not None and lock.lock_x is not None
    assert ends == [(lock.conductor_x, lock.rect.y0)]
    assert lock.rect.x0 < lock.conductor_x < lock.lock_x < lock.rect.x1


DIGEST = """
import hashlib, sys
from pathlib import Path
from workpack.isolation import plan_isolation
from workpack.loading import load_plant
from workpack.plan.sketch import package_sketch
from workpack.render.figures import fit_sketch
from workpack.render.pdf import FONT, FONT_BOLD, register_fonts
register_fonts()
topology = load_plant(Path(sys.argv[1]))[1]
text = ""
for item in ("T1", "WL-1", "MSB"):
    sketch = package_sketch(topology, item, plan_isolation(topology, item))
    text += repr(sketch) + repr(fit_sketch(sketch, (250.0, 515.0), 400.0, FONT, FONT_BOLD).layout)
print(hashlib.sha256(text.encode()).hexdigest())
"""


def test_sketches_do_not_depend_on_hash_seeds() -> None:
    digests = set()
    for seed in ("1", "2"):
        env = {**os.environ, "PYTHONHASHSEED": seed}
        run = subprocess.run([sys.executable, "-c", DIGEST,
                              str(ROOT / "plants" / "demo-vessel.yaml")],
                             env=env, capture_output=True, text=True, check=True)
        digests.add(run.stdout.strip())
    assert len(digests) == 1
