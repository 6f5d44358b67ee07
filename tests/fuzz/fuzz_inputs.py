"""Structure-aware fuzzing of every input workpack reads, through its command line.

Each case takes a seed input (the demo plants, a small invented works, their findings
as YAML and CSV, the shipped rules, a filled results sheet and a filled package PDF),
applies one or two mutations that know the input's structure (delete, duplicate or
retype a key; wrong and absurd units; negative, zero, huge, NaN and infinite numbers;
unicode, empty and very long text; unknown and crossed ids, which make loops; explicit
tags, aliases and deep nesting; hostile rule expressions; renamed or poisoned form
fields) or its text (truncation, binary garbage, a byte-order mark, CRLF, broken
syntax, control characters), and runs the command that reads it, in a worker process
(``workpack.cli.main`` in-process, output captured) with a time limit. Each run is:

    ok         exit 0, or 1 (judged and found wanting: a record that fails, a broken chain)
    located    exit 2, every stderr line names its place (a file of the case, or an option)
    unlocated  exit 2, some line does not (or a message runs over two lines)
    wrote      refused, but left an output file or a records store behind
    traceback  anything escaped the command line (or exit 1 with a traceback)
    hang       no answer within the time limit

Cases are generated from ``--seed`` and their number alone, so ``--only N`` reruns one.
The run exits 1 unless every case is ok or located.

    python tests/fuzz/fuzz_inputs.py -n 2000 --jobs 2        (make fuzz N=2000)
"""

from __future__ import annotations

import argparse
import contextlib
import csv
import io
import json
import multiprocessing
import os
import random
import re
import shutil
import sys
import tempfile
import time
import traceback
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, field
from multiprocessing.connection import Connection, wait
from pathlib import Path
from typing import Any

import yaml

ROOT = Path(__file__).resolve().parents[2]
SEEDS = Path(__file__).resolve().parent / "seeds"
sys.path.insert(0, str(ROOT / "tests"))

AT = "2026-12-02T16:00+00:00"

# --- what the mutations put in ---------------------------------------------------------------

WRONG_UNITS = [
    "440 kVA", "440 A", "7.5 kW", "7.5 kvar", "3 zorks", "60 Hz*(kHz/Hz)**200", "60 9**(9**9)",
    "1e309 V", "-0 V", "0x10 V", "440 V V", "440 µ", "nan V", "inf Ω", "1" * 70 + " V",
    "2.2 uF/km", "22 MΩ", "0.000001 pF", "1e-400 m", "440 °C", "440", "4,40 V", "440  V",
    "440\u00a0V", "440 ｋV", "12 Mohm", "12 mohm", "³ V", "-440 V", "+440 V", ".5 kV",
]
ABSURD_NUMBERS = ["-1", "0", "-0.0", "1e308", "-1e308", "1000000000000000000000000000000",
                  "1e-320", ".nan", ".inf", "-.inf", "9" * 5000, "9" * 4000, "0.1", "2e9999",
                  "0b101", "0x1F", "0o17", "1_000", "12:30:45", "!!int 1.5", "!!float abc"]
TEXTS = ["", " ", "ΩµF 😀", "\u202eevil", "e\u0301", "\"a\\nb\"", "\"\\0\"", "\"\\x01\"",
         "\"\\ud800\"", "x" * 100_000, "'{{ 1 }}'", "'%s%s%s'", "~", "null", "true", "\"\\u2028\"",
         "'" + "ab " * 3000 + "'", "\"tab\\there\"", "'-'", "'*'", "'&'", "'!!'"]
TAGS = ["!!int 1.5", "!!float abc", "!!bool maybe", "!!timestamp garbage",
        "!!python/object/apply:os.system ['true']", "!!binary aGk=", "!!set {a}",
        "!!omap [a]", "!!str [1]", "!!map x", "!foo bar", "!<tag:yaml.org,2002:int> 0x",
        "!!null x", "!!seq x"]
RULE_EXPRESSIONS = [
    "'a' * 10**9", "9**(9**9)", "'%999999999d' % 1", "-" * 1000 + "1",
    "(" * 5000 + "1" + ")" * 5000, "{% for i in [0]*10000 %}{% for j in [0]*10000 %}x"
    "{% endfor %}{% endfor %}", "{{ item.__class__ }}", "{{ range(10) }}",
    "{% include 'x' %}", "{{ unknown_name }}", "{{ item.id ", "{{ 1/0 }}",
    "{{ item.id|replace('', 'xx')|replace('x','xxxxxxxxxx')|replace('x','xxxxxxxxxx') }}",
    "{% set a = 'x'*1000 %}" + "{% set a = a ~ a %}" * 30 + "{{ a }}", "{{ 10.0**400 }}",
    "item.rated_voltage > 400", "true", "false", "1 == 2", "{{ item.nope }}",
    "{{ '%.*f' % (10**9, 1) }}", "{{ [1]*5000 + [2]*6000 }}", "{{ item }}", "{{ plant }}",
    "{{ (1,2)|join('x' * 100000) }}", "{{ 'x'|int(base=99) }}", "{{ 1.5|round(10**9) }}",
    "{{ item.id|format(1) }}", "{{ lipsum() }}", "{% macro m() %}{% endmacro %}",
    "{{ system.board }}" * 2000, "{% raw %}", "{# unclosed", "{{ finding.where }}",
]
FIELD_NAMES = ["step", "step:abc", "step:abc:done", "sign:boss", "lock:CB-WL1", "dead:x:A-B",
               "reading", "reading:", "remarks:x", "tester:never", "dead:0:L1-L2",
               "dead:99999999999:L1-L2", "restore:-1:done", "payload", "", ":::", "x" * 5000,
               "reading:NOPE", "temperature:S1.R1:extra"]
FIELD_VALUES = ["", "nan", "inf", "-1e999", "20000", "1e999 MΩ", "12 kVA", "x" * 100_000,
                "😀", "\u202e", "/Yes", "/Off", "1" * 5000, "0x10", "-0", "None"]
CONTROL = ["\x00", "\x01", "\x08", "\x0b", "\x1b", "\x7f", "\x85", "\u2028", "\ufeff",
           "\ud7ff", "\uffff"]

# --- cases ---------------------------------------------------------------------------------


@dataclass
class Case:
    number: int
    kind: str
    mutation: str
    files: dict[str, bytes]
    argv: list[str]
    writes: list[str] = field(default_factory=list)  # may exist only when the run succeeds


@dataclass
class Outcome:
    number: int
    kind: str
    mutation: str
    verdict: str
    status: int | None
    err: str
    seconds: float


@dataclass
class Seeds:
    texts: dict[str, str]  # name → text of each seed input
    rules: dict[str, str]  # rule folder file name → text
    package: bytes  # an issued package's JSON twin
    package_pdf: bytes
    results: str  # its results sheet, filled in
    filled_pdf: bytes  # its PDF, filled in


def _paths(data: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    found = [prefix] if prefix else []
    if isinstance(data, dict):
        for key, value in data.items():
            found += _paths(value, (*prefix, key))
    elif isinstance(data, list):
        for index, value in enumerate(data):
            found += _paths(value, (*prefix, index))
    return found


def _get(data: Any, path: tuple[Any, ...]) -> Any:
    for part in path:
        data = data[part]
    return data


def _ids(data: Any) -> list[str]:
    return sorted({v for p in _paths(data) if p and p[-1] in ("id", "from", "where")
                   for v in [_get(data, p)] if isinstance(v, str)}) or ["X"]


class Raw:
    """Placeholders for YAML the dumper cannot write (tags, aliases, raw numbers)."""

    def __init__(self) -> None:
        self.snippets: dict[str, str] = {}

    def __call__(self, snippet: str) -> str:
        marker = f"FUZZRAW{len(self.snippets):04d}X"
        self.snippets[marker] = snippet
        return marker

    def fill(self, text: str) -> str:
        for marker, snippet in self.snippets.items():
            text = text.replace(marker, snippet)
        return text


def mutate_structure(data: Any, rng: random.Random, raw: Raw, rule_file: bool = False) -> str:
    """Change ``data`` in place at one random place; return what was done."""
    paths = _paths(data)
    if not paths:
        return "nothing to change"
    path = rng.choice(paths)
    parent = _get(data, path[:-1])
    key = path[-1]
    value = parent[key]
    ids = _ids(data)
    operations = ["delete", "retype", "unit", "number", "text", "id", "nest", "tag", "add",
                  "duplicate", "alias"]
    if rule_file and isinstance(value, str):
        operations += ["expression"] * 6
    if isinstance(value, str):
        operations += ["long"]
    operation = rng.choice(operations)
    if operation == "delete":
        del parent[key]
    elif operation == "retype":
        parent[key] = rng.choice([42, 4.2, True, None, [], {}, [value], {"x": value}, "text",
                                  raw("!!null ''")])
    elif operation == "unit":
        parent[key] = raw(rng.choice(WRONG_UNITS)) if rng.random() < 0.3 else rng.choice(
            WRONG_UNITS)
    elif operation == "number":
        parent[key] = raw(rng.choice(ABSURD_NUMBERS))
    elif operation == "text":
        choice = rng.choice(TEXTS)
        parent[key] = raw(choice) if choice[:1] in "\"'" or choice in ("~", "null", "true") \
            else choice
    elif operation == "id":
        parent[key] = rng.choice([*ids, "NOPE", "", "a b", "x" * 70, "../../etc", "CB-" * 30])
    elif operation == "nest":
        depth = rng.choice([5, 50, 120, 400, 1200])
        parent[key] = raw("[" * depth + "1" + "]" * depth)
    elif operation == "tag":
        parent[key] = raw(rng.choice(TAGS))
    elif operation == "add":
        target = parent if isinstance(parent, dict) else value if isinstance(value, dict) \
            else None
        if target is None:
            parent[key] = {"unknown_field": 1}
        else:
            target[rng.choice(["unknown_field", "id", "from", "kind", "x" * 300, "1"])] = (
                rng.choice([1, "x", None, ids[0]]))
    elif operation == "duplicate":
        if isinstance(parent, list):
            times = rng.choice([1, 1, 5, 2000])
            parent[key + 1:key + 1] = [value] * times
        else:
            parent[key] = raw("FUZZDUP")  # the key written twice, below
            return f"duplicate key {key!r} at {path[:-1]}"
    elif operation == "alias":
        parent[key] = raw(rng.choice([
            "&fz " + json.dumps(str(value)), "*nowhere", "&a [1, *a]",
            "&a [x,x,x,x,x,x,x,x,x,x]", "{<<: [*nowhere]}"]))
    elif operation == "expression":
        parent[key] = rng.choice(RULE_EXPRESSIONS)
    elif operation == "long":  # words, so that a renderer must wrap them, not cut them
        parent[key] = " ".join([value or "word"] * rng.choice([50, 300, 3000]))
    return f"{operation} at {'/'.join(map(str, path))}"


def mutate_text(text: str, rng: random.Random) -> tuple[str | bytes, str]:
    """A text-level mutation of ``text``; bytes when it is no longer UTF-8."""
    operation = rng.choice(["truncate", "garbage", "bom", "crlf", "cr", "syntax", "control",
                            "delete-line", "duplicate-line", "indent", "empty", "swap-lines",
                            "tab"])
    lines = text.splitlines(keepends=True) or [""]
    at = rng.randrange(len(text) + 1)
    if operation == "truncate":
        return text[:at], f"truncate at {at}"
    if operation == "garbage":
        data = text.encode("utf-8")
        cut = rng.randrange(len(data) + 1)
        return data[:cut] + os.urandom(rng.choice([1, 8, 200])) + data[cut:], "binary garbage"
    if operation == "bom":
        return "\ufeff" * rng.choice([1, 2]) + text, "byte-order mark"
    if operation == "crlf":
        return text.replace("\n", "\r\n"), "CRLF"
    if operation == "cr":
        return text.replace("\n", "\r"), "CR only"
    if operation == "syntax":
        char = rng.choice(["{", "[", "]", "}", ":", "- ", "'", '"', "&", "*", "!", "%", "@",
                           "`", "|", ">", "#", ",", "? ", "---\n", "...\n"])
        return text[:at] + char + text[at:], f"insert {char!r} at {at}"
    if operation == "control":
        char = rng.choice(CONTROL)
        return text[:at] + char + text[at:], f"control {char!r} at {at}"
    if operation == "tab":
        return text[:at] + "\t" + text[at:], f"tab at {at}"
    index = rng.randrange(len(lines))
    if operation == "delete-line":
        del lines[index]
    elif operation == "duplicate-line":
        lines.insert(index, lines[index])
    elif operation == "indent":
        lines[index] = (" " + lines[index]) if rng.random() < 0.5 else lines[index][1:]
    elif operation == "swap-lines" and len(lines) > 1:
        other = rng.randrange(len(lines))
        lines[index], lines[other] = lines[other], lines[index]
    elif operation == "empty":
        return rng.choice(["", " ", "\n", "null", "[]", "42", "- a", "~", "{}", "''"]), "empty"
    return "".join(lines), f"{operation} line {index + 1}"


def mutate_yaml(text: str, rng: random.Random, rule_file: bool = False) -> tuple[bytes, str]:
    """One or two mutations of a YAML input, structural or textual."""
    steps = []
    if rng.random() < 0.7:
        data = yaml.safe_load(text)
        raw = Raw()
        for _ in range(rng.choice([1, 1, 2])):
            steps.append(mutate_structure(data, rng, raw, rule_file))
        dumped = yaml.safe_dump(data, allow_unicode=True, sort_keys=False, width=10**9)
        dumped = raw.fill(dumped)
        if "FUZZDUP" in dumped:  # write the key twice with its old value's place
            line = next(x for x in dumped.splitlines() if "FUZZDUP" in x)
            dumped = dumped.replace(line, line.replace("FUZZDUP", "1") + "\n"
                                    + line.replace("FUZZDUP", "2"), 1)
        text = dumped
    result: str | bytes = text
    if not steps or rng.random() < 0.3:
        result, step = mutate_text(text, rng)
        steps.append(step)
    data_bytes = result.encode("utf-8", "surrogatepass") if isinstance(result, str) else result
    return data_bytes, "; ".join(steps)


def mutate_csv(text: str, rng: random.Random) -> tuple[bytes, str]:
    rows = list(csv.reader(io.StringIO(text)))
    operation = rng.choice(["cell", "cell", "cell", "column", "header", "extra", "text",
                            "long", "newline"])
    row = rng.randrange(len(rows))
    column = rng.randrange(len(rows[row]))
    if operation == "cell":
        rows[row][column] = rng.choice([*WRONG_UNITS, *TEXTS, *ABSURD_NUMBERS, "NOPE",
                                        "lamps", "phase_voltages", "2026-13-45T99:00"])
    elif operation == "column":
        for cells in rows:
            if column < len(cells):
                del cells[column]
    elif operation == "header":
        rows[0][column] = rng.choice(["nope", "at", "L1", "", "A", "kind "])
    elif operation == "extra":
        rows[row].append(rng.choice(["x", "", "1"]))
    elif operation == "long":
        rows[row][column] = "x" * rng.choice([10_000, 140_000])
    elif operation == "newline":
        rows[row][column] = "line one\nline two"
    if operation == "text":
        result, step = mutate_text(text, rng)
        data = result.encode("utf-8", "surrogatepass") if isinstance(result, str) else result
        return data, step
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(rows)
    return out.getvalue().encode("utf-8", "surrogatepass"), (
        f"csv {operation} row {row + 1} column {column + 1}")


def mutate_pdf(seeds: Seeds, rng: random.Random, scratch: Path) -> tuple[bytes, str]:
    import hostile_pdfs
    from pypdf import PdfReader, PdfWriter
    from pypdf.generic import NameObject, TextStringObject

    operation = rng.choice(["value", "value", "name", "name", "truncate", "flip", "garbage",
                            "encrypt", "public-key", "bomb", "startxref", "no-fields", "empty"])
    filled = scratch / "filled.pdf"
    filled.write_bytes(seeds.filled_pdf)
    out = scratch / "mutated.pdf"
    data = seeds.filled_pdf
    if operation in ("value", "name", "no-fields"):
        writer = PdfWriter(clone_from=PdfReader(filled))
        fields = [a.get_object() for page in writer.pages for a in page.get("/Annots") or []
                  if a.get_object().get("/T") is not None]
        target = rng.choice(fields)
        if operation == "value":
            target[NameObject("/V")] = TextStringObject(rng.choice(FIELD_VALUES))
        elif operation == "name":
            target[NameObject("/T")] = TextStringObject(rng.choice(FIELD_NAMES))
        else:
            for page in writer.pages:
                if "/Annots" in page:
                    del page["/Annots"]
            if "/AcroForm" in writer._root_object:
                del writer._root_object["/AcroForm"]
        writer.write(out)
        return out.read_bytes(), f"pdf {operation} {target.get('/T')!s:.40}"
    if operation == "truncate":
        return data[:rng.randrange(len(data))], "pdf truncate"
    if operation == "flip":
        flipped = bytearray(data)
        for _ in range(rng.choice([1, 10, 100])):
            flipped[rng.randrange(len(flipped))] ^= 1 << rng.randrange(8)
        return bytes(flipped), "pdf flip bits"
    if operation == "garbage":
        cut = rng.randrange(len(data))
        return data[:cut] + os.urandom(rng.choice([1, 64, 4096])) + data[cut:], "pdf garbage"
    if operation == "encrypt":
        return hostile_pdfs.password_protected(filled, out).read_bytes(), "pdf password"
    if operation == "public-key":
        return hostile_pdfs.public_key_encrypted(filled, out).read_bytes(), "pdf public-key"
    if operation == "bomb":
        return hostile_pdfs.decompression_bomb(out, 100 * 1024 * 1024).read_bytes(), "pdf bomb"
    if operation == "startxref":
        return hostile_pdfs.broken_startxref(filled, out).read_bytes(), "pdf startxref"
    return b"", "pdf empty"


KINDS = ["plant", "plant", "plant", "findings-yaml", "findings-yaml", "findings-csv",
         "rules", "rules", "results-yaml", "results-yaml", "results-pdf"]


def make_case(number: int, seed: int, seeds: Seeds, scratch: Path) -> Case:
    rng = random.Random(f"{seed}:{number}")
    kind = rng.choice(KINDS)
    small = {"plant.yaml": seeds.texts["small-works.yaml"].encode(),
             "findings.yaml": seeds.texts["small-findings.yaml"].encode()}
    if kind == "plant":
        name = rng.choice(["demo-vessel.yaml", "demo-site.yaml", "small-works.yaml"])
        data, mutation = mutate_yaml(seeds.texts[name], rng)
        command = rng.choice(["check", "check", "isolate", "diagnose", "plan"]
                             if name == "small-works.yaml" else ["check", "check", "isolate"])
        argv = {"check": ["check", "{dir}/plant.yaml"],
                "isolate": ["isolate", "{dir}/plant.yaml",
                            rng.choice(_ids(yaml.safe_load(seeds.texts[name])))],
                "diagnose": ["diagnose", "{dir}/plant.yaml", "{dir}/findings.yaml"],
                "plan": ["plan", "{dir}/plant.yaml", "{dir}/findings.yaml", "--out",
                         "{dir}/out"]}[command]
        return Case(number, kind, f"{name}: {mutation}; {command}",
                    {**small, "plant.yaml": data}, argv,
                    writes=["out"] if command == "plan" else [])
    if kind == "findings-yaml":
        plant, findings = rng.choice([("demo-vessel.yaml", "demo-vessel-findings.yaml"),
                                      ("small-works.yaml", "small-findings.yaml")])
        data, mutation = mutate_yaml(seeds.texts[findings], rng)
        plan = plant == "small-works.yaml" and rng.random() < 0.3
        argv = (["plan", "{dir}/plant.yaml", "{dir}/findings.yaml", "--out", "{dir}/out"]
                if plan else ["diagnose", "{dir}/plant.yaml", "{dir}/findings.yaml"])
        return Case(number, kind, f"{findings}: {mutation}; {argv[0]}",
                    {"plant.yaml": seeds.texts[plant].encode(), "findings.yaml": data}, argv,
                    writes=["out"] if plan else [])
    if kind == "findings-csv":
        data, mutation = mutate_csv(seeds.texts["small-findings.csv"], rng)
        plan = rng.random() < 0.3
        argv = (["plan", "{dir}/plant.yaml", "{dir}/findings.csv", "--out", "{dir}/out",
                 "--date", "2026-12-02"]
                if plan else ["diagnose", "{dir}/plant.yaml", "{dir}/findings.csv"])
        return Case(number, kind, f"small-findings.csv: {mutation}; {argv[0]}",
                    {"plant.yaml": small["plant.yaml"], "findings.csv": data}, argv,
                    writes=["out"] if plan else [])
    if kind == "rules":
        name = rng.choice(sorted(seeds.rules))
        data, mutation = mutate_yaml(seeds.rules[name], rng, rule_file=True)
        files = {f"rules/{n}": t.encode() for n, t in seeds.rules.items()}
        files[f"rules/{name}"] = data
        return Case(number, kind, f"rules/{name}: {mutation}", {**small, **files},
                    ["plan", "{dir}/plant.yaml", "{dir}/findings.yaml", "--rules",
                     "{dir}/rules", "--out", "{dir}/out"],
                    writes=["out"])
    record = ["record", "{dir}/package.json", "", "--db", "{dir}/records.sqlite", "--at", AT]
    if kind == "results-yaml":
        data, mutation = mutate_yaml(seeds.results, rng)
        record[2] = "{dir}/results.yaml"
        return Case(number, kind, f"results.yaml: {mutation}",
                    {"package.json": seeds.package, "results.yaml": data}, record,
                    writes=["records.sqlite"])
    data, mutation = mutate_pdf(seeds, rng, scratch)
    record[2] = "{dir}/filled.pdf"
    return Case(number, kind, mutation, {"package.json": seeds.package, "filled.pdf": data},
                record, writes=["records.sqlite"])


# --- seeds -----------------------------------------------------------------------------------


def build_seeds(work: Path) -> Seeds:
    """Seed inputs, and one package issued from the small works with its filled results."""
    from pypdf import PdfReader, PdfWriter

    from workpack.cli import main
    from workpack.forms import results_template
    from workpack.loading import load_package
    from workpack.render.pdf import split_field_name

    texts = {p.name: p.read_text(encoding="utf-8") for p in [
        ROOT / "plants" / "demo-vessel.yaml", ROOT / "plants" / "demo-site.yaml",
        ROOT / "plants" / "demo-vessel-findings.yaml", SEEDS / "small-works.yaml",
        SEEDS / "small-findings.yaml", SEEDS / "small-findings.csv"]}
    rules = {p.name: p.read_text(encoding="utf-8") for p in sorted((ROOT / "rules").glob("*"))
             if p.suffix == ".yaml"}
    issued = work / "issued"
    with contextlib.redirect_stdout(io.StringIO()):
        status = main(["plan", str(SEEDS / "small-works.yaml"), str(SEEDS / "small-findings.yaml"),
                       "--out", str(issued)])
    assert status == 0, "the seed plan failed"
    twins = sorted(issued.glob("WP-*.json"))
    # The package with the most to fill in: locks, proving dead and readings.
    twin = max(twins, key=lambda t: len(t.read_text(encoding="utf-8")))
    package, digest = load_package(twin)
    sheet = yaml.safe_load(results_template(package, digest))
    sheet |= {"completed_by": "A. Seed", "supervisor": "B. Seed", "completed_on": "2026-12-02",
              "tester_proven_before": True, "tester_proven_after": True}
    for lock in (sheet.get("isolation") or {}).values():
        lock |= {"lock": "L-1", "tag": "T-1", "applied_by": "A. Seed", "removed_by": "A. Seed"}
    for pairs in (sheet.get("proving_dead") or {}).values():
        for pair in pairs:
            pairs[pair] = 0
    for reading in (sheet.get("readings") or {}).values():
        reading["value"] = 100
        if "temperature" in reading:
            reading["temperature"] = 30
    results = yaml.safe_dump(sheet, allow_unicode=True, sort_keys=False)
    values = {name: _filled(split_field_name(name))
              for name in PdfReader(twin.with_suffix(".pdf")).get_fields() or {}}
    writer = PdfWriter(clone_from=PdfReader(twin.with_suffix(".pdf")))
    with contextlib.redirect_stderr(io.StringIO()):  # "no fields on this page" notes
        for page in writer.pages:
            writer.update_page_form_field_values(page, values, auto_regenerate=False)
    filled = io.BytesIO()
    writer.write(filled)
    return Seeds(texts, rules, twin.read_bytes(), twin.with_suffix(".pdf").read_bytes(),
                 results, filled.getvalue())


def _filled(parts: tuple[str, ...]) -> str:
    """A plausible value for a package PDF field, by its kind (render.pdf's names)."""
    kind, last = parts[0], parts[-1]
    if kind in ("step", "restore", "tester"):
        return "/Yes"
    return {"reading": "100", "temperature": "30", "dead": "0", "remarks": "none"}.get(
        kind, {"date": "2026-12-02", "number": "L-1", "applied_at": "08:00",
               "removed_at": "15:00"}.get(last, "A. Seed"))


# --- running ----------------------------------------------------------------------------------


def _run_case(case: Case, base: Path) -> tuple[str, int | None, str, float]:
    """Run one case in this process: (verdict, status, stderr, seconds)."""
    from workpack.cli import main

    folder = Path(tempfile.mkdtemp(prefix=f"case{case.number}-", dir=base))
    try:
        for name, data in case.files.items():
            target = folder / name
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_bytes(data)
        argv = [a.replace("{dir}", str(folder)) for a in case.argv]
        out, err = io.StringIO(), io.StringIO()
        started = time.perf_counter()
        status: int | None
        try:
            with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
                status = main(argv)
        except SystemExit as stop:
            status = stop.code if isinstance(stop.code, int) else 2
        except BaseException:  # noqa: BLE001 -- that is what is being looked for
            return ("traceback", None, traceback.format_exc(limit=-6),
                    time.perf_counter() - started)
        seconds = time.perf_counter() - started
        text = err.getvalue()
        if "Traceback" in text or (status not in (0, 1, 2)):
            return "traceback", status, text, seconds
        if status in (0, 1):  # 1: a record judged wanting, a chain found broken
            return "ok", status, text, seconds
        for written in case.writes:
            target = folder / written
            if target.is_file() or (target.is_dir() and any(
                    not p.name.startswith(".") for p in target.iterdir())):
                return "wrote", status, text, seconds
        lines = text.splitlines()
        if not lines or not all(_located(line, folder) for line in lines):
            return "unlocated", status, text, seconds
        return "located", status, text, seconds
    finally:
        shutil.rmtree(folder, ignore_errors=True)


PLACE = re.compile(r"(?P<file>[^:]+)(:\d+(:\d+)?)?: \S")


def _located(line: str, folder: Path) -> bool:
    """A line that starts with a file of the case (with or without line:col) or an option."""
    if line.startswith(("--", "ITEM:", "ISLAND_OR_DETECTOR:", "diagnose:")):
        return True
    if not line.startswith(str(folder) + os.sep):
        return False
    return PLACE.match(line) is not None


def _worker(connection: Connection, base: str) -> None:
    try:
        import resource

        limit = 3 * 1024**3  # a case that wants more memory is a finding, not a dead machine
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    except (ImportError, ValueError, OSError):
        pass
    import workpack.cli  # noqa: F401 -- warm the imports before the first case is timed

    while True:
        case = connection.recv()
        if case is None:
            return
        connection.send(_run_case(case, Path(base)))


class Worker:
    def __init__(self, context: Any, base: Path):
        self.context, self.base = context, base
        self.start()

    def start(self) -> None:
        self.connection, child = self.context.Pipe()
        self.process = self.context.Process(target=_worker, args=(child, str(self.base)),
                                            daemon=True)
        self.process.start()
        self.case: Case | None = None
        self.since = 0.0

    def give(self, case: Case) -> None:
        self.case, self.since = case, time.monotonic()
        self.connection.send(case)

    def kill(self) -> None:
        self.process.kill()
        self.process.join()
        self.start()


def run(cases: Callable[[], Any], count: int, jobs: int, timeout: float, base: Path,
        progress: bool = False) -> list[Outcome]:
    context = multiprocessing.get_context("fork" if hasattr(os, "fork") else "spawn")
    workers = [Worker(context, base) for _ in range(max(1, jobs))]
    pending = iter(cases())
    outcomes: list[Outcome] = []
    exhausted = False
    try:
        while True:
            for worker in workers:
                if worker.case is None and not exhausted:
                    case = next(pending, None)
                    if case is None:
                        exhausted = True
                    else:
                        worker.give(case)
            busy = [w for w in workers if w.case is not None]
            if not busy:
                break
            now = time.monotonic()
            remaining = min(w.since + timeout - now for w in busy)
            ready = wait([w.connection for w in busy], timeout=max(0.0, remaining))
            for worker in busy:
                assert worker.case is not None
                if worker.connection in ready:
                    try:
                        verdict, status, err, seconds = worker.connection.recv()
                    except EOFError:  # the worker died: out of memory, or worse
                        verdict, status, err, seconds = ("traceback", None,
                                                         "worker process died", 0.0)
                        worker.kill()
                elif time.monotonic() - worker.since >= timeout:
                    verdict, status, err, seconds = "hang", None, "", timeout
                    worker.kill()
                else:
                    continue
                case = worker.case
                outcomes.append(Outcome(case.number, case.kind, case.mutation, verdict,
                                        status, err, seconds))
                worker.case = None
                if progress and len(outcomes) % 100 == 0:
                    print(f"  {len(outcomes)}/{count}", file=sys.stderr, flush=True)
    finally:
        for worker in workers:
            if worker.process.is_alive():
                with contextlib.suppress(OSError, BrokenPipeError):
                    worker.connection.send(None)
                worker.process.join(timeout=5)
                if worker.process.is_alive():
                    worker.process.kill()
    return sorted(outcomes, key=lambda o: o.number)


def fuzz(count: int, seed: int, jobs: int, timeout: float, only: int | None = None,
         progress: bool = False) -> list[Outcome]:
    with tempfile.TemporaryDirectory(prefix="workpack-fuzz-") as temporary:
        work = Path(temporary)
        seeds = build_seeds(work)
        scratch = work / "scratch"
        scratch.mkdir()
        numbers = [only] if only is not None else list(range(count))

        def cases() -> Any:
            for number in numbers:
                yield make_case(number, seed, seeds, scratch)

        base = work / "cases"
        base.mkdir()
        return run(cases, len(numbers), jobs, timeout, base, progress)


def report(outcomes: list[Outcome]) -> str:
    verdicts = ["ok", "located", "unlocated", "wrote", "traceback", "hang"]
    kinds = sorted({o.kind for o in outcomes})
    table = Counter((o.kind, o.verdict) for o in outcomes)
    lines = ["kind".ljust(14) + "".join(v.rjust(10) for v in verdicts) + "     total"]
    for kind in kinds:
        lines.append(kind.ljust(14) + "".join(str(table[(kind, v)]).rjust(10) for v in verdicts)
                     + str(sum(table[(kind, v)] for v in verdicts)).rjust(10))
    totals = Counter(o.verdict for o in outcomes)
    lines.append("all".ljust(14) + "".join(str(totals[v]).rjust(10) for v in verdicts)
                 + str(len(outcomes)).rjust(10))
    slowest = max(outcomes, key=lambda o: o.seconds, default=None)
    if slowest is not None:
        lines.append(f"slowest: case {slowest.number} ({slowest.kind}, {slowest.mutation[:60]}) "
                     f"{slowest.seconds:.2f} s")
    for outcome in outcomes:
        if outcome.verdict not in ("ok", "located"):
            first = outcome.err.strip().splitlines()[-1:] or [""]
            lines.append(f"case {outcome.number} {outcome.verdict} [{outcome.kind}] "
                         f"{outcome.mutation[:80]}: {first[0][:200]}")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("-n", type=int, default=200, help="number of cases (default 200)")
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--jobs", type=int, default=2, help="worker processes (default 2)")
    parser.add_argument("--timeout", type=float, default=30.0,
                        help="seconds before a case counts as a hang (default 30)")
    parser.add_argument("--only", type=int, help="run only case number N")
    parser.add_argument("--verbose", action="store_true",
                        help="print every case's verdict and last line of stderr")
    args = parser.parse_args(argv)
    started = time.monotonic()
    outcomes = fuzz(args.n, args.seed, args.jobs, args.timeout, args.only, progress=True)
    if args.verbose:
        for o in outcomes:
            last = (o.err.strip().splitlines() or [""])[-1]
            print(f"{o.number:5} {o.verdict:9} {o.kind:13} {o.mutation[:70]!r}: {last[:160]}")
    print(report(outcomes))
    print(f"{len(outcomes)} cases in {time.monotonic() - started:.0f} s (seed {args.seed})")
    bad = [o for o in outcomes if o.verdict not in ("ok", "located")]
    if args.only is not None and outcomes:
        print(outcomes[0].err)
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
