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


@pytest.mark.parametrize(("text", "expected"), [
    # Issue 10.3: values that reached Python's own conversions and escaped as tracebacks.
    ("a: " + "1" * 5000 + "\n", "f.yaml:1:4: YAML: a number of 5,000 characters is too long "
                                "(at most 4300 digits)"),
    ("a: !!int 1.5\n", "f.yaml:1:4: YAML: '1.5' is not a whole number"),
    ("a: !!int 0x\n", "f.yaml:1:4: YAML: '0x' is not a whole number"),
    ("a: !!int\n", "f.yaml:1:4: YAML: '' is not a whole number"),
    ("a: !!float abc\n", "f.yaml:1:4: YAML: 'abc' is not a number"),
    ("a: !!float ''\n", "f.yaml:1:4: YAML: '' is not a number"),
    ("a: !!bool maybe\n", "f.yaml:1:4: YAML: 'maybe' is not true or false"),
    ("a: !!timestamp garbage\n", "f.yaml:1:4: YAML: 'garbage' is not a date (expected "
                                 "YYYY-MM-DD)"),
    ("a: !!str [1]\n", "f.yaml:1:4: YAML: expected text, found a list"),
    ("a: !!map x\n", "f.yaml:1:4: YAML: expected a mapping, found a single value"),
    ("a: !!binary aGk=\n", "f.yaml:1:4: YAML: tag 'tag:yaml.org,2002:binary' is not allowed: "
                           "write plain values only"),
    ("a: !!set {x}\n", "f.yaml:1:4: YAML: tag 'tag:yaml.org,2002:set' is not allowed: "
                       "write plain values only"),
])
def test_explicit_tags_and_huge_numbers_are_located_errors(text, expected) -> None:
    assert error_of(text) == expected


def test_a_control_character_is_placed_by_line_and_column() -> None:
    """libyaml counts bytes (é is two); the message counts characters, from 1."""
    assert error_of("x: é\na: b\x01c\n") == (
        "f.yaml:2:5: YAML: character U+0001 is not allowed (a control character; only tab "
        "and line breaks are)")


def test_an_unclosed_brace_is_called_a_brace() -> None:
    assert error_of("x: 1\na: {b: 1, c: 2\nd: 3\n") == (
        "f.yaml:2:4: YAML: did not find expected ',' or '}' (a '{' opened here is not closed)")
    assert error_of("a: {b: 1\n") == (
        "f.yaml:1:4: YAML: did not find expected ',' or '}' (a '{' opened here is not closed)")


def test_a_mistake_inside_brackets_on_one_line_is_shown_where_it_is() -> None:
    assert error_of("a: {b: c: d}\n") == (
        "f.yaml:1:9: YAML: did not find expected ',' or '}' (inside the '{' opened at "
        "column 4)")


@pytest.mark.parametrize("text", [
    "a: &x 1\nb: *x\nc: " + "[" * 600 + "]" * 600 + "\n",  # pure-Python composer (anchors)
    "a: &x 1\nb: *x\nc: " + "{a: " * 600 + "}" * 600 + "\n",
    "[" * 5000,  # libyaml's own limit
])
def test_deep_nesting_is_a_located_error(text) -> None:
    message = error_of(text)
    assert message.startswith(("f.yaml:3:", "f.yaml:1:")) and "nest" in message


def test_an_unpaired_surrogate_escape_is_refused() -> None:
    # Double-quoted escapes may name a lone surrogate; it cannot be written out as UTF-8.
    assert "unpaired surrogate" in error_of('a: &x "\\ud800"\nb: *x\n')
