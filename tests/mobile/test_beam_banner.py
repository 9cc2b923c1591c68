"""The beam screen's IMMEDIATE banner folded (``BeamFormViewModel.immediate_summary``), without Kivy.

Folded, the banner says the priority, how many IMMEDIATE findings and what they are about, so the form keeps
its height (session-32 review: the whole banner took 270 px of an 800 px landscape screen); a tap shows
``immediate_findings`` whole.
"""

import pytest

from core.kinds import FindingCode
from mobile.demo.run import load_demo
from mobile.viewmodels import BeamFormViewModel
from mobile.viewmodels.common import FINDING_WORDS, finding_words
from storage import Store


@pytest.fixture
def demo(tmp_path):
    store = Store(tmp_path / "b.db")
    return store, load_demo(store)


def _form(demo, mark):
    store, site_id = demo
    return BeamFormViewModel(store, site_id, next(i for i, r in store.beams(site_id) if r["mark"] == mark))


@pytest.mark.parametrize(
    ("mark", "folded"),
    [
        ("RB-1", ""),  # passes: no banner
        ("RB-7", ""),  # deficient, but its finding is for the next review: no banner
        ("RB-3", "▲ IMMEDIATE: make safe now · 1 finding: bending overstress, span 1. Tap to read it in full."),
        (
            "RB-5",
            "▲ IMMEDIATE: make safe now · 1 finding: bearing restraint missing, support 2 (right end). "
            "Tap to read it in full.",
        ),
        # CB 57 > 50: in words, not the code with its '_' made spaces ("slenderness exceeds limit")
        ("RB-4", "▲ IMMEDIATE: make safe now · 1 finding: slenderness over the limit, span 1. Tap to read it in full."),
    ],
)
def test_the_folded_banner_names_the_priority_the_count_and_the_finding(demo, mark, folded):
    form = _form(demo, mark)
    assert form.immediate_summary() == folded
    assert bool(form.immediate_findings()) == bool(folded)  # folded exactly when there is a banner to fold


def test_several_immediate_findings_are_counted_and_grouped_by_kind(demo):
    form = _form(demo, "RB-3")
    form.set_field("bearing1.rotation", "no")
    form.set_field("bearing2.rotation", "no")
    whole = form.immediate_findings()
    assert len(whole) == 3  # both bearings unrestrained, and the overstress
    assert form.immediate_summary() == (
        "▲ IMMEDIATE: make safe now · 3 findings: bearing restraint missing (2), bending overstress. "
        "Tap to read them in full."
    )


def test_every_finding_code_has_words_and_an_unknown_code_is_refused_by_name():
    assert set(FINDING_WORDS) == set(FindingCode)  # a code core adds fails here, not as raw text on a screen
    assert finding_words("layup_inverted") == "layup upside down"
    assert all("_" not in words for words in FINDING_WORDS.values())
    with pytest.raises(ValueError, match="finding code 'rot_at_bearing' has no words"):
        finding_words("rot_at_bearing")
