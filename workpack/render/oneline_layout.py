"""The whole-plant one-line drawing as geometry: sheets of boxes, wires, frames and text.

Pure: the plant and its topology in, plain dataclasses out, no rendering and no I/O. Text
widths come from a ``measure`` function the caller passes (the renderer's font metrics),
so what is laid out is what gets drawn.

How the picture is built
------------------------
- **Systems in frames.** Each galvanic island of the normal switching state
  (``Topology.normal_islands``) is drawn inside its own frame, whose title gives the
  island's id, voltage, earthing and ground detectors: told apart in black and white.
  A transformer is drawn in the system of its primary; its secondary line leaves that
  frame for the next one.
- **A tree per system.** Inside a system the elements and their normally closed wiring
  form a tree, walked breadth first from its most upstream board (its anchor). Supplies
  sit above what they feed: a board's incomers and generators above its bus, its
  feeders below. Each element has its own row (layer); a cable is a row of its own,
  drawn as a label on the line.
- **Tidy placement.** Subtrees are packed side by side by their per-row extents
  (contours), each parent centred over its children; a bus spans the feeders it carries.
  So every box sits in its row band, no two boxes of a row overlap, and a bus bar covers
  its own feeders only.
- **Everything else is routed.** Normally open ties and back-feeds, transfer-switch
  alternates, transformer secondaries and auxiliary (heater, control) feeds run
  orthogonally: down to a track in the channel under their start row, along it, down (or
  up) a lane in the gutter between frames, along a track in the channel over their end
  row, and into the top of their end box. Channels and gutters hold no boxes, so a wire
  never crosses a box. Tracks and lanes are given out so no two wires share a stretch.
- **Sheets.** A system too big for the sheet is split at its sub-boards, and a board with
  more feeders than fit is continued on further sheets (the bus is drawn on each, marked
  "part k of n"). Systems are then packed onto sheets in the order they are connected. An
  edge whose ends are on different sheets ends at an off-sheet connector on each
  ("to sheet 3: MCC-1", "from sheet 1: C-MCC1").

Why not a general layered (Sugiyama) layout library: tried on the demo vessel, grandalf
0.8 (pure Python, deterministic) interleaves the systems within rows, so frames cannot be
rectangles and a bus cannot span its feeders, and it draws a bus as a point. A radial
plant is a tree per system plus a few ties, for which the contour packing here keeps by
construction what the geometry tests check.

Coordinates are points with y growing downward (the PDF renderer flips them).
"""

from __future__ import annotations

from collections import deque
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field

from workpack.model.plant import (
    Bus,
    Cable,
    Detector,
    DetectorKind,
    Device,
    DeviceKind,
    Earthing,
    Element,
    FedElement,
    Load,
    Plant,
    Source,
    Transformer,
)
from workpack.render.geometry import Box, Label, Picture, Rect, Wire
from workpack.topology import AUXILIARY, MAGNETIC, WIRING, Topology

Measure = Callable[[str, float, bool], float]  # (text, size pt, bold) -> width, points

MM = 72.0 / 25.4
TEXT_PT = 9.0  # nothing smaller: the project's minimum for printed text
TITLE_PT = 12.0
LINE_PT = 11.0  # text line pitch
ROW_H = 2 * LINE_PT + 8.0  # every box: two lines of text and a margin
SYMBOL_W = 16.0  # the conductor column on the left of a device, cable, transformer, load
TEXT_GAP = 4.0
GAP = 10.0  # between neighbouring subtrees
PORT_GAP = 8.0  # between two wire ends on one box edge
BUS_MARGIN = 10.0  # a bus reaches this far past its outermost feeder
LANE = 7.0
GUTTER_PAD = 8.0
FRAME_PAD = 7.0
TRACK = 7.0
ELBOW_BAND = 10.0
CHANNEL_TOP = 6.0
CHANNEL_BOTTOM = 5.0
CHANNEL_MIN = 26.0
TITLE_BAND = 2 * LINE_PT + 6.0
MARGIN = 10 * MM
HEADER_H = 2 * LINE_PT + 10.0
BAND_GAP = 3 * LINE_PT
GLYPH = 9.0  # padlock, detector mark

# what no sheet shows, said on every sheet
LEFT_OUT = ("element names (but for buses)", "locations", "cable sizes and types",
            "routine tests")

PAPER: dict[str, tuple[float, float]] = {  # landscape, points (ISO 216)
    "A3": (420 * MM, 297 * MM),
    "A2": (594 * MM, 420 * MM),
    "A1": (841 * MM, 594 * MM),
    "A0": (1189 * MM, 841 * MM),
}


# --- what the renderer gets ------------------------------------------------------------


@dataclass(frozen=True)
class TextRun:
    """One line of text: left edge ``x``, top ``y``, its measured ``width``."""

    text: str
    x: float
    y: float
    width: float
    size: float = TEXT_PT
    bold: bool = False

    @property
    def rect(self) -> Rect:
        return Rect(self.x, self.y, self.x + self.width, self.y + self.size * 1.25)

    @property
    def baseline(self) -> float:
        return self.y + self.size * 0.95


@dataclass(frozen=True)
class DrawnBox:
    """An element, an off-sheet connector or a legend sample, with what to draw in it.

    ``kind``: source, bus, device, transformer, cable, load, connector, legend.
    ``conductor_x``: where the line runs through the box (devices, cables, transformers,
    loads and sources draw their symbol on it). ``marks``: extra symbols: ``lockable``,
    ``open`` (a normally open device), ``changeover`` (a transfer switch), ``fuse``,
    ``lamps``/``voltmeters``/``insulation_monitor`` (a bus's detector), ``motor``,
    ``generator``, ``dashed`` (a legend sample line), ``frame`` (a legend frame sample),
    ``to``/``from`` (connector direction)."""

    id: str
    rect: Rect
    kind: str
    element: str | None = None
    texts: tuple[TextRun, ...] = ()
    conductor_x: float | None = None
    marks: frozenset[str] = frozenset()
    glyph_at: tuple[float, float] | None = None  # padlock or detector mark, top-left
    edge: tuple[str, str, str] | None = None  # a connector's plant edge
    other_sheet: int | None = None


@dataclass(frozen=True)
class DrawnWire:
    id: str
    points: tuple[tuple[float, float], ...]
    start: str  # box ids
    end: str
    dashed: bool = False
    edge: tuple[str, str, str] | None = None  # (supply element, load element, kind)


@dataclass(frozen=True)
class Frame:
    id: str
    rect: Rect
    island: str
    texts: tuple[TextRun, ...] = ()


@dataclass(frozen=True)
class Sheet:
    number: int
    width: float
    height: float
    boxes: tuple[DrawnBox, ...]
    wires: tuple[DrawnWire, ...]
    frames: tuple[Frame, ...]
    texts: tuple[tuple[str, TextRun], ...]  # (region, text): header, legend, notes
    enlarged: bool = False

    def picture(self) -> Picture:
        """The sheet's geometry for ``geometry.problems``: boxes, every label, wires."""
        labels: list[Label] = []
        for box in self.boxes:
            labels.extend(Label(t.text, t.rect, box.id) for t in box.texts)
        for frame in self.frames:
            labels.extend(Label(t.text, t.rect, frame.id) for t in frame.texts)
        labels.extend(Label(t.text, t.rect, region) for region, t in self.texts)
        regions = frozenset({f.id for f in self.frames} | {r for r, _ in self.texts})
        return Picture(
            width=self.width, height=self.height,
            boxes=tuple(Box(b.id, b.rect, b.element if b.kind not in ("connector", "legend")
                            else None) for b in self.boxes),
            labels=tuple(labels),
            wires=tuple(Wire(w.id, w.points, w.start, w.end) for w in self.wires),
            regions=regions)


@dataclass(frozen=True)
class OneLineDrawing:
    title: str
    paper: str
    sheets: tuple[Sheet, ...]
    left_out: tuple[str, ...]  # what the drawing does not show, said on every sheet


# --- the plant as edges and trees ---------------------------------------------------------


@dataclass(frozen=True)
class PlantEdge:
    supply: str
    load: str
    kind: str  # wiring, changeover, auxiliary

    @property
    def key(self) -> tuple[str, str, str]:
        return (self.supply, self.load, self.kind)


def plant_edges(topology: Topology) -> list[PlantEdge]:
    """Every edge of the topology graph between two elements (a transformer's magnetic
    edge is inside its own symbol), supply first, in a stable order."""
    found: list[PlantEdge] = []
    for u, v, data in topology.graph.edges(data=True):
        if data["kind"] == MAGNETIC:
            continue
        supply_node = data["supply"]
        load_node = v if supply_node == u else u
        found.append(PlantEdge(supply_node.split(":", 1)[0], load_node.split(":", 1)[0],
                               data["kind"]))
    return sorted(found, key=lambda e: e.key)


class _Model:
    """The plant's elements, systems and per-system trees, computed once."""

    def __init__(self, plant: Plant, topology: Topology):
        self.plant = plant
        self.topology = topology
        self.elements: dict[str, Element] = plant.index()
        self.order = {element_id: i for i, element_id in enumerate(self.elements)}
        self.edges = plant_edges(topology)
        self.islands = {island.id: island for island in topology.normal_islands}
        self.island_of: dict[str, str] = {
            element_id: topology.island_of(topology.node_in(element_id)).id
            for element_id in self.elements}
        self.open = topology.normally_open
        self.supplies: dict[str, list[PlantEdge]] = {e: [] for e in self.elements}
        self.loads: dict[str, list[PlantEdge]] = {e: [] for e in self.elements}
        for edge in self.edges:
            self.supplies[edge.load].append(edge)
            self.loads[edge.supply].append(edge)
        for element_id in self.elements:
            self.supplies[element_id].sort(key=self._supply_rank(element_id))
            self.loads[element_id].sort(key=lambda e: (self.order[e.load], e.kind))
        self.parent: dict[str, str] = {}
        self.children: dict[str, list[str]] = {e: [] for e in self.elements}
        self.rank: dict[str, int] = {}
        self.roots: dict[str, list[str]] = {}
        self._grow_trees()

    def _supply_rank(self, element_id: str) -> Callable[[PlantEdge], tuple[int, int]]:
        element = self.elements[element_id]
        named = list(element.from_) if isinstance(element, FedElement) else []

        def rank(edge: PlantEdge) -> tuple[int, int]:
            position = named.index(edge.supply) if edge.supply in named else len(named)
            return (position, self.order[edge.supply])

        return rank

    def tree_edge(self, edge: PlantEdge) -> bool:
        """Closed wiring inside one system: the edges the trees are made of."""
        return (edge.kind == WIRING and edge.supply not in self.open
                and self.island_of[edge.supply] == self.island_of[edge.load])

    def _grow_trees(self) -> None:
        members: dict[str, list[str]] = {}
        for element_id in self.elements:
            members.setdefault(self.island_of[element_id], []).append(element_id)
        for island_id in sorted(members):
            nodes = members[island_id]
            depth = self._depths(nodes)
            unvisited = set(nodes)
            roots: list[str] = []
            # the most upstream board first, then sources, then anything (file order)
            anchor_key = {e: (0 if isinstance(self.elements[e], Bus) else (
                1 if isinstance(self.elements[e], Source) else 2), depth[e], self.order[e])
                for e in nodes}
            while unvisited:
                anchor = min(unvisited, key=anchor_key.__getitem__)
                roots.append(anchor)
                self.rank[anchor] = 0
                unvisited.discard(anchor)
                queue = deque([anchor])
                while queue:
                    node = queue.popleft()
                    for _, other, downward in self._tree_neighbours(node):
                        if other in unvisited:
                            unvisited.discard(other)
                            self.parent[other] = node
                            self.children[node].append(other)
                            self.rank[other] = self.rank[node] + (1 if downward else -1)
                            queue.append(other)
            self.roots[island_id] = roots

    def _tree_neighbours(self, node: str) -> list[tuple[PlantEdge, str, bool]]:
        ups = [(e, e.supply, False) for e in self.supplies[node] if self.tree_edge(e)]
        downs = [(e, e.load, True) for e in self.loads[node] if self.tree_edge(e)]
        return ups + downs

    def _depths(self, nodes: Sequence[str]) -> dict[str, int]:
        """Distance from the nearest element nothing feeds (inside the system)."""
        inside = set(nodes)
        depth: dict[str, int] = {}
        queue: deque[str] = deque()
        for node in nodes:
            if not any(self.tree_edge(e) for e in self.supplies[node]
                       if e.supply in inside):
                depth[node] = 0
                queue.append(node)
        while queue:
            node = queue.popleft()
            for edge in self.loads[node]:
                if self.tree_edge(edge) and edge.load not in depth:
                    depth[edge.load] = depth[node] + 1
                    queue.append(edge.load)
        for node in nodes:  # a closed loop with no entry: still placed
            depth.setdefault(node, 0)
        return depth

    def tree_edge_between(self, parent: str, child: str) -> PlantEdge:
        for edge in self.loads[parent]:
            if edge.load == child and self.tree_edge(edge):
                return edge
        for edge in self.supplies[parent]:
            if edge.supply == child and self.tree_edge(edge):
                return edge
        raise KeyError((parent, child))


# --- pieces: what is laid out together ---------------------------------------------------------


@dataclass
class _Piece:
    key: str
    island: str
    roots: list[str]  # tree roots laid side by side
    part: tuple[int, int] | None = None  # (k, n) of a board continued over sheets
    chunk: list[str] | None = None  # the root's feeders in this part
    board: str | None = None  # the board a split-off piece starts at
    nodes: list[str] = field(default_factory=list)


@dataclass
class _Connector:
    id: str
    at: str  # element id it hangs on
    upward: bool  # above its element (an incoming edge) or below (outgoing)
    edge: PlantEdge
    other: str  # the element at the far end
    other_sheet: int
    own_sheet: int = 0


@dataclass
class _Node:
    """A node of a piece layout: an element box or a connector box."""

    id: str
    rank: int
    lo: float  # box extents relative to the port (conductor) x
    hi: float
    x: float = 0.0
    is_bus: bool = False


@dataclass
class _PieceLayout:
    piece: _Piece
    nodes: dict[str, _Node]
    children: dict[str, list[str]]
    min_rank: int
    max_rank: int
    width: float
    title: tuple[str, str]
    title_width: float

    @property
    def column_width(self) -> float:
        return max(self.width, self.title_width + 2 * FRAME_PAD)


def _fmt(value: float, unit: str) -> str:
    return f"{value:g} {unit}"


def _kw(value: float) -> str:
    return f"{value / 1000:g} kW"


class _Builder:
    def __init__(self, plant: Plant, topology: Topology, measure: Measure, paper: str):
        self.model = _Model(plant, topology)
        self.measure = measure
        self.paper = paper
        self.page_w, self.page_h = PAPER[paper]
        self.cut: set[str] = set()
        self._part: tuple[int, int] | None = None
        self._text_cache: dict[tuple[str, bool], float] = {}

    # --- text ---------------------------------------------------------------------

    def width(self, text: str, bold: bool = False, size: float = TEXT_PT) -> float:
        key = (text, bold) if size == TEXT_PT else (f"{size}:{text}", bold)
        if key not in self._text_cache:
            self._text_cache[key] = self.measure(text, size, bold)
        return self._text_cache[key]

    def lines_of(self, element_id: str) -> tuple[str, str]:
        element = self.model.elements[element_id]
        if isinstance(element, Source):
            return element_id, f"{element.kind.value.replace('_', ' ')} " \
                               f"{_fmt(element.voltage, 'V')}"
        if isinstance(element, Bus):
            name = f"{element_id} {element.name}" if element.name else element_id
            detector = self._detector_text(element.detector)
            return name, detector
        if isinstance(element, Device):
            parts = [_fmt(element.rating, "A")] if element.rating is not None else []
            if element.kind is DeviceKind.transfer_switch:
                parts.append("2nd input N.O.")
            elif element.kind is DeviceKind.fuse:
                parts.append("fuse")
            elif element.kind is DeviceKind.connection_box:
                parts.append("connection box")
            if element.normally == "open":
                parts.append("N.O.")
            return element_id, " ".join(parts)
        if isinstance(element, Transformer):
            return element_id, (f"{element.vector_group} {element.primary_voltage:g}/"
                                f"{_fmt(element.secondary_voltage, 'V')}")
        if isinstance(element, Cable):
            return element_id, _fmt(element.length, "m")
        if isinstance(element, Load):
            rating = _kw(element.rated_kw) if element.rated_kw is not None else ""
            return element_id, f"{element.kind.value.replace('_', ' ')} {rating}".strip()
        return element_id, ""

    @staticmethod
    def _detector_text(detector: Detector | None) -> str:
        if detector is None:
            return ""
        what = {DetectorKind.lamps: "earth lamps", DetectorKind.voltmeters: "voltmeters",
                DetectorKind.insulation_monitor: "insulation monitor"}[detector.kind]
        return f"{detector.id} {what}"

    def element_extents(self, element_id: str, ports: int) -> tuple[float, float]:
        """Box extents (lo, hi) relative to the conductor x of a non-bus element."""
        first, second = self.lines_of(element_id)
        text = max(self.width(first, True), self.width(second))
        element = self.model.elements[element_id]
        glyph = GLYPH + 3 if isinstance(element, Device) and element.can_lock else 0.0
        hi = SYMBOL_W / 2 + TEXT_GAP + text + glyph + 5
        hi = max(hi, PORT_GAP * (ports + 1) + 4)
        return -SYMBOL_W / 2 - 3, hi

    def bus_text_width(self, element_id: str, part: tuple[int, int] | None = None) -> float:
        first, second = self.lines_of(element_id)
        first = _part_title(first, part)
        glyph = GLYPH + 4 if second else 0.0
        return max(self.width(first, True), self.width(second) + glyph) + 12

    def connector_lines(self, connector: _Connector) -> tuple[str, str]:
        word = "from" if connector.upward else "to"
        where = ("this sheet" if connector.other_sheet == connector.own_sheet
                 else f"sheet {connector.other_sheet}")
        return f"{word} {where}", connector.other

    def connector_extents(self, connector: _Connector) -> tuple[float, float]:
        first, second = self.connector_lines(connector)
        text = max(self.width(first, True), self.width(second))
        half = (text + 2 * TEXT_GAP + 12) / 2
        return -half, half

    # --- pieces ----------------------------------------------------------------

    def piece_nodes(self, piece: _Piece) -> list[str]:
        found: list[str] = []
        stack = list(reversed(piece.roots))
        while stack:
            node = stack.pop()
            found.append(node)
            stack.extend(reversed(self.piece_children(piece, node)))
        return found

    def piece_children(self, piece: _Piece, node: str) -> list[str]:
        model = self.model
        kids = [c for c in model.children[node] if c not in self.cut]
        if piece.chunk is not None and node == piece.roots[0]:
            assert piece.part is not None
            ups = [c for c in kids if model.rank[c] < model.rank[node]]
            return (ups if piece.part[0] == 1 else []) + [
                c for c in piece.chunk if c not in self.cut]
        return kids

    def home(self, pieces: Sequence[_Piece]) -> dict[str, _Piece]:
        """Element → the piece that draws it (a continued bus: its first part)."""
        found: dict[str, _Piece] = {}
        for piece in pieces:
            for node in piece.nodes:
                found.setdefault(node, piece)
        return found

    def cross_edges(self, pieces: Sequence[_Piece]) -> list[PlantEdge]:
        """Edges not drawn as a tree line inside one piece."""
        where: dict[str, set[str]] = {}
        for piece in pieces:
            for node in piece.nodes:
                where.setdefault(node, set()).add(piece.key)
        found = []
        for edge in self.model.edges:
            model = self.model
            tree = False
            if model.tree_edge(edge):
                child = edge.load if model.parent.get(edge.load) == edge.supply else (
                    edge.supply if model.parent.get(edge.supply) == edge.load else None)
                if child is not None and child not in self.cut:
                    parent = model.parent[child]
                    tree = bool(where.get(child, set()) & where.get(parent, set()))
            if not tree:
                found.append(edge)
        return found

    # --- layout of one piece ------------------------------------------------------------

    def layout_piece(self, piece: _Piece, connectors: Sequence[_Connector],
                     cross_ports: dict[str, int]) -> _PieceLayout:
        model = self.model
        self._part = piece.part
        children: dict[str, list[str]] = {}
        nodes: dict[str, _Node] = {}
        by_anchor: dict[str, list[_Connector]] = {}
        for connector in connectors:
            by_anchor.setdefault(connector.at, []).append(connector)
        for node_id in piece.nodes:
            kids = list(self.piece_children(piece, node_id))
            # an arriving connector goes above its element, unless the element's own
            # feeder is already above it (then it would sit in the feeder's row)
            fed_from_above = node_id in model.parent and (
                model.rank[model.parent[node_id]] < model.rank[node_id])
            below = fed_from_above and not isinstance(model.elements[node_id], Bus)
            for connector in by_anchor.get(node_id, ()):
                kids.append(connector.id)
                lo, hi = self.connector_extents(connector)
                rank = model.rank[node_id] + (-1 if connector.upward and not below else 1)
                nodes[connector.id] = _Node(connector.id, rank, lo, hi)
                children[connector.id] = []
            children[node_id] = kids
            element = model.elements[node_id]
            if isinstance(element, Bus):
                nodes[node_id] = _Node(node_id, model.rank[node_id], 0.0, 0.0, is_bus=True)
            else:
                ports = cross_ports.get(node_id, 0) + len(by_anchor.get(node_id, ()))
                lo, hi = self.element_extents(node_id, ports)
                nodes[node_id] = _Node(node_id, model.rank[node_id], lo, hi)
        offsets: dict[str, float] = {}
        contours: dict[str, dict[int, tuple[float, float]]] = {}
        for node_id in reversed(self._post_order_parents(piece.roots, children)):
            contours[node_id] = self._compose(nodes[node_id], children[node_id], nodes,
                                              contours, offsets, cross_ports.get(node_id, 0))
        # the piece's roots side by side
        accumulated: dict[int, tuple[float, float]] = {}
        root_x: dict[str, float] = {}
        for root in piece.roots:
            shift = _pack_shift(accumulated, contours[root])
            root_x[root] = shift
            _merge(accumulated, contours[root], shift)
        for root in piece.roots:
            stack = [(root, root_x[root])]
            while stack:
                node_id, x = stack.pop()
                nodes[node_id].x = x
                for child in children[node_id]:
                    stack.append((child, x + offsets[child]))
        left = min(n.x + n.lo for n in nodes.values())
        right = max(n.x + n.hi for n in nodes.values())
        for node in nodes.values():
            node.x -= left
        ranks = [n.rank for n in nodes.values()]
        title = self.frame_title(piece)
        title_width = max(self.width(title[0], True), self.width(title[1]))
        return _PieceLayout(piece, nodes, children, min(ranks), max(ranks), right - left,
                            title, title_width)

    @staticmethod
    def _post_order_parents(roots: Sequence[str],
                            children: dict[str, list[str]]) -> list[str]:
        """Nodes, every parent before its children (reverse it to compose bottom-up)."""
        order: list[str] = []
        stack = list(reversed(roots))
        while stack:
            node = stack.pop()
            order.append(node)
            stack.extend(reversed(children[node]))
        return order

    def _compose(self, node: _Node, kids: Sequence[str], nodes: dict[str, _Node],
                 contours: dict[str, dict[int, tuple[float, float]]],
                 offsets: dict[str, float], ports: int) -> dict[int, tuple[float, float]]:
        """Place ``kids`` around ``node`` (offsets of their ports from its port) and
        return the subtree's contour: rank → (leftmost, rightmost) relative to the port."""
        up = [k for k in kids if nodes[k].rank < node.rank]
        down = [k for k in kids if nodes[k].rank > node.rank]
        groups: list[dict[int, tuple[float, float]]] = []
        tidy = True
        for group in (up, down):
            accumulated: dict[int, tuple[float, float]] = {}
            shifts: list[float] = []
            for kid in group:
                shift = _pack_shift(accumulated, contours[kid])
                shifts.append(shift)
                _merge(accumulated, contours[kid], shift)
            centre = (shifts[0] + shifts[-1]) / 2 if shifts else 0.0
            for kid, shift in zip(group, shifts, strict=True):
                offsets[kid] = shift - centre
            groups.append({r: (lo - centre, hi - centre) for r, (lo, hi) in
                           accumulated.items()})
            if node.rank in accumulated:
                tidy = False
        if set(groups[0]) & set(groups[1]):
            tidy = False
        if node.is_bus:
            text = self.bus_text_width(node.id, self._part)
            placed = [offsets[k] for k in kids] or [0.0]
            node.lo = min(-text / 2, min(placed) - BUS_MARGIN)
            node.hi = max(text / 2, max(placed) + BUS_MARGIN) + PORT_GAP * ports
            node.hi = max(node.hi, node.lo + text)
        if tidy:
            contour: dict[int, tuple[float, float]] = {node.rank: (node.lo, node.hi)}
            for group_contour in groups:
                _merge(contour, group_contour, 0.0)
            return contour
        # an unusual tree (a supply with loads beside its own feeder): pack every child
        # to the right of the node itself, in order; never overlapping, seldom pretty
        contour = {node.rank: (node.lo, node.hi)}
        for kid in kids:
            shift = _pack_shift(contour, contours[kid], allow_centre=True)
            offsets[kid] = shift
            _merge(contour, contours[kid], shift)
        return contour

    def frame_title(self, piece: _Piece) -> tuple[str, str]:
        island = self.model.islands[piece.island]
        earthing = {Earthing.insulated: "insulated (IT)",
                    Earthing.high_resistance: "high-resistance earthed",
                    Earthing.solid: "solidly earthed", None: "earthing not stated"}
        voltage = _fmt(island.voltage, "V") if island.voltage is not None else "voltage ?"
        first = f"System {island.id}: {voltage}, {earthing[island.earthing]}"
        if piece.board is not None:
            first += f" (board {piece.board})"
        if piece.part is not None:
            first += f" (board {piece.roots[0]}, part {piece.part[0]} of {piece.part[1]})"
        if island.detectors:
            second = "ground detection: " + ", ".join(
                self._detector_text(d) for d in island.detectors)
        elif island.earthing in (Earthing.solid,):
            second = "earthed system: a ground fault trips"
        else:
            second = "no ground detector on this system"
        return first, second

    # --- splitting and sheets ------------------------------------------------------

    def initial_pieces(self) -> list[_Piece]:
        pieces = []
        for island_id in sorted(self.model.roots):
            piece = _Piece(key=island_id, island=island_id,
                           roots=list(self.model.roots[island_id]))
            piece.nodes = self.piece_nodes(piece)
            pieces.append(piece)
        return self.connected_order(pieces)

    def connected_order(self, pieces: list[_Piece]) -> list[_Piece]:
        """Pieces in the order a reader follows: from the first source's system outward
        along the edges between pieces, nearest connection first."""
        home = self.home(pieces)
        order = self.model.order
        links: dict[str, list[tuple[int, str]]] = {p.key: [] for p in pieces}
        for edge in self.cross_edges(pieces):
            a, b = home[edge.supply].key, home[edge.load].key
            if a != b:
                links[a].append((order[edge.supply], b))
                links[b].append((order[edge.load], a))
        by_key = {p.key: p for p in pieces}
        start = sorted(pieces, key=lambda p: min(order[n] for n in p.nodes))
        seen: set[str] = set()
        result: list[_Piece] = []
        for first in start:
            if first.key in seen:
                continue
            stack = [first.key]
            while stack:
                key = stack.pop()
                if key in seen:
                    continue
                seen.add(key)
                result.append(by_key[key])
                stack.extend(k for _, k in sorted(links[key], reverse=True) if k not in seen)
        return result

    @property
    def area(self) -> tuple[float, float]:
        """Room for the drawing on one sheet: paper less margins, header and legend."""
        return (self.page_w - 2 * MARGIN,
                self.page_h - 2 * MARGIN - HEADER_H - self.legend_height())

    def legend_height(self) -> float:
        return 4 * LINE_PT * 1.6 + 3 * LINE_PT + 12

    def worst_layout(self, piece: _Piece, pieces: Sequence[_Piece]) -> _PieceLayout:
        """The piece with a connector on every edge that leaves it: an upper bound on the
        room it needs on any sheet."""
        connectors, ports = self.connectors_for(piece, pieces, lambda _: 99, lambda _: 0,
                                                None)
        return self.layout_piece(piece, connectors, ports)

    def connectors_for(self, piece: _Piece, pieces: Sequence[_Piece],
                       sheet_of: Callable[[_Piece], int], band_of: Callable[[_Piece], int],
                       band: int | None) -> tuple[list[_Connector], dict[str, int]]:
        """Connectors for the piece's edges whose far end is in another band (all edges
        to other pieces when ``band`` is None), and the count of routed wire ends per
        element."""
        home = self.home(pieces)
        connectors: list[_Connector] = []
        ports: dict[str, int] = {}
        for edge in self.cross_edges(pieces):
            for end, other, upward in ((edge.supply, edge.load, False),
                                       (edge.load, edge.supply, True)):
                if home[end] is not piece:
                    continue
                far = home[other]
                if (band is None and far is not piece) or (
                        band is not None and band_of(far) != band):
                    tag = "from" if upward else "to"
                    connectors.append(_Connector(
                        id=f"{tag}:{edge.supply}>{edge.load}:{edge.kind}", at=end,
                        upward=upward, edge=edge, other=other, other_sheet=sheet_of(far),
                        own_sheet=sheet_of(piece)))
                else:
                    ports[end] = ports.get(end, 0) + 1
        return connectors, ports

    def split(self, pieces: list[_Piece]) -> list[_Piece]:
        """Cut pieces too big for a sheet at their sub-boards; continue a board whose
        feeders alone are too wide over several parts."""
        area_w, area_h = self.area
        done: list[_Piece] = []
        queue = deque(pieces)
        counter = 0
        while queue:
            piece = queue.popleft()
            everything = done + list(queue) + [piece]
            layout = self.worst_layout(piece, everything)
            width, height = self.band_extent([layout], everything)
            if width <= area_w and height <= area_h:
                done.append(piece)
                continue
            candidates = [n for n in piece.nodes if n not in piece.roots
                          and isinstance(self.model.elements[n], Bus)]
            if candidates:
                sizes = {c: len(self.subtree(c)) for c in candidates}
                board = max(candidates, key=lambda c: (sizes[c], -self.model.order[c]))
                self.cut.add(board)
                counter += 1
                child = _Piece(key=f"{piece.island}/{board}", island=piece.island,
                               roots=[board], board=board)
                piece.nodes = self.piece_nodes(piece)
                child.nodes = self.piece_nodes(child)
                queue.appendleft(child)
                queue.appendleft(piece)
                continue
            parts = self.continue_board(piece, area_w)
            if parts is None:  # nothing left to split at: its sheet grows (the header says)
                done.append(piece)
                continue
            for part in reversed(parts):
                queue.appendleft(part)
        return done

    def subtree(self, node: str) -> list[str]:
        found = [node]
        stack = [node]
        while stack:
            for child in self.model.children[stack.pop()]:
                if child not in self.cut:
                    found.append(child)
                    stack.append(child)
        return found

    def continue_board(self, piece: _Piece, area_w: float) -> list[_Piece] | None:
        """A board with more feeders than fit: its feeders shared out over parts, each
        on a sheet of its own. None when there is nothing to share."""
        if piece.part is not None or len(piece.roots) != 1:
            return None
        root = piece.roots[0]
        if not isinstance(self.model.elements[root], Bus):
            return None
        feeders = [c for c in self.piece_children(piece, root)
                   if self.model.rank[c] > self.model.rank[root]]
        if len(feeders) < 2:
            return None
        widths = {}
        for feeder in feeders:
            solo = _Piece(key="", island=piece.island, roots=[feeder])
            solo.nodes = self.piece_nodes(solo)
            widths[feeder] = self.layout_piece(solo, [], {}).width + GAP
        chunks: list[list[str]] = [[]]
        used = 0.0
        budget = area_w - 2 * FRAME_PAD - 4 * GAP - 200  # room for connectors and ports
        for feeder in feeders:
            if chunks[-1] and used + widths[feeder] > budget:
                chunks.append([])
                used = 0.0
            chunks[-1].append(feeder)
            used += widths[feeder]
        if len(chunks) < 2:
            return None
        parts = []
        for k, chunk in enumerate(chunks, start=1):
            part = _Piece(key=f"{piece.key}#{k}", island=piece.island, roots=[root],
                          part=(k, len(chunks)), chunk=chunk, board=None)
            part.nodes = self.piece_nodes(part)
            parts.append(part)
        return parts

    def band_extent(self, layouts: Sequence[_PieceLayout],
                    pieces: Sequence[_Piece]) -> tuple[float, float]:
        """Width and height a band of these pieces needs at most: every routed wire
        given a lane of its own and a track of its own in each channel it runs along."""
        home = self.home(pieces)
        keys = {layout.piece.key for layout in layouts}
        routes = sum(1 for edge in self.cross_edges(pieces)
                     if home[edge.supply].key in keys and home[edge.load].key in keys)
        width = (sum(layout.column_width + 2 * FRAME_PAD for layout in layouts)
                 + (len(layouts) + 1) * 2 * GUTTER_PAD + LANE * routes)
        offsets = self.offsets(layouts, pieces)
        tops = {offsets[lay.piece.key] + lay.min_rank for lay in layouts}
        rows = max(offsets[lay.piece.key] + lay.max_rank for lay in layouts) + 1
        height = (rows * (ROW_H + CHANNEL_MIN) + CHANNEL_MIN + TITLE_BAND * len(tops)
                  + 2 * TRACK * routes)
        return width, height

    def paginate(self, pieces: list[_Piece]) -> list[list[list[_Piece]]]:
        """Sheets of bands of pieces: a band is a row of frames side by side, a sheet
        holds bands one under the other. A continued board has a sheet to itself."""
        area_w, area_h = self.area
        worst = {p.key: self.worst_layout(p, pieces) for p in pieces}

        def band_size(band: list[_Piece]) -> tuple[float, float]:
            return self.band_extent([worst[p.key] for p in band], pieces)

        sheets: list[list[list[_Piece]]] = []
        for piece in pieces:
            if sheets and piece.part is None and sheets[-1][-1][-1].part is None:
                bands = sheets[-1]
                width, height = band_size(bands[-1] + [piece])
                above = sum(band_size(b)[1] + BAND_GAP for b in bands[:-1])
                if width <= area_w and above + height <= area_h:
                    bands[-1].append(piece)
                    continue
                _, alone = band_size([piece])
                if above + band_size(bands[-1])[1] + BAND_GAP + alone <= area_h:
                    bands.append([piece])
                    continue
            sheets.append([[piece]])
        return sheets

    def offsets(self, layouts: Sequence[_PieceLayout],
                pieces: Sequence[_Piece]) -> dict[str, int]:
        """Row offset of each piece on a sheet: a transformer's secondary one row under
        it, a tie's device one row above the board it closes onto; others at the top."""
        home = self.home(pieces)
        on_sheet = {layout.piece.key: layout for layout in layouts}
        links = []
        for edge in self.cross_edges(pieces):
            a, b = home[edge.supply].key, home[edge.load].key
            if a != b and a in on_sheet and b in on_sheet:
                weight = 0 if isinstance(self.model.elements[edge.supply], Transformer) else (
                    2 if edge.kind == AUXILIARY else 1)
                links.append((weight, self.model.order[edge.load], edge, a, b))
        links.sort(key=lambda item: item[:2])
        offset: dict[str, int] = {}
        for layout in layouts:
            if layout.piece.key in offset:
                continue
            offset[layout.piece.key] = -layout.min_rank
            changed = True
            while changed:
                changed = False
                for _, _, edge, a, b in links:
                    rank_a = on_sheet[a].nodes[edge.supply].rank
                    rank_b = on_sheet[b].nodes[edge.load].rank
                    if a in offset and b not in offset:
                        offset[b] = offset[a] + rank_a + 1 - rank_b
                    elif b in offset and a not in offset:
                        offset[a] = offset[b] + rank_b - 1 - rank_a
                    else:
                        continue
                    changed = True
                    break
        top = min(offset[layout.piece.key] + layout.min_rank for layout in layouts)
        return {key: value - top for key, value in offset.items()}


def _pack_shift(accumulated: dict[int, tuple[float, float]],
                contour: dict[int, tuple[float, float]], allow_centre: bool = False) -> float:
    """How far right to put ``contour`` so it clears ``accumulated`` on every shared row."""
    shared = [r for r in contour if r in accumulated]
    if not shared:
        if allow_centre or not accumulated:
            return 0.0
        return max(hi for _, hi in accumulated.values()) + GAP - min(
            lo for lo, _ in contour.values())
    return max(accumulated[r][1] + GAP - contour[r][0] for r in shared)


def _merge(into: dict[int, tuple[float, float]], contour: dict[int, tuple[float, float]],
           shift: float) -> None:
    for rank, (lo, hi) in contour.items():
        if rank in into:
            old_lo, old_hi = into[rank]
            into[rank] = (min(old_lo, lo + shift), max(old_hi, hi + shift))
        else:
            into[rank] = (lo + shift, hi + shift)


# --- a sheet: columns, channels, routes ---------------------------------------------------------


@dataclass
class _Route:
    edge: PlantEdge
    start: str  # node ids in their layouts
    end: str
    start_piece: str
    end_piece: str
    lane_gutter: int | None = None
    lane: int = 0
    direct: bool = False
    start_x: float = 0.0
    end_x: float = 0.0
    start_dx: float = 0.0
    end_dx: float = 0.0
    tracks: dict[int, int] = field(default_factory=dict)  # channel → track


@dataclass
class _BandGeometry:
    boxes: list[DrawnBox]
    wires: list[DrawnWire]
    frames: list[Frame]
    bottom: float
    right: float


class _Band:
    """One row of frames on a sheet, from ``top`` down: its own rows, channels, gutters
    and routes."""

    def __init__(self, builder: _Builder, top: float, layouts: list[_PieceLayout],
                 routes: list[_Route], offsets: dict[str, int],
                 connectors: dict[str, _Connector]):
        self.b = builder
        self.top = top
        self.layouts = layouts
        self.routes = routes
        self.offsets = offsets
        self.connectors = connectors
        self.by_piece = {layout.piece.key: layout for layout in layouts}
        self.column = {layout.piece.key: i for i, layout in enumerate(layouts)}
        self.layers = max(offsets[lay.piece.key] + lay.max_rank for lay in layouts) + 1

    def layer(self, piece: str, node: str) -> int:
        return self.offsets[piece] + self.by_piece[piece].nodes[node].rank

    def build(self) -> _BandGeometry:
        # ports depend only on positions inside a column, lanes only on the ports: so
        # columns are placed once without lanes, ports chosen, lanes planned, then the
        # columns placed for good and the ports moved with them
        self.lanes: dict[int, int] = {}
        self.place_columns()
        self.choose_ports()
        for route in self.routes:
            route.start_dx = route.start_x - self.abs_x[(route.start_piece, route.start)]
            route.end_dx = route.end_x - self.abs_x[(route.end_piece, route.end)]
        self.plan_lanes()
        self.place_columns()
        self.plan_tree_ports()
        for route in self.routes:
            route.start_x = self.abs_x[(route.start_piece, route.start)] + route.start_dx
            route.end_x = self.abs_x[(route.end_piece, route.end)] + route.end_dx
        self.give_tracks()
        self.place_rows()
        boxes = self.boxes()
        wires = self.tree_wires() + self.routed_wires()
        frames = self.frames()
        bottom = max([b.rect.y1 for b in boxes] + [f.rect.y1 for f in frames]
                     + [max(y for _, y in w.points) for w in wires])
        right = max([b.rect.x1 for b in boxes] + [f.rect.x1 for f in frames]
                    + [self.right_x])
        return _BandGeometry(boxes, wires, frames, bottom, right)

    # --- columns and lanes -----------------------------------------------------------

    def plan_lanes(self) -> None:
        lanes: dict[int, int] = {}
        for route in self.routes:
            la = self.layer(route.start_piece, route.start)
            lb = self.layer(route.end_piece, route.end)
            if lb == la + 1:
                continue
            if lb > la + 1 and self.clear_below(route, la, lb):
                route.direct = True
                continue
            col_a, col_b = self.column[route.start_piece], self.column[route.end_piece]
            if col_a < col_b:
                gutter = col_b
            elif col_a > col_b:
                gutter = col_b + 1
            else:
                layout = self.by_piece[route.end_piece]
                node = layout.nodes[route.start]
                gutter = col_b + 1 if node.x > layout.width / 2 else col_b
            route.lane_gutter = gutter
            route.lane = lanes.get(gutter, 0)
            lanes[gutter] = route.lane + 1
        self.lanes = lanes

    def clear_below(self, route: _Route, la: int, lb: int) -> bool:
        """Can the wire drop straight from its start box through the rows between?"""
        layout = self.by_piece[route.start_piece]
        x = layout.nodes[route.start].x + route.start_dx
        for node in layout.nodes.values():
            row = self.offsets[route.start_piece] + node.rank
            if la < row < lb and node.x + node.lo - 3 <= x <= node.x + node.hi + 3:
                return False
        return True

    def place_columns(self) -> None:
        """Gutters (lanes) and frames left to right; a gutter holds its lanes with a pad
        on each side, an outer gutter without lanes takes no room."""
        count = len(self.layouts)
        x = MARGIN
        self.column_x: list[float] = []
        self.gutter_x: list[float] = []
        for gutter in range(count + 1):
            lanes = self.lanes.get(gutter, 0)
            self.gutter_x.append(x)
            if lanes or 0 < gutter < count:
                x += 2 * GUTTER_PAD + LANE * lanes
            if gutter < count:
                self.column_x.append(x + FRAME_PAD)
                x += self.layouts[gutter].column_width + 2 * FRAME_PAD
        self.right_x = x
        self.abs_x: dict[tuple[str, str], float] = {}
        for index, layout in enumerate(self.layouts):
            left = self.column_x[index] + (layout.column_width - layout.width) / 2
            for node in layout.nodes.values():
                self.abs_x[(layout.piece.key, node.id)] = left + node.x

    def lane_x(self, route: _Route) -> float:
        assert route.lane_gutter is not None
        return self.gutter_x[route.lane_gutter] + GUTTER_PAD + LANE * (route.lane + 0.5)

    def box_span(self, piece: str, node_id: str) -> tuple[float, float]:
        node = self.by_piece[piece].nodes[node_id]
        x = self.abs_x[(piece, node_id)]
        return x + node.lo, x + node.hi

    # --- ports -------------------------------------------------------------------------

    def tree_ports(self) -> dict[tuple[str, str, str], list[float]]:
        """(piece, node, side) → x of tree wire ends on that edge of the box."""
        used: dict[tuple[str, str, str], list[float]] = {}
        for (key, upper, lower), (xu, xl) in self.tree_port_map.items():
            used.setdefault((key, upper, "bottom"), []).append(xu)
            used.setdefault((key, lower, "top"), []).append(xl)
        return used

    def plan_tree_ports(self) -> None:
        """Where each tree wire leaves its upper box and enters its lower one. Wires
        leaving one box share its port (one conductor, branching); wires entering a
        box that is not a bus each get their own, its feeder first, at the conductor."""
        self.tree_port_map: dict[tuple[str, str, str], tuple[float, float]] = {}
        for layout in self.layouts:
            key = layout.piece.key
            arriving: dict[str, int] = {}
            for parent in layout.children:
                pairs = []
                for kid in layout.children[parent]:
                    if layout.nodes[kid].rank > layout.nodes[parent].rank:
                        pairs.append((parent, kid))
                    else:
                        pairs.append((kid, parent))
                # the tree parent arrives first: kids above come after it
                for upper, lower in sorted(pairs, key=lambda p: p[0] in self.connectors):
                    xu, xl = self.tree_port_pair(key, upper, lower)
                    if not layout.nodes[lower].is_bus:
                        count = arriving.get(lower, 0)
                        arriving[lower] = count + 1
                        xl += PORT_GAP * count
                    self.tree_port_map[(key, upper, lower)] = (xu, xl)

    def tree_port_pair(self, piece: str, upper: str, lower: str) -> tuple[float, float]:
        """A bus meets each feeder straight above or below it (clamped to its ends)."""
        nodes = self.by_piece[piece].nodes
        xu, xl = self.abs_x[(piece, upper)], self.abs_x[(piece, lower)]
        if nodes[upper].is_bus:
            lo, hi = self.box_span(piece, upper)
            xu = min(max(xl, lo + 4), hi - 4)
        if nodes[lower].is_bus:
            lo, hi = self.box_span(piece, lower)
            xl = min(max(xu, lo + 4), hi - 4)
        return xu, xl

    def choose_ports(self) -> None:
        self.plan_tree_ports()
        used = self.tree_ports()
        for route in self.routes:
            for attr, piece, node, side in (("start_x", route.start_piece, route.start,
                                             "bottom"),
                                            ("end_x", route.end_piece, route.end, "top")):
                lo, hi = self.box_span(piece, node)
                taken = used.setdefault((piece, node, side), [])
                own = self.abs_x[(piece, node)]
                bus = self.by_piece[piece].nodes[node].is_bus
                # a bus takes the wire near the far end's side; anything else on its
                # conductor when that is free
                far = (self.abs_x[(route.end_piece, route.end)] if side == "bottom"
                       else self.abs_x[(route.start_piece, route.start)])
                prefer = min(max(far, lo), hi) if bus else own
                x = _free_port(lo + 4, hi - 4, taken, prefer)
                taken.append(x)
                setattr(route, attr, x)

    # --- rows and tracks ------------------------------------------------------------

    def horizontal_runs(self, route: _Route) -> list[tuple[int, float, float]]:
        """(channel, x from, x to) of each horizontal stretch of a routed wire."""
        la = self.layer(route.start_piece, route.start)
        lb = self.layer(route.end_piece, route.end)
        if lb == la + 1:
            return [(la, route.start_x, route.end_x)]
        if route.direct:
            return [(lb - 1, route.start_x, route.end_x)]
        lane = self.lane_x(route)
        return [(la, route.start_x, lane), (lb - 1, lane, route.end_x)]

    def give_tracks(self) -> None:
        runs: dict[int, list[tuple[float, float, int, int]]] = {}
        for index, route in enumerate(self.routes):
            for part, (channel, xa, xb) in enumerate(self.horizontal_runs(route)):
                runs.setdefault(channel, []).append((min(xa, xb), max(xa, xb), index, part))
        self.tracks: dict[int, int] = {}
        self.route_track: dict[tuple[int, int], tuple[int, int]] = {}
        for channel, items in runs.items():
            ends: list[float] = []
            for lo, hi, index, part in sorted(items):
                for track, end in enumerate(ends):
                    if end + PORT_GAP < lo:
                        ends[track] = hi
                        break
                else:
                    track = len(ends)
                    ends.append(hi)
                self.route_track[(index, part)] = (channel, track)
            self.tracks[channel] = len(ends)

    def place_rows(self) -> None:
        starts_at: set[int] = set()
        for layout in self.layouts:
            starts_at.add(self.offsets[layout.piece.key] + layout.min_rank)
        self.titled = starts_at
        y = self.top
        self.channel_top: dict[int, float] = {}
        self.row_top: dict[int, float] = {}
        for channel in range(-1, self.layers):
            self.channel_top[channel] = y
            height = (CHANNEL_TOP + (TITLE_BAND if channel + 1 in starts_at else 0.0)
                      + TRACK * self.tracks.get(channel, 0)
                      + (ELBOW_BAND if 0 <= channel < self.layers - 1 else 0.0)
                      + CHANNEL_BOTTOM)
            y += max(height, CHANNEL_MIN)
            if channel + 1 < self.layers:
                self.row_top[channel + 1] = y
                y += ROW_H

    def track_y(self, channel: int, track: int) -> float:
        titled = TITLE_BAND if channel + 1 in self.titled else 0.0
        return self.channel_top[channel] + CHANNEL_TOP + titled + TRACK * (track + 0.5)

    def elbow_y(self, channel: int) -> float:
        return self.row_top[channel + 1] - CHANNEL_BOTTOM - ELBOW_BAND / 2

    # --- geometry out ------------------------------------------------------------

    def node_rect(self, piece: str, node_id: str) -> Rect:
        lo, hi = self.box_span(piece, node_id)
        top = self.row_top[self.layer(piece, node_id)]
        return Rect(lo, top, hi, top + ROW_H)

    def boxes(self) -> list[DrawnBox]:
        found: list[DrawnBox] = []
        for layout in self.layouts:
            key = layout.piece.key
            for node_id in sorted(layout.nodes):
                rect = self.node_rect(key, node_id)
                x = self.abs_x[(key, node_id)]
                if node_id in self.connectors:
                    found.append(self.connector_box(self.connectors[node_id], rect))
                else:
                    found.append(self.element_box(node_id, rect, x, layout))
        return found

    def element_box(self, element_id: str, rect: Rect, x: float,
                    layout: _PieceLayout) -> DrawnBox:
        b = self.b
        element = b.model.elements[element_id]
        first, second = b.lines_of(element_id)
        marks: set[str] = set()
        glyph_at = None
        box_id = element_id
        if isinstance(element, Bus):
            first = _part_title(first, layout.piece.part)
            left = rect.x0 + 6
            texts = [TextRun(first, left, rect.y0 + 3, b.width(first, True), bold=True)]
            if second:
                assert element.detector is not None
                marks.add(element.detector.kind.value)
                glyph_at = (left, rect.y0 + 3 + LINE_PT + 1)
                texts.append(TextRun(second, left + GLYPH + 4, rect.y0 + 4 + LINE_PT,
                                     b.width(second)))
            return DrawnBox(box_id, rect, "bus", element_id, tuple(texts), None,
                            frozenset(marks), glyph_at)
        kind = {Source: "source", Device: "device", Transformer: "transformer",
                Cable: "cable", Load: "load"}[type(element)]
        left = x + SYMBOL_W / 2 + TEXT_GAP
        texts = [TextRun(first, left, rect.y0 + 3, b.width(first, True), bold=True)]
        if second:
            texts.append(TextRun(second, left, rect.y0 + 4 + LINE_PT, b.width(second)))
        if isinstance(element, Device):
            if element.can_lock:
                marks.add("lockable")
                glyph_at = (left + b.width(first, True) + 3, rect.y0 + 3)
            if element.normally == "open":
                marks.add("open")
            if element.kind is DeviceKind.transfer_switch:
                marks.add("changeover")
            if element.kind is DeviceKind.fuse:
                marks.add("fuse")
        if isinstance(element, Load) and element.kind.value in ("motor", "deck_machinery"):
            marks.add("motor")
        if isinstance(element, Source):
            marks.add(element.kind.value)
        return DrawnBox(box_id, rect, kind, element_id, tuple(texts), x, frozenset(marks),
                        glyph_at)

    def connector_box(self, connector: _Connector, rect: Rect) -> DrawnBox:
        first, second = self.b.connector_lines(connector)
        left = rect.x0 + TEXT_GAP + 6
        texts = (TextRun(first, left, rect.y0 + 3, self.b.width(first, True), bold=True),
                 TextRun(second, left, rect.y0 + 4 + LINE_PT, self.b.width(second)))
        marks = {"from" if connector.upward else "to"}
        if connector.edge.kind == AUXILIARY:
            marks.add("dashed")
        return DrawnBox(connector.id, rect, "connector", None, texts, None,
                        frozenset(marks), None, connector.edge.key, connector.other_sheet)

    def tree_wires(self) -> list[DrawnWire]:
        wires: list[DrawnWire] = []
        model = self.b.model
        for layout in self.layouts:
            key = layout.piece.key
            for parent in sorted(layout.children):
                for kid in layout.children[parent]:
                    upper, lower = (parent, kid) if layout.nodes[kid].rank > layout.nodes[
                        parent].rank else (kid, parent)
                    xu, xl = self.tree_port_map[(key, upper, lower)]
                    top = self.node_rect(key, upper).y1
                    bottom = self.node_rect(key, lower).y0
                    if abs(xu - xl) < 0.01:
                        points: tuple[tuple[float, float], ...] = ((xu, top), (xl, bottom))
                    else:
                        y = self.elbow_y(self.layer(key, upper))
                        points = ((xu, top), (xu, y), (xl, y), (xl, bottom))
                    if kid in self.connectors:
                        edge = self.connectors[kid].edge
                    else:
                        edge = model.tree_edge_between(parent, kid)
                    wires.append(DrawnWire(f"{key}:{upper}>{lower}", points, upper, lower,
                                           dashed=edge.kind == AUXILIARY, edge=edge.key))
        return wires

    def routed_wires(self) -> list[DrawnWire]:
        wires: list[DrawnWire] = []
        for index, route in enumerate(self.routes):
            start = self.node_rect(route.start_piece, route.start)
            end = self.node_rect(route.end_piece, route.end)
            points: list[tuple[float, float]] = [(route.start_x, start.y1)]
            for part, (_, xa, xb) in enumerate(self.horizontal_runs(route)):
                channel, track = self.route_track[(index, part)]
                y = self.track_y(channel, track)
                points += [(xa, y), (xb, y)]
            points.append((route.end_x, end.y0))
            wires.append(DrawnWire(f"route:{route.edge.supply}>{route.edge.load}:"
                                   f"{route.edge.kind}", _simplify(points), route.start,
                                   route.end, dashed=route.edge.kind == AUXILIARY,
                                   edge=route.edge.key))
        return wires

    def frames(self) -> list[Frame]:
        found = []
        for index, layout in enumerate(self.layouts):
            key = layout.piece.key
            top_layer = self.offsets[key] + layout.min_rank
            bottom_layer = self.offsets[key] + layout.max_rank
            x0 = self.column_x[index] - FRAME_PAD
            x1 = self.column_x[index] + layout.column_width + FRAME_PAD
            y0 = self.channel_top[top_layer - 1] + CHANNEL_TOP - 3
            y1 = self.row_top[bottom_layer] + ROW_H + 4
            first, second = layout.title
            texts = (TextRun(first, x0 + FRAME_PAD, y0 + 4, self.b.width(first, True),
                             bold=True),
                     TextRun(second, x0 + FRAME_PAD, y0 + 4 + LINE_PT, self.b.width(second)))
            found.append(Frame(f"frame:{key}", Rect(x0, y0, x1, y1), layout.piece.island,
                               texts))
        return found

class _SheetText:
    """Header, legend and notes of a sheet."""

    def __init__(self, builder: _Builder):
        self.builder = builder

    def header(self, width: float, number: int, total: int,
               enlarged: tuple[float, float] | None) -> list[tuple[str, TextRun]]:
        b = self.builder
        title = f"{b.model.plant.plant.name}: one-line drawing, normal switching state"
        sheet = f"sheet {number} of {total}"
        if enlarged is not None:  # said, never silent: this sheet will not print on paper
            sheet += (f" (larger than {b.paper}: {enlarged[0] / MM:.0f} x "
                      f"{enlarged[1] / MM:.0f} mm, nothing left to split it at)")
        title_w, sheet_w = b.width(title, True, TITLE_PT), b.width(sheet, True)
        sheet_y = MARGIN + 2  # beside the title, or under it when both do not fit
        if MARGIN + title_w + 3 * LINE_PT > width - MARGIN - sheet_w:
            sheet_y = MARGIN + TITLE_PT * 1.25 + 2
        return [("header", TextRun(title, MARGIN, MARGIN, title_w, size=TITLE_PT, bold=True)),
                ("header", TextRun(sheet, width - MARGIN - sheet_w, sheet_y, sheet_w,
                                   bold=True))]

    def legend_and_notes(self, top: float, right_x: float) -> tuple[list[tuple[str, TextRun]],
                                                     list[DrawnBox], float]:
        b = self.builder
        samples = [
            ("source", frozenset({"generator"}), "source (G: generator)"),
            ("bus", frozenset(), "bus: switchboard or panel"),
            ("device", frozenset({"lockable"}), "breaker or switch; padlock: can be locked"),
            ("device", frozenset(), "no padlock: cannot be locked (lock its supply)"),
            ("device", frozenset({"open"}), "drawn open, N.O.: normally open"),
            ("device", frozenset({"fuse"}), "fuse"),
            ("transformer", frozenset(), "transformer: vector group, ratio"),
            ("cable", frozenset(), "cable: id and length on the line"),
            ("load", frozenset({"motor"}), "load (M: motor)"),
            ("legend", frozenset({"lamps"}), "ground detector: earth lamps"),
            ("legend", frozenset({"voltmeters"}), "ground detector: voltmeters"),
            ("legend", frozenset({"insulation_monitor"}), "insulation monitor"),
            ("legend", frozenset({"dashed"}), "auxiliary feed (heater, control)"),
            ("legend", frozenset({"solid"}), "power wiring"),
            ("connector", frozenset({"to"}), "off-sheet connector"),
            ("legend", frozenset({"frame"}), "frame: one galvanic system"),
        ]
        texts: list[tuple[str, TextRun]] = []
        boxes: list[DrawnBox] = []
        heading = "Legend"
        texts.append(("legend", TextRun(heading, MARGIN, top, b.width(heading, True),
                                        bold=True)))
        y = top + LINE_PT + 6
        cell_w = max(b.width(text) for _, _, text in samples) + 34 + 16
        per_row = max(1, int((max(b.page_w, right_x + MARGIN) - 2 * MARGIN) // cell_w))
        row_h = LINE_PT * 1.6
        for index, (kind, marks, text) in enumerate(samples):
            col, row = index % per_row, index // per_row
            x = MARGIN + col * cell_w
            sample = Rect(x, y + row * row_h, x + 28, y + row * row_h + LINE_PT + 2)
            boxes.append(DrawnBox(f"legend:{index}", sample, "legend",
                                  marks=marks | {f"sample-{kind}"}))
            texts.append(("legend", TextRun(text, x + 34, y + row * row_h + 1, b.width(text))))
        y += ((len(samples) + per_row - 1) // per_row) * row_h + 6
        notes = [f"Not drawn: {', '.join(LEFT_OUT)} (see the inventory)."]
        notes.append("Connectors name the sheet (or this sheet) and the element at the far "
                     "end of the line.")
        for note in notes:
            texts.append(("notes", TextRun(note, MARGIN, y, b.width(note))))
            y += LINE_PT + 2
        return texts, boxes, y



def _part_title(text: str, part: tuple[int, int] | None) -> str:
    return f"{text} (part {part[0]} of {part[1]})" if part is not None else text


def _free_port(lo: float, hi: float, taken: Sequence[float], prefer: float) -> float:
    """A wire end on [lo, hi] at least PORT_GAP from every taken one, nearest ``prefer``."""
    steps = max(1, int((hi - lo) / 2))
    candidates = sorted((lo + i * (hi - lo) / steps for i in range(steps + 1)),
                        key=lambda c: (abs(c - prefer), c))
    for candidate in candidates:
        if all(abs(candidate - t) >= PORT_GAP for t in taken):
            return candidate
    return min(candidates, key=lambda c: (-min(abs(c - t) for t in taken), c))


def _simplify(points: Iterable[tuple[float, float]]) -> tuple[tuple[float, float], ...]:
    """Drop repeated points and the middle of straight runs."""
    out: list[tuple[float, float]] = []
    for point in points:
        if out and abs(out[-1][0] - point[0]) < 0.01 and abs(out[-1][1] - point[1]) < 0.01:
            continue
        out.append(point)
        while len(out) >= 3:
            (ax, ay), (bx, by), (cx, cy) = out[-3:]
            if (abs(ax - bx) < 0.01 and abs(bx - cx) < 0.01) or (
                    abs(ay - by) < 0.01 and abs(by - cy) < 0.01):
                out.pop(-2)
            else:
                break
    return tuple(out)


# --- the whole drawing -----------------------------------------------------------------


def layout_plant(plant: Plant, topology: Topology, measure: Measure,
                 paper: str = "A3") -> OneLineDrawing:
    """The plant's one-line drawing on sheets of ``paper`` (A3 to A0, landscape)."""
    if paper not in PAPER:
        raise ValueError(f"paper must be one of {sorted(PAPER)} (got {paper!r})")
    builder = _Builder(plant, topology, measure, paper)
    pieces = builder.split(builder.initial_pieces())
    pieces = builder.connected_order(pieces)
    sheets_of_pieces = builder.paginate(pieces)
    sheet_number: dict[str, int] = {}
    band_number: dict[str, int] = {}
    bands_so_far = 0
    for number, bands in enumerate(sheets_of_pieces, start=1):
        for band in bands:
            for piece in band:
                sheet_number[piece.key] = number
                band_number[piece.key] = bands_so_far
            bands_so_far += 1
    home = builder.home(pieces)
    cross = builder.cross_edges(pieces)
    sheets = []
    text = _SheetText(builder)
    for number, bands in enumerate(sheets_of_pieces, start=1):
        top = MARGIN + HEADER_H
        boxes: list[DrawnBox] = []
        wires: list[DrawnWire] = []
        frames: list[Frame] = []
        right = MARGIN
        for band in bands:
            layouts = []
            connectors: dict[str, _Connector] = {}
            for piece in band:
                found, ports = builder.connectors_for(
                    piece, pieces, lambda p: sheet_number[p.key],
                    lambda p: band_number[p.key], band_number[piece.key])
                connectors.update((c.id, c) for c in found)
                layouts.append(builder.layout_piece(piece, found, ports))
            offsets = builder.offsets(layouts, pieces)
            keys = {p.key for p in band}
            routes = [
                _Route(edge, edge.supply, edge.load, home[edge.supply].key,
                       home[edge.load].key)
                for edge in cross
                if home[edge.supply].key in keys and home[edge.load].key in keys]
            geometry = _Band(builder, top, layouts, routes, offsets, connectors).build()
            boxes += geometry.boxes
            wires += geometry.wires
            frames += geometry.frames
            right = max(right, geometry.right)
            top = geometry.bottom + BAND_GAP
        texts, legend_boxes, legend_bottom = text.legend_and_notes(top, right)
        width = max(builder.page_w, right + MARGIN, max(t.rect.x1 for _, t in texts) + MARGIN)
        height = max(builder.page_h, legend_bottom + MARGIN)
        enlarged = (width, height) != (builder.page_w, builder.page_h)
        texts = text.header(width, number, len(sheets_of_pieces),
                            (width, height) if enlarged else None) + texts
        sheets.append(Sheet(number, width, height, tuple(boxes + legend_boxes), tuple(wires),
                            tuple(frames), tuple(texts),
                            enlarged=enlarged))
    return OneLineDrawing(title=plant.plant.name, paper=paper, sheets=tuple(sheets),
                          left_out=LEFT_OUT)
