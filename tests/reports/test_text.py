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


def _fonts_and_images(pdf):
    reader = PdfReader(io.BytesIO(pdf))
    fonts, images = set(), 0
    for page in reader.pages:
        res = page["/Resources"]
        for f in res.get("/Font", {}).values():
            fonts.add(str(f.get_object()["/BaseFont"]))
        images += len(page.images)
    return fonts, images


def test_any_script_prints():
    # what a tablet keyboard can type: CJK, Korean, Arabic, Hebrew, emoji, and a stray control character
    text = "梁 中文 日本語 かな 한국어 | خشب رقائقي | עץ | 👷 ⚠️ | bell\x07 | rlo\u202eabc"
    pdf = render_notice(_notice([_plain_item(text, location="Grid 東 / 2")]))
    fonts, images = _fonts_and_images(pdf)
    assert any("DroidSansFallback" in f for f in fonts), fonts
    assert any("NotoSansArabic" in f for f in fonts), fonts
    assert images >= 1  # 👷 drawn from Noto Color Emoji (⚠ is in DejaVu Sans, drawn as text)
    words = text_of(pdf)
    assert "中文" in words
    assert "한국어" in words
    assert "東" in words
    assert "[U+0007]" in words
    assert "[U+202E]" in words  # controls shown, never obeyed or boxed
    # Arabic shaped: joined presentation forms (U+FE70-U+FEFF) are drawn, not the isolated letters
    assert any(0xFE70 <= ord(c) <= 0xFEFF for c in words)
    save_pngs(pdf, "any-script")


def test_beam_notes_reach_the_notice(tmp_path):
    from mobile.issue import build_notice
    from storage import Store
    from tests.core.beams import glulam

    store = Store(tmp_path / "n.db")
    site = store.create_site(name="Notes")
    beam = store.save_beam(site.id, glulam(), location={"notes": "Shim stack 3 high, split 梁"})
    store.raise_deficiency(site.id, beam, "x", "immediate", "Grid A", "Short bearing", "O86", "Fix")
    notice, _ = build_notice(store, site.id, "P-FR-1")
    assert "Shim stack 3 high, split 梁" in notice.items[0].observed
    assert "Shim stack 3 high, split 梁" in text_of(render_notice(notice))
