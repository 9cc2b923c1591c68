"""The recheck sheet's load cases and support reactions, as rows of text (content first, rendered by ``render``)."""

from __future__ import annotations

from core.casetable import CaseRow, CaseTable
from core.results import Recheck, check_lines

LIST_ALL_UP_TO = 30  # more cases than this (continuous beams: every pattern of parts): list those that matter

CASE_HEAD = ("#", "Case", "KD", "Factored w, kN/m", "M sag\nkN·m", "M hog\nkN·m", "V\nkN", "Reactions, kN", "Gives")
REACTION_HEAD = ("Support", "At", "D", "L", "S", "Factored, largest", "Factored, least")


def governed(result: Recheck) -> dict[str, list[str]]:
    """Each case label that governs a check, with the checks it governs and their demand ("shear: Vf 40.0 kN")."""
    out: dict[str, list[str]] = {}
    for c in check_lines(result):
        if c.combination:
            out.setdefault(c.combination, []).append(f"{c.name}: {c.demand}")
    return out


def _num(x: float, places: int = 1) -> str:
    """A figure as the sheet prints it; -0.0 prints as 0.0 (a rounding of a tiny negative is not a sign)."""
    text = f"{x:.{places}f}"
    return text[1:] if text.startswith("-") and float(text) == 0.0 else text


def _loads(row: CaseRow, parts: list[str]) -> str:
    """The factored line load on each part; one figure when every part carries the same."""
    figures = [_num(w, 2) for w in row.w_factored_kn_m]
    if len(set(figures)) == 1:
        return figures[0] if len(parts) == 1 else f"{figures[0]} on every part"
    return "; ".join(f"{p} {f}" for p, f in zip(parts, figures, strict=True))


def case_section(table: CaseTable, result: Recheck) -> tuple[list[str], list[list[str]]]:
    """The paragraphs above the load-case table and its rows (the header first).

    Every case is listed up to ``LIST_ALL_UP_TO``; beyond that (several spans: every pattern of parts is
    tried) the cases that give an extreme of a moment, the shear or a reaction, or govern a check.
    """
    governs = governed(result)
    shown = [
        r for r in table.cases if len(table.cases) <= LIST_ALL_UP_TO or r.largest or r.least or r.combination in governs
    ]
    count = len(table.cases)
    which = (
        "all are listed"
        if len(shown) == count
        else f"the {len(shown)} listed give an extreme of a moment, the shear or a reaction, or govern a check"
    )
    sentences = [
        f"{count} load case{'s' if count != 1 else ''} tried, numbered in the order tried, combination by "
        f"combination; {which}.",
        "Gravity loads only: the NBC 2020 Table 4.1.3.2.-A combinations of dead (D), live (L) and snow (S) "
        "load. Wind and earthquake are not recorded and not checked here: the least reactions and any uplift "
        "are for gravity loads, and the engineer of record checks hold-downs and members under the other "
        "combinations.",
        "Each combination is tried with its live and snow load on every pattern of parts ('L/S on span 1': "
        "on span 1 only; dead load is on every part) and, where dead load relieves, 0.9D on the unloaded "
        f"parts. Factored w includes the member's self-weight ({_num(table.self_weight_kn_m, 3)} kN/m "
        "specified).",
        "KD (CSA O86-19 5.3.2): 0.65 for dead load alone; otherwise standard term, reduced where PL, the "
        "specified dead load, exceeds PS, the specified standard-term load (the principal load plus half the "
        "companion); each check's KD line gives its PL and PS.",
        "M sag, M hog and V: the case's largest sagging and hogging moment and shear anywhere on the beam (V "
        "at a support or part end, with no reduction for load near a support); a check's own demand, at its "
        f"region, is under Gives. Reactions upward positive, at supports 1 to {len(table.supports)} from the "
        "left. Gives: the extremes over every case that this case reaches first (largest, least; R1: the "
        "reaction at support 1), and the checks it governs.",
    ]
    rows = [list(CASE_HEAD)]
    for r in shown:
        gives = []
        if r.largest:
            gives.append("largest " + ", ".join(r.largest))
        if r.least:
            gives.append("least " + ", ".join(r.least))
        gives += [f"governs {check}" for check in governs.get(r.combination, [])]
        rows.append(
            [
                str(r.number),
                r.combination,
                f"{r.kd:.2f}",
                _loads(r, table.parts),
                _num(r.m_sagging_knm),
                _num(r.m_hogging_knm),
                _num(r.v_max_kn),
                " / ".join(_num(x) for x in r.reactions_kn),
                "; ".join(gives),
            ]
        )
    return sentences, rows


def reaction_section(table: CaseTable) -> tuple[list[str], list[list[str]]]:
    """The paragraph above the reactions table and its rows (the header first)."""
    sentence = (
        "kN. D, L and S are specified (unfactored) loads: D on every part with the self-weight; L and S on "
        "the pattern of parts that gives the largest reaction there. Factored: the largest and least over "
        "every case tried, with the case number. A negative reaction is uplift: the support must hold the "
        "beam down (gravity loads only, see above)."
    )
    rows = [list(REACTION_HEAD)]
    for s in table.supports:
        rows.append(
            [
                str(s.support),
                f"{s.x_m:.2f} m",
                _num(s.dead_kn),
                _num(s.live_kn),
                _num(s.snow_kn),
                f"{_num(s.factored_max_kn)} (case {s.factored_max_case})",
                f"{_num(s.factored_min_kn)} (case {s.factored_min_case})",
            ]
        )
    return [sentence], rows


__all__ = ["CASE_HEAD", "LIST_ALL_UP_TO", "REACTION_HEAD", "case_section", "governed", "reaction_section"]
