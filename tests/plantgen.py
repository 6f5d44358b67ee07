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
        "plant": {"name": f"generated {seed}", "kind": "other", "frequency": 60},
        "sources": sources, "buses": buses, "devices": devices,
        "transformers": transformers, "cables": cables, "loads": loads,
    }


def random_plant(seed: int, size: int = 40) -> Plant:
    return Plant.model_validate(random_plant_data(seed, size))
