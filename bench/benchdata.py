"""What the benches share: invented plants and findings, and checks of the planner's output.

Everything here is invented for timing (never a check value of a calculation). The plants
are units made of ``tests/plantgen.py``'s random plants, joined at a site board, with the
shapes that stress the planner on the first unit's main board: a wide board, and deep
chains of panels, each fed through a breaker and a cable from the one before.
"""

from __future__ import annotations

import datetime as dt
import random
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

import yaml

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests"))

from plantgen import random_plant_data  # noqa: E402

DAY = dt.date(2026, 12, 2)  # the day planned
FINDINGS_DATE = "2026-12-01"
DETECTOR = "GD-MAIN"  # the ground detector on the first unit's main board
CHAIN_DEPTH = 40  # panels in a row, each fed from the one before
UNIT_ITEMS = 3500  # a unit (a random plant of tests/plantgen.py) has at most this many


def scale_plant_data(size: int, seed: int = 2026) -> dict[str, Any]:
    """Plain data for a plant of about ``size`` items (invented).

    Seven tenths are units: random plants of ``tests/plantgen.py`` of at most
    ``UNIT_ITEMS`` items each, their ids prefixed ``U0-``, ``U1-``…, every main board
    joined by a normally open breaker to a site board with a utility supply (so the
    whole plant is one graph when everything closable is closed). The first unit's
    main board carries the ground detector and feeds one wide board (a tenth of the
    items: a breaker and a motor on each way) and a board of deep chains (two tenths:
    breaker, cable and panel, ``CHAIN_DEPTH`` times over, then a motor): that system
    grows with the plant.
    """
    units = max(1, -(-int(size * 0.7) // UNIT_ITEMS))
    data: dict[str, Any] = {
        "plant": {"code": "GEN", "name": f"generated {size}", "kind": "other", "frequency": 60},
        "sources": [{"id": "GRID", "kind": "utility", "voltage": 440}],
        "buses": [{"id": "SITE", "kind": "switchboard", "voltage": 440,
                   "earthing": "insulated", "from": "CB-GRID"}],
        "devices": [{"id": "CB-GRID", "kind": "circuit_breaker", "from": "GRID"}],
        "transformers": [], "cables": [], "loads": []}
    mains = []
    for unit in range(units):
        part = _prefixed(random_plant_data(seed + unit, size=int(size * 0.7) // units),
                         f"U{unit}-")
        for section in ("sources", "buses", "devices", "transformers", "cables", "loads"):
            data[section] += part[section]
        main = part["buses"][0]
        tie = f"CB-SITE-{unit}"
        data["devices"].append({"id": tie, "kind": "circuit_breaker", "from": "SITE",
                                "normally": "open"})
        main["from"] = [*_listed(main["from"]), tie]
        mains.append(main)
    first = mains[0]
    first["detector"] = {"id": DETECTOR, "kind": "lamps"}
    devices, cables, buses, loads = data["devices"], data["cables"], data["buses"], data["loads"]
    devices.append({"id": "WB-FEED", "kind": "circuit_breaker", "from": first["id"]})
    buses.append({"id": "WIDE", "kind": "switchboard", "voltage": 440,
                  "earthing": "insulated", "from": "WB-FEED"})
    for n in range(size // 20):
        devices.append({"id": f"WB{n}", "kind": "circuit_breaker", "from": "WIDE"})
        loads.append({"id": f"WM{n}", "kind": "motor", "from": f"WB{n}", "rated_voltage": 440})
    devices.append({"id": "KB-FEED", "kind": "circuit_breaker", "from": first["id"]})
    buses.append({"id": "CHAINS", "kind": "switchboard", "voltage": 440,
                  "earthing": "insulated", "from": "KB-FEED"})
    for chain in range(max(1, size // 5 // (3 * CHAIN_DEPTH + 2))):
        supply = "CHAINS"
        for level in range(CHAIN_DEPTH):
            breaker, cable, panel = (f"K{chain}.{level}", f"KC{chain}.{level}",
                                     f"KP{chain}.{level}")
            devices.append({"id": breaker, "kind": "circuit_breaker", "from": supply})
            cables.append({"id": cable, "from": breaker, "length": 25})
            buses.append({"id": panel, "kind": "distribution_panel", "voltage": 440,
                          "earthing": "insulated", "from": cable})
            supply = panel
        devices.append({"id": f"K{chain}.end", "kind": "circuit_breaker", "from": supply})
        loads.append({"id": f"KM{chain}", "kind": "motor", "from": f"K{chain}.end",
                      "rated_voltage": 440})
    return data


def _listed(value: str | list[str]) -> list[str]:
    return [value] if isinstance(value, str) else list(value)


def _prefixed(data: dict[str, Any], prefix: str) -> dict[str, Any]:
    """A random plant's data with every id (and every reference to one) prefixed."""
    def renamed(value: str | list[str]) -> str | list[str]:
        return prefix + value if isinstance(value, str) else [prefix + v for v in value]

    for section in ("sources", "buses", "devices", "transformers", "cables", "loads"):
        for element in data[section]:
            element["id"] = prefix + element["id"]
            if "from" in element:
                element["from"] = renamed(element["from"])
            for block in ("start_block", "transfer_block"):
                if block in element:
                    element[block]["id"] = prefix + element[block]["id"]
            for auxiliary in element.get("auxiliaries", ()):
                auxiliary["from"] = prefix + auxiliary["from"]
    return data


def plant_yaml(data: dict[str, Any]) -> str:
    """The plant as a person would write it: cable lengths with their unit."""
    for cable in data["cables"]:
        cable["length"] = f"{cable['length']} m"
    return yaml.safe_dump(data, sort_keys=False)


def findings_data(data: dict[str, Any], count: int, seed: int = 7,
                  ground: bool = True) -> dict[str, Any]:
    """Invented findings: low megger readings, tripped breakers and defects on random
    items, and (``ground``) the lamps of the first main board's detector showing a
    ground, which asks for a ground search."""
    rng = random.Random(seed)
    motors = sorted(load["id"] for load in data["loads"] if load["kind"] == "motor")
    breakers = sorted(d["id"] for d in data["devices"] if d["kind"] == "circuit_breaker")
    items: list[dict[str, Any]] = [{
        "kind": "lamps", "at": f"{FINDINGS_DATE}T05:30", "by": "bench", "where": DETECTOR,
        "lamps": {"A": "bright", "B": "dark", "C": "bright"}}] if ground else []
    for n in range(count - 1):
        at = f"{FINDINGS_DATE}T{6 + n % 12:02d}:{n % 60:02d}"
        choice = n % 3
        if choice == 0:
            items.append({"kind": "insulation_resistance", "at": at, "by": "bench",
                          "where": rng.choice(motors), "test_voltage": "500 V",
                          "reading": f"{rng.uniform(0.5, 4):.2f} MΩ",
                          "temperature": "25 °C"})
        elif choice == 1:
            items.append({"kind": "breaker_tripped", "at": at, "by": "bench",
                          "where": rng.choice(breakers)})
        else:
            items.append({"kind": "defect", "at": at, "by": "bench", "where": rng.choice(motors),
                          "text": "terminal box cover loose, water inside", "severity": "high"})
    return {"date": FINDINGS_DATE, "findings": items}


def findings_yaml(data: dict[str, Any], count: int, ground: bool = True) -> str:
    return yaml.safe_dump(findings_data(data, count, ground=ground), sort_keys=False,
                          allow_unicode=True)


def check_day_plan(result: Any, topology: Any, findings: Any) -> list[str]:
    """What must hold of a planned day, whatever the plant: a list of what does not.

    Every finding is in at most one package and most are in one; every package but the
    ground search isolates and proves dead (the bench's other rules all lock out); the
    ground search has steps; every isolation step names a plant
    device or a declared block, numbered 1…n; every insulation package has readings with
    a sourced limit; the detector's ground gives a package; scheduled and deferred
    packages are exactly the packages.
    """
    problems: list[str] = []
    ids = [p.id for p in result.packages]
    seen: dict[str, str] = {}
    for package in result.packages:
        for finding in package.origin.findings:
            if finding in seen:
                problems.append(f"finding {finding} in {seen[finding]} and {package.id}")
            seen[finding] = package.id
        if package.job_kind == "locate_ground":
            if not package.clears_ground or not package.steps:
                problems.append(f"{package.id}: a ground search with no steps")
        elif not package.isolation and not package.isolation_gaps:
            problems.append(f"{package.id}: no isolation")
        elif not package.proving_dead:
            problems.append(f"{package.id}: no proving dead")
        orders = [point.order for point in package.isolation]
        if orders != list(range(1, len(orders) + 1)):
            problems.append(f"{package.id}: isolation steps numbered {orders}")
        for point in package.isolation:
            if point.blocks is None and point.device not in topology.elements:
                problems.append(f"{package.id}: isolation step names {point.device}, "
                                "no device of the plant")
        if package.job_kind == "insulation_repair":
            limits = [r.limit for s in package.steps for r in s.readings if r.limit]
            if not limits or not all(limit.basis for limit in limits):
                problems.append(f"{package.id}: insulation package without sourced limits")
    total = len(findings.findings)
    if len(seen) < 0.9 * total:
        problems.append(f"only {len(seen)} of {total} findings are in a package")
    if not any(package.job_kind == "locate_ground" for package in result.packages):
        problems.append(f"no package for the ground shown at {DETECTOR}")
    if sorted((*result.scheduled, *result.deferred)) != sorted(ids):
        problems.append("scheduled and deferred packages are not the packages planned")
    return problems


def cpu_timed(action: Callable[[], Any]) -> tuple[float, Any]:
    """CPU seconds of this process spent in ``action`` (other processes on a shared
    machine do not count), and what it returned."""
    import time

    started = time.process_time()
    value = action()
    return time.process_time() - started, value
