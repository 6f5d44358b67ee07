"""Rule files are data: escapes and file access are refused at load time, mistakes are
named with file and line, and the shipped rules are clean."""

from __future__ import annotations

import shutil
import tempfile
from pathlib import Path

import pytest
from conftest import ROOT

from workpack.errors import InputError
from workpack.loading import load_ruleset
from workpack.plan import context_schema
from workpack.rules import RuleError, compile_source, lint_source

SCHEMA = context_schema(True, True)


@pytest.mark.parametrize("source", [
    "{{ ''.__class__ }}",
    "{{ ''.__class__.__mro__[1].__subclasses__() }}",
    "{{ item.__class__ }}",
    "{{ item['__class__'] }}",
    "{% include '/etc/passwd' %}",
    "{% import 'x' as y %}",
    "{% extends 'base' %}",
    "{{ range(10) }}",
    "{{ item.id | attr('__class__') }}",
    "{{ lipsum }}",
    "{{ cycler.__init__.__globals__ }}",
    "{% macro m() %}{% endmacro %}",
    "{{ self }}",
])
def test_escapes_and_file_access_are_refused_at_load_time(source: str) -> None:
    assert lint_source(source, "template", SCHEMA)


def test_the_sandbox_refuses_at_run_time_too() -> None:
    """Even a text that slipped past the lint cannot reach Python internals."""
    compiled = compile_source("''.__class__.__mro__", "expression")
    with pytest.raises(RuleError):
        compiled({})


def test_misspelled_attribute_names_the_nearest_field() -> None:
    problems = lint_source("item.rated_votlage > 400", "expression", SCHEMA)
    assert len(problems) == 1
    assert problems[0].startswith("unknown attribute 'item.rated_votlage' "
                                  "(did you mean 'rated_voltage'")


def rules_folder(tmp_path: Path, text: str) -> Path:
    folder = tmp_path / "rules"
    folder.mkdir(parents=True)
    shutil.copy(ROOT / "rules" / "cautions.yaml", folder / "cautions.yaml")
    (folder / "mine.yaml").write_text(text, encoding="utf-8")
    return folder


RULE = """rules:
  - id: hot-motor
    title: "Check {{ item.id }}"
    applies_to: {findings: [insulation_resistance]}
    when: {when}
    job: {kind: check, priority: "3", crew: 1, hours: 1}
    cautions: [{caution}]
    steps:
      - text: Test it.
        readings:
          - calc: {calc}
            params: {params}
"""


def broken(tmp_path: Path, **changes: str) -> str:
    fields = {"when": "item.rated_voltage > 400", "caution": "stored-charge",
              "calc": "insulation_resistance", "params": '{element: "{{ item.id }}"}'}
    fields.update(changes)
    text = RULE
    for key, value in fields.items():
        text = text.replace("{" + key + "}", value)
    with pytest.raises(InputError) as caught:
        load_ruleset(rules_folder(Path(tempfile.mkdtemp(dir=tmp_path)), text))
    return caught.value.format_message()


def test_misspelled_attribute_in_a_rule_file_gives_file_and_line(tmp_path: Path) -> None:
    message = broken(tmp_path, when="item.rated_votlage > 400")
    assert message.endswith("/rules/mine.yaml:5:11: rules[0].when: rule hot-motor: "
                            "unknown attribute 'item.rated_votlage' (did you mean "
                            "'rated_voltage' or 'rated_kva' or 'primary_voltage'?)")


def test_unknown_caution_calculation_and_parameter_are_named(tmp_path: Path) -> None:
    assert ("rules[0].cautions[0]: rule hot-motor: unknown caution 'stored-charges' "
            "(did you mean 'stored-charge'?)") in broken(tmp_path, caution="stored-charges")
    assert ("unknown calculation 'insulation_resistence' (did you mean "
            "'insulation_resistance'?)") in broken(tmp_path, calc="insulation_resistence")
    message = broken(tmp_path, params='{elemnt: "{{ item.id }}"}')
    assert "insulation_resistance takes no parameter 'elemnt' (did you mean 'element'?)" in message
    assert "insulation_resistance needs parameter 'element'" in message


def test_a_rule_that_can_never_apply_is_unreachable(tmp_path: Path) -> None:
    assert "unreachable: its condition is always false" in broken(tmp_path, when="1 == 2")


def test_a_rule_for_a_finding_on_the_wrong_kind_of_item_is_unreachable(tmp_path) -> None:
    text = (RULE.replace("{findings: [insulation_resistance]}",
                         "{findings: [transformer_unit], items: [load]}")
            .replace("{when}", "true").replace("{caution}", "stored-charge")
            .replace("{calc}", "insulation_resistance")
            .replace("{params}", '{element: "{{ item.id }}"}'))
    with pytest.raises(InputError) as caught:
        load_ruleset(rules_folder(tmp_path / "other", text))
    assert "unreachable: a transformer_unit finding is on a transformer" in (
        caught.value.format_message())


def test_a_rule_file_that_tries_a_call_is_refused(tmp_path: Path) -> None:
    message = broken(tmp_path, when="item.id.upper() == 'X'")
    assert "function and method calls are not allowed in a rule" in message


def test_shipped_rules_load_clean() -> None:
    ruleset = load_ruleset(ROOT / "rules")
    ids = {rule.id for rule in ruleset.rules}
    # The required set: ground location, isolate-and-test, second ground,
    # transformer-fed ground, failed delta-delta unit, monitor alarm, tripped breaker,
    # routine detector test, insulation survey, bank inspection.
    assert {"locate-ground", "low-insulation", "second-ground", "ground-behind-transformer",
            "failed-unit-open-delta", "monitor-alarm", "tripped-breaker", "detector-test",
            "periodic-insulation-survey", "bank-inspection"} <= ids
    assert "second-ground" in ruleset.cautions


def test_a_caution_that_speaks_of_an_isolation_must_need_one(tmp_path: Path) -> None:
    """A caution's text may state only what the package does: its needs say so, and the
    lint holds the text to them (issue: 'both sides are in the isolation' printed on a live
    inspection)."""
    folder = tmp_path / "rules"
    folder.mkdir()
    library = (ROOT / "rules" / "cautions.yaml").read_text(encoding="utf-8")
    library = library.replace("    needs: [isolated, proves_dead, isolates_transformer]\n", "")
    (folder / "cautions.yaml").write_text(library, encoding="utf-8")
    shutil.copy(ROOT / "rules" / "transformers.yaml", folder / "transformers.yaml")
    with pytest.raises(InputError) as caught:
        load_ruleset(folder)
    message = caught.value.format_message()
    assert "caution transformer-backfeed: its text says 'isolation', which is true only " \
           "where the package is isolated: add 'isolated' to its needs" in message
    assert "add 'proves_dead' to its needs" in message


@pytest.mark.parametrize("source", [
    "{{ findings | join('; ', attribute='text') }}",
    "{% for one in findings %}{{ one.text }}{% if not loop.last %}, {% endif %}{% endfor %}",
    "{{ findings | length }}",
])
def test_every_finding_of_a_job_may_be_named(source: str) -> None:
    """A job can answer several findings (two defects on one item): ``findings`` lists
    them all, and the lint knows what each of them has."""
    assert lint_source(source, "template", SCHEMA) == []


@pytest.mark.parametrize(("source", "message"), [
    ("{{ findings.text }}", "'findings' is a list: loop over it"),
    ("{{ findings | join('; ', attribute='txt') }}",
     "unknown attribute 'findings[].txt' (did you mean 'text'"),
    ("{% for one in findings %}{{ one.unti }}{% endfor %}",
     "unknown attribute 'one.unti' (did you mean 'unit'"),
])
def test_a_misused_list_of_findings_is_named_at_load_time(source: str, message: str) -> None:
    problems = lint_source(source, "template", SCHEMA)
    assert len(problems) == 1 and problems[0].startswith(message), problems


def test_a_routine_rule_has_no_findings_to_name() -> None:
    problems = lint_source("{{ findings | length }}", "template", context_schema(False, True))
    assert problems and problems[0].startswith("unknown name 'findings'")
