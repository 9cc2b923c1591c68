"""The sites list: each site with its sync state; create a site with its design basis."""

from __future__ import annotations

from dataclasses import dataclass, field

from pydantic import ValidationError

from core.records import DesignBasis, Site
from mobile.viewmodels.common import validation_message
from storage import Store

SITE_TEXT_FIELDS = ("name", "address", "permit_number", "project_number", "owner", "contractor", "firm")
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
            out.append((s.id, f"{s.name}\n{s.address or 'no address'}  ·  {state}  ·  last sync: {last or 'never'}"))
        return out

    def create(self, form: dict[str, str]) -> Site | None:
        """Create a site from the form's text; None with messages in ``errors`` when refused."""
        self.errors = {}
        basis: dict[str, object] = {
            "use": form.get("use") or "roof_no_ceiling",
            "drawings": form.get("drawings", "").strip(),
        }
        for name in BASIS_FIELDS:
            text = form.get(name, "").strip() or "0"
            try:
                basis[name] = float(text)
            except ValueError:
                self.errors[name] = f"{name} = {text!r}: enter a number of kPa (0 to 50)"
        try:
            design = DesignBasis.model_validate(basis)
        except ValidationError as exc:
            for e in exc.errors():
                self.errors[str(e["loc"][0])] = validation_message(exc)
            return None
        if self.errors:
            return None
        fields = {k: form.get(k, "").strip() for k in SITE_TEXT_FIELDS}
        try:
            Site(id="check", design_basis=design, **fields)
        except ValidationError as exc:
            for e in exc.errors():
                self.errors[str(e["loc"][0])] = validation_message(exc)
            return None
        return self.store.create_site(design_basis=design, **fields)
