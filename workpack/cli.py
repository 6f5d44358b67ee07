"""The command line: parse options, gather inputs, call the core, print or write.

No electrical or planning logic lives here. Every user mistake arrives as a
WorkpackError and leaves as one line per problem on stderr with exit status 2.
"""

from __future__ import annotations

import argparse
import dataclasses
import datetime as dt
import json
import math
import sys
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any, NamedTuple, TypeVar

from workpack import __version__
from workpack.errors import InputError, UsageError, WorkpackError, did_you_mean
from workpack.progress import Progress
from workpack.shipped import asset_map, rules_folder


def _to_json(value: Any) -> str:
    def plain(obj: Any) -> Any:
        if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
            return {f.name: plain(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
        if hasattr(obj, "model_dump") and not isinstance(obj, type):  # a pydantic model
            return obj.model_dump(mode="json")
        if isinstance(obj, dict):
            return {str(k): plain(v) for k, v in obj.items()}
        if isinstance(obj, list | tuple | set | frozenset):
            items = [plain(v) for v in obj]
            return sorted(items) if isinstance(obj, set | frozenset) else items
        if hasattr(obj, "value") and hasattr(obj, "name"):  # enums
            return obj.value
        if isinstance(obj, complex):
            return {"real": obj.real, "imag": obj.imag}
        if isinstance(obj, float) and not math.isfinite(obj):
            return None
        if hasattr(obj, "isoformat"):
            return obj.isoformat()
        return obj

    return json.dumps(plain(value), indent=2, sort_keys=True, ensure_ascii=False) + "\n"


# --- option values, converted (and refused) while the command line is parsed ------------

Value = TypeVar("Value")


def _option(option: str, convert: Callable[[str], Value]) -> Callable[[str], Value]:
    """``type=`` for ``option``: ``convert`` the text as typed; a ValueError refuses it at
    parse time as one line ``OPTION TEXT: why`` (exit 2), before anything is read."""

    def checked(text: str) -> Value:
        try:
            return convert(text)
        except ValueError as problem:
            raise UsageError(f"{option} {text}: {problem}") from None

    return checked


def _day(text: str) -> dt.date:
    try:
        return dt.date.fromisoformat(text)
    except ValueError:
        raise ValueError("expected YYYY-MM-DD") from None


def _moment(text: str) -> dt.datetime:
    """A date and time; one written without a zone is taken as UTC."""
    try:
        at = dt.datetime.fromisoformat(text)
    except ValueError:
        raise ValueError("expected a date and time such as 2026-12-02T16:30+00:00") from None
    return at if at.tzinfo is not None else at.replace(tzinfo=dt.UTC)


def _hours(text: str) -> float:
    try:
        hours = float(text)
    except ValueError:
        hours = math.nan
    if not math.isfinite(hours) or hours <= 0:
        raise ValueError("must be a number above zero")
    return hours


def _days(text: str) -> int:
    try:
        days = int(text)
    except ValueError:
        raise ValueError("expected a whole number of days") from None
    if days < 0:
        raise ValueError("give 0 or more days")
    return days


def _percent(text: str) -> float:
    try:
        percent = float(text)
    except ValueError:
        percent = math.nan
    if not (math.isfinite(percent) and percent >= 0):
        raise ValueError("expected a percentage, 0 or more")
    return percent


def _quantity(kind: str, above_zero: bool = False) -> Callable[[str], float]:
    """Text such as ``440``, ``2.2uF`` or ``60 Hz`` as SI, of the given kind."""
    from workpack.units import to_si

    def convert(text: str) -> float:
        try:
            number: Any = float(text)
        except ValueError:
            number = text
        value = to_si(number, kind)  # UnitProblem is a ValueError
        if above_zero and value <= 0:
            raise ValueError("must be above zero")
        return value

    return convert


class _Reading(NamedTuple):
    """One ``--reading PHASE=VOLTS``."""

    phase: str
    volts: float
    written: str  # as typed, for messages


def _phase_reading(text: str) -> _Reading:
    """``PHASE=VOLTS``, e.g. ``A=400``: one phase-to-earth reading."""
    label, sep, value = text.partition("=")
    if not sep or not label.strip():
        raise ValueError("expected PHASE=VOLTS, e.g. A=400")
    volts = _quantity("voltage")(value)
    if volts < 0:
        raise ValueError("a voltmeter reads no negative volts")
    return _Reading(label.strip(), volts, text)


def _drawing_file(text: str) -> Path:
    if Path(text).suffix.lower() not in (".pdf", ".svg"):  # the renderers of _cmd_draw
        raise ValueError("expected a .pdf or .svg file name")
    return Path(text)


def _cmd_check(args: argparse.Namespace) -> int:
    from workpack.loading import load_plant
    from workpack.render.text import plant_summary
    from workpack.summary import summarize

    plant, topology = load_plant(Path(args.plant))
    summary = summarize(plant, topology)
    sys.stdout.write(_to_json(summary) if args.json else plant_summary(summary))
    return 0


def _cmd_isolate(args: argparse.Namespace) -> int:
    from workpack.isolation import plan_isolation
    from workpack.loading import load_plant
    from workpack.render.text import isolation_plan

    plant, topology = load_plant(Path(args.plant))
    if args.item not in topology.elements:
        raise UsageError(f"ITEM: no element {args.item!r} in {args.plant}"
                         f"{did_you_mean(args.item, topology.elements)}")
    plan = plan_isolation(topology, args.item)
    if args.json:
        sys.stdout.write(_to_json(plan))
    else:
        sys.stdout.write(isolation_plan(plan, topology.elements[args.item].label))
    return 0


def _standards() -> dict[str, Any]:
    from workpack.electrical import available_code_sets, load_code_set

    return {name: load_code_set(name) for name in available_code_sets()}


def _cmd_diagnose(args: argparse.Namespace) -> int:
    if args.volts is not None or args.reading:
        if args.plant or args.findings:
            raise UsageError("diagnose: give either PLANT FINDINGS or the quick options "
                             "(--volts, --reading …), not both")
        return _quick_diagnose(args)
    quick = [args.hertz, args.capacitance_per_phase, args.sequence]
    if any(option is not None for option in quick):
        raise UsageError("diagnose: quick mode needs --volts and three --reading options")
    if not (args.plant and args.findings):
        raise UsageError("diagnose: give PLANT FINDINGS, or quick mode: --volts 440 "
                         "--hertz 60 --reading A=400 --reading B=60 --reading C=470")
    from workpack.diagnose import diagnose_day
    from workpack.loading import load_findings, load_plant
    from workpack.render.text import day_diagnosis

    plant, topology = load_plant(Path(args.plant))
    findings = load_findings(Path(args.findings), topology)
    result = diagnose_day(plant, topology, findings, _standards())
    sys.stdout.write(_to_json(result) if args.json else day_diagnosis(result))
    return 0


def _quick_diagnose(args: argparse.Namespace) -> int:
    from workpack.quick_diagnose import diagnose_readings  # not workpack.diagnose: see there
    from workpack.render.quick_text import quick_diagnosis

    if args.volts is None:
        raise UsageError("diagnose: quick mode needs --volts and three --reading options")
    if args.capacitance_per_phase is not None and args.hertz is None:
        raise UsageError("--capacitance-per-phase needs --hertz to give a fault resistance")
    readings: dict[str, float] = {}
    for reading in args.reading or []:
        if reading.phase in readings:
            raise UsageError(f"--reading {reading.written}: phase {reading.phase} given twice")
        readings[reading.phase] = reading.volts
    if len(readings) != 3:
        raise UsageError(f"--reading: give one reading for each of three phases "
                         f"(got {len(readings)})")
    try:
        summary = diagnose_readings(readings, args.volts, args.sequence,
                                    frequency_hz=args.hertz,
                                    capacitance_f=args.capacitance_per_phase,
                                    tolerance_percent=args.tolerance)
    except ValueError as error:
        raise UsageError(f"diagnose: {error}") from None
    sys.stdout.write(_to_json(summary) if args.json else quick_diagnosis(summary))
    return 0


def _cmd_locate(args: argparse.Namespace) -> int:
    from workpack.loading import load_findings, load_plant, load_weights
    from workpack.render.text import fault_search
    from workpack.search import as_found_voltages, plan_fault_search, search_place, search_refused

    plant, topology = load_plant(Path(args.plant))
    place = search_place(topology, args.place)
    if place is None:
        known = set(topology.elements) | {d.id for i in topology.normal_islands
                                          for d in i.detectors}
        raise UsageError(f"ISLAND_OR_DETECTOR: no system, bus or detector {args.place!r} in "
                         f"{args.plant}{did_you_mean(args.place, known)}")
    refused = search_refused(topology, place)
    if refused:
        raise UsageError(f"{args.place}: {refused}")
    as_found = None
    day = args.date
    if args.findings:
        findings = load_findings(Path(args.findings), topology)
        day = day or findings.date
        as_found = as_found_voltages(topology, findings, place)
    weights = load_weights(Path(args.weights))
    search = plan_fault_search(topology, place, weights, _standards(), day or dt.date.today(),
                               as_found_v=as_found, one_at_a_time=args.one_at_a_time)
    sys.stdout.write(_to_json(search) if args.json else fault_search(search))
    return 0


def _cmd_plan(args: argparse.Namespace) -> int:
    from workpack.joblog import carry_forward, left_out, plan_events, with_carried
    from workpack.loading import load_findings, load_plant, load_ruleset, load_weights
    from workpack.output import reading, write_all
    from workpack.plan import Conflict, plan_day
    from workpack.render.daysheet import render_day_sheet
    from workpack.render.pdf import render_package
    from workpack.render.text import day_plan

    plant, topology = load_plant(Path(args.plant))
    findings = load_findings(Path(args.findings), topology)
    day = args.date or (findings.date + dt.timedelta(days=1) if findings.date else None)
    if day is None:
        raise UsageError("--date: the findings file has no date; give the day to plan for")
    rules = Path(args.rules)
    ruleset = load_ruleset(rules)
    weights = load_weights(rules / "search-weights.yaml")
    history, jobs = _history(args, plant)
    out = Path(args.out)
    replaces = _earlier_plan(day, plant.plant.name, _default_db(args))
    if out.is_dir():  # refuse before the work, not after it; write_all asks again, locked
        with reading(out):
            replaces(out)
    register = _plan_crew(args, plant.plant.name)
    crew_hours = args.crew_hours
    if register is not None and getattr(args, "setting_sources", {}).get(
            "crew_hours") == "the built-in default":
        from workpack.plan.crewing import available_hours

        crew_hours = available_hours(register, day)  # the register's, not the default's
    carry = carry_forward(jobs or {}, day)
    notes: tuple[str, ...] = ()
    if carry.findings:
        places = set(topology.elements) | {b.detector.id for b in plant.buses if b.detector}
        findings, notes = with_carried(findings, carry.findings, places)
    with Progress("planning") as planning:
        result = plan_day(topology, findings, day, ruleset, _standards(), weights,
                          crew_hours, history=history, progress=planning,
                          carried=carry.carried)
    notes += carry.notes + left_out(carry, result)
    if notes:
        result = dataclasses.replace(result, conflicts=(
            *result.conflicts, *(Conflict((), note) for note in notes)))
    if register is not None:
        from workpack.plan.crewing import staff_day

        result = staff_day(result, register)
    files: dict[str, bytes] = {}
    with Progress("rendering", total=len(result.packages)) as rendering:
        for done, package in enumerate(result.packages, start=1):
            files[f"{package.id}.pdf"] = render_package(package, args.page_size)
            files[f"{package.id}.json"] = (package.model_dump_json(indent=2) + "\n").encode()
            rendering(done, len(result.packages))
    files[f"day-{day.isoformat()}.pdf"] = render_day_sheet(
        result.plant, day, result.packages, result.scheduled, result.deferred,
        [c.text for c in result.conflicts], result.crew_hours, args.page_size,
        chain_head=_chain_head(args, plant))
    _refuse_other_days(out, day, result.packages)
    written = write_all(out, files, replaces=replaces)
    recorded = ""
    if jobs is not None:
        from workpack.store import ReadOnlyError, open_store

        events = plan_events(result, carry, findings, args.at or dt.datetime.now(dt.UTC),
                             args.by)
        with open_store(_default_db(args), plant=plant.plant.name) as store:
            try:
                store.append_events(events)
                recorded = f"{len(events)} job events recorded in {store.location}\n"
                # once per older store: the next plan reads summaries, not every payload
                store.fill_planning_summaries()
            except ReadOnlyError as exc:  # an office auditor may plan, not issue
                recorded = (f"NOTE: the plan's jobs were not recorded ({exc}); their ids "
                            "are not reserved: plan with a role that may write to issue "
                            "them\n")
                if args.json:
                    sys.stderr.write(recorded)
    if args.json:
        from workpack.reports import PlannedPackage, PlanReport

        sys.stdout.write(_to_json(PlanReport(
            plant=result.plant, date=result.date, crew_hours=result.crew_hours,
            packages=tuple(PlannedPackage(
                id=p.id, title=p.title, item=p.item, priority=p.priority,
                duration_h=p.duration_h, crew=p.crew, scheduled=p.id in result.scheduled,
                clears_ground=p.clears_ground, assigned=p.assigned,
                supervisor_assigned=p.supervisor_assigned) for p in result.packages),
            conflicts=result.conflicts, folder=str(written[0].parent),
            files=tuple(p.name for p in written))))
        return 0
    sys.stdout.write(day_plan(result) + f"\n{len(written)} files written to "
                     f"{written[0].parent}\n" + recorded)
    return 0


def _plan_crew(args: argparse.Namespace, plant: str) -> Any:
    """The crew register of ``plan --crew``, refused when it is another plant's."""
    if not args.crew:
        return None
    from workpack.crew import serves
    from workpack.crew_shell import load_crew

    register, _ = load_crew(Path(args.crew))
    if not serves(register, plant):
        raise UsageError(f"--crew {args.crew}: the register is for "
                         f"{', '.join(register.crew.plants)}, not {plant}")
    return register


def _history(args: argparse.Namespace, plant: Any) -> tuple[Any, dict[str, Any] | None]:
    """What the records store says, if there is one (``--db``, or beside the plant): the
    history for planning, and each job's state from its events (None: no store)."""
    from workpack.history import History, history_from_planning
    from workpack.joblog import fold
    from workpack.store import is_server_url, open_store

    db = _default_db(args)
    server = is_server_url(db)  # an office store holds many plants: read this one's chain
    if not server and not Path(db).exists():
        if _typed(args, "db"):  # named elsewhere (environment, workpack.toml): none yet
            raise UsageError(f"--db {args.db}: no such records store (create it with: "
                             f"workpack store init {args.db} --plant '{plant.plant.name}')")
        return History(), None
    with open_store(db, plant=plant.plant.name if server else None, create=False) as store:
        history = history_from_planning(store.planning_records(),
                                        plant.plant.code_set.rotating_machines)
        return history, fold(store.events())


def _chain_head(args: argparse.Namespace, plant: Any) -> Any:
    """The plan's records store's head (None without a store or records): the day sheet
    prints it as an anchor to keep elsewhere. Read after ``_history`` found the store."""
    from workpack.store import is_server_url, open_store

    db = _default_db(args)
    server = is_server_url(db)
    if not server and not Path(db).exists():
        return None
    with open_store(db, plant=plant.plant.name if server else None, create=False) as store:
        return store.head()


def _earlier_plan(day: Any, plant: str, db: str) -> Any:
    """The files an earlier plan of ``day`` for ``plant`` left in a folder, which this
    plan replaces as a set; refuses (UsageError) to replace another plant's set, or a
    package a record in ``db`` refers to (it has been issued and worked)."""
    import re

    from workpack.store import is_server_url, open_store, package_sha256

    # Any plant's: the day sheet's name is the day's alone, so one folder holds one plant's
    # day. A job carried from an earlier day keeps the id it was first issued with.
    pattern = re.compile(rf"WP-[A-Z0-9]{{2,8}}-\d{{8}}-\d{{2,}}\.(pdf|json)|"
                         rf"day-{day.isoformat()}\.pdf")

    def earlier(folder: Path) -> list[str]:
        names = sorted(p.name for p in folder.iterdir() if p.is_file()
                       and pattern.fullmatch(p.name))
        twins: dict[str, Any] = {}
        for name in (n for n in names if n.endswith(".json")):
            try:
                data = json.loads((folder / name).read_text(encoding="utf-8"))
                twins[name] = data if isinstance(data, dict) and "plant" in data else None
            except (OSError, ValueError):
                twins[name] = None
            if twins[name] is None:
                raise UsageError(f"{folder / name}: not a package this plan can replace "
                                 "(unreadable); move it away or plan into another folder")
        # Another day's packages stay: only this day's set is replaced.
        twins = {name: data for name, data in twins.items()
                 if data.get("date") == day.isoformat()}
        for name, data in twins.items():
            if data["plant"] != plant:
                raise UsageError(f"{folder}: holds the {day} packages of "
                                 f"{data['plant']!r} ({name}); plan {plant!r} into "
                                 "another folder")
        names = [n for n in names if n.startswith("day-")
                 or n.rsplit(".", 1)[0] + ".json" in twins]
        if twins and (is_server_url(db) or Path(db).exists()):
            with open_store(db, plant=plant, create=False) as store:
                recorded = {(r.package_id, r.package_sha256): r.sequence
                            for r in store.records()}
            for name, data in twins.items():
                sequence = recorded.get((data.get("id"), package_sha256(data)))
                if sequence is not None:
                    raise UsageError(
                        f"{folder / name}: package {data.get('id')} was issued and has record "
                        f"{sequence} in {db}; planning {day} again would replace it. Plan "
                        "into another folder")
        return names

    return earlier


def _refuse_other_days(out: Path, day: Any, packages: Sequence[Any]) -> None:
    """A job carried over keeps its id: its package of an earlier day, in the same folder,
    has the same file name. Refuse rather than overwrite what was issued that day."""
    for package in packages:
        twin = out / f"{package.id}.json"
        if not twin.is_file():
            continue
        try:
            issued = json.loads(twin.read_text(encoding="utf-8")).get("date")
        except (OSError, ValueError, AttributeError):
            issued = None
        if issued != day.isoformat():
            raise UsageError(f"{twin}: package {package.id} as issued for {issued}; it is "
                             f"carried into {day} under the same id. Plan each day into "
                             "its own folder")


def _cmd_results_template(args: argparse.Namespace) -> int:
    from workpack.forms import results_template
    from workpack.output import write_all

    if args.json and not args.out:
        raise UsageError("--json: reports the file written; give --out FILE (without "
                         "--out the sheet itself is printed)")
    package, digest = _issued_package(Path(args.package))
    text = results_template(package, digest)
    if args.out:
        out = Path(args.out)
        write_all(out.parent, {out.name: text.encode()})
        if args.json:
            from workpack.reports import FilesReport

            sys.stdout.write(_to_json(FilesReport(files=(str(out),))))
        else:
            sys.stdout.write(f"results sheet written to {out}\n")
    else:
        sys.stdout.write(text)
    return 0


def _default_db(args: argparse.Namespace) -> str:
    """The store's path or URL (a URL must stay text: a Path would fold its slashes)."""
    if args.db:
        return str(args.db)
    if getattr(args, "plant", None):
        plant = Path(args.plant)
        return str(plant.with_name(plant.stem + ".records.sqlite"))
    raise UsageError("--db: name the records store (or --plant, to use the one beside it)")


def _store_plant(args: argparse.Namespace) -> str | None:
    """Which plant's chain of a PostgreSQL store: --plant as a name, or its plant file's."""
    from workpack.store import is_server_url

    if not (args.db and is_server_url(args.db) and getattr(args, "plant", None)):
        return None  # an SQLite file holds one plant
    if Path(args.plant).is_file():
        from workpack.loading import load_plant

        return str(load_plant(Path(args.plant))[0].plant.name)
    return str(args.plant)


def _cmd_record(args: argparse.Namespace) -> int:
    from workpack.evaluate import evaluate
    from workpack.joblog import fold, record_event, refusal
    from workpack.loading import load_results_marked, located
    from workpack.lockregister import check_record_locks, results_locks, stored_locks
    from workpack.output import write_all
    from workpack.recordchecks import lock_mismatches
    from workpack.records import record_payload
    from workpack.render.text import evaluation_text
    from workpack.store import NewEvent, open_store

    package, digest = _issued_package(Path(args.package))
    results, marks = load_results_marked(Path(args.results), package, digest)
    if not results.anything_filled_in():
        raise UsageError(f"{args.results}: nothing is filled in; record a job once it has "
                         "been done")
    # Everything refused is refused before the store is opened or written: nothing half
    # recorded, and no store created for a record that is not written.
    problems, not_accepted = _register_problems(args, package, results)
    problems += lock_mismatches(package, results, ())
    if problems:
        raise InputError(located(marks, problems))
    evaluation = evaluate(package, results, _standards(), not_accepted)
    at = args.at or dt.datetime.now(dt.UTC)
    recorded_by = args.by or results.completed_by or "unknown"
    payload = _signed(args, record_payload(results, evaluation), package_id=package.id,
                      package_sha256=digest, recorded_by=recorded_by, recorded_at=at,
                      supersedes=args.supersedes, verdict=evaluation.verdict,
                      named={"technician": results.completed_by,
                             "supervisor": results.supervisor})
    kind, detail = record_event(package.id, results, evaluation, package)
    with open_store(_default_db(args), plant=package.plant) as store:
        job = fold(store.events(package_id=package.id)).get(package.id)
        latest = store.latest(package.id)
        # A job carried into another day is issued again (another package hash): each
        # day's record of it is a daily entry, not a correction.
        daily_entry = (latest is not None and job is not None and job.open
                       and latest.package_sha256 != digest)
        if latest is not None and args.supersedes is None and not daily_entry:
            raise UsageError(f"{package.id} is already recorded (record {latest.sequence}); "
                             f"to correct it, record again with --supersedes "
                             f"{latest.sequence}")
        why = refusal(job, kind, correction=args.supersedes is not None) if job else None
        if why is not None:
            raise UsageError(f"{package.id}: {why}")
        # The plant's lock register as the store has it, without the record this corrects.
        uses, boxes, _ = results_locks(results, package.plant, package.id)
        earlier = stored_locks((r for r in store.records() if r.sequence != args.supersedes),
                               numbered={use.lock for use in uses})
        clashes = check_record_locks(uses, boxes, earlier)
        if clashes:
            raise InputError(located(marks, clashes))
        # One transaction: a record is never stored without its job's event.
        record = store.append(package_id=package.id, package_sha256=digest,
                              results=payload, recorded_by=recorded_by, recorded_at=at,
                              verdict=evaluation.verdict, supersedes=args.supersedes,
                              events=[NewEvent(
                                  package.id, job.job_key if job else f"package:{package.id}",
                                  kind, results.completed_on or package.date, at, recorded_by,
                                  detail)])
        where = store.location  # a URL's password left out
    if not args.json:  # said at once: the record is stored whatever happens next
        state = ("suspended: its locks stay on, the job goes on" if kind == "suspended"
                 else f"completed ({evaluation.verdict})")
        sys.stdout.write(evaluation_text(evaluation) + f"job {package.id} {state}\n"
                         + f"recorded as record {record.sequence} in {where}\n")
    followups = None
    if args.followups and evaluation.followups:
        import yaml

        text = yaml.safe_dump({"date": package.date.isoformat(),
                               "findings": [f.model_dump() for f in evaluation.followups]},
                              sort_keys=False, allow_unicode=True)
        out = Path(args.followups)
        write_all(out.parent, {out.name: text.encode()})
        followups = str(out)
        if not args.json:
            sys.stdout.write(f"{len(evaluation.followups)} follow-up finding(s) written to "
                             f"{out}\n")
    if args.json:
        from workpack.reports import RecordReport

        sys.stdout.write(_to_json(RecordReport(package=package.id, sequence=record.sequence,
                                               store=where, verdict=evaluation.verdict,
                                               evaluation=evaluation, followups=followups)))
    return 0 if evaluation.verdict == "passed" else 1  # recorded either way; 1: found wanting


def _signed(args: argparse.Namespace, payload: dict[str, Any], **record: Any) -> dict[str, Any]:
    """The payload with the signatures of ``--sign ROLE=KEYFILE`` (none: unchanged)."""
    if not args.sign:
        return payload
    from workpack.trust_shell import sign_payload

    register = _register(args)
    if register is None:
        raise UsageError("--sign: give --crew, the register holding the signers' keys")
    return sign_payload(register, args.sign, payload, now=dt.datetime.now(dt.UTC), **record)


def _add_signing_options(record: argparse.ArgumentParser) -> None:
    """`record --sign ROLE=KEYFILE` (and --crew, unless the register checks added it)."""

    def role_key_file(text: str) -> tuple[str, Path]:  # loaded on use: --help stays quick
        from workpack.trust_shell import role_key_file as convert

        return convert(text)

    if "--crew" not in record._option_string_actions:  # noqa: SLF001 (shared with checks)
        record.add_argument("--crew", metavar="CREW.yaml",
                            help="crew register: who may sign, with their public keys")
    record.add_argument("--sign", action="append", metavar="ROLE=KEYFILE",
                        type=_option("--sign", role_key_file),
                        help="sign the record as technician or supervisor with this private "
                             "key file (repeat for both); its passphrase from "
                             "WORKPACK_KEY_PASSPHRASE_TECHNICIAN (or _SUPERVISOR), else "
                             "WORKPACK_KEY_PASSPHRASE, else asked on the terminal")


def _cmd_job(args: argparse.Namespace) -> int:
    from workpack.joblog import fold, refusal
    from workpack.store import NewEvent, open_store

    if args.event == "cancelled" and not (args.note and args.note.strip()):
        raise UsageError("--note: say why the job is cancelled")
    at = args.at or dt.datetime.now(dt.UTC)
    with open_store(_default_db(args), plant=_store_plant(args), create=False) as store:
        job = fold(store.events(package_id=args.package)).get(args.package)
        why = refusal(job, args.event)
        if why is not None or job is None:
            raise UsageError(f"{args.package}: {why}")
        store.append_events([NewEvent(args.package, job.job_key, args.event, at.date(), at,
                                      args.by, {"note": args.note} if args.note else {})])
        where = store.location
    if args.json:
        from workpack.reports import JobEventReport

        sys.stdout.write(_to_json(JobEventReport(args.package, args.event, args.by, at,
                                                 args.note, where)))
        return 0
    sys.stdout.write(f"{args.package}: {args.event} by {args.by} at "
                     f"{at:%Y-%m-%d %H:%M %Z}, recorded in {where}\n")
    return 0


def _cmd_status(args: argparse.Namespace) -> int:
    from workpack.joblog import status, status_text
    from workpack.jobstates import jobs_for_status
    from workpack.loading import load_plant
    from workpack.store import is_server_url, open_store

    plant, _ = load_plant(Path(args.plant))
    db = _default_db(args)
    server = is_server_url(db)
    if not server and not Path(db).exists():
        raise UsageError(f"{db}: no such records store; plan with --db first")
    day = args.date or _now().date()
    with open_store(db, plant=plant.plant.name if server else None, create=False) as store:
        jobs = jobs_for_status(store, day)
    report = status(plant, jobs, day, args.days)
    sys.stdout.write(_to_json(report) if args.json else status_text(report, args.days))
    return 0


def _register_problems(args: argparse.Namespace, package: Any,
                       results: Any) -> tuple[list[Any], dict[str, str]]:
    """The record checked against the crew register (its signers) and the instrument
    register (its readings), where given: the problems that refuse it, and the readings
    recorded as not accepted (reading id → why)."""
    problems: list[Any] = []
    not_accepted: dict[str, str] = {}
    if args.crew:
        from workpack.competence import job_needs
        from workpack.crew_shell import load_crew
        from workpack.recordchecks import lock_holder_mismatches, signer_mismatches

        register, _ = load_crew(Path(args.crew))
        problems += signer_mismatches(register, package, results, job_needs(package))
        problems += lock_holder_mismatches(register, results)
    if args.instruments:
        from workpack.recordchecks import instrument_check
        from workpack.register_files import load_instruments

        check = instrument_check(load_instruments(Path(args.instruments)), package, results)
        problems += check.problems
        not_accepted = check.not_accepted
    return problems, not_accepted


def _cmd_locks(args: argparse.Namespace) -> int:
    from workpack.loading import load_plant
    from workpack.lockregister import locks_on, stored_locks
    from workpack.render.text import locks_text
    from workpack.store import is_server_url, open_store

    plant = load_plant(Path(args.plant))[0].plant.name
    db = _default_db(args)
    if not is_server_url(db) and not Path(db).exists():
        raise UsageError(f"--db {db}: no such records store")
    with open_store(db, plant=plant, create=False) as store:
        uses = stored_locks(store.lock_records(), on_only=True)
        where = store.location
    on = [lock for lock in locks_on(uses) if lock.plant == plant]
    if args.json:
        from workpack.reports import LocksReport

        sys.stdout.write(_to_json(LocksReport(plant=plant, store=where, locks_on=tuple(on))))
    else:
        sys.stdout.write(locks_text(plant, where, on))
    return 0


def _cmd_verify(args: argparse.Namespace) -> int:
    from workpack.store import is_server_url, open_store
    from workpack.trust_shell import (
        anchor_plant,
        check_anchor,
        check_job_states,
        check_planning_summaries,
        check_signatures,
        check_verdicts,
        read_anchor,
    )

    db, plant = _default_db(args), _store_plant(args)
    anchor = read_anchor(args.anchor) if args.anchor else None
    register = _register(args)
    packages = _read_packages(args.packages) if args.packages else None
    if plant is None and anchor is not None and is_server_url(db):
        plant = anchor_plant(anchor)  # an anchor file says whose chain it is; a head does not
        if plant is None:
            raise UsageError(f"--anchor {args.anchor}: a head typed from a day sheet does not "
                             "say its plant; name it with --plant")
    plants: list[str | None] = [plant]
    if plant is None and is_server_url(db):  # no plant named: every chain in the store
        with open_store(db, create=False) as store:
            plants = list(store.plants())
            if not plants:
                if args.json:
                    from workpack.reports import VerifyReport

                    sys.stdout.write(_to_json(VerifyReport(ok=True, chains=())))
                else:
                    sys.stdout.write(f"{store.location}: OK, empty store (no plant's records "
                                     "yet)\n")
                return 0
    chains = []
    checks: list[Any] = []
    for name in plants:
        with open_store(db, plant=name, create=False) as store:
            chains.append(_chain_report(name, store.verify()))
            checks += check_planning_summaries(store)
            checks += check_job_states(store)
            if anchor is not None:
                checks += check_anchor(store, anchor, f"--anchor {args.anchor}", register)
            if packages is not None:
                checks += check_verdicts(store, packages, _standards())
            if register is not None:
                checks += check_signatures(store, register)
    ok = all(c.ok for c in chains) and all(c.ok for c in checks)
    if args.json:
        from workpack.reports import VerifyReport

        sys.stdout.write(_to_json(VerifyReport(ok=ok, chains=tuple(chains),
                                               checks=tuple(checks))))
    else:
        sys.stdout.write("".join(chain.message + "\n" for chain in chains))
        sys.stdout.write("".join(check.message + "\n" for check in checks))
    return 0 if ok else 1


def _chain_report(plant: str | None, verification: Any) -> Any:
    from workpack.reports import ChainReport

    return ChainReport(plant=plant, store=verification.location, ok=verification.ok,
                       records=verification.count, head=verification.head,
                       first_break=verification.first_break,
                       guards_intact=verification.guards_intact,
                       message=verification.message)


def _register(args: argparse.Namespace) -> Any:
    """The crew register of --crew, loaded and checked; None without the option."""
    if not getattr(args, "crew", None):
        return None
    from workpack.crew_shell import load_crew

    return load_crew(Path(args.crew))[0]


def _cmd_anchor(args: argparse.Namespace) -> int:
    from workpack.crew_shell import parse_time
    from workpack.store import is_server_url, open_store
    from workpack.trust_shell import anchor_of_store

    db = _default_db(args)
    if is_server_url(db) and not args.plant:
        raise UsageError("--plant: an office store holds many plants; name the one whose "
                         "chain to anchor")
    at = parse_time("--at", args.at, _now)
    with open_store(db, plant=_store_plant(args), create=False) as store:
        text = anchor_of_store(store, register=_register(args), key_file=Path(args.key), at=at)
    if args.out:
        from workpack.output import write_all

        out = Path(args.out)
        write_all(out.parent, {out.name: text.encode()})
        sys.stdout.write(f"anchor written to {out}\n")
    else:
        sys.stdout.write(text)
    return 0


def _issued_package(path: Path) -> tuple[Any, str]:
    """A package JSON, read while its folder holds one whole set (see output.reading)."""
    from workpack.loading import load_package
    from workpack.output import reading

    with reading(path.parent):
        return load_package(path)  # type: ignore[no-any-return]


def _read_packages(folders: Sequence[str]) -> dict[str, Any]:
    from workpack.loading import load_package
    from workpack.output import reading

    packages: dict[str, Any] = {}
    for folder in folders:
        path = Path(folder)
        if not path.is_dir():
            raise UsageError(f"--packages {folder}: no such folder")
        with reading(path):
            for twin in sorted(path.glob("*.json")):
                package, _ = load_package(twin)
                packages[package.id] = package
    return packages


def _cmd_audit(args: argparse.Namespace) -> int:
    from workpack.audit import build_audit
    from workpack.output import write_all
    from workpack.render.audit_html import render_audit_html
    from workpack.render.audit_pdf import render_audit_pdf
    from workpack.store import open_store

    as_of = args.as_of or args.until or dt.date.today()
    with Progress("audit", total=5) as progress:
        progress.stage("reading packages")
        packages = _read_packages(args.packages)
        progress.stage("verifying records")
        with open_store(_default_db(args), plant=_store_plant(args), create=False) as store:
            records = list(store.records())
            verification = store.verify()
        progress.stage("judging")
        report = build_audit(records, packages, verification, since=args.since,
                             until=args.until, plant=args.plant_name, as_of=as_of,
                             standards=_standards(), default_code_set=args.code_set,
                             register=_register(args))
        progress.stage("HTML")
        html = render_audit_html(report).encode()
        progress.stage("PDF")
        pdf = render_audit_pdf(report, args.page_size)
    written = write_all(Path(args.out), {"audit.html": html, "audit.pdf": pdf})
    found = report.integrity
    problems = (*found.verdict_problems, *found.signature_problems)
    if args.json:
        from workpack.reports import AuditReport

        sys.stdout.write(_to_json(AuditReport(
            chain=_chain_report(_store_plant(args), verification), packages=len(packages),
            records=len(records), files=tuple(str(p) for p in written),
            problems=problems)))
    else:
        sys.stdout.write(f"{verification.message}\n"
                         + "".join(f"{problem}\n" for problem in problems) + "audit written: "
                         + ", ".join(str(p) for p in written) + "\n")
    return 0 if verification.ok and not problems else 1


def _cmd_closeout(args: argparse.Namespace) -> int:
    from workpack.output import write_all
    from workpack.records import PayloadError, read_payload
    from workpack.render.closeout import render_closeout
    from workpack.store import open_store

    if not args.sign_as and (args.crew or args.at):
        raise UsageError(f"{'--crew' if args.crew else '--at'}: only with --sign-as KEYFILE, "
                         "to sign the close-out")
    package, digest = _issued_package(Path(args.package))
    with open_store(_default_db(args), plant=_store_plant(args) or package.plant,
                    create=False) as store:
        record = store.get(args.record) if args.record else store.latest(package.id)
    if record is None:
        raise UsageError(f"no record of {package.id} in {_default_db(args)}")
    if record.package_id != package.id:
        raise UsageError(f"--record {args.record}: answers {record.package_id}, "
                         f"not {package.id}")
    if record.package_sha256 != digest:
        raise UsageError(f"{args.package}: this package differs from the one record "
                         f"{record.sequence} answers (hash); use the package as issued")
    try:
        payload = read_payload(record)
    except PayloadError as error:
        raise UsageError(f"record {record.sequence} of {package.id} in {_default_db(args)}: "
                         f"{error}; it cannot be closed out (record the results again with "
                         f"--supersedes {record.sequence})") from None
    pdf = render_closeout(package, payload.evaluation, record, results=payload.results,
                          page_size=args.page_size)
    signed, signer = "", None
    if args.sign_as:
        pdf, signed, signer = _signed_closeout(args, pdf, package, record)
    out = Path(args.out)
    write_all(out.parent, {out.name: pdf})
    if args.json:
        from workpack.reports import CloseoutReport

        sys.stdout.write(_to_json(CloseoutReport(package=package.id, sequence=record.sequence,
                                                 verdict=record.verdict, file=str(out),
                                                 signed_by=signer)))
        return 0
    sys.stdout.write(f"record {record.sequence} of {package.id} ({record.verdict}) "
                     f"written to {out}{signed}\n")
    return 0


def _signed_closeout(args: argparse.Namespace, pdf: bytes, package: Any,
                     record: Any) -> tuple[bytes, str, str]:
    """The close-out with a PAdES signature by the key in --sign-as, what to say, and the
    signer's id."""
    from workpack.crew_shell import load_crew, open_signing_key
    from workpack.render.pdf_signature import sign_pdf, signer_certificate

    if not args.crew:
        raise UsageError("--sign-as: give the crew register holding the key too (--crew)")
    register, _ = load_crew(Path(args.crew))
    at = (args.at or _now()).replace(microsecond=0)
    identity = open_signing_key(register, Path(args.sign_as), at)
    certificate = signer_certificate(identity.private_key, identity.person, identity.key,
                                     register.crew.name)
    signed = sign_pdf(pdf, identity.private_key, certificate, signed_at=at,
                      reason=f"close-out of record {record.sequence} of {package.id}: "
                             f"{record.verdict}", location=package.plant)
    return signed, (f", signed by {identity.person.name} ({identity.person.id}) with key "
                    f"{identity.key.id}"), identity.person.id


def _cmd_schema(args: argparse.Namespace) -> int:
    from workpack.model.schemas import INPUT_FILES, file_name, schema_text
    from workpack.output import write_all

    if args.all == (args.what is not None):
        raise UsageError("schema: name one file (" + ", ".join(INPUT_FILES) + ") or give "
                         "--all")
    if args.out is None:
        if args.all:
            raise UsageError("schema --all writes one file per schema: give --out DIR")
        sys.stdout.write(schema_text(args.what))
        return 0
    names = list(INPUT_FILES) if args.all else [args.what]
    out = Path(args.out)
    write_all(out, {file_name(name): schema_text(name).encode("utf-8") for name in names})
    for name in names:
        sys.stdout.write(f"{out / file_name(name)}\n")
    return 0


def _cmd_draw(args: argparse.Namespace) -> int:
    from workpack.loading import load_plant
    from workpack.output import write_all
    from workpack.render.oneline import draw_plant, render_pdf, render_svg

    out = args.out
    renderers = {".pdf": render_pdf, ".svg": render_svg}
    plant, topology = load_plant(Path(args.plant))
    drawing = draw_plant(plant, topology, paper=args.paper)
    write_all(out.parent, {out.name: renderers[out.suffix.lower()](drawing)})
    enlarged = [str(s.number) for s in drawing.sheets if s.enlarged]
    if args.json:
        from workpack.reports import DrawReport

        sys.stdout.write(_to_json(DrawReport(paper=args.paper, sheets=len(drawing.sheets),
                                             enlarged=tuple(int(n) for n in enlarged),
                                             file=str(out))))
        return 0
    sys.stdout.write(f"{len(drawing.sheets)} sheet(s) of {args.paper} written to {out}\n")
    if enlarged:
        sys.stdout.write(f"larger than {args.paper} (nothing left to split at): sheet(s) "
                         f"{', '.join(enlarged)}\n")
    return 0


def _cmd_store_init(args: argparse.Namespace) -> int:
    from workpack.store import set_up_store

    done = set_up_store(args.location, plant=args.plant, crew=args.crew or (),
                        auditors=args.auditor or ())
    if args.json:
        from workpack.reports import StoreInitReport
        from workpack.store import is_server_url
        from workpack.store._base import redact

        location = redact(args.location) if is_server_url(args.location) else args.location
        sys.stdout.write(_to_json(StoreInitReport(store=location, done=tuple(done))))
        return 0
    for line in done:
        sys.stdout.write(line + "\n")
    return 0


def _role_plant(text: str) -> tuple[str, str]:
    role, sep, plant = text.partition("=")
    if not sep or not role.strip() or not plant.strip():
        raise argparse.ArgumentTypeError(f"{text!r}: expected ROLE=PLANT, e.g. "
                                         "crew_skerry='MV Skerry Lantern'")
    return role.strip(), plant.strip()


def _cmd_import_assets(args: argparse.Namespace) -> int:
    from workpack.model.plant import SECTIONS
    from workpack.output import write_all
    from workpack.sheets import import_assets

    out = Path(args.out)
    with Progress("import", total=3) as progress:
        plant, text = import_assets([Path(p) for p in args.inputs], Path(args.map), str(out),
                                    stage=progress.stage)
    write_all(out.parent, {out.name: text.encode()})
    if args.json:
        from workpack.reports import ImportReport

        sys.stdout.write(_to_json(ImportReport(
            plant=plant.plant.name, file=str(out),
            counts={s: len(getattr(plant, s)) for s in SECTIONS if getattr(plant, s)})))
        return 0
    counts = ", ".join(f"{len(getattr(plant, s))} {s}" for s in SECTIONS if getattr(plant, s))
    sys.stdout.write(f"{plant.plant.name}: {counts}\ninventory written to {out}\n")
    return 0


def _cmd_export(args: argparse.Namespace) -> int:
    from workpack.exports import TABLE_KINDS, ExportInputs, build_tables
    from workpack.history import history_from_records
    from workpack.loading import load_plant
    from workpack.output import write_all
    from workpack.sheets import FIXED_STAMP, tables_to_files

    kinds = list(dict.fromkeys(args.what or ["records", "readings", "due"]))
    needs = set().union(*(TABLE_KINDS[kind].needs for kind in kinds))
    as_of = args.as_of or dt.date.today()
    if "plant" in needs and not args.plant:
        wanting = ", ".join(k for k in kinds if "plant" in TABLE_KINDS[k].needs)
        raise UsageError(f"--plant: the {wanting} table needs the plant inventory")
    plant = (load_plant(Path(args.plant))[0] if args.plant and (
        "plant" in needs or Path(args.plant).is_file()) else None)
    records = _export_records(args, needs, plant)
    history = (history_from_records(records, plant.plant.code_set.rotating_machines)
               if records is not None and plant is not None else None)
    inputs = ExportInputs(as_of=as_of, plant=plant, records=records, history=history,
                          standards=_standards() if plant is not None else {},
                          days=args.days)
    tables = build_tables(kinds, inputs)
    out = Path(args.out)
    dated = any(TABLE_KINDS[kind].dated for kind in kinds)
    stamp = dt.datetime.combine(max(as_of, dt.date(1980, 1, 1)), dt.time()) if dated \
        else FIXED_STAMP
    files = tables_to_files(tables, out, stamp)
    written = write_all(out.parent if out.suffix else out, files)
    if args.json:
        from workpack.reports import ExportedTable, ExportReport

        sys.stdout.write(_to_json(ExportReport(
            tables=tuple(ExportedTable(name=t.name, columns=t.columns, rows=len(t.rows))
                         for t in tables), files=tuple(str(p) for p in written))))
        return 0
    sys.stdout.write("".join(f"{t.name}: {len(t.rows)} rows\n" for t in tables)
                     + "written: " + ", ".join(str(p) for p in written) + "\n")
    return 0


def _export_records(args: argparse.Namespace, needs: set[str], plant: Any) -> list[Any] | None:
    """One plant's chain of records for an export: needed (records, readings), or there
    to inform the due list; None when there is no store and none is needed."""
    from workpack.store import is_server_url, open_store

    if not ("records" in needs or args.db or args.plant):
        return None
    db = _default_db(args)
    server = is_server_url(db)
    if not server and not Path(db).exists():
        if "records" not in needs:
            return None  # the due list without a store: intervals only
        if not args.what:
            raise UsageError(f"no records store at {db}: give --db, or --what due for the "
                             "due list alone")
    # An office store holds many plants' chains: the one of --plant (the store takes its
    # only plant, or names them all when there are several and none is given).
    chain = (plant.plant.name if plant is not None else _store_plant(args)) if server else None
    with open_store(db, plant=chain, create=False) as store:
        return list(store.records())


def _json_option(parser: argparse.ArgumentParser) -> None:
    """``--json``: the command's report as one JSON object, whose schema ships in
    workpack/data/output-schemas/ (output_schemas.OUTPUTS names the type it follows)."""
    parser.add_argument("--json", action="store_true",
                        help="print the report as JSON (schema: workpack/data/output-schemas/)")


def _store_options(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--db", help="records store: an SQLite file, or a postgresql:// URL "
                                     "of an office store")
    parser.add_argument("--plant", help="plant file: the store beside it "
                                        "(PLANT.records.sqlite) is used; with a postgresql:// "
                                        "--db, the plant (its name, or its file) whose chain "
                                        "to use")


# --- ship records ashore: `workpack sync export|import` -------------------------------------


def _bundle_bytes(path: Path, *, first_line: bool = False) -> bytes:
    """A bundle file's bytes (or its first line only); BundleError if it cannot be read."""
    from workpack.sync import BundleError

    try:
        if first_line:
            with path.open("rb") as handle:
                return handle.readline().removesuffix(b"\n")
        return path.read_bytes()
    except FileNotFoundError:
        raise BundleError(f"{path}: no such file") from None
    except OSError as error:
        raise BundleError(f"{path}: cannot read it ({error.strerror or error})") from None


def _read_bundle_file(path: Path) -> Any:
    from workpack.sync import read_bundle

    return read_bundle(_bundle_bytes(path), str(path))


def _since(text: str, store: Any, register: Any) -> Any:
    """``--since``: the last record the office holds already, as a ``ChainHead`` (None for
    none): an earlier bundle's last record, or an anchor (its file, or COUNT:HEAD from a
    day sheet) that the store must still contain."""
    from workpack.anchors import anchor_head
    from workpack.model.anchor import AnchorFile
    from workpack.sync import check_signature
    from workpack.trust_shell import check_anchor, read_anchor

    path = Path(text)
    if path.is_file() and path.read_bytes()[:12] == b'{"manifest":':
        bundle = _read_bundle_file(path)
        signed = check_signature(register, bundle)
        if not signed.ok:
            raise UsageError(f"--since {text}: its signature is refused: {signed.message}")
        if bundle.plant != store.plant:
            raise UsageError(f"--since {text}: a bundle of plant {bundle.plant!r}, not of "
                             f"{store.plant!r}, whose records {store.location} holds")
        return bundle.through if bundle.through.sequence else None
    anchor = read_anchor(text)
    failed = [finding.message for finding in check_anchor(store, anchor, f"--since {text}",
                                                       register) if not finding.ok]
    if failed:
        raise UsageError("nothing exported: " + "; ".join(failed))
    return anchor_head(anchor.anchor) if isinstance(anchor, AnchorFile) else anchor


def _cmd_sync_export(args: argparse.Namespace) -> int:
    from workpack.crew_shell import load_crew, open_signing_key
    from workpack.output import write_all
    from workpack.signing import sign_digest
    from workpack.store import open_store, plant_genesis
    from workpack.sync import SIGNED_AS, bundle_bytes, rows_after

    register, _ = load_crew(Path(args.crew))
    at = (args.at or _now()).replace(microsecond=0)
    identity = open_signing_key(register, Path(args.sign_as), at)
    with open_store(_default_db(args), plant=_store_plant(args), create=False) as store:
        if store.plant and args.plant_name and args.plant_name != store.plant:
            raise UsageError(f"--plant-name {args.plant_name}: {store.location} holds the "
                             f"records of plant {store.plant!r}")
        plant = store.plant or args.plant_name
        if not plant:
            raise UsageError(f"{store.location}: this store does not know its plant's name; "
                             "give it with --plant-name")
        after = _since(args.since, store, register) if args.since else None
        verification = store.verify(anchor=after)
        if not verification.ok:
            raise UsageError(f"nothing exported: {verification.message}")
        genesis = plant_genesis(store.plant)
        rows = rows_after(store.records(), after, genesis)
        where = store.location

    def sign(digest: str) -> Any:
        return sign_digest(identity.private_key, digest, signed_as=SIGNED_AS,
                           person=identity.person.id, key=identity.key.id, signed_at=at)

    data = bundle_bytes(plant=plant, genesis=genesis, after=after, rows=rows,
                        exported_at=at, sign=sign)
    out = Path(args.out)
    write_all(out.parent, {out.name: data})
    first = after.sequence + 1 if after is not None else 1
    if args.json:
        from workpack.reports import SyncExportReport

        sys.stdout.write(_to_json(SyncExportReport(
            plant=plant, store=where, after=first - 1,
            through=rows[-1].sequence if rows else first - 1, records=len(rows),
            signed_by=identity.person.id, file=str(out))))
        return 0
    what = (f"records {first} to {rows[-1].sequence}" if rows else
            f"no records after record {first - 1}")
    sys.stdout.write(f"{where}: {what} of plant {plant} written to {out} ({len(data):,} "
                     f"bytes), signed by {identity.person.name} ({identity.person.id})\n")
    return 0


def _bundle_header(path: Path) -> Any:
    """A bundle file's manifest and signature, read without its records."""
    from workpack.sync import read_header

    return read_header(_bundle_bytes(path, first_line=True), str(path))


def _cmd_sync_import(args: argparse.Namespace) -> int:
    from workpack.crew_shell import load_crew
    from workpack.reports import BundleOutcome
    from workpack.store import open_store
    from workpack.sync import check_signature, import_order

    register, _ = load_crew(Path(args.crew))
    outcomes: list[BundleOutcome] = []

    def refuse(name: str, why: str, plant: str | None = None) -> None:
        outcomes.append(BundleOutcome(file=name, imported=False, plant=plant, added=0,
                                      already_held=0, head=None, refused=why))
        sys.stderr.write(f"{name}: refused, nothing imported from it: {why}\n")

    # Every bundle's header and signature first, to put them in chain order; each bundle
    # is then read whole (and its signature checked again) only when its turn comes, so
    # memory holds one bundle at a time.
    headers = {}
    for name in args.bundles:
        try:
            header = _bundle_header(Path(name))
        except WorkpackError as error:
            refuse(name, error.format_message())
            continue
        check = check_signature(register, header)
        if check.ok:
            headers[id(header[0])] = (name, header[0])
        else:
            refuse(name, f"its signature: {check.message}", header[0].plant)
    for manifest in import_order(manifest for _, manifest in headers.values()):
        name = headers[id(manifest)][0]
        try:
            bundle = _read_bundle_file(Path(name))
            check = check_signature(register, bundle)
            if not check.ok or bundle.manifest != manifest:
                raise UsageError(f"its signature: {check.message}" if not check.ok else
                                 "the file changed while it was being imported")
            with open_store(args.db, plant=bundle.plant) as store:
                done = store.import_rows(bundle.rows, after=bundle.after,
                                         genesis=bundle.manifest.genesis)
        except WorkpackError as error:
            refuse(name, error.format_message(), manifest.plant)
            continue
        outcomes.append(BundleOutcome(file=name, imported=True, plant=done.plant,
                                      added=done.added, already_held=done.already_held,
                                      head=done.head, refused=None))
        if not args.json:
            held = f", {done.already_held} held already" if done.already_held else ""
            last = done.head.sequence if done.head is not None else 0
            sys.stdout.write(f"{name}: {bundle.describe()}: {done.added} added{held}; the "
                             f"chain of {done.plant} now ends at record {last}\n")
    ok = all(outcome.imported for outcome in outcomes)
    if args.json:
        from workpack.reports import SyncImportReport

        sys.stdout.write(_to_json(SyncImportReport(ok=ok, bundles=tuple(outcomes))))
    return 0 if ok else 2


def _add_sync_commands(commands: Any) -> None:
    sync = commands.add_parser(
        "sync", help="ship a vessel's new records ashore as one signed file, and take them in",
        description="A vessel keeps its own store and works offline; `sync export` writes "
                    "its records after an earlier export into one signed file (mail, USB, "
                    "satellite), `sync import` adds them to the office's store. The key's "
                    "passphrase comes from WORKPACK_KEY_PASSPHRASE or the terminal.")
    actions = sync.add_subparsers(dest="sync_action", required=True, metavar="ACTION")
    export = actions.add_parser("export", help="a signed bundle of the records after --since")
    _store_options(export)
    export.add_argument("--since", metavar="ANCHOR",
                        help="what the office holds already: an anchor file (workpack "
                             "anchor), COUNT:HEAD as a day sheet prints it, or the last "
                             "bundle sent; the records after it are exported (default: "
                             "every record)")
    export.add_argument("--out", required=True, metavar="BUNDLE", help="the file to write")
    export.add_argument("--sign-as", required=True, metavar="KEYFILE",
                        help="your private key file: the bundle is signed with it")
    export.add_argument("--crew", required=True, metavar="CREW.yaml",
                        help="the crew register holding your key")
    export.add_argument("--plant-name", help="the plant's name, for a store made before "
                                             "stores knew it")
    export.add_argument("--at", type=_option("--at", _moment),
                        help="the export's time (default: now; UTC unless a zone is given)")
    _json_option(export)
    export.set_defaults(run=_cmd_sync_export)
    take = actions.add_parser("import", help="add bundles to a store; the same bundle twice "
                                             "adds nothing")
    take.add_argument("bundles", nargs="+", metavar="BUNDLE",
                      help="bundle files, of any vessels, in any order")
    take.add_argument("--db", required=True, help="the store to add to: a postgresql:// URL "
                                                  "(or an SQLite file)")
    take.add_argument("--crew", required=True, metavar="CREW.yaml",
                      help="the crew register holding the exporters' public keys")
    _json_option(take)
    take.set_defaults(run=_cmd_sync_import)


# --- the crew register and signing keys: `workpack crew`, `workpack key` ---------------------


def _now() -> Any:
    import datetime as dt

    return dt.datetime.now().astimezone()  # aware, in the machine's zone: its local day


def _cmd_crew_check(args: argparse.Namespace) -> int:
    from workpack.crew import summarize_register
    from workpack.crew_shell import load_crew, parse_time
    from workpack.render.crew_text import crew_summary

    register, _ = load_crew(Path(args.register))
    at = parse_time("--at", args.at, _now)
    people = summarize_register(register, at)
    from workpack.reports import CrewCheckReport

    sys.stdout.write(_to_json(CrewCheckReport(crew=register.crew, at=at,
                                              people=tuple(people))) if args.json
                     else crew_summary(register, people, at))
    return 0


def _passphrase() -> bytes:
    from workpack.crew_shell import read_passphrase

    return read_passphrase(confirm=True)


def _cmd_key_create(args: argparse.Namespace) -> int:
    from workpack.crew_shell import create_key, parse_time

    at = parse_time("--from", args.valid_from, _now)
    sys.stdout.write(create_key(Path(args.register), args.person, Path(args.out),
                                key_id=args.key_id, at=at, passphrase=_passphrase))
    return 0


def _cmd_key_rotate(args: argparse.Namespace) -> int:
    from workpack.crew_shell import parse_time, rotate_key

    at = parse_time("--at", args.at, _now)
    sys.stdout.write(rotate_key(Path(args.register), args.person, Path(args.out),
                                key_id=args.key_id, at=at, reason=args.reason,
                                passphrase=_passphrase))
    return 0


def _cmd_key_revoke(args: argparse.Namespace) -> int:
    from workpack.crew_shell import parse_time, revoke_key

    at = parse_time("--at", args.at, _now)
    sys.stdout.write(revoke_key(Path(args.register), args.key, at=at, reason=args.reason))
    return 0


def _add_crew_commands(commands: Any) -> None:
    """`workpack crew check` and `workpack key create|rotate|revoke`."""
    crew = commands.add_parser("crew", help="the crew register: who may do, supervise and "
                                            "sign the work")
    crew_actions = crew.add_subparsers(dest="crew_action", required=True, metavar="ACTION")
    check = crew_actions.add_parser("check", help="validate a crew register and summarise it")
    check.add_argument("register", metavar="CREW.yaml", help="crew register (YAML)")
    check.add_argument("--at", metavar="TIME", help="summarise as of this time, with its "
                                                    "zone (default: now)")
    _json_option(check)
    check.set_defaults(run=_cmd_crew_check)

    key = commands.add_parser(
        "key", help="signing keys: create, rotate, revoke (prints the register lines to add)",
        description="Signing keys of the crew. The private key goes to a file protected by "
                    "a passphrase (from WORKPACK_KEY_PASSPHRASE, or asked on the terminal; "
                    "never an option). The register is edited by hand: these commands print "
                    "the lines to add and where.")
    key_actions = key.add_subparsers(dest="key_action", required=True, metavar="ACTION")
    create = key_actions.add_parser("create", help="a new key pair for a person")
    rotate = key_actions.add_parser("rotate", help="a new key pair for a person; their keys "
                                                   "in use are revoked from the same time")
    for action in (create, rotate):
        action.add_argument("--register", required=True, metavar="CREW.yaml",
                            help="crew register (YAML)")
        action.add_argument("--person", required=True, metavar="ID", help="the person's id")
        action.add_argument("--out", required=True, metavar="KEYFILE",
                            help="private key file to write (never over an existing file)")
        action.add_argument("--key-id", metavar="ID",
                            help="the new key's id (default: PERSON-K<n>)")
    create.add_argument("--from", dest="valid_from", metavar="TIME",
                        help="valid from this time, with its zone (default: now)")
    create.set_defaults(run=_cmd_key_create)
    rotate.add_argument("--at", metavar="TIME", help="time of the change, with its zone "
                                                     "(default: now)")
    rotate.add_argument("--reason", help="why the old keys are revoked (default: replaced "
                                         "by the new key)")
    rotate.set_defaults(run=_cmd_key_rotate)
    revoke = key_actions.add_parser("revoke", help="revoke a key from a time; signatures "
                                                   "made before stay valid")
    revoke.add_argument("--register", required=True, metavar="CREW.yaml",
                        help="crew register (YAML)")
    revoke.add_argument("--key", required=True, metavar="KEYID", help="the key's id")
    revoke.add_argument("--at", metavar="TIME", help="revoked from this time, with its zone "
                                                     "(default: now)")
    revoke.add_argument("--reason", required=True, help="why, e.g. 'key file lost'")
    revoke.set_defaults(run=_cmd_key_revoke)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="workpack",
        description="Plans isolation, diagnosis and work packages for insulated "
                    "three-phase systems. Local codes, the employer's rules and licensed "
                    "practice prevail over anything it prints.",
    )
    parser.add_argument("--version", action="version", version=f"workpack {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    check = commands.add_parser("check", help="validate a plant and summarize its systems")
    check.add_argument("plant", metavar="PLANT", help="plant inventory (YAML)")
    _json_option(check)
    check.set_defaults(run=_cmd_check)

    isolate = commands.add_parser("isolate", help="what to open and lock to work on an item")
    isolate.add_argument("plant", metavar="PLANT", help="plant inventory (YAML)")
    isolate.add_argument("item", metavar="ITEM", help="element id")
    _json_option(isolate)
    isolate.set_defaults(run=_cmd_isolate)

    diagnose = commands.add_parser(
        "diagnose", help="diagnose a day's findings, or three readings at a switchboard")
    diagnose.add_argument("plant", metavar="PLANT", nargs="?", help="plant inventory (YAML)")
    diagnose.add_argument("findings", metavar="FINDINGS", nargs="?",
                          help="findings (YAML, or CSV from a rounds log)")
    _json_option(diagnose)
    quick = diagnose.add_argument_group(
        "quick mode", "three phase-to-earth readings, no plant file; units may be written "
                      "with the number (2.2uF)")
    quick.add_argument("--volts", type=_option("--volts", _quantity("voltage", above_zero=True)),
                       help="line-to-line voltage of the system, e.g. 440")
    quick.add_argument("--hertz", type=_option("--hertz", _quantity("frequency")),
                       help="frequency, e.g. 60")
    quick.add_argument("--capacitance-per-phase",
                       type=_option("--capacitance-per-phase",
                                    _quantity("capacitance", above_zero=True)),
                       help="each phase's capacitance to earth, e.g. 2.2e-6 or 2.2uF; "
                            "without it only the displacement is found")
    quick.add_argument("--reading", action="append", metavar="PHASE=VOLTS",
                       type=_option("--reading", _phase_reading),
                       help="one phase-to-earth reading, e.g. A=400 (give three)")
    quick.add_argument("--sequence", help="phase sequence, e.g. ABC or ACB (default: the "
                                          "phase labels in alphabetical order, e.g. A-B-C)")
    quick.add_argument("--tolerance", type=_option("--tolerance", _percent), default=1.0,
                       metavar="PERCENT",
                       help="meter accuracy, percent of reading, plus 1 V (default 1)")
    diagnose.set_defaults(run=_cmd_diagnose)

    locate = commands.add_parser(
        "locate", help="plan the search for a ground: which feeder to open first, and why")
    locate.add_argument("plant", metavar="PLANT", help="plant inventory (YAML)")
    locate.add_argument("place", metavar="ISLAND_OR_DETECTOR",
                        help="the detector showing the ground, or a bus of that system")
    locate.add_argument("--findings", metavar="FILE",
                        help="the day's findings: the latest phase-to-earth readings on that "
                             "system are shown as what an uncleared indication looks like")
    locate.add_argument("--weights", default=str(rules_folder() / "search-weights.yaml"),
                        help="likelihood and cost weights (default: the shipped "
                             "rules/search-weights.yaml)")
    locate.add_argument("--date", type=_option("--date", _day),
                        help="the day of the search (YYYY-MM-DD), for recent work; "
                             "default: the findings' date, else today")
    locate.add_argument("--one-at-a-time", action="store_true",
                        help="never open feeders in groups")
    _json_option(locate)
    locate.set_defaults(run=_cmd_locate)

    plan = commands.add_parser(
        "plan", help="tomorrow's work packages (PDF and JSON) and the day sheet")
    plan.add_argument("plant", metavar="PLANT", help="plant inventory (YAML)")
    plan.add_argument("findings", metavar="FINDINGS",
                      help="the day's findings (YAML, or CSV from a rounds log)")
    plan.add_argument("--out", required=True, metavar="DIR", help="folder for the packages")
    plan.add_argument("--date", type=_option("--date", _day),
                      help="the day planned for (YYYY-MM-DD); default: the day after the "
                           "findings' date")
    plan.add_argument("--crew-hours", type=_option("--crew-hours", _hours), metavar="H",
                      help="person-hours available (default 16: two people, a day; with "
                           "--crew, the register's hours of the day)")
    plan.add_argument("--crew", metavar="CREW.yaml",
                      help="crew register: name the people for each job, within their hours")
    plan.add_argument("--page-size", choices=["A4", "Letter"], help="paper (default A4)")
    plan.add_argument("--rules", default=str(rules_folder()), metavar="DIR",
                      help="rules folder (default: the shipped rules/)")
    plan.add_argument("--db", help="records store: its history informs the plan, its open "
                                   "jobs and locks come first, and the plan's jobs are "
                                   "recorded in it (default: PLANT.records.sqlite beside the "
                                   "plant, if it exists)")
    plan.add_argument("--by", default="workpack plan",
                      help="who plans, recorded with the jobs' events (default: workpack plan)")
    plan.add_argument("--at", type=_option("--at", _moment),
                      help="when, for the jobs' events (ISO date and time; default: now)")
    _json_option(plan)
    plan.set_defaults(run=_cmd_plan)

    status = commands.add_parser(
        "status", help="the morning's view: open, suspended and carried-over jobs, locks on, "
                       "routine tests overdue and due soon")
    status.add_argument("plant", metavar="PLANT", help="plant inventory (YAML)")
    status.add_argument("--db", help="records store (default: PLANT.records.sqlite beside "
                                     "the plant)")
    status.add_argument("--date", type=_option("--date", _day),
                        help="as of this day (YYYY-MM-DD; default: today)")
    status.add_argument("--days", type=_option("--days", _days), default=7, metavar="N",
                        help="routine tests due within N days (default 7)")
    _json_option(status)
    status.set_defaults(run=_cmd_status)

    job = commands.add_parser(
        "job", help="write what happened to a job: issued, started, resumed or cancelled "
                    "(record writes completed and suspended)")
    job.add_argument("event", choices=["issued", "started", "resumed", "cancelled"],
                     help="what happened")
    job.add_argument("package", metavar="PACKAGE_ID", help="the package id")
    _store_options(job)
    job.add_argument("--by", required=True, help="who")
    job.add_argument("--at", type=_option("--at", _moment),
                     help="when (ISO date and time; default: now; UTC unless a zone is given)")
    job.add_argument("--note", help="why, in words (a cancellation needs one)")
    _json_option(job)
    job.set_defaults(run=_cmd_job)

    template = commands.add_parser(
        "results-template", help="a YAML results sheet for one package, to fill in")
    template.add_argument("package", metavar="PACKAGE_JSON", help="the package's JSON twin")
    template.add_argument("--out", metavar="FILE", help="write it here (default: print)")
    _json_option(template)
    template.set_defaults(run=_cmd_results_template)

    record = commands.add_parser(
        "record", help="judge a completed package and add it to the records store")
    record.add_argument("package", metavar="PACKAGE_JSON", help="the package's JSON twin")
    record.add_argument("results", metavar="RESULTS",
                        help="the filled results sheet (YAML) or the filled package PDF")
    _store_options(record)
    record.add_argument("--by", help="who records it (default: the technician)")
    record.add_argument("--at", type=_option("--at", _moment),
                        help="when (ISO date and time; default: now; UTC unless a zone "
                             "is given)")
    record.add_argument("--supersedes", type=int, metavar="N",
                        help="this corrects record N (records are never changed)")
    record.add_argument("--followups", metavar="FILE",
                        help="write follow-up findings (e.g. insulation below minimum) here")
    record.add_argument("--crew", metavar="CREW.yaml",
                        help="crew register: refuse the record unless its technician and "
                             "supervisor are in it and qualified for the job; with --sign, "
                             "their public keys")
    record.add_argument("--instruments", metavar="INSTRUMENTS.yaml",
                        help="instrument register: each reading names its instrument, in "
                             "calibration on the day; a reading outside its range is not "
                             "accepted")
    _add_signing_options(record)
    _json_option(record)
    record.set_defaults(run=_cmd_record)

    locks = commands.add_parser(
        "locks", help="the lock register: every lock on now, where, whose, since when, for "
                      "which job")
    locks.add_argument("plant", metavar="PLANT", help="plant inventory (YAML)")
    locks.add_argument("--db", help="records store: an SQLite file, or a postgresql:// URL "
                                    "(default: PLANT.records.sqlite beside the plant)")
    _json_option(locks)
    locks.set_defaults(run=_cmd_locks)

    verify = commands.add_parser(
        "verify", help="check the records store's hash chain (and, given them, an anchor "
                       "taken earlier)")
    _store_options(verify)
    verify.add_argument("--anchor", metavar="FILE|COUNT:HEAD",
                        help="an anchor file `workpack anchor` wrote, or the head a day sheet "
                             "printed (COUNT:HEAD): fails when the store no longer holds it")
    verify.add_argument("--crew", metavar="CREW.yaml",
                        help="crew register: check every record's signatures (and the "
                             "anchor's) against it")
    verify.add_argument("--packages", action="append", metavar="DIR",
                        help="folder of issued packages (JSON twins; repeat as needed): judge "
                             "every record again from its results and its package, and fail "
                             "where a stored verdict disagrees")
    _json_option(verify)
    verify.set_defaults(run=_cmd_verify)

    anchor = commands.add_parser(
        "anchor", help="a signed statement of the records chain's head, to keep elsewhere",
        description="Prints (or writes) the plant, the number of records, the last chain "
                    "hash and the time, signed with a key of the crew register (its "
                    "passphrase from WORKPACK_KEY_PASSPHRASE, or asked on the terminal). "
                    "Kept outside the store, it lets `workpack verify --anchor FILE` show "
                    "later that the store still holds these records unchanged.")
    _store_options(anchor)
    anchor.add_argument("--crew", required=True, metavar="CREW.yaml",
                        help="crew register holding the signer's key")
    anchor.add_argument("--key", required=True, metavar="KEYFILE",
                        help="the signer's private key file")
    anchor.add_argument("--at", metavar="TIME",
                        help="time of the anchor, with its zone (default: now)")
    anchor.add_argument("--out", metavar="FILE", help="write it here (default: print)")
    anchor.set_defaults(run=_cmd_anchor)

    audit = commands.add_parser(
        "audit", help="audit report (HTML and PDF) of the packages issued and their records")
    _store_options(audit)
    audit.add_argument("--packages", action="append", required=True, metavar="DIR",
                       help="folder of issued packages (their JSON twins); repeat as needed")
    audit.add_argument("--from", dest="since", metavar="YYYY-MM-DD",
                       type=_option("--from", _day), help="first package date included")
    audit.add_argument("--to", dest="until", metavar="YYYY-MM-DD",
                       type=_option("--to", _day), help="packages dated before this day")
    audit.add_argument("--plant-name", help="only packages of this plant")
    audit.add_argument("--as-of", metavar="YYYY-MM-DD", type=_option("--as-of", _day),
                       help="the day open packages become overdue (default: --to, else today)")
    audit.add_argument("--code-set", default="ieee43-2013",
                       help="tables for insulation trends whose readings name none")
    audit.add_argument("--page-size", choices=["A4", "Letter"], help="paper (default A4)")
    audit.add_argument("--crew", metavar="CREW.yaml",
                       help="crew register: check every record's signatures against it")
    audit.add_argument("--out", required=True, metavar="DIR", help="folder for the report")
    _json_option(audit)
    audit.set_defaults(run=_cmd_audit)

    closeout = commands.add_parser(
        "closeout", help="the closed-out record of one package as PDF: values, marks, who")
    closeout.add_argument("package", metavar="PACKAGE_JSON", help="the package as issued")
    _store_options(closeout)
    closeout.add_argument("--record", type=int, metavar="N",
                          help="record number (default: the package's latest)")
    closeout.add_argument("--page-size", choices=["A4", "Letter"], help="paper (default A4)")
    closeout.add_argument("--out", required=True, metavar="FILE", help="PDF to write")
    closeout.add_argument("--sign-as", metavar="KEYFILE",
                          help="sign the PDF (PAdES) with this private key file; its "
                               "passphrase from WORKPACK_KEY_PASSPHRASE or the terminal")
    closeout.add_argument("--crew", metavar="CREW.yaml",
                          help="with --sign-as: the crew register holding the key")
    closeout.add_argument("--at", type=_option("--at", _moment),
                          help="with --sign-as: the signing time (default: now; UTC unless "
                               "a zone is given)")
    _json_option(closeout)
    closeout.set_defaults(run=_cmd_closeout)

    draw = commands.add_parser(
        "draw", help="the whole plant's one-line drawing (PDF or SVG), systems framed")
    draw.add_argument("plant", metavar="PLANT", help="plant inventory (YAML)")
    draw.add_argument("--out", required=True, metavar="FILE",
                      type=_option("--out", _drawing_file),
                      help="FILE.pdf (one page per sheet) or FILE.svg (sheets one under "
                           "the other)")
    draw.add_argument("--paper", choices=["A3", "A2", "A1", "A0"], default="A3",
                      help="sheet size, landscape (default A3); a plant too big for one "
                           "sheet is split with off-sheet connectors")
    _json_option(draw)
    draw.set_defaults(run=_cmd_draw)

    store = commands.add_parser("store", help="set up a records store (once, by its owner)")
    store_actions = store.add_subparsers(dest="store_action", required=True, metavar="ACTION")
    init = store_actions.add_parser(
        "init", help="create or complete a store: tables, append-only triggers, roles, grants "
                     "and row-level security (PostgreSQL); safe to run again")
    init.add_argument("location", metavar="DB",
                      help="postgresql://… URL, connecting as a superuser or the database's "
                           "owner with CREATEROLE (or an SQLite file to create)")
    init.add_argument("--crew", action="append", type=_role_plant, metavar="ROLE=PLANT",
                      help="an existing login role that may read and append one plant's "
                           "records; repeat as needed")
    init.add_argument("--auditor", action="append", metavar="ROLE",
                      help="an existing login role that reads every plant and writes nothing")
    init.add_argument("--plant", help="SQLite only: the plant whose records the file holds")
    _json_option(init)
    init.set_defaults(run=_cmd_store_init)

    import_assets = commands.add_parser(
        "import-assets", help="an asset list (spreadsheet or CSV) into a plant inventory")
    import_assets.add_argument("inputs", nargs="+", metavar="FILE",
                               help="workbook (.xlsx), CSV file, or a folder of CSV files "
                                    "(one sheet each, named by the file)")
    import_assets.add_argument("--map", default=str(asset_map()),
                               metavar="MAP.yaml",
                               help="which sheet and column holds which field (default: "
                                    "the shipped map, plants/asset-map.yaml in the "
                                    "repository, which reads `export --what assets`)")
    import_assets.add_argument("--out", required=True, metavar="PLANT.yaml",
                               help="the inventory to write (only once it validates)")
    _json_option(import_assets)
    import_assets.set_defaults(run=_cmd_import_assets)

    from workpack.exports import TABLE_KINDS, describe

    export = commands.add_parser(
        "export", help="records, readings, the due list or the asset list as XLSX or CSV")
    export.add_argument("--what", action="append", choices=list(TABLE_KINDS),
                        help=f"a table to write; repeat for more (default: records, "
                             f"readings, due). {describe()}")
    export.add_argument("--plant", help="plant inventory (for due and assets; its records "
                                        "store PLANT.records.sqlite is used if there); with "
                                        "a postgresql:// --db, the plant (its file or name) "
                                        "whose records to export")
    export.add_argument("--db", help="records store: an SQLite file, or a postgresql:// URL "
                                     "of an office store")
    export.add_argument("--as-of", metavar="YYYY-MM-DD", type=_option("--as-of", _day),
                        help="the day the due list counts from (default: today)")
    export.add_argument("--days", type=_option("--days", _days), default=30,
                        help="the due list covers tests due within this many days "
                             "(default 30); overdue ones are always in")
    export.add_argument("--out", required=True, metavar="FILE.xlsx|FILE.csv|DIR",
                        help="one workbook (a sheet per table), one CSV file (one table), "
                             "or a folder (a CSV file per table)")
    _json_option(export)
    export.set_defaults(run=_cmd_export)

    from workpack.model.schemas import INPUT_FILES

    schema = commands.add_parser(
        "schema", help="the JSON Schema of an input file, for editors and validators",
        description="Print the JSON Schema of one kind of input file, or write them all. "
                    "The same schemas ship in workpack/data/schemas/; the demo YAML files "
                    "point editors at them on their first line.")
    schema.add_argument("what", nargs="?", choices=list(INPUT_FILES),
                        help="which file: " + "; ".join(f"{name}: {what}" for name, (_, what)
                                                        in INPUT_FILES.items()))
    schema.add_argument("--all", action="store_true", help="every schema (needs --out)")
    schema.add_argument("--out", metavar="DIR",
                        help="write NAME.schema.json files into DIR (atomically) instead of "
                             "printing")
    schema.set_defaults(run=_cmd_schema)

    _add_crew_commands(commands)
    _add_sync_commands(commands)
    _explain_conventions(parser)
    return parser


EXIT_STATUS = ("exit status: 0 done (and, where something is judged, found sound); "
               "1 judged and found wanting (a job recorded as failed or incomplete, a records "
               "chain broken); 2 bad input or options (one line per problem, file:line:col "
               "where there is a file; nothing written).")


def _explain_conventions(parser: argparse.ArgumentParser) -> None:
    """Every command's --help ends with where settings come from and the exit statuses,
    commands added later included: this walks the parsers rather than listing them."""
    from workpack.settings import PRECEDENCE

    parser.epilog = "\n\n".join(p for p in (parser.epilog, PRECEDENCE, EXIT_STATUS) if p)
    parser.formatter_class = _Formatter
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            for sub in dict.fromkeys(action.choices.values()):
                _explain_conventions(sub)


class _Formatter(argparse.HelpFormatter):
    """Wraps the description and epilog as paragraphs (blank lines kept between them)."""

    def _fill_text(self, text: str, width: int, indent: str) -> str:
        return "\n\n".join(super(_Formatter, self)._fill_text(part, width, indent)
                           for part in text.split("\n\n"))


def _typed(args: argparse.Namespace, setting: str) -> bool:
    """Whether ``setting`` was given on the command line (not from elsewhere)."""
    from workpack.settings import COMMAND_LINE

    return bool(getattr(args, "setting_sources", {}).get(setting) == COMMAND_LINE)


def main(argv: Sequence[str] | None = None) -> int:
    from workpack.settings import resolve

    parser = build_parser()
    try:
        args = parser.parse_args(argv)  # a bad option value is a UsageError (see _option)
        resolve(args)  # --db, --page-size, --crew-hours left out: environment, workpack.toml
        return int(args.run(args))
    except WorkpackError as error:
        sys.stderr.write(error.format_message() + "\n")
        return error.exit_code
    except KeyboardInterrupt:
        sys.stderr.write("interrupted\n")
        return 130
