"""Readable one-screen summary of a recheck (``bracewalk check --text``)."""

from __future__ import annotations

from core.results import CheckLine, Recheck, check_lines, utilisation_text


def line_text(c: CheckLine) -> str:
    """One check as a line of text: 'name: demand vs capacity, utilisation 0.86 (factors; combination)'."""
    util = "not established" if c.utilisation is None else utilisation_text(c.utilisation)
    detail = "; ".join(x for x in (c.factors, c.combination) if x)
    return f"{c.name}: {c.demand} vs {c.capacity}, utilisation {util}" + (f" ({detail})" if detail else "")


def recheck_text(r: Recheck) -> str:
    """Format a recheck as plain text for a terminal."""
    lines = [f"{r.mark}: {r.status.value.upper().replace('_', ' ')}"]
    lines += [f"  {line_text(c)}" for c in check_lines(r)]
    for f in r.findings:
        lines.append(f"  [{f.priority.value.upper()}] {f.code}: {f.message}")
        lines.append(f"      action: {f.action} ({f.clause})")
    lines.append("")
    lines.append(r.caution)
    return "\n".join(lines)
