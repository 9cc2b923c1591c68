"""Readable one-screen summary of a recheck (``bracewalk check --text``): statuses and findings in words."""

from __future__ import annotations

from core.results import CheckLine, Recheck, check_lines, utilisation_text
from reports.words import finding_words, priority_label, status_label


def line_text(c: CheckLine) -> str:
    """One check as a line of text: 'name: demand vs capacity, utilisation 0.86 (factors; combination)'."""
    util = "not established" if c.utilisation is None else utilisation_text(c.utilisation)
    detail = "; ".join(x for x in (c.factors, c.combination) if x)
    return f"{c.name}: {c.demand} vs {c.capacity}, utilisation {util}" + (f" ({detail})" if detail else "")


def recheck_text(r: Recheck) -> str:
    """Format a recheck as plain text for a terminal.

    The status by shape and word ('RB-3: ▲ DEFICIENT'); each finding under its priority in the notice's words
    and what it is about ('▲ IMMEDIATE: make safe now · bending overstress'), then its message and action.
    """
    lines = [f"{r.mark}: {status_label(r.status.value)}"]
    lines += [f"  {line_text(c)}" for c in check_lines(r)]
    for f in r.findings:
        lines.append(f"  {priority_label(f.priority.value)} · {finding_words(f.code)}")
        lines.append(f"      {f.message}")
        lines.append(f"      action: {f.action} ({f.clause})")
    lines.append("")
    lines.append(r.caution)
    return "\n".join(lines)
