"""The blanks of a printed package as form fields: their names, the boxes drawn under
them, and the canvas that makes them page by page.

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
``instrument:<reading id>``           text    the instrument read with (its register id)
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
``final:chosen:<any name above>``     …       the one printed final-test procedure, filled
                                              for the circuit named in ``final_at``: lock,
                                              tag and dead rows numbered as the circuit's
                                              row lists them, ``reading:T<k>`` its k-th test;
                                              ``forms.chosen_final_fields`` maps each to the
                                              final test's own field
``final_at``                          text    id of the final tests done (``F4``)
``sign:technician``                   text    technician
``sign:supervisor``                   text    supervisor
``sign:date``                         text    date of sign-off
``remarks``                           text    remarks (several lines)
====================================  ======  =============================================

Check boxes hold ``/Yes`` when ticked and ``/Off`` otherwise. Each field lies over a box
drawn on the page itself, so the paper copy prints the same boxes for a pen.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfgen.canvas import Canvas
from reportlab.platypus import Flowable

from workpack.render.pdf.fonts import FIELD_FONT, FONT

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


@dataclass(frozen=True)
class Blank:
    """One blank a technician fills in, before it is laid out: a box to write in, or a
    square to tick (``tick``). Sizes in points; None takes the layout's default (a box as
    wide as its cell)."""

    parts: tuple[str | int, ...]  # its field name, in parts (``field_name(*parts)``)
    tooltip: str
    tick: bool = False
    height: float | None = None  # a tick box: its side
    width: float | None = None
    suffix: str = ""  # the unit printed after the box
    multiline: bool = False
    max_length: int = 60

    @property
    def name(self) -> str:
        return field_name(*self.parts)


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
            if self._pending_fields:  # a document without fields gets no form at all
                _reuse_appearances(self.acroForm)
            for kind, kwargs in self._pending_fields:
                getattr(self.acroForm, kind)(**kwargs)
            Canvas.showPage(self)
        Canvas.save(self)


def _reuse_appearances(form: Any) -> None:
    """Build each distinct field appearance once per document.

    reportlab draws six appearance streams for every check box and one for every text
    field, then writes only the distinct ones (it compares their text); a package has
    hundreds of fields but a handful of distinct appearances. Handing back the stream
    already built for the same arguments makes the same objects, so the same bytes."""
    for method in ("checkboxAP", "txAP"):
        build = getattr(form, method)
        if getattr(build, "reused", False):
            continue
        built: dict[str, Any] = {}

        def reused(*args: Any, _build: Any = build, _built: dict[str, Any] = built,
                   **kwargs: Any) -> Any:
            key = repr((args, sorted(kwargs.items())))
            if " at 0x" in key:  # an argument known by its address only: never reuse
                return _build(*args, **kwargs)
            if key not in _built:
                _built[key] = _build(*args, **kwargs)
            return _built[key]

        reused.reused = True  # type: ignore[attr-defined]
        setattr(form, method, reused)


def _queue_field(canv: Canvas, kind: str, **kwargs: Any) -> None:
    if isinstance(canv, PagedCanvas):
        canv.add_field(kind, **kwargs)
    else:  # a plain canvas (someone drawing one flowable): make it now
        getattr(canv.acroForm, kind)(**kwargs)


def box_width(width: float, suffix: str) -> float:
    """The box of a blank ``width`` points wide, with room after it for ``suffix`` (its
    unit, printed in 10 pt), never narrower than 8 mm."""
    suffix_w = pdfmetrics.stringWidth(suffix, FONT, 10) + 1.5 * mm if suffix else 0.0
    return max(width - suffix_w, 8 * mm)


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
        box_w = box_width(self.width, self.suffix)
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

