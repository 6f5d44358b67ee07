"""Random plants with a day's findings that give every kind of job (invented data, never a
check value).

``scenario(seed, ground)`` returns plant data and findings data, as a person would write
them, for a plant of two insulated 440 V main boards joined by a normally open tie, an
emergency generator that starts by itself, motor feeders (some through cables, some vital,
some behind transfer switches, some with anti-condensation heaters fed from a 115 V
panel), a sub-panel with an insulation monitor, a sub-panel with detector lamps, a Dd0
bank to a 115 V panel and a Dyn11 bank to a 208 V panel with an insulated neutral. The
seed varies how many feeders there are and which of them carry cables, heaters, vital
loads and the day's findings. Routine tests of every kind are due. With ``ground``, the
findings also show a ground on one main board, a ground on the 115 V panel, grounds on
two phases of the other main board's system, and an insulation monitor in alarm.
"""

from __future__ import annotations

import random
from typing import Any

DUE = "2025-01-01"  # long before the plan date: every routine test is due


def scenario(seed: int, ground: bool) -> tuple[dict[str, Any], dict[str, Any]]:
    rng = random.Random(seed)
    sources = [
        {"id": "G1", "kind": "generator", "voltage": 440},
        {"id": "G2", "kind": "generator", "voltage": 440},
        {"id": "EG", "kind": "emergency_generator", "voltage": 440,
         "starts_automatically": True},
    ]
    devices: list[dict[str, Any]] = [
        {"id": "CB-G1", "kind": "circuit_breaker", "from": "G1"},
        {"id": "CB-G2", "kind": "circuit_breaker", "from": "G2"},
        {"id": "CB-EG", "kind": "circuit_breaker", "from": "EG", "normally": "open"},
        {"id": "CB-TIE", "kind": "circuit_breaker", "from": "MAIN0", "normally": "open"},
    ]
    routine_ir = [{"test": "insulation_resistance", "every": "12 months", "last_done": DUE}]
    buses: list[dict[str, Any]] = [
        {"id": "MAIN0", "kind": "switchboard", "voltage": 440, "earthing": "insulated",
         "from": ["CB-G1"], "detector": {"id": "GD0", "kind": "voltmeters"},
         "routine": [{"test": "detector_test", "every": "1 month", "last_done": DUE}]},
        {"id": "MAIN1", "kind": "switchboard", "voltage": 440, "earthing": "insulated",
         "from": ["CB-G2", "CB-TIE", "CB-EG"], "detector": {"id": "GD1", "kind": "voltmeters"},
         "routine": [{"test": "detector_test", "every": "1 month", "last_done": DUE}]},
    ]
    cables: list[dict[str, Any]] = []
    loads: list[dict[str, Any]] = []
    transformers: list[dict[str, Any]] = []

    def breaker(device_id: str, supply: str) -> str:
        devices.append({"id": device_id, "kind": "circuit_breaker", "from": supply})
        return device_id

    # Sub-panels: one with an insulation monitor (MAIN0's system), one with lamps (MAIN1's).
    cables.append({"id": "C-PM", "from": breaker("CB-PM", "MAIN0"), "length": 40})
    buses.append({"id": "PM", "kind": "distribution_panel", "voltage": 440,
                  "earthing": "insulated", "from": "C-PM",
                  "detector": {"id": "IM-PM", "kind": "insulation_monitor", "alarm": "22 kΩ"},
                  "routine": [{"test": "insulation_monitor_test", "every": "6 months",
                               "last_done": DUE}, *routine_ir]})
    buses.append({"id": "PL", "kind": "distribution_panel", "voltage": 440,
                  "earthing": "insulated", "from": breaker("CB-PL", "MAIN1"),
                  "detector": {"id": "GD-PL", "kind": "lamps"}})
    # Banks: Dd0 to 115 V (open delta possible), Dyn11 to 208 V with an insulated neutral.
    transformers.append({"id": "TD", "construction": "bank_of_single_phase",
                         "unit_kva": "10 kVA", "primary_voltage": 440,
                         "secondary_voltage": 115, "vector_group": "Dd0",
                         "from": breaker("CB-TD", "MAIN0"),
                         "routine": [{"test": "transformer_inspection", "every": "6 months",
                                      "last_done": DUE}, *routine_ir]})
    buses.append({"id": "L1", "kind": "lighting_panel", "voltage": 115,
                  "earthing": "insulated", "from": breaker("CB-TDS", "TD"),
                  "detector": {"id": "GD-L1", "kind": "voltmeters"},
                  "routine": [{"test": "detector_test", "every": "1 month", "last_done": DUE}]})
    transformers.append({"id": "TY", "construction": "bank_of_single_phase",
                         "unit_kva": "15 kVA", "primary_voltage": 440,
                         "secondary_voltage": 208, "vector_group": "Dyn11",
                         "secondary_neutral": "insulated",
                         "from": breaker("CB-TY", "MAIN1"),
                         "routine": [{"test": "transformer_inspection", "every": "6 months",
                                      "last_done": DUE}]})
    buses.append({"id": "L2", "kind": "lighting_panel", "voltage": 208,
                  "earthing": "insulated", "from": breaker("CB-TYS", "TY"),
                  "detector": {"id": "GD-L2", "kind": "lamps"},
                  "routine": [{"test": "detector_test", "every": "1 month", "last_done": DUE}]})
    for n in range(rng.randint(1, 3)):
        loads.append({"id": f"LT1-{n}", "kind": "lighting", "rated_voltage": 115,
                      "from": breaker(f"CB-LT1-{n}", "L1")})
        loads.append({"id": f"LT2-{n}", "kind": "lighting", "rated_voltage": 208,
                      "from": breaker(f"CB-LT2-{n}", "L2")})
    motors: list[dict[str, Any]] = []
    for board in ("MAIN0", "MAIN1", "PM", "PL"):
        for n in range(rng.randint(1, 3)):
            motor_id = f"M-{board}-{n}"
            feed = breaker(f"CB-{motor_id}", board)
            if rng.random() < 0.6:
                cables.append({"id": f"C-{motor_id}", "from": feed,
                               "length": rng.choice([15, 60, 150])})
                feed = f"C-{motor_id}"
            motor = {"id": motor_id, "kind": rng.choice(["motor", "deck_machinery"]),
                     "rated_voltage": 440, "from": feed, "insulation_class": "F",
                     "winding": "random_wound",
                     "vitality": rng.choice(["vital", "important", "non_essential"])}
            loads.append(motor)
            motors.append(motor)
    # A vital pump behind a transfer switch fed from both main boards.
    devices.append({"id": "TS-SW", "kind": "transfer_switch",
                    "from": [breaker("CB-SW-N", "MAIN0"), breaker("CB-SW-A", "MAIN1")]})
    loads.append({"id": "SW-P", "kind": "motor", "rated_voltage": 440, "from": "TS-SW",
                  "vitality": "vital", "insulation_class": "F", "winding": "random_wound"})
    # Heaters fed from the 115 V panel into some motors' terminal boxes.
    for n, motor in enumerate(rng.sample(motors, k=min(len(motors), rng.randint(1, 3)))):
        motor["auxiliaries"] = [{"kind": "anti_condensation_heater",
                                 "from": breaker(f"CB-H{n}", "L1"), "voltage": 115}]
    surveyed = rng.choice(motors)
    surveyed["routine"] = routine_ir
    with_cable = [c for c in cables if c["id"].startswith("C-M-")]
    if with_cable:
        rng.choice(with_cable)["routine"] = routine_ir
    plant = {
        "plant": {"code": "GEN", "name": f"scenario {seed}", "kind": "other", "frequency": 60},
        "sources": sources, "buses": buses, "devices": devices,
        "transformers": transformers, "cables": cables, "loads": loads,
    }
    at = "2026-12-01T08:00"
    low, tripped, damaged = rng.sample(motors, 3) if len(motors) >= 3 else (
        motors[0], motors[-1], motors[0])
    findings: list[dict[str, Any]] = [
        {"kind": "insulation_resistance", "at": at, "by": "x", "where": low["id"],
         "test_voltage": "500 V", "reading": "0.4 MΩ", "temperature": "20 °C"},
        {"kind": "defect", "at": at, "by": "x", "where": damaged["id"],
         "text": "terminal box cover cracked, water inside", "severity": "high"},
        {"kind": "breaker_tripped", "at": at, "by": "x", "where": f"CB-{tripped['id']}"},
        {"kind": "breaker_tripped", "at": at, "by": "x", "where": "CB-PM"},
        {"kind": "transformer_unit", "at": at, "by": "x", "where": "TD", "unit": "AB",
         "state": "failed", "load": "8 kVA"},
        {"kind": "transformer_unit", "at": at, "by": "x", "where": "TD", "unit": "BC",
         "state": "overheating"},
        {"kind": "transformer_unit", "at": at, "by": "x", "where": "TY", "unit": "AB",
         "state": "failed"},
    ]
    if ground:
        findings += [
            {"kind": "phase_voltages", "at": at, "by": "x", "where": "GD0",
             "volts": {"A": "440 V", "B": "3 V", "C": "440 V"}},
            {"kind": "insulation_monitor", "at": at, "by": "x", "where": "IM-PM",
             "reading": "5 kΩ", "alarm_active": True},
            {"kind": "phase_voltages", "at": at, "by": "x", "where": "GD-L1",
             "volts": {"A": "115 V", "B": "115 V", "C": "2 V"}},
            {"kind": "phase_voltages", "at": at, "by": "x", "where": "GD1",
             "volts": {"A": "3 V", "B": "440 V", "C": "440 V"}},
            {"kind": "lamps", "at": at, "by": "x", "where": "GD-PL",
             "lamps": {"A": "bright", "B": "bright", "C": "dark"}},
        ]
    return plant, {"date": "2026-12-01", "findings": findings}
