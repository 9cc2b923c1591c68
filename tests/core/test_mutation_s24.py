"""Checks that tell apart survivors of the s24 mutation run on main (bench/mutation_survivors.md).

Each expected value comes from outside the code under test; the source is named beside each check.
"""

import pytest

from core.member import service_factors
from core.models import BEARING_STAND_INS, bearings_with_stand_ins
from core.recheck import recheck
from core.remedies import apply_change, remedies
from tests.core.beams import glulam, sawn

_THREE_BEARINGS = [{"lateral": True, "rotation": True, "length_mm": 140}] * 3


def test_a_bottom_spacing_without_braces_does_not_brace_the_bottom_edge():
    # O86-19 7.5.6.4 (Lu is the distance between points of lateral support; from memory): a spacing left in the
    # record while the bottom edge is marked unbraced ("none") is not a brace. The negative region over the
    # middle support of two 6 m spans then has Lu = 6000 mm, support to support (DEVELOPERS "Engineering
    # choices"), exactly as with no spacing recorded; braces at 600 mm do shorten it.
    def negative_lu(bottom):
        result = recheck(glulam(spans_mm=[6000, 6000], bearings=_THREE_BEARINGS, bottom_edge=bottom))
        (region,) = [r for r in result.bending if r.sign.value == "negative"]
        return region.lu_mm

    assert negative_lu({"braced_by": "none", "spacing_mm": 600}) == 6000.0
    assert negative_lu({"braced_by": "none"}) == 6000.0
    assert negative_lu({"braced_by": "braces", "spacing_mm": 600}) == 600.0


def test_wet_service_factors_of_lumber_switch_above_89_mm():
    # CSA O86-19 Table 6.10 (from memory): wet service, smaller dimension <= 89 mm: KSb 0.84, KSE 0.94;
    # > 89 mm: KSb 1.00, KSE 1.00. A 90 mm member is in the second column.
    thin, _ = service_factors(sawn(b_mm=89, service="wet"))
    thick, trace = service_factors(sawn(b_mm=90, service="wet"))
    assert (thin["ksb"], thin["kse"]) == (0.84, 0.94)
    assert (thick["ksb"], thick["kse"]) == (1.0, 1.0)
    assert "smaller dimension over 89 mm" in trace.source  # the second column, in words


def test_a_glulam_grade_refusal_lists_the_glulam_stress_grades():
    # contract 1 (ARCHITECTURE.md): the error names the field and the values allowed. O86-19 Table 7.3
    # (from memory): D.Fir-L glulam bending grades 20f-E, 20f-EX, 24f-E, 24f-EX; "No.1/No.2" is a lumber grade.
    with pytest.raises(ValueError, match=r"grade = 'No.1/No.2'") as err:
        glulam(grade="No.1/No.2")
    text = str(err.value)
    assert "['20f-E', '20f-EX', '24f-E', '24f-EX']" in text
    assert "SS" not in text


def test_a_glulam_species_refusal_lists_glulam_species_only():
    # O86-19 Table 7.3 (from memory): glulam comes in species combinations D.Fir-L and Spruce-Pine (Hem-Fir
    # too in the standard, not in the tables); S-P-F and Northern are lumber species groups (Table 6.4).
    with pytest.raises(ValueError, match=r"species = 'S-P-F' is not a glulam species") as err:
        glulam(species="S-P-F")
    text = str(err.value)
    assert "'D.Fir-L'" in text
    assert "'Spruce-Pine'" in text
    assert "Northern" not in text


def test_bearings_saved_while_entered_are_padded_to_one_per_support():
    # common practice: a beam of n spans has n + 1 supports, one bearing each; those not yet entered stand in
    # with the unfavourable "not visible" restraint (DEVELOPERS: unrecorded fields take the unfavourable case).
    out = bearings_with_stand_ins([{"length_mm": 100.0, "lateral": True}], 3)
    assert len(out) == 3
    assert out[0] == {"length_mm": 100.0, "lateral": True, "rotation": "not_visible"}
    assert out[1] == out[2] == BEARING_STAND_INS
    assert out[1] is not BEARING_STAND_INS  # a copy: editing one does not change the stand-ins


def test_the_firm_records_in_use_are_reported_and_cleared():
    # common practice for a signed-off table: what a firm verified stays visible until it is withdrawn.
    from core import tables
    from core.overrides import TableRecord, in_use

    seen = TableRecord(table="glulam_grades", row="D.Fir-L/20f-E", by="A. Reviewer", edition="O86-19", page=120,
                       at="2026-12-01T10:00:00Z")  # fmt: skip
    try:
        tables.use_firm_records([seen])
        assert in_use() == {("glulam_grades", "D.Fir-L/20f-E"): seen}
    finally:
        tables.use_firm_records([])
    assert in_use() == {}


def test_each_confirming_source_is_named_once_in_the_provenance_summary():
    # common practice for a source list: each source once. deflection_limits has one row confirmed by two
    # sources ("A; B") and another by A alone: the summary names A and B, each once.
    from core.provenance import provenance_rows

    for line in provenance_rows()[2:]:
        names = line.rstrip(" |").split(" | ")[-1].split("; ")
        assert len(names) == len(set(names)), line
    (row,) = [line for line in provenance_rows() if line.startswith("| deflection_limits ")]
    assert row.endswith("(single author); a design program's documentation |")


def test_a_size_remedy_for_lumber_is_never_narrower_or_shallower():
    # common practice: a replacement member is at least as wide and as deep as the one built (it must sit
    # on the same bearings and hangers). An 89 x 184 floor beam overstressed in bending (4.2 m span): a
    # 64 x 235 would pass by section modulus with less wood, but is narrower; 89 x 235 is the size offered.
    beam = sawn(b_mm=89, d_mm=184, spans_mm=[4200], loads={"dead_kn_m": 0.8, "live_kn_m": 1.6, "snow_kn_m": 0.0})
    sizes = [r.change for r in remedies(beam) if "b_mm" in r.change]
    assert sizes
    for change in sizes:
        assert change["b_mm"] >= 89, change
        assert change["d_mm"] >= 184, change
    assert {"b_mm": 89.0, "d_mm": 235.0} in sizes


def test_a_load_remedy_keeps_the_missing_bearing_restraint():
    # O86-19 7.5.6.3.1 (from memory): glulam with d/b > 2.5 needs lateral restraint at its bearings; without it
    # KL is not established whatever the load. So a lower-snow remedy for a 130 x 456 beam (d/b 3.5) with
    # unrestrained bearings must also add the restraint, and pass when rechecked with both.
    bearings = [{"lateral": False, "rotation": True, "length_mm": 140}] * 2
    beam = glulam(bearings=bearings, loads={"dead_kn_m": 2.0, "live_kn_m": 0.0, "snow_kn_m": 11.0})
    bending = [r for r in remedies(beam) if r.solves.startswith("bending")]
    lower = [r for r in bending if "loads.snow_kn_m" in r.change]
    bigger = [r for r in bending if "d_mm" in r.change]
    assert lower
    assert bigger
    for remedy in lower + bigger:
        assert remedy.change["bearings.0.lateral"] is True
        assert remedy.change["bearings.1.lateral"] is True
    (load,) = lower
    assert load.change["loads.snow_kn_m"] < 11.0
    after = recheck(type(beam).model_validate(apply_change(beam.model_dump(mode="json"), load.change)))
    assert all(r.outcome.value == "ok" for r in after.bending)


# -- compiled or source (core.compiled), in process: the subprocess tests of test_compiled.py run a fresh
# interpreter, which the mutation run does not reach --------------------------------------------------------
def test_running_compiled_says_whether_analysis_is_an_extension_module():
    # Python's import system (importlib.machinery.EXTENSION_SUFFIXES): a module loaded from a file with one
    # of these suffixes is a compiled extension; a .py is source. Holds both built and from source.
    from importlib.machinery import EXTENSION_SUFFIXES

    from core import analysis
    from core.compiled import running_compiled

    assert running_compiled() == any(str(analysis.__file__).endswith(s) for s in EXTENSION_SUFFIXES)


def test_a_fresh_build_is_used_when_source_is_not_asked_for(monkeypatch):
    # DEVELOPERS.md (compiled core): the compiled modules run unless BRACEWALK_CORE_SOURCE is set or they are
    # stale; then the reason is "" and no source-first finder is put in front of the import system.
    import sys

    import core.compiled as compiled

    monkeypatch.delenv(compiled.SOURCE_ONLY_ENV, raising=False)
    monkeypatch.setattr(compiled, "stale_reason", lambda: "")
    monkeypatch.setattr(sys, "meta_path", list(sys.meta_path))
    before = sum(isinstance(f, compiled.SourceFirst) for f in sys.meta_path)
    assert compiled.use_source_if_needed() == ""
    assert sum(isinstance(f, compiled.SourceFirst) for f in sys.meta_path) == before
    monkeypatch.setattr(compiled, "stale_reason", lambda: "core/a.py changed since it was compiled")
    assert compiled.use_source_if_needed() == "core/a.py changed since it was compiled"


def test_the_source_first_finder_takes_core_modules_only():
    # PEP 451 (importlib finders): find_spec returns None for a module the finder does not handle, so the
    # usual finders take it; for core.* it gives the .py source spec.
    import core
    from core.compiled import SourceFirst

    finder = SourceFirst()
    assert finder.find_spec("json", None) is None
    spec = finder.find_spec("core.analysis", list(core.__path__))
    assert spec is not None
    assert str(spec.origin).endswith("analysis.py")


def test_a_remedy_at_exactly_the_resistance_passes():
    # CSA O86-19 / NBC 4.1.3.1 limit states design: a member passes when the factored resistance is at least the
    # factored load effect (Mr >= Mf), so a utilisation of exactly 1.0 passes. The searches are given a check
    # that reads exactly 1.0 for every candidate: the largest load step and the first size are the answers.
    from core.remedies import _largest_passing, _smallest_passing

    data = sawn().model_dump(mode="json")

    def at_limit(_result):
        return 1.0

    def snow(v):
        return {"loads.snow_kn_m": round(v, 2)}

    found = _largest_passing(0.5, 0.1, snow, data, at_limit)
    assert found == ({"loads.snow_kn_m": 0.5}, 1.0)
    sizes = [{"d_mm": 235.0}, {"d_mm": 286.0}]
    assert _smallest_passing(sizes, data, at_limit) == ({"d_mm": 235.0}, 1.0)
