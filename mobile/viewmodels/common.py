"""Words and shapes shared by the screens: status is never shown by colour alone."""

from __future__ import annotations

from pathlib import Path

from pydantic import ValidationError

from core.kinds import FindingCode
from core.records import DesignBasis
from core.results import CAUTION
from reports.render import PRIORITY_WORDS, priority_label
from reports.words import STAGE_WORDS as STAGE_WORDS  # re-exported: one mapping for the tablet and the office
from reports.words import STATUS_WORDS as STATUS_WORDS
from reports.words import status_label as status_label
from storage.stamps import local_time as local_time  # re-exported: the screens show times through it

PRIORITY_LABELS = {p: priority_label(p) for p in PRIORITY_WORDS}  # the notice's words and shapes
# what the recheck does with an input nobody saw or recorded (a restraint not visible is taken as missing, an
# unrecorded use as the strictest deflection limit, a TOP stamp not visible as the weaker face in tension, a sawn
# member's system as a single member), said on every screen's caution band
UNSEEN_TAKEN_UNFAVOURABLE = "What was not seen or not recorded is taken as the unfavourable case."
APP_CAUTION = f"{CAUTION} {UNSEEN_TAKEN_UNFAVOURABLE}"  # the app's caution band: core's caution whole, then that

# what a finding is about, in a reviewer's words (the folded IMMEDIATE banner, `check --text`, the demo's table);
# core's codes are stored and never reworded, and were shown with '_' made spaces ("slenderness exceeds limit").
# Kept here until reports/words.py holds it beside the status and stage words.
FINDING_WORDS: dict[FindingCode, str] = {
    FindingCode.bearing_restraint_missing: "bearing restraint missing",
    FindingCode.slenderness_exceeds_limit: "slenderness over the limit",
    FindingCode.bending_overstress: "bending overstress",
    FindingCode.shear_overstress: "shear overstress",
    FindingCode.bearing_overstress: "bearing overstress",
    FindingCode.deflection_exceeds_limit: "deflection over the limit",
    FindingCode.undersize: "smaller than specified",
    FindingCode.substitution: "size or grade other than specified",
    FindingCode.compression_edge_unbraced: "compression edge unbraced",
    FindingCode.layup_inverted: "layup upside down",
    FindingCode.uplift_at_support: "uplift at a support",
    FindingCode.input_assumed: "not recorded, taken as unfavourable",
    FindingCode.modelling_option: "reviewer's modelling option",
}


def finding_words(code: FindingCode | str) -> str:
    """What a finding is about, in words ('slenderness over the limit'), from its code; never the code itself."""
    try:
        return FINDING_WORDS[FindingCode(code)]
    except (KeyError, ValueError):
        msg = f"finding code {code!r} has no words; known: {', '.join(c.value for c in FINDING_WORDS)}"
        raise ValueError(msg) from None


def default_export_dir() -> Path:
    """Where the app writes the files a reviewer sends on (notices, recheck sheets) unless told otherwise."""
    return Path.home() / "bracewalk-exports"


def validation_message(exc: ValidationError) -> str:
    """One line per pydantic error: 'field.path: message'."""
    return "; ".join(f"{'.'.join(map(str, e['loc'])) or 'value'}: {e['msg']}" for e in exc.errors())


def line_loads_kn_m(basis: DesignBasis, tributary_m: float) -> dict[str, float]:
    """Specified line loads, kN/m = design-basis area loads, kPa x tributary width, m (common practice)."""
    return {
        "dead_kn_m": round(basis.dead_kpa * tributary_m, 3),
        "live_kn_m": round(basis.live_kpa * tributary_m, 3),
        "snow_kn_m": round(basis.snow_kpa * tributary_m, 3),
    }
