"""Choice of the effective-length row of CSA O86-19 Table 7.4 for each bending region.

Each region takes its row by what it is (the span of a simple span, a cantilever, a negative-moment
zone of a continuous beam) and how its compression edge is braced. Rows marked ``memory`` are never
chosen by the recheck (reference o86.md section 13); a reviewer may choose a row (``le_case``) that
fits the beam, and a row that fits no region of the beam is refused with the reason.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

from core import tables

AUTO = "auto"
LOADS_CARRIED = ("any", "udl")  # the recheck models uniform line loads only


@dataclass(frozen=True)
class RegionKind:
    """What a region is, for the row choice."""

    simple_span: bool  # the span of a single-span beam without overhangs
    cantilever: bool  # the region holds an overhang
    braced_between: bool  # its compression edge is braced between supports (purlins or bottom braces)


def row_fits(row: dict[str, str], kind: RegionKind) -> str | None:
    """None when a Table 7.4 row fits the region; otherwise the reason it does not (plain words)."""
    if row["load"] not in LOADS_CARRIED:
        loading = row["load"].replace("_", " ")
        return f"row {row['le_case']!r} applies to {loading} loading; the recheck carries uniform loads"
    if row["fits"] == "simple_span" and not kind.simple_span:
        return f"row {row['le_case']!r} is for a simple span; this region is not the span of a single-span beam"
    if row["fits"] == "cantilever" and not kind.cantilever:
        return f"row {row['le_case']!r} is for a cantilever; this region holds no overhang"
    if row["intermediate_support"] == "yes" and not kind.braced_between:
        return f"row {row['le_case']!r} needs intermediate lateral supports; none brace this compression edge"
    return None


def chosen_row(le_case: str, kind: RegionKind) -> tuple[dict[str, str], str]:
    """CSA O86-19 Table 7.4: the row for a region and why it applies (reviewer's row if it fits).

    le_case: ``auto`` or a row name chosen by the reviewer. The default never picks a memory row:
    the span of a simple span under uniform load takes ``simple_udl``, every other region ``any``.
    Found once per (tables generation, le_case, kind) (few keys: a row name and three flags). The cache is
    keyed by the kind's three flags, not the kind: a dataclass's hash and equality run interpreted even compiled.
    """
    return _chosen_row(tables.generation(), le_case, kind.simple_span, kind.cantilever, kind.braced_between)


@lru_cache(maxsize=1024)
def _chosen_row(
    generation: int, le_case: str, simple_span: bool, cantilever: bool, braced_between: bool
) -> tuple[dict[str, str], str]:
    del generation  # the cache key only: a firm's correction gives a new generation
    kind = RegionKind(simple_span, cantilever, braced_between)
    if le_case != AUTO:
        row = tables.find("effective_length", le_case=le_case)
        reason = row_fits(row, kind)
        if reason is None:
            return row, f"chosen by the reviewer; fits this region ({row['status']})"
        auto, why = chosen_row(AUTO, kind)
        return auto, f"{why}; reviewer's row not applied here: {reason}"
    if kind.simple_span and not kind.braced_between:
        return tables.find(
            "effective_length", le_case="simple_udl"
        ), "simple span, uniform load, no intermediate support"
    what = (
        "cantilever"
        if kind.cantilever
        else ("simple span braced between supports" if kind.simple_span else "region of a continuous beam")
    )
    why = f"{what}: conservative catch-all (a row not yet confirmed is never chosen by default)"
    return tables.find("effective_length", le_case="any"), why


def beam_fit_error(le_case: str, kinds: list[RegionKind]) -> str | None:
    """None when a reviewer's row fits at least one possible region of the beam; else the reason."""
    if le_case == AUTO:
        return None
    row = tables.find("effective_length", le_case=le_case)
    reasons = [row_fits(row, k) for k in kinds]
    if any(r is None for r in reasons):
        return None
    return next(r for r in reasons if r is not None)


def beam_kinds(n_spans: int, has_overhang: bool, top_braced: bool, bottom_braced: bool) -> list[RegionKind]:
    """Every kind of region a beam of this shape can have (positive spans, negative zones, cantilevers)."""
    single = n_spans == 1 and not has_overhang
    kinds = [RegionKind(single, False, top_braced)]
    if n_spans > 1 or has_overhang:
        kinds.append(RegionKind(False, has_overhang, bottom_braced))
    return kinds
