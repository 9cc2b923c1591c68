"""Deflection limits (CSA O86-19 cl. 5.4.2 and NBC Part 9 Table 9.4.3.1)."""

from __future__ import annotations


def deflection_limit_mm(span_mm: float, ratio: float) -> float:
    """CSA O86-19 cl. 5.4.2 / NBC Table 9.4.3.1: deflection limit = span / ratio, mm.

    span_mm: span, mm (for a cantilever, twice its length: common practice); ratio: e.g. 360.
    """
    if ratio <= 0:
        msg = f"ratio = {ratio:g} must be > 0"
        raise ValueError(msg)
    return span_mm / ratio


def deflection_span_mm(length_mm: float, cantilever: bool) -> float:
    """CSA O86-19 cl. 5.4.2: the span a deflection limit divides, mm.

    length_mm: element length, mm. A span between supports is its own length; a cantilever takes twice
    its length (common practice: the limit of the simple span the cantilever's tip deflection mirrors).
    """
    return 2 * length_mm if cantilever else length_mm


def modulus_for_deflection_es(e_mpa: float, kse: float, kt_e: float) -> float:
    """CSA O86-19 cl. 5.4.1 (memory): ES = E (KSE KT), MPa; mean E, no KD."""
    return e_mpa * kse * kt_e


EDITION = "O86-19"  # the edition the recheck applies; rules that changed in O86-24 are keyed by it


def long_term_deformation_rule(edition: str) -> str | None:
    """CSA O86-19 cl. 5.4.3: the deflection-limit row for long-term (permanent) load, or None.

    O86-19 limits deformation under long-term load (L/360, reference o86.md sections 12 and 13);
    O86-24 deleted 5.4.3 and folded creep into 5.4.2. Returns the ``deflection_limits`` row name.
    """
    if edition == "O86-19":
        return "long_term"
    if edition == "O86-24":
        return None
    msg = f"edition = {edition!r}; allowed: 'O86-19', 'O86-24'"
    raise ValueError(msg)
