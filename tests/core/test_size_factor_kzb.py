"""KZb for sawn lumber, every thickness column (CSA O86-19 Table 6.13).

Expected values: the transcription of Table 6.13 in ../shared/reference/o86.md section 2.1, whose 38-64
and 89-102 mm columns an independent open transcription of O86-19 confirms (reference section 12). The
89-102 mm column was reached by no test before (a renamed column survived the mutation run).
"""

import pytest

from core.member import size_factor_kzb


@pytest.mark.parametrize(
    ("b_mm", "d_mm", "expected"),
    [
        (38, 89, 1.7),  # 2x4
        (38, 235, 1.1),  # 2x10
        (64, 286, 1.0),  # 3x12
        (89, 89, 1.7),  # 4x4
        (89, 140, 1.5),  # 4x6
        (89, 184, 1.3),  # 4x8
        (89, 235, 1.2),  # 4x10
        (89, 286, 1.1),  # 4x12
        (102, 343, 1.0),  # thickest of the 89-102 column
        (89, 387, 0.9),  # 4x16
        (140, 241, 1.2),  # >= 114 mm column
        (140, 387, 0.9),
    ],
)
def test_kzb_table_6_13(b_mm, d_mm, expected):
    value, trace = size_factor_kzb(b_mm, d_mm)
    assert value == pytest.approx(expected)
    assert trace.clause == "CSA O86-19 Table 6.13"
    assert trace.symbol == "KZb"


def test_kzb_refuses_a_depth_past_the_table():
    with pytest.raises(ValueError, match=r"d_mm = 200000 is outside the KZb table"):
        size_factor_kzb(89, 200_000)
