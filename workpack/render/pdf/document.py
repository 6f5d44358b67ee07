"""What every printed document shares: page, margins, fonts, styles, running header
and footer, "Page x of y", the table grid. ``PdfDocument.render() -> bytes``."""

from __future__ import annotations

import datetime as dt
import functools
import io
from collections.abc import Iterable
from typing import ClassVar, Literal

from reportlab.lib import colors
from reportlab.lib.enums import TA_CENTER
from reportlab.lib.pagesizes import A4, letter
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfgen.canvas import Canvas
from reportlab.platypus import (
    BaseDocTemplate,
    Flowable,
    Frame,
    PageTemplate,
    Paragraph,
    TableStyle,
)

from workpack.render.figures import shortened
from workpack.render.pdf.fields import PagedCanvas
from workpack.render.pdf.flowables import KeepTogether, Table, words
from workpack.render.pdf.fonts import FONT, FONT_BOLD, MIN_TEXT_PT, register_fonts
from workpack.render.pdf.objects import faster_objects

PageSize = Literal["A4", "Letter"]
PAGE_SIZES: dict[str, tuple[float, float]] = {"A4": A4, "Letter": letter}

# --- the shared document frame ---------------------------------------------------------

class PdfDocument:
    """What every printed document shares: page, margins, fonts, running header and
    footer, "Page x of y". Subclasses give ``story()`` and the header/footer texts."""

    margin_mm: ClassVar[float] = 14.0
    header_mm: ClassVar[float] = 13.0
    footer_mm: ClassVar[float] = 15.0
    body_pt: ClassVar[float] = 10.5
    small_pt: ClassVar[float] = MIN_TEXT_PT

    def __init__(self, page_size: PageSize = "A4") -> None:
        if page_size not in PAGE_SIZES:
            raise ValueError(f"page size must be one of {', '.join(PAGE_SIZES)} "
                             f"(got {page_size!r})")
        register_fonts()
        self.page_size = PAGE_SIZES[page_size]
        self.width = self.page_size[0] - 2 * self.margin_mm * mm
        # the body frame's height: nothing placed whole may be taller (points)
        self.height = (self.page_size[1] - 2 * self.margin_mm * mm
                       - (self.header_mm + self.footer_mm) * mm)
        self.style = self.stylesheet()

    # what subclasses fill in
    document_id: str = ""
    document_title: str = ""
    created: dt.date = dt.date(2000, 1, 1)

    def story(self) -> list[Flowable]:
        raise NotImplementedError

    def header_right(self) -> str:
        return ""

    def footer_note(self) -> str:
        return ""

    # the shared parts
    def stylesheet(self) -> dict[str, ParagraphStyle]:
        body = ParagraphStyle("body", fontName=FONT, fontSize=self.body_pt,
                              leading=self.body_pt * 1.3, textColor=colors.black)
        small = ParagraphStyle("small", parent=body, fontSize=self.small_pt,
                               leading=self.small_pt * 1.25)
        return {
            "body": body,
            "small": small,
            "bold": ParagraphStyle("bold", parent=body, fontName=FONT_BOLD),
            "cell": ParagraphStyle("cell", parent=body, fontSize=10, leading=12.5),
            "cell_bold": ParagraphStyle("cell_bold", parent=body, fontName=FONT_BOLD,
                                        fontSize=10, leading=12.5),
            "head": ParagraphStyle("head", parent=body, fontName=FONT_BOLD, fontSize=9.5,
                                   leading=11.5),
            "title": ParagraphStyle("title", parent=body, fontName=FONT_BOLD, fontSize=16,
                                    leading=20, spaceAfter=3 * mm),
            "section": ParagraphStyle("section", parent=body, fontName=FONT_BOLD,
                                      fontSize=13.5, leading=17, spaceBefore=5 * mm,
                                      spaceAfter=2 * mm, keepWithNext=1),
            "sub": ParagraphStyle("sub", parent=body, fontName=FONT_BOLD, fontSize=11,
                                  leading=14, spaceBefore=3 * mm, spaceAfter=1.5 * mm,
                                  keepWithNext=1),
            "bullet": ParagraphStyle("bullet", parent=body, leftIndent=5 * mm,
                                     bulletIndent=1 * mm, spaceAfter=1 * mm),
            "signal": ParagraphStyle("signal", parent=body, fontName=FONT_BOLD, fontSize=12,
                                     leading=14, alignment=TA_CENTER),
            "signal_white": ParagraphStyle("signal_white", parent=body, fontName=FONT_BOLD,
                                           fontSize=12, leading=14, alignment=TA_CENTER,
                                           textColor=colors.white),
            "step_no": ParagraphStyle("step_no", parent=body, fontName=FONT_BOLD,
                                      fontSize=14, leading=16),
        }

    def cols(self, *widths_mm: float) -> list[float]:
        """Column widths given in mm for A4's 182 mm of text, scaled to this page."""
        total = sum(widths_mm)
        return [self.width * w / total for w in widths_mm]

    @staticmethod
    def _within(total: float, *parts: float) -> list[float]:
        """``total`` points shared in the proportions ``parts``."""
        return [total * part / sum(parts) for part in parts]

    def draw_header(self, canv: Canvas, doc: BaseDocTemplate) -> None:
        width, height = self.page_size
        left, right = self.margin_mm * mm, width - self.margin_mm * mm
        base = height - self.margin_mm * mm - 6 * mm
        # running lines cannot wrap: a long id or plant name is shortened with "…" here
        # and stands in full in the body (the job table, the record's facts)
        document_id = shortened(self.document_id, FONT_BOLD, (right - left) * 0.6, 12)
        id_width = pdfmetrics.stringWidth(document_id, FONT_BOLD, 12)
        canv.saveState()
        canv.setFillColor(colors.black)
        canv.setFont(FONT_BOLD, 12)
        canv.drawString(left, base, document_id)
        canv.setFont(FONT, 10)
        canv.drawRightString(right, base, shortened(self.header_right(), FONT,
                                                    right - left - id_width - 6 * mm, 10))
        canv.setLineWidth(1.2)
        canv.line(left, base - 2.5 * mm, right, base - 2.5 * mm)
        canv.restoreState()

    def draw_footer(self, canv: Canvas, doc: BaseDocTemplate) -> None:
        width, _ = self.page_size
        left, right = self.margin_mm * mm, width - self.margin_mm * mm
        top = self.margin_mm * mm + self.footer_mm * mm - 4 * mm
        canv.saveState()
        canv.setLineWidth(0.8)
        canv.line(left, top, right, top)
        canv.setFont(FONT, self.small_pt)
        canv.drawString(left, top - 4.5 * mm,
                        shortened(self.footer_note(), FONT, right - left, self.small_pt))
        canv.setFont(FONT_BOLD, 10)
        page_count_room = pdfmetrics.stringWidth("Page 9999 of 9999", FONT_BOLD, 10) + 6 * mm
        canv.drawString(left, top - 9.5 * mm, shortened(self.document_id, FONT_BOLD,
                                                        right - left - page_count_room, 10))
        canv.restoreState()

    def draw_page_count(self, canv: Canvas, number: int, total: int) -> None:
        width, _ = self.page_size
        right = width - self.margin_mm * mm
        top = self.margin_mm * mm + self.footer_mm * mm - 4 * mm
        canv.saveState()
        canv.setFillColor(colors.black)
        canv.setFont(FONT_BOLD, 10)
        canv.drawRightString(right, top - 9.5 * mm, f"Page {number} of {total}")
        canv.restoreState()

    def _on_page(self, canv: Canvas, doc: BaseDocTemplate) -> None:
        self.draw_header(canv, doc)
        self.draw_footer(canv, doc)

    def render(self) -> bytes:
        width, height = self.page_size
        margin = self.margin_mm * mm
        frame = Frame(margin, margin + self.footer_mm * mm, width - 2 * margin, self.height,
                      leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0, id="body")
        buffer = io.BytesIO()
        doc = BaseDocTemplate(buffer, pagesize=self.page_size, leftMargin=margin,
                              rightMargin=margin, topMargin=margin, bottomMargin=margin,
                              title=self.document_title, subject=self.document_id,
                              author="workpack", creator="workpack", invariant=1,
                              keepTogetherClass=KeepTogether,
                              pageTemplates=[PageTemplate("page", [frame],
                                                          onPage=self._on_page)])
        canvasmaker = functools.partial(PagedCanvas, finish_page=self.draw_page_count,
                                        created=self.created)
        with faster_objects():
            doc.build(self.story(), canvasmaker=canvasmaker)
        return buffer.getvalue()

    # small builders the documents share
    def section(self, title: str) -> Paragraph:
        return Paragraph(words(title), self.style["section"])

    def bullets(self, items: Iterable[str], style: str = "bullet") -> list[Flowable]:
        return [Paragraph(words(item), self.style[style], bulletText="•") for item in items]

    def notice_box(self, text: str) -> Table:
        table = Table([[Paragraph(words(text), self.style["bold"])]], colWidths=[self.width])
        table.setStyle(TableStyle([
            ("BOX", (0, 0), (-1, -1), 1.5, colors.black),
            ("BACKGROUND", (0, 0), (-1, -1), colors.Color(0.93, 0.93, 0.93)),
            ("TOPPADDING", (0, 0), (-1, -1), 2.5 * mm),
            ("BOTTOMPADDING", (0, 0), (-1, -1), 2.5 * mm),
            ("LEFTPADDING", (0, 0), (-1, -1), 3 * mm),
        ]))
        return table


GRID = [
    ("GRID", (0, 0), (-1, -1), 0.7, colors.black),
    ("VALIGN", (0, 0), (-1, -1), "TOP"),
    ("TOPPADDING", (0, 0), (-1, -1), 1.6 * mm),
    ("BOTTOMPADDING", (0, 0), (-1, -1), 1.6 * mm),
    ("LEFTPADDING", (0, 0), (-1, -1), 1.6 * mm),
    ("RIGHTPADDING", (0, 0), (-1, -1), 1.6 * mm),
]
HEAD_ROW = [("BACKGROUND", (0, 0), (-1, 0), colors.Color(0.85, 0.85, 0.85))]

