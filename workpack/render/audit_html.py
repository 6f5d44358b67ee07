"""The audit report as one self-contained HTML file: ``render_audit_html(report) -> str``.

Laid out by ``templates/audit.html.j2`` (autoescaped): inline CSS, inline SVG charts, no
script and nothing fetched. Printable in black and white: every status is a word beside a
symbol, never a colour alone. The only date in it is the report's ``as_of``. The words
come from ``audit.wording`` and the charts' layout from ``render.trend_chart``, shared
with ``render.audit_pdf``.
"""

from __future__ import annotations

import functools
from typing import Any

import jinja2

from workpack.audit import wording
from workpack.audit.report import AuditReport
from workpack.numbers import format_number, format_quantity
from workpack.records import OUTCOME_WORDS
from workpack.render.trend_chart import points_text, trend_chart
from workpack.shipped import templates_folder

__all__ = ["render_audit_html"]

TEMPLATES = templates_folder()

# Symbols beside the words (HTML); the PDF draws the same shapes (render.closeout.Mark).
SYMBOLS = {"pass": "✓", "fail": "✗", "not recorded": "—", "recorded": "•",
           "completed": "✓", "failed": "✗", "open": "○", "overdue": "!"}


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
        "outcome_words": OUTCOME_WORDS, "status_words": wording.STATUS_WORDS,
        "symbols": SYMBOLS, "texts": wording.texts(report), "points_text": points_text,
        "entered_shown": wording.entered_shown, "limit_shown": wording.limit_shown,
        "compared_shown": wording.compared_shown, "broken_shown": wording.broken_shown,
        "record_shown": wording.record_shown, "record_history": wording.record_history,
        "signed_shown": wording.signed_shown, "temperature_shown": wording.temperature_shown,
        "plant_shown": wording.plant_shown, "problem_shown": wording.problem_shown,
        "effect_shown": wording.effect_shown, "readings_heading": wording.readings_heading,
        "legend": wording.legend, "judgement_text": wording.judgement_text,
        "recorded": [p for p in report.packages if p.latest is not None],
        "failing": [(p, r) for p in report.packages for r in p.failing],
        "deviations": [(p, d) for p in report.packages for d in p.deviations],
    }
    return _environment().get_template("audit.html.j2").render(context)
