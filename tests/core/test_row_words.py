"""A table row a recheck used reads as the standard prints it, never as the data file's column names.

Found by reading the demo notice as a building official would: its list of rows used printed
"glulam_grades row species D.Fir-L, grade 24f-E, balanced no, fb_pos_mpa 30.6, fb_neg_mpa 23.0, ...",
"effective_length row any (...)" and "treatment_factors: glulam, none, dry". A reader of a notice knows the
standard's symbols (fb, fv, fcp, E, E05, KSb, KT, Le) with their units, not our files: CSA O86-19 Tables 6.4
and 7.3 print one row per grade with fb, fv, fcp and E in MPa (from memory); Table 7.4 gives Le as a multiple
of the unsupported length Lu (CSA O86-19 7.5.6.4.2, from memory).
"""

from __future__ import annotations

import re

from core import tables
from core.overrides import TableRecord
from core.recheck import recheck, recheck_with_rows
from reports import tablerows
from tests.core import golden
from tests.core.beams import glulam, sawn

# a data file's name for a column or a table: lower-case words joined by "_" ("fb_pos_mpa", "glulam_grades")
SNAKE = re.compile(r"\b[a-z][a-z0-9]*_[a-z0-9_]+\b")


def _labels(beams):
    return {r.label for r in tablerows.rows_used(recheck(b) for b in beams)}


def test_no_row_a_notice_lists_names_a_data_files_column_or_table():
    labels = _labels(golden.beams(400))
    assert len(labels) > 20  # the set reaches grades of both materials, KZb, KS, KT, Le rows and unit weights
    named = sorted(label for label in labels if SNAKE.search(label))
    assert named == []


def test_a_glulam_grade_row_reads_with_the_standards_symbols_and_units():
    # CSA O86-19 Table 7.3 row D.Fir-L 24f-E as our data file holds it (status memory, reference o86.md section 12)
    row = tables.find("glulam_grades", species="D.Fir-L", grade="24f-E")
    (grade,) = [t.source for t in recheck(glulam()).bending[0].trace if t.symbol == "grade"]
    assert grade == (
        f"row D.Fir-L 24f-E, unbalanced layup: fb (positive moment) {row['fb_pos_mpa']} MPa, "
        f"fb (negative moment) {row['fb_neg_mpa']} MPa, fv {row['fv_mpa']} MPa, fcp {row['fcp_mpa']} MPa, "
        f"E {row['e_mpa']} MPa"
    )


def test_a_sawn_grade_row_reads_with_the_standards_symbols_and_says_who_confirmed_it():
    # CSA O86-19 Table 6.4 S-P-F No.1/No.2: fb, fv, fcp, E and E05 in MPa; a confirmed row names its source
    row = tables.find("sawn_grades", species="S-P-F", grade="No.1/No.2")
    (grade,) = [t.source for t in recheck(sawn()).bending[0].trace if t.symbol == "grade"]
    assert grade == (
        f"row S-P-F No.1/No.2: fb {row['fb_mpa']} MPa, fv {row['fv_mpa']} MPa, fcp {row['fcp_mpa']} MPa, "
        f"E {row['e_mpa']} MPa, E05 {row['e05_mpa']} MPa; confirmed by {row['confirmed_by']}"
    )


def test_the_other_rows_read_as_the_standard_prints_them():
    wet = recheck(sawn(service="wet"))
    unbraced = recheck(glulam(top_edge={"braced_by": "none"}))
    sources = {t.symbol: t.source for b in wet.bending for t in b.trace}
    sources |= {t.symbol: t.source for b in unbraced.bending for t in b.trace if t.symbol in ("Le", "self-weight")}
    # CSA O86-19 Table 6.10: a 38 mm member takes the "89 mm or less" column of wet service factors
    assert sources["KS (wet)"].startswith("row sawn, wet service, smaller dimension 89 mm or less: KSb ")
    assert sources["KT"] == "row sawn, untreated, wet service: KT 1, KT(E) 1"
    assert sources["KZb"].startswith("row larger dimension up to ")
    # CSA O86-19 Table 7.4: a simple span under uniform load, Le = 1.92 Lu (from memory)
    assert sources["Le"].startswith("row 'Simple span; uniformly distributed load': Le = 1.92 Lu; ")
    assert sources["self-weight"] == "unit weight of glulam D.Fir-L: 4.9 kN/m3 x b x d (common practice)"


def test_a_firm_corrected_value_is_named_by_its_symbol_and_unit():
    fixed = TableRecord(table="glulam_grades", row="D.Fir-L/24f-E", by="A. Reviewer", edition="O86-19", page=120,
                        at="2026-12-01T10:00:00Z", column="fv_mpa", value="1.8", source="firm's copy")  # fmt: skip
    try:
        tables.use_firm_records([fixed])
        rows = recheck_with_rows(glulam()).rows_used
    finally:
        tables.use_firm_records([])
    (grade,) = [source for clause, source, _ in rows if clause == "CSA O86-19 Table 7.3"]
    assert ", fv 1.8 MPa, " in grade
    assert grade.endswith(
        "; fv corrected to 1.8 MPa (firm's copy), verified by A. Reviewer against CSA O86-19 p. 120, "
        "2026-12-01T10:00:00Z"
    )
    assert not SNAKE.search(grade)
