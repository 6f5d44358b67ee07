"""Every document of the demo day, read back from the PDF's text positions (pdfplumber):
no word overflows its table cell or the page's text area, and no word, id or timestamp
is broken over two lines. The documents: each package and the day sheet as planned, each
package's close-out after invented results were recorded, and the audit of that store
(tests/demodocs.py).

How a break is seen: reportlab breaks a word only when it does not fit its column, with
no hyphen. So two words on consecutive lines of one cell (or of the page) that together
make a word the documents use elsewhere, or the start of an id or a timestamp, are one
word broken in two. A table's heading cells (the grey row) say their words nowhere else
("Instrument" broke in a 20 mm column and was seen only by eye), so there two lines that
join into any word of workpack's own source are a broken word too, and a heading's word
past its cell's edge is reported as such.
"""

from __future__ import annotations

import functools
import io
import json
import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pdfplumber
import pytest
from demodocs import demo_documents

import workpack

MARGIN_PT = 14 * 72 / 25.4  # PdfDocument.margin_mm
SLACK_PT = 0.6  # rounding of glyph boxes
EDGE = ".,;:()[]'\"“”"


@pytest.fixture(scope="module")
def documents(demo_plan: Path, tmp_path_factory: pytest.TempPathFactory,
              standards: dict) -> dict[str, bytes]:
    return demo_documents(demo_plan, tmp_path_factory.mktemp("layout") / "r.sqlite",
                          standards)


def _tokens(value: Any) -> Iterator[str]:
    if isinstance(value, str):
        yield from (t.strip(EDGE) for t in value.split())
    elif isinstance(value, dict):
        for v in value.values():
            yield from _tokens(v)
    elif isinstance(value, list):
        for v in value:
            yield from _tokens(v)


@pytest.fixture(scope="module")
def vocabulary(demo_plan: Path, documents: dict[str, bytes]) -> tuple[set[str], set[str]]:
    """Words the documents use, and every start of an id or timestamp among them."""
    words = {t for p in demo_plan.glob("*.json")
             for t in _tokens(json.loads(p.read_text(encoding="utf-8")))}
    for data in documents.values():
        with pdfplumber.open(io.BytesIO(data)) as pdf:
            for page in pdf.pages:
                words |= {w["text"].strip(EDGE) for w in _words(page)}
    words.discard("")
    ids = [w for w in words if re.search(r"\d", w) and re.search(r"[-:.]", w) and len(w) > 5]
    starts = {w[:n] for w in ids for n in range(3, len(w))}
    return words, starts


HEAD_GREY = (0.85, 0.85, 0.85)  # document.HEAD_ROW's fill


@functools.cache
def _source_words() -> frozenset[str]:
    """Every word of four letters or more in workpack's source, lower case: where the
    headings' words come from."""
    root = Path(workpack.__file__).parent
    return frozenset(w.lower() for path in sorted(root.rglob("*.py"))
                     for w in re.findall(r"[A-Za-z]{4,}", path.read_text(encoding="utf-8")))


def _heading_cells(page: Any, cells: list[Box]) -> set[Box]:
    """The cells under a heading row's grey fill."""
    fills = [(r["x0"], r["top"], r["x1"], r["bottom"]) for r in page.rects
             if r.get("fill") and tuple(r.get("non_stroking_color") or ()) == HEAD_GREY]
    return {c for c in cells if any(f[0] <= (c[0] + c[2]) / 2 <= f[2]
                                    and f[1] <= (c[1] + c[3]) / 2 <= f[3] for f in fills)}


def _heading_problems(where: str, cell: Box, lines: list[list[dict[str, Any]]],
                      known: frozenset[str]) -> list[str]:
    problems = [f"{where}: heading {w['text']!r} overflows its cell"
                for line in lines for w in line
                if w["x0"] < cell[0] - SLACK_PT or w["x1"] > cell[2] + SLACK_PT]
    for start, above in enumerate(lines[:-1]):
        # a word may be broken over several lines: its middle parts fill a line each
        parts = [max(above, key=lambda w: w["x1"])["text"].strip(EDGE)]
        for line in lines[start + 1:]:
            b = min(line, key=lambda w: w["x0"])["text"].strip(EDGE)
            if not (parts[-1] and b and parts[-1][-1].isalpha() and b[0].isalpha()
                    and b[0].islower()):
                break
            parts.append(b)
            if "".join(parts).lower() in known:
                problems.append(f"{where}: heading word {''.join(parts)!r} broken over "
                                f"{len(parts)} lines ({' / '.join(parts)})")
                break
            if len(line) > 1:
                break
    return problems


def _words(page: Any) -> list[dict[str, Any]]:
    # words in neighbouring cells are at least two paddings apart: never one word
    return page.extract_words(x_tolerance=1.5, y_tolerance=2, keep_blank_chars=False)


def _figure_marks(page: Any) -> list[tuple[float, float, float, float]]:
    """Where the drawings are: their curves and slanting lines (a table has neither).
    A drawing's boxes and wires are not table cells: tests/test_draw_geometry.py checks
    their geometry."""
    marks = [(c["x0"], c["top"], c["x1"], c["bottom"]) for c in page.curves]
    marks += [(line["x0"], line["top"], line["x1"], line["bottom"]) for line in page.lines
              if line["x1"] - line["x0"] > 0.5 and line["bottom"] - line["top"] > 0.5]
    return marks


def _overlaps(a: tuple[float, ...], b: tuple[float, ...]) -> bool:
    return a[0] <= b[2] and b[0] <= a[2] and a[1] <= b[3] and b[1] <= a[3]


Box = tuple[float, float, float, float]


def _cells(page: Any) -> tuple[list[Box], list[Box]]:
    """Every cell the page's ruled lines make, and those of them outside the drawings."""
    tables = page.find_tables({"vertical_strategy": "lines", "horizontal_strategy": "lines",
                               "snap_tolerance": 1, "intersection_tolerance": 1.5})
    figures = _figure_marks(page)
    every = [tuple(c) for t in tables for c in t.cells if c is not None]
    text = [tuple(c) for t in tables if not any(_overlaps(t.bbox, f) for f in figures)
            for c in t.cells if c is not None]
    return every, text  # type: ignore[return-value]


def _home(word: dict[str, Any], cells: list[Box]) -> Box | None:
    """The smallest cell the word's middle lies in, if any."""
    x, y = (word["x0"] + word["x1"]) / 2, (word["top"] + word["bottom"]) / 2
    inside = [c for c in cells if c[0] <= x <= c[2] and c[1] <= y <= c[3]]
    return min(inside, key=lambda c: (c[2] - c[0]) * (c[3] - c[1])) if inside else None


def layout_problems(name: str, data: bytes, vocabulary: tuple[set[str], set[str]]
                    ) -> list[str]:
    words_known, id_starts = vocabulary
    heading_words = _source_words() | {w.lower() for w in words_known}
    problems: list[str] = []
    with pdfplumber.open(io.BytesIO(data)) as pdf:
        for number, page in enumerate(pdf.pages, start=1):
            where = f"{name} page {number}"
            every, cells = _cells(page)
            headings = _heading_cells(page, every)
            groups: dict[Any, list[dict[str, Any]]] = {}
            for word in _words(page):
                text = word["text"]
                if (word["x0"] < MARGIN_PT - SLACK_PT
                        or word["x1"] > page.width - MARGIN_PT + SLACK_PT
                        or word["top"] < MARGIN_PT - SLACK_PT
                        or word["bottom"] > page.height - MARGIN_PT + SLACK_PT):
                    problems.append(f"{where}: {text!r} runs past the text area")
                home = _home(word, cells)
                if home is not None and (word["x0"] < home[0] - SLACK_PT
                                         or word["x1"] > home[2] + SLACK_PT):
                    problems.append(f"{where}: {text!r} overflows its cell")
                groups.setdefault(_home(word, every), []).append(word)
            for home, words in groups.items():
                lines: list[list[dict[str, Any]]] = []
                for word in sorted(words, key=lambda w: (round(w["top"]), w["x0"])):
                    if lines and abs(lines[-1][0]["top"] - word["top"]) < 2:
                        lines[-1].append(word)
                    else:
                        lines.append([word])
                if home in headings:
                    problems += _heading_problems(where, home, lines, heading_words)
                for above, below in zip(lines, lines[1:], strict=False):
                    a = max(above, key=lambda w: w["x1"])["text"].strip(EDGE)
                    b = min(below, key=lambda w: w["x0"])["text"].strip(EDGE)
                    if not a or not b or a[-1] in "-–/":
                        continue  # a break after a hyphen or slash is where one may break
                    joined = a + b
                    if (joined in words_known and len(joined) > 3) or joined in id_starts:
                        problems.append(f"{where}: {a!r} / {b!r} is one word broken "
                                        "over two lines")
    return problems


def test_no_word_overflows_or_breaks_in_any_demo_document(
        documents: dict[str, bytes], vocabulary: tuple[set[str], set[str]]) -> None:
    assert len([n for n in documents if n.startswith("WP-")]) >= 8
    assert {"audit.pdf", "day-2026-12-02.pdf"} <= set(documents)
    assert any(n.startswith("closeout-") for n in documents)
    problems = [p for name, data in sorted(documents.items())
                for p in layout_problems(name, data, vocabulary)]
    assert problems == [], "\n".join(problems[:40])


def test_the_check_sees_a_broken_id_and_an_overflow(vocabulary: tuple[set[str], set[str]]
                                                    ) -> None:
    """The check itself: an id forced to break in a narrow cell, and a word drawn past
    its cell, are both reported."""
    from reportlab.lib.units import mm
    from reportlab.platypus import Paragraph, TableStyle

    from workpack.render.pdf import GRID, PdfDocument, Table

    class Narrow(PdfDocument):
        def story(self) -> list[Any]:
            table = Table([[Paragraph("WP-SKL-20261202-03", self.style["cell"]), "x"],
                           ["WP-SKL-20261202-03 WP-SKL-20261202-03", "y"]],  # a bare string
                          # never wraps: it runs on past its cell
                          colWidths=[16 * mm, 20 * mm])
            table.setStyle(TableStyle(GRID))
            return [table]

    found = layout_problems("narrow", Narrow().render(), vocabulary)
    assert any("broken over two lines" in p for p in found), found
    assert any("overflows its cell" in p for p in found), found


def test_the_check_sees_a_heading_broken_inside_a_word_or_past_its_cell(
        vocabulary: tuple[set[str], set[str]]) -> None:
    """The heading check itself: "Instrument" in a 12 mm heading cell breaks inside the
    word (as it did in the readings table), and a heading that cannot wrap runs past its
    cell; both are reported, and the same headings with room are not."""
    from reportlab.lib.units import mm
    from reportlab.platypus import Paragraph, TableStyle

    from workpack.render.pdf import GRID, HEAD_ROW, PdfDocument, Table

    class Headed(PdfDocument):
        def __init__(self, width_mm: float) -> None:
            super().__init__()
            self.width_mm = width_mm

        def story(self) -> list[Any]:
            table = Table([[Paragraph("Instrument", self.style["head"]), "Temperature"],
                           ["x", "y"]],  # a bare string never wraps: past its cell
                          colWidths=[self.width_mm * mm, self.width_mm * mm])
            table.setStyle(TableStyle([*GRID, *HEAD_ROW]))
            return [table]

    found = layout_problems("narrow", Headed(12).render(), vocabulary)
    assert any("heading word 'Instrument' broken" in p for p in found), found
    assert any("heading 'Temperature' overflows its cell" in p for p in found), found
    assert layout_problems("wide", Headed(40).render(), vocabulary) == []
