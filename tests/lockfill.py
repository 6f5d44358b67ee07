"""Filling a results sheet's lock rows as a technician would: a lock number of its own on
each point, who and when on, who and when off."""

from __future__ import annotations

import itertools
import re

APPLIED = "08:15"
REMOVED = "15:30"


def fill_locks(text: str, who: str, *, first: int = 1, removed: bool = True,
               day: str = "2026-12-02") -> str:
    """Every lock row of a sheet from ``results-template`` filled in: locks L-<first>,
    L-<first+1>… in sheet order, tags T-… alike, applied by ``who`` at 08:15 and (when
    ``removed``) removed by them at 15:30 on ``day``."""
    locks, tags = itertools.count(first), itertools.count(first)
    text = re.sub(r"(?m)^(\s+)lock:\n", lambda m: f"{m[1]}lock: L-{next(locks):02d}\n", text)
    text = re.sub(r"(?m)^(\s+)tag:\n", lambda m: f"{m[1]}tag: T-{next(tags):02d}\n", text)
    text = re.sub(r"(?m)^(\s+)applied_by:\n", rf"\1applied_by: {who}\n", text)
    text = re.sub(r"(?m)^(\s+)applied_at:.*\n", rf'\1applied_at: "{day} {APPLIED}"\n', text)
    if removed:
        text = re.sub(r"(?m)^(\s+)removed_by:\n", rf"\1removed_by: {who}\n", text)
        text = re.sub(r"(?m)^(\s+)removed_at:.*\n", rf'\1removed_at: "{day} {REMOVED}"\n', text)
    return text


def not_removed(text: str, device: str) -> str:
    """The sheet with ``device``'s lock not recorded as removed (who and when blank)."""
    start = text.index(f"  {device}:")
    head, tail = text[:start], text[start:]
    tail = re.sub(r"(?m)^(\s+)removed_by: .*\n", r"\1removed_by:\n", tail, count=1)
    tail = re.sub(r"(?m)^(\s+)removed_at: .*\n", r"\1removed_at:\n", tail, count=1)
    return head + tail
