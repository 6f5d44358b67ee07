"""Every problem prints as one line, whatever the input it quotes holds."""

from workpack.errors import MAX_MESSAGE, InputError, Problem, one_line


def test_a_newline_copied_from_the_input_stays_inside_its_line() -> None:
    problem = Problem("f.yaml", 3, 5, "loads[0].id", "'P\n1' is not a valid id")
    assert problem.format() == "f.yaml:3:5: loads[0].id: 'P\\n1' is not a valid id"
    assert len(InputError([problem]).format_message().splitlines()) == 1


def test_controls_separators_and_bidi_overrides_are_escaped() -> None:
    assert one_line("a\x00b\u2028c\u202ed\te\x85") == "a\\x00b\\u2028c\\u202ed\\te\\x85"


def test_a_huge_message_is_shortened_and_says_so() -> None:
    text = one_line("x" * 100_000)
    assert len(text) < MAX_MESSAGE + 60 and "99,000 characters left out" in text
