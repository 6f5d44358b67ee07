"""The printed work package: ``render_package(package) -> bytes`` (a PDF with form
fields, named as ``render.pdf.fields`` says).

Layout only: every number arrives computed in the package (SI) and is shown in the
reading's ``unit`` to three significant figures. Same package, same bytes: reportlab's
invariant mode, the creation date taken from the package date, no random ids. Every
blank the technician fills in is made by ``PackagePdf.blank``, which the close-out
record overrides to show what was written in it.
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Sequence
from typing import Any, ClassVar, Literal, TypeAlias

from reportlab.lib import colors
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.platypus import CondPageBreak, Flowable, Paragraph, Spacer, TableStyle

from workpack.competence import job_needs
from workpack.forms import CHOSEN, FINAL_PROCEDURE
from workpack.model.package import (
    Caution,
    FinalTest,
    IsolationPoint,
    ProvingDead,
    Reading,
    SignalWord,
    Step,
    StepKind,
    WorkPackage,
)
from workpack.numbers import format_number, format_quantity, format_volts
from workpack.render.figures import (
    fit_sketch,
    phasor_drawing,
    sketch_legend,
    sketch_width_needed,
)
from workpack.render.pdf.document import GRID, HEAD_ROW, PageSize, PdfDocument
from workpack.render.pdf.fields import Blank, CheckBox, FieldBox
from workpack.render.pdf.flowables import (
    KeepTogether,
    Table,
    content_widths,
    listed,
    words,
)
from workpack.render.pdf.fonts import FONT, FONT_BOLD
from workpack.render.pdf.readings import expected_text, limit_text
from workpack.render.search_tree import LEAST_ROWS as TREE_LEAST_ROWS
from workpack.render.search_tree import ROW_PT as TREE_ROW_PT
from workpack.render.search_tree import search_tree, tree_legend
from workpack.search_wording import (
    FINAL_PROCEDURE_TEXT,
    FINAL_TESTS_TITLE,
    final_tests_once,
    goto_cell,
    search_table_note,
)

# What a table cell holds: a flowable, or several one under the other.
Cell: TypeAlias = "Flowable | list[Flowable]"


# the dense tables (search, final tests): less padding, the smallest print size
TIGHT_SIDE_MM = 0.75  # between a cell's text and its rule, left and right
TIGHT = [("TOPPADDING", (0, 0), (-1, -1), 0.8 * mm),
         ("BOTTOMPADDING", (0, 0), (-1, -1), 0.8 * mm),
         ("LEFTPADDING", (0, 0), (-1, -1), TIGHT_SIDE_MM * mm),
         ("RIGHTPADDING", (0, 0), (-1, -1), TIGHT_SIDE_MM * mm)]


# --- the package ------------------------------------------------------------------------

class PackagePdf(PdfDocument):
    """One work package, in the order the job is done: what and why, hazards, figures,
    isolation, proving dead, steps, acceptance, restoration, sign-off (where a package
    isolates nothing, its isolation and proving dead sections say so before the
    figures)."""

    field_height_mm: ClassVar[float] = 8.5
    tick_mm: ClassVar[float] = 6.5
    row_tick_mm: ClassVar[float] = 5.0  # a tick box in a row of a dense table
    figure_gap_mm: ClassVar[float] = 4.0
    sketch_reserve_mm: ClassVar[float] = 55.0  # headings and notes around the sketch
    phasor_alone_mm: ClassVar[float] = 70.0  # its notes beside it, the sketch below
    listed_at_most: ClassVar[int] = 30  # ids in one cell; the rest are counted
    remarks_mm: ClassVar[float] = 18.0  # three handwritten lines

    def __init__(self, package: WorkPackage, page_size: PageSize = "A4") -> None:
        super().__init__(page_size)
        self.package = package
        self.document_id = package.id
        self.document_title = package.title
        self.created = package.date
        self._section_no = 0
        self._hint_said = False

    def stylesheet(self) -> dict[str, ParagraphStyle]:
        style = super().stylesheet()
        style["small_bold"] = ParagraphStyle("small_bold", parent=style["small"],
                                             fontName=FONT_BOLD)
        # a step's text: the body's size, lines a little closer (the rule above each
        # step sets the steps apart)
        style["step"] = ParagraphStyle("step", parent=style["body"],
                                       leading=self.body_pt * 1.2)
        return style

    def header_right(self) -> str:
        return f"{self.package.plant} · {self.package.date.isoformat()}"

    def footer_note(self) -> str:
        return self.package.notice

    def blank(self, blank: Blank) -> Cell:
        """Every blank of the package is made here: a form field over a box to write in,
        or over a square to tick. The close-out record shows what was written instead."""
        if blank.tick:
            return CheckBox(blank.name, blank.tooltip, size=self.blank_height(blank))
        return FieldBox(blank.name, blank.tooltip, height=self.blank_height(blank),
                        width=blank.width, suffix=blank.suffix, multiline=blank.multiline,
                        max_length=blank.max_length)

    def blank_height(self, blank: Blank) -> float:
        """A blank's height (a tick box's side) in points."""
        if blank.height is not None:
            return blank.height
        return (self.tick_mm if blank.tick else self.field_height_mm) * mm

    def numbered(self, title: str) -> Paragraph:
        self._section_no += 1
        return self.section(f"{self._section_no}  {title}")

    def story(self) -> list[Flowable]:
        self._section_no = 0
        self._hint_said = False
        parts: list[Flowable] = [Paragraph(words(self.package.title), self.style["title"])]
        parts += self.job_block()
        parts += self.hazard_block()
        before = [s for s in self.package.steps if s.before_isolation]
        work = [s for s in self.package.steps if not s.before_isolation]
        if before or not self.isolates_nothing():
            parts += self.figures()  # the lock points are on the sketch: before the locks
            parts += self.steps_block(before, "Before the isolation", "step")
            parts += self.isolation_block()
            parts += self.proving_dead_block()
            parts += self.work_steps_block(work)
        elif any(s.decision is not None for s in work):
            # a search works on live feeders and its final tests lock their own circuit:
            # that said first, the figures stand right before the search that uses them
            parts += self.nothing_isolated_block()
            parts += self.work_steps_block(work, self.figures(numbered=False))
        else:
            parts += self.nothing_isolated_block()
            parts += self.figures()
            parts += self.work_steps_block(work)
        parts += self.final_tests_block(self.package.final_tests)
        parts += self.acceptance_block()
        parts += self.steps_block(self.package.restoration, "Restoration", "restore")
        parts += self.sign_off_block()
        return parts

    def isolates_nothing(self) -> bool:
        """The package's isolation and proving dead sections say only that there are
        none: no lock, no lock still on, no supply or stored energy to warn of, no place
        to prove dead."""
        p = self.package
        return not (p.isolation or p.locks_on or p.isolation_gaps or p.stored_energy
                    or p.proving_dead)

    def nothing_isolated_block(self) -> list[Flowable]:
        """The isolation and the proving dead of a package that has neither, as one
        statement."""
        text = ("No isolation points are listed in this package, and no absence-of-voltage "
                "test.")
        if self.package.final_tests:
            text += (" The final tests below lock and prove dead the one circuit the search "
                     "ends at.")
        return [self.numbered("Isolation and proving dead"),
                Paragraph(words(text), self.style["bold"])]

    # -- work steps, a search among them as a decision table and a tree
    def work_steps_block(self, steps: Sequence[Step],
                         figures: Sequence[Flowable] = ()) -> list[Flowable]:
        """The steps; a search among them as a decision table and a tree, with
        ``figures`` right before the first search."""
        if not any(s.decision is not None for s in steps):
            return self.steps_block(steps, "Work steps", "step")
        out: list[Flowable] = []
        heading: Flowable | None = self.numbered("Work steps")
        run: list[Step] = []
        for step in [*steps, None]:
            if step is not None and step.decision is not None:
                run.append(step)
                continue
            if run:
                if figures:
                    if heading is not None:
                        out.append(heading)
                        heading = None
                    out += figures
                    figures = ()
                out += self.search_table(run, heading)
                heading, run = None, []
            if step is not None:
                if heading is not None:
                    out += self.step_group([step], heading, "step", ())
                    heading = None
                else:
                    out.append(KeepTogether(self.step_parts(step, "step")))
        return out

    def search_table(self, steps: Sequence[Step], heading: Flowable | None) -> list[Flowable]:
        """The search as a decision table: one row per step, where each outcome leads;
        then the same search drawn as a tree."""
        first = steps[0].decision
        assert first is not None
        cell, bold = self.style["small"], self.style["small_bold"]
        lead: list[Flowable] = [] if heading is None else [heading]
        lead += [self.sub(f"Search: steps {steps[0].number} to {steps[-1].number}"),
                 Paragraph(words(search_table_note(first.cleared, first.unchanged)),
                           self.style["small"])]
        rows: list[list[Any]] = [[
            "", Paragraph("Step", self.style["head"]),
            Paragraph("Open", self.style["head"]),
            Paragraph("Clears: the ground is below what you opened", self.style["head"]),
            Paragraph("Stays", self.style["head"])]]
        not_found, board = "", ""
        for step in steps:
            d = step.decision
            assert d is not None
            opened: list[Flowable] = [Paragraph(f"<b>{words(', '.join(d.opens))}</b>", cell)]
            opened += [Paragraph(words(text), cell) for text in d.first]
            if d.board != board:  # the board, where it changes
                opened.insert(0, Paragraph(f"on {words(d.board)}:", self.style["small"]))
                board = d.board
            outcomes = []
            # "Clears" of a step that opens one device: its heading says "below what you
            # opened", so the cell does not name the device again
            alone = d.devices[0] if len(d.devices) == 1 else None
            for goto, said in ((d.on_clear, alone), (d.on_stay, None)):
                outcomes.append(Paragraph(words(goto_cell(goto, said)),
                                          bold if goto.kind != "step" or goto.below else cell))
                if goto.kind == "not_found":
                    not_found = goto.text
            rows.append([self.blank(Blank(("step", step.number, "done"),
                                          f"step {step.number} done", tick=True,
                                          height=self.row_tick_mm * mm)),
                         Paragraph(str(step.number), self.style["cell_bold"]),
                         opened, *outcomes])
        widths = content_widths(rows, self.width, 2 * TIGHT_SIDE_MM * mm)
        table = Table(rows, colWidths=widths, repeatRows=1, repeat_when_cut=(1,))
        table.setStyle(TableStyle([*GRID, *HEAD_ROW, *TIGHT]))
        out: list[Flowable] = [KeepTogether([*lead, Spacer(1, 1 * mm)])]
        out.append(table)
        if not_found:
            out.append(Paragraph(f"<b>Not found at this level:</b> "
                                 f"{words(not_found[len('not found at this level: '):])}.",
                                 self.style["small"]))
        tree = search_tree(steps, self.width, FONT, FONT_BOLD)
        if tree is not None:
            legend = [Paragraph(words(n), self.style["small"]) for n in tree_legend()]
            # the heading never ends a page without the tree's first rows (the tree
            # splits between its rows); the legend goes under it, as under the sketch
            heading = Paragraph("The search as a tree", ParagraphStyle(
                "sub_before_split", parent=self.style["sub"], keepWithNext=0))
            room = (heading.wrap(self.width, self.height)[1] + heading.getSpaceBefore()
                    + heading.getSpaceAfter() + TREE_LEAST_ROWS * TREE_ROW_PT)
            out += [CondPageBreak(room), heading, tree, Spacer(1, 1 * mm),
                    KeepTogether(legend)]
        return out

    # -- final tests of a search: one procedure, a table row for each circuit
    def final_tests_block(self, finals: Sequence[FinalTest]) -> list[Flowable]:
        """The final tests of every circuit the search can end at as one procedure with
        one set of cautions, and a table of what differs from circuit to circuit; its
        blanks are filled for the one circuit the search ends at (``forms.CHOSEN``)."""
        if not finals:
            return []
        scope = ("final", CHOSEN)
        seen: dict[tuple[str, str], Caution] = {}
        for final in finals:
            for caution in (*final.cautions, *(c for s in final.steps for c in s.cautions)):
                seen.setdefault((caution.signal_word.value, caution.text), caution)
        at = Table([[Paragraph("Final tests done on (id, e.g. F1)", self.style["head"]),
                     self.blank(Blank(("final_at",), "final tests done on (id)",
                                      width=30 * mm))]],
                   colWidths=self.cols(60, 40), hAlign="LEFT")
        at.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                                ("LEFTPADDING", (0, 0), (-1, -1), 0)]))
        lead: list[Flowable] = [
            self.numbered(FINAL_TESTS_TITLE),
            Paragraph(f"<b>{words(final_tests_once(finals[0].id, finals[-1].id))}</b>",
                      self.style["body"]), Spacer(1, 1.5 * mm), at, Spacer(1, 2 * mm)]
        cautions = list(seen.values())
        out: list[Flowable] = [KeepTogether([*lead, *self.cautions(cautions[:1])])]
        out += self.cautions(cautions[1:])
        out += self.final_tests_table(finals)
        steps = {(kind, number): Step(number=number, text=FINAL_PROCEDURE_TEXT[name],
                                      kind=_procedure_kind(name), check_only=True)
                 for kind, number, name in FINAL_PROCEDURE}
        out += self.step_group([steps[("step", 1)]], self.sub("Before the isolation"),
                               "step", scope)
        out += self.chosen_locks(max(len(f.isolation) for f in finals), scope)
        out += self.chosen_proving_dead(finals, scope)
        out += self.step_group([steps[("step", 2)], steps[("step", 3)]],
                               self.sub("Tests"), "step", scope, hint=False)
        out.append(self.chosen_readings(finals, scope))
        out += self.step_group([steps[("restore", n)] for n in range(1, 8)],
                               self.sub("Restoration of the circuit"), "restore", scope,
                               hint=False)
        return out

    def final_tests_table(self, finals: Sequence[FinalTest]) -> list[Flowable]:
        """One row per circuit: what to lock, where to prove dead, what to test against
        which minimum (sources numbered under the table), how to energise it again."""
        # the densest table of the package: the smallest print size, tight padding
        cell = small = self.style["small"]
        bold = self.style["small_bold"]
        sources: dict[str, int] = {}
        spans: list[tuple[Any, ...]] = []
        # where every circuit is energised by closing a device, the heading says "close"
        all_close = all(
            any(s.kind == "energise" and _energise_words(s.text).startswith(_CLOSE)
                for s in final.restoration) for final in finals)
        rows: list[list[Any]] = [[Paragraph(t, self.style["head"]) for t in (
            "Id: search ends at", "Lock and tag, in this order", "Prove dead at",
            "Tests, each to earth: minimum",
            "Energise: close" if all_close else "Energise")]]
        counted = Counter([*(p.voltage_v for f in finals for p in f.isolation),
                           *(d.voltage_v for f in finals for d in f.proving_dead)])
        usual = counted.most_common(1)[0][0] if counted else None

        def volts(value: float | None) -> str:  # only where it differs from the usual
            return "" if value == usual else f", {format_volts(value)}"

        # the DC test voltage, said once above the table and in a row only where it differs
        every_reading = [r for f in finals for s in (*f.steps, *f.restoration)
                         for r in s.readings]
        test_volts = Counter(m.group(1) for r in every_reading
                             if (m := _TEST_AT.search(r.what)) is not None)
        usual_test = test_volts.most_common(1)[0][0] if test_volts else None

        def test_what(what: str) -> str:
            found = _TEST_AT.search(what)
            if found is not None and found.group(1) == usual_test:
                return what[:found.start()] + what[found.end():]
            return what.replace(" to earth at ", " at ")

        for final in finals:
            ends: list[Flowable] = [Paragraph(f"<b>{words(final.id)}</b>: "
                                              f"<b>{words(final.feeder)}</b>", cell)]
            if final.vital_loads:
                ends.append(Paragraph("vital: " + words(", ".join(final.vital_loads)), bold))
            if final.disconnect:
                ends.append(Paragraph("disconnect: " + words(", ".join(final.disconnect)),
                                      bold))
            locks = [Paragraph(f"{p.order} <b>{words(p.device)}</b>"
                               + (f" ({words(p.location)})" if p.location else "")
                               + words(volts(p.voltage_v))
                               + (", already open" if p.already_open else ""), cell)
                     for p in sorted(final.isolation, key=lambda p: p.order)]
            dead = [Paragraph(f"{n} {words(p.where)}{words(volts(p.voltage_v))}", cell)
                    for n, p in enumerate(final.proving_dead, start=1)]
            tests = []
            readings = [r for s in (*final.steps, *final.restoration) for r in s.readings]
            for k, r in enumerate(readings, start=1):
                limit = r.limit
                text = f"T{k} {words(test_what(r.what))}"
                if limit is not None:
                    ref = sources.setdefault(limit.basis, len(sources) + 1)
                    at = (" at " + format_quantity(limit.temperature_corrected_to_c,
                                                   "°C").replace(" ", "\u00a0")
                          if limit.temperature_corrected_to_c is not None else "")
                    # the column's heading says "minimum": a lower bound is the number alone
                    bound = (format_quantity(limit.low, r.unit).replace(" ", "\u00a0")
                             if limit.low is not None and limit.high is None
                             else limit_text(limit, r.unit))
                    text += f": <b>{words(bound)}</b>{at} [{ref}]"
                tests.append(Paragraph(text, cell))
            energise = [_energise_words(s.text) for s in final.restoration
                        if s.kind == "energise"]
            first = energise[0] if energise else ""
            if all_close:  # the heading says "close"
                first = first.removeprefix(_CLOSE).removesuffix(".")
            rows.append([ends, locks, dead, tests, Paragraph(words(first), cell)])
            # what only some circuits have goes on a line of its own across the row
            notes = [f"<b>DANGER, no lock can cut:</b> {words(gap)}"
                     for gap in final.isolation_gaps]
            notes += [f"<b>Stored energy:</b> {words(item)}" for item in final.stored_energy]
            notes += [f"<b>After energising:</b> {words(text)}" for text in energise[1:]]
            if notes:
                rows.append([Paragraph(f"{words(final.id)} also:", cell),
                             Paragraph("<br/>".join(notes), cell), "", "", ""])
                spans.append(("SPAN", (1, len(rows) - 1), (-1, len(rows) - 1)))
        spanned = {cell[1][1] for cell in spans}
        widths = content_widths([row for n, row in enumerate(rows) if n not in spanned],
                                self.width, 2 * TIGHT_SIDE_MM * mm)
        table = Table(rows, colWidths=widths, repeatRows=1, repeat_when_cut=(0,))
        table.setStyle(TableStyle([*GRID, *HEAD_ROW, *TIGHT, *spans]))
        notes = [Paragraph(f"[{n}] {words(basis)}", small)
                 for basis, n in sorted(sources.items(), key=lambda kv: kv[1])]
        lead = (f"Voltages are {format_volts(usual)} unless a row says otherwise. "
                if usual is not None else "")
        if usual_test is not None:
            lead += f"Each test is at {usual_test} DC unless its row says otherwise. "
        return [self.sub("The circuits"),
                Paragraph(lead + "Numbers in square brackets: the source of that minimum, "
                          "listed under the table.", small), Spacer(1, 1 * mm),
                table, Spacer(1, 1 * mm),
                KeepTogether([Paragraph("Sources of the minimums", self.style["head"]),
                              *notes])]

    def chosen_locks(self, count: int, scope: tuple[str, ...]) -> list[Flowable]:
        """Lock rows for the circuit's devices, numbered as its row lists them."""
        head = self.style["head"]

        def box(*parts: str | int) -> Cell:
            return self.blank(Blank((*scope, *parts), " ".join(str(p) for p in parts)))

        rows: list[list[Any]] = [[Paragraph(t, head) for t in (
            "#", "Lock no.", "Tag no.", "Locked by", "time", "Removed by", "time")]]
        for n in range(1, count + 1):
            rows.append([Paragraph(str(n), self.style["step_no"]),
                         box("lock", n, "number"), box("tag", n, "number"),
                         box("lock", n, "applied_by"), box("lock", n, "applied_at"),
                         box("lock", n, "removed_by"), box("lock", n, "removed_at")])
        table = Table(rows, colWidths=self.cols(8, 24, 24, 38, 20, 38, 20), repeatRows=1)
        table.setStyle(TableStyle([*GRID, *HEAD_ROW, ("VALIGN", (0, 0), (-1, -1), "MIDDLE")]))
        return [KeepTogether([
            self.sub("Isolation: open, lock and tag the row's devices in its order"),
            Paragraph("Row n here is the device numbered n in the circuit's row; leave the "
                      "rows it does not have empty.", self.style["small"]), table])]

    def chosen_proving_dead(self, finals: Sequence[FinalTest],
                            scope: tuple[str, ...]) -> list[Flowable]:
        """Proving dead at the circuit's places, numbered as its row lists them: one line
        of boxes per place (more where it has more pairs), each box under its pair."""
        places = [list(dict.fromkeys(
            pair for f in finals if len(f.proving_dead) >= index
            for pair in f.proving_dead[index - 1].pairs))
            for index in range(1, max(len(f.proving_dead) for f in finals) + 1)]
        # a place's pairs on one line: up to ten (three phases, neutral and earth)
        per_row = min(10, max(8, *(len(pairs) for pairs in places)))
        rows: list[list[Any]] = []
        spans: list[tuple[Any, ...]] = []
        for index, pairs in enumerate(places, start=1):
            first_row = len(rows)
            for start in range(0, len(pairs), per_row):
                chunk = pairs[start:start + per_row]
                cells: list[Any] = [
                    [Paragraph(words(pair), self.style["small_bold"]),
                     self.blank(Blank((*scope, "dead", index, pair),
                                      f"place {index}, {pair}: volts", suffix="V"))]
                    for pair in chunk]
                rows.append([Paragraph(str(index), self.style["step_no"]) if start == 0
                             else "", *cells, *[""] * (per_row - len(chunk))])
            if len(rows) - first_row > 1:
                spans.append(("SPAN", (0, first_row), (0, len(rows) - 1)))
        table = Table(rows, colWidths=self.cols(10, *[172 / per_row] * per_row),
                      repeat_when_cut=(0,))
        table.setStyle(TableStyle([*GRID, *spans, ("TOPPADDING", (0, 0), (-1, -1), 0.8 * mm),
                                   ("BOTTOMPADDING", (0, 0), (-1, -1), 1.2 * mm)]))
        return [KeepTogether([
            self.sub("Prove dead at the row's places"),
            Paragraph("Place n is the place numbered n in the circuit's row, at the voltage "
                      "it gives. Expect 0 V on every pair; leave the pairs and places the "
                      "circuit does not have empty.", self.style["small"]),
            self.tester_check("before", scope), Spacer(1, 1 * mm), table, Spacer(1, 1 * mm),
            self.tester_check("after", scope)])]

    def chosen_readings(self, finals: Sequence[FinalTest], scope: tuple[str, ...]) -> Table:
        per_final = [[r for s in (*f.steps, *f.restoration) for r in s.readings]
                     for f in finals]
        head = self.style["head"]
        rows: list[list[Any]] = [[Paragraph(t, head) for t in (
            "Test of the row", "Measured", "Temperature (where the row's minimum is "
            "corrected)")]]
        for k in range(1, max(len(r) for r in per_final) + 1):
            units = sorted({r[k - 1].unit for r in per_final if len(r) >= k})
            unit = units[0] if len(units) == 1 else ""
            rows.append([
                Paragraph(f"<b>T{k}</b>" + ("" if unit else
                                            f" (write the unit: {', '.join(units)})"),
                          self.style["cell"]),
                self.blank(Blank((*scope, "reading", f"T{k}"), f"test T{k}", suffix=unit)),
                self.blank(Blank((*scope, "temperature", f"T{k}"), f"test T{k}: temperature",
                                 suffix="°C"))])
        table = Table(rows, colWidths=self.cols(60, 61, 61), repeatRows=1)
        table.setStyle(TableStyle([*GRID, *HEAD_ROW, ("VALIGN", (0, 0), (-1, -1), "MIDDLE")]))
        return table

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
        # the short facts two to a row; the long ones (the priority's reason) across it
        rows = [
            pair("Package", p.id) + pair("Date", p.date.isoformat()),
            pair("Plant", p.plant) + pair("System", p.system or "not given"),
            pair("Item", p.item_label) + pair("Duration", f"{format_number(p.duration_h)} h"),
            pair("Job kind", p.job_kind.replace("_", " ")) + pair("Crew", str(p.crew)),
            pair("Permits", ", ".join(p.permits) or "none listed") + ["", ""],
            pair("Priority", f"{p.priority} (1 = most urgent): {p.priority_reason}") + ["", ""],
            pair("Origin", "; ".join(origin)) + ["", ""],
            pair("Who", job_needs(p).describe()) + ["", ""],
        ]
        if p.assigned:
            crew = "; ".join(p.assigned)
            if p.supervisor_assigned:
                crew += f"; supervisor {p.supervisor_assigned}"
            rows.append(pair("Assigned", crew) + ["", ""])
        spans = [("SPAN", (1, row), (3, row)) for row in range(4, len(rows))]
        table = Table(rows, colWidths=self.cols(24, 67, 24, 67), repeat_when_cut=(0, 2))
        table.setStyle(TableStyle([*GRID, *spans,
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
            table.setStyle(TableStyle([*GRID, *HEAD_ROW, ("SPAN", (0, 0), (1, 0))]))
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

    def figures(self, numbered: bool = True) -> list[Flowable]:
        """Phasor diagram and sketch side by side when the sketch fits half the width;
        otherwise the phasor diagram with its notes beside it, the sketch below. A
        section of their own, or (``numbered`` False) a part of the one they stand in."""
        p = self.package
        if p.phasor is None and p.sketch is None:
            return []
        gap = self.figure_gap_mm * mm
        half = (self.width - gap) / 2
        sketch_needs = (sketch_width_needed(p.sketch, FONT, FONT_BOLD)
                        if p.sketch is not None else 0.0)
        side_by_side = p.phasor is not None and p.sketch is not None and sketch_needs <= half
        phasor_width = half if side_by_side else min(half, self.phasor_alone_mm * mm)
        heading: list[Flowable] = [self.numbered("Figures")] if numbered else []
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
            return [KeepTogether([*heading, *sketch])]
        table.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP"),
                                   ("LEFTPADDING", (0, 0), (-1, -1), 0),
                                   ("RIGHTPADDING", (0, 0), (-1, -1), 0),
                                   ("RIGHTPADDING", (0, 0), (0, 0), gap)]))
        out: list[Flowable] = [KeepTogether([*heading, table])]
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

        def box(kind: str, what: str, part: str) -> Cell:
            return self.blank(Blank((*scope, kind, point.device, part),
                                    f"{point.device}: {what}"))

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
             box("lock", "lock number", "number"), box("tag", "tag number", "number")],
            ["", blanks, "", "", "", ""],
        ]
        table = Table(rows, colWidths=widths)
        table.setStyle(TableStyle([*GRID, ("SPAN", (1, 1), (5, 1)),
                                   ("SPAN", (0, 0), (0, 1)),
                                   ("BOX", (0, 0), (-1, -1), 1.4, colors.black)]))
        return table

    def isolation_block(self) -> list[Flowable]:
        p = self.package
        out = self.isolation_table(p.isolation, p.isolation_gaps, p.stored_energy, (),
                                   self.numbered("Isolation: open, lock and tag in this "
                                                 "order"), p.restoration)
        if p.locks_on:  # a job carried over with its locks on
            return [Paragraph("Locks of this job still on from an earlier day: at each, "
                              "check that the lock and tag are in place and write their "
                              "numbers below; do not take them off before the restoration "
                              "says so", self.style["bold"]),
                    *self.bullets(lock.text for lock in p.locks_on), *out]
        return out

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
            head.setStyle(TableStyle([*GRID, *HEAD_ROW,
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
        table = Table([[self.blank(Blank((*scope, "tester", when), f"tester proven {when}",
                                         tick=True)),
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
        for start in range(0, len(point.pairs), per_row):
            chunk = point.pairs[start:start + per_row]
            pad = [""] * (per_row - len(chunk))
            rows: list[list[Any]] = [
                [Paragraph("Pair", self.style["head"])]
                + [Paragraph(words(pair), self.style["cell_bold"]) for pair in chunk] + pad,
                [Paragraph("Expected", self.style["cell"])]
                + [Paragraph("0 V", self.style["cell"]) for _ in chunk] + pad,
                [Paragraph("Measured", self.style["cell"])]
                + [self.blank(Blank((*scope, "dead", index, pair),
                                    f"point {index}, {pair}: volts", suffix="V"))
                   for pair in chunk] + pad,
            ]
            table = Table(rows, colWidths=self.cols(26, *[26] * per_row), hAlign="LEFT")
            style = [*GRID, ("BACKGROUND", (0, 0), (len(chunk), 0),
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
        heads = ["Reading", "Expected", "Limit and its source", "Measured"]
        if with_temperature:
            heads.append("Temp.")
        heads.append("Instr. id")  # "Instrument" breaks inside the word at 20 mm
        rows: list[list[Any]] = [[Paragraph(t, self.style["head"]) for t in heads]]
        above: dict[str, str] = {}  # a source printed in the row above: not again

        def source(column: str, text: str) -> str:
            said, above[column] = above.get(column), text
            return "source as above" if said == text else text

        for r in readings:
            expected: list[Flowable] = [Paragraph(words(expected_text(r)), cell)]
            if r.basis:
                expected.append(Paragraph(words(source("expected", r.basis)), small))
            limit: list[Flowable] = []
            if r.limit is not None:
                limit.append(Paragraph(f"<b>{words(limit_text(r.limit, r.unit))}</b>", cell))
                if r.limit.temperature_corrected_to_c is not None:
                    limit.append(Paragraph(
                        "temperature corrected to "
                        f"{format_quantity(r.limit.temperature_corrected_to_c, '°C')}", cell))
                limit.append(Paragraph(words(source("limit", r.limit.basis)), small))
                if not r.acceptance:
                    limit.append(Paragraph("<b>As found: recorded, not judged.</b>", cell))
            else:
                limit.append(Paragraph("—", cell))
            temperature: Flowable | str = ""
            if r.needs_temperature:
                temperature = self.blank(Blank(("temperature", r.id),
                                               f"{r.id}: temperature, °C", suffix="°C"))
            row: list[Any] = [
                Paragraph(f"<b>{words(r.id)}</b> {words(r.what)}", cell),
                expected, limit,
                self.blank(Blank(("reading", r.id), f"{r.id}: {r.what}, {r.unit}",
                                 suffix=r.unit)),
            ]
            instrument = self.blank(Blank(("instrument", r.id),
                                          f"{r.id}: instrument (its register id)"))
            rows.append([*row, temperature, instrument] if with_temperature
                        else [*row, instrument])
        # the blanks' columns keep their room; the text columns share the rest by content
        blanks = [30 * mm, *([22 * mm] if with_temperature else []), 20 * mm]
        widths = content_widths(rows, self.width, 3.2 * mm, [0, 0, 0, *blanks])
        table = Table(rows, colWidths=widths, repeatRows=1)
        table.setStyle(TableStyle([*GRID, *HEAD_ROW,
                                   ("TOPPADDING", (0, 0), (-1, -1), 1.2 * mm),
                                   ("BOTTOMPADDING", (0, 0), (-1, -1), 1.2 * mm)]))
        return table

    def step_parts(self, step: Step, kind: str,
                   scope: tuple[str, ...] = ()) -> list[Flowable]:
        box = self.blank(Blank(
            (*scope, kind, step.number, "done"),
            f"{'restoration ' if kind == 'restore' else ''}step {step.number} done", tick=True))
        text = words(step.text)
        if step.search_outcome is not None:
            outcome = "not found" if step.search_outcome == "not_found" else "found"
            text = f"<b>Only if the ground was {outcome}:</b> {text}"
        line = Table([[box, Paragraph(str(step.number), self.style["step_no"]),
                       Paragraph(text, self.style["step"])]],
                     colWidths=self.cols(10, 12, 160))
        line.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP"),
                                  ("LEFTPADDING", (0, 0), (-1, -1), 0),
                                  ("TOPPADDING", (0, 0), (-1, -1), 0.5 * mm),
                                  ("BOTTOMPADDING", (0, 0), (-1, -1), 0.5 * mm),
                                  ("LINEABOVE", (0, 0), (-1, 0), 0.7, colors.black)]))
        parts: list[Flowable] = [Spacer(1, 1 * mm), line]
        if step.kind == "remove_lock" and step.devices:
            parts += [Spacer(1, 1.5 * mm), self.removal_blanks(step.devices[0], scope)]
        if step.kind == "gate":
            parts += [Spacer(1, 1.5 * mm), self.labelled_box(
                "Locks left on because", (*scope, "locks_left_on"),
                "why every lock stays on")]
        if step.cautions:
            parts.append(Spacer(1, 1.5 * mm))
            parts += self.cautions(step.cautions)
        if step.readings:
            parts += [Spacer(1, 1.5 * mm), self.reading_rows(step.readings),
                      *self.reading_notes(step.readings)]
        parts.append(Spacer(1, 1.2 * mm))
        return parts

    def reading_notes(self, readings: Sequence[Reading]) -> list[Flowable]:
        """What goes under a step's readings: nothing on the issued package."""
        return []

    def steps_block(self, steps: Sequence[Step], title: str, kind: str) -> list[Flowable]:
        if not steps:
            return []
        return self.step_group(steps, self.numbered(title), kind, ())

    def step_group(self, steps: Sequence[Step], heading: Flowable, kind: str,
                   scope: tuple[str, ...], hint: bool = True) -> list[Flowable]:
        if not steps:
            return []
        first, *rest = steps
        lead = [heading]
        if hint and not self._hint_said:  # how to fill in, said once: at the first steps
            self._hint_said = True
            lead.append(Paragraph("Tick each box when the step is done; write each reading "
                                  "in its box, in the unit shown.", self.style["small"]))
        out: list[Flowable] = [KeepTogether([*lead, *self.step_parts(first, kind, scope)])]
        out += [KeepTogether(self.step_parts(step, kind, scope)) for step in rest]
        return out

    def removal_blanks(self, device: str, scope: tuple[str, ...]) -> Table:
        """Who removed the lock and tag of ``device``, and when: filled in at the step."""
        head = self.style["head"]
        row = [Paragraph("Removed by", head),
               self.blank(Blank((*scope, "lock", device, "removed_by"),
                                f"{device}: removed by")),
               Paragraph("time", head),
               self.blank(Blank((*scope, "lock", device, "removed_at"),
                                f"{device}: removed at"))]
        table = Table([row], colWidths=self.cols(22, 40, 10, 28), hAlign="RIGHT")
        table.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                                   ("LEFTPADDING", (0, 0), (-1, -1), 0),
                                   ("RIGHTPADDING", (0, 0), (-1, -1), 1.5 * mm)]))
        return table

    def labelled_box(self, label: str, parts: tuple[str | int, ...], tooltip: str) -> Table:
        table = Table([[Paragraph(words(label), self.style["head"]),
                        self.blank(Blank(parts, tooltip))]],
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
        """Who did the job and who checked it, two to a row; remarks across."""
        label = self.style["head"]
        rows = [
            [Paragraph("Technician (name, signature)", label),
             self.blank(Blank(("sign", "technician"), "technician")),
             Paragraph("Supervisor (name, signature)", label),
             self.blank(Blank(("sign", "supervisor"), "supervisor"))],
            [Paragraph("Date", label),
             self.blank(Blank(("sign", "date"), "date", width=40 * mm)),
             *([Paragraph("Ground found at (element id)", label),
                self.blank(Blank(("ground_found_at",), "ground found at"))]
               if self.package.job_kind in ("locate_ground", "clear_second_ground")
               else ["", ""])],
            [Paragraph("Remarks", label),
             self.blank(Blank(("remarks",), "remarks", height=self.remarks_mm * mm,
                              multiline=True, max_length=2000)), "", ""],
        ]
        table = Table(rows, colWidths=self.cols(34, 57, 34, 57), repeat_when_cut=(0,))
        table.setStyle(TableStyle([*GRID, ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                                   ("TOPPADDING", (0, 0), (-1, -1), 1 * mm),
                                   ("BOTTOMPADDING", (0, 0), (-1, -1), 1 * mm),
                                   ("SPAN", (1, 2), (3, 2)),
                                   ("BOX", (0, 0), (-1, -1), 1.4, colors.black)]))
        return [KeepTogether([self.numbered("Sign-off"), table])]


_CLOSE = "close "  # how an energise step's action starts when it closes a device

# a final test's reading: "<what> to earth at <DC test voltage> DC"
_TEST_AT = re.compile(r" to earth at (\S+ V) DC")


def _procedure_kind(name: str) -> StepKind:
    """The step kind a printed procedure step is drawn as (a gate gets its box)."""
    return "gate" if name == "gate" else "work"


def _energise_words(text: str) -> str:
    """An energise step's action, without the lead every row shares (the procedure
    says it once)."""
    marker = "from its normal supply: "
    return text[text.index(marker) + len(marker):] if marker in text else text


def render_package(package: WorkPackage, page_size: PageSize = "A4") -> bytes:
    """The package as a PDF with form fields (see the module docstring for their names)."""
    return PackagePdf(package, page_size).render()

