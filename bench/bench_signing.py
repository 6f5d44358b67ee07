"""Signing and checking record-sized content: RFC 8785 canonical JSON plus Ed25519, and a
crew register of a fleet loaded and checked. Timings, not tests.

Run alone: .venv/bin/python bench/bench_signing.py [signatures]
"""

from __future__ import annotations

import datetime as dt
import sys
import time

from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from workpack.crew_shell import load_crew_text
from workpack.model.crew import CrewRegister
from workpack.signing import canonical_bytes, public_key_text, sign_content, verify_content


def record_like(number: int) -> dict:
    """About the size of a recorded package's payload: 30 readings with their evaluation."""
    readings = {f"S{i}.R1": {"value": f"{100 + i * 7 + number % 13} MΩ", "temperature": 28}
                for i in range(30)}
    judged = [{"reading": f"S{i}.R1", "value_si": 1.0e8 + i * 7.0e6, "limit_si": 1.0e6,
               "passed": True, "basis": "IEEE 43-2013 table 3"} for i in range(30)]
    return {"plant": "MV Skerry Lantern", "package": f"WP-20261202-{number:05d}",
            "package_sha256": "ab" * 32, "results": {"readings": readings,
                                                     "evaluation": {"readings": judged}},
            "verdict": "passed", "technician": "LCS-0107", "supervisor": "LCS-0098"}


def fleet_register(people: int) -> str:
    lines = ["crew:", "  name: fleet", "  scheme: fleet scheme", "people:"]
    for index in range(people):
        key = public_key_text(Ed25519PrivateKey.generate())
        lines += [f"  - id: F-{index:05d}", f"    name: person {index}", "    role: electrician",
                  "    hours_per_day: 8", "    qualifications:",
                  "      - {kind: competent_person, up_to_volts: 1000 V}", "    keys:",
                  f"      - id: F-{index:05d}-K1", f'        public_key: "{key}"',
                  "        valid_from: 2026-01-05T08:00:00Z"]
    return "\n".join(lines) + "\n"


def main(count: int) -> None:
    private = Ed25519PrivateKey.generate()
    register = CrewRegister.model_validate({
        "crew": {"name": "bench", "scheme": "bench"},
        "people": [{"id": "LCS-0107", "name": "S. Quayle", "role": "electrical_officer",
                    "hours_per_day": 8, "keys": [{"id": "LCS-0107-K1",
                                                  "public_key": public_key_text(private),
                                                  "valid_from": "2026-01-05T08:00:00Z"}]}]})
    contents = [record_like(n) for n in range(count)]
    size = len(canonical_bytes(contents[0]))
    at = dt.datetime(2026, 12, 2, 16, 30, tzinfo=dt.UTC)
    start = time.perf_counter()
    signatures = [sign_content(private, c, signed_as="technician", person="LCS-0107",
                               key="LCS-0107-K1", signed_at=at) for c in contents]
    signed = time.perf_counter() - start
    start = time.perf_counter()
    assert all(verify_content(register, c, s).ok for c, s in zip(contents, signatures,
                                                                  strict=True))
    checked = time.perf_counter() - start
    print(f"content of {size:,} canonical bytes; {count:,} signatures")
    print(f"sign:   {signed:.2f} s  ({count / signed:,.0f} a second)")
    print(f"verify: {checked:.2f} s  ({count / checked:,.0f} a second)")
    text = fleet_register(2000)
    start = time.perf_counter()
    load_crew_text(text, "fleet-crew.yaml")
    print(f"a 2,000-person register ({len(text) / 1e6:.1f} MB) loaded and checked: "
          f"{time.perf_counter() - start:.2f} s")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 2000)
    sys.exit(0)
