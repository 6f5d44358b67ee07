"""Random plants for property tests and benchmarks (invented data, never a check value).

A plant is built as plain data, as a person would write it, then validated
through the same model the loader uses. Shapes covered: several generators
on main boards joined by a normally open tie, radial feeders with breakers,
fuses and cables, sub-panels, transformer banks to 115 V panels joined by
normally open ties (back-feed through a transformer), loads behind transfer
switches fed from two boards, and motor heaters fed from a 115 V panel.
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

    panels_440 = list(mains)
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
            switch_id = new_id("TS")
            devices.append({"id": switch_id, "kind": "transfer_switch",
                            "from": [device(normal, "circuit_breaker"),
                                     device(alternate, "circuit_breaker")]})
            loads.append({"id": new_id("M"), "kind": "motor", "from": switch_id,
                          "rated_voltage": 440, "vitality": "vital"})
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
    return {
        "plant": {"name": f"generated {seed}", "kind": "other", "frequency": 60},
        "sources": sources, "buses": buses, "devices": devices,
        "transformers": transformers, "cables": cables, "loads": loads,
    }


def random_plant(seed: int, size: int = 40) -> Plant:
    return Plant.model_validate(random_plant_data(seed, size))
