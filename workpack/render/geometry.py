"""The plain geometry of a drawing, and the checks every drawing of ours must pass.

A drawing is boxes (things a line may end at), labels (text, each with the rectangle it
covers and the box or region it belongs to) and wires (polylines that start at one box
and end at another). Coordinates are points, any orientation; a rectangle is given by
its two corners. Nothing here knows about plants or paper: the one-line drawing, the
package sketches or any later figure can be checked by building a ``Picture`` from its
own layout, before anything is rendered.

``problems(picture)`` lists everything wrong, each as a ``Problem`` whose message names
the parts involved:

- ``box-overlap``: two boxes cover the same area;
- ``wire-through-box``: a wire passes through the inside of a box (its own end boxes
  included: a wire ends on a box's border, it never crosses it);
- ``wire-detached``: a wire's first or last point is not on the border of the box it
  claims to start or end at;
- ``wire-through-label``: a wire crosses a label (labels sit on white; a line through
  one would hide or read as part of the text);
- ``wire-overlap``: two wires run along the same line for a stretch (they would read as
  one conductor), unless they leave the same point of the same box (one conductor that
  branches);
- ``label-overlap``: two labels cover the same area;
- ``label-over-box``: a label covers part of a box it does not belong to;
- ``label-outside-owner``: a label that belongs to a box sticks out of it;
- ``off-page``: anything outside the picture's own width and height.

Pure: no I/O. Quadratic checks run over a uniform grid, so a picture of several
thousand parts is checked in well under a second.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass, field

Point = tuple[float, float]

TOLERANCE = 0.5  # points: touching is not overlapping; rounding never counts


@dataclass(frozen=True)
class Rect:
    """An axis-aligned rectangle, ``x0 <= x1`` and ``y0 <= y1``, points."""

    x0: float
    y0: float
    x1: float
    y1: float

    def __post_init__(self) -> None:
        if self.x1 < self.x0 or self.y1 < self.y0:
            raise ValueError(f"rectangle corners out of order: {self}")

    @property
    def width(self) -> float:
        return self.x1 - self.x0

    @property
    def height(self) -> float:
        return self.y1 - self.y0

    def inset(self, amount: float) -> Rect:
        """Smaller by ``amount`` on every side (never inverted)."""
        cx, cy = (self.x0 + self.x1) / 2, (self.y0 + self.y1) / 2
        return Rect(min(self.x0 + amount, cx), min(self.y0 + amount, cy),
                    max(self.x1 - amount, cx), max(self.y1 - amount, cy))

    def overlaps(self, other: Rect, tolerance: float = TOLERANCE) -> bool:
        """True when the insides share an area wider and taller than ``tolerance``."""
        return (min(self.x1, other.x1) - max(self.x0, other.x0) > tolerance
                and min(self.y1, other.y1) - max(self.y0, other.y0) > tolerance)

    def contains(self, other: Rect, tolerance: float = TOLERANCE) -> bool:
        return (other.x0 >= self.x0 - tolerance and other.x1 <= self.x1 + tolerance
                and other.y0 >= self.y0 - tolerance and other.y1 <= self.y1 + tolerance)

    def on_border(self, point: Point, tolerance: float = TOLERANCE) -> bool:
        x, y = point
        inside = (self.x0 - tolerance <= x <= self.x1 + tolerance
                  and self.y0 - tolerance <= y <= self.y1 + tolerance)
        near_edge = (min(abs(x - self.x0), abs(x - self.x1)) <= tolerance
                     or min(abs(y - self.y0), abs(y - self.y1)) <= tolerance)
        return inside and near_edge


@dataclass(frozen=True)
class Box:
    """Something a wire may end at. ``element`` names what it stands for, if anything."""

    id: str
    rect: Rect
    element: str | None = None


@dataclass(frozen=True)
class Label:
    """Text as it covers the page; ``owner`` is the box (or region) it belongs to."""

    text: str
    rect: Rect
    owner: str = ""


@dataclass(frozen=True)
class Wire:
    """A polyline from the border of box ``start`` to the border of box ``end``."""

    id: str
    points: tuple[Point, ...]
    start: str
    end: str

    def segments(self) -> Iterator[tuple[Point, Point]]:
        return zip(self.points, self.points[1:], strict=False)


@dataclass(frozen=True)
class Picture:
    width: float
    height: float
    boxes: tuple[Box, ...] = ()
    labels: tuple[Label, ...] = ()
    wires: tuple[Wire, ...] = ()
    # labels whose owner is a region (a frame, a legend), not a box: checked against
    # everything else but not required to sit inside a box
    regions: frozenset[str] = field(default_factory=frozenset)


@dataclass(frozen=True)
class Problem:
    kind: str
    message: str

    def __str__(self) -> str:
        return f"{self.kind}: {self.message}"


# --- primitives ------------------------------------------------------------------------


def segment_meets_inside(start: Point, end: Point, rect: Rect,
                         tolerance: float = TOLERANCE) -> bool:
    """Does the segment pass through the inside of ``rect`` (shrunk by ``tolerance``)?

    Liang–Barsky clipping: the segment is cut to the rectangle; what is left must
    have some length inside. A segment along the border does not count."""
    inner = rect.inset(tolerance)
    if inner.width <= 0 or inner.height <= 0:
        return False
    (x0, y0), (x1, y1) = start, end
    dx, dy = x1 - x0, y1 - y0
    low, high = 0.0, 1.0
    for p, q in ((-dx, x0 - inner.x0), (dx, inner.x1 - x0),
                 (-dy, y0 - inner.y0), (dy, inner.y1 - y0)):
        if p == 0:
            if q <= 0:
                return False  # parallel to this side and outside (or on) it
            continue
        t = q / p
        if p < 0:
            low = max(low, t)
        else:
            high = min(high, t)
        if low >= high:
            return False
    length = (dx * dx + dy * dy) ** 0.5
    return (high - low) * length > 1e-9


def _segment_bounds(start: Point, end: Point) -> Rect:
    return Rect(min(start[0], end[0]), min(start[1], end[1]),
                max(start[0], end[0]), max(start[1], end[1]))


def collinear_overlap(a: tuple[Point, Point], b: tuple[Point, Point],
                      tolerance: float = TOLERANCE) -> float:
    """Length two horizontal or two vertical segments share on one line (0 if none)."""
    (ax0, ay0), (ax1, ay1) = a
    (bx0, by0), (bx1, by1) = b
    if abs(ay0 - ay1) <= tolerance and abs(by0 - by1) <= tolerance \
            and abs(ay0 - by0) <= tolerance:
        return max(0.0, min(max(ax0, ax1), max(bx0, bx1)) - max(min(ax0, ax1), min(bx0, bx1)))
    if abs(ax0 - ax1) <= tolerance and abs(bx0 - bx1) <= tolerance \
            and abs(ax0 - bx0) <= tolerance:
        return max(0.0, min(max(ay0, ay1), max(by0, by1)) - max(min(ay0, ay1), min(by0, by1)))
    return 0.0


class _Grid:
    """Rectangles bucketed by a uniform grid, for near-neighbour look-ups."""

    def __init__(self, cell: float = 72.0) -> None:
        self.cell = cell
        self.buckets: dict[tuple[int, int], list[int]] = defaultdict(list)

    def _cells(self, rect: Rect) -> Iterator[tuple[int, int]]:
        for i in range(int(rect.x0 // self.cell), int(rect.x1 // self.cell) + 1):
            for j in range(int(rect.y0 // self.cell), int(rect.y1 // self.cell) + 1):
                yield i, j

    def add(self, index: int, rect: Rect) -> None:
        for key in self._cells(rect):
            self.buckets[key].append(index)

    def near(self, rect: Rect) -> list[int]:
        found: set[int] = set()
        for key in self._cells(rect):
            found.update(self.buckets.get(key, ()))
        return sorted(found)


def _grid_of(rects: Sequence[Rect]) -> _Grid:
    grid = _Grid()
    for index, rect in enumerate(rects):
        grid.add(index, rect)
    return grid


# --- the checks --------------------------------------------------------------------------


def problems(picture: Picture, tolerance: float = TOLERANCE) -> list[Problem]:
    """Everything wrong with the picture's geometry, in a stable order (empty: good)."""
    found: list[Problem] = []
    found.extend(_page_problems(picture, tolerance))
    found.extend(_box_problems(picture.boxes, tolerance))
    found.extend(_wire_problems(picture, tolerance))
    found.extend(_label_problems(picture, tolerance))
    return found


def _page_problems(picture: Picture, tolerance: float) -> Iterator[Problem]:
    page = Rect(0, 0, picture.width, picture.height)
    for box in picture.boxes:
        if not page.contains(box.rect, tolerance):
            yield Problem("off-page", f"box {box.id} lies outside the page")
    for label in picture.labels:
        if not page.contains(label.rect, tolerance):
            yield Problem("off-page", f"label {label.text!r} lies outside the page")
    for wire in picture.wires:
        for start, end in wire.segments():
            if not page.contains(_segment_bounds(start, end), tolerance):
                yield Problem("off-page", f"wire {wire.id} leaves the page")
                break


def _box_problems(boxes: Sequence[Box], tolerance: float) -> Iterator[Problem]:
    ids: dict[str, int] = {}
    for box in boxes:
        ids[box.id] = ids.get(box.id, 0) + 1
    for box_id, count in sorted(ids.items()):
        if count > 1:
            yield Problem("box-duplicate", f"box id {box_id} is used {count} times")
    rects = [box.rect for box in boxes]
    grid = _grid_of(rects)
    for index, box in enumerate(boxes):
        for other in grid.near(box.rect):
            if other > index and box.rect.overlaps(rects[other], tolerance):
                yield Problem("box-overlap", f"boxes {box.id} and {boxes[other].id} overlap")


def _wire_problems(picture: Picture, tolerance: float) -> Iterator[Problem]:
    boxes = {box.id: box for box in picture.boxes}
    box_list = list(picture.boxes)
    box_grid = _grid_of([box.rect for box in box_list])
    label_grid = _grid_of([label.rect for label in picture.labels])
    for wire in picture.wires:
        if len(wire.points) < 2:
            yield Problem("wire-detached", f"wire {wire.id} has fewer than two points")
            continue
        for end_name, box_id, point in (("start", wire.start, wire.points[0]),
                                         ("end", wire.end, wire.points[-1])):
            box = boxes.get(box_id)
            if box is None:
                yield Problem("wire-detached", f"wire {wire.id}: its {end_name} box "
                                               f"{box_id} is not in the picture")
            elif not box.rect.on_border(point, tolerance):
                yield Problem("wire-detached", f"wire {wire.id} does not {end_name} on the "
                                               f"border of {box_id}")
        for start, end in wire.segments():
            bounds = _segment_bounds(start, end)
            for index in box_grid.near(bounds):
                box = box_list[index]
                if segment_meets_inside(start, end, box.rect, tolerance):
                    whose = "its own end box" if box.id in (wire.start, wire.end) else "box"
                    yield Problem("wire-through-box",
                                  f"wire {wire.id} passes through {whose} {box.id}")
            for index in label_grid.near(bounds):
                label = picture.labels[index]
                if segment_meets_inside(start, end, label.rect, tolerance):
                    yield Problem("wire-through-label",
                                  f"wire {wire.id} crosses the label {label.text!r}")
    yield from _overlapping_wires(picture.wires, tolerance)


def _overlapping_wires(wires: Sequence[Wire], tolerance: float) -> Iterator[Problem]:
    segments: list[tuple[int, Point, Point]] = []
    for index, wire in enumerate(wires):
        segments.extend((index, start, end) for start, end in wire.segments())
    grid = _grid_of([_segment_bounds(s, e) for _, s, e in segments])
    reported: set[tuple[int, int]] = set()
    for position, (owner, start, end) in enumerate(segments):
        for other in grid.near(_segment_bounds(start, end)):
            other_owner, other_start, other_end = segments[other]
            pair = (min(owner, other_owner), max(owner, other_owner))
            if other <= position or other_owner == owner or pair in reported:
                continue
            if _branch_of_one_conductor(wires[owner], wires[other_owner], tolerance):
                continue
            if collinear_overlap((start, end), (other_start, other_end), tolerance) > 1.0:
                reported.add(pair)
                yield Problem("wire-overlap", f"wires {wires[pair[0]].id} and "
                                              f"{wires[pair[1]].id} run along one line")


def _branch_of_one_conductor(a: Wire, b: Wire, tolerance: float) -> bool:
    """Two wires leaving one point of one box, or arriving at one: one node, branching."""
    def same(p: Point, q: Point) -> bool:
        return abs(p[0] - q[0]) <= tolerance and abs(p[1] - q[1]) <= tolerance

    return ((a.start == b.start and same(a.points[0], b.points[0]))
            or (a.end == b.end and same(a.points[-1], b.points[-1])))


def _label_problems(picture: Picture, tolerance: float) -> Iterator[Problem]:
    labels = picture.labels
    boxes = {box.id: box for box in picture.boxes}
    label_grid = _grid_of([label.rect for label in labels])
    for index, label in enumerate(labels):
        for other in label_grid.near(label.rect):
            if other > index and label.rect.overlaps(labels[other].rect, tolerance):
                yield Problem("label-overlap", f"labels {label.text!r} and "
                                               f"{labels[other].text!r} overlap")
        owner = boxes.get(label.owner)
        if owner is not None and not owner.rect.contains(label.rect, tolerance):
            yield Problem("label-outside-owner",
                          f"label {label.text!r} sticks out of its box {owner.id}")
        if owner is None and label.owner not in picture.regions:
            yield Problem("label-outside-owner",
                          f"label {label.text!r} belongs to nothing in the picture "
                          f"({label.owner!r})")
    box_list = list(picture.boxes)
    box_grid = _grid_of([box.rect for box in box_list])
    for label in labels:
        for index in box_grid.near(label.rect):
            box = box_list[index]
            if box.id != label.owner and label.rect.overlaps(box.rect, tolerance):
                yield Problem("label-over-box",
                              f"label {label.text!r} covers part of box {box.id}")


def elements_drawn(pictures: Iterable[Picture]) -> dict[str, list[int]]:
    """Element id → the numbers (from 1) of the pictures that hold a box for it, one
    entry per box (so an element drawn twice on one sheet shows up twice)."""
    drawn: dict[str, list[int]] = defaultdict(list)
    for number, picture in enumerate(pictures, start=1):
        for box in picture.boxes:
            if box.element is not None:
                drawn[box.element].append(number)
    return dict(drawn)
