"""Broken plant inventories are refused: exit 2, one located line per problem, no traceback.

Every fixture in tests/fixtures/broken holds one mistake, described in its first line.
The table below says where the mistake is (we wrote the files, so we know the line)
and what the message must say. Cases where the loader is known to get it wrong are
marked ``xfail(strict=True)`` with the reason, so fixing the loader turns them into
failures that ask for the mark to be removed.
"""

from __future__ import annotations

import re
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

import pytest

from workpack.cli import main

ROOT = Path(__file__).resolve().parents[1]
BROKEN = ROOT / "tests" / "fixtures" / "broken"
PLANTS = ROOT / "plants"

PLACE = re.compile(r"(?P<line>\d+):(?P<column>\d+): (?P<rest>.*)")


@dataclass(frozen=True)
class Case:
    """One broken fixture and what the loader must say about it."""

    name: str  # file stem in tests/fixtures/broken
    line: int | None  # 1-based line of the mistake; None: the whole file (no line)
    path: str | None  # field path printed before the message; "" none; None: not checked
    message: str  # regular expression the message must contain (re.search)
    refusal_defect: str = ""  # known: not refused cleanly (exit, traceback, extra lines)
    line_defect: str = ""  # known: refused, but at the wrong line
    message_defect: str = ""  # known: refused at the right line, but the message is unclear


CASES = [
    # --- YAML syntax and safety --------------------------------------------------------
    Case("yaml_unclosed_bracket", 15, "", r"YAML: .*'\]'"),
    Case("yaml_bad_indentation", 12, "", r"YAML: .*indent"),
    Case("yaml_tab_indentation", 13, "", r"YAML: .*(tab|'\\t')"),
    Case("yaml_duplicate_key", 14, "", r"YAML: duplicate key 'voltage' \(first given on line 12\)"),
    Case("yaml_alias_bomb", 2, "", r"aliases expand to more than .* refusing"),
    Case("yaml_python_tag", 11, "", r"YAML: .*python/object/apply:os\.system"),
    Case("empty_file", None, "", r"expected a plant inventory .* found an empty file"),
    Case("top_level_list", 2, "", r"expected a plant inventory .* found a list"),
    # --- schema ---------------------------------------------------------------------------
    Case("unknown_top_level_key", 19, "lodas", r"unknown section \(did you mean 'loads'\?\)"),
    Case("unknown_deep_key", 19, "buses[0].detector.prewarnig", r"unknown field"),
    Case("wrong_type_text_for_number", 19, "transformers[0].units",
         r"expected a whole number \(got 'three'\)"),
    Case("wrong_unit_amperes_for_volts", 13, "buses[1].voltage",
         r"'A' is not a unit of voltage"),
    Case("wrong_unit_kva_for_kw", 19, "loads[0].rated_kw",
         r"'kVA' is not a unit of real power: it is a unit of apparent power"),
    Case("negative_length", 17, "cables[0].length", r"-120 m is not a plausible length"),
    Case("capacitance_in_farads", 20, "loads[0].equipment_capacitance",
         r"2\.2 ?F\b|farad"),
    Case("load_without_from", 15, "loads[0].from", r"required field is missing"),
    Case("vector_group_not_iec", 22, "transformers[0].vector_group",
         r"'Dx3' is not an IEC 60076-1 vector group"),
    # --- references and consistency -------------------------------------------------------
    Case("unknown_from_near_miss", 13, "devices[1].from",
         r"unknown element 'MBS' \(did you mean 'MSB'\?\)"),
    Case("duplicate_id", 14, "devices[2].id", r"'CB-P1' is already used.*first given on line 13"),
    Case("transformer_voltage_mismatch", 20, "transformers[0].primary_voltage",
         r"440 V does not match bus MSB \(690 V\)"),
    Case("fed_from_nowhere", 11, "buses[1].from", r"DB-2 is fed from nowhere"),
    Case("closed_loop", 15, "devices[2].from",
         r"closed loop through MSB, DB-2, CB-DB2A, CB-DB2B .*normally: open"),
    Case("insulated_bus_grounded_neutral", 14, "buses[1].earthing",
         r"insulated, but it is fed from T2 whose secondary neutral is grounded"),
    Case("auxiliary_from_load", 23, "loads[1].auxiliaries[0].from",
         r"'H1' is a load; an auxiliary supply is fed from a device"),
    Case("unknown_cable_type", 17, "cables[0].cable_type",
         r"unknown cable type 'LV-SWB' \(did you mean 'LV-SWA'\?\)"),
    Case("device_feeds_nothing", 15, "devices[2].id",
         "^" + re.escape("CB-SHORE feeds nothing: no element names this circuit breaker in "
                         "its 'from' (nor as an auxiliary supply), so an isolation would "
                         "never see the supply behind it; name it in the 'from' of what it "
                         "feeds, or leave a spare way out of the inventory") + "$"),
    Case("start_block_id_reused", 18, "devices[1].id",
         r"id 'CB-EG' is already used; ids must be unique \(first given on line 13\)"),
    Case("transition_on_breaker", 13, "devices[1]",
         r"^transition describes a transfer_switch, not a circuit_breaker$"),
    # --- found while writing this battery ---------------------------------------------------
    Case("impossible_date", 17, None, r"2026-02-30|date"),
    Case("duplicate_id_through_alias", 21, "buses[1].detector.id",
         r"'IMD-MSB' is already used"),
    Case("mistake_in_only_source", 10, "sources[0].voltage", r"'A' is not a unit of voltage"),
    Case("empty_value", 13, "buses[1].voltage", r"no value given"),
    Case("number_as_key", 16, None, r"a field name must be text"),
    Case("zero_interval", 17, None, r"interval|every|0 days"),
    Case("prewarning_below_alarm", 19, None, r"prewarning.*alarm|alarm.*prewarning"),
]


def _param(case: Case, *defects: str) -> object:
    reason = next((d for d in defects if d), "")
    marks = [pytest.mark.xfail(strict=True, reason=reason)] if reason else []
    return pytest.param(case, id=case.name, marks=marks)


REFUSAL = [_param(c, c.refusal_defect) for c in CASES]
LINE = [_param(c, c.refusal_defect, c.line_defect) for c in CASES]
MESSAGE = [_param(c, c.refusal_defect, c.message_defect) for c in CASES]


def fixture(case: Case) -> Path:
    return BROKEN / f"{case.name}.yaml"


def run_in_process(file: str, capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    status = main(["check", file])
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def problem_lines(err: str) -> list[str]:
    return err.splitlines()


def split_place(line: str, file: str) -> tuple[int | None, int | None, str]:
    """(line, column, rest) of one stderr line ``FILE:LINE:COL: rest`` or ``FILE: rest``."""
    assert line.startswith(f"{file}:"), f"problem line does not start with the file: {line!r}"
    after = line[len(file) + 1:]
    if after.startswith(" "):
        return None, None, after[1:]
    match = PLACE.fullmatch(after)
    assert match, f"not FILE:LINE:COL: message: {line!r}"
    return int(match["line"]), int(match["column"]), match["rest"]


def split_path(rest: str, case: Case) -> str:
    """The message after the field path (which must be the expected one, when checked)."""
    if case.path is None:
        return rest
    if case.path:
        assert rest.startswith(f"{case.path}: "), f"expected path {case.path!r}: {rest!r}"
        return rest[len(case.path) + 2:]
    return rest


def assert_refused(status: int, out: str, err: str, file: str, case: Case) -> None:
    assert "Traceback" not in err and "Traceback" not in out
    assert out == "", f"nothing belongs on stdout for a refused file, got {out!r}"
    assert status == 2, f"exit status {status}, stderr {err!r}"
    lines = problem_lines(err)
    assert len(lines) == 1, f"expected one problem line, got {lines}"
    for line in lines:
        number, column, rest = split_place(line, file)
        if case.line is None:
            assert number is None, f"a whole-file problem carries no line: {line!r}"
        else:
            assert number is not None and number >= 1 and column is not None and column >= 1
        assert rest.strip()


# --- the table and the folder agree ---------------------------------------------------------


def test_every_broken_fixture_is_in_the_table():
    """Each file in the broken folder has an entry, and each entry has a file."""
    on_disk = {p.stem for p in BROKEN.glob("*.yaml")}
    in_table = {c.name for c in CASES}
    assert on_disk == in_table
    assert len(CASES) == len(in_table)


@pytest.mark.parametrize("case", CASES, ids=[c.name for c in CASES])
def test_broken_fixture_says_what_is_wrong_in_its_first_line(case: Case):
    """Each fixture opens with a YAML comment describing its one mistake."""
    first = fixture(case).read_text(encoding="utf-8").splitlines()[0]
    assert first.startswith("# ") and len(first) > 20


@pytest.mark.parametrize("case", [c for c in CASES if c.line is not None],
                         ids=[c.name for c in CASES if c.line is not None])
def test_expected_line_exists_in_the_fixture(case: Case):
    """The table's line numbers point inside the file, past the description comment."""
    lines = fixture(case).read_text(encoding="utf-8").splitlines()
    assert case.line is not None and 2 <= case.line <= len(lines)


# --- in process --------------------------------------------------------------------------


@pytest.mark.parametrize("case", REFUSAL)
def test_broken_inventory_is_refused_with_one_located_line(case: Case, capsys):
    """Exit 2, one FILE:LINE:COL line on stderr, nothing on stdout, no traceback."""
    file = str(fixture(case))
    status, out, err = run_in_process(file, capsys)
    assert_refused(status, out, err, file, case)


@pytest.mark.parametrize("case", LINE)
def test_broken_inventory_names_the_line_of_the_mistake(case: Case, capsys):
    """The first problem reported stands on the line where the mistake was written."""
    file = str(fixture(case))
    status, _, err = run_in_process(file, capsys)
    assert status == 2
    number, _, rest = split_place(problem_lines(err)[0], file)
    assert number == case.line, f"reported line {number}, mistake on line {case.line}: {err!r}"
    split_path(rest, case)


@pytest.mark.parametrize("case", MESSAGE)
def test_broken_inventory_message_says_what_is_wrong(case: Case, capsys):
    """The message names the problem in words a supervisor can act on."""
    file = str(fixture(case))
    status, _, err = run_in_process(file, capsys)
    assert status == 2
    _, _, rest = split_place(problem_lines(err)[0], file)
    message = split_path(rest, case)
    assert re.search(case.message, message), f"{message!r} lacks /{case.message}/"


# --- as a separate process ---------------------------------------------------------------------
# Every case above already runs through the command's own entry point (``main``) in this
# process; one real process is enough to show the installed command behaves the same.


def test_a_broken_inventory_is_refused_by_the_command_in_its_own_process():
    """`python -m workpack check FILE` exits 2 with one located line and an empty stdout.

    The fixture carries a python tag calling os.system: an empty stdout also proves it
    did not run (its output would land there).
    """
    [case] = [c for c in CASES if c.name == "yaml_python_tag"]
    file = fixture(case).relative_to(ROOT).as_posix()
    result = subprocess.run([sys.executable, "-m", "workpack", "check", file], cwd=ROOT,
                            capture_output=True, text=True, timeout=120, check=False)
    assert_refused(result.returncode, result.stdout, result.stderr, file, case)
    number, _, _ = split_place(problem_lines(result.stderr)[0], file)
    assert number == case.line


# --- mutations of the demo plants ------------------------------------------------------------

DEMO_PLANTS = [p for p in (PLANTS / "demo-vessel.yaml", PLANTS / "demo-site.yaml") if p.exists()]


def _is_content(line: str) -> bool:
    return bool(line.strip()) and not line.lstrip().startswith("#")


def delete_required_line(lines: list[str]) -> tuple[list[str], int, str]:
    """Delete the first block-style ``earthing:`` line of a bus.

    The problem must be reported at the bus entry (its ``- id:`` line): the field is
    missing there. Returns the mutated lines, that line number and the field name.
    """
    for index, line in enumerate(lines):
        if re.match(r"^\s+earthing:\s*\w+\s*(#.*)?$", line):
            for back in range(index - 1, -1, -1):
                if re.match(r"^\s+- id:\s", lines[back]):
                    return lines[:index] + lines[index + 1:], back + 1, "earthing"
                if not lines[back].startswith(" " * (len(line) - len(line.lstrip()))):
                    break
    pytest.fail("no block-style bus with an 'earthing:' line to delete")


def misspell_a_key(lines: list[str]) -> tuple[list[str], int, str]:
    """Misspell the first ``rated_voltage:`` key (block or flow style) as ``rated_voltge:``."""
    for index, line in enumerate(lines):
        if _is_content(line) and re.search(r"(^|[\s{,])rated_voltage:", line):
            changed = list(lines)
            changed[index] = line.replace("rated_voltage:", "rated_voltge:", 1)
            return changed, index + 1, "rated_voltge"
    pytest.fail("no rated_voltage key to misspell")


def break_a_reference(lines: list[str]) -> tuple[list[str], int, str]:
    """Point the first single-id ``from:`` at a near miss of that id (an unknown one)."""
    text = "\n".join(lines)
    for index, line in enumerate(lines):
        match = re.search(r"(?:^|[\s{,])from: ([A-Za-z0-9][A-Za-z0-9_.\-/]*)\s*(?:[,}#]|$)",
                          line)
        if not _is_content(line) or not match:
            continue
        known = match.group(1)
        typo = known + "Q"
        if re.search(rf"\bid: {re.escape(typo)}\b", text):
            continue
        changed = list(lines)
        changed[index] = line[:match.start(1)] + typo + line[match.end(1):]
        return changed, index + 1, known
    pytest.fail("no single-id 'from:' to break")


@pytest.mark.parametrize("plant", DEMO_PLANTS, ids=[p.stem for p in DEMO_PLANTS])
def test_demo_plant_is_accepted_before_it_is_mutated(plant: Path, capsys):
    """The unmutated demo plant checks clean, so the mutations below are the only mistake."""
    status, out, err = run_in_process(str(plant), capsys)
    assert (status, err) == (0, "")
    assert out


def test_demo_site_has_no_warnings(capsys):
    """The land-site demo gives every insulated system a detector: no WARNING lines."""
    status, out, err = run_in_process(str(PLANTS / "demo-site.yaml"), capsys)
    assert (status, err) == (0, "")
    assert "WARNING" not in out


@pytest.mark.parametrize("plant", DEMO_PLANTS, ids=[p.stem for p in DEMO_PLANTS])
def test_deleted_line_in_demo_plant_is_reported_at_its_entry(plant: Path, tmp_path, capsys):
    """Deleting a bus's earthing line names the bus entry's line: a field is missing."""
    lines, expected, field = delete_required_line(
        plant.read_text(encoding="utf-8").splitlines())
    copy = tmp_path / plant.name
    copy.write_text("\n".join(lines) + "\n", encoding="utf-8")
    status, out, err = run_in_process(str(copy), capsys)
    assert (status, out) == (2, "") and "Traceback" not in err
    [problem] = problem_lines(err)
    number, _, rest = split_place(problem, str(copy))
    assert number == expected
    assert re.match(rf"buses\[\d+\]\.{field}: required field is missing$", rest), rest


@pytest.mark.parametrize("plant", DEMO_PLANTS, ids=[p.stem for p in DEMO_PLANTS])
def test_misspelled_key_in_demo_plant_is_reported_at_its_line(plant: Path, tmp_path, capsys):
    """A misspelled field is refused on the line where it was written."""
    lines, expected, key = misspell_a_key(plant.read_text(encoding="utf-8").splitlines())
    copy = tmp_path / plant.name
    copy.write_text("\n".join(lines) + "\n", encoding="utf-8")
    status, out, err = run_in_process(str(copy), capsys)
    assert (status, out) == (2, "") and "Traceback" not in err
    [problem] = problem_lines(err)
    number, _, rest = split_place(problem, str(copy))
    assert number == expected
    assert re.match(rf"loads\[\d+\]\.{key}: unknown field", rest), rest


@pytest.mark.parametrize("plant", DEMO_PLANTS, ids=[p.stem for p in DEMO_PLANTS])
def test_unknown_from_in_demo_plant_is_reported_with_a_suggestion(plant: Path, tmp_path,
                                                                   capsys):
    """A `from` naming an unknown id is refused at its line, offering the id meant."""
    lines, expected, meant = break_a_reference(plant.read_text(encoding="utf-8").splitlines())
    copy = tmp_path / plant.name
    copy.write_text("\n".join(lines) + "\n", encoding="utf-8")
    status, out, err = run_in_process(str(copy), capsys)
    assert (status, out) == (2, "") and "Traceback" not in err
    [problem] = problem_lines(err)
    number, _, rest = split_place(problem, str(copy))
    assert number == expected
    assert f"unknown element '{meant}Q'" in rest and f"'{meant}'" in rest, rest
