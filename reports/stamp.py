"""A notice that carries its own SHA-256, and the check of it.

A file cannot hold the hash of its own bytes, so what is hashed is defined exactly:

    the SHA-256 of the PDF file with the 64 hex digits after ``bracewalk-sha256:`` in the document
    keywords (metadata), and the 16 hex digits after ``SHA-256 `` in every page footer, all set to the
    ASCII digit ``0``.

The renderer writes those zero placeholders (page streams uncompressed, footer in a standard font, so
the digits are literal bytes), hashes the file, then overwrites the placeholders with the hash (same
length, so no offset in the file moves). ``embedded_hash`` undoes the overwrite and checks.
"""

from __future__ import annotations

import hashlib
import re

META_PREFIX = "bracewalk-sha256:"
FOOTER_PREFIX = "SHA-256 "
SHORT_DIGITS = 16
_META_RE = re.compile(rb"bracewalk-sha256:([0-9a-f]{64})")


def placeholder_keywords() -> str:
    """The metadata keywords before stamping."""
    return META_PREFIX + "0" * 64


def placeholder_footer() -> str:
    """The footer hash text before stamping."""
    return FOOTER_PREFIX + "0" * SHORT_DIGITS


def short_form(digest: str) -> str:
    """What the footer prints of a hash (the first 16 hex digits)."""
    return digest[:SHORT_DIGITS]


def _footer(digits: str) -> bytes:
    return b"(" + (FOOTER_PREFIX + digits).encode() + b")"


def stamp(pdf: bytes) -> bytes:
    """Overwrite the placeholders of a rendered PDF with the SHA-256 of the placeholder-bearing bytes."""
    meta, foot = placeholder_keywords().encode(), _footer("0" * SHORT_DIGITS)
    if pdf.count(meta) != 1 or pdf.count(foot) < 1:
        msg = "stamp: the PDF has no hash placeholder (render it with stamp_hash=True)"
        raise ValueError(msg)
    digest = hashlib.sha256(pdf).hexdigest()
    return pdf.replace(meta, (META_PREFIX + digest).encode()).replace(foot, _footer(short_form(digest)))


def embedded_hash(pdf: bytes) -> str | None:
    """The SHA-256 the PDF carries if its bytes match it exactly, else None (changed, or never stamped)."""
    found = _META_RE.findall(pdf)
    if len(found) != 1:
        return None
    digest = found[0].decode()
    foot = _footer(short_form(digest))
    if pdf.count(foot) < 1:
        return None
    blank = pdf.replace((META_PREFIX + digest).encode(), placeholder_keywords().encode())
    blank = blank.replace(foot, _footer("0" * SHORT_DIGITS))
    return digest if hashlib.sha256(blank).hexdigest() == digest else None
