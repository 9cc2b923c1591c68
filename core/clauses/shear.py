"""Shear resistance (CSA O86-19 cl. 7.5.7 glulam, 6.5.4 sawn lumber)."""

from __future__ import annotations

PHI_SHEAR = 0.9
GLULAM_SIMPLE_SHEAR_MAX_VOLUME_M3 = 2.0


def glulam_vr(fv_mpa: float, area_mm2: float) -> float:
    """CSA O86-19 cl. 7.5.7.2: Vr = phi Fv 2A/3, N, for members of volume below 2.0 m^3.

    fv_mpa: factored shear strength Fv = fv (KD KH KSv KT), MPa; area_mm2: gross area, mm^2.
    """
    return PHI_SHEAR * fv_mpa * 2.0 * area_mm2 / 3.0


def glulam_volume_m3(b_mm: float, d_mm: float, length_mm: float) -> float:
    """Beam volume Z = b d L, m^3 (CSA O86-19 cl. 7.5.7.3), from mm inputs."""
    return b_mm * d_mm * length_mm / 1e9


def glulam_wr(fv_mpa: float, area_mm2: float, cv: float, volume_m3: float) -> float:
    """CSA O86-19 cl. 7.5.7.3(a): Wr = phi Fv 0.48 Ag CV Z^-0.18, N (total factored load resisted).

    fv_mpa: Fv, MPa; area_mm2: gross area, mm^2; cv: shear load coefficient (Table 7.5);
    volume_m3: beam volume Z, m^3.
    """
    return PHI_SHEAR * fv_mpa * 0.48 * area_mm2 * cv * volume_m3 ** (-0.18)


def sawn_vr(fv_mpa: float, area_mm2: float, kzv: float) -> float:
    """CSA O86-19 cl. 6.5.4.1 (memory): Vr = phi Fv (2 An / 3) KZv, N.

    fv_mpa: factored shear strength, MPa; area_mm2: net area, mm^2; kzv: shear size factor.
    """
    return PHI_SHEAR * fv_mpa * 2.0 * area_mm2 / 3.0 * kzv
