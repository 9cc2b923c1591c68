"""A firm's table records that change while a lookup is under way leave no row of the old records in use.

The change comes from another thread: the app's background recheck or a sync applying the firm's records.

Source: the standard's table values are what the recheck computes with (CSA O86-19 Table 7.3, glulam
strengths); a firm's correction of a row must reach every later lookup, or results would be stored as current
with the uncorrected value (common practice: a corrected design value supersedes the printed one from the
moment it is recorded). The row and value are those of the storage tests' correction (a test value).
"""

from core import overrides, tables
from core.overrides import TableRecord

CORRECTED = TableRecord(
    table="glulam_grades",
    row="D.Fir-L/20f-E",  # the table's first row: read before any other when the table is loaded
    by="R. Osei",
    edition="O86-19",
    page=112,
    at="2026-12-03T18:00:00Z",
    column="fb_pos_mpa",
    value="12.8",
    source="firm's check of its copy (a test value: half the published fb)",
)


def test_records_changed_during_a_table_read_leave_no_old_row_behind(monkeypatch):
    tables.use_firm_records([])
    published = tables.find("glulam_grades", species="D.Fir-L", grade="20f-E")["fb_pos_mpa"]
    tables.use_firm_records([CORRECTED])  # a new generation: the next find reads the table afresh
    tables.use_firm_records([])
    real = overrides.overlay
    switched = []

    def overlay_then_switch(name, row):
        out = real(name, row)
        if name == "glulam_grades" and not switched:  # the first row is read; then another thread applies
            switched.append(True)
            tables.use_firm_records([CORRECTED])
        return out

    monkeypatch.setattr(overrides, "overlay", overlay_then_switch)
    try:
        # the lookup under way finishes with what it read before the change (it began before it) ...
        assert tables.find("glulam_grades", species="D.Fir-L", grade="20f-E")["fb_pos_mpa"] == published
        assert switched
        # ... and every lookup from then on has the correction
        assert tables.find("glulam_grades", species="D.Fir-L", grade="20f-E")["fb_pos_mpa"] == "12.8"
        row = next(r for r in tables.load("glulam_grades").rows if r["species"] == "D.Fir-L" and r["grade"] == "20f-E")
        assert row["fb_pos_mpa"] == "12.8"
        assert row["status"] == "verified"
    finally:
        monkeypatch.undo()
        tables.use_firm_records([])
    assert tables.find("glulam_grades", species="D.Fir-L", grade="20f-E")["fb_pos_mpa"] == published
