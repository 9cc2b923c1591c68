"""The storage API the app and the reports use. Every change goes through ``Store.save``."""

from __future__ import annotations

import hashlib
import json
import os
import re
import secrets
import time
from dataclasses import replace
from pathlib import Path
from typing import Any

from core.models import Beam
from core.records import (
    Deficiency,
    IssuedNotice,
    MemoryAcknowledgement,
    PhotoMark,
    PhotoRecord,
    ReviewerProfile,
    Site,
    Stage,
    StatusEvent,
    Visit,
)
from core.results import PRIORITY_ORDER
from storage import firm_tables
from storage.clock import hlc_receive, hlc_tick, uuid7
from storage.db import PROJECTIONS, SCHEMA_VERSION, SET_ENTITIES, connect, transaction
from storage.files import write_atomic
from storage.identity import DEMO_ORIGIN
from storage.oplog import (
    OP_KEYS,
    IntegrityError,
    Op,
    OpKind,
    all_ops,
    apply_op,
    canonical,
    differs_from_held,
    insert_op,
    read_stamp,
)
from storage.results import beam_input, stored_system
from storage.stamps import parse_stamp, utc_stamp

DEMO_FIRM_KEY = "bracewalk-demo-firm-key-not-for-production"  # DEMO ONLY: the demo database, never a firm's
HUB_PEER = "hub"  # the office hub, as a peer of this device's cursors (storage/hubsync.py)
OFFICE_PEER = "office"  # the Sync screen's bundle files go to the office: a label, not a device (Store.acknowledged)
SITES_NAMED = 10  # sites named in the message when a name matches none or several
# The numbers a device gives (counter name -> the projection holding them, a LIKE and a full pattern of this
# device's numbers, {code} its code): deficiencies 'D-<code>-<n>', notices '<project>-FR-<code>-<n>'
NUMBERED = {
    "deficiency": ("deficiency", "D-{code}-%", r"D-{code}-(\d+)"),
    "notice": ("issued_notice", "%-FR-{code}-%", r".+-FR-{code}-(\d+)"),
}


def projection_digest(db: Any, leave_out_origin: str | None = None) -> str:
    """SHA-256 over the projections of a database (tablet or office hub): equal content, equal digest.

    ``leave_out_origin``: records written by that origin are left out (the demo's, which never leave a tablet
    unless asked, so a tablet holding the demo compares with a hub that does not).
    """
    skip: set[str] = set()
    if leave_out_origin is not None:
        rows = db.execute("SELECT DISTINCT record_id FROM op WHERE origin=?", [leave_out_origin]).fetchall()
        skip = {r[0] for r in rows}
    h = hashlib.sha256()
    for table in PROJECTIONS:
        for rid, data in db.execute(f"SELECT id, data FROM {table} ORDER BY id").fetchall():
            if rid not in skip:
                h.update(f"{table}\x1f{rid}\x1f{data}\x1e".encode())
    return h.hexdigest()


class LifecycleError(ValueError):
    """A status move the deficiency lifecycle does not allow."""


class ConflictNotResolved(ValueError):
    """A conflict resolution refused before anything was saved: it would leave a record no model accepts."""


class Store:
    """A bracewalk database on one device."""

    def __init__(self, path: str | Path, firm_key: str | None = None, wall_clock_ms: Any = None):
        """Open or create the database at ``path`` (``:memory:`` for tests)."""
        self.path = str(path)
        self.db = connect(self.path)
        self._wall = wall_clock_ms or (lambda: int(time.time() * 1000))
        meta = self._meta()
        if "device_id" not in meta:
            device = uuid7()
            # A fresh install makes its own random bundle key; enrolment at the office hub replaces it with
            # the firm's key (storage/hubsync.py). No key in the source is shared by every install.
            key = firm_key or os.environ.get("BRACEWALK_FIRM_KEY") or secrets.token_hex(32)
            with transaction(self.db):
                for k, v in {
                    "device_id": device,
                    "device_code": device[-4:].upper(),
                    "hlc": "0",
                    "seq": "0",
                    "firm_key": key,
                    "counter_deficiency": "0",
                    "counter_notice": "0",
                }.items():
                    self.db.execute("INSERT INTO meta VALUES (?, ?)", [k, v])
        elif firm_key is not None:
            with transaction(self.db):
                self.db.execute("UPDATE meta SET value=? WHERE key='firm_key'", [firm_key])
        meta = self._meta()
        self.device_id = meta["device_id"]
        self.device_code = meta["device_code"]
        self._resume_from_mark()
        from storage import results

        firm_tables.apply(self.db)  # lookups honour the firm's valid table records; invalid ones are set aside
        results.stale_after_new_results_version(self.db)  # an app whose recheck prints something else

    # -- bookkeeping -------------------------------------------------------------------------
    def _meta(self) -> dict[str, str]:
        return dict(self.db.execute("SELECT key, value FROM meta").fetchall())

    def _set_meta(self, key: str, value: str) -> None:
        self.db.execute("INSERT OR REPLACE INTO meta VALUES (?, ?)", [key, value])

    def device_user(self) -> tuple[str, str]:
        """(name, role) of the person this device is set up for; ('', '') until set. Never synced."""
        meta = self._meta()
        return meta.get("device_user", ""), meta.get("device_role", "")

    def set_device_user(self, name: str, role: str) -> None:
        """Set up the device for one person and role (reviewer, contractor, office)."""
        if not name.strip():
            msg = "device user: enter the name of the person this device is set up for"
            raise ValueError(msg)
        if role not in ("reviewer", "contractor", "office"):
            msg = f"device role {role!r}; allowed: reviewer, contractor, office"
            raise ValueError(msg)
        with transaction(self.db):
            self._set_meta("device_user", name.strip())
            self._set_meta("device_role", role)

    def reviewer_profile(self) -> ReviewerProfile | None:
        """The reviewer this device signs notices for (issue 13), or None until set up. Never synced."""
        raw = self._meta().get("reviewer_profile")
        return ReviewerProfile.model_validate_json(raw) if raw else None

    def set_reviewer_profile(self, profile: ReviewerProfile) -> None:
        """Set up (or change) the signing reviewer of this device."""
        with transaction(self.db):
            self._set_meta("reviewer_profile", profile.model_dump_json())

    @property
    def firm_key(self) -> bytes:
        """The firm's bundle key (HMAC)."""
        return self._meta()["firm_key"].encode()

    @property
    def blob_dir(self) -> Path:
        """Folder beside the database where blobs live, named by SHA-256."""
        base = Path(self.path).parent if self.path != ":memory:" else Path(os.environ.get("TMPDIR", "/tmp"))
        return base / (Path(self.path).stem + "-blobs")

    def wall_ms(self) -> int:
        """The wall clock of this device (ms since 1970)."""
        return int(self._wall())

    # -- restored from a backup ----------------------------------------------------------------
    @property
    def sent_mark_path(self) -> Path | None:
        """A small file beside the database: the highest own seq and stamp that left this device.

        A database copied back from a backup does not carry it back, so a restore is seen at once.
        """
        return None if self.path == ":memory:" else Path(self.path).with_name(Path(self.path).name + ".sent")

    def record_sent(self, peer: str | None, seq: int | None = None) -> None:
        """Note (fsynced, atomically) that this device's own ops up to ``seq`` have left it, and its numbers so far.

        ``seq``: the highest own seq sent (default: the current counter, as an export sends every own op).
        The deficiency and notice counters go in the mark too, so a restore never hands out a number again.
        """
        path = self.sent_mark_path
        if path is None:
            return
        mark = self._read_mark()
        meta = self._meta()
        sent = int(meta["seq"]) if seq is None else seq
        peers = dict(mark.get("peers", {}))
        if peer:
            peers[peer] = max(sent, int(peers.get(peer, 0)))
        counters = {name: int(meta[f"counter_{name}"]) for name in NUMBERED}
        held = dict(mark.get("counters", {}))
        mark = {
            "device_id": self.device_id,
            "seq": max(sent, int(mark.get("seq", 0))),
            "hlc": max(int(meta["hlc"]), int(mark.get("hlc", 0))),
            "peers": peers,
            "counters": {name: max(n, int(held.get(name, 0))) for name, n in counters.items()},
        }
        write_atomic(path, json.dumps(mark).encode())

    def _read_mark(self) -> dict[str, Any]:
        path = self.sent_mark_path
        if path is None or not path.exists():
            return {}
        try:
            mark = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return {}  # a damaged mark only loses the early warning; imports still detect a restore
        ok = isinstance(mark, dict) and mark.get("device_id") == self.device_id
        return mark if ok else {}

    def _resume_from_mark(self) -> None:
        mark = self._read_mark()
        if not mark or int(mark.get("seq", 0)) <= int(self._meta()["seq"]):
            return
        with transaction(self.db):
            self.resume_seq(int(mark["seq"]))
            self._set_meta("hlc", str(max(int(self._meta()["hlc"]), int(mark.get("hlc", 0)))))
            for name, n in dict(mark.get("counters", {})).items():
                if name in NUMBERED and int(n) > int(self._meta()[f"counter_{name}"]):
                    self._set_meta(f"counter_{name}", str(int(n)))
            for peer, seq in dict(mark.get("peers", {})).items():
                # the hub's answer acknowledged what it took; a bundle file was only written for its peer
                self.raise_mark("peer_cursor" if peer == HUB_PEER else "peer_written", peer, self.device_id, int(seq))

    def resume_seq(self, seq: int) -> None:
        """Continue this device's op counter past ``seq`` and its numbers past those held (inside a transaction).

        Used when the device's own ops come back: beyond its counter, it was restored from a backup, and a
        new op must never reuse a seq already sent; and a deficiency or notice number it gave before the
        restore is held again, so it is not given twice.
        """
        if seq > int(self._meta()["seq"]):
            self._set_meta("seq", str(seq))
            self._set_meta("restored_at_seq", str(seq))
        for name in NUMBERED:
            held = self._highest_held_number(name)
            if held > int(self._meta()[f"counter_{name}"]):
                self._set_meta(f"counter_{name}", str(held))

    def renumber_own_ops(self, first: int, past: int, newest_hlc: int) -> None:
        """Move this device's ops from seq ``first`` on to just past ``past``, with fresh stamps (inside a transaction).

        A device restored from a backup that saved before hearing back from its peers reused seqs it
        had already sent with other content. Those new ops (never sent: a peer would have refused
        them) keep their content and take fresh seqs, so both lines of work survive. They also take
        fresh stamps, past ``newest_hlc`` (the newest stamp among the ops coming back) and every stamp
        this device has seen: the restored clock may have given a new save the very stamp of a lost
        one, and then which value a replica keeps would depend on arrival order. Nobody holds the old
        stamps, since the ops were never sent. Their signatures and any refusal the hub gave them were
        made for the old seq: dropped, and made again when they are next sent.
        """
        shift = past - first + 1
        me = self.device_id
        for table in ("op_sig", "hub_rejection"):
            if self.db[table].exists():
                self.db.execute(f"DELETE FROM {table} WHERE origin=? AND seq>=?", [me, first])
        sql = "SELECT seq FROM op WHERE origin=? AND seq>=? ORDER BY seq DESC"
        moved = self.db.execute(sql, [me, first]).fetchall()
        for (seq,) in moved:
            self.db.execute("UPDATE op SET seq=? WHERE origin=? AND seq=?", [seq + shift, me, seq])
            old_event, new_event = f"{me}:{seq}", f"{me}:{seq + shift}"
            self.db.execute("UPDATE deficiency_event SET id=? WHERE id=?", [new_event, old_event])
            for col in ("winner", "loser"):
                self.db.execute(
                    f"UPDATE conflict SET {col}_seq=? WHERE {col}_origin=? AND {col}_seq=?", [seq + shift, me, seq]
                )
        self.db.execute("INSERT OR REPLACE INTO seen VALUES (?, ?)", [me, first - 1])
        self._set_meta("seq", str(max(int(self._meta()["seq"]) + shift, past)))
        self._set_meta("restored_at_seq", str(first - 1))
        self.observe_hlc(newest_hlc)
        self._restamp_own_ops(first + shift)

    def _restamp_own_ops(self, first: int) -> None:
        """Give this device's ops from seq ``first`` on fresh stamps, in seq order, and merge them again with them.

        Each new stamp is past every stamp held, so each op now sets every field it names, as a replay
        of the log gives (a status event carries its op's stamp: written again). A later op's base that
        named an earlier one's old stamp names its new one, and a recorded conflict that one of them
        lost, it now wins.
        """
        me = self.device_id
        rows = self.db.execute(
            f"SELECT {', '.join(OP_KEYS)} FROM op WHERE origin=? AND seq>=? ORDER BY seq", [me, first]
        )
        renewed: dict[int, int] = {}  # old stamp -> new stamp, of this device's moved ops
        # past every stamp held, even one further ahead than the clock follows (``clock.hlc_receive``): these
        # stamps are for the moved ops only, the clock itself goes no further than a received stamp would take it
        floor = int(self.db.execute("SELECT coalesce(max(hlc), 0) FROM op").fetchone()[0])
        for row in rows.fetchall():
            held = Op.from_row(dict(zip(OP_KEYS, row, strict=True)))
            floor = max(self._next_hlc(), floor + 1)
            renewed[held.hlc] = floor
            base = {f: [renewed[b[0]], me] if b[1] == me and b[0] in renewed else b for f, b in held.base.items()}
            op = replace(held, hlc=renewed[held.hlc], base=base)
            self.db.execute("UPDATE op SET hlc=?, base=? WHERE origin=? AND seq=?", [op.hlc, op.base_text, me, op.seq])
            if op.kind == OpKind.STATUS:
                self.db.execute("DELETE FROM deficiency_event WHERE id=?", [f"{me}:{op.seq}"])
            apply_op(self.db, op, record_conflicts=False)
        self.db.execute(
            "UPDATE conflict SET winner_origin=loser_origin, winner_seq=loser_seq, winner_value=loser_value, "
            "loser_origin=winner_origin, loser_seq=winner_seq, loser_value=winner_value "
            "WHERE loser_origin=:me AND loser_seq>=:first AND NOT (winner_origin=:me AND winner_seq>=:first)",
            {"me": me, "first": first},
        )

    def first_rewritten_seq(self, ops: list[Op]) -> int | None:
        """The first seq at which this device's own ops, as they come back from a peer, differ from those held here.

        None when they agree. A difference means this device was restored from a backup and saved again
        before hearing back: its new saves reused seqs that left it before with other content.
        """
        mine = (op for op in ops if op.origin == self.device_id)
        return min((op.seq for op in mine if differs_from_held(self.db, op)), default=None)

    def held_seq(self, origin: str) -> int:
        """The highest seq of ``origin`` in this database's log (0 if none)."""
        row = self.db.execute("SELECT max(seq) FROM op WHERE origin=?", [origin]).fetchone()
        return int(row[0] or 0)

    def _next_hlc(self) -> int:
        meta = self._meta()
        hlc = hlc_tick(int(meta["hlc"]), self._wall())
        self._set_meta("hlc", str(hlc))
        return hlc

    def observe_hlc(self, remote: int) -> None:
        """Fold a received stamp into the local clock (inside the import transaction)."""
        meta = self._meta()
        self._set_meta("hlc", str(hlc_receive(int(meta["hlc"]), remote, self._wall())))

    def stamp(self, entity: str, record_id: str, field: str) -> list[Any] | None:
        """The (hlc, origin) stamp of a field's current value: what a user 'saw'."""
        stamp = read_stamp(self.db, entity, record_id, field)
        return list(stamp) if stamp else None

    # -- the one save path -------------------------------------------------------------------
    def save(
        self, entity: str, record_id: str, fields: dict[str, Any], kind: str = "set", base: dict[str, Any] | None = None
    ) -> Op:
        """Write a change and its op in one transaction. ``base``: stamps the user saw (default: current)."""
        with transaction(self.db):
            return self._save_in_tx(entity, record_id, fields, kind, base)

    def _save_in_tx(
        self, entity: str, record_id: str, fields: dict[str, Any], kind: str, base: dict[str, Any] | None
    ) -> Op:
        if kind == "set" and base is None:
            base = {f: self.stamp(entity, record_id, f) for f in fields}
        # changes to the demo site go under the demo's own origin and counter: they never leave unasked
        origin, counter = (
            (DEMO_ORIGIN, "demo_seq") if self._is_demo(entity, record_id, fields) else (self.device_id, "seq")
        )
        seq = int(self._meta().get(counter, "0")) + 1
        self._set_meta(counter, str(seq))
        hlc = self._next_hlc()
        if kind == "set":
            # the device's own edit always takes effect here: past every stamp of the fields it changes
            top = max((s[0] for s in (self.stamp(entity, record_id, f) for f in fields) if s), default=-1)
            if top >= hlc:
                hlc = top + 1  # this change only: the clock follows it no further than a received stamp
                self._set_meta("hlc", str(hlc_receive(int(self._meta()["hlc"]), hlc, self._wall())))
        op = Op(
            origin=origin,
            seq=seq,
            hlc=hlc,
            entity=entity,
            record_id=record_id,
            kind=OpKind(kind),
            payload=json.loads(canonical(fields)),
            base={k: v for k, v in (base or {}).items() if v},
            schema_version=SCHEMA_VERSION,
            wall_ms=self._wall(),
        )
        op.validate()
        insert_op(self.db, op)
        apply_op(self.db, op)
        return op

    def _is_demo(self, entity: str, record_id: str, fields: dict[str, Any]) -> bool:
        """Whether a change concerns the built-in demo site (a site saved with ``demo`` true)."""
        if entity == "site" and fields.get("demo") is True:
            return True
        site_id = record_id if entity == "site" else fields.get("site_id")
        if site_id is None and entity in PROJECTIONS:
            row = self.db.execute(f"SELECT site_id FROM {entity} WHERE id=?", [record_id]).fetchone()
            site_id = row[0] if row else None
        if not isinstance(site_id, str):
            return False
        row = self.db.execute("SELECT json_extract(data, '$.demo') FROM site WHERE id=?", [site_id]).fetchone()
        return bool(row and row[0])

    def _counter(self, name: str) -> int:
        """Allocate the next number of ``name`` (a key of ``NUMBERED``), inside the caller's transaction."""
        value = self._next_number(name)
        self._set_meta(f"counter_{name}", str(value))
        return value

    def _next_number(self, name: str) -> int:
        """The next number of ``name``: past the counter and past every number of this device's prefix held."""
        return max(int(self._meta()[f"counter_{name}"]), self._highest_held_number(name)) + 1

    def _highest_held_number(self, name: str) -> int:
        """The highest number of ``name`` with this device's code held in the projections (0 if none).

        A restored device gets its earlier numbers back with its own records; they are never given again.
        """
        table, like, form = NUMBERED[name]
        code = self.device_code
        pattern = re.compile(form.format(code=re.escape(code)))
        rows = self.db.execute(
            f"SELECT json_extract(data, '$.number') FROM {table} WHERE json_extract(data, '$.number') LIKE ?",
            [like.format(code=code)],
        )
        numbers = (pattern.fullmatch(str(number)) for (number,) in rows.fetchall())
        return max((int(m.group(1)) for m in numbers if m), default=0)

    # -- reading -----------------------------------------------------------------------------
    def _get(self, table: str, record_id: str) -> dict[str, Any] | None:
        row = self.db.execute(f"SELECT data FROM {table} WHERE id=?", [record_id]).fetchone()
        return json.loads(row[0]) if row else None

    def _by_site(self, table: str, site_id: str) -> list[tuple[str, dict[str, Any]]]:
        rows = self.db.execute(f"SELECT id, data FROM {table} WHERE site_id=? ORDER BY id", [site_id]).fetchall()
        return [(r[0], json.loads(r[1])) for r in rows]

    # -- sites and visits --------------------------------------------------------------------
    def create_site(self, **fields: Any) -> Site:
        """Create a site (fields of ``core.records.Site`` except id)."""
        site = Site(id=uuid7(), **fields)
        data = site.model_dump(mode="json", exclude={"id"})
        self.save("site", site.id, dict(data, site_id=site.id))
        return site

    def update_site(self, site_id: str, fields: dict[str, Any], base: dict[str, Any] | None = None) -> Site:
        """Change site fields; validated as a whole before saving."""
        current = self.site(site_id).model_dump(mode="json")
        Site(**dict(current, **fields))
        self.save("site", site_id, fields, base=base)
        return self.site(site_id)

    def site(self, site_id: str) -> Site:
        """One site."""
        data = self._get("site", site_id)
        if data is None:
            msg = f"no site {site_id}"
            raise KeyError(msg)
        return Site(id=site_id, **{k: v for k, v in data.items() if k != "site_id"})

    def sites(self) -> list[Site]:
        """Every site, by name."""
        rows = self.db.execute("SELECT id FROM site").fetchall()
        return sorted((self.site(r[0]) for r in rows), key=lambda s: s.name)

    def find_site(self, name_or_id: str) -> Site:
        """A site by id, exact name, or unique name prefix."""
        for s in self.sites():
            if name_or_id in (s.id, s.name):
                return s
        matches = [s for s in self.sites() if s.name.lower().startswith(name_or_id.lower())]
        if len(matches) == 1:
            return matches[0]
        msg = f"no single site matches {name_or_id!r}; {_site_choices(matches, self.sites())}"
        raise KeyError(msg)

    def start_visit(self, site_id: str, reviewer: str, started_at: str, **fields: Any) -> Visit:
        """Record a visit."""
        visit = Visit(id=uuid7(), site_id=site_id, reviewer=reviewer, started_at=started_at, **fields)
        self.save("visit", visit.id, visit.model_dump(mode="json", exclude={"id"}))
        return visit

    def visits(self, site_id: str) -> list[Visit]:
        """A site's visits, oldest first."""
        return sorted((Visit(id=i, **d) for i, d in self._by_site("visit", site_id)), key=lambda v: v.started_at)

    # -- beams -------------------------------------------------------------------------------
    def save_beam(
        self, site_id: str, beam: Beam, location: dict[str, Any] | None = None, beam_id: str | None = None
    ) -> str:
        """Log (or re-save) a beam: contract-1 fields plus location fields (level, gridline, notes...)."""
        beam_id = beam_id or uuid7()
        fields = beam.model_dump(mode="json")
        fields.update(stored_system(fields["system"]))
        fields.update(location or {})
        fields["site_id"] = site_id
        self.save("beam", beam_id, fields)
        return beam_id

    def update_beam(self, beam_id: str, fields: dict[str, Any], base: dict[str, Any] | None = None) -> Op:
        """Change some fields of a logged beam (per-field merge)."""
        return self.save("beam", beam_id, fields, base=base)

    def beam_record(self, beam_id: str) -> dict[str, Any]:
        """Every stored field of a beam (beam fields, location and drafts)."""
        data = self._get("beam", beam_id)
        if data is None:
            msg = f"no beam {beam_id}"
            raise KeyError(msg)
        return data

    def beam(self, beam_id: str) -> Beam:
        """A logged beam as the core model (raises ValueError if its stored fields are incomplete).

        Line loads derived from a tributary width follow the site's design basis as it stands (``derived_loads``).
        """
        data = self.beam_record(beam_id)
        return Beam.model_validate(beam_input(data, self._get("site", str(data.get("site_id") or ""))))

    def beams(self, site_id: str) -> list[tuple[str, dict[str, Any]]]:
        """A site's beams (id, record) ordered by level, gridline and mark; archived ones left out."""
        rows = [(i, d) for i, d in self._by_site("beam", site_id) if not d.get("archived")]
        return sorted(
            rows, key=lambda r: (str(r[1].get("level", "")), str(r[1].get("gridline", "")), str(r[1].get("mark", "")))
        )

    def add_measurement(self, beam_id: str, site_id: str, **fields: Any) -> str:
        """An insert-only raw measurement (where and how it was taken)."""
        mid = uuid7()
        self.save("measurement", mid, dict(fields, beam_id=beam_id, site_id=site_id), kind="insert")
        return mid

    def measurements(self, beam_id: str) -> list[dict[str, Any]]:
        """Raw measurements of a beam, oldest first."""
        rows = self.db.execute("SELECT id, data FROM measurement").fetchall()
        return [dict(json.loads(d), id=i) for i, d in sorted(rows) if json.loads(d).get("beam_id") == beam_id]

    # -- blobs and photos ----------------------------------------------------------------------
    def put_blob(self, content: bytes, mime: str) -> str:
        """Write a blob file named by its SHA-256 and fsync it; the index row commits after."""
        sha = self.write_blob_file(content)
        with transaction(self.db):
            self.index_blob(sha, len(content), mime)
        return sha

    def write_blob_file(self, content: bytes) -> str:
        """Write (once) and fsync the file of a blob; on any failure (a full disk) no partial file is left."""
        sha = hashlib.sha256(content).hexdigest()
        path = self.blob_path(sha)
        if path.exists():
            return sha
        path.parent.mkdir(parents=True, exist_ok=True)
        tmp = path.with_suffix(".part")
        try:
            with open(tmp, "wb") as fh:
                fh.write(content)
                fh.flush()
                os.fsync(fh.fileno())
            os.replace(tmp, path)
        except OSError:
            tmp.unlink(missing_ok=True)
            raise
        dir_fd = os.open(path.parent, os.O_RDONLY)
        try:
            os.fsync(dir_fd)
        finally:
            os.close(dir_fd)
        return sha

    def index_blob(self, sha: str, size: int, mime: str) -> None:
        """The blob's index row (inside the caller's transaction)."""
        self.db.execute("INSERT OR REPLACE INTO blob VALUES (?, ?, ?, 1)", [sha, size, mime])

    def blob_path(self, sha: str) -> Path:
        """Where a blob's bytes live."""
        return self.blob_dir / sha[:2] / sha

    def blob(self, sha: str) -> bytes | None:
        """A blob's bytes, or None while it is pending (not yet received)."""
        path = self.blob_path(sha)
        return path.read_bytes() if path.exists() else None

    def add_photo(
        self,
        site_id: str,
        content: bytes,
        mime: str = "image/jpeg",
        beam_id: str | None = None,
        deficiency_id: str | None = None,
        caption: str = "",
        taken_at: str | None = None,
        taken_by: str | None = None,
    ) -> str:
        """Store a photo's bytes as a blob, then its insert-only record.

        ``taken_at`` (UTC with Z) and ``taken_by`` default to this device's clock and its user (issue 13).
        """
        who = self.device_user()[0] if taken_by is None else taken_by
        record = PhotoRecord(
            site_id=site_id,
            sha256=hashlib.sha256(content).hexdigest(),
            mime=mime,
            beam_id=beam_id,
            deficiency_id=deficiency_id,
            caption=caption,
            taken_at=taken_at if taken_at is not None else utc_stamp(self._wall()),
            taken_by=who or "device user not set up",
        )  # checked before the blob is written
        self.put_blob(content, mime)
        pid = uuid7()
        self.save("photo", pid, record.model_dump(mode="json", exclude={"marks", "marks_of"}), kind="insert")
        return pid

    def mark_photo(self, site_id: str, photo_id: str, marks: list[dict[str, Any]]) -> str:
        """Record arrows/rings drawn on a photo as data beside it (issue 13); returns the new record's id.

        A new insert-only photo record naming the same blob, with ``marks`` and ``marks_of``; the original
        record and its bytes are untouched. Each mark: kind "arrow" (x, y tail -> x2, y2 head) or "ring"
        (x, y centre, x2 radius), fractions 0-1 of the photo.
        """
        original = next((p for p in self.photos(site_id) if p["id"] == photo_id), None)
        if original is None:
            msg = f"photo {photo_id!r} is not a photo of site {site_id!r}"
            raise KeyError(msg)
        for m in marks:
            if m.get("kind") not in ("arrow", "ring"):
                msg = f"photo mark kind {m.get('kind')!r}; allowed: arrow, ring"
                raise ValueError(msg)
            for k in ("x", "y", "x2", "y2"):
                v = m.get(k, 0.0)
                if not isinstance(v, int | float) or not 0.0 <= v <= 1.0:
                    msg = f"photo mark {k} = {v!r}; allowed: a fraction of the photo from 0 to 1"
                    raise ValueError(msg)
        drawn_over = self.latest_markups(site_id).get(original.get("marks_of") or photo_id)
        pid = uuid7()
        kept = ("site_id", "sha256", "mime", "beam_id", "deficiency_id", "caption", "taken_at", "taken_by")
        fields = {k: original.get(k) for k in kept if k in original}
        clean = [PhotoMark(**{k: m.get(k, 0.0) for k in ("kind", "x", "y", "x2", "y2")}) for m in marks]
        self.save(
            "photo",
            pid,
            {
                **fields,
                "marks": [c.model_dump(mode="json") for c in clean],
                "marks_of": original.get("marks_of") or photo_id,
                "replaces": drawn_over["id"] if drawn_over else None,
            },
            kind="insert",
        )
        return pid

    def latest_markups(self, site_id: str) -> dict[str, dict[str, Any]]:
        """The latest markup record of each marked photo of a site, keyed by the original photo's id.

        Latest by what each markup names as the one it was drawn over (``replaces``), never by id or
        clock: UUIDv7 ids order only by wall-clock ms (random bits within one ms) and a tablet's clock
        can be set back. Of markups that nothing replaces (made on two devices without seeing each
        other, or saved before ``replaces`` existed) the largest id is taken, the same on every device.
        """
        markups = [p for p in self.photos(site_id) if p.get("marks_of")]
        replaced = {p["replaces"] for p in markups if p.get("replaces")}
        latest: dict[str, dict[str, Any]] = {}
        for p in markups:
            held = latest.get(p["marks_of"])
            if p["id"] not in replaced and (held is None or p["id"] > held["id"]):
                latest[p["marks_of"]] = p
        return latest

    def photos(self, site_id: str) -> list[dict[str, Any]]:
        """Photo records of a site, each with ``pending`` True if its bytes have not arrived."""
        return [
            dict(d, id=i, pending=not self.blob_path(d["sha256"]).exists()) for i, d in self._by_site("photo", site_id)
        ]

    # -- deficiencies --------------------------------------------------------------------------
    def raise_deficiency(
        self,
        site_id: str,
        beam_id: str | None,
        code: str,
        priority: str,
        location: str,
        description: str,
        reference: str,
        action: str,
        due: str = "",
    ) -> Deficiency:
        """Confirm a finding (or a reviewer's own observation) as a numbered deficiency."""
        if priority not in PRIORITY_ORDER:
            msg = f"priority {priority!r}; allowed: {list(PRIORITY_ORDER)}"
            raise ValueError(msg)
        with transaction(self.db):
            number = f"D-{self.device_code}-{self._counter('deficiency'):03d}"
            did = uuid7()
            d = Deficiency(
                id=did,
                site_id=site_id,
                beam_id=beam_id,
                number=number,
                code=code,
                priority=priority,
                location=location,
                description=description,
                reference=reference,
                action=action,
                due=due,
            )
            self._save_in_tx(
                "deficiency", did, d.model_dump(mode="json", exclude={"id", "cycle", "stage", "rereview"}), "set", None
            )
        return self.deficiency(did)

    def deficiency(self, deficiency_id: str) -> Deficiency:
        """One deficiency with its current (cycle, stage)."""
        data = self._get("deficiency", deficiency_id)
        if data is None or "number" not in data:
            msg = f"no deficiency {deficiency_id}"
            raise KeyError(msg)
        return Deficiency(id=deficiency_id, **data)

    def deficiencies(self, site_id: str, open_only: bool = False) -> list[Deficiency]:
        """A site's deficiencies, most urgent first, then by number."""
        items = [Deficiency(id=i, **d) for i, d in self._by_site("deficiency", site_id) if "number" in d]
        if open_only:
            items = [d for d in items if d.stage is not Stage.verified]
        return sorted(items, key=lambda d: (PRIORITY_ORDER[d.priority], d.number))

    def move_status(
        self,
        deficiency_id: str,
        stage: Stage | str,
        actor: str,
        role: str,
        note: str = "",
        evidence_sha256: str = "",
        at: str | None = None,
    ) -> Deficiency:
        """Move a deficiency forward: open -> corrected -> verified; 'reopen' starts a new cycle.

        Only a reviewer sets verified. Any other move raises LifecycleError.
        """
        d = self.deficiency(deficiency_id)
        if role not in ("reviewer", "contractor", "office"):
            msg = f"role {role!r}; allowed: reviewer, contractor, office"
            raise LifecycleError(msg)
        if stage == "reopen":
            if d.stage is Stage.open:
                msg = f"{d.number} is already open"
                raise LifecycleError(msg)
            cycle, target = d.cycle + 1, Stage.open
        else:
            target = Stage[stage] if isinstance(stage, str) else stage
            cycle = d.cycle
            if target <= d.stage:
                msg = (
                    f"{d.number}: status only moves forward ({d.stage.name} -> {target.name} "
                    "refused; use 'reopen' to start a new cycle)"
                )
                raise LifecycleError(msg)
            if target is Stage.verified and role != "reviewer":
                msg = f"{d.number}: only a reviewer sets verified (role {role!r})"
                raise LifecycleError(msg)
        when = at or utc_stamp(self._wall())
        self.save(
            "deficiency",
            deficiency_id,
            {
                "cycle": cycle,
                "stage": int(target),
                "actor": actor,
                "role": role,
                "at": when,
                "note": note,
                "evidence_sha256": evidence_sha256,
                "site_id": d.site_id,
            },
            kind="status",
        )
        return self.deficiency(deficiency_id)

    def history(self, deficiency_id: str) -> list[StatusEvent]:
        """Status moves of a deficiency, in clock order."""
        rows = self.db.execute("SELECT data FROM deficiency_event").fetchall()
        events = [json.loads(r[0]) for r in rows]
        mine = sorted((e for e in events if e["deficiency_id"] == deficiency_id), key=lambda e: (e["hlc"], e["origin"]))
        return [
            StatusEvent(
                deficiency_id=deficiency_id,
                cycle=e["cycle"],
                stage=Stage(e["stage"]),
                actor=e["actor"],
                role=e["role"],
                at=e["at"],
                note=e.get("note", ""),
                evidence_sha256=e.get("evidence_sha256", ""),
            )
            for e in mine
        ]

    # -- notices --------------------------------------------------------------------------------
    def next_notice_number(self, site: Site) -> str:
        """A notice number unique across devices offline: <project>-FR-<device code>-<n>."""
        n = self._next_number("notice")
        return f"{site.project_number or 'P'}-FR-{self.device_code}-{n:03d}"

    def _check_issue_date(self, issued_at: str, deficiency_ids: list[str]) -> None:
        """Refuse a notice dated before the day (this device's local date) any item it carries was raised.

        ``issued_at``: a date ('2026-11-30', this device's local date, as the app writes it) or a stored UTC
        time; an item counts from the first change this device wrote to it (its earliest op of this origin, by
        this device's wall clock): the raising for an item raised here, else this device's first status change
        or edit of it. A colleague's ops are never compared: their clock set a day ahead would otherwise block
        an IMMEDIATE notice today (stamps are the devices' own, sync.md 3.3). The office register flags a
        notice that breaks the same rule (``office.registry.date_flags``).
        """
        when = parse_stamp(issued_at)
        issued = time.strftime("%Y-%m-%d", time.localtime(when.timestamp())) if when else issued_at.strip()[:10]
        if not re.fullmatch(r"\d{4}-\d\d-\d\d", issued):
            msg = f"issued_at {issued_at!r}: not a date (YYYY-MM-DD) or a UTC time"
            raise ValueError(msg)
        for did in deficiency_ids:
            row = self.db.execute(
                "SELECT min(wall_ms) FROM op WHERE entity='deficiency' AND record_id=? AND origin=?",
                [did, self.device_id],
            ).fetchone()
            if row is None or row[0] is None:
                continue  # raised on another device, or not held here: no clock of this device to compare with
            raised = time.strftime("%Y-%m-%d", time.localtime(int(row[0]) / 1000))
            if issued < raised:
                number = (self._get("deficiency", did) or {}).get("number", did)
                msg = (
                    f"issued_at {issued}: before {number} was raised ({raised}); a notice lists deficiencies "
                    f"already raised, so date it {raised} or later"
                )
                raise ValueError(msg)

    def issue_notice(
        self,
        site_id: str,
        number: str,
        pdf: bytes,
        deficiency_ids: list[str],
        issued_by: str,
        issued_at: str,
        revision: int = 0,
        supersedes: str | None = None,
        change_note: str = "",
        memory_acknowledgement: MemoryAcknowledgement | None = None,
    ) -> IssuedNotice:
        """Store an issued notice: the PDF blob first (fsynced), then the immutable record.

        ``memory_acknowledgement``: who acknowledged the table rows entered from memory, and when (issue 16).
        A notice lists deficiencies already raised (common practice): ``issued_at`` dated before the day any of
        its items was raised is refused (ValueError), nothing stored.
        """
        self._check_issue_date(issued_at, deficiency_ids)
        sha = self.put_blob(pdf, "application/pdf")
        nid = uuid7()
        notice = IssuedNotice(
            id=nid,
            site_id=site_id,
            number=number,
            revision=revision,
            issued_at=issued_at,
            issued_by=issued_by,
            deficiency_ids=deficiency_ids,
            pdf_sha256=sha,
            supersedes=supersedes,
            change_note=change_note,
            memory_acknowledgement=memory_acknowledgement,
        )
        payload = notice.model_dump(mode="json", exclude={"id"})
        if memory_acknowledgement is None:
            del payload["memory_acknowledgement"]  # records from before the field stay byte-for-byte as they were
        with transaction(self.db):
            if revision == 0:
                self._counter("notice")
            self._save_in_tx("issued_notice", nid, payload, "insert", None)
        return notice

    def notices(self, site_id: str) -> list[IssuedNotice]:
        """Issued notices of a site, by number and revision."""
        items = [IssuedNotice(id=i, **d) for i, d in self._by_site("issued_notice", site_id)]
        return sorted(items, key=lambda n: (n.number, n.revision))

    def find_issued_by_hash(self, sha: str) -> IssuedNotice | None:
        """The issued notice whose PDF has this SHA-256, if any, read from the op log (not the table).

        The ``issued_notice`` table is a projection that anyone with the file can edit; the notice's
        insert op is what was synced to the office, so it decides (and the table must agree with it).
        """
        rows = self.db.execute(
            "SELECT record_id, payload FROM op WHERE entity='issued_notice' AND kind='insert' "
            "AND json_extract(payload, '$.pdf_sha256') = ? ORDER BY origin, seq",
            [sha],
        ).fetchall()
        for record_id, payload in rows:
            data = json.loads(payload)
            if self._get("issued_notice", record_id) != data:
                msg = (
                    f"issued notice {data.get('number')} in this database differs from its logged record "
                    "(the database was edited): the log is kept, the table is not trusted"
                )
                raise IntegrityError(msg)
            return IssuedNotice(id=record_id, **data)
        return None

    # -- sync bookkeeping ---------------------------------------------------------------------
    def raise_mark(self, table: str, peer: str, origin: str, seq: int) -> None:
        """Move ``peer``'s mark for ``origin`` in ``table`` (peer_cursor or peer_written) up to ``seq``, never down."""
        self.db.execute(
            f"INSERT INTO {table} VALUES (?, ?, ?) "
            "ON CONFLICT (peer, origin) DO UPDATE SET seq = max(seq, excluded.seq)",
            [peer, origin, seq],
        )

    def acknowledged(self, peer: str) -> dict[str, int]:
        """Per origin, the seq up to which ``peer`` is known to hold every op (sync.md 3.3 peer cursors).

        Known from an acknowledgement only: the hub's answer, or the vector of a bundle from that peer. The
        office label (``OFFICE_PEER``, the Sync screen's bundle files) is not a device, so nothing answers for
        it: an op counts as with the office once any peer acknowledged it (the hub, or a device whose bundle
        came back holding it; it then no longer rests on this tablet alone, and that device relays it on).
        """
        if peer != OFFICE_PEER:
            return dict(self.db.execute("SELECT origin, seq FROM peer_cursor WHERE peer=?", [peer]).fetchall())
        return dict(self.db.execute("SELECT origin, max(seq) FROM peer_cursor GROUP BY origin").fetchall())

    def unwritten_count(self, peer: str = OFFICE_PEER) -> int:
        """Own ops neither acknowledged by ``peer`` nor written into a bundle file for it yet."""
        row = self.db.execute(
            "SELECT seq FROM peer_written WHERE peer=? AND origin=?", [peer, self.device_id]
        ).fetchone()
        done = max(self.acknowledged(peer).get(self.device_id, 0), row[0] if row else 0)
        return max(0, int(self._meta()["seq"]) - done)

    def pending_sync_count(self, peer: str = OFFICE_PEER, site_id: str | None = None) -> int:
        """Own ops ``peer`` has not acknowledged (only those about one site when ``site_id`` is given).

        A bundle file written but not yet acknowledged counts: the file may never arrive.
        """
        sent = self.acknowledged(peer).get(self.device_id, 0)
        if site_id is None:
            return int(self._meta()["seq"]) - sent
        ids = " UNION ".join(f"SELECT id FROM {t} WHERE site_id = :site" for t in PROJECTIONS)
        sql = f"SELECT count(*) FROM op WHERE origin = :me AND seq > :sent AND record_id IN ({ids})"
        return int(self.db.execute(sql, {"me": self.device_id, "sent": sent, "site": site_id}).fetchone()[0])

    def last_sync(self) -> str | None:
        """When the last bundle was exported or imported successfully."""
        row = self.db.execute("SELECT max(at) FROM bundle_log WHERE outcome IN ('applied', 'exported')").fetchone()
        return row[0] if row else None

    def conflicts(self, unresolved_only: bool = True) -> list[dict[str, Any]]:
        """Concurrent edits of one field, for a person to review."""
        sql = "SELECT * FROM conflict" + (" WHERE resolved_by IS NULL" if unresolved_only else "") + " ORDER BY id"
        cur = self.db.execute(sql)
        cols = [c[0] for c in cur.description]
        return [dict(zip(cols, r, strict=True)) for r in cur.fetchall()]

    def resolve_conflict(self, conflict_id: int, keep: str, actor: str) -> None:
        """Resolve a conflict: keep 'winner' as is, or re-save the 'loser' value as a new edit.

        A firm's record about a table row (``table_row``) is one person's statement, valid only whole: a
        correction names its column, value and source together, with who checked the row against which
        edition and page. A conflict on any of its fields is therefore resolved for the whole statement:
        'loser' saves every field the other side's edit wrote (not the one field alone, which could leave a
        column without its value, or name one person for another's correction), and either choice resolves
        the record's other conflicts with that same edit too. If the other side's edit does not make a whole,
        valid record (an edit of one field, written by an older app), 'loser' raises ``ConflictNotResolved``
        naming the row and why, before anything is saved; the record and its conflicts stay as they were.
        """
        c = next((c for c in self.conflicts(False) if c["id"] == conflict_id), None)
        if c is None:
            msg = f"no conflict {conflict_id}"
            raise KeyError(msg)
        if keep not in ("winner", "loser"):
            msg = "keep must be 'winner' or 'loser'"
            raise ValueError(msg)
        with transaction(self.db):
            if c["entity"] == "table_row":
                fields, resolved = self._table_row_side(c, whole=keep == "loser")
            else:
                fields, resolved = {c["field"]: json.loads(c["loser_value"])}, [conflict_id]
            if keep == "loser":
                self._save_in_tx(c["entity"], c["record_id"], fields, "set", None)
            for cid in resolved:
                self.db.execute("UPDATE conflict SET resolved_by=? WHERE id=?", [actor, cid])
        if c["entity"] == "table_row":
            firm_tables.apply(self.db)  # the lookups honour the record kept

    def _table_row_side(self, c: dict[str, Any], whole: bool) -> tuple[dict[str, Any], list[int]]:
        """The fields the losing edit of a table row record wrote, and the ids of that edit's open conflicts.

        ``whole``: raise ``ConflictNotResolved`` unless those fields over the current record make a whole,
        valid record (the fields are to be saved).
        """
        rid, loser = c["record_id"], (c["loser_origin"], c["loser_seq"])
        row = self.db.execute("SELECT payload FROM op WHERE origin=? AND seq=?", list(loser)).fetchone()
        fields = json.loads(row[0]) if row is not None else {}
        if whole:
            why = (
                "the other side's edit is not in this database's log"
                if row is None
                else firm_tables.why_not_whole(rid, {**(self._get("table_row", rid) or {}), **fields})
            )
            if why:
                msg = (
                    f"table row record {rid}: the other side's record cannot be used ({why}); nothing was saved. "
                    f"To use it, {firm_tables.RECORD_AGAIN}"
                )
                raise ConflictNotResolved(msg)
        same = [
            int(x["id"])
            for x in self.conflicts()
            if x["entity"] == "table_row" and x["record_id"] == rid and (x["loser_origin"], x["loser_seq"]) == loser
        ]
        return fields, sorted({int(c["id"]), *same})

    def table_records_set_aside(self) -> list[firm_tables.SetAside]:
        """The firm's table row records that are not whole and valid: not applied (the published row is used)."""
        return firm_tables.set_aside(self.db)

    def digest(self, *, include_demo: bool = True) -> str:
        """SHA-256 over the synced content (projections), excluding device identity and bookkeeping.

        ``include_demo=False`` leaves out the demo site's records (what a hub holds when the demo was never sent).
        """
        return projection_digest(self.db, None if include_demo else DEMO_ORIGIN)

    def rebuild_projections(self) -> dict[str, list[tuple[str, str]]]:
        """Replay the op log into fresh in-memory projections and return them (for the I13 check)."""
        scratch = connect(":memory:")
        with transaction(scratch):
            for op in all_ops(self.db):
                apply_op(scratch, op, record_conflicts=False)
        return {t: scratch.execute(f"SELECT id, data FROM {t} ORDER BY id").fetchall() for t in PROJECTIONS}

    def projections(self) -> dict[str, list[tuple[str, str]]]:
        """The live projections, in the same form as ``rebuild_projections``."""
        return {t: self.db.execute(f"SELECT id, data FROM {t} ORDER BY id").fetchall() for t in PROJECTIONS}

    def close(self) -> None:
        """Close the connection."""
        self.db.conn.close()


__all__ = ["SET_ENTITIES", "ConflictNotResolved", "IntegrityError", "LifecycleError", "Store"]


def _site_choices(matches: list[Site], sites: list[Site]) -> str:
    """What a site name could have been: the sites it starts (several), else every site (at most SITES_NAMED)."""
    names = sorted(s.name for s in (matches or sites))
    if not names:
        return "no site is stored"
    more = len(names) - SITES_NAMED
    shown = "; ".join(names[:SITES_NAMED]) + (f"; and {more:,} more" if more > 0 else "")
    return f"{len(matches):,} sites start with it: {shown}" if matches else f"sites: {shown}"
