"""An anchor file: a signed statement of where a plant's record chain stood at a time.

Written by ``workpack anchor`` and kept outside the store (printed, mailed ashore, held by
the auditor), it lets anyone who holds it prove later that the store still contains the
chain it saw, even against someone who rewrote the whole chain and its hashes.
"""

from __future__ import annotations

from typing import Annotated, Literal

from pydantic import AwareDatetime, Field, StringConstraints, field_validator, model_validator

from workpack.model.crew import whole_seconds, zoned_time
from workpack.model.plant import Strict
from workpack.model.signature import Signature

ANCHOR_VERSION = 1
# Digits of each record's chain hash the trail keeps: enough to name the first record a
# rewrite changed (a chance match is 1 in 2**64), short enough for a long chain's file.
TRAIL_DIGITS = 16

Sha256Hex = Annotated[str, StringConstraints(pattern=r"^[0-9a-f]{64}$")]
TrailHex = Annotated[str, StringConstraints(pattern=rf"^[0-9a-f]{{{TRAIL_DIGITS}}}$")]


class AnchorStatement(Strict):
    """What an anchor says: plant, how many records, the last one's chain hash, when."""

    workpack_anchor: Literal[1] = Field(description="version of the anchor format: 1",
                                        examples=[1])
    plant: str = Field(description="the plant whose chain it is (empty for a store made "
                                   "before stores knew their plant)", examples=["MV Tern"])
    count: int = Field(ge=0, description="records in the chain when the anchor was taken",
                       examples=[120])
    head_sha256: Sha256Hex = Field(
        description="chain hash of record `count` (the plant's genesis value when the chain "
                    "is empty), 64 lowercase hex digits")
    taken_at: AwareDatetime = Field(description="when it was taken, whole seconds with a zone",
                                    examples=["2026-12-02T16:30:00Z"])
    trail: tuple[TrailHex, ...] = Field(
        default=(), description=f"the first {TRAIL_DIGITS} hex digits of every record's chain "
                                "hash, record 1 first: names the first record that differs; "
                                "empty when only the head was kept (e.g. typed from a sheet)")

    _zoned = field_validator("taken_at", mode="before")(zoned_time)
    _whole = field_validator("taken_at")(whole_seconds)

    @model_validator(mode="after")
    def _trail_covers_chain(self) -> AnchorStatement:
        if self.trail and len(self.trail) != self.count:
            raise ValueError(f"the trail has {len(self.trail)} entries for {self.count} "
                             "records: one per record, or none")
        if self.trail and self.trail[-1] != self.head_sha256[:TRAIL_DIGITS]:
            raise ValueError("the trail's last entry is not the head's")
        return self


class AnchorFile(Strict):
    """An anchor and the signature of the person who took it (signed as ``anchor``)."""

    anchor: AnchorStatement
    signature: Signature
