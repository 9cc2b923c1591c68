"""The beam form: every field saved as it is entered, the recheck refreshed, messages at the field.

Names used by the screen (widget ids) and by ``set_field``:
text: mark, level, gridline, notes, b_mm, d_mm, spans, overhang_left_mm, overhang_right_mm,
purlin_spacing_mm, bottom_spacing_mm, tributary_m, dead_kn_m, live_kn_m, snow_kn_m, specified_size,
bearingN.length_mm; pickers: material, species, grade, system (sawn members), top_braced_by, top_fastened,
bottom_braced_by, service, use, top_stamp, bearingN.lateral, bearingN.rotation.

A value that is refused is kept as a draft in the beam record (so a killed app loses nothing typed)
and shown back with its message; the last valid value stays in force for the recheck.
"""

from __future__ import annotations

import copy
import re
import time
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import cache
from importlib.metadata import version
from pathlib import Path
from typing import Any

from pydantic import TypeAdapter, ValidationError

from core import tables
from core.models import Beam, Material, SystemCase, bearings_with_stand_ins, grades_allowed, species_allowed
from core.plausible import PLAUSIBLE
from core.recheck import recheck
from core.records import Stage, chosen_basis
from core.remedies import remedies
from core.results import CheckKind, Recheck, check_lines
from mobile.units import FIELD_WORDS, LengthRefused, echo_length, feet_inches, read_length, split_spans
from mobile.viewmodels.common import PRIORITY_LABELS, finding_words, status_label
from mobile.viewmodels.site import KEEP
from reports.content import support_names, trace_line
from reports.inputs import loads_source, sheet_stem
from reports.render import render_recheck_sheet
from reports.tablerows import counts, rows_used
from storage import StorageError, Store
from storage.files import write_atomic
from storage.results import beam_input, derived_loads, recorded_system, stored_system

LENGTH_FIELDS = {  # form field -> its plausible range (core.plausible)
    "b_mm": "b_mm",
    "d_mm": "d_mm",
    "overhang_left_mm": "overhang_mm",
    "overhang_right_mm": "overhang_mm",
    "purlin_spacing_mm": "spacing_mm",
    "bottom_spacing_mm": "spacing_mm",
}
LOAD_FIELDS = ("dead_kn_m", "live_kn_m", "snow_kn_m")
TEXT_ONLY = ("level", "gridline", "notes")
REMEDIES_KEY = "remedies"
NOT_RECORDED = "not recorded"  # core takes the unfavourable case and says so in a finding
# a sawn member's system not recorded: core's default, a single member (KH 1.0, the lowest of O86-19 Table 6.12),
# stored as "single" with ``system_recorded`` false (core's model has no "not recorded" system)
SYSTEM_NOT_RECORDED = "not recorded (taken as single member)"
_YES_NO: dict[Any, str] = {True: "yes", False: "no"}
PICKERS: dict[str, tuple[str, ...]] = {
    "material": ("glulam", "sawn"),
    "system": (SYSTEM_NOT_RECORDED, *(case.value for case in SystemCase)),
    "top_braced_by": ("none", "purlins", "decking"),
    "top_fastened": ("yes", "no", NOT_RECORDED),
    "bottom_braced_by": ("none", "braces"),
    "service": ("dry", "wet"),
    "use": ("roof_no_ceiling", "roof_other", "roof_plaster", "floor", NOT_RECORDED),
    "top_stamp": ("up", "down", "not_visible"),
    "restraint": ("yes", "no", "not_visible"),
}
MAIN_BASIS = "site design basis"  # the load basis picker's first choice; further bases are named on the site
RESTRAINT_WORDS = {"yes": "Yes, restrained", "no": "No restraint", "not_visible": "Not visible", "": "not yet entered"}
CHOICE_WORDS = {
    "roof_no_ceiling": "Roof, no ceiling",
    "roof_other": "Roof, other ceiling",
    "roof_plaster": "Roof, plaster ceiling",
    "floor": "Floor",
    "not_visible": "Not visible",
    "none": "None",
    "purlins": "Purlins",
    "decking": "Decking",
    "braces": "Braces",
    "dry": "Dry",
    "wet": "Wet",
    "up": "Up",
    "down": "Down",
    "yes": "Yes",
    "no": "No",
    "glulam": "Glulam",
    "sawn": "Sawn lumber",
    "single": "Single member",  # the systems of core.models.SystemCase (KH, O86-19 Table 6.12)
    "shared": "Load-sharing system",
    "light_frame": "Sheathed light-frame system",
    "built_up": "Built-up member",
}
# copied by "copy from": member, bracing and loads; never the span, the bearings or the mark
COPIED = (
    "material",
    "species",
    "grade",
    "b_mm",
    "d_mm",
    "top_stamp",
    "service",
    "use",
    "top_edge",
    "bottom_edge",
    "loads",
    "tributary_m",
    "load_basis",
    "specified",
    "system",
    "system_recorded",
)
_SIZE = re.compile(r"^\s*(.+?)\s*[x×*]\s*(.+?)\s*$", re.IGNORECASE)


def _fmt(value: Any) -> str:
    return "" if value is None else f"{value:g}" if isinstance(value, float | int) else str(value)


def _mm(value: Any) -> str:
    """A stored length shown with its unit ('7200 mm'); blank when not entered."""
    return "" if value is None else f"{value:g} mm"


@dataclass
class BeamFormViewModel:
    """The log / edit beam form of one beam."""

    store: Store
    site_id: str
    beam_id: str
    errors: dict[str, str] = field(default_factory=dict)
    suggestions: dict[str, str] = field(default_factory=dict)  # field -> text to offer ("3.9 m")
    result: Recheck | None = None
    recheck_error: str = ""
    _undo: list[dict[str, Any]] = field(default_factory=list)

    # -- reading -------------------------------------------------------------------------------
    def record(self) -> dict[str, Any]:
        """The stored beam record (beam fields, location and drafts)."""
        return self.store.beam_record(self.beam_id)

    def form(self) -> dict[str, str]:
        """Display text for every field, drafts (refused input kept as typed) taking precedence."""
        rec = self.record()
        top, bottom = rec.get("top_edge") or {}, rec.get("bottom_edge") or {}
        spec = rec.get("specified")
        out = {
            "mark": _fmt(rec.get("mark")),
            "level": _fmt(rec.get("level")),
            "gridline": _fmt(rec.get("gridline")),
            "notes": _fmt(rec.get("notes")),
            "material": _fmt(rec.get("material")),
            "species": _fmt(rec.get("species")),
            "grade": _fmt(rec.get("grade")),
            "system": system_shown(rec),
            "b_mm": _mm(rec.get("b_mm")),
            "d_mm": _mm(rec.get("d_mm")),
            "spans": "; ".join(_mm(s) for s in rec.get("spans_mm", [])),
            "overhang_left_mm": _mm(rec.get("overhang_left_mm", 0)),
            "overhang_right_mm": _mm(rec.get("overhang_right_mm", 0)),
            "top_braced_by": _fmt(top.get("braced_by", "none")),
            "purlin_spacing_mm": _mm(top.get("spacing_mm")),
            "top_fastened": _YES_NO.get(top.get("fastened"), NOT_RECORDED),
            "bottom_braced_by": _fmt(bottom.get("braced_by", "none")),
            "bottom_spacing_mm": _mm(bottom.get("spacing_mm")),
            "tributary_m": _fmt(rec.get("tributary_m")),
            "load_basis": rec.get("load_basis") or MAIN_BASIS,
            "service": _fmt(rec.get("service", "dry")),
            "use": _fmt(rec.get("use") or NOT_RECORDED),
            "top_stamp": _fmt(rec.get("top_stamp", "not_visible")),
            "specified_size": f"{spec['b_mm']:g} x {spec['d_mm']:g}" if isinstance(spec, dict) else "",
        }
        loads = self.loads_checked(rec)
        out.update({k: _fmt(loads.get(k)) for k in LOAD_FIELDS})
        for i, b in enumerate(rec.get("bearings", []), start=1):
            out[f"bearing{i}.lateral"] = _fmt(b.get("lateral"))
            out[f"bearing{i}.rotation"] = _fmt(b.get("rotation"))
            out[f"bearing{i}.length_mm"] = _mm(b.get("length_mm"))
        out.update(rec.get("drafts") or {})
        return out

    @staticmethod
    def is_picker(name: str) -> bool:
        """A field chosen from a list (a refused choice is not kept as a draft)."""
        return name in PICKERS or name in ("species", "grade", "load_basis") or name.endswith((".lateral", ".rotation"))

    def loads_checked(self, rec: dict[str, Any]) -> dict[str, Any]:
        """The line loads the recheck uses: with a tributary width, derived from the site's basis as it stands.

        The record keeps the loads derived when the width was entered; a basis corrected since (a higher snow
        load) is what the recheck takes (``storage.results.derived_loads``), so the form shows the same.
        """
        loads = dict(rec.get("loads") or {})
        if not loads:
            return loads
        site = self.store.site(self.site_id)
        return dict(derived_loads({"loads": loads}, rec, (site.design_basis, site.load_bases))["loads"])

    def basis(self, rec: dict[str, Any]) -> Any:
        """The design basis the beam's loads come from: the site's, or the named one chosen for this beam."""
        site = self.store.site(self.site_id)
        return chosen_basis(site.design_basis, site.load_bases, rec.get("load_basis"))[1]

    def echo(self, name: str) -> str:
        """What a stored length field was understood as, in mm and feet-inches ('= 7200 mm = 23' 7 7/16"').

        Several spans are joined by ';  ', each held together by no-break spaces (``KEEP``).
        """
        rec = self.record()
        top, bottom = rec.get("top_edge") or {}, rec.get("bottom_edge") or {}
        values: list[Any]
        if name == "spans":
            values = list(rec.get("spans_mm") or [])
        elif name == "purlin_spacing_mm":
            values = [top.get("spacing_mm")]
        elif name == "bottom_spacing_mm":
            values = [bottom.get("spacing_mm")]
        elif name in LENGTH_FIELDS:
            values = [rec.get(name)]
        elif name in LOAD_FIELDS or name == "tributary_m":
            return self._load_echo(name, rec)
        elif name == "gridline":
            return gridline_echo(str(rec.get("gridline") or ""), len(rec.get("spans_mm") or []) + 1)
        else:
            return ""
        shown = [echo_length(v) for v in values if isinstance(v, int | float) and v]
        if len(shown) > 1:  # several spans: each held whole, so a line breaks between spans ("15' / 9"" misread)
            shown = [one.replace(" ", KEEP) for one in shown]
        return ("= " + ";  ".join(shown)) if shown else ""

    def _load_echo(self, name: str, rec: dict[str, Any]) -> str:
        """Where the checked line loads come from: derived from the tributary width, or typed directly."""
        width, loads = rec.get("tributary_m"), self.loads_checked(rec)
        if not loads:
            return ""
        if width is None:
            return "line loads typed directly" if name == "tributary_m" else "typed directly"
        if name == "tributary_m":  # what the width was read as, in both unit systems ('16' is 16 m = 52' 5 15/16")
            shown = f"= {width:g} m = {feet_inches(width * 1000)}"
            return f"{shown}; the line loads below are derived from this width x the site's design basis"
        kpa = getattr(self.basis(rec), name.replace("_kn_m", "_kpa"))
        where = rec.get("load_basis") or "site"
        return f"derived: {width:g} m x {kpa:g} kPa ({where}) = {loads.get(name, 0):g} kN/m"

    def support_count(self) -> int:
        """Number of supports (spans + 1)."""
        return len(self.record().get("spans_mm", [])) + 1

    def options(self, name: str) -> list[str]:
        """Choices for a picker field."""
        rec = self.record()
        material = Material(rec.get("material", "glulam"))
        if name == "load_basis":
            return [MAIN_BASIS, *self.store.site(self.site_id).load_bases]
        if name == "species":
            return species_allowed(material)
        if name == "grade":
            return grades_allowed(material, str(rec.get("species")))
        if name.startswith("bearing"):
            return list(PICKERS["restraint"])
        return list(PICKERS[name])

    def quick_sizes(self, name: str) -> list[str]:
        """Standard sizes to pick from for b_mm or d_mm (tables glulam_sizes, lumber_sizes)."""
        glulam = self.record().get("material", "glulam") == "glulam"
        if name == "b_mm":
            values = tables.column("glulam_sizes", "width_mm") if glulam else tables.column("lumber_sizes", "b_mm")
        else:
            values = [str(38 * n) for n in range(4, 41)] if glulam else tables.column("lumber_sizes", "d_mm")
        return sorted(set(values), key=float)

    # -- writing -------------------------------------------------------------------------------
    def _to_storage(self, name: str, text: str, rec: dict[str, Any]) -> dict[str, Any]:
        """The stored fields a form entry changes (ValueError with a message when it cannot be read)."""
        text = text.strip()
        if name in TEXT_ONLY or name == "mark":
            return {name: text}
        if name in LENGTH_FIELDS:
            return _length_entry(name, text, rec)
        if name.startswith("bearing"):
            return _bearing_entry(name, text, rec)
        if name in LOAD_FIELDS:
            value = _number(name, text, "line_load_kn_m")
            return {"loads": dict(rec.get("loads") or {}, **{name: value}), "tributary_m": None}
        entry = self._entries().get(name)
        if entry is not None:
            return entry(text, rec)
        if name in ("grade", "service", "use", "top_stamp"):
            return {name: None if name == "use" and text == NOT_RECORDED else text}
        msg = f"unknown field {name!r}"
        raise ValueError(msg)

    def _entries(self) -> dict[str, Callable[[str, dict[str, Any]], dict[str, Any]]]:
        """Fields whose entry changes more than itself (or needs the site): field -> reader."""
        return {
            "spans": _spans_entry,
            "tributary_m": self._tributary_entry,
            "load_basis": self._basis_entry,
            "material": _material_entry,
            "system": _system_entry,
            "species": _species_entry,
            "top_braced_by": _top_braced_entry,
            "top_fastened": _top_fastened_entry,
            "bottom_braced_by": _bottom_braced_entry,
            "specified_size": _specified_entry,
        }

    def _tributary_entry(self, text: str, rec: dict[str, Any]) -> dict[str, Any]:
        if not text:
            return {"tributary_m": None}  # cleared: the line loads stay as they are
        width = read_length("tributary_m", text) / 1000  # mm, m or feet-inches; a bare number in m
        return {"tributary_m": width, "loads": self.basis(rec).line_loads_kn_m(width)}

    def _basis_entry(self, text: str, rec: dict[str, Any]) -> dict[str, Any]:
        if text not in self.options("load_basis"):
            msg = f"load basis {text!r}; allowed: {', '.join(self.options('load_basis'))}"
            raise ValueError(msg)
        changes: dict[str, Any] = {"load_basis": None if text == MAIN_BASIS else text}
        if rec.get("tributary_m") is not None:  # derived loads follow the basis at once
            changes["loads"] = self.basis(dict(rec, **changes)).line_loads_kn_m(rec["tributary_m"])
        return changes

    def set_field(self, name: str, text: str) -> bool:
        """Validate and autosave one field; refresh the recheck. False (message kept at the field) if refused."""
        rec = self.record()
        drafts = dict(rec.get("drafts") or {})
        changes = self._checked_changes(name, text, rec)
        if changes is not None:
            return self._accept(name, changes, rec, drafts)
        if self.is_picker(name):  # a refused pick is not kept: the picker shows the value in force
            self._refuse_pick(name, text, drafts)
            return False
        if drafts.get(name) != text:  # keep what was typed, even though it is refused
            drafts[name] = text
            self._save(name, {"drafts": drafts})
        return False

    def _checked_changes(self, name: str, text: str, rec: dict[str, Any]) -> dict[str, Any] | None:
        """The entry's changes if the beam stays valid with them; None with the message at the field if not."""
        try:
            changes = self._to_storage(name, text, rec)
            candidate = dict(rec, **changes)
            # an incomplete beam is checked with stand-ins for what is not yet entered, so that the
            # entries made so far are held to every rule that involves them (sawn b, grade, spacing)
            Beam.model_validate(beam_input(_with_stand_ins(candidate)))
        except ValidationError as exc:
            self.errors[name] = trade_message(exc)
            self.suggestions.pop(name, None)
            return None
        except ValueError as exc:
            self.errors[name] = str(exc)
            suggestion = exc.suggestion if isinstance(exc, LengthRefused) else ""
            if suggestion and len(split_spans(text)) > 1:
                suggestion = ""  # one span of several: the reviewer retypes that one
            self.suggestions[name] = suggestion
            return None
        return changes

    def _accept(self, name: str, changes: dict[str, Any], rec: dict[str, Any], drafts: dict[str, Any]) -> bool:
        """Save an accepted entry (with the drafts it settles), keep its undo, refresh the recheck."""
        self.errors.pop(name, None)
        self.suggestions.pop(name, None)
        # the entry that made the beam valid also settles a picker refused for want of it
        for settled in {
            name,
            "top_braced_by" if name == "purlin_spacing_mm" else "",
            "bottom_braced_by" if name == "bottom_spacing_mm" else "",
        } - {""}:
            drafts.pop(settled, None)
            self.errors.pop(settled, None)
        changes = {k: v for k, v in changes.items() if rec.get(k) != v}
        if drafts != (rec.get("drafts") or {}):
            changes["drafts"] = drafts
        if changes:
            if not self._save(name, changes):
                return False
            self._undo.append({k: _before(rec, k) for k in changes})
        self.refresh()
        return True

    def _refuse_pick(self, name: str, text: str, drafts: dict[str, Any]) -> None:
        kept = self.form().get(name, "")
        reason = self.errors[name]
        if name in ("top_braced_by", "bottom_braced_by") and text in ("purlins", "braces"):
            where = "Purlins at" if text == "purlins" else "Bottom braces at"
            reason = f"type their spacing in '{where}' (that also sets this choice)."
        self.errors[name] = f"Not changed to {words(text)}: {reason} Stays {words(kept)}."
        if drafts.pop(name, None) is not None:
            self.store.update_beam(self.beam_id, {"drafts": drafts})

    def _save(self, name: str, changes: dict[str, Any]) -> bool:
        """Save; if the database is busy (a sync) or cannot be written, say so at the field (the text stays)."""
        try:
            self.store.update_beam(self.beam_id, changes)
        except StorageError as exc:
            self.errors[name] = f"NOT SAVED: {exc}"
            return False
        return True

    def undo(self) -> bool:
        """Put back the values before the last accepted change (saved as a new edit)."""
        if not self._undo:
            return False
        self.store.update_beam(self.beam_id, self._undo.pop())
        self.errors.clear()
        self.refresh()
        return True

    def add_photo(self, path: str | Path, caption: str = "") -> str:
        """Attach a photo file to this beam (the bytes are stored as a blob)."""
        content = Path(path).read_bytes()
        mime = "image/png" if str(path).lower().endswith(".png") else "image/jpeg"
        return self.store.add_photo(self.site_id, content, mime, beam_id=self.beam_id, caption=caption)

    def photo_count(self) -> int:
        """Photos attached to this beam."""
        return sum(1 for p in self.store.photos(self.site_id) if p.get("beam_id") == self.beam_id)

    # -- the live recheck ------------------------------------------------------------------------
    def missing(self) -> list[str]:
        """The entries the recheck still needs, in the reviewer's words (empty when complete)."""
        return missing_entries(self.record())

    def refresh(self) -> Recheck | None:
        """Recheck the stored beam (None, with ``recheck_error``, when the record cannot be rechecked)."""
        needs = self.missing()
        if needs:
            self.result, self.recheck_error = None, "still needs " + ", ".join(needs)
            return None
        try:
            self.result = recheck(self.store.beam(self.beam_id))
            self.recheck_error = ""
        except ValueError as exc:
            self.result, self.recheck_error = None, f"not yet checked: {exc}"
        return self.result

    def status(self) -> str:
        """The recheck's status value (core ``Status``), or "unchecked" when the beam cannot be rechecked yet."""
        r = self.result or self.refresh()
        return "unchecked" if r is None else r.status.value

    def immediate_findings(self) -> list[str]:
        """The findings shown full-width and unmissable."""
        r = self.result or self.refresh()
        if r is None:
            return []
        return [f"{f.message} ACTION: {f.action}" for f in r.findings if f.priority.value == "immediate"]

    def immediate_summary(self) -> str:
        """The IMMEDIATE banner folded: priority, count and what the findings are about ('' when none).

        One finding is named with where it is ('... 1 finding: bending overstress, span 1.'); several by kind,
        with how many of each ('3 findings: bearing restraint missing (2), bending overstress.'), so the
        folded banner stays a line or two. Built from the findings' priority, their code in words (``finding_words``)
        and region, never their wording or the code itself.
        """
        r = self.result or self.refresh()
        found = [] if r is None else [f for f in r.findings if f.priority.value == "immediate"]
        if not found:
            return ""
        head = PRIORITY_LABELS["immediate"]
        if len(found) == 1:
            (f,) = found
            where = f", {f.region}" if f.region else ""
            return f"{head} · 1 finding: {finding_words(f.code)}{where}. Tap to read it in full."
        kinds = Counter(f.code for f in found)  # in the order first found
        about = ", ".join(finding_words(code) + (f" ({n})" if n > 1 else "") for code, n in kinds.items())
        return f"{head} · {len(found)} findings: {about}. Tap to read them in full."

    def findings(self) -> list[tuple[int, str]]:
        """[(index, 'priority: message  ->  action')] for every finding."""
        r = self.result or self.refresh()
        if r is None:
            return []
        out = []
        for i, f in enumerate(r.findings):
            number = raised_number_for(self.store, self.site_id, self.beam_id, f)
            state = f"  [raised as {number}]" if number else "  [not yet raised]"
            out.append((i, f"{PRIORITY_LABELS[f.priority.value]}: {f.message} → {f.action}{state}"))
        return out

    def panel_lines(self) -> list[tuple[str, float | None, str]]:
        """Live recheck lines: (text, utilisation for the bar or None, trace key for ``trace_lines``)."""
        r = self.result or self.refresh()
        if r is None:
            return [(status_label("unchecked") + ": " + self.recheck_error, None, "")]
        lines: list[tuple[str, float | None, str]] = [(f"Status: {status_label(r.status.value)}", None, "")]
        for c in check_lines(r):  # the same lines as the text output and both PDFs
            text = f"{c.name}: {c.demand} vs {c.capacity}"
            if c.kind is CheckKind.bending:  # KL and CB beside Mr (the rest is in the trace, on tap)
                text += f"  ({c.factors})"
            elif c.combination:  # the loads it is checked under ("specified D + L + S": a roof's deflection)
                text += f"  ({c.combination})"
            lines.append((text, c.utilisation, c.key))
        if r.status.value != "ok":  # computed on tap (trace_lines): each option costs several rechecks
            lines.append(("Options for the engineer of record (tap; never a design)", None, REMEDIES_KEY))
        return lines

    def remedy_lines(self) -> list[str]:
        """Options for the engineer of record (what would make each failing check pass; never a design)."""
        r = self.result or self.refresh()
        if r is None or r.status.value == "ok":
            return []
        found = remedies(self.store.beam(self.beam_id), r)
        return [f"{words(x.solves)}: {x.message}" for x in found] or ["none found by changing one input"]

    def trace_lines(self, key: str) -> list[str]:
        """Where a panel value came from: every factor with clause, table row and verified / memory."""
        r = self.result or self.refresh()
        if r is None or not key:
            return []
        if key == REMEDIES_KEY:
            return ["Options for the engineer of record; each passes its check when rechecked:", *self.remedy_lines()]
        if key.startswith("bending"):
            check: Any = r.bending[int(key[len("bending") :])]
            head = f"{check.region}, {check.sign} moment, {check.combination}; {check.clause}"
        elif key.startswith("bearing"):
            check = r.bearing[int(key[len("bearing") :])]
            head = f"Bearing at support {check.support}, {check.combination}; {check.clause}"
        elif key == "shear":
            check = r.shear
            head = f"Shear ({check.method}), {check.combination}; {check.clause}"
        else:
            check = r.deflection
            head = f"Deflection, {check.case} on {check.element}; {check.clause}"
        return [head, *(trace_line(t) for t in check.trace)]

    def table_rows_line(self) -> str:
        """'Table rows used: 18 table rows: 12 memory, 6 confirmed, 0 verified (tap)'; '' with no recheck."""
        r = self.result or self.refresh()
        return "" if r is None else f"Table rows used: {counts(rows_used([r]))} (tap for each row)"

    def table_row_lines(self) -> list[str]:
        """Each table row the recheck used with its status: confirmed / verified by the firm / memory.

        First, each firm record about a table row that is not applied (not a whole, valid record), and why.
        """
        r = self.result or self.refresh()
        if r is None:
            return []
        return [
            *(f"[NOT USED]  {a.words}" for a in self.store.table_records_set_aside()),
            "Every table row this recheck rests on; rows entered from memory must be acknowledged before a "
            "notice is issued (or verified by the firm: bracewalk tables verify):",
            *(f"[{row.status_words}]  {row.label}" for row in rows_used([r])),
        ]

    def archive(self) -> None:
        """Soft delete: the beam leaves the site's lists (a synced change); its record and history stay."""
        self.store.update_beam(self.beam_id, {"archived": True})

    def copy_choices(self) -> list[tuple[str, str]]:
        """[(beam_id, 'copy from RB-1')] for the other beams on the site."""
        return [(i, f"copy from {r.get('mark')}") for i, r in self.store.beams(self.site_id) if i != self.beam_id]

    def copy_from(self, other_id: str) -> None:
        """Copy another beam's member, bracing and loads (never its span, bearings or mark); undoable."""
        other = self.store.beam_record(other_id)
        rec = self.record()
        changes = {k: copy.deepcopy(other[k]) for k in COPIED if k in other and other[k] != rec.get(k)}
        if changes:
            self._undo.append({k: _before(rec, k) for k in changes})
            self.store.update_beam(self.beam_id, changes)
        self.errors.clear()
        self.refresh()

    def loads_note(self) -> str:
        """Where the checked line loads came from, in a sentence for the recheck sheet."""
        rec = self.record()
        width = rec.get("tributary_m")
        source = loads_source(None if width is None else float(width), rec.get("load_basis") or "", self.basis(rec))
        return f"{source[:1].upper()}{source[1:]}."

    def write_sheet(self, out_dir: Path, today: str | None = None) -> Path:
        """Write this beam's recheck sheet (PDF) into ``out_dir``; its path.

        The beam as saved is rechecked again first, so the sheet matches the record. Raises ValueError
        with the reason in words when the beam cannot be rechecked yet (an entry missing), and OSError
        when the folder cannot be written.
        """
        result = self.refresh()
        if result is None:
            msg = f"no recheck sheet yet: {self.recheck_error}"
            raise ValueError(msg)
        beam = self.store.beam(self.beam_id)
        site = self.store.site(self.site_id)
        made = today or time.strftime("%Y-%m-%d")
        prepared = (
            f"Rechecked {made} on this tablet (device {self.store.device_id[:8]}) with bracewalk "
            f"{version('bracewalk')}, from the beam record as saved."
        )
        pdf = render_recheck_sheet(beam, result, site.name, note=self.loads_note(), prepared=prepared)
        out_dir.mkdir(parents=True, exist_ok=True)
        return write_atomic(out_dir / f"{sheet_stem(beam.mark)}-{time.strftime('%Y%m%d-%H%M%S')}.pdf", pdf)

    def location_text(self) -> str:
        """'Roof, grid E / 3-4, RB-5' for deficiencies and notices."""
        rec = self.record()
        return f"{rec.get('level') or '?'}, grid {rec.get('gridline') or '?'}, {rec.get('mark')}"

    def raised_number(self, index: int) -> str:
        """The number of the unverified deficiency already raised from the finding at ``index`` ('' if none)."""
        r = self.result or self.refresh()
        if r is None or not 0 <= index < len(r.findings):
            return ""
        return raised_number_for(self.store, self.site_id, self.beam_id, r.findings[index])

    def raise_deficiency(self, index: int = 0) -> str:
        """Confirm the finding at ``index`` as a numbered deficiency; return its number (never twice)."""
        r = self.result or self.refresh()
        if r is None or not 0 <= index < len(r.findings):
            msg = "no such finding to raise: the recheck has none at that position"
            raise ValueError(msg)
        already = self.raised_number(index)
        if already:
            msg = f"already raised as {already}; it is not raised twice"
            raise ValueError(msg)
        f = r.findings[index]
        where = self.location_text() + (f", {f.region}" if f.region else "")
        d = self.store.raise_deficiency(
            self.site_id, self.beam_id, f.code, f.priority.value, where, f.message, f.clause, f.action
        )
        return d.number


def raised_number_for(store: Store, site_id: str, beam_id: str, finding: Any) -> str:
    """The number of this beam's unverified deficiency raised from ``finding`` (same code and place), or ''."""
    for d in store.deficiencies(site_id):
        same = d.beam_id == beam_id and d.stage is not Stage.verified and d.code == finding.code
        if same and (not finding.region or d.location.endswith(finding.region)):
            return d.number
    return ""


def gridline_echo(gridline: str, supports: int) -> str:
    """How the notice will name each support from the gridline, or how to write it so it can.

    The notice names supports only from 'line / grid per support' ('F / 1-2', 'F / 1-2-3' for two spans;
    ``reports.content.support_names``); an inner support's grid is never guessed.
    """
    if not gridline.strip():
        return ""
    example = "F / " + "-".join(str(k) for k in range(1, supports + 1))
    names = support_names(gridline, supports)
    if not names:
        return f"the notice cannot name the supports from this: write line / one grid per support, e.g. {example}"
    shown = ", ".join(n or "(not named)" for n in names)
    if all(names):
        return f"supports on the notice: {shown}"
    return f"supports on the notice: {shown}; to name every support write one grid per support, e.g. {example}"


def words(value: str) -> str:
    """A stored choice in the trade's words ('not_visible' -> 'not visible')."""
    return CHOICE_WORDS.get(value, value.replace("_", " "))


def trade_message(exc: ValidationError) -> str:
    """A refused entry in words: the reason the model gives, without the validator's framing."""
    out = []
    for e in exc.errors():
        msg = str(e["msg"]).removeprefix("Value error, ")
        where = ".".join(map(str, e["loc"]))
        out.append(msg if (not where or where in msg) else f"{where}: {msg}")
    return "; ".join(out) + ("" if out and out[-1].endswith(".") else ".")


@cache
def _model_defaults() -> dict[str, Any]:
    """The beam model's defaults as stored (JSON values), for the fields that have one."""
    out: dict[str, Any] = {}
    for name, info in Beam.model_fields.items():
        if not info.is_required():
            annotation: Any = info.annotation
            out[name] = TypeAdapter(annotation).dump_python(info.get_default(call_default_factory=True), mode="json")
    out.update(stored_system(out["system"]))  # the system not recorded, as storage keeps it
    return out


def _before(rec: dict[str, Any], key: str) -> Any:
    """A field's value before a change, for undo: a model field the record never stored puts back its default.

    A new beam stores none of them; putting back nothing (None) left a record no recheck reads ('top_stamp:
    Input should be ...') after undoing the first pick of the TOP stamp or the service condition.
    """
    return rec[key] if key in rec else _model_defaults().get(key)


def _with_stand_ins(rec: dict[str, Any]) -> dict[str, Any]:
    """The record with valid stand-ins for entries not yet made (for validating the entries that were)."""
    out = dict(rec)
    glulam = out.get("material", "glulam") == "glulam"
    if not out.get("b_mm"):
        out["b_mm"] = min(
            map(float, tables.column("glulam_sizes" if glulam else "lumber_sizes", "width_mm" if glulam else "b_mm"))
        )
    if not out.get("d_mm"):
        out["d_mm"] = 38.0 * 4 if glulam else min(map(float, tables.column("lumber_sizes", "d_mm")))
    if not out.get("spans_mm"):
        out["spans_mm"] = [3000.0]
    out["loads"] = out.get("loads") or {}
    out["bearings"] = bearings_with_stand_ins(out.get("bearings") or [], len(out["spans_mm"]) + 1)
    return out


def missing_entries(rec: dict[str, Any]) -> list[str]:
    """What a beam record still lacks before it can be rechecked, in the reviewer's words."""
    needs = []
    if not rec.get("spans_mm"):
        needs.append("span")
    if not rec.get("b_mm"):
        needs.append("width b")
    if not rec.get("d_mm"):
        needs.append("depth d")
    if not rec.get("loads"):
        needs.append("tributary width or line loads")
    for i, b in enumerate(rec.get("bearings") or [], start=1):
        for key in ("lateral", "rotation"):
            if b.get(key) is None:
                needs.append(f"S{i} {key} restraint")
        if b.get("length_mm") is None:
            needs.append(f"S{i} bearing length")
    return needs


def _number(name: str, text: str, kind: str) -> float:
    """A typed number (decimal comma allowed) held against its plausible range (core.plausible)."""
    word = FIELD_WORDS.get(name, name)
    r = PLAUSIBLE[kind]
    try:
        value = float(text.strip().replace(",", ".") or "0")
    except ValueError:
        msg = f"{word}: {text!r} is not a number; enter it in {r.unit}"
        raise ValueError(msg) from None
    if not r.low <= value <= r.high:
        msg = f"{word} {value:g} {r.unit}: allowed {r.low:g} to {r.high:g} {r.unit} ({r.source})"
        raise ValueError(msg)
    return value


# -- readers of one form entry (text -> the stored fields it changes) ----------------------------
def _length_entry(name: str, text: str, rec: dict[str, Any]) -> dict[str, Any]:
    longest = max(rec.get("spans_mm") or [0.0]) or None
    kind = LENGTH_FIELDS[name]
    if not text and name.startswith("overhang"):
        value = 0.0
    else:
        value = read_length(kind, text, longest if kind == "spacing_mm" else None)
    if name == "purlin_spacing_mm":
        return {"top_edge": dict(rec.get("top_edge") or {}, braced_by="purlins", spacing_mm=value)}
    if name == "bottom_spacing_mm":
        return {"bottom_edge": {"braced_by": "braces", "spacing_mm": value}}
    return {name: value}


def _spans_entry(text: str, rec: dict[str, Any]) -> dict[str, Any]:
    spans = [read_length("span_mm", t) for t in split_spans(text)]
    if not spans:
        msg = "spans: enter one length per span, separated by ';' (7.2 m; 7.2 m)"
        raise ValueError(msg)
    bearings = [dict(b) for b in rec.get("bearings", [])]
    while len(bearings) < len(spans) + 1:
        bearings.append({"lateral": None, "rotation": None, "length_mm": None})  # not yet entered
    return {"spans_mm": spans, "bearings": bearings[: len(spans) + 1]}


def _bearing_entry(name: str, text: str, rec: dict[str, Any]) -> dict[str, Any]:
    idx, key = name[len("bearing") :].split(".")
    bearings = [dict(b) for b in rec.get("bearings") or []]
    if not 1 <= int(idx) <= len(bearings):
        msg = f"support {idx}: the beam has supports 1 to {len(bearings)}"
        raise ValueError(msg)
    bearings[int(idx) - 1][key] = read_length("bearing_length_mm", text) if key == "length_mm" else text
    return {"bearings": bearings}


def _material_entry(text: str, rec: dict[str, Any]) -> dict[str, Any]:
    material = Material(text)
    species = rec.get("species") if rec.get("species") in species_allowed(material) else species_allowed(material)[0]
    grades = grades_allowed(material, str(species))
    changes = {
        "material": text,
        "species": species,
        "grade": rec.get("grade") if rec.get("grade") in grades else grades[0],
    }
    if material is Material.glulam and system_shown(rec) != SYSTEM_NOT_RECORDED:  # glulam takes KH 1.0 only
        changes.update(stored_system(None))
    return changes


def system_shown(rec: dict[str, Any]) -> str:
    """A beam's system as its picker holds it: the stored case once recorded, else SYSTEM_NOT_RECORDED.

    As the recheck reads it (``storage.results.recorded_system``): "single" stored without
    ``system_recorded`` true was not recorded.
    """
    system = recorded_system(rec)
    return SYSTEM_NOT_RECORDED if system is None else str(system)


def _system_entry(text: str, rec: dict[str, Any]) -> dict[str, Any]:
    del rec  # the system changes only itself
    if text not in PICKERS["system"]:
        msg = f"system {text!r}; allowed: {', '.join(PICKERS['system'])}"
        raise ValueError(msg)
    return stored_system(None if text == SYSTEM_NOT_RECORDED else text)


def _species_entry(text: str, rec: dict[str, Any]) -> dict[str, Any]:
    grades = grades_allowed(Material(rec.get("material", "glulam")), text)
    return {"species": text, "grade": rec.get("grade") if rec.get("grade") in grades else (grades[0] if grades else "")}


def _top_braced_entry(text: str, rec: dict[str, Any]) -> dict[str, Any]:
    top = dict(rec.get("top_edge") or {}, braced_by=text)
    if text != "purlins":
        top["spacing_mm"] = None
    return {"top_edge": top}


def _top_fastened_entry(text: str, rec: dict[str, Any]) -> dict[str, Any]:
    fastened = None if text == NOT_RECORDED else text == "yes"
    return {"top_edge": dict(rec.get("top_edge") or {}, fastened=fastened)}


def _bottom_braced_entry(text: str, rec: dict[str, Any]) -> dict[str, Any]:
    bottom = dict(rec.get("bottom_edge") or {}, braced_by=text)
    if text != "braces":
        bottom["spacing_mm"] = None
    return {"bottom_edge": bottom}


def _specified_entry(text: str, rec: dict[str, Any]) -> dict[str, Any]:
    if not text:
        return {"specified": None}
    m = _SIZE.match(text)
    if not m:
        msg = "specified_size: enter the drawn size as b x d (130 x 494)"
        raise ValueError(msg)
    size = {"b_mm": read_length("b_mm", m.group(1)), "d_mm": read_length("d_mm", m.group(2))}
    return {"specified": {**size, "species": rec.get("species"), "grade": rec.get("grade")}}
