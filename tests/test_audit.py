"""The audit report, built from real records: packages filled in, evaluated, stored in a
temporary SQLite store, read back, audited and rendered to HTML and PDF.

Invented data. The one published figure the tests lean on is IEEE Std 43-2013's
temperature correction (halving per 10 °C rise to 40 °C), which the evaluation applies;
the expected corrected values are worked out here from that rule, not read from the code.
"""

from __future__ import annotations

import ast
import datetime as dt
import io
import shutil
import sqlite3
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import pytest
from pypdf import PdfReader
from samplepackage import PAIRS, sample_package

from workpack.audit import AuditReport, build_audit
from workpack.electrical import TrendStatus
from workpack.evaluate import evaluate
from workpack.model.evaluation import Evaluation
from workpack.model.package import Limit, Step, WorkPackage
from workpack.model.results import LockRecord, MeasuredValue, Results, StepDone
from workpack.records import record_payload
from workpack.render.audit_html import render_audit_html
from workpack.render.audit_pdf import render_audit_pdf
from workpack.render.pdf import MIN_TEXT_PT
from workpack.store import Record, open_store, package_sha256

ROOT = Path(__file__).resolve().parent.parent
PLANT = "MV Skerry Lantern"
OTHER_PLANT = "Demo Quarry Substation"
AS_OF = dt.date(2026, 12, 10)
IR_LIMIT = Limit(low=5e6, basis="IEEE Std 43 (2013), 12.3: 5 MΩ",
                 temperature_corrected_to_c=40.0, code_set="ieee43-2013")


def ir40(megohm: float, at_c: float) -> float:
    """IEEE Std 43-2013 temperature correction: R40 = R_T · 0.5^((40 − T)/10), in Ω."""
    return megohm * 1e6 * 0.5 ** ((40.0 - at_c) / 10.0)


# --- building real data -------------------------------------------------------------------

def ir_package(number: int, day: dt.date, plant: str = PLANT) -> WorkPackage:
    """The sample windlass package, its IR readings of element WL-1 judged after the
    IEEE 43 correction, dated ``day``."""
    base = sample_package(number)
    megger = base.steps[1]
    readings = tuple(r.model_copy(update={"limit": IR_LIMIT, "element": "WL-1",
                                          "test_voltage_v": 500.0})
                     for r in megger.readings)
    steps = (base.steps[0], megger.model_copy(update={"readings": readings}),
             *base.steps[2:])
    return base.model_copy(update={"id": f"WP-{day.isoformat()}-{number:02d}", "date": day,
                                   "plant": plant, "steps": steps})


def filled(package: WorkPackage, ir: tuple[Any, Any, Any] | None, *, at_c: float = 25.0,
           left_on: tuple[str, ...] = (), signed: bool = True) -> Results:
    """Results of ``package``: everything done, IR values as given (None: left blank),
    the restoration voltages written three ways, the devices in ``left_on`` never
    recorded as unlocked."""
    locks = {}
    for point in package.isolation:
        removed = point.device not in left_on
        locks[point.device] = LockRecord(
            lock=f"L-{point.order:02d}", tag=f"T-{point.order:02d}", applied_by="S. Quayle",
            applied_at="08:10", removed_by="S. Quayle" if removed else None,
            removed_at="15:40" if removed else None)
    readings = {f"X1.R{i}": MeasuredValue(value=v)
                for i, v in enumerate((253, "254 V", 252.5), start=1)}
    if ir is not None:
        readings |= {f"S2.R{i}": MeasuredValue(value=v, temperature=at_c)
                     for i, v in enumerate(ir, start=1)}
    return Results(
        package=package.id, completed_by="S. Quayle" if signed else None,
        supervisor="R. Tamsin", completed_on=package.date, tester_proven_before=True,
        tester_proven_after=True, isolation=locks,
        proving_dead={1: dict.fromkeys(PAIRS, 0)},
        steps={s.number: StepDone(done=True) for s in package.steps},
        readings=readings, restoration={s.number: StepDone(done=True)
                                        for s in package.restoration},
        remarks="Heater found off; switched on after the test.")


def noon(day: dt.date, hour: int = 16) -> dt.datetime:
    return dt.datetime(day.year, day.month, day.day, hour, 0, tzinfo=dt.UTC)


def store_job(store: Any, package: WorkPackage, results: Results,
              standards: Mapping[str, Any], at: dt.datetime,
              supersedes: int | None = None) -> tuple[Evaluation, Record]:
    evaluation = evaluate(package, results, standards)
    record = store.append(package_id=package.id, package_sha256=package_sha256(package),
                          results=record_payload(results, evaluation), recorded_by="office",
                          recorded_at=at, verdict=evaluation.verdict, supersedes=supersedes)
    return evaluation, record


P1 = ir_package(1, dt.date(2026, 9, 1))     # passed
P2 = ir_package(2, dt.date(2026, 11, 2))    # failed as first entered, then corrected: passed
P3 = ir_package(3, dt.date(2026, 12, 2))    # failed: R1 low; the heater breaker left locked
P4 = ir_package(4, dt.date(2026, 12, 20))   # not done yet, dated after AS_OF: open
P5 = ir_package(5, dt.date(2026, 12, 5))    # IR left blank, unsigned: incomplete, overdue
P6 = ir_package(6, dt.date(2026, 11, 20))   # never recorded, dated before AS_OF: overdue
P7 = ir_package(7, dt.date(2026, 12, 6), plant=OTHER_PLANT)  # another plant, lock left on
PACKAGES = {p.id: p for p in (P1, P2, P3, P4, P5, P6, P7)}


@pytest.fixture(scope="module")
def db(tmp_path_factory: pytest.TempPathFactory, standards: dict) -> Path:
    """The store: records 1 to 6 (record 4 corrects record 2)."""
    path = tmp_path_factory.mktemp("audit") / "r.sqlite"
    with open_store(path) as store:
        store_job(store, P1, filled(P1, (120, 150, 140)), standards, noon(P1.date))
        store_job(store, P2, filled(P2, ("6 MΩ", 55, 70.5)), standards, noon(P2.date))
        store_job(store, P3, filled(P3, (12, 40, 30), left_on=("CB-DK-H-WL1",)), standards,
                  noon(P3.date))
        store_job(store, P2, filled(P2, ("60 MΩ", 55, 70.5)), standards,
                  noon(dt.date(2026, 12, 3), 9), supersedes=2)
        store_job(store, P5, filled(P5, None, signed=False), standards, noon(P5.date))
        store_job(store, P7, filled(P7, (300, 310, 290), left_on=("CB-WL1",)), standards,
                  noon(P7.date))
    return path


def audit(path: Path, standards: Mapping[str, Any], *, plant: str | None = PLANT,
          since: dt.date | None = None, until: dt.date | None = None,
          packages: Mapping[str, WorkPackage] = PACKAGES) -> AuditReport:
    with open_store(path, create=False) as store:
        return build_audit(store.records(), packages, store.verify(), since=since,
                           until=until, plant=plant, as_of=AS_OF, standards=standards)


@pytest.fixture(scope="module")
def report(db: Path, standards: dict) -> AuditReport:
    return audit(db, standards)


@pytest.fixture(scope="module")
def html(report: AuditReport) -> str:
    return render_audit_html(report)


@pytest.fixture(scope="module")
def pdf(report: AuditReport) -> bytes:
    return render_audit_pdf(report)


def pdf_text(data: bytes) -> str:
    return "\n".join(" ".join(page.extract_text().split())
                     for page in PdfReader(io.BytesIO(data)).pages)


def by_id(report: AuditReport) -> dict[str, Any]:
    return {p.package_id: p for p in report.packages}


# --- statuses and records -------------------------------------------------------------------

def test_statuses_follow_the_latest_effective_record(report: AuditReport) -> None:
    """Passed, failed, incomplete before the as-of date, unrecorded on either side of it."""
    assert {pid: p.status for pid, p in by_id(report).items()} == {
        P1.id: "completed", P2.id: "completed", P3.id: "failed", P4.id: "open",
        P5.id: "overdue", P6.id: "overdue"}
    assert report.counts() == {"completed": 2, "failed": 1, "open": 1, "overdue": 2}


def test_a_package_dated_on_the_as_of_day_with_an_incomplete_record_is_open(
        db: Path, standards: dict) -> None:
    """The boundary: dated as_of itself is still open, not overdue."""
    moved = {**PACKAGES, P5.id: P5.model_copy(update={"date": AS_OF})}
    assert by_id(audit(db, standards, packages=moved))[P5.id].status == "open"


def test_the_latest_record_names_who_and_when(report: AuditReport) -> None:
    p3 = by_id(report)[P3.id]
    assert p3.latest.sequence == 3
    assert p3.latest.recorded_by == "office"
    assert p3.latest.recorded_at == noon(P3.date)
    assert (p3.completed_by, p3.supervisor) == ("S. Quayle", "R. Tamsin")
    assert by_id(report)[P4.id].latest is None


def test_a_superseded_record_is_listed_but_not_counted(report: AuditReport) -> None:
    """Record 2 (a mistyped 6 MΩ) is corrected by record 4: only record 4 counts."""
    p2 = by_id(report)[P2.id]
    assert [(r.sequence, r.superseded_by) for r in p2.records] == [(2, 4), (4, None)]
    assert p2.latest.sequence == 4 and p2.status == "completed"
    assert [r.sequence for r in report.superseded] == [2]
    assert {r.id: r.entered for r in p2.readings}["S2.R1"] == "60 MΩ"
    assert not p2.failing
    wl1 = report.trends[0]
    assert {p.record_sequence for p in wl1.points if p.package_id == P2.id} == {4}


def test_the_html_marks_the_superseded_record(html: str) -> None:
    assert "#2 failed, superseded by #4" in html
    assert "Records superseded by a correction" in html


# --- readings, limits, deviations -----------------------------------------------------------

def test_readings_are_shown_exactly_as_entered(report: AuditReport, html: str,
                                               pdf: bytes) -> None:
    """Bare numbers get the unit printed beside their box; text keeps its own unit."""
    p3 = {r.id: r for r in by_id(report)[P3.id].readings}
    assert [p3[f"S2.R{i}"].entered for i in (1, 2, 3)] == ["12", "40", "30"]
    assert [p3[f"X1.R{i}"].entered for i in (1, 2, 3)] == ["253", "254 V", "252.5"]
    assert p3["S2.R1"].entered_temperature == "25"
    assert p3["S2.R1"].measured_si == pytest.approx(12e6)
    text = pdf_text(pdf)
    for shown in ("12 MΩ", "40 MΩ", "30 MΩ", "253 V", "254 V", "252.5 V", "25 °C"):
        assert shown in html
        assert shown in text


def test_corrected_values_come_from_the_record(report: AuditReport) -> None:
    """The value held against the limit is the IEEE 43 correction of the entry."""
    p3 = {r.id: r for r in by_id(report)[P3.id].readings}
    assert p3["S2.R1"].compared_si == pytest.approx(ir40(12, 25))
    assert p3["S2.R1"].corrected_to_c == 40.0
    assert p3["X1.R1"].corrected_to_c is None  # no correction asked for a voltage


def test_a_failing_reading_is_flagged_with_the_limit_it_broke(report: AuditReport, html: str,
                                                              pdf: bytes) -> None:
    failing = by_id(report)[P3.id].failing
    assert [r.id for r in failing] == ["S2.R1"]
    assert failing[0].broke == "minimum"
    assert failing[0].broken_limit_si == 5e6
    assert "IEEE Std 43 (2013), 12.3" in failing[0].basis
    for text in (html, pdf_text(pdf)):
        assert "below the minimum 5 MΩ" in text
        assert "4.24 MΩ at 40 °C" in text


def test_deviations_are_listed_with_their_effect(report: AuditReport, html: str) -> None:
    p5 = by_id(report)[P5.id]
    kinds = {(d.kind, d.ref, d.fails) for d in p5.deviations}
    assert ("signature", "technician", False) in kinds
    assert ("reading", "S2.R1", False) in kinds
    assert "no technician signature" in html
    assert "FAILS THE JOB" in html and "INCOMPLETE" in html


# --- isolations -----------------------------------------------------------------------------

def test_a_lock_never_removed_is_listed(report: AuditReport, html: str, pdf: bytes) -> None:
    left = [(i.package_id, i.device, i.lock, i.applied_by) for i in report.open_isolations]
    assert left == [(P3.id, "CB-DK-H-WL1", "L-02", "S. Quayle")]
    assert report.open_isolations[0].record.sequence == 3
    assert "CB-DK-H-WL1" in html and "CB-DK-H-WL1" in pdf_text(pdf)


def test_isolations_not_restored_span_all_dates_and_the_plant_filter(db: Path,
                                                                     standards: dict) -> None:
    """A lock left on outside the date range is still listed; another plant's is not,
    unless no plant is given."""
    narrow = audit(db, standards, since=dt.date(2026, 12, 20))
    assert [i.device for i in narrow.open_isolations] == ["CB-DK-H-WL1"]
    every = audit(db, standards, plant=None)
    assert {(i.package_id, i.device) for i in every.open_isolations} == {
        (P3.id, "CB-DK-H-WL1"), (P7.id, "CB-WL1")}


# --- the insulation trend -------------------------------------------------------------------

def test_the_trend_has_corrected_values_in_date_order_and_the_minimum(
        report: AuditReport) -> None:
    [trend] = report.trends  # the other plant's WL-1 is filtered out
    assert trend.element == "WL-1"
    dates = [p.taken_on for p in trend.points]
    assert dates == sorted(dates)
    assert [(p.taken_on, p.compared_si) for p in trend.line] == [
        (P1.date, pytest.approx(ir40(120, 25))),
        (P2.date, pytest.approx(ir40(55, 25))),
        (P3.date, pytest.approx(ir40(12, 25)))]
    assert len(trend.points) == 9  # three phases a test, every one marked
    assert trend.minimum_si == 5e6 and "IEEE Std 43" in trend.minimum_basis
    assert trend.corrected_to_c == 40.0 and trend.code_set == "ieee43-2013"


def test_the_trend_is_judged_on_the_lowest_reading_of_each_test(report: AuditReport) -> None:
    judgement = report.trends[0].judgement
    assert judgement is not None
    assert judgement.status is TrendStatus.BELOW_MINIMUM
    assert judgement.corrected_ohm == pytest.approx([ir40(120, 25), ir40(55, 25),
                                                     ir40(12, 25)])
    assert judgement.minimum_ohm == 5e6


def test_readings_without_a_value_are_left_out_of_the_trend_and_said_so(
        report: AuditReport) -> None:
    notes = report.trends[0].notes
    assert any(n.startswith(f"{P5.id} S2.R1") and "not recorded" in n for n in notes)


def test_the_trend_keeps_history_before_the_range(db: Path, standards: dict) -> None:
    """An item measured in the range shows its earlier tests too; packages outside the
    range are not listed."""
    december = audit(db, standards, since=dt.date(2026, 12, 1), until=dt.date(2026, 12, 31))
    assert set(by_id(december)) == {P3.id, P4.id, P5.id}
    assert [p.taken_on for p in december.trends[0].line] == [P1.date, P2.date, P3.date]
    autumn = audit(db, standards, until=dt.date(2026, 11, 30))
    assert [p.taken_on for p in autumn.trends[0].line] == [P1.date, P2.date]


def test_the_chart_draws_the_minimum_dashed_and_labelled(html: str, pdf: bytes) -> None:
    assert "<svg" in html and 'stroke-dasharray="7 4"' in html
    # the dashed line labelled with its value; its source stands in the legend under it
    assert ">minimum 5 MΩ<" in html
    assert "Dashed line: minimum 5 MΩ (IEEE Std 43 (2013), 12.3: 5 MΩ)" in html
    assert "IR at 40 °C (MΩ, log scale)" in html and "date of test" in html
    text = pdf_text(pdf)
    assert "minimum 5 MΩ" in text and "IR at 40 °C (MΩ, log scale)" in text


# --- integrity ------------------------------------------------------------------------------

def tamper(path: Path) -> None:
    """Drop the guards and rewrite a stored reading, as an attacker would."""
    raw = sqlite3.connect(path, isolation_level=None)
    try:
        for name in ("records_no_update", "records_no_delete", "records_append_in_order"):
            raw.execute(f"DROP TRIGGER {name}")
        [stored] = raw.execute("SELECT results_json FROM records WHERE sequence = 3").fetchone()
        assert '"value":12.0}' in stored  # S2.R1 as entered: 12 MΩ
        raw.execute("UPDATE records SET results_json = ? WHERE sequence = 3",
                    (stored.replace('"value":12.0}', '"value":120.0}', 1),))
    finally:
        raw.close()


def test_the_integrity_result_is_at_the_top(report: AuditReport, html: str,
                                            pdf: bytes) -> None:
    assert report.integrity.ok and report.integrity.count == 6
    assert report.integrity.head_sequence == 6
    assert html.index("RECORDS INTACT") < html.index("Packages and their status")
    assert "OK, 6 records, chain intact" in html
    text = pdf_text(pdf)
    assert text.index("RECORDS INTACT") < text.index("Packages and their status")


def test_the_integrity_result_changes_when_the_store_is_tampered(
        db: Path, tmp_path: Path, standards: dict) -> None:
    copy = tmp_path / "tampered.sqlite"
    shutil.copyfile(db, copy)
    tamper(copy)
    broken = audit(copy, standards)
    assert not broken.integrity.ok and not broken.integrity.guards_intact
    assert "record 3 was altered" in broken.integrity.message
    html = render_audit_html(broken)
    assert "RECORDS ALTERED: VERIFICATION FAILED" in html and "RECORDS INTACT" not in html
    assert 'class="integrity broken"' in html
    assert "record 3 was altered" in pdf_text(render_audit_pdf(broken))


# --- the renderings -------------------------------------------------------------------------

def test_the_html_is_self_contained(html: str) -> None:
    lowered = html.lower()
    for outside in ("http://", "https://", "src=", "<script", "<link", "url(", "@import"):
        assert outside not in lowered


def test_the_html_is_the_same_on_every_run(db: Path, standards: dict, html: str) -> None:
    assert render_audit_html(audit(db, standards)) == html


def test_statuses_are_words_beside_symbols(html: str) -> None:
    for symbol, word in (("✓", "COMPLETED"), ("✗", "FAILED"), ("○", "OPEN"),
                         ("!", "OVERDUE"), ("✓", "PASS"), ("✗", "FAIL")):
        assert f'aria-hidden="true">{symbol}</span> {word}' in html


def test_the_pdf_is_deterministic_and_counts_pages(report: AuditReport, pdf: bytes) -> None:
    assert render_audit_pdf(report) == pdf
    pages = PdfReader(io.BytesIO(pdf)).pages
    for number, page in enumerate(pages, start=1):
        assert f"Page {number} of {len(pages)}" in page.extract_text()
    assert PdfReader(io.BytesIO(pdf)).metadata["/CreationDate"].startswith("D:20261210")


def test_the_pdf_shows_statuses_and_outcomes_in_words(pdf: bytes) -> None:
    text = pdf_text(pdf)
    for word in ("COMPLETED", "FAILED", "OPEN", "OVERDUE", "PASS", "FAIL", "NOT RECORDED",
                 "BELOW MINIMUM"):
        assert word in text


def test_no_pdf_text_is_under_nine_points(pdf: bytes) -> None:
    sizes: list[float] = []

    def visit(text: str, cm: list[float], tm: list[float], font: object,
              size: float) -> None:
        if text.strip():
            scale = abs((tm[0] * cm[0] + tm[1] * cm[2]) * (tm[2] * cm[1] + tm[3] * cm[3])
                        - (tm[0] * cm[1] + tm[1] * cm[3]) * (tm[2] * cm[0] + tm[3] * cm[2]))
            sizes.append(size * scale ** 0.5)

    for page in PdfReader(io.BytesIO(pdf)).pages:
        page.extract_text(visitor_text=visit)
    assert len(sizes) > 100 and min(sizes) >= MIN_TEXT_PT - 1e-6


def test_letter_paper_renders(report: AuditReport) -> None:
    page = PdfReader(io.BytesIO(render_audit_pdf(report, "Letter"))).pages[0]
    assert (float(page.mediabox.width), float(page.mediabox.height)) == (612.0, 792.0)


# --- odd inputs -----------------------------------------------------------------------------

def test_records_of_packages_not_given_are_listed_apart(db: Path, standards: dict) -> None:
    given = {k: v for k, v in PACKAGES.items() if k != P1.id}
    report = audit(db, standards, packages=given)
    assert [r.sequence for r in report.unmatched] == [1]
    assert P1.id not in by_id(report)
    assert "Records of packages not given to this audit" in render_audit_html(report)


def test_a_record_of_another_version_of_the_package_says_so(db: Path,
                                                            standards: dict) -> None:
    changed = {**PACKAGES, P1.id: P1.model_copy(update={"title": "Retitled after issue"})}
    report = audit(db, standards, packages=changed)
    assert by_id(report)[P1.id].latest.package_matches is False
    assert "ANSWERS ANOTHER VERSION OF THE PACKAGE" in render_audit_html(report)


def test_an_item_without_a_code_set_is_judged_with_the_plant_default_and_says_so(
        tmp_path: Path, standards: dict) -> None:
    """A limit naming no code set is not corrected by the evaluation, so the plot shows the
    values as measured; the judgement (the planner's) corrects them with the plant's
    default tables, and the report says that it judged other values than it plots."""
    plain = Limit(low=1e6, basis="invented minimum for this test")
    packages = {}
    with open_store(tmp_path / "r.sqlite") as store:
        for n, (day, value) in enumerate(((dt.date(2026, 10, 1), 80), (dt.date(2026, 11, 1),
                                                                       40)), start=1):
            base = ir_package(n, day)
            step = base.steps[1]
            step = step.model_copy(update={"readings": tuple(
                r.model_copy(update={"limit": plain}) for r in step.readings)})
            package = base.model_copy(update={"steps": (base.steps[0], step,
                                                        *base.steps[2:])})
            packages[package.id] = package
            store_job(store, package, filled(package, (value, value + 5, value + 10)),
                      standards, noon(day))
        report = build_audit(store.records(), packages, store.verify(), since=None,
                             until=None, plant=None, as_of=AS_OF, standards=standards,
                             default_code_set="ieee43-2013")
    [trend] = report.trends
    assert [p.compared_si for p in trend.line] == [80e6, 40e6]
    assert trend.corrected_to_c is None and trend.code_set == "ieee43-2013"
    assert trend.judgement is not None
    assert trend.judgement.corrected_ohm == pytest.approx([ir40(80, 25), ir40(40, 25)])
    assert any(n.startswith("judged on 28.3 MΩ, 14.1 MΩ (ieee43-2013") for n in trend.notes)


def test_steps_without_readings_make_no_trend(tmp_path: Path, standards: dict) -> None:
    package = sample_package(9).model_copy(update={"steps": (Step(number=1, text="Look."),),
                                                   "restoration": ()})
    with open_store(tmp_path / "r.sqlite") as store:
        store_job(store, package, Results(package=package.id), standards, noon(package.date))
        report = build_audit(store.records(), {package.id: package}, store.verify(),
                             since=None, until=None, plant=None, as_of=AS_OF,
                             standards=standards)
    assert report.trends == ()
    assert report.packages[0].status == "overdue"  # incomplete, dated before AS_OF
    render_audit_pdf(report)
    assert "No insulation-resistance readings" in render_audit_html(report)


@pytest.mark.parametrize("module", sorted((ROOT / "workpack" / "audit").glob("*.py")),
                         ids=lambda path: path.name)
def test_the_audit_core_reads_no_files(module: Path) -> None:
    """No module of workpack/audit imports a file, database, PDF or template module, and
    none opens anything."""
    tree = ast.parse(module.read_text(encoding="utf-8"))
    imported = {alias.name for node in ast.walk(tree) if isinstance(node, ast.Import)
                for alias in node.names}
    imported |= {node.module for node in ast.walk(tree)
                 if isinstance(node, ast.ImportFrom) and node.module}
    forbidden = {"os", "pathlib", "io", "sqlite3", "reportlab", "jinja2", "shutil"}
    assert not {name for name in imported if name.split(".")[0] in forbidden}
    assert not any(isinstance(node, ast.Call) and getattr(node.func, "id", None) == "open"
                   for node in ast.walk(tree))


def test_importing_the_audit_and_the_record_format_loads_no_database_pdf_or_template() -> None:
    """What is really loaded, not what the import lines say: ``workpack.store`` loads its
    backends (sqlite3) only when one is used."""
    import subprocess
    import sys

    code = ("import sys, workpack.audit, workpack.audit.wording, workpack.records, "
            "workpack.history; print(sorted(m for m in ('sqlite3', 'psycopg', 'reportlab', "
            "'pypdf', 'jinja2') if m in sys.modules))")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True)
    assert done.stdout.strip() == "[]"
