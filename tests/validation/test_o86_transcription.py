"""Table rows against an independent open transcription of the CSA O86-19 tables (single author).

As quoted in the project's reference notes (o86.md section 12, 2026-12-02): it agrees with every sawn
lumber strength row except Northern No.3, whose E05 it gives as 4000 MPa (ours was 4500); the KZb
rows, the sawn wet-service and treatment rows, the dressed sizes and L/180 (O86-19 5.4.2).
"""

import pytest

from core import tables
from core.models import Beam
from core.recheck import recheck

TRANSCRIPTION = "independent open transcription of O86-19 tables (single author)"


def test_northern_no3_e05_is_the_transcriptions_4000_mpa():
    row = tables.find("sawn_grades", species="Northern", grade="No.3")
    assert float(row["e05_mpa"]) == 4000.0
    assert row["status"] == "confirmed"
    assert row["confirmed_by"] == TRANSCRIPTION


@pytest.mark.parametrize(
    ("table", "expected"),
    [("sawn_grades", 12), ("kzb", 8), ("lumber_sizes", 12), ("service_factors", 2), ("treatment_factors", 4)],
)
def test_rows_the_transcription_confirms_are_marked_with_it(table, expected):
    rows = [r for r in tables.load(table).rows if r["confirmed_by"] == TRANSCRIPTION]
    assert len(rows) == expected
    assert all(r["status"] == "confirmed" for r in rows)


def test_total_specified_deflection_limit_is_l_over_180():
    assert tables.find("deflection_limits", use="total_specified")["ratio"] == "180"


def test_northern_no3_past_its_tier_uses_e05_4000_in_kl():
    # O86-19 6.5.3.2 / reference Q2: the glulam KL method with E05; a 38 x 286 Northern No.3 joist, no top
    # bracing, d/b 7.5 > 4: CK = sqrt(0.97 E05 / Fb) with E05 = 4000 MPa (transcription), Fb = 4.5 KD
    beam = Beam.model_validate(
        {
            "mark": "N-3",
            "material": "sawn",
            "species": "Northern",
            "grade": "No.3",
            "b_mm": 38,
            "d_mm": 286,
            "spans_mm": [3000],
            "bearings": [{"lateral": True, "rotation": True, "length_mm": 89}] * 2,
            "top_edge": {"braced_by": "none"},
            "loads": {"dead_kn_m": 0.2, "live_kn_m": 0.3, "snow_kn_m": 0.0},
            "use": "floor",
        }
    )
    region = recheck(beam).bending[0]
    assert region.ck == pytest.approx((0.97 * 4000 / region.fb_mpa) ** 0.5, rel=1e-9)
