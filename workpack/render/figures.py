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
import functools
import math
import re
from collections.abc import Callable, Sequence

from reportlab.graphics.shapes import Circle, Drawing, Group, Line, Polygon, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth

from workpack.electrical import PhaseSequence, source_phasors
from workpack.model.package import Phasor, Sketch, SketchNode, SketchRoute
from workpack.render.sketch_layout import (
    ITEM_FRAME,
    LINE,
    MARGIN,
    PAD,
    PADLOCK_AT,
    SYMBOL_W,
    PlacedNode,
    SketchLayout,
    layout_sketch,
    longest_stack,
    width_needed,
)

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
#
# Laid out by ``sketch_layout`` (pure geometry, checked by ``geometry.problems``); drawn
# here. The sketch is a picture of what the isolation table and the search steps say,
# never their only record: when the whole picture does not fit the space given, it is
# drawn smaller in content (never in type size), step by step, and a note under it says
# what was left out.


@functools.lru_cache(maxsize=8)
def _measure(font: str, bold: str) -> Callable[[str, bool], float]:
    @functools.lru_cache(maxsize=4096)
    def measure(text: str, heavy: bool) -> float:
        return float(stringWidth(text, bold if heavy else font, FIGURE_TEXT_PT))
    return measure


LOCK_ROOM = 20.0  # a padlock, in points
MIN_SKETCH_HEIGHT = 2 * MARGIN + 2 * PAD + LINE + 2 * ITEM_FRAME  # the item alone


class FittedSketch:
    """A sketch drawing that fits its space, and the notes that say what it leaves out."""

    def __init__(self, drawing: Drawing, notes: Sequence[str],
                 layout: SketchLayout | None = None,
                 stands_for: dict[str, str] | None = None) -> None:
        self.drawing = drawing
        self.notes = tuple(notes)
        self.layout = layout  # its geometry, for the checks
        self.stands_for = stands_for or {}  # node id -> the dashed box drawn for it


def sketch_width_needed(sketch: Sketch, font: str, bold: str) -> float:
    """Points the sketch needs with every layer on one row."""
    return width_needed(sketch, _measure(font, bold))


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
    """Labels and details cut so that every box fits one row of ``room`` points."""
    nodes = []
    for node in sketch.nodes:
        space = room - 2 * MARGIN - 2 * PAD - SYMBOL_W - (LOCK_ROOM if node.isolate else 0.0)
        face = bold if node.kind in ("item", "bus") else font
        label = shortened(node.label, face, max(space, 30.0))
        detail = shortened(node.detail, font, max(space - 40.0, 30.0))
        if (label, detail) != (node.label, node.detail):
            node = node.model_copy(update={"label": label, "detail": detail})
        nodes.append(node)
    return sketch.model_copy(update={"nodes": tuple(nodes)})


def _elide_runs(sketch: Sketch, stands_for: dict[str, str]) -> tuple[Sketch, int]:
    """Runs of two or more boards that only pass the supply on (one supply, one load,
    nothing locked) drawn as one dashed box; returns the sketch and the boards elided,
    and notes in ``stands_for`` which box stands for each."""
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
    stands_for.update({member: stand_in[first].id for member, first in member_of.items()})

    def renamed(node_id: str) -> str:
        return stand_in[member_of[node_id]].id if node_id in member_of else node_id

    edges = tuple(dict.fromkeys(
        (renamed(supply), renamed(load)) for supply, load in sketch.edges
        if renamed(supply) != renamed(load)))
    return Sketch(nodes=tuple(nodes), edges=edges), len(member_of)


def _merge_parallel_supplies(sketch: Sketch,
                             stands_for: dict[str, str]) -> tuple[Sketch, int]:
    """Three or more supplies side by side (nothing feeds them, none is locked, they feed
    the same points) drawn as one dashed box; returns the sketch and the supplies merged,
    and notes in ``stands_for`` which box stands for each."""
    supplies, loads = _neighbours(sketch)
    groups: dict[tuple[str, ...], list[str]] = {}
    for node in sketch.nodes:
        if node.kind != "item" and not node.isolate and not supplies[node.id] \
                and node.search_step is None:
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
    stands_for.update({member: box.id for member, box in stand_in.items()})
    edges = tuple(dict.fromkeys((stand_in[a].id if a in stand_in else a, b)
                                for a, b in sketch.edges))
    return Sketch(nodes=tuple(nodes), edges=edges), len(stand_in)


def _natural(text: str) -> tuple[tuple[int, int | str], ...]:
    """Sort key that reads the numbers in an id as numbers: G2 before G10."""
    return tuple((0, int(part)) if part.isdigit() else (1, part)
                 for part in re.split(r"(\d+)", text) if part)


def _routes(sketch: Sketch) -> tuple[SketchRoute, ...]:
    """The sketch's routes; for a sketch built without them, every way from a node that
    nothing feeds down to an item (a lock route when it passes an isolation point)."""
    if sketch.routes:
        return sketch.routes
    supplies, loads = _neighbours(sketch)
    by_id = {node.id: node for node in sketch.nodes}
    found: list[SketchRoute] = []
    roots = [node.id for node in sketch.nodes if not supplies[node.id]]
    for root in roots:
        stack: list[tuple[str, ...]] = [(root,)]
        while stack and len(found) < 2000:
            path = stack.pop()
            following = [n for n in loads[path[-1]] if n not in path]
            if not following:
                kind = "lock" if any(by_id[n].isolate for n in path) else "supply"
                found.append(SketchRoute(kind=kind, nodes=path))  # type: ignore[arg-type]
            stack.extend((*path, n) for n in reversed(following))
    return tuple(found)


def _first_routes(sketch: Sketch, routes: Sequence[SketchRoute], count: int) -> Sketch:
    """The item(s) and the first ``count`` routes."""
    keep = {node.id for node in sketch.nodes if node.kind == "item"}
    edges: dict[tuple[str, str], None] = {}
    for route in routes[:count]:
        keep.update(route.nodes)
        edges.update(dict.fromkeys(zip(route.nodes, route.nodes[1:], strict=False)))
    return Sketch(nodes=tuple(node for node in sketch.nodes if node.id in keep),
                  edges=tuple(edge for edge in sketch.edges if edge in edges),
                  routes=tuple(routes[:count]))


# what each kind of route is called in a note, and where the package lists them all
_ROUTE_WORDS = {
    "lock": ("ways in through an isolation point", "the isolation table lists every lock"),
    "supply": ("normal supply paths", ""),
    "tie": ("alternate supplies through a normally open point", ""),
    "secondary": ("ways on to a secondary bus", ""),
    "feeder": ("feeders the search opens", "the search steps list every one"),
}


def _left_out_note(routes: Sequence[SketchRoute], drawn: int) -> str:
    totals: dict[str, int] = {}
    shown: dict[str, int] = {}
    for index, route in enumerate(routes):
        totals[route.kind] = totals.get(route.kind, 0) + 1
        shown[route.kind] = shown.get(route.kind, 0) + (1 if index < drawn else 0)
    parts, where = [], []
    for kind, (words, lists) in _ROUTE_WORDS.items():
        if kind in totals and shown[kind] < totals[kind]:
            parts.append(f"{shown[kind]} of the {totals[kind]} {words} "
                         f"({totals[kind] - shown[kind]} more not shown)")
            if lists:
                where.append(lists)
    note = "Drawn: " + "; ".join(parts)
    return note + ("; " + "; ".join(where) + "." if where else ".")


def fit_sketch(sketch: Sketch, width: tuple[float, float], max_height: float, font: str,
               bold: str) -> FittedSketch:
    """The sketch drawn between ``width[0]`` and ``width[1]`` points wide (as wide as it
    needs), at most ``max_height`` tall (never less than ``MIN_SKETCH_HEIGHT``), every
    layer on one row. When the whole does not fit, in this order: long names end in
    "…"; runs of boards that only pass the supply on, and supplies side by side, become
    dashed boxes; then only the first routes that fit are drawn (isolation points
    first, then supplies, ties, feeders). Notes under it say what was done."""
    max_height = max(max_height, MIN_SKETCH_HEIGHT)
    narrowest, widest = width
    measure = _measure(font, bold)

    def attempt(candidate: Sketch) -> SketchLayout | None:
        """The candidate's layout within the room, its stacks set in as many columns as
        the width allows (the shortest picture: it leaves the most of the page to the
        procedure); None when it does not fit."""
        longest = longest_stack(candidate, measure)
        shortest: SketchLayout | None = None
        for columns in range(1, max(1, min(longest, 12)) + 1):
            per_column = -(-longest // columns) if longest else None
            if columns > 1 and per_column == -(-longest // (columns - 1)):
                continue  # the same stacks as one column fewer
            needed = width_needed(candidate, measure, widest, per_column)
            if needed > widest + 0.01:
                break  # more columns are only wider
            layout = layout_sketch(candidate, max(narrowest, needed), measure, per_column)
            if layout is not None and layout.height <= max_height and (
                    shortest is None or layout.height < shortest.height - 0.01):
                shortest = layout
        return shortest

    stands_for: dict[str, str] = {}

    def summarised(candidate: Sketch) -> tuple[Sketch, int, int]:
        stands_for.clear()
        merged, boards = _elide_runs(candidate, stands_for)
        merged, parallel = _merge_parallel_supplies(merged, stands_for)
        return _shorten_labels(merged, widest, font, bold), boards, parallel

    def finished(candidate: Sketch, layout: SketchLayout, boards: int, parallel: int,
                 notes: list[str]) -> FittedSketch:
        if any(node.label.endswith("…") or node.detail.endswith("…")
               for node in candidate.nodes):
            notes.insert(0, "Names too long for the sketch end in “…”; the isolation table "
                            "gives them in full.")
        kinds = [f"{boards} boards in a row that only pass the supply on"] if boards else []
        kinds += [f"{parallel} supplies side by side"] if parallel else []
        if kinds:
            notes.insert(0, f"A dashed box, named by its first and last, stands for "
                            f"{' and '.join(kinds)}.")
        return FittedSketch(draw_layout(layout, font, bold), notes, layout,
                            dict(stands_for) if boards or parallel else {})

    whole = _shorten_labels(sketch, widest, font, bold)
    if (layout := attempt(whole)) is not None:
        return finished(whole, layout, 0, 0, [])
    shown, boards, parallel = summarised(sketch)
    if (layout := attempt(shown)) is not None:
        return finished(shown, layout, boards, parallel, [])
    routes = _routes(sketch)
    low, high = 0, len(routes)  # the most routes whose sketch fits (binary search)
    while low < high:
        middle = (low + high + 1) // 2
        if attempt(summarised(_first_routes(sketch, routes, middle))[0]) is not None:
            low = middle
        else:
            high = middle - 1
    shown, boards, parallel = summarised(_first_routes(sketch, routes, low))
    layout = attempt(shown)
    if layout is None:  # not even the item fits the room asked for: draw it alone
        shown = _shorten_labels(_first_routes(sketch, routes, 0), widest, font, bold)
        layout = layout_sketch(shown, None, measure)
        assert layout is not None
    return finished(shown, layout, boards, parallel, [_left_out_note(routes, low)])


def _padlock(x: float, y: float) -> Group:
    """A padlock, 4.2 mm wide: body and shackle, lower-left corner at (x, y)."""
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
    """The whole sketch ``width`` points wide (wider where a layer needs it)."""
    measure = _measure(font, bold)
    layout = (layout_sketch(sketch, width, measure)
              or layout_sketch(sketch, None, measure))
    assert layout is not None
    return draw_layout(layout, font, bold)


def draw_layout(layout: SketchLayout, font: str, bold: str) -> Drawing:
    """Sources at the top, lines from supply to load, the item in a double frame. An
    isolation point's contact is drawn open with a padlock beside it and the word LOCK,
    all inside its own box."""
    height = layout.height
    drawing = Drawing(layout.width, height)
    drawing.add(Rect(0, 0, layout.width, height, fillColor=None, strokeColor=colors.black,
                     strokeWidth=0.5))
    for wire in layout.wires:
        points = [c for x, y in wire.points for c in (x, height - y)]
        drawing.add(PolyLine(points, strokeColor=colors.black, strokeWidth=1.0))
    for placed in layout.nodes:
        _draw_node(drawing, placed, height, font, bold)
    return drawing


def _draw_node(drawing: Drawing, placed: PlacedNode, height: float, font: str,
               bold: str) -> None:
    node, r = placed.node, placed.rect
    bottom, top = height - r.y1, height - r.y0
    stroke = {"bus": 2.4, "item": 1.0, "source": 1.0}.get(node.kind, 0.8)
    round_corner = 3 * mm if node.kind == "source" else 0
    drawing.add(Rect(r.x0, bottom, r.width, r.height, fillColor=colors.white,
                     strokeColor=colors.black, strokeWidth=stroke,
                     strokeDashArray=[3, 2] if node.kind == "elided" else None,
                     rx=round_corner, ry=round_corner))
    if node.kind == "item":  # double frame: the thing being worked on
        drawing.add(Rect(r.x0 + 1.5, bottom + 1.5, r.width - 3, r.height - 3, fillColor=None,
                         strokeColor=colors.black, strokeWidth=1.0))
    for text in placed.texts:
        drawing.add(_label(text.x, height - text.baseline, text.text,
                           bold if text.bold else font, anchor="start"))
    x = placed.conductor_x
    if x is None or node.kind not in ("device", "transformer"):
        return
    middle = (top + bottom) / 2
    line = {"strokeColor": colors.black, "strokeWidth": 1.0}
    if node.kind == "transformer":  # two windings on the conductor
        drawing.add(Line(x, top, x, middle + 7, **line))
        drawing.add(Line(x, middle - 7, x, bottom, **line))
        drawing.add(Circle(x, middle + 2.5, 4.5, fillColor=None, **line))
        drawing.add(Circle(x, middle - 2.5, 4.5, fillColor=None, **line))
        return
    is_open = node.isolate or node.normally_open
    drawing.add(Line(x, top, x, middle + 4, **line))
    drawing.add(Line(x, middle - 4, x, bottom, **line))
    if is_open:  # the contact drawn open, its blade swung to the right
        drawing.add(Line(x, middle - 4, x + 5, middle + 4, **line))
    else:
        drawing.add(Rect(x - 3, middle - 3, 6, 6, fillColor=colors.white, **line))
    if node.isolate and placed.lock_x is not None:
        drawing.add(Line(x + 3, middle, placed.lock_x + PADLOCK_AT, middle,
                         strokeColor=colors.black, strokeWidth=0.8))  # the lock holds it
        drawing.add(_padlock(placed.lock_x + PADLOCK_AT, middle - 3.4 * mm / 2 - 1))


def sketch_legend() -> Sequence[str]:
    """Words that explain the sketch's marks, for a caption under it."""
    return ("Supply above, load below: every way energy could reach the item (double "
            "frame); heavy frame: bus; a line up the right edge feeds back to a board above.",
            "Open contact with a padlock, and LOCK: an isolation point of this package; "
            "N.O.: normally open; step n, or (n) after a name: the search step that first "
            "opens it.")
