"""What the office register shows, read from the hub's projections; office users and their sessions.

Passwords are kept only as argon2 hashes; a session is a random token whose SHA-256 the hub keeps.
"""

from __future__ import annotations

import hashlib
import json
import re
import secrets
import time
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import segno
from argon2 import PasswordHasher
from argon2.exceptions import InvalidHashError, VerificationError

from core.records import Stage
from core.results import PRIORITY_ORDER
from office.hubstore import (
    CODE_LIFETIME_MS,
    CODE_MADE,
    CODE_WITHDRAWN,
    HubStore,
    code_id_of,
    code_subject,
    withdrawn_detail,
)
from reports.words import STAGE_WORDS, stage_label
from storage.db import PROJECTIONS

if TYPE_CHECKING:
    from core.models import Beam
    from core.results import Recheck

SESSION_MS = 12 * 3600 * 1000
LOGIN_FAILURES = 5  # failed log-ins of one name within LOGIN_WINDOW_MS before the name is refused
LOGIN_WINDOW_MS = 15 * 60 * 1000
SHA_RE = re.compile(r"^[0-9a-f]{64}$")
QR_ERROR = "m"  # QR error correction level M (about 15 % of the symbol recoverable)
QR_SCALE, QR_BORDER = 8, 4  # 8 px a module; the quiet zone of 4 modules the QR standard asks for
STAGES = tuple(s.name for s in sorted(Stage))  # by stage number, as stored: open, corrected, verified
_hasher = PasswordHasher()


def add_user(hub: HubStore, name: str, password: str) -> None:
    """Add (or re-set the password of) an office user."""
    if not name.strip():
        msg = "user name must not be empty"
        raise ValueError(msg)
    if len(password) < 8:
        msg = f"password is {len(password)} characters; at least 8 allowed"
        raise ValueError(msg)
    with hub.tx():
        hub.db.execute(
            "INSERT OR REPLACE INTO hub_user VALUES (?, ?, ?)", [name.strip(), _hasher.hash(password), hub.clock_ms()]
        )


class LoginLocked(Exception):
    """Too many failed log-ins of one name lately: refused without checking the password."""


def login(hub: HubStore, name: str, password: str) -> str | None:
    """A new session token if the password is right, else None; LoginLocked after too many failures.

    A name that failed LOGIN_FAILURES times within LOGIN_WINDOW_MS is refused until the oldest of those
    failures leaves the window, whatever password is typed (names that do not exist count the same way, so
    the answer does not say which names do). A right password clears the name's failures.
    """
    now = hub.clock_ms()
    with hub.lock:
        recent = [
            int(r[0])
            for r in hub.db.execute(
                "SELECT at_ms FROM hub_login_failure WHERE name=? AND at_ms>? ORDER BY at_ms",
                [name, now - LOGIN_WINDOW_MS],
            ).fetchall()
        ]
        row = hub.db.execute("SELECT password_hash FROM hub_user WHERE name=?", [name]).fetchone()
    if len(recent) >= LOGIN_FAILURES:
        wait = -(-(recent[-LOGIN_FAILURES] + LOGIN_WINDOW_MS - now) // 60_000)
        msg = f"Too many failed log-ins for this name: try again in {wait} min, or ask another office user to help."
        raise LoginLocked(msg)
    if row is None:
        _hasher.hash(password)  # the same work whether or not the user exists
        _failed(hub, name, now)
        return None
    try:
        _hasher.verify(row[0], password)
    except (VerificationError, InvalidHashError):
        _failed(hub, name, now)
        return None
    token = secrets.token_urlsafe(32)
    with hub.tx():
        hub.db.execute("INSERT INTO hub_session VALUES (?, ?, ?)", [_sha(token), name, now + SESSION_MS])
        hub.db.execute("DELETE FROM hub_login_failure WHERE name=?", [name])
    return token


def _failed(hub: HubStore, name: str, now: int) -> None:
    """Count a failed log-in (failures older than the window are dropped as they go)."""
    with hub.tx():
        hub.db.execute("DELETE FROM hub_login_failure WHERE at_ms<=?", [now - LOGIN_WINDOW_MS])
        hub.db.execute("INSERT INTO hub_login_failure VALUES (?, ?)", [name[:200], now])


def session_user(hub: HubStore, token: str) -> str | None:
    """The user a live session token belongs to."""
    if not token:
        return None
    with hub.lock:
        row = hub.db.execute("SELECT name, expires_ms FROM hub_session WHERE token_sha256=?", [_sha(token)]).fetchone()
    return str(row[0]) if row and int(row[1]) > hub.clock_ms() else None


def logout(hub: HubStore, token: str) -> None:
    """End a session."""
    with hub.tx():
        hub.db.execute("DELETE FROM hub_session WHERE token_sha256=?", [_sha(token)])


def _sha(text: str) -> str:
    return hashlib.sha256(text.encode()).hexdigest()


# -- what the pages show ---------------------------------------------------------------------------
@dataclass
class Item:
    """One deficiency as the register lists it."""

    id: str
    site_id: str
    number: str
    priority: str
    stage: str
    cycle: int
    location: str
    description: str
    reference: str
    action: str
    due: str
    raised_ms: int
    overdue: bool
    beam_id: str | None

    @property
    def due_words(self) -> str:
        """The due date; 'now' for an item to make safe at once, which has none; '-' otherwise."""
        if self.due:
            return self.due
        return "now" if self.priority == next(iter(PRIORITY_ORDER)) else "-"

    @property
    def stage_words(self) -> str:
        """The stage in the tablet's words, as a cell reads ('Corrected (contractor reports done)')."""
        return stage_label(self.stage)

    @property
    def age_days(self) -> int:
        """Whole days since it was raised."""
        return max(0, int((time.time() * 1000 - self.raised_ms) // 86_400_000))


def _rows(
    hub: HubStore, table: str, where: str = "", params: list[Any] | None = None
) -> list[tuple[str, dict[str, Any]]]:
    with hub.lock:
        rows = hub.db.execute(f"SELECT id, data FROM {table} {where} ORDER BY id", params or []).fetchall()
    return [(str(r[0]), json.loads(r[1])) for r in rows]


def _raised(hub: HubStore) -> dict[str, int]:
    with hub.lock:
        rows = hub.db.execute("SELECT record_id, min(hlc) FROM op WHERE entity='deficiency' GROUP BY record_id")
        return {str(r[0]): int(r[1]) >> 16 for r in rows.fetchall()}


def items(hub: HubStore, site_id: str | None = None, open_only: bool = True, closed_only: bool = False) -> list[Item]:
    """Deficiencies, overdue first, then by priority, then oldest first (``closed_only``: the verified ones)."""
    raised = _raised(hub)
    today = time.strftime("%Y-%m-%d", time.gmtime(hub.clock_ms() / 1000))
    where, params = ("WHERE site_id=?", [site_id]) if site_id else ("", [])
    out = []
    for did, d in _rows(hub, "deficiency", where, params):
        if "number" not in d:
            continue
        stage = STAGES[int(d.get("stage", 0))]
        if (open_only and stage == "verified") or (closed_only and stage != "verified"):
            continue
        due = str(d.get("due") or "")
        out.append(
            Item(
                id=did,
                site_id=str(d.get("site_id")),
                number=str(d["number"]),
                priority=str(d.get("priority", "observation")),
                stage=stage,
                cycle=int(d.get("cycle", 0)),
                location=str(d.get("location", "")),
                description=str(d.get("description", "")),
                reference=str(d.get("reference", "")),
                action=str(d.get("action", "")),
                due=due,
                raised_ms=raised.get(did, 0),
                overdue=bool(due) and due < today and stage != "verified",
                beam_id=d.get("beam_id"),
            )
        )
    return sorted(out, key=lambda i: (not i.overdue, PRIORITY_ORDER.get(i.priority, 99), i.raised_ms, i.number))


def sites(hub: HubStore) -> list[dict[str, Any]]:
    """Every site with its open deficiencies counted by priority; sites with IMMEDIATE items first, then overdue."""
    open_items = items(hub)
    out = []
    for sid, s in _rows(hub, "site"):
        mine = [i for i in open_items if i.site_id == sid]
        out.append(
            {
                "id": sid,
                "name": s.get("name", sid),
                "address": s.get("address", ""),
                "open": len(mine),
                "overdue": sum(i.overdue for i in mine),
                "by_priority": {p: sum(i.priority == p for i in mine) for p in PRIORITY_ORDER},
                "oldest_days": max((i.age_days for i in mine), default=0),
            }
        )
    first = next(iter(PRIORITY_ORDER))  # the most urgent priority (make safe now): a site holding any comes first
    return sorted(out, key=lambda s: (-s["by_priority"][first], -s["overdue"], -s["open"], s["name"]))


def site(hub: HubStore, site_id: str) -> dict[str, Any] | None:
    """One site's record."""
    found = _rows(hub, "site", "WHERE id=?", [site_id])
    return dict(found[0][1], id=site_id) if found else None


def site_beams(hub: HubStore, site_id: str, open_items: list[Item]) -> list[dict[str, Any]]:
    """A site's beams, by level, gridline and mark, each with its open deficiencies; archived beams left out.

    One read of the site's beam records (indexed by site); ``open_items`` are the site's open deficiencies the
    page already holds, so a 300-beam site costs no query a beam. Each: ``id``, ``mark``, ``where`` (level and
    gridline), ``member`` ('glulam D.Fir-L 24f-E'), ``size`` ('130 × 456 mm'), ``spans`` ('7200 + 6000 mm'),
    ``open`` (its open deficiencies). The recheck status is not among them: the hub keeps no recheck results
    (each device computes its own, ``storage.results``); the beam's recheck sheet runs it again here.
    """
    by_beam: dict[str, list[Item]] = {}
    for i in open_items:
        if i.beam_id:
            by_beam.setdefault(i.beam_id, []).append(i)
    out = []
    for bid, b in _rows(hub, "beam", "WHERE site_id=?", [site_id]):
        if b.get("archived"):
            continue
        out.append(
            {
                "id": bid,
                "mark": str(b.get("mark") or "(no mark)"),
                "level": str(b.get("level") or ""),
                "gridline": str(b.get("gridline") or ""),
                "member": " ".join(str(b[k]) for k in ("material", "species", "grade") if b.get(k)) or "not recorded",
                **beam_measures(b),
                "open": by_beam.get(bid, []),
            }
        )
    return sorted(out, key=lambda r: (r["level"], r["gridline"], r["mark"]))


def mm_words(value: object) -> str:
    """A length in mm as recorded: a whole number without '.0' ('130'), a fraction as typed ('494.5').

    The one way the register prints a recorded size or span (the site's beam list and a deficiency's page).
    """
    number = float(str(value))
    return str(int(number)) if number.is_integer() else repr(number)


def beam_measures(beam: dict[str, Any]) -> dict[str, str]:
    """A beam record's ``size`` ('130 × 494.5 mm') and ``spans`` ('7200 + 6000 mm'), or 'not recorded'."""
    width, depth, spans = beam.get("b_mm"), beam.get("d_mm"), beam.get("spans_mm") or []
    return {
        "size": f"{mm_words(width)} × {mm_words(depth)} mm" if width and depth else "not recorded",
        "spans": " + ".join(mm_words(s) for s in spans) + " mm" if spans else "not recorded",
    }


def deficiency(hub: HubStore, deficiency_id: str) -> dict[str, Any] | None:
    """One deficiency with its history, photos, beam record and the notices that carry it."""
    found = [i for i in items(hub, open_only=False) if i.id == deficiency_id]
    if not found:
        return None
    item = found[0]
    history = sorted(
        (d for _, d in _rows(hub, "deficiency_event") if d.get("deficiency_id") == deficiency_id),
        key=lambda e: (e["hlc"], e["origin"]),
    )
    photos = [
        dict(p, id=pid)
        for pid, p in _rows(hub, "photo", "WHERE site_id=?", [item.site_id])
        if p.get("deficiency_id") == deficiency_id or (item.beam_id and p.get("beam_id") == item.beam_id)
    ]
    beam = _rows(hub, "beam", "WHERE id=?", [item.beam_id]) if item.beam_id else []
    site_rows = _rows(hub, "site", "WHERE id=?", [item.site_id])
    carrying = [(nid, n) for nid, n in _rows(hub, "issued_notice") if deficiency_id in n.get("deficiency_ids", [])]
    flagged = date_flags(hub, carrying)
    carried = [dict(n, id=nid, date_flags=flagged.get(nid, [])) for nid, n in carrying]
    for p in photos:
        p["present"] = hub.has_blob(p["sha256"])
    devices = {d.device_id: d for d in hub.devices()}
    return {
        "item": item,
        "history": [
            dict(e, stage_name=stage_label(e["stage"]), **_recorded_on(devices, e), at_words=_at_words(e.get("at")))
            for e in history
        ],
        "held": [q for q in held(hub) if q["record_id"] == deficiency_id],
        "photos": photos,
        "beam": beam[0][1] if beam else None,
        "measures": beam_measures(beam[0][1]) if beam else None,
        "recheck": recheck_now(beam[0][1], site_rows[0][1] if site_rows else {}) if beam else None,
        "notices": sorted(carried, key=lambda n: (str(n.get("issued_at", "")), n.get("revision", 0)), reverse=True),
    }


def _at_words(stamp: object) -> str:
    """A stored UTC time as the register's other times print it ('2026-12-05 01:31 UTC')."""
    from storage.stamps import parse_stamp

    when = parse_stamp(str(stamp or ""))
    return when.strftime("%Y-%m-%d %H:%M UTC") if when else str(stamp or "")


def _recorded_on(devices: dict[str, Any], event: dict[str, Any]) -> dict[str, str]:
    """Which enrolled device signed a status move, beside the name and role typed on it.

    The actor and role are what the tablet's user typed; the device, its person and its enrolled role are
    what the hub knows from enrolment (the move is signed by that device's key). ``role_differs`` says when
    the typed role is the reviewer's but the device is not enrolled as one.
    """
    device = devices.get(str(event.get("origin", "")))
    if device is None:
        return {"device": "a device not enrolled here", "role_differs": ""}
    claimed = str(event.get("role", ""))
    differs = claimed == "reviewer" and device.role != "reviewer"
    return {
        "device": f"{device.name} ({device.person}, enrolled as {device.role})",
        "role_differs": f"typed as reviewer; the device is enrolled as {device.role}" if differs else "",
    }


def held(hub: HubStore) -> list[dict[str, Any]]:
    """Changes the hub refused and holds in quarantine, in words a person reads.

    Each: ``device`` (name and person of the device that wrote it), ``pushed_by`` (of the one that sent it),
    ``what`` (the change: a status move to 'verified' of D-003, an edit of beam RB-2's fields ...),
    ``site_id``/``site`` and ``link`` when the record is known here, ``why`` (the rule, without its code),
    ``record_id``, ``at_ms``.
    """
    from office import rules

    devices = {d.device_id: d for d in hub.devices()}
    sites = dict(_rows(hub, "site"))
    out = []
    for q in hub.quarantine():
        op = json.loads(q["op"])
        entity, record_id, kind = str(op["entity"]), str(op["record_id"]), str(op["kind"])
        payload = op.get("payload")
        payload = json.loads(payload) if isinstance(payload, str) else payload  # an op row keeps its payload as text
        payload = payload if isinstance(payload, dict) else {}
        table = "deficiency" if kind == "status" else entity
        found = _rows(hub, table, "WHERE id=?", [record_id]) if table in PROJECTIONS else []
        record = found[0][1] if found else {}
        name = str(record.get("number") or record.get("mark") or record.get("name") or f"{entity} {record_id[-8:]}")
        if kind == "status":
            stage = payload.get("stage")
            to = STAGE_WORDS[stage] if isinstance(stage, int) and stage in STAGE_WORDS else f"stage {stage}"
            what = f"status of {name} moved to {to}"
        elif kind == "insert":
            what = f"new {entity.replace('_', ' ')} {name}"
        else:
            what = f"edit of {entity.replace('_', ' ')} {name}: {', '.join(sorted(payload)) or 'no field'}"
        site_id = str(record.get("site_id") or payload.get("site_id") or "")
        out.append(
            {
                "device": _device_words(devices, q["origin"]),
                "pushed_by": _device_words(devices, q["pushed_by"]),
                "what": what,
                "site_id": site_id,
                "site": str(sites.get(site_id, {}).get("name", "")),
                "link": f"/deficiency/{record_id}" if table == "deficiency" and record else "",
                "why": rules.describe(str(q["reason"])),
                "record_id": record_id,
                "origin": q["origin"],
                "seq": q["seq"],
                "at_ms": q["at_ms"],
            }
        )
    return out


def device_quarantine_count(hub: HubStore, device_id: str) -> int:
    """How many changes written by this device the hub holds in quarantine."""
    return sum(q["origin"] == device_id for q in hub.quarantine())


def _device_words(devices: dict[str, Any], device_id: str) -> str:
    d = devices.get(device_id)
    return f"{d.name} ({d.person})" if d else f"device {device_id[:8]}… (not enrolled here)"


# -- a notice dated before its items ----------------------------------------------------------------
DAY_MS = 86_400_000
EARLIEST_ZONE_MS = -12 * 3_600_000  # UTC-12: the earliest calendar date anywhere at a given moment
DATE_RE = re.compile(r"^\d{4}-\d\d-\d\d$")


def dated_before(issued_at: str, written_ms: int) -> bool | None:
    """Whether a notice dated ``issued_at`` is dated before ``written_ms`` in whatever time zone its tablet was.

    The tablet's rule (``storage.store.Store._check_issue_date``, repeated here: the hub cannot call it) refuses
    a notice dated before the local day its own clock first wrote an item. The hub does not know the tablet's
    zone, so it answers True only when the notice is earlier in every zone (UTC-12 to UTC+14): a date is before
    the earliest date anywhere at ``written_ms``; a stored UTC time is a whole day or more before it (then no
    zone puts the two on one day). None when ``issued_at`` is neither a date nor a stored UTC time.
    """
    from storage.stamps import parse_stamp

    when = parse_stamp(issued_at)
    if when is not None:
        return written_ms - int(when.timestamp() * 1000) >= DAY_MS
    day = issued_at.strip()
    if not DATE_RE.match(day):
        return None
    return day < time.strftime("%Y-%m-%d", time.gmtime((written_ms + EARLIEST_ZONE_MS) / 1000))


@dataclass(frozen=True)
class DateFlag:
    """A notice dated before an item it carries was first written by the device that issued the notice."""

    issued_at: str  # as recorded on the notice
    number: str  # the item's number
    written_ms: int  # that device's wall clock when it first wrote the item
    raised_there: bool  # the device raised the item (else it first changed it)
    readable: bool = True  # False: the notice's date is neither a date nor a UTC time

    @property
    def words(self) -> str:
        """The flag as an office engineer reads it."""
        if not self.readable:
            return f"dated {self.issued_at!r}, which is not a date: ask the reviewer"
        did = "was raised" if self.raised_there else "was first changed on the tablet that issued the notice"
        when = time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime(self.written_ms / 1000))
        return f"dated {self.issued_at}, before its item {self.number} {did} on {when} by its clock: ask the reviewer"


def date_flags(hub: HubStore, found: list[tuple[str, dict[str, Any]]]) -> dict[str, list[DateFlag]]:
    """Notices (id, record) dated before an item they carry was first written by the issuing device, by id.

    The hub takes every signed op a device pushes and refuses none of these (that would strand the tablet's
    records); the register flags them instead. As the tablet decides when it issues: an item is compared by the
    issuing device's own earliest op on it (its wall clock) among the ops it wrote before the notice (lower seq);
    an item that device had not written is not compared. The item was raised there when that op is the item's
    first op of all (lowest HLC).
    """
    if not found:
        return {}
    wanted = {str(did) for _, n in found for did in n.get("deficiency_ids", [])}
    with hub.lock:
        issued_by = {
            str(r[0]): (str(r[1]), int(r[2]))
            for r in hub.db.execute(
                "SELECT record_id, origin, seq FROM op WHERE entity='issued_notice' AND kind='insert'"
            ).fetchall()
        }
        rows = hub.db.execute("SELECT record_id, origin, seq, wall_ms, hlc FROM op WHERE entity='deficiency'")
        ops: dict[tuple[str, str], list[tuple[int, int, int]]] = {}  # (item, origin): (seq, wall_ms, hlc) ...
        for did, origin, seq, wall, hlc in rows.fetchall():
            if str(did) in wanted:
                ops.setdefault((str(did), str(origin)), []).append((int(seq), int(wall), int(hlc)))
    first_hlc: dict[str, int] = {}  # each item's first op of all: the one that raised it
    for (did, _), written in ops.items():
        first_hlc[did] = min([first_hlc.get(did, written[0][2]), *(h for *_, h in written)])
    flags: dict[str, list[DateFlag]] = {}
    for nid, n in found:
        issued = str(n.get("issued_at", ""))
        if dated_before(issued, 0) is None:
            flags[nid] = [DateFlag(issued, "", 0, raised_there=False, readable=False)]
            continue
        origin, seq = issued_by.get(nid, ("", 0))
        for did in n.get("deficiency_ids", []):
            earlier = [(wall, hlc) for s, wall, hlc in ops.get((str(did), origin), []) if s < seq]
            if earlier and dated_before(issued, min(earlier)[0]):
                item = _rows(hub, "deficiency", "WHERE id=?", [did])
                number = str(item[0][1].get("number", did)) if item else str(did)
                raised = first_hlc[did] in {hlc for _, hlc in earlier}
                flags.setdefault(nid, []).append(DateFlag(issued, number, min(earlier)[0], raised))
    return flags


def notices(hub: HubStore, site_id: str | None = None) -> list[dict[str, Any]]:
    """Issued notices, newest first, each with its site and whether the hub's PDF matches its record.

    ``check``: whether the hub holds the PDF and its bytes match the SHA-256 recorded when it was issued.
    ``footer``: the 16 hex digits the paper prints in every page footer (``reports.stamp``), read back from
    the PDF and checked against its bytes; what a person holding the paper compares.
    ``date_flags``: ``DateFlag``s, when it is dated before an item it carries was written (``date_flags``).
    """
    from reports.stamp import embedded_hash, short_form

    names = {sid: str(s.get("name", sid)) for sid, s in _rows(hub, "site")}
    where, params = ("WHERE site_id=?", [site_id]) if site_id else ("", [])
    found = _rows(hub, "issued_notice", where, params)
    flagged = date_flags(hub, found)
    out = []
    for nid, n in found:
        content = hub.read_blob(n["pdf_sha256"])
        footer = ""
        if content is None:
            check = "PDF not yet received"
        elif hashlib.sha256(content).hexdigest() == n["pdf_sha256"]:
            check = "matches its recorded SHA-256"
            stamped = embedded_hash(content)
            footer = short_form(stamped) if stamped else ""
        else:
            check = "DOES NOT match its recorded SHA-256"
        site_name = names.get(str(n.get("site_id", "")), "")
        out.append(
            dict(
                n,
                id=nid,
                check=check,
                present=content is not None,
                footer=footer,
                site_name=site_name,
                date_flags=flagged.get(nid, []),
            )
        )
    return sorted(out, key=lambda n: (str(n.get("issued_at", "")), n["number"], n.get("revision", 0)), reverse=True)


def notice_pdf(hub: HubStore, notice_id: str) -> tuple[str, bytes] | None:
    """(file name, bytes) of an issued notice's PDF, only when the bytes match the recorded hash."""
    for n in notices(hub):
        if n["id"] == notice_id and n["check"].startswith("matches"):
            content = hub.read_blob(n["pdf_sha256"])
            if content is not None:
                return f"{n['number']}-rev{n.get('revision', 0)}.pdf", content
    return None


# -- enrolment codes for a tablet to scan ----------------------------------------------------------
CODE_ID_RE = re.compile(r"^[0-9a-f]{16}$")


@dataclass(frozen=True)
class OutstandingCode:
    """An enrolment code made and not yet used, withdrawn or expired; the code itself is not kept (only its SHA-256)."""

    id: str  # the first 16 hex digits of the code's SHA-256: names it in the register's addresses
    name: str
    person: str
    role: str
    made_by: str  # the office user, or '' for a code made on the hub's command line
    created_ms: int
    expires_ms: int


def make_code(hub: HubStore, name: str, person: str, role: str, by: str) -> str:
    """A new one-time enrolment code (``HubStore.new_code``), with the office user who made it in the audit log."""
    code = hub.new_code(name, person, role)
    with hub.tx():
        hub.db.execute(
            "INSERT INTO hub_audit (at_ms, device_id, event, detail) VALUES (?, ?, ?, ?)",
            [hub.clock_ms(), code_subject(code_id_of(code)), CODE_MADE, by],
        )
    return code


def outstanding_codes(hub: HubStore) -> list[OutstandingCode]:
    """Codes a tablet may still use (not used, not withdrawn, within their 24 hours), oldest first."""
    now = hub.clock_ms()
    with hub.lock:
        rows = hub.db.execute(
            "SELECT code_sha256, name, person, role, created_ms FROM hub_code WHERE used_by IS NULL AND created_ms>? "
            "ORDER BY created_ms, name",
            [now - CODE_LIFETIME_MS],
        ).fetchall()
        makers = hub.db.execute(
            "SELECT device_id, detail FROM hub_audit WHERE event=? AND at_ms>? ORDER BY id",
            [CODE_MADE, now - CODE_LIFETIME_MS],
        ).fetchall()
    made_by = {str(subject): str(user) for subject, user in makers}
    return [
        OutstandingCode(
            id=str(sha)[:16],
            name=str(name),
            person=str(person),
            role=str(role),
            made_by=made_by.get(code_subject(str(sha)[:16]), ""),
            created_ms=int(created),
            expires_ms=int(created) + CODE_LIFETIME_MS,
        )
        for sha, name, person, role, created in rows
    ]


def outstanding_code(hub: HubStore, code_id: str) -> OutstandingCode | None:
    """One outstanding code by its id (the first 16 hex digits of its SHA-256), or None."""
    return next((c for c in outstanding_codes(hub) if c.id == code_id), None) if CODE_ID_RE.match(code_id) else None


def withdraw_code(hub: HubStore, code_id: str, by: str) -> OutstandingCode:
    """Withdraw an outstanding code: no tablet can enrol with it; the audit log names the office user.

    KeyError when no outstanding code has that id (used, expired, withdrawn already, or never made).
    """
    found = outstanding_code(hub, code_id)
    if found is None:
        msg = f"no outstanding enrolment code {code_id}"
        raise KeyError(msg)
    with hub.tx():
        gone = hub.db.execute(
            "DELETE FROM hub_code WHERE code_sha256 LIKE ? AND used_by IS NULL", [f"{code_id}%"]
        ).rowcount
        if gone != 1:  # used (or withdrawn) since it was listed: nothing withdrawn
            msg = f"no outstanding enrolment code {code_id}"
            raise KeyError(msg)
        detail = withdrawn_detail(found.name, found.person, found.role, by)
        hub.db.execute(
            "INSERT INTO hub_audit (at_ms, device_id, event, detail) VALUES (?, ?, ?, ?)",
            [hub.clock_ms(), code_subject(code_id), CODE_WITHDRAWN, detail],
        )
    return found


def code_audit(hub: HubStore, code_id: str) -> list[tuple[str, str]]:
    """A code's audit entries (event, detail), oldest first: who made it and who withdrew it."""
    with hub.lock:
        rows = hub.db.execute(
            "SELECT event, detail FROM hub_audit WHERE device_id=? ORDER BY id", [code_subject(code_id)]
        ).fetchall()
    return [(str(e), str(d)) for e, d in rows]


def is_outstanding(hub: HubStore, code: str) -> bool:
    """Whether ``code`` (as shown once) may still enrol a tablet."""
    return outstanding_code(hub, code_id_of(code)) is not None


def enrolment_qr(code: str) -> segno.QRCode:
    """The QR symbol of a one-time enrolment code (the code alone, error correction M, never Micro QR)."""
    if not code.strip():
        msg = "enrolment code must not be empty"
        raise ValueError(msg)
    return segno.make(code, error=QR_ERROR, micro=False, boost_error=False)


def write_enrolment_qr(code: str, path: str) -> None:
    """Write the code's QR symbol as a PNG (8 px a module, 4-module quiet zone, black on white)."""
    enrolment_qr(code).save(path, kind="png", scale=QR_SCALE, border=QR_BORDER)


def enrolment_qr_data_uri(code: str) -> str:
    """The code's QR symbol as an inline SVG data URI for the devices page (no file, no script)."""
    return str(enrolment_qr(code).svg_data_uri(scale=QR_SCALE, border=QR_BORDER))


# -- the recheck, re-run on the hub from the records --------------------------------------------------
def recheck_input(beam: dict[str, Any], site_data: dict[str, Any]) -> tuple[dict[str, Any], str]:
    """The contract-1 input re-built from the beam record and the site's design basis, and where its loads came from.

    With a tributary width on record the specified line loads are derived again from the site's design basis
    as it stands (kN/m = kPa x m, common practice), so a corrected basis is rechecked; loads typed directly
    on the tablet are used as recorded. The tablet derives them the same way (``storage.results.derived_loads``).
    """
    from reports.inputs import loads_source
    from storage.results import basis_of, beam_input, site_bases

    bases = site_bases(site_data)
    data = beam_input(beam, site_data)
    width = beam.get("tributary_m")
    if width is None:
        return data, loads_source(None, "", bases[0])
    name, basis = basis_of(beam, bases)
    return data, loads_source(float(width), name, basis)


def _trace_lines(trace: Any) -> list[str]:
    """Each factor of a check's trace in one line, as the tablet prints it (``reports.content.trace_line``)."""
    from reports.content import trace_line

    return [trace_line(t) for t in trace]


def _checks(result: Any) -> list[dict[str, Any]]:
    """Every check of a recheck: name, demand, capacity, utilisation, clause and its trace lines.

    After a bearing that lifts, its uplift row as the recheck sheet prints it (``reports.content.uplift_row``:
    no hold-down is recorded, so it is not checked and the row says so in words); ``uplift`` marks those rows,
    which are not among the checks ``governing_check`` counts.
    """
    from core.results import check_trace
    from reports.content import checks_for, lifting_bearings, uplift_row

    lifts = lifting_bearings(result)
    out: list[dict[str, Any]] = []
    for c in checks_for(result):
        out.append(
            {
                "name": c.name,
                "demand": c.demand,
                "capacity": c.capacity,
                "utilisation": c.utilisation,
                "words": "",
                "clause": c.clause,
                "trace": _trace_lines(check_trace(result, c.key)),
                "uplift": False,
            }
        )
        if c.key in lifts:
            name, demand, capacity, words, clause = uplift_row(lifts[c.key], result, {})
            out.append(
                {
                    "name": name,
                    "demand": demand,
                    "capacity": capacity,
                    "utilisation": None,
                    "words": words,
                    "clause": clause,
                    "trace": [],
                    "uplift": True,
                }
            )
    return out


def recheck_sheet(hub: HubStore, beam_id: str) -> tuple[str, bytes] | str:
    """(file name, PDF) of a beam's recheck sheet, run again here as ``recheck_now`` runs it; or why not, in words."""
    import datetime
    from importlib.metadata import version

    from reports.inputs import sheet_stem
    from reports.render import render_recheck_sheet

    rows = _rows(hub, "beam", "WHERE id=?", [beam_id])
    if not rows:
        return f"no beam {beam_id}"
    beam = rows[0][1]
    site_rows = _rows(hub, "site", "WHERE id=?", [beam.get("site_id", "")])
    site_data = site_rows[0][1] if site_rows else {}
    done = _rechecked(beam, site_data)
    if isinstance(done, str):
        return done
    model, result, loads_from = done
    prepared = f"Rechecked {datetime.date.today().isoformat()} on the office hub with bracewalk {version('bracewalk')}."
    pdf = render_recheck_sheet(
        model, result, site_data.get("name", ""), note=f"{loads_from[:1].upper()}{loads_from[1:]}.", prepared=prepared
    )
    return f"{sheet_stem(model.mark)}.pdf", pdf


def _rechecked(beam: dict[str, Any], site_data: dict[str, Any]) -> tuple[Beam, Recheck, str] | str:
    """(input, recheck, where its loads came from) of a beam record with its site's basis; or why not, in words."""
    from pydantic import ValidationError

    from core.models import Beam
    from core.recheck import recheck

    data, loads_from = recheck_input(beam, site_data)
    try:
        model = Beam.model_validate(data)
        return model, recheck(model), loads_from
    except ValidationError as exc:
        fields = ", ".join(".".join(map(str, e["loc"])) for e in exc.errors()[:6])
        return f"the beam record is incomplete or refused ({fields}): not rechecked"
    except ValueError as exc:
        return f"not rechecked: {exc}"


def recheck_now(beam: dict[str, Any], site_data: dict[str, Any]) -> dict[str, Any]:
    """The beam's recheck run again on the hub with ``core``.

    Status, governing check, utilisation, every check with its trace lines, the findings; or ``error`` in
    words when the record cannot be rechecked.
    """
    from core.results import governing_check

    done = _rechecked(beam, site_data)
    if isinstance(done, str):
        return {"error": done, "loads_from": recheck_input(beam, site_data)[1]}
    _model, result, loads_from = done
    checks = _checks(result)
    index, _ = governing_check(result.bending, result.shear, result.bearing, result.deflection)
    rated = [c for c in checks if not c["uplift"]]  # the index counts the checks, not the uplift rows among them
    return {
        "error": "",
        "loads_from": loads_from,
        "status": result.status.value,
        "governing": rated[index]["name"],
        "utilisation": result.governing_utilisation,
        "checks": checks,
        "findings": [
            {
                "code": str(f.code),
                "priority": f.priority.value,
                "region": f.region or "",
                "message": f.message,
                "clause": f.clause,
            }
            for f in result.findings
        ],
    }
