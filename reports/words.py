"""Words and shapes for a beam's recheck status and a deficiency's stage: one mapping for the tablet and the office.

Status is never shown by colour alone: each recheck status has a word and a shape, and each stage the words a
contractor and a reviewer read. The tablet prints them within a line ('D-001  Grid C  ·  open'); the office
register prints them alone in a table cell, first letter capital (``stage_label``).
"""

from __future__ import annotations

from core.records import Stage

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


def stage_label(stage: int | str) -> str:
    """A deficiency's stage (its number or name) in the tablet's words, as a cell reads: 'Corrected (contractor ...'."""
    try:
        key = Stage[stage] if isinstance(stage, str) else Stage(stage)
    except (KeyError, ValueError):
        msg = f"deficiency stage {stage!r}; allowed: {', '.join(s.name for s in Stage)}"
        raise ValueError(msg) from None
    words = STAGE_WORDS[key]
    return words[:1].upper() + words[1:]
