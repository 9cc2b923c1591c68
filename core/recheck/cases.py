"""Load cases of a recheck: every applicable NBC gravity combination with every live/snow pattern, solved.

Each case is a line load per element; the beam model holds the response to a unit load on each element,
so a case is a weighted sum of those (superposition), never a new solve.
"""

from __future__ import annotations

from functools import cache, lru_cache
from itertools import product
from typing import NamedTuple

from core.analysis import BeamModel, CaseResult
from core.loads import Combination, applicable, combination_kd, gravity_combinations, kd_note
from core.member import Member
from core.models import Beam, DeadLoadPattern

SPLIT_HIGH_D = 1.25  # NBC Table 4.1.3.2.-A: dead-load factor where it adds to the effect
SPLIT_LOW_D = 0.9  # and where it counteracts


class LoadCase(NamedTuple):
    """One combination with one live/snow pattern, solved (immutable; a named tuple: built per case, fast)."""

    combo: Combination
    kd: float
    specified_n_mm: tuple[float, float, float]  # D (with self-weight), L and S, specified: what the KD note reads
    pattern: str  # the elements carrying live/snow ("" for dead load only, "all spans" when every one does)
    result: CaseResult
    total_factored_n: float
    relieving: str = ""  # the elements carrying 0.9D in a split pattern ("" when the dead-load factor is uniform)


@cache
def live_patterns(n_el: int) -> tuple[tuple[bool, ...], ...]:
    """Live and snow patterns: every non-empty subset of elements (all elements for one element).

    Built once per element count (the same for every beam).
    """
    if n_el == 1:
        return ((True,),)
    return tuple(p for p in product((True, False), repeat=n_el) if any(p))


@lru_cache(maxsize=16384)
def _names(model: BeamModel, pattern: tuple[bool, ...], on: bool) -> str:
    """The names of the elements loaded (``on``) or not in a pattern, per solved model (models are shared)."""
    return ", ".join(el.name for el, hit in zip(model.elements, pattern, strict=True) if hit is on)


def _pattern_name(model: BeamModel, pattern: tuple[bool, ...]) -> str:
    return "all spans" if all(pattern) else _names(model, pattern, True)


def case_kd_note(case: LoadCase) -> str:
    """How a case's KD was chosen, in words (``core.loads.kd_note``), for its trace."""
    dead, live, snow = case.specified_n_mm
    return kd_note(case.combo, case.kd, dead, live, snow)


def _total(w: tuple[float, ...], model: BeamModel) -> float:
    """The total factored load of a case, N: sum(w * length) from 0.0 in element order (the sum's own floats)."""
    total = 0.0
    for wi, li in zip(w, model.lengths, strict=True):
        total += wi * li
    return total


def carries_snow(case: LoadCase, beam: Beam) -> bool:
    """Whether a case includes snow (principal or companion): a load nobody on site can keep off the member."""
    return case.combo.alpha_s > 0 and beam.loads.snow_kn_m > 0


def load_cases(beam: Beam, member: Member, model: BeamModel) -> list[LoadCase]:
    """Every applicable NBC gravity combination with every live/snow pattern, solved.

    Where dead load counteracts (more than one element), the envelope also holds the split patterns of
    reference o86.md section 13 (NBC 4.1.3.2, 0.9D where dead load counteracts): for each live/snow
    pattern, 1.25D on the loaded parts and 0.9D on the rest. With uniform loads per element these give
    the exact extreme of every reaction and moment. ``dead_load_pattern = "uniform"`` (a flagged option)
    keeps one dead-load factor on the whole beam.
    """
    dead = beam.loads.dead_kn_m + member.self_weight_n_mm
    live, snow = beam.loads.live_kn_m, beam.loads.snow_kn_m
    n_el = len(model.elements)
    split = n_el > 1 and beam.dead_load_pattern is DeadLoadPattern.per_part
    high_d, low = SPLIT_HIGH_D * dead, SPLIT_LOW_D * dead  # a split pattern's 1.25D and 0.9D parts
    specified = (dead, live, snow)
    cases = []
    for combo in gravity_combinations(counteracting_dead=n_el > 1):
        if not applicable(combo, live, snow):
            continue
        kd = combination_kd(combo, dead, live, snow)
        variable = combo.alpha_l * live + combo.alpha_s * snow
        patterns = [(True,) * n_el] if combo.dead_load_only or variable == 0 else live_patterns(n_el)
        base = combo.alpha_d * dead
        loaded, unloaded = base + variable, base + 0.0  # each element's w: alpha_d D + (variable or 0.0)
        for pattern in patterns:
            w = tuple(loaded if on else unloaded for on in pattern)
            name = "" if combo.dead_load_only else _pattern_name(model, pattern)
            # positional, in field order: a named tuple's keyword arguments cost more than its fields
            cases.append(LoadCase(combo, kd, specified, name, model.case(w), _total(w, model)))
            if split and combo.alpha_d == SPLIT_HIGH_D and not all(pattern):
                high = high_d + variable
                w = tuple(high if on else low for on in pattern)
                relieving = _names(model, pattern, False)
                cases.append(LoadCase(combo, kd, specified, name, model.case(w), _total(w, model), relieving))
    return cases
