"""Words and shapes shared by the screens: status is never shown by colour alone."""

from __future__ import annotations

from pathlib import Path

from pydantic import ValidationError

from core.results import CAUTION
from reports.words import FINDING_WORDS as FINDING_WORDS
from reports.words import PRIORITY_WORDS, priority_label
from reports.words import STAGE_WORDS as STAGE_WORDS  # re-exported: one mapping for the tablet and the office
from reports.words import STATUS_WORDS as STATUS_WORDS
from reports.words import finding_words as finding_words
from reports.words import status_label as status_label
from storage.stamps import local_time as local_time  # re-exported: the screens show times through it

PRIORITY_LABELS = {p: priority_label(p) for p in PRIORITY_WORDS}  # the notice's words and shapes
# what the recheck does with an input nobody saw or recorded (a restraint not visible is taken as missing, an
# unrecorded use as the strictest deflection limit, a TOP stamp not visible as the weaker face in tension, a sawn
# member's system as a single member), said on every screen's caution band
UNSEEN_TAKEN_UNFAVOURABLE = "What was not seen or not recorded is taken as the unfavourable case."
APP_CAUTION = f"{CAUTION} {UNSEEN_TAKEN_UNFAVOURABLE}"  # the app's caution band: core's caution whole, then that


def default_export_dir() -> Path:
    """Where the app writes the files a reviewer sends on (notices, recheck sheets) unless told otherwise."""
    return Path.home() / "bracewalk-exports"


def validation_message(exc: ValidationError) -> str:
    """One line per pydantic error: 'field.path: message'."""
    return "; ".join(f"{'.'.join(map(str, e['loc'])) or 'value'}: {e['msg']}" for e in exc.errors())
