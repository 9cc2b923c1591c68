"""One deficiency: its details, edits, status moves with evidence, and its history."""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from pathlib import Path

from core.recheck import recheck
from core.records import Deficiency, ReReview, ReReviewOutcome, Stage
from core.results import PRIORITY_ORDER
from mobile.viewmodels.common import PRIORITY_LABELS, STAGE_WORDS, local_time, status_label
from storage import Store
from storage.stamps import utc_stamp
from storage.store import LifecycleError

EDITABLE = ("location", "description", "reference", "action", "priority", "due")
ROLES = ("reviewer", "contractor", "office")


@dataclass
class DeficiencyViewModel:
    """The deficiency screen."""

    store: Store
    deficiency_id: str
    message: str = ""
    errors: dict[str, str] = field(default_factory=dict)

    def deficiency(self) -> Deficiency:
        """The current record."""
        return self.store.deficiency(self.deficiency_id)

    def title(self) -> str:
        """'D-AB12-003  ·  ▲ IMMEDIATE  ·  open'."""
        d = self.deficiency()
        cycle = f", cycle {d.cycle + 1}" if d.cycle else ""
        return f"{d.number}  ·  {PRIORITY_LABELS[d.priority]}  ·  {STAGE_WORDS[int(d.stage)]}{cycle}"

    def fields(self) -> dict[str, str]:
        """Editable text of the deficiency."""
        d = self.deficiency()
        return {k: str(getattr(d, k)) for k in EDITABLE}

    def edit(self, name: str, text: str) -> bool:
        """Save one edited field (per-field merge like every record); False with a message if refused."""
        if name not in EDITABLE:
            self.errors[name] = f"{name}: not editable; allowed: {', '.join(EDITABLE)}"
            return False
        text = text.strip()
        if name == "priority" and text not in PRIORITY_ORDER:
            self.errors[name] = f"priority {text!r}; allowed: {', '.join(PRIORITY_ORDER)}"
            return False
        if name in ("location", "description", "action") and not text:
            self.errors[name] = f"{name}: required on a deficiency"
            return False
        self.errors.pop(name, None)
        d = self.deficiency()
        if getattr(d, name) != text:
            self.store.save("deficiency", self.deficiency_id, {name: text})
        return True

    def moves(self, role: str) -> list[str]:
        """Status moves allowed from the current stage for a role (open -> corrected -> verified; reopen)."""
        stage = self.deficiency().stage
        out = []
        if stage is Stage.open:
            out.append("corrected")
        if stage is not Stage.verified and role == "reviewer":
            out.append("verified")
        if stage is not Stage.open:
            out.append("reopen")
        return out

    def device_user(self) -> tuple[str, str]:
        """(name, role) this device is set up for (the role is a setting of the device's user)."""
        return self.store.device_user()

    def recheck_as_installed(self) -> tuple[bool, str]:
        """(finding gone, 'RB-5 as now recorded: ● OK') for the beam this deficiency is on."""
        d = self.deficiency()
        if d.beam_id is None:
            return True, ""
        rec = self.store.beam_record(d.beam_id)
        try:
            result = recheck(self.store.beam(d.beam_id))
        except ValueError as exc:
            return False, f"{rec.get('mark')} cannot be rechecked as recorded ({exc})"
        still = [f for f in result.findings if f.code == d.code and (not f.region or d.location.endswith(f.region))]
        return not still, f"recheck of {rec.get('mark')} as now recorded: {status_label(result.status.value)}"

    def move(self, stage: str, actor: str, role: str, note: str = "", evidence: str | Path | None = None) -> bool:
        """Move the status with a note and an optional evidence photo; False with ``message`` if refused.

        Marking corrected a deficiency on a logged beam needs the beam updated to what is now installed:
        the recheck of the updated beam must no longer carry the finding, and its result goes into the note.
        """
        if not actor.strip():
            self.message = "Enter who is making this change"
            return False
        if stage == "corrected":
            gone, summary = self.recheck_as_installed()
            if not gone:
                self.message = (
                    "Not marked corrected: the beam as recorded still shows this finding. Update the beam to what "
                    "is now installed (Update the beam…), then mark corrected. " + summary
                )
                return False
            note = "; ".join(x for x in (note.strip(), summary) if x)
        sha = ""
        try:
            if evidence:
                content = Path(evidence).read_bytes()
                d = self.deficiency()
                self.store.add_photo(d.site_id, content, deficiency_id=d.id, caption=f"evidence: {stage} {note}"[:200])
                sha = hashlib.sha256(content).hexdigest()  # the blob add_photo stored
            self.store.move_status(self.deficiency_id, stage, actor.strip(), role, note.strip(), sha)
        except LifecycleError as exc:
            self.message = str(exc)
            return False
        self.message = f"Moved to {stage} by {actor.strip()} ({role})"
        return True

    def rereview(self, outcome: str, actor: str, role: str, note: str = "") -> bool:
        """Record the re-review outcome of this item (reviewer only); False with ``message`` if refused.

        ``verified``: the beam as now recorded must no longer carry the finding (its recheck is the
        evidence); the status moves to verified. ``still_open``: an item the contractor reported corrected
        is reopened (a new cycle). Either way the outcome, note and recheck go on the close-out notice.
        """
        if role != "reviewer":
            self.message = "Only a reviewer records a re-review (set this device's user up as a reviewer)"
            return False
        if not actor.strip():
            self.message = "Enter who is making this change"
            return False
        kind = ReReviewOutcome(outcome)
        gone, summary = self.recheck_as_installed()
        if kind is ReReviewOutcome.verified and not gone:
            self.message = "Not verified: the beam as recorded still shows this finding. " + summary
            return False
        d = self.deficiency()
        text = "; ".join(x for x in (note.strip(), summary) if x)
        try:
            if kind is ReReviewOutcome.verified and d.stage is not Stage.verified:
                self.store.move_status(d.id, "verified", actor.strip(), role, text)
            elif kind is ReReviewOutcome.still_open and d.stage is not Stage.open:
                self.store.move_status(d.id, "reopen", actor.strip(), role, text)
        except LifecycleError as exc:
            self.message = str(exc)
            return False
        record = ReReview(
            outcome=kind,
            note=note.strip(),
            evidence=summary,
            by=actor.strip(),
            at=utc_stamp(self.store.wall_ms()),
            cycle=self.deficiency().cycle,
        )
        self.store.save("deficiency", d.id, {"rereview": record.model_dump(mode="json")})
        self.message = f"Re-review recorded: {kind.value.replace('_', ' ')} ({summary or 'no beam'})"
        return True

    def rereview_text(self) -> str:
        """The latest re-review outcome in words, or that there is none yet."""
        r = self.deficiency().rereview
        if r is None:
            return "No re-review recorded yet"
        return (
            f"Re-review {local_time(r.at)} by {r.by}: {r.outcome.value.replace('_', ' ')}"
            + (f"; {r.note}" if r.note else "")
            + (f"; {r.evidence}" if r.evidence else "")
        )

    def history_lines(self) -> list[str]:
        """Every status move, oldest first, with who, when, the note and whether evidence is attached."""
        out = []
        for e in self.store.history(self.deficiency_id):
            word = "opened" if e.stage is Stage.open and e.cycle else STAGE_WORDS[int(e.stage)]
            out.append(
                f"{local_time(e.at)}  {word} (cycle {e.cycle + 1}) by {e.actor} [{e.role}]"
                + (f": {e.note}" if e.note else "")
                + ("  · photo evidence" if e.evidence_sha256 else "")
            )
        return out or ["raised; no status moves yet"]
