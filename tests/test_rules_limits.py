"""Rule texts run in a bounded sandbox: what they build, how long they loop and how deep
they nest is limited, and going past a limit is a rule error at the rule's place."""

from __future__ import annotations

import shutil
import time
from pathlib import Path

import pytest
from conftest import ROOT

import workpack.rules as rules
from workpack.cli import main
from workpack.plan import context_schema
from workpack.rules import MAX_NESTING, RuleError, compile_source, lint_source

SCHEMA = context_schema(True, True)


def refused_at_run_time(source: str, mode: str = "expression") -> str:
    assert lint_source(source, mode, SCHEMA) == []  # nothing the lint can see
    started = time.perf_counter()
    with pytest.raises(RuleError) as caught:
        compile_source(source, mode)({})  # type: ignore[arg-type]
    assert time.perf_counter() - started < 1.5  # the time budget is 1 s; sizes act at once
    return str(caught.value)


@pytest.mark.parametrize(("source", "fragment"), [
    ("'a' * 10**9", "builds a text of 1,000,000,000 characters"),
    ("[0] * 10**9", "builds a list of 1,000,000,000 items"),
    ("[1] * 5000 + [2] * 6000", "builds a list of 11,000 items"),
    ("9 ** (9 ** 9)", "builds a number over 1024 bits"),
    ("(2 ** 1000) * (2 ** 1000)", "over 1024 bits"),
    ("10.0 ** 400", "a number too large to compute"),
    ("'%999999999d' % 1", "format width or precision '999999999'"),
    ("'%.999999999f' | format(1.5)", "format width or precision '999999999'"),
    ("'%*d' % (10**9, 1)", "format width or precision '*'"),
    ("'aa'" + "|replace('a', 'aaaa')" * 12, "replace would build a text over 100,000"),
    ("([1] * 9000) | join('y' * 100)", "join would build a text over 100,000"),
    ("('x' * 10000) | join('y' * 90000)", "join would build a text over 100,000"),
    ("('x' * 20000) | list", "20,000 items are more than a rule may list or sort"),
    ("1.5 | round(10**9)", "round to at most 20 digits"),
])
def test_what_an_expression_may_build_is_bounded(source, fragment) -> None:
    assert fragment in refused_at_run_time(source)


def test_nested_loops_are_bounded_by_a_count_of_passes() -> None:
    source = "{% for i in [0]*10000 %}{% for j in [0]*10000 %}{% endfor %}{% endfor %}"
    assert "more than 100,000 loop passes" in refused_at_run_time(source, "template")


def test_a_rendered_text_is_bounded_as_it_grows() -> None:
    source = "{% for i in [0]*3000 %}{{ 'x' * 50 }}{% endfor %}"  # 3,000 passes, 150,000 x
    assert "the text would be over 100,000 characters" in refused_at_run_time(source, "template")


def test_doubling_with_tilde_is_bounded() -> None:
    source = "{% set a = 'x' * 1000 %}" + "{% set a = a ~ a %}" * 40 + "{{ a | length }}"
    assert "joining with '~' builds a text over 100,000" in refused_at_run_time(source, "template")


def test_slow_work_under_the_counts_meets_the_time_budget(monkeypatch) -> None:
    """Each pass is cheap to count but slow to do; the clock stops it."""
    monkeypatch.setattr(rules, "MAX_SECONDS", 0.05)
    source = ("{% for i in [0]*10000 %}{{ ('x' * 90000) | replace('x', 'y') and '' }}"
              "{% endfor %}")
    assert "took longer than 0.05 s" in refused_at_run_time(source, "template")


@pytest.mark.parametrize("source", [
    "-" * 1000 + "1",  # issue 10.5: 1,000 unary minuses were a RecursionError
    "(" * 5000 + "1" + ")" * 5000,  # and 5,000 nested brackets
    "'aa'" + "|replace('a', 'aaaa')" * 40,
])
def test_deep_nesting_is_refused_when_the_rule_is_read(source) -> None:
    assert lint_source(source, "expression", SCHEMA) == [
        f"nested more than {MAX_NESTING} levels deep (brackets, operators or filters inside "
        "one another)"]


@pytest.mark.parametrize("source", [
    "{% filter upper %}{% for i in [0]*10000 %}{{ 'x' * 99999 }}{% endfor %}{% endfilter %}",
    "{% set x %}{% for i in [0]*10000 %}{{ 'x' * 99999 }}{% endfor %}{% endset %}{{ x }}",
])
def test_blocks_that_build_a_whole_body_first_are_refused(source) -> None:
    """Their body is built as one text before the output bound can see it."""
    assert lint_source(source, "template", SCHEMA)


def test_ordinary_rule_texts_still_work() -> None:
    assert compile_source("'%5.2f V' % 3.14159", "expression")({}) == " 3.14 V"
    assert compile_source("{% for c in 'abc' %}{{ c ~ '.' }}{% endfor %}", "template")(
        {}) == "a.b.c."
    assert compile_source("[1] * 3 + [2]", "expression")({}) == [1, 1, 1, 2]


def test_a_limit_met_while_planning_names_the_rule_file_line_and_id(tmp_path, capsys) -> None:
    """Through the command line: exit 2, one line with file:line and the rule id."""
    rules_dir = tmp_path / "rules"
    shutil.copytree(ROOT / "rules", rules_dir)
    text = (rules_dir / "switchboards.yaml").read_text(encoding="utf-8")
    lines = text.splitlines()
    first_rule = next(i for i, line in enumerate(lines) if line.strip().startswith("- id:"))
    rule_id = lines[first_rule].split("id:")[1].strip()
    title = next(i for i in range(first_rule, len(lines))
                 if lines[i].strip().startswith("title:"))
    indent = lines[title][: len(lines[title]) - len(lines[title].lstrip())]
    lines[title] = indent + "title: \"{{ 'x' * 10**9 }}\""
    (rules_dir / "switchboards.yaml").write_text("\n".join(lines) + "\n", encoding="utf-8")
    status = main(["plan", str(ROOT / "plants" / "demo-vessel.yaml"),
                   str(ROOT / "plants" / "demo-vessel-findings.yaml"), "--rules",
                   str(rules_dir), "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert status == 2
    assert err.count("\n") == 1 and "Traceback" not in err
    place = f"{rules_dir / 'switchboards.yaml'}:{first_rule + 1}:"
    assert err.startswith(place) and f": rule {rule_id}: " in err
    assert "builds a text of 1,000,000,000 characters" in err
    assert not (tmp_path / "out").exists() or not any(Path(tmp_path / "out").iterdir())
