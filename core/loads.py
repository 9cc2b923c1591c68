"""NBC ultimate limit states load combinations and their load-duration factor (KD, CSA O86-19 5.3.2).

Combinations follow NBC Table 4.1.3.2.-A for gravity loads (dead D, live L, snow S); wind and
earthquake are outside the recheck. Companion factor 0.5 on L and S (reference Q5: the edition's
companion values are memory).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from functools import cache

from core.clauses.factors import KD_PERMANENT, load_duration_kd_standard


@dataclass(frozen=True, kw_only=True)
class Combination:
    """One ULS combination: factors on D, L and S and its duration class."""

    name: str
    alpha_d: float
    alpha_l: float
    alpha_s: float
    dead_load_only: bool  # dead load alone (1.4D): KD for permanent loads; findings read this flag, never the name
    ps_l: float  # share of specified L counted as standard-term load PS
    ps_s: float  # share of specified S counted as standard-term load PS


def gravity_combinations(counteracting_dead: bool) -> list[Combination]:
    """NBC Table 4.1.3.2.-A cases 1-3 for D, L, S; with 0.9D variants when dead load may relieve.

    counteracting_dead: True for beams with more than one element (continuous or overhanging),
    where 0.9D on the whole beam can govern a region (NBC note: 0.9D where D counteracts).
    The combinations are frozen and the same for every beam: built once, a new list each call.
    """
    return list(_gravity_combinations(counteracting_dead))


@cache
def _gravity_combinations(counteracting_dead: bool) -> tuple[Combination, ...]:
    out = [
        Combination(name="1.4D", alpha_d=1.4, alpha_l=0.0, alpha_s=0.0, dead_load_only=True, ps_l=0.0, ps_s=0.0),
        Combination(
            name="1.25D + 1.5L", alpha_d=1.25, alpha_l=1.5, alpha_s=0.0, dead_load_only=False, ps_l=1.0, ps_s=0.0
        ),
        Combination(
            name="1.25D + 1.5L + 0.5S", alpha_d=1.25, alpha_l=1.5, alpha_s=0.5, dead_load_only=False, ps_l=1.0, ps_s=0.5
        ),
        Combination(
            name="1.25D + 1.5S", alpha_d=1.25, alpha_l=0.0, alpha_s=1.5, dead_load_only=False, ps_l=0.0, ps_s=1.0
        ),
        Combination(
            name="1.25D + 1.5S + 0.5L", alpha_d=1.25, alpha_l=0.5, alpha_s=1.5, dead_load_only=False, ps_l=0.5, ps_s=1.0
        ),
    ]
    if counteracting_dead:
        out += [replace(c, name=c.name.replace("1.25D", "0.9D"), alpha_d=0.9) for c in out[1:]]
    return tuple(out)


def combination_kd(combo: Combination, dead_n_mm: float, live_n_mm: float, snow_n_mm: float) -> float:
    """CSA O86-19 5.3.2 (memory): KD for a combination (``kd_note`` says how it was chosen).

    dead_n_mm: specified dead load including self-weight, N/mm; live, snow: specified, N/mm.
    1.4D takes the permanent KD 0.65; other gravity combinations are standard term, with
    KD = 1 - 0.5 log10(PL/PS) >= 0.65 where PL > PS (PS = principal + 0.5 companion, specified).
    """
    if combo.dead_load_only:
        return KD_PERMANENT
    return load_duration_kd_standard(dead_n_mm, _standard_term(combo, live_n_mm, snow_n_mm))


def kd_note(combo: Combination, kd: float, dead_n_mm: float, live_n_mm: float, snow_n_mm: float) -> str:
    """How ``combination_kd`` chose KD, in words: written only where a trace is kept (the search formats none)."""
    if combo.dead_load_only:
        return "permanent load (1.4D): KD = 0.65, O86-19 Table 5.1"
    ps = _standard_term(combo, live_n_mm, snow_n_mm)
    if kd == 1.0:
        return f"standard term, PL = {dead_n_mm:.2f} <= PS = {ps:.2f} kN/m: KD = 1.0, O86-19 5.3.2.2"
    return f"standard term, PL = {dead_n_mm:.2f} > PS = {ps:.2f} kN/m: KD = 1 - 0.5 log(PL/PS), O86-19 5.3.2.3"


def _standard_term(combo: Combination, live_n_mm: float, snow_n_mm: float) -> float:
    """PS of a standard-term combination: the specified live and snow counted as standard-term load, N/mm."""
    return combo.ps_l * live_n_mm + combo.ps_s * snow_n_mm


def applicable(combo: Combination, live_n_mm: float, snow_n_mm: float) -> bool:
    """A combination applies when its principal variable load is present (1.4D always applies)."""
    if combo.dead_load_only:
        return True
    principal_present = live_n_mm > 0 if combo.alpha_l == 1.5 else snow_n_mm > 0
    companion_l = combo.alpha_l == 0.5
    companion_s = combo.alpha_s == 0.5
    if (companion_l and live_n_mm == 0) or (companion_s and snow_n_mm == 0):
        return False  # the same as the combination without the companion
    return principal_present
