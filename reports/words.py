"""Words and shapes for a beam's recheck status and a deficiency's stage: one mapping for the tablet and the office.

Status is never shown by colour alone: each recheck status has a word and a shape, and each stage the words a
contractor and a reviewer read. The tablet prints them within a line ('D-001  Grid C  ·  open'); the office
register prints them alone in a table cell, first letter capital (``stage_label``).
"""

from __future__ import annotations

from core.kinds import FindingCode
from core.records import Stage

PRIORITY_WORDS = {
    "immediate": "IMMEDIATE: make safe now",
    "before_loading": "Before loading or concealment",
    "before_next_review": "Before next review",
    "observation": "Observation",
}
PRIORITY_MARKERS = {"immediate": "▲", "before_loading": "●", "before_next_review": "○", "observation": "○"}
SHORT_PRIORITY = {
    "immediate": "▲ IMMEDIATE",
    "before_loading": "● before loading",
    "before_next_review": "○ next review",
    "observation": "○ observation",
}
# what a finding is about, in a reviewer's words (the folded IMMEDIATE banner, `check --text`, the demo's table);
# core's codes are stored and never reworded, and were shown with '_' made spaces ("slenderness exceeds limit")
FINDING_WORDS: dict[FindingCode, str] = {
    FindingCode.bearing_restraint_missing: "bearing restraint missing",
    FindingCode.slenderness_exceeds_limit: "slenderness over the limit",
    FindingCode.bending_overstress: "bending overstress",
    FindingCode.shear_overstress: "shear overstress",
    FindingCode.bearing_overstress: "bearing overstress",
    FindingCode.deflection_exceeds_limit: "deflection over the limit",
    FindingCode.undersize: "smaller than specified",
    FindingCode.substitution: "size or grade other than specified",
    FindingCode.compression_edge_unbraced: "compression edge unbraced",
    FindingCode.layup_inverted: "layup upside down",
    FindingCode.uplift_at_support: "uplift at a support",
    FindingCode.input_assumed: "not recorded, taken as unfavourable",
    FindingCode.modelling_option: "reviewer's modelling option",
}

STATUS_WORDS = {
    "ok": ("OK", "●"),
    "deficient": ("DEFICIENT", "▲"),
    "not_permitted": ("NOT PERMITTED", "■"),
    "not_established": ("NOT ESTABLISHED", "✖"),
    "unchecked": ("NOT YET CHECKED", "○"),
}
STAGE_WORDS: dict[int, str] = {  # keyed by Stage, looked up by its number as stored
    Stage.open: "open",
    Stage.corrected: "corrected (contractor reports done)",
    Stage.verified: "verified by reviewer",
}


def status_label(status: str) -> str:
    """A recheck status by shape and word ('● OK'), never by colour alone."""
    if status not in STATUS_WORDS:
        msg = f"recheck status {status!r}; allowed: {', '.join(STATUS_WORDS)}"
        raise ValueError(msg)
    word, shape = STATUS_WORDS[status]
    return f"{shape} {word}"


def priority_label(priority: str) -> str:
    """Priority by shape and words ('▲ IMMEDIATE: make safe now'), the same on the notice and in the app."""
    return f"{PRIORITY_MARKERS.get(priority, '○')} {PRIORITY_WORDS.get(priority, priority)}"


def finding_words(code: FindingCode | str) -> str:
    """What a finding is about, in words ('slenderness over the limit'), from its code; never the code itself."""
    try:
        return FINDING_WORDS[FindingCode(code)]
    except (KeyError, ValueError):
        msg = f"finding code {code!r} has no words; known: {', '.join(c.value for c in FINDING_WORDS)}"
        raise ValueError(msg) from None


def stage_label(stage: int | str) -> str:
    """A deficiency's stage (its number or name) in the tablet's words, as a cell reads: 'Corrected (contractor ...'."""
    try:
        key = Stage[stage] if isinstance(stage, str) else Stage(stage)
    except (KeyError, ValueError):
        msg = f"deficiency stage {stage!r}; allowed: {', '.join(s.name for s in Stage)}"
        raise ValueError(msg) from None
    words = STAGE_WORDS[key]
    return words[:1].upper() + words[1:]
