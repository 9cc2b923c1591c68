"""Recheck results (contract 1 output) with the trace of every factor used."""

from __future__ import annotations

from enum import StrEnum
from typing import Any

from pydantic import BaseModel, ConfigDict

from core.kinds import FindingCode, MomentSign, Outcome, TraceStatus
from core.models import Material

CAUTION = (
    "bracewalk is a recording and recheck aid for a qualified reviewer. Results are advisory and "
    "support, never replace, the judgement of the engineer of record, who decides repairs and "
    "substitutions. Local codes and licensed practice govern. Table values marked 'memory' have not "
    "been checked against the standard's text."
)


class Out(BaseModel):
    """Base for results: frozen."""

    model_config = ConfigDict(frozen=True)


class Status(StrEnum):
    """Overall outcome of a recheck."""

    ok = "ok"
    deficient = "deficient"
    not_permitted = "not_permitted"
    not_established = "not_established"


class Priority(StrEnum):
    """How soon a finding must be acted on (most urgent first)."""

    immediate = "immediate"
    before_loading = "before_loading"
    before_next_review = "before_next_review"
    observation = "observation"


PRIORITY_ORDER = {p.value: i for i, p in enumerate(Priority)}


class FactorTrace(Out):
    """Where one number came from."""

    symbol: str
    value: float | str | None
    unit: str = ""
    clause: str = ""
    source: str = ""
    status: TraceStatus = TraceStatus.formula


class BendingRegion(Out):
    """Bending check of one region between points of zero moment, governing combination."""

    region: str
    sign: MomentSign
    x_start_mm: float
    x_end_mm: float
    lu_mm: float | None
    le_mm: float | None
    le_factor: float | None
    cb: float | None
    ck: float | None
    kl: float | None
    kzbg: float | None = None
    kzb: float | None = None
    fb_mpa: float
    kd: float
    mr_knm: float | None
    mf_knm: float
    utilisation: float | None
    combination: str
    clause: str
    outcome: Outcome
    compression_edge: str  # in words, for people; decisions use the flags below
    compression_edge_unbraced: bool = False  # nothing braces the compression edge between its restraints
    dead_load_only: bool = False  # the governing combination is dead load alone (1.4D, permanent KD)
    trace: list[FactorTrace]
    # not established only: what the member would give if its bearings were restrained (an upper bound;
    # the real capacity is lower). None when even that is not permitted (CB > 50; said in the trace).
    kl_if_restrained: float | None = None
    mr_if_restrained_knm: float | None = None
    utilisation_if_restrained: float | None = None


class ShearCheck(Out):
    """Shear check, governing combination."""

    vr_kn: float
    vf_kn: float
    utilisation: float
    method: str
    combination: str
    kd: float
    clause: str
    trace: list[FactorTrace]


class BearingCheck(Out):
    """Bearing (compression perpendicular to grain) at one support."""

    support: int
    qr_kn: float
    qf_kn: float
    utilisation: float
    length_mm: float
    combination: str
    clause: str
    trace: list[FactorTrace]
    uplift_kn: float | None = None  # largest factored uplift (negative reaction), kN; None when none
    uplift_combination: str | None = None
    lifts_now: bool = False  # the specified dead load alone already lifts the member off this bearing


class DeflectionCheck(Out):
    """Governing deflection check (specified loads)."""

    delta_mm: float
    limit_mm: float
    utilisation: float
    case: str
    element: str
    clause: str
    trace: list[FactorTrace]


class Finding(Out):
    """Something the reviewer must act on or record."""

    code: FindingCode
    priority: Priority
    message: str
    action: str
    clause: str
    region: str | None = None


class Recheck(Out):
    """The full recheck of one beam."""

    mark: str
    status: Status
    bending: list[BendingRegion]
    shear: ShearCheck
    bearing: list[BearingCheck]
    deflection: DeflectionCheck
    findings: list[Finding]
    governing_utilisation: float | None
    material: str
    caution: str = CAUTION

    def to_json_dict(self) -> dict[str, Any]:
        """The contract-1 JSON object: sawn regions carry ``kzb``, glulam regions ``kzbg``."""
        data = self.model_dump(mode="json")
        drop = "kzbg" if self.material == Material.sawn else "kzb"
        for region in data["bending"]:
            region.pop(drop, None)
        return data
