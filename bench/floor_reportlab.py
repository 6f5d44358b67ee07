"""The floor for the renderer benchmark: a work package laid out with bare reportlab.

The same content as workpack's package PDF, read from the same ``WorkPackage``: the same
texts in paragraphs and tables of the same columns, the same fonts (the bundled DejaVu
faces, registered once per process), A4 with the same margins, frame, running header and
footer and "Page x of y", an empty box wherever workpack puts a form field, and a drawing
of about as many lines and labels wherever it draws a figure. What it leaves out is what
workpack adds on top of laying out that content: the fillable form fields, the figures'
finer drawing, the styling of the boxes. None of workpack's classes or helpers are used,
so the time is reportlab's alone.

Run alone: .venv/bin/python bench/floor_reportlab.py PACKAGE.json …
"""

from __future__ import annotations

import io
import sys
from pathlib import Path
from typing import Any

from reportlab.graphics.shapes import Circle, Drawing, Line, Rect, String
from reportlab.lib import colors
from reportlab.lib.pagesizes import A4
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.pdfgen.canvas import Canvas
from reportlab.platypus import (
    BaseDocTemplate,
    Flowable,
    Frame,
    KeepTogether,
    PageTemplate,
    Paragraph,
    Spacer,
    Table,
    TableStyle,
)
from reportlab.platypus.flowables import Flowable as _Flowable

FONTS = Path(__file__).resolve().parent.parent / "workpack" / "fonts"
REGULAR, BOLD = "FloorSans", "FloorSans-Bold"
MARGIN, HEADER, FOOTER = 14 * mm, 13 * mm, 15 * mm
WIDTH = A4[0] - 2 * MARGIN
BOX_H = 8.5 * mm
FRAME_H = A4[1] - 2 * MARGIN - HEADER - FOOTER

_registered = False


def register() -> None:
    global _registered
    if not _registered:
        pdfmetrics.registerFont(TTFont(REGULAR, str(FONTS / "DejaVuSans.ttf")))
        pdfmetrics.registerFont(TTFont(BOLD, str(FONTS / "DejaVuSans-Bold.ttf")))
        pdfmetrics.registerFontFamily(REGULAR, normal=REGULAR, bold=BOLD, italic=REGULAR,
                                      boldItalic=BOLD)
        _registered = True


def _styles() -> dict[str, ParagraphStyle]:
    body = ParagraphStyle("body", fontName=REGULAR, fontSize=10.5, leading=13.65)
    return {
        "body": body,
        "small": ParagraphStyle("small", parent=body, fontSize=9, leading=11.25),
        "cell": ParagraphStyle("cell", parent=body, fontSize=10, leading=12.5),
        "bold": ParagraphStyle("bold", parent=body, fontName=BOLD, fontSize=10,
                               leading=12.5),
        "head": ParagraphStyle("head", parent=body, fontName=BOLD, fontSize=9.5,
                               leading=11.5),
        "title": ParagraphStyle("title", parent=body, fontName=BOLD, fontSize=16, leading=20,
                                spaceAfter=3 * mm),
        "section": ParagraphStyle("section", parent=body, fontName=BOLD, fontSize=13.5,
                                  leading=17, spaceBefore=5 * mm, spaceAfter=2 * mm,
                                  keepWithNext=1),
        "sub": ParagraphStyle("sub", parent=body, fontName=BOLD, fontSize=11, leading=14,
                              spaceBefore=3 * mm, spaceAfter=1.5 * mm, keepWithNext=1),
        "bullet": ParagraphStyle("bullet", parent=body, leftIndent=5 * mm,
                                 bulletIndent=1 * mm, spaceAfter=1 * mm),
        "number": ParagraphStyle("number", parent=body, fontName=BOLD, fontSize=14,
                                 leading=16),
    }


class Box(_Flowable):
    """An empty box to write in (where workpack puts a form field)."""

    def __init__(self, height: float = BOX_H, width: float | None = None) -> None:
        super().__init__()
        self.fixed = width
        self.width, self.height = width or 0.0, height

    def wrap(self, available_width: float, available_height: float) -> tuple[float, float]:
        self.width = self.fixed if self.fixed is not None else available_width
        return self.width, self.height

    def draw(self) -> None:
        self.canv.rect(0, 0, self.width, self.height)


class NumberedCanvas(Canvas):
    """reportlab's two-pass idiom for "Page x of y": keep each page, number at the end."""

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self._pages: list[dict[str, Any]] = []

    def showPage(self) -> None:  # noqa: N802 - reportlab's name
        self._pages.append(dict(self.__dict__))
        self._startPage()

    def save(self) -> None:
        for number, state in enumerate(self._pages, start=1):
            self.__dict__.update(state)
            self.setFont(BOLD, 10)
            self.drawRightString(A4[0] - MARGIN, MARGIN + FOOTER - 13.5 * mm,
                                 f"Page {number} of {len(self._pages)}")
            Canvas.showPage(self)
        Canvas.save(self)


GRID = TableStyle([("GRID", (0, 0), (-1, -1), 0.7, colors.black),
                   ("VALIGN", (0, 0), (-1, -1), "TOP")])


def _table(rows: list[list[Any]], widths_mm: list[float], style: TableStyle = GRID) -> Table:
    total = sum(widths_mm)
    table = Table(rows, colWidths=[WIDTH * w / total for w in widths_mm])
    table.setStyle(style)
    return table


def _figure(nodes: list[str], edges: list[tuple[int, int]], width: float) -> Drawing:
    """Boxes with labels in rows, supplies above what they feed, lines between them: a
    one-line sketch of that many parts (a row per depth, wrapped when too wide)."""
    depth = [0] * len(nodes)
    for _ in range(len(nodes)):  # longest way down from a node nothing feeds; bounded
        changed = False
        for supply, load in edges:
            if depth[load] < min(depth[supply] + 1, len(nodes)):
                depth[load] = depth[supply] + 1
                changed = True
        if not changed:
            break
    per_row = max(1, int((width - 4 * mm) // (39 * mm)))
    rows: list[list[int]] = []
    for level in sorted(set(depth)):
        members = [n for n in range(len(nodes)) if depth[n] == level]
        rows += [members[i:i + per_row] for i in range(0, len(members), per_row)]
    # Like workpack's sketch, a figure taller than the room a page gives it keeps its
    # type size and leaves rows out (the first and the last kept).
    room = int((FRAME_H * 0.6 - 9 * mm) // (18 * mm))
    if len(rows) > room:
        rows = rows[:room // 2] + rows[len(rows) - (room - room // 2):]
    kept = {n for row in rows for n in row}
    edges = [(a, b) for a, b in edges if a in kept and b in kept]
    drawing = Drawing(width, len(rows) * 18 * mm + 9 * mm)
    drawing.add(Rect(0, 0, width, drawing.height, fillColor=None))
    places: dict[int, tuple[float, float]] = {}
    for row_number, row in enumerate(rows):
        y = drawing.height - (row_number + 1) * 18 * mm
        for column, node in enumerate(row):
            x = 2 * mm + column * 39 * mm
            places[node] = (x + 18 * mm, y + 4.5 * mm)
            drawing.add(Rect(x, y, 36 * mm, 9 * mm, fillColor=colors.white))
            drawing.add(String(x + 2 * mm, y + 3 * mm, nodes[node][:18], fontName=REGULAR,
                               fontSize=9))
    for a, b in edges:
        drawing.add(Line(*places[a], *places[b]))
    return drawing


def _phasor(readings: dict[str, float], width: float) -> Drawing:
    drawing = Drawing(width, width)
    centre = width / 2
    drawing.add(Circle(centre, centre, width * 0.4, fillColor=None))
    for n, (label, volts) in enumerate(sorted(readings.items())):
        x, y = centre + (n - 1) * width * 0.3, centre + width * 0.3
        drawing.add(Line(centre, centre, x, y, strokeWidth=2))
        drawing.add(String(x, y + 2, f"{label} {volts:.0f} V", fontName=BOLD, fontSize=9))
    return drawing


def story(package: Any) -> list[Flowable]:
    """The package's content as bare reportlab flowables."""
    s = _styles()
    p = package
    out: list[Flowable] = [Paragraph(p.title, s["title"])]
    number = 0

    def section(title: str) -> Paragraph:
        nonlocal number
        number += 1
        return Paragraph(f"{number}  {title}", s["section"])

    def pair(name: str, value: str) -> list[Paragraph]:
        return [Paragraph(name, s["bold"]), Paragraph(value, s["cell"])]

    origin = "; ".join([f"rule {p.origin.rule}", *(["findings " + ", ".join(p.origin.findings)]
                                                   if p.origin.findings else [])])
    out += [section("The job"), _table([
        pair("Package", p.id) + pair("Date", p.date.isoformat()),
        pair("Plant", p.plant) + pair("Priority", f"{p.priority}: {p.priority_reason}"),
        pair("Item", p.item_label) + pair("System", p.system or "not given"),
        pair("Duration", f"{p.duration_h:g} h") + pair("Crew", str(p.crew)),
        pair("Job kind", p.job_kind) + pair("Permits", ", ".join(p.permits) or "none"),
        pair("Origin", origin) + ["", ""]], [24, 67, 24, 67])]

    def cautions(items: Any) -> list[Flowable]:
        return [flowable for c in items for flowable in (
            _table([[Paragraph(c.signal_word.value, s["head"]),
                     Paragraph(c.text, s["cell"])]], [30, 152]), Spacer(1, 1.8 * mm))]

    out += [section("Hazards and protection"), *cautions(p.cautions)]
    if p.hazard_facts:
        out += [Paragraph("Facts about this system", s["sub"]),
                *[Paragraph(f, s["bullet"], bulletText="•") for f in p.hazard_facts]]
    if p.approach is not None:
        a = p.approach
        out.append(_table([[Paragraph(f"Approach boundaries at {a.entered_at_v:g} V", s["bold"]),
                            ""],
                           [Paragraph("Limited approach, movable", s["cell"]),
                            Paragraph(a.limited_movable, s["bold"])],
                           [Paragraph("Limited approach, fixed", s["cell"]),
                            Paragraph(a.limited_fixed, s["bold"])],
                           [Paragraph("Restricted approach", s["cell"]),
                            Paragraph(a.restricted, s["bold"])],
                           [Paragraph("Source", s["cell"]), Paragraph(a.source, s["cell"])]],
                          [110, 72]))
    if p.ppe:
        out += [Paragraph("Personal protective equipment", s["sub"]),
                *[Paragraph(item, s["bullet"], bulletText="•") for item in p.ppe]]
    out.append(_table([[Paragraph(p.notice, s["bold"])]], [182]))
    if p.phasor is not None or p.sketch is not None:
        out.append(section("Figures"))
        if p.phasor is not None:
            ph = p.phasor
            out += [Paragraph("Phasor diagram", s["sub"]),
                    _phasor(ph.readings_v, min(WIDTH / 2 - 2 * mm, 90 * mm)),
                    Paragraph(f"Source {ph.line_voltage_v:g} V line to line, sequence "
                              f"{'-'.join(ph.sequence)}.", s["small"]),
                    Paragraph("Measured to earth: " + ", ".join(
                        f"{k} {v:g} V" for k, v in ph.readings_v.items()) + ".", s["small"]),
                    Paragraph("Heavy lines from E (earth) to each phase: its voltage to "
                              "earth. N: the source neutral.", s["small"])]
        if p.sketch is not None:
            ids = [n.id for n in p.sketch.nodes]
            edges = [(ids.index(a), ids.index(b)) for a, b in p.sketch.edges
                     if a in ids and b in ids]
            out += [Paragraph("One-line sketch", s["sub"]),
                    _figure([n.label for n in p.sketch.nodes], edges, WIDTH),
                    Paragraph("Supplies at the top, the item at the bottom; heavy frame: "
                              "bus.", s["small"]),
                    Paragraph("Cross and LOCK: an isolation point of this package.",
                              s["small"])]
    def isolation(points: Any, gaps: Any, stored: Any, heading: Flowable) -> list[Flowable]:
        parts: list[Flowable] = [heading]
        if points:
            parts.append(_table([[Paragraph(t, s["head"]) for t in (
                "#", "Device, kind, place", "What it cuts or stops", "Voltage", "Lock no.",
                "Tag no.")]], [10, 50, 52, 20, 25, 25]))
        for point in points:
            device = f"<b>{point.device}</b><br/>{point.device_kind}"
            if point.location:
                device += f"<br/>{point.location}"
            cuts = (f"<b>Set and lock:</b> {point.how}<br/>" if point.how else "") + point.cuts
            blanks = Table([[Paragraph("Locked by", s["head"]), Box(),
                             Paragraph("time", s["head"]), Box(),
                             Paragraph("Removed by", s["head"]), Box(),
                             Paragraph("time", s["head"]), Box()]])
            parts.append(_table([[Paragraph(str(point.order), s["number"]),
                                  Paragraph(device, s["cell"]), Paragraph(cuts, s["cell"]),
                                  Paragraph(f"{point.voltage_v or 0:g} V", s["bold"]), Box(),
                                  Box()],
                                 ["", blanks, "", "", "", ""]], [10, 50, 52, 20, 25, 25],
                                TableStyle([*GRID.getCommands(), ("SPAN", (1, 1), (5, 1)),
                                            ("SPAN", (0, 0), (0, 1))])))
        if gaps:
            parts += [Paragraph("Supplies no lock can cut", s["sub"]), *[
                _table([[Paragraph("DANGER", s["head"]), Paragraph(g, s["cell"])]], [30, 152])
                for g in gaps]]
        if stored:
            parts += [Paragraph("Stored energy", s["sub"]),
                      *[Paragraph(e, s["bullet"], bulletText="•") for e in stored]]
        return parts

    def tester(when: str) -> Table:
        return _table([[Box(6.5 * mm, 6.5 * mm), Paragraph(
            f"Tester proven on a known live source <b>{when}</b> the test", s["body"])]],
            [10, 172], TableStyle([("VALIGN", (0, 0), (-1, -1), "MIDDLE")]))

    def proving_dead(points: Any, heading: Flowable) -> list[Flowable]:
        parts: list[Flowable] = [heading]
        if points:
            parts.append(tester("before"))
        for index, point in enumerate(points, start=1):
            parts.append(Paragraph(f"<b>Point {index}: {point.where}</b>, voltage class "
                                   f"{point.voltage_v or 0:g} V. Expect 0 V on every pair.",
                                   s["body"]))
            for start in range(0, len(point.pairs), 6):
                chunk = list(point.pairs[start:start + 6])
                pad = [""] * (6 - len(chunk))
                parts.append(_table([
                    [Paragraph("Pair", s["head"]), *[Paragraph(c, s["bold"]) for c in chunk],
                     *pad],
                    [Paragraph("Expected", s["cell"]),
                     *[Paragraph("0 V", s["cell"]) for _ in chunk], *pad],
                    [Paragraph("Measured", s["cell"]), *[Box() for _ in chunk], *pad]],
                    [26] * 7))
        if points:
            parts.append(tester("after"))
        return parts

    def labelled_box(label: str) -> Table:
        return _table([[Paragraph(label, s["head"]), Box()]], [42, 118])

    def steps(items: Any, heading: Flowable | None) -> list[Flowable]:
        if not items or heading is None:
            return []
        parts: list[Flowable] = [heading, Paragraph(
            "Tick each box when the step is done; write each reading in its box, in the "
            "unit shown.", s["small"])]
        for step in items:
            text = step.text.replace("\n", "<br/>")
            if step.search_outcome is not None:
                text = f"<b>Only if the ground was {step.search_outcome}:</b> {text}"
            line = _table([[Box(6.5 * mm, 6.5 * mm), Paragraph(str(step.number), s["number"]),
                            Paragraph(text, s["body"])]],
                          [10, 12, 160], TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP")]))
            group: list[Flowable] = [Spacer(1, 1.5 * mm), line]
            if step.kind == "remove_lock" and step.devices:
                group.append(_table([[Paragraph("Removed by", s["head"]), Box(),
                                      Paragraph("time", s["head"]), Box()]], [22, 40, 10, 28]))
            if step.kind == "gate":
                group.append(labelled_box("Locks left on because"))
            group += cautions(step.cautions)
            if step.readings:
                temperature = any(r.needs_temperature for r in step.readings)
                rows: list[list[Any]] = [[Paragraph(t, s["head"]) for t in (
                    "Reading", "Expected", "Limit and its source", "Measured",
                    *(["Temp."] if temperature else []))]]
                for r in step.readings:
                    limit = [Paragraph("—", s["cell"])]
                    if r.limit is not None:
                        limit = [Paragraph(f"<b>{r.limit.low} – {r.limit.high} {r.unit}</b>",
                                           s["cell"]), Paragraph(r.limit.basis, s["small"])]
                    expected = [Paragraph(f"{r.expected if r.expected is not None else '—'} "
                                          f"{r.unit}", s["cell"])]
                    if r.basis:
                        expected.append(Paragraph(r.basis, s["small"]))
                    rows.append([Paragraph(f"<b>{r.id}</b> {r.what}", s["cell"]), expected,
                                 limit, Box(), *([Box()] if temperature else [])])
                group += [Spacer(1, 1.5 * mm), _table(rows, [42, 32, 50, 33, 25] if temperature
                                                      else [46, 38, 64, 34])]
            parts.append(KeepTogether(group))
        return parts

    def sub(title: str) -> Paragraph:
        return Paragraph(title, s["sub"])

    out += steps([t for t in p.steps if t.before_isolation],
                 section("Before the isolation")
                 if any(t.before_isolation for t in p.steps) else None)
    out += isolation(p.isolation, p.isolation_gaps, p.stored_energy,
                     section("Isolation: open, lock and tag in this order"))
    out += proving_dead(p.proving_dead, section("Prove dead at the point of work"))
    work = [t for t in p.steps if not t.before_isolation]
    out += steps(work, section("Work steps") if work else None)
    for final in p.final_tests:  # a ground search's ends: each a whole isolation
        out += [section(final.title), Paragraph(f"<b>{final.condition}</b>", s["body"]),
                *cautions(final.cautions)]
        before = [t for t in final.steps if t.before_isolation]
        out += steps(before, sub(f"{final.id} before the isolation") if before else None)
        out += isolation(final.isolation, final.isolation_gaps, final.stored_energy,
                         sub(f"{final.id} isolation: open, lock and tag in this order"))
        out += proving_dead(final.proving_dead,
                            sub(f"{final.id} prove dead at the point of work"))
        rest = [t for t in final.steps if not t.before_isolation]
        out += steps(rest, sub(f"{final.id} tests"))
        out += steps(final.restoration, sub(f"{final.id} restoration"))
    if p.acceptance:
        out += [section("Acceptance criteria"),
                *[Paragraph(a, s["bullet"], bulletText="•") for a in p.acceptance]]
    out += steps(p.restoration, section("Restoration") if p.restoration else None)
    out.append(KeepTogether([section("Sign-off"), _table([
        [Paragraph("Technician (name, signature)", s["bold"]), Box()],
        [Paragraph("Supervisor (name, signature)", s["bold"]), Box()],
        [Paragraph("Date", s["bold"]), Box(width=50 * mm)],
        [Paragraph("Remarks", s["bold"]), Box(30 * mm)]], [50, 132])]))
    return out


def render(package: Any) -> bytes:
    """The package's content on A4 with bare reportlab; PDF bytes."""
    register()
    heading = f"{package.plant} · {package.date.isoformat()}"

    def decorate(canv: Canvas, doc: Any) -> None:
        top = A4[1] - MARGIN - 6 * mm
        bottom = MARGIN + FOOTER - 4 * mm
        canv.saveState()
        canv.setFont(BOLD, 12)
        canv.drawString(MARGIN, top, package.id)
        canv.setFont(REGULAR, 10)
        canv.drawRightString(A4[0] - MARGIN, top, heading)
        canv.line(MARGIN, top - 2.5 * mm, A4[0] - MARGIN, top - 2.5 * mm)
        canv.line(MARGIN, bottom, A4[0] - MARGIN, bottom)
        canv.setFont(REGULAR, 9)
        canv.drawString(MARGIN, bottom - 4.5 * mm, package.notice)
        canv.setFont(BOLD, 10)
        canv.drawString(MARGIN, bottom - 9.5 * mm, package.id)
        canv.restoreState()

    frame = Frame(MARGIN, MARGIN + FOOTER, WIDTH, FRAME_H,
                  leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0)
    buffer = io.BytesIO()
    doc = BaseDocTemplate(buffer, pagesize=A4, invariant=1,
                          pageTemplates=[PageTemplate("page", [frame], onPage=decorate)])
    doc.build(story(package), canvasmaker=NumberedCanvas)
    return buffer.getvalue()


if __name__ == "__main__":
    from workpack.model.package import WorkPackage

    for name in sys.argv[1:]:
        pdf = render(WorkPackage.model_validate_json(Path(name).read_text()))
        print(f"{name}: {len(pdf)} bytes")
