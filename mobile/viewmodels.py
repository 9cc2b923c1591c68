"""Plain-Python view models for the tablet screens (no Kivy): all logic lives here and is tested."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from pydantic import ValidationError

from core.models import Beam
from core.recheck import recheck
from core.results import Recheck
from mobile.units import parse_length_mm
from storage import Store

STATUS_WORDS = {"ok": ("OK", "●"), "deficient": ("DEFICIENT", "▲"), "not_permitted": ("NOT PERMITTED", "■"),
                "not_established": ("NOT ESTABLISHED", "✖"), "unchecked": ("NOT YET CHECKED", "○")}
LENGTH_FIELDS = {"b_mm", "d_mm", "span_mm", "purlin_spacing_mm", "overhang_left_mm", "overhang_right_mm"}


def status_label(status: str) -> str:
    """Status by word and shape, never by colour alone."""
    word, shape = STATUS_WORDS[status]
    return f"{shape} {word}"


@dataclass
class SiteViewModel:
    """A site: its beams grouped by level and gridline with status, and open deficiencies."""

    store: Store
    site_id: str

    def groups(self) -> list[tuple[str, list[tuple[str, str, str]]]]:
        """[(level, [(beam_id, 'mark  gridline', status label)])]."""
        out: dict[str, list[tuple[str, str, str]]] = {}
        for beam_id, record in self.store.beams(self.site_id):
            try:
                status = recheck(self.store.beam(beam_id)).status.value
            except ValueError:
                status = "unchecked"
            out.setdefault(str(record.get("level", "?")), []).append(
                (beam_id, f"{record.get('mark')}  {record.get('gridline', '')}", status_label(status)))
        return list(out.items())

    def open_deficiencies(self) -> list[str]:
        """One line per open deficiency, most urgent first."""
        return [f"{d.number} [{d.priority}] {d.location}" for d in self.store.deficiencies(self.site_id, True)]


@dataclass
class BeamFormViewModel:
    """The beam form: each field saved as entered, recheck refreshed, messages shown at the field."""

    store: Store
    site_id: str
    beam_id: str
    errors: dict[str, str] = field(default_factory=dict)
    result: Recheck | None = None
    _undo: list[tuple[str, Any]] = field(default_factory=list)

    def record(self) -> dict[str, Any]:
        """The stored beam record (beam fields and location)."""
        return self.store.beam_record(self.beam_id)

    def _to_storage(self, name: str, text: str) -> tuple[str, Any]:
        rec = self.record()
        if name in LENGTH_FIELDS:
            value = parse_length_mm(text)
            if name == "span_mm":
                return "spans_mm", [value] + list(rec["spans_mm"][1:])
            if name == "purlin_spacing_mm":
                top = dict(rec.get("top_edge", {}), braced_by="purlins", spacing_mm=value)
                return "top_edge", top
            return name, value
        if name.startswith("bearing"):  # "bearing2.rotation" -> yes/no/not_visible
            idx, key = name[7:].split(".")
            bearings = [dict(b) for b in rec["bearings"]]
            bearings[int(idx) - 1][key] = text
            return "bearings", bearings
        if name in ("dead_kn_m", "live_kn_m", "snow_kn_m"):
            return "loads", dict(rec["loads"], **{name: float(text)})
        return name, text

    def set_field(self, name: str, text: str) -> bool:
        """Validate and autosave one field; refresh the recheck. False (with a message) if refused."""
        try:
            key, value = self._to_storage(name, text)
            candidate = dict(self.record(), **{key: value})
            Beam.model_validate({k: v for k, v in candidate.items() if k in Beam.model_fields})
        except ValidationError as exc:
            self.errors[name] = "; ".join(f"{'.'.join(map(str, e['loc']))}: {e['msg']}" for e in exc.errors())
            return False
        except ValueError as exc:
            self.errors[name] = str(exc)
            return False
        self.errors.pop(name, None)
        self._undo.append((key, self.record().get(key)))
        self.store.update_beam(self.beam_id, {key: value})
        self.refresh()
        return True

    def undo(self) -> bool:
        """Put back the value before the last change (saved as a new edit)."""
        if not self._undo:
            return False
        key, value = self._undo.pop()
        self.store.update_beam(self.beam_id, {key: value})
        self.refresh()
        return True

    def refresh(self) -> Recheck:
        """Recheck the stored beam."""
        self.result = recheck(self.store.beam(self.beam_id))
        return self.result

    def immediate_findings(self) -> list[str]:
        """The findings shown full-width and unmissable."""
        r = self.result or self.refresh()
        return [f"{f.message} ACTION: {f.action}" for f in r.findings if f.priority.value == "immediate"]

    def panel_lines(self) -> list[tuple[str, float | None]]:
        """Live recheck lines with utilisation for the bar (None when not established / not permitted)."""
        r = self.result or self.refresh()
        lines: list[tuple[str, float | None]] = [(f"Status: {status_label(r.status.value)}", None)]
        for b in r.bending:
            kl = "n/a" if b.kl is None else f"{b.kl:.3f}"
            cb = "n/a" if b.cb is None else f"{b.cb:.1f}"
            mr = "not established" if b.mr_knm is None else f"{b.mr_knm:.1f}"
            lines.append((f"{b.region}: KL {kl}  CB {cb}  Mr {mr} vs Mf {b.mf_knm:.1f} kN·m", b.utilisation))
        lines.append((f"Shear: Vr {r.shear.vr_kn:.1f} vs Vf {r.shear.vf_kn:.1f} kN", r.shear.utilisation))
        for q in r.bearing:
            lines.append((f"Bearing S{q.support}: Qr {q.qr_kn:.1f} vs Qf {q.qf_kn:.1f} kN", q.utilisation))
        lines.append((f"Deflection: {r.deflection.delta_mm:.1f} vs {r.deflection.limit_mm:.1f} mm",
                      r.deflection.utilisation))
        return lines

    def raise_deficiency(self, index: int = 0) -> str:
        """Confirm the finding at ``index`` as a numbered deficiency; return its number."""
        r = self.result or self.refresh()
        f = r.findings[index]
        rec = self.record()
        d = self.store.raise_deficiency(self.site_id, self.beam_id, f.code, f.priority.value,
                                        f"{rec.get('level')}, grid {rec.get('gridline')}, {rec['mark']}", f.message,
                                        f.clause, f.action)
        return d.number
