"""The audit report as one self-contained HTML file: ``render_audit_html(report) -> str``.

Laid out by ``templates/audit.html.j2`` (autoescaped): inline CSS, inline SVG charts, no
script and nothing fetched. Printable in black and white: every status is a word beside a
symbol, never a colour alone. The only date in it is the report's ``as_of``.

The words shown for values (``entered_shown``, ``limit_shown``, ``record_shown``) and the
trend chart's layout (``trend_chart``) live here and are shared with ``audit_pdf``, so
both renderings say the same things and draw the same chart.
"""

from __future__ import annotations

import datetime as dt
import functools
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

import jinja2

import workpack
from workpack.audit import (
    OUTCOME_WORDS,
    STATUS_WORDS,
    AuditReport,
    IrTrend,
    PackageAudit,
    ReadingLine,
    RecordRef,
    is_bare_number,
)
from workpack.model.package import Limit
from workpack.numbers import format_number, format_quantity
from workpack.render.closeout import utc_text

__all__ = [
    "ChartText",
    "TrendChart",
    "broken_shown",
    "compared_shown",
    "entered_shown",
    "judgement_text",
    "legend",
    "limit_shown",
    "record_history",
    "record_shown",
    "record_state",
    "signed_shown",
    "render_audit_html",
    "temperature_shown",
    "texts",
    "trend_chart",
]

TEMPLATES = Path(workpack.__file__).resolve().parent.parent / "templates"

# Symbols beside the words (HTML); the PDF draws the same shapes (render.closeout.Mark).
SYMBOLS = {"pass": "✓", "fail": "✗", "not recorded": "—", "recorded": "•",
           "completed": "✓", "failed": "✗", "open": "○", "overdue": "!"}


# Explanations both renderings print under their headings.
STATUS_RULES = ("COMPLETED: the latest record passed. FAILED: it failed. OPEN: no record "
                "yet, or the latest is incomplete, and the package is dated {as_of} or later. "
                "OVERDUE: the same, dated earlier. A record superseded by a correction is "
                "listed but never counted.")
READINGS_INTRO = ("From each package's latest record, exactly as entered; \"compared\" is the "
                  "value the evaluation held against the limit (corrected to the reference "
                  "temperature where the limit asks for it).")
ISOLATIONS_INTRO = ("Locks recorded as applied and never recorded as removed, in the latest "
                    "record of every package{plant}, whatever its date.")
TRENDS_INTRO = ("Every reading of an item in a resistance unit, from the latest record of each "
                "package up to the end of the range. The line joins the lowest reading of each "
                "test (the weakest phase governs); the trend is judged as planning judges it, "
                "on the lowest reading of each day.")
CHART_LEGEND = ("Filled mark: the lowest reading of a test (on the line); open mark: the other "
                "readings of that test. Circle: within the limit; square: a failing reading. "
                "Dashed line: {minimum}.")
UNMATCHED_INTRO = ("The store holds records of these packages, but their issued package (JSON "
                   "twin) was not given: their readings cannot be set against the package.")
NOTICE = ("Local codes, the employer's safety rules and licensed practice prevail over this "
          "report.")


def texts(report: AuditReport) -> dict[str, str]:
    """The explanations filled in for one report."""
    f = report.filter
    return {"status_rules": STATUS_RULES.format(as_of=f.as_of.isoformat()),
            "readings_intro": READINGS_INTRO,
            "isolations_intro": ISOLATIONS_INTRO.format(
                plant=f" of {f.plant}" if f.plant else ""),
            "trends_intro": TRENDS_INTRO, "unmatched_intro": UNMATCHED_INTRO,
            "notice": NOTICE}


def legend(chart: TrendChart) -> str:
    minimum = f"{chart.minimum[1]} ({chart.minimum[2]})" if chart.minimum else \
        "no minimum given"
    return CHART_LEGEND.format(minimum=minimum)


def judgement_text(trend: IrTrend) -> tuple[str, str]:
    """The trend's verdict line and the thresholds it was judged by."""
    j = trend.judgement
    if j is None:
        return "", ""
    head = f"Trend: {j.status.value.upper()}. {j.note}."
    if j.rate_per_year is not None and j.rate_per_year > -1.0:
        if abs(j.rate_per_year) <= 0.5:
            head += f" Fitted change {j.rate_per_year:+.0%} a year."
        else:  # a percentage near -100 % says little; the time to halve or double does
            days = 365.25 * math.log(2) / abs(math.log1p(j.rate_per_year))
            head += (f" Fitted {'fall' if j.rate_per_year < 0 else 'rise'}: "
                     f"{'halving' if j.rate_per_year < 0 else 'doubling'} about every "
                     f"{format_number(days)} days.")
    minimum = format_quantity(j.minimum_ohm, trend.unit)
    rule = (f"Judged on the lowest reading of each day against {minimum}; thresholds: a "
            f"fall of more than {j.drop_threshold:.0%} from the best earlier value, or the "
            f"minimum reached within {format_number(j.horizon_months)} months ({j.citation}).")
    return head, rule


# --- words for values --------------------------------------------------------------------


def entered_shown(text: str | None, unit: str) -> str:
    """A value as written on the results, with the unit printed beside the box when it
    was written as a bare number; "—" for a blank."""
    if text is None or not text.strip():
        return "—"
    return f"{text} {unit}" if unit and is_bare_number(text) else text


def limit_shown(line: ReadingLine) -> str:
    """"at least 5 MΩ after correction to 40 °C" (the model's own wording) or "no limit"."""
    if line.low is None and line.high is None:
        return "no limit"
    return Limit(low=line.low, high=line.high, basis=line.basis,
                 temperature_corrected_to_c=line.corrected_to_c).describe(line.unit)


def compared_shown(line: ReadingLine) -> str:
    """The value held against the limit: corrected, with its reference temperature; "as
    entered" where no correction applied (three figures would only round the entry)."""
    if line.compared_si is None:
        return "—"
    if line.corrected_to_c is None:
        return "as entered"
    return (f"{format_quantity(line.compared_si, line.unit)} at "
            f"{format_quantity(line.corrected_to_c, '°C')}")


def broken_shown(line: ReadingLine) -> str:
    """"below the minimum 5 MΩ" for a failing reading; "" otherwise."""
    if line.broke is None or line.broken_limit_si is None:
        return ""
    side = "below the minimum" if line.broke == "minimum" else "above the maximum"
    return f"{side} {format_quantity(line.broken_limit_si, line.unit)}"


def record_shown(ref: RecordRef | None) -> str:
    """"#3 by S. Quayle, 2026-12-02 16:00 UTC" or "no record"."""
    if ref is None:
        return "no record"
    return f"#{ref.sequence} by {ref.recorded_by}, {utc_text(ref.recorded_at)}"


def record_state(ref: RecordRef, latest: RecordRef | None) -> str:
    """What became of a record: superseded, latest, or an earlier one left standing."""
    if ref.superseded_by is not None:
        return f"superseded by #{ref.superseded_by}"
    if latest is not None and ref.sequence == latest.sequence:
        return "latest"
    return "earlier record, not superseded"


def record_history(package: PackageAudit) -> list[str]:
    """One line per record of a package: the latest with who and when, the others with
    what became of them; a record of another version of the package says so."""
    lines = []
    for ref in package.records:
        state = record_state(ref, package.latest)
        line = f"#{ref.sequence} {ref.verdict}, {state}"
        if state == "latest":
            line += f": by {ref.recorded_by}, {utc_text(ref.recorded_at)}"
        if ref.package_matches is False:
            line += "; ANSWERS ANOTHER VERSION OF THE PACKAGE (hash differs)"
        lines.append(line)
    return lines or ["no record"]


def signed_shown(package: PackageAudit) -> str:
    """"signed S. Quayle (technician), R. Tamsin (supervisor)" from the latest record."""
    if package.latest is None:
        return ""
    return (f"signed {package.completed_by or 'nobody'} (technician), "
            f"{package.supervisor or 'nobody'} (supervisor)")


def temperature_shown(text: str | None) -> str:
    return entered_shown(text, "°C") if text is not None else ""


# --- the trend chart ------------------------------------------------------------------------

Point = tuple[float, float]
Shape = Literal["circle", "square"]


@dataclass(frozen=True)
class ChartMark:
    x: float
    y: float
    shape: Shape  # circle: within the limit; square: a failing reading
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
    y_ticks: tuple[tuple[float, str], ...]
    x_ticks: tuple[tuple[float, str], ...]
    line: tuple[Point, ...]
    line_labels: tuple[ChartText, ...]
    marks: tuple[ChartMark, ...]
    minimum: tuple[float, str, str] | None  # y, "minimum 5 MΩ", its source
    minimum_label: ChartText | None
    y_label: str
    x_label: str


def trend_chart(trend: IrTrend, width: float = 640.0, height: float = 300.0,
                text_size: float = 12.0) -> TrendChart:
    """The chart of one element's IR: every reading marked, the lowest of each test joined
    by a line, the minimum dashed. Only numbers of the trend are placed."""
    size = text_size
    left, right, top, bottom = 6.0 * size, width - 1.5 * size, size, height - 3.6 * size
    values = [p.compared_si for p in trend.points]
    if trend.minimum_si is not None:
        values.append(trend.minimum_si)
    low = math.floor(math.log10(min(values)))
    high = math.ceil(math.log10(max(values)))
    if high == low:
        high += 1

    def y_of(ohm: float) -> float:
        return bottom - (math.log10(ohm) - low) / (high - low) * (bottom - top)

    first, last = trend.points[0].taken_on, trend.points[-1].taken_on
    span = (last - first).days
    pad = 2.5 * size

    def x_of(day: dt.date) -> float:
        if span == 0:
            return (left + right) / 2
        return left + pad + (day - first).days / span * (right - left - 2 * pad)

    y_ticks = tuple((y_of(10.0 ** k), format_quantity(10.0 ** k, trend.unit))
                    for k in range(low, high + 1))
    days = sorted({p.taken_on for p in trend.points})
    room = 7.5 * size  # an ISO date and some air
    x_ticks: list[tuple[float, str]] = []
    for day in days:
        x = x_of(day)
        if x_ticks and x - x_ticks[-1][0] < room:
            if day != days[-1]:
                continue
            x_ticks.pop()  # the last test is always labelled
        x_ticks.append((x, day.isoformat()))
    line = tuple((x_of(p.taken_on), y_of(p.compared_si), p) for p in trend.line)
    labels = []
    for i, (x, y, p) in enumerate(line):
        # beside the point, on the side away from the line that reaches it
        near = line[i - 1] if i > 0 else line[i + 1] if len(line) > 1 else None
        label_y = y + 1.5 * size if near is not None and near[1] < y else y - 0.7 * size
        value = format_quantity(p.compared_si, trend.unit)
        labels.append(ChartText(x - 0.7 * size, label_y, value, "end")
                      if x > right - 6 * size else
                      ChartText(x + 0.7 * size, label_y, value, "start"))
    marks = tuple(ChartMark(x_of(p.taken_on), y_of(p.compared_si),
                            "square" if p.outcome == "fail" else "circle", p.lowest_of_test,
                            f"{p.taken_on.isoformat()} {p.package_id} {p.reading_id}: "
                            f"{format_quantity(p.compared_si, trend.unit)}")
                  for p in trend.points)
    minimum = minimum_label = None
    if trend.minimum_si is not None:
        my = y_of(trend.minimum_si)
        minimum = (my, f"minimum {format_quantity(trend.minimum_si, trend.unit)}",
                   trend.minimum_basis)
        # below the dashed line at the left, where early (healthy) readings rarely are;
        # above it when the line runs along the bottom of the plot
        below = my + 1.3 * size
        minimum_label = ChartText(left + 0.5 * size,
                                  below if below < bottom - 0.3 * size else my - 0.5 * size,
                                  f"{minimum[1]}: {minimum[2]}", "start")
    reference = (f" at {format_quantity(trend.corrected_to_c, '°C')}"
                 if trend.corrected_to_c is not None else "")
    return TrendChart(
        width, height, size, left, top, right, bottom, y_ticks, tuple(x_ticks),
        tuple((x, y) for x, y, _ in line), tuple(labels), marks, minimum, minimum_label,
        y_label=f"IR{reference} ({trend.unit}, log scale)", x_label="date of test")


def points_text(points: tuple[Point, ...]) -> str:
    """SVG polyline points with one decimal: the same text on every machine."""
    return " ".join(f"{x:.1f},{y:.1f}" for x, y in points)


# --- the HTML ---------------------------------------------------------------------------------


@functools.cache
def _environment() -> jinja2.Environment:
    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(TEMPLATES)),
                             autoescape=True, undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)
    env.filters["qty"] = lambda value, unit: "—" if value is None else format_quantity(
        value, unit)
    env.filters["num"] = format_number
    env.filters["f1"] = lambda value: f"{value:.1f}"
    return env


def render_audit_html(report: AuditReport) -> str:
    """The report as one HTML document (UTF-8 text)."""
    charts = {t.element: trend_chart(t) for t in report.trends if t.points}
    context: dict[str, Any] = {
        "report": report, "charts": charts, "counts": report.counts(),
        "outcome_words": OUTCOME_WORDS, "status_words": STATUS_WORDS, "symbols": SYMBOLS,
        "entered_shown": entered_shown, "limit_shown": limit_shown,
        "compared_shown": compared_shown, "broken_shown": broken_shown,
        "record_shown": record_shown, "record_history": record_history,
        "signed_shown": signed_shown,
        "temperature_shown": temperature_shown, "points_text": points_text,
        "texts": texts(report), "legend": legend, "judgement_text": judgement_text,
        "recorded": [p for p in report.packages if p.latest is not None],
        "failing": [(p, r) for p in report.packages for r in p.failing],
        "deviations": [(p, d) for p in report.packages for d in p.deviations],
    }
    return _environment().get_template("audit.html.j2").render(context)
