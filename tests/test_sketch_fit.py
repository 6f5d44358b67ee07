"""The one-line sketch always fits the space it is given, and says what it leaves out
(issue 9, point 11). Invented sketches; sizes in points.
"""

from __future__ import annotations

from collections.abc import Iterator

import pytest
from reportlab.graphics.shapes import Drawing, Group, String
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from samplepackage import sample_package

from workpack.model.package import Sketch, SketchNode
from workpack.render.figures import (
    FIGURE_TEXT_PT,
    MIN_SKETCH_HEIGHT,
    fit_sketch,
    shortened,
    sketch_drawing,
)
from workpack.render.pdf import FONT, FONT_BOLD, register_fonts, render_package

WIDTH = (250.0, 515.0)
HEIGHT = 150 * mm


@pytest.fixture(autouse=True, scope="module")
def fonts() -> None:
    register_fonts()


def strings(drawing: Drawing | Group) -> Iterator[String]:
    for shape in drawing.contents:
        if isinstance(shape, String):
            yield shape
        elif isinstance(shape, Group):
            yield from strings(shape)


def labels(drawing: Drawing) -> list[str]:
    return [s.text for s in strings(drawing)]


def assert_inside(drawing: Drawing) -> None:
    """Every word of the drawing lies inside its frame."""
    for s in strings(drawing):
        width = stringWidth(s.text, s.fontName, s.fontSize)
        left = {"start": s.x, "middle": s.x - width / 2, "end": s.x - width}[s.textAnchor]
        assert 0 <= left and left + width <= drawing.width, s.text
        assert 0 <= s.y <= drawing.height, s.text


def node(node_id: str, kind: str, isolate: bool = False, label: str | None = None) -> SketchNode:
    return SketchNode(id=node_id, label=label or node_id, kind=kind, isolate=isolate)


def chain(ids: list[str]) -> tuple[tuple[str, str], ...]:
    return tuple(zip(ids, ids[1:], strict=False))


def test_a_sketch_that_fits_is_drawn_whole_without_notes() -> None:
    sketch = sample_package().sketch
    assert sketch is not None
    fitted = fit_sketch(sketch, (250.0, 250.0), HEIGHT, FONT, FONT_BOLD)
    whole = sketch_drawing(sketch, 250.0, FONT, FONT_BOLD)
    assert fitted.notes == ()
    assert (fitted.drawing.width, fitted.drawing.height) == (whole.width, whole.height)
    assert labels(fitted.drawing) == labels(whole)


def test_a_deep_chain_of_boards_becomes_one_dashed_box() -> None:
    boards = [f"P{n}" for n in range(1, 61)]
    path = ["G1", *boards, "CB-9", "M9"]
    sketch = Sketch(nodes=(node("G1", "source"), *[node(b, "bus") for b in boards],
                           node("CB-9", "device", isolate=True), node("M9", "item")),
                    edges=chain(path))
    assert sketch_drawing(sketch, WIDTH[1], FONT, FONT_BOLD).height > HEIGHT  # why it fits
    fitted = fit_sketch(sketch, WIDTH, HEIGHT, FONT, FONT_BOLD)
    assert fitted.drawing.height <= HEIGHT
    assert_inside(fitted.drawing)
    assert {"G1", "P1 … P60: 60 boards", "CB-9", "M9", "LOCK"} <= set(labels(fitted.drawing))
    assert fitted.notes == ("A dashed box, named by its first and last, stands for 60 boards "
                            "in a row that only pass the supply on.",)


def test_many_isolation_points_side_by_side_are_drawn_as_far_as_they_fit() -> None:
    count = 200
    nodes = [node("M1", "item")]
    edges = []
    for n in range(1, count + 1):
        nodes += [node(f"G{n}", "source"), node(f"CB-G{n}", "device", isolate=True)]
        edges += [(f"G{n}", f"CB-G{n}"), (f"CB-G{n}", "M1")]
    fitted = fit_sketch(Sketch(nodes=tuple(nodes), edges=tuple(edges)), WIDTH, HEIGHT, FONT,
                        FONT_BOLD)
    drawn = labels(fitted.drawing).count("LOCK")
    assert 1 <= drawn < count
    assert fitted.drawing.height <= HEIGHT and fitted.drawing.width <= WIDTH[1]
    assert_inside(fitted.drawing)
    assert fitted.notes == (f"Drawn: {drawn} of the {count} ways in through an isolation "
                            f"point ({count - drawn} more not shown); the isolation table "
                            "lists every lock.",)


def test_many_supplies_in_parallel_are_one_box() -> None:
    sources = [f"G{n}" for n in range(1, 31)]
    sketch = Sketch(nodes=(*[node(s, "source") for s in sources], node("MAIN", "item")),
                    edges=tuple((s, "MAIN") for s in sources))
    fitted = fit_sketch(sketch, WIDTH, HEIGHT, FONT, FONT_BOLD)
    assert labels(fitted.drawing) == ["G1 … G30: 30 supplies", "MAIN"]
    assert fitted.notes == ("A dashed box, named by its first and last, stands for 30 "
                            "supplies side by side.",)


def test_an_isolation_point_behind_an_endless_chain_leaves_the_item_alone() -> None:
    # transformers are never merged: a chain of them that no page can hold
    chain_ids = [f"T{n}" for n in range(1, 41)]
    sketch = Sketch(nodes=(node("G1", "source"), *[node(t, "transformer") for t in chain_ids],
                           node("CB-1", "device", isolate=True), node("M1", "item")),
                    edges=chain(["G1", *chain_ids, "CB-1", "M1"]))
    fitted = fit_sketch(sketch, WIDTH, 0.0, FONT, FONT_BOLD)  # no room asked for at all
    assert fitted.drawing.height == MIN_SKETCH_HEIGHT
    assert labels(fitted.drawing) == ["M1"]
    assert fitted.notes[-1].startswith("Drawn: 0 of the 1 ways in through an isolation point")


def test_long_names_are_shortened_and_said_to_be() -> None:
    long_id = "CB-" + "X" * 400
    sketch = Sketch(nodes=(node("G1", "source"), node(long_id, "device", isolate=True),
                           node("M1", "item", label="M1 " + "windlass " * 80)),
                    edges=chain(["G1", long_id, "M1"]))
    fitted = fit_sketch(sketch, (250.0, 250.0), HEIGHT, FONT, FONT_BOLD)
    assert_inside(fitted.drawing)
    assert any(text.startswith("CB-XXX") and text.endswith("…")
               for text in labels(fitted.drawing))
    assert fitted.notes == ("Names too long for the sketch end in “…”; the isolation table "
                            "gives them in full.",)


def test_shortened_keeps_what_fits_and_marks_the_cut() -> None:
    assert shortened("CB-WL1", FONT, 100.0) == "CB-WL1"
    text = "ABCDEFGHIJ" * 20
    cut = shortened(text, FONT, 60.0)
    assert cut.endswith("…") and text.startswith(cut[:-1])
    assert stringWidth(cut, FONT, FIGURE_TEXT_PT) <= 60.0
    one_more = text[:len(cut)] + "…"
    assert stringWidth(one_more, FONT, FIGURE_TEXT_PT) > 60.0  # one more letter: too wide


def test_a_summarised_sketch_renders_the_same_bytes_twice() -> None:
    boards = [f"P{n}" for n in range(1, 80)]
    sketch = Sketch(nodes=(node("G1", "source"), *[node(b, "bus") for b in boards],
                           node("CB-9", "device", isolate=True), node("M9", "item")),
                    edges=chain(["G1", *boards, "CB-9", "M9"]))
    package = sample_package().model_copy(update={"sketch": sketch, "phasor": None})
    assert render_package(package) == render_package(package)
