"""Bending resistance of glulam and sawn lumber (CSA O86-19 cl. 7.5.6.5 and 6.5.3)."""

from __future__ import annotations

PHI_BENDING = 0.9
KZBG_CAP = 1.3


def section_modulus_s(b_mm: float, d_mm: float) -> float:
    """Section modulus of a rectangle S = b d^2 / 6, mm^3 (b_mm, d_mm in mm)."""
    return b_mm * d_mm * d_mm / 6.0


def size_factor_kzbg(b_mm: float, d_mm: float, length_mm: float) -> float:
    """CSA O86-19 cl. 7.5.6.5.1: glulam size factor KZbg = (130/b)^0.1 (610/d)^0.1 (9100/L)^0.1 <= 1.3.

    b_mm: width (widest piece of a multi-piece lamination), mm; d_mm: depth, mm;
    length_mm: length of the segment between points of zero moment, mm. Dimensionless.
    """
    if length_mm <= 0:
        msg = f"length_mm = {length_mm} must be > 0 (segment between points of zero moment)"
        raise ValueError(msg)
    value = ((130.0 / b_mm) * (610.0 / d_mm) * (9100.0 / length_mm)) ** 0.1
    return min(KZBG_CAP, value)


def glulam_mr(fb_mpa: float, s_mm3: float, kx: float, kzbg: float, kl: float) -> float:
    """CSA O86-19 cl. 7.5.6.5.1: Mr = lesser of phi Fb S KX KZbg and phi Fb S KX KL, N*mm.

    fb_mpa: factored bending strength Fb, MPa; s_mm3: section modulus, mm^3; factors dimensionless.
    """
    base = PHI_BENDING * fb_mpa * s_mm3 * kx
    return min(base * kzbg, base * kl)


def sawn_mr(fb_mpa: float, s_mm3: float, kzb: float, kl: float) -> float:
    """CSA O86-19 cl. 6.5.3.1 (memory): Mr = phi Fb S KZb KL, N*mm.

    fb_mpa: factored bending strength Fb, MPa; s_mm3: section modulus, mm^3.
    """
    return PHI_BENDING * fb_mpa * s_mm3 * kzb * kl


def glulam_bending_strength_for_face(
    fb_pos_mpa: float, fb_neg_mpa: float, moment_sign: str, top_stamp: str
) -> tuple[float, str]:
    """CSA O86-19 Table 7.3 note: the specified fb for the face in tension, MPa.

    moment_sign: "positive" (bottom face in tension) or "negative" (top face in tension).
    top_stamp: "up" (as marked), "down" (installed upside down) or "not_visible" (take the weaker).
    Returns (fb in MPa, which value was used: "fb_pos" or "fb_neg").
    """
    if moment_sign not in ("positive", "negative"):
        msg = f"moment_sign {moment_sign!r} must be 'positive' or 'negative'"
        raise ValueError(msg)
    if top_stamp == "not_visible":
        return (fb_neg_mpa, "fb_neg") if fb_neg_mpa <= fb_pos_mpa else (fb_pos_mpa, "fb_pos")
    if top_stamp not in ("up", "down"):
        msg = f"top_stamp {top_stamp!r} must be 'up', 'down' or 'not_visible'"
        raise ValueError(msg)
    tension_on_marked_bottom = (moment_sign == "positive") == (top_stamp == "up")
    return (fb_pos_mpa, "fb_pos") if tension_on_marked_bottom else (fb_neg_mpa, "fb_neg")
