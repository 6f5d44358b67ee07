"""How a reading's expected value and limit read on the page (numbers formatted by
``workpack.numbers``)."""

from __future__ import annotations

from workpack.model.package import Limit, Reading
from workpack.numbers import format_quantity


def limit_text(limit: Limit, unit: str) -> str:
    if limit.low is not None and limit.high is not None:
        return (f"{format_quantity(limit.low, unit)} to {format_quantity(limit.high, unit)}")
    if limit.low is not None:
        return f"at least {format_quantity(limit.low, unit)}"
    if limit.high is not None:
        return f"at most {format_quantity(limit.high, unit)}"
    return "no bound"


def expected_text(reading: Reading) -> str:
    if reading.expected is None:
        return "—"
    text = format_quantity(reading.expected, reading.unit)
    if reading.tolerance is not None:
        text += f" ± {format_quantity(reading.tolerance, reading.unit)}"
    return text

