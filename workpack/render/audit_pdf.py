"""The audit report as a PDF: ``render_audit_pdf(report, page_size) -> bytes``.

The same content as the HTML report (``audit.wording`` gives the words and
``render.trend_chart`` the chart layout, so the two never say different things), laid out
on the shared ``PdfDocument`` frame: "Page x of y", DejaVu fonts, nothing under 9 pt, the
creation date taken from the report's ``as_of``, so the same report gives the same bytes.
Trend charts are reportlab drawings.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from html import unescape
from typing import Any, TypeAlias

from reportlab.graphics.shapes import Circle, Drawing, Group, Line, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.platypus import Flowable, Paragraph, Spacer, TableStyle

from workpack.audit.report import AuditReport, IrTrend, PackageAudit
from workpack.audit.wording import (
    STATUS_WORDS,
    broken_shown,
    compared_shown,
    effect_shown,
    entered_shown,
    judgement_text,
    legend,
    limit_shown,
    problem_shown,
    readings_heading,
    record_history,
    record_shown,
    signed_shown,
    temperature_shown,
    texts,
)
from workpack.numbers import format_quantity
from workpack.records import OUTCOME_WORDS
from workpack.render.closeout import SHAPES, Mark
from workpack.render.pdf import (
    FONT,
    FONT_BOLD,
    GRID,
    HEAD_ROW,
    MIN_TEXT_PT,
    KeepTogether,
    PageSize,
    PdfDocument,
    Table,
    words,
)
from workpack.render.trend_chart import TrendChart, trend_chart

__all__ = ["AuditPdf", "chart_drawing", "render_audit_pdf"]

Cell: TypeAlias = "str | Flowable | list[Flowable]"
GREY = colors.Color(0.6, 0.6, 0.6)


def chart_drawing(chart: TrendChart, font: str = FONT, bold: str = FONT_BOLD,
                  size: float = MIN_TEXT_PT) -> Drawing:
    """A ``trend_chart`` layout as a reportlab drawing (points; the layout's y runs down)."""
    h = chart.height

    def y(v: float) -> float:
        return h - v

    def text(x: float, yy: float, value: str, anchor: str = "start",
             face: str = font) -> String:
        return String(x, yy, value, fontName=face, fontSize=size, fillColor=colors.black,
                      textAnchor=anchor)

    d = Drawing(chart.width, h)
    d.add(Rect(chart.left, y(chart.bottom), chart.right - chart.left, chart.bottom - chart.top,
               fillColor=None, strokeColor=colors.black, strokeWidth=0.8))
    for ty, label in chart.y_ticks:
        d.add(Line(chart.left, y(ty), chart.right, y(ty), strokeColor=GREY, strokeWidth=0.4))
        d.add(text(chart.left - 4, y(ty) - size * 0.35, label, "end"))
    for tx, label in chart.x_ticks:
        d.add(Line(tx, y(chart.bottom), tx, y(chart.bottom) - 4, strokeColor=colors.black))
        d.add(text(tx, y(chart.bottom + 1.6 * size), label, "middle"))
    d.add(text((chart.left + chart.right) / 2, 0.4 * size, chart.x_label, "middle"))
    turned = Group(text(0, 0, chart.y_label, "middle"))
    turned.transform = (0, 1, -1, 0, size * 1.1, y((chart.top + chart.bottom) / 2))
    d.add(turned)
    if chart.minimum_y is not None:
        d.add(Line(chart.left, y(chart.minimum_y), chart.right, y(chart.minimum_y),
                   strokeColor=colors.black, strokeWidth=1.3, strokeDashArray=[6, 3]))
    if len(chart.line) > 1:
        d.add(PolyLine([c for x, yy in chart.line for c in (x, y(yy))],
                       strokeColor=colors.black, strokeWidth=1.5))
    labels = [(t, font) for t in chart.line_labels]
    if chart.minimum_label is not None:
        labels.append((chart.minimum_label, bold))
    for t, face in labels:  # on a white patch, readable where they cross a line
        w = stringWidth(t.text, face, size)
        x0 = {"start": t.x, "middle": t.x - w / 2, "end": t.x - w}[t.anchor]
        d.add(Rect(x0 - 1.5, y(t.y) - 2.5, w + 3, size + 2.5, fillColor=colors.white,
                   strokeColor=None))
        d.add(text(t.x, y(t.y), t.text, t.anchor, face))
    for m in chart.marks:
        fill = colors.black if m.filled else colors.white
        if m.shape == "square":
            d.add(Rect(m.x - 4, y(m.y) - 4, 8, 8, fillColor=fill, strokeColor=colors.black,
                       strokeWidth=1.3))
        else:
            d.add(Circle(m.x, y(m.y), 3.6, fillColor=fill, strokeColor=colors.black,
                         strokeWidth=1.3))
    return d


class AuditPdf(PdfDocument):
    """The audit: integrity, statuses, readings against limits, deviations, locks left on,
    and the insulation trend of each item."""

    def __init__(self, report: AuditReport, page_size: PageSize = "A4") -> None:
        super().__init__(page_size)
        self.report = report
        self.texts = texts(report)
        self.document_id = f"Audit as of {report.filter.as_of.isoformat()}"
        self.document_title = f"{self.texts['title']} as of {report.filter.as_of}"
        self.created = report.filter.as_of
        # the package column as wide as the widest id, so no id breaks across lines
        ids = [p.package_id for p in report.packages] + [r.package_id for r in report.unmatched]
        ids += [i.package_id for i in report.open_isolations]
        ids += [p.package_id for t in report.trends for p in t.points]
        widest = max((stringWidth(i, FONT_BOLD, 10) for i in ids), default=0.0)
        # but never so wide that the other columns vanish: a longer id wraps
        self.id_mm = min(44.0, max(28.0, (widest + 2 * 1.6 * mm + 2) / mm))

    def header_right(self) -> str:
        return self.report.filter.plant or "all plants"

    def footer_note(self) -> str:
        return self.texts["notice"]

    # -- small builders
    def para(self, text: str, style: str = "cell") -> Paragraph:
        return Paragraph(words(text), self.style[style])

    def grid(self, head: Sequence[str], rows: Sequence[Sequence[Cell]],
             widths_mm: Sequence[float], flagged: Sequence[int] = ()) -> Table:
        """A ruled table, text cells wrapped at spaces only; rows in ``flagged`` (0 =
        first body row) get heavy rules above and below, so they stand out in black and
        white. Each column is at least as wide as its longest word (an id, a timestamp):
        the others give way; where even that is too wide, the table's text goes down to
        the smallest print size."""
        for text_style in ("cell", "small"):
            body = [[self.para(c, text_style) if isinstance(c, str) else c for c in row]
                    for row in rows]
            header = [self.para(h, "head") for h in head]
            needs = [max(_longest_word(cell) for cell in column) + 2 * 1.6 * mm + 1
                     for column in zip(header, *body, strict=True)]
            widths = _give_way(self.cols(*widths_mm), needs, self.width)
            if widths is not None:
                break
        else:
            widths = self.cols(*widths_mm)  # nothing fits: words may break
        table = Table([header, *body], colWidths=widths, repeatRows=1, repeat_when_cut=(0,))
        style: list[tuple[Any, ...]] = [*GRID, *HEAD_ROW]
        for i in flagged:
            style += [("LINEABOVE", (0, i + 1), (-1, i + 1), 2.2, colors.black),
                      ("LINEBELOW", (0, i + 1), (-1, i + 1), 2.2, colors.black)]
        table.setStyle(TableStyle(style))
        return table

    def mark(self, kind: str, word: str) -> Mark:
        return Mark(SHAPES[kind], word)

    # -- the parts
    def integrity_box(self) -> Table:
        i = self.report.integrity
        if i.intact:
            head: Flowable = self.mark("passed", self.texts["intact"])
            extra: list[str] = []
        elif i.ok:
            head = self.mark("overdue", self.texts["guards_missing"])
            extra = [self.texts["guards_missing_advice"]]
        else:
            head = Mark("cross", self.texts["altered"], 15.0)
            extra = [self.texts["altered_advice"]]
        facts = f"Records in the store: {i.count}."
        if i.head_sequence is not None:
            facts += f" Last record: #{i.head_sequence}, chain hash {i.head_sha256}."
        cell = [head, Spacer(1, 1.5 * mm), self.para(i.message, "body"),
                *[self.para(t, "bold") for t in extra], self.para(facts, "small")]
        table = Table([[cell]], colWidths=[self.width])
        box: tuple[Any, ...] = (("BOX", (0, 0), (-1, -1), 1.5, colors.black) if i.intact else
                                ("BOX", (0, 0), (-1, -1), 1.6, colors.black, None, None, None,
                                 2, 2.2))
        table.setStyle(TableStyle([box, ("TOPPADDING", (0, 0), (-1, -1), 2.5 * mm),
                                   ("BOTTOMPADDING", (0, 0), (-1, -1), 2.5 * mm),
                                   ("LEFTPADDING", (0, 0), (-1, -1), 3 * mm)]))
        return table

    def status_block(self) -> list[Flowable]:
        r = self.report
        counts = r.counts()
        tally = Table([[self.mark(s, STATUS_WORDS[s]) for s in counts],
                       [self.para(str(n), "bold") for n in counts.values()]],
                      colWidths=self.cols(*[1] * len(counts)))
        tally.setStyle(TableStyle([*GRID, *HEAD_ROW]))
        out: list[Flowable] = [self.section(self.texts["section_status"]), tally,
                               Spacer(1, 1.5 * mm), self.para(self.texts["status_rules"],
                                                              "small"), Spacer(1, 2 * mm)]
        if not r.packages:
            return [*out, self.para(self.texts["none_packages"], "body")]
        rows: list[list[Cell]] = [
            [self.para(p.package_id, "cell_bold"), p.date.isoformat(), p.item, p.title,
             self.mark(p.status, STATUS_WORDS[p.status]),
             [self.para(line, "small") for line in record_history(p)]]
            for p in r.packages]
        flagged = [n for n, p in enumerate(r.packages) if p.status in ("failed", "overdue")]
        out.append(self.grid(("Package", "Date", "Item", "Job", "Status", "Records"), rows,
                             (self.id_mm, 26, 16, 36, 32, 72 - self.id_mm), flagged))
        return out

    def failing_block(self) -> list[Flowable]:
        out: list[Flowable] = [self.section(self.texts["section_failing"])]
        rows: list[list[Cell]] = []
        for p in self.report.packages:
            for r in p.failing:
                entered = entered_shown(r.entered, r.unit)
                if r.entered_temperature:
                    entered += f" at {temperature_shown(r.entered_temperature)}"
                rows.append([[self.para(p.package_id),
                              self.para(f"record #{p.latest.sequence if p.latest else ''}",
                                        "small")],
                             f"{r.id} {r.what}", entered, compared_shown(r),
                             [self.mark("fail", "FAIL"), self.para(broken_shown(r))],
                             self.para(r.basis, "small")])
        if not rows:
            return [*out, self.para(self.texts["none_failing"], "body")]
        return [*out, self.grid(("Package", "Reading", "As entered", "Compared",
                                 "Limit broken", "Source of the limit"), rows,
                                (self.id_mm, 30, 26, 26, 30, 70 - self.id_mm),
                                range(len(rows)))]

    def readings_table(self, p: PackageAudit) -> list[Flowable]:
        title = Paragraph(words(readings_heading(p)), self.style["sub"])
        lead: list[Flowable] = [title, self.para(signed_shown(p), "small"), Spacer(1, 1 * mm)]
        if p.problem:
            lead.append(self.para(problem_shown(p), "bold"))
        if not p.readings:
            return [KeepTogether([*lead, self.para(self.texts["none_readings"], "body")])]
        rows: list[list[Cell]] = []
        for r in p.readings:
            result: list[Flowable] = [self.mark(r.outcome, OUTCOME_WORDS[r.outcome])]
            if r.note:
                result.append(self.para(r.note, "small"))
            rows.append([f"{r.id} {r.what}", entered_shown(r.entered, r.unit),
                         temperature_shown(r.entered_temperature), compared_shown(r),
                         [self.para(limit_shown(r)), self.para(r.basis, "small")], result])
        flagged = [n for n, r in enumerate(p.readings) if r.outcome == "fail"]
        table = self.grid(("Reading", "As entered", "Temp.", "Compared", "Limit", "Result"),
                          rows, (34, 22, 16, 28, 38, 44), flagged)
        return [KeepTogether([*lead, table])]

    def readings_block(self) -> list[Flowable]:
        out: list[Flowable] = [self.section(self.texts["section_readings"]),
                               self.para(self.texts["readings_intro"], "small")]
        recorded = [p for p in self.report.packages if p.latest is not None]
        if not recorded:
            return [*out, self.para(self.texts["none_recorded"], "body")]
        for p in recorded:
            out += self.readings_table(p)
        return out

    def deviations_block(self) -> list[Flowable]:
        out: list[Flowable] = [self.section(self.texts["section_deviations"])]
        found = [(p, d) for p in self.report.packages for d in p.deviations]
        if not found:
            return [*out, self.para(self.texts["none_deviations"], "body")]
        rows: list[list[Cell]] = [
            [p.package_id, d.kind, d.text,
             self.mark("fail" if d.fails else "not recorded", effect_shown(d.fails))]
            for p, d in found]
        flagged = [n for n, (_, d) in enumerate(found) if d.fails]
        return [*out, self.grid(("Package", "Kind", "Deviation", "Effect"), rows,
                                (self.id_mm, 16, 126 - self.id_mm, 40), flagged)]

    def isolations_block(self) -> list[Flowable]:
        out: list[Flowable] = [self.section(self.texts["section_isolations"]),
                               self.para(self.texts["isolations_intro"], "small"),
                               Spacer(1, 1.5 * mm)]
        left_on = self.report.open_isolations
        if not left_on:
            return [*out, Table([[self.mark("passed", "NONE"),
                                  self.para(f": {self.texts['none_isolations']}", "body")]],
                                hAlign="LEFT")]
        rows: list[list[Cell]] = [
            [self.mark("failed", i.device), i.package_id, i.item, i.lock or "—", i.tag or "—",
             i.applied_by or "—", i.applied_at or "—", record_shown(i.record)]
            for i in left_on]
        widths = (40, self.id_mm, 14, 14, 14, 22, 14, 64 - self.id_mm)
        return [*out, self.grid(("Device", "Package", "Item", "Lock", "Tag", "Applied by",
                                 "at", "Record"), rows, widths, range(len(rows)))]

    def trend_block(self, trend: IrTrend) -> list[Flowable]:
        parts: list[Flowable] = [Paragraph(words(trend.element), self.style["sub"])]
        if trend.points:
            chart = trend_chart(trend, self.width, 70 * mm, MIN_TEXT_PT)
            parts += [chart_drawing(chart), Spacer(1, 1 * mm),
                      self.para(legend(trend), "small")]
        head, rule = judgement_text(trend)
        if head:
            parts += [Spacer(1, 1.5 * mm), self.para(head, "bold"), self.para(rule, "small")]
        parts += [self.para(note, "small") for note in trend.notes]
        out: list[Flowable] = [KeepTogether(parts)]
        if trend.points:
            rows: list[list[Cell]] = []
            for p in trend.points:
                compared = format_quantity(p.compared_si, trend.unit)
                if p.corrected and trend.corrected_to_c is not None:
                    compared += f" at {format_quantity(trend.corrected_to_c, '°C')}"
                rows.append([
                    p.taken_on.isoformat(),
                    [self.para(p.package_id), self.para(f"record #{p.record_sequence}",
                                                        "small")],
                    f"{p.reading_id} {p.what}"
                    + (f" {self.texts['as_found']}" if p.as_found else "")
                    + (f" {self.texts['lowest_of_test']}" if p.lowest_of_test else ""),
                    format_quantity(p.measured_si, trend.unit),
                    format_quantity(p.temperature_c, "°C") if p.temperature_c is not None
                    else "—", compared, self.mark(p.outcome, OUTCOME_WORDS[p.outcome])])
            flagged = [n for n, p in enumerate(trend.points) if p.outcome == "fail"]
            widths = (26, self.id_mm, 72 - self.id_mm, 22, 16, 24, 22)
            out += [Spacer(1, 2 * mm),
                    self.grid(("Date", "Package", "Reading", "Measured", "Temp.", "Compared",
                               "Result"), rows, widths, flagged)]
        return out

    def trends_block(self) -> list[Flowable]:
        out: list[Flowable] = [self.section(self.texts["section_trends"]),
                               self.para(self.texts["trends_intro"], "small")]
        if not self.report.trends:
            return [*out, self.para(self.texts["none_trends"], "body")]
        for trend in self.report.trends:
            out += self.trend_block(trend)
        return out

    def records_block(self) -> list[Flowable]:
        out: list[Flowable] = []
        superseded = self.report.superseded
        if superseded:
            out += [self.section(self.texts["section_superseded"]),
                    self.grid(("Record", "Package", "Verdict then", "Superseded by"),
                              [[record_shown(r), r.package_id, r.verdict,
                                f"#{r.superseded_by}"] for r in superseded],
                              (70, self.id_mm, 34, 78 - self.id_mm))]
        if self.report.unmatched:
            out += [self.section(self.texts["section_unmatched"]),
                    self.para(self.texts["unmatched_intro"], "small"), Spacer(1, 1.5 * mm),
                    self.grid(("Package", "Latest record", "Verdict"),
                              [[r.package_id, record_shown(r), r.verdict]
                               for r in self.report.unmatched], (self.id_mm, 140 - self.id_mm, 42))]
        return out

    def story(self) -> list[Flowable]:
        return [Paragraph(self.texts["title"], self.style["title"]),
                self.para(self.texts["filter"] + ".", "body"), Spacer(1, 3 * mm),
                self.integrity_box(), *self.status_block(), *self.failing_block(),
                *self.readings_block(), *self.deviations_block(), *self.isolations_block(),
                *self.trends_block(), *self.records_block()]


def _longest_word(cell: Any) -> float:
    """The widest word of a cell (points): it must fit on a line of its own."""
    if isinstance(cell, list | tuple):
        return max((_longest_word(c) for c in cell), default=0.0)
    if isinstance(cell, Mark):
        return max(cell.icon, stringWidth(cell.word, FONT_BOLD, cell.size_pt))
    if isinstance(cell, Paragraph):
        style = cell.style
        face = style.fontName
        text = re.sub(r"<[^>]+>", "", cell.text)
        if "<b>" in cell.text:
            face = FONT_BOLD
        return max((stringWidth(unescape(w), face, style.fontSize) for w in text.split()),
                   default=0.0)
    if isinstance(cell, Table):
        return 0.0  # lays itself out
    if isinstance(cell, Flowable):
        return float(cell.wrap(10_000, 10_000)[0])
    return 0.0


def _give_way(asked: Sequence[float], needs: Sequence[float],
              width: float) -> list[float] | None:
    """Column widths near ``asked`` where each is at least its ``needs``, summing to
    ``width``; None when the needs alone are wider."""
    if sum(needs) > width:
        return None
    widths = [max(a, n) for a, n in zip(asked, needs, strict=True)]
    excess = sum(widths) - width
    slack = [w - n for w, n in zip(widths, needs, strict=True)]
    if excess > 0:  # take it from the columns with room, in proportion to their room
        room = sum(slack)
        widths = [w - excess * s / room for w, s in zip(widths, slack, strict=True)]
    return widths


def render_audit_pdf(report: AuditReport, page_size: PageSize = "A4") -> bytes:
    """The audit report as a PDF (see the module docstring)."""
    return AuditPdf(report, page_size).render()
