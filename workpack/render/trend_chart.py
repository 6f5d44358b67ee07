"""An insulation trend's chart, laid out in abstract units: where every mark, line, tick
and label goes. ``render.audit_html`` draws it as SVG and ``render.audit_pdf`` as a
reportlab drawing, so the two charts are the same chart. Only numbers of the trend are
placed; nothing is drawn here.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass
from typing import Literal, NamedTuple

from workpack.audit.report import IrTrend, TrendPoint
from workpack.audit.wording import minimum_shown
from workpack.numbers import format_quantity

__all__ = ["ChartMark", "ChartText", "Tick", "TrendChart", "points_text", "trend_chart"]

Point = tuple[float, float]  # x, y


class Tick(NamedTuple):
    at: float  # x on the date axis, y on the value axis
    label: str
Shape = Literal["circle", "square"]


@dataclass(frozen=True)
class ChartMark:
    x: float
    y: float
    shape: Shape  # circle: at or above the minimum; square: below it (failing, or as
    # found and not judged)
    filled: bool  # the lowest reading of its test, on the line
    label: str  # what a reader sees in the table below: date, reading, value


@dataclass(frozen=True)
class ChartText:
    x: float
    y: float  # the baseline
    text: str
    anchor: Literal["start", "middle", "end"]


@dataclass(frozen=True)
class TrendChart:
    """A trend chart laid out in abstract units, y downwards (SVG's convention); the PDF
    flips it. Log scale of Ω on y, days on x; ``text_size`` is the height of the text."""

    width: float
    height: float
    text_size: float
    left: float
    top: float
    right: float
    bottom: float
    y_ticks: tuple[Tick, ...]
    x_ticks: tuple[Tick, ...]
    line: tuple[Point, ...]
    line_labels: tuple[ChartText, ...]
    marks: tuple[ChartMark, ...]
    minimum_y: float | None  # the dashed line of the minimum, where one is known
    minimum_label: ChartText | None
    y_label: str
    x_label: str


def trend_chart(trend: IrTrend, width: float = 640.0, height: float = 300.0,
                text_size: float = 12.0) -> TrendChart:
    """The chart of one element's IR: every reading marked, the lowest of each test joined
    by a line, the minimum dashed. Only numbers of the trend are placed."""
    size = text_size
    values = [p.compared_si for p in trend.points]
    if trend.minimum_si is not None:
        values.append(trend.minimum_si)
    low = math.floor(math.log10(min(values)))
    high = math.ceil(math.log10(max(values)))
    if high == low:
        high += 1
    # room for the longest tick label at the left (a digit is about 0.64 em wide)
    longest = max(len(format_quantity(10.0 ** k, trend.unit)) for k in range(low, high + 1))
    left = max(6.0, 0.66 * longest + 2.2) * size
    right, top, bottom = width - 1.5 * size, size, height - 3.6 * size

    def y_of(ohm: float) -> float:
        return bottom - (math.log10(ohm) - low) / (high - low) * (bottom - top)

    first, last = trend.points[0].taken_on, trend.points[-1].taken_on
    span = (last - first).days
    pad = 2.5 * size

    def x_of(day: dt.date) -> float:
        if span == 0:
            return (left + right) / 2
        return left + pad + (day - first).days / span * (right - left - 2 * pad)

    y_ticks = tuple(Tick(y_of(10.0 ** k), format_quantity(10.0 ** k, trend.unit))
                    for k in range(low, high + 1))
    days = sorted({p.taken_on for p in trend.points})
    room = 7.5 * size  # an ISO date and some air
    x_ticks: list[Tick] = []
    for day in days:
        x = x_of(day)
        if x_ticks and x - x_ticks[-1].at < room:
            if day != days[-1]:
                continue
            x_ticks.pop()  # the last test is always labelled
        x_ticks.append(Tick(x, day.isoformat()))
    # a day with a test as found and one after the work: the two side by side
    both = {p.taken_on for p in trend.points if p.as_found} & {
        p.taken_on for p in trend.points if not p.as_found}

    def x_at(p: TrendPoint) -> float:
        shift = (-1.0 if p.as_found else 1.0) * size if p.taken_on in both else 0.0
        return x_of(p.taken_on) + shift

    line = tuple((x_at(p), y_of(p.compared_si), p) for p in trend.line)
    labels = []
    for i, (x, y, p) in enumerate(line):
        # beside the point, on the side away from the line that reaches it
        near = line[i - 1] if i > 0 else line[i + 1] if len(line) > 1 else None
        label_y = y + 1.5 * size if near is not None and near[1] < y else y - 0.7 * size
        value = format_quantity(p.compared_si, trend.unit)
        on_left = x > right - 6 * size or (p.as_found and p.taken_on in both)
        labels.append(ChartText(x - 0.7 * size, label_y, value, "end") if on_left else
                      ChartText(x + 0.7 * size, label_y, value, "start"))
    marks = tuple(ChartMark(x_at(p), y_of(p.compared_si),
                            "square" if p.outcome == "fail" or (
                                trend.minimum_si is not None
                                and p.compared_si < trend.minimum_si) else "circle",
                            p.lowest_of_test,
                            f"{p.taken_on.isoformat()} {p.package_id} {p.reading_id}: "
                            f"{format_quantity(p.compared_si, trend.unit)}")
                  for p in trend.points)
    my = minimum_label = None
    minimum_text = minimum_shown(trend)
    if trend.minimum_si is not None and minimum_text is not None:
        my = y_of(trend.minimum_si)
        # below the dashed line at the left, where early (healthy) readings rarely are;
        # above it when the line runs along the bottom of the plot
        below = my + 1.3 * size
        minimum_label = ChartText(left + 0.5 * size,
                                  below if below < bottom - 0.3 * size else my - 0.5 * size,
                                  minimum_text, "start")  # its source: the legend
    reference = (f" at {format_quantity(trend.corrected_to_c, '°C')}"
                 if trend.corrected_to_c is not None else "")
    return TrendChart(
        width, height, size, left, top, right, bottom, y_ticks, tuple(x_ticks),
        tuple((x, y) for x, y, _ in line), tuple(labels), marks, my, minimum_label,
        y_label=f"IR{reference} ({trend.unit}, log scale)", x_label="date of test")


def points_text(points: tuple[Point, ...]) -> str:
    """SVG polyline points with one decimal: the same text on every machine."""
    return " ".join(f"{x:.1f},{y:.1f}" for x, y in points)
