"""The printed work package: ``render_package(package) -> bytes`` (a PDF with form fields).

Layout only: every number arrives computed in the package (SI) and is shown in the
reading's ``unit`` to three significant figures. Same package, same bytes: reportlab's
invariant mode, the creation date taken from the package date, no random ids.

Form fields
-----------
Every blank the technician fills in is also an AcroForm field, so a filled PDF can be
read back (pypdf ``PdfReader.get_fields()``). A field name is a ``:``-joined list of
parts; inside a part ``%``, ``.`` and ``:`` are written ``%25``, ``%2E`` and ``%3A``
(PDF field names may not contain a period, and reading ids such as ``S2.R1`` do), so
``reading:S2%2ER1`` is the measured value of reading ``S2.R1``. Use ``field_name`` to
build a name and ``split_field_name`` to take one apart.

====================================  ======  =============================================
name                                  kind    what goes in it
====================================  ======  =============================================
``reading:<reading id>``              text    measured value, in the reading's unit
``temperature:<reading id>``          text    temperature in °C (only where it is needed)
``step:<n>:done``                     check   work step n done
``restore:<n>:done``                  check   restoration step n done
``lock:<device>:number``              text    number of the lock put on the device
``tag:<device>:number``               text    number of the tag hung on the device
``lock:<device>:applied_by``          text    who applied lock and tag
``lock:<device>:applied_at``          text    when (time as written)
``lock:<device>:removed_by``          text    who removed them (in the restoration step that
                                              removes that lock)
``lock:<device>:removed_at``          text    when
``dead:<i>:<pair>``                   text    measured voltage, proving-dead point i (from 1),
                                              pair as given ("A-B", "A-E")
``tester:before``                     check   tester proven on a known live source before
``tester:after``                      check   and after the absence-of-voltage test
``locks_left_on``                     text    why the locks stay on (restoration's gate step)
``ground_found_at``                   text    element where a searched ground was found
``final:<id>:<any name above>``       …       the same blanks inside final test ``<id>``
                                              (``final:F2:lock:CB-7:number``); readings keep
                                              their own ids (``reading:F2%2ES2%2ER1``)
``sign:technician``                   text    technician
``sign:supervisor``                   text    supervisor
``sign:date``                         text    date of sign-off
``remarks``                           text    remarks (several lines)
====================================  ======  =============================================

Check boxes hold ``/Yes`` when ticked and ``/Off`` otherwise. Each field lies over a box
drawn on the page itself, so the paper copy prints the same boxes for a pen.
"""

from __future__ import annotations

import copy
import datetime as dt
import functools
import io
from collections.abc import Callable, Iterable, Sequence
from importlib import resources
from typing import Any, ClassVar, Literal
from xml.sax.saxutils import escape

from reportlab.lib import colors
from reportlab.lib.enums import TA_CENTER
from reportlab.lib.pagesizes import A4, letter
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.pdfgen.canvas import Canvas
from reportlab.platypus import (
    BaseDocTemplate,
    Flowable,
    Frame,
    PageTemplate,
    Paragraph,
    Spacer,
    TableStyle,
)
from reportlab.platypus import KeepTogether as PlatypusKeepTogether
from reportlab.platypus import Table as PlatypusTable

from workpack.model.package import (
    Caution,
    FinalTest,
    IsolationPoint,
    Limit,
    ProvingDead,
    Reading,
    SignalWord,
    Step,
    WorkPackage,
)
from workpack.numbers import format_number, format_quantity, format_volts
from workpack.render.figures import (
    fit_sketch,
    phasor_drawing,
    shortened,
    sketch_legend,
    sketch_width_needed,
)

__all__ = [
    "CheckBox",
    "FONT",
    "FONT_BOLD",
    "FieldBox",
    "KeepTogether",
    "MIN_TEXT_PT",
    "PackagePdf",
    "PageSize",
    "PagedCanvas",
    "PdfDocument",
    "Table",
    "field_name",
    "format_number",
    "format_quantity",
    "listed",
    "register_fonts",
    "render_package",
    "split_field_name",
    "words",
]

PageSize = Literal["A4", "Letter"]
PAGE_SIZES: dict[str, tuple[float, float]] = {"A4": A4, "Letter": letter}

FONT = "DejaVuSans"
FONT_BOLD = "DejaVuSans-Bold"
MIN_TEXT_PT = 9.0  # nothing on the page is smaller: it is read in poor light
FIELD_FONT = "Helvetica"  # form fields may only name one of the 14 standard fonts


@functools.cache
def register_fonts() -> None:
    """Register the bundled DejaVu faces with reportlab, once per process."""
    fonts = resources.files("workpack") / "fonts"
    for name, filename in ((FONT, "DejaVuSans.ttf"), (FONT_BOLD, "DejaVuSans-Bold.ttf")):
        with resources.as_file(fonts / filename) as path:
            pdfmetrics.registerFont(TTFont(name, str(path)))
    # no oblique face is bundled: <i> falls back to the upright one
    pdfmetrics.registerFontFamily(FONT, normal=FONT, bold=FONT_BOLD, italic=FONT,
                                  boldItalic=FONT_BOLD)


# --- form-field names -------------------------------------------------------------------

_ESCAPES = (("%", "%25"), (".", "%2E"), (":", "%3A"))


def field_name(*parts: str | int) -> str:
    """``field_name("reading", "S2.R1") == "reading:S2%2ER1"``; see the module docstring."""
    encoded = []
    for part in parts:
        text = str(part)
        for raw, code in _ESCAPES:
            text = text.replace(raw, code)
        encoded.append(text)
    return ":".join(encoded)


def split_field_name(name: str) -> tuple[str, ...]:
    """The parts of a field name: ``("reading", "S2.R1")`` from ``"reading:S2%2ER1"``."""
    parts = []
    for text in name.split(":"):
        for raw, code in reversed(_ESCAPES):
            text = text.replace(code, raw)
        parts.append(text)
    return tuple(parts)


# --- numbers ----------------------------------------------------------------------------

def limit_text(limit: Limit, unit: str) -> str:
    if limit.low is not None and limit.high is not None:
        return (f"{format_quantity(limit.low, unit)} to {format_quantity(limit.high, unit)}")
    if limit.low is not None:
        return f"at least {format_quantity(limit.low, unit)}"
    if limit.high is not None:
        return f"at most {format_quantity(limit.high, unit)}"
    return "no bound"


def expected_text(reading: Reading) -> str:
    if reading.expected is None:
        return "—"
    text = format_quantity(reading.expected, reading.unit)
    if reading.tolerance is not None:
        text += f" ± {format_quantity(reading.tolerance, reading.unit)}"
    return text


def listed(ids: Sequence[str], at_most: int, whole_list_in: str) -> str:
    """Ids joined by commas; past ``at_most`` the rest are counted and the reader is sent
    to where the whole list is (a rounds log can give one package ten thousand findings)."""
    if len(ids) <= at_most:
        return ", ".join(ids)
    return (", ".join(ids[:at_most]) + f" and {len(ids) - at_most:,} more "
            f"(all {len(ids):,} are listed in {whole_list_in})")


def words(text: str) -> str:
    """Package text made safe for reportlab's paragraph markup; line breaks kept."""
    return escape(text).replace("\n", "<br/>")


# --- tables that never fail to fit -----------------------------------------------------

class Table(PlatypusTable):
    """reportlab's table that can also split inside a row, so a cell of any length flows
    on to the next page instead of stopping the document with a ``LayoutError``.

    Rows stay whole wherever they can: a row is cut only when nothing stands above the
    table on its page (moving it on would not help) or when the row is taller than a whole
    page (then it starts filling the page it is on). The header rows (``repeatRows``) are
    repeated on every page the table reaches; the cells of the columns in
    ``repeat_when_cut`` (labels, signal words, ids) are repeated beside each part of a
    cut row, so a page that starts inside a row still says what the row is. Use it for
    every table in a document.
    """

    def __init__(self, data: Any, *args: Any, repeat_when_cut: Sequence[int] = (),
                 **kwargs: Any) -> None:
        kwargs.setdefault("splitInRow", 1)  # the smallest part of a row that may be cut (pt)
        super().__init__(data, *args, **kwargs)
        self.repeat_when_cut = tuple(repeat_when_cut)

    def split(self, availWidth: float, availHeight: float) -> list[Flowable]:
        parts = self._parts(availWidth, availHeight)
        for part in parts:  # reportlab makes the parts without our settings
            if isinstance(part, Table):
                part.repeat_when_cut = self.repeat_when_cut
        return parts

    def _parts(self, availWidth: float, availHeight: float) -> list[Flowable]:
        self._calc(availWidth, availHeight)
        heights = list(self._rowHeights)
        headers = sum(heights[:self._repeat_count()])
        reached, stop = 0.0, len(heights)  # stop: the first row that does not fit here
        for index, height in enumerate(heights):
            reached += height
            if reached > availHeight:
                stop = index
                break
        frame = getattr(self, "_frame", None)  # set by the frame; absent inside a cell
        never_fits = (stop < len(heights) and frame is not None
                      and headers + heights[stop] > frame._aH)
        if never_fits:  # fill this page with the start of that row
            return self._cut_inside_row(availHeight, stop) or list(
                self._splitRows(availHeight, doInRowSplit=0))
        whole_rows = list(self._splitRows(availHeight, doInRowSplit=0))
        if whole_rows or (frame is not None and not frame._atTop) or stop >= len(heights):
            return whole_rows  # an empty list moves the table to a fresh page
        return self._cut_inside_row(availHeight, stop)

    def _cut_inside_row(self, availHeight: float, row: int) -> list[Flowable]:
        # a row taller than a page is read from its top: centring it would leave its
        # parts floating (and reportlab's cut of a centred row loses track of its height)
        self._cellStyles[row] = [style.copy() for style in self._cellStyles[row]]
        for style in self._cellStyles[row]:
            style.valign = "TOP"
        labels = {column: self._cellvalues[row][column] for column in self.repeat_when_cut}
        parts = self._splitRows(availHeight, doInRowSplit=1)
        if len(parts) == 2 and not any(_has_content(cell) for cell in parts[0]._cellvalues[-1]):
            return []  # nothing of the cut row would go on this page: no progress
        if len(parts) == 2:
            parts[1]._repeat_labels(parts[1]._repeat_count(), labels)
        return list(parts)

    def _repeat_labels(self, row: int, labels: dict[int, Any]) -> None:
        """Put ``labels`` (column -> cell) into the empty cells of ``row``, made tall
        enough for them."""
        for column, value in labels.items():
            if _has_content(self._cellvalues[row][column]) or not _has_content(value):
                continue
            cell = [copy.copy(part) for part in value] if isinstance(value, list | tuple) \
                else copy.copy(value)
            self._cellvalues[row][column] = cell
            if isinstance(cell, list):
                style = self._cellStyles[row][column]
                needed = (self._listCellGeom(cell, self._colWidths[column], style)[1]
                          + style.topPadding + style.bottomPadding)
                if self._argH is not None and self._argH[row] is not None \
                        and needed > self._argH[row]:
                    self._argH[row] = needed

    def _repeat_count(self) -> int:
        rows = self.repeatRows
        return rows if isinstance(rows, int) else max(rows, default=-1) + 1


class KeepTogether(PlatypusKeepTogether):
    """reportlab's group kept on one page; a group taller than a whole page cannot be, so it
    starts where it is when a third of the page is left, rather than leaving that third
    blank. Also used for the groups reportlab makes of a heading and what follows it."""

    def split(self, aW: float, aH: float) -> list[Flowable]:
        if getattr(self, "_wrapInfo", None) != (aW, aH):
            self.wrap(aW, aH)
        frame = getattr(self, "_frame", None)
        if frame is not None and self._H > frame._aH and aH >= frame._aH / 3:
            return list(self._content)
        return list(super().split(aW, aH))


def _has_content(cell: Any) -> bool:
    if isinstance(cell, str):
        return bool(cell)
    if isinstance(cell, list | tuple):
        return any(_has_content(part) for part in cell)
    return cell is not None


# --- canvas and flowables for fields ----------------------------------------------------

FieldCall = tuple[str, dict[str, Any]]


class PagedCanvas(Canvas):
    """Keeps every page until the end so each can say "Page x of y".

    The form fields are made then as well, page by page, so each field's page
    reference is its real page. ``finish_page(canvas, number, total)`` draws the page
    count; ``created`` becomes the PDF creation date.
    """

    def __init__(self, *args: Any, finish_page: Callable[[Canvas, int, int], None],
                 created: dt.date, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self._finish_page = finish_page
        self._kept_pages: list[dict[str, Any]] = []
        self._pending_fields: list[FieldCall] = []
        self._field_names: set[str] = set()
        stamp = f"D:{created:%Y%m%d}000000+00'00'"
        self.setDateFormatter(lambda *_: stamp)

    def add_field(self, kind: str, **kwargs: Any) -> None:
        """Queue an acroForm ``kind`` ("textfield", "checkbox") at absolute coordinates."""
        name = kwargs["name"]
        if name in self._field_names:
            raise ValueError(f"form field {name!r} would appear twice: ids in the package "
                             "must be unique (reading ids, step numbers, device names)")
        self._field_names.add(name)
        self._pending_fields.append((kind, kwargs))

    def showPage(self) -> None:
        self._kept_pages.append(dict(self.__dict__))
        self._pending_fields = []
        self._startPage()

    def save(self) -> None:
        total = len(self._kept_pages)
        for number, state in enumerate(self._kept_pages, start=1):
            # reportlab numbers annotations document-wide: keep the counter running
            annotations = self.__dict__["_annotationCount"]
            self.__dict__.update(state)
            self.__dict__["_annotationCount"] = annotations
            self._finish_page(self, number, total)
            for kind, kwargs in self._pending_fields:
                getattr(self.acroForm, kind)(**kwargs)
            Canvas.showPage(self)
        Canvas.save(self)


def _queue_field(canv: Canvas, kind: str, **kwargs: Any) -> None:
    if isinstance(canv, PagedCanvas):
        canv.add_field(kind, **kwargs)
    else:  # a plain canvas (someone drawing one flowable): make it now
        getattr(canv.acroForm, kind)(**kwargs)


class FieldBox(Flowable):
    """A box to write in, with a text field over it; optional unit after the box.

    ``width`` None takes the width offered (a table cell). Points throughout.
    """

    def __init__(self, name: str, tooltip: str, height: float = 8 * mm,
                 width: float | None = None, suffix: str = "", multiline: bool = False,
                 max_length: int = 60) -> None:
        super().__init__()
        self.name = name
        self.tooltip = tooltip
        self.box_height = height
        self.fixed_width = width
        self.suffix = suffix
        self.multiline = multiline
        self.max_length = max_length
        self.width = width or 0.0
        self.height = height

    def wrap(self, availWidth: float, availHeight: float) -> tuple[float, float]:
        self.width = self.fixed_width if self.fixed_width is not None else availWidth
        return self.width, self.height

    def draw(self) -> None:
        canv = self.canv
        suffix_w = (pdfmetrics.stringWidth(self.suffix, FONT, 10) + 1.5 * mm
                    if self.suffix else 0.0)
        box_w = max(self.width - suffix_w, 8 * mm)
        canv.saveState()
        canv.setFillColor(colors.white)
        canv.setStrokeColor(colors.black)
        canv.setLineWidth(0.9)
        canv.rect(0, 0, box_w, self.box_height, stroke=1, fill=1)
        if self.suffix:
            canv.setFillColor(colors.black)
            canv.setFont(FONT, 10)
            canv.drawString(box_w + 1.5 * mm, 2.5 * mm, self.suffix)
        canv.restoreState()
        x, y = canv.absolutePosition(0, 0)
        _queue_field(canv, "textfield", name=self.name, tooltip=self.tooltip, x=x, y=y,
                     width=box_w, height=self.box_height, value="", fontName=FIELD_FONT,
                     fontSize=11, textColor=colors.black, fillColor=None, borderColor=None,
                     borderWidth=0, maxlen=self.max_length,
                     fieldFlags="multiline" if self.multiline else "")


class CheckBox(Flowable):
    """A square to tick, with a check-box field over it. Points."""

    def __init__(self, name: str, tooltip: str, size: float = 6.5 * mm) -> None:
        super().__init__()
        self.name = name
        self.tooltip = tooltip
        self.width = self.height = self.size = size

    def wrap(self, availWidth: float, availHeight: float) -> tuple[float, float]:
        return self.size, self.size

    def draw(self) -> None:
        canv = self.canv
        canv.saveState()
        canv.setFillColor(colors.white)
        canv.setStrokeColor(colors.black)
        canv.setLineWidth(1.4)
        canv.rect(0, 0, self.size, self.size, stroke=1, fill=1)
        canv.restoreState()
        x, y = canv.absolutePosition(0, 0)
        _queue_field(canv, "checkbox", name=self.name, tooltip=self.tooltip, x=x, y=y,
                     size=self.size, checked=False, buttonStyle="check",
                     textColor=colors.black, fillColor=None, borderColor=None,
                     borderWidth=0, fieldFlags="")


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


_GRID = [
    ("GRID", (0, 0), (-1, -1), 0.7, colors.black),
    ("VALIGN", (0, 0), (-1, -1), "TOP"),
    ("TOPPADDING", (0, 0), (-1, -1), 1.6 * mm),
    ("BOTTOMPADDING", (0, 0), (-1, -1), 1.6 * mm),
    ("LEFTPADDING", (0, 0), (-1, -1), 1.6 * mm),
    ("RIGHTPADDING", (0, 0), (-1, -1), 1.6 * mm),
]
_HEAD_ROW = [("BACKGROUND", (0, 0), (-1, 0), colors.Color(0.85, 0.85, 0.85))]


# --- the package ------------------------------------------------------------------------

class PackagePdf(PdfDocument):
    """One work package, in the order the job is done: what and why, hazards, figures,
    isolation, proving dead, steps, acceptance, restoration, sign-off."""

    field_height_mm: ClassVar[float] = 8.5
    figure_gap_mm: ClassVar[float] = 4.0
    sketch_reserve_mm: ClassVar[float] = 55.0  # headings and notes around the sketch
    listed_at_most: ClassVar[int] = 30  # ids in one cell; the rest are counted

    def __init__(self, package: WorkPackage, page_size: PageSize = "A4") -> None:
        super().__init__(page_size)
        self.package = package
        self.document_id = package.id
        self.document_title = package.title
        self.created = package.date
        self._section_no = 0

    def header_right(self) -> str:
        return f"{self.package.plant} · {self.package.date.isoformat()}"

    def footer_note(self) -> str:
        return self.package.notice

    def numbered(self, title: str) -> Paragraph:
        self._section_no += 1
        return self.section(f"{self._section_no}  {title}")

    def story(self) -> list[Flowable]:
        self._section_no = 0
        parts: list[Flowable] = [Paragraph(words(self.package.title), self.style["title"])]
        parts += self.job_block()
        parts += self.hazard_block()
        parts += self.figures()
        before = [s for s in self.package.steps if s.before_isolation]
        parts += self.steps_block(before, "Before the isolation", "step")
        parts += self.isolation_block()
        parts += self.proving_dead_block()
        parts += self.steps_block([s for s in self.package.steps if not s.before_isolation],
                                  "Work steps", "step")
        for final in self.package.final_tests:
            parts += self.final_test_block(final)
        parts += self.acceptance_block()
        parts += self.steps_block(self.package.restoration, "Restoration", "restore")
        parts += self.sign_off_block()
        return parts

    # -- final tests of a search: each a complete isolation of its own
    def final_test_block(self, final: FinalTest) -> list[Flowable]:
        scope = ("final", final.id)
        lead: list[Flowable] = [
            self.numbered(final.title),
            Paragraph(f"<b>{words(final.condition)}</b>", self.style["body"]),
            Spacer(1, 1.5 * mm)]
        out: list[Flowable] = [KeepTogether([*lead, *self.cautions(final.cautions[:1])])]
        out += self.cautions(final.cautions[1:])
        before = [s for s in final.steps if s.before_isolation]
        out += [KeepTogether(self.step_parts(step, "step", scope)) for step in before]
        out += self.isolation_table(final.isolation, final.isolation_gaps, final.stored_energy,
                                    scope, self.sub(f"{final.id} isolation: open, lock and tag "
                                                    "in this order"), final.restoration)
        out += self.proving_dead_points(final.proving_dead, scope,
                                        self.sub(f"{final.id} prove dead at the point of work"))
        rest = [s for s in final.steps if not s.before_isolation]
        out += self.step_group(rest, self.sub(f"{final.id} tests"), "step", scope)
        out += self.step_group(final.restoration, self.sub(f"{final.id} restoration"),
                               "restore", scope)
        return out

    def sub(self, title: str) -> Paragraph:
        return Paragraph(words(title), self.style["sub"])

    # -- what and why
    def job_block(self) -> list[Flowable]:
        p = self.package
        cell, label = self.style["cell"], self.style["cell_bold"]

        def pair(name: str, value: str) -> list[Paragraph]:
            return [Paragraph(words(name), label), Paragraph(words(value), cell)]

        origin = [f"rule {p.origin.rule}"]
        if p.origin.findings:
            origin.append("findings " + listed(p.origin.findings, self.listed_at_most,
                                               f"the package's file {p.id}.json"))
        if p.origin.routine:
            origin.append(f"routine {p.origin.routine}")
        rows = [
            pair("Package", p.id) + pair("Date", p.date.isoformat()),
            pair("Plant", p.plant) + pair("Priority",
                                          f"{p.priority} (1 = most urgent): {p.priority_reason}"),
            pair("Item", p.item_label) + pair("System", p.system or "not given"),
            pair("Duration", f"{format_number(p.duration_h)} h") + pair("Crew", str(p.crew)),
            pair("Job kind", p.job_kind.replace("_", " "))
            + pair("Permits", ", ".join(p.permits) or "none listed"),
            pair("Origin", "; ".join(origin)) + ["", ""],
        ]
        table = Table(rows, colWidths=self.cols(24, 67, 24, 67), repeat_when_cut=(0, 2))
        table.setStyle(TableStyle([*_GRID, ("SPAN", (1, 5), (3, 5)),
                                   ("BOX", (0, 0), (-1, -1), 1.4, colors.black)]))
        return [self.numbered("The job"), table]

    # -- hazards
    def caution_box(self, caution: Caution) -> Table:
        """Signal word in a box whose border tells the words apart without colour:
        DANGER double rule and reversed word, WARNING heavy rule, CAUTION dashed rule,
        NOTICE thin rule."""
        word = caution.signal_word
        reversed_word = word is SignalWord.danger
        word_cell = Paragraph(word.value, self.style["signal_white" if reversed_word
                                                     else "signal"])
        table = Table([[word_cell, Paragraph(words(caution.text), self.style["cell"])]],
                      colWidths=self.cols(30, 152), repeat_when_cut=(0,))
        style: list[tuple[Any, ...]] = [
            ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
            ("TOPPADDING", (0, 0), (-1, -1), 2 * mm),
            ("BOTTOMPADDING", (0, 0), (-1, -1), 2 * mm),
            ("LEFTPADDING", (0, 0), (-1, -1), 2.5 * mm),
        ]
        if word is SignalWord.danger:
            style += [("BACKGROUND", (0, 0), (0, 0), colors.black),
                      ("BOX", (0, 0), (-1, -1), 1.2, colors.black, None, None, None, 2, 1.6),
                      ("LINEAFTER", (0, 0), (0, 0), 1.2, colors.black)]
        elif word is SignalWord.warning:
            style += [("BOX", (0, 0), (-1, -1), 2.6, colors.black),
                      ("LINEAFTER", (0, 0), (0, 0), 2.6, colors.black)]
        elif word is SignalWord.caution:
            style += [("BOX", (0, 0), (-1, -1), 1.3, colors.black, None, (4, 2.5)),
                      ("LINEAFTER", (0, 0), (0, 0), 1.3, colors.black, None, (4, 2.5))]
        else:
            style += [("BOX", (0, 0), (-1, -1), 0.6, colors.black),
                      ("LINEAFTER", (0, 0), (0, 0), 0.6, colors.black)]
        table.setStyle(TableStyle(style))
        return table

    def cautions(self, cautions: Sequence[Caution]) -> list[Flowable]:
        out: list[Flowable] = []
        for caution in cautions:
            out += [self.caution_box(caution), Spacer(1, 1.8 * mm)]
        return out

    def hazard_block(self) -> list[Flowable]:
        p = self.package
        out: list[Flowable] = [self.numbered("Hazards and protection")]
        out += self.cautions(p.cautions)
        if p.hazard_facts:
            out.append(Paragraph("Facts about this system", self.style["sub"]))
            out += self.bullets(p.hazard_facts)
        if p.approach is not None:
            a = p.approach
            cell, bold = self.style["cell"], self.style["cell_bold"]
            rows = [
                [Paragraph(f"Approach boundaries (table entered at {format_volts(a.entered_at_v)})",
                           bold), ""],
                [Paragraph("Limited approach, exposed movable conductor", cell),
                 Paragraph(words(a.limited_movable), bold)],
                [Paragraph("Limited approach, exposed fixed circuit part", cell),
                 Paragraph(words(a.limited_fixed), bold)],
                [Paragraph("Restricted approach", cell), Paragraph(words(a.restricted), bold)],
                [Paragraph("Source", cell), Paragraph(words(a.source), cell)],
            ]
            table = Table(rows, colWidths=self.cols(110, 72))
            table.setStyle(TableStyle([*_GRID, *_HEAD_ROW, ("SPAN", (0, 0), (1, 0))]))
            out += [Spacer(1, 2 * mm), KeepTogether([table])]
        if p.ppe:
            out.append(Paragraph("Personal protective equipment", self.style["sub"]))
            out += self.bullets(p.ppe)
        out += [Spacer(1, 3 * mm), self.notice_box(p.notice)]
        return out

    # -- figures
    def phasor_notes(self) -> list[Paragraph]:
        ph = self.package.phasor
        if ph is None:
            return []
        readings = ", ".join(f"{label} {format_volts(ph.readings_v[label])}"
                             for label in ph.sequence if label in ph.readings_v)
        notes = [f"Source {format_volts(ph.line_voltage_v)} line to line, sequence "
                 f"{'-'.join(ph.sequence)}.", f"Measured to earth: {readings}."]
        if ph.grounded_phase:
            notes.append(f"Grounded phase: {ph.grounded_phase}.")
        if ph.earth_point_v is None:
            notes.append("Earth point not located: no lines drawn from it.")
        else:
            notes.append("Heavy lines from E (earth) to each phase: its voltage to earth. "
                         "N: the source neutral.")
        return [Paragraph(words(n), self.style["small"]) for n in notes]

    def figures(self) -> list[Flowable]:
        """Phasor diagram and sketch side by side when the sketch fits half the width;
        otherwise the phasor diagram with its notes beside it, the sketch below."""
        p = self.package
        if p.phasor is None and p.sketch is None:
            return []
        gap = self.figure_gap_mm * mm
        half = (self.width - gap) / 2
        sketch_needs = (sketch_width_needed(p.sketch, FONT, FONT_BOLD)
                        if p.sketch is not None else 0.0)
        side_by_side = p.phasor is not None and p.sketch is not None and sketch_needs <= half
        phasor_width = half if side_by_side else min(half, 90 * mm)
        heading = self.numbered("Figures")
        phasor: list[Flowable] = []
        if p.phasor is not None:
            phasor = [Paragraph("Phasor diagram", self.style["sub"]),
                      phasor_drawing(p.phasor, phasor_width, FONT, FONT_BOLD, format_volts)]
        sketch: list[Flowable] = []
        if p.sketch is not None:
            widths = (half, half) if side_by_side else (half, self.width)
            # room for the figure headings and the notes under the drawing
            fitted = fit_sketch(p.sketch, widths, self.height - self.sketch_reserve_mm * mm,
                                FONT, FONT_BOLD)
            sketch = [Paragraph("One-line sketch", self.style["sub"]), fitted.drawing,
                      Spacer(1, 1 * mm),
                      *[Paragraph(words(n), self.style["small"])
                        for n in (*sketch_legend(), *fitted.notes)]]
        if side_by_side:
            table = Table([[[*phasor, Spacer(1, 1 * mm), *self.phasor_notes()], sketch]],
                          colWidths=[half + gap, half], hAlign="LEFT")
        elif phasor:
            table = Table([[phasor, [Spacer(1, 9 * mm), *self.phasor_notes()]]],
                          colWidths=[phasor_width + gap, self.width - phasor_width - gap],
                          hAlign="LEFT")
        else:
            return [KeepTogether([heading, *sketch])]
        table.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP"),
                                   ("LEFTPADDING", (0, 0), (-1, -1), 0),
                                   ("RIGHTPADDING", (0, 0), (-1, -1), 0),
                                   ("RIGHTPADDING", (0, 0), (0, 0), gap)]))
        out: list[Flowable] = [KeepTogether([heading, table])]
        if sketch and not side_by_side:
            out.append(KeepTogether(sketch))
        return out

    # -- isolation
    def isolation_rows(self, point: IsolationPoint, scope: tuple[str, ...] = (),
                       removal_step: int | None = None) -> Table:
        """One isolation point: lock and tag numbers, who applied them and when; who
        removed them too, unless the restoration has a step of its own for that."""
        cell, bold = self.style["cell"], self.style["cell_bold"]
        device = f"<b>{words(point.device)}</b><br/>{words(point.device_kind.replace('_', ' '))}"
        if point.location:
            device += f"<br/>{words(point.location)}"
        if point.already_open:
            device += "<br/><b>Normally open: lock it open</b>"
        cuts = words(point.cuts)
        if point.how:
            cuts = f"<b>Set and lock:</b> {words(point.how)}<br/>{cuts}"
        h = self.field_height_mm * mm

        def box(kind: str, what: str, part: str) -> FieldBox:
            return FieldBox(field_name(*scope, kind, point.device, part),
                            f"{point.device}: {what}", height=h)

        widths = self.cols(10, 50, 52, 20, 25, 25)
        head = self.style["head"]
        applied = [Paragraph("Locked by", head), box("lock", "applied by", "applied_by"),
                   Paragraph("time", head), box("lock", "applied at", "applied_at")]
        if removal_step is None:
            blanks = Table([[*applied, Paragraph("Removed by", head),
                             box("lock", "removed by", "removed_by"),
                             Paragraph("time", head),
                             box("lock", "removed at", "removed_at")]],
                           colWidths=self._within(sum(widths[1:]) - 3.2 * mm,
                                                  24, 32, 11, 19, 26, 32, 11, 19))
        else:
            blanks = Table([[*applied, Paragraph("Removed in the restoration, step "
                                                 f"{removal_step}", head)]],
                           colWidths=self._within(sum(widths[1:]) - 3.2 * mm,
                                                  24, 44, 11, 30, 65))
        blanks.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                                    ("LEFTPADDING", (0, 0), (-1, -1), 0),
                                    ("RIGHTPADDING", (0, 0), (-1, -1), 1.5 * mm),
                                    ("TOPPADDING", (0, 0), (-1, -1), 0),
                                    ("BOTTOMPADDING", (0, 0), (-1, -1), 0)]))
        rows = [
            [Paragraph(str(point.order), self.style["step_no"]),
             Paragraph(device, cell), Paragraph(cuts, cell),
             Paragraph(format_volts(point.voltage_v), bold),
             FieldBox(field_name(*scope, "lock", point.device, "number"),
                      f"{point.device}: lock number", height=h),
             FieldBox(field_name(*scope, "tag", point.device, "number"),
                      f"{point.device}: tag number", height=h)],
            ["", blanks, "", "", "", ""],
        ]
        table = Table(rows, colWidths=widths)
        table.setStyle(TableStyle([*_GRID, ("SPAN", (1, 1), (5, 1)),
                                   ("SPAN", (0, 0), (0, 1)),
                                   ("BOX", (0, 0), (-1, -1), 1.4, colors.black)]))
        return table

    def isolation_block(self) -> list[Flowable]:
        p = self.package
        return self.isolation_table(p.isolation, p.isolation_gaps, p.stored_energy, (),
                                    self.numbered("Isolation: open, lock and tag in this "
                                                  "order"), p.restoration)

    def isolation_table(self, isolation: Sequence[IsolationPoint], gaps: Sequence[str],
                        stored_energy: Sequence[str], scope: tuple[str, ...],
                        heading: Flowable, restoration: Sequence[Step]) -> list[Flowable]:
        out: list[Flowable] = [heading]
        removed_in = {d: s.number for s in restoration if s.kind == "remove_lock"
                      for d in s.devices}
        if isolation:
            head = Table([[Paragraph(t, self.style["head"]) for t in
                           ("#", "Device, kind, place", "What it cuts or stops", "Voltage",
                            "Lock no.", "Tag no.")]],
                         colWidths=self.cols(10, 50, 52, 20, 25, 25))
            head.setStyle(TableStyle([*_GRID, *_HEAD_ROW,
                                      ("BOX", (0, 0), (-1, -1), 1.4, colors.black)]))
            rows = [self.isolation_rows(point, scope, removed_in.get(point.device))
                    for point in sorted(isolation, key=lambda point: point.order)]
            # a heading never ends a page alone: reportlab's keepWithNext does not reach
            # into a KeepTogether, so the heading goes inside it
            out = [KeepTogether([*out, head, rows[0]]), *rows[1:]]
        else:
            out.append(Paragraph("No isolation points are listed in this package.",
                                 self.style["bold"]))
        if gaps:
            out.append(Paragraph("Supplies no lock can cut", self.style["sub"]))
            out += self.cautions([Caution(signal_word=SignalWord.danger, text=gap)
                                  for gap in gaps])
        if stored_energy:
            out.append(Paragraph("Stored energy", self.style["sub"]))
            out += self.bullets(stored_energy)
        return out

    # -- proving dead
    def tester_check(self, when: Literal["before", "after"],
                     scope: tuple[str, ...] = ()) -> Table:
        text = ("Tester proven on a known live source <b>before</b> the test"
                if when == "before" else
                "Tester proven again on the known live source <b>after</b> the test")
        table = Table([[CheckBox(field_name(*scope, "tester", when), f"tester proven {when}"),
                        Paragraph(text, self.style["body"])]],
                      colWidths=[10 * mm, self.width - 10 * mm], hAlign="LEFT")
        table.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                                   ("LEFTPADDING", (0, 0), (-1, -1), 0)]))
        return table

    def proving_dead_table(self, index: int, point: ProvingDead,
                           scope: tuple[str, ...] = ()) -> list[Flowable]:
        head = Paragraph(f"<b>Point {index}: {words(point.where)}</b>, voltage class "
                         f"{format_volts(point.voltage_v)}. Expect 0 V on every pair.",
                         self.style["body"])
        out: list[Flowable] = [head, Spacer(1, 1.5 * mm)]
        per_row = 6
        h = self.field_height_mm * mm
        for start in range(0, len(point.pairs), per_row):
            chunk = point.pairs[start:start + per_row]
            pad = [""] * (per_row - len(chunk))
            rows: list[list[Any]] = [
                [Paragraph("Pair", self.style["head"])]
                + [Paragraph(words(pair), self.style["cell_bold"]) for pair in chunk] + pad,
                [Paragraph("Expected", self.style["cell"])]
                + [Paragraph("0 V", self.style["cell"]) for _ in chunk] + pad,
                [Paragraph("Measured", self.style["cell"])]
                + [FieldBox(field_name(*scope, "dead", index, pair),
                            f"point {index}, {pair}: volts",
                            height=h, suffix="V") for pair in chunk] + pad,
            ]
            table = Table(rows, colWidths=self.cols(26, *[26] * per_row), hAlign="LEFT")
            style = [*_GRID, ("BACKGROUND", (0, 0), (len(chunk), 0),
                                colors.Color(0.85, 0.85, 0.85)),
                     ("VALIGN", (0, 2), (0, 2), "MIDDLE")]
            if pad:
                style.append(("GRID", (len(chunk) + 1, 0), (-1, -1), 0, colors.white))
            table.setStyle(TableStyle(style))
            out += [table, Spacer(1, 2 * mm)]
        return out

    def proving_dead_block(self) -> list[Flowable]:
        return self.proving_dead_points(self.package.proving_dead, (),
                                        self.numbered("Prove dead at the point of work"))

    def proving_dead_points(self, proving_dead: Sequence[ProvingDead],
                            scope: tuple[str, ...], heading: Flowable) -> list[Flowable]:
        out: list[Flowable] = [heading]
        if not proving_dead:
            out.append(Paragraph("No absence-of-voltage test is listed in this package.",
                                 self.style["bold"]))
            return out
        # the tester check stays with the first point, the second one with the last
        points = [self.proving_dead_table(index, point, scope)
                  for index, point in enumerate(proving_dead, start=1)]
        points[0] = [self.tester_check("before", scope), Spacer(1, 2 * mm), *points[0]]
        points[-1] = [*points[-1], self.tester_check("after", scope)]
        out[0:1] = [KeepTogether([out[0], *points[0]])]
        out += [KeepTogether(group) for group in points[1:]]
        return out

    # -- steps and readings
    def reading_rows(self, readings: Sequence[Reading]) -> Table:
        cell, small = self.style["cell"], self.style["small"]
        with_temperature = any(r.needs_temperature for r in readings)
        h = self.field_height_mm * mm
        heads = ["Reading", "Expected", "Limit and its source", "Measured"]
        if with_temperature:
            heads.append("Temp.")
        rows: list[list[Any]] = [[Paragraph(t, self.style["head"]) for t in heads]]
        for r in readings:
            expected: list[Flowable] = [Paragraph(words(expected_text(r)), cell)]
            if r.basis:
                expected.append(Paragraph(words(r.basis), small))
            limit: list[Flowable] = []
            if r.limit is not None:
                limit.append(Paragraph(f"<b>{words(limit_text(r.limit, r.unit))}</b>", cell))
                if r.limit.temperature_corrected_to_c is not None:
                    limit.append(Paragraph(
                        "temperature corrected to "
                        f"{format_quantity(r.limit.temperature_corrected_to_c, '°C')}", cell))
                limit.append(Paragraph(words(r.limit.basis), small))
                if not r.acceptance:
                    limit.append(Paragraph("<b>As found: recorded, not judged.</b>", cell))
            else:
                limit.append(Paragraph("—", cell))
            temperature: Flowable | str = ""
            if r.needs_temperature:
                temperature = FieldBox(field_name("temperature", r.id),
                                       f"{r.id}: temperature, °C", height=h, suffix="°C")
            row: list[Any] = [
                Paragraph(f"<b>{words(r.id)}</b> {words(r.what)}", cell),
                expected, limit,
                FieldBox(field_name("reading", r.id), f"{r.id}: {r.what}, {r.unit}",
                         height=h, suffix=r.unit),
            ]
            rows.append([*row, temperature] if with_temperature else row)
        widths = (self.cols(42, 32, 50, 33, 25) if with_temperature
                  else self.cols(46, 38, 64, 34))
        table = Table(rows, colWidths=widths, repeatRows=1)
        table.setStyle(TableStyle([*_GRID, *_HEAD_ROW]))
        return table

    def step_parts(self, step: Step, kind: str,
                   scope: tuple[str, ...] = ()) -> list[Flowable]:
        box = CheckBox(field_name(*scope, kind, step.number, "done"),
                       f"{'restoration ' if kind == 'restore' else ''}step {step.number} done")
        text = words(step.text)
        if step.search_outcome is not None:
            outcome = "not found" if step.search_outcome == "not_found" else "found"
            text = f"<b>Only if the ground was {outcome}:</b> {text}"
        line = Table([[box, Paragraph(str(step.number), self.style["step_no"]),
                       Paragraph(text, self.style["body"])]],
                     colWidths=self.cols(10, 12, 160))
        line.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP"),
                                  ("LEFTPADDING", (0, 0), (-1, -1), 0),
                                  ("TOPPADDING", (0, 0), (-1, -1), 0.5 * mm),
                                  ("LINEABOVE", (0, 0), (-1, 0), 0.7, colors.black)]))
        parts: list[Flowable] = [Spacer(1, 1.5 * mm), line]
        if step.kind == "remove_lock" and step.devices:
            parts += [Spacer(1, 1.5 * mm), self.removal_blanks(step.devices[0], scope)]
        if step.kind == "gate":
            parts += [Spacer(1, 1.5 * mm), self.labelled_box(
                "Locks left on because", field_name(*scope, "locks_left_on"),
                "why every lock stays on")]
        if step.cautions:
            parts.append(Spacer(1, 1.5 * mm))
            parts += self.cautions(step.cautions)
        if step.readings:
            parts += [Spacer(1, 1.5 * mm), self.reading_rows(step.readings)]
        parts.append(Spacer(1, 2 * mm))
        return parts

    def steps_block(self, steps: Sequence[Step], title: str, kind: str) -> list[Flowable]:
        if not steps:
            return []
        return self.step_group(steps, self.numbered(title), kind, ())

    def step_group(self, steps: Sequence[Step], heading: Flowable, kind: str,
                   scope: tuple[str, ...]) -> list[Flowable]:
        if not steps:
            return []
        first, *rest = steps
        lead = [heading,
                Paragraph("Tick each box when the step is done; write each reading in its "
                          "box, in the unit shown.", self.style["small"])]
        out: list[Flowable] = [KeepTogether([*lead, *self.step_parts(first, kind, scope)])]
        out += [KeepTogether(self.step_parts(step, kind, scope)) for step in rest]
        return out

    def removal_blanks(self, device: str, scope: tuple[str, ...]) -> Table:
        """Who removed the lock and tag of ``device``, and when: filled in at the step."""
        h = self.field_height_mm * mm
        head = self.style["head"]
        row = [Paragraph("Removed by", head),
               FieldBox(field_name(*scope, "lock", device, "removed_by"),
                        f"{device}: removed by", height=h),
               Paragraph("time", head),
               FieldBox(field_name(*scope, "lock", device, "removed_at"),
                        f"{device}: removed at", height=h)]
        table = Table([row], colWidths=self.cols(22, 40, 10, 28), hAlign="RIGHT")
        table.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                                   ("LEFTPADDING", (0, 0), (-1, -1), 0),
                                   ("RIGHTPADDING", (0, 0), (-1, -1), 1.5 * mm)]))
        return table

    def labelled_box(self, label: str, name: str, tooltip: str) -> Table:
        table = Table([[Paragraph(words(label), self.style["head"]),
                        FieldBox(name, tooltip, height=self.field_height_mm * mm)]],
                      colWidths=self.cols(42, 118), hAlign="RIGHT")
        table.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                                   ("LEFTPADDING", (0, 0), (-1, -1), 0)]))
        return table

    def acceptance_block(self) -> list[Flowable]:
        if not self.package.acceptance:
            return []
        return [self.numbered("Acceptance criteria"), *self.bullets(self.package.acceptance)]

    # -- sign-off
    def sign_off_block(self) -> list[Flowable]:
        h = self.field_height_mm * mm
        label = self.style["cell_bold"]
        rows = [
            [Paragraph("Technician (name, signature)", label),
             FieldBox(field_name("sign", "technician"), "technician", height=h)],
            [Paragraph("Supervisor (name, signature)", label),
             FieldBox(field_name("sign", "supervisor"), "supervisor", height=h)],
            [Paragraph("Date", label), FieldBox(field_name("sign", "date"), "date", height=h,
                                                width=50 * mm)],
            *([[Paragraph("Ground found at (element id)", label),
                FieldBox(field_name("ground_found_at"), "ground found at", height=h)]]
              if self.package.job_kind in ("locate_ground", "clear_second_ground") else []),
            [Paragraph("Remarks", label),
             FieldBox(field_name("remarks"), "remarks", height=30 * mm, multiline=True,
                      max_length=2000)],
        ]
        table = Table(rows, colWidths=self.cols(50, 132), repeat_when_cut=(0,))
        table.setStyle(TableStyle([*_GRID, ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                                   ("BOX", (0, 0), (-1, -1), 1.4, colors.black)]))
        return [KeepTogether([self.numbered("Sign-off"), table])]


def render_package(package: WorkPackage, page_size: PageSize = "A4") -> bytes:
    """The package as a PDF with form fields (see the module docstring for their names)."""
    return PackagePdf(package, page_size).render()
