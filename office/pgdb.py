"""The hub on PostgreSQL (psycopg 3): the same tables as SQLite, numbered migrations, one adapter.

The adapter is a connection that speaks the few SQLite forms the shared merge (``storage.oplog``)
and the hub store write.

One merge implementation serves the tablet and both hub backends: this module gives it the small
database-access interface it uses (``execute(sql, params)`` returning a cursor with ``fetchone``,
``fetchall`` and ``description``), translating exactly these forms:

- ``?`` placeholders become ``%s``;
- ``INSERT OR REPLACE INTO t ...`` becomes ``INSERT ... ON CONFLICT (primary key) DO UPDATE``;
- ``INSERT OR IGNORE INTO t ...`` becomes ``INSERT ... ON CONFLICT DO NOTHING``;
- ``BEGIN IMMEDIATE`` becomes ``BEGIN`` plus a transaction-scoped advisory lock, so ingest
  transactions run one at a time and hub_seq is handed out in commit order (no cursor holes,
  sync.md 4, even with several hub workers on one database).

Several database addresses (a primary and its standbys) may be given: libpq tries them in turn and
keeps the one that accepts writes (``target_session_attrs=read-write``). A lost connection is never
retried inside a request: the request fails with ``DatabaseUnavailable`` (HTTP 503, nothing
acknowledged), and the next request connects afresh, to whichever address then accepts writes. The
tablet retries; pushes are idempotent by bundle id, so an ambiguous commit is never applied twice.
"""

from __future__ import annotations

import re
from functools import lru_cache
from typing import Any

import psycopg
from psycopg.conninfo import conninfo_to_dict, make_conninfo

INGEST_LOCK = 8470_0001
CONNECT_TIMEOUT_S = 5
# PostgreSQL's warning when a commit was cancelled while waiting for the synchronous standby: the
# commit is then local only, so the hub must not acknowledge it.
_SYNC_CANCEL = "synchronous replication"


class DatabaseUnavailable(Exception):
    """The hub's database cannot be reached or lost the connection; nothing was acknowledged."""


# table -> (primary key columns, all columns in order); what INSERT OR REPLACE needs to know
TABLES: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    "meta": (("key",), ("key", "value")),
    "op": (
        ("origin", "seq"),
        ("origin", "seq", "hlc", "entity", "record_id", "kind", "payload", "base", "schema_version", "wall_ms"),
    ),
    "field_stamp": (("entity", "record_id", "field"), ("entity", "record_id", "field", "hlc", "origin")),
    "seen": (("origin",), ("origin", "seq")),
    "peer_cursor": (("peer", "origin"), ("peer", "origin", "seq")),
    "blob": (("sha256",), ("sha256", "size", "mime", "present")),
    "hub_meta": (("key",), ("key", "value")),
    "hub_user": (("name",), ("name", "password_hash", "created_ms")),
    "hub_quarantine": (
        ("origin", "seq"),
        ("origin", "seq", "op", "sig", "reason", "pushed_by", "at_ms"),
    ),
}

PROJECTION_NAMES = (
    "site",
    "visit",
    "beam",
    "deficiency",
    "measurement",
    "photo",
    "issued_notice",
    "deficiency_event",
)

PG_MIGRATIONS: dict[int, list[str]] = {
    1: [
        "CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)",
        """CREATE TABLE IF NOT EXISTS op (
            origin TEXT NOT NULL, seq BIGINT NOT NULL, hlc BIGINT NOT NULL, entity TEXT NOT NULL,
            record_id TEXT NOT NULL, kind TEXT NOT NULL, payload TEXT NOT NULL, base TEXT NOT NULL,
            schema_version INTEGER NOT NULL, wall_ms BIGINT NOT NULL, PRIMARY KEY (origin, seq))""",
        """CREATE TABLE IF NOT EXISTS field_stamp (
            entity TEXT NOT NULL, record_id TEXT NOT NULL, field TEXT NOT NULL, hlc BIGINT NOT NULL,
            origin TEXT NOT NULL, PRIMARY KEY (entity, record_id, field))""",
        "CREATE TABLE IF NOT EXISTS seen (origin TEXT PRIMARY KEY, seq BIGINT NOT NULL)",
        "CREATE TABLE IF NOT EXISTS peer_cursor (peer TEXT, origin TEXT, seq BIGINT, PRIMARY KEY (peer, origin))",
        """CREATE TABLE IF NOT EXISTS conflict (
            id BIGSERIAL PRIMARY KEY, entity TEXT, record_id TEXT, field TEXT, winner_origin TEXT,
            winner_seq BIGINT, winner_value TEXT, loser_origin TEXT, loser_seq BIGINT, loser_value TEXT,
            detected_at TEXT, resolved_by TEXT)""",
        "CREATE TABLE IF NOT EXISTS blob (sha256 TEXT PRIMARY KEY, size BIGINT, mime TEXT, present INTEGER)",
        *[
            f"CREATE TABLE IF NOT EXISTS {name} (id TEXT PRIMARY KEY, site_id TEXT, data TEXT NOT NULL, "
            "content_hash TEXT)"
            for name in PROJECTION_NAMES
        ],
        *[f"CREATE INDEX IF NOT EXISTS {name}_site ON {name}(site_id)" for name in PROJECTION_NAMES],
        "CREATE INDEX IF NOT EXISTS op_hlc ON op(hlc)",
        "CREATE TABLE IF NOT EXISTS hub_meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)",
        """CREATE TABLE IF NOT EXISTS hub_device (
            device_id TEXT PRIMARY KEY, name TEXT NOT NULL, person TEXT NOT NULL, role TEXT NOT NULL,
            public_key TEXT NOT NULL, enrolled_ms BIGINT NOT NULL, revoked_ms BIGINT, last_sync_ms BIGINT)""",
        """CREATE TABLE IF NOT EXISTS hub_code (
            code_sha256 TEXT PRIMARY KEY, name TEXT NOT NULL, person TEXT NOT NULL, role TEXT NOT NULL,
            created_ms BIGINT NOT NULL, used_by TEXT)""",
        """CREATE TABLE IF NOT EXISTS hub_log (
            hub_seq BIGSERIAL PRIMARY KEY, origin TEXT NOT NULL, seq BIGINT NOT NULL, sig TEXT NOT NULL,
            UNIQUE (origin, seq))""",
        """CREATE TABLE IF NOT EXISTS hub_push (
            bundle_id TEXT PRIMARY KEY, device_id TEXT NOT NULL, body_sha256 TEXT NOT NULL, answer TEXT NOT NULL,
            at_ms BIGINT NOT NULL)""",
        """CREATE TABLE IF NOT EXISTS hub_quarantine (
            origin TEXT NOT NULL, seq BIGINT NOT NULL, op TEXT NOT NULL, sig TEXT NOT NULL, reason TEXT NOT NULL,
            pushed_by TEXT NOT NULL, at_ms BIGINT NOT NULL, PRIMARY KEY (origin, seq))""",
        """CREATE TABLE IF NOT EXISTS hub_audit (
            id BIGSERIAL PRIMARY KEY, at_ms BIGINT NOT NULL, device_id TEXT, event TEXT NOT NULL,
            detail TEXT NOT NULL)""",
    ],
    2: [
        "CREATE TABLE IF NOT EXISTS hub_user (name TEXT PRIMARY KEY, password_hash TEXT NOT NULL, created_ms BIGINT)",
        "CREATE TABLE IF NOT EXISTS hub_session (token_sha256 TEXT PRIMARY KEY, name TEXT NOT NULL, expires_ms BIGINT)",
    ],
    3: [  # blob bytes in the database: every hub worker sees them, and the standby and backups hold them
        "CREATE TABLE IF NOT EXISTS hub_blob_data (sha256 TEXT PRIMARY KEY, content BYTEA NOT NULL)",
    ],
    # 4: a firm's verified and corrected table rows (storage/db.py migration 3; issue 16 item 6)
    4: [
        "CREATE TABLE IF NOT EXISTS table_row "
        "(id TEXT PRIMARY KEY, site_id TEXT, data TEXT NOT NULL, content_hash TEXT)",
        "CREATE INDEX IF NOT EXISTS table_row_site ON table_row(site_id)",
    ],
    # 5: failed office log-ins, by name, for the register's lock-out (office/registry.py LOGIN_FAILURES)
    5: [
        "CREATE TABLE IF NOT EXISTS hub_login_failure (name TEXT NOT NULL, at_ms BIGINT NOT NULL)",
        "CREATE INDEX IF NOT EXISTS hub_login_failure_name ON hub_login_failure(name, at_ms)",
    ],
}

_REPLACE = re.compile(r"^\s*INSERT OR REPLACE INTO (\w+)\s*(\(([^)]*)\))?\s*VALUES", re.IGNORECASE | re.DOTALL)
_IGNORE = re.compile(r"^\s*INSERT OR IGNORE INTO", re.IGNORECASE)


@lru_cache(maxsize=512)
def translate(sql: str) -> str:
    """The PostgreSQL form of one statement the shared code writes for SQLite."""
    out = sql.replace("%", "%%").replace("?", "%s")
    m = _REPLACE.match(out)
    if m:
        table = m.group(1)
        if table not in TABLES:
            msg = f"INSERT OR REPLACE on {table!r}: its primary key is not listed in office/pgdb.py"
            raise ValueError(msg)
        pk, cols = TABLES[table]
        named = tuple(c.strip() for c in m.group(3).split(",")) if m.group(3) else cols
        head = f"INSERT INTO {table} ({', '.join(named)}) VALUES"
        updates = ", ".join(f"{c} = excluded.{c}" for c in named if c not in pk)
        action = f"DO UPDATE SET {updates}" if updates else "DO NOTHING"
        return head + out[m.end() :] + f" ON CONFLICT ({', '.join(pk)}) {action}"
    if _IGNORE.match(out):
        return _IGNORE.sub("INSERT INTO", out, count=1) + " ON CONFLICT DO NOTHING"
    return out


def conninfo(addresses: str | list[str]) -> str:
    """One libpq URL from one URL or several (same database, user and options; the hosts differ).

    With more than one host the URL asks for the server that accepts writes
    (``target_session_attrs=read-write``), so after a standby is promoted the hub follows it.
    """
    urls = [addresses] if isinstance(addresses, str) else list(addresses)
    urls = [u for part in urls for u in part.split(" ") if u]
    if not urls:
        msg = "no database address given"
        raise ValueError(msg)
    parsed = [conninfo_to_dict(u) for u in urls]
    hosts = [h for p in parsed for h in str(p.get("host", "")).split(",")]
    ports = [q for p in parsed for q in str(p.get("port", "5432")).split(",")]
    base = dict(parsed[0])
    for other in parsed[1:]:
        differs = {k for k in ("dbname", "user") if other.get(k) != base.get(k)}
        if differs:
            msg = f"database addresses differ in {', '.join(sorted(differs))}: {urls}"
            raise ValueError(msg)
    base["host"], base["port"] = ",".join(hosts), ",".join(p if p else "5432" for p in ports)
    if len(hosts) > 1:
        base.setdefault("target_session_attrs", "read-write")
    base.setdefault("connect_timeout", str(CONNECT_TIMEOUT_S))
    return make_conninfo("", **base)


class PgDatabase:
    """A psycopg connection with the ``execute`` the shared storage code calls."""

    def __init__(self, url: str | list[str]):
        """Connect (autocommit: transactions are opened explicitly by ``storage.db.transaction``)."""
        self.url = conninfo(url)
        self.conn: psycopg.Connection[Any] = self._connect()
        self._sync_cancelled = False

    def _connect(self) -> psycopg.Connection[Any]:
        try:
            conn = psycopg.connect(self.url, autocommit=True)
        except psycopg.OperationalError as exc:
            msg = f"no database that accepts writes: {str(exc).splitlines()[0]}"
            raise DatabaseUnavailable(msg) from exc
        conn.add_notice_handler(self._notice)
        return conn

    def _notice(self, diag: psycopg.errors.Diagnostic) -> None:
        if _SYNC_CANCEL in (diag.message_primary or ""):
            self._sync_cancelled = True

    @property
    def in_transaction(self) -> bool:
        """Whether a transaction is open on the connection (``storage.db.transaction`` asks on errors)."""
        return self.conn.info.transaction_status != psycopg.pq.TransactionStatus.IDLE

    def execute(self, sql: str, params: Any = None) -> Any:
        """Run one statement (translated) and return the cursor; DatabaseUnavailable if the server is gone."""
        word = sql.strip().upper()
        if self.conn.broken or self.conn.closed:
            if word == "ROLLBACK":  # the server dropped the transaction with the connection
                return None
            if word == "COMMIT":
                msg = "the database connection was lost before the commit; not acknowledged"
                raise DatabaseUnavailable(msg)
            self.conn = self._connect()
        try:
            if word == "BEGIN IMMEDIATE":
                self._sync_cancelled = False
                cur = self.conn.execute("BEGIN")
                self.conn.execute("SELECT pg_advisory_xact_lock(%s)", [INGEST_LOCK])
                return cur
            cur = self.conn.execute(translate(sql), params)
        except psycopg.OperationalError as exc:
            if not self.conn.broken:
                raise
            msg = f"the database connection was lost: {str(exc).splitlines()[0]}"
            raise DatabaseUnavailable(msg) from exc
        if word == "COMMIT" and self._sync_cancelled:
            msg = "the commit did not reach the synchronous standby; not acknowledged"
            raise DatabaseUnavailable(msg)
        return cur


def migrate(db: PgDatabase) -> int:
    """Apply the numbered PostgreSQL migrations above the stored one, each in one transaction."""
    with db.conn.transaction():
        db.conn.execute("SELECT pg_advisory_xact_lock(%s)", [INGEST_LOCK])
        db.conn.execute("CREATE TABLE IF NOT EXISTS hub_meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)")
        row = db.conn.execute("SELECT value FROM hub_meta WHERE key='hub_schema'").fetchone()
        current = int(row[0]) if row else 0
        for number in sorted(PG_MIGRATIONS):
            if number <= current:
                continue
            for statement in PG_MIGRATIONS[number]:
                db.conn.execute(statement)
            db.conn.execute(
                "INSERT INTO hub_meta VALUES ('hub_schema', %s) ON CONFLICT (key) DO UPDATE SET value = excluded.value",
                [str(number)],
            )
    return max(PG_MIGRATIONS)


def _binary_collation() -> None:
    """Text sorts by code point, as in SQLite, so ``ORDER BY id`` and the digest agree across backends."""
    for number, statements in PG_MIGRATIONS.items():
        PG_MIGRATIONS[number] = [s.replace("TEXT", 'TEXT COLLATE "C"') for s in statements]


_binary_collation()
