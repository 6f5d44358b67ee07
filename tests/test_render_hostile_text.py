"""Every printed text field, at any length, through every PDF renderer (issue 10, point 2):
the package, the day sheet, the close-out and the audit. Each field carries its own
numbered words ("cau0001 cau0002 …"); every word must come back out of the PDF and no
text may run past the page's edge. A device id of 300 letters without a break stands
for the long unbreakable tokens (ids, hashes). Invented data; no check values.
"""

from __future__ import annotations

import datetime as dt
import io
from pathlib import Path
from typing import Any

import pytest
from pypdf import PdfReader
from test_audit import filled, ir_package, noon
from test_render_long_text import text_past_the_edge

from workpack.audit import build_audit
from workpack.evaluate import evaluate
from workpack.model.package import Caution, SignalWord, WorkPackage
from workpack.records import record_payload
from workpack.render.audit_html import render_audit_html
from workpack.render.audit_pdf import render_audit_pdf
from workpack.render.closeout import render_closeout
from workpack.render.daysheet import render_day_sheet
from workpack.render.pdf import render_package
from workpack.store import open_store, package_sha256

DEVICE = "CB-" + "Q" * 300
DAY = dt.date(2026, 12, 2)


def numbered(prefix: str, count: int) -> str:
    return " ".join(f"{prefix}{n:04d}" for n in range(1, count + 1))


def hostile_package() -> tuple[WorkPackage, dict[str, str]]:
    """The sample package with every text field long; returns the texts put in."""
    texts = {prefix: numbered(prefix, count) for prefix, count in (
        ("ttl", 150), ("prr", 300), ("itl", 120), ("hzf", 300), ("cau", 800), ("ppe", 200),
        ("cut", 300), ("loc", 150), ("gap", 300), ("sto", 200), ("pdw", 150), ("stp", 800),
        ("rdw", 300), ("lmb", 300), ("acc", 300), ("rst", 300), ("aps", 100))}
    base = ir_package(3, DAY)
    point = base.isolation[0].model_copy(update={
        "device": DEVICE, "cuts": texts["cut"], "location": texts["loc"]})
    megger = base.steps[1]
    first = megger.readings[0]
    readings = (first.model_copy(update={
        "what": texts["rdw"], "limit": first.limit.model_copy(update={"basis": texts["lmb"]})
        if first.limit else None}), *megger.readings[1:])
    steps = (base.steps[0].model_copy(update={"text": texts["stp"]}),
             megger.model_copy(update={"readings": readings}), *base.steps[2:])
    restoration = (base.restoration[0].model_copy(update={"text": texts["rst"]}),)
    package = base.model_copy(update={
        "title": texts["ttl"], "priority_reason": texts["prr"], "item_label": texts["itl"],
        "hazard_facts": (texts["hzf"],),
        "cautions": (Caution(signal_word=SignalWord.danger, text=texts["cau"]),
                     *base.cautions),
        "ppe": (texts["ppe"],), "isolation": (point, *base.isolation[1:]),
        "isolation_gaps": (texts["gap"],), "stored_energy": (texts["sto"],),
        "proving_dead": (base.proving_dead[0].model_copy(update={"where": texts["pdw"]}),),
        "steps": steps, "acceptance": (texts["acc"],), "restoration": restoration,
        "approach": base.approach.model_copy(update={"source": texts["aps"]})
        if base.approach else None,
    })
    return package, texts


def words(data: bytes) -> set[str]:
    """The words of the PDF, without the punctuation the layout puts after a field."""
    return {w.strip(".,;:()") for page in PdfReader(io.BytesIO(data)).pages
            for w in page.extract_text().split()}


def unbroken(data: bytes) -> str:
    return "".join("".join(page.extract_text().split())
                   for page in PdfReader(io.BytesIO(data)).pages)


def check(data: bytes, texts: dict[str, str], tmp_path: Path, name: str) -> None:
    found = words(data)
    for prefix, text in texts.items():
        missing = [w for w in text.split() if w not in found]
        assert not missing, f"{name}: {prefix} lost {len(missing)} words, first {missing[0]}"
    path = tmp_path / f"{name}.pdf"
    path.write_bytes(data)
    assert not text_past_the_edge(path), name


@pytest.fixture(scope="module")
def hostile() -> tuple[WorkPackage, dict[str, str]]:
    return hostile_package()


def test_the_package_prints_every_word(hostile: Any, tmp_path: Path) -> None:
    package, texts = hostile
    data = render_package(package)
    check(data, texts, tmp_path, "package")
    assert DEVICE in unbroken(data)  # the isolation table wraps the id, whole
    assert render_package(package) == data
    for page in PdfReader(io.BytesIO(data)).pages:  # a cut row still says what it is
        text = page.extract_text()
        if any(word.startswith("cau") for word in text.split()):
            assert "DANGER" in text
        if any(word.startswith("prr") for word in text.split()):
            assert "Priority" in text


def test_the_day_sheet_prints_every_word(hostile: Any, tmp_path: Path) -> None:
    title, conflict = numbered("ttl", 500), numbered("cnf", 300)
    package = hostile[0].model_copy(update={"title": title, "item": DEVICE})
    data = render_day_sheet("MV Skerry Lantern", DAY, [package], [package.id], [],
                            [conflict], 16.0)
    check(data, {"ttl": title, "cnf": conflict}, tmp_path, "daysheet")
    assert unbroken(data).count("Q") == 300  # the item id, wrapped beside the long title


def test_the_closeout_prints_every_word(hostile: Any, tmp_path: Path, standards: dict) -> None:
    package, texts = hostile
    remarks = numbered("rmk", 800)
    results = filled(package, (12, 40, 30)).model_copy(update={"remarks": remarks})
    evaluation = evaluate(package, results, standards)
    data = render_closeout(package, evaluation, None, results=results)
    check(data, {**texts, "rmk": remarks}, tmp_path, "closeout")


def test_the_audit_prints_every_word(hostile: Any, tmp_path: Path, standards: dict) -> None:
    package, _ = hostile
    name = numbered("who", 200)
    results = filled(package, (12, 40, 30), left_on=(DEVICE,))
    evaluation = evaluate(package, results, standards)
    with open_store(tmp_path / "r.sqlite") as store:
        store.append(package_id=package.id, package_sha256=package_sha256(package),
                     results=record_payload(results, evaluation), recorded_by=name,
                     recorded_at=noon(DAY), verdict=evaluation.verdict)
        report = build_audit(store.records(), {package.id: package}, store.verify(),
                             since=None, until=None, plant=None, as_of=DAY,
                             standards=standards)
    data = render_audit_pdf(report)
    check(data, {"who": name}, tmp_path, "audit")
    assert DEVICE in unbroken(data)  # the lock left on, by its whole id
    html = render_audit_html(report)
    assert name in html and DEVICE in html
