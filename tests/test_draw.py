"""The whole-plant one-line drawing, checked from the layout's own geometry before it is
rendered: no line through a box, no label over a label or a foreign box, every element
drawn (once per sheet), every edge of the topology drawn as a line or as a pair of
off-sheet connectors, systems framed and titled, normally open points drawn open.

Plants: the two demo plants on several papers, small hand-made plants with awkward
shapes, and generated plants (``tests/plantgen.py``, invented data) up to 1,200 items.
The expected edges are read straight from the topology graph, not from the layout code.
"""

from __future__ import annotations

import hashlib
import io
import os
import subprocess
import sys
from collections import defaultdict
from functools import cache
from pathlib import Path

import pytest
from conftest import ROOT
from imports import forbidden_in
from plantgen import random_plant
from pypdf import PdfReader

from workpack.cli import main
from workpack.loading import load_plant
from workpack.model.plant import Bus, Device, Plant, Transformer
from workpack.render.geometry import elements_drawn, problems
from workpack.render.oneline import draw_plant, render_pdf, render_svg
from workpack.render.oneline_layout import TEXT_PT, OneLineDrawing, Sheet
from workpack.topology import MAGNETIC, Topology

VESSEL = ROOT / "plants" / "demo-vessel.yaml"
SITE = ROOT / "plants" / "demo-site.yaml"


@cache
def demo(path: Path) -> tuple[Plant, Topology]:
    return load_plant(path)


@cache
def drawn(name: str, paper: str) -> tuple[Plant, Topology, OneLineDrawing]:
    if name.startswith("gen"):
        seed, size = (int(v) for v in name[3:].split("-"))
        plant = random_plant(seed, size)
        topology = Topology(plant)
    elif name in HAND_MADE:
        plant = Plant.model_validate(HAND_MADE[name])
        topology = Topology(plant)
    else:
        plant, topology = demo(ROOT / "plants" / f"{name}.yaml")
    return plant, topology, draw_plant(plant, topology, paper)


def _plant(**sections: object) -> dict[str, object]:
    return {"plant": {"code": "HM", "name": "hand-made", "kind": "other", "frequency": 50},
            **sections}


HAND_MADE = {
    # a transformer feeding two breakers straight from its secondary: a system with two
    # roots; the sub-panel listed before the main board
    "two-roots": _plant(
        sources=[{"id": "G1", "kind": "generator", "voltage": 400}],
        buses=[
            {"id": "SUB", "kind": "distribution_panel", "voltage": 400,
             "earthing": "insulated", "from": "CB-SUB"},
            {"id": "MAIN", "kind": "switchboard", "voltage": 400, "earthing": "insulated",
             "from": "CB-G1", "detector": {"id": "IMD", "kind": "insulation_monitor",
                                           "alarm": 20000}},
            {"id": "LV-A", "kind": "lighting_panel", "voltage": 230, "earthing": "insulated",
             "from": "CB-A"},
            {"id": "LV-B", "kind": "lighting_panel", "voltage": 230, "earthing": "insulated",
             "from": "CB-B"}],
        devices=[
            {"id": "CB-G1", "kind": "circuit_breaker", "from": "G1"},
            {"id": "CB-SUB", "kind": "circuit_breaker", "from": "MAIN"},
            {"id": "CB-T", "kind": "circuit_breaker", "from": "SUB"},
            {"id": "CB-A", "kind": "circuit_breaker", "from": "T"},
            {"id": "CB-B", "kind": "fuse", "from": "T"},
            {"id": "CB-M", "kind": "contactor", "from": "SUB"}],
        transformers=[{"id": "T", "construction": "three_phase", "rated_kva": 50000,
                       "primary_voltage": 400, "secondary_voltage": 230,
                       "vector_group": "Dd0", "from": "CB-T"}],
        loads=[{"id": "M", "kind": "motor", "rated_voltage": 400, "from": "CB-M"},
               {"id": "L", "kind": "lighting", "from": "LV-A"}]),
    # two boards joined by two closed breakers: a loop inside one system
    "closed-ring": _plant(
        sources=[{"id": "G1", "kind": "generator", "voltage": 440},
                 {"id": "G2", "kind": "generator", "voltage": 440}],
        buses=[
            {"id": "A", "kind": "switchboard", "voltage": 440, "earthing": "insulated",
             "from": ["CB-G1", "CB-BA"]},
            {"id": "B", "kind": "switchboard", "voltage": 440, "earthing": "insulated",
             "from": ["CB-G2", "CB-AB"]}],
        devices=[
            {"id": "CB-G1", "kind": "circuit_breaker", "from": "G1"},
            {"id": "CB-G2", "kind": "circuit_breaker", "from": "G2"},
            {"id": "CB-AB", "kind": "circuit_breaker", "from": "A"},
            {"id": "CB-BA", "kind": "circuit_breaker", "from": "B"},
            {"id": "CB-P", "kind": "circuit_breaker", "from": "B"}],
        loads=[{"id": "P", "kind": "motor", "rated_voltage": 440, "from": "CB-P",
                "auxiliaries": [{"kind": "space_heater", "from": "CB-BA"}]}]),
}

CASES = [("demo-vessel", "A3"), ("demo-vessel", "A1"), ("demo-vessel", "A0"),
         ("demo-site", "A3"), ("demo-site", "A1"), ("two-roots", "A3"),
         ("closed-ring", "A3"), ("gen1-40", "A3"), ("gen7-60", "A3"), ("gen11-150", "A3"),
         ("gen23-150", "A2"), ("gen5-400", "A3"), ("gen8-400", "A1")]
LARGE = ("gen3-1200", "A3")


def expected_edges(topology: Topology) -> set[tuple[str, str, str]]:
    """Every element-to-element edge of the topology graph, (supply, load, kind), read
    from the graph itself (a transformer's magnetic edge is inside its symbol)."""
    found = set()
    for u, v, data in topology.graph.edges(data=True):
        if data["kind"] == MAGNETIC:
            continue
        load = v if data["supply"] == u else u
        found.add((data["supply"].split(":")[0], load.split(":")[0], data["kind"]))
    return found


def sheet_boxes(sheet: Sheet) -> dict[str, object]:
    return {box.id: box for box in sheet.boxes}


@pytest.mark.parametrize(("name", "paper"), CASES + [LARGE], ids=lambda v: str(v))
def test_no_line_crosses_a_box_and_no_label_overlaps(name: str, paper: str) -> None:
    *_, drawing = drawn(name, paper)
    for sheet in drawing.sheets:
        found = problems(sheet.picture())
        assert found == [], f"sheet {sheet.number}: " + "; ".join(map(str, found[:5]))


@pytest.mark.parametrize(("name", "paper"), CASES + [LARGE], ids=lambda v: str(v))
def test_every_element_is_drawn_once_per_sheet(name: str, paper: str) -> None:
    plant, _, drawing = drawn(name, paper)
    where = elements_drawn(sheet.picture() for sheet in drawing.sheets)
    assert set(where) == set(plant.index())
    for element_id, sheets in where.items():
        assert len(sheets) == len(set(sheets)), f"{element_id} twice on one sheet"
        if len(sheets) > 1:  # only a board continued over sheets, marked as such
            assert isinstance(plant.index()[element_id], Bus)
            for number in sheets:
                bus = sheet_boxes(drawing.sheets[number - 1])[element_id]
                assert "(part " in bus.texts[0].text  # type: ignore[attr-defined]


@pytest.mark.parametrize(("name", "paper"), CASES + [LARGE], ids=lambda v: str(v))
def test_every_edge_is_drawn_as_a_line_or_a_pair_of_connectors(name: str, paper: str) -> None:
    _, topology, drawing = drawn(name, paper)
    lines: dict[tuple[str, str, str], list[tuple[int, frozenset[str], object]]] = (
        defaultdict(list))
    for sheet in drawing.sheets:
        boxes = sheet_boxes(sheet)
        for wire in sheet.wires:
            assert wire.edge is not None
            start, end = boxes[wire.start], boxes[wire.end]
            ends = frozenset(b.element or f"connector:{b.edge}"  # type: ignore[attr-defined]
                             for b in (start, end))
            connector = next((b for b in (start, end)
                              if b.kind == "connector"), None)  # type: ignore[attr-defined]
            lines[wire.edge].append((sheet.number, ends, connector))
    for edge in sorted(expected_edges(topology)):
        supply, load, kind = edge
        drawn_as = lines.get(edge, [])
        direct = [d for d in drawn_as if d[1] == {supply, load}]
        if direct:
            assert len(drawn_as) == 1, f"{edge} drawn more than once"
            continue
        tag = f"connector:{edge}"
        at_supply = [d for d in drawn_as if d[1] == {supply, tag}]
        at_load = [d for d in drawn_as if d[1] == {tag, load}]
        assert len(at_supply) == 1 and len(at_load) == 1, f"{edge} is not drawn"
        # each connector names the sheet the other end is on
        for (own, _, connector), (far_number, _, _) in ((at_supply[0], at_load[0]),
                                                        (at_load[0], at_supply[0])):
            assert connector.other_sheet == far_number  # type: ignore[attr-defined]
            where = "this sheet" if own == far_number else f"sheet {far_number}"
            assert connector.texts[0].text.endswith(where)  # type: ignore[attr-defined]
    assert set(lines) <= expected_edges(topology)


@pytest.mark.parametrize(("name", "paper"), CASES, ids=lambda v: str(v))
def test_systems_are_framed_and_titled(name: str, paper: str) -> None:
    """Each element sits inside a frame of its own galvanic system, whose title gives the
    system's id, voltage and earthing: told apart without colour."""
    _, topology, drawing = drawn(name, paper)
    for sheet in drawing.sheets:
        for box in sheet.boxes:
            if box.element is None or box.kind == "legend":
                continue
            island = topology.island_of(topology.node_in(box.element))
            frames = [f for f in sheet.frames if f.rect.contains(box.rect)]
            assert [f.island for f in frames] == [island.id], box.element
            title = frames[0].texts[0].text
            assert title.startswith(f"System {island.id}: ")
            if island.voltage is not None:
                assert f"{island.voltage:g} V" in title
            words = {"insulated": "insulated (IT)", "solid": "solidly earthed",
                     "high_resistance": "high-resistance earthed", None: "not stated"}
            assert words[island.earthing and island.earthing.value] in title


def box_of(drawing: OneLineDrawing, element_id: str):  # type: ignore[no-untyped-def]
    return next(b for s in drawing.sheets for b in s.boxes if b.element == element_id)


def test_the_vessel_shows_what_a_supervisor_looks_for() -> None:
    plant, topology, drawing = drawn("demo-vessel", "A1")
    t2 = box_of(drawing, "T2")
    assert [t.text for t in t2.texts] == ["T2", "Dyn11 440/208 V"]
    assert [t.text for t in box_of(drawing, "T1").texts] == ["T1", "Dd0 440/115 V"]
    for device in plant.devices:
        box = box_of(drawing, device.id)
        assert ("lockable" in box.marks) == device.can_lock, device.id
        assert ("open" in box.marks) == (device.normally == "open"), device.id
        if device.normally == "open":
            assert "N.O." in box.texts[1].text
    assert "2nd input N.O." in box_of(drawing, "TS-NAV").texts[1].text
    msb = box_of(drawing, "MSB")
    assert "lamps" in msb.marks and "GD-MSB" in msb.texts[1].text
    assert "voltmeters" in box_of(drawing, "ESB").marks
    # auxiliary feeds dashed, power wiring not
    for sheet in drawing.sheets:
        for wire in sheet.wires:
            assert wire.edge is not None
            assert wire.dashed == (wire.edge[2] == "auxiliary"), wire.id


def test_the_site_marks_its_insulation_monitors() -> None:
    _, _, drawing = drawn("demo-site", "A3")
    for bus in ("MSB", "GSB", "ICP", "UPS-DB"):
        assert "insulation_monitor" in box_of(drawing, bus).marks
    assert [t.text for t in box_of(drawing, "T2").texts] == ["T2", "Dyn11 690/400 V"]


@pytest.mark.parametrize(("name", "paper"), CASES, ids=lambda v: str(v))
def test_supplies_are_drawn_above_what_they_feed(name: str, paper: str) -> None:
    """Inside a system the tree runs downward: a supply's box is above its load's box.
    (Routed ties and back-feeds may climb; that is what they are.)"""
    _, _, drawing = drawn(name, paper)
    for sheet in drawing.sheets:
        boxes = sheet_boxes(sheet)
        for wire in sheet.wires:
            if wire.id.startswith("route:"):
                continue
            ends = {boxes[wire.start], boxes[wire.end]}
            if any(b.kind == "connector" for b in ends):  # type: ignore[attr-defined]
                continue
            supply, load, _ = wire.edge  # type: ignore[misc]
            by_element = {b.element: b for b in ends}  # type: ignore[attr-defined]
            assert by_element[supply].rect.y1 <= by_element[load].rect.y0, wire.id


def test_normally_open_ties_join_the_buses_they_close_onto() -> None:
    _, _, drawing = drawn("demo-vessel", "A0")
    sheet = drawing.sheets[0]
    edges = {w.edge: w for w in sheet.wires}
    assert len(drawing.sheets) == 1  # the whole vessel on one A0 sheet
    # (the shore and emergency generator systems sit in the band under the main one, so
    # their ties end at connectors; the edge test above covers those)
    for tie, bus in (("CB-BACKFEED", "MSB"), ("CB-LTIE", "LP-MAIN"), ("CB-UPS", "TS-NAV")):
        wire = edges.get((tie, bus, "wiring")) or edges[(tie, bus, "changeover")]
        assert (wire.start, wire.end) == (tie, bus)


def test_text_is_never_smaller_than_the_minimum() -> None:
    for name, paper in CASES:
        *_, drawing = drawn(name, paper)
        for sheet in drawing.sheets:
            runs = [t for b in sheet.boxes for t in b.texts] + [
                t for f in sheet.frames for t in f.texts] + [t for _, t in sheet.texts]
            assert min(t.size for t in runs) >= TEXT_PT


def test_sheets_fit_their_paper_on_the_demo_plants() -> None:
    for name, paper in CASES:
        *_, drawing = drawn(name, paper)
        assert not any(s.enlarged for s in drawing.sheets), (name, paper)


def test_a_large_generated_plant_renders_on_many_sheets() -> None:
    plant, _, drawing = drawn(*LARGE)
    assert len(plant.index()) >= 1000
    assert len(drawing.sheets) > 10
    pdf = render_pdf(drawing)
    assert len(PdfReader(io.BytesIO(pdf)).pages) == len(drawing.sheets)
    assert render_svg(drawing).startswith(b"<?xml")


def test_same_plant_same_bytes() -> None:
    plant, topology = demo(VESSEL)
    first, second = draw_plant(plant, topology, "A1"), draw_plant(plant, topology, "A1")
    assert render_pdf(first) == render_pdf(second)
    assert render_svg(first) == render_svg(second)


DIGEST = """
import hashlib, sys
from pathlib import Path
from workpack.loading import load_plant
from workpack.render.oneline import draw_plant, render_pdf, render_svg
plant, topology = load_plant(Path(sys.argv[1]))
drawing = draw_plant(plant, topology, "A2")
print(hashlib.sha256(render_pdf(drawing) + render_svg(drawing)).hexdigest())
"""


def test_output_does_not_depend_on_hash_seeds() -> None:
    digests = set()
    for seed in ("1", "2"):
        env = {**os.environ, "PYTHONHASHSEED": seed}
        run = subprocess.run([sys.executable, "-c", DIGEST, str(SITE)], env=env,
                             capture_output=True, text=True, check=True)
        digests.add(run.stdout.strip())
    assert len(digests) == 1


def test_the_pdf_embeds_dejavu_and_reads_back() -> None:
    *_, drawing = drawn("demo-vessel", "A1")
    reader = PdfReader(io.BytesIO(render_pdf(drawing)))
    text = " ".join(page.extract_text() for page in reader.pages)
    for word in ("Dyn11 440/208 V", "N.O.", "System LP-MAIN: 115 V, insulated (IT)",
                 "GD-MSB earth lamps", "Legend", "sheet 1 of"):
        assert word in text
    fonts = {str(f.get("/BaseFont")) for page in reader.pages
             for f in page["/Resources"]["/Font"].get_object().values()}
    assert any("DejaVuSans" in f for f in fonts)


def test_the_svg_fixes_each_text_run_to_its_measured_width() -> None:
    *_, drawing = drawn("demo-site", "A3")
    svg = render_svg(drawing).decode()
    assert svg.count("<text ") == svg.count('lengthAdjust="spacingAndGlyphs"') > 100
    assert svg.count('<g id="sheet-') == len(drawing.sheets)


def test_draw_command_writes_pdf_and_svg(tmp_path: Path, capsys) -> None:  # type: ignore
    assert main(["draw", str(VESSEL), "--out", str(tmp_path / "vessel.pdf"),
                 "--paper", "A1"]) == 0
    assert "2 sheet(s) of A1 written to" in capsys.readouterr().out
    assert (tmp_path / "vessel.pdf").read_bytes().startswith(b"%PDF")
    assert main(["draw", str(SITE), "--out", str(tmp_path / "site.svg")]) == 0
    assert (tmp_path / "site.svg").read_bytes().startswith(b"<?xml")


def test_draw_command_refuses_other_file_kinds(tmp_path: Path, capsys) -> None:  # type: ignore
    assert main(["draw", str(VESSEL), "--out", str(tmp_path / "vessel.png")]) == 2
    err = capsys.readouterr().err
    assert err.strip().count("\n") == 0 and "expected a .pdf or .svg" in err
    assert not (tmp_path / "vessel.png").exists()


def test_draw_command_reports_a_broken_plant_on_one_line(tmp_path: Path, capsys) -> None:
    broken = tmp_path / "broken.yaml"
    broken.write_text(VESSEL.read_text().replace("kind: switchboard\n", "kind: switchbord\n",
                                                 1))
    assert main(["draw", str(broken), "--out", str(tmp_path / "x.pdf")]) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err and err.startswith(f"{broken}:")
    assert not (tmp_path / "x.pdf").exists()


LAYOUT_MODULES = ["geometry.py", "oneline_layout.py"]
FORBIDDEN = {"os", "pathlib", "io", "shutil", "sqlite3", "yaml", "reportlab", "subprocess",
             "socket", "tempfile", "workpack.loading", "workpack.cli", "workpack.yamlsource"}


@pytest.mark.parametrize("name", LAYOUT_MODULES)
def test_layout_and_geometry_do_no_io(name: str) -> None:
    assert not forbidden_in(ROOT / "workpack" / "render" / name, FORBIDDEN)


def test_transformers_sit_in_the_system_of_their_primary() -> None:
    plant, topology, drawing = drawn("demo-vessel", "A1")
    for transformer in plant.transformers:
        assert isinstance(transformer, Transformer)
        sheet = next(s for s in drawing.sheets if transformer.id in sheet_boxes(s))
        box = sheet_boxes(sheet)[transformer.id]
        primary = topology.island_of(f"{transformer.id}:primary").id
        assert [f.island for f in sheet.frames if f.rect.contains(box.rect)] == [  # type: ignore
            primary]


def test_device_without_a_lock_has_no_padlock() -> None:
    plant, _, drawing = drawn("two-roots", "A3")
    contactor = box_of(drawing, "CB-M")
    assert isinstance(plant.index()["CB-M"], Device)
    assert "lockable" not in contactor.marks and "fuse" in box_of(drawing, "CB-B").marks


def digest(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()
