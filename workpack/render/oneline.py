"""The whole-plant one-line drawing rendered: PDF (reportlab) or SVG.

Layout lives in ``oneline_layout`` (pure geometry, checked by ``geometry.problems``);
this module only draws what it is given, through one small ``Pen`` interface, so the
PDF and the SVG show the same symbols in the same places. Black and white only: systems
are told apart by their framed titles, normally open points by an open contact and the
words N.O., auxiliary feeds by dashes, lockable devices by a padlock.

Same plant, same bytes: reportlab's invariant mode with a fixed date; the SVG is
written by ``workpack.render.svg`` with fixed number formatting.
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from typing import Protocol

from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.pdfgen.canvas import Canvas

from workpack.model.plant import Plant
from workpack.render.oneline_layout import (
    GLYPH,
    LINE_PT,
    DrawnBox,
    Frame,
    OneLineDrawing,
    Sheet,
    TextRun,
    layout_plant,
)
from workpack.render.pdf import FONT, FONT_BOLD, register_fonts
from workpack.render.svg import SvgWriter
from workpack.topology import Topology

__all__ = ["draw_plant", "measure_text", "render_pdf", "render_svg"]

Point = tuple[float, float]


def measure_text(text: str, size: float, bold: bool) -> float:
    """Width in points of ``text`` in the bundled DejaVu face (the one both outputs use)."""
    register_fonts()
    return float(stringWidth(text, FONT_BOLD if bold else FONT, size))


def draw_plant(plant: Plant, topology: Topology, paper: str = "A3") -> OneLineDrawing:
    return layout_plant(plant, topology, measure_text, paper)


class Pen(Protocol):
    """Drawing in layout coordinates: points, y down."""

    def line(self, points: Sequence[Point], width: float = 1.0,
             dash: tuple[float, float] | None = None) -> None: ...

    def rect(self, x0: float, y0: float, x1: float, y1: float, width: float = 1.0,
             fill: str | None = None, radius: float = 0.0, stroke: bool = True) -> None: ...

    def circle(self, cx: float, cy: float, r: float, width: float = 1.0,
               fill: str | None = None) -> None: ...

    def polygon(self, points: Sequence[Point], width: float = 1.0,
                fill: str | None = None) -> None: ...

    def text(self, run: TextRun) -> None: ...

    def centred(self, text: str, cx: float, cy: float, size: float, bold: bool) -> None: ...


# --- symbols, drawn the same through any pen --------------------------------------------


def draw_sheet(pen: Pen, sheet: Sheet) -> None:
    for frame in sheet.frames:
        _frame(pen, frame)
    ends: dict[str, list[Point]] = {}
    for wire in sheet.wires:
        pen.line(wire.points, width=1.0, dash=(4.0, 2.5) if wire.dashed else None)
        ends.setdefault(wire.start, []).append(wire.points[0])
        ends.setdefault(wire.end, []).append(wire.points[-1])
    for box in sheet.boxes:
        _box(pen, box, ends.get(box.id, []))
    for _, run in sheet.texts:
        pen.text(run)


def _frame(pen: Pen, frame: Frame) -> None:
    r = frame.rect
    pen.rect(r.x0, r.y0, r.x1, r.y1, width=1.6)
    title_bottom = max(t.rect.y1 for t in frame.texts) + 2
    pen.line([(r.x0, title_bottom), (min(r.x1, r.x0 + max(t.width for t in frame.texts) + 14),
                                     title_bottom)], width=0.6)
    for run in frame.texts:
        pen.text(run)


def _box(pen: Pen, box: DrawnBox, ends: Sequence[Point]) -> None:
    r = box.rect
    if box.kind == "legend":
        _legend_sample(pen, box)
        return
    if box.kind == "bus":
        pen.rect(r.x0, r.y0, r.x1, r.y1, width=2.6, fill="white")
        if box.glyph_at is not None:
            _detector(pen, box.glyph_at, box.marks)
    elif box.kind == "connector":
        _connector(pen, box)
    elif box.kind in ("source", "load"):
        pen.rect(r.x0, r.y0, r.x1, r.y1, width=0.9, fill="white",
                 radius=6.0 if box.kind == "source" else 0.0)
    if box.conductor_x is not None:
        _conductor(pen, box, ends)
    if "lockable" in box.marks and box.glyph_at is not None:
        _padlock(pen, *box.glyph_at)
    for run in box.texts:
        pen.text(run)


def _conductor(pen: Pen, box: DrawnBox, ends: Sequence[Point]) -> None:
    """The line through a device, cable, transformer, load or source, with its symbol;
    a wire ending off the conductor is joined to it along the box edge."""
    r = box.rect
    x = box.conductor_x
    assert x is not None
    mid = (r.y0 + r.y1) / 2
    for px, py in ends:
        if abs(px - x) > 0.5:
            pen.line([(px, py), (x, py)], width=1.0)
    kind = box.kind
    if kind == "cable":
        pen.line([(x, r.y0), (x, r.y1)], width=1.0)
        pen.line([(x - 3, mid - 4), (x + 3, mid - 1)], width=0.8)  # a cable tick
        pen.line([(x - 3, mid + 1), (x + 3, mid + 4)], width=0.8)
    elif kind == "transformer":
        pen.line([(x, r.y0), (x, mid - 10)], width=1.0)
        pen.line([(x, mid + 10), (x, r.y1)], width=1.0)
        pen.circle(x, mid - 4, 6.0, width=1.0)
        pen.circle(x, mid + 4, 6.0, width=1.0)
    elif kind == "device":
        _device_symbol(pen, x, r.y0, r.y1, box.marks)
    elif kind == "load":
        if any(abs(px - x) <= 0.5 and abs(py - r.y0) <= 0.5 for px, py in ends):
            pen.line([(x, r.y0), (x, mid - 7)], width=1.0)
        if "motor" in box.marks:
            pen.circle(x, mid, 7.0, width=1.0, fill="white")
            pen.centred("M", x, mid, 8.0, True)
        else:
            pen.rect(x - 5, mid - 5, x + 5, mid + 5, width=1.0, fill="white")
    elif kind == "source":
        pen.line([(x, mid + 7), (x, r.y1)], width=1.0)
        pen.circle(x, mid, 7.0, width=1.0, fill="white")
        letter = {"generator": "G", "emergency_generator": "G", "ups": "U",
                  "battery": "B"}.get(next((m for m in box.marks if m in (
                      "generator", "emergency_generator", "ups", "battery")), ""), "~")
        pen.centred(letter, x, mid, 8.0, True)


def _device_symbol(pen: Pen, x: float, top: float, bottom: float,
                   marks: frozenset[str]) -> None:
    mid = (top + bottom) / 2
    if "open" in marks:
        # drawn open: the blade lifted clear of its contact
        pen.line([(x, top), (x, mid - 6)], width=1.0)
        pen.line([(x, mid + 6), (x, bottom)], width=1.0)
        pen.line([(x - 3, mid + 6), (x + 3, mid + 6)], width=1.0)
        pen.line([(x, mid - 6), (x + 6, mid + 3)], width=1.2)
        return
    pen.line([(x, top), (x, bottom)], width=1.0)
    if "fuse" in marks:
        pen.rect(x - 2.5, mid - 6, x + 2.5, mid + 6, width=1.0, fill="white")
        pen.line([(x, mid - 6), (x, mid + 6)], width=0.8)
    elif "changeover" in marks:
        pen.rect(x - 4, mid - 4, x + 4, mid + 4, width=1.0, fill="white")
        pen.line([(x - 4, mid + 4), (x + 4, mid - 4)], width=0.8)
    else:
        pen.rect(x - 3.5, mid - 3.5, x + 3.5, mid + 3.5, width=1.2, fill="white")


def _padlock(pen: Pen, x: float, y: float) -> None:
    """Padlock, GLYPH points square, top-left at (x, y): shackle over a solid body."""
    body_top = y + GLYPH * 0.45
    pen.rect(x + 0.5, body_top, x + GLYPH - 0.5, y + GLYPH, width=0.8, fill="black")
    cx = x + GLYPH / 2
    radius = GLYPH * 0.28
    pen.line([(cx - radius, body_top), (cx - radius, y + radius),
              (cx - radius * 0.5, y + 0.3), (cx + radius * 0.5, y + 0.3),
              (cx + radius, y + radius), (cx + radius, body_top)], width=1.1)


def _detector(pen: Pen, at: Point, marks: frozenset[str]) -> None:
    x, y = at
    cx, cy, r = x + GLYPH / 2, y + GLYPH / 2, GLYPH / 2
    pen.circle(cx, cy, r, width=0.9, fill="white")
    if "lamps" in marks:
        d = r * 0.7
        pen.line([(cx - d, cy - d), (cx + d, cy + d)], width=0.8)
        pen.line([(cx - d, cy + d), (cx + d, cy - d)], width=0.8)
    elif "voltmeters" in marks:
        pen.centred("V", cx, cy, 7.0, True)
    elif "insulation_monitor" in marks:
        pen.centred("Ω", cx, cy, 7.0, True)


def _connector(pen: Pen, box: DrawnBox) -> None:
    """An arrow-ended flag: pointing down for a line that leaves, up for one arriving."""
    r = box.rect
    tip = 6.0
    dash = "dashed" in box.marks
    if "to" in box.marks:
        points = [(r.x0, r.y0), (r.x1, r.y0), (r.x1, r.y1 - tip), ((r.x0 + r.x1) / 2, r.y1),
                  (r.x0, r.y1 - tip)]
    else:
        points = [(r.x0, r.y0 + tip), ((r.x0 + r.x1) / 2, r.y0), (r.x1, r.y0 + tip),
                  (r.x1, r.y1), (r.x0, r.y1)]
    pen.polygon(points, width=1.4 if not dash else 0.9, fill="white")


def _legend_sample(pen: Pen, box: DrawnBox) -> None:
    r = box.rect
    marks = box.marks
    x = (r.x0 + r.x1) / 2
    kind = next((m[len("sample-"):] for m in marks if m.startswith("sample-")), "legend")
    sample = DrawnBox(box.id, r, kind, None, (), x, marks)
    if kind == "bus":
        pen.rect(r.x0, r.y0 + 4, r.x1, r.y1 - 4, width=2.6, fill="white")
    elif kind in ("source", "load"):
        pen.rect(r.x0 + 4, r.y0, r.x1 - 4, r.y1, width=0.9, fill="white",
                 radius=6.0 if kind == "source" else 0.0)
        _conductor(pen, sample, [])
    elif kind in ("device", "cable", "transformer"):
        _conductor(pen, sample, [])
        if "lockable" in marks:
            _padlock(pen, x + 6, r.y0 + 2)
    elif kind == "connector":
        _connector(pen, DrawnBox(box.id, r, "connector", marks=frozenset({"to"})))
    elif "frame" in marks:
        pen.rect(r.x0 + 2, r.y0 + 2, r.x1 - 2, r.y1 - 2, width=1.6)
    elif "dashed" in marks:
        pen.line([(r.x0, (r.y0 + r.y1) / 2), (r.x1, (r.y0 + r.y1) / 2)], width=1.0,
                 dash=(4.0, 2.5))
    elif "solid" in marks:
        pen.line([(r.x0, (r.y0 + r.y1) / 2), (r.x1, (r.y0 + r.y1) / 2)], width=1.0)
    else:
        _detector(pen, (x - GLYPH / 2, (r.y0 + r.y1) / 2 - GLYPH / 2), marks)


# --- PDF -------------------------------------------------------------------------------


class _PdfPen:
    def __init__(self, canvas: Canvas, height: float):
        self.c = canvas
        self.h = height

    def _y(self, y: float) -> float:
        return self.h - y

    def _stroke(self, width: float, dash: tuple[float, float] | None = None) -> None:
        self.c.setLineWidth(width)
        self.c.setStrokeColorRGB(0, 0, 0)
        if dash:
            self.c.setDash(list(dash), 0)
        else:
            self.c.setDash([], 0)

    def _fill(self, fill: str | None) -> int:
        if fill is None:
            return 0
        self.c.setFillColorRGB(*((1, 1, 1) if fill == "white" else (0, 0, 0)))
        return 1

    def line(self, points: Sequence[Point], width: float = 1.0,
             dash: tuple[float, float] | None = None) -> None:
        self._stroke(width, dash)
        path = self.c.beginPath()
        path.moveTo(points[0][0], self._y(points[0][1]))
        for x, y in points[1:]:
            path.lineTo(x, self._y(y))
        self.c.drawPath(path, stroke=1, fill=0)

    def rect(self, x0: float, y0: float, x1: float, y1: float, width: float = 1.0,
             fill: str | None = None, radius: float = 0.0, stroke: bool = True) -> None:
        self._stroke(width)
        filled = self._fill(fill)
        if radius:
            self.c.roundRect(x0, self._y(y1), x1 - x0, y1 - y0, radius, stroke=int(stroke),
                             fill=filled)
        else:
            self.c.rect(x0, self._y(y1), x1 - x0, y1 - y0, stroke=int(stroke), fill=filled)

    def circle(self, cx: float, cy: float, r: float, width: float = 1.0,
               fill: str | None = None) -> None:
        self._stroke(width)
        self.c.circle(cx, self._y(cy), r, stroke=1, fill=self._fill(fill))

    def polygon(self, points: Sequence[Point], width: float = 1.0,
                fill: str | None = None) -> None:
        self._stroke(width)
        filled = self._fill(fill)
        path = self.c.beginPath()
        path.moveTo(points[0][0], self._y(points[0][1]))
        for x, y in points[1:]:
            path.lineTo(x, self._y(y))
        path.close()
        self.c.drawPath(path, stroke=1, fill=filled)

    def text(self, run: TextRun) -> None:
        self.c.setFillColorRGB(0, 0, 0)
        self.c.setFont(FONT_BOLD if run.bold else FONT, run.size)
        self.c.drawString(run.x, self._y(run.baseline), run.text)

    def centred(self, text: str, cx: float, cy: float, size: float, bold: bool) -> None:
        self.c.setFillColorRGB(0, 0, 0)
        self.c.setFont(FONT_BOLD if bold else FONT, size)
        self.c.drawCentredString(cx, self._y(cy + size * 0.35), text)


def render_pdf(drawing: OneLineDrawing) -> bytes:
    """Every sheet as a page of its own size; same drawing, same bytes."""
    register_fonts()
    buffer = io.BytesIO()
    first = drawing.sheets[0]
    canvas = Canvas(buffer, pagesize=(first.width, first.height), invariant=1,
                    pageCompression=1)
    canvas.setTitle(f"{drawing.title}: one-line drawing")
    canvas.setAuthor("workpack")
    canvas.setCreator("workpack")
    canvas.setDateFormatter(lambda *_: "D:20000101000000+00'00'")
    for sheet in drawing.sheets:
        canvas.setPageSize((sheet.width, sheet.height))
        canvas.setLineCap(0)
        canvas.setLineJoin(0)
        draw_sheet(_PdfPen(canvas, sheet.height), sheet)
        canvas.showPage()
    canvas.save()
    return buffer.getvalue()


# --- SVG -------------------------------------------------------------------------------


class _SvgPen:
    def __init__(self, writer: SvgWriter):
        self.w = writer

    def line(self, points: Sequence[Point], width: float = 1.0,
             dash: tuple[float, float] | None = None) -> None:
        self.w.polyline(points, width, dash)

    def rect(self, x0: float, y0: float, x1: float, y1: float, width: float = 1.0,
             fill: str | None = None, radius: float = 0.0, stroke: bool = True) -> None:
        self.w.rect(x0, y0, x1 - x0, y1 - y0, width if stroke else 0.0, fill, radius)

    def circle(self, cx: float, cy: float, r: float, width: float = 1.0,
               fill: str | None = None) -> None:
        self.w.circle(cx, cy, r, width, fill)

    def polygon(self, points: Sequence[Point], width: float = 1.0,
                fill: str | None = None) -> None:
        self.w.polygon(points, width, fill)

    def text(self, run: TextRun) -> None:
        self.w.text(run.text, run.x, run.baseline, run.size, run.bold, run.width)

    def centred(self, text: str, cx: float, cy: float, size: float, bold: bool) -> None:
        width = measure_text(text, size, bold)
        self.w.text(text, cx - width / 2, cy + size * 0.35, size, bold, width)


SHEET_GAP = LINE_PT * 3


def render_svg(drawing: OneLineDrawing) -> bytes:
    """All sheets in one SVG, one under the other, each framed as its paper."""
    width = max(sheet.width for sheet in drawing.sheets)
    height = sum(sheet.height for sheet in drawing.sheets) + SHEET_GAP * (
        len(drawing.sheets) - 1)
    writer = SvgWriter(width, height, title=f"{drawing.title}: one-line drawing")
    top = 0.0
    for sheet in drawing.sheets:
        writer.open_group(f"sheet-{sheet.number}", 0.0, top)
        writer.rect(0, 0, sheet.width, sheet.height, 0.5, "white", 0.0)
        draw_sheet(_SvgPen(writer), sheet)
        writer.close_group()
        top += sheet.height + SHEET_GAP
    return writer.finish()
