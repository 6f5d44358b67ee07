"""A ground search drawn as a tree, in black and white: each step a box (its number and
what it opens), "clears" to the right, "stays" downwards, each end a final test (heavy
box), a step already drawn (an arrow to its number) or the end of the search at that
level (dashed box).

``tree_layout`` places the steps on a grid (pure); ``tree_drawings`` draws the grid in
parts no taller than the room given, so a long search flows over pages instead of
shrinking below the smallest print size.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

from reportlab.graphics.shapes import Drawing, Line, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.pdfbase import pdfmetrics

from workpack.model.package import SearchGoto, Step
from workpack.render.figures import shortened

ROW_PT = 17.0  # one row of the grid
BOX_PT = 13.0  # a box's height
GAP_PT = 16.0  # room between columns for the arrow
TEXT_PT = 9.0  # the smallest print size (fonts.MIN_TEXT_PT)


@dataclass(frozen=True)
class TreeNode:
    """One box of the tree: a step (``step`` set) or an end (``goto`` set)."""

    column: int
    row: int
    label: str
    step: int | None = None
    goto: SearchGoto | None = None


@dataclass
class TreeLayout:
    nodes: list[TreeNode] = field(default_factory=list)
    # (from node index, to node index, "clears" | "stays")
    edges: list[tuple[int, int, str]] = field(default_factory=list)

    @property
    def rows(self) -> int:
        return 1 + max((n.row for n in self.nodes), default=-1)

    @property
    def columns(self) -> int:
        return 1 + max((n.column for n in self.nodes), default=-1)


def _end_label(goto: SearchGoto) -> str:
    if goto.kind == "final":
        return f"{goto.final} ({goto.below})" if goto.below else str(goto.final)
    if goto.kind == "step":
        return f"→ step {goto.step}"
    return "not found here"


def tree_layout(steps: Sequence[Step]) -> TreeLayout:
    """The search steps (with ``decision``) on a grid: "stays" goes down the same column,
    "clears" goes one column right on the same row; rows are taken in depth-first order,
    so no line crosses another or a box."""
    by_number = {s.number: s for s in steps if s.decision is not None}
    layout = TreeLayout()
    placed: dict[int, int] = {}  # step number → node index

    def add(node: TreeNode) -> int:
        layout.nodes.append(node)
        return len(layout.nodes) - 1

    def place(number: int, column: int, row: int) -> int:
        """Place step ``number`` and everything below it; the last row used."""
        step = by_number[number]
        decision = step.decision
        assert decision is not None
        more = f" +{len(decision.devices) - 1}" if len(decision.devices) > 1 else ""
        index = add(TreeNode(column, row, f"{number}  {decision.devices[0]}{more}",
                             step=number))
        placed[number] = index
        last = row
        clear = decision.on_clear
        if clear.kind == "step" and clear.step in by_number and clear.step not in placed:
            child = len(layout.nodes)
            last = max(last, place(clear.step, column + 1, row))
        else:
            child = add(TreeNode(column + 1, row, _end_label(clear), goto=clear))
        layout.edges.append((index, child, "clears"))
        stay = decision.on_stay
        if stay.kind == "step" and stay.step in by_number and stay.step not in placed:
            child = len(layout.nodes)
            last = place(stay.step, column, last + 1)
        else:
            last += 1
            child = add(TreeNode(column, last, _end_label(stay), goto=stay))
        layout.edges.append((index, child, "stays"))
        return last

    row = 0
    for number in sorted(by_number):
        if number not in placed:
            row = place(number, 0, row) + 1
    return layout


def _box_width(label: str, font: str) -> float:
    return pdfmetrics.stringWidth(label, font, TEXT_PT) + 8


def tree_drawings(steps: Sequence[Step], width: float, max_height: float, font: str,
                  bold: str) -> list[Drawing]:
    """The tree in parts, each ``width`` wide and at most ``max_height`` tall (points);
    a "stays" line cut between parts ends in an arrow and starts again at the top."""
    layout = tree_layout(steps)
    if not layout.nodes:
        return []
    column_width = width / max(layout.columns, 1)
    room = column_width - GAP_PT - 8  # a box's text must fit its column
    labels = [shortened(n.label, bold if n.step is not None else font, room, TEXT_PT)
              for n in layout.nodes]
    per_part = max(1, int(max_height // ROW_PT))
    parts: list[Drawing] = []
    for first in range(0, layout.rows, per_part):
        rows = min(per_part, layout.rows - first)
        drawing = Drawing(width, rows * ROW_PT)

        def middle_y(row: int, first: int = first, rows: int = rows) -> float:
            return (rows - (row - first)) * ROW_PT - ROW_PT / 2

        for start, end, kind in layout.edges:
            a, b = layout.nodes[start], layout.nodes[end]
            if not (first <= a.row < first + rows or first <= b.row < first + rows):
                if not (a.row < first and b.row >= first + rows):
                    continue
            x0 = a.column * column_width
            if kind == "clears":  # same row, to the right
                if not first <= a.row < first + rows:
                    continue
                y = middle_y(a.row)
                x1 = x0 + _box_width(labels[start], bold)
                x2 = b.column * column_width
                drawing.add(Line(x1, y, x2, y, strokeWidth=1.1))
                drawing.add(PolyLine([x2 - 4, y + 2.5, x2, y, x2 - 4, y - 2.5],
                                     strokeWidth=1.1))
            else:  # down the same column, perhaps across parts
                x = x0 + 6
                top = (middle_y(a.row) - BOX_PT / 2 if a.row >= first
                       else rows * ROW_PT)
                bottom = (middle_y(b.row) + BOX_PT / 2 if b.row < first + rows else 0.0)
                drawing.add(Line(x, top, x, bottom, strokeWidth=1.1,
                                 strokeDashArray=[3, 2]))
                if b.row < first + rows:
                    drawing.add(PolyLine([x - 2.5, bottom + 4, x, bottom, x + 2.5, bottom + 4],
                                         strokeWidth=1.1))
        for index, node in enumerate(layout.nodes):
            if not first <= node.row < first + rows:
                continue
            x, y = node.column * column_width, middle_y(node.row)
            label = labels[index]
            face = bold if node.step is not None or (
                node.goto is not None and node.goto.kind == "final") else font
            box = _box_width(label, face)
            if node.goto is not None and node.goto.kind == "step":
                drawing.add(String(x + 4, y - 3, label, fontName=face, fontSize=TEXT_PT))
                continue
            rect = Rect(x, y - BOX_PT / 2, box, BOX_PT, fillColor=colors.white,
                        strokeColor=colors.black, strokeWidth=1.0)
            if node.goto is not None and node.goto.kind == "final":
                rect.strokeWidth = 2.2
            elif node.goto is not None:
                rect.strokeDashArray = [2, 2]
            drawing.add(rect)
            drawing.add(String(x + 4, y - 3, label, fontName=face, fontSize=TEXT_PT))
        parts.append(drawing)
    return parts


def tree_legend() -> tuple[str, ...]:
    return ("Each box: a step of the table above (its number and the first device it "
            "opens; +n: n more devices). Solid arrow to the right: the indication clears. "
            "Dashed line down: it stays.",
            "Heavy box: go to those final tests. Dashed box: not found at this level (see "
            "the step). '→ step n': continue at step n.")
