"""Figures for the printed package, as reportlab drawings: the phasor diagram and the
one-line sketch.

Both only draw what the package gives. The phasor diagram places the source phasors
the way ``workpack.electrical.source_phasors`` defines them (first phase of the sequence
at 0°, the second at -120°, the third at +120°) and the earth point in the same plane;
the whole picture is turned by 90° so the first phase points up, which changes nothing
but the look. Labels carry the measured values, never a number the package lacks.
Sizes are points; no text is smaller than ``FIGURE_TEXT_PT``.

The sketch is fitted to the room the page gives it (``fit_sketch``): never by shrinking
the type, but by drawing less and saying so under it, so a plant of any size plans.
"""

from __future__ import annotations

import cmath
import math
import re
from collections.abc import Callable, Sequence

from reportlab.graphics.shapes import Circle, Drawing, Group, Line, Polygon, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth

from workpack.electrical import PhaseSequence, source_phasors
from workpack.model.package import Phasor, Sketch, SketchNode

FIGURE_TEXT_PT = 9.0
Formatter = Callable[[float], str]

_TURN = complex(0.0, 1.0)  # display rotation by +90°: first phase up


def _label(x: float, y: float, text: str, font: str, size: float = FIGURE_TEXT_PT,
           anchor: str = "middle") -> String:
    return String(x, y, text, fontName=font, fontSize=size, fillColor=colors.black,
                  textAnchor=anchor)


def _boxed_label(x: float, y: float, text: str, font: str, anchor: str = "middle") -> Group:
    """Text on a white patch so it stays readable where it crosses a line."""
    width = stringWidth(text, font, FIGURE_TEXT_PT)
    left = {"start": x, "middle": x - width / 2, "end": x - width}[anchor]
    group = Group()
    group.add(Rect(left - 1.5, y - 2.5, width + 3, FIGURE_TEXT_PT + 2.5, fillColor=colors.white,
                   strokeColor=None))
    group.add(_label(x, y, text, font, anchor=anchor))
    return group


def _unit(value: complex) -> complex:
    return value / abs(value) if abs(value) > 1e-12 else 1j


def phasor_drawing(phasor: Phasor, width: float, font: str, bold: str,
                   volts: Formatter) -> Drawing:
    """The source triangle, the neutral N, the earth point E and a line from E to each phase
    labelled with that phase's measured voltage to earth. ``width`` in points; the drawing
    is square. ``volts`` formats a voltage in V for a label ("348 V")."""
    sources = {label: value * _TURN
               for label, value in source_phasors(phasor.line_voltage_v,
                                                PhaseSequence(phasor.sequence)).items()}
    earth = (complex(*phasor.earth_point_v) * _TURN
             if phasor.earth_point_v is not None else None)
    points = [*sources.values(), 0j] + ([earth] if earth is not None else [])
    low_x, high_x = min(p.real for p in points), max(p.real for p in points)
    low_y, high_y = min(p.imag for p in points), max(p.imag for p in points)
    pad = 16 * mm  # room for the vertex labels outside the triangle
    size = width
    span = max(high_x - low_x, high_y - low_y) or 1.0
    scale = (size - 2 * pad) / span
    centre_x = (low_x + high_x) / 2
    centre_y = (low_y + high_y) / 2

    def at(point: complex) -> tuple[float, float]:
        return (size / 2 + (point.real - centre_x) * scale,
                size / 2 + (point.imag - centre_y) * scale)

    drawing = Drawing(size, size)
    drawing.add(Rect(0, 0, size, size, fillColor=None, strokeColor=colors.black,
                     strokeWidth=0.5))
    order = list(phasor.sequence)
    corners = [at(sources[label]) for label in order]
    drawing.add(Polygon([c for corner in corners for c in corner], fillColor=None,
                        strokeColor=colors.black, strokeWidth=0.9))
    nx, ny = at(0j)
    for corner in corners:  # the source phase voltages, from the neutral
        drawing.add(Line(nx, ny, *corner, strokeColor=colors.black, strokeWidth=0.5,
                         strokeDashArray=[2, 2]))
    drawing.add(Circle(nx, ny, 2.2, fillColor=colors.white, strokeColor=colors.black,
                       strokeWidth=0.8))
    drawing.add(_label(nx + 4, ny + 4, "N", font, anchor="start"))

    ex, ey = at(earth) if earth is not None else (nx, ny)
    for label, (cx, cy) in zip(order, corners, strict=True):
        unit = _unit(complex(cx - nx, cy - ny))
        lx, ly = cx + unit.real * 6 * mm, cy + unit.imag * 6 * mm - 4
        drawing.add(_label(lx, ly, label, bold, size=13))
        if label == phasor.grounded_phase:
            # said in words beyond the letter, away from the lines: the mark must survive
            # black-and-white print
            drawing.add(_boxed_label(lx, ly + 14 if unit.imag > 0.5 else ly - 12,
                                     "grounded", bold))
        drawing.add(Circle(cx, cy, 2.0, fillColor=colors.black, strokeColor=colors.black))
        if earth is not None:
            drawing.add(Line(ex, ey, cx, cy, strokeColor=colors.black, strokeWidth=2.2))
    if earth is not None:
        # each measured value two thirds of the way out along its own line; a line too
        # short to carry it (earth at a phase: a solid ground) gives it to the E label
        at_earth: list[str] = []
        for label, (cx, cy) in zip(order, corners, strict=True):
            if label not in phasor.readings_v:
                continue
            text = f"{label}–E {volts(phasor.readings_v[label])}"
            if math.hypot(cx - ex, cy - ey) < 14 * mm:
                at_earth.append(text)
                continue
            mx, my = ex + (cx - ex) * 0.62, ey + (cy - ey) * 0.62
            drawing.add(_boxed_label(mx, my - 3, text, font))
        drawing.add(Rect(ex - 3, ey - 3, 6, 6, fillColor=colors.black, strokeColor=None))
        # the E label goes in the direction farthest from every line leaving the point
        leaving = [_unit(complex(cx - ex, cy - ey)) for cx, cy in corners]
        candidates = [cmath.rect(1.0, math.radians(a)) for a in range(-90, 270, 45)]
        away = max(candidates, key=lambda c: min(abs(c - u) for u in leaving))
        tx, ty = ex + away.real * 5 * mm, ey + away.imag * 5 * mm - 3
        anchor = "start" if away.real > 0.3 else "end" if away.real < -0.3 else "middle"
        drawing.add(_boxed_label(tx, ty, "E (earth)", bold, anchor=anchor))
        for row, text in enumerate(at_earth, start=1):
            drawing.add(_boxed_label(tx, ty - 11 * row, text, font, anchor=anchor))
    return drawing


# --- one-line sketch ------------------------------------------------------------------

_NODE_H = 9 * mm
_ROW_GAP = 9 * mm
_NODE_GAP = 3 * mm
_LOCK_W = 14 * mm  # room beside an isolation point for the cross, padlock and "LOCK"


def _layers(sketch: Sketch) -> dict[str, int]:
    """Layer of each node: 0 for nodes nothing feeds, else one below its deepest supply;
    items go to the bottom, and every other node as low as its loads allow. Sorted
    everywhere so the picture never depends on hash order, and a loop in the data cannot
    hang it."""
    ids = sorted(node.id for node in sketch.nodes)
    supplies: dict[str, list[str]] = {node_id: [] for node_id in ids}
    for supply, load in sorted(sketch.edges):
        if supply in supplies and load in supplies:
            supplies[load].append(supply)
    layer = dict.fromkeys(ids, 0)
    for _ in range(len(ids)):  # longest path by relaxation; bounded for loops
        changed = False
        for node_id in ids:
            deepest = max((layer[s] + 1 for s in supplies[node_id]), default=0)
            deepest = min(deepest, len(ids))
            if deepest > layer[node_id]:
                layer[node_id] = deepest
                changed = True
        if not changed:
            break
    bottom = max(layer.values(), default=0)
    for node in sketch.nodes:
        if node.kind == "item":
            layer[node.id] = max(bottom, layer[node.id])
    # then pull each node down to just above its nearest load, so a line spans one row
    # where it can (a heater breaker sits beside the motor breaker, not above the bus)
    loads: dict[str, list[str]] = {node_id: [] for node_id in ids}
    for supply, load in sorted(sketch.edges):
        if supply in loads and load in loads:
            loads[supply].append(load)
    for _ in range(len(ids)):
        changed = False
        for node_id in sorted(ids, key=lambda i: -layer[i]):
            if not loads[node_id]:
                continue
            lowest = min(layer[load] for load in loads[node_id]) - 1
            if lowest > layer[node_id]:
                layer[node_id] = lowest
                changed = True
        if not changed:
            break
    return layer


def _face(node: SketchNode, font: str, bold: str) -> str:
    return bold if node.kind in ("item", "bus") else font


def _node_width(node: SketchNode, font: str, bold: str) -> float:
    return stringWidth(node.label, _face(node, font, bold), FIGURE_TEXT_PT) + 4 * mm + (
        _LOCK_W if node.isolate else 0.0)


def sketch_width_needed(sketch: Sketch, font: str, bold: str) -> float:
    """Points the widest layer needs on one row (more than this and rows wrap)."""
    layer = _layers(sketch)
    needed: dict[int, float] = {}
    for node in sketch.nodes:
        needed[layer[node.id]] = (needed.get(layer[node.id], 0.0)
                                  + _node_width(node, font, bold) + _NODE_GAP)
    return max(needed.values(), default=0.0) + 4 * mm


def _rows(sketch: Sketch, width: float, font: str, bold: str) -> list[list[SketchNode]]:
    """Nodes in rows: one row per layer, wrapped when a layer is wider than ``width``;
    within a layer, ordered by where their supplies sit, then by id."""
    return [row for _, row in _layout(sketch, width, font, bold)]


def _layout(sketch: Sketch, width: float, font: str,
            bold: str) -> list[tuple[int, list[SketchNode]]]:
    """The rows of ``_rows``, each with its layer."""
    layer = _layers(sketch)
    by_id = {node.id: node for node in sketch.nodes}
    supplies = _neighbours(sketch)[0]
    position: dict[str, float] = {}
    rows: list[tuple[int, list[SketchNode]]] = []
    by_layer: dict[int, list[SketchNode]] = {}
    for node_id in sorted(layer):
        by_layer.setdefault(layer[node_id], []).append(by_id[node_id])
    for depth in sorted(by_layer):
        def place(node: SketchNode) -> tuple[float, str]:
            fed_from = [position[s] for s in supplies[node.id] if s in position]
            return (sum(fed_from) / len(fed_from) if fed_from else 0.0, node.id)

        members = sorted(by_layer[depth], key=place)
        row: list[SketchNode] = []
        used = 0.0
        for node in members:
            need = _node_width(node, font, bold) + _NODE_GAP
            if row and used + need > width + 0.01:  # the sum's rounding is no reason to wrap
                rows.append((depth, row))
                row, used = [], 0.0
            row.append(node)
            used += need
        rows.append((depth, row))
        for index, node in enumerate(row):
            position[node.id] = float(index)
    return rows


def _height(rows: Sequence[Sequence[SketchNode]]) -> float:
    return len(rows) * (_NODE_H + _ROW_GAP) + _ROW_GAP


# --- fitting a sketch to the page -------------------------------------------------------
#
# The sketch is a picture of what the isolation table says, never its only record: when
# the whole picture does not fit the space given, it is drawn smaller in content (never in
# type size), step by step, and a note under it says what was left out.

MIN_SKETCH_HEIGHT = _NODE_H + 2 * _ROW_GAP  # one row: the item alone
MAX_ROWS_PER_LAYER = 1  # wrapped, a layer's lines would pass behind its own boxes


class FittedSketch:
    """A sketch drawing that fits its space, and the notes that say what it leaves out."""

    def __init__(self, drawing: Drawing, notes: Sequence[str]) -> None:
        self.drawing = drawing
        self.notes = tuple(notes)


def _neighbours(sketch: Sketch) -> tuple[dict[str, list[str]], dict[str, list[str]]]:
    """Supplies and loads of each node inside the sketch, sorted, without repeats."""
    ids = {node.id for node in sketch.nodes}
    supplies: dict[str, list[str]] = {node_id: [] for node_id in ids}
    loads: dict[str, list[str]] = {node_id: [] for node_id in ids}
    for supply, load in sorted(set(sketch.edges)):
        if supply in ids and load in ids and supply != load:
            supplies[load].append(supply)
            loads[supply].append(load)
    return supplies, loads


def shortened(text: str, face: str, room: float, size: float = FIGURE_TEXT_PT) -> str:
    """``text`` as drawn in ``face`` at ``size`` pt, cut to fit ``room`` points and then
    ending in "…" (unchanged when it fits). For lines drawn straight on the page, which
    cannot wrap; whoever cuts a text says where it stands in full."""
    if stringWidth(text, face, size) <= room:
        return text
    low, high = 0, len(text)
    while low < high:
        middle = (low + high + 1) // 2
        if stringWidth(text[:middle] + "…", face, size) <= room:
            low = middle
        else:
            high = middle - 1
    return text[:low] + "…"


def _shorten_labels(sketch: Sketch, room: float, font: str, bold: str) -> Sketch:
    """Labels cut so that every box fits one row of ``room`` points."""
    nodes = []
    for node in sketch.nodes:
        space = room - 4 * mm - _NODE_GAP - (_LOCK_W if node.isolate else 0.0)
        label = shortened(node.label, _face(node, font, bold), max(space, 6 * mm))
        nodes.append(node.model_copy(update={"label": label}) if label != node.label else node)
    return Sketch(nodes=tuple(nodes), edges=sketch.edges)


def _elide_runs(sketch: Sketch) -> tuple[Sketch, int]:
    """Runs of two or more boards that only pass the supply on (one supply, one load,
    nothing locked) drawn as one dashed box; returns the sketch and the boards elided."""
    supplies, loads = _neighbours(sketch)
    through = {node.id for node in sketch.nodes
               if node.kind == "bus" and not node.isolate
               and len(supplies[node.id]) == 1 and len(loads[node.id]) == 1}
    stand_in: dict[str, SketchNode] = {}  # first board of a run -> its dashed box
    member_of: dict[str, str] = {}  # every board of a run -> the run's first board
    for node in sketch.nodes:
        if node.id not in through or supplies[node.id][0] in through:
            continue  # not the first board of a run
        run = [node.id]
        while loads[run[-1]][0] in through and loads[run[-1]][0] not in run:
            run.append(loads[run[-1]][0])
        if len(run) < 2:
            continue
        box_id = f"{run[0]} … {run[-1]}"
        stand_in[node.id] = SketchNode(id=box_id, kind="elided",
                                       label=f"{run[0]} … {run[-1]}: {len(run)} boards")
        member_of.update(dict.fromkeys(run, node.id))
    if not stand_in:
        return sketch, 0
    nodes = [stand_in[node.id] if node.id in stand_in else node for node in sketch.nodes
             if node.id not in member_of or node.id in stand_in]

    def renamed(node_id: str) -> str:
        return stand_in[member_of[node_id]].id if node_id in member_of else node_id

    edges = tuple(dict.fromkeys(
        (renamed(supply), renamed(load)) for supply, load in sketch.edges
        if renamed(supply) != renamed(load)))
    return Sketch(nodes=tuple(nodes), edges=edges), len(member_of)


def _merge_parallel_supplies(sketch: Sketch) -> tuple[Sketch, int]:
    """Three or more supplies side by side (nothing feeds them, none is locked, they feed
    the same points) drawn as one dashed box; returns the sketch and the supplies merged."""
    supplies, loads = _neighbours(sketch)
    groups: dict[tuple[str, ...], list[str]] = {}
    for node in sketch.nodes:
        if node.kind != "item" and not node.isolate and not supplies[node.id]:
            groups.setdefault(tuple(loads[node.id]), []).append(node.id)
    stand_in: dict[str, SketchNode] = {}
    for members in groups.values():
        if len(members) >= 3:
            named = sorted(members, key=_natural)  # G1 … G20, not G1 … G9
            box = SketchNode(id=f"{named[0]} … {named[-1]}", kind="elided",
                             label=f"{named[0]} … {named[-1]}: {len(members)} supplies")
            stand_in.update(dict.fromkeys(members, box))
    if not stand_in:
        return sketch, 0
    nodes = list(dict.fromkeys(stand_in.get(node.id, node) for node in sketch.nodes))
    edges = tuple(dict.fromkeys((stand_in[a].id if a in stand_in else a, b)
                                for a, b in sketch.edges))
    return Sketch(nodes=tuple(nodes), edges=edges), len(stand_in)


def _natural(text: str) -> tuple[tuple[int, int | str], ...]:
    """Sort key that reads the numbers in an id as numbers: G2 before G10."""
    return tuple((0, int(part)) if part.isdigit() else (1, part)
                 for part in re.split(r"(\d+)", text) if part)


def _with_paths(sketch: Sketch, units: Sequence[str]) -> Sketch:
    """The item and, for each unit (an isolation point or a supply), one path up from it
    to a supply and one down from it to the item. Paths keep clear of other isolation
    points where they can, so each unit brings only itself; ties go by id."""
    supplies, loads = _neighbours(sketch)
    by_id = {node.id: node for node in sketch.nodes}
    items = {node.id for node in sketch.nodes if node.kind == "item"}

    def preferred(node_id: str) -> tuple[bool, tuple[tuple[int, int | str], ...]]:
        return (by_id[node_id].isolate, _natural(node_id))

    keep = set(items)
    for unit in units:
        keep.add(unit)
        node_id = unit
        while supplies[node_id]:  # up: the first supply each time
            node_id = min(supplies[node_id], key=preferred)
            if node_id in keep:
                break  # joins what is drawn already (or came round a loop)
            keep.add(node_id)
        came_from: dict[str, str] = {unit: unit}  # down: the shortest path to an item
        frontier = [unit]
        while frontier and not items & came_from.keys():
            following = []
            for node_id in frontier:
                for load in sorted(loads[node_id], key=preferred):
                    if load not in came_from:
                        came_from[load] = node_id
                        following.append(load)
            frontier = following
        reached = sorted(items & came_from.keys())
        if reached:
            node_id = reached[0]
            while node_id != unit:
                keep.add(node_id)
                node_id = came_from[node_id]
    return Sketch(nodes=tuple(node for node in sketch.nodes if node.id in keep),
                  edges=tuple(edge for edge in sketch.edges
                              if edge[0] in keep and edge[1] in keep))


def fit_sketch(sketch: Sketch, width: tuple[float, float], max_height: float, font: str,
               bold: str) -> FittedSketch:
    """The sketch drawn between ``width[0]`` and ``width[1]`` points wide (as wide as its
    widest layer needs), at most ``max_height`` tall (never less than
    ``MIN_SKETCH_HEIGHT``) and with no layer wrapped onto more than ``MAX_ROWS_PER_LAYER``
    rows. When the whole does not fit, in this order: long names end in "…"; runs of
    boards that only pass the supply on, and supplies side by side, become dashed boxes;
    then only the first isolation points (or supplies) that fit are drawn, each with one
    path up to a supply and one down to the item. Notes under it say what was done."""
    max_height = max(max_height, MIN_SKETCH_HEIGHT)
    narrowest, widest = width
    room = widest - 4 * mm

    def width_for(candidate: Sketch) -> float:
        return min(widest, max(narrowest, sketch_width_needed(candidate, font, bold)))

    def fits(candidate: Sketch) -> bool:
        layout = _layout(candidate, width_for(candidate) - 4 * mm, font, bold)
        per_layer: dict[int, int] = {}
        for depth, _ in layout:
            per_layer[depth] = per_layer.get(depth, 0) + 1
        return (_height([row for _, row in layout]) <= max_height
                and max(per_layer.values(), default=0) <= MAX_ROWS_PER_LAYER)

    def summarised(candidate: Sketch) -> tuple[Sketch, int, int]:
        merged, boards = _elide_runs(candidate)
        merged, parallel = _merge_parallel_supplies(merged)
        return _shorten_labels(merged, room, font, bold), boards, parallel

    def finished(candidate: Sketch, boards: int, parallel: int,
                 notes: list[str]) -> FittedSketch:
        if any(node.label.endswith("…") for node in candidate.nodes):
            notes.insert(0, "Names too long for the sketch end in “…”; the isolation table "
                            "gives them in full.")
        kinds = [f"{boards} boards in a row that only pass the supply on"] if boards else []
        kinds += [f"{parallel} supplies side by side"] if parallel else []
        if kinds:
            notes.insert(0, f"A dashed box, named by its first and last, stands for "
                            f"{' and '.join(kinds)}.")
        drawing = sketch_drawing(candidate, width_for(candidate), font, bold)
        return FittedSketch(drawing, notes)

    whole = _shorten_labels(sketch, room, font, bold)
    if fits(whole):
        return finished(whole, 0, 0, [])
    shown, boards, parallel = summarised(sketch)
    if fits(shown):
        return finished(shown, boards, parallel, [])
    units = [node.id for node in sketch.nodes if node.isolate]
    what = "isolation points"
    if not units:
        supplies = _neighbours(sketch)[0]
        units = [node.id for node in sketch.nodes
                 if not supplies[node.id] and node.kind != "item"]
        what = "supplies"
    low, high = 0, len(units)  # the most units whose sketch fits (binary search)
    while low < high:
        middle = (low + high + 1) // 2
        if fits(summarised(_with_paths(sketch, units[:middle]))[0]):
            low = middle
        else:
            high = middle - 1
    shown, boards, parallel = summarised(_with_paths(sketch, units[:low]))
    note = (f"Drawn: {low} of the {len(units)} {what}, each with one path up to a supply "
            "and one down to the item")
    note += "; the isolation table lists every one." if what == "isolation points" else "."
    return finished(shown, boards, parallel, [note])


def _padlock(x: float, y: float) -> Group:
    """A padlock: body and shackle, about 4 × 6 mm, lower-left corner at (x, y)."""
    group = Group()
    group.add(Rect(x, y, 4.2 * mm, 3.2 * mm, fillColor=colors.black, strokeColor=colors.black))
    radius = 1.4 * mm
    cx = x + 2.1 * mm
    arc = [(cx + radius * math.cos(math.radians(a)), y + 3.2 * mm + radius * math.sin(
        math.radians(a))) for a in range(0, 181, 15)]
    points: list[float] = [cx + radius, y + 3.2 * mm]
    for px, py in arc:
        points.extend((px, py))
    group.add(PolyLine(points, strokeColor=colors.black, strokeWidth=1.3))
    return group


def sketch_drawing(sketch: Sketch, width: float, font: str, bold: str) -> Drawing:
    """Sources at the top, the item at the bottom, lines from supply to load. An isolation
    point gets a heavy cross on its box, a padlock and the word LOCK. ``width`` in points."""
    rows = _rows(sketch, width - 4 * mm, font, bold)
    height = len(rows) * (_NODE_H + _ROW_GAP) + _ROW_GAP
    drawing = Drawing(width, height)
    drawing.add(Rect(0, 0, width, height, fillColor=None, strokeColor=colors.black,
                     strokeWidth=0.5))
    boxes: dict[str, tuple[float, float, float]] = {}  # id -> (left, bottom, box width)
    for row_index, row in enumerate(rows):
        bottom = height - (row_index + 1) * (_NODE_H + _ROW_GAP)
        widths = [_node_width(node, font, bold) for node in row]
        slot = width / len(row)
        for index, (node, node_width) in enumerate(zip(row, widths, strict=True)):
            box_width = node_width - (_LOCK_W if node.isolate else 0.0)
            centre = slot * (index + 0.5)
            left = centre - node_width / 2
            boxes[node.id] = (left, bottom, box_width)
    for supply, load in sorted(sketch.edges):
        if supply not in boxes or load not in boxes:
            continue
        sl, sb, sw = boxes[supply]
        ll, lb, lw = boxes[load]
        drawing.add(Line(sl + sw / 2, sb, ll + lw / 2, lb + _NODE_H, strokeColor=colors.black,
                         strokeWidth=1.0))
    by_id = {node.id: node for node in sketch.nodes}
    for node_id in sorted(boxes):
        node = by_id[node_id]
        left, bottom, box_width = boxes[node_id]
        _draw_node(drawing, node, left, bottom, box_width, font, bold)
    return drawing


def _draw_node(drawing: Drawing, node: SketchNode, left: float, bottom: float,
               box_width: float, font: str, bold: str) -> None:
    stroke = {"bus": 2.4, "item": 1.0, "source": 1.0}.get(node.kind, 0.8)
    drawing.add(Rect(left, bottom, box_width, _NODE_H, fillColor=colors.white,
                     strokeColor=colors.black, strokeWidth=stroke,
                     strokeDashArray=[3, 2] if node.kind == "elided" else None,
                     rx=3 * mm if node.kind == "source" else 0,
                     ry=3 * mm if node.kind == "source" else 0))
    if node.kind == "item":  # double frame: the thing being worked on
        drawing.add(Rect(left + 1.5, bottom + 1.5, box_width - 3, _NODE_H - 3, fillColor=None,
                         strokeColor=colors.black, strokeWidth=1.0))
    face = _face(node, font, bold)
    drawing.add(_label(left + box_width / 2, bottom + _NODE_H / 2 - FIGURE_TEXT_PT / 3,
                       node.label, face))
    if node.isolate:
        # heavy cross over the box edge, then the padlock and the word beside it
        x0, x1 = left + box_width + 0.8 * mm, left + box_width + 4.4 * mm
        for a, b in (((x0, bottom + 1.5 * mm), (x1, bottom + _NODE_H - 1.5 * mm)),
                     ((x0, bottom + _NODE_H - 1.5 * mm), (x1, bottom + 1.5 * mm))):
            drawing.add(Line(*a, *b, strokeColor=colors.black, strokeWidth=2.6))
        drawing.add(_padlock(x1 + 1 * mm, bottom + 1 * mm))
        drawing.add(_label(x1 + 1 * mm, bottom + _NODE_H - FIGURE_TEXT_PT + 1, "LOCK", bold,
                           anchor="start"))


def sketch_legend() -> Sequence[str]:
    """Words that explain the sketch's marks, for a caption under it."""
    return ("Supplies at the top, the item (double frame) at the bottom; heavy frame: bus.",
            "Heavy cross, padlock and LOCK: an isolation point of this package.")
