"""How urgent an overstress is, what a finding tells the contractor to do, and table rows named unambiguously.

Found by a read of the demo notice as a contractor and as the signing engineer would read it:
- a roof beam overstressed under 1.25D + 1.5S was "before loading" with "Do not load beyond its present
  load", an instruction nobody can follow for snow;
- a sawn floor joist with loose decking was told to fasten it "before any roofing material or snow load"
  and cited the glulam clause;
- two different table rows printed the same words with different statuses (KT of glulam from memory, KT
  of sawn lumber confirmed: both "treatment_factors: none, dry"), so the engineer could not tell which held.
"""

from __future__ import annotations

import re

import pytest

from core.kinds import FindingCode
from core.recheck import recheck
from core.results import Priority, governing_check
from tests.core import golden
from tests.core.beams import glulam, sawn


def _findings(result, code):
    return [f for f in result.findings if f.code is code]


def test_roof_overstress_under_snow_is_immediate_and_says_shore_it():
    """Snow cannot be kept off a roof (common practice): shore or prop now, not "do not load".

    An overstress under a snow combination is made safe by shoring, not by an instruction nobody can follow.
    """
    r = recheck(glulam(b_mm=80, d_mm=304, spans_mm=[7200]))
    region = r.bending[0]
    assert region.utilisation > 1.0
    assert region.combination.startswith("1.25D + 1.5S")
    assert region.snow_in_combination
    (finding,) = _findings(r, FindingCode.bending_overstress)
    assert finding.priority is Priority.immediate
    assert finding.action.startswith("Make safe now: snow can load this member at any time")
    # a date, not a weather event: "before snow builds up" read as leave to wait for a snowfall (a notice review)
    assert "shored or propped today, whatever the forecast" in finding.action
    assert finding.action.endswith("added bracing or a replacement member.")  # the engineer-of-record part kept


def test_floor_overstress_under_live_load_stays_before_loading():
    """A floor's live load is the contractor's to keep off (common practice): before loading, not immediate."""
    r = recheck(sawn(spans_mm=[6000]))
    region = r.bending[0]
    assert region.utilisation > 1.0
    assert region.combination.startswith("1.25D + 1.5L")
    assert not region.snow_in_combination
    assert not region.dead_load_only
    (finding,) = _findings(r, FindingCode.bending_overstress)
    assert finding.priority is Priority.before_loading
    assert finding.action.startswith("Do not load beyond its present load")


def test_bearing_overstress_under_snow_is_immediate():
    """Qr = phi Fcp Ab KB KZcp (CSA O86-19 7.5.9, from memory): 30 mm of bearing under a snow roof beam fails.

    It holds its dead load alone (at 20 mm it would not, and the dead-load instruction would come first).
    """
    r = recheck(glulam(bearings=[{"lateral": True, "rotation": True, "length_mm": 30}] * 2))
    over = [b for b in r.bearing if b.utilisation > 1.0]
    assert over
    assert all(b.snow_in_combination and not b.dead_load_only for b in over)
    assert all(b.dead_load_utilisation is not None and b.dead_load_utilisation < 1.0 for b in over)
    found = _findings(r, FindingCode.bearing_overstress)
    assert len(found) == len(over)
    for f in found:
        assert f.priority is Priority.immediate
        assert f.action.startswith("Make safe now: snow can load")
        assert f.action.endswith("Lengthen the bearing or add a bearing plate as directed by the engineer of record.")


def test_overstress_under_dead_load_alone_is_immediate_and_says_prop_it():
    """Dead load alone: overstressed as the member stands (common practice: prop it now).

    With no live or snow load, 1.4D is the one combination (NBC Table 4.1.3.2-A).
    """
    r = recheck(
        glulam(
            loads={"dead_kn_m": 40.0, "live_kn_m": 0.0, "snow_kn_m": 0.0},
            bearings=[{"lateral": True, "rotation": True, "length_mm": 40}] * 2,
        )
    )
    assert r.shear.dead_load_only
    assert r.shear.combination == "1.4D"
    assert r.shear.utilisation > 1.0
    (shear,) = _findings(r, FindingCode.shear_overstress)
    assert shear.priority is Priority.immediate
    assert shear.action.startswith("Make safe now: the member is overstressed under its design dead load alone")
    bearing = _findings(r, FindingCode.bearing_overstress)
    assert bearing
    assert all(f.priority is Priority.immediate and f.action.startswith("Make safe now: the member") for f in bearing)


def _joist_with_loose_decking(live_kn_m: float):
    """A 38 x 235 S-P-F floor joist, 3.9 m, subfloor not fastened: the demo's FJ-1 at 400 mm centres."""
    return sawn(
        spans_mm=[3900],
        top_edge={"braced_by": "decking", "fastened": False},
        loads={"dead_kn_m": 0.6, "live_kn_m": live_kn_m, "snow_kn_m": 0.0},
    )


def test_a_member_that_fails_under_its_dead_load_alone_is_immediate_whatever_governs():
    """A member overstressed under its dead load alone is propped now, whichever combination governs.

    Common practice. Found by a review of the demo: FJ-1 failed under 1.25D + 1.5L (3.54) and was ranked
    "before loading", though 1.4D alone already overstressed it.
    """
    r = recheck(_joist_with_loose_decking(live_kn_m=0.96))
    region = r.bending[0]
    assert region.combination.startswith("1.25D + 1.5L")
    assert not region.dead_load_only
    # the same joist with no live load: 1.4D is its only combination (NBC Table 4.1.3.2-A), and what it gives
    # is the utilisation under the dead load alone that the loaded joist carries
    alone = recheck(_joist_with_loose_decking(live_kn_m=0.0)).bending[0]
    assert alone.combination == "1.4D"
    w_n_mm = 1.4 * (0.6 + 4.2 * 0.038 * 0.235)  # 1.4 (D + self-weight, S-P-F 4.2 kN/m3 from memory), N/mm
    assert alone.mf_knm == pytest.approx(w_n_mm * 3900**2 / 8 / 1e6, rel=1e-3)  # M = wL^2/8 (handbook)
    assert region.dead_load_utilisation == pytest.approx(alone.utilisation, rel=1e-9)
    assert region.dead_load_utilisation > 1.0
    (finding,) = _findings(r, FindingCode.bending_overstress)
    assert finding.priority is Priority.immediate
    assert finding.action.startswith("Make safe now: the member is overstressed under its design dead load alone")
    assert f"Under its design dead load alone (1.4D) the utilisation is {alone.utilisation:.2f}" in finding.message
    # what makes it urgent can be followed: the 1.4D case's own numbers (KD 0.65 for permanent load, O86-19
    # Table 5.1, from memory) in the governing trace, as the same joist's own 1.4D recheck gives them
    (line,) = [t for t in region.trace if t.symbol == "dead load alone (1.4D)"]
    assert line.value == pytest.approx(alone.utilisation, rel=1e-9)
    assert line.source.startswith(f"Mf {alone.mf_knm:.4g} kN·m vs Mr {alone.mr_knm:.4g} kN·m with KD 0.65")


def test_a_member_that_holds_its_dead_load_and_fails_under_live_load_stays_before_loading():
    """The same joist with its decking fastened holds 1.4D and fails only under the live load still to come."""
    r = recheck(sawn(spans_mm=[6000]))
    region = r.bending[0]
    assert region.utilisation > 1.0
    assert region.dead_load_utilisation is not None
    assert region.dead_load_utilisation < 1.0
    (finding,) = _findings(r, FindingCode.bending_overstress)
    assert finding.priority is Priority.before_loading
    assert "dead load alone" not in finding.message
    assert not [t for t in region.trace if t.symbol.startswith("dead load alone")]


def test_a_bearing_that_fails_under_its_dead_load_alone_is_immediate():
    """Qr = phi Fcp Ab KB KZcp (CSA O86-19 6.5.6, from memory): a 10 mm bearing of a loaded floor joist."""
    r = recheck(
        sawn(
            bearings=[{"lateral": True, "rotation": True, "length_mm": 10}] * 2,
            loads={"dead_kn_m": 3.0, "live_kn_m": 4.0, "snow_kn_m": 0.0},
        )
    )
    for b in r.bearing:
        assert not b.dead_load_only
        assert b.dead_load_utilisation is not None
        assert b.dead_load_utilisation > 1.0
    found = _findings(r, FindingCode.bearing_overstress)
    assert len(found) == 2
    for f in found:
        assert f.priority is Priority.immediate
        assert f.action.startswith("Make safe now: the member is overstressed under its design dead load alone")
        assert "Under its design dead load alone (1.4D)" in f.message
    for b in r.bearing:
        (line,) = [t for t in b.trace if t.symbol == "dead load alone (1.4D)"]
        assert line.value == pytest.approx(b.dead_load_utilisation, rel=1e-9)
        assert line.source.endswith("with KD 0.65")


def test_loose_decking_on_a_floor_joist_speaks_of_floor_loads_and_the_lumber_clause():
    """A joist cites the lumber clause and floor loads, not the glulam clause and roofing.

    Sawn lumber's lateral stability tiers (CSA O86-19 6.5.3.2.1, from memory) rest on decking fastened to
    the compression edge; the glulam clause (7.5.6.4) does not apply to a joist.
    """
    r = recheck(sawn(top_edge={"braced_by": "decking", "fastened": False}))
    (f,) = [f for f in r.findings if f.region == "top edge"]
    assert f.clause == "CSA O86-19 6.5.3.2.1"
    assert "the decking is not fastened to the top edge" in f.message
    assert f.action == (
        "Fasten the decking as detailed before any floor finish, stored material or other load is placed."
    )


def test_loose_purlins_on_a_roof_beam_speak_of_roofing_and_snow():
    r = recheck(glulam(top_edge={"braced_by": "purlins", "spacing_mm": 2400, "fastened": False}))
    (f,) = [f for f in r.findings if f.region == "top edge"]
    assert f.clause == "CSA O86-19 7.5.6.4.2"
    assert "the purlins are not fastened to the top edge" in f.message
    assert f.action == "Fasten the purlins as detailed before any roofing material or snow load is placed."


def test_loose_decking_with_use_and_snow_unknown_names_every_load_still_to_come():
    r = recheck(glulam(use=None, top_edge={"braced_by": "decking", "fastened": False}, loads=_no_snow()))
    (f,) = [f for f in r.findings if f.region == "top edge"]
    assert f.action.endswith("before any further load (roofing, flooring, stored material or snow) is placed.")


def _no_snow():
    return {"dead_kn_m": 2.0, "live_kn_m": 2.4, "snow_kn_m": 0.0}


def _rows(result):
    traces = [t for r in result.bending for t in r.trace] + result.shear.trace + result.deflection.trace
    traces += [t for b in result.bearing for t in b.trace]
    return traces


def test_one_wording_never_stands_for_two_statuses():
    """A table row's line (clause and source) must name the row, so one wording has one status on a notice."""
    seen: dict[tuple[str, str], set[str]] = {}
    for beam in golden.beams(golden.FAST_COUNT):
        for t in _rows(recheck(beam)):
            seen.setdefault((t.clause, t.source), set()).add(t.status.value)
    mixed = {k: v for k, v in seen.items() if len(v) > 1}
    assert mixed == {}


def test_rows_name_their_material_and_grade():
    glu, lumber = recheck(glulam()), recheck(sawn())
    kt = {t.source for r in (glu, lumber) for t in _rows(r) if t.symbol == "KT"}
    assert kt == {
        "row glulam, untreated, dry service: KT 1, KT(E) 1",
        "row sawn, untreated, dry service: KT 1, KT(E) 1",
    }
    stamp = {t.source for t in _rows(glu) if t.symbol.endswith(" moment)")}
    assert stamp == {"D.Fir-L 24f-E, installed with its TOP stamp up"}  # what was seen, not an instruction
    # sawn fb comes from the grade row itself (O86-19 Table 6.4 gives fb, fv, fcp and E in one row): the notice
    # lists that row once, not a second "Table 6.4: S-P-F No.1/No.2" row beside it
    from core.results import rows_used

    grade = next(t for r in lumber.bending for t in r.trace if t.symbol == "grade")
    fb = next(t for r in lumber.bending for t in r.trace if t.symbol.startswith("fb ("))
    assert fb.row == grade.source
    assert [row for row in rows_used(lumber) if row[0] == "CSA O86-19 Table 6.4"] == [
        ("CSA O86-19 Table 6.4", grade.source, grade.status)
    ]


def test_no_project_internal_references_or_empty_fields_reach_a_notice():
    """What the engineer signs cites the standard, not this project's notes; a row never ends in an empty field."""
    # "reference 10 E1/E2" (a section of the project's notes) reached the demo notice from a data row
    internal = re.compile(r"o86\.md|reference Q\d|reference \d+|memory rows never|confirmed_by\s*($|,)")
    for beam in golden.beams(golden.FAST_COUNT):
        text = recheck(beam).model_dump_json()
        assert not internal.search(text), internal.search(text)


def test_a_member_whose_capacity_is_unknown_has_no_governing_utilisation():
    """No reassuring number for a member whose bending capacity is unknown, though its shear is rated.

    Not established: a bearing restraint is missing (CSA O86-19 7.5.6.3.1); not permitted: CB > 50 (7.5.6.4.4).
    """
    for beam in (
        glulam(bearings=[{"lateral": False, "rotation": True, "length_mm": 140}] * 2),
        glulam(b_mm=80, d_mm=912, spans_mm=[12000], top_edge={"braced_by": "none"}),
    ):
        r = recheck(beam)
        assert r.status.value in {"not_established", "not_permitted"}
        assert r.shear.utilisation < 1.0
        index, util = governing_check(r.bending, r.shear, r.bearing, r.deflection)
        assert util is None
        assert r.governing_utilisation is None
        assert r.bending[index].utilisation is None
        assert r.bending[index].outcome.value == r.status.value


def test_a_rated_member_is_governed_by_its_largest_utilisation_the_last_of_equals():
    r = recheck(glulam(bearings=[{"lateral": True, "rotation": True, "length_mm": 20}] * 2))
    utils = [x.utilisation for x in r.bending] + [r.shear.utilisation]
    utils += [b.utilisation for b in r.bearing] + [r.deflection.utilisation]
    index, util = governing_check(r.bending, r.shear, r.bearing, r.deflection)
    assert util == max(utils) == r.governing_utilisation
    assert r.bearing[0].utilisation == r.bearing[1].utilisation  # a symmetric simple span
    assert index == len(r.bending) + 2  # the right-hand bearing


def _nine_metre(**over):
    """A 9 m roof beam whose purlin fastening and TOP stamp were not seen (invented scenario)."""
    data = {
        "spans_mm": [9000],
        "top_edge": {"braced_by": "purlins", "spacing_mm": 2400},  # fastened: not recorded
        "top_stamp": "not_visible",
    }
    data.update(over)
    return glulam(**data)


def test_a_failure_that_rests_on_what_was_not_seen_names_it_and_ranks_it_before_loading():
    """Where a bending failure rests on unfavourable cases taken for what was not seen, confirming them is as urgent.

    Common practice: a finding that a member fails is only as good as its inputs, so inputs taken as the
    unfavourable case (purlins not fastened, CSA O86-19 7.5.6.4; the weaker face of an unbalanced layup in
    tension, CSA O86-19 Table 7.3 note) are confirmed before loading, not left to a later review.
    """
    for bearings in (None, [{"lateral": False, "rotation": True, "length_mm": 140}] * 2):
        r = recheck(_nine_metre(**({} if bearings is None else {"bearings": bearings})))
        failing = [f for f in r.findings if f.code is FindingCode.bending_overstress]
        assert len(failing) == 1
        assert failing[0].priority is Priority.immediate
        assert "purlins taken as not fastened" in failing[0].message
        assert "weaker layup face taken in tension (TOP stamp not seen)" in failing[0].message
        for code in (FindingCode.input_assumed, FindingCode.layup_inverted):
            (f,) = _findings(r, code)
            assert f.priority is Priority.before_loading, code
            assert f.action.startswith("Confirm before loading"), code
        # most urgent first: the failure above the assumptions it rests on
        assert r.findings.index(failing[0]) < r.findings.index(_findings(r, FindingCode.input_assumed)[0])


def test_the_same_unknowns_on_a_beam_that_passes_stay_low():
    """A 7.2 m beam with the same unknowns passes even taking them unfavourably: they stay as they were ranked."""
    r = recheck(_nine_metre(spans_mm=[7200]))
    assert all(f.code is not FindingCode.bending_overstress for f in r.findings)
    (assumed,) = _findings(r, FindingCode.input_assumed)
    (layup,) = _findings(r, FindingCode.layup_inverted)
    assert assumed.priority is Priority.observation
    assert layup.priority is Priority.before_next_review
    assert "Confirm before loading" not in assumed.action + layup.action


def test_a_negative_moment_failure_does_not_rest_on_top_edge_fastening():
    """A hogging failure neither names the top edge's fastening nor raises it.

    Over an interior support the bottom edge is in compression, so purlins on the top edge do not brace it
    (common practice, CSA O86-19 7.5.6.4).
    """
    r = recheck(
        _nine_metre(
            spans_mm=[6000, 6000],
            bearings=[{"lateral": True, "rotation": True, "length_mm": 140}] * 3,
            top_stamp="up",
            loads={"dead_kn_m": 6.0, "live_kn_m": 0.0, "snow_kn_m": 12.0},
        )
    )
    signs = {b.region: b.sign.value for b in r.bending}
    failing = [f for f in r.findings if f.code is FindingCode.bending_overstress]
    assert [signs[f.region] for f in failing] == ["negative"]  # only the hogging region over support 2 fails
    assert "not fastened" not in failing[0].message
    (assumed,) = _findings(r, FindingCode.input_assumed)
    assert assumed.priority is Priority.observation


def _overhang(snow=9.0, live=0.0):
    return glulam(
        spans_mm=[6000],
        overhang_right_mm=2800,
        loads={"dead_kn_m": 0.5, "live_kn_m": live, "snow_kn_m": snow},
        top_edge={"braced_by": "decking", "fastened": True},
    )


def test_an_uplift_under_snow_is_immediate_and_gives_its_specified_value():
    """Snow on an overhang lifts the back span's end support; snow cannot be kept off (common practice).

    Statics (any beam handbook), 6 m span with a 2.8 m overhang, uniform loads:
    R1 = w_span L / 2 - w_overhang a^2 / (2 L). Specified: D on both, D + S on the overhang.
    """
    r = recheck(_overhang())
    dead = 0.5 + 4.9 * 0.130 * 0.456  # glulam self-weight 4.9 kN/m3 (from memory)
    specified = dead * 6.0 / 2 - (dead + 9.0) * 2.8**2 / (2 * 6.0)
    assert specified < 0
    b = r.bearing[0]
    assert b.uplift_specified_kn == pytest.approx(-specified, rel=1e-6)
    (f,) = _findings(r, FindingCode.uplift_at_support)
    assert f.priority is Priority.immediate
    assert f"still lifts by {-specified:.1f} kN" in f.message
    assert f.action.startswith("Make safe now: snow can load this member at any time")


def test_an_uplift_under_live_load_alone_stays_before_loading():
    """Live load is the contractor's to control (common practice): a live-load uplift is confirmed before loading."""
    r = recheck(_overhang(snow=0.0, live=9.0))
    (f,) = _findings(r, FindingCode.uplift_at_support)
    assert f.priority is Priority.before_loading
    assert f.action.startswith("Confirm a hold-down for the uplift before loading")
    assert r.bearing[0].uplift_snow is False


@pytest.mark.parametrize(
    ("case", "over"),
    [
        ("restraint missing", {"bearings": [{"lateral": True, "rotation": False, "length_mm": 140}] * 2}),
        ("restraint not seen", {"bearings": [{"lateral": True, "rotation": "not_visible", "length_mm": 140}] * 2}),
        ("not permitted", {"b_mm": 80, "d_mm": 912, "spans_mm": [12000], "top_edge": {"braced_by": "none"}}),
    ],
)
def test_an_immediate_item_on_a_roof_under_snow_says_shore_it_not_keep_loads_off(case, over):
    """Snow cannot be kept off a roof (common practice): every IMMEDIATE action on a member carrying snow shores it.

    Found by a read of the demo notice as the site superintendent, written on a day of light snow: the restraint
    and slenderness items said "keep loads off" while the overstress items beside them said snow cannot be kept
    off. The same member without snow keeps "keep loads off this beam" (the contractor controls the load).
    """
    snow = recheck(glulam(**over))
    none = recheck(glulam(**over, loads={"dead_kn_m": 2.0, "live_kn_m": 3.0, "snow_kn_m": 0.0}))
    for result, shored in ((snow, True), (none, False)):
        immediate = [f for f in result.findings if f.priority is Priority.immediate]
        assert immediate, (case, [f.code for f in result.findings])
        for f in immediate:
            assert f.action.startswith("Make safe now"), f.action
            assert ("snow can load this member at any time" in f.action) is shored, f.action
            assert ("have it shored or propped now" in f.action) is shored, f.action
            assert ("keep loads off this beam" in f.action) is not shored, f.action


def test_a_floor_member_failing_under_dead_load_is_not_told_about_roofing():
    """A floor joist's permanent load to come is finishes and partitions, not roofing (common practice)."""
    r = recheck(sawn(spans_mm=[3900], top_edge={"braced_by": "decking", "fastened": False},
                     loads={"dead_kn_m": 0.6, "live_kn_m": 0.96, "snow_kn_m": 0.0}))  # fmt: skip
    (f,) = _findings(r, FindingCode.bending_overstress)
    assert f.priority is Priority.immediate  # 1.4D alone fails it (the demo's FJ-1)
    assert "place no more finishes, partitions, stored material or other permanent load on it" in f.action
    assert "roofing" not in f.action
