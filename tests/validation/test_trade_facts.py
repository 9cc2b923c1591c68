"""Facts of the trade about CSA O86-19 lateral stability.

Common practice, from memory; the standard's text was not available to check them: the
d/b <= 2.5 waiver, CB <= 10 gives KL = 1, CB above 50 is not permitted, and 1.92 Lu is the
conservative "any loading" effective length.
"""

import pytest

from core import tables
from core.clauses.outcomes import NotPermitted
from core.clauses.stability import glulam_db_waives_stability, lateral_stability_kl


def test_db_of_2_5_or_less_waives_lateral_stability():
    # common practice (O86-19 7.5.6.3.2, from memory): d/b <= 2.5 -> KL = 1, no bearing restraint needed
    assert glulam_db_waives_stability(325, 130)
    assert not glulam_db_waives_stability(326, 130)


def test_cb_up_to_10_gives_kl_of_one():
    # common practice (O86-19 7.5.6.4.4(a), from memory)
    assert lateral_stability_kl(9.99, 20, 12800, 1, 1, 30.6).kl == 1.0


def test_cb_above_50_is_not_permitted():
    # common practice (O86-19 7.5.6.4.4, from memory): a typed outcome, never a number
    assert isinstance(lateral_stability_kl(50.01, 20, 12800, 1, 1, 30.6), NotPermitted)


def test_any_loading_effective_length_is_1_92_lu():
    # common practice and limitstates' catch-all (O86-19 Table 7.4): Le = 1.92 Lu
    row = tables.find("effective_length", le_case="any")
    assert float(row["factor"]) == pytest.approx(1.92)
    assert row["multiplies"] == "lu"
