"""The faces every printed document uses, and the smallest size anything is printed in."""

from __future__ import annotations

import functools
from importlib import resources

from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont

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

