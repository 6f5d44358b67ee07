"""The printed package and the day sheet, read back the way a later step reads them.

Text comes back through pypdf's extraction, form fields through ``get_fields()``, font
sizes through the text operators. Layout data, not check values: the numbers asserted
are the sample's own, formatted.
"""

from __future__ import annotations

import datetime as dt
import io
import math
import os
import subprocess
import sys
from pathlib import Path

import pytest
from pypdf import PdfReader
from samplepackage import sample_package

from workpack.model.package import (
    Caution,
    IsolationPoint,
    Limit,
    Reading,
    SignalWord,
    Step,
    WorkPackage,
)
from workpack.numbers import format_number, format_quantity
from workpack.render.daysheet import render_day_sheet
from workpack.render.pdf import (
    MIN_TEXT_PT,
    field_name,
    render_package,
    split_field_name,
)

ROOT = Path(__file__).resolve().parent.parent


def reader(data: bytes) -> PdfReader:
    return PdfReader(io.BytesIO(data))


def page_texts(data: bytes) -> list[str]:
    """Each page's text with runs of white space made one space (cells wrap lines)."""
    return [" ".join(page.extract_text().split()) for page in reader(data).pages]


@pytest.fixture(scope="module")
def sample_pdf() -> bytes:
    return render_package(sample_package())


@pytest.fixture(scope="module")
def sample_text(sample_pdf: bytes) -> str:
    return "\n".join(page_texts(sample_pdf))


@pytest.fixture(scope="module")
def long_pdf() -> bytes:
    return render_package(sample_package(steps=60))


def expected_field_names(package: WorkPackage) -> set[str]:
    """The documented scheme, built from the package independently of the renderer."""
    names = {"tester:before", "tester:after", "sign:technician", "sign:supervisor",
             "sign:date", "remarks"}
    for reading in package.readings():
        rid = reading.id.replace(".", "%2E")
        names |= {f"reading:{rid}", f"instrument:{rid}"}
        if reading.needs_temperature:
            names.add(f"temperature:{rid}")
    names |= {f"step:{step.number}:done" for step in package.steps}
    names |= {f"restore:{step.number}:done" for step in package.restoration}
    for point in package.isolation:
        names |= {f"lock:{point.device}:number", f"tag:{point.device}:number",
                  f"lock:{point.device}:applied_by", f"lock:{point.device}:applied_at",
                  f"lock:{point.device}:removed_by", f"lock:{point.device}:removed_at"}
    for index, dead in enumerate(package.proving_dead, start=1):
        names |= {f"dead:{index}:{pair}" for pair in dead.pairs}
    return names


# --- numbers --------------------------------------------------------------------------

@pytest.mark.parametrize(("value", "text"), [
    (254.034, "254"), (25.4034, "25.4"), (0.0012345, "0.00123"), (5.0, "5"),
    (0.866, "0.866"), (6600.0, "6600"), (12345.6, "12300"), (999.6, "1000"), (0.0, "0"),
    (-40.04, "-40"),
])
def test_numbers_are_shown_to_three_significant_figures(value: float, text: str) -> None:
    """Three significant figures, no exponent, no trailing zeros."""
    assert format_number(value) == text


@pytest.mark.parametrize(("value", "unit", "text"), [
    (5e6, "MΩ", "5 MΩ"), (2.2e3, "kΩ", "2.2 kΩ"), (254.03, "V", "254 V"),
    (40.0, "°C", "40 °C"), (150e3, "kVA", "150 kVA"), (0.5, "", "0.5"),
])
def test_si_values_are_shown_in_the_readings_unit(value: float, unit: str, text: str) -> None:
    """The SI value is divided by the unit's scale before formatting."""
    assert format_quantity(value, unit) == text


def test_field_names_escape_periods_and_come_apart_again() -> None:
    """PDF field names may not hold a period: reading ids are escaped and restored."""
    name = field_name("reading", "S2.R1")
    assert name == "reading:S2%2ER1"
    assert split_field_name(name) == ("reading", "S2.R1")
    assert split_field_name(field_name("lock", "CB:7.1%", "number")) == (
        "lock", "CB:7.1%", "number")


# --- content --------------------------------------------------------------------------

@pytest.mark.parametrize("snippet", [
    "254 V ± 25.4 V",  # healthy phase to earth, 440 V / √3
    "229 V to 279 V",  # its limit
    "at least 5 MΩ",  # insulation limit shown in MΩ, not 5000000 Ω
    "temperature corrected to 40 °C",
    "IEEE Std 43 (2013), 12.3",
    "Approach boundaries (table entered at 440 V)",
    "3.0 m (10 ft 0 in)", "1.0 m (3 ft 6 in)", "0.3 m (1 ft 0 in)",
    "NFPA 70E (2021), Table 130.4(E)(a)",
    "Local codes, the employer's safety rules and licensed practice prevail",
    "insulation below minimum",
    "low-insulation-motor", "F4", "electrical isolation", "WL-1 (anchor windlass)",
    "normal supply from SSG-1, SSG-2", "CB-DK-H-WL1", "115 V",
    "cable C-WL1 is 20 m long",
    "supply terminals of WL-1",
    "Tester proven on a known live source", "after",
    "Technician", "Supervisor", "Remarks",
    "A–E 348 V", "B–E 236 V", "C–E 209 V", "Grounded phase: B", "grounded",
    "LOCK", "Phasor diagram", "One-line sketch",
])
def test_the_sample_package_shows_its_values(sample_text: str, snippet: str) -> None:
    """Every value the technician compares with is on the paper, formatted."""
    assert snippet in sample_text


def test_signal_words_are_printed_as_words() -> None:
    """All four signal words appear as text, so black-and-white print keeps them."""
    package = sample_package().model_copy(update={"cautions": (
        *sample_package().cautions,
        Caution(signal_word=SignalWord.caution, text="Hot surface near the terminal box."),
        Caution(signal_word=SignalWord.notice, text="The windlass is out of service."))})
    text = "\n".join(page_texts(render_package(package)))
    for word in ("DANGER", "WARNING", "CAUTION", "NOTICE"):
        assert word in text
    assert "Hot surface near the terminal box." in text


def test_isolation_gaps_are_shown_as_danger() -> None:
    """A supply no lock can cut is a DANGER box, next to its text."""
    package = sample_package().model_copy(update={"cautions": (), "isolation_gaps": (
        "back-feed through T7 from the emergency board",)})
    text = "\n".join(page_texts(render_package(package)))
    assert "DANGER" in text
    assert "back-feed through T7 from the emergency board" in text


def test_a_normally_open_device_says_lock_it_open() -> None:
    """An isolation point already open carries the note to lock it open."""
    sample = sample_package()
    points = (sample.isolation[0].model_copy(update={"already_open": True}),
              sample.isolation[1])
    text = "\n".join(page_texts(render_package(sample.model_copy(
        update={"isolation": points}))))
    assert "Normally open: lock it open" in text
    assert "Normally open" not in "\n".join(page_texts(render_package(sample)))


def test_special_characters_survive_extraction() -> None:
    """Ω ° µ √ are in the embedded font and come back out of the PDF."""
    package = sample_package().model_copy(update={"hazard_facts": (
        "The cable holds 2.2 µF to earth per phase.",)})
    text = "\n".join(page_texts(render_package(package)))
    for char in ("Ω", "°", "µ", "√"):
        assert char in text
    assert "2.2 µF" in text


def test_figures_are_left_out_when_the_package_has_none() -> None:
    """No phasor, no sketch: no figure section and no empty frames."""
    package = sample_package().model_copy(update={"phasor": None, "sketch": None})
    text = "\n".join(page_texts(render_package(package)))
    assert "Phasor diagram" not in text
    assert "One-line sketch" not in text
    assert "254 V ± 25.4 V" in text


def test_phasor_without_earth_point_says_so() -> None:
    """Without a located earth point no lines are drawn, and the caption says why."""
    sample = sample_package()
    assert sample.phasor is not None
    package = sample.model_copy(update={"phasor": sample.phasor.model_copy(
        update={"earth_point_v": None})})
    text = "\n".join(page_texts(render_package(package)))
    assert "Earth point not located" in text
    assert "A–E 348 V" not in text
    assert "A 348 V" in text


# --- pages ----------------------------------------------------------------------------

def test_every_page_names_the_package_and_counts_pages(sample_pdf: bytes) -> None:
    """Each page has the package id and "Page x of y" with the right numbers."""
    texts = page_texts(sample_pdf)
    assert "Page 1 of" in texts[0]
    for number, text in enumerate(texts, start=1):
        assert "WP-2026-12-02-01" in text
        assert f"Page {number} of {len(texts)}" in text


def test_a_long_package_spans_several_pages(long_pdf: bytes) -> None:
    """Sixty steps run over several pages, each page numbered against the total."""
    texts = page_texts(long_pdf)
    assert len(texts) >= 4
    for number, text in enumerate(texts, start=1):
        assert "WP-2026-12-02-01" in text
        assert f"Page {number} of {len(texts)}" in text
        assert f"Page {number + 1} of" not in text
    assert "Work step 60:" in texts[-1] or "Work step 60:" in texts[-2]


def test_a_step_stays_on_one_page_with_its_readings() -> None:
    """Steps with three readings each never leave a reading on the next page."""
    readings_step = sample_package().steps[1]
    steps = tuple(readings_step.model_copy(update={
        "number": n, "text": f"Measure set {n}.",
        "readings": tuple(r.model_copy(update={"id": f"S{n}.R{i}"})
                          for i, r in enumerate(readings_step.readings, start=1))})
        for n in range(1, 16))
    package = sample_package().model_copy(update={"steps": steps})
    texts = page_texts(render_package(package))
    assert len(texts) >= 4
    for step in steps:
        pages = [i for i, text in enumerate(texts) if f"Measure set {step.number}." in text]
        assert len(pages) == 1
        for reading in step.readings:
            assert reading.id in texts[pages[0]], (step.number, reading.id)


@pytest.mark.parametrize(("size", "points"), [("A4", (595.28, 841.89)),
                                              ("Letter", (612.0, 792.0))])
def test_page_size(size: str, points: tuple[float, float]) -> None:
    """A4 and US Letter give their own media boxes on every page."""
    pdf = reader(render_package(sample_package(), size))  # type: ignore[arg-type]
    for page in pdf.pages:
        assert float(page.mediabox.width) == pytest.approx(points[0], abs=0.01)
        assert float(page.mediabox.height) == pytest.approx(points[1], abs=0.01)


def test_unknown_page_size_is_refused() -> None:
    """A page size other than A4 or Letter is a clear error, not a silent default."""
    with pytest.raises(ValueError, match="page size must be one of A4, Letter"):
        render_package(sample_package(), "A3")  # type: ignore[arg-type]


def smallest_text_pt(data: bytes) -> tuple[float, int]:
    """Smallest rendered size of any non-blank text run (pt), and how many runs were seen."""
    seen: list[float] = []

    def visit(text: str, cm: list[float], tm: list[float], font: object,
              size: float) -> None:
        if not text.strip():
            return
        # the 2×2 part of text matrix × current matrix scales the Tf size
        a = tm[0] * cm[0] + tm[1] * cm[2]
        b = tm[0] * cm[1] + tm[1] * cm[3]
        c = tm[2] * cm[0] + tm[3] * cm[2]
        d = tm[2] * cm[1] + tm[3] * cm[3]
        seen.append(size * math.sqrt(abs(a * d - b * c)))

    for page in reader(data).pages:
        page.extract_text(visitor_text=visit)
    return min(seen), len(seen)


def test_no_text_is_smaller_than_nine_points(sample_pdf: bytes, long_pdf: bytes) -> None:
    """Read in poor light: no text run on any page is under 9 pt."""
    for data in (sample_pdf, long_pdf):
        smallest, runs = smallest_text_pt(data)
        assert runs > 100  # the visitor really saw the page text
        assert smallest >= MIN_TEXT_PT


# --- determinism ----------------------------------------------------------------------

def test_the_same_package_gives_the_same_bytes(sample_pdf: bytes) -> None:
    """Two renders of one package are byte-identical; the creation date is the job's."""
    assert render_package(sample_package()) == sample_pdf
    assert reader(sample_pdf).metadata["/CreationDate"].startswith("D:20261202")
    other_day = sample_package().model_copy(update={"date": dt.date(2027, 1, 5)})
    assert reader(render_package(other_day)).metadata["/CreationDate"].startswith(
        "D:20270105")


def test_the_same_bytes_in_another_process(sample_pdf: bytes, tmp_path: Path) -> None:
    """A fresh interpreter with another hash seed writes the same bytes."""
    out = tmp_path / "again.pdf"
    script = ("import sys; sys.path.insert(0, 'tests');"
              "from samplepackage import sample_package;"
              "from workpack.render.pdf import render_package;"
              f"open({str(out)!r}, 'wb').write(render_package(sample_package()))")
    subprocess.run([sys.executable, "-c", script], cwd=ROOT, check=True,
                   env={**os.environ, "PYTHONHASHSEED": "12345"})
    assert out.read_bytes() == sample_pdf


# --- form fields ----------------------------------------------------------------------

def test_every_blank_is_a_form_field_named_by_the_scheme(sample_pdf: bytes) -> None:
    """Readings, temperatures, steps, locks, tags, proving dead, tester and sign-off."""
    fields = reader(sample_pdf).get_fields() or {}
    assert set(fields) == expected_field_names(sample_package())
    assert all("." not in name for name in fields)
    kinds = {name: field.get("/FT") for name, field in fields.items()}
    assert kinds["step:2:done"] == "/Btn"
    assert kinds["tester:before"] == "/Btn"
    assert kinds["restore:1:done"] == "/Btn"
    assert kinds["reading:S2%2ER1"] == "/Tx"
    assert kinds["dead:1:C-E"] == "/Tx"
    assert kinds["remarks"] == "/Tx"


def test_long_package_has_a_field_for_every_step(long_pdf: bytes) -> None:
    """Fields are made for every page, not only the first."""
    fields = reader(long_pdf).get_fields() or {}
    assert set(fields) == expected_field_names(sample_package(steps=60))


def test_each_field_belongs_to_the_page_it_is_drawn_on(long_pdf: bytes) -> None:
    """A widget's /P names the page that lists it, and it lies inside that page."""
    pdf = reader(long_pdf)
    checked = 0
    for page in pdf.pages:
        for annot in page.get("/Annots") or []:
            widget = annot.get_object()
            assert widget["/P"].get_object() == page.get_object()
            x0, y0, x1, y1 = (float(v) for v in widget["/Rect"])
            assert 0 <= x0 < x1 <= float(page.mediabox.width)
            assert 0 <= y0 < y1 <= float(page.mediabox.height)
            checked += 1
    assert checked == len(expected_field_names(sample_package(steps=60)))


def test_a_filled_form_reads_back() -> None:
    """Values written into the fields come back by name (what issue 6 relies on)."""
    from pypdf import PdfWriter

    writer = PdfWriter(clone_from=reader(render_package(sample_package())))
    for page in writer.pages:
        writer.update_page_form_field_values(
            page, {"reading:S2%2ER1": "7.5", "lock:CB-WL1:number": "L-14"},
            auto_regenerate=False)
    buffer = io.BytesIO()
    writer.write(buffer)
    fields = reader(buffer.getvalue()).get_fields() or {}
    assert fields["reading:S2%2ER1"]["/V"] == "7.5"
    assert fields["lock:CB-WL1:number"]["/V"] == "L-14"


def test_duplicate_reading_ids_are_refused() -> None:
    """Two readings with one id would give two fields with one name: an error."""
    sample = sample_package()
    step = sample.steps[1]
    twice = step.model_copy(update={"readings": (step.readings[0], step.readings[0])})
    package = sample.model_copy(update={"steps": (sample.steps[0], twice)})
    with pytest.raises(ValueError, match="reading:S2%2ER1"):
        render_package(package)


def test_readings_in_other_units_are_scaled() -> None:
    """A kΩ reading with a high limit shows "at most 2.2 kΩ"; expected in its unit too."""
    step = Step(number=1, text="Loop resistance of the earth return.", readings=(
        Reading(id="L1", what="earth return loop", unit="kΩ", expected=1500.0,
                tolerance=300.0, limit=Limit(high=2200.0, basis="site rule (invented)")),))
    package = sample_package().model_copy(update={"steps": (step,)})
    text = "\n".join(page_texts(render_package(package)))
    assert "1.5 kΩ ± 0.3 kΩ" in text
    assert "at most 2.2 kΩ" in text
    assert "site rule (invented)" in text


def test_an_item_with_no_isolation_says_so() -> None:
    """No isolation points is printed as a statement, not an empty table."""
    package = sample_package().model_copy(update={"isolation": ()})
    text = "\n".join(page_texts(render_package(package)))
    assert "No isolation points are listed in this package." in text
    fields = reader(render_package(package)).get_fields() or {}
    assert not any(name.startswith(("lock:", "tag:")) for name in fields)


def test_unknown_isolation_voltage_is_said_not_guessed() -> None:
    """A device of unknown voltage is shown as such, no number invented."""
    sample = sample_package()
    point = IsolationPoint(order=3, device="DS-9", device_kind="disconnector", location=None,
                           cuts="shore supply", voltage_v=None, already_open=True)
    package = sample.model_copy(update={"isolation": (*sample.isolation, point)})
    text = "\n".join(page_texts(render_package(package)))
    assert "voltage not known" in text


# --- day sheet ------------------------------------------------------------------------

@pytest.fixture(scope="module")
def day_packages() -> list[WorkPackage]:
    return [sample_package(i) for i in range(1, 9)]


def day_sheet(packages: list[WorkPackage], size: str = "A4") -> bytes:
    return render_day_sheet(
        "MV Skerry Lantern", dt.date(2026, 12, 2), packages,
        scheduled=[p.id for p in packages[:4]], deferred=[p.id for p in packages[4:]],
        conflicts=["WP-2026-12-02-01 and WP-2026-12-02-03 both lock CB-WL1."],
        crew_hours=24.0, page_size=size)  # type: ignore[arg-type]


def test_day_sheet_ranks_jobs_and_totals_crew_hours(day_packages: list[WorkPackage]) -> None:
    """Scheduled jobs in order with a running total; deferred and conflicts listed."""
    data = day_sheet(day_packages)
    texts = page_texts(data)
    text = "\n".join(texts)
    for package in day_packages:
        assert package.id in text
    assert "Crew-hours available" in text and "24 h" in text
    for total in ("6 h", "12 h", "18 h", "24 h"):
        assert total in text
    assert "Deferred" in text
    assert "both lock CB-WL1" in text
    assert "licensed practice prevail" in text
    for number, page in enumerate(texts, start=1):
        assert f"Page {number} of {len(texts)}" in page
    assert text.index("WP-2026-12-02-01") < text.index("WP-2026-12-02-05")
    assert day_sheet(day_packages) == data
    assert smallest_text_pt(data)[0] >= MIN_TEXT_PT


def test_day_sheet_refuses_an_id_without_a_package(day_packages: list[WorkPackage]) -> None:
    """A scheduled id the caller gave no package for is an error naming it."""
    with pytest.raises(ValueError, match="no package given for WP-9"):
        render_day_sheet("MV Skerry Lantern", dt.date(2026, 12, 2), day_packages[:1],
                         scheduled=["WP-9"], deferred=[], conflicts=[], crew_hours=8.0,
                         page_size="A4")


def test_day_sheet_letter(day_packages: list[WorkPackage]) -> None:
    """The day sheet also prints on US Letter."""
    page = reader(day_sheet(day_packages, "Letter")).pages[0]
    assert float(page.mediabox.width) == pytest.approx(612.0)


# --- speed: what the renderer must not do again and again ------------------------------

def test_reportlabs_c_accelerator_is_in_use() -> None:
    """rl_accel (a runtime dependency) replaces reportlab's pure-Python number formatting
    and string widths; without it every page costs a fifth more."""
    from reportlab.lib import rl_accel

    assert type(rl_accel.fp_str).__name__ == "builtin_function_or_method"
    assert type(rl_accel.instanceStringWidthTTF).__name__ == "builtin_function_or_method"


def test_field_appearances_are_built_once_per_look(monkeypatch: pytest.MonkeyPatch) -> None:
    """A long package has well over a hundred check boxes of one size: their six
    appearance streams are built once, not six times per box, and the bytes are the
    same as when every box builds its own."""
    from reportlab.pdfbase.acroform import AcroForm

    built = {"checkboxAP": 0, "txAP": 0}
    for method in built:
        original = getattr(AcroForm, method)

        def counting(self: AcroForm, *args: object, _original: object = original,
                     _method: str = method, **kwargs: object) -> object:
            built[_method] += 1
            return _original(self, *args, **kwargs)  # type: ignore[operator]

        monkeypatch.setattr(AcroForm, method, counting)
    package = sample_package(steps=60)
    pdf = render_package(package)
    fields = reader(pdf).get_fields() or {}
    boxes = sum(1 for field in fields.values() if field.get("/FT") == "/Btn")
    texts = sum(1 for field in fields.values() if field.get("/FT") == "/Tx")
    assert boxes > 60
    sizes = 2  # the step and tester boxes' side (6.5 mm), and room for one more
    assert built["checkboxAP"] <= 6 * sizes
    assert built["txAP"] <= texts

    monkeypatch.setattr("workpack.render.pdf.fields._reuse_appearances", lambda form: None)
    assert render_package(package) == pdf


def test_faster_object_writing_writes_reportlabs_own_bytes(
        sample_pdf: bytes, monkeypatch: pytest.MonkeyPatch) -> None:
    """``render.pdf.objects`` writes the PDF objects faster; written by reportlab alone,
    the same package gives the same bytes (a form field's dictionaries, numbers, names)."""
    import contextlib

    from reportlab.pdfbase import pdfdoc

    import workpack.render.pdf.document as document

    bare = pdfdoc.format, pdfdoc.PDFDictionary.format
    monkeypatch.setattr(document, "faster_objects", contextlib.nullcontext)
    assert render_package(sample_package()) == sample_pdf
    monkeypatch.undo()
    assert (pdfdoc.format, pdfdoc.PDFDictionary.format) == bare  # put back after each use


# --- column widths from content ---------------------------------------------------------

def test_content_widths_fill_the_table_and_never_break_a_word() -> None:
    """``content_widths``: the widths add up to the table; every column is at least its
    widest word wide (so reportlab breaks no word); where every cell fits one line the
    columns are at least their longest line; and a column of long text gets more than
    a column of short ids."""
    from reportlab.lib.styles import ParagraphStyle
    from reportlab.lib.units import mm
    from reportlab.platypus import Paragraph

    from workpack.render.pdf.flowables import content_widths
    from workpack.render.pdf.fonts import FONT, register_fonts

    register_fonts()
    style = ParagraphStyle("t", fontName=FONT, fontSize=9, leading=11)

    def cell(text: str) -> Paragraph:
        return Paragraph(text, style)

    rows = [[cell("F1"), cell("Insulation resistance of the whole circuit, each conductor "
                              "to earth, at the usual test voltage"), cell("CB-AC1")],
            [cell("F2"), cell("short"), cell("Electrochemistry")]]
    total, padding = 120 * mm, 2 * mm
    widths = content_widths(rows, total, padding)
    assert math.isclose(sum(widths), total)
    for column in range(3):
        widest = max(p.minWidth() for p in (row[column] for row in rows))
        assert widths[column] >= widest + padding
    assert widths[1] > widths[0] and widths[1] > widths[2]
    roomy = content_widths([[cell("F1"), cell("CB-AC1")]], 120 * mm, padding)
    assert math.isclose(sum(roomy), 120 * mm)
    assert all(w >= cell(t).minWidth() + padding for w, t in zip(roomy, ("F1", "CB-AC1"),
                                                                    strict=True))
