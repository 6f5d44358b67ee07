"""YAML is read safely, and every value keeps the line it was written on."""

import pytest

from workpack.errors import InputError
from workpack.yamlsource import parse_yaml


def error_of(text: str) -> str:
    with pytest.raises(InputError) as caught:
        parse_yaml(text, "f.yaml")
    return caught.value.format_message()


def test_marks_point_at_each_value() -> None:
    data, marks = parse_yaml("a:\n  - x: 1\n    y: [2, 3]\n", "f.yaml")
    assert data == {"a": [{"x": 1, "y": [2, 3]}]}
    assert marks.locate(("a", 0, "y", 1)) == (3, 12)
    assert marks.locate(("a", 0, "missing")) == (2, 5)  # falls back to the parent
    assert marks.locate(("a", 0, "y"), at_key=True) == (3, 5)


def test_duplicate_keys_are_an_error() -> None:
    assert error_of("a: 1\nb: 2\na: 3\n") == (
        "f.yaml:3:1: YAML: duplicate key 'a' (first given on line 1)")


def test_code_tags_are_refused() -> None:
    message = error_of("a: !!python/object/apply:os.system [ls]\n")
    assert "is not allowed: write plain values only" in message


def test_alias_bomb_is_refused() -> None:
    lines = ["a: &a [x, x, x, x, x, x, x, x, x, x]"]
    for level in range(1, 9):
        previous = chr(ord("a") + level - 1)
        name = chr(ord("a") + level)
        lines.append(f"{name}: &{name} [" + ", ".join([f"*{previous}"] * 10) + "]")
    assert "aliases expand to more than" in error_of("\n".join(lines) + "\n")


def test_recursive_alias_is_refused() -> None:
    assert "contains it" in error_of("a: &x [1, *x]\n")


def test_unclosed_bracket_is_shown_where_it_opened() -> None:
    assert error_of("a: [1, 2\nb: 3\n") == (
        "f.yaml:1:4: YAML: did not find expected ',' or ']' (a '[' opened here is not closed)")
