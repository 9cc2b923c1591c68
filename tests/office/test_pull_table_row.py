"""Over HTTP: a pulled table_row op whose value is not a number is set aside, not applied (review s34, item 3).

The hub checks what it is pushed, so the op is altered in the hub's database and signed again with the
origin device's own key: a device gone wrong, or a damaged hub. The tablet's own check refuses it.
"""

from mobile.hub_client import sync
from mobile.viewmodels.sync import SyncViewModel
from storage import Store, firm_tables, identity
from storage.oplog import OP_KEYS, Op, canonical


def test_pulled_table_row_op_with_a_value_that_is_not_a_number_is_set_aside(served, tmp_path):
    # Checks item 3 at pull: the op is quarantined with the field named, the sync screen says so, nothing
    # of the record is applied, and the tablet's database still opens.
    a = served.tablet(tmp_path / "a.db", name="Tablet A")
    b = served.tablet(tmp_path / "b.db", name="Tablet B")
    firm_tables.record(a, "glulam_grades", "D.Fir-L/24f-E", "B. Rev", "O86-19", 112, "fb_pos_mpa", "15.3", "errata")
    sync(a)
    sql = f"SELECT {', '.join(OP_KEYS)} FROM op WHERE origin=? AND seq=1"
    op = Op.from_row(dict(zip(OP_KEYS, served.hub.db.execute(sql, [a.device_id]).fetchone(), strict=True)))
    op.payload["value"] = "abc"
    with served.hub.tx():
        served.hub.db.execute("UPDATE op SET payload=? WHERE origin=? AND seq=1", [canonical(op.payload), a.device_id])
        sig = identity.sign_op(identity.device_key(a.db), op)
        served.hub.db.execute("UPDATE hub_log SET sig=? WHERE origin=? AND seq=1", [sig, a.device_id])
    sync(b)
    assert b.db.execute("SELECT count(*) FROM table_row").fetchone()[0] == 0
    (words,) = SyncViewModel(b).set_aside()
    assert words.startswith("table_row ")
    assert "set aside, not applied, because its record fails the checks of a local save" in words
    assert "field 'value'" in words
    assert "a corrected table value is a number" in words
    b.close()
    Store(tmp_path / "b.db").close()
