"""A signature as it is kept beside what it signs: who, with which key, as what, when.

The bytes signed are not the content alone but a statement that binds the content to the
signer, the key, the purpose and the time (``workpack.signing.statement``): a signature
copied onto other content, moved to another person, re-labelled from technician to
supervisor, or given an earlier time no longer verifies.
"""

from __future__ import annotations

from typing import Literal

from pydantic import AwareDatetime, Field, field_validator

from workpack.model.crew import SIGNATURE_BYTES, decode_base64, whole_seconds, zoned_time
from workpack.model.plant import ID_RULE, Id, Strict


class Signature(Strict):
    """One person's Ed25519 signature over some content, as what, and when."""

    signed_as: Id = Field(description=f"what the signer signs as, e.g. technician, supervisor, "
                                      f"anchor, bundle: {ID_RULE}", examples=["technician"])
    person: Id = Field(description="id of the signer in the crew register",
                       examples=["LCS-0107"])
    key: Id = Field(description="id of the signing key in the crew register",
                    examples=["LCS-0107-K1"])
    algorithm: Literal["ed25519"] = Field(default="ed25519",
                                          description="ed25519 (RFC 8032), the only one",
                                          examples=["ed25519"])
    signed_at: AwareDatetime = Field(
        description="when it was signed, as the signer's clock said, whole seconds with a "
                    "zone", examples=["2026-12-02T16:30:00Z"])
    value: str = Field(description="the 64-byte signature in base64 (RFC 4648 section 4)",
                       examples=["J3LwrtFNENqtg2Eab2TTG0kNkanz5Yd/oUX2BmEb6DHNiIuhP6O6ahSVVpy2a4rsf6bO"
                                 "+MIR7pvoQf2AFMUTBA=="])

    _zoned = field_validator("signed_at", mode="before")(zoned_time)
    _whole = field_validator("signed_at")(whole_seconds)

    @field_validator("value")
    @classmethod
    def _sixty_four_bytes(cls, value: str) -> str:
        decode_base64(value, SIGNATURE_BYTES, "the signature")
        return value

    def signature_bytes(self) -> bytes:
        return decode_base64(self.value, SIGNATURE_BYTES, "the signature")
