"""User text to Paragraph markup that prints in any script a tablet can type.

reportlab draws each run of text with one embedded TrueType font and does not fall back, so a
character the main font (DejaVu Sans) lacks printed as an empty box. Here the text is split into
runs, each set in the first font of a chain that has the character (Noto fonts from Debian's
``fonts-noto-core``; for Chinese and Japanese Droid Sans Fallback from ``fonts-droid-fallback``, and
for Korean NanumGothic from ``fonts-nanum``, because Debian's Noto CJK fonts ship only PostScript
outlines, which reportlab cannot embed). Emoji are drawn
from the bitmaps of Noto Color Emoji (``fonts-noto-color-emoji``) as inline images. Right-to-left
lines are shaped (Arabic letters joined) and put in visual order. Control characters, and the
invisible bidi overrides that could make text read differently from what was typed, are shown
visibly as [U+XXXX]; a character no font has is shown the same way, never dropped.
"""

from __future__ import annotations

import base64
import re
import unicodedata
from functools import cache, lru_cache
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape

from reportlab.lib.styles import ParagraphStyle
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.platypus import Paragraph as _Paragraph

FONT_DIRS = (
    Path("/usr/share/fonts/truetype/noto"),
    Path("/usr/share/fonts/truetype/droid"),
    Path("/usr/share/fonts/truetype/nanum"),
)
# (registered name, file name): tried in this order after the main font
FALLBACKS = (
    ("BWNotoSans", "NotoSans-Regular.ttf"),
    ("BWNotoHebrew", "NotoSansHebrew-Regular.ttf"),
    ("BWNotoDevanagari", "NotoSansDevanagari-Regular.ttf"),
    ("BWNotoThai", "NotoSansThai-Regular.ttf"),
    ("BWNotoBengali", "NotoSansBengali-Regular.ttf"),
    ("BWNotoTamil", "NotoSansTamil-Regular.ttf"),
    ("BWNotoGeorgian", "NotoSansGeorgian-Regular.ttf"),
    ("BWNotoArmenian", "NotoSansArmenian-Regular.ttf"),
    ("BWNotoEthiopic", "NotoSansEthiopic-Regular.ttf"),
    ("BWNotoSymbols", "NotoSansSymbols-Regular.ttf"),
    ("BWNotoSymbols2", "NotoSansSymbols2-Regular.ttf"),
    ("BWNotoMath", "NotoSansMath-Regular.ttf"),
    ("BWCJK", "DroidSansFallbackFull.ttf"),
    ("BWHangul", "NanumGothic.ttf"),
)
ARABIC_FONT = ("BWNotoArabic", "NotoSansArabic-Regular.ttf")
EMOJI_FILE = "NotoColorEmoji.ttf"
ARABIC_RANGES = ((0x0600, 0x06FF), (0x0750, 0x077F), (0x08A0, 0x08FF), (0xFB50, 0xFDFF), (0xFE70, 0xFEFF))
DROPPED = {0xFE0E, 0xFE0F, 0x200D}  # presentation selectors and the emoji joiner: drawn one by one
EMOJI_PT = 9  # drawn size of an emoji at the body text size


def _find(file_name: str) -> Path | None:
    for folder in FONT_DIRS:
        if (folder / file_name).exists():
            return folder / file_name
    return None


@cache
def _font(name: str, file_name: str) -> frozenset[int] | None:
    """Register a fallback font once; the code points it covers (None if not installed)."""
    path = _find(file_name)
    if path is None:
        return None
    font = TTFont(name, str(path))
    pdfmetrics.registerFont(font)
    pdfmetrics.registerFontFamily(name, normal=name, bold=name, italic=name, boldItalic=name)
    return frozenset(font.face.charToGlyph)


@cache
def _main_cover(main_font: str) -> frozenset[int]:
    return frozenset(pdfmetrics.getFont(main_font).face.charToGlyph)


@cache
def _emoji_table() -> tuple[dict[int, str], Any] | None:
    path = _find(EMOJI_FILE)
    if path is None:
        return None
    from fontTools.ttLib import TTFont as FtFont

    font = FtFont(str(path), lazy=True)
    return font.getBestCmap(), font


@cache
def emoji_png(code: int) -> bytes | None:
    """The PNG bitmap of an emoji from Noto Color Emoji, or None."""
    table = _emoji_table()
    if table is None:
        return None
    cmap, font = table
    glyph = cmap.get(code)
    if glyph is None:
        return None
    for strike in font["CBDT"].strikeData:
        data = strike.get(glyph)
        if data is not None:
            data.decompile()
            return bytes(data.imageData)
    return None


def _is_arabic(code: int) -> bool:
    return any(lo <= code <= hi for lo, hi in ARABIC_RANGES)


def visible(code: int) -> str:
    """How a character that must not print as itself is shown."""
    return f"[U+{code:04X}]"


def font_for(ch: str, main_font: str) -> str | None:
    """The font that draws ``ch`` (the main font first, Noto Arabic for Arabic), or None."""
    code = ord(ch)
    if _is_arabic(code):
        cover = _font(*ARABIC_FONT)
        if cover is not None and code in cover:
            return ARABIC_FONT[0]
    if code in _main_cover(main_font):
        return main_font
    for name, file_name in FALLBACKS:
        cover = _font(name, file_name)
        if cover is not None and code in cover:
            return name
    return None


def _needs_showing(ch: str) -> bool:
    cat = unicodedata.category(ch)
    return cat == "Cc" or (cat in ("Cf", "Co", "Cs", "Cn") and ord(ch) not in DROPPED)


def shape_rtl(line: str) -> str:
    """A line with right-to-left letters: Arabic joined (presentation forms) and put in visual order."""
    if not any(unicodedata.bidirectional(c) in ("R", "AL") for c in line):
        return line
    import arabic_reshaper
    from bidi import get_display

    return str(get_display(arabic_reshaper.reshape(line)))


@cache
def _covers_ascii(main_font: str) -> bool:
    """Whether the main font draws every printable ASCII character (then such a line is one run in it)."""
    return all(code in _main_cover(main_font) for code in range(0x20, 0x7F))


def _plain(line: str) -> bool:
    """A line of printable ASCII alone: no control to show, no right-to-left letter, nothing dropped."""
    return line.isascii() and line.isprintable()


def _line_markup(line: str, main_font: str) -> str:
    """One line: runs of characters in one font; emoji as inline images; unknown characters shown.

    A line of printable ASCII (most of a notice) is one run in the main font when it draws them all: escaped
    as it is, without looking up each character (what the loop below gives for it).
    """
    if _plain(line) and _covers_ascii(main_font):
        return escape(line)
    out: list[str] = []
    run: list[str] = []
    run_font = main_font
    for ch in shape_rtl(line) + "\uffff":  # a sentinel that closes the last run
        code = ord(ch)
        if code in DROPPED:
            continue
        face = None if code == 0xFFFF else font_for(ch, main_font)
        if run and face != run_font:
            chunk = escape("".join(run))
            out.append(chunk if run_font == main_font else f'<font face="{run_font}">{chunk}</font>')
            run = []
        if code == 0xFFFF:
            break
        if face is None:
            png = emoji_png(code)
            if png is not None:
                src = "data:image/png;base64," + base64.b64encode(png).decode()
                out.append(f'<img src="{src}" width="{EMOJI_PT}" height="{EMOJI_PT}" valign="-1.5"/>')
            else:
                out.append(escape(visible(code)))
            continue
        run_font = face
        run.append(ch)
    return "".join(out)


def _shown(ch: str) -> str:
    return visible(ord(ch)) if _needs_showing(ch) else ch


def markup(text: object, main_font: str) -> str:
    """Escaped Paragraph markup for ``text``: runs in fonts that have them, emoji as images, controls shown."""
    lines = str(text).replace("\r\n", "\n").replace("\t", " ").split("\n")
    # controls are made visible before shaping, so an override cannot reorder a line
    shown = (line if _plain(line) else "".join(_shown(c) for c in line) for line in lines)
    return "<br/>".join(_line_markup(line, main_font) for line in shown)


# scripts written without spaces between words (Thai, Lao, Myanmar, Khmer, Chinese, Japanese; Korean and the
# CJK punctuation and full-width forms with them): a line of such text may break between any two characters
_UNSPACED = re.compile(
    "[\u0e00-\u0eff\u1000-\u109f\u1780-\u17ff\u3000-\u30ff\u3400-\u4dbf\u4e00-\u9fff"
    "\uac00-\ud7af\uf900-\ufaff\uff00-\uffef\U00020000-\U0003134f]"
)


def unspaced(text: str) -> bool:
    """True when ``text`` holds a character of a script written without spaces between words."""
    return _UNSPACED.search(text) is not None


class Paragraph(_Paragraph):
    """reportlab's Paragraph, which breaks lines anywhere (``wordWrap="CJK"``) only where its text needs it.

    The notice's styles break anywhere, so a Chinese, Japanese or Thai note wraps; reportlab's line breaker
    for that measures every character on its own, about a fifth of a notice's time. Text with no character of
    such a script is broken between words instead (a word longer than the line is still split:
    ``ParagraphStyle.splitLongWords``), with the same style otherwise.
    """

    def __init__(self, text: str, style: ParagraphStyle | None = None, *args: Any, **kwargs: Any) -> None:
        if style is not None and style.wordWrap == "CJK" and not unspaced(text):
            style = _between_words(style)
        super().__init__(text, style, *args, **kwargs)


@lru_cache(maxsize=256)
def _between_words(style: ParagraphStyle) -> ParagraphStyle:
    """``style`` breaking lines between words (one per style: a notice makes thousands of paragraphs).

    No space shrinkage: reportlab otherwise lets a line of words overrun its width by up to 5 % of its spaces.
    """
    return ParagraphStyle(f"{style.name} (words)", parent=style, wordWrap=None, spaceShrinkage=0)
