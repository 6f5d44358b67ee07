"""The closed-out record: ``render_closeout(package, evaluation, record) -> bytes`` (PDF).

The package as it was issued, laid out by ``PackagePdf`` itself, with every blank
filled in from the results: ``PackagePdf.blank``, which makes each blank of the package
(see ``render.pdf.fields`` for the naming scheme), is overridden to show what was
written in it, so the closed-out record and the issued package can never disagree about
layout or content. On top: the verdict in a
framed box, the record's facts and the deviations. Each reading carries its outcome as a
shape and a word (✓ in a circle PASS, ✗ in a square FAIL, a bar NOT RECORDED), its
corrected value where the limit asked for one, and the evaluation's note under its table.

No form fields are left: this is a record, not a form. Deterministic bytes; no text under
``MIN_TEXT_PT``.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Sequence
from typing import Any, ClassVar

from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.pdfgen.canvas import Canvas
from reportlab.platypus import (
    BaseDocTemplate,
    Flowable,
    Paragraph,
    Spacer,
    TableStyle,
)

from workpack.forms import CHOSEN, chosen_final_fields
from workpack.model.evaluation import Evaluation, ReadingVerdict
from workpack.model.package import FinalTest, Reading, WorkPackage
from workpack.model.results import Results
from workpack.numbers import format_quantity
from workpack.records import OUTCOME_WORDS, entered_text, is_bare_number, read_payload, utc_text
from workpack.render.figures import shortened
from workpack.render.pdf import (
    FONT,
    FONT_BOLD,
    Blank,
    Cell,
    PackagePdf,
    PageSize,
    Table,
    box_width,
    words,
)
from workpack.store import Record, package_sha256

__all__ = ["CloseoutPdf", "Mark", "render_closeout", "utc_text"]

VERDICT_WORDS = {"passed": "PASSED", "failed": "FAILED", "incomplete": "INCOMPLETE"}
# The shape each outcome, verdict and status is drawn with; the word always goes beside it.
SHAPES = {"pass": "tick", "fail": "cross", "not recorded": "bar", "recorded": "dot",
          "passed": "tick", "failed": "cross", "incomplete": "bar",
          "completed": "tick", "open": "ring", "overdue": "alert"}


class Mark(Flowable):
    """A shape and a word side by side: the outcome never rests on colour.

    Shapes: tick (✓ in a circle), cross (✗ in a heavy square), bar (—), dot, ring (empty
    circle), alert (! in a triangle). Points.
    """

    def __init__(self, shape: str, word: str, size_pt: float = 10.0) -> None:
        super().__init__()
        self.shape = shape
        self.word = word
        self.size_pt = size_pt
        self.icon = size_pt * 1.25
        self.gap = size_pt * 0.45
        self.lines = [word]
        self.below = False  # the word under the shape, not beside it (see wrap)
        self.width = self.icon + self.gap + stringWidth(word, FONT_BOLD, size_pt)
        self.height = self.icon

    def wrap(self, availWidth: float, availHeight: float) -> tuple[float, float]:
        # wrapped at spaces beside the shape; where a word is too wide to stand beside it,
        # the words go under the shape, whole; only a word wider than the cell itself (a
        # long device id) is cut over several lines
        def width(text: str) -> float:
            return stringWidth(text, FONT_BOLD, self.size_pt)

        beside = max(availWidth - self.icon - self.gap, self.size_pt)
        widest = max((width(w) for w in self.word.split()), default=0.0)
        self.below = widest > beside and widest <= availWidth
        room = availWidth if self.below else beside
        self.lines = []
        if widest <= room:
            for part in self.word.split():
                if self.lines and width(f"{self.lines[-1]} {part}") <= room:
                    self.lines[-1] += f" {part}"
                else:
                    self.lines.append(part)
        rest = "" if self.lines else self.word
        while rest:
            fits = 1
            while fits < len(rest) and width(rest[:fits + 1]) <= room:
                fits += 1
            self.lines.append(rest[:fits])
            rest = rest[fits:]
        self.lines = self.lines or [""]
        text_width = max(width(line) for line in self.lines)
        leading = self.size_pt * 1.2
        if self.below:
            self.width = max(self.icon, text_width)
            self.height = self.icon + 0.15 * self.size_pt + len(self.lines) * leading
        else:
            self.width = self.icon + self.gap + text_width
            self.height = max(self.icon, len(self.lines) * leading)
        return self.width, self.height

    def draw(self) -> None:
        canv, s = self.canv, self.icon
        c = s / 2
        canv.saveState()
        canv.translate(0, self.height - s)  # the shape beside the first line
        canv.setStrokeColor(colors.black)
        canv.setFillColor(colors.black)
        canv.setLineWidth(1.1)
        canv.setLineCap(1)
        if self.shape == "tick":
            canv.circle(c, c, c - 0.6, stroke=1, fill=0)
            path = canv.beginPath()
            path.moveTo(s * 0.27, s * 0.52)
            path.lineTo(s * 0.44, s * 0.32)
            path.lineTo(s * 0.74, s * 0.72)
            canv.setLineWidth(1.5)
            canv.drawPath(path, stroke=1, fill=0)
        elif self.shape == "cross":
            canv.setLineWidth(1.8)
            canv.rect(0.9, 0.9, s - 1.8, s - 1.8, stroke=1, fill=0)
            canv.setLineWidth(1.5)
            canv.line(s * 0.28, s * 0.28, s * 0.72, s * 0.72)
            canv.line(s * 0.28, s * 0.72, s * 0.72, s * 0.28)
        elif self.shape == "bar":
            canv.setLineWidth(1.8)
            canv.line(s * 0.15, c, s * 0.85, c)
        elif self.shape == "dot":
            canv.circle(c, c, s * 0.2, stroke=0, fill=1)
        elif self.shape == "ring":
            canv.circle(c, c, c - 0.6, stroke=1, fill=0)
        elif self.shape == "alert":
            path = canv.beginPath()
            path.moveTo(0.6, 0.8)
            path.lineTo(s - 0.6, 0.8)
            path.lineTo(c, s - 0.4)
            path.close()
            canv.drawPath(path, stroke=1, fill=0)
            canv.setFont(FONT_BOLD, self.size_pt * 0.9)
            canv.drawCentredString(c, s * 0.16, "!")
        canv.setFont(FONT_BOLD, self.size_pt)
        if self.below:  # the words on lines of their own under the shape
            for number, line in enumerate(self.lines):
                canv.drawString(0, -self.size_pt * (1.05 + 1.2 * number), line)
            canv.restoreState()
            return
        first = (s - self.size_pt * 0.72) / 2
        for number, line in enumerate(self.lines):
            canv.drawString(self.icon + self.gap, first - number * self.size_pt * 1.2, line)
        canv.restoreState()


class FilledBox(Flowable):
    """A blank of the package as written in: the same box, the entry inside it. Grows
    downwards when the entry needs more lines than the box has. Points."""

    def __init__(self, paragraph: Paragraph, suffix: str, height: float,
                 width: float | None, top: bool = False) -> None:
        super().__init__()
        self.paragraph = paragraph
        self.top = top  # text from the top (several lines) rather than centred
        self.suffix = suffix
        self.box_height = height
        self.fixed_width = width
        self.pad = 1.5 * mm
        self.width = width or 0.0
        self.height = height

    def _box_width(self) -> float:
        return box_width(self.width, self.suffix)

    def wrap(self, availWidth: float, availHeight: float) -> tuple[float, float]:
        self.width = self.fixed_width if self.fixed_width is not None else availWidth
        _, text_h = self.paragraph.wrap(self._box_width() - 2 * self.pad, availHeight)
        self.height = max(self.box_height, text_h + 2 * self.pad)
        return self.width, self.height

    def split(self, availWidth: float, availHeight: float) -> list[Flowable]:
        """An entry longer than the space left goes on in a second box (long remarks);
        the unit stays with the first part, where the value starts."""
        self.wrap(availWidth, availHeight)
        if self.height <= availHeight:
            return [self]
        parts = self.paragraph.split(self._box_width() - 2 * self.pad,
                                     availHeight - 2 * self.pad)
        if len(parts) != 2:
            return []
        first = FilledBox(parts[0], self.suffix, min(self.box_height, availHeight),
                          self.fixed_width, top=True)
        rest = FilledBox(parts[1], "", 0.0, self.fixed_width, top=True)
        return [first, rest]

    def draw(self) -> None:
        canv = self.canv
        box_w = self._box_width()
        canv.saveState()
        canv.setStrokeColor(colors.black)
        canv.setLineWidth(0.9)
        canv.rect(0, 0, box_w, self.height, stroke=1, fill=0)
        canv.restoreState()
        _, text_h = self.paragraph.wrap(box_w - 2 * self.pad, self.height)
        centring = 0.0 if self.top else max(0.0, (self.box_height - 2 * self.pad - text_h) / 2)
        self.paragraph.drawOn(canv, self.pad, self.height - self.pad - text_h - centring)
        if self.suffix:  # after the entry, so text extraction reads "253 V"
            canv.saveState()
            canv.setFillColor(colors.black)
            canv.setFont(FONT, 10)
            canv.drawString(box_w + 1.5 * mm, self.height - self.box_height + 2.5 * mm,
                            self.suffix)
            canv.restoreState()


class TickedBox(Flowable):
    """A tick box of the package as filled in: ticked (✓) or left empty. Points."""

    def __init__(self, ticked: bool, size: float) -> None:
        super().__init__()
        self.ticked = ticked
        self.width = self.height = self.size = size

    def wrap(self, availWidth: float, availHeight: float) -> tuple[float, float]:
        return self.size, self.size

    def draw(self) -> None:
        canv, s = self.canv, self.size
        canv.saveState()
        canv.setStrokeColor(colors.black)
        canv.setLineWidth(1.4)
        canv.rect(0, 0, s, s, stroke=1, fill=0)
        if self.ticked:
            canv.setLineWidth(2.0)
            canv.setLineCap(1)
            path = canv.beginPath()
            path.moveTo(s * 0.2, s * 0.52)
            path.lineTo(s * 0.42, s * 0.26)
            path.lineTo(s * 0.82, s * 0.8)
            canv.drawPath(path, stroke=1, fill=0)
        canv.restoreState()


class CloseoutPdf(PackagePdf):
    """The closed-out record of one package: its story with the blanks filled in."""

    footer_mm: ClassVar[float] = 20.0  # one more footer line: the record and its hash

    def __init__(self, package: WorkPackage, evaluation: Evaluation, record: Record | None,
                 results: Results | None = None, page_size: PageSize = "A4") -> None:
        super().__init__(package, page_size)
        if evaluation.package_id != package.id:
            raise ValueError(f"the evaluation is of {evaluation.package_id!r}, not of the "
                             f"package given ({package.id!r})")
        if record is not None and record.package_id != package.id:
            raise ValueError(f"record {record.sequence} answers {record.package_id!r}, not "
                             f"the package given ({package.id!r})")
        if results is None and record is not None:
            results = read_payload(record).results
        self.evaluation = evaluation
        self.record = record
        self.results = results
        self.verdicts = {v.id: v for v in evaluation.readings}
        self.chosen = self._chosen_final()
        self.document_title = f"Close-out: {package.title}"
        self.created = (record.recorded_at.astimezone(dt.UTC).date() if record is not None
                        else results.completed_on if results is not None
                        and results.completed_on is not None else package.date)

    def header_right(self) -> str:
        return f"{self.package.plant} · {self.package.date.isoformat()} · CLOSE-OUT RECORD"

    def record_line(self) -> str:
        r = self.record
        if r is None:
            return "Not yet in a records store: no record number, no chain hash."

        def line(name: str) -> str:
            return (f"Record {r.sequence} · recorded by {name} at "
                    f"{utc_text(r.recorded_at)} · chain {r.chain_sha256[:16]}")

        # a footer line cannot wrap: a long name ends in "…" here, and the record's
        # facts at the top give it in full
        room = self.width - stringWidth(line(""), FONT, self.small_pt)
        return line(shortened(r.recorded_by, FONT, max(room, 20 * mm), self.small_pt))

    def draw_footer(self, canv: Canvas, doc: BaseDocTemplate) -> None:
        super().draw_footer(canv, doc)
        top = self.margin_mm * mm + self.footer_mm * mm - 4 * mm
        canv.saveState()
        canv.setFillColor(colors.black)
        canv.setFont(FONT, self.small_pt)
        canv.drawString(self.margin_mm * mm, top - 14.5 * mm, self.record_line())
        canv.restoreState()

    # -- the top of the record
    def verdict_box(self) -> Table:
        e = self.evaluation
        tally = {outcome: sum(1 for v in e.readings if v.outcome == outcome)
                 for outcome in OUTCOME_WORDS}
        counted = ", ".join(f"{n} {OUTCOME_WORDS[o]}" for o, n in tally.items() if n)
        failing = sum(1 for d in e.deviations if d.fails)
        lines = [f"Readings: {counted or 'none in this package'}.",
                 f"Deviations: {len(e.deviations)}"
                 + (f", {failing} of them failing the job." if failing else ".")]
        if e.locks_not_removed:
            lines.append("Locks never recorded as removed: " + ", ".join(e.locks_not_removed))
        signed = (f"Technician: {e.completed_by or 'not signed'}. "
                  f"Supervisor: {e.supervisor or 'not signed'}.")
        body = [Mark(SHAPES[e.verdict], f"VERDICT: {VERDICT_WORDS.get(e.verdict, e.verdict)}",
                     16.0), Spacer(1, 2 * mm),
                *[Paragraph(words(text), self.style["body"]) for text in (*lines, signed)]]
        table = Table([[body]], colWidths=[self.width])
        table.setStyle(TableStyle([
            ("BOX", (0, 0), (-1, -1), 3.0, colors.black),
            ("TOPPADDING", (0, 0), (-1, -1), 3 * mm),
            ("BOTTOMPADDING", (0, 0), (-1, -1), 3 * mm),
            ("LEFTPADDING", (0, 0), (-1, -1), 3.5 * mm),
        ]))
        return table

    def record_block(self) -> list[Flowable]:
        cell, label = self.style["cell"], self.style["cell_bold"]
        r = self.record
        if r is None:
            return [Paragraph("Not yet in a records store: this close-out has no record "
                              "number and no chain hash.", self.style["bold"])]
        issued = package_sha256(self.package)
        matches = ("the package shown (its SHA-256 matches)" if issued == r.package_sha256
                   else "ANOTHER VERSION of this package: the hashes differ")
        rows = [("Record", f"{r.sequence}" + (f", correcting record {r.supersedes}"
                                              if r.supersedes is not None else "")),
                ("Recorded by", r.recorded_by), ("Recorded at", utc_text(r.recorded_at)),
                ("Chain hash", r.chain_sha256), ("Answers", matches)]
        table = Table([[Paragraph(words(k), label), Paragraph(words(v), cell)] for k, v in rows],
                      colWidths=self.cols(34, 148), repeat_when_cut=(0,))
        table.setStyle(TableStyle([("GRID", (0, 0), (-1, -1), 0.7, colors.black),
                                   ("VALIGN", (0, 0), (-1, -1), "TOP")]))
        return [table]

    def deviations_block(self) -> list[Flowable]:
        out: list[Flowable] = [self.section("Deviations")]
        if not self.evaluation.deviations:
            return [*out, Paragraph("None: every reading, step, lock and signature is as the "
                                    "package asks.", self.style["body"])]
        rows = [[Mark("cross" if d.fails else "bar", "FAILS" if d.fails else "INCOMPLETE"),
                 Paragraph(words(d.text), self.style["cell"])]
                for d in self.evaluation.deviations]
        table = Table(rows, colWidths=self.cols(36, 146), repeat_when_cut=(0,))
        table.setStyle(TableStyle([("GRID", (0, 0), (-1, -1), 0.7, colors.black),
                                   ("VALIGN", (0, 0), (-1, -1), "MIDDLE")]))
        return [*out, table]

    def story(self) -> list[Flowable]:
        title, *package_story = super().story()
        head: list[Flowable] = [
            Paragraph(words(f"Close-out record: {self.package.title}"), self.style["title"]),
            self.verdict_box(), Spacer(1, 3 * mm), *self.record_block(),
            *self.deviations_block(), self.section("The package as filled in")]
        return [*head, *package_story]

    # -- filling the package's blanks
    def blank(self, blank: Blank) -> Cell:
        """The blank as it was filled in: a ticked or empty square, the entry in its box,
        or a reading with its outcome."""
        parts = tuple(str(part) for part in blank.parts)
        if parts == ("final_at",):
            return self._filled_box(blank, self.chosen.id if self.chosen else None,
                                    strong=True)
        if parts[:2] == ("final", CHOSEN):  # the one procedure: the circuit's own blanks
            targets = self._chosen_targets(parts[2:])
            if blank.tick:
                return TickedBox(bool(targets) and all(self._ticked(t) for t in targets),
                                 self.blank_height(blank))
            if not targets:
                return self._filled_box(blank, None)
            parts = targets[0]
        if blank.tick:
            return TickedBox(self._ticked(parts), self.blank_height(blank))
        if parts[0] == "reading":
            return self._reading_cell(blank, self.verdicts.get(parts[1]))
        text, strong = self._written(parts)
        return self._filled_box(blank, text, strong=strong)

    def reading_notes(self, readings: Sequence[Reading]) -> list[Flowable]:
        """The evaluation's note on each reading that has one, under its table."""
        notes = [v for v in (self.verdicts.get(r.id) for r in readings) if v and v.note]
        return [Paragraph(f"<b>{words(v.id)}</b>: {words(v.note)}", self.style["small"])
                for v in notes]

    def _chosen_final(self) -> FinalTest | None:
        """The final tests this record filled in: the first with anything written."""
        r = self.results
        if r is None:
            return None
        recorded = {i for i, m in r.readings.items() if m.value is not None}
        for final in self.package.final_tests:
            record = r.final_tests.get(final.id)
            ids = {x.id for s in (*final.steps, *final.restoration) for x in s.readings}
            if (record is not None and record.anything_filled_in()) or ids & recorded:
                return final
        return None

    def _chosen_targets(self, parts: tuple[str, ...]) -> list[tuple[str, ...]]:
        """The chosen final test's own blanks that one blank of the procedure stands for."""
        if self.chosen is None:
            return []
        targets = chosen_final_fields(self.chosen).get(parts, ())
        return [t if t[0] in ("reading", "temperature") else ("final", self.chosen.id, *t)
                for t in targets]

    def _ticked(self, parts: tuple[str, ...]) -> bool:
        r: Any = self.results
        if r is None:
            return False
        if parts[0] == "final":  # a final test's own blanks: read from its record
            r, parts = r.final_tests.get(parts[1]), parts[2:]
            if r is None:
                return False
        if parts[0] == "tester":
            return r.tester_proven_before if parts[1] == "before" else r.tester_proven_after
        done = r.steps if parts[0] == "step" else r.restoration
        step = done.get(int(parts[1]))
        return bool(step and step.done)

    def _filled_box(self, blank: Blank, text: str | None, strong: bool = False) -> FilledBox:
        shown = "—" if text is None or not text.strip() else text
        # "12 MΩ" carries its unit; an empty blank needs none
        suffix = blank.suffix if text is not None and is_bare_number(shown) else ""
        markup = f"<b>{words(shown)}</b>" if strong else words(shown)
        return FilledBox(Paragraph(markup, self.style["cell"]), suffix,
                         self.blank_height(blank), blank.width, top=blank.multiline)

    def _written(self, parts: tuple[str, ...]) -> tuple[str | None, bool]:
        """What was written in the blank named by ``parts``; and whether to stress it."""
        r, e = self.results, self.evaluation
        kind = parts[0]
        if kind == "sign":
            if parts[1] == "technician":
                return (r.completed_by if r else e.completed_by), False
            if parts[1] == "supervisor":
                return (r.supervisor if r else e.supervisor), False
            on = r.completed_on if r else None
            return (on.isoformat() if on else None), False
        if r is None:
            return None, False
        if kind == "remarks":
            return r.remarks, False
        if kind == "ground_found_at":
            return r.ground_found_at, False
        prefix = ""
        scope: Any = r
        if kind == "final":  # a final test's own blanks: read from its record
            prefix, scope, parts = f"{parts[1]}:", r.final_tests.get(parts[1]), parts[2:]
            kind = parts[0]
            if scope is None:
                return None, False
        if kind == "locks_left_on":
            return scope.locks_left_on, bool(scope.locks_left_on)
        if kind == "temperature":
            measured = r.readings.get(parts[1])
            return entered_text(measured.temperature if measured else None), False
        if kind == "dead":
            return (entered_text(scope.proving_dead.get(int(parts[1]), {}).get(parts[2])),
                    False)
        if kind in ("lock", "tag"):
            lock = scope.isolation.get(parts[1])
            if parts[2] == "number":
                return (lock.lock if kind == "lock" else lock.tag) if lock else None, False
            if parts[2] == "removed_by" and f"{prefix}{parts[1]}" in e.locks_not_removed:
                left_on = any(x.startswith(f"{prefix}{parts[1]}: ")
                              for x in getattr(e, "locks_left_on", ()))
                return ("LEFT ON" if left_on else "NOT REMOVED"), True
            return (getattr(lock, parts[2]) if lock else None), False
        return None, False

    def _reading_cell(self, blank: Blank, verdict: ReadingVerdict | None) -> list[Flowable]:
        if verdict is None:
            return [self._filled_box(blank, None)]
        measured = self.results.readings.get(verdict.id) if self.results else None
        if measured is not None:
            text = entered_text(measured.value)
        elif verdict.measured_si is not None:  # no results given: the evaluation's value
            text = format_quantity(verdict.measured_si, verdict.unit)
        else:
            text = None
        cell: list[Flowable] = [self._filled_box(blank, text), Spacer(1, 1.2 * mm),
                                Mark(SHAPES[verdict.outcome], OUTCOME_WORDS[verdict.outcome])]
        if (verdict.corrected and verdict.compared_si is not None
                and verdict.corrected_to_c is not None):
            cell.append(Paragraph(
                f"corrected {words(format_quantity(verdict.compared_si, verdict.unit))} at "
                f"{words(format_quantity(verdict.corrected_to_c, '°C'))}", self.style["small"]))
        return cell


def render_closeout(package: WorkPackage, evaluation: Evaluation, record: Record | None,
                    *, results: Results | None = None, page_size: PageSize = "A4") -> bytes:
    """The closed-out record of ``package`` as a PDF.

    ``results`` are taken from the record's payload when a record is given; pass them
    here before a job is recorded (the footer then says it has no record yet).
    """
    return CloseoutPdf(package, evaluation, record, results, page_size).render()
