"""Signal words, alone: the electrical hazards use them without loading the package model
(and pydantic with it), so the quick diagnose starts fast."""

from __future__ import annotations

from enum import StrEnum


class SignalWord(StrEnum):
    """Signal words as the open safety-sign standards use them: DANGER (will kill or
    seriously injure), WARNING (could kill or seriously injure), CAUTION (minor injury or
    damage), NOTICE (practice, no injury)."""

    danger = "DANGER"
    warning = "WARNING"
    caution = "CAUTION"
    notice = "NOTICE"
