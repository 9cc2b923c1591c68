"""Storage: the save path, lifecycle rules, merge rules, projections equal a replay of the log."""

import pytest

from core.records import Stage
from storage import Store
from storage.oplog import IntegrityError, Op, apply_op
from storage.store import LifecycleError
from tests.core.beams import glulam


@pytest.fixture
def store(tmp_path):
    return Store(tmp_path / "t.db")


def test_every_save_writes_row_and_op_in_one_transaction(store):
    site = store.create_site(name="Site A")
    beam_id = store.save_beam(site.id, glulam(), {"level": "Roof", "gridline": "C/3-4"})
    ops = store.db.execute("SELECT origin, seq, entity, kind FROM op ORDER BY seq").fetchall()
    assert [(o[1], o[2], o[3]) for o in ops] == [(1, "site", "set"), (2, "beam", "set")]
    assert store.beam(beam_id) == glulam()
    assert store.beam_record(beam_id)["gridline"] == "C/3-4"


def test_projections_equal_replay_of_op_log(store):
    site = store.create_site(name="Site A")
    b = store.save_beam(site.id, glulam())
    store.update_beam(b, {"b_mm": 175})
    d = store.raise_deficiency(site.id, b, "undersize", "before_next_review", "Roof", "x", "ref", "act")
    store.move_status(d.id, "corrected", "Contractor", "contractor")
    store.add_measurement(b, site.id, b_mm=129, where="near bearing 1", tool="tape")
    assert store.rebuild_projections() == store.projections()


def test_status_only_moves_forward_and_only_reviewer_verifies(store):
    site = store.create_site(name="Site A")
    d = store.raise_deficiency(site.id, None, "x", "immediate", "L1", "desc", "ref", "act")
    with pytest.raises(LifecycleError, match="only a reviewer"):
        store.move_status(d.id, "verified", "Crew", "contractor")
    store.move_status(d.id, "corrected", "Crew", "contractor")
    with pytest.raises(LifecycleError, match="only moves forward"):
        store.move_status(d.id, "open", "Crew", "contractor")
    store.move_status(d.id, "verified", "R. Reviewer", "reviewer")
    again = store.move_status(d.id, "reopen", "R. Reviewer", "reviewer")
    assert (again.cycle, again.stage) == (1, Stage.open)
    assert [e.stage for e in store.history(d.id)] == [Stage.corrected, Stage.verified, Stage.open]


def test_insert_only_same_id_different_content_is_integrity_error(store):
    mid = store.add_measurement("b1", "s1", b_mm=130)
    forged = Op(
        origin="other",
        seq=1,
        hlc=1,
        entity="measurement",
        record_id=mid,
        kind="insert",
        payload={"b_mm": 99, "beam_id": "b1", "site_id": "s1"},
        base={},
        schema_version=1,
        wall_ms=0,
    )
    with pytest.raises(IntegrityError):
        apply_op(store.db, forged)


def test_deficiency_numbers_carry_device_code(store):
    site = store.create_site(name="S")
    d1 = store.raise_deficiency(site.id, None, "x", "observation", "L", "d", "r", "a")
    d2 = store.raise_deficiency(site.id, None, "x", "observation", "L", "d", "r", "a")
    assert d1.number.endswith("-001")
    assert d2.number.endswith("-002")
    assert store.device_code in d1.number


def test_hlc_never_goes_backwards_across_restarts(tmp_path):
    clock = {"now": 2_000_000_000_000}
    s = Store(tmp_path / "c.db", wall_clock_ms=lambda: clock["now"])
    site = s.create_site(name="S")
    first = s.stamp("site", site.id, "name")[0]
    s.close()
    clock["now"] -= 86_400_000  # wall clock jumps a day back
    s2 = Store(tmp_path / "c.db", wall_clock_ms=lambda: clock["now"])
    s2.update_site(site.id, {"name": "S2"})
    assert s2.stamp("site", site.id, "name")[0] > first


def test_pending_sync_count_counts_unsent_ops(store):
    store.create_site(name="S")
    assert store.pending_sync_count() == 1


def test_photo_blob_written_before_row_and_pending_when_missing(store):
    site = store.create_site(name="S")
    pid = store.add_photo(site.id, b"jpegbytes", caption="bearing 2")
    photo = next(p for p in store.photos(site.id) if p["id"] == pid)
    assert store.blob(photo["sha256"]) == b"jpegbytes"
    assert photo["pending"] is False
    store.blob_path(photo["sha256"]).unlink()
    assert next(p for p in store.photos(site.id) if p["id"] == pid)["pending"] is True


def test_latest_markup_is_the_last_made_whatever_the_ids_or_the_wall_clock(tmp_path, monkeypatch):
    # UUIDv7 ids order by wall-clock ms only, with random bits inside one ms (RFC 9562), and a tablet's
    # clock can be set back: the latest markup is the one drawn over the others, not the largest id.
    import storage.store as store_module

    clock = {"now": 1_790_000_000_000}
    s = Store(tmp_path / "m.db", wall_clock_ms=lambda: clock["now"])
    site = s.create_site(name="S")
    pid = s.add_photo(site.id, b"jpegbytes", caption="bearing 2")
    ids = iter(["0190ffff-0000-7000-8000-000000000009", "0190ffff-0000-7000-8000-000000000001"])
    monkeypatch.setattr(store_module, "uuid7", lambda: next(ids))  # the second id sorts first
    s.mark_photo(site.id, pid, [{"kind": "arrow", "x": 0.2, "y": 0.8, "x2": 0.5, "y2": 0.5}])
    clock["now"] -= 3_600_000  # the tablet's clock set back an hour between the two markups
    s.mark_photo(site.id, pid, [{"kind": "ring", "x": 0.5, "y": 0.5, "x2": 0.2}])
    latest = s.latest_markups(site.id)
    assert list(latest) == [pid]
    assert latest[pid]["id"] == "0190ffff-0000-7000-8000-000000000001"
    assert latest[pid]["replaces"] == "0190ffff-0000-7000-8000-000000000009"
    assert [m["kind"] for m in latest[pid]["marks"]] == ["ring"]
