"""The load cases a recheck tries and the support reactions (core.casetable), for the recheck sheet.

Checked against handbook beam formulas, against pycba 1.0.2 (an independent solver, PyPI) and against
the recheck's own governing cases, which the table must contain.
"""

import pytest

from core.casetable import case_table
from core.recheck import recheck
from tests.core.beams import glulam
from tests.validation.test_pycba_analysis import _pycba

GLULAM_KN_M3 = 4.9  # glulam self-weight, kN/m3 (from memory; the value core.member uses)


def test_simple_span_every_case_matches_the_handbook_formulas():
    """Simply supported span under a UDL: R = V = wL/2, M = wL²/8, no hogging (any beam handbook)."""
    beam = glulam(loads={"dead_kn_m": 2.0, "live_kn_m": 1.5, "snow_kn_m": 5.0})
    table = case_table(beam)
    span_m = 7.2
    assert table.parts == ["span 1"]
    assert len(table.cases) >= 3
    for row in table.cases:
        (w,) = row.w_factored_kn_m
        assert row.reactions_kn == pytest.approx([w * span_m / 2] * 2, rel=1e-9)
        assert row.v_max_kn == pytest.approx(w * span_m / 2, rel=1e-9)
        assert row.m_sagging_knm == pytest.approx(w * span_m**2 / 8, rel=1e-9)
        assert row.m_hogging_knm == pytest.approx(0.0, abs=1e-9)
    by_label = {r.combination: r for r in table.cases}
    dead = 2.0 + GLULAM_KN_M3 * 0.130 * 0.456
    # NBC 2020 Table 4.1.3.2.-A: case 1 is 1.4D; case 3's principal load is 1.5S on 1.25D
    assert by_label["1.4D"].w_factored_kn_m == pytest.approx([1.4 * dead], rel=1e-6)
    s3 = [r for r in table.cases if r.combination.startswith("1.25D + 1.5S")]
    assert s3
    assert s3[0].w_factored_kn_m[0] > 1.25 * dead + 1.5 * 5.0 - 1e-9
    # specified reactions by load type: wL/2 each
    for s in table.supports:
        assert s.dead_kn == pytest.approx(dead * span_m / 2, rel=1e-6)
        assert s.live_kn == pytest.approx(1.5 * span_m / 2, rel=1e-9)
        assert s.snow_kn == pytest.approx(5.0 * span_m / 2, rel=1e-9)
    assert table.self_weight_kn_m == pytest.approx(GLULAM_KN_M3 * 0.130 * 0.456, rel=1e-6)


def test_two_equal_spans_specified_reactions_match_the_handbook_coefficients():
    """Two equal continuous spans under a UDL: the handbook reaction coefficients (any beam handbook).

    Both spans loaded: end reactions 3/8 wL, middle 10/8 wL; one span loaded: its end 7/16 wL, so the
    largest live reaction at an end comes from loading that span alone.
    """
    beam = glulam(
        spans_mm=[6000, 6000],
        bearings=[{"lateral": True, "rotation": True, "length_mm": 140}] * 3,
        loads={"dead_kn_m": 2.0, "live_kn_m": 3.0, "snow_kn_m": 0.0},
    )
    table = case_table(beam)
    dead = 2.0 + GLULAM_KN_M3 * 0.130 * 0.456
    ends, middle = (table.supports[0], table.supports[2]), table.supports[1]
    for s in ends:
        assert s.dead_kn == pytest.approx(3 / 8 * dead * 6.0, rel=1e-6)
        assert s.live_kn == pytest.approx(7 / 16 * 3.0 * 6.0, rel=1e-9)
        assert s.snow_kn == 0.0
    assert middle.dead_kn == pytest.approx(10 / 8 * dead * 6.0, rel=1e-6)
    assert middle.live_kn == pytest.approx(10 / 8 * 3.0 * 6.0, rel=1e-9)
    assert [s.x_m for s in table.supports] == [0.0, 6.0, 12.0]


def test_continuous_beam_with_an_overhang_every_case_matches_pycba():
    beam = glulam(
        spans_mm=[5200, 7400, 4600],
        overhang_right_mm=1800,
        bearings=[{"lateral": True, "rotation": True, "length_mm": 140}] * 4,
        loads={"dead_kn_m": 1.2, "live_kn_m": 2.4, "snow_kn_m": 3.1},
    )
    table = case_table(beam)
    assert table.parts == ["span 1", "span 2", "span 3", "overhang right"]
    assert len(table.cases) > 30  # patterns of four parts, several combinations, split dead load
    for row in table.cases[::7]:
        ref = _pycba([5.2, 7.4, 4.6], 0.0, 1.8, row.w_factored_kn_m)
        assert row.reactions_kn == pytest.approx(list(ref.R), rel=1e-6, abs=1e-9), row.combination
        assert row.m_sagging_knm == pytest.approx(max(0.0, float(max(ref.results.M))), rel=2e-3, abs=1e-3)
        assert row.m_hogging_knm == pytest.approx(max(0.0, -float(min(ref.results.M))), rel=2e-3, abs=1e-3)
        # statics of the overhang: the moment over the last support is w a²/2 (hogging), whatever the spans carry
        assert row.m_hogging_knm >= row.w_factored_kn_m[3] * 1.8**2 / 2 - 1e-9


def test_the_table_holds_every_governing_case_of_the_recheck_with_its_reactions():
    """The checks' governing cases are rows of the table, with the same numbers (one source of cases)."""
    beam = glulam(
        spans_mm=[8000, 3000],
        bearings=[{"lateral": True, "rotation": True, "length_mm": 140}] * 3,
        loads={"dead_kn_m": 0.8, "live_kn_m": 4.0, "snow_kn_m": 0.0},
    )
    r = recheck(beam)
    table = case_table(beam)
    by_label = {row.combination: row for row in table.cases}
    assert len(by_label) == len(table.cases)  # one label per case: a check's governing case is found by it
    for j, check in enumerate(r.bearing):
        assert by_label[check.combination].reactions_kn[j] == pytest.approx(check.qf_kn, rel=1e-9)
        assert table.supports[j].factored_max_kn >= check.qf_kn - 1e-9
        if check.uplift_kn is not None:
            assert table.supports[j].factored_min_kn == pytest.approx(-check.uplift_kn, rel=1e-9)
    for region in r.bending:
        row = by_label[region.combination]
        extreme = row.m_sagging_knm if region.sign == "positive" else row.m_hogging_knm
        assert region.mf_knm <= extreme + 1e-9
    for s in table.supports:  # the case numbers named for the extremes hold them
        assert table.cases[s.factored_max_case - 1].reactions_kn[s.support - 1] == s.factored_max_kn
        assert table.cases[s.factored_min_case - 1].reactions_kn[s.support - 1] == s.factored_min_kn
    (sag_row,) = [row for row in table.cases if "M sag" in row.largest]
    assert sag_row.m_sagging_knm == max(row.m_sagging_knm for row in table.cases)
    for s in table.supports:
        (low_row,) = [row for row in table.cases if f"R{s.support}" in row.least]
        assert low_row.number == s.factored_min_case
