"""A firm's table row records stay whole, and a database holding them always opens (review s34).

Two devices record the same row, one "verified", the other a correction; a reviewer resolving the
merge's conflict by keeping the other side's ``column`` used to save that one field alone, leaving a
column without its value, and ``Store()`` then raised on both devices once the edit synced. Each test
below failed before the fix.
"""

import json
import zipfile

import pytest

from core import tables
from core.overrides import record_id
from core.recheck import recheck
from mobile.cli import main
from mobile.viewmodels.beam import BeamFormViewModel
from mobile.viewmodels.notice import NoticeViewModel
from mobile.viewmodels.sync import SyncViewModel
from storage import Store, firm_tables, results
from storage.bundle import export_bundle, import_bundle
from storage.db import SCHEMA_VERSION
from storage.oplog import Op, OpKind
from storage.validate import RecordInvalid, check_op_record
from tests.core.beams import glulam
from tests.storage.signing import signed_bundle

NOW = 1_900_000_000_000
MINUTE = 60_000
TABLE, ROW = "glulam_grades", "D.Fir-L/24f-E"
RID = record_id(TABLE, ROW)
NOT_USED = "its correction (or verification) is not used until it is fixed: rechecks use the row as published"


@pytest.fixture(autouse=True)
def published_tables():
    """Every test leaves the process on the published tables (the firm records are process-wide)."""
    yield
    tables.use_firm_records([])


def _sync(src, dst, path):
    export_bundle(src, path)
    report = import_bundle(dst, path)
    assert report.outcome == "applied", report


def _verify(store, by="A. Rev"):
    return firm_tables.record(store, TABLE, ROW, by, "O86-19", 112)


def _correct(store, by="B. Rev", value="15.3"):
    return firm_tables.record(store, TABLE, ROW, by, "O86-19", 112, "fb_pos_mpa", value, "errata 2")


def _decked():
    """A glulam beam under fastened decking (KL = 1): Mr, so the utilisation, follows fb alone."""
    return glulam(top_edge={"braced_by": "decking", "fastened": True})


# -- the reviewer's case, end to end (item 2 through sync) -----------------------------------------
@pytest.mark.parametrize("later", ["verification", "correction"])
def test_keeping_the_other_side_of_a_table_row_keeps_it_whole_and_both_databases_open(tmp_path, later):
    # Checks: keeping the losing `column` of a table_row conflict takes that side's whole record, so the
    # record stays valid, the edit syncs, and Store() opens on both devices with that record applied.
    # `later`: whose record is stamped later, so wins the merge (the other is kept by the reviewer).
    clock = {"verification": NOW, "correction": NOW}
    clock[later] += MINUTE
    a = Store(tmp_path / "a.db", wall_clock_ms=lambda: clock["verification"])
    b = Store(tmp_path / "b.db", wall_clock_ms=lambda: clock["correction"])
    mine = {"verification": _verify(a), "correction": _correct(b)}
    _sync(a, b, tmp_path / "ab.zip")
    _sync(b, a, tmp_path / "ba.zip")
    c = next(c for c in a.conflicts() if c["field"] == "column")
    a.resolve_conflict(c["id"], "loser", "reviewer")
    assert a.conflicts() == []  # the record's other conflicts with that edit are resolved with it
    _sync(a, b, tmp_path / "fix.zip")
    kept = mine["correction" if later == "verification" else "verification"]
    paths = [a.path, b.path]
    a.close()
    b.close()
    for path in paths:
        store = Store(path)  # the app opens its database
        assert firm_tables.read(store.db) == ([kept], [])
        store.close()


# -- 1. a stored record that is not whole never stops the store; it is set aside and said so ---------
def _broken(path):
    """A database with a correction, then an older app's edit of its column alone (what resolve saved before)."""
    store = Store(path)
    _correct(store)
    store.save("table_row", RID, {"column": None})
    return store


def test_a_record_that_is_not_whole_is_set_aside_named_everywhere_rows_are_listed(tmp_path, capsys):
    # Checks item 1: Store() opens; the record is not applied (the recheck uses the published fb) and the
    # row and the reason are named by the store, `tables list`, the beam and notice screens' row lists and
    # the sync screen; it also travels to another device, which opens and says the same.
    published = recheck(_decked()).bending[0].utilisation
    _broken(tmp_path / "a.db").close()
    store = Store(tmp_path / "a.db")
    (aside,) = store.table_records_set_aside()
    assert (aside.table, aside.row) == (TABLE, ROW)
    assert "column and value: give both for a correction, or neither" in aside.reason
    assert aside.words.startswith(f"{TABLE} row {ROW}: the firm's record of this row is not valid (column and value")
    assert NOT_USED in aside.words
    assert recheck(_decked()).bending[0].utilisation == published  # the correction (half the fb) is not used
    site = store.create_site(name="Yard")
    bid = store.save_beam(site.id, _decked())
    assert results.fresh(store.db, site.id)[bid].utilisation == pytest.approx(published)
    store.raise_deficiency(site.id, bid, "bending_overstress", "immediate", "Roof", "d", "ref", "act")
    assert BeamFormViewModel(store, site.id, bid).table_row_lines()[0] == f"[NOT USED]  {aside.words}"
    assert NoticeViewModel(store, site.id).table_row_lines()[0] == f"NOT USED  ·  {aside.words}"
    assert SyncViewModel(store).set_aside() == [aside.words]
    listed = {(t, label): (status, note) for t, label, status, note in firm_tables.listing(store.db)}
    assert listed[(TABLE, ROW)] == ("memory", aside.words)  # the row as published, and why the record is not used
    store.close()
    assert main(["tables", "list", "--db", str(tmp_path / "a.db")]) == 0
    assert f"warning: {aside.words}" in capsys.readouterr().err
    # the edit reaches another device (its op is a valid edit of one field); that database opens as well
    a, b = Store(tmp_path / "a.db"), Store(tmp_path / "b.db")
    _sync(a, b, tmp_path / "ab.zip")
    b.close()
    assert SyncViewModel(Store(tmp_path / "b.db")).set_aside() == [aside.words]


@pytest.mark.parametrize(
    ("edit", "reason"),
    [
        ({"value": None}, "column and value: give both"),
        ({"column": "no_such_column"}, "column 'no_such_column' is not a column of table 'glulam_grades'"),
        ({"row": "D.Fir-L/20f-E"}, "names table 'glulam_grades' row 'D.Fir-L/20f-E', not the row of its id"),
        ({"source": " "}, "source: a corrected value names where it comes from"),
    ],
    ids=["value-alone", "unknown-column", "other-row", "no-source"],
)
def test_each_kind_of_broken_record_is_set_aside_with_its_reason(tmp_path, edit, reason):
    # Checks item 1 per reason: a merged record the model refuses, or one naming a column or row the
    # published table lacks (which the lookups would raise on), is set aside with that reason; Store() opens.
    store = Store(tmp_path / "a.db")
    _correct(store)
    store.save("table_row", RID, edit)
    store.close()
    store = Store(tmp_path / "a.db")
    (aside,) = store.table_records_set_aside()
    assert reason in aside.reason
    assert firm_tables.records(store.db) == []
    assert tables.find(TABLE, species="D.Fir-L", grade="24f-E") == firm_tables.published_row(TABLE, ROW)


# -- 2. resolving keeps the record whole, or is refused before anything is saved -----------------
def test_using_the_other_side_is_refused_when_it_would_not_make_a_whole_record(tmp_path):
    # Checks item 2's refusal: the other side's edit is an older app's edit of `column` alone; using it over
    # this device's correction would leave a value without its column, so it is refused naming the row and
    # why, nothing is saved, and the sync screen says so on the conflict's line; keeping as is still works.
    a = Store(tmp_path / "a.db", wall_clock_ms=lambda: NOW)
    b = Store(tmp_path / "b.db", wall_clock_ms=lambda: NOW + MINUTE)
    _correct(a)
    _sync(a, b, tmp_path / "1.zip")
    a.save("table_row", RID, {"column": None})  # as resolve_conflict saved it before the fix
    _correct(b, by="C. Rev", value="20.0")  # later: it wins the merge
    _sync(a, b, tmp_path / "2.zip")
    (c,) = b.conflicts()
    assert c["field"] == "column"
    before = (b.projections(), b.db.execute("SELECT count(*) FROM op").fetchone()[0])
    with pytest.raises(ValueError, match=rf"table row record {RID}: the other side's record cannot be used \(column"):
        b.resolve_conflict(c["id"], "loser", "reviewer")
    assert (b.projections(), b.db.execute("SELECT count(*) FROM op").fetchone()[0]) == before
    assert b.conflicts() == [c]
    vm = SyncViewModel(b)
    assert vm.resolve(c["id"], "loser", "reviewer").startswith(f"table row record {RID}: the other side's")
    ((_, line),) = vm.conflicts()
    assert line.startswith(f'table_row {RID} · column: kept "fb_pos_mpa"')
    assert "NOT DONE: table row record" in line
    assert vm.resolve(c["id"], "winner", "reviewer") == ""
    assert b.conflicts() == []
    assert firm_tables.read(b.db)[0][0].value == "20.0"


# -- 3. the op checks refuse a table_row field of the wrong type, at import and pull ------------------
WHOLE = {
    "table": TABLE,
    "row": ROW,
    "by": "B. Rev",
    "edition": "O86-19",
    "page": 112,
    "at": "2030-03-17T17:46:40Z",
    "column": "fb_pos_mpa",
    "value": "15.3",
    "source": "errata 2",
}


def _op(payload, rid=RID):
    """A table_row edit as another device would send it."""
    return Op(
        origin="0190aaaa-0000-7000-8000-00000000b001",
        seq=1,
        hlc=1 << 40,
        entity="table_row",
        record_id=rid,
        kind=OpKind.SET,
        payload=payload,
        base={},
        schema_version=SCHEMA_VERSION,
        wall_ms=NOW,
    )


@pytest.mark.parametrize(
    ("payload", "rid", "match"),
    [
        ({"value": "abc"}, RID, r"field 'value'.*a corrected table value is a number"),
        ({"value": 15.3}, RID, r"field 'value'.*string"),
        ({"value": "-1"}, RID, r"field 'value'.*positive finite number"),
        ({"value": "nan"}, RID, r"field 'value'.*positive finite number"),
        ({"table": "no_such_table"}, RID, r"field 'table'.*allowed: glulam_grades"),
        ({"page": "p. 112"}, RID, r"field 'page'"),
        ({"column": 7}, RID, r"field 'column'"),
        ({"site_id": "s-1"}, RID, r"field 'site_id'.*not a field of table_row"),
        ({**WHOLE, "value": None}, RID, r"column and value: give both"),
        ({**WHOLE, "column": "grade"}, RID, r"a key or provenance column is not corrected"),
        (WHOLE, record_id(TABLE, "D.Fir-L/20f-E"), r"field 'row'.*not the row of its record id"),
    ],
    ids=["text", "number", "negative", "nan", "table", "page", "column", "site_id", "half", "key", "other-id"],
)
def test_a_table_row_op_no_app_writes_is_refused(payload, rid, match):
    # Checks item 3: check_op_record (used by bundle import, hub pull and the hub) refuses each field of the
    # wrong type or value, and a whole record that the model refuses or that sits under another row's id.
    with pytest.raises(RecordInvalid, match=match):
        check_op_record(_op(payload, rid))


@pytest.mark.parametrize("payload", [WHOLE, {**WHOLE, "column": None, "value": None, "source": ""}, {"column": None}])
def test_table_row_ops_an_app_writes_pass(payload):
    # Checks item 3 lets through what apps write: a whole correction or verification, and an older app's
    # edit of one field (refusing it would refuse its whole bundle for good; it is set aside where used).
    check_op_record(_op(payload))


def test_a_bundle_with_a_table_value_that_is_not_a_number_is_refused_whole(tmp_path):
    # Checks item 3 at import: a bundle signed by an enrolled device whose table_row op says value "abc" is
    # refused whole, naming the record and the field, and nothing of it is applied.
    a, b = Store(tmp_path / "a.db"), Store(tmp_path / "b.db")
    a.create_site(name="Yard")
    _correct(a)
    export_bundle(a, tmp_path / "a.zip")
    z = zipfile.ZipFile(tmp_path / "a.zip")
    ops = [json.loads(line) for line in z.read("ops.jsonl").decode().splitlines()]
    for op in ops:
        if op["entity"] == "table_row":
            op["payload"]["value"] = "abc"
    (tmp_path / "a.zip").write_bytes(signed_bundle(a, json.loads(z.read("manifest.json")), ops, {}))
    before = b.projections()
    report = import_bundle(b, tmp_path / "a.zip")
    assert report.outcome == "refused", report
    assert f"invalid record: table_row {RID} field 'value'" in report.reason
    assert "a corrected table value is a number" in report.reason
    assert b.projections() == before
    b.close()
    Store(tmp_path / "b.db").close()
