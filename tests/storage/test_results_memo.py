"""The per-process memo of beam summaries, and the portfolio recheck's streamed parts.

Expected values: the same beam rechecked without the memo (``_summary_of`` of the validated beam, the
path before the memo), and for a table correction the published relation Mr = phi Fb S KX KZbg
(CSA O86-19 7.5.6.5.1, KL = 1 under fastened decking): half the fb, twice the bending utilisation.
"""

import importlib
import json

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from core import tables
from core.overrides import TableRecord
from core.recheck import recheck
from core.results import governing_check
from storage import Store, results
from tests.core.beams import glulam
from tests.core.test_properties import beams

RECHECK = importlib.import_module("core.recheck")  # the package (``core.recheck`` the function is in it)


@pytest.fixture
def counted(monkeypatch):
    """Count the core rechecks (a memo hit makes none); a fresh, empty memo."""
    calls = []
    real = RECHECK.recheck_with_rows  # what a summary calls
    monkeypatch.setattr(RECHECK, "recheck_with_rows", lambda beam: calls.append(beam.mark) or real(beam))
    monkeypatch.setattr(results, "_MEMO", {})
    return calls


def _text(beam, **extra):
    """A stored record's text: the beam's fields and keys outside contract 1 (location, notes)."""
    return json.dumps({**beam.model_dump(mode="json"), **extra})


def _direct(text):
    """The summary without the memo: the beam validated from the text and rechecked."""
    return results._summary_of(results._stored_beam().model_validate_json(text))


def test_beams_differing_only_in_mark_and_location_share_one_recheck(counted):
    texts = [
        _text(glulam(mark="RB-1"), level="Roof", gridline="A/1"),
        _text(glulam(mark="RB-2"), level="Roof", gridline="A/2", notes="second purlin bay"),
        _text(glulam(mark="RB-3"), site_id="elsewhere", photos=["p1"]),
    ]
    got = [results._summary(t) for t in texts]
    assert counted == ["RB-1"]  # one recheck for the three
    assert got == [_direct(t) for t in texts]


@pytest.mark.parametrize(
    "over",
    [
        {"d_mm": 418},
        {"b_mm": 175},
        {"spans_mm": [7210]},
        {"grade": "20f-E"},
        {"loads": {"dead_kn_m": 2.0, "live_kn_m": 0.0, "snow_kn_m": 5.01}},
        {"top_edge": {"braced_by": "purlins", "spacing_mm": 1200, "fastened": True}},
        {"bearings": [{"lateral": True, "rotation": True, "length_mm": 100}] * 2},
        {"use": "floor"},
        {"service": "wet"},
        {"top_stamp": "not_visible"},
        {"self_weight": False},
        {"overhang_right_mm": 600.0},
    ],
    ids=lambda over: next(iter(over)),
)
def test_any_engineering_field_changed_is_rechecked_afresh(counted, over):
    base = _text(glulam(mark="RB-1"))
    other = _text(glulam(mark="RB-1", **over))
    results._summary(base)
    got = results._summary(other)
    assert counted == ["RB-1", "RB-1"]  # no hit: the changed field is part of the key
    assert got == _direct(other)


def test_a_table_correction_gives_a_new_generation_and_a_fresh_recheck(counted):
    decked = _text(glulam(mark="RB-1", top_edge={"braced_by": "decking", "fastened": True}))
    before = results._summary(decked)
    generation = tables.generation()
    half_fb = TableRecord(
        table="glulam_grades",
        row="D.Fir-L/24f-E",
        by="R. Osei",
        edition="O86-19",
        page=112,
        at="2026-12-02T17:00:00Z",
        column="fb_pos_mpa",
        value="15.3",  # a test value: half the published fb (30.6 MPa, from memory)
        source="firm's check of its copy",
    )
    try:
        tables.use_firm_records([half_fb])
        assert tables.generation() > generation  # a correction bumps the generation the memo is keyed by
        after = results._summary(decked)
        assert counted == ["RB-1", "RB-1"]  # rechecked with the corrected row, not served from the memo
        assert after == _direct(decked)
    finally:
        tables.use_firm_records([])
    # CSA O86-19 7.5.6.5.1 with KL = 1: Mr proportional to Fb, so half the fb doubles the utilisation
    assert after[2] == pytest.approx(2 * before[2], rel=1e-3)
    counted.clear()
    assert results._summary(decked) == before  # the published rows again: a new generation, a fresh recheck
    assert counted == ["RB-1"]


def test_an_incomplete_record_is_unchecked_and_not_memoised(counted):
    assert results._summary(json.dumps({"mark": "NEW-1", "material": "glulam"})) == results.UNCHECKED_SUMMARY
    assert results._MEMO == {}
    assert counted == []


def test_the_memo_is_bounded_and_starts_afresh_when_full(counted, monkeypatch):
    monkeypatch.setattr(results, "MEMO_MAX", 3)
    for d in (380, 418, 456, 494):
        results._summary(_text(glulam(d_mm=d)))
    assert len(results._MEMO) == 1  # cleared when the fourth design came
    assert len(counted) == 4


@st.composite
def sites(draw):
    """A few designs (valid or not), each logged as several marks at several places."""
    designs = draw(st.lists(beams(), min_size=1, max_size=4))
    picks = draw(st.lists(st.integers(0, len(designs) - 1), min_size=2, max_size=10))
    return [
        json.dumps({**designs[i], "mark": f"M-{n}", "level": f"L{n % 3}", "notes": "x" * (n % 4)})
        for n, i in enumerate(picks)
    ]


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(texts=sites())
def test_rows_with_the_memo_equal_rows_without(texts):
    """Varied beams (tests.core.test_properties.beams), repeated under other marks: memo on and off agree."""
    jobs = [(f"b{n}", "s", "h", t, json.dumps([f"M-{n}", None, None, None]), "") for n, t in enumerate(texts)]
    saved = results.MEMO_MAX, dict(results._MEMO)
    try:
        results.MEMO_MAX = 0
        off = [results.row_of(j) for j in jobs]
        results.MEMO_MAX = 20_000
        results._MEMO.clear()
        on = [results.row_of(j) for j in jobs]
        again = [results.row_of(j) for j in jobs]  # every one a hit now
    finally:
        results.MEMO_MAX = saved[0]
        results._MEMO.clear()
        results._MEMO.update(saved[1])
    assert on == off
    assert again == off


def _two_sites(store, n):
    yard, shed = store.create_site(name="Yard"), store.create_site(name="Shed")
    for i in range(n):
        design = glulam(mark=f"B-{i}", d_mm=38 * (10 + i % 3))  # three designs, repeated
        store.save_beam((yard if i % 2 else shed).id, design, {"level": f"L{i % 4}"})
    return yard, shed


def test_portfolio_parts_are_read_as_the_workers_ask(tmp_path, monkeypatch):
    """The parent holds a few parts in flight, not the whole portfolio, and the workers start at once."""
    store = Store(tmp_path / "s.db")
    _two_sites(store, 24)
    drawn = []
    real = results._parts

    def parts(*args):
        for part in real(*args):
            drawn.append(len(part[2]))
            yield part

    monkeypatch.setattr(results, "_parts", parts)
    seen = []
    run = results.recheck_all(
        store.db, processes=2, chunk=2, on_progress=lambda d, _total: seen.append((d, len(drawn)))
    )
    assert run.rechecked == 24
    assert seen[0] == (0, 4)  # 2 parts a worker sent before the stored results are read
    assert seen[1] == (2, 5)  # one more part read for each part done
    assert [d for d, _ in seen] == list(range(0, 26, 2))
    assert sum(drawn) == 24


@pytest.mark.parametrize("processes", [1, 2])
def test_portfolio_of_one_site_stores_what_the_site_refresh_stores(tmp_path, processes):
    """Paged reads per site (and all sites) give the rows a refresh computes, archived beams left out."""
    store = Store(tmp_path / "p.db")
    yard, _ = _two_sites(store, 13)
    gone = store.save_beam(yard.id, glulam(mark="OLD-1"))
    store.update_beam(gone, {"archived": True})
    expect = {j[0]: results.as_row(results.compute(j)) for j in results.jobs(store.db, None, only_stale=False)}
    store.db.execute("DELETE FROM beam_result")
    run = results.recheck_all(store.db, yard.id, processes=processes, chunk=2)
    got = results.stored_rows(store.db)
    assert run.rechecked == 6 == len(got)
    assert got == {k: v for k, v in expect.items() if v[1] == yard.id}
    assert [a.beam_id for _, a in run.moved] == sorted(got)  # in id order, as before
    results.recheck_all(store.db, processes=processes, chunk=5)
    got = results.stored_rows(store.db)
    assert got == expect
    assert gone not in got


@pytest.mark.parametrize("site", [True, False])
def test_portfolio_pages_are_read_in_id_order_without_sorting_a_site_per_page(tmp_path, site):
    """A page is a seek on the id index: no temporary sort (per page, that sorted the whole site again)."""
    store = Store(tmp_path / "q.db")
    yard, _ = _two_sites(store, 4)
    args = [yard.id] if site else []
    for after in (False, True):
        sql = results._every_beam_sql(yard.id if site else None, after=after, paged=True) + " ORDER BY b.id LIMIT ?"
        plan = store.db.execute(f"EXPLAIN QUERY PLAN {sql}", [*args, *([""] if after else []), 2]).fetchall()
        assert "TEMP B-TREE" not in repr(plan), plan


def test_a_memo_that_finds_nothing_stands_idle_for_the_rest_of_the_run(counted, monkeypatch):
    """No two beams alike: after MEMO_PROBE lookups without a hit, no key is computed; results unchanged."""
    monkeypatch.setattr(results, "MEMO_PROBE", 4)
    results.memo_reset()
    texts = [_text(glulam(mark=f"V-{k}", d_mm=38 * (8 + k))) for k in range(6)]
    texts.append(_text(glulam(mark="V-again", d_mm=38 * 8)))  # the first design again: no longer looked up
    got = [results._summary(t) for t in texts]
    assert results._MEMO_SEEN == [4, 0]  # four lookups, then idle
    assert len(counted) == 7  # the repeat was rechecked, not found
    assert got == [_direct(t) for t in texts]
    results.memo_reset()  # the next run looks again
    assert not results._memo_idle()


def test_a_memo_that_finds_repeats_stays_in_use(counted, monkeypatch):
    monkeypatch.setattr(results, "MEMO_PROBE", 4)
    results.memo_reset()
    texts = [_text(glulam(mark=f"R-{k}", d_mm=38 * (8 + k % 2))) for k in range(10)]  # two designs
    got = [results._summary(t) for t in texts]
    assert results._MEMO_SEEN == [10, 8]
    assert counted == ["R-0", "R-1"]
    assert got == [_direct(t) for t in texts]


def _traced_summary(beam):
    """A stored summary as it was made before ``recheck_with_rows``: from the traced recheck's lines."""
    result = recheck(beam)
    checks = [(f"bending {r.region}", r.trace) for r in result.bending]
    checks.append(("shear", result.shear.trace))
    checks += [(f"bearing {b.support}", b.trace) for b in result.bearing]
    checks.append(("deflection", result.deflection.trace))
    index, _ = governing_check(result.bending, result.shear, result.bearing, result.deflection)
    statuses = ("verified", "confirmed", "memory")
    # a line's row is the rule it rests on where it names one (``FactorTrace.row``), else its source
    rows = {(t.clause, t.row or t.source, t.status) for _, trace in checks for t in trace if t.status in statuses}
    findings = tuple((f.code, f.priority.value, f.region or "") for f in result.findings)
    util = None if result.governing_utilisation is None else round(float(result.governing_utilisation), 6)
    return result.status.value, checks[index][0], util, findings, tuple(sorted(rows))


def test_a_summary_from_the_untraced_recheck_equals_one_from_the_traced_lines():
    """The portfolio's summary (status-only recheck and its rows) equals the traced path's, beam for beam.

    Over 300 of the golden set's varied beams (every kind: simple, continuous, overhangs, sawn, unbraced).
    """
    from tests.core.golden import beams as golden_beams

    for beam in golden_beams(300):
        assert results._summary_of(beam) == _traced_summary(beam), beam.mark
