"""reportlab's table and keep-together that never stop a document, and package text made
safe for reportlab's paragraph markup."""

from __future__ import annotations

import copy
import math
from collections.abc import Iterator, Sequence
from typing import Any
from xml.sax.saxutils import escape

from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.platypus import Flowable, Paragraph
from reportlab.platypus import KeepTogether as PlatypusKeepTogether
from reportlab.platypus import Table as PlatypusTable


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



# --- column widths sized to what the columns hold --------------------------------------

# A cell as measured once: its widest word, and what each of its parts needs — a
# paragraph (its line height, its width on one line, its words' widths with -1 where a
# line break is, the width of a space) or a fixed part (0, its height, (), 0).
Need = tuple[float, float, tuple[float, ...], float]
Measured = tuple[float, list[Need]]


def _measure(cell: Any) -> Measured:
    """A cell's widest word and its parts (a bare string is not measured: it never
    wraps; a blank or a drawing counts with its own width and height)."""
    parts = cell if isinstance(cell, list | tuple) else [cell]
    word, needs = 0.0, []
    for part in parts:
        if isinstance(part, Paragraph):
            widest_word, widest_line, words = _paragraph_widths(part)
            word = max(word, widest_word)
            space = stringWidth(" ", part.style.fontName, part.style.fontSize)
            needs.append((float(part.style.leading), widest_line, words, space))
        elif isinstance(part, Flowable):
            width, height = part.wrap(0, 1e6)
            word = max(word, float(width or 0))
            needs.append((0.0, float(height or 0), (), 0.0))
    return word, needs


def _paragraph_widths(paragraph: Paragraph) -> tuple[float, float, tuple[float, ...]]:
    """A paragraph's widest word, its widest line unwrapped (lines end at its <br/>s)
    and its words' widths (-1 for a line break), from its fragments without laying it
    out (the table does that once); one already laid out (its fragments regrouped) is
    laid out again and gives no words."""
    if not all(hasattr(frag, "fontName") for frag in paragraph.frags):
        paragraph.wrap(1e6, 1e6)
        return (paragraph.minWidth(), max(paragraph.getActualLineWidths0(), default=0.0),
                ())
    lines, words, current, open_word = [0.0], [], 0.0, False
    for frag in paragraph.frags:
        if getattr(frag, "lineBreak", False):
            words += [current, -1.0] if open_word else [-1.0]
            lines.append(0.0)
            current, open_word = 0.0, False
            continue
        text = getattr(frag, "text", "")
        lines[-1] += stringWidth(text, frag.fontName, frag.fontSize)
        for index, piece in enumerate(text.split(" ")):
            if index > 0 and open_word:  # a space ends the word (which may span fragments)
                words.append(current)
                current, open_word = 0.0, False
            if piece:
                current += stringWidth(piece, frag.fontName, frag.fontSize)
                open_word = True
    if open_word:
        words.append(current)
    return max(words, default=0.0), max(lines), tuple(words)


def _lines(words: tuple[float, ...], space: float, room: float) -> int:
    """Lines a paragraph takes at ``room`` points, broken as reportlab breaks it: at
    spaces, each line as full as it goes; a word wider than the line is cut."""
    lines, at = 1, 0.0
    for width in words:
        if width < 0:
            lines, at = lines + 1, 0.0
            continue
        if at > 0 and at + space + width <= room + 1e-6:
            at += space + width
            continue
        if at > 0:
            lines += 1
        cuts = max(0, math.ceil(width / room - 1e-9) - 1)
        lines, at = lines + cuts, width - cuts * room
    return lines


def _height(needs: list[Need], room: float) -> float:
    """A cell's height at ``room`` points of text width."""
    total = 0.0
    for leading, size, words, space in needs:
        if leading == 0:
            total += size
        elif words:
            total += leading * _lines(words, space, room)
        else:  # measured by layout: lines counted as if cut anywhere
            total += leading * max(1, math.ceil(size / room - 1e-9))
    return total


def content_widths(rows: Sequence[Sequence[Any]], total: float, padding: float,
                   floors: Sequence[float] = ()) -> list[float]:
    """Widths that share ``total`` points among the columns by what they hold, so the
    table is as short as it can be: each column gets at least its widest word (no word
    is broken) or its ``floors`` entry; when every cell fits on one line what is left
    is shared evenly, otherwise room moves between columns while that makes the rows
    (counted in lines) shorter. ``padding``: a cell's left plus right padding. Leave
    out rows with spanned cells; the same rows give the same widths."""
    count = max(len(row) for row in rows)
    cells = [[_measure(cell) for cell in row] + [(0.0, [])] * (count - len(row))
             for row in rows]
    # a word exactly as wide as its room is still broken by reportlab: a point to spare
    least = [max(row[c][0] for row in cells) + padding + 1 for c in range(count)]
    most = [max([size for _, needs in (row[c] for row in cells)
                 for leading, size, _, _ in needs if leading], default=0.0) + padding
            for c in range(count)]
    for column, floor in enumerate(floors):
        least[column] = max(least[column], floor)
    most = [max(low, high) for low, high in zip(least, most, strict=True)]
    room = total - sum(least)
    if room <= 0:  # even the widest words do not fit: share by them
        return [total * w / sum(least) for w in least]
    wants = sum(most) - sum(least)
    if wants <= room:  # every cell fits on one line
        return [w + (room - wants) / count for w in most]
    widths = [low + (high - low) * room / wants for low, high in zip(least, most, strict=True)]

    known: dict[tuple[int, float], list[float]] = {}

    def heights(column: int, width: float) -> list[float]:
        key = (column, round(width, 1))
        if key not in known:
            known[key] = [_height(row[column][1], width - padding) for row in cells]
        return known[key]

    def tallness(trial: list[float]) -> float:
        table = [heights(c, trial[c]) for c in range(count)]
        return sum(max(row) for row in zip(*table, strict=True))

    # what a column may grow to: the width at which one more of its cells fits a line
    lines = [sorted({round(size + padding, 1) for row in cells
                     for leading, size, _, _ in row[c][1] if leading and size + padding <= most[c]})
             for c in range(count)]

    def trials(widths: list[float]) -> Iterator[list[float]]:
        for take in range(count):  # grow one column to a line's width, the others give
            spare = [0.0 if c == take else widths[c] - least[c] for c in range(count)]
            for target in lines[take]:
                need = target - widths[take]
                if need <= 0.05 or need > sum(spare):
                    continue
                share = need / sum(spare)
                yield [target if c == take else widths[c] - spare[c] * share
                       for c in range(count)]
        for step in (4 * mm, 1 * mm):  # room moved from one column to another
            for give in range(count):
                for take in range(count):
                    if give != take and widths[give] - step >= least[give] \
                            and widths[take] < most[take]:
                        trial = list(widths)
                        trial[give] -= step
                        trial[take] += step
                        yield trial

    # starts that set as many rows as they can on one line: rows taken in turn, the
    # one that widens the table least first, each column as wide as its taken cells
    def spread(floor: list[float]) -> list[float]:
        left = total - sum(floor)
        wanting = sum(max(0.0, most[c] - floor[c]) for c in range(count))
        return [floor[c] + (left * max(0.0, most[c] - floor[c]) / wanting if wanting
                            else left / count) for c in range(count)]

    needs = [[max(least[c], max([size for leading, size, _, _ in row[c][1] if leading],
                                default=0.0) + padding) for c in range(count)]
             for row in cells]
    best = tallness(widths)
    taken, waiting = list(least), list(range(len(cells)))
    while waiting:
        cost, chosen = min((sum(max(f, n) for f, n in zip(taken, needs[r], strict=True)), r)
                           for r in waiting)
        if cost > total:
            break
        waiting.remove(chosen)
        taken = [max(f, n) for f, n in zip(taken, needs[chosen], strict=True)]
        if (tried := tallness(trial := spread(taken))) < best - 1e-6:
            widths, best = trial, tried
    improved = True
    while improved:  # take the first trial that makes the table shorter, until none does
        improved = False
        for trial in trials(widths):
            if (tried := tallness(trial)) < best - 1e-6:
                widths, best, improved = trial, tried, True
                break
    return widths
