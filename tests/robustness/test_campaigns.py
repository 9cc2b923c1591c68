"""The fault campaigns with small counts (large counts: ``python -m tests.robustness.campaign``)."""

from tests.robustness.campaign import bundle_campaign, check_campaign, kill_campaign


def test_check_inputs_never_traceback():
    t = check_campaign(300)
    assert t.counts.get("traceback", 0) == 0, t.examples
    assert t.counts.get("clear_error", 0) > 100
    assert t.counts.get("ok", 0) > 0  # both kinds were tried


def test_mutated_bundles_refused_whole_or_applied_consistently():
    t = bundle_campaign(60)
    assert t.counts.get("crashed", 0) == 0, t.examples
    assert t.counts.get("refused_whole", 0) > 20


def test_killed_imports_stay_consistent_and_resume():
    t = kill_campaign(3, edits=1500, batch_ops=300)
    assert t.counts == {"consistent": 3}
