"""Specified-load deflection (CSA O86-19 5.4.2, 5.4.3; NBC Table 9.4.3.1 ratios as the criterion), mm."""

from __future__ import annotations

from functools import lru_cache

from core import tables
from core.analysis import BeamModel
from core.assembled import assembled
from core.clauses.serviceability import (
    EDITION,
    deflection_limit_mm,
    deflection_span_mm,
    long_term_deformation_rule,
    modulus_for_deflection_es,
)
from core.kinds import ElementKind, TraceStatus
from core.member import Member
from core.models import Beam, Use
from core.recheck.trace import Lines, lines_for
from core.results import DeflectionCheck, RowUsed

_LIMIT_CLAUSE = {"total_specified": "CSA O86-19 5.4.2", "long_term": "CSA O86-19 5.4.3"}
USE_LIMIT_CLAUSE = "NBC Table 9.4.3.1"
# the use rows are NBC Part 9's ratios; a building designed to Part 4 has no table of ratios, so the trace says
# they are taken as the criterion (reference o86.md section 6: Part 4's commentary gives similar guidance)
_USE_LIMIT_BASIS = (
    "NBC Part 9 ratio, taken as the serviceability criterion (Part 4 sets no ratio; its commentary gives similar "
    "limits); a criterion set by the engineer of record governs"
)


def limit_clause(row: dict[str, str]) -> str:
    """The clause behind a deflection-limit row: O86-19 5.4.2 / 5.4.3, or the NBC table for a use row."""
    return _LIMIT_CLAUSE.get(row["use"], USE_LIMIT_CLAUSE)


LONG_TERM_CASE = "D (long-term, O86-19 5.4.3)"  # the long-term check's case, as the result names it
Worst = tuple[float, float, float, str, str, dict[str, str]]  # utilisation, |delta|, limit, case, element, row


@lru_cache(maxsize=16)
def deflection_patterns(n_el: int) -> tuple[tuple[bool, ...], ...]:
    """All loaded, each checkerboard, each element alone (common practice for maximum deflection).

    Built once per element count (the same for every beam).
    """
    pats = {(True,) * n_el}
    if n_el > 1:
        pats.add(tuple(i % 2 == 0 for i in range(n_el)))
        pats.add(tuple(i % 2 == 1 for i in range(n_el)))
        pats.update(tuple(i == k for i in range(n_el)) for k in range(n_el))
    return tuple(sorted(pats, reverse=True))


def _use_row(beam: Beam) -> dict[str, str]:
    """The deflection-limit row for the recorded use; when not recorded, the strictest (largest ratio)."""
    if beam.use is not None:
        return tables.find("deflection_limits", use=beam.use)  # a StrEnum member: equal to its value
    return _strictest_use_row(tables.generation())


@lru_cache(maxsize=8)
def _strictest_use_row(generation: int) -> dict[str, str]:
    """The use row of the largest ratio (the strictest limit), per tables generation."""
    del generation  # the cache key only: a firm's correction gives a new generation
    rows = [r for r in tables.load("deflection_limits").rows if r["use"] in _USES]
    return max(rows, key=lambda r: float(r["ratio"]))


_USES = frozenset(u.value for u in Use)


def _checks(use_row: dict[str, str], dead: float) -> list[tuple[str, dict[str, str], float, float]]:
    """(case, limit row, dead load on every element, share of the live/snow load) of each deflection check."""
    total, long_term = _dead_load_rows(tables.generation(), EDITION)
    checks = [("L + S", use_row, 0.0, 1.0), ("D + L + S", total, dead, 1.0)]
    if long_term is not None:
        checks.append((LONG_TERM_CASE, long_term, dead, 0.0))
    return checks


@lru_cache(maxsize=8)
def _dead_load_rows(generation: int, edition: str) -> tuple[dict[str, str], dict[str, str] | None]:
    """The limit rows of the total-load check and (O86-19) the long-term check, per tables generation and edition."""
    del generation  # the cache key only: a firm's correction gives a new generation
    long_term = long_term_deformation_rule(edition)
    total = tables.find("deflection_limits", use="total_specified")
    return total, None if long_term is None else tables.find("deflection_limits", use=long_term)


def _worst(
    model: BeamModel,
    checks: list[tuple[str, dict[str, str], float, float]],
    variable: float,
    ei: float,
    each: dict[str, Worst] | None = None,
) -> Worst | None:
    """The largest deflection utilisation over every pattern, check and element.

    each: when given, it receives the largest of each check (by its label) too, and no element is skipped
    (the skip only leaves out what cannot beat the largest so far, so the largest is the same either way).
    """
    best: Worst | None = None
    spans = _spans(model)
    seen: set[tuple[str, tuple[float, ...]]] = set()
    limits_of: dict[str, list[float]] = {}  # each check's limit per element (span / ratio), found when first needed
    for pattern in deflection_patterns(len(model.elements)):
        for label, row, base, share in checks:
            w = tuple(base + (share * variable if on else 0.0) for on in pattern)
            # a load already checked under this label (the dead-load check is the same for every pattern)
            # cannot replace the worst: only a strictly larger utilisation does
            if not any(w) or (label, w) in seen:
                continue
            seen.add((label, w))
            limits = limits_of.get(label)
            if limits is None:
                ratio = float(row["ratio"])
                limits = limits_of[label] = [deflection_limit_mm(span, ratio) for span in spans]
            # an element whose deflection is surely under (1 - 1e-9) x the worst so far cannot replace it
            below = None if best is None or each is not None else [best[0] * limit * (1 - 1e-9) for limit in limits]
            for e, delta in enumerate(model.max_abs_deflections_mm(w, ei, below)):
                if delta is None:
                    continue
                util = delta / limits[e]
                if best is None or util > best[0]:
                    best = (util, delta, limits[e], label, model.elements[e].name, row)
                if each is not None:
                    mine = each.get(label)
                    if mine is None or util > mine[0]:
                        each[label] = (util, delta, limits[e], label, model.elements[e].name, row)
    return best


@lru_cache(maxsize=4096)
def _spans(model: BeamModel) -> tuple[float, ...]:
    """The deflection span of each element of a solved model (models are shared: found once per model)."""
    return tuple(deflection_span_mm(el.length_mm, el.kind is ElementKind.overhang) for el in model.elements)


def _strictest_limit(model: BeamModel, checks: list[tuple[str, dict[str, str], float, float]]) -> Worst:
    """With no load at all: the smallest limit (span / ratio) over every check and element, nothing deflecting."""
    limits = [
        (deflection_limit_mm(span, float(row["ratio"])), el.name, row)
        for _, row, _, _ in checks
        for el, span in zip(model.elements, _spans(model), strict=True)
    ]
    limit, element, row = min(limits, key=lambda x: x[0])
    return 0.0, 0.0, limit, "no load", element, row


_OVERHANG_SPAN = "an overhang's limit divides twice its length (common practice)"


def _trace(trace: Lines, beam: Beam, model: BeamModel, es: float, row: dict[str, str], use_row: dict[str, str]) -> None:
    """The lines of the deflection check's trace: ES, the limit, the use taken when not recorded, the edition."""
    long_term = long_term_deformation_rule(EDITION)
    trace.add("ES", es, "CSA O86-19 5.4.1", "E KSE KT (mean E)", TraceStatus.memory, "MPa")
    overhang = any(el.kind is ElementKind.overhang for el in model.elements)
    limit = f"{row['description']}: L/{row['ratio']}"  # the row with its ratio, as the notice's appendix lists it
    trace.add(
        "limit",
        f"L/{row['ratio']}",
        limit_clause(row),
        (row["description"] if row["use"] in _LIMIT_CLAUSE else f"{row['description']}: {_USE_LIMIT_BASIS}")
        + (f"; {_OVERHANG_SPAN}" if overhang else ""),
        TraceStatus(row["status"]),
        row=limit if row["use"] in _LIMIT_CLAUSE else f"{limit}; {_USE_LIMIT_BASIS}",
    )
    if beam.use is None:
        trace.add(
            "use",
            use_row["use"],
            "",
            "not recorded: the strictest deflection limit of the table is taken",
            TraceStatus.input,
        )
    trace.add(
        "edition",
        EDITION,
        "CSA O86-19 5.4.3",
        "long-term deformation checked (O86-24 deletes 5.4.3 and folds creep into 5.4.2)"
        if long_term
        else "no separate long-term check in this edition",
        TraceStatus.confirmed,
    )


def _each_check_lines(
    trace: Lines, model: BeamModel, checks: list[tuple[str, dict[str, str], float, float]], each: dict[str, Worst]
) -> None:
    """One line per deflection check (L + S, D + L + S, long-term D): its largest deflection and its limit.

    The governing check is the largest utilisation of these, so a check that does not govern (the
    long-term deformation of 5.4.3, say) still shows its value.
    """
    for label, row, _, _ in checks:
        symbol = "deflection (D, long-term)" if label == LONG_TERM_CASE else f"deflection ({label})"
        worst = each.get(label)
        if worst is None:
            trace.add(symbol, 0.0, limit_clause(row), "no load in this check", TraceStatus.formula, "mm")
            continue
        util, delta, limit, _, element, _ = worst
        el = next(e for e in model.elements if e.name == element)
        span = f"2 x {el.length_mm:.0f}" if el.kind is ElementKind.overhang else "L"
        trace.add(
            symbol,
            delta,
            limit_clause(row),
            f"largest over the load patterns, {element}: limit {span}/{row['ratio']} = {limit:.1f} mm, "
            f"utilisation {util:.3f}",
            TraceStatus.formula,
            "mm",
        )


def deflection_check(
    beam: Beam, member: Member, model: BeamModel, *, traces: bool = True, rows: set[RowUsed] | None = None
) -> DeflectionCheck:
    """Specified-load deflection (CSA O86-19 5.4.2, 5.4.3; NBC Table 9.4.3.1), mm.

    L + S against the use limit, D + L + S against L/180, and for O86-19 the long-term (dead) load
    against L/360 (reference o86.md sections 12 and 13). traces: False builds no trace; rows: when given,
    the table rows of the governing check's trace are added to it (and no trace is kept).
    """
    es = modulus_for_deflection_es(member.e_mpa, member.kse, member.kt_e)
    dead = beam.loads.dead_kn_m + member.self_weight_n_mm
    use_row = _use_row(beam)
    checks = _checks(use_row, dead)
    trace = lines_for(traces, rows)
    each: dict[str, Worst] | None = {} if trace is not None and trace.rows is None else None
    best = _worst(model, checks, beam.loads.live_kn_m + beam.loads.snow_kn_m, es * member.inertia_mm4, each)
    util, delta, limit, label, element, row = best if best is not None else _strictest_limit(model, checks)
    if trace is not None:
        _trace(trace, beam, model, es, row, use_row)
        if each is not None:  # formula lines only: they name no table row
            _each_check_lines(trace, model, checks, each)
    return assembled(
        DeflectionCheck,
        {
            "delta_mm": delta,
            "limit_mm": limit,
            "limit_ratio": float(row["ratio"]),
            "utilisation": util,
            "case": label,
            "element": element,
            "clause": limit_clause(row),
            "trace": [] if trace is None else trace.lines,
        },
    )
