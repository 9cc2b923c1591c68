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
    assert lateral_stability_kl(cb, ck, e, 1.0, 1.0, fb) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    "b,d,fb,kzbg,kl", [(130, 456, 30.6, 1.05, 0.97), (365, 836, 25.6, 0.91, 1.0), (175, 608, 25.6, 1.1, 0.6)]
)
def test_glulam_mr_lesser_of_matches_checkGlulamMr(b, d, fb, kzbg, kl):
    # source: limitstates checkGlulamMr returns min(Mr0*kzbg*kx, Mr0*kL*kx) in N*m (O86-19 7.5.6.5.1)
    s = b * d * d / 6
    assert glulam_mr(fb, s, 1.0, kzbg, kl) == pytest.approx(1000 * ls.checkGlulamMr(s, fb, kzbg, kl), rel=1e-12)


@pytest.mark.parametrize("b,d,fv", [(130, 456, 2.0), (365, 836, 2.0), (80, 228, 1.75)])
def test_glulam_vr_matches_checkGlulamShearSimple(b, d, fv):
    # source: limitstates checkGlulamShearSimple (O86-19 7.5.7.3(b))
    assert glulam_vr(fv, b * d) == pytest.approx(ls.checkGlulamShearSimple(b * d, fv), rel=1e-12)


@pytest.mark.parametrize("b,d,length", [(365, 836, 12_000), (265, 1216, 18_000)])
def test_glulam_wr_matches_checkGlulamWr(b, d, length):
    # source: limitstates checkGlulamWr (O86-19 7.5.7.3(a)), CV = 3.69
    z = glulam_volume_m3(b, d, length)
    assert glulam_wr(2.0, b * d, 3.69, z) == pytest.approx(ls.checkGlulamWr(b * d, 2.0, length, 3.69), rel=1e-12)


def test_ck_matches_limitstates_formula_for_straight_members():
    # source: limitstates checkKL computes Ck = sqrt(0.97 E kse kt / Fb) (KX = 1 for straight members)
    assert critical_slenderness_ck(12800, 1, 1, 30.6) == pytest.approx(math.sqrt(0.97 * 12800 / 30.6))
