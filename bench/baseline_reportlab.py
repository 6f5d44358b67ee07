"""Baseline for the renderer benchmark: bare reportlab, none of workpack's classes.

Lays out a given number of pages of tables and text comparable to a work package page
(a heading, a few paragraphs, a bordered 12-row table of wrapped cells, running header
and footer) with the same embedded DejaVu fonts, so the ratio measures what our
renderer adds. Run alone: .venv/bin/python bench/baseline_reportlab.py [documents]
"""

from __future__ import annotations

import io
import sys
import time
from pathlib import Path

from reportlab.lib import colors
from reportlab.lib.pagesizes import A4
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.platypus import PageBreak, Paragraph, SimpleDocTemplate, Table, TableStyle

FONTS = Path(__file__).resolve().parent.parent / "workpack" / "fonts"
REGULAR, BOLD = "BaselineSans", "BaselineSans-Bold"

_registered = False


def register() -> None:
    global _registered
    if not _registered:
        pdfmetrics.registerFont(TTFont(REGULAR, str(FONTS / "DejaVuSans.ttf")))
        pdfmetrics.registerFont(TTFont(BOLD, str(FONTS / "DejaVuSans-Bold.ttf")))
        _registered = True


def render_pages(pages: int, label: str) -> bytes:
    """``pages`` pages of headed text and a 12-row table each; PDF bytes."""
    register()
    body = ParagraphStyle("b", fontName=REGULAR, fontSize=10.5, leading=13.5)
    head = ParagraphStyle("h", fontName=BOLD, fontSize=13.5, leading=17, spaceAfter=6)
    cell = ParagraphStyle("c", fontName=REGULAR, fontSize=10, leading=12.5)
    story = []
    for page in range(1, pages + 1):
        story.append(Paragraph(f"Section {page} of {label}", head))
        for n in range(3):
            story.append(Paragraph(
                f"Paragraph {n}: measure each phase to earth at the terminal box and write "
                "the value in the box, in the unit shown; 254 V ± 25.4 V, at least 5 MΩ, "
                "temperature corrected to 40 °C (IEEE Std 43 (2013), 12.3).", body))
        rows = [[Paragraph(f"r{r} c{c}: phase {'ABC'[r % 3]} to earth, {r * c} V", cell)
                 for c in range(6)] for r in range(12)]
        table = Table(rows, colWidths=[30 * mm] * 6)
        table.setStyle(TableStyle([("GRID", (0, 0), (-1, -1), 0.7, colors.black),
                                   ("VALIGN", (0, 0), (-1, -1), "TOP")]))
        story += [table, PageBreak()]
    story.pop()

    def decorate(canv, doc):  # type: ignore[no-untyped-def]
        canv.saveState()
        canv.setFont(BOLD, 12)
        canv.drawString(14 * mm, A4[1] - 20 * mm, label)
        canv.setFont(REGULAR, 9)
        canv.drawString(14 * mm, 15 * mm, f"{label} page {doc.page}")
        canv.restoreState()

    buffer = io.BytesIO()
    doc = SimpleDocTemplate(buffer, pagesize=A4, invariant=1, leftMargin=14 * mm,
                            rightMargin=14 * mm, topMargin=27 * mm, bottomMargin=29 * mm)
    doc.build(story, onFirstPage=decorate, onLaterPages=decorate)
    return buffer.getvalue()


def main(documents: int = 100, pages: int = 4) -> None:
    started = time.perf_counter()
    for number in range(documents):
        render_pages(pages, f"DOC-{number:03d}")
    elapsed = time.perf_counter() - started
    print(f"baseline: {documents} documents × {pages} pages in {elapsed:.2f} s")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100)
