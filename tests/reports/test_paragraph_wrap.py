"""Notice paragraphs break lines between words, and anywhere only where the text's script needs it.

reportlab's line breaker for text written without spaces (``wordWrap="CJK"``) measured every character on
its own, for every paragraph of a notice (about a fifth of its time); ``reports.textrun.Paragraph`` keeps
it for text that holds such a script. Checked here: Latin text breaks between whole words and no line is
wider than its room; a word longer than the line is still split (reportlab's ``splitLongWords``, so a pasted
serial number never runs off the page); Japanese, Chinese and Thai notes still wrap inside the width.
"""

from __future__ import annotations

import pytest
from reportlab.lib.styles import ParagraphStyle

from reports.render import esc
from reports.sketch import FONT, register_fonts
from reports.textrun import Paragraph, unspaced

WIDTH = 150.0  # pt: a narrow cell of the notice's tables


@pytest.fixture(scope="module")
def style():
    register_fonts()
    return ParagraphStyle("base", fontName=FONT, fontSize=9, leading=11.5, wordWrap="CJK")


def _lines(p: Paragraph) -> list[str]:
    """The text of each wrapped line (its words joined by one space)."""
    return [" ".join(words) for _, words in p.blPara.lines]


def _room_left(p: Paragraph) -> list[float]:
    """The width each wrapped line leaves unused, as reportlab measured it in the line's fonts (pt)."""
    return [left for left, _ in p.blPara.lines]


def test_latin_text_breaks_between_whole_words_within_the_width(style):
    text = (
        "Bearing at the left end lacks restraint against rotation; provide blocking or a strap to the column cap "
        "before the roofing goes on, as the engineer of record directs."
    )
    p = Paragraph(esc(text), style)
    p.wrap(WIDTH, 1000)
    assert p.style.wordWrap is None
    lines = _lines(p)
    assert len(lines) > 2
    assert " ".join(lines) == text  # every break falls between two words
    assert min(_room_left(p)) >= 0  # no line runs past its room


def test_a_word_longer_than_the_line_is_still_split(style):
    word = "SN-" + "0123456789" * 8  # an 83-character serial number pasted into a note
    p = Paragraph(esc(f"tag {word} on the hanger"), style)
    p.wrap(WIDTH, 1000)
    lines = _lines(p)
    assert "".join(lines).replace(" ", "") == f"tag{word}onthehanger"
    assert len(lines) >= 3
    assert min(_room_left(p)) >= 0


@pytest.mark.parametrize(
    "note",
    [
        "梁の左端の支承は回転に対する拘束がありません。屋根材を張る前にブロッキングを設けてください。",  # Japanese
        "左端支座缺少抗转动约束\uff0c请在铺设屋面之前设置横撑或钢带\uff0c并按结构工程师的指示处理。",  # Chinese
        "ที่รองรับด้านซ้ายของคานไม่มีการยึดกันการหมุนโปรดติดตั้งตัวค้ำก่อนมุงหลังคา",  # Thai
    ],
)
def test_a_note_in_a_script_without_spaces_still_wraps_inside_the_width(style, note):
    assert unspaced(note)
    p = Paragraph(esc(note), style)
    _, height = p.wrap(WIDTH, 1000)
    assert p.style.wordWrap == "CJK"
    assert height >= 2 * style.leading  # wrapped onto two lines or more, not one line running off the cell
    assert min(_room_left(p)) >= 0


def test_latin_text_with_one_cjk_word_keeps_the_anywhere_breaks(style):
    p = Paragraph(esc("Purlin clip missing at grid 4 (写真 3)"), style)
    assert p.style.wordWrap == "CJK"
    assert not unspaced("Purlin clip missing at grid 4 (photo 3), Montréal, Zürich")


def test_a_line_of_printable_ascii_takes_the_short_path_to_the_same_markup(monkeypatch):
    """``textrun.markup`` escapes a printable-ASCII line as it is; the per-character path gives the same text."""
    import random
    import string

    from reports import textrun

    register_fonts()
    rng = random.Random(5)
    alphabet = string.printable  # letters, digits, punctuation, markup characters, and controls (\t\n\r\x0b\x0c)
    texts = ["", "a & b < c > d \"e\" 'f'", "4 x 2-ply 38 x 235 @ 600 mm o.c.; KL = 0.87 (CSA O86-19 7.5.6.4)"]
    texts += ["".join(rng.choice(alphabet) for _ in range(rng.randint(1, 80))) for _ in range(300)]
    fast = [textrun.markup(t, FONT) for t in texts]
    monkeypatch.setattr(textrun, "_plain", lambda _line: False)  # every line through the per-character path
    assert [textrun.markup(t, FONT) for t in texts] == fast
