"""What the recheck prints is traceable: the standard's notation and clause numbers, SI units, plain sentences.

Symbols are in the standard's notation, clauses cited as the standard numbers them, units SI, every source
named, and findings are plain sentences that open with the member's mark.

The notation and the clause numbering are those of CSA O86-19 (its notation list and its clause and table
numbers, from memory) and NBC Part 4 / Table 9.4.3.1; the units are SI. The beams are invented inputs
(``tests/core/beams.py``); nothing here is an expected number computed by the project.
"""

import math
import re

import pytest

from core.kinds import FindingCode, TraceStatus
from core.recheck import recheck
from core.results import Priority
from tests.core.beams import glulam, sawn

R = {"lateral": True, "rotation": True, "length_mm": 140}

BEAMS = {
    "glulam simple span": lambda: glulam(),
    "overhang right": lambda: glulam(spans_mm=[6000], overhang_right_mm=2000),
    "overhang left": lambda: glulam(spans_mm=[6000], overhang_left_mm=2000),
    "two spans": lambda: glulam(spans_mm=[6000, 6000], bearings=[R] * 3),
    "two spans, reviewer's options": lambda: glulam(
        spans_mm=[6000, 6000], bearings=[R] * 3, negative_lu="zero_moment_point", dead_load_pattern="uniform"
    ),
    "two spans, bottom braces": lambda: glulam(
        spans_mm=[7000, 7000], bearings=[R] * 3, bottom_edge={"braced_by": "braces", "spacing_mm": 1500}
    ),
    "wet, top unbraced": lambda: glulam(service="wet", top_edge={"braced_by": "none"}),
    "sawn joist": lambda: sawn(),
    "sawn wet incised": lambda: sawn(service="wet", treatment="incised"),
    "sawn deep, bridging": lambda: sawn(
        d_mm=286, spans_mm=[4000], top_edge={"braced_by": "none"}, bridging_spacing_mm=1200
    ),
    "unbalanced stamp down": lambda: glulam(grade="20f-E", top_stamp="down"),
    "unbalanced stamp not seen": lambda: glulam(grade="20f-E", top_stamp="not_visible"),
    "bearing restraint missing": lambda: glulam(bearings=[dict(R, lateral=False)] * 2),
    "not permitted even if restrained": lambda: glulam(
        b_mm=80, d_mm=912, spans_mm=[12000], top_edge={"braced_by": "none"}, bearings=[dict(R, lateral=False)] * 2
    ),
    "slender, KL regime (c)": lambda: glulam(b_mm=80, d_mm=912, spans_mm=[8000], top_edge={"braced_by": "none"}),
    "unrecorded fastening and use": lambda: glulam(top_edge={"braced_by": "purlins", "spacing_mm": 2400}, use=None),
    "purlins not fastened": lambda: glulam(top_edge={"braced_by": "purlins", "spacing_mm": 2400, "fastened": False}),
    "substituted grade, deeper drawn": lambda: glulam(
        specified={"species": "D.Fir-L", "grade": "24f-EX", "b_mm": 130, "d_mm": 494}
    ),
    "narrower standard width": lambda: glulam(
        specified={"species": "D.Fir-L", "grade": "24f-E", "b_mm": 175, "d_mm": 456}
    ),
    "undersize": lambda: glulam(specified={"species": "D.Fir-L", "grade": "24f-E", "b_mm": 130, "d_mm": 462}),
    "heavy overhang": lambda: glulam(
        spans_mm=[4000], overhang_right_mm=3000, loads={"dead_kn_m": 10, "live_kn_m": 0, "snow_kn_m": 0}
    ),
    "uplift": lambda: glulam(
        spans_mm=[3000], overhang_right_mm=2500, top_edge={"braced_by": "decking", "fastened": True},
        loads={"dead_kn_m": 0.5, "live_kn_m": 0, "snow_kn_m": 9.0},
    ),
    "shear and deflection over": lambda: glulam(
        b_mm=80, d_mm=228, spans_mm=[3000], use="floor", top_edge={"braced_by": "decking", "fastened": True},
        loads={"dead_kn_m": 6.0, "live_kn_m": 30.0, "snow_kn_m": 0.0},
    ),
}  # fmt: skip

# CSA O86-19 notation (from memory) and the plain-word entries the trace uses for inputs
SYMBOLS = {
    "Ab", "CB", "CK", "CV", "ES", "Fb", "KB", "KD", "KH", "KL", "KS", "KT", "KZb", "KZbg", "KZcp", "KZv", "Le",
    "Lu", "Mr", "Vr", "E05", "Wr", "Z", "fb", "fb_pos", "fb_neg", "fv", "Fv", "fcp", "Fcp", "Qr", "edition", "grade",
    "limit", "option", "self-weight", "use", "deflection",
}  # fmt: skip
SYMBOL = re.compile(
    r"^(?P<symbol>[A-Za-z_-]+[0-9]*)"
    r"( \((wet|positive moment|negative moment|if restrained|L \+ S|D \+ L \+ S|D, long-term)\))?$"
)
UNITS = {"", "mm", "mm2", "m3", "MPa", "kN", "kN/m", "kN·m"}  # SI, as the edges of the app print them
# a citation: "CSA O86-19 7.5.6.4.4", "CSA O86-19 Table 7.3 note", "NBC Table 9.4.3.1", parts joined by / , ;
PART = re.compile(
    r"^((CSA O86-19|NBC) )?(Table \d+\.\d+(\.\d+)*(\.?-?[A-Z])?( note)?|\d+(\.\d+)+(\([a-z]\))?)"
    r"( \((memory|0\.9D where dead load counteracts)\))?$"  # no project-internal references on a notice
    r"|^CWC glulam sizes$|^project setting \(CSA O122 tolerances not yet checked\)$"
)
# clause of the standard behind each factor (CSA O86-19 clause numbering, from memory)
CLAUSE_OF = {
    "CB": r"7\.5\.6\.4\.3",
    "CK": r"7\.5\.6\.4\.4",
    "Le": r"7\.5\.6\.4\.2 / Table 7\.4",
    "KD": r"5\.3\.2",
    "KZbg": r"7\.5\.6\.5\.1",
    "KZb": r"Table 6\.13",
    "KT": r"6\.4\.3 / Table 6\.11",
    "KS (wet)": r"Table (6\.10|7\.2)",
    "KL": r"(7\.5\.6\.4\.4|7\.5\.6\.3|6\.5\.3\.2(\.1)?)",
    "KZcp": r"(6\.5\.6\.2\.3|7\.5\.9)",  # sawn lumber bearing size factor; glulam bearing has none
}
# words the wording may print in capitals: organisations, the TOP stamp, and O86 symbols written in capitals
CAPITALS = {"CSA", "NBC", "CWC", "TOP", "KSB", "KSV", "KSCP", "KSE", "IMMEDIATE", "EX"}


def _traces(r):
    regions = [t for b in r.bending for t in b.trace]
    return regions + list(r.shear.trace) + [t for q in r.bearing for t in q.trace] + list(r.deflection.trace)


def _citation_ok(clause: str) -> bool:
    parts = re.split(r" / |, |; ", clause)
    first = parts[0]
    if not (first.startswith(("CSA O86-19 ", "NBC ")) or PART.match(first)):
        return False
    return all(PART.match(p) for p in parts)


def _capitals_ok(text: str) -> bool:
    return all(word in CAPITALS for word in re.findall(r"\b[A-Z]{3,}\b", text))


@pytest.fixture(params=sorted(BEAMS))  # per test, so the mutation run's test selection sees every recheck
def case(request):
    beam = BEAMS[request.param]()
    return beam, recheck(beam)


def test_trace_symbols_units_and_statuses(case):
    _beam, r = case
    for t in _traces(r):
        m = SYMBOL.match(t.symbol)
        assert m, t.symbol
        assert m.group("symbol") in SYMBOLS, t.symbol
        assert t.unit in UNITS, (t.symbol, t.unit)
        assert t.status in set(TraceStatus), t
        if t.symbol in ("Lu", "Le") and isinstance(t.value, int | float):
            assert t.unit == "mm", t  # lengths
        if t.value is None:  # only the upper bound of a member not permitted even if restrained has no value:
            # its Mr, and the KL line that says why (CB over 50, CSA O86-19 7.5.6.4.4)
            assert t.symbol in ("Mr (if restrained)", "KL (if restrained)"), t
            assert "not permitted" in t.source
        elif isinstance(t.value, float):
            assert math.isfinite(t.value), t


def test_every_trace_entry_names_where_it_came_from(case):
    _beam, r = case
    for t in _traces(r):
        assert t.source.strip(), t
        assert _capitals_ok(t.source), t.source
        if re.match(r"^row |^unit weight of ", t.source):
            # a value read from a table carries the table row's status, never "formula"
            assert t.status in (TraceStatus.verified, TraceStatus.confirmed, TraceStatus.memory), t


def test_every_clause_is_cited_as_the_standard_numbers_it(case):
    _beam, r = case
    cited = [t.clause for t in _traces(r) if t.clause]
    cited += [b.clause for b in r.bending] + [r.shear.clause, r.deflection.clause] + [q.clause for q in r.bearing]
    cited += [f.clause for f in r.findings]
    for clause in cited:
        assert _citation_ok(clause), clause
    for t in _traces(r):
        if t.symbol in CLAUSE_OF:
            assert re.search(rf"CSA O86-19 {CLAUSE_OF[t.symbol]}", t.clause), (t.symbol, t.clause)


def test_kl_regime_and_kd_sources_use_the_standards_words(case):
    _beam, r = case
    for t in _traces(r):
        if t.symbol == "KL" and t.source.startswith("regime"):
            # CSA O86-19 7.5.6.4.4 (a), (b), (c)
            assert t.source in ("regime (a) CB <= 10", "regime (b) 10 < CB <= CK", "regime (c) CK < CB <= 50")
        if t.symbol == "KD":
            # O86-19 Table 5.1 (permanent, 1.4D) or 5.3.2.2 / 5.3.2.3 (standard term with PL and PS)
            assert re.search(
                r"^permanent load \(1\.4D\): KD = 0\.65, O86-19 Table 5\.1$|^standard term, PL = [\d.]+ (<=|>) PS = "
                r"[\d.]+ kN/m: KD = (1\.0, O86-19 5\.3\.2\.2|1 - 0\.5 log\(PL/PS\), O86-19 5\.3\.2\.3)$",
                t.source,
            ), t.source
        if t.symbol == "CB":
            assert t.source == "CB = sqrt(Le d / b^2)"  # O86-19 7.5.6.4.3
        if t.symbol == "CK":
            assert t.source == "CK = sqrt(0.97 E KSE KT / (Fb KX))"  # O86-19 7.5.6.4.4


def test_the_trace_shows_the_numbers_the_check_used(case):
    _beam, r = case
    for b in r.bending:
        values = {t.symbol: t.value for t in b.trace}
        for symbol, used, places in (("KL", b.kl, 4), ("CB", b.cb, 3), ("KZbg", b.kzbg, 4), ("KD", b.kd, 4)):
            if symbol in values and used is not None and isinstance(values[symbol], float):
                assert values[symbol] == pytest.approx(used, abs=0.6 * 10**-places), symbol
        if "CK" in values and b.ck is not None:
            assert values["CK"] == pytest.approx(b.ck, abs=5e-4)
        if "Le" in values and b.le_mm is not None:
            assert values["Le"] == pytest.approx(b.le_mm, abs=0.05)
        if "Fb" in values:
            assert values["Fb"] == pytest.approx(b.fb_mpa, abs=5e-4)


REGION = re.compile(r"^(support \d+( \((left|right) end\))?|span \d+|overhang (left|right)|top edge)$")


def test_findings_are_sentences_that_name_the_member(case):
    beam, r = case
    for f in r.findings:
        assert f.message.startswith(beam.mark), f.message
        assert f.message.endswith("."), f.message
        assert f.action[0].isupper(), f.action
        assert f.action.endswith("."), f.action
        assert _capitals_ok(f.message), f.message
        assert _capitals_ok(f.action), f.action
        assert f.region is None or REGION.match(f.region), f.region
        if f.priority is Priority.immediate:
            # an IMMEDIATE finding opens with what to do now (common practice for safety notices)
            assert re.match(r"^(Make safe now: |Do not load beyond its present load)", f.action), f.action


# O86-19 is arranged by material: clause 6 and its tables for sawn lumber, clause 7 for glulam
CHECK_CLAUSE = {
    "glulam": {"bending": r"CSA O86-19 7\.5\.6", "shear": r"CSA O86-19 7\.5\.7", "bearing": r"CSA O86-19 7\.5\.9"},
    "sawn": {"bending": r"CSA O86-19 6\.5\.3", "shear": r"CSA O86-19 6\.5\.4", "bearing": r"CSA O86-19 6\.5\.6"},
}


def test_each_check_cites_the_clause_for_its_material(case):
    beam, r = case
    want = CHECK_CLAUSE[beam.material.value]
    for b in r.bending:
        assert re.match(want["bending"], b.clause), b.clause
    assert re.match(want["shear"], r.shear.clause), r.shear.clause
    for q in r.bearing:
        assert re.match(want["bearing"], q.clause), q.clause
    for b in r.bending:
        for t in b.trace:
            if t.symbol == "Fb":
                assert re.match(want["bending"], t.clause), t.clause
            if t.symbol == "grade":  # the strength table: Table 6.4 (sawn) or 7.3 (glulam)
                table = "6.4" if beam.material.value == "sawn" else "7.3"
                assert t.clause == f"CSA O86-19 Table {table}", t.clause


def test_effective_length_row_says_why_it_applies():
    # O86-19 Table 7.4: the simple-span uniform-load row fits a simple span only; elsewhere the catch-all row
    simple = recheck(glulam(top_edge={"braced_by": "none"}))
    two = recheck(glulam(spans_mm=[6000, 6000], bearings=[R] * 3, top_edge={"braced_by": "none"}))
    (le_simple,) = [t.source for t in simple.bending[0].trace if t.symbol == "Le"]
    assert le_simple.startswith("row 'Simple span; uniformly distributed load': Le = 1.92 Lu; ")
    assert le_simple.endswith("simple span, uniform load, no intermediate support")
    le_two = [t.source for b in two.bending for t in b.trace if t.symbol == "Le" and b.sign.value == "positive"]
    assert le_two
    for source in le_two:
        assert source.startswith("row 'Any loading (conservative catch-all)': Le = 1.92 Lu; ")
        assert source.endswith(
            "; region of a continuous beam: conservative catch-all (a row not yet confirmed is never chosen by default)"
        )


def test_negative_moment_lu_says_a_zero_moment_point_is_not_a_brace():
    # reference o86.md 13 (Q3): Lu runs between real restraints of the bottom edge by default
    r = recheck(glulam(spans_mm=[6000, 6000], bearings=[R] * 3))
    (negative,) = [b for b in r.bending if b.sign.value == "negative"]
    (lu,) = [t for t in negative.trace if t.symbol == "Lu"]
    assert re.search(r"\b6000 mm between real restraints of the bottom edge \(a point of zero moment is not a brace\)$",
                     lu.source)  # fmt: skip


def test_slenderness_finding_names_its_region():
    r = recheck(glulam(b_mm=80, d_mm=912, spans_mm=[12000], top_edge={"braced_by": "none"}))
    (found,) = [f for f in r.findings if f.code is FindingCode.slenderness_exceeds_limit]
    assert found.region == "span 1"
    assert found.clause == "CSA O86-19 7.5.6.4.4"  # CB <= 50


def test_unseen_restraint_names_both_restraints_the_standard_requires():
    # O86-19 7.5.6.3.1: restraint against lateral displacement and against rotation at the bearings
    r = recheck(glulam(bearings=[dict(R, lateral="not_visible", rotation="not_visible"), R]))
    (found,) = [f for f in r.findings if f.code is FindingCode.bearing_restraint_missing]
    assert "restraint against lateral displacement and rotation (rolling over) could not be seen" in found.message
    # what was not seen is taken as absent (common practice; the project's modelling rule), and a missing
    # bearing restraint leaves the capacity unknown under loads already on: as urgent as one seen missing
    assert "taken as missing (the unfavourable case)" in found.message
    assert found.priority is Priority.immediate
    assert found.action.startswith("Make safe now")
    (seen_missing,) = [
        f
        for f in recheck(glulam(bearings=[dict(R, lateral=False, rotation=False), R])).findings
        if f.code is FindingCode.bearing_restraint_missing
    ]
    assert seen_missing.priority is found.priority


def test_shear_method_by_volume_o86_7_5_7():
    # Z = b d L in m^3 (O86-19 7.5.7): below 2.0 the simple method 7.5.7.2, else Wr against the total load W
    small = recheck(glulam())
    (z,) = [t for t in small.shear.trace if t.symbol == "Z"]
    assert z.value == pytest.approx(0.130 * 0.456 * 7.2, abs=5e-4)
    assert z.source == "volume below 2.0 m3: simple method permitted"
    big = recheck(glulam(b_mm=265, d_mm=1216, spans_mm=[8000]))
    assert 0.265 * 1.216 * 8.0 >= 2.0
    assert big.shear.method == "volume: Wr vs total factored load W (Z >= 2.0 m3)"


def test_self_weight_and_bearing_factor_in_the_trace():
    r = recheck(glulam())
    sw = next(t for b in r.bending for t in b.trace if t.symbol == "self-weight")
    # 4.9 kN/m^3 (common practice, from memory) x b x d, kN/m
    assert sw.value == pytest.approx(4.9 * 0.130 * 0.456, rel=1e-12)
    assert sw.unit == "kN/m"
    kb = next(t for t in r.bearing[0].trace if t.symbol == "KB")
    assert kb.value == 1.0  # end bearing: KB = 1.0 (O86-19 7.5.9, from memory)
    assert kb.status is TraceStatus.memory


def test_unrecorded_use_takes_the_strictest_limit():
    # NBC Table 9.4.3.1 (memory): L/360 is the strictest limit; snow governs the deflection here
    r = recheck(glulam(use=None, self_weight=False, loads={"dead_kn_m": 0.1, "live_kn_m": 0.0, "snow_kn_m": 5.0}))
    assert r.deflection.limit_mm == pytest.approx(7200 / 360, rel=1e-9)
    assert r.deflection.case == "L + S"  # the variable loads, not the long-term dead-load check
    (use,) = [t for t in r.deflection.trace if t.symbol == "use"]
    assert use.value in ("floor", "roof_plaster")  # a use of the table (both L/360), never a general row


def test_support_labels_count_from_the_left_end():
    beam = glulam(spans_mm=[6000, 6000], bearings=[dict(R, lateral=False)] * 3)
    regions = [f.region for f in recheck(beam).findings if f.code is FindingCode.bearing_restraint_missing]
    assert regions == ["support 1 (left end)", "support 2", "support 3 (right end)"]


def test_not_permitted_even_if_restrained_says_so_plainly():
    r = recheck(BEAMS["not permitted even if restrained"]())
    region = r.bending[0]
    assert region.mr_if_restrained_knm is None  # CB > 50 even with restrained bearings (O86-19 7.5.6.4.4)
    assert region.utilisation_if_restrained is None
    over = [f for f in r.findings if f.code is FindingCode.bending_overstress]
    assert len(over) == 1
    assert re.search(r"even if its bearings were restrained the slenderness would exceed the limit\. The real "
                     r"capacity is lower still", over[0].message)  # fmt: skip


def test_restrained_upper_bound_is_named_as_an_upper_bound():
    r = recheck(BEAMS["bearing restraint missing"]())
    upper = [t for t in r.bending[0].trace if t.symbol == "Mr (if restrained)"]
    assert len(upper) == 1
    assert upper[0].status is TraceStatus.formula
    assert "the real capacity is lower (CSA O86-19 7.5.6.3.1 not met)" in upper[0].source
    # the resistance's own clause, as the restrained Mr line cites it (CSA O86-19 7.5.6.5.1; reference o86.md s. 1)
    assert upper[0].clause == "CSA O86-19 7.5.6.5.1"
    assert r.bending[0].mr_if_restrained_knm == pytest.approx(upper[0].value, abs=0.05)


def test_restrained_upper_bound_traces_its_stability_factors_and_they_follow_o86():
    """The bound's Le, CB, CK and KL are traced ("(if restrained)") and satisfy the clauses they name.

    CSA O86-19 7.5.6.4.3: CB = sqrt(Le d / b^2); 7.5.6.4.4 regime (b), 10 < CB <= CK:
    KL = 1 - (1/3) (CB / CK)^4; 7.5.6.5.1: Mr = phi Fb S KX KL with phi = 0.9, KX = 1, S = b d^2 / 6
    (the published formulas). Before, the bound printed on the notice ("at most 70.1 kN·m if restrained")
    gave only its KL and Lu, and the effective-length table row it rests on was in no trace, so it was
    never among the rows a reviewer acknowledges.
    """
    from core.recheck import recheck_with_rows

    beam = glulam(
        spans_mm=[9000], bearings=[dict(R, lateral=False), R], top_edge={"braced_by": "none"}, top_stamp="not_visible"
    )
    r = recheck(beam)
    region = r.bending[0]
    assert region.outcome == "not_established"
    t = {x.symbol: x for x in region.trace}
    le, cb, ck, kl = (t[f"{s} (if restrained)"].value for s in ("Le", "CB", "CK", "KL"))
    assert "Table 7.4" in t["Le (if restrained)"].clause
    assert cb == pytest.approx(math.sqrt(le * beam.d_mm / beam.b_mm**2), rel=1e-4)
    assert 10 < cb <= ck
    assert kl == pytest.approx(1 - (cb / ck) ** 4 / 3, abs=1e-4)
    fb = t["Fb"].value
    s_mm3 = beam.b_mm * beam.d_mm**2 / 6
    assert region.mr_if_restrained_knm == pytest.approx(0.9 * fb * s_mm3 * kl / 1e6, rel=1e-3)
    le_line = t["Le (if restrained)"]  # a row is keyed by its rule where the line names one
    le_row = (le_line.clause, le_line.row or le_line.source, le_line.status)
    assert le_row in recheck_with_rows(beam).rows_used  # the rows used by the bound are acknowledged with the rest


def test_option_finding_uses_nbc_load_factor_notation():
    r = recheck(BEAMS["two spans, reviewer's options"]())
    words = " ".join(f.message for f in r.findings if f.code is FindingCode.modelling_option)
    assert "0.9D" in words  # NBC 4.1.3.2 notation: factor and load symbol, D in capitals
    assert "1.25D" in words
    assert "point of zero moment" in words


def test_uplift_that_lifts_now_says_the_dead_load_alone_lifts_it():
    r = recheck(BEAMS["uplift"]())
    uplift = [f for f in r.findings if f.code is FindingCode.uplift_at_support]
    assert uplift
    for q in r.bearing:
        if q.uplift_kn is not None:
            # NBC 4.1.3.2: uplift governs with 0.9D on the part whose dead load counteracts it
            assert q.uplift_combination is not None
            assert "0.9D" in q.uplift_combination
            assert q.uplift_combination in " ".join(f.message for f in uplift)
    lifts_now = {f"support {q.support}": q.lifts_now for q in r.bearing}
    for f in uplift:
        assert ("The specified dead load alone already lifts it off this bearing." in f.message) is lifts_now[f.region]
        if lifts_now[f.region]:
            assert f.priority is Priority.immediate


def test_sawn_shear_trace_cites_the_lumber_clause_not_the_glulam_one():
    # reference o86.md section 5: lumber shear Vr = phi Fv (2An/3) KZv is O86-19 6.5.4 (memory);
    # 7.5.7 (the volume Z and its 2.0 m3 threshold) is the glulam clause
    # (lumber Vr does not depend on the volume, so its trace has no Z line at all)
    r = recheck(sawn())
    assert [t for t in r.shear.trace if t.symbol == "Z"] == []
    assert all("7.5.7" not in t.clause for t in r.shear.trace)
    assert r.shear.clause.startswith("CSA O86-19 6.5.4")
    (z_glulam,) = [t for t in recheck(glulam()).shear.trace if t.symbol == "Z"]
    assert z_glulam.clause == "CSA O86-19 7.5.7"


@pytest.mark.parametrize(
    ("b_mm", "d_mm", "kzcp"),
    [
        # O86-19 6.5.6.2.3 (memory; reference o86.md section 5, and section 12 "the KZcp formula" by T):
        # r = b/d; KZcp = 1.0 for r <= 1.0
        (38, 235, 1.0),  # r = 0.162
        (89, 89, 1.0),  # r = 1.0 exactly
    ],
)
def test_kzcp_trace_names_its_clause_and_source(b_mm, d_mm, kzcp):
    r = recheck(sawn(b_mm=b_mm, d_mm=d_mm, spans_mm=[2400]))
    for q in r.bearing:
        (line,) = [t for t in q.trace if t.symbol == "KZcp"]
        assert line.value == pytest.approx(kzcp)
        assert line.clause == "CSA O86-19 6.5.6.2.3 (memory)"
        assert f"r = b/d = {b_mm / d_mm:.3f}" in line.source
    glulam_line = next(t for t in recheck(glulam()).bearing[0].trace if t.symbol == "KZcp")
    assert glulam_line.value == 1.0  # O86-19 7.5.9 (memory): glulam bearing Qr = phi Fcp Ab KB, no KZcp
    assert glulam_line.source == "glulam: no KZcp (1.0)"


NO_LOAD = {"dead_kn_m": 0.0, "live_kn_m": 0.0, "snow_kn_m": 0.0}


@pytest.mark.parametrize(
    ("over", "expected_mm"),
    [
        # nothing deflects, yet the limit is span / ratio: the strictest row of the beam's checks, which for a
        # roof without a ceiling (NBC Table 9.4.3.1 L/180; O86-19 5.4.2 L/180) is the O86-19 5.4.3 long-term
        # L/360 (reference o86.md sections 12 and 13)
        ({}, 7200 / 360),
        # two spans: the shorter span gives the smaller limit, 3000 / 360
        ({"spans_mm": [3000, 6000], "bearings": [R] * 3, "use": "roof_other"}, 3000 / 360),
        # a cantilever takes twice its length (common practice): 2 x 1000 / 360 beats 6000 / 360
        ({"spans_mm": [6000], "overhang_right_mm": 1000}, 2 * 1000 / 360),
    ],
)
def test_a_beam_with_no_load_prints_its_deflection_limit(over, expected_mm):
    r = recheck(glulam(self_weight=False, loads=NO_LOAD, **over))
    assert r.deflection.delta_mm == 0.0
    assert r.deflection.utilisation == 0.0
    assert r.deflection.case == "no load"
    assert r.deflection.limit_mm == pytest.approx(expected_mm, rel=1e-9)
    (limit,) = [t for t in r.deflection.trace if t.symbol == "limit"]
    assert limit.value == "L/360"
    assert r.deflection.limit_ratio == 360.0
    # statics: no load, no reaction, so no bearing demand and no uplift
    for q in r.bearing:
        assert q.qf_kn == 0.0
        assert q.uplift_kn is None
        assert q.uplift_combination is None


@pytest.mark.parametrize(
    ("over", "length_m"),
    [({}, 7.2), ({"spans_mm": [6000], "overhang_right_mm": 2000}, 8.0), ({"overhang_left_mm": 1500}, 8.7)],
)
def test_shear_volume_is_the_whole_member(over, length_m):
    # O86-19 7.5.7: Z is the volume of the member, b x d x its whole length (overhangs included), m^3
    (z,) = [t for t in recheck(glulam(**over)).shear.trace if t.symbol == "Z"]
    assert z.value == pytest.approx(0.130 * 0.456 * length_m, abs=5e-4)


def test_trace_line_keeps_every_field_and_shares_equal_lines(monkeypatch):
    from core.recheck import trace
    from core.recheck.trace import line

    monkeypatch.setattr(trace, "_LINES", {})  # an empty cache, so the line is built here
    made = line(symbol="KD", value=0.6180339, clause="CSA O86-19 5.3.2", source="by hand", status=TraceStatus.memory)
    assert (made.symbol, made.value, made.unit, made.clause, made.source, made.status) == (
        "KD", 0.6180339, "", "CSA O86-19 5.3.2", "by hand", TraceStatus.memory
    )  # fmt: skip
    again = line(symbol="KD", value=0.6180339, clause="CSA O86-19 5.3.2", source="by hand", status=TraceStatus.memory)
    assert again is made
    other = line(symbol="KD", value=0.6180339, unit="", clause="CSA O86-19 5.3.2", source="by hand")
    assert other.status is TraceStatus.formula
    assert other is not made


def test_o86_24_has_no_separate_long_term_deflection_check(monkeypatch):
    # reference o86.md sections 12 and 13: O86-24 deletes 5.4.3 (creep folded into 5.4.2), so a dead-load-only
    # beam is held to L/180 under D + L + S, not to the O86-19 long-term L/360
    from core.recheck import deflection

    monkeypatch.setattr(deflection, "EDITION", "O86-24")
    r = recheck(glulam(loads={"dead_kn_m": 4.0, "live_kn_m": 0.0, "snow_kn_m": 0.0}))
    assert r.deflection.limit_mm == pytest.approx(7200 / 180, rel=1e-9)
    assert r.deflection.case == "D + L + S"
    (edition,) = [t for t in r.deflection.trace if t.symbol == "edition"]
    assert edition.value == "O86-24"
    assert edition.source == "no separate long-term check in this edition"


def test_deflection_check_builds_its_trace_unless_told_not_to():
    from core.analysis import BeamModel
    from core.member import member_properties
    from core.recheck.deflection import deflection_check

    beam = glulam()
    model = BeamModel(beam.spans_mm, beam.overhang_left_mm, beam.overhang_right_mm)
    member = member_properties(beam)
    assert {t.symbol for t in deflection_check(beam, member, model).trace} >= {"ES", "limit", "edition"}
    assert deflection_check(beam, member, model, traces=False).trace == []


def test_a_utilisation_just_over_one_prints_on_its_side_of_one():
    """A check fails above 1.00 (utilisation = demand / capacity; common practice): printed on its side of 1.00.

    The printed figure must not read 1.00 beside FAILS, nor a value and its limit read equal in a finding.
    """
    from core.results import beyond_text, utilisation_text

    assert utilisation_text(0.87) == "0.87"
    assert utilisation_text(1.0012) == "1.001"
    assert utilisation_text(1.00004) == "1.00004"
    assert utilisation_text(0.9996) == "1.00"  # at most 1.00 passes: printed as 1.00, on its side
    assert utilisation_text(1.0) == "1.00"
    assert utilisation_text(None) == "-"
    assert beyond_text(37.54, 37.5, "mm") == ("37.54 mm", "37.50 mm")
    assert beyond_text(41.0, 37.5, "mm") == ("41.0 mm", "37.5 mm")
