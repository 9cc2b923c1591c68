"""Compression perpendicular to grain at bearings (CSA O86-19 cl. 6.5.6 and 7.5.9)."""

from __future__ import annotations

PHI_BEARING = 0.8


def sawn_bearing_kzcp(b_mm: float, d_mm: float) -> float:
    """CSA O86-19 cl. 6.5.6.2.3 (memory): size factor KZcp from r = b / d (width over depth).

    1.0 when r <= 1.0; 1.0 + 0.15 (r - 1) between; 1.15 when r >= 2.0. Dimensionless.
    """
    r = b_mm / d_mm
    return min(1.15, max(1.0, 1.0 + 0.15 * (r - 1.0)))


def bearing_qr(fcp_mpa: float, bearing_area_mm2: float, kb: float = 1.0, kzcp: float = 1.0) -> float:
    """CSA O86-19 cl. 6.5.6.2 / 7.5.9.2: Qr = phi Fcp Ab KB KZcp, N.

    fcp_mpa: factored compression perpendicular Fcp = fcp (KD KScp KT), MPa;
    bearing_area_mm2: Ab = b x bearing length, mm^2; KB = 1.0 for end bearings (memory).
    """
    return PHI_BEARING * fcp_mpa * bearing_area_mm2 * kb * kzcp
