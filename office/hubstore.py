"""The hub's database: a tablet's op log and projections, plus devices, codes, hub_seq, quarantine.

The same op log, field stamps and projections as a tablet, merged by the same
``storage.oplog`` functions, plus the hub's own tables (devices, enrolment codes, the hub_seq log,
push answers, quarantine) under numbered migrations.

Embedded SQLite (WAL). SQLite has one writer, so hub_seq is handed out in commit order and a puller
never sees a cursor hole (sync.md 4). One lock serialises the hub's use of its connection.
"""

from __future__ import annotations

import hashlib
import json
import os
import secrets
import threading
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import sqlite_utils

from office import rules
from storage.clock import uuid7
from storage.db import PROJECTIONS, SCHEMA_VERSION, connect, transaction
from storage.files import write_atomic
from storage.identity import SignatureError, load_public, verify_op
from storage.oplog import OP_KEYS, Op, ProjectionBatch, all_ops, apply_op, canonical, insert_op
from storage.store import projection_digest

ROLES = ("reviewer", "technician", "office")
CODE_LIFETIME_MS = 24 * 3600 * 1000
CODE_MADE, CODE_WITHDRAWN = "code made by", "code withdrawn"  # hub_audit events, subject ``code_subject``
WITHDRAWN_BY = " withdrawn by office user "  # in a CODE_WITHDRAWN row's detail, before the user's name
MAX_PULL_LIMIT = 5000

HUB_MIGRATIONS: dict[int, list[str]] = {
    1: [
        "CREATE TABLE IF NOT EXISTS hub_meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)",
        """CREATE TABLE IF NOT EXISTS hub_device (
            device_id TEXT PRIMARY KEY, name TEXT NOT NULL, person TEXT NOT NULL, role TEXT NOT NULL,
            public_key TEXT NOT NULL, enrolled_ms INTEGER NOT NULL, revoked_ms INTEGER, last_sync_ms INTEGER
        )""",
        """CREATE TABLE IF NOT EXISTS hub_code (
            code_sha256 TEXT PRIMARY KEY, name TEXT NOT NULL, person TEXT NOT NULL, role TEXT NOT NULL,
            created_ms INTEGER NOT NULL, used_by TEXT
        )""",
        """CREATE TABLE IF NOT EXISTS hub_log (
            hub_seq INTEGER PRIMARY KEY, origin TEXT NOT NULL, seq INTEGER NOT NULL, sig TEXT NOT NULL,
            UNIQUE (origin, seq)
        )""",
        """CREATE TABLE IF NOT EXISTS hub_push (
            bundle_id TEXT PRIMARY KEY, device_id TEXT NOT NULL, body_sha256 TEXT NOT NULL, answer TEXT NOT NULL,
            at_ms INTEGER NOT NULL
        )""",
        """CREATE TABLE IF NOT EXISTS hub_quarantine (
            origin TEXT NOT NULL, seq INTEGER NOT NULL, op TEXT NOT NULL, sig TEXT NOT NULL, reason TEXT NOT NULL,
            pushed_by TEXT NOT NULL, at_ms INTEGER NOT NULL, PRIMARY KEY (origin, seq)
        )""",
        """CREATE TABLE IF NOT EXISTS hub_audit (
            id INTEGER PRIMARY KEY AUTOINCREMENT, at_ms INTEGER NOT NULL, device_id TEXT, event TEXT NOT NULL,
            detail TEXT NOT NULL
        )""",
    ],
    2: [  # office users of the register pages (argon2 hashes) and their sessions (SHA-256 of the token)
        "CREATE TABLE IF NOT EXISTS hub_user (name TEXT PRIMARY KEY, password_hash TEXT NOT NULL, created_ms INTEGER)",
        "CREATE TABLE IF NOT EXISTS hub_session (token_sha256 TEXT PRIMARY KEY, name TEXT NOT NULL, expires_ms INT)",
    ],
    3: [  # failed office log-ins, by name, for the register's lock-out (office/registry.py LOGIN_FAILURES)
        "CREATE TABLE IF NOT EXISTS hub_login_failure (name TEXT NOT NULL, at_ms INTEGER NOT NULL)",
        "CREATE INDEX IF NOT EXISTS hub_login_failure_name ON hub_login_failure(name, at_ms)",
    ],
}


class HubRefused(Exception):
    """A request the hub refuses whole; nothing was written. ``status`` is the HTTP status to answer."""

    def __init__(self, status: int, reason: str):
        """Refuse with an HTTP status and a reason a person can read."""
        super().__init__(reason)
        self.status = status
        self.reason = reason


@dataclass(frozen=True)
class Device:
    """An enrolled device as the hub knows it."""

    device_id: str
    name: str
    person: str
    role: str
    public_key: str
    enrolled_ms: int
    revoked_ms: int | None
    last_sync_ms: int | None


@dataclass
class PushAnswer:
    """The hub's answer to a push (the same answer for a re-push of the same bundle)."""

    accepted: dict[str, int] = field(default_factory=dict)
    rejected: list[dict[str, Any]] = field(default_factory=list)
    hub_seq_after: int = 0
    seen: dict[str, int] = field(default_factory=dict)
    epoch: str = ""  # the hub's history when it answered (set at answer time, never stored with the answer)


def _now_ms() -> int:
    return int(time.time() * 1000)


class HubStore:
    """The office hub's database on embedded SQLite."""

    def __init__(
        self,
        path: str | Path | list[str],
        clock_ms: Callable[[], int] | None = None,
        blob_dir: str | Path | None = None,
    ):
        """Open or create the hub database (an SQLite file, or a ``postgresql://`` URL) at the current schema.

        Several PostgreSQL addresses may be given as a list (or space-separated): the hub follows the
        one that accepts writes. Blobs of an SQLite hub live in ``blob_dir`` (default: beside the
        file); a PostgreSQL hub keeps them in the database (``blob_dir`` is then unused).
        """
        self.path = " ".join(path) if isinstance(path, list) else str(path)
        self.lock = threading.RLock()
        self.clock_ms = clock_ms or _now_ms
        self.db: Any
        if is_postgres_url(self.path):
            from office import pgdb

            self.backend = "postgresql"
            self.db = pgdb.PgDatabase(self.path)
            pgdb.migrate(self.db)
            self._blob_dir = Path(blob_dir) if blob_dir else _default_pg_blobs(self.path)
        else:
            self.backend = "sqlite"
            self.db = connect(self.path)
            self._migrate()
            self._blob_dir = Path(blob_dir) if blob_dir else Path(self.path).parent / (Path(self.path).stem + "-blobs")
        with self.tx():
            if self._meta("hub_id") is None:
                self._set_meta("hub_id", uuid7())
                self._set_meta("bundle_key", secrets.token_hex(32))
            if self._meta("epoch") is None:  # a hub made before epochs gets its first one here
                self._set_meta("epoch", _new_epoch())
            self._handed_out = 0  # the highest hub_seq this process saw handed out (``_check_history``)
            self._check_history()
        self._write_mark()

    # -- an older copy of the database (copied back by hand, a lagging replica promoted) ---------
    @property
    def mark_path(self) -> Path:
        """A small file outside the database: this hub's id, epoch and the highest hub_seq it handed out.

        Beside an SQLite hub's file; for PostgreSQL in this machine's hub folder, named for the server and
        database. A database copied back from a backup by hand does not bring it back, so the copy is seen
        when the hub opens it (``_check_history``), as a tablet sees its own restore by its sent mark.
        """
        if self.backend == "sqlite":
            return Path(self.path).with_name(Path(self.path).name + ".mark")
        return _default_pg_blobs(self.path).with_suffix(".mark")

    def _read_mark(self) -> dict[str, Any]:
        try:
            mark = json.loads(self.mark_path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return {}  # no mark (a new hub, another machine) or a damaged one: only the early warning is lost
        return mark if isinstance(mark, dict) and mark.get("hub_id") == self._meta("hub_id") else {}

    def _write_mark(self) -> None:
        """Note this hub's epoch and the highest hub_seq it handed out (after the commit that handed it out)."""
        with self.lock:
            mark = self._read_mark()
            epoch = str(self._meta("epoch"))
            held = int(mark.get("hub_seq", 0)) if mark.get("epoch") == epoch else 0
            top = max(held, self._handed_out, self._top())
            body = {"hub_id": self._meta("hub_id"), "epoch": epoch, "hub_seq": top}
        try:
            self.mark_path.parent.mkdir(parents=True, exist_ok=True)
            write_atomic(self.mark_path, json.dumps(body).encode())
        except OSError:
            pass  # a read-only folder loses only the early warning; the tablets' holdings check still holds

    def _top(self) -> int:
        """The highest hub_seq in the log (0 when it is empty)."""
        return int(self.db.execute("SELECT coalesce(max(hub_seq), 0) FROM hub_log").fetchone()[0])

    def _check_history(self) -> None:
        """Begin a new epoch when the database holds fewer hub_seqs than this hub handed out in this epoch.

        Inside a write transaction. The mark (or this process) says hub_seq N was handed out, and with it the
        acknowledgement of the ops pushed then; a database whose log stops below N under the same epoch is an
        older copy: copied back from a backup by hand (not with ``bracewalk hub restore``, which begins a new
        epoch itself) or a replica promoted before it had caught up. Its acknowledgements and hub_seq numbers
        past that point are gone, so it is given a new history, as a restore is: each tablet forgets its hub
        cursors, pushes what the hub lacks and pulls from the start (sync.md 3.3). Recorded in the audit log.
        """
        top = self._top()
        mark = self._read_mark()
        same_epoch = mark.get("epoch") == self._meta("epoch")
        gave = max(self._handed_out, int(mark.get("hub_seq", 0)) if same_epoch else 0)
        if top < gave:
            epoch = _new_epoch()
            self._set_meta("epoch", epoch)
            self._audit(
                None,
                "epoch",
                f"new history {epoch[:8]}: the database holds hub_seq up to {top}, but this hub had handed out "
                f"{gave}: it is an older copy (copied back by hand, or a replica behind); tablets send again what "
                "it lacks",
            )
        self._handed_out = top

    # -- schema and bookkeeping ----------------------------------------------------------------
    def _migrate(self) -> None:
        self.db.execute("CREATE TABLE IF NOT EXISTS hub_meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)")
        row = self.db.execute("SELECT value FROM hub_meta WHERE key='hub_schema'").fetchone()
        current = int(row[0]) if row else 0
        for number in sorted(HUB_MIGRATIONS):
            if number <= current:
                continue
            with transaction(self.db):
                for statement in HUB_MIGRATIONS[number]:
                    self.db.execute(statement)
                self.db.execute("INSERT OR REPLACE INTO hub_meta VALUES ('hub_schema', ?)", [str(number)])

    @contextmanager
    def tx(self) -> Iterator[sqlite_utils.Database]:
        """One write transaction, serialised with every other use of the connection."""
        with self.lock, transaction(self.db) as db:
            yield db

    def _meta(self, key: str) -> str | None:
        row = self.db.execute("SELECT value FROM hub_meta WHERE key=?", [key]).fetchone()
        return str(row[0]) if row else None

    def _set_meta(self, key: str, value: str) -> None:
        self.db.execute("INSERT OR REPLACE INTO hub_meta VALUES (?, ?)", [key, value])

    def _audit(self, device_id: str | None, event: str, detail: str) -> None:
        self.db.execute(
            "INSERT INTO hub_audit (at_ms, device_id, event, detail) VALUES (?, ?, ?, ?)",
            [self.clock_ms(), device_id, event, detail],
        )

    @property
    def hub_id(self) -> str:
        """The id of this hub."""
        return str(self._meta("hub_id"))

    @property
    def epoch(self) -> str:
        """The identity of this hub's history of ops and hub_seq numbers, random; a restore replaces it.

        A tablet keeps the epoch its cursors belong to: when the hub answers with another one, what the
        hub acknowledged or numbered before may be gone, so the tablet forgets its hub cursors (sync.md 3.3).
        """
        with self.lock:
            return str(self._meta("epoch"))

    def begin_new_epoch(self, why: str) -> str:
        """Give this hub a new random epoch (after a restore from a backup); recorded in the audit log."""
        with self.tx():
            epoch = _new_epoch()
            self._set_meta("epoch", epoch)
            self._audit(None, "epoch", f"new history {epoch[:8]}: {why}")
        return epoch

    @property
    def bundle_key(self) -> str:
        """The firm's file-bundle key, made at random by this hub and handed to enrolled devices."""
        return str(self._meta("bundle_key"))

    @property
    def blob_dir(self) -> Path:
        """Folder where the hub's blobs live, named by SHA-256."""
        return self._blob_dir

    def hub_seq(self) -> int:
        """The last hub_seq handed out (0 when the log is empty)."""
        with self.lock:
            return self._top()

    def digest(self) -> str:
        """The same digest a tablet holding the same records gives (``bracewalk sync digest``)."""
        with self.lock:
            return projection_digest(self.db)

    def state_fingerprint(self) -> str:
        """A hash over every table the hub writes (tests: a refused request changes nothing)."""
        h = hashlib.sha256()
        tables = (*PROJECTIONS, "op", "field_stamp", "seen", "conflict", "blob", "hub_device", "hub_code")
        with self.lock:
            for table in (*tables, "hub_log", "hub_push", "hub_quarantine"):
                for row in self.db.execute(f"SELECT * FROM {table} ORDER BY 1, 2").fetchall():
                    h.update(repr((table, row)).encode())
        if self.backend == "postgresql":
            with self.lock:
                for row in self.db.execute("SELECT sha256 FROM hub_blob_data ORDER BY 1").fetchall():
                    h.update(repr(("hub_blob_data", row)).encode())
        for path in sorted(self.blob_dir.rglob("*")) if self.blob_dir.exists() else []:
            h.update(str(path.relative_to(self.blob_dir)).encode())
        return h.hexdigest()

    # -- devices and enrolment -----------------------------------------------------------------
    def new_code(self, name: str, person: str, role: str) -> str:
        """A one-time enrolment code for a device to be named ``name``, used by ``person`` in ``role``."""
        if role not in ROLES:
            msg = f"role {role!r}; allowed: {', '.join(ROLES)}"
            raise ValueError(msg)
        if not name.strip() or not person.strip():
            msg = "name and person must not be empty"
            raise ValueError(msg)
        raw = secrets.token_hex(8).upper()
        code = "-".join(raw[i : i + 4] for i in range(0, 16, 4))
        with self.tx():
            self.db.execute(
                "INSERT INTO hub_code VALUES (?, ?, ?, ?, ?, NULL)",
                [_code_hash(code), name.strip(), person.strip(), role, self.clock_ms()],
            )
            self._audit(None, "code", f"enrolment code made for {name} ({person}, {role})")
        return code

    def enroll(self, code: str, device_id: str, public_key: str) -> Device:
        """Use a one-time code: bind ``device_id`` and its public key to the code's name, person and role."""
        load_public(public_key)
        with self.tx():
            row = self.db.execute(
                "SELECT name, person, role, created_ms, used_by FROM hub_code WHERE code_sha256=?", [_code_hash(code)]
            ).fetchone()
            if row is None:
                raise HubRefused(403, self._withdrawn_words(code) or "unknown enrolment code")
            name, person, role, created, used_by = row
            if used_by is not None:
                raise HubRefused(403, "this enrolment code has already been used")
            if self.clock_ms() - created > CODE_LIFETIME_MS:
                expired = _utc_words(int(created) + CODE_LIFETIME_MS)
                msg = f"this enrolment code expired on {expired} (codes last 24 hours): ask the office for a new code"
                raise HubRefused(403, msg)
            if self.db.execute("SELECT 1 FROM hub_device WHERE device_id=?", [device_id]).fetchone():
                raise HubRefused(409, f"device {device_id} is already enrolled")
            self.db.execute(
                "INSERT INTO hub_device VALUES (?, ?, ?, ?, ?, ?, NULL, NULL)",
                [device_id, name, person, role, public_key, self.clock_ms()],
            )
            self.db.execute("UPDATE hub_code SET used_by=? WHERE code_sha256=?", [device_id, _code_hash(code)])
            self._audit(device_id, "enrolled", f"{name} ({person}, {role})")
        return self.device(device_id)

    def _withdrawn_words(self, code: str) -> str:
        """Why ``code`` cannot enrol when it was withdrawn at the office (when, by whom), else ''.

        Read from the audit row of this very code (its subject is the code's own hash), so the answer says
        nothing about any other code; a code never made reads as unknown.
        """
        row = self.db.execute(
            "SELECT at_ms, detail FROM hub_audit WHERE device_id=? AND event=? ORDER BY id DESC LIMIT 1",
            [code_subject(code_id_of(code)), CODE_WITHDRAWN],
        ).fetchone()
        if row is None:
            return ""
        by = str(row[1]).rpartition(WITHDRAWN_BY)[2] if WITHDRAWN_BY in str(row[1]) else ""
        who = f" by office user {by}" if by else ""
        return (
            f"this enrolment code was withdrawn at the office on {_utc_words(int(row[0]))}{who}: it cannot be "
            "used; ask the office for a new code"
        )

    def device(self, device_id: str) -> Device:
        """One enrolled device (KeyError if unknown)."""
        with self.lock:
            row = self.db.execute("SELECT * FROM hub_device WHERE device_id=?", [device_id]).fetchone()
        if row is None:
            msg = f"no device {device_id}"
            raise KeyError(msg)
        return Device(*row)

    def devices(self) -> list[Device]:
        """Every enrolled device, by name."""
        with self.lock:
            rows = self.db.execute("SELECT * FROM hub_device ORDER BY name").fetchall()
        return [Device(*r) for r in rows]

    def revoke(self, device_id: str, by: str = "") -> Device:
        """Refuse a device from now on; what it sent before stays, and the revocation is in the audit log.

        ``by``: the office user who revoked it (empty from the command line, which names the shell user).
        """
        self.device(device_id)
        with self.tx():
            self.db.execute(
                "UPDATE hub_device SET revoked_ms=? WHERE device_id=? AND revoked_ms IS NULL",
                [self.clock_ms(), device_id],
            )
            self._audit(device_id, "revoked", _by("device revoked", by))
        return self.device(device_id)

    def reinstate(self, device_id: str, by: str = "") -> Device:
        """Accept a revoked device again (a revocation made in error); its key and identity are unchanged.

        The changes it wrote meanwhile, refused while it was revoked, are accepted when it next syncs (they stay
        on the tablet until then). Recorded in the audit log with ``by``, the office user.
        """
        self.device(device_id)
        with self.tx():
            self.db.execute("UPDATE hub_device SET revoked_ms=NULL WHERE device_id=?", [device_id])
            self._audit(device_id, "reinstated", _by("device reinstated", by))
        return self.device(device_id)

    def audit(self, device_id: str) -> list[tuple[int, str, str]]:
        """A device's audit entries (at_ms, event, detail), oldest first."""
        with self.lock:
            rows = self.db.execute(
                "SELECT at_ms, event, detail FROM hub_audit WHERE device_id=? ORDER BY id", [device_id]
            ).fetchall()
        return [(int(r[0]), str(r[1]), str(r[2])) for r in rows]

    def active_device(self, device_id: str) -> Device:
        """An enrolled, not revoked device, or HubRefused(401/403)."""
        try:
            dev = self.device(device_id)
        except KeyError:
            raise HubRefused(401, "unknown device: enrol it at the office first") from None
        if dev.revoked_ms is not None:
            raise HubRefused(403, "this device has been revoked at the office")
        return dev

    # -- blobs ---------------------------------------------------------------------------------
    def blob_path(self, sha: str) -> Path:
        """Where a blob's bytes live on an SQLite hub (a PostgreSQL hub keeps them in the database)."""
        return self.blob_dir / sha[:2] / sha

    def has_blob(self, sha: str) -> bool:
        """True if the hub holds the blob's bytes."""
        if self.backend == "sqlite":
            return self.blob_path(sha).exists()
        with self.lock:
            return self.db.execute("SELECT 1 FROM hub_blob_data WHERE sha256=?", [sha]).fetchone() is not None

    def read_blob(self, sha: str) -> bytes | None:
        """A blob's bytes, or None if the hub does not hold it."""
        if self.backend == "sqlite":
            path = self.blob_path(sha)
            return path.read_bytes() if path.exists() else None
        with self.lock:
            row = self.db.execute("SELECT content FROM hub_blob_data WHERE sha256=?", [sha]).fetchone()
        return bytes(row[0]) if row else None

    def missing_blobs(self, shas: list[str]) -> list[str]:
        """The subset of ``shas`` the hub does not hold."""
        return [s for s in shas if not self.has_blob(s)]

    def put_blob(self, sha: str, content: bytes, device_id: str) -> bool:
        """Store a blob after checking its hash; True if it was new.

        SQLite hub: a file under the blob folder, written whole then renamed. PostgreSQL hub: a bytea
        row in the same database as the ops, so every hub worker sees it, the synchronous standby holds
        it before the tablet is told, and one pg_dump backs up ops and photos together.
        """
        if hashlib.sha256(content).hexdigest() != sha:
            raise HubRefused(400, f"blob bytes do not match their SHA-256 {sha[:12]}")
        if self.has_blob(sha):
            return False
        if self.backend == "sqlite":
            path = self.blob_path(sha)
            path.parent.mkdir(parents=True, exist_ok=True)
            tmp = path.with_suffix(f".{secrets.token_hex(4)}.part")
            tmp.write_bytes(content)
            tmp.replace(path)
        with self.tx():
            if self.backend == "postgresql":
                self.db.execute("INSERT OR IGNORE INTO hub_blob_data VALUES (?, ?)", [sha, content])
            self.db.execute(
                "INSERT OR REPLACE INTO blob VALUES (?, ?, ?, 1)", [sha, len(content), "application/octet-stream"]
            )
            self._audit(device_id, "blob", sha)
        return True

    # -- push ----------------------------------------------------------------------------------
    def push(self, device_id: str, bundle_id: str, body_sha256: str, ops: list[tuple[Op, str]]) -> PushAnswer:
        """Merge a pushed bundle of signed ops; idempotent by bundle id.

        Every op must verify against its origin device's key, or the whole push is refused and nothing
        changes. Ops the rules refuse are quarantined and listed in the answer; the rest are merged with
        the tablet's merge (``storage.oplog``) and given hub_seq numbers in commit order.
        """
        self.active_device(device_id)
        with self.lock:
            done = self.db.execute(
                "SELECT device_id, body_sha256, answer FROM hub_push WHERE bundle_id=?", [bundle_id]
            ).fetchone()
            if done is not None:
                if (done[0], done[1]) != (device_id, body_sha256):
                    raise HubRefused(409, f"bundle {bundle_id} was already pushed with other content")
                return replace(PushAnswer(**json.loads(done[2])), epoch=self.epoch)
            newer = next((op for op, _ in ops if op.schema_version > SCHEMA_VERSION), None)
            if newer is not None:  # its fields may be ones this hub does not know: held on the tablet, not judged
                raise HubRefused(
                    409,
                    f"op {newer.origin[:8]}:{newer.seq} is written by a newer bracewalk (record schema "
                    f"{newer.schema_version}; this hub knows {SCHEMA_VERSION}): update the office hub; nothing changed",
                )
            keys = self._verify_signatures(ops)
            return replace(self._merge(device_id, bundle_id, body_sha256, ops, keys), epoch=self.epoch)

    def _verify_signatures(self, ops: list[tuple[Op, str]]) -> dict[str, Device]:
        origins: dict[str, Device] = {}
        for op, sig in ops:
            if op.origin not in origins:
                try:
                    origins[op.origin] = self.device(op.origin)
                except KeyError:
                    raise HubRefused(403, f"op {op.origin[:8]}:{op.seq} comes from a device never enrolled") from None
            try:
                verify_op(load_public(origins[op.origin].public_key), op, sig)
            except SignatureError as exc:
                raise HubRefused(403, f"{exc}: refused whole, nothing changed") from exc
        return origins

    def _context(self, op: Op, origin: Device, batch: ProjectionBatch) -> rules.Context:
        """What the rules need, read through the push's batch (rows merged earlier in this push count)."""
        stored_hash = None
        current = (0, 0)
        last = None
        if op.kind == "insert":
            stored_hash = batch.load(op.entity, op.record_id)[1]
        if op.kind == "status":
            batch.flush()  # the status history below is read from the table
            data = batch.load("deficiency", op.record_id)[0] or {}
            current = (int(data.get("cycle", 0)), int(data.get("stage", 0)))
            events = self.db.execute("SELECT data FROM deficiency_event WHERE id LIKE ?", [f"{op.origin}:%"]).fetchall()
            mine = [json.loads(e[0]) for e in events]
            mine = [(int(e["cycle"]), int(e["stage"])) for e in mine if e.get("deficiency_id") == op.record_id]
            last = max(mine) if mine else None
        return rules.Context(
            origin_role=origin.role,
            origin_revoked=origin.revoked_ms is not None,
            hub_now_ms=self.clock_ms(),
            stored_hash=stored_hash,
            current_status=current,
            origin_last_status=last,
        )

    def _merge(
        self, device_id: str, bundle_id: str, body_sha256: str, ops: list[tuple[Op, str]], origins: dict[str, Device]
    ) -> PushAnswer:
        answer = PushAnswer()
        with transaction(self.db):
            # checked again under the ingest lock: another hub worker may have taken this bundle meanwhile
            done = self.db.execute(
                "SELECT device_id, body_sha256, answer FROM hub_push WHERE bundle_id=?", [bundle_id]
            ).fetchone()
            if done is not None:
                if (done[0], done[1]) != (device_id, body_sha256):
                    raise HubRefused(409, f"bundle {bundle_id} was already pushed with other content")
                return PushAnswer(**json.loads(done[2]))
            self._check_history()  # a database swapped under the running hub is caught before it numbers anything
            batch = ProjectionBatch(self.db)
            batch.prefetch([op for op, _ in ops])  # the rows, stamps and held ops the merge reads, up front
            for op, sig in ops:
                stored = op.stored()
                held = batch.held_op(op.origin, op.seq)  # the log as the batch sees it (ops added so far count)
                if held is not None:
                    reason = None if held == stored else "integrity: this change number is held with other content"
                else:
                    reason = rules.judge(op, self._context(op, origins[op.origin], batch))
                if reason:
                    self._quarantine(op, sig, reason, device_id)
                    answer.rejected.append({"origin": op.origin, "seq": op.seq, "reason": reason})
                    continue
                if insert_op(self.db, op, batch, stored):
                    apply_op(self.db, op, batch=batch)
                    self.db.execute("INSERT INTO hub_log (origin, seq, sig) VALUES (?, ?, ?)", [op.origin, op.seq, sig])
                    self.db.execute("DELETE FROM hub_quarantine WHERE origin=? AND seq=?", [op.origin, op.seq])
                answer.accepted[op.origin] = max(answer.accepted.get(op.origin, 0), op.seq)
            batch.flush()
            answer.hub_seq_after = self._top()
            answer.seen = dict(self.db.execute("SELECT origin, seq FROM seen").fetchall())
            self.db.execute(
                "INSERT INTO hub_push VALUES (?, ?, ?, ?, ?)",
                [
                    bundle_id,
                    device_id,
                    body_sha256,
                    json.dumps({k: v for k, v in answer.__dict__.items() if k != "epoch"}),
                    self.clock_ms(),
                ],
            )
            self.db.execute("UPDATE hub_device SET last_sync_ms=? WHERE device_id=?", [self.clock_ms(), device_id])
            self._audit(device_id, "push", f"{bundle_id}: {len(ops)} ops, {len(answer.rejected)} quarantined")
        self._handed_out = max(self._handed_out, answer.hub_seq_after)  # committed: never a rolled-back number
        self._write_mark()  # after the commit, before the answer leaves: what it acknowledges is in the mark
        return answer

    def _quarantine(self, op: Op, sig: str, reason: str, device_id: str) -> None:
        self.db.execute(
            "INSERT OR REPLACE INTO hub_quarantine VALUES (?, ?, ?, ?, ?, ?, ?)",
            [op.origin, op.seq, canonical(op.row()), sig, reason, device_id, self.clock_ms()],
        )

    def quarantine(self) -> list[dict[str, Any]]:
        """Ops the hub refused, with the reason and who pushed them."""
        with self.lock:
            cur = self.db.execute("SELECT origin, seq, op, reason, pushed_by, at_ms FROM hub_quarantine ORDER BY at_ms")
            cols = [c[0] for c in cur.description]
            return [dict(zip(cols, r, strict=True)) for r in cur.fetchall()]

    # -- pull and snapshot ---------------------------------------------------------------------
    def pull(self, cursor: int, limit: int) -> dict[str, Any]:
        """Ops with hub_seq > cursor, oldest first, at most ``limit``; with the next cursor and whether more wait."""
        top = self.hub_seq()
        if cursor < 0 or cursor > top:
            raise HubRefused(400, f"cursor {cursor} is outside 0..{top}")
        if not 1 <= limit <= MAX_PULL_LIMIT:
            raise HubRefused(400, f"limit {limit}; allowed 1..{MAX_PULL_LIMIT}")
        cols = ", ".join(f"o.{k}" for k in OP_KEYS)
        with self.lock:
            rows = self.db.execute(
                f"SELECT l.hub_seq, l.sig, {cols} FROM hub_log l JOIN op o ON o.origin = l.origin AND o.seq = l.seq "
                "WHERE l.hub_seq > ? ORDER BY l.hub_seq LIMIT ?",
                [cursor, limit],
            ).fetchall()
            seen = dict(self.db.execute("SELECT origin, seq FROM seen").fetchall())
            top = self._top()
            epoch = self.epoch
        ops = []
        for r in rows:
            op = dict(zip(OP_KEYS, r[2:], strict=True))
            op["payload"], op["base"] = json.loads(op["payload"]), json.loads(op["base"])
            ops.append({"hub_seq": r[0], "sig": r[1], "op": op})
        next_cursor = rows[-1][0] if rows else cursor
        body = canonical([o["op"] for o in ops]).encode()
        return {
            "ops": ops,
            "next_cursor": next_cursor,
            "more": next_cursor < top,
            "ops_sha256": hashlib.sha256(body).hexdigest(),
            "seen": seen,
            "epoch": epoch,
        }

    def snapshot(self) -> dict[str, Any]:
        """Projection rows, field stamps and the hub_seq they correspond to (bootstraps a new tablet)."""
        with self.lock, transaction(self.db):
            return {
                "hub_seq": self._top(),
                "schema_version": SCHEMA_VERSION,
                "projections": {
                    t: [
                        list(r) for r in self.db.execute(f"SELECT id, site_id, data, content_hash FROM {t} ORDER BY id")
                    ]
                    for t in PROJECTIONS
                },
                "field_stamps": [list(r) for r in self.db.execute("SELECT * FROM field_stamp ORDER BY 1, 2, 3")],
                "digest": projection_digest(self.db),
            }

    def projections(self) -> dict[str, list[tuple[str, str]]]:
        """The live projections (id, data) per table."""
        with self.lock:
            return {t: self.db.execute(f"SELECT id, data FROM {t} ORDER BY id").fetchall() for t in PROJECTIONS}

    def rebuild_projections(self) -> dict[str, list[tuple[str, str]]]:
        """Replay the hub's op log into fresh projections (invariant I13: they equal the live ones)."""
        scratch = connect(":memory:")
        with self.lock, transaction(scratch):
            for op in all_ops(self.db):
                apply_op(scratch, op, record_conflicts=False)
        return {t: scratch.execute(f"SELECT id, data FROM {t} ORDER BY id").fetchall() for t in PROJECTIONS}

    def close(self) -> None:
        """Close the connection."""
        self.db.conn.close()


def is_postgres_url(text: str) -> bool:
    """True for a ``postgresql://`` (or ``postgres://``) URL."""
    return text.startswith(("postgresql://", "postgres://"))


def _default_pg_blobs(url: str) -> Path:
    base = Path(os.environ.get("BRACEWALK_HOME", Path.home() / ".bracewalk"))
    where = url.rsplit("@", 1)[-1]  # host, port and database name; never the password
    return base / "hub-blobs" / hashlib.sha256(where.encode()).hexdigest()[:16]


def _new_epoch() -> str:
    return secrets.token_hex(16)


def _by(what: str, user: str) -> str:
    """An audit detail naming the office user who did it, when one did."""
    return f"{what} by office user {user}" if user else what


def _code_hash(code: str) -> str:
    return hashlib.sha256(code.strip().upper().encode()).hexdigest()


def code_id_of(code: str) -> str:
    """How the register names a code without showing it: the first 16 hex digits of its SHA-256."""
    return _code_hash(code)[:16]


def code_subject(code_id: str) -> str:
    """The ``hub_audit.device_id`` of a code's audit rows (made by, withdrawn): 'code <id>'."""
    return f"code {code_id}"


def withdrawn_detail(name: str, person: str, role: str, by: str) -> str:
    """A CODE_WITHDRAWN audit row's detail; ``HubStore.enroll`` reads the office user back after WITHDRAWN_BY."""
    return f"enrolment code for {name} ({person}, {role}){WITHDRAWN_BY}{by}"


def _utc_words(ms: int) -> str:
    """A time as the register prints it ('2026-12-05 09:12 UTC')."""
    return time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime(ms / 1000))
