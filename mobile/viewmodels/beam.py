"""The beam form: every field saved as it is entered, the recheck refreshed, messages at the field.

Names used by the screen (widget ids) and by ``set_field``:
text: mark, level, gridline, notes, b_mm, d_mm, spans, overhang_left_mm, overhang_right_mm,
purlin_spacing_mm, bottom_spacing_mm, tributary_m, dead_kn_m, live_kn_m, snow_kn_m, specified_size,
bearingN.length_mm; pickers: material, species, grade, top_braced_by, top_fastened, bottom_braced_by,
service, use, top_stamp, bearingN.lateral, bearingN.rotation.

A value that is refused is kept as a draft in the beam record (so a killed app loses nothing typed)
and shown back with its message; the last valid value stays in force for the recheck.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pydantic import ValidationError

from core import tables
from core.models import Beam, Material, grades_allowed, species_allowed
from core.recheck import recheck
from core.results import FactorTrace, Recheck
from mobile.units import parse_length_mm
from mobile.viewmodels.common import line_loads_kn_m, status_label, validation_message
from storage import StorageError, Store

LENGTH_FIELDS = {"b_mm", "d_mm", "overhang_left_mm", "overhang_right_mm", "purlin_spacing_mm", "bottom_spacing_mm"}
LOAD_FIELDS = ("dead_kn_m", "live_kn_m", "snow_kn_m")
TEXT_ONLY = ("level", "gridline", "notes")
PICKERS: dict[str, tuple[str, ...]] = {
    "material": ("glulam", "sawn"),
    "top_braced_by": ("none", "purlins", "decking"),
    "top_fastened": ("yes", "no"),
    "bottom_braced_by": ("none", "braces"),
    "service": ("dry", "wet"),
    "use": ("roof_no_ceiling", "roof_other", "roof_plaster", "floor"),
    "top_stamp": ("up", "down", "not_visible"),
    "restraint": ("yes", "no", "not_visible"),
}
RESTRAINT_WORDS = {"yes": "YES, restrained", "no": "NO restraint", "not_visible": "NOT VISIBLE"}
NEXT_RESTRAINT = {"yes": "no", "no": "not_visible", "not_visible": "yes"}
_SPLIT = re.compile(r"\s*[,;+]\s*")
_SIZE = re.compile(r"^\s*(.+?)\s*[x×*]\s*(.+?)\s*$", re.IGNORECASE)


def _fmt(value: Any) -> str:
    return "" if value is None else f"{value:g}" if isinstance(value, float | int) else str(value)


@dataclass
class BeamFormViewModel:
    """The log / edit beam form of one beam."""

    store: Store
    site_id: str
    beam_id: str
    errors: dict[str, str] = field(default_factory=dict)
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
            "b_mm": _fmt(rec.get("b_mm")),
            "d_mm": _fmt(rec.get("d_mm")),
            "spans": ", ".join(_fmt(s) for s in rec.get("spans_mm", [])),
            "overhang_left_mm": _fmt(rec.get("overhang_left_mm", 0)),
            "overhang_right_mm": _fmt(rec.get("overhang_right_mm", 0)),
            "top_braced_by": _fmt(top.get("braced_by", "none")),
            "purlin_spacing_mm": _fmt(top.get("spacing_mm")),
            "top_fastened": "yes" if top.get("fastened", True) else "no",
            "bottom_braced_by": _fmt(bottom.get("braced_by", "none")),
            "bottom_spacing_mm": _fmt(bottom.get("spacing_mm")),
            "tributary_m": _fmt(rec.get("tributary_m")),
            "service": _fmt(rec.get("service", "dry")),
            "use": _fmt(rec.get("use", "roof_no_ceiling")),
            "top_stamp": _fmt(rec.get("top_stamp", "up")),
            "specified_size": f"{spec['b_mm']:g} x {spec['d_mm']:g}" if isinstance(spec, dict) else "",
        }
        loads = rec.get("loads") or {}
        out.update({k: _fmt(loads.get(k, 0.0)) for k in LOAD_FIELDS})
        for i, b in enumerate(rec.get("bearings", []), start=1):
            out[f"bearing{i}.lateral"] = _fmt(b.get("lateral"))
            out[f"bearing{i}.rotation"] = _fmt(b.get("rotation"))
            out[f"bearing{i}.length_mm"] = _fmt(b.get("length_mm"))
        out.update(rec.get("drafts") or {})
        return out

    def support_count(self) -> int:
        """Number of supports (spans + 1)."""
        return len(self.record().get("spans_mm", [])) + 1

    def options(self, name: str) -> list[str]:
        """Choices for a picker field."""
        rec = self.record()
        material = Material(rec.get("material", "glulam"))
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
            value = parse_length_mm(text) if text or name.startswith(("purlin", "bottom")) else 0.0
            if name == "purlin_spacing_mm":
                return {"top_edge": dict(rec.get("top_edge") or {}, braced_by="purlins", spacing_mm=value)}
            if name == "bottom_spacing_mm":
                return {"bottom_edge": {"braced_by": "braces", "spacing_mm": value}}
            return {name: value}
        if name == "spans":
            spans = [parse_length_mm(t) for t in _SPLIT.split(text) if t]
            if not spans:
                raise ValueError("spans: enter one length per span, separated by commas (7200, 7200)")
            bearings = [dict(b) for b in rec.get("bearings", [])]
            while len(bearings) < len(spans) + 1:
                bearings.append(
                    {
                        "lateral": "not_visible",
                        "rotation": "not_visible",
                        "length_mm": bearings[-1]["length_mm"] if bearings else 140,
                    }
                )
            return {"spans_mm": spans, "bearings": bearings[: len(spans) + 1]}
        if name.startswith("bearing"):
            idx, key = name[len("bearing") :].split(".")
            bearings = [dict(b) for b in rec["bearings"]]
            if not 1 <= int(idx) <= len(bearings):
                raise ValueError(f"support {idx}: the beam has supports 1 to {len(bearings)}")
            bearings[int(idx) - 1][key] = parse_length_mm(text) if key == "length_mm" else text
            return {"bearings": bearings}
        if name in LOAD_FIELDS:
            return {"loads": dict(rec.get("loads") or {}, **{name: _number(name, text)}), "tributary_m": None}
        if name == "tributary_m":
            if not text:
                return {"tributary_m": None}  # cleared: the line loads stay as they are
            width = _number(name, text)
            return {"tributary_m": width, "loads": line_loads_kn_m(self.store.site(self.site_id).design_basis, width)}
        if name == "material":
            material = Material(text)
            species = (
                rec.get("species") if rec.get("species") in species_allowed(material) else species_allowed(material)[0]
            )
            grades = grades_allowed(material, str(species))
            return {
                "material": text,
                "species": species,
                "grade": rec.get("grade") if rec.get("grade") in grades else grades[0],
            }
        if name == "species":
            grades = grades_allowed(Material(rec.get("material", "glulam")), text)
            return {
                "species": text,
                "grade": rec.get("grade") if rec.get("grade") in grades else (grades[0] if grades else ""),
            }
        if name == "top_braced_by":
            top = dict(rec.get("top_edge") or {}, braced_by=text)
            if text != "purlins":
                top["spacing_mm"] = None
            return {"top_edge": top}
        if name == "top_fastened":
            return {"top_edge": dict(rec.get("top_edge") or {}, fastened=text == "yes")}
        if name == "bottom_braced_by":
            bottom = dict(rec.get("bottom_edge") or {}, braced_by=text)
            if text != "braces":
                bottom["spacing_mm"] = None
            return {"bottom_edge": bottom}
        if name == "specified_size":
            if not text:
                return {"specified": None}
            m = _SIZE.match(text)
            if not m:
                raise ValueError("specified_size: enter the drawn size as b x d (130 x 494)")
            return {
                "specified": {
                    "b_mm": parse_length_mm(m.group(1)),
                    "d_mm": parse_length_mm(m.group(2)),
                    "species": rec.get("species"),
                    "grade": rec.get("grade"),
                }
            }
        if name in ("grade", "service", "use", "top_stamp"):
            return {name: text}
        raise ValueError(f"unknown field {name!r}")

    def set_field(self, name: str, text: str) -> bool:
        """Validate and autosave one field; refresh the recheck. False (message kept at the field) if refused."""
        rec = self.record()
        drafts = dict(rec.get("drafts") or {})
        try:
            changes = self._to_storage(name, text, rec)
            candidate = dict(rec, **changes)
            Beam.model_validate({k: v for k, v in candidate.items() if k in Beam.model_fields})
        except ValidationError as exc:
            self.errors[name] = validation_message(exc)
        except ValueError as exc:
            self.errors[name] = str(exc)
        else:
            self.errors.pop(name, None)
            # the entry that made the beam valid also settles a picker refused for want of it
            for settled in {
                name,
                "top_braced_by" if name == "purlin_spacing_mm" else "",
                "bottom_braced_by" if name == "bottom_spacing_mm" else "",
            } - {""}:
                if drafts.pop(settled, None) is not None:
                    self.errors.pop(settled, None)
            changes = {k: v for k, v in changes.items() if rec.get(k) != v}
            if drafts != (rec.get("drafts") or {}):
                changes["drafts"] = drafts
            if changes:
                if not self._save(name, changes):
                    return False
                self._undo.append({k: rec.get(k) for k in changes})
            self.refresh()
            return True
        if drafts.get(name) != text:  # keep what was typed, even though it is refused
            drafts[name] = text
            self._save(name, {"drafts": drafts})
        return False

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
    def refresh(self) -> Recheck | None:
        """Recheck the stored beam (None, with ``recheck_error``, when the record cannot be rechecked)."""
        try:
            self.result = recheck(self.store.beam(self.beam_id))
            self.recheck_error = ""
        except ValueError as exc:
            self.result, self.recheck_error = None, f"not yet checked: {exc}"
        return self.result

    def immediate_findings(self) -> list[str]:
        """The findings shown full-width and unmissable."""
        r = self.result or self.refresh()
        if r is None:
            return []
        return [f"{f.message} ACTION: {f.action}" for f in r.findings if f.priority.value == "immediate"]

    def findings(self) -> list[tuple[int, str]]:
        """[(index, 'priority: message  ->  action')] for every finding."""
        r = self.result or self.refresh()
        if r is None:
            return []
        return [(i, f"[{f.priority.value}] {f.message} → {f.action}") for i, f in enumerate(r.findings)]

    def panel_lines(self) -> list[tuple[str, float | None, str]]:
        """Live recheck lines: (text, utilisation for the bar or None, trace key for ``trace_lines``)."""
        r = self.result or self.refresh()
        if r is None:
            return [(status_label("unchecked") + ": " + self.recheck_error, None, "")]
        lines: list[tuple[str, float | None, str]] = [(f"Status: {status_label(r.status.value)}", None, "")]
        for i, b in enumerate(r.bending):
            kl = "n/a" if b.kl is None else f"{b.kl:.3f}"
            cb = "n/a" if b.cb is None else f"{b.cb:.1f}"
            mr = "not established" if b.mr_knm is None else f"{b.mr_knm:.1f}"
            lines.append(
                (
                    f"{b.region} ({b.sign}): KL {kl}  CB {cb}  Mr {mr} vs Mf {b.mf_knm:.1f} kN·m",
                    b.utilisation,
                    f"bending{i}",
                )
            )
        lines.append((f"Shear: Vr {r.shear.vr_kn:.1f} vs Vf {r.shear.vf_kn:.1f} kN", r.shear.utilisation, "shear"))
        for j, q in enumerate(r.bearing):
            lines.append(
                (f"Bearing S{q.support}: Qr {q.qr_kn:.1f} vs Qf {q.qf_kn:.1f} kN", q.utilisation, f"bearing{j}")
            )
        lines.append(
            (
                f"Deflection: {r.deflection.delta_mm:.1f} vs {r.deflection.limit_mm:.1f} mm ({r.deflection.case})",
                r.deflection.utilisation,
                "deflection",
            )
        )
        return lines

    def trace_lines(self, key: str) -> list[str]:
        """Where a panel value came from: every factor with clause, table row and verified / memory."""
        r = self.result or self.refresh()
        if r is None or not key:
            return []
        trace: list[FactorTrace]
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
        trace = list(check.trace)
        out = [head]
        for t in trace:
            value = _fmt(t.value) if not isinstance(t.value, float) else f"{t.value:.4g}"
            out.append(
                f"{t.symbol} = {value} {t.unit}".rstrip()
                + f"   [{t.status}]"
                + (f"   {t.clause}" if t.clause else "")
                + (f"   ({t.source})" if t.source else "")
            )
        return out

    def location_text(self) -> str:
        """'Roof, grid E / 3-4, RB-5' for deficiencies and notices."""
        rec = self.record()
        return f"{rec.get('level') or '?'}, grid {rec.get('gridline') or '?'}, {rec.get('mark')}"

    def raise_deficiency(self, index: int = 0) -> str:
        """Confirm the finding at ``index`` as a numbered deficiency; return its number."""
        r = self.result or self.refresh()
        if r is None or not 0 <= index < len(r.findings):
            raise ValueError("no such finding to raise: the recheck has none at that position")
        f = r.findings[index]
        where = self.location_text() + (f", {f.region}" if f.region else "")
        d = self.store.raise_deficiency(
            self.site_id, self.beam_id, f.code, f.priority.value, where, f.message, f.clause, f.action
        )
        return d.number


def _number(name: str, text: str) -> float:
    try:
        return float(text.strip() or "0")
    except ValueError:
        raise ValueError(f"{name} = {text!r}: enter a number") from None
