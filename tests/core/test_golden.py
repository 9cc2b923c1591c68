"""`bracewalk check` prints byte-identical output to the recheck before it was reorganised for speed.

The golden digests were written by the old code path (tests/core/golden.py explains how). The fast
suite holds a 500-beam subset of the recheck JSON and the whole output (remedies too) of 5 of them;
the slow suite holds all 5,000 (and the whole output of every tenth). A changed digest names the beams
whose output changed.
"""

import pytest

from tests.core import golden

FULL_OUTPUT_FAST = 5  # remedies recheck a beam many times: the whole output of a few beams in the fast suite


@pytest.fixture(scope="module")
def stored() -> list[tuple[str, str]]:
    return golden.read_golden()


def test_golden_file_covers_every_beam(stored):
    assert len(stored) == golden.COUNT
    assert sum(s[1] != "-" for s in stored) == golden.COUNT // golden.FULL_EVERY
    assert golden.GOLDEN.stat().st_size < 1_000_000


def test_golden_file_is_the_one_written_under_this_results_version():
    """An output change comes with a new results version: the ledger holds the golden file's SHA per version.

    The stored results of a database are recomputed when the version changes (storage.results).
    """
    import hashlib

    from core.results import RESULTS_VERSION

    held = golden.versions()
    assert held[RESULTS_VERSION] == hashlib.sha256(golden.GOLDEN.read_bytes()).hexdigest()
    assert max(held) == RESULTS_VERSION
    assert len(set(held.values())) == len(held)  # every version printed something different


def test_a_rewrite_with_other_output_under_the_same_version_is_refused(monkeypatch, tmp_path, capsys):
    monkeypatch.setattr(golden, "GOLDEN", tmp_path / "golden_check.sha256")
    monkeypatch.setattr(golden, "VERSIONS", tmp_path / "golden_versions.txt")
    golden.VERSIONS.write_text("", encoding="utf-8")
    assert golden.write([("a", "-")]) == 0
    assert golden.write([("a", "-")]) == 0  # the same output again: nothing to bump
    assert golden.write([("b", "-")]) == 1
    assert "bump core.results.RESULTS_VERSION" in capsys.readouterr().out
    assert golden.GOLDEN.read_text(encoding="utf-8") == "0 a -\n"  # the refused output was not written


def test_generator_draws_every_kind():
    beams = golden.beams(golden.FAST_COUNT)
    assert {b.material.value for b in beams} == {"glulam", "sawn"}
    assert {len(b.spans_mm) for b in beams} == {1, 2, 3, 4, 5}
    assert any(b.overhang_left_mm and b.overhang_right_mm for b in beams)
    assert {b.bearings[0].lateral.value for b in beams} == {"yes", "no", "not_visible"}
    assert {b.top_edge.braced_by.value for b in beams} == {"none", "purlins", "decking"}
    assert {None if b.use is None else b.use.value for b in beams} == {None, *golden.USES[1:]}


def _differ(beams, stored, which):
    return [b.mark for b, want in zip(beams, stored, strict=False) if want != "-" and which(b) != want]


def test_recheck_json_identical_fast_subset(stored):
    beams = golden.beams(golden.FAST_COUNT)
    assert _differ(beams, [s[0] for s in stored], golden.recheck_digest) == []


def test_check_output_identical_fast_subset(stored):
    beams = golden.beams(FULL_OUTPUT_FAST * golden.FULL_EVERY)
    assert sum(s[1] != "-" for s in stored[: len(beams)]) == FULL_OUTPUT_FAST
    assert _differ(beams, [s[1] for s in stored], golden.check_digest) == []


@pytest.mark.slow
def test_check_output_identical_every_beam(stored):
    beams = golden.beams(golden.COUNT)
    assert _differ(beams, [s[0] for s in stored], golden.recheck_digest) == []
    assert _differ(beams, [s[1] for s in stored], golden.check_digest) == []


def _without_traces(data):
    if isinstance(data, dict):
        return {k: ([] if k == "trace" else _without_traces(v)) for k, v in data.items()}
    if isinstance(data, list):
        return [_without_traces(v) for v in data]
    return data


def test_status_only_recheck_is_the_full_recheck_without_traces():
    from core.recheck import recheck

    for beam in golden.beams(100):
        full = recheck(beam).to_json_dict()
        lean = recheck(beam, traces=False).to_json_dict()
        assert lean == _without_traces(full), beam.mark


@pytest.mark.slow
def test_status_only_recheck_is_the_full_recheck_without_traces_every_beam():
    # the status-only path takes KL from the load-case search instead of finding it again: every golden
    # beam (every kind, options and restraint case) must print what the traced recheck prints, traces aside
    from core.recheck import recheck

    differ = []
    for beam in golden.beams(golden.COUNT):
        if recheck(beam, traces=False).to_json_dict() != _without_traces(recheck(beam).to_json_dict()):
            differ.append(beam.mark)
    assert differ == []
