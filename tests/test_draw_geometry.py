"""The geometry checker on its own: every kind of fault it names is found on a small
hand-made picture, a clean picture passes, and its segment-through-rectangle test agrees
with shapely (an independent computational-geometry library, GEOS underneath) on random
cases."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import LineString, box

from workpack.render.geometry import (
    Box,
    Label,
    Picture,
    Rect,
    Wire,
    collinear_overlap,
    elements_drawn,
    problems,
    segment_meets_inside,
)

A = Box("A", Rect(10, 10, 50, 30), element="A")
B = Box("B", Rect(10, 80, 50, 100), element="B")
C = Box("C", Rect(60, 40, 100, 60), element="C")


def kinds(picture: Picture) -> list[str]:
    return [p.kind for p in problems(picture)]


def clean(**changes: object) -> Picture:
    base = dict(width=200.0, height=200.0, boxes=(A, B, C),
                labels=(Label("A", Rect(12, 12, 30, 24), "A"),
                        Label("title", Rect(120, 10, 180, 22), "frame")),
                wires=(Wire("A-B", ((30, 30), (30, 80)), "A", "B"),),
                regions=frozenset({"frame"}))
    base.update(changes)
    return Picture(**base)  # type: ignore[arg-type]


def test_a_clean_picture_has_no_problems() -> None:
    assert problems(clean()) == []


def test_a_wire_through_a_box_it_does_not_end_at_is_found() -> None:
    wire = Wire("A-B", ((30, 30), (30, 35), (80, 35), (80, 70), (30, 70), (30, 80)), "A", "B")
    found = problems(clean(wires=(wire,)))
    assert [p.kind for p in found] == ["wire-through-box"]
    assert "C" in found[0].message


def test_a_wire_through_its_own_end_box_is_found() -> None:
    wire = Wire("A-B", ((30, 10), (30, 80)), "A", "B")  # starts on A's top, crosses A
    assert kinds(clean(wires=(wire,))) == ["wire-through-box"]


def test_a_wire_ending_short_of_its_box_is_detached() -> None:
    wire = Wire("A-B", ((30, 30), (30, 75)), "A", "B")
    assert kinds(clean(wires=(wire,))) == ["wire-detached"]


def test_a_wire_along_a_box_border_does_not_cross_it() -> None:
    wire = Wire("A-B", ((30, 30), (30, 35), (60, 35), (60, 75), (30, 75), (30, 80)), "A", "B")
    along_top_of_c = Wire("A-C", ((50, 20), (56, 20), (56, 40), (60, 40)), "A", "C")
    assert problems(clean(wires=(wire,))) == []
    assert kinds(clean(wires=(along_top_of_c,))) == []


def test_overlapping_boxes_are_found() -> None:
    assert kinds(clean(boxes=(A, B, C, Box("D", Rect(40, 25, 70, 45))))) == ["box-overlap",
                                                                            "box-overlap"]


def test_overlapping_labels_are_found() -> None:
    labels = (Label("A", Rect(12, 12, 30, 24), "A"), Label("A2", Rect(20, 14, 40, 26), "A"))
    assert kinds(clean(labels=labels)) == ["label-overlap"]


def test_a_label_over_another_box_is_found() -> None:
    labels = (Label("A", Rect(12, 12, 65, 24), "A"),)
    found = kinds(clean(labels=labels))
    assert "label-over-box" not in found and "label-outside-owner" in found
    labels = (Label("title", Rect(55, 45, 90, 55), "frame"),)
    assert kinds(clean(labels=labels)) == ["label-over-box"]


def test_a_wire_through_a_label_is_found() -> None:
    labels = (Label("note", Rect(25, 50, 60, 62), "frame"),)
    assert kinds(clean(labels=labels)) == ["wire-through-label"]


def test_two_wires_along_one_line_are_found_unless_they_branch_from_one_point() -> None:
    parallel = (Wire("A-B", ((30, 30), (30, 80)), "A", "B"),
                Wire("C-B", ((60, 60), (60, 70), (30, 70), (30, 80)), "C", "B"))
    assert kinds(clean(wires=parallel)) == []  # both arrive at one point of B: one node
    crossing = (Wire("A-B", ((30, 30), (30, 80)), "A", "B"),
                Wire("C-B", ((60, 60), (60, 70), (20, 70), (20, 80)), "C", "B"))
    assert kinds(clean(wires=crossing)) == []
    shared = (Wire("A-B", ((30, 30), (30, 80)), "A", "B"),
              Wire("C-B", ((60, 60), (60, 65), (30, 65), (30, 75), (40, 75), (40, 80)),
                   "C", "B"))
    assert kinds(clean(wires=shared)) == ["wire-overlap"]


def test_anything_off_the_page_is_found() -> None:
    assert "off-page" in kinds(clean(width=90.0))


def test_a_label_of_nothing_is_found() -> None:
    labels = (Label("stray", Rect(120, 150, 150, 160), "nobody"),)
    assert kinds(clean(labels=labels)) == ["label-outside-owner"]


def test_elements_drawn_counts_every_box_per_sheet() -> None:
    first = clean()
    second = clean(boxes=(Box("A", Rect(10, 10, 50, 30), element="A"),))
    assert elements_drawn([first, second]) == {"A": [1, 2], "B": [1], "C": [1]}


def test_collinear_overlap_measures_the_shared_stretch() -> None:
    assert collinear_overlap(((0, 0), (10, 0)), ((5, 0), (20, 0))) == pytest.approx(5)
    assert collinear_overlap(((0, 0), (0, 10)), ((0, 12), (0, 20))) == 0
    assert collinear_overlap(((0, 0), (10, 0)), ((0, 1), (10, 1))) == 0


coordinate = st.floats(min_value=-20, max_value=120, allow_nan=False).map(
    lambda v: round(v, 1))


@settings(max_examples=400, deadline=None)
@given(x0=coordinate, y0=coordinate, x1=coordinate, y1=coordinate,
       rx=st.floats(0, 60).map(lambda v: round(v, 1)), ry=st.floats(0, 60).map(
           lambda v: round(v, 1)), w=st.floats(2, 50).map(lambda v: round(v, 1)),
       h=st.floats(2, 50).map(lambda v: round(v, 1)))
def test_segment_test_agrees_with_shapely(x0: float, y0: float, x1: float, y1: float,
                                          rx: float, ry: float, w: float, h: float) -> None:
    """Independent check: shapely's intersection of the segment with the rectangle's
    inside (shrunk by the same tolerance) has length exactly when ours says it meets it.
    Cases within 0.05 pt of the decision are skipped: there the two may round apart."""
    rect = Rect(rx, ry, rx + w, ry + h)
    inner = rect.inset(0.5)
    segment = LineString([(x0, y0), (x1, y1)]) if (x0, y0) != (x1, y1) else None
    if segment is None:
        assert not segment_meets_inside((x0, y0), (x1, y1), rect)
        return
    shared = segment.intersection(box(inner.x0, inner.y0, inner.x1, inner.y1))
    boundary = box(inner.x0, inner.y0, inner.x1, inner.y1).boundary
    on_border = segment.intersection(boundary).length
    inside = shared.length - on_border
    if abs(inside) < 0.05:
        return
    assert segment_meets_inside((x0, y0), (x1, y1), rect) == (inside > 0)
