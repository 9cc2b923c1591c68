"""Issue 16 item 6: memory table rows are acknowledged before issue; the trace names each row's status.

A notice resting on table rows entered from memory is issued only after the reviewer acknowledges
them; the notice records who and when.

Which rows are memory and which are confirmed comes from outside the code: reference o86.md section 12
(an independent comparison) lists D.Fir-L 24f-E (glulam, Table 7.3) as having no independent source, and
Spruce-Pine 20f-EX as confirmed by a CCMC evaluation report.
"""

import io
import re

import pytest
from pypdf import PdfReader

from core.records import MemoryAcknowledgement
from mobile.cli import main
from mobile.issue import MemoryRowsNotAcknowledged, acknowledge, issue_notice_for_site, rows_for_items
from storage import Store
from storage.stamps import local_time
from tests.core.beams import glulam

DFIR_ROW = "row D.Fir-L 24f-E, unbalanced layup"  # memory per reference o86.md section 12
SPRUCE_ROW = "row Spruce-Pine 20f-EX, balanced layup"  # confirmed by C, reference section 12


def _site(tmp_path, **beam):
    store = Store(tmp_path / "m.db")
    site = store.create_site(name="Larch Yard", project_number="P7")
    bid = store.save_beam(site.id, glulam(**beam), {"level": "Roof", "gridline": "C / 1-2"})
    store.raise_deficiency(site.id, bid, "undersize", "before_loading", "Roof, grid C", "Undersize", "S-1", "Replace")
    return store, site.id


def _text(pdf):
    return " ".join(" ".join(p.extract_text().split()) for p in PdfReader(io.BytesIO(pdf)).pages)


def test_rows_used_name_the_status_the_reference_gives(tmp_path):
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    store, site_id = _site(tmp_path / "a")
    dfir = [r for r in rows_for_items(store, site_id) if DFIR_ROW in r.source]
    assert len(dfir) == 1
    assert dfir[0].status == "memory"
    assert dfir[0].status_words.startswith("MEMORY")
    store2, site2 = _site(tmp_path / "b", species="Spruce-Pine", grade="20f-EX")
    spruce = [r for r in rows_for_items(store2, site2) if SPRUCE_ROW in r.source]
    assert len(spruce) == 1
    assert spruce[0].status == "confirmed"
    assert spruce[0].status_words == "confirmed (independent source)"


def test_refused_without_acknowledgement_nothing_issued(tmp_path):
    store, site_id = _site(tmp_path)
    with pytest.raises(MemoryRowsNotAcknowledged, match="entered from memory") as info:
        issue_notice_for_site(store, site_id, tmp_path / "n.pdf", "R. Ames")
    assert any(DFIR_ROW in r for r in info.value.rows)
    assert store.notices(site_id) == []
    assert store._meta()["counter_notice"] == "0"  # no number spent
    assert not (tmp_path / "n.pdf").exists()


def test_an_acknowledgement_of_other_rows_is_refused(tmp_path):
    store, site_id = _site(tmp_path)
    full = acknowledge(store, rows_for_items(store, site_id), "R. Ames")
    partial = MemoryAcknowledgement(rows=[r for r in full.rows if DFIR_ROW not in r], by="R. Ames", at=full.at)
    with pytest.raises(MemoryRowsNotAcknowledged) as info:
        issue_notice_for_site(store, site_id, tmp_path / "n.pdf", "R. Ames", acknowledgement=partial)
    assert len(info.value.rows) == 1
    assert DFIR_ROW in info.value.rows[0]
    assert store.notices(site_id) == []


def test_acknowledged_notice_records_who_and_when(tmp_path):
    store, site_id = _site(tmp_path)
    ack = acknowledge(store, rows_for_items(store, site_id), "R. Ames")
    issued, path = issue_notice_for_site(store, site_id, tmp_path / "n.pdf", "R. Ames", acknowledgement=ack)
    again = store.notices(site_id)[0]  # read back from the database
    assert again.id == issued.id
    assert again.memory_acknowledgement is not None
    assert again.memory_acknowledgement.by == "R. Ames"
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", again.memory_acknowledgement.at)  # stored UTC with Z
    assert any(DFIR_ROW in r for r in again.memory_acknowledgement.rows)
    text = _text(path.read_bytes())
    assert "Table rows the rechecks used" in text
    # shown in this device's local time with its zone, as the photos' times are; stored in UTC
    assert f"acknowledged by R. Ames at {local_time(again.memory_acknowledgement.at)}" in text
    assert "MEMORY: entered from memory" in text
    assert "D.Fir-L 24f-E" in text


def test_a_row_the_firm_verified_is_no_longer_memory(tmp_path):
    from storage import firm_tables

    store, site_id = _site(tmp_path)
    firm_tables.record(store, "glulam_grades", "D.Fir-L/24f-E", "K. Osei", "O86-19", 54)
    try:
        rows = rows_for_items(store, site_id)
        dfir = [r for r in rows if r.source.startswith("row D.Fir-L 24f-E,")]
        assert len(dfir) == 1
        assert dfir[0].status == "verified"
        assert dfir[0].status_words == "verified by the firm"
        assert not any("row D.Fir-L 24f-E," in m for m in acknowledge(store, rows, "K. Osei").rows)
    finally:
        firm_tables.tables.use_firm_records([])  # later tests read the published rows


def test_cli_refuses_listing_the_rows_then_issues_with_the_flag(tmp_path, capsys):
    store, _site_id = _site(tmp_path)
    store.close()
    db, out = str(tmp_path / "m.db"), str(tmp_path / "n.pdf")
    code = main(["report", "--db", db, "--site", "Larch Yard", "--out", out, "--by", "R. Ames"])
    err = capsys.readouterr().err
    assert code == 2
    assert "--acknowledge-memory-rows" in err
    assert "D.Fir-L 24f-E" in err
    assert not (tmp_path / "n.pdf").exists()
    code = main(
        ["report", "--db", db, "--site", "Larch Yard", "--out", out, "--by", "R. Ames", "--acknowledge-memory-rows"]
    )
    assert code == 0, capsys.readouterr().err
    s = Store(tmp_path / "m.db")
    notice = s.notices(s.find_site("Larch Yard").id)[0]
    assert notice.memory_acknowledgement is not None
    assert notice.memory_acknowledgement.by == "R. Ames"


def test_notice_screen_acknowledge_step_and_printed_hash(tmp_path):
    from mobile.viewmodels import NoticeViewModel
    from reports import stamp

    store, site_id = _site(tmp_path)
    vm = NoticeViewModel(store, site_id)
    lines = vm.table_row_lines()
    assert any(line.startswith("MEMORY") and DFIR_ROW in line for line in lines)
    assert "acknowledge before issue" in vm.acknowledgement_text()
    assert vm.issue("R. Ames", tmp_path / "out") is None
    assert "acknowledge the" in vm.message
    assert store.notices(site_id) == []
    assert not vm.acknowledge("  ")  # who acknowledges is required
    assert vm.acknowledge("R. Ames")
    assert "acknowledged by R. Ames" in vm.acknowledgement_text()
    path = vm.issue("R. Ames", tmp_path / "out")
    assert path is not None, vm.message
    # the list shows the short hash the footer prints (embedded), not the whole file's hash
    digest = stamp.embedded_hash(path.read_bytes())
    (line,) = [text for _nid, text in vm.issued()]
    assert f"SHA-256 {digest[:16]}" in line
    assert "SHA-256 " + digest[:16] in PdfReader(io.BytesIO(path.read_bytes())).pages[0].extract_text()
    assert store.notices(site_id)[0].pdf_sha256[:12] not in line


def test_beam_trace_lists_each_row_with_its_status(tmp_path):
    from mobile.viewmodels.beam import BeamFormViewModel

    store, site_id = _site(tmp_path)
    bid = store.beams(site_id)[0][0]
    vm = BeamFormViewModel(store, site_id, bid)
    assert re.search(r"Table rows used: \d+ table rows: \d+ memory", vm.table_rows_line())
    lines = vm.table_row_lines()
    assert any(line.startswith("[MEMORY") and DFIR_ROW in line for line in lines)
    assert any(line.startswith("[confirmed") for line in lines)
