"""Typed out-of-scope outcomes returned by clause functions instead of sentinel numbers."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class NotPermitted:
    """A result the standard does not permit (for example CB above 50), never a number."""

    quantity: str
    value: float
    limit: float
    clause: str

    def __str__(self) -> str:
        return f"{self.quantity} = {self.value:.1f} exceeds {self.limit:g} ({self.clause}): not permitted"
