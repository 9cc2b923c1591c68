"""Effective length per region (CSA O86-19 Table 7.4; reference o86.md 1.5 and 13).

Rules: 1.92 Lu is the conservative catch-all (limitstates' Table 7.4 value, reference Q1); memory rows
are never the default; a reviewer's row must fit (a cantilever row on a simple span is refused).
"""

import pytest

from tests.core.beams import glulam

UNBRACED_9M = {"spans_mm": [9000], "top_edge": {"braced_by": "none"}}


def _le_trace(region):
    return next(t for t in region.trace if t.symbol == "Le")


def test_simple_span_takes_the_simple_udl_row_and_says_why():
    from core.recheck import recheck

    region = recheck(glulam(**UNBRACED_9M)).bending[0]
    assert region.le_factor == pytest.approx(1.92)  # reference 1.5: simple span, UDL, 1.92 Lu (C2)
    le = _le_trace(region)
    # the row as Table 7.4 describes it (the data file's key "simple_udl" is not printed)
    assert le.source.startswith("row 'Simple span; uniformly distributed load': Le = 1.92 Lu")
    assert "simple span" in le.source
    assert le.status == "confirmed"


@pytest.mark.parametrize(
    ("le_case", "why"),
    [
        ("cantilever_udl", "cantilever"),  # issue 16: this row gave Mr 168.0 instead of 96.5 kN*m on a 9 m span
        # the reason names the row's load in words (CSA O86-19 Table 7.4 row descriptions, memory)
        ("simple_point_centre", "applies to point centre loading; the recheck carries uniform loads"),
        ("simple_end_moments", "applies to end moments loading; the recheck carries uniform loads"),
        ("simple_udl_braced", "intermediate lateral supports"),
    ],
)
def test_a_row_that_does_not_fit_is_refused_with_its_reason(le_case, why):
    with pytest.raises(ValueError, match=f"le_case = '{le_case}' does not fit this beam: .*{why}"):
        glulam(le_case=le_case, **UNBRACED_9M)


def test_simple_span_row_is_refused_on_a_continuous_beam():
    with pytest.raises(ValueError, match="simple span"):
        glulam(
            le_case="simple_udl",
            spans_mm=[6000, 6000],
            bearings=[{"lateral": True, "rotation": True, "length_mm": 140}] * 3,
        )


def test_cantilever_row_applies_only_to_the_overhang_region_with_its_memory_status():
    from core.recheck import recheck

    beam = glulam(spans_mm=[6000], overhang_right_mm=2500, le_case="cantilever_udl", top_edge={"braced_by": "none"})
    r = recheck(beam)
    cantilever = next(b for b in r.bending if b.region == "overhang right")
    span = next(b for b in r.bending if b.region == "span 1")
    assert cantilever.le_factor == pytest.approx(1.06)  # the memory row the reviewer chose
    le = _le_trace(cantilever)
    assert le.status == "memory"
    assert "chosen by the reviewer" in le.source
    assert span.le_factor == pytest.approx(1.92)
    assert "not applied here" in _le_trace(span).source


def test_default_never_picks_a_memory_row():
    from core.recheck import recheck

    beam = glulam(
        spans_mm=[6000, 4000],
        overhang_left_mm=2000,
        top_edge={"braced_by": "none"},
        bearings=[{"lateral": True, "rotation": True, "length_mm": 140}] * 3,
    )
    for region in recheck(beam).bending:
        if region.le_factor is not None:
            assert _le_trace(region).status == "confirmed"
