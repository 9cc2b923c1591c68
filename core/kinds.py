"""Closed sets of values used across core, as string enums (the JSON values are the member values).

Each is a ``StrEnum``, so a member compares equal to its value ("positive" == MomentSign.positive)
and formats as it: callers and stored JSON that hold the plain strings keep working.
"""

from __future__ import annotations

from enum import StrEnum


class MomentSign(StrEnum):
    """Sign of the bending moment in a region: positive (sagging) puts the top edge in compression."""

    positive = "positive"
    negative = "negative"


class Edge(StrEnum):
    """Which edge of a beam: the compression edge of a region is one of these."""

    top = "top"
    bottom = "bottom"


class ElementKind(StrEnum):
    """An element of the beam model: a span between supports, or an overhang with a free end."""

    span = "span"
    overhang = "overhang"


class Outcome(StrEnum):
    """Outcome of the bending check of one region."""

    ok = "ok"
    overstress = "overstress"
    not_permitted = "not_permitted"
    not_established = "not_established"


class TraceStatus(StrEnum):
    """How far a traced value is established (the tables' status column and the recheck's own)."""

    verified = "verified"  # checked against the standard's text
    confirmed = "confirmed"  # agrees with an independent source named in the table
    memory = "memory"  # entered from memory: verify before relying on it
    formula = "formula"  # computed by a clause formula from the values above it
    input = "input"  # what the reviewer recorded or chose


class FindingCode(StrEnum):
    """Stable codes of findings (stored with deficiencies; never reworded)."""

    bearing_restraint_missing = "bearing_restraint_missing"
    slenderness_exceeds_limit = "slenderness_exceeds_limit"
    bending_overstress = "bending_overstress"
    shear_overstress = "shear_overstress"
    bearing_overstress = "bearing_overstress"
    deflection_exceeds_limit = "deflection_exceeds_limit"
    undersize = "undersize"
    substitution = "substitution"
    compression_edge_unbraced = "compression_edge_unbraced"
    layup_inverted = "layup_inverted"
    uplift_at_support = "uplift_at_support"
    input_assumed = "input_assumed"
    modelling_option = "modelling_option"
