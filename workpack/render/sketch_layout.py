"""Where everything of a package's one-line sketch goes: pure geometry, checked by
``geometry.problems`` like the whole-plant drawing.

Layers top to bottom, supply above load (longest path, then each node pulled down next
to its loads); a line that spans layers runs through a reserved slot in each layer it
crosses, so it never passes a box. Order within a layer by the mean place of the
neighbours (a few sweeps down and up), places by the same means with boxes pushed apart.
Three or more feeders of one board that feed nothing further are stacked, one per line,
on a trunk: on the bottom layer where the width allows, in columns where the height
asks. Lines are orthogonal: down from a box, along a track of the channel between two
layers, down into the next box; tracks are given so that no two conductors share a
stretch. A line against the layering (a back-feed that closes a
loop) leaves its box downward, runs up a lane at the right margin and comes down into
its load. A device's lock sits in its own box, beside its contact, so no line can
cross it.

Coordinates are points with y growing downward; the renderer turns them over.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

from workpack.model.package import Sketch, SketchNode
from workpack.render.geometry import Box, Label, Picture, Rect, Wire

Measure = Callable[[str, bool], float]  # (text, bold) -> width in points at TEXT_PT

TEXT_PT = 9.0
LINE = 11.0  # line pitch inside a box
PAD = 4.0  # text to box edge
SYMBOL_W = 16.0  # a device's or transformer's column for its conductor and symbol
PADLOCK_W = 12.0
PADLOCK_AT = 4.0  # the padlock's left, from the left of a box's lock room
GAP = 8.0  # between boxes of a layer
MARGIN = 6.0
LANE = 7.0  # between the lanes of lines against the layering, at the right margin
TRACK = 6.0  # between tracks of a channel
CHANNEL_MIN = 18.0
PORT_PAD = 6.0
PORT_GAP = 8.0
STACK_MIN = 3
STACK_INDENT = 12.0
STACK_GAP = 4.0
STACK_TOP = 9.0  # above the first leaves of a stack of several columns
STACK_HEAD = 3.5  # the line along the top of such a stack, that joins its trunks
STACK_PAD = 2.5  # above and below the one line of a stacked box
SLOT_W = 4.0  # a line's slot through a layer it crosses
ITEM_FRAME = 2.0  # the item's inner frame, inside its outer one
ASCENT, DESCENT = 0.78, 0.24  # of the face, in ems: a text's rectangle

SPREAD = ("bus", "item", "elided")  # many lines, each at its own point of the edge
SYMBOLED = ("device", "transformer")  # text, then the conductor with its symbol


@dataclass(frozen=True)
class Text:
    text: str
    x: float  # left
    baseline: float
    bold: bool
    width: float

    @property
    def rect(self) -> Rect:
        return Rect(self.x, self.baseline - ASCENT * TEXT_PT, self.x + self.width,
                    self.baseline + DESCENT * TEXT_PT)


@dataclass(frozen=True)
class PlacedNode:
    node: SketchNode
    rect: Rect
    texts: tuple[Text, ...]
    conductor_x: float | None  # where its lines meet it, when they all meet at one x
    lock_x: float | None  # left of the padlock, for an isolation point


@dataclass(frozen=True)
class SketchLayout:
    width: float
    height: float
    nodes: tuple[PlacedNode, ...]
    wires: tuple[Wire, ...]
    stacked: frozenset[str] = field(default_factory=frozenset)  # ids drawn in stacks

    def picture(self) -> Picture:
        boxes = tuple(Box(p.node.id, p.rect, element=p.node.id) for p in self.nodes)
        labels = tuple(Label(t.text, t.rect, p.node.id) for p in self.nodes for t in p.texts)
        return Picture(self.width, self.height, boxes, labels, self.wires)


def node_lines(node: SketchNode, stacked: bool = False) -> list[tuple[str, bool]]:
    """The text lines of a box: its label, then what else it is (bold for a board and
    the item)."""
    step = node.search_step
    bold = node.kind in ("item", "bus")
    if stacked:
        # one line beside the trunk: the search step in brackets after the name, so the
        # stacks of a big board fit side by side (sketch_legend says what it means)
        detail = ", ".join(part for part in (
            node.detail, "N.O." if node.normally_open else "", "LOCK" if node.isolate else "")
            if part)
        text = node.label + (f"  {detail}" if detail else "")
        return [(text + (f" ({step})" if step is not None else ""), bold)]
    detail = ", ".join(part for part in (
        node.detail, "N.O." if node.normally_open else "",
        f"step {step}" if step is not None else "",
        "LOCK" if node.isolate else "") if part)
    # an isolation point's second line is bold: LOCK must stand out in black and white
    return [(node.label, bold)] + ([(detail, node.isolate)] if detail else [])


# --- the units of a layer ------------------------------------------------------------


@dataclass
class _Unit:
    id: str
    kind: str  # "box", "stack" or "slot"
    width: float
    height: float
    order: float  # first-seen rank, the start of the ordering
    node: SketchNode | None = None
    leaves: tuple[SketchNode, ...] = ()
    text_w: float = 0.0
    x0: float = 0.0
    per_column: int = 0  # a stack: leaves in each of its columns
    leaf_w: float = 0.0  # a stack: the width of each leaf


@dataclass
class _Chain:
    """A line between two layout units, through slots; ``leaves`` for a stack."""

    id: str
    units: list[str]
    start: str  # node id
    end: str  # node id, or the stack's unit id
    back: bool = False


@dataclass
class _Segment:
    chain: int
    channel: int
    x_from: float
    x_to: float
    verticals: tuple[tuple[float, str], ...]  # (x, "up" to the channel top | "down")
    track: int = -1

    @property
    def span(self) -> tuple[float, float]:
        return min(self.x_from, self.x_to), max(self.x_from, self.x_to)


class _Builder:
    def __init__(self, sketch: Sketch, measure: Measure) -> None:
        self.measure = measure
        self.nodes = {n.id: n for n in sketch.nodes}
        self.rank = {n.id: i for i, n in enumerate(sketch.nodes)}
        edges = [(a, b) for a, b in dict.fromkeys(sketch.edges)
                 if a in self.nodes and b in self.nodes and a != b]
        self.back = self._back_edges(edges)
        self.edges = edges
        self.loads: dict[str, list[str]] = defaultdict(list)
        self.supplies: dict[str, list[str]] = defaultdict(list)
        for a, b in edges:
            self.loads[a].append(b)
            self.supplies[b].append(a)

    def _back_edges(self, edges: Sequence[tuple[str, str]]) -> set[tuple[str, str]]:
        """Edges that close a loop, found by a depth-first walk in the sketch's order."""
        out: dict[str, list[str]] = defaultdict(list)
        for a, b in edges:
            out[a].append(b)
        state: dict[str, int] = {}  # 1 on the walk's stack, 2 done
        back: set[tuple[str, str]] = set()
        for root in self.nodes:
            if root in state:
                continue
            state[root] = 1
            stack = [(root, iter(out[root]))]
            while stack:
                node, following = stack[-1]
                for nxt in following:
                    if state.get(nxt) == 1:
                        back.add((node, nxt))
                    elif nxt not in state:
                        state[nxt] = 1
                        stack.append((nxt, iter(out[nxt])))
                        break
                else:
                    state[node] = 2
                    stack.pop()
        return back

    # -- sizes ------------------------------------------------------------------------

    def text_width(self, node: SketchNode, stacked: bool = False) -> float:
        return max(self.measure(text, bold) for text, bold in node_lines(node, stacked))

    def box_size(self, node: SketchNode, ports: int, stacked: bool = False) -> tuple[float,
                                                                                   float]:
        lines = node_lines(node, stacked)
        text_w = self.text_width(node, stacked) + 2 * PAD
        width = text_w
        if node.kind in SYMBOLED and not stacked:
            width += SYMBOL_W
        if node.isolate:
            width += self.lock_width()
        if node.kind in SPREAD:
            width = max(width, 2 * PORT_PAD + max(ports - 1, 0) * PORT_GAP)
        pad = STACK_PAD if stacked else PAD
        height = len(lines) * LINE + 2 * pad
        if node.kind == "item":  # room for the inner frame
            width, height = width + 2 * ITEM_FRAME, height + 2 * ITEM_FRAME
        return width, height

    def lock_width(self) -> float:
        return PADLOCK_AT + PADLOCK_W + PAD


def layout_sketch(sketch: Sketch, width: float | None, measure: Measure,
                  per_column: int | None = None) -> SketchLayout | None:
    """The sketch laid out ``width`` points wide (None: as wide as it needs); None when a
    layer does not fit that width. Stacks go side by side on the bottom layer where that
    fits (a shorter picture), else each right under its board; with ``per_column``, a
    stack of more leaves than that is set in columns."""
    builder = _Builder(sketch, measure)
    return (_Layout(builder, width, True, per_column).run()
            or _Layout(builder, width, False, per_column).run())


def width_needed(sketch: Sketch, measure: Measure, room: float | None = None,
                 per_column: int | None = None) -> float:
    """The width ``layout_sketch`` lays the sketch out in: stacks on the bottom layer
    where that needs at most ``room`` points, else the least width it can do."""
    builder = _Builder(sketch, measure)
    widths = [_Layout(builder, None, sink, per_column).needed() for sink in (True, False)]
    if room is not None and widths[0] <= room + 0.01:
        return widths[0]
    return min(widths)


def longest_stack(sketch: Sketch, measure: Measure) -> int:
    """Leaves in the sketch's longest stack (0: none)."""
    layout = _Layout(_Builder(sketch, measure), None, False, None)
    layout.make_units()
    return max((len(u.leaves) for u in layout.units.values()), default=0)


class _Layout:
    def __init__(self, builder: _Builder, width: float | None, sink_stacks: bool,
                 per_column: int | None) -> None:
        self.b = builder
        self.width = width
        self.sink_stacks = sink_stacks
        self.per_column = per_column

    def needed(self) -> float:
        """The width the layout needs: what ``run`` lays it out in when given no width,
        without placing anything (the fitting asks it before every layout)."""
        self.make_units()
        self.layering()
        self.make_chains()
        self.ordering()
        lanes = sum(1 for c in self.chains if c.back)
        self.lane_room = lanes * LANE + (MARGIN if lanes else 0.0)
        needed = max((self.row_width(row) for row in self.rows), default=0.0)
        return needed + 2 * MARGIN + self.lane_room

    def run(self) -> SketchLayout | None:
        b = self.b
        needed = self.needed()
        if self.width is None:
            self.width = needed
        elif needed > self.width + 0.01:
            return None
        self.place_x()
        self.ports()
        self.tracks()
        self.place_y()
        placed = self.placed_nodes()
        wires = self.wires(placed)
        stacked = frozenset(n.id for u in self.units.values() for n in u.leaves)
        del b
        return SketchLayout(self.width, self.height, tuple(placed.values()), tuple(wires),
                            stacked)

    # -- units and layers -------------------------------------------------------------

    def make_units(self) -> None:
        b = self.b
        out_all = {n: list(b.loads[n]) for n in b.nodes}
        in_all = {n: list(b.supplies[n]) for n in b.nodes}
        self.unit_of: dict[str, str] = {}
        self.units: dict[str, _Unit] = {}
        stacked: dict[str, list[str]] = {}
        for parent in b.nodes:
            leaves = [c for c in out_all[parent] if not out_all[c] and in_all[c] == [parent]
                      and (parent, c) not in b.back and not b.nodes[c].isolate]
            if len(leaves) >= STACK_MIN:
                stacked[parent] = leaves
        in_stack = {leaf for leaves in stacked.values() for leaf in leaves}
        ports_top = {n: len(in_all[n]) for n in b.nodes}
        ports_bottom = {n: len([c for c in out_all[n] if c not in in_stack])
                        + (1 if n in stacked else 0) for n in b.nodes}
        for node_id, node in b.nodes.items():
            if node_id in in_stack:
                continue
            w, h = b.box_size(node, max(ports_top[node_id], ports_bottom[node_id]))
            self.units[node_id] = _Unit(node_id, "box", w, h, b.rank[node_id], node=node,
                                        text_w=b.text_width(node) + 2 * PAD)
            self.unit_of[node_id] = node_id
        for parent, leaves in stacked.items():
            nodes = tuple(b.nodes[leaf] for leaf in leaves)
            sizes = [b.box_size(n, 1, stacked=True) for n in nodes]
            unit_id = f"stack:{parent}"
            per_column = min(len(nodes), self.per_column or len(nodes))
            columns = -(-len(nodes) // per_column)
            leaf_w = max(w for w, _ in sizes)
            self.units[unit_id] = _Unit(  # leaves of one width, one under the other
                unit_id, "stack", columns * (STACK_INDENT + leaf_w) + (columns - 1) * GAP,
                (STACK_TOP if columns > 1 else STACK_GAP)
                + per_column * (sizes[0][1] + STACK_GAP),
                min(b.rank[leaf] for leaf in leaves), leaves=nodes, per_column=per_column,
                leaf_w=leaf_w)
            for leaf in leaves:
                self.unit_of[leaf] = unit_id

    def layering(self) -> None:
        """Longest path from the top, then each unit pulled down next to its loads."""
        b = self.b
        self.forward: list[tuple[str, str]] = []
        for a, c in b.edges:
            if (a, c) in b.back:
                continue
            pair = (self.unit_of[a], self.unit_of[c])
            if pair not in self.forward:
                self.forward.append(pair)
        succ: dict[str, list[str]] = defaultdict(list)
        pred: dict[str, list[str]] = defaultdict(list)
        for a, c in self.forward:
            succ[a].append(c)
            pred[c].append(a)
        ids = sorted(self.units, key=lambda u: self.units[u].order)
        waiting = {u: len(pred[u]) for u in ids}
        ready = [u for u in ids if waiting[u] == 0]
        topo: list[str] = []
        while ready:
            unit = ready.pop(0)
            topo.append(unit)
            for nxt in succ[unit]:
                waiting[nxt] -= 1
                if waiting[nxt] == 0:
                    ready.append(nxt)
        layer = dict.fromkeys(ids, 0)
        for unit in topo:
            for nxt in succ[unit]:
                layer[nxt] = max(layer[nxt], layer[unit] + 1)
        for unit in reversed(topo):
            if succ[unit]:
                layer[unit] = max(layer[unit], min(layer[n] for n in succ[unit]) - 1)
        if self.sink_stacks:
            bottom = max(layer.values(), default=0)
            for unit_id, placed in self.units.items():
                if placed.kind == "stack":
                    layer[unit_id] = bottom
        self.layer = layer
        self.succ, self.pred = succ, pred

    def make_chains(self) -> None:
        """A chain per forward edge (through slots where it spans layers), and one per
        line against the layering (or drawn forward where the layers allow)."""
        b = self.b
        self.chains: list[_Chain] = []
        for a, c in self.forward:
            self.chains.append(_Chain(f"{a}>{c}", self.through_slots(a, c), a, c))
        for a, c in b.edges:
            if (a, c) not in b.back:
                continue
            ua, uc = self.unit_of[a], self.unit_of[c]
            if self.layer[uc] > self.layer[ua]:
                self.chains.append(_Chain(f"{a}>{c}", self.through_slots(ua, uc), a, c))
            else:
                self.chains.append(_Chain(f"{a}>{c}", [ua, uc], a, c, back=True))
        self.depth = max(self.layer.values(), default=0) + 1

    def through_slots(self, upper: str, lower: str) -> list[str]:
        """The units a line from ``upper`` down to ``lower`` passes: a new slot in each
        layer between them."""
        units = [upper]
        for depth in range(self.layer[upper] + 1, self.layer[lower]):
            slot = f"slot:{upper}>{lower}:{depth}"
            self.units[slot] = _Unit(slot, "slot", SLOT_W, 0.0, self.units[upper].order + 0.5)
            self.layer[slot] = depth
            units.append(slot)
        return [*units, lower]

    # -- order within layers ----------------------------------------------------------

    def neighbours(self) -> tuple[dict[str, list[str]], dict[str, list[str]]]:
        up: dict[str, list[str]] = defaultdict(list)
        down: dict[str, list[str]] = defaultdict(list)
        for chain in self.chains:
            if chain.back:
                continue
            for a, c in zip(chain.units, chain.units[1:], strict=False):
                down[a].append(c)
                up[c].append(a)
        return up, down

    def ordering(self) -> None:
        rows: list[list[str]] = [[] for _ in range(self.depth)]
        for unit_id in sorted(self.units, key=lambda u: (self.units[u].order, u)):
            rows[self.layer[unit_id]].append(unit_id)
        up, down = self.neighbours()
        for sweep in range(8):
            downward = sweep % 2 == 0
            span = range(1, self.depth) if downward else range(self.depth - 2, -1, -1)
            for depth in span:
                other = rows[depth - 1] if downward else rows[depth + 1]
                index = {u: i for i, u in enumerate(other)}
                links = up if downward else down
                current = {u: i for i, u in enumerate(rows[depth])}

                def key(unit: str, index: dict[str, int] = index,
                        links: dict[str, list[str]] = links,
                        current: dict[str, int] = current) -> tuple[float, int]:
                    near = [index[n] for n in links[unit] if n in index]
                    return (sum(near) / len(near) if near else float(current[unit]),
                            current[unit])

                rows[depth].sort(key=key)
        self.rows = rows
        self.up, self.down = up, down

    def row_width(self, row: Sequence[str]) -> float:
        return sum(self.units[u].width for u in row) + GAP * max(len(row) - 1, 0)

    # -- places -----------------------------------------------------------------------

    def place_x(self) -> None:
        assert self.width is not None
        left, right = MARGIN, self.width - MARGIN - self.lane_room
        for row in self.rows:
            x = left + (right - left - self.row_width(row)) / 2
            for unit_id in row:
                self.units[unit_id].x0 = x
                x += self.units[unit_id].width + GAP

        def centre(unit_id: str) -> float:
            unit = self.units[unit_id]
            return unit.x0 + (STACK_INDENT / 2 if unit.kind == "stack" else unit.width / 2)

        for sweep in range(6):
            downward = sweep % 2 == 0
            links = self.up if downward else self.down
            order = self.rows if downward else list(reversed(self.rows))
            for row in order:
                wanted = []
                for unit_id in row:
                    near = [centre(n) for n in links[unit_id]]
                    wanted.append(sum(near) / len(near) if near else centre(unit_id))
                self.resolve(row, wanted, left, right)

    def resolve(self, row: Sequence[str], centres: Sequence[float], left: float,
                right: float) -> None:
        units = [self.units[u] for u in row]
        xs = [c - (STACK_INDENT / 2 if u.kind == "stack" else u.width / 2)
              for u, c in zip(units, centres, strict=True)]
        for i in range(len(xs)):
            floor = left if i == 0 else xs[i - 1] + units[i - 1].width + GAP
            xs[i] = max(xs[i], floor)
        for i in range(len(xs) - 1, -1, -1):
            ceiling = right if i == len(xs) - 1 else xs[i + 1] - GAP
            xs[i] = min(xs[i], ceiling - units[i].width)
        for i in range(len(xs)):
            floor = left if i == 0 else xs[i - 1] + units[i - 1].width + GAP
            xs[i] = max(xs[i], floor)
        for unit, x in zip(units, xs, strict=True):
            unit.x0 = round(x, 2)

    def conductor_x(self, unit: _Unit) -> float:
        node = unit.node
        if unit.kind == "slot":
            return unit.x0 + SLOT_W / 2
        if unit.kind == "stack":
            return unit.x0 + STACK_INDENT / 2
        assert node is not None
        if node.kind in SYMBOLED:
            return unit.x0 + unit.text_w + SYMBOL_W / 2
        return unit.x0 + unit.width / 2

    def ports(self) -> None:
        """The x where each chain leaves its upper unit and enters its lower one."""
        assert self.width is not None
        lane_x = self.width - MARGIN - LANE / 2
        self.lane: dict[int, float] = {}
        for index, chain in enumerate(self.chains):
            if chain.back:
                self.lane[index] = lane_x
                lane_x -= LANE
        self.out_x: dict[tuple[int, int], float] = {}  # (chain, position) -> x
        self.in_x: dict[tuple[int, int], float] = {}
        bottoms: dict[str, list[tuple[float, int, int]]] = defaultdict(list)
        tops: dict[str, list[tuple[float, int, int]]] = defaultdict(list)
        for index, chain in enumerate(self.chains):
            for position, (a, c) in enumerate(zip(chain.units, chain.units[1:],
                                                   strict=False)):
                toward_c = self.lane[index] if chain.back else self.conductor_x(self.units[c])
                toward_a = self.lane[index] if chain.back else self.conductor_x(self.units[a])
                bottoms[a].append((toward_c, index, position))
                tops[c].append((toward_a, index, position))
        for unit_id, unit in self.units.items():
            for ends, store in ((bottoms[unit_id], self.out_x), (tops[unit_id], self.in_x)):
                if not ends:
                    continue
                if unit.node is None or unit.node.kind not in SPREAD:
                    x = self.conductor_x(unit)
                    for _, index, position in ends:
                        store[(index, position)] = x
                    continue
                ordered = sorted(ends)
                low, high = unit.x0 + PORT_PAD, unit.x0 + unit.width - PORT_PAD
                xs = [min(max(target, low), high) for target, _, _ in ordered]
                for i in range(1, len(xs)):
                    xs[i] = max(xs[i], xs[i - 1] + PORT_GAP)
                for i in range(len(xs) - 1, -1, -1):
                    ceiling = high if i == len(xs) - 1 else xs[i + 1] - PORT_GAP
                    xs[i] = min(xs[i], ceiling)
                for x, (_, index, position) in zip(xs, ordered, strict=True):
                    store[(index, position)] = round(x, 2)

    # -- channels and tracks ----------------------------------------------------------

    def tracks(self) -> None:
        """Channel c lies above layer c (channel ``depth`` below the last layer)."""
        self.segments: list[_Segment] = []
        for index, chain in enumerate(self.chains):
            if chain.back:
                a, c = chain.units
                lane = self.lane[index]
                self.segments.append(_Segment(index, self.layer[a] + 1, self.out_x[(index, 0)],
                                              lane, ((self.out_x[(index, 0)], "up"),
                                                     (lane, "up"))))
                # the lane runs on up through every layer to the channel above the load
                self.segments.append(_Segment(index, self.layer[c], lane,
                                              self.in_x[(index, 0)],
                                              ((lane, "down"), (self.in_x[(index, 0)], "down"))))
                continue
            for position, (_a, c) in enumerate(zip(chain.units, chain.units[1:], strict=False)):
                x_from, x_to = self.out_x[(index, position)], self.in_x[(index, position)]
                self.segments.append(_Segment(index, self.layer[c], x_from, x_to,
                                              ((x_from, "up"), (x_to, "down"))))
        starts, ends = self.wire_ends()
        by_channel: dict[int, list[_Segment]] = defaultdict(list)
        for segment in self.segments:
            by_channel[segment.channel].append(segment)
        self.track_count: dict[int, int] = {}
        for channel, segments in by_channel.items():
            self.track_count[channel] = _give_tracks(segments, starts, ends)

    def wire_ends(self) -> tuple[dict[int, tuple[str, float]], dict[int, tuple[str, float]]]:
        """Where each chain's line starts and ends (box, x): lines that share a start or
        an end point are one conductor branching and may share a track."""
        starts = {i: (c.start, self.out_x[(i, 0)]) for i, c in enumerate(self.chains)}
        ends = {i: (c.end, self.in_x[(i, len(c.units) - 2)])
                for i, c in enumerate(self.chains)}
        return starts, ends

    def place_y(self) -> None:
        heights = [max((self.units[u].height for u in row), default=0.0) for row in self.rows]
        channels = []
        for channel in range(self.depth + 1):
            count = self.track_count.get(channel, 0)
            floor = MARGIN if channel in (0, self.depth) else CHANNEL_MIN
            channels.append(max(floor, (count + 1) * TRACK))
        y = 0.0
        self.channel_top: list[float] = []
        self.channel_h = channels
        self.row_top: list[float] = []
        self.row_h = heights
        for channel in range(self.depth + 1):
            self.channel_top.append(y)
            y += channels[channel]
            if channel < self.depth:
                self.row_top.append(y)
                y += heights[channel]
        self.height = round(y, 2)

    def track_y(self, segment: _Segment) -> float:
        count = self.track_count.get(segment.channel, 0)
        pitch = self.channel_h[segment.channel] / (count + 1)
        return round(self.channel_top[segment.channel] + (segment.track + 1) * pitch, 2)

    # -- output -----------------------------------------------------------------------

    def placed_nodes(self) -> dict[str, PlacedNode]:
        b = self.b
        placed: dict[str, PlacedNode] = {}
        for unit_id, unit in self.units.items():
            if unit.kind == "slot":
                continue
            top = self.row_top[self.layer[unit_id]]
            if unit.kind == "box":
                assert unit.node is not None
                placed[unit.node.id] = self.place_box(
                    unit.node, unit.x0, top, unit.width, unit.height, unit.text_w, False)
                continue
            first = top + (STACK_TOP if len(unit.leaves) > unit.per_column else STACK_GAP)
            for index, leaf in enumerate(unit.leaves):
                column, row = divmod(index, unit.per_column)
                h = b.box_size(leaf, 1, stacked=True)[1]
                text_w = b.text_width(leaf, stacked=True) + 2 * PAD
                left = unit.x0 + column * (STACK_INDENT + unit.leaf_w + GAP) + STACK_INDENT
                placed[leaf.id] = self.place_box(leaf, left, first + row * (h + STACK_GAP),
                                                 unit.leaf_w, h, text_w, True)
        return placed

    def place_box(self, node: SketchNode, x0: float, top: float, width: float,
                  height: float, text_w: float, stacked: bool) -> PlacedNode:
        rect = Rect(round(x0, 2), round(top, 2), round(x0 + width, 2), round(top + height, 2))
        lines = node_lines(node, stacked)
        first = top + (height - len(lines) * LINE) / 2 + (LINE - TEXT_PT) / 2 + ASCENT * TEXT_PT
        texts = []
        for row, (text, bold) in enumerate(lines):
            w = self.b.measure(text, bold)
            if node.kind in SYMBOLED or node.isolate:
                x = x0 + PAD
            else:
                x = x0 + (width - w) / 2
            texts.append(Text(text, round(x, 2), round(first + row * LINE, 2), bold, w))
        conductor = None
        lock_x = None
        if stacked:
            pass  # its line comes in from the left, along the stack's trunk
        elif node.kind in SYMBOLED:
            conductor = round(x0 + text_w + SYMBOL_W / 2, 2)
        elif node.kind not in SPREAD:
            conductor = round(x0 + width / 2, 2)
        if node.isolate:
            lock_x = round(x0 + width - self.b.lock_width(), 2)
        return PlacedNode(node, rect, tuple(texts), conductor, lock_x)

    def unit_bottom(self, unit_id: str, placed: dict[str, PlacedNode]) -> float:
        unit = self.units[unit_id]
        top = self.row_top[self.layer[unit_id]]
        if unit.kind == "box" and unit.node is not None:
            return placed[unit.node.id].rect.y1
        return top + self.row_h[self.layer[unit_id]]

    def wires(self, placed: dict[str, PlacedNode]) -> list[Wire]:
        by_chain: dict[int, list[_Segment]] = defaultdict(list)
        for segment in self.segments:
            by_chain[segment.chain].append(segment)
        wires: list[Wire] = []
        for index, chain in enumerate(self.chains):
            segments = by_chain[index]
            points: list[tuple[float, float]] = []
            first = chain.units[0]
            points.append((segments[0].x_from, self.unit_bottom(first, placed)))
            if chain.back:
                low, high = segments
                points += [(low.x_from, self.track_y(low)), (low.x_to, self.track_y(low)),
                           (high.x_from, self.track_y(high)), (high.x_to, self.track_y(high)),
                           (high.x_to, placed[chain.end].rect.y0)]
                wires.append(Wire(chain.id, _simplify(points), chain.start, chain.end))
                continue
            for segment, unit_id in zip(segments, chain.units[1:], strict=True):
                y = self.track_y(segment)
                points += [(segment.x_from, y), (segment.x_to, y)]
                unit = self.units[unit_id]
                top = self.row_top[self.layer[unit_id]]
                if unit.kind == "slot":
                    points += [(segment.x_to, top + self.row_h[self.layer[unit_id]])]
                elif unit.kind == "stack":
                    points.append((segment.x_to, top))
                else:
                    assert unit.node is not None
                    points.append((segment.x_to, placed[unit.node.id].rect.y0))
            last = self.units[chain.units[-1]]
            if last.kind != "stack":
                wires.append(Wire(chain.id, _simplify(points), chain.start, chain.end))
                continue
            head = points[-1][1] + STACK_HEAD  # joins the trunks of a stack's columns
            for leaf in last.leaves:
                rect = placed[leaf.id].rect
                middle = round((rect.y0 + rect.y1) / 2, 2)
                trunk = rect.x0 - STACK_INDENT / 2
                turn = [] if abs(trunk - points[-1][0]) < 0.01 else [
                    (points[-1][0], head), (trunk, head)]
                leaf_points = [*points, *turn, (trunk, middle), (rect.x0, middle)]
                wires.append(Wire(f"{chain.start}>{leaf.id}", _simplify(leaf_points),
                                  chain.start, leaf.id))
        return wires


def _give_tracks(segments: list[_Segment], starts: dict[int, tuple[str, float]],
                 ends: dict[int, tuple[str, float]]) -> int:
    """Tracks of one channel, top first: a segment whose line goes up at x lies above one
    whose line comes down at the same x; segments that share a stretch of a track must
    be one conductor branching. Straight segments need none. Returns the count."""

    def one_conductor(a: _Segment, b: _Segment) -> bool:
        return a.chain == b.chain or starts[a.chain] == starts[b.chain] \
            or ends[a.chain] == ends[b.chain]

    bent = [s for s in segments if abs(s.x_from - s.x_to) > 0.01]
    above: dict[int, set[int]] = defaultdict(set)  # index -> indices that must be above
    for i, a in enumerate(bent):
        for j, b in enumerate(bent):
            if i == j or one_conductor(a, b):
                continue
            ups = [x for x, way in a.verticals if way == "up"]
            downs = [x for x, way in b.verticals if way == "down"]
            if any(abs(u - d) < 1.0 for u in ups for d in downs):
                above[j].add(i)
    placed: dict[int, int] = {}
    remaining = sorted(range(len(bent)), key=lambda i: (bent[i].span, bent[i].chain))
    while remaining:
        ready = [i for i in remaining if above[i] <= placed.keys()] or remaining[:1]
        i = ready[0]
        remaining.remove(i)
        track = max((placed[j] + 1 for j in above[i] if j in placed), default=0)
        low, high = bent[i].span
        while any(placed[j] == track and not one_conductor(bent[i], bent[j])
                  and min(high, bent[j].span[1]) - max(low, bent[j].span[0]) > -2.0
                  for j in placed):
            track += 1
        placed[i] = track
        bent[i].track = track
    for segment in segments:
        if segment.track < 0:
            segment.track = 0
    return max(placed.values(), default=-1) + 1


def _simplify(points: Sequence[tuple[float, float]]) -> tuple[tuple[float, float], ...]:
    """Without repeated points and without the middle of three on one line."""
    kept: list[tuple[float, float]] = []
    for point in points:
        point = (round(point[0], 2), round(point[1], 2))
        if kept and abs(kept[-1][0] - point[0]) < 0.01 and abs(kept[-1][1] - point[1]) < 0.01:
            continue
        if len(kept) >= 2:
            (ax, ay), (bx, by) = kept[-2], kept[-1]
            if (abs(ax - bx) < 0.01 and abs(bx - point[0]) < 0.01) or (
                    abs(ay - by) < 0.01 and abs(by - point[1]) < 0.01):
                kept[-1] = point
                continue
        kept.append(point)
    return tuple(kept)
