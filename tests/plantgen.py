"""Random plants for property tests and benchmarks (invented data, never a check value).

A plant is built as plain data, as a person would write it, then validated
through the same model the loader uses. Shapes covered: several generators
on main boards joined by a normally open tie, radial feeders with breakers,
fuses and cables, sub-panels, transformer banks to 115 V panels joined by
normally open ties (back-feed through a transformer), loads behind transfer
switches fed from two boards or from a board and a UPS (open or closed
transition, automatic or not, with or without a transfer block), motor heaters
fed from a 115 V panel, an emergency board with a generator that starts by
itself (with or without a start block) and a normally open back-feed to the
main board, a shore connection, and four-wire panels behind a grounded wye.
"""

from __future__ import annotations

import random
from typing import Any

from workpack.model.plant import Plant


def random_plant_data(seed: int, size: int = 40) -> dict[str, Any]:
    """Plain data for a plant of roughly ``size`` elements."""
    rng = random.Random(seed)
    sources: list[dict[str, Any]] = []
    buses: list[dict[str, Any]] = []
    devices: list[dict[str, Any]] = []
    transformers: list[dict[str, Any]] = []
    cables: list[dict[str, Any]] = []
    loads: list[dict[str, Any]] = []
    counter = iter(range(10**9))

    def new_id(prefix: str) -> str:
        return f"{prefix}{next(counter)}"

    def device(supply: str, kind: str | None = None, normally: str = "closed") -> str:
        kind = kind or rng.choice(["circuit_breaker"] * 4 + ["fuse", "switch"])
        device_id = new_id("D")
        devices.append({"id": device_id, "kind": kind, "from": supply, "normally": normally})
        return device_id

    mains = []
    for board in range(rng.randint(1, 2)):
        incomers = []
        for _ in range(rng.randint(1, 2)):
            source_id = new_id("G")
            sources.append({"id": source_id, "kind": "generator", "voltage": 440})
            incomers.append(device(source_id, "circuit_breaker"))
        bus_id = f"MAIN{board}"
        buses.append({"id": bus_id, "kind": "switchboard", "voltage": 440,
                      "earthing": "insulated", "from": incomers})
        mains.append(bus_id)
    if len(mains) == 2:
        tie = device(mains[0], "circuit_breaker", normally="open")
        buses[-1]["from"].append(tie)

    def start_block(owner: str) -> dict[str, Any] | None:
        if rng.random() < 0.5:
            return None
        return {"id": f"{owner}-BLK", "location": f"{owner} local panel",
                "how": "selector to BLOCKED; padlock it"}

    panels_440 = list(mains)
    if rng.random() < 0.4:  # emergency board: fed from a main board, its own generator
        feeder = device(mains[0], "circuit_breaker")
        board = new_id("E")
        generator: dict[str, Any] = {"id": new_id("EG"), "kind": "emergency_generator",
                                     "voltage": 440, "starts_automatically": True}
        if (block := start_block(generator["id"])) is not None:
            generator["start_block"] = block
        sources.append(generator)
        buses.append({"id": board, "kind": "switchboard", "voltage": 440,
                      "earthing": "insulated",
                      "from": [feeder, device(generator["id"], "circuit_breaker", "open")]})
        if rng.random() < 0.5:  # emergency back-feed to the main board
            buses[0]["from"].append(device(board, "circuit_breaker", "open"))
        panels_440.append(board)
    if rng.random() < 0.3:  # shore connection through a box, onto a main board
        shore = new_id("SH")
        sources.append({"id": shore, "kind": "shore_connection", "voltage": 440})
        box = device(shore, "connection_box")
        buses[-1 if len(mains) == 1 else 1]["from"].append(
            device(box, "circuit_breaker", "open"))
    panels_115: list[str] = []
    heater_feeds: list[str] = []
    motors: list[dict[str, Any]] = []

    while len(sources) + len(buses) + len(devices) + len(transformers) + len(cables) + len(
        loads
    ) < size:
        choice = rng.random()
        if choice < 0.15:  # sub-panel at 440 V
            feed = device(rng.choice(panels_440))
            if rng.random() < 0.5:
                cable_id = new_id("C")
                cables.append({"id": cable_id, "from": feed, "length": rng.randint(5, 300)})
                feed = cable_id
            bus_id = new_id("P")
            buses.append({"id": bus_id, "kind": "distribution_panel", "voltage": 440,
                          "earthing": "insulated", "from": feed})
            panels_440.append(bus_id)
        elif choice < 0.27:  # transformer bank to a 115 V panel
            primary_breaker = device(rng.choice(panels_440), "circuit_breaker")
            transformer_id = new_id("T")
            transformers.append({
                "id": transformer_id, "construction": "bank_of_single_phase",
                "unit_kva": 10_000, "primary_voltage": 440, "secondary_voltage": 115,
                "vector_group": "Dd0", "from": primary_breaker})
            feeds = [device(transformer_id, rng.choice(["circuit_breaker", "fuse"]))]
            if panels_115 and rng.random() < 0.5:  # normally open tie: back-feed
                feeds.append(device(rng.choice(panels_115), "circuit_breaker", "open"))
            bus_id = new_id("L")
            buses.append({"id": bus_id, "kind": "lighting_panel", "voltage": 115,
                          "earthing": "insulated", "from": feeds})
            panels_115.append(bus_id)
        elif choice < 0.35 and len(panels_440) >= 2:  # load behind a transfer switch
            normal, alternate = rng.sample(panels_440, 2)
            alternate_feed = device(alternate, "circuit_breaker")
            if rng.random() < 0.3:  # the alternate is a UPS
                ups: dict[str, Any] = {"id": new_id("U"), "kind": "ups", "voltage": 440}
                if (block := start_block(ups["id"])) is not None:
                    ups["start_block"] = block
                sources.append(ups)
                devices[-1]["from"] = ups["id"]
            switch_id = new_id("TS")
            switch: dict[str, Any] = {"id": switch_id, "kind": "transfer_switch",
                                      "from": [device(normal, "circuit_breaker"),
                                               alternate_feed]}
            switch["transition"] = rng.choice(["open", "closed", None])
            switch["transfers_automatically"] = rng.choice([True, False, None])
            if switch["transfers_automatically"] is not False and rng.random() < 0.5:
                switch["transfer_block"] = {"id": f"{switch_id}-MODE", "how": "to MANUAL"}
            devices.append({k: v for k, v in switch.items() if v is not None})
            loads.append({"id": new_id("M"), "kind": "motor", "from": switch_id,
                          "rated_voltage": 440, "vitality": "vital"})
        elif choice < 0.38:  # four-wire panel behind a grounded wye
            primary_breaker = device(rng.choice(panels_440), "circuit_breaker")
            transformer_id = new_id("T")
            transformers.append({
                "id": transformer_id, "construction": "three_phase", "rated_kva": 30_000,
                "primary_voltage": 440, "secondary_voltage": 208, "vector_group": "Dyn11",
                "secondary_neutral": "grounded", "from": primary_breaker})
            bus_id = new_id("W")
            buses.append({"id": bus_id, "kind": "distribution_panel", "voltage": 208,
                          "earthing": "solid", "four_wire": rng.random() < 0.5,
                          "from": device(transformer_id, "circuit_breaker")})
            loads.append({"id": new_id("LT"), "kind": rng.choice(["lighting", "motor"]),
                          "from": device(bus_id), "rated_voltage": 208})
        elif choice < 0.45 and panels_115:  # heater supply way on a 115 V panel
            heater_feeds.append(device(rng.choice(panels_115), "circuit_breaker"))
        else:  # plain load
            if panels_115 and rng.random() < 0.3:
                loads.append({"id": new_id("LT"), "kind": "lighting",
                              "from": device(rng.choice(panels_115)), "rated_voltage": 115})
            else:
                motor = {"id": new_id("M"), "kind": "motor",
                         "from": device(rng.choice(panels_440)), "rated_voltage": 440}
                loads.append(motor)
                motors.append(motor)
    for feed in heater_feeds:
        if motors:
            motor = rng.choice(motors)
            motor.setdefault("auxiliaries", []).append(
                {"kind": "anti_condensation_heater", "from": feed})
        else:  # no motor to heat: the way feeds a heater of its own (no dead end)
            loads.append({"id": new_id("H"), "kind": "heater", "from": feed,
                          "rated_voltage": 115})
    return {
        "plant": {"code": "GEN", "name": f"generated {seed}", "kind": "other", "frequency": 60},
        "sources": sources, "buses": buses, "devices": devices,
        "transformers": transformers, "cables": cables, "loads": loads,
    }


def random_plant(seed: int, size: int = 40) -> Plant:
    return Plant.model_validate(random_plant_data(seed, size))


# --- plants of one extreme shape ------------------------------------------------------------

SHAPES = ("deep", "parallel", "wide")


def shaped_plant_data(shape: str, size: int) -> dict[str, Any]:
    """Plain data for a plant of one extreme shape, ``size`` setting its extent:

    - ``deep``: two chains of ``size`` and ``size // 2`` distribution panels hung below the
      main board, joined at the bottom by a normally open tie, a motor on every panel and a
      transformer bank to a 115 V panel at the very bottom;
    - ``parallel``: ``size`` generators in parallel on the main board and ``size``
      transformer banks that can each feed one 115 V panel (all but one stand by);
    - ``wide``: one main board with ``size`` motor feeders (breaker, cable, motor), a third
      of them with heaters fed from a 115 V panel.

    Every system is insulated, with a lamp ground detector on its main board; routine
    tests are overdue on the deepest or widest parts, so planning makes routine packages
    there too.
    """
    if shape not in SHAPES:
        raise ValueError(f"shape must be one of {', '.join(SHAPES)} (got {shape!r})")
    overdue = "2020-01-01"
    sources: list[dict[str, Any]] = []
    buses: list[dict[str, Any]] = []
    devices: list[dict[str, Any]] = []
    transformers: list[dict[str, Any]] = []
    cables: list[dict[str, Any]] = []
    loads: list[dict[str, Any]] = []

    def breaker(device_id: str, supply: str, normally: str = "closed") -> str:
        devices.append({"id": device_id, "kind": "circuit_breaker", "from": supply,
                        "normally": normally})
        return device_id

    def board(bus_id: str, supply: str | list[str], voltage: int = 440,
              kind: str = "distribution_panel", tests: tuple[str, ...] = ()) -> str:
        entry: dict[str, Any] = {"id": bus_id, "kind": kind, "voltage": voltage,
                                 "earthing": "insulated", "from": supply}
        if kind != "distribution_panel":  # one detector per system, on its main board
            entry["detector"] = {"id": f"GD-{bus_id}", "kind": "lamps"}
        entry["routine"] = [{"test": t, "every": "1 month", "last_done": overdue}
                            for t in tests]
        buses.append(entry)
        return bus_id

    def motor(load_id: str, supply: str, tests: bool = False) -> dict[str, Any]:
        entry: dict[str, Any] = {"id": load_id, "kind": "motor", "from": supply,
                                 "rated_voltage": 440}
        if tests:
            entry["routine"] = [{"test": "insulation_resistance", "every": "1 year",
                                 "last_done": overdue}]
        loads.append(entry)
        return entry

    def bank(bank_id: str, supply: str, tests: bool = True) -> str:
        transformers.append({"id": bank_id, "construction": "bank_of_single_phase",
                             "unit_kva": 10_000, "primary_voltage": 440,
                             "secondary_voltage": 115, "vector_group": "Dd0",
                             "from": supply, "routine": [
                                 {"test": "transformer_inspection", "every": "1 year",
                                  "last_done": overdue}] if tests else []})
        return bank_id

    generators = 2 if shape != "parallel" else size
    for number in range(1, generators + 1):
        sources.append({"id": f"G{number}", "kind": "generator", "voltage": 440})
    main = board("MAIN", [breaker(f"CB-G{n}", f"G{n}") for n in range(1, generators + 1)],
                 kind="switchboard", tests=("detector_test",))
    if shape == "deep":
        ends: dict[str, str] = {}
        for chain, depth in (("B", max(2, size // 2)), ("A", size)):  # A, the deeper, last
            above = main
            for level in range(1, depth + 1):
                feed = breaker(f"CB-{chain}{level}", above)
                if level % 2:
                    cables.append({"id": f"C-{chain}{level}", "from": feed, "length": 40})
                    feed = f"C-{chain}{level}"
                above = board(f"P{chain}{level}", feed)
                motor(f"M{chain}{level}", breaker(f"CB-M{chain}{level}", above),
                      tests=level == depth)
            ends[chain] = above
        deepest = next(bus for bus in buses if bus["id"] == ends["A"])
        deepest["from"] = [deepest["from"], breaker("CB-TIE", ends["B"], "open")]
        deepest["routine"] = [{"test": "insulation_resistance", "every": "1 year",
                               "last_done": overdue}]
        primary = breaker("CB-T1P", ends["A"])
        board("LP1", breaker("CB-T1S", bank("T1", primary)), voltage=115,
              kind="lighting_panel", tests=("detector_test",))
        loads.append({"id": "LT1", "kind": "lighting", "from": breaker("CB-LT1", "LP1"),
                      "rated_voltage": 115})
        loads[-2].setdefault("auxiliaries", []).append(
            {"kind": "anti_condensation_heater", "from": breaker("CB-H1", "LP1")})
    elif shape == "parallel":
        secondaries = []  # banks never run in parallel: all but the first stand by
        for number in range(1, size + 1):
            secondaries.append(breaker(f"CB-T{number}S",
                                       bank(f"T{number}", breaker(f"CB-T{number}P", main),
                                            tests=number == size),
                                       "closed" if number == 1 else "open"))
        board("LP1", secondaries, voltage=115, kind="lighting_panel",
              tests=("detector_test",))
        motor("M1", breaker("CB-M1", main), tests=True)
        loads.append({"id": "LT1", "kind": "lighting", "from": breaker("CB-LT1", "LP1"),
                      "rated_voltage": 115})
    else:  # wide
        primary = breaker("CB-T1P", main)
        board("LP1", breaker("CB-T1S", bank("T1", primary)), voltage=115,
              kind="lighting_panel")
        for number in range(1, size + 1):
            feed = breaker(f"CB-M{number}", main)
            cables.append({"id": f"C-M{number}", "from": feed, "length": 20 + number % 200})
            entry = motor(f"M{number}", f"C-M{number}", tests=number == size)
            if number % 3 == 0:
                entry["auxiliaries"] = [{"kind": "anti_condensation_heater",
                                         "from": breaker(f"CB-H{number}", "LP1")}]
    return {
        "plant": {"code": "GEN", "name": f"generated {shape} {size}", "kind": "other",
                  "frequency": 60},
        "sources": sources, "buses": buses, "devices": devices,
        "transformers": transformers, "cables": cables, "loads": loads,
    }


def findings_data(plant: dict[str, Any], date: str = "2026-12-01") -> dict[str, Any]:
    """Invented findings for a shaped plant, aimed at its deepest and widest parts: a ground
    on the main board (lamps), a low insulation reading on the last motor, the last motor
    breaker tripped, a serious defect on the last panel, a failed unit of the last bank."""
    motors = [load["id"] for load in plant["loads"] if load["kind"] == "motor"]
    breakers = [d["id"] for d in plant["devices"] if d["id"].startswith("CB-M")]
    panels = [bus["id"] for bus in plant["buses"] if bus["voltage"] == 440]  # deepest last
    at = f"{date}T08:00"
    items: list[dict[str, Any]] = [
        {"kind": "lamps", "at": at, "by": "x", "where": "GD-MAIN",
         "lamps": {"A": "bright", "B": "dim", "C": "dim"}},
        {"kind": "insulation_resistance", "at": at, "by": "x", "where": motors[-1],
         "test_voltage": "500 V", "reading": "0.4 MΩ", "temperature": "30 °C"},
        {"kind": "breaker_tripped", "at": at, "by": "x", "where": breakers[-1]},
        {"kind": "defect", "at": at, "by": "x", "where": panels[-1],
         "text": "cover cracked, water inside", "severity": "high"},
    ]
    if plant["transformers"]:
        items.append({"kind": "transformer_unit", "at": at, "by": "x",
                      "where": plant["transformers"][-1]["id"], "unit": "BC",
                      "state": "failed"})
    return {"date": date, "findings": items}


def random_findings_data(plant: dict[str, Any], count: int, seed: int = 7,
                         date: str = "2026-12-01") -> dict[str, Any]:
    """Invented findings on random items of ``random_plant_data``: low megger readings,
    tripped breakers and serious defects, in turn."""
    rng = random.Random(seed)
    motors = [load["id"] for load in plant["loads"] if load["kind"] == "motor"]
    breakers = [d["id"] for d in plant["devices"] if d["kind"] == "circuit_breaker"]
    items: list[dict[str, Any]] = []
    for n in range(count):
        at = f"{date}T{6 + n % 12:02d}:{n % 60:02d}"
        if n % 3 == 0:
            items.append({"kind": "insulation_resistance", "at": at, "by": "x",
                          "where": rng.choice(motors), "test_voltage": "500 V",
                          "reading": f"{rng.uniform(0.5, 4):.2f} MΩ", "temperature": "25 °C"})
        elif n % 3 == 1:
            items.append({"kind": "breaker_tripped", "at": at, "by": "x",
                          "where": rng.choice(breakers)})
        else:
            items.append({"kind": "defect", "at": at, "by": "x", "where": rng.choice(motors),
                          "text": "terminal box cover loose", "severity": "high"})
    return {"date": date, "findings": items}
