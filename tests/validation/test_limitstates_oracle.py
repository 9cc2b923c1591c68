"""Checks against the open-source library ``limitstates`` 0.3.1 (PyPI), run in the test as an oracle.

limitstates implements CSA O86-19 glulam clauses. Its known faults (reference section 11: strict
inequalities at CB = 10, CK and 50; no KX in CK; unused fb negative) keep these comparisons away
from the exact regime boundaries and to straight members. Tolerance: 1e-9 relative (same algebra).
"""

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from limitstates.design.csa.o86.c19 import glulam as ls

from core.clauses.bending import glulam_mr, size_factor_kzbg
from core.clauses.shear import glulam_volume_m3, glulam_vr, glulam_wr
from core.clauses.stability import critical_slenderness_ck, lateral_stability_kl, slenderness_cb

widths = st.floats(min_value=80, max_value=365)
depths = st.floats(min_value=114, max_value=2128)
lengths = st.floats(min_value=500, max_value=40_000)


@settings(max_examples=200, deadline=None)
@given(le=lengths, d=depths, b=widths)
def test_cb_matches_limitstates_checkCb(le, d, b):
    # source: limitstates checkCb (O86-19 7.5.6.4.3)
    assert slenderness_cb(le, d, b) == pytest.approx(ls.checkCb(le, d, b), rel=1e-12)


@settings(max_examples=200, deadline=None)
@given(b=widths, d=depths, length=lengths)
def test_kzbg_matches_limitstates_checkKzbg(b, d, length):
    # source: limitstates checkKzbg (O86-19 7.5.6.5, cap 1.3)
    assert size_factor_kzbg(b, d, length) == pytest.approx(ls.checkKzbg(b, d, length), rel=1e-12)


@settings(max_examples=300, deadline=None)
@given(
    cb=st.floats(min_value=0.5, max_value=49.5),
    e=st.sampled_from([10300.0, 12400.0, 12800.0]),
    fb=st.floats(min_value=10.0, max_value=35.0),
)
def test_kl_matches_limitstates_away_from_boundaries(cb, e, fb):
    # source: limitstates checkKL (O86-19 7.5.6.4.4); it returns -1 at CB = 10, CK, 50 exactly (fault L1)
    ck = critical_slenderness_ck(e, 1.0, 1.0, fb)
    for boundary in (10.0, ck, 50.0):
        if abs(cb - boundary) < 1e-6:
            return
    expected = ls.checkKL(cb, e, fb)
    assert lateral_stability_kl(cb, ck, e, 1.0, 1.0, fb).kl == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    ("b", "d", "fb", "kzbg", "kl"),
    [(130, 456, 30.6, 1.05, 0.97), (365, 836, 25.6, 0.91, 1.0), (175, 608, 25.6, 1.1, 0.6)],
)
def test_glulam_mr_lesser_of_matches_checkGlulamMr(b, d, fb, kzbg, kl):
    # source: limitstates checkGlulamMr returns min(Mr0*kzbg*kx, Mr0*kL*kx) in N*m (O86-19 7.5.6.5.1)
    s = b * d * d / 6
    assert glulam_mr(fb, s, 1.0, kzbg, kl) == pytest.approx(1000 * ls.checkGlulamMr(s, fb, kzbg, kl), rel=1e-12)


@pytest.mark.parametrize(("b", "d", "fv"), [(130, 456, 2.0), (365, 836, 2.0), (80, 228, 1.75)])
def test_glulam_vr_matches_checkGlulamShearSimple(b, d, fv):
    # source: limitstates checkGlulamShearSimple (O86-19 7.5.7.3(b))
    assert glulam_vr(fv, b * d) == pytest.approx(ls.checkGlulamShearSimple(b * d, fv), rel=1e-12)


@pytest.mark.parametrize(("b", "d", "length"), [(365, 836, 12_000), (265, 1216, 18_000)])
def test_glulam_wr_matches_checkGlulamWr(b, d, length):
    # source: limitstates checkGlulamWr (O86-19 7.5.7.3(a)), CV = 3.69
    z = glulam_volume_m3(b, d, length)
    assert glulam_wr(2.0, b * d, 3.69, z) == pytest.approx(ls.checkGlulamWr(b * d, 2.0, length, 3.69), rel=1e-12)


def test_ck_matches_limitstates_formula_for_straight_members():
    # source: limitstates checkKL computes Ck = sqrt(0.97 E kse kt / Fb) (KX = 1 for straight members)
    assert critical_slenderness_ck(12800, 1, 1, 30.6) == pytest.approx(math.sqrt(0.97 * 12800 / 30.6))


# --- Whole-beam KL against limitstates with the Lu the conservative rules give (issue 16) -----------


def _beam(**over):
    from core.models import Beam

    data = {
        "mark": "K-1",
        "material": "glulam",
        "species": "D.Fir-L",
        "grade": "24f-E",
        "b_mm": 130,
        "d_mm": 456,
        "spans_mm": [7200, 7200],
        "bearings": [{"lateral": True, "rotation": True, "length_mm": 140}] * 3,
        "top_edge": {"braced_by": "purlins", "spacing_mm": 2400, "fastened": True},
        "loads": {"dead_kn_m": 2.0, "live_kn_m": 0.0, "snow_kn_m": 5.0},
        "top_stamp": "up",
        "use": "roof_no_ceiling",
    }
    data.update(over)
    return Beam.model_validate(data)


def test_negative_region_lu_is_the_distance_between_bottom_edge_restraints():
    # reference o86.md 13 (Q3 closed): nothing braces the bottom edge, so Lu runs support to support
    # (7200 mm), not to the point of zero moment; Le = 1.92 Lu. KL from limitstates checkCb/checkKL
    # with E = 12800 MPa (24f-E) and the region's factored Fb.
    from core.recheck import recheck

    r = recheck(_beam())
    neg = next(b for b in r.bending if b.region == "support 2")
    assert neg.lu_mm == pytest.approx(7200)
    expected = ls.checkKL(ls.checkCb(1.92 * 7200, 456, 130), 12800, neg.fb_mpa)
    assert neg.kl == pytest.approx(expected, rel=1e-9)


def test_zero_moment_point_as_brace_is_an_option_named_in_the_trace():
    # the option splits the hogging zone at the restrained support: under 1.4D on both spans the zero-moment
    # points sit 0.25 L either side of support 2 (handbook two-span coefficients), so Lu = 1800 mm.
    from core.recheck import recheck

    r = recheck(_beam(loads={"dead_kn_m": 2.0, "live_kn_m": 0.0, "snow_kn_m": 0.0}, negative_lu="zero_moment_point"))
    neg = next(b for b in r.bending if b.region == "support 2")
    assert neg.lu_mm == pytest.approx(0.25 * 7200, rel=1e-3)
    assert any(t.symbol == "option" and "zero-moment" in str(t.value) for t in neg.trace)
    assert neg.kl == pytest.approx(ls.checkKL(ls.checkCb(1.92 * neg.lu_mm, 456, 130), 12800, neg.fb_mpa), rel=1e-9)


def _joist(**over):
    from core.models import Beam

    data = {
        "mark": "J-2",
        "material": "sawn",
        "species": "S-P-F",
        "grade": "No.1/No.2",
        "b_mm": 38,
        "d_mm": 337,
        "spans_mm": [4000],
        "bearings": [{"lateral": True, "rotation": True, "length_mm": 89}] * 2,
        "top_edge": {"braced_by": "decking", "fastened": True},
        "loads": {"dead_kn_m": 0.5, "live_kn_m": 1.2, "snow_kn_m": 0.0},
        "use": "floor",
    }
    data.update(over)
    return Beam.model_validate(data)


def _e05(species, grade):
    from core import tables

    return float(tables.find("sawn_grades", species=species, grade=grade)["e05_mpa"])  # table data, not formula


@pytest.mark.parametrize(
    "over",
    [
        {},  # decking only: d/b 8.9 > 6.5 tier
        {"bottom_edge": {"braced_by": "braces", "spacing_mm": 4000}},  # braces 4 m apart: not "both edges held"
    ],
)
def test_sawn_past_its_tier_uses_glulam_method_with_lu_between_rotation_restraints(over):
    # reference o86.md 2.2 tiers and 13: past 6.5 with decking (no bridging), the glulam method of 7.5.6.4
    # with E05 and Lu = distance between bearings (4000 mm), never Lu = 0. KL from limitstates checkKL.
    from core.recheck import recheck

    region = recheck(_joist(**over)).bending[0]
    assert region.lu_mm == pytest.approx(4000)
    expected = ls.checkKL(ls.checkCb(1.92 * 4000, 337, 38), _e05("S-P-F", "No.1/No.2"), region.fb_mpa)
    assert region.kl == pytest.approx(expected, rel=1e-9)
    assert region.kl < 1.0


def test_sawn_with_both_edges_held_at_610_takes_kl_one():
    # reference 2.2: d/b <= 9 with both edges held in line -> KL = 1; o86.md 13: bottom edge at <= 610 mm
    from core.recheck import recheck

    region = recheck(_joist(bottom_edge={"braced_by": "braces", "spacing_mm": 600})).bending[0]
    assert region.kl == 1.0


def test_not_established_region_reports_the_restrained_upper_bound_and_its_overstress():
    # issue 16: a missing rotation restraint hid a failure with KL = 1. Decking fastened, so KL = 1 if restrained;
    # Mr from limitstates checkGlulamMr(S, Fb, KZbg from checkKzbg, KL = 1) in N*m; Mf = wL^2/8 (handbook) with
    # w = 1.25 x 5 + 1.5 x 15 = 28.75 kN/m on 7.2 m: 186.3 kN*m.
    from core.recheck import recheck

    bearings = [
        {"lateral": True, "rotation": True, "length_mm": 300},
        {"lateral": True, "rotation": False, "length_mm": 300},
    ]
    beam = _beam(
        spans_mm=[7200],
        bearings=bearings,
        top_edge={"braced_by": "decking", "fastened": True},
        loads={"dead_kn_m": 5.0, "live_kn_m": 0.0, "snow_kn_m": 15.0},
        self_weight=False,
    )
    r = recheck(beam)
    region = r.bending[0]
    assert region.outcome == "not_established"
    assert region.mr_knm is None
    assert region.kl is None
    s = 130 * 456**2 / 6
    expected = ls.checkGlulamMr(s, 30.6, ls.checkKzbg(130, 456, 7200), 1.0) / 1000
    assert region.mr_if_restrained_knm == pytest.approx(expected, rel=1e-9)
    assert region.mf_knm == pytest.approx(28.75 * 7.2**2 / 8, rel=1e-9)
    assert region.utilisation_if_restrained == pytest.approx(28.75 * 7.2**2 / 8 / expected, rel=1e-9)
    over = [f for f in r.findings if f.code == "bending_overstress"]
    assert over
    assert "real capacity is lower" in over[0].message
    assert over[0].priority.value == "immediate"
    assert r.status.value == "not_established"
