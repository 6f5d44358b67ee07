"""The README's commands, run in order in a fresh copy of the repository (issue 14, point 4).

What a newcomer does: take the repository as a clone has it (tracked files only: no
.venv, no out/, no records), then type the README's commands one after another. The
README marks what this test runs with HTML comments, invisible when rendered:

- ``<!-- readme-test: run from here -->``: every ```` ```sh ```` block after this line
  is run, in order (the test is skipped while the README has no such line);
- ``<!-- readme-test: skip (why) -->`` on the line before a block: that block is not
  run (a PostgreSQL server, a placeholder file name);
- a command ending in ``# exits N`` must exit with N; every other command with 0;
- a comment line saying ``fill in FILE`` is done by the test: it fills in the results
  sheet FILE (written by an earlier ``results-template … --out FILE``) as a technician
  would, every step done and every reading within its limit;
- ``make test`` is not run (it is what runs this test).

Shell variables set in a block (``W=.venv/bin/workpack``) hold for the blocks after it.
``.venv`` is this interpreter, wrapped to run the copy's own code, so ``make demo`` uses
the Makefile's real recipe without installing anything. At the end nothing may have
been written outside ``out/`` (and ``.venv/``).
"""

from __future__ import annotations

import os
import re
import shutil
import stat
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
START = "<!-- readme-test: run from here -->"
SKIP = re.compile(r"<!-- readme-test: skip\b.*-->")
EXITS = re.compile(r"\s+#\s*exits (\d+)\s*$")
FILL = re.compile(r"^#.*\bfill in (\S+)")
ASSIGNMENT = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*=\S*$")


@dataclass(frozen=True)
class Command:
    text: str  # one shell command, continuation lines joined
    exits: int
    line: int  # in README.md, for messages
    fill: str | None = None  # "fill in FILE": the test fills FILE instead of running


def readme_commands(readme: str) -> list[Command] | None:
    """The commands the README asks to be run, in order; None without the start line."""
    lines = readme.splitlines()
    if START not in (line.strip() for line in lines):
        return None
    commands: list[Command] = []
    running = skip_next = False
    fence: str | None = None  # inside a block: "run" or "pass"
    block: list[tuple[int, str]] = []
    for number, line in enumerate(lines, start=1):
        stripped = line.strip()
        if fence is not None:
            if stripped.startswith("```"):
                if fence == "run":
                    commands.extend(_block_commands(block))
                fence, block = None, []
            elif fence == "run":
                block.append((number, line))
        elif stripped == START:
            running = True
        elif running and SKIP.fullmatch(stripped):
            skip_next = True
        elif stripped.startswith("```"):
            language = (stripped[3:].split() or [""])[0]
            fence = "run" if running and language == "sh" and not skip_next else "pass"
            skip_next = False
    return commands


def _block_commands(block: list[tuple[int, str]]) -> list[Command]:
    commands: list[Command] = []
    pending = ""
    first = 0
    for number, line in block:
        stripped = line.strip()
        if not pending and stripped.startswith("#"):
            filled = FILL.search(stripped)
            if filled:
                commands.append(Command("", 0, number, fill=filled.group(1)))
            continue
        if not pending:
            first = number
        if stripped.endswith("\\"):
            pending += stripped[:-1].rstrip() + " "
            continue
        text = pending + stripped
        pending = ""
        if not text:
            continue
        expected = EXITS.search(text)
        text = EXITS.sub("", text) if expected else re.sub(r"\s+#.*$", "", text)
        commands.append(Command(text.strip(), int(expected.group(1)) if expected else 0,
                                first))
    return commands


def fresh_copy(target: Path) -> Path:
    """The repository's tracked files (as they are now) in ``target``, as a clone has
    them; None-safe symlinks (the shipped data links) kept as links."""
    listed = subprocess.run(["git", "ls-files", "-z"], cwd=ROOT, capture_output=True,
                            check=True).stdout.decode().split("\0")
    for name in filter(None, listed):
        source = ROOT / name
        if not source.exists() and not source.is_symlink():
            continue  # deleted in the working tree
        destination = target / name
        destination.parent.mkdir(parents=True, exist_ok=True)
        if source.is_symlink():
            destination.symlink_to(os.readlink(source))
        else:
            shutil.copy2(source, destination)
    return target


def prepared_venv(copy: Path) -> None:
    """``.venv/bin/workpack`` and ``python`` running the copy's code with this interpreter;
    the Makefile's stamps made newer than pyproject.toml, so nothing is installed."""
    bin_folder = copy / ".venv" / "bin"
    bin_folder.mkdir(parents=True)
    for name, module in (("workpack", "-m workpack"), ("python", "")):
        script = bin_folder / name
        script.write_text(f'#!/bin/sh\nPYTHONPATH="{copy}" exec "{sys.executable}" '
                          f'{module} "$@"\n', encoding="utf-8")
        script.chmod(script.stat().st_mode | stat.S_IXUSR)
    for stamp in (".installed", ".installed-runtime"):
        (copy / ".venv" / stamp).touch()


def fill_in(sheet: Path, package: Path) -> None:
    """The results sheet of ``package`` filled in as a technician would, all passing."""
    from test_isolation_records import fill
    from test_record import filled_sheet, windlass

    work = sheet.parent / f".filling-{sheet.name}"
    work.mkdir()
    try:
        is_windlass = windlass(package.parent) == package
    except AssertionError:
        is_windlass = False
    filled = filled_sheet(package, work) if is_windlass else fill(package, work)
    shutil.copy(filled, sheet)
    shutil.rmtree(work)


def files_in(folder: Path) -> set[str]:
    return {str(p.relative_to(folder)) for p in folder.rglob("*")
            if p.is_file() or p.is_symlink()}


def run_readme(readme: str, copy: Path) -> list[str]:
    """Run the README's commands in ``copy``; the problems found (empty: all as written)."""
    commands = readme_commands(readme)
    assert commands is not None
    prepared_venv(copy)
    before = files_in(copy)
    environment = {**os.environ, "PATH": f"{copy / '.venv' / 'bin'}:{os.environ['PATH']}",
                   "XDG_CONFIG_HOME": str(copy / ".venv" / "config")}
    for setting in ("WORKPACK_DB", "WORKPACK_PAGE_SIZE", "WORKPACK_CREW_HOURS"):
        environment.pop(setting, None)
    assignments: list[str] = []
    sheets: dict[str, Path] = {}  # results sheet -> its package, from results-template
    problems: list[str] = []
    for command in commands:
        if command.fill:
            package = sheets.get(command.fill)
            if package is None:
                problems.append(f"README.md:{command.line}: fill in {command.fill}: no "
                                "results-template … --out of that file before it")
                break
            fill_in(copy / command.fill, package)
            continue
        if command.text == "make test":
            continue  # the suite, which runs this
        if ASSIGNMENT.match(command.text):
            assignments.append(command.text)
            continue
        script = "\n".join([*assignments, command.text])
        result = subprocess.run(["bash", "-c", script], cwd=copy, env=environment,
                                capture_output=True, text=True, check=False)
        if result.returncode != command.exits:
            problems.append(f"README.md:{command.line}: {command.text!r} exited "
                            f"{result.returncode}, expected {command.exits}: "
                            f"{(result.stderr or result.stdout).strip()[-400:]}")
            break
        template = re.search(r"results-template\s+(\S+)\s+--out\s+(\S+)", command.text)
        if template:
            sheets[template.group(2)] = copy / template.group(1)
    written = files_in(copy) - before
    outside = sorted(p for p in written if not p.startswith(("out/", ".venv/")))
    if outside:
        problems.append("written outside out/: " + ", ".join(outside))
    return problems


def test_the_readme_commands_work_as_written_in_a_fresh_copy(tmp_path) -> None:
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    if readme_commands(readme) is None:
        pytest.skip(f"README.md has no {START!r} line yet (see this file's docstring)")
    if shutil.which("make") is None or shutil.which("git") is None:
        pytest.skip("needs make and git")
    copy = fresh_copy(tmp_path / "clone")
    problems = run_readme(readme, copy)
    assert not problems, "\n".join(problems)


def test_the_readme_convention_is_read_as_documented() -> None:
    """Which lines become commands, with their expected exit, fills and skips."""
    readme = "\n".join([
        "```sh", "make demo", "```",  # before the start line: not run
        START,
        "```sh", "make demo", "W=.venv/bin/workpack",
        "$W plan a.yaml b.yaml \\", "    --out out/x     # comment", "```",
        "<!-- readme-test: skip (needs a server) -->",
        "```sh", "psql -c 'CREATE ROLE x'", "```",
        "```", "plants/my-ship.yaml:88:15: loads[3].from: …", "```",
        "```sh",
        "$W results-template out/x/P.json --out out/r.yaml",
        "#   … fill in out/r.yaml (or use the PDF) …",
        "$W verify --db out/r.sqlite   # exits 1", "```",
    ])
    commands = readme_commands(readme)
    assert commands is not None
    assert [(c.text, c.exits, c.fill) for c in commands] == [
        ("make demo", 0, None),
        ("W=.venv/bin/workpack", 0, None),
        ("$W plan a.yaml b.yaml --out out/x", 0, None),
        ("$W results-template out/x/P.json --out out/r.yaml", 0, None),
        ("", 0, "out/r.yaml"),
        ("$W verify --db out/r.sqlite", 1, None),
    ]
    assert commands[2].line == 8
    assert readme_commands("```sh\nmake demo\n```") is None
