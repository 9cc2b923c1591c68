"""The sites list: each site with its sync state; create a site with its design basis."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from pydantic import ValidationError

from core.records import DesignBasis, Site
from mobile.units import FIELD_WORDS
from mobile.viewmodels.common import validation_message
from storage import Store

SITE_TEXT_FIELDS = (
    "name",
    "address",
    "permit_number",
    "project_number",
    "owner",
    "contractor",
    "contractor_contact",
    "engineer_of_record",
    "firm",
)
BASIS_FIELDS = ("dead_kpa", "live_kpa", "snow_kpa")


@dataclass
class SitesViewModel:
    """Sites on this tablet and the form that creates one."""

    store: Store
    errors: dict[str, str] = field(default_factory=dict)

    def rows(self) -> list[tuple[str, str]]:
        """[(site id, 'name · address · N changes not yet synced · last sync ...')]."""
        last = self.store.last_sync()
        out = []
        for s in self.store.sites():
            pending = self.store.pending_sync_count(site_id=s.id)
            state = "all changes synced" if pending == 0 else f"{pending} changes not yet synced"
            name = f"DEMO · {s.name} (practice data)" if s.demo else s.name
            out.append((s.id, f"{name}\n{s.address or 'no address'}  ·  {state}  ·  last sync: {last or 'never'}"))
        return out

    def _fields(self, form: dict[str, str]) -> dict[str, Any] | None:
        """Site fields from the form's text; None with messages in ``errors`` when refused."""
        self.errors = {}
        basis: dict[str, object] = {
            "use": form.get("use") or "roof_no_ceiling",
            "drawings": form.get("drawings", "").strip(),
        }
        for name in BASIS_FIELDS:
            text = form.get(name, "").strip().replace(",", ".") or "0"
            try:
                basis[name] = float(text)
            except ValueError:
                self.errors[name] = f"{FIELD_WORDS.get(name, name)}: {text!r} is not a number; enter kPa (0 to 50)"
        try:
            design = DesignBasis.model_validate(basis)
        except ValidationError as exc:
            for e in exc.errors():
                self.errors[str(e["loc"][0])] = validation_message(exc)
            return None
        bases = {}
        try:
            bases = parse_load_bases(form.get("load_bases", ""), design)
        except ValueError as exc:
            self.errors["load_bases"] = str(exc)
        if self.errors:
            return None
        fields: dict[str, Any] = {k: form.get(k, "").strip() for k in SITE_TEXT_FIELDS}
        fields["distribution"] = [x.strip() for x in form.get("distribution", "").split(";") if x.strip()]
        fields["design_basis"] = design
        fields["load_bases"] = bases
        try:
            Site(id="check", **fields)
        except ValidationError as exc:
            for e in exc.errors():
                self.errors[str(e["loc"][0])] = validation_message(exc)
            return None
        return fields

    def create(self, form: dict[str, str]) -> Site | None:
        """Create a site from the form's text; None with messages in ``errors`` when refused."""
        fields = self._fields(form)
        return None if fields is None else self.store.create_site(**fields)

    def form_of(self, site_id: str) -> dict[str, str]:
        """The form's text for an existing site (to edit it)."""
        site = self.store.site(site_id)
        out = {k: str(getattr(site, k)) for k in SITE_TEXT_FIELDS}
        basis = site.design_basis
        out.update({k: f"{getattr(basis, k):g}" for k in BASIS_FIELDS})
        out["use"] = basis.use.value
        out["distribution"] = "; ".join(site.distribution)
        out["load_bases"] = "; ".join(
            f"{name}: {b.dead_kpa:g}/{b.live_kpa:g}/{b.snow_kpa:g}" for name, b in site.load_bases.items()
        )
        return out

    def update(self, site_id: str, form: dict[str, str]) -> Site | None:
        """Save an edited site and design basis (recorded as changes and synced like every record)."""
        fields = self._fields(form)
        if fields is None:
            return None
        current = self.store.site(site_id).model_dump(mode="json")
        data = {k: (v.model_dump(mode="json") if isinstance(v, DesignBasis) else v) for k, v in fields.items()}
        data["load_bases"] = {n: b.model_dump(mode="json") for n, b in fields["load_bases"].items()}
        changed = {k: v for k, v in data.items() if current.get(k) != v}
        return self.store.update_site(site_id, changed) if changed else self.store.site(site_id)


def parse_load_bases(text: str, main: DesignBasis) -> dict[str, DesignBasis]:
    """'floor: 1.5/1.9/0; canopy: 0.8/0/2.1' (dead/live/snow kPa) -> further load bases by name."""
    out: dict[str, DesignBasis] = {}
    for part in (p.strip() for p in text.split(";")):
        if not part:
            continue
        name, sep, loads = part.partition(":")
        values = [v.strip().replace(",", ".") for v in loads.split("/")]
        if not sep or not name.strip() or len(values) != 3:
            msg = f"load bases: {part!r}; write name: dead/live/snow kPa, e.g. floor: 1.5/1.9/0"
            raise ValueError(msg)
        try:
            dead, live, snow = (float(v) for v in values)
        except ValueError:
            msg = f"load bases: {part!r}: dead/live/snow must be numbers of kPa"
            raise ValueError(msg) from None
        use = "floor" if name.strip().lower().startswith("floor") else main.use.value
        try:
            out[name.strip()] = DesignBasis(dead_kpa=dead, live_kpa=live, snow_kpa=snow, use=use)
        except ValidationError as exc:
            msg = f"load bases: {part!r}: {validation_message(exc)}"
            raise ValueError(msg) from None
    return out
