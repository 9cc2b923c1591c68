"""Behaviour of the member recheck: which clause applies where, and what it reports.

Expected numbers are from hand formulas of a handbook (wL^2/8) or from the limitstates oracle run
in the test; the rest are rules of the standard (from memory) or common practice, as marked.
"""

import pytest
from limitstates.design.csa.o86.c19 import glulam as ls

from core import recheck
from core.models import Beam
from tests.core.beams import glulam, sawn


def test_simple_span_mf_is_wl2_over_8_and_kl_matches_limitstates():
    r = recheck(glulam())
    region = r.bending[0]
    w = 1.25 * (2.0 + 4.9 * 0.130 * 0.456) + 1.5 * 5.0  # 1.25D + 1.5S, N/mm; self-weight 4.9 kN/m3
    assert region.mf_knm == pytest.approx(w * 7200**2 / 8 / 1e6)  # handbook wL^2/8
    assert region.le_mm == pytest.approx(1.92 * 2400)  # Table 7.4 catch-all
    assert region.kl == pytest.approx(ls.checkKL(ls.checkCb(4608, 456, 130), 12800, 30.6))  # oracle
    assert region.kzbg == pytest.approx(ls.checkKzbg(130, 456, 7200))
    assert r.status.value == "ok"


def test_missing_rotation_restraint_is_not_established_and_immediate():
    # ARCHITECTURE: capacity "not established", never computed as if restrained (O86-19 7.5.6.3.1)
    r = recheck(
        glulam(
            bearings=[
                {"lateral": True, "rotation": True, "length_mm": 140},
                {"lateral": True, "rotation": False, "length_mm": 140},
            ]
        )
    )
    assert r.status.value == "not_established"
    assert r.bending[0].kl is None
    assert r.bending[0].mr_knm is None
    f = r.findings[0]
    assert (f.code, f.priority.value) == ("bearing_restraint_missing", "immediate")


def test_missing_restraint_waived_when_db_at_most_2_5():
    # O86-19 7.5.6.3.2 (memory): 130 x 304: d/b = 2.34
    r = recheck(glulam(d_mm=304, bearings=[{"lateral": False, "rotation": False, "length_mm": 140}] * 2))
    assert not [f for f in r.findings if f.code == "bearing_restraint_missing"]
    assert r.bending[0].kl == 1.0


def test_slenderness_over_50_not_permitted():
    r = recheck(glulam(b_mm=80, d_mm=912, top_edge={"braced_by": "none"}, spans_mm=[14000]))
    assert r.status.value == "not_permitted"
    assert r.bending[0].cb > 50
    assert r.bending[0].kl is None
    assert r.findings[0].code == "slenderness_exceeds_limit"


def test_two_span_hogging_zone_uses_bottom_edge_and_negative_strength():
    # reference 1.1 / 1.4: negative moment -> bottom edge in compression, fb negative (23.0 for 24f-E)
    r = recheck(glulam(spans_mm=[7200, 7200], bearings=[{"lateral": True, "rotation": True, "length_mm": 140}] * 3))
    neg = [b for b in r.bending if b.sign == "negative"]
    assert neg
    assert neg[0].region == "support 2"
    assert "bottom edge" in neg[0].compression_edge
    assert neg[0].fb_mpa == pytest.approx(23.0 * neg[0].kd)
    # reference o86.md 13: nothing braces the bottom edge, so Lu runs support to support
    assert neg[0].lu_mm == pytest.approx(7200)


def test_layup_inverted_uses_weaker_face_and_flags():
    up = recheck(glulam())
    down = recheck(glulam(top_stamp="down"))
    assert down.bending[0].fb_mpa == pytest.approx(23.0)  # fb negative of 24f-E (memory table)
    assert down.bending[0].mr_knm < up.bending[0].mr_knm
    assert "layup_inverted" in [f.code for f in down.findings]


def test_unfastened_purlins_leave_top_edge_unbraced():
    r = recheck(glulam(top_edge={"braced_by": "purlins", "spacing_mm": 2400, "fastened": False}))
    assert r.bending[0].lu_mm == 7200
    assert "compression_edge_unbraced" in [f.code for f in r.findings]


def test_sawn_joist_with_decking_takes_kl_one_and_kzb():
    # O86-19 6.5.3.2 (memory): decking held: d/b 6.2 <= 6.5 -> KL = 1; KZb 38x235 = 1.1 (Table 6.13, memory)
    r = recheck(sawn())
    region = r.bending[0]
    assert region.kl == 1.0
    assert region.kzb == pytest.approx(1.1)
    assert "kzb" in r.to_json_dict()["bending"][0]
    assert "kzbg" not in r.to_json_dict()["bending"][0]


def test_sawn_joist_without_decking_uses_kl_method():
    r = recheck(sawn(top_edge={"braced_by": "decking", "fastened": False}))
    assert r.bending[0].kl is not None
    assert r.bending[0].kl < 1.0


def test_wet_service_reduces_glulam_fb_by_ksb():
    # O86-19 Table 7.2 (memory): KSb = 0.80 for glulam in wet service
    dry, wet = recheck(glulam()), recheck(glulam(service="wet"))
    assert wet.bending[0].fb_mpa == pytest.approx(0.80 * dry.bending[0].fb_mpa)


def test_overhang_region_named_and_negative():
    r = recheck(glulam(overhang_right_mm=1800))
    names = [b.region for b in r.bending]
    assert "overhang right" in names


def test_substitution_of_smaller_standard_glulam():
    # CWC standard widths: 80 is the next width down from 130 (field practice 4b: a substitution)
    r = recheck(glulam(b_mm=80, d_mm=456, specified={"b_mm": 130, "d_mm": 456, "species": "D.Fir-L", "grade": "24f-E"}))
    assert "substitution" in [f.code for f in r.findings]


def test_undersize_beyond_tolerance():
    r = recheck(glulam(b_mm=126, specified={"b_mm": 130, "d_mm": 456, "species": "D.Fir-L", "grade": "24f-E"}))
    assert "undersize" in [f.code for f in r.findings]


def test_kd_standard_term_formula_with_heavy_dead_load():
    # O86-19 5.3.2.3 (memory): KD = 1 - 0.5 log10(PL/PS) when PL > PS
    import math

    r = recheck(glulam(loads={"dead_kn_m": 8.0, "live_kn_m": 0.0, "snow_kn_m": 2.0}, self_weight=False))
    gov = r.bending[0]
    assert gov.combination == "1.25D + 1.5S"  # 13.0/0.699 = 18.6 beats 1.4D: 11.2/0.65 = 17.2
    assert gov.kd == pytest.approx(1 - 0.5 * math.log10(8.0 / 2.0))


def test_every_contract_key_present():
    data = recheck(glulam()).to_json_dict()
    for key in ("mark", "status", "bending", "shear", "bearing", "deflection", "findings"):
        assert key in data
    for key in (
        "region",
        "sign",
        "lu_mm",
        "le_mm",
        "le_factor",
        "cb",
        "ck",
        "kl",
        "kzbg",
        "fb_mpa",
        "kd",
        "mr_knm",
        "mf_knm",
        "utilisation",
        "combination",
        "clause",
    ):
        assert key in data["bending"][0]
    assert set(data["shear"]) >= {"vr_kn", "vf_kn", "utilisation"}
    assert set(data["bearing"][0]) >= {"support", "qr_kn", "qf_kn", "utilisation"}
    assert set(data["deflection"]) >= {"delta_mm", "limit_mm", "utilisation"}


def _without(builder, *keys, **over):
    data = builder(**over).model_dump(mode="json", exclude_none=True)
    for key in keys:
        parts = key.split(".")
        holder = data
        for part in parts[:-1]:
            holder = holder[part]
        holder.pop(parts[-1], None)
    return Beam.model_validate(data)


def test_unrecorded_top_stamp_takes_the_weaker_face():
    # reference 1.1 / Table 7.3 note: an unbalanced layup with the TOP stamp not seen takes fb negative
    r = recheck(_without(glulam, "top_stamp"))
    assert r.bending[0].fb_mpa == pytest.approx(23.0)  # 24f-E fb negative (memory table), KD = 1
    assert any(f.code == "layup_inverted" for f in r.findings)


def test_unrecorded_fastening_treats_the_top_edge_as_unbraced():
    r = recheck(_without(glulam, "top_edge.fastened"))
    assert r.bending[0].lu_mm == pytest.approx(7200)
    assert any(f.code == "input_assumed" and "fastened" in f.message for f in r.findings)
    braced = recheck(glulam())
    assert braced.bending[0].lu_mm == pytest.approx(2400)


def test_sawn_past_its_tier_prints_one_lu_the_spacing_of_rotation_restraints():
    # reference o86.md section 13: past its d/b tier, sawn lumber takes the glulam KL method with Lu the
    # spacing of the points that restrain rotation (here the bearings, 3900 mm apart: nothing between);
    # the sheet printed a second "Lu 3900 mm" line for the top edge before
    from core.recheck.bending import LU_RULE_SAWN

    beam = sawn(spans_mm=[3900], top_edge={"braced_by": "decking", "fastened": False})
    (lu,) = [t for t in recheck(beam).bending[0].trace if t.symbol == "Lu"]
    assert lu.value == 3900
    assert lu.row == LU_RULE_SAWN


def test_sawn_fb_trace_cites_the_sawn_clause_and_decked_lu_is_named():
    region = recheck(sawn()).bending[0]
    fb = next(t for t in region.trace if t.symbol == "Fb")
    assert fb.clause.startswith("CSA O86-19 6.5.3")
    # within its d/b tier a sawn member needs no Lu (O86-19 6.5.3.2.1: KL = 1): the KL line names the decking
    # that holds the edge, and no Lu line is printed that the check does not use (one appeared twice on a sheet)
    assert [t for t in region.trace if t.symbol == "Lu"] == []
    (kl,) = [t for t in region.trace if t.symbol == "KL"]
    assert kl.value == 1.0
    assert "held by decking" in kl.source
