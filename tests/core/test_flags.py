"""Findings decide on flags carried as data, never on the wording of a message or a case name."""

from core import recheck
from core.findings import build_findings
from core.kinds import FindingCode, MomentSign, Outcome
from core.member import member_properties
from tests.core.beams import glulam

TWO_SPANS = {"spans_mm": [7200, 7200], "bearings": [{"lateral": True, "rotation": True, "length_mm": 140}] * 3}


def _reworded(beam, result, **update):
    """Findings rebuilt after every region's words were replaced (flags kept)."""
    words = {"compression_edge": "edge held as recorded", "combination": "case A"}
    bending = [r.model_copy(update={**words, **update}) for r in result.bending]
    return build_findings(beam, member_properties(beam), bending, result.shear, result.bearing, result.deflection)


def test_unbraced_bottom_edge_finding_follows_the_flag_not_the_words():
    beam = glulam(**TWO_SPANS)
    r = recheck(beam)
    neg = [b for b in r.bending if b.sign is MomentSign.negative]
    assert neg
    assert all(b.compression_edge_unbraced for b in neg)  # nothing braces the bottom edge
    codes = [f.code for f in _reworded(beam, r)]
    assert FindingCode.compression_edge_unbraced in codes
    flags_off = [f.code for f in _reworded(beam, r, compression_edge_unbraced=False)]
    assert FindingCode.compression_edge_unbraced not in flags_off


def test_dead_load_only_overstress_is_immediate_by_the_flag():
    # a heavy dead load on a small section: overstress under 1.4D (permanent KD 0.65, O86-19 Table 5.1)
    beam = glulam(d_mm=304, loads={"dead_kn_m": 20.0, "live_kn_m": 0.0, "snow_kn_m": 0.0})
    r = recheck(beam)
    region = r.bending[0]
    assert region.outcome is Outcome.overstress
    assert region.dead_load_only
    first = [f for f in _reworded(beam, r) if f.code is FindingCode.bending_overstress]
    assert first[0].priority.value == "immediate"
    # the flag and the dead-load utilisation together decide it (either says it fails under 1.4D alone)
    flags_off = {"dead_load_only": False, "dead_load_utilisation": None}
    later = [f for f in _reworded(beam, r, **flags_off) if f.code is FindingCode.bending_overstress]
    assert later[0].priority.value == "before_loading"
    held = [f for f in _reworded(beam, r, dead_load_only=False) if f.code is FindingCode.bending_overstress]
    assert held[0].priority.value == "immediate"


def test_enums_keep_their_json_values():
    data = recheck(glulam(**TWO_SPANS)).model_dump(mode="json")
    assert {b["sign"] for b in data["bending"]} == {"positive", "negative"}
    assert {b["outcome"] for b in data["bending"]} <= {"ok", "overstress", "not_permitted", "not_established"}
    assert {t["status"] for b in data["bending"] for t in b["trace"]} <= {
        "verified",
        "confirmed",
        "memory",
        "formula",
        "input",
    }
