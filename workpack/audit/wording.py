"""The audit report's words: every heading, sentence and value as both renderings print
them (``render.audit_html`` and ``render.audit_pdf`` lay out; they word nothing shared),
so the HTML and the PDF never say different things. Pure.

``texts(report)`` gives the fixed sentences filled in for one report; the ``*_shown``
functions word one value; ``judgement_text`` and ``legend`` word an insulation trend.
"""

from __future__ import annotations

import math
from typing import NamedTuple

from workpack.audit.report import (
    AuditFilter,
    AuditReport,
    IrTrend,
    PackageAudit,
    ReadingLine,
    RecordRef,
    Status,
)
from workpack.model.package import Limit
from workpack.numbers import format_number, format_quantity
from workpack.records import is_bare_number, utc_text

__all__ = [
    "STATUS_WORDS",
    "JudgementText",
    "broken_shown",
    "compared_shown",
    "effect_shown",
    "entered_shown",
    "filter_shown",
    "judgement_text",
    "legend",
    "limit_shown",
    "minimum_shown",
    "plant_shown",
    "problem_shown",
    "readings_heading",
    "record_history",
    "record_shown",
    "record_state",
    "signed_shown",
    "temperature_shown",
    "texts",
]

# Printed beside each status's symbol: a status is never colour alone.
STATUS_WORDS: dict[Status, str] = {"completed": "COMPLETED", "failed": "FAILED",
                                   "open": "OPEN", "overdue": "OVERDUE"}

TITLE = "Audit of work package records"

# The store's integrity, at the top of the report: the verdict, and what to do about it.
INTACT = "RECORDS INTACT"
GUARDS_MISSING = "CHAIN INTACT, GUARDS MISSING"
GUARDS_MISSING_ADVICE = ("The hash chain still verifies, but the store's append-only guards "
                         "were removed or changed outside workpack. Keep a copy of the file "
                         "as it is and find out who edited it.")
ALTERED = "RECORDS ALTERED: VERIFICATION FAILED"
ALTERED_ADVICE = ("Everything below is read from the store as it now is. It cannot be "
                  "relied on until the break is explained.")

SECTIONS = {
    "status": "Packages and their status",
    "failing": "Failing readings",
    "readings": "Readings against their limits",
    "deviations": "Deviations",
    "isolations": "Isolations not restored",
    "trends": "Insulation resistance by item",
    "superseded": "Records superseded by a correction",
    "unmatched": "Records of packages not given to this audit",
}

# What a section says when it has nothing to list.
NONE_SAID = {
    "packages": "No package issued in this range.",
    "failing": "No reading in the latest records broke its limit.",
    "recorded": "No package in this range has a record yet.",
    "readings": "No readings in this package.",
    "deviations": "No deviations in the latest records.",
    "isolations": "every lock recorded as applied is recorded as removed.",
    "trends": "No insulation-resistance readings of an item in this range.",
}
AS_FOUND = "(as found, before the work: a test of its own)"
LOWEST_OF_TEST = "(lowest of the test)"  # beside the reading a trend's line runs through

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
                "readings of that test. Circle: at or above the minimum; square: below it (a "
                "failing reading, or one recorded as found and not judged). "
                "Dashed line: {minimum}.")
UNMATCHED_INTRO = ("The store holds records of these packages, but their issued package (JSON "
                   "twin) was not given: their readings cannot be set against the package.")
NOTICE = ("Local codes, the employer's safety rules and licensed practice prevail over this "
          "report.")


def filter_shown(f: AuditFilter) -> str:
    """One line: "Packages dated 2026-12-01 to 2026-12-31, all plants; status as of …"."""
    if f.since and f.until:
        span = f"dated {f.since.isoformat()} to {f.until.isoformat()}"
    elif f.since:
        span = f"dated {f.since.isoformat()} or later"
    elif f.until:
        span = f"dated {f.until.isoformat()} or earlier"
    else:
        span = "of any date"
    plant = f"plant {f.plant}" if f.plant else "all plants"
    return f"Packages {span}, {plant}; status as of {f.as_of.isoformat()}"


def texts(report: AuditReport) -> dict[str, str]:
    """The fixed sentences, filled in for one report."""
    f = report.filter
    return {"title": TITLE, "filter": filter_shown(f),
            "intact": INTACT, "guards_missing": GUARDS_MISSING,
            "guards_missing_advice": GUARDS_MISSING_ADVICE, "altered": ALTERED,
            "altered_advice": ALTERED_ADVICE,
            "status_rules": STATUS_RULES.format(as_of=f.as_of.isoformat()),
            "readings_intro": READINGS_INTRO,
            "isolations_intro": ISOLATIONS_INTRO.format(
                plant=f" of {f.plant}" if f.plant else ""),
            "trends_intro": TRENDS_INTRO, "unmatched_intro": UNMATCHED_INTRO,
            "notice": NOTICE, "lowest_of_test": LOWEST_OF_TEST, "as_found": AS_FOUND,
            **{f"section_{key}": text for key, text in SECTIONS.items()},
            **{f"none_{key}": text for key, text in NONE_SAID.items()}}


def minimum_shown(trend: IrTrend) -> str | None:
    """"minimum 5 MΩ", the dashed line of a trend's chart; None when no minimum is known."""
    if trend.minimum_si is None:
        return None
    return f"minimum {format_quantity(trend.minimum_si, trend.unit)}"


def legend(trend: IrTrend) -> str:
    """What the marks and lines of a trend's chart mean."""
    minimum = minimum_shown(trend)
    return CHART_LEGEND.format(minimum=f"{minimum} ({trend.minimum_basis})" if minimum
                               else "no minimum given")


class JudgementText(NamedTuple):
    head: str  # the verdict: "Trend: FALLING. …"
    rule: str  # the thresholds it was judged by


def judgement_text(trend: IrTrend) -> JudgementText:
    """The trend's verdict line and the thresholds it was judged by ("" without one)."""
    j = trend.judgement
    if j is None:
        return JudgementText("", "")
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
    return JudgementText(head, rule)


# --- words for values --------------------------------------------------------------------


def entered_shown(text: str | None, unit: str) -> str:
    """A value as written on the results, with the unit printed beside the box when it
    was written as a bare number; "—" for a blank."""
    if text is None or not text.strip():
        return "—"
    return f"{text} {unit}" if unit and is_bare_number(text) else text


def temperature_shown(text: str | None) -> str:
    return entered_shown(text, "°C") if text is not None else ""


def limit_shown(line: ReadingLine) -> str:
    """"at least 5 MΩ after correction to 40 °C" (the model's own wording) or "no limit"."""
    if line.low is None and line.high is None:
        return "no limit"
    return Limit(low=line.low, high=line.high, basis=line.basis,
                 temperature_corrected_to_c=line.corrected_to_c if line.corrected else None
                 ).describe(line.unit)


def compared_shown(line: ReadingLine) -> str:
    """The value held against the limit: corrected, with its reference temperature; "as
    entered" where no correction applied (three figures would only round the entry)."""
    if line.compared_si is None:
        return "—"
    if not line.corrected or line.corrected_to_c is None:
        return "as entered"
    return (f"{format_quantity(line.compared_si, line.unit)} at "
            f"{format_quantity(line.corrected_to_c, '°C')}")


def broken_shown(line: ReadingLine) -> str:
    """"below the minimum 5 MΩ" for a failing reading; "" otherwise."""
    if line.broke is None or line.broken_limit_si is None:
        return ""
    side = "below the minimum" if line.broke == "minimum" else "above the maximum"
    return f"{side} {format_quantity(line.broken_limit_si, line.unit)}"


def plant_shown(plant: str | None) -> str:
    return plant if plant is not None else "plant not known"


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
    """"signed S. Quayle (technician), R. Tamsin (supervisor), completed on 2026-12-02."
    from the latest record."""
    if package.latest is None:
        return ""
    completed = (f", completed on {package.completed_on.isoformat()}"
                 if package.completed_on else "")
    return (f"signed {package.completed_by or 'nobody'} (technician), "
            f"{package.supervisor or 'nobody'} (supervisor){completed}.")


def readings_heading(package: PackageAudit) -> str:
    """"WP-20261202-06: WL-1, record #7", over the readings of a package's latest record."""
    latest = f", record #{package.latest.sequence}" if package.latest is not None else ""
    return f"{package.package_id}: {package.item}{latest}"


def problem_shown(package: PackageAudit) -> str:
    """Why the latest record of a package is shown in part only; "" when it is whole."""
    return (f"The record could not be read in full: {package.problem}" if package.problem
            else "")


def effect_shown(fails: bool) -> str:
    """What a deviation does to the job."""
    return "FAILS THE JOB" if fails else "INCOMPLETE"
