"""Exact boundary values of the lateral stability rules (closed intervals, STYLE.md).

Expected values follow from the standard's three KL formulas (O86-19 7.5.6.4.4, from memory):
2/3 at the top of regime (b) and 0.65/0.97 just into regime (c); the jump is the standard's.
"""

import pytest

from core.clauses.outcomes import NotPermitted
from core.clauses.stability import (
    critical_slenderness_ck,
    glulam_db_waives_stability,
    lateral_stability_kl,
)

E, FB = 12800.0, 30.6
CK = critical_slenderness_ck(E, 1.0, 1.0, FB)


def kl(cb):
    out = lateral_stability_kl(cb, CK, E, 1.0, 1.0, FB)
    return out if isinstance(out, NotPermitted) else out.kl


def test_cb_exactly_10_is_regime_a():
    assert kl(10.0) == 1.0


def test_cb_just_above_10_is_regime_b():
    assert kl(10.0 + 1e-9) == pytest.approx(1 - (10 / CK) ** 4 / 3)


def test_cb_exactly_ck_is_regime_b_two_thirds():
    assert kl(CK) == pytest.approx(2 / 3, rel=1e-12)


def test_cb_just_above_ck_is_regime_c():
    assert kl(CK * (1 + 1e-12)) == pytest.approx(0.65 / 0.97, rel=1e-9)


def test_cb_exactly_50_is_permitted():
    value = kl(50.0)
    assert not isinstance(value, NotPermitted)
    assert value == pytest.approx(0.65 * E / (2500 * FB))


def test_cb_above_50_not_permitted():
    value = kl(50.0 + 1e-9)
    assert isinstance(value, NotPermitted)
    assert "not permitted" in str(value)


def test_db_exactly_2_5_waives():
    assert glulam_db_waives_stability(2.5 * 130, 130)
    assert not glulam_db_waives_stability(2.5 * 130 + 1e-9, 130)
