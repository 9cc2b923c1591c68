"""Member recheck: picks the clauses for a logged beam and records every factor it used.

This layer takes the pydantic ``Beam``, solves its geometry once (cached: beams of one layout share the
solved model), builds every NBC combination and live/snow pattern by superposition, and hands each check
its cases. One module per check: ``cases`` (loads and patterns), ``bending``, ``shear``, ``bearing`` and
``deflection``; the arithmetic of the standard lives in ``core.clauses``, one cited function per clause.
What is left here is choosing inputs and maxima, utilisations (demand / resistance) and the unit
conversions to kN and kN·m.
"""

from __future__ import annotations

from functools import lru_cache
from typing import NamedTuple

from core.analysis import BeamModel
from core.assembled import assembled
from core.findings import build_findings, overall_status
from core.governing import governing
from core.member import member_properties
from core.models import Beam
from core.recheck.bearing import bearing_checks
from core.recheck.bending import bending_regions
from core.recheck.cases import load_cases
from core.recheck.deflection import deflection_check
from core.recheck.shear import shear_check
from core.results import CAUTION, Recheck, RowUsed

__all__ = ["RecheckRows", "beam_model", "recheck", "recheck_with_rows"]


@lru_cache(maxsize=4096)
def _model(spans_mm: tuple[float, ...], overhang_left_mm: float, overhang_right_mm: float) -> BeamModel:
    return BeamModel(list(spans_mm), overhang_left_mm, overhang_right_mm)


def beam_model(beam: Beam) -> BeamModel:
    """The solved model of a beam's geometry (shared by every beam of the same spans and overhangs)."""
    return _model(tuple(beam.spans_mm), beam.overhang_left_mm, beam.overhang_right_mm)


class RecheckRows(NamedTuple):
    """A status-only recheck (no traces) and the table rows it used."""

    result: Recheck
    rows_used: frozenset[RowUsed]  # (clause, source, status): equal to core.results.rows_used of the traced recheck


def recheck(beam: Beam, *, traces: bool = True) -> Recheck:
    """Recheck one logged beam: bending per region, shear, bearing, deflection and findings.

    traces: False leaves every check's trace empty (the numbers, status and findings are the same);
    the trace of a check is only ever built for its governing case.
    """
    return _recheck(beam, traces, None)


def recheck_with_rows(beam: Beam) -> RecheckRows:
    """The status-only recheck of a beam and the table rows it used, without keeping a trace.

    The rows are those every trace line of the traced recheck names with status verified, confirmed or
    memory (``core.results.rows_used(recheck(beam))``): each check's governing lines are found as the
    traced recheck finds them and reduced to their rows, and the result keeps no trace.
    """
    rows: set[RowUsed] = set()
    return RecheckRows(_recheck(beam, False, rows), frozenset(rows))


def _recheck(beam: Beam, traces: bool, rows: set[RowUsed] | None) -> Recheck:
    """The recheck; rows: when given, every table row the checks used is added to it."""
    member = member_properties(beam)
    model = beam_model(beam)
    cases = load_cases(beam, member, model)  # 1.4D always applies, so never empty
    bending = bending_regions(beam, member, model, cases, traces=traces, rows=rows)
    shear = shear_check(beam, member, model, cases, traces=traces, rows=rows)
    bearing = bearing_checks(beam, member, model, cases, traces=traces, rows=rows)
    deflection = deflection_check(beam, member, model, traces=traces, rows=rows)
    findings = build_findings(beam, member, bending, shear, bearing, deflection)
    _, governing_utilisation = governing(bending, shear, bearing, deflection)
    return assembled(
        Recheck,
        {
            "mark": beam.mark,
            "status": overall_status(bending, findings),
            "bending": bending,
            "shear": shear,
            "bearing": bearing,
            "deflection": deflection,
            "findings": findings,
            "governing_utilisation": governing_utilisation,
            "material": beam.material.value,
            "caution": CAUTION,
        },
    )
