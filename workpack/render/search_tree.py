"""A ground search drawn as a tree, in black and white: each step a box (its number and
what it opens), "clears" to the right, "stays" downwards, each end a final test (heavy
box), a step already drawn (an arrow to its number) or the end of the search at that
level (dashed box).

``tree_layout`` places the steps on a grid (pure); ``SearchTree`` draws it as a flowable
that splits between rows, so a long search flows over pages instead of shrinking below
the smallest print size.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

from reportlab.graphics.shapes import Drawing, Line, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.pdfbase import pdfmetrics
from reportlab.platypus import Flowable

from workpack.model.package import SearchGoto, Step
from workpack.render.figures import shortened

ROW_PT = 15.0  # one row of the grid
BOX_PT = 12.0  # a box's height
GAP_PT = 16.0  # room between columns for the arrow
TEXT_PT = 9.0  # the smallest print size (fonts.MIN_TEXT_PT)
LEAST_ROWS = 4  # the fewest rows of the tree on a page


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


class SearchTree(Flowable):
    """The tree as a flowable that splits between rows: a "stays" line cut at the foot of
    a page ends in an arrow and starts again at the top of the next part."""

    def __init__(self, layout: TreeLayout, width: float, font: str, bold: str,
                 first: int = 0, rows: int | None = None) -> None:
        super().__init__()
        self.layout, self.width, self.font, self.bold = layout, width, font, bold
        self.first = first
        self.rows = layout.rows - first if rows is None else rows

    def wrap(self, available_width: float, available_height: float) -> tuple[float, float]:
        return self.width, self.rows * ROW_PT

    def split(self, available_width: float, available_height: float) -> list[Flowable]:
        # no sliver left over, nor one here: move on whole
        fits = min(int(available_height // ROW_PT), self.rows - LEAST_ROWS)
        if fits < LEAST_ROWS:
            return []
        return [SearchTree(self.layout, self.width, self.font, self.bold, self.first, fits),
                SearchTree(self.layout, self.width, self.font, self.bold, self.first + fits,
                           self.rows - fits)]

    def draw(self) -> None:
        drawing = _draw_rows(self.layout, self.width, self.font, self.bold, self.first,
                             self.rows)
        drawing.drawOn(self.canv, 0, 0)


def search_tree(steps: Sequence[Step], width: float, font: str, bold: str) -> SearchTree | None:
    layout = tree_layout(steps)
    return SearchTree(layout, width, font, bold) if layout.nodes else None


def _draw_rows(layout: TreeLayout, width: float, font: str, bold: str, first: int,
               rows: int) -> Drawing:
    """Rows ``first`` to ``first + rows - 1`` of the tree, ``width`` wide."""
    column_width = width / max(layout.columns, 1)
    room = column_width - GAP_PT - 8  # a box's text must fit its column
    labels = [shortened(n.label, bold if n.step is not None else font, room, TEXT_PT)
              for n in layout.nodes]
    drawing = Drawing(width, rows * ROW_PT)
    last = first + rows  # one past the last row drawn

    def middle_y(row: int) -> float:
        return (rows - (row - first)) * ROW_PT - ROW_PT / 2

    for start, end, kind in layout.edges:
        a, b = layout.nodes[start], layout.nodes[end]
        x0 = a.column * column_width
        if kind == "clears":  # same row, to the right
            if not first <= a.row < last:
                continue
            y = middle_y(a.row)
            x1 = x0 + _box_width(labels[start], bold)
            x2 = b.column * column_width
            drawing.add(Line(x1, y, x2, y, strokeWidth=1.1))
            drawing.add(PolyLine([x2 - 4, y + 2.5, x2, y, x2 - 4, y - 2.5], strokeWidth=1.1))
            continue
        if b.row < first or a.row >= last:  # down the same column: does it cross here?
            continue
        x = x0 + 6
        top = middle_y(a.row) - BOX_PT / 2 if a.row >= first else rows * ROW_PT
        bottom = middle_y(b.row) + BOX_PT / 2 if b.row < last else 0.0
        drawing.add(Line(x, top, x, bottom, strokeWidth=1.1, strokeDashArray=[3, 2]))
        drawing.add(PolyLine([x - 2.5, bottom + 4, x, bottom, x + 2.5, bottom + 4],
                             strokeWidth=1.1))
    for index, node in enumerate(layout.nodes):
        if not first <= node.row < last:
            continue
        x, y = node.column * column_width, middle_y(node.row)
        label = labels[index]
        face = bold if node.step is not None or (
            node.goto is not None and node.goto.kind == "final") else font
        if node.goto is None or node.goto.kind != "step":
            rect = Rect(x, y - BOX_PT / 2, _box_width(label, face), BOX_PT,
                        fillColor=colors.white, strokeColor=colors.black, strokeWidth=1.0)
            if node.goto is not None and node.goto.kind == "final":
                rect.strokeWidth = 2.2
            elif node.goto is not None:
                rect.strokeDashArray = [2, 2]
            drawing.add(rect)
        drawing.add(String(x + 4, y - 3, label, fontName=face, fontSize=TEXT_PT))
    return drawing


def tree_legend() -> tuple[str, ...]:
    return ("Each box: a step of the table (its number and the first device it "
            "opens; +n: n more devices). Solid arrow to the right: the indication clears. "
            "Dashed line down: it stays.",
            "Heavy box: go to those final tests. Dashed box: not found at this level (see "
            "the step). '→ step n': continue at step n.")
