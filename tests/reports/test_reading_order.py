"""Issue 13 item 7: page 1 of a notice reads in its logical order when text is extracted.

pdftotext (poppler, an independent reader of the PDF) extracts page 1; the test checks that the parts
come in the order a person reads them: the title, to whom (owner, contractor, copies), from whom
(reviewer, firm, contact), the site block, the scope, then the summary table's rows in the order the
notice lists them (IMMEDIATE first, then by number).
"""

import shutil
import subprocess

import pytest

from reports.content import ordered
from reports.render import render_notice
from tests.reports.test_notice import _notice, save_pngs
from tests.reports.test_notice13 import _twenty_on_five

pytestmark = pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler-utils not installed")


def _page1_text(pdf: bytes, tmp_path) -> str:
    path = tmp_path / "n.pdf"
    path.write_bytes(pdf)
    out = subprocess.run(
        ["pdftotext", "-f", "1", "-l", "1", str(path), "-"], check=True, capture_output=True, text=True
    )
    return " ".join(out.stdout.split())


def _in_order(text: str, parts: list[str]) -> list[str]:
    """The parts that are missing or out of order (each searched after the previous one)."""
    wrong, at = [], 0
    for part in parts:
        found = text.find(part, at)
        if found < 0:
            wrong.append(part)
        else:
            at = found + len(part)
    return wrong


def test_page_one_reads_in_logical_order(tmp_path):
    items = _twenty_on_five()[:8]
    notice = _notice(
        items,
        owner="Fernvale Parks Society",
        addressed_to="Northbeam Builders Ltd.",
        distribution=["Architect", "File"],
        reviewer="Priya Okonkwo-Lind",
        firm="Tamarack Structural Review Ltd.",
        reviewer_phone="604-555-0142",
    )
    pdf = render_notice(notice)
    text = _page1_text(pdf, tmp_path)
    head = [
        "Deficiency notice TSR-2611-FR-AB12-001",
        "To",
        "Owner Fernvale Parks Society",
        "Contractor Northbeam Builders Ltd.",
        "Copies Architect, File",
        "From",
        "Reviewer Priya Okonkwo-Lind",
        "Firm Tamarack Structural Review Ltd.",
        "Contact 604-555-0142",
        "Site Cedar Hollow Community Hall",
        "Address 48 Larchmont Road",
        "Scope reviewed: Roof",
        "Not reviewed: Mezzanine",
        "Summary of items",
        "No., page Location What is wrong Priority Due Status",  # each item number with its page
    ]
    assert _in_order(text, head) == [], text[:1500]
    rows = [i.number for i in ordered(items)]
    on_page_1 = [r for r in rows if r in text]
    assert len(on_page_1) >= 3, text
    assert on_page_1 == rows[: len(on_page_1)]  # the table's first rows, none skipped
    assert _in_order(text, on_page_1) == [], text
    save_pngs(pdf, "reading-order")
