"""Notices: choose the open items, preview the PDF pages, issue (then read-only), export the file."""

from __future__ import annotations

import dataclasses
import hashlib
import io
import time
from dataclasses import dataclass, field
from pathlib import Path

from core.records import IssuedNotice, MemoryAcknowledgement
from mobile.issue import (
    CLOSEOUT_NOTE,
    MemoryRowsNotAcknowledged,
    acknowledge,
    build_notice,
    issue_closeout,
    issue_notice_for_site,
    rows_for_items,
)
from mobile.viewmodels.common import PRIORITY_LABELS
from reports import stamp
from reports.render import render_notice
from reports.tablerows import RowUsed, memory_rows
from storage import StorageError, Store
from storage.stamps import local_time

PREVIEW_SCALE = 2.0  # 144 dpi: a US letter page is 1224 x 1584 px, legible on a tablet


@dataclass
class NoticeViewModel:
    """The notice screen of a site."""

    store: Store
    site_id: str
    chosen: set[str] = field(default_factory=set)
    message: str = ""
    acknowledgement: MemoryAcknowledgement | None = None  # the reviewer's, of the memory rows the items use
    _printed: dict[str, str] = field(default_factory=dict, repr=False)  # notice id -> the footer's short hash
    # what this screen issued since it was opened, and where its PDF was written: a second tap on Issue with
    # the same items chosen is refused (a double tap issued the same items twice under two numbers)
    just_issued: tuple[IssuedNotice, Path] | None = None

    def __post_init__(self) -> None:
        """Every open item is chosen to begin with."""
        self.chosen = {d.id for d in self.store.deficiencies(self.site_id, open_only=True)}

    def issuer(self) -> str:
        """Who issues, to fill the 'issued by' field: the device's signer, else this site's latest issuer.

        The signer is the reviewer profile set up under Signer (printed on every notice); without one, whoever
        issued this site's latest notice; else the person this device is set up for, when set up as a reviewer.
        '' when none of these is recorded.
        """
        profile = self.store.reviewer_profile()
        if profile is not None:
            return profile.name
        notices = self.store.notices(self.site_id)
        if notices:
            return notices[-1].issued_by
        name, role = self.store.device_user()
        return name if role == "reviewer" else ""

    def issued_state(self) -> str:
        """'Issued P-FR-AB12-001 rev 0 · 9 items' for what this screen just issued ('' when nothing)."""
        if self.just_issued is None:
            return ""
        issued, _path = self.just_issued
        kind = "close-out " if issued.change_note == CLOSEOUT_NOTE else ""
        return f"Issued {kind}{issued.number} rev {issued.revision} · {_items(len(issued.deficiency_ids))}"

    def issued_again(self) -> bool:
        """Whether Issue would issue again the notice this screen just issued: the same items chosen."""
        if self.just_issued is None:
            return False
        issued, _path = self.just_issued
        return issued.change_note != CLOSEOUT_NOTE and set(issued.deficiency_ids) == self.chosen

    def candidates(self) -> list[tuple[str, str, bool]]:
        """[(deficiency id, line, chosen)] for every open item, most urgent first."""
        return [
            (d.id, f"{d.number}  {PRIORITY_LABELS[d.priority]}  {d.location}", d.id in self.chosen)
            for d in self.store.deficiencies(self.site_id, open_only=True)
        ]

    def toggle(self, deficiency_id: str) -> None:
        """Choose or leave out one item (an acknowledgement stands only if it still covers every memory row)."""
        self.chosen ^= {deficiency_id}
        if self.acknowledgement is not None and not set(self.memory_rows()) <= set(self.acknowledgement.rows):
            self.acknowledgement = None

    def table_rows(self) -> list[RowUsed]:
        """The table rows the chosen items' beams rest on, memory rows first."""
        return rows_for_items(self.store, self.site_id, sorted(self.chosen))

    def table_row_lines(self) -> list[str]:
        """'MEMORY (not checked ...)  ·  CSA O86-19 Table 7.3: glulam_grades row ...' per row used.

        First, each firm record about a table row that is not applied (not a whole, valid record), and why.
        """
        aside = [f"NOT USED  ·  {a.words}" for a in self.store.table_records_set_aside()]
        return aside + [f"{r.status_words}  ·  {r.label}" for r in self.table_rows()]

    def items_heading(self) -> str:
        """Step 1's heading: how many open items there are and how many are chosen."""
        total = len(self.store.deficiencies(self.site_id, open_only=True))
        return f"1. Choose the items: {len(self.chosen)} of {total} chosen (tap one to include or leave it out)"

    def rows_heading(self) -> str:
        """Step 2's heading: how many table rows the chosen items rest on, and how many were entered from memory."""
        rows = self.table_rows()
        memory = len(memory_rows(rows))
        return f"2. Table rows these items rest on: {len(rows)}, {memory} of them entered from memory"

    def contact_warning(self) -> str:
        """A line for the issuer when the notice would give the contractor no phone or email for the reviewer."""
        profile = self.store.reviewer_profile()
        if profile is not None and (profile.phone.strip() or profile.email.strip()):
            return ""
        return (
            "No phone or email for the signer: the notice cannot tell the contractor how to reach you. "
            "Add one under Signer."
        )

    def memory_rows(self) -> list[str]:
        """The rows entered from memory that the reviewer must acknowledge before issue."""
        return memory_rows(self.table_rows())

    def acknowledgement_text(self) -> str:
        """Where the acknowledgement stands, in words."""
        memory = self.memory_rows()
        if not memory:
            return "No table row entered from memory: nothing to acknowledge."
        if self.acknowledgement is not None:
            when = local_time(self.acknowledgement.at)
            return f"{len(memory)} memory rows acknowledged by {self.acknowledgement.by} at {when}."
        return f"{len(memory)} rows entered from memory: check them, then acknowledge before issue."

    def acknowledge(self, by: str) -> bool:
        """The reviewer ``by`` acknowledges the memory rows now listed (who and when go on the notice)."""
        if not by.strip():
            self.message = "Enter the reviewer acknowledging the memory rows (issued by)"
            return False
        self.acknowledgement = acknowledge(self.store, self.table_rows(), by)
        self.message = (
            "Acknowledged: who and when go on the notice. Issue when ready."
            if self.acknowledgement is not None
            else self.acknowledgement_text()
        )
        return True

    def draft_pdf(self) -> bytes:
        """The notice as it would be issued now (marked with the next number), not stored."""
        number = self.store.next_notice_number(self.store.site(self.site_id))
        notice, _ = build_notice(self.store, self.site_id, number, only=sorted(self.chosen))
        return render_notice(dataclasses.replace(notice, draft=True))

    def preview_pages(self, out_dir: Path, pdf: bytes | None = None) -> list[Path]:
        """Render the draft (or the given PDF) to one PNG per page in out_dir, with pypdfium2."""
        import pypdfium2

        out_dir.mkdir(parents=True, exist_ok=True)
        data = pdf if pdf is not None else self.draft_pdf()
        doc = pypdfium2.PdfDocument(io.BytesIO(data))
        paths = []
        try:
            tag = hashlib.sha256(data).hexdigest()[:10]
            for i in range(len(doc)):
                path = out_dir / f"preview-{tag}-{i + 1}.png"
                doc[i].render(scale=PREVIEW_SCALE).to_pil().save(path)
                paths.append(path)
        finally:
            doc.close()
        return paths

    def issue(self, issued_by: str, out_dir: Path) -> Path | None:
        """Issue the chosen items: PDF stored with its SHA-256 (read-only from then on) and written to out_dir."""
        if not self.chosen:
            self.message = "Choose at least one item to issue"
            return None
        if self.just_issued is not None and self.issued_again():
            self.message = (
                f"Not issued again: {self.just_issued[0].number} was just issued with these items. "
                "Change the items chosen to issue another notice."
            )
            return None
        if not issued_by.strip():
            self.message = "Enter the reviewer issuing the notice"
            return None
        out = out_dir / f"notice-{time.strftime('%Y%m%d-%H%M%S')}.pdf"
        try:
            issued, path = issue_notice_for_site(
                self.store,
                self.site_id,
                out,
                issued_by.strip(),
                only=sorted(self.chosen),
                acknowledgement=self.acknowledgement,
            )
        except MemoryRowsNotAcknowledged as exc:
            self.message = f"Not issued: acknowledge the {len(exc.rows)} table rows entered from memory first"
            return None
        except (StorageError, OSError) as exc:  # nothing was issued: the number is not spent
            self.message = f"Not issued: {exc}"
            return None
        return self._issued(issued, path, "Notice")

    def closeout_ready(self) -> str:
        """'' when a close-out can be issued, else why not (no notice issued yet)."""
        if not self.store.notices(self.site_id):
            return "A close-out follows an issued notice: none issued on this site yet"
        return ""

    def issue_closeout(self, issued_by: str, out_dir: Path) -> Path | None:
        """Issue the numbered close-out notice: every earlier item verified or still open, and new items.

        The memory rows of the open items must be acknowledged as for any notice (same step).
        """
        why = self.closeout_ready()
        if self.just_issued is not None and self.just_issued[0].change_note == CLOSEOUT_NOTE:
            number = self.just_issued[0].number
            why = f"Not issued again: close-out {number} was just issued. Open the screen again to issue another."
        if why:
            self.message = why
            return None
        if not issued_by.strip():
            self.message = "Enter the reviewer issuing the close-out"
            return None
        out = out_dir / f"closeout-{time.strftime('%Y%m%d-%H%M%S')}.pdf"
        try:
            issued, path = issue_closeout(
                self.store, self.site_id, out, issued_by.strip(), acknowledgement=self.acknowledgement
            )
        except MemoryRowsNotAcknowledged as exc:
            self.message = f"Not issued: acknowledge the {len(exc.rows)} table rows entered from memory first"
            return None
        except (StorageError, OSError) as exc:
            self.message = f"Not issued: {exc}"
            return None
        return self._issued(issued, path, "Close-out")

    def _issued(self, issued: IssuedNotice, path: Path, kind: str) -> Path:
        """Record what was just issued and say it: number, how many items, where its PDF was written."""
        self.just_issued = (issued, path)
        self.acknowledgement = None  # the next notice's memory rows are acknowledged afresh
        count = _items(len(issued.deficiency_ids))
        self.message = f"{kind} {issued.number} rev {issued.revision} issued, {count}. PDF written to {path}"
        return path

    def issued(self) -> list[tuple[str, str]]:
        """[(notice id, 'number rev n · date · by · items')] of issued notices, read-only."""
        return [
            (
                n.id,
                ("Close-out " if n.change_note == CLOSEOUT_NOTE else "")
                + f"{n.number} rev {n.revision}  ·  {n.issued_at}  ·  {n.issued_by}  ·  "
                f"{len(n.deficiency_ids)} items  ·  {self._printed_hash(n)}",
            )
            for n in self.store.notices(self.site_id)
        ]

    def _printed_hash(self, n: IssuedNotice) -> str:
        """'SHA-256 1a2b3c4d5e6f7a8b' as the notice's footer prints it (the embedded hash's short form).

        A notice issued before the hash was embedded, or whose PDF has not arrived, shows the file's
        hash, said so.
        """
        if n.id not in self._printed:  # an issued PDF never changes: read and checked once
            pdf = self.store.blob(n.pdf_sha256)
            embedded = stamp.embedded_hash(pdf) if pdf is not None else None
            if embedded is None:
                return f"file SHA-256 {n.pdf_sha256[:12]}"
            self._printed[n.id] = f"SHA-256 {stamp.short_form(embedded)}"
        return self._printed[n.id]

    def export(self, notice_id: str, folder: Path) -> Path:
        """Write an issued notice's stored PDF into folder (to share); the bytes are checked against the hash."""
        n = next(x for x in self.store.notices(self.site_id) if x.id == notice_id)
        pdf = self.store.blob(n.pdf_sha256)
        if pdf is None:
            msg = f"the PDF of {n.number} has not arrived on this tablet yet (pending sync)"
            raise FileNotFoundError(msg)
        if hashlib.sha256(pdf).hexdigest() != n.pdf_sha256:
            msg = f"the stored PDF of {n.number} does not match its recorded SHA-256"
            raise ValueError(msg)
        folder.mkdir(parents=True, exist_ok=True)
        path = folder / f"{n.number}-rev{n.revision}.pdf"
        path.write_bytes(pdf)
        self.message = f"Exported {path}"
        return path


def _items(n: int) -> str:
    """'1 item', '9 items'."""
    return f"{n} item" if n == 1 else f"{n} items"
