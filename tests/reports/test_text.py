"""Issue 10 items 8 and 9: any text a reviewer can type lays out and prints on the notice."""

import io

import pytest
from pypdf import PdfReader

from reports.content import Carried, Item
from reports.render import render_notice
from tests.reports.test_notice import _notice, save_pngs


def text_of(pdf):
    return "\n".join(p.extract_text() for p in PdfReader(io.BytesIO(pdf)).pages)


def _plain_item(observed, location="Grid C / 2", action="Provide full bearing"):
    return Item(
        number="D-AB12-001",
        location=location,
        observed=observed,
        finding="Bearing length short",
        reference="S-201",
        action=action,
        priority="before_loading",
        due="",
        key_numbers=[],
    )


@pytest.mark.parametrize(
    ("name", "text"),
    [
        ("long-paragraph", "The bearing plate is undersized and the shims are loose. " * 95),  # about 5,400 chars
        ("long-word", "A" * 3000 + " END"),
        ("many-lines", "line\n" * 400 + "END"),
    ],
)
def test_long_text_never_breaks_the_notice(name, text):
    notice = _notice([_plain_item(text)], carried=[Carried("D-AB12-000", "Grid A", text, "open")])
    pdf = render_notice(notice)
    pages = PdfReader(io.BytesIO(pdf)).pages
    assert len(pages) >= 2
    assert "END" in text_of(pdf) or name == "long-paragraph"
    assert text_of(pdf).count("shims are loose") >= 95 or name != "long-paragraph"  # nothing cut off
    save_pngs(pdf, f"long-text-{name}")
