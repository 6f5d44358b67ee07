"""Benchmark: how long a command takes from the shell, start-up included (issue 15).

Wall time of a fresh process, the median of several runs, for ``workpack --help``, the
quick ``diagnose`` (three readings at a switchboard, no plant file) and ``check`` of the
demo vessel, beside a bare ``python -c pass``. Targets: help and quick diagnose under
0.3 s, check of the demo under 0.6 s. Each command's output is checked (exit 0, the
words it must print). With ``--imports`` it also prints the slowest imports of the
quick diagnose (``python -X importtime``). Exits 1 on a missed target or a wrong output.

Run: .venv/bin/python bench/bench_startup.py [--runs 7] [--imports]
"""

from __future__ import annotations

import argparse
import os
import re
import resource
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
PYTHON = sys.executable
QUICK = ["diagnose", "--volts", "440", "--hertz", "60", "--reading", "A=440",
         "--reading", "B=0", "--reading", "C=440"]  # a solid ground on B

# (label, arguments to workpack, words the output must hold, target in s)
COMMANDS: list[tuple[str, list[str], tuple[str, ...], float]] = [
    ("workpack --help", ["--help"], ("usage:", "diagnose", "plan"), 0.3),
    ("quick diagnose", QUICK, ("Grounded phase: B",), 0.3),
    ("check demo vessel", ["check", str(ROOT / "plants" / "demo-vessel.yaml")],
     ("140 elements", "MSB"), 0.6),
]


def _command(arguments: list[str]) -> list[str]:
    script = Path(PYTHON).parent / "workpack"  # the installed command, as a user runs it
    return [str(script), *arguments] if script.exists() else [PYTHON, "-m", "workpack",
                                                                *arguments]


def wall(command: list[str], runs: int) -> tuple[float, subprocess.CompletedProcess[str]]:
    """Median wall seconds of ``runs`` fresh processes, and the last one's result."""
    seconds, _, result = timed(command, runs)
    return seconds, result


def timed(command: list[str],
          runs: int) -> tuple[float, float, subprocess.CompletedProcess[str]]:
    """Median wall and CPU (user + system) seconds of ``runs`` fresh processes, and the
    last one's result. CPU time shows what a busy machine hides in the wall time."""
    times, cpu = [], []
    result = None
    environment = {**os.environ, "PYTHONDONTWRITEBYTECODE": "1"}
    for _ in range(runs):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        started = time.perf_counter()
        result = subprocess.run(command, capture_output=True, text=True, cwd=ROOT,
                                env=environment, check=False)
        times.append(time.perf_counter() - started)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpu.append(after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime)
    assert result is not None
    return statistics.median(times), statistics.median(cpu), result


def measure(runs: int = 7) -> tuple[list[str], list[str]]:
    """Lines to print, and the targets missed or outputs wrong."""
    lines: list[str] = []
    missed: list[str] = []
    floor, floor_cpu, _ = timed([PYTHON, "-c", "pass"], runs)
    lines.append(f"{'python -c pass':>22}: {floor:5.2f} s wall, {floor_cpu:5.2f} s CPU "
                 f"(median of {runs})")
    for label, arguments, words, target in COMMANDS:
        seconds, cpu, result = timed(_command(arguments), runs)
        ok = result.returncode == 0 and all(w in result.stdout for w in words)
        lines.append(f"{label:>22}: {seconds:5.2f} s wall, {cpu:5.2f} s CPU, "
                     f"{seconds / floor:4.1f}× bare python (target < {target:g} s wall)"
                     f"{'' if ok else '  WRONG OUTPUT'}")
        if not ok:
            missed.append(f"{label}: exit {result.returncode}, output "
                          f"{(result.stdout + result.stderr)[:200]!r}")
        if seconds >= target:
            missed.append(f"{label}: {seconds:.2f} s, target < {target:g} s")
    return lines, missed


def slowest_imports(count: int = 12) -> list[str]:
    """The imports of the quick diagnose that take longest, with what they pull in."""
    result = subprocess.run([PYTHON, "-X", "importtime", "-m", "workpack", *QUICK],
                            capture_output=True, text=True, cwd=ROOT, check=False)
    rows = []
    for line in result.stderr.splitlines():
        match = re.match(r"import time:\s+(\d+) \|\s+(\d+) \| (.*)", line)
        if match:
            rows.append((int(match.group(2)), match.group(3)))
    rows.sort(reverse=True)
    return [f"{micro / 1e6:6.3f} s cumulative  {name}" for micro, name in rows[:count]]


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7)
    parser.add_argument("--imports", action="store_true", help="list the slowest imports")
    args = parser.parse_args()
    lines, missed = measure(args.runs)
    print("\n".join(lines))
    if args.imports:
        print("slowest imports of the quick diagnose:")
        print("\n".join(slowest_imports()))
    for problem in missed:
        print(f"MISSED: {problem}")
    return 1 if missed else 0


if __name__ == "__main__":
    raise SystemExit(main())
