"""The table rows a recheck used, found without a trace, are exactly those its traced recheck names.

``core.recheck.recheck_with_rows`` gives the status-only recheck and the rows its checks used; the
reference is the traced recheck reduced to its rows (``core.results.rows_used``: every trace line with
status verified, confirmed or memory), which is what the portfolio stored and what a notice lists
(``reports.tablerows``). Machinery, not engineering: the rows' own values are the data files' and a firm's.
"""

import csv
import re
from importlib import resources

import pytest

from core import tables
from core.kinds import TraceStatus
from core.overrides import TableRecord
from core.recheck import recheck, recheck_with_rows
from core.results import rows_used
from reports import tablerows
from tests.core import golden
from tests.core.beams import glulam, sawn

RESTRAINED = {"lateral": True, "rotation": True, "length_mm": 140}
HAND_MADE = {
    "glulam on fastened purlins": lambda: glulam(),
    "glulam, use and top stamp not recorded": lambda: glulam(use=None, top_stamp="not_visible"),
    "glulam, rotation restraint missing (not established)": lambda: glulam(
        bearings=[{"lateral": True, "rotation": "no", "length_mm": 140}] * 2
    ),
    "glulam, two spans and an overhang": lambda: glulam(
        spans_mm=[6000, 6000], overhang_right_mm=1500, bearings=[RESTRAINED] * 3
    ),
    "glulam, unbraced top edge": lambda: glulam(top_edge={"braced_by": "none"}),
    "sawn joist under fastened decking": lambda: sawn(),
    "sawn, deep and unbraced (glulam KL method with E05)": lambda: sawn(
        b_mm=38, d_mm=286, top_edge={"braced_by": "none"}, use=None
    ),
    "sawn, wet service": lambda: sawn(service="wet"),
}


def _csv_status(table: str, **keys: str) -> str:
    """The status column of one row of core/data/<table>.csv, read from the file itself."""
    text = (resources.files("core") / "data" / f"{table}.csv").read_text(encoding="utf-8")
    rows = csv.DictReader(line for line in text.splitlines() if line and not line.startswith("#"))
    return next(r["status"] for r in rows if all(r[k] == v for k, v in keys.items()))


@pytest.mark.parametrize("name", list(HAND_MADE))
def test_rows_without_a_trace_are_the_traced_rows(name):
    beam = HAND_MADE[name]()
    got = recheck_with_rows(beam)
    traced = recheck(beam)
    assert got.rows_used == rows_used(traced)
    assert got.result == recheck(beam, traces=False)  # the result itself is the status-only one: no trace
    kept = [*got.result.bending, got.result.shear, *got.result.bearing, got.result.deflection]
    assert all(c.trace == [] for c in kept)  # no trace kept anywhere
    assert got.rows_used  # every recheck rests on at least its grade row


def test_rows_are_what_a_notice_lists():
    """reports.tablerows (the notice's list of rows, and what a reviewer acknowledges) reads the same rows."""
    for make in HAND_MADE.values():
        beam = make()
        listed = {(r.clause, r.source, r.status) for r in tablerows.rows_used([recheck(beam)])}
        assert recheck_with_rows(beam).rows_used == listed


def test_the_grade_row_carries_the_data_files_status():
    want = _csv_status("glulam_grades", species="D.Fir-L", grade="24f-E")
    rows = recheck_with_rows(glulam()).rows_used
    grade = [r for r in rows if r[0] == "CSA O86-19 Table 7.3" and r[1].startswith("row ")]
    assert len(grade) == 1
    assert grade[0][1].startswith("row D.Fir-L 24f-E, ")
    assert grade[0][2] == TraceStatus(want)


def test_a_firm_corrected_row_is_used_as_corrected_and_verified():
    fixed = TableRecord(table="glulam_grades", row="D.Fir-L/24f-E", by="A. Reviewer", edition="O86-19", page=120,
                        at="2026-12-01T10:00:00Z", column="fv_mpa", value="1.8", source="firm's copy")  # fmt: skip
    before = recheck_with_rows(glulam()).rows_used
    try:
        tables.use_firm_records([fixed])
        after = recheck_with_rows(glulam())
        traced = recheck(glulam())
    finally:
        tables.use_firm_records([])
    assert after.rows_used == rows_used(traced)
    grade = [r for r in after.rows_used if r[0] == "CSA O86-19 Table 7.3" and r[1].startswith("row ")]
    assert len(grade) == 1
    assert grade[0][2] is TraceStatus.verified
    assert "fv 1.8 MPa" in grade[0][1]  # the row's value as corrected
    assert "fv corrected to 1.8 MPa (firm's copy), verified by A. Reviewer against CSA O86-19 p. 120" in grade[0][1]
    assert grade[0] not in before  # the row as printed had another source and status
    assert recheck_with_rows(glulam()).rows_used == before  # records cleared: the printed row again


def _differing(beams):
    differ = []
    for beam in beams:
        try:
            traced = recheck(beam)
        except ValueError as refused:
            with pytest.raises(ValueError, match=re.escape(str(refused))):
                recheck_with_rows(beam)
            continue
        got = recheck_with_rows(beam)
        if got.rows_used != rows_used(traced) or got.result != recheck(beam, traces=False):
            differ.append(beam.mark)
    return differ


def test_rows_without_a_trace_fast_golden_subset():
    assert _differing(golden.beams(200)) == []


@pytest.mark.slow
def test_rows_without_a_trace_every_golden_beam():
    # every kind, option and restraint case of the 5,000 golden beams
    assert _differing(golden.beams(golden.COUNT)) == []


def test_a_memory_row_is_a_rule_not_a_beams_record():
    """A reviewer acknowledges each rule from memory once, not once per beam.

    Common practice: what is acknowledged is the rule's source; the reviewer's own measurements are not table
    values. Found by a review of the demo notice: "top edge braced by fastened purlins at 1200 mm", "bearings 3900 mm
    apart", "d/b = 2.64 <= 6.5" and one KD line per load level were 45 rows to acknowledge for one site (31 now),
    and the notice printed the reviewer's measurements as "MEMORY: not checked against the standard's text".
    """
    beams = golden.beams(400)
    per_beam = re.compile(r"\d+ mm apart|d/b = \d|PL = \d|r = b/d = \d|at \d+ mm|\d+ mm between|purlins at")
    memory = set()
    for beam in beams:
        result = recheck(beam)
        for row in rows_used(result):
            if row[2] is TraceStatus.memory:
                assert not per_beam.search(row[1]), row
                memory.add(row)
            # a confirmed row is a rule too: the notice's appendix listed "L = 6000 mm between points of zero
            # moment" (KZbg, CSA O86-19 7.5.6.5.1) once per length, and "CB = 57.3 exceeds 50" per beam
            assert not re.search(r"L = \d+ mm|CB = \d", row[1]), row
        # the trace line itself still tells this beam's numbers (the sheet prints its source beside its rule)
        lu = [t for r in result.bending for t in r.trace if t.symbol == "Lu" and isinstance(t.value, int)]
        assert all(re.search(r"\d", t.source) or "between bearings" in t.source for t in lu), lu
    kd = {row for row in memory if row[0] == "CSA O86-19 5.3.2"}
    assert len(kd) == 1  # one KD rule for every load level
    lu_rules = {row[1] for row in memory if row[1].startswith("Lu of ")}
    assert len(lu_rules) <= 3  # top edge, bottom edge, sawn lumber past its tier
