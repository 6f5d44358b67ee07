"""The supervisor's day sheet: ``render_day_sheet(...) -> bytes`` (PDF).

One line per job in the order the planner ranked them, the crew-hours each takes and
the running total against the crew-hours available, the jobs put off, the conflicts the
planner found, and the safety notice. The planner decides what fits; this only lays it
out. Crew-hours of a job are its duration times its crew (h). Where ``plan --crew`` named
the people, each job's line names them (the lead first, then the supervisor).
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Sequence
from typing import Any, ClassVar

from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.platypus import Flowable, Paragraph, Spacer, TableStyle

from workpack.model.package import SignalWord, WorkPackage
from workpack.numbers import format_number
from workpack.render.pdf import (
    FONT,
    FONT_BOLD,
    KeepTogether,
    PageSize,
    PdfDocument,
    Table,
    words,
)
from workpack.store._chain import ChainHead

__all__ = ["DaySheetPdf", "render_day_sheet"]

NOTICE = ("Local codes, the employer's safety rules and licensed practice prevail over "
          "this sheet and every package on it.")


def hours(value: float) -> str:
    return f"{format_number(value)} h"


def crew_names(package: WorkPackage) -> str:
    """Who ``plan --crew`` named for the job, the lead first, as its package prints them."""
    names = "; ".join(package.assigned)
    if package.supervisor_assigned:
        names += f"; supervisor {package.supervisor_assigned}"
    return names


class DaySheetPdf(PdfDocument):
    """The day's jobs for one plant, ranked, with what fits and what waits."""

    cell_pad_mm: ClassVar[float] = 1.3
    widest_column: ClassVar[float] = 0.3  # of the text width, for each fitted column
    text_columns: ClassVar[float] = 0.3  # of the text width at least, for title and item

    def __init__(self, plant: str, date: dt.date, packages: Sequence[WorkPackage],
                 scheduled: Sequence[str], deferred: Sequence[str],
                 conflicts: Sequence[str], crew_hours: float,
                 page_size: PageSize = "A4", chain_head: ChainHead | None = None) -> None:
        super().__init__(page_size)
        self.chain_head = chain_head
        by_id = {p.id: p for p in packages}
        unknown = [i for i in (*scheduled, *deferred) if i not in by_id]
        if unknown:
            raise ValueError(f"day sheet: no package given for {', '.join(unknown)} "
                             f"(packages given: {', '.join(sorted(by_id)) or 'none'})")
        self.plant = plant
        self.date = date
        self.scheduled = [by_id[i] for i in scheduled]
        self.deferred = [by_id[i] for i in deferred]
        planned = {*scheduled, *deferred}
        self.unplanned = sorted((p for p in packages if p.id not in planned),
                                key=lambda p: (p.priority, p.id))
        self.conflicts = list(conflicts)
        self.crew_hours = crew_hours
        self.document_id = f"Day sheet {date.isoformat()}"
        self.document_title = f"Day sheet {plant} {date.isoformat()}"
        self.created = date

    def header_right(self) -> str:
        return self.plant

    def footer_note(self) -> str:
        return NOTICE

    def job_table(self, packages: Sequence[WorkPackage], running: bool) -> Table:
        cell, bold, head = self.style["cell"], self.style["cell_bold"], self.style["head"]
        titles = ["#", "Prio", "Package", "Title", "Item", "Hours", "Crew", "Crew-h"]
        if running:
            titles.append("Total crew-h")
        rows: list[list[Any]] = [[Paragraph(t, head) for t in titles]]
        texts: list[list[str]] = []
        total = 0.0
        for rank, p in enumerate(packages, start=1):
            crew_h = p.duration_h * p.crew
            total += crew_h
            texts.append([str(rank), str(p.priority), p.id, p.title, p.item,
                          hours(p.duration_h), str(p.crew), hours(crew_h)]
                         + ([hours(total)] if running else []))
        bold_columns = {0, 1, 2, 8}
        for p, text in zip(packages, texts, strict=True):
            row = [Paragraph(words(value), bold if column in bold_columns else cell)
                   for column, value in enumerate(text)]
            if p.assigned:  # plan --crew named them: who does it is on the sheet
                row[3] = Paragraph(f"{words(p.title)}<br/><b>Crew:</b> "
                                   f"{words(crew_names(p))}", cell)
            rows.append(row)
        # every column but title and item as wide as its widest word; the title takes
        # what is left, so ids and numbers never break
        pad = 2 * self.cell_pad_mm * mm + 1
        widths: list[float] = []
        for column, title in enumerate(titles):
            if column in (3, 4):
                widths.append(0.0)
                continue
            face = FONT_BOLD if column in bold_columns else FONT
            widest = max([stringWidth(text[column], face, 10) for text in texts]
                         + [max(stringWidth(w, FONT_BOLD, 9.5) for w in title.split())])
            # but a column never takes more than its share: a longer id wraps
            widths.append(min(widest + pad, self.width * self.widest_column))
        fitted = sum(widths)
        if fitted > self.width * (1 - self.text_columns):  # leave title and item their room
            widths = [w * self.width * (1 - self.text_columns) / fitted for w in widths]
        rest = self.width - sum(widths)
        widths[4] = rest * 0.32
        widths[3] = rest - widths[4]
        table = Table(rows, colWidths=widths, repeatRows=1, repeat_when_cut=(0, 1, 2))
        table.setStyle(TableStyle([
            ("GRID", (0, 0), (-1, -1), 0.7, colors.black),
            ("BOX", (0, 0), (-1, -1), 1.4, colors.black),
            ("BACKGROUND", (0, 0), (-1, 0), colors.Color(0.85, 0.85, 0.85)),
            ("VALIGN", (0, 0), (-1, -1), "TOP"),
            ("TOPPADDING", (0, 0), (-1, -1), 1.5 * mm),
            ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5 * mm),
            ("LEFTPADDING", (0, 0), (-1, -1), self.cell_pad_mm * mm),
            ("RIGHTPADDING", (0, 0), (-1, -1), self.cell_pad_mm * mm),
        ]))
        return table

    def summary(self) -> Table:
        used = sum(p.duration_h * p.crew for p in self.scheduled)
        label, value = self.style["cell_bold"], self.style["cell"]
        rows = [
            [Paragraph("Crew-hours available", label), Paragraph(hours(self.crew_hours), value),
             Paragraph("Jobs scheduled", label), Paragraph(str(len(self.scheduled)), value)],
            [Paragraph("Crew-hours scheduled", label), Paragraph(hours(used), value),
             Paragraph("Jobs deferred", label), Paragraph(str(len(self.deferred)), value)],
        ]
        table = Table(rows, colWidths=self.cols(52, 39, 52, 39))
        table.setStyle(TableStyle([
            ("GRID", (0, 0), (-1, -1), 0.7, colors.black),
            ("BOX", (0, 0), (-1, -1), 1.4, colors.black),
            ("TOPPADDING", (0, 0), (-1, -1), 1.5 * mm),
            ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5 * mm),
        ]))
        return table

    def story(self) -> list[Flowable]:
        out: list[Flowable] = [
            Paragraph(words(f"Work for {self.date.isoformat()}: {self.plant}"),
                      self.style["title"]),
            self.summary(),
            self.section("Scheduled, in this order"),
        ]
        if self.scheduled:
            out.append(self.job_table(self.scheduled, running=True))
        else:
            out.append(Paragraph("Nothing scheduled.", self.style["bold"]))
        out.append(self.section("Deferred: does not fit in the crew-hours"))
        if self.deferred:
            out.append(self.job_table(self.deferred, running=False))
        else:
            out.append(Paragraph("Nothing deferred.", self.style["body"]))
        if self.unplanned:
            out.append(self.section("Given but neither scheduled nor deferred"))
            out.append(self.job_table(self.unplanned, running=False))
        out.append(self.section("Conflicts to settle before work starts"))
        if self.conflicts:
            out += self.bullets(self.conflicts)
        else:
            out.append(Paragraph("None found.", self.style["body"]))
        # each DANGER once (one per system, as the packages word it), with the packages
        # that carry it
        dangers: dict[str, list[str]] = {}
        for p in self.scheduled:
            for c in p.cautions:
                if c.signal_word is SignalWord.danger and p.id not in dangers.get(c.text, []):
                    dangers.setdefault(c.text, []).append(p.id)
        if dangers:
            out.append(self.section("DANGER notes in the scheduled packages"))
            out += [Paragraph(f"<b>{words(', '.join(ids))}</b>: {words(text)}",
                              self.style["bullet"], bulletText="•")
                    for text, ids in dangers.items()]
        if self.chain_head is not None:
            out.append(self.section("Records chain anchor"))
            out.append(Paragraph(words(anchor_note(self.chain_head)), self.style["body"]))
        out += [Spacer(1, 4 * mm), KeepTogether([self.notice_box(NOTICE)])]
        return out


def render_day_sheet(plant: str, date: dt.date, packages: Sequence[WorkPackage],
                     scheduled: Sequence[str], deferred: Sequence[str],
                     conflicts: Sequence[str], crew_hours: float,
                     page_size: PageSize = "A4", chain_head: ChainHead | None = None) -> bytes:
    """The day sheet as a PDF. ``scheduled`` and ``deferred`` are package ids in ranked
    order; ``crew_hours`` is the crew-hours available that day (h); ``chain_head`` is the
    records store's head when planned, printed as an anchor to keep."""
    return DaySheetPdf(plant, date, packages, scheduled, deferred, conflicts, crew_hours,
                       page_size, chain_head).render()


def anchor_note(head: ChainHead) -> str:
    """The day sheet's anchor: the head to copy into the log book or send ashore."""
    noun = "record" if head.sequence == 1 else "records"
    return (f"The records store held {head.sequence} {noun} when this sheet was made; "
            f"the last chain hash is {head}. Copy it into the log book or send it ashore: "
            f"`workpack verify --anchor {head}` shows later whether the store still holds "
            "these records unchanged.")
