"""Issue a notice: compose storage records, core rechecks and the reports renderer."""

from __future__ import annotations

import hashlib
import time
from pathlib import Path

from core.recheck import recheck
from core.records import IssuedNotice, Stage
from reports.content import Carried, Notice, header_from, item_for
from reports.render import render_notice
from storage import Store
from storage.files import write_atomic

DISTRIBUTION = ["Owner", "General contractor", "Architect (coordinating professional)", "File"]


def observed_text(record: dict[str, object]) -> str:
    """'measured 130 x 456 mm; specified 130 x 494 mm D.Fir-L 24f-E' from a stored beam record."""
    text = (
        f"{record.get('material')} {record.get('species')} {record.get('grade')}, measured "
        f"{record.get('b_mm'):g} x {record.get('d_mm'):g} mm"
    )
    spec = record.get("specified")
    if isinstance(spec, dict):
        text += f"; drawings: {spec['b_mm']:g} x {spec['d_mm']:g} mm {spec['species']} {spec['grade']}"
    spans = record.get("spans_mm")
    if isinstance(spans, list):
        text += "; span(s) " + " + ".join(f"{s / 1000:.2f} m" for s in spans)
    top = record.get("top_edge")
    if isinstance(top, dict) and top.get("braced_by") != "none":
        text += f"; top edge {top['braced_by']}" + (f" at {top['spacing_mm']:g} mm" if top.get("spacing_mm") else "")
        fastened = top.get("fastened")
        text += "" if fastened is True else (" (not fastened)" if fastened is False else " (fastening not recorded)")
    notes = record.get("notes")
    if isinstance(notes, str) and notes.strip():
        text += f"; beam notes: {notes.strip()}"  # what the reviewer wrote at the beam reaches the notice
    return text


def build_notice(
    store: Store,
    site_id: str,
    number: str,
    revision: int = 0,
    change_note: str = "",
    issued_on: str | None = None,
    only: list[str] | None = None,
) -> tuple[Notice, list[str]]:
    """The notice content for a site's open deficiencies (or the ``only`` ones chosen), earlier items carried."""
    site = store.site(site_id)
    visits = store.visits(site_id)
    visit = visits[-1] if visits else None
    open_items = store.deficiencies(site_id, open_only=True)
    if only is not None:
        open_items = [d for d in open_items if d.id in set(only)]
    photos_by_def: dict[str, list[bytes]] = {}
    photos_by_beam: dict[str, list[bytes]] = {}
    for p in store.photos(site_id):
        content = store.blob(p["sha256"])
        if content is None:
            continue
        if p.get("deficiency_id"):
            photos_by_def.setdefault(p["deficiency_id"], []).append(content)
        elif p.get("beam_id"):
            photos_by_beam.setdefault(p["beam_id"], []).append(content)
    earlier = {i for n in store.notices(site_id) for i in n.deficiency_ids}
    items, carried = [], []
    for d in open_items:
        beam = result = None
        observed = d.description
        if d.beam_id:
            record = store.beam_record(d.beam_id)
            beam = store.beam(d.beam_id)
            result = recheck(beam)
            observed = observed_text(record)
        photos = photos_by_def.get(d.id, []) + (photos_by_beam.get(d.beam_id, []) if d.beam_id else [])
        items.append(item_for(d, beam, result, observed, photos))
        if d.id in earlier:
            carried.append(Carried(d.number, d.location, d.description, _status_words(d.stage, d.cycle)))
    header = header_from(
        site, visit, number, revision, issued_on or time.strftime("%Y-%m-%d"), site.distribution or DISTRIBUTION
    )
    if site.contractor_contact:
        header["addressed_to"] = f"{site.contractor} (attention: {site.contractor_contact})"
    notice = Notice(**header, items=items, carried=carried, change_note=change_note)  # type: ignore[arg-type]
    return notice, [d.id for d in open_items]


def _status_words(stage: Stage, cycle: int) -> str:
    words = {Stage.open: "open", Stage.corrected: "corrected (contractor reports done)", Stage.verified: "verified"}
    return words[stage] + (f", cycle {cycle + 1}" if cycle else "")


def issue_notice_for_site(
    store: Store,
    site_id: str,
    out: Path,
    issued_by: str = "Reviewer",
    issued_on: str | None = None,
    only: list[str] | None = None,
) -> tuple[IssuedNotice, Path]:
    """Render, store (PDF blob + immutable record) and write the notice PDF to ``out``."""
    site = store.site(site_id)
    number = store.next_notice_number(site)
    notice, ids = build_notice(store, site_id, number, issued_on=issued_on, only=only)
    pdf = render_notice(notice)
    # the number is spent only once the PDF is safely written; if recording fails, the file goes too
    out.parent.mkdir(parents=True, exist_ok=True)
    write_atomic(out, pdf)
    try:
        issued = store.issue_notice(site_id, number, pdf, ids, issued_by, issued_on or time.strftime("%Y-%m-%d"))
    except BaseException:
        out.unlink(missing_ok=True)
        raise
    return issued, out


def reissue(store: Store, previous: IssuedNotice, out: Path, change_note: str, issued_by: str) -> IssuedNotice:
    """A new revision of an issued notice that says what changed; the original stays on file."""
    notice, ids = build_notice(store, previous.site_id, previous.number, previous.revision + 1, change_note)
    pdf = render_notice(notice)
    issued = store.issue_notice(
        previous.site_id,
        previous.number,
        pdf,
        ids,
        issued_by,
        time.strftime("%Y-%m-%d"),
        revision=previous.revision + 1,
        supersedes=previous.id,
        change_note=change_note,
    )
    out.write_bytes(pdf)
    return issued


def verify_pdf(store: Store, path: Path) -> IssuedNotice | None:
    """The issued notice this PDF is exactly (by SHA-256), or None."""
    return store.find_issued_by_hash(hashlib.sha256(path.read_bytes()).hexdigest())
