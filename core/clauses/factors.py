"""Modification factors: load duration KD, service KS, treatment KT, system KH (CSA O86-19)."""

from __future__ import annotations

import math

KD_SHORT_TERM = 1.15
KD_STANDARD_TERM = 1.0
KD_PERMANENT = 0.65


def load_duration_kd_standard(pl_n_mm: float, ps_n_mm: float) -> float:
    """CSA O86-19 cl. 5.3.2.3: KD for standard-term loading with a heavy long-term load.

    KD = 1.0 - 0.50 log10(PL / PS) >= 0.65 when PL > PS; 1.0 when PL <= PS.
    pl_n_mm: specified long-term (dead) load, any consistent unit (here N/mm line load).
    ps_n_mm: specified standard-term load (snow, live) in the same unit; must be > 0.
    Returns KD, dimensionless. Status: formula from memory (reference 3.1).
    """
    if pl_n_mm < 0:
        msg = f"pl_n_mm = {pl_n_mm} must be >= 0"
        raise ValueError(msg)
    if ps_n_mm <= 0:
        msg = f"ps_n_mm = {ps_n_mm} must be > 0 for a standard-term combination"
        raise ValueError(msg)
    if pl_n_mm == 0:
        return KD_STANDARD_TERM  # no long-term load (log10 of 0 is undefined)
    # the formula gives more than 1.0 when PL < PS and exactly 1.0 at PL = PS: 1.0 caps it
    return min(KD_STANDARD_TERM, max(KD_PERMANENT, 1.0 - 0.50 * math.log10(pl_n_mm / ps_n_mm)))


def system_factor_kh(case: str) -> float:
    """CSA O86-19 Table 6.12 (memory): system factor KH for sawn-lumber bending and shear.

    case: "single" (1.0), "shared" (case 1: three or more members at <= 610 mm sharing load, 1.10),
    "light_frame" (case 2: sheathed light-frame system, 1.40), "built_up" (3+ plies, 1.10).
    Glulam beams take 1.0 (O86-19 7.4, memory). Returns KH, dimensionless.
    """
    table = {"single": 1.0, "shared": 1.10, "light_frame": 1.40, "built_up": 1.10}
    if case not in table:
        msg = f"system case {case!r} is not one of {sorted(table)}"
        raise ValueError(msg)
    return table[case]


def factored_bending_strength_fb(fb_mpa: float, kd: float, kh: float, ksb: float, kt: float) -> float:
    """CSA O86-19 cl. 6.5.3 / 7.5.6.5.1: Fb = fb (KD KH KSb KT), MPa.

    fb_mpa: specified bending strength, MPa; the factors are dimensionless.
    """
    return fb_mpa * kd * kh * ksb * kt


def factored_strength(f_mpa: float, *factors: float) -> float:
    """CSA O86-19 cl. 6.4 / 7.4: a factored strength F = f x (product of factors), MPa."""
    out = f_mpa
    for k in factors:
        out *= k
    return out
