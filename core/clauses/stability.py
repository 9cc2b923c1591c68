"""Lateral stability of bending members (CSA O86-19 cl. 7.5.6.3, 7.5.6.4 and 6.5.3.2)."""

from __future__ import annotations

import math
from enum import StrEnum
from typing import NamedTuple

from core.clauses.outcomes import NotPermitted

CB_LIMIT = 50.0
GLULAM_DB_WAIVER = 2.5


def slenderness_cb(le_mm: float, d_mm: float, b_mm: float) -> float:
    """CSA O86-19 cl. 7.5.6.4.3: slenderness ratio CB = sqrt(Le d / b^2), dimensionless.

    le_mm: effective length Le, mm; d_mm: depth, mm; b_mm: width, mm.
    """
    return math.sqrt(le_mm * d_mm / (b_mm * b_mm))


def critical_slenderness_ck(e_mpa: float, kse: float, kt: float, fb_mpa: float, kx: float = 1.0) -> float:
    """CSA O86-19 cl. 7.5.6.4.4: CK = sqrt(0.97 E KSE KT / (FB KX)), dimensionless.

    e_mpa: modulus of elasticity E, MPa; fb_mpa: factored bending strength FB, MPa;
    kse, kt, kx: service, treatment and curvature factors.
    """
    return math.sqrt(0.97 * e_mpa * kse * kt / (fb_mpa * kx))


class KLRegime(StrEnum):
    """Which formula of CSA O86-19 cl. 7.5.6.4.4 gave KL (the value is the trace's wording)."""

    short = "(a) CB <= 10"
    intermediate = "(b) 10 < CB <= CK"
    long = "(c) CK < CB <= 50"


class LateralStability(NamedTuple):
    """KL and the regime of CSA O86-19 cl. 7.5.6.4.4 it came from."""

    kl: float
    regime: KLRegime


def effective_length_le(factor: float, lu_mm: float) -> float:
    """CSA O86-19 cl. 7.5.6.4.2 and Table 7.4: effective length Le = factor x Lu, mm.

    factor: the Table 7.4 row's factor (dimensionless); lu_mm: unsupported length Lu (or the spacing a of
    intermediate supports, as the row says), mm.
    """
    return factor * lu_mm


def lateral_stability_kl(
    cb: float, ck: float, e_mpa: float, kse: float, kt: float, fb_mpa: float, kx: float = 1.0
) -> LateralStability | NotPermitted:
    """CSA O86-19 cl. 7.5.6.4.4: lateral stability factor KL (dimensionless) and its regime.

    (a) CB <= 10: KL = 1; (b) 10 < CB <= CK: KL = 1 - (CB/CK)^4 / 3;
    (c) CK < CB <= 50: KL = 0.65 E KSE KT / (CB^2 FB KX); CB > 50: not permitted.
    e_mpa: E, MPa; fb_mpa: FB, MPa. Boundaries are closed as written here (memory).
    """
    if cb <= 10.0:
        return LateralStability(1.0, KLRegime.short)
    if cb <= ck:
        return LateralStability(1.0 - (cb / ck) ** 4 / 3.0, KLRegime.intermediate)
    if cb <= CB_LIMIT:
        return LateralStability(0.65 * e_mpa * kse * kt / (cb * cb * fb_mpa * kx), KLRegime.long)
    return NotPermitted("CB", cb, CB_LIMIT, "CSA O86-19 7.5.6.4.4")


def glulam_db_waives_stability(d_mm: float, b_mm: float) -> bool:
    """CSA O86-19 cl. 7.5.6.3.2: True when d/b <= 2.5, so KL = 1 and no bearing restraint is required.

    d_mm, b_mm: depth and width, mm. Boundary inclusive ("not greater than", memory).
    """
    return d_mm / b_mm <= GLULAM_DB_WAIVER


def bearing_restraint_required(d_mm: float, b_mm: float) -> bool:
    """CSA O86-19 cl. 7.5.6.3.1: True when d/b > 2.5 (restraint at bearings against displacement and rotation).

    Applied to sawn lumber too (reference 2.2, memory: the lumber d/b rules all assume restrained bearings).
    """
    return not glulam_db_waives_stability(d_mm, b_mm)


LUMBER_DB_LIMITS: tuple[tuple[float, str], ...] = (
    (4.0, "no intermediate lateral support"),
    (5.0, "member held in line by purlins or tie rods"),
    (6.5, "compression edge held by decking or by joists at <= 610 mm"),
    (7.5, "compression edge held by decking or joists, plus bridging at <= 8 d"),
    (9.0, "both edges held in line"),
)


def lumber_db_limit(
    purlins_in_line: bool, edge_held_directly: bool, bridging_within_8d: bool, both_edges_held: bool
) -> tuple[float, str]:
    """CSA O86-19 cl. 6.5.3.2 (memory): the largest d/b for which sawn lumber takes KL = 1.

    Arguments describe the lateral support recorded for the region's compression edge.
    Returns (limit d/b, the restraint it needs). All cases assume restrained bearings.
    """
    if both_edges_held:
        return LUMBER_DB_LIMITS[4]
    if edge_held_directly and bridging_within_8d:
        return LUMBER_DB_LIMITS[3]
    if edge_held_directly:
        return LUMBER_DB_LIMITS[2]
    if purlins_in_line:
        return LUMBER_DB_LIMITS[1]
    return LUMBER_DB_LIMITS[0]
