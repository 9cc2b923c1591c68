"""Checks that tell apart survivors of the s21 mutation run on main (bench/mutation_survivors.md).

Each expected value comes from outside the code under test; the source is named beside each check.
"""

import pytest

from core.recheck.deflection import deflection_patterns
from tests.core.beams import glulam, sawn


def test_deflection_patterns_are_all_loaded_checkerboards_and_each_span_alone():
    # common practice for the largest deflection of a continuous beam: the variable load on every span,
    # on alternate spans (both checkerboards) and on each span alone. Called uncached (``__wrapped__``):
    # the cache is warm in every test run, which would hide a fault in the body.
    patterns = deflection_patterns.__wrapped__
    assert set(patterns(1)) == {(True,)}
    t, f = True, False
    assert set(patterns(3)) == {(t, t, t), (t, f, t), (f, t, f), (t, f, f), (f, f, t)}
    assert len(patterns(3)) == 5  # (f, t, f) is both a checkerboard and span 2 alone: listed once
    assert patterns(2) == ((t, t), (t, f), (f, t))  # a fixed order: the worst case is found the same way
    alone = {tuple(i == k for i in range(4)) for k in range(4)}
    assert set(patterns(4)) == {(t, t, t, t), (t, f, t, f), (f, t, f, t)} | alone  # 7: no checkerboard is one span


def test_an_unknown_le_case_is_refused_with_the_cases_allowed():
    # contract 1 (ARCHITECTURE.md): bad input raises a clear error naming the field and the allowed values;
    # "auto" (the default, O86-19 Table 7.4 chosen from the beam) is always among them.
    with pytest.raises(ValueError, match=r"le_case = 'magic'; allowed: \[.*'auto'"):
        glulam(le_case="magic")


def _kl_line(beam):
    from core.recheck import recheck

    (region,) = recheck(beam).bending
    return next(t for t in region.trace if t.symbol == "KL")


def test_sawn_joist_under_decking_with_bridging_takes_the_bridging_tier_of_db():
    # CSA O86-19 6.5.3.2.1 (from memory; reference o86.md): sawn lumber takes KL = 1 up to d/b 6.5 with
    # the compression edge held by decking, and up to 7.5 with bridging at <= 8 d as well. A 38 x 260 joist
    # (d/b = 6.84) under fastened decking: with bridging at 1200 mm (<= 8 d = 2080 mm) it is inside the
    # 7.5 tier; without bridging the 6.5 tier does not cover it.
    bridged = _kl_line(sawn(d_mm=260, bridging_spacing_mm=1200))
    assert bridged.value == 1.0
    assert "6.5.3.2.1" in bridged.clause
    assert "<= 7.5" in bridged.source
    plain = _kl_line(sawn(d_mm=260))
    assert "<= 7.5" not in plain.source
    assert "6.5.3.2.1" not in plain.clause or "<= 6.5" not in plain.source
