"""Issue a notice: compose storage records, core rechecks and the reports renderer."""

from __future__ import annotations

import dataclasses
import hashlib
import time
from pathlib import Path

from core.kinds import TraceStatus
from core.recheck import recheck
from core.records import Deficiency, IssuedNotice, MemoryAcknowledgement, Stage, Visit
from core.results import Recheck
from reports import stamp
from reports.content import Carried, Mark, Notice, Photo, header_from, item_for
from reports.inputs import record_loads_source
from reports.render import render_notice
from reports.tablerows import RowUsed, memory_rows, rows_used
from storage import Store, results
from storage.files import write_atomic
from storage.stamps import local_time, utc_stamp

CLOSEOUT_NOTE = "close-out notice"  # the change note an issued close-out carries (how the record says what it is)
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
    if isinstance(top, dict):
        text += "; " + top_edge_words(top)
    notes = record.get("notes")
    if isinstance(notes, str) and notes.strip():
        text += f"; beam notes: {notes.strip()}"  # what the reviewer wrote at the beam reaches the notice
    return text


def top_edge_words(top: dict[str, object]) -> str:
    """'top edge purlins at 1200 mm (not fastened)'; 'top edge not braced' when nothing holds it (as recorded)."""
    if top.get("braced_by") == "none":
        return "top edge not braced"  # what the recheck took: said, not left for the reader to infer
    spacing = top.get("spacing_mm")
    text = f"top edge {top['braced_by']}"
    if isinstance(spacing, int | float) and spacing:
        text += f" at {spacing:g} mm"
    fastened = top.get("fastened")
    if fastened is True:
        return text
    return text + (" (not fastened)" if fastened is False else " (fastening not recorded)")


def member_title(record: dict[str, object]) -> str:
    """'RB-5 · level Roof · grid D / 2-3' from a stored beam record (what is not recorded is said so)."""
    level = str(record.get("level") or "").strip() or "level not recorded"
    grid = str(record.get("gridline") or "").strip()
    return f"{record.get('mark')} · {level} · " + (f"grid {grid}" if grid else "gridline not recorded")


def logged_words(record: dict[str, object], visits: list[Visit]) -> str:
    """When a beam was logged, for the notice: 'on the visit of 2026-11-24 08:30 (latest visit 2026-11-30 09:15)'.

    From the ``visit_id`` the app stores with a new beam; '' when none is recorded or the visit is not on this
    tablet (the notice then says nothing rather than guess).
    """
    by_id = {v.id: v for v in visits}
    visit = by_id.get(str(record.get("visit_id") or ""))
    if visit is None:
        return ""
    latest = visits[-1]
    later = f" (this notice follows the visit of {latest.started_at})" if latest.id != visit.id else ""
    return f"on the visit of {visit.started_at}{later}"


def photo_caption_bits(record: dict[str, object]) -> list[str]:
    """What, when, who of a stored photo: [caption, 'taken 2026-12-02 07:34 UTC', 'by P. Okonkwo-Lind']."""
    caption = str(record.get("caption") or "").strip()
    taken_at = str(record.get("taken_at") or "").strip()
    taken_by = str(record.get("taken_by") or "").strip()
    return [
        caption,
        f"taken {local_time(taken_at)}" if taken_at else "time not recorded",
        f"by {taken_by}" if taken_by else "",
    ]


def photo_ref(store: Store, record: dict[str, object]) -> Photo:
    """A photo for the notice that reads its blob only when drawn, captioned what/where/when/who."""
    sha = str(record["sha256"])
    bits = photo_caption_bits(record)
    marks = tuple(Mark(**m) for m in record.get("marks") or [])  # type: ignore[attr-defined]

    def load() -> bytes:
        content = store.blob(sha)
        if content is None:
            msg = f"photo {sha[:12]} has not arrived on this tablet"
            raise FileNotFoundError(msg)
        return content

    return Photo(sha256=sha, load=load, caption=" · ".join(b for b in bits if b), marks=marks)


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
    # photos are referenced here and read one at a time when the renderer draws them (bounded memory)
    photos_by_def: dict[str, list[bytes | Photo]] = {}
    photos_by_beam: dict[str, list[bytes | Photo]] = {}
    records = store.photos(site_id)
    marked = store.latest_markups(site_id)  # the latest markup of each photo
    for p in records:
        if p.get("pending") or p.get("marks_of"):
            continue
        p = marked.get(str(p["id"]), p)  # drawn with its marks; the original record and blob stay as taken
        ref = photo_ref(store, p)
        if p.get("deficiency_id"):
            photos_by_def.setdefault(p["deficiency_id"], []).append(ref)
        elif p.get("beam_id"):
            photos_by_beam.setdefault(p["beam_id"], []).append(ref)
    earlier = {i for n in store.notices(site_id) for i in n.deficiency_ids}
    logged_on: set[str] = set()  # the visits the items' members were logged on
    items, carried = [], []
    checked: list[Recheck] = []
    for d in open_items:
        beam = result = None
        observed = d.description
        title = grid = logged = loads_from = ""
        if d.beam_id:
            record = store.beam_record(d.beam_id)
            beam = store.beam(d.beam_id)
            result = recheck(beam)
            checked.append(result)
            observed = observed_text(record)
            title = member_title(record)
            grid = str(record.get("gridline") or "")
            logged = logged_words(record, visits)
            loads_from = record_loads_source(record, site)
            logged_on.add(str(record.get("visit_id") or ""))
        photos = photos_by_def.get(d.id, [])
        member_photos = photos_by_beam.get(d.beam_id, []) if d.beam_id else []
        items.append(
            item_for(
                d,
                beam,
                result,
                observed,
                photos,
                member_title=title,
                member_photos=member_photos,
                status=_status_words(d.stage, d.cycle),
                gridline=grid,
                logged=logged,
                loads_from=loads_from,
            )
        )
        if d.id in earlier:
            carried.append(Carried(d.number, d.location, d.description, _status_words(d.stage, d.cycle)))
    header = header_from(
        site, visit, number, revision, issued_on or time.strftime("%Y-%m-%d"), site.distribution or DISTRIBUTION
    )
    if site.contractor_contact:
        header["addressed_to"] = f"{site.contractor} (attention: {site.contractor_contact})"
    before = [
        f"{v.started_at} (scope reviewed then: {v.scope_reviewed or 'not recorded'})"
        for v in visits[:-1]
        if v.id in logged_on
    ]
    notice = Notice(
        **header,  # type: ignore[arg-type]
        items=items,
        carried=carried,
        change_note=change_note,
        table_rows=rows_used(checked),
        earlier_visits=before,
        no_finding=_no_finding(store, site_id, visit, {d.beam_id for d in store.deficiencies(site_id, open_only=True)}),
    )
    return signed_by(store, notice), [d.id for d in open_items]


def _no_finding(store: Store, site_id: str, visit: Visit | None, with_items: set[str | None]) -> list[str]:
    """Marks of the members logged on ``visit`` whose recheck is ok and that carry no open item.

    Every member of the site when no visit is recorded; in the site list's order (level, gridline, mark).
    """
    fresh = results.fresh(store.db, site_id)
    return [
        str(rec.get("mark") or bid)
        for bid, rec in store.beams(site_id)
        if (visit is None or rec.get("visit_id") == visit.id)
        and bid not in with_items
        and bid in fresh
        and fresh[bid].status == "ok"
    ]


class MemoryRowsNotAcknowledged(ValueError):
    """A notice would rest on table rows entered from memory that the reviewer has not acknowledged."""

    def __init__(self, rows: list[str]):
        self.rows = rows
        listed = "\n  ".join(rows)
        msg = (
            f"the items rest on {len(rows)} table row(s) entered from memory, not yet checked against the "
            f"standard's text; the reviewer must acknowledge them before the notice is issued:\n  {listed}"
        )
        super().__init__(msg)


def rows_for_items(store: Store, site_id: str, only: list[str] | None = None) -> list[RowUsed]:
    """The table rows the open items' beams (or the ``only`` ones chosen) rest on, from the stored rechecks."""
    chosen = [d for d in store.deficiencies(site_id, open_only=True) if only is None or d.id in set(only)]
    stored = results.fresh(store.db, site_id)
    found = {
        RowUsed(r["clause"], r["source"], TraceStatus(r["status"]))
        for d in chosen
        if d.beam_id and d.beam_id in stored
        for r in stored[d.beam_id].rows_used
    }
    return sorted(found, key=lambda r: (r.status is not TraceStatus.memory, r.clause, r.source))


def acknowledge(store: Store, rows: list[RowUsed], by: str, at: str | None = None) -> MemoryAcknowledgement | None:
    """The reviewer ``by`` acknowledges the memory rows among ``rows`` now, or ``at`` (None when there are none).

    ``at`` (UTC, ISO 8601 with Z) is for the demo, whose notice has a fixed issue date.
    """
    memory = memory_rows(rows)
    if not memory:
        return None
    return MemoryAcknowledgement(rows=memory, by=by.strip(), at=at or utc_stamp(store.wall_ms()))


def acknowledged(notice: Notice, acknowledgement: MemoryAcknowledgement | None) -> Notice:
    """The notice carrying the acknowledgement; refused when a memory row it rests on was not acknowledged."""
    memory = memory_rows(notice.table_rows)
    if not memory:
        return notice
    if acknowledgement is None:
        raise MemoryRowsNotAcknowledged(memory)
    missing = [r for r in memory if r not in acknowledgement.rows]
    if missing:
        raise MemoryRowsNotAcknowledged(missing)
    return dataclasses.replace(
        notice, memory_acknowledgement=f"acknowledged by {acknowledgement.by} at {local_time(acknowledgement.at)}"
    )


def signed_by(store: Store, notice: Notice) -> Notice:
    """The notice with the device's reviewer profile: name, designation, licence, firm, contact, signature."""
    profile = store.reviewer_profile()
    if profile is None:
        return notice
    signature = store.blob(profile.signature_sha256) if profile.signature_sha256 else None
    return dataclasses.replace(
        notice,
        reviewer=profile.name,
        reviewer_designation=profile.designation,
        reviewer_licence=profile.licence_number,
        reviewer_phone=profile.phone,
        reviewer_email=profile.email,
        firm=profile.firm or notice.firm,
        signature_png=signature,
        seal=profile.seal,
        page_size=profile.page_size,
    )


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
    acknowledgement: MemoryAcknowledgement | None = None,
) -> tuple[IssuedNotice, Path]:
    """Render, store (PDF blob + immutable record) and write the notice PDF to ``out``.

    Refused (``MemoryRowsNotAcknowledged``, nothing written, no number spent) when the items rest on
    table rows entered from memory that ``acknowledgement`` does not name.
    """
    site = store.site(site_id)
    number = store.next_notice_number(site)
    notice, ids = build_notice(store, site_id, number, issued_on=issued_on, only=only)
    return _write_and_record(store, site_id, number, notice, ids, out, issued_by, issued_on, acknowledgement)


def _write_and_record(
    store: Store,
    site_id: str,
    number: str,
    notice: Notice,
    ids: list[str],
    out: Path,
    issued_by: str,
    issued_on: str | None,
    acknowledgement: MemoryAcknowledgement | None,
    change_note: str = "",
) -> tuple[IssuedNotice, Path]:
    """Render the acknowledged notice, write it to ``out``, then record it; if recording fails, the file goes too.

    The number is spent only once the PDF is safely written.
    """
    notice = acknowledged(notice, acknowledgement)
    pdf = render_notice(notice, stamp_hash=True)
    out.parent.mkdir(parents=True, exist_ok=True)
    write_atomic(out, pdf)
    try:
        issued = store.issue_notice(
            site_id, number, pdf, ids, issued_by, issued_on or time.strftime("%Y-%m-%d"),
            change_note=change_note, memory_acknowledgement=_kept(notice, acknowledgement),
        )  # fmt: skip
    except BaseException:
        out.unlink(missing_ok=True)
        raise
    return issued, out


def _kept(notice: Notice, acknowledgement: MemoryAcknowledgement | None) -> MemoryAcknowledgement | None:
    """The acknowledgement recorded with the notice: only when the notice rests on memory rows."""
    return acknowledgement if notice.memory_acknowledgement else None


def reissue(
    store: Store,
    previous: IssuedNotice,
    out: Path,
    change_note: str,
    issued_by: str,
    acknowledgement: MemoryAcknowledgement | None = None,
) -> IssuedNotice:
    """A new revision of an issued notice that says what changed; the original stays on file."""
    notice, ids = build_notice(store, previous.site_id, previous.number, previous.revision + 1, change_note)
    notice = acknowledged(notice, acknowledgement)
    pdf = render_notice(notice, stamp_hash=True)
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
        memory_acknowledgement=_kept(notice, acknowledgement),
    )
    out.write_bytes(pdf)
    return issued


def verify_pdf(store: Store, path: Path) -> IssuedNotice | None:
    """The issued notice this PDF is exactly, or None.

    Two checks, both must hold: the file's SHA-256 is that of an issued notice on record, and the hash
    the PDF carries (metadata and footer, see ``reports.stamp``) matches its bytes. Notices issued before
    the embedded hash existed carry none and are checked against the record alone.
    """
    pdf = path.read_bytes()
    found = store.find_issued_by_hash(hashlib.sha256(pdf).hexdigest())
    if found is None:
        return None
    if stamp.META_PREFIX.encode() in pdf and stamp.embedded_hash(pdf) is None:
        return None
    return found


def build_closeout(store: Store, site_id: str, number: str, issued_on: str | None = None) -> tuple[Notice, list[str]]:
    """A close-out notice after a re-review: every item of the earlier notices, verified or still open, and new.

    The outcome of each item is the re-review the reviewer recorded (status moves with their note and
    evidence); still-open and new items print in full with their response boxes.
    """
    earlier = {i for n in store.notices(site_id) for i in n.deficiency_ids}
    every = store.deficiencies(site_id)
    rows: list[tuple[str, str, str]] = []
    for d in sorted(every, key=lambda x: x.number):
        last = next((e for e in reversed(store.history(d.id)) if e.cycle == d.cycle), None)
        evidence = ""
        if last is not None:
            evidence = f"{last.at[:10]} {last.actor}: {last.note}".strip()
            if last.evidence_sha256:
                evidence += f" (evidence SHA-256 {last.evidence_sha256[:12]})"
        outcome = _outcome(d, d.id in earlier)
        r = d.rereview
        if r is not None and r.cycle == d.cycle:  # the reviewer's re-review of this item: its words and recheck
            photo = f"photo SHA-256 {last.evidence_sha256[:12]}" if last and last.evidence_sha256 else ""
            evidence = "; ".join(x for x in (f"{r.at[:10]} {r.by}", r.note, r.evidence, photo) if x)
        if d.id in earlier or d.stage is not Stage.verified:
            rows.append((d.number, outcome, evidence or "none recorded"))
    notice, ids = build_notice(store, site_id, number, issued_on=issued_on)
    notice = dataclasses.replace(notice, kind="close-out", closeout=rows, carried=[])
    return notice, sorted({*ids, *(d.id for d in every if d.id in earlier)})


def _outcome(d: Deficiency, on_earlier_notice: bool) -> str:
    """A close-out row's outcome in words: verified, new, or still open (with what the re-review found)."""
    reviewed = d.rereview is not None and d.rereview.cycle == d.cycle
    if d.stage is Stage.verified:
        return "verified (closed)"
    if not on_earlier_notice:
        return "new"
    if d.stage is Stage.corrected:
        return "reported corrected, not yet verified: still open"
    cycle = f" (cycle {d.cycle + 1})" if d.cycle else ""
    return "still open" + (", found at re-review" if reviewed else "") + cycle


def issue_closeout(
    store: Store,
    site_id: str,
    out: Path,
    issued_by: str,
    issued_on: str | None = None,
    acknowledgement: MemoryAcknowledgement | None = None,
) -> tuple[IssuedNotice, Path]:
    """Issue a numbered close-out notice (a new document, revision of nothing), stored and hashed like any notice."""
    site = store.site(site_id)
    number = store.next_notice_number(site)
    notice, ids = build_closeout(store, site_id, number, issued_on)
    return _write_and_record(
        store, site_id, number, notice, ids, out, issued_by, issued_on, acknowledgement, change_note=CLOSEOUT_NOTE
    )
