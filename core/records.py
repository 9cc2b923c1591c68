"""Records a reviewer keeps besides the beam itself: site, visit, deficiency, notice (pydantic v2)."""

from __future__ import annotations

from collections.abc import Mapping
from enum import IntEnum, StrEnum
from typing import Literal

from pydantic import Field

from core.models import Record, Use


class Stage(IntEnum):
    """Deficiency lifecycle stage within one cycle; status only moves forward (reference field-practice 2a)."""

    open = 0
    corrected = 1
    verified = 2


class DesignBasis(Record):
    """Specified area loads from the drawings, kPa, and the deflection use."""

    dead_kpa: float = Field(default=1.0, ge=0, le=50, allow_inf_nan=False)
    live_kpa: float = Field(default=0.0, ge=0, le=50, allow_inf_nan=False)
    snow_kpa: float = Field(default=0.0, ge=0, le=50, allow_inf_nan=False)
    use: Use = Use.roof_no_ceiling
    drawings: str = ""

    def line_loads_kn_m(self, tributary_m: float) -> dict[str, float]:
        """Specified line loads, kN/m = these area loads, kPa x a tributary width, m (common practice), to 0.001."""
        return {
            "dead_kn_m": round(self.dead_kpa * tributary_m, 3),
            "live_kn_m": round(self.live_kpa * tributary_m, 3),
            "snow_kn_m": round(self.snow_kpa * tributary_m, 3),
        }


def chosen_basis(main: DesignBasis, named: Mapping[str, DesignBasis], name: str | None) -> tuple[str, DesignBasis]:
    """The basis a beam's loads come from: its named one while the site has it, else the site's main one ('')."""
    return (name, named[name]) if name and name in named else ("", main)


class Site(Record):
    """A project site under review."""

    id: str
    name: str = Field(min_length=1, max_length=200)
    address: str = ""
    permit_number: str = ""
    project_number: str = ""
    owner: str = ""
    contractor: str = ""
    firm: str = ""
    design_basis: DesignBasis = DesignBasis()
    contractor_contact: str = ""  # the person the notice is addressed to at the contractor
    # who the notice's items refer to for repairs ("J. Tran, P.Eng., Coastline Engineering"); named on the notice
    engineer_of_record: str = ""
    distribution: list[str] = Field(default_factory=list)  # the notice's copies ("Owner", "Architect", ...)
    load_bases: dict[str, DesignBasis] = Field(default_factory=dict)  # further bases by name (floor, canopy)
    demo: bool = False  # the built-in demo site: shown as such, left out of bundles unless asked


class Visit(Record):
    """One site visit."""

    id: str
    site_id: str
    started_at: str
    reviewer: str
    weather: str = ""
    scope_reviewed: str = ""
    scope_not_reviewed: str = ""


class ReReviewOutcome(StrEnum):
    """What the reviewer found for an item at a re-review (issue 13 item 5)."""

    verified = "verified"  # the correction is seen and the updated beam no longer carries the finding
    still_open = "still_open"  # not corrected, or not as required


class ReReview(Record):
    """The reviewer's re-review of one deficiency: outcome, note, and the recheck of the updated beam."""

    outcome: ReReviewOutcome
    note: str = Field(default="", max_length=2000)
    evidence: str = Field(default="", max_length=2000)  # the recheck of the beam as now recorded, in words
    by: str = Field(min_length=1, max_length=200)
    at: str = Field(min_length=1, max_length=40)  # UTC, ISO 8601 with Z (storage.stamps)
    cycle: int = Field(ge=0)  # the deficiency's cycle the outcome belongs to


class Deficiency(Record):
    """A confirmed deficiency with a persistent number that carries across visits."""

    id: str
    site_id: str
    beam_id: str | None = None
    number: str
    code: str
    priority: str
    location: str
    description: str
    reference: str
    action: str
    due: str = ""
    cycle: int = 0
    stage: Stage = Stage.open
    rereview: ReReview | None = None  # the latest re-review outcome (issue 13): printed on the close-out


class StatusEvent(Record):
    """One status move of a deficiency (history)."""

    deficiency_id: str
    cycle: int
    stage: Stage
    actor: str
    role: str
    at: str
    note: str = ""
    evidence_sha256: str = ""


class MemoryAcknowledgement(Record):
    """The reviewer's acknowledgement, before issue, of the table rows entered from memory a notice rests on."""

    rows: list[str] = Field(min_length=1)  # each row as traced: clause and row
    by: str = Field(min_length=1, max_length=200)
    at: str = Field(min_length=1, max_length=40)  # UTC, ISO 8601 with Z (storage.stamps)


class IssuedNotice(Record):
    """An issued notice: immutable, holds the SHA-256 of its PDF."""

    id: str
    site_id: str
    number: str
    revision: int
    issued_at: str
    issued_by: str
    deficiency_ids: list[str]
    pdf_sha256: str
    supersedes: str | None = None
    change_note: str = ""
    memory_acknowledgement: MemoryAcknowledgement | None = None  # who accepted the memory rows used, and when


class PhotoMark(Record):
    """One mark drawn on a photo: an arrow (x, y tail -> x2, y2 head) or a ring (x, y centre, x2 radius).

    Coordinates are fractions 0-1 of the photo's width (x) and height (y); a ring's radius is a
    fraction of the shorter side.
    """

    kind: Literal["arrow", "ring"]
    x: float = Field(ge=0, le=1, allow_inf_nan=False)
    y: float = Field(ge=0, le=1, allow_inf_nan=False)
    x2: float = Field(default=0.0, ge=0, le=1, allow_inf_nan=False)
    y2: float = Field(default=0.0, ge=0, le=1, allow_inf_nan=False)


class PhotoRecord(Record):
    """A photo as stored beside its untouched blob (insert-only; marks are a new record naming the same blob)."""

    site_id: str
    sha256: str = Field(pattern="^[0-9a-f]{64}$")
    mime: str = "image/jpeg"
    beam_id: str | None = None
    deficiency_id: str | None = None
    caption: str = Field(default="", max_length=500)
    taken_at: str = Field(default="", pattern=r"^(\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ)?$")  # UTC with Z; "" before
    taken_by: str = Field(default="", max_length=200)  # the device's user when the photo was added
    marks: list[PhotoMark] = Field(default_factory=list)
    marks_of: str | None = None  # the original photo record these marks are drawn on
    replaces: str | None = None  # the markup this one was drawn over (the latest one held when it was made)


class ReviewerProfile(Record):
    """Who signs the notices issued on this device, set up once (issue 13): printed on every notice."""

    name: str = Field(min_length=1, max_length=120)
    designation: str = Field(default="", max_length=80)  # "P.Eng.", "Building Official"
    licence_number: str = Field(default="", max_length=60)
    firm: str = Field(default="", max_length=200)
    phone: str = Field(default="", max_length=60)
    email: str = Field(default="", max_length=200)
    signature_sha256: str = ""  # a PNG blob: drawn on the screen or imported
    seal: bool = False  # the firm's setting: print a seal block
    page_size: str = Field(default="letter", pattern="^(letter|a4)$")  # the firm's setting
