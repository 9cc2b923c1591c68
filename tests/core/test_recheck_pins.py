"""Pinned outputs of ``recheck()`` (deflection, shear, bearing, KD, Mr) for a set of beams.

Every expected number is worked in the test from outside the project: the handbook beam formulas
(simple span: M = wL^2/8, V = R = wL/2, delta = 5wL^4/(384 EI); two equal spans: middle reaction
10wL/8), the clause formulas of CSA O86-19 written out with their clause, and ``limitstates`` for
KL and KZbg. Inputs the formulas need are the published table values, written here as numbers with
their table: 24f-E D.Fir-L glulam fb 30.6, fv 2.0, fcp 7.0, E 12 800 MPa (O86-19 Table 7.3, from
memory); S-P-F No.1/No.2 fb 11.8, fv 1.5, fcp 5.3, E 9500 MPa (Table 6.4); KZb = KZv 1.1 for
38 x 235 (Table 6.13); unit weights 4.9 and 4.2 kN/m^3 (common practice, from memory).
"""

import math

import pytest
from limitstates.design.csa.o86.c19 import glulam as ls
from pycba import BeamAnalysis

from core import recheck
from tests.core.beams import glulam, sawn

# glulam() defaults: 130 x 456 24f-E, 7200 mm simple span, D 2.0 + S 5.0 kN/m, purlins at 2400 mm
B, D, L = 130.0, 456.0, 7200.0
I_GL = B * D**3 / 12  # handbook: second moment of area of a rectangle, mm^4
S_GL = B * D**2 / 6
W_DEAD = 2.0 + 4.9 * (B / 1000) * (D / 1000)  # specified dead + self-weight, N/mm (kN/m)
W_ULS = 1.25 * W_DEAD + 1.5 * 5.0  # NBC Table 4.1.3.2.-A case 3: 1.25D + 1.5S

# sawn() defaults: 38 x 235 S-P-F No.1/No.2 floor joist, 3600 mm, D 0.25 + L 0.8 kN/m, decking
BS, DS, LS = 38.0, 235.0, 3600.0
I_SW = BS * DS**3 / 12
W_DEAD_SW = 0.25 + 4.2 * (BS / 1000) * (DS / 1000)
W_ULS_SW = 1.25 * W_DEAD_SW + 1.5 * 0.8  # NBC case 2: 1.25D + 1.5L


def test_glulam_simple_span_deflection_is_handbook_5wl4_over_384ei():
    r = recheck(glulam())
    # D + L + S against L/180 governs (O86-19 5.4.2): 7.29 kN/m over 40 mm beats 2.29 over L/360 = 20 mm
    expected = 5 * (W_DEAD + 5.0) * L**4 / (384 * 12800 * I_GL)
    assert r.deflection.delta_mm == pytest.approx(expected, rel=1e-6)  # 19.42 mm
    assert r.deflection.limit_mm == pytest.approx(L / 180, rel=1e-9)  # O86-19 5.4.2: L/180 = 40 mm
    assert r.deflection.utilisation == pytest.approx(expected / 40.0, rel=1e-6)


def test_glulam_deflection_long_term_limit_is_l_over_360_when_dead_load_governs():
    # only dead load: the O86-19 5.4.3 long-term check (L/360 = 20 mm) governs over L/180
    r = recheck(glulam(loads={"dead_kn_m": 4.0, "live_kn_m": 0.0, "snow_kn_m": 0.0}))
    w = 4.0 + 4.9 * 0.130 * 0.456
    assert r.deflection.delta_mm == pytest.approx(5 * w * L**4 / (384 * 12800 * I_GL), rel=1e-6)
    assert r.deflection.limit_mm == pytest.approx(L / 360, rel=1e-9)


@pytest.mark.parametrize(
    ("use", "ratio"),
    [("floor", 360), ("roof_plaster", 360), ("roof_other", 240)],  # NBC Table 9.4.3.1 (memory)
)
def test_glulam_use_limit_when_live_or_snow_governs(use, ratio):
    # snow alone with almost no dead load: L + S against the use limit governs
    r = recheck(glulam(use=use, self_weight=False, loads={"dead_kn_m": 0.1, "live_kn_m": 0.0, "snow_kn_m": 5.0}))
    assert r.deflection.limit_mm == pytest.approx(L / ratio, rel=1e-9)
    assert r.deflection.delta_mm == pytest.approx(5 * 5.0 * L**4 / (384 * 12800 * I_GL), rel=1e-6)


def test_glulam_simple_span_shear_and_bearing_by_hand():
    r = recheck(glulam())
    vf = W_ULS * L / 2  # handbook: V = R = wL/2
    assert r.shear.vf_kn == pytest.approx(vf / 1000, rel=1e-9)
    assert r.shear.kd == 1.0  # O86-19 5.3.2.2: PL 2.29 <= PS 5.0
    # O86-19 7.5.7.2: Vr = 0.9 Fv 2A/3 (volume 0.43 m^3 < 2.0)
    assert r.shear.vr_kn == pytest.approx(0.9 * 2.0 * 2 * B * D / 3 / 1000, rel=1e-9)  # 71.14 kN
    for support in r.bearing:
        assert support.qf_kn == pytest.approx(vf / 1000, rel=1e-9)
        # O86-19 7.5.9.2: Qr = 0.8 Fcp Ab KB, Ab = 130 x 140
        assert support.qr_kn == pytest.approx(0.8 * 7.0 * B * 140 / 1000, rel=1e-9)  # 101.92 kN


def test_glulam_simple_span_mr_with_limitstates_kl_and_kzbg():
    region = recheck(glulam()).bending[0]
    assert region.kd == 1.0
    kl = ls.checkKL(ls.checkCb(1.92 * 2400, D, B), 12800, 30.6)  # Le = 1.92 Lu (Table 7.4); oracle
    kzbg = ls.checkKzbg(B, D, L)
    # O86-19 7.5.6.5.1: Mr = 0.9 Fb S min(KZbg, KL), Fb = 30.6 x KD 1.0
    assert region.mr_knm == pytest.approx(0.9 * 30.6 * S_GL * min(kl, kzbg) / 1e6, rel=1e-9)
    assert region.mf_knm == pytest.approx(W_ULS * L**2 / 8 / 1e6, rel=1e-9)  # handbook wL^2/8


def test_heavy_dead_load_kd_by_o86_5_3_2_3():
    r = recheck(glulam(loads={"dead_kn_m": 6.0, "live_kn_m": 0.0, "snow_kn_m": 2.0}))
    pl = 6.0 + 4.9 * 0.130 * 0.456
    kd = max(0.65, 1 - 0.5 * math.log10(pl / 2.0))  # O86-19 5.3.2.3 (memory): 0.7513
    # 1.25D + 1.5S with KD 0.751 governs over 1.4D with KD 0.65 (10.86/0.751 > 8.81/0.65)
    region = r.bending[0]
    assert region.kd == pytest.approx(kd, rel=1e-12)
    assert region.fb_mpa == pytest.approx(30.6 * kd, rel=1e-12)
    assert r.shear.kd == pytest.approx(kd, rel=1e-12)
    assert r.shear.vr_kn == pytest.approx(0.9 * 2.0 * kd * 2 * B * D / 3 / 1000, rel=1e-9)


def test_dead_load_only_takes_permanent_kd_065():
    r = recheck(glulam(loads={"dead_kn_m": 4.0, "live_kn_m": 0.0, "snow_kn_m": 0.0}))
    assert r.bending[0].kd == 0.65  # O86-19 Table 5.1 (memory): permanent load
    assert r.bearing[0].qr_kn == pytest.approx(0.8 * 7.0 * 0.65 * B * 140 / 1000, rel=1e-9)


def test_two_equal_spans_middle_reaction_matches_pycba_and_handbook():
    r = recheck(glulam(spans_mm=[L, L], bearings=[{"lateral": True, "rotation": True, "length_mm": 140}] * 3))
    beam = BeamAnalysis([L, L], 1.0, [-1, 0, -1, 0, -1, 0], [[1, 1, W_ULS, 0], [2, 1, W_ULS, 0]])  # pycba oracle
    beam.analyze()
    pycba_r2 = abs(beam.beam_results.R[1])
    assert pycba_r2 == pytest.approx(10 * W_ULS * L / 8, rel=1e-6)  # handbook: 10wL/8
    assert r.bearing[1].qf_kn == pytest.approx(pycba_r2 / 1000, rel=1e-6)


def test_sawn_floor_joist_by_hand():
    r = recheck(sawn())
    s = BS * DS**2 / 6
    region = r.bending[0]
    assert region.kd == 1.0
    assert region.kl == 1.0  # d/b 6.18 <= 6.5 with decking (6.5.3.2, memory)
    # O86-19 6.5.3.1 (memory): Mr = 0.9 fb KD KH KSb KT S KZb KL = 0.9 x 11.8 x S x 1.1
    assert region.mr_knm == pytest.approx(0.9 * 11.8 * s * 1.1 / 1e6, rel=1e-9)  # 4.086 kN*m
    assert region.mf_knm == pytest.approx(W_ULS_SW * LS**2 / 8 / 1e6, rel=1e-9)
    # O86-19 6.5.4.1 (memory): Vr = 0.9 Fv 2A/3 KZv
    assert r.shear.vr_kn == pytest.approx(0.9 * 1.5 * 2 * BS * DS / 3 * 1.1 / 1000, rel=1e-9)
    assert r.shear.vf_kn == pytest.approx(W_ULS_SW * LS / 2 / 1000, rel=1e-9)
    # O86-19 6.5.6.2: Qr = 0.8 Fcp Ab KB KZcp; b/d < 1 so KZcp = 1; Ab = 38 x 89
    assert r.bearing[0].qr_kn == pytest.approx(0.8 * 5.3 * BS * 89 / 1000, rel=1e-9)
    # floor: L + S (live) against L/360 governs (NBC Table 9.4.3.1): 0.8/10 mm beats 1.09/20 and 0.29/10
    assert r.deflection.limit_mm == pytest.approx(LS / 360, rel=1e-9)
    assert (r.deflection.limit_ratio, r.deflection.clause) == (360.0, "NBC Table 9.4.3.1")
    assert r.deflection.delta_mm == pytest.approx(5 * 0.8 * LS**4 / (384 * 9500 * I_SW), rel=1e-6)


def test_glulam_roof_without_ceiling_takes_l_over_180_for_snow():
    # NBC Table 9.4.3.1 (memory): roof members with no ceiling L/180. With no dead load at all the L + S check
    # (use limit) and D + L + S (O86-19 5.4.2, also L/180) see the same load; the use limit is reported
    r = recheck(
        glulam(use="roof_no_ceiling", self_weight=False, loads={"dead_kn_m": 0.0, "live_kn_m": 0.0, "snow_kn_m": 5.0})
    )
    assert r.deflection.case == "L + S"
    assert r.deflection.limit_mm == pytest.approx(L / 180, rel=1e-9)
    assert r.deflection.delta_mm == pytest.approx(5 * 5.0 * L**4 / (384 * 12800 * I_GL), rel=1e-6)
    assert (r.deflection.limit_ratio, r.deflection.clause) == (180.0, "NBC Table 9.4.3.1")
    (limit,) = [t for t in r.deflection.trace if t.symbol == "limit"]
    # the Part 9 ratio is named as what it is when the building is designed to Part 4 (reference o86.md 6)
    assert "NBC Part 9 ratio" in limit.source
    assert "Part 4 sets no ratio" in limit.source


def test_long_term_dead_load_deflection_cites_o86_5_4_3():
    """Heavy dead load on a roof with no ceiling: D alone against L/360 (CSA O86-19 5.4.3, from memory) governs.

    The deflection is 5wL^4/384EI (handbook formula, uniformly loaded simple span), so each check's
    utilisation is proportional to w x ratio: long-term D 6 x 360 = 2160 beats D + S 6.5 x 180 = 1170
    (O86-19 5.4.2) and S 0.5 x 180 = 90 (NBC Table 9.4.3.1, roof without ceiling; both from memory).
    """
    r = recheck(
        glulam(use="roof_no_ceiling", self_weight=False, loads={"dead_kn_m": 6.0, "live_kn_m": 0.0, "snow_kn_m": 0.5})
    )
    assert r.deflection.case.startswith("D (long-term")
    assert (r.deflection.limit_ratio, r.deflection.clause) == (360.0, "CSA O86-19 5.4.3")
    assert r.deflection.delta_mm == pytest.approx(5 * 6.0 * L**4 / (384 * 12800 * I_GL), rel=1e-6)
    assert r.deflection.limit_mm == pytest.approx(L / 360, rel=1e-9)


@pytest.mark.parametrize(
    ("b_mm", "d_mm", "kzcp"),
    [
        # CSA O86-19 6.5.6.2.3 (from memory; reference o86.md section 5, the formula also in section 12's
        # independent transcription): r = b/d; KZcp = 1.0 + 0.15 (r - 1) for 1.0 < r < 2.0, 1.15 for r >= 2.0
        (89, 64, 1.0 + 0.15 * (89 / 64 - 1.0)),  # a 3x4 laid flat: r = 1.391, on the sloped part (1.0586)
        (89, 38, 1.15),  # a 2x4 laid flat: r = 2.342, at the cap
    ],
)
def test_flat_sawn_bearing_takes_kzcp_through_recheck(b_mm, d_mm, kzcp):
    """A flat sawn member (b/d > 1): the bearing resistance recheck() reports carries KZcp, by hand."""
    r = recheck(sawn(b_mm=b_mm, d_mm=d_mm, spans_mm=[1200]))
    for q in r.bearing:
        # O86-19 Table 5.1 (from memory): 1.25D + 1.5L is a standard-term combination, KD = 1.0; dry service
        # and untreated: KScp = KT = 1.0, so Fcp = fcp = 5.3 MPa (S-P-F No.1/No.2, O86-19 Table 6.4; reference
        # o86.md section 4.2, confirmed by the transcription of section 12). O86-19 6.5.6.2 (from memory):
        # Qr = 0.8 Fcp Ab KB KZcp with Ab = b x bearing length (89 mm) and KB = 1.0 at an end bearing.
        assert q.combination == "1.25D + 1.5L"
        assert q.qr_kn == pytest.approx(0.8 * 5.3 * b_mm * 89 * 1.0 * kzcp / 1000, rel=1e-12)
    assert kzcp > 1.0  # the case tells a dropped KZcp apart (Qr 5.9 % or 15 % lower)
