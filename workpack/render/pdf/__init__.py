"""The PDF layer: every printed document is a ``PdfDocument`` (``document``) laid out
with tables that never fail to fit (``flowables``), in the bundled faces (``fonts``);
a package's blanks are form fields (``fields``: their names, boxes and canvas);
``readings`` lays out a reading's expected value and limit; ``package`` is the work
package itself (``render_package``). The day sheet, the close-out record and the audit
report are documents of their own beside this package (``render.daysheet``,
``render.closeout``, ``render.audit_pdf``).
"""

from workpack.render.pdf.document import GRID, HEAD_ROW, PAGE_SIZES, PageSize, PdfDocument
from workpack.render.pdf.fields import (
    Blank,
    CheckBox,
    FieldBox,
    PagedCanvas,
    box_width,
    field_name,
    split_field_name,
)
from workpack.render.pdf.flowables import KeepTogether, Table, listed, words
from workpack.render.pdf.fonts import FONT, FONT_BOLD, MIN_TEXT_PT, register_fonts
from workpack.render.pdf.package import Cell, PackagePdf, render_package

__all__ = [
    "FONT",
    "FONT_BOLD",
    "GRID",
    "HEAD_ROW",
    "MIN_TEXT_PT",
    "PAGE_SIZES",
    "Blank",
    "Cell",
    "CheckBox",
    "FieldBox",
    "KeepTogether",
    "PackagePdf",
    "PageSize",
    "PagedCanvas",
    "PdfDocument",
    "Table",
    "box_width",
    "field_name",
    "listed",
    "register_fonts",
    "render_package",
    "split_field_name",
    "words",
]
