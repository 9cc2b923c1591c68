"""The rest of core (loads, member factors, analysis, findings, remedies, check lines) against outside values.

Sources, named beside each check: NBC 2020 Table 4.1.3.2.-A load combinations; CSA O86-19 clauses and
tables (5.3.2 KD, Table 6.10 wet-service factors, Table 6.11 treatment factor, 7.5.7.2 glulam shear,
6.5.3.2.1 lateral stability of lumber; table values from memory unless the data file says confirmed);
handbook beam formulas (simple span M = wL^2/8, V = wL/2; cantilever M = wa^2/2); mirror symmetry of
a statically loaded beam (mechanics). Beams are invented inputs.
"""

import math
import re

import pytest

from core.kinds import FindingCode, MomentSign, Outcome
from core.models import Beam
from core.recheck import recheck
from core.remedies import apply_change, remedies
from core.results import CheckKind, check_lines
from tests.core.beams import glulam, sawn

R = {"lateral": True, "rotation": True, "length_mm": 140}
DECKED = {"braced_by": "decking", "fastened": True}
B, D = 130.0, 456.0


# -- loads: NBC Table 4.1.3.2.-A with live and snow together -------------------------------------------
@pytest.mark.parametrize(
    ("dead", "live", "snow", "governs", "w_uls"),
    [
        # case 2 with companion snow: 1.25D + 1.5L + 0.5S = 2.5 + 6.0 + 1.5 = 10.0 kN/m (case 3: 9.0)
        (2.0, 4.0, 3.0, "1.25D + 1.5L + 0.5S", 10.0),
        # case 3 with companion live: 1.25D + 1.5S + 0.5L = 2.5 + 7.5 + 1.0 = 11.0 (case 2: 2.5 + 3.0 + 2.5 = 8.0)
        (2.0, 2.0, 5.0, "1.25D + 1.5S + 0.5L", 11.0),
        # live only: the companion term vanishes and the case is named for what is present (case 2)
        (2.0, 4.0, 0.0, "1.25D + 1.5L", 8.5),
        # snow only (case 3)
        (2.0, 0.0, 4.0, "1.25D + 1.5S", 8.5),
        # dead only (case 1)
        (5.0, 0.0, 0.0, "1.4D", 7.0),
    ],
)
def test_governing_combination_and_moment_by_nbc_table(dead, live, snow, governs, w_uls):
    loads = {"dead_kn_m": dead, "live_kn_m": live, "snow_kn_m": snow}
    region = recheck(glulam(self_weight=False, loads=loads, top_edge=DECKED)).bending[0]
    assert region.mf_knm == pytest.approx(w_uls * 7.2**2 / 8, rel=1e-9)  # handbook wL^2/8, kN·m
    assert region.combination == governs


@pytest.mark.parametrize(("dead", "live", "snow"), [(6.0, 2.0, 1.0), (6.0, 1.0, 3.0), (3.0, 2.5, 2.5), (8.0, 0.5, 4.0)])
def test_governing_utilisation_weighs_each_combination_by_its_kd(dead, live, snow):
    # every NBC Table 4.1.3.2.-A case with and without its companion; O86-19 5.3.2 (memory): 1.4D takes the
    # permanent KD 0.65; the others KD = 1 - 0.5 log10(PL/PS) >= 0.65 when PL > PS, else 1.0, with PS the
    # specified principal + 0.5 companion. The governing case has the largest w/KD (Mr is proportional to KD).
    def kd(ps):
        return 1.0 if dead <= ps else max(0.65, 1 - 0.5 * math.log10(dead / ps))

    cases = {"1.4D": (1.4 * dead, 0.65)}
    if live > 0:
        cases["1.25D + 1.5L"] = (1.25 * dead + 1.5 * live, kd(live))
    if snow > 0:
        cases["1.25D + 1.5S"] = (1.25 * dead + 1.5 * snow, kd(snow))
    if live > 0 and snow > 0:
        cases["1.25D + 1.5L + 0.5S"] = (1.25 * dead + 1.5 * live + 0.5 * snow, kd(live + 0.5 * snow))
        cases["1.25D + 1.5S + 0.5L"] = (1.25 * dead + 1.5 * snow + 0.5 * live, kd(snow + 0.5 * live))
    name = max(cases, key=lambda k: cases[k][0] / cases[k][1])
    w, kd_expected = cases[name]
    loads = {"dead_kn_m": dead, "live_kn_m": live, "snow_kn_m": snow}
    region = recheck(glulam(self_weight=False, loads=loads, top_edge=DECKED)).bending[0]
    assert region.combination == name
    assert region.kd == pytest.approx(kd_expected, rel=1e-9)
    assert region.mf_knm == pytest.approx(w * 7.2**2 / 8, rel=1e-9)  # handbook wL^2/8


# -- member factors: wet service and incised lumber ------------------------------------------------------
def test_wet_service_sawn_factors_by_o86_table_6_10():
    # Table 6.10 (memory; the data file marks the rows confirmed), lumber <= 89 mm thick: KSb 0.84, KSv 0.96,
    # KScp 0.67 (bearing), KSE 0.94. Same loads, so KD is the same in both rechecks.
    dry, wet = recheck(sawn()), recheck(sawn(service="wet"))
    assert wet.shear.vr_kn / dry.shear.vr_kn == pytest.approx(0.96, rel=1e-9)
    assert wet.bearing[0].qr_kn / dry.bearing[0].qr_kn == pytest.approx(0.67, rel=1e-9)
    assert wet.bending[0].fb_mpa / dry.bending[0].fb_mpa == pytest.approx(0.84, rel=1e-9)  # KL 1 in both
    assert wet.deflection.delta_mm / dry.deflection.delta_mm == pytest.approx(1 / 0.94, rel=1e-9)


def test_incised_lumber_treatment_factor_by_o86_table_6_11():
    # Table 6.11 (memory; confirmed in the data file), incised, dry service: KT 0.75 on strengths, 0.90 on E
    plain, incised = recheck(sawn()), recheck(sawn(treatment="incised"))
    assert incised.shear.vr_kn / plain.shear.vr_kn == pytest.approx(0.75, rel=1e-9)
    assert incised.bearing[0].qr_kn / plain.bearing[0].qr_kn == pytest.approx(0.75, rel=1e-9)
    assert incised.bending[0].fb_mpa / plain.bending[0].fb_mpa == pytest.approx(0.75, rel=1e-9)
    assert incised.deflection.delta_mm / plain.deflection.delta_mm == pytest.approx(1 / 0.90, rel=1e-9)


def test_glulam_grade_is_read_for_its_own_species():
    # O86-19 Table 7.3 (memory): Spruce-Pine 20f-EX fb 25.6 MPa... E 10 300 MPa against D.Fir-L 20f-EX E 12 400 MPa
    fir = recheck(glulam(grade="20f-EX", self_weight=False))
    spruce = recheck(glulam(species="Spruce-Pine", grade="20f-EX", self_weight=False))
    assert spruce.deflection.delta_mm / fir.deflection.delta_mm == pytest.approx(12400 / 10300, rel=1e-9)


# -- analysis: a mirrored beam gives the mirrored answer (mechanics) ------------------------------------
def test_left_and_right_overhangs_are_mirror_images():
    right = recheck(glulam(spans_mm=[6000], overhang_right_mm=2000))
    left = recheck(glulam(spans_mm=[6000], overhang_left_mm=2000))
    total = 8000.0
    by_x = sorted(left.bending, key=lambda b: b.x_start_mm)
    mirrored = sorted(right.bending, key=lambda b: -b.x_end_mm)
    assert [b.sign for b in by_x] == [b.sign for b in mirrored]
    for a, b in zip(by_x, mirrored, strict=True):
        # (the extents between zero-moment points are those of the governing case, and two load patterns tie on
        # the overhang's root moment, so only the outer end is compared)
        outer_start, outer_end = a.x_start_mm + b.x_end_mm, a.x_end_mm + b.x_start_mm
        assert outer_start == pytest.approx(total, abs=1e-6) or outer_end == pytest.approx(total, abs=1e-6)
        assert a.mf_knm == pytest.approx(b.mf_knm, rel=1e-9)
        assert a.mr_knm == pytest.approx(b.mr_knm, rel=1e-9)
    assert "overhang left" in {b.region for b in left.bending}
    assert [q.qf_kn for q in left.bearing] == pytest.approx([q.qf_kn for q in reversed(right.bearing)], rel=1e-9)
    assert left.deflection.delta_mm == pytest.approx(right.deflection.delta_mm, rel=1e-9)


def test_cantilever_root_moment_is_wa2_over_2():
    # handbook: the moment at the root of an overhang of length a under w is w a^2 / 2; dead load alone
    r = recheck(glulam(spans_mm=[6000], overhang_right_mm=2000, self_weight=False,
                       loads={"dead_kn_m": 5.0, "live_kn_m": 0.0, "snow_kn_m": 0.0}))  # fmt: skip
    negative = [b for b in r.bending if b.sign is MomentSign.negative]
    assert len(negative) == 1
    assert negative[0].mf_knm == pytest.approx(1.4 * 5.0 * 2.0**2 / 2, rel=1e-9)  # 1.4D (NBC case 1)


# -- findings ---------------------------------------------------------------------------------------------
def test_shear_over_by_a_little_is_a_finding():
    # O86-19 7.5.7.2 (Z < 2.0 m^3): Vr = 0.9 fv (2A/3) KD, fv 2.0 MPa (Table 7.3, memory) = 71.14 kN;
    # simple span 3 m, 1.5 x 40 kN/m live, no dead: Vf = wL/2 = 90 kN (handbook); utilisation 1.27
    r = recheck(glulam(spans_mm=[3000], self_weight=False, top_edge={"braced_by": "decking", "fastened": True},
                       loads={"dead_kn_m": 0.0, "live_kn_m": 40.0, "snow_kn_m": 0.0}))  # fmt: skip
    vr = 0.9 * 2.0 * 2 * B * D / 3 / 1000
    assert r.shear.vr_kn == pytest.approx(vr, rel=1e-9)
    assert r.shear.vf_kn == pytest.approx(90.0, rel=1e-9)
    assert 1.0 < r.shear.utilisation < 2.0
    assert [f.code for f in r.findings if f.code is FindingCode.shear_overstress] == [FindingCode.shear_overstress]


def test_deflection_finding_names_the_element():
    # span 1 only, floor use: L/360 (NBC Table 9.4.3.1, memory); 130 x 228 over 6 m deflects far more
    r = recheck(glulam(d_mm=228, spans_mm=[6000], use="floor", top_edge={"braced_by": "decking", "fastened": True}))
    found = [f for f in r.findings if f.code is FindingCode.deflection_exceeds_limit]
    assert r.deflection.limit_mm == pytest.approx(6000 / 360, rel=1e-9)
    assert len(found) == 1
    assert found[0].region == "span 1"


@pytest.mark.parametrize(
    ("specified", "codes"),
    [
        ({"species": "D.Fir-L", "grade": "24f-E", "b_mm": 130, "d_mm": 456}, []),  # as drawn
        ({"species": "D.Fir-L", "grade": "24f-EX", "b_mm": 130, "d_mm": 456}, [FindingCode.substitution]),  # grade
        ({"species": "D.Fir-L", "grade": "24f-E", "b_mm": 130, "d_mm": 494}, [FindingCode.substitution]),  # 1 lam
        ({"species": "D.Fir-L", "grade": "24f-E", "b_mm": 130, "d_mm": 458}, []),  # within the 2 mm tolerance
        ({"species": "D.Fir-L", "grade": "24f-E", "b_mm": 130, "d_mm": 462}, [FindingCode.undersize]),
    ],
)
def test_installed_against_drawn(specified, codes):
    # common practice: another grade or a smaller standard size (one 38 mm lamination less) is a substitution;
    # a shortfall beyond the tolerance but within a lamination is undersize
    r = recheck(glulam(specified=specified))
    assert [f.code for f in r.findings if f.code in (FindingCode.substitution, FindingCode.undersize)] == codes


def test_stocky_lumber_needs_no_lateral_support_so_no_unbraced_finding():
    # O86-19 6.5.3.2.1 (memory): d/b <= 4 needs no lateral support, KL = 1; a two-span 38 x 140 joist's
    # unbraced bottom edge over the middle support therefore raises no unbraced-edge finding
    r = recheck(sawn(d_mm=140, spans_mm=[2400, 2400], bearings=[dict(R, length_mm=89)] * 3))
    negative = [b for b in r.bending if b.sign is MomentSign.negative]
    assert negative
    assert all(b.kl == 1.0 for b in negative)
    assert FindingCode.compression_edge_unbraced not in {f.code for f in r.findings}


def test_exactly_at_the_limit_is_not_a_finding_above_it_is():
    # a check passes at utilisation 1.0 (O86-19 / NBC limit states: factored resistance >= factored effect)
    base = recheck(glulam(spans_mm=[3000], self_weight=False, top_edge={"braced_by": "decking", "fastened": True},
                          loads={"dead_kn_m": 0.0, "live_kn_m": 40.0, "snow_kn_m": 0.0}))  # fmt: skip
    # live load scaled so that the shear is exactly at its resistance (simple span, V = wL/2 is linear in w)
    w_exact = 40.0 / base.shear.utilisation
    at = recheck(glulam(spans_mm=[3000], self_weight=False, top_edge={"braced_by": "decking", "fastened": True},
                        loads={"dead_kn_m": 0.0, "live_kn_m": w_exact, "snow_kn_m": 0.0}))  # fmt: skip
    assert at.shear.utilisation == pytest.approx(1.0, abs=1e-9)
    assert (FindingCode.shear_overstress in {f.code for f in at.findings}) is (at.shear.utilisation > 1.0)


# -- remedies ---------------------------------------------------------------------------------------------
def _field_exists(path: str, data: dict) -> bool:
    holder = data
    for part in path.split(".")[:-1]:
        holder = holder[int(part)] if isinstance(holder, list) else holder.get(part)
        if holder is None:
            return False
    last = path.split(".")[-1]
    return int(last) < len(holder) if isinstance(holder, list) else last in holder


TWO_SPANS = {  # fails over the middle support only (unbraced bottom edge)
    "mark": "X-2", "material": "glulam", "species": "D.Fir-L", "grade": "24f-E", "b_mm": 80, "d_mm": 380,
    "spans_mm": [6000, 6000], "bearings": [dict(R, length_mm=300)] * 3, "top_stamp": "up", "use": "roof_no_ceiling",
    "top_edge": {"braced_by": "purlins", "spacing_mm": 1200, "fastened": True},
    "loads": {"dead_kn_m": 2.0, "live_kn_m": 0.0, "snow_kn_m": 3.0},
}  # fmt: skip
JOIST = {
    "mark": "J-9", "material": "sawn", "species": "S-P-F", "grade": "No.1/No.2", "b_mm": 38, "d_mm": 184,
    "spans_mm": [4800], "bearings": [dict(R, length_mm=38)] * 2, "use": "floor",
    "top_edge": {"braced_by": "decking", "fastened": True},
    "loads": {"dead_kn_m": 0.5, "live_kn_m": 1.9, "snow_kn_m": 0.0},
}  # fmt: skip


@pytest.mark.parametrize("data", [TWO_SPANS, JOIST], ids=["two spans", "joist"])
def test_remedy_changes_name_contract_fields_and_report_the_recheck(data):
    full = Beam.model_validate(data).model_dump(mode="json")
    found = remedies(Beam.model_validate(data))
    assert found
    for remedy in found:
        for path in remedy.change:
            assert _field_exists(path, full), path  # a contract-1 field path, not a new key
        after = recheck(Beam.model_validate(apply_change(full, remedy.change)))
        if remedy.solves.startswith("bending ("):
            sign = remedy.solves.split("(")[1].split(" ")[0]
            util = max(b.utilisation for b in after.bending if b.sign == sign)
        elif remedy.solves == "deflection_exceeds_limit":
            util = after.deflection.utilisation
        elif remedy.solves == "shear_overstress":
            util = after.shear.utilisation
        else:
            continue
        assert remedy.utilisation_after == pytest.approx(util, rel=1e-12)  # the number it prints is the recheck's


def _negative_util(data):
    return max(b.utilisation for b in recheck(Beam.model_validate(data)).bending if b.sign is MomentSign.negative)


def test_negative_moment_brace_remedy_is_the_largest_bottom_brace_spacing_that_passes():
    full = Beam.model_validate(TWO_SPANS).model_dump(mode="json")
    found = [r for r in remedies(Beam.model_validate(TWO_SPANS)) if r.solves == "bending (negative moment)"]
    braces = [r for r in found if "bottom_edge.spacing_mm" in r.change]
    assert len(braces) == 1
    change = braces[0].change
    assert change["bottom_edge.braced_by"] == "braces"
    assert "bottom edge" in braces[0].message
    assert _negative_util(apply_change(full, change)) <= 1.0
    wider = dict(change, **{"bottom_edge.spacing_mm": change["bottom_edge.spacing_mm"] + 50})  # the search step
    assert _negative_util(apply_change(full, wider)) > 1.0


def test_load_remedy_for_live_load_lowers_the_live_load():
    found = [r for r in remedies(Beam.model_validate(JOIST)) if "loads.live_kn_m" in r.change]
    assert found
    for r in found:
        assert 0 < r.change["loads.live_kn_m"] < 1.9
        assert "live load" in r.message


def test_deeper_size_remedy_is_the_smallest_that_passes():
    # glulam depths go up by one 38 mm lamination (common practice): one lamination less must fail
    full = Beam.model_validate(TWO_SPANS).model_dump(mode="json")
    found = remedies(Beam.model_validate(TWO_SPANS))
    deeper = [r for r in found if set(r.change) == {"d_mm"} and r.solves == "bending (negative moment)"]
    assert len(deeper) == 1
    d = deeper[0].change["d_mm"]
    assert _negative_util(apply_change(full, {"d_mm": d})) <= 1.0
    assert _negative_util(apply_change(full, {"d_mm": d - 38})) > 1.0


def test_restraint_alone_solves_bending_so_no_other_bending_option():
    # restrained bearings make this beam pass in bending: the options list only the restraint for it
    beam = glulam(bearings=[dict(R, rotation=False)] * 2)
    r = recheck(beam)
    assert {b.outcome for b in r.bending} == {Outcome.not_established}
    found = remedies(beam, r)
    assert [x.solves for x in found] == ["bearing_restraint_missing"]


# -- one recheck-lines model ------------------------------------------------------------------------------
def test_check_lines_cover_every_check_with_its_numbers():
    r = recheck(glulam(spans_mm=[6000, 6000], bearings=[R] * 3))
    lines = check_lines(r)
    kinds = [c.kind for c in lines]
    assert kinds == [CheckKind.bending] * len(r.bending) + [CheckKind.shear] + [CheckKind.bearing] * 3 + [
        CheckKind.deflection
    ]
    for c, b in zip(lines, r.bending, strict=False):
        assert c.demand == f"Mf {b.mf_knm:.1f} kN·m"
        assert c.capacity == f"Mr {b.mr_knm:.1f} kN·m"
        assert c.utilisation == b.utilisation
        assert f"KL {b.kl:.3f}" in c.factors
    shear = lines[len(r.bending)]
    assert shear.demand == f"Vf {r.shear.vf_kn:.1f} kN"
    assert shear.capacity == f"Vr {r.shear.vr_kn:.1f} kN"
    assert lines[-1].capacity == f"limit {r.deflection.limit_mm:.1f} mm (L/{r.deflection.limit_ratio:g})"
    assert lines[-1].combination == f"specified {r.deflection.case}"
    assert [c.key for c in lines][-5:] == ["shear", "bearing0", "bearing1", "bearing2", "deflection"]


def test_check_line_of_a_region_not_established_gives_the_upper_bound():
    r = recheck(glulam(bearings=[dict(R, rotation=False)] * 2))
    line = check_lines(r)[0]
    assert line.utilisation is None
    assert line.capacity.startswith("not established (a bearing restraint missing or not seen)")
    assert f"at most {r.bending[0].mr_if_restrained_knm:.1f} kN·m if restrained" in line.capacity


# -- more of loads, edges and deflection -----------------------------------------------------------------
def test_companion_snow_of_exactly_one_kn_m_still_counts():
    # NBC case 2 with its companion: 1.25D + 1.5L + 0.5S = 2.5 + 6.0 + 0.5 = 9.0 kN/m (case 3: 2.5 + 1.5 + 2.0 = 6.0)
    loads = {"dead_kn_m": 2.0, "live_kn_m": 4.0, "snow_kn_m": 1.0}
    region = recheck(glulam(self_weight=False, loads=loads, top_edge=DECKED)).bending[0]
    assert region.combination == "1.25D + 1.5L + 0.5S"
    assert region.mf_knm == pytest.approx(9.0 * 7.2**2 / 8, rel=1e-9)


def test_cantilever_root_takes_1_4d_alone_when_only_dead_load():
    r = recheck(glulam(spans_mm=[6000], overhang_right_mm=2000, self_weight=False,
                       loads={"dead_kn_m": 5.0, "live_kn_m": 0.0, "snow_kn_m": 0.0}))  # fmt: skip
    (negative,) = [b for b in r.bending if b.sign is MomentSign.negative]
    assert negative.combination == "1.4D"  # NBC case 1: no pattern to name, dead load is everywhere
    assert negative.dead_load_only


def test_largest_span_moment_of_two_spans_loads_that_span_only():
    # influence lines (handbook): the largest sagging moment in span 1 of two spans has span 1 loaded and
    # span 2 not; NBC 4.1.3.2 puts 0.9D on the part whose dead load relieves it
    r = recheck(glulam(spans_mm=[6000, 6000], bearings=[R] * 3))
    span1 = next(b for b in r.bending if b.region == "span 1")
    assert "L/S on span 1" in span1.combination
    assert "0.9D on span 2" in span1.combination
    # with one dead-load factor on the whole beam (the reviewer's option) the pattern is still named
    uniform = recheck(glulam(spans_mm=[6000, 6000], bearings=[R] * 3, dead_load_pattern="uniform"))
    span1 = next(b for b in uniform.bending if b.region == "span 1")
    assert span1.combination == "1.25D + 1.5S (L/S on span 1)"


@pytest.mark.parametrize(
    ("d_mm", "top", "bottom", "kl_is_one"),
    [
        # O86-19 6.5.3.2.1 (memory): d/b <= 5 with purlins holding the member in line: KL = 1
        (184, {"braced_by": "purlins", "spacing_mm": 1200, "fastened": True}, None, True),
        # d/b 4.84 > 4 with nothing on the compression edge: not met, KL < 1 (the glulam method)
        (184, {"braced_by": "none"}, None, False),
        # d/b <= 9 with both edges held in line: decking on top, bottom braces at <= 610 mm (reference o86.md 13)
        (286, DECKED, {"braced_by": "braces", "spacing_mm": 610}, True),
        (286, DECKED, {"braced_by": "braces", "spacing_mm": 650}, False),
    ],
)
def test_lumber_depth_to_width_tiers(d_mm, top, bottom, kl_is_one):
    over = {"d_mm": d_mm, "top_edge": top, "spans_mm": [4000]}
    if bottom is not None:
        over["bottom_edge"] = bottom
    region = recheck(sawn(**over)).bending[0]
    assert (region.kl == 1.0) is kl_is_one, region.kl


def test_overhang_deflection_limit_is_on_twice_its_length():
    # common practice (and the Wood Design Manual's cantilever rule, from memory): a cantilever's limit is
    # taken on twice its length; roof with no ceiling L/180
    r = recheck(glulam(spans_mm=[4000], overhang_right_mm=3000))
    assert r.deflection.element == "overhang right"
    assert r.deflection.limit_mm == pytest.approx(2 * 3000 / 180, rel=1e-9)


def test_a_beam_with_no_load_has_no_deflection():
    r = recheck(glulam(self_weight=False, loads={"dead_kn_m": 0.0, "live_kn_m": 0.0, "snow_kn_m": 0.0}))
    assert r.deflection.delta_mm == 0.0
    assert r.deflection.utilisation == 0.0
    assert FindingCode.deflection_exceeds_limit not in {f.code for f in r.findings}


def test_sawn_upper_bound_if_restrained_by_o86_6_5_3_1():
    # 38 x 235 S-P-F No.1/No.2 (fb 11.8 MPa, Table 6.4; KZb 1.1, Table 6.13; memory), top unbraced, one bearing
    # without rotation restraint (d/b 6.2 > 2.5): Mr if restrained = 0.9 fb KD S KZb KL (6.5.3.1), KD 1.0
    beam = sawn(top_edge={"braced_by": "none"}, bearings=[dict(R, length_mm=89), dict(R, length_mm=89, rotation=False)])
    region = recheck(beam).bending[0]
    assert region.outcome is Outcome.not_established
    assert region.kl_if_restrained is not None
    assert region.kl_if_restrained < 1.0
    s = 38.0 * 235.0**2 / 6
    expected = 0.9 * 11.8 * 1.0 * s * 1.1 * region.kl_if_restrained / 1e6
    assert region.mr_if_restrained_knm == pytest.approx(expected, rel=1e-9)


def test_glulam_with_a_lumber_system_factor_is_refused_by_name():
    with pytest.raises(ValueError, match=r"system: glulam beams take KH = 1\.0; allowed for glulam: 'single'"):
        glulam(system="shared")


def test_analysis_refuses_a_load_list_of_the_wrong_length():
    from core.analysis import BeamModel

    model = BeamModel([6000.0, 6000.0])
    with pytest.raises(ValueError, match=r"w_n_mm has 1 entries; the beam has 2 elements"):
        model.case((1.0,))


# -- a firm's verified or corrected table rows, and the provenance counts ---------------------------------
def test_a_firm_correction_reaches_the_recheck_and_the_trace():
    from core import tables
    from core.overrides import TableRecord

    fixed = TableRecord(table="glulam_grades", row="D.Fir-L/24f-E", by="A. Reviewer", edition="O86-19", page=120,
                        at="2026-12-01T10:00:00Z", column="fv_mpa", value="1.8", source="firm's copy")  # fmt: skip
    seen = TableRecord(table="glulam_grades", row="D.Fir-L/20f-E", by="A. Reviewer", edition="O86-19", page=120,
                       at="2026-12-01T10:00:00Z")  # fmt: skip
    before = recheck(glulam())
    try:
        tables.use_firm_records([fixed, seen])
        after = recheck(glulam())
        verified = recheck(glulam(grade="20f-E"))
    finally:
        tables.use_firm_records([])
    # O86-19 7.5.7.2: Vr is proportional to fv, so 1.8 / 2.0 of the printed-table value
    assert after.shear.vr_kn / before.shear.vr_kn == pytest.approx(1.8 / 2.0, rel=1e-9)
    grade = next(t for t in after.bending[0].trace if t.symbol == "grade")
    assert grade.status.value == "verified"
    assert "fv corrected to 1.8 MPa (firm's copy), verified by A. Reviewer against CSA O86-19 p. 120" in grade.source
    other = next(t for t in verified.bending[0].trace if t.symbol == "grade")
    assert other.status.value == "verified"
    assert "verified by A. Reviewer" in other.source
    assert recheck(glulam()).shear.vr_kn == pytest.approx(before.shear.vr_kn, rel=1e-12)  # records cleared


def test_provenance_counts_match_the_csv_files():
    import csv
    from importlib import resources

    from core.provenance import provenance_rows

    rows = {line.split(" | ")[0].lstrip("| "): line for line in provenance_rows()[2:]}
    for name, line in rows.items():
        text = (resources.files("core") / "data" / f"{name}.csv").read_text()
        data = list(csv.DictReader(row for row in text.splitlines() if not row.startswith("#")))
        statuses = [r["status"] for r in data]
        cells = [c.strip() for c in line.strip("|").split("|")]
        assert cells[2:6] == [str(len(data)), *(str(statuses.count(s)) for s in ("verified", "confirmed", "memory"))]
        named = {n for r in data for n in (r.get("confirmed_by") or "").split("; ") if n}
        assert set(cells[6].split("; ")) - {"-"} == named


SIMPLE_UNBRACED = {
    "mark": "X-3", "material": "glulam", "species": "D.Fir-L", "grade": "24f-E", "b_mm": 80, "d_mm": 456,
    "spans_mm": [7200], "bearings": [R] * 2, "top_stamp": "up", "use": "roof_no_ceiling",
    "top_edge": {"braced_by": "none"}, "loads": {"dead_kn_m": 2.0, "live_kn_m": 0.0, "snow_kn_m": 5.0},
}  # fmt: skip


def test_positive_moment_brace_remedy_is_the_largest_fastened_purlin_spacing_that_passes():
    full = Beam.model_validate(SIMPLE_UNBRACED).model_dump(mode="json")
    before = recheck(Beam.model_validate(SIMPLE_UNBRACED))
    assert any(b.outcome is Outcome.overstress for b in before.bending if b.sign is MomentSign.positive)
    found = [r for r in remedies(Beam.model_validate(SIMPLE_UNBRACED), before) if "top_edge.spacing_mm" in r.change]
    assert len(found) == 1
    change = found[0].change
    assert change["top_edge.braced_by"] == "purlins"
    assert change["top_edge.fastened"] is True
    assert re.match(r"^brace the top edge \(fastened purlins or blocking\) at \d+ mm or closer: ", found[0].message)
    for path in change:
        assert _field_exists(path, full), path

    def positive(c):
        after = recheck(Beam.model_validate(apply_change(full, c)))
        return max(b.utilisation for b in after.bending if b.sign is MomentSign.positive)

    assert positive(change) <= 1.0
    assert positive(dict(change, **{"top_edge.spacing_mm": change["top_edge.spacing_mm"] + 50})) > 1.0

    # the limit laid out as a site builds it (common practice: braces at even spacing, the fewest that keep
    # within the limit): n = ceil(L / s) spaces of floor(L / n) mm, with that layout's own recheck
    limit, span = change["top_edge.spacing_mm"], 7200
    spaces = math.ceil(span / limit)
    even = math.floor(span / spaces)
    assert spaces >= 2
    assert even < limit
    assert span / (spaces - 1) > limit
    util = positive(dict(change, **{"top_edge.spacing_mm": even}))
    assert util <= positive(change)
    assert found[0].message.endswith(
        f"; laid out evenly over the 7200 mm span: {spaces} spaces of {even} mm, utilisation {util:.3f}"
    )


def test_a_bracing_layout_names_every_span_of_a_continuous_beam():
    """The brace limit holds along the whole edge, so the layout names each span.

    Two 7000 mm spans with the bottom edge in compression over the middle support (a roof beam under snow): a
    brace near one support leaves the other span's length unbraced. n = ceil(L / s) spaces of floor(L / n) mm
    in every span (common practice: braces at even spacing).
    """
    restrained = {"lateral": True, "rotation": True, "length_mm": 140}
    beam = Beam.model_validate(
        {
            "mark": "RB-6", "material": "glulam", "species": "D.Fir-L", "grade": "24f-E", "b_mm": 130, "d_mm": 532,
            "spans_mm": [7000, 7000], "bearings": [restrained, dict(restrained, length_mm=280), restrained],
            "top_edge": {"braced_by": "purlins", "spacing_mm": 1200, "fastened": True}, "top_stamp": "up",
            "use": "roof_no_ceiling", "loads": {"dead_kn_m": 3.6, "live_kn_m": 0.0, "snow_kn_m": 7.8},
        }
    )  # fmt: skip
    assert beam.spans_mm == [7000, 7000]
    bottom = [r for r in remedies(beam) if "bottom_edge.spacing_mm" in r.change]
    assert len(bottom) == 1
    limit = bottom[0].change["bottom_edge.spacing_mm"]
    spaces = math.ceil(7000 / limit)
    even = math.floor(7000 / spaces)
    full = beam.model_dump(mode="json")
    after = recheck(Beam.model_validate(apply_change(full, dict(bottom[0].change, **{"bottom_edge.spacing_mm": even}))))
    util = max(b.utilisation for b in after.bending if b.sign is MomentSign.negative)
    assert bottom[0].message.endswith(
        f"; laid out evenly in each span (2 spans of 7000 mm): {spaces} spaces of {even} mm, utilisation {util:.3f}"
    )


# -- limit states: a resistance equal to the demand passes ---------------------------------------------------
@pytest.mark.parametrize(
    ("util", "flagged"),
    # NBC 4.1.3.1 / CSA O86-19 4.2 (limit states design): factored resistance >= effect of factored loads
    # passes; O86-19 5.4.2: deflection shall not exceed the limit. Equal is within; anything above is not.
    [(1.0, False), (1.0 + 1e-9, True), (0.999, False)],
)
def test_a_check_at_exactly_its_limit_is_not_a_finding(util, flagged):
    from core.findings import check_findings

    beam = glulam()
    r = recheck(beam)
    shear = r.shear.model_copy(update={"utilisation": util})
    bearing = [q.model_copy(update={"utilisation": util}) for q in r.bearing]
    deflection = r.deflection.model_copy(update={"utilisation": util})
    codes = [f.code for f in check_findings(beam, shear, bearing, deflection)]
    want = [FindingCode.shear_overstress, FindingCode.bearing_overstress, FindingCode.bearing_overstress]
    want.append(FindingCode.deflection_exceeds_limit)
    assert codes == (want if flagged else [])


def test_sawn_lumber_is_balanced():
    # common practice: sawn lumber has one bending strength for either face (O86-19 Table 6.4 gives one fb),
    # so it can never be installed upside down; only glulam layups can be unbalanced
    from core.member import _member_properties, member_properties

    member = _member_properties(sawn())  # not the cached lookup: built here
    assert member == member_properties(sawn())
    assert member.balanced is True
    assert member.fb_pos_mpa == member.fb_neg_mpa
    unbalanced = member_properties(glulam(grade="20f-E"))
    assert unbalanced.balanced is False  # 20f-E is an unbalanced layup (Table 7.3, memory)
