"""Open a bracewalk database: pragmas, numbered migrations that can run twice safely."""

from __future__ import annotations

import sqlite3
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import NamedTuple

import sqlite_utils

SCHEMA_VERSION = 3  # 2: record fields added after 0.6.0 (re-review, photo marks, memory acknowledgement);
# 3: a beam's system may be null, not recorded (storage still writes "single" with system_recorded false); a site's
# engineer of record
BUSY_TIMEOUT_S = 10.0  # a save waits this long for a sync's batch (each takes well under a second)


class StorageError(Exception):
    """A fault of the database file or its disk, in one line a person can act on."""


class StoreBusy(StorageError):
    """Another process (a sync) holds the write lock longer than ``BUSY_TIMEOUT_S``; nothing was saved."""


class StoreUnavailable(StorageError):
    """The database cannot be opened or written: not a database, damaged, read-only, or the disk is full."""


def storage_error(exc: sqlite3.Error, path: str) -> StorageError:
    """The SQLite error as a StorageError naming the file and what to do."""
    text = str(exc)
    if "locked" in text or "busy" in text:
        return StoreBusy(f"{path}: the database is busy (a sync is in progress); nothing was saved, try again")
    if "full" in text or "disk I/O" in text:
        return StoreUnavailable(f"{path}: the disk could not be written ({text}: full or failing); nothing was saved")
    if "readonly" in text or "read-only" in text:
        return StoreUnavailable(f"{path}: the database is read-only; nothing was saved")
    if "not a database" in text or "malformed" in text:
        return StoreUnavailable(f"{path}: not a bracewalk database, or it is damaged ({text})")
    return StoreUnavailable(f"{path}: database error: {text}")


SET_ENTITIES = ("site", "visit", "beam", "deficiency", "table_row")  # table_row: core/overrides.py
INSERT_ENTITIES = ("measurement", "photo", "issued_notice")
PROJECTIONS = (*SET_ENTITIES, *INSERT_ENTITIES, "deficiency_event")


class AddColumn(NamedTuple):
    """``ALTER TABLE table ADD COLUMN column declared``, skipped when the column is there (ALTER is not idempotent)."""

    table: str
    column: str
    declared: str


MIGRATIONS: dict[int, list[str | AddColumn]] = {
    1: [
        "CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)",
        """CREATE TABLE IF NOT EXISTS op (
            origin TEXT NOT NULL, seq INTEGER NOT NULL, hlc INTEGER NOT NULL, entity TEXT NOT NULL,
            record_id TEXT NOT NULL, kind TEXT NOT NULL, payload TEXT NOT NULL, base TEXT NOT NULL,
            schema_version INTEGER NOT NULL, wall_ms INTEGER NOT NULL, PRIMARY KEY (origin, seq)
        ) WITHOUT ROWID""",
        """CREATE TABLE IF NOT EXISTS field_stamp (
            entity TEXT NOT NULL, record_id TEXT NOT NULL, field TEXT NOT NULL, hlc INTEGER NOT NULL,
            origin TEXT NOT NULL, PRIMARY KEY (entity, record_id, field)
        ) WITHOUT ROWID""",
        "CREATE TABLE IF NOT EXISTS seen (origin TEXT PRIMARY KEY, seq INTEGER NOT NULL)",
        "CREATE TABLE IF NOT EXISTS peer_cursor (peer TEXT, origin TEXT, seq INTEGER, PRIMARY KEY (peer, origin))",
        """CREATE TABLE IF NOT EXISTS conflict (
            id INTEGER PRIMARY KEY AUTOINCREMENT, entity TEXT, record_id TEXT, field TEXT,
            winner_origin TEXT, winner_seq INTEGER, winner_value TEXT, loser_origin TEXT, loser_seq INTEGER,
            loser_value TEXT, detected_at TEXT, resolved_by TEXT
        )""",
        """CREATE TABLE IF NOT EXISTS bundle_log (
            id INTEGER PRIMARY KEY AUTOINCREMENT, at TEXT, file TEXT, bundle_sha256 TEXT, outcome TEXT,
            reason TEXT, ops INTEGER, applied INTEGER
        )""",
        "CREATE TABLE IF NOT EXISTS held_bundle (bundle_sha256 TEXT PRIMARY KEY, schema_version INTEGER, path TEXT)",
        "CREATE TABLE IF NOT EXISTS blob (sha256 TEXT PRIMARY KEY, size INTEGER, mime TEXT, present INTEGER)",
        *[
            f"""CREATE TABLE IF NOT EXISTS {name} (
                id TEXT PRIMARY KEY, site_id TEXT, data TEXT NOT NULL, content_hash TEXT
            )"""
            for name in PROJECTIONS
        ],
        *[f"CREATE INDEX IF NOT EXISTS {name}_site ON {name}(site_id)" for name in PROJECTIONS],
        "CREATE INDEX IF NOT EXISTS op_hlc ON op(hlc)",
    ],
    # 2: each beam's recheck result, a local derived copy (storage/results.py); never synced
    2: [
        """CREATE TABLE IF NOT EXISTS beam_result (
            beam_id TEXT PRIMARY KEY, site_id TEXT, input_hash TEXT NOT NULL, status TEXT NOT NULL,
            governing TEXT NOT NULL, utilisation REAL, findings TEXT NOT NULL, rows_used TEXT NOT NULL
        )""",
        "CREATE INDEX IF NOT EXISTS beam_result_site ON beam_result(site_id)",
    ],
    # 3: a firm's verifications and corrections of table rows (synced like any record)
    3: [
        "CREATE TABLE IF NOT EXISTS table_row "
        "(id TEXT PRIMARY KEY, site_id TEXT, data TEXT NOT NULL, content_hash TEXT)",
        "CREATE INDEX IF NOT EXISTS table_row_site ON table_row(site_id)",
        # a stored result is marked stale (input_hash '') when what it depends on changes, whoever writes
        # (a save, an import, a replay): the beam, its site's design bases, any firm table record
        """CREATE TRIGGER IF NOT EXISTS beam_result_beam_new AFTER INSERT ON beam BEGIN
            UPDATE beam_result SET input_hash = '' WHERE beam_id = NEW.id; END""",
        """CREATE TRIGGER IF NOT EXISTS beam_result_beam_changed AFTER UPDATE ON beam BEGIN
            UPDATE beam_result SET input_hash = '' WHERE beam_id = NEW.id; END""",
        """CREATE TRIGGER IF NOT EXISTS beam_result_site_basis AFTER UPDATE ON site
            WHEN json_extract(OLD.data, '$.design_basis') IS NOT json_extract(NEW.data, '$.design_basis')
              OR json_extract(OLD.data, '$.load_bases') IS NOT json_extract(NEW.data, '$.load_bases')
            BEGIN UPDATE beam_result SET input_hash = '' WHERE site_id = NEW.id; END""",
        """CREATE TRIGGER IF NOT EXISTS beam_result_table_new AFTER INSERT ON table_row BEGIN
            UPDATE beam_result SET input_hash = ''; END""",
        """CREATE TRIGGER IF NOT EXISTS beam_result_table_changed AFTER UPDATE ON table_row BEGIN
            UPDATE beam_result SET input_hash = ''; END""",
        """CREATE TRIGGER IF NOT EXISTS beam_result_table_gone AFTER DELETE ON table_row BEGIN
            UPDATE beam_result SET input_hash = ''; END""",
    ],
    # 4: the site list read from the stored results alone (storage/results.py): each result carries its
    # beam's list fields, an index keeps list order, and every beam has a result row from its insert on
    # (status 'pending' until first rechecked), so a warm site open joins nothing and decodes no record;
    # ALTER TABLE is not idempotent, but the migration runs once, in one transaction
    4: [
        "ALTER TABLE beam_result ADD COLUMN mark TEXT NOT NULL DEFAULT ''",
        "ALTER TABLE beam_result ADD COLUMN level TEXT NOT NULL DEFAULT ''",
        "ALTER TABLE beam_result ADD COLUMN gridline TEXT NOT NULL DEFAULT ''",
        "ALTER TABLE beam_result ADD COLUMN archived INTEGER NOT NULL DEFAULT 0",
        "CREATE INDEX IF NOT EXISTS beam_result_list ON beam_result(site_id, archived, level, gridline, mark)",
        "CREATE INDEX IF NOT EXISTS beam_result_stale ON beam_result(site_id) WHERE input_hash = ''",
        "DROP TRIGGER IF EXISTS beam_result_beam_new",
        """CREATE TRIGGER beam_result_beam_new AFTER INSERT ON beam BEGIN
            INSERT OR IGNORE INTO beam_result (beam_id, site_id, input_hash, status, governing, findings, rows_used)
                VALUES (NEW.id, NEW.site_id, '', 'pending', '', '[]', '[]');
            UPDATE beam_result SET input_hash = '', site_id = NEW.site_id WHERE beam_id = NEW.id; END""",
        "INSERT OR IGNORE INTO beam_result (beam_id, site_id, input_hash, status, governing, findings, rows_used) "
        "SELECT id, site_id, '', 'pending', '', '[]', '[]' FROM beam",
        "UPDATE beam_result SET input_hash = ''",  # every result recomputed once, filling the list fields
    ],
    # 5: device identity and trust (storage/identity.py): op signatures, this device's key, the devices the
    # office hub lists with their public keys, and pulled ops whose signature did not verify
    5: [
        "CREATE TABLE IF NOT EXISTS op_sig (origin TEXT NOT NULL, seq INTEGER NOT NULL, sig TEXT NOT NULL, "
        "PRIMARY KEY (origin, seq)) WITHOUT ROWID",
        "CREATE TABLE IF NOT EXISTS device_key (key TEXT PRIMARY KEY, value TEXT NOT NULL)",
        "CREATE TABLE IF NOT EXISTS trusted_device (device_id TEXT PRIMARY KEY, public_key TEXT NOT NULL, "
        "name TEXT NOT NULL, revoked_ms INTEGER, at_ms INTEGER NOT NULL)",
        "CREATE TABLE IF NOT EXISTS pull_quarantine (origin TEXT NOT NULL, seq INTEGER NOT NULL, op TEXT NOT NULL, "
        "sig TEXT NOT NULL, reason TEXT NOT NULL, at_ms INTEGER NOT NULL, PRIMARY KEY (origin, seq))",
        # signatures received in a bundle from the op's own origin: that device's manifest signature covers the op,
        # so its own signature is checked only when the op is relayed onward (storage/bundle.py)
        "CREATE TABLE IF NOT EXISTS op_sig_unchecked (origin TEXT NOT NULL, seq INTEGER NOT NULL, "
        "PRIMARY KEY (origin, seq)) WITHOUT ROWID",
    ],
    # 6: the beam triggers write only what changes (a bulk import fires them for every row it writes): a
    # new beam's result row in one upsert instead of an insert and an update; a changed beam marks its
    # result stale only when its text or site changed and the result is not already stale (the key of a
    # result is the beam's text, its site's bases and the tables: storage/results.py input_hash), and a
    # beam moved to another site takes its result row with it (before, the row stayed under the old site,
    # so the new site's list and its refresh did not show the beam until the old site was opened)
    6: [
        "DROP TRIGGER IF EXISTS beam_result_beam_new",
        """CREATE TRIGGER beam_result_beam_new AFTER INSERT ON beam BEGIN
            INSERT INTO beam_result (beam_id, site_id, input_hash, status, governing, findings, rows_used)
                VALUES (NEW.id, NEW.site_id, '', 'pending', '', '[]', '[]')
                ON CONFLICT(beam_id) DO UPDATE SET input_hash = '', site_id = excluded.site_id; END""",
        "DROP TRIGGER IF EXISTS beam_result_beam_changed",
        """CREATE TRIGGER beam_result_beam_changed AFTER UPDATE ON beam
            WHEN OLD.data IS NOT NEW.data OR OLD.site_id IS NOT NEW.site_id BEGIN
            UPDATE beam_result SET input_hash = '', site_id = NEW.site_id
                WHERE beam_id = NEW.id AND (input_hash != '' OR site_id IS NOT NEW.site_id); END""",
    ],
    # 7: exporting never moves a peer's cursor (sync.md 3.7): cursors move on acknowledgement only (the hub's
    # answer, or the vector of a bundle coming back from that peer); what an export wrote is kept apart, for
    # the Sync screen's words. Cursors an export moved before this are marks of what was written, not
    # acknowledgements: they move across, and the next export sends again what no peer acknowledged (a file
    # that never arrived is then not lost)
    7: [
        "CREATE TABLE IF NOT EXISTS peer_written (peer TEXT NOT NULL, origin TEXT NOT NULL, seq INTEGER NOT NULL, "
        "PRIMARY KEY (peer, origin)) WITHOUT ROWID",
        "INSERT OR REPLACE INTO peer_written SELECT peer, origin, seq FROM peer_cursor WHERE peer <> 'hub'",
        "DELETE FROM peer_cursor WHERE peer <> 'hub'",
    ],
    # 8: the role the office hub enrolled each listed device for, so a bundle's status move is judged by the
    # hub's rule (storage.validate.reviewer_only) on a tablet too
    8: [
        "CREATE TABLE IF NOT EXISTS trusted_role (device_id TEXT PRIMARY KEY, role TEXT NOT NULL) WITHOUT ROWID",
    ],
    # 9: the table rows a stored result used are kept once per distinct set (storage/results.py): the beams of a
    # portfolio share a handful of sets (6 on 100k bench beams), and each result held its own copy, ~2.3 KB of
    # text (a 100k-beam portfolio recheck wrote ~230 MB of it). A result now names its set (rows_id; NULL: no
    # rows, as a new beam's placeholder row has); rows_used stays '[]' (the triggers write it; dropping the
    # column would mean rebuilding the table)
    9: [
        "CREATE TABLE IF NOT EXISTS rows_set (id INTEGER PRIMARY KEY, rows TEXT NOT NULL UNIQUE)",
        AddColumn("beam_result", "rows_id", "INTEGER"),
        "INSERT OR IGNORE INTO rows_set (rows) SELECT DISTINCT rows_used FROM beam_result WHERE rows_used <> '[]'",
        "UPDATE beam_result SET rows_id = (SELECT s.id FROM rows_set s WHERE s.rows = beam_result.rows_used), "
        "rows_used = '[]' WHERE rows_used <> '[]'",
    ],
}


def connect(path: str | Path) -> sqlite_utils.Database:
    """Open (creating if needed) a database in WAL mode with synchronous=FULL and migrate it.

    Raises StorageError (one line, naming the file) if it is not a database, damaged or read-only.
    """
    if str(path) != ":memory:" and Path(path).is_dir():
        msg = f"{path} is a folder, not a database file"
        raise StoreUnavailable(msg)
    try:
        conn = sqlite3.connect(str(path), isolation_level=None, check_same_thread=False, timeout=BUSY_TIMEOUT_S)
        conn.execute("PRAGMA journal_mode=WAL")
        conn.execute("PRAGMA synchronous=FULL")
        conn.execute("PRAGMA foreign_keys=ON")
        db = sqlite_utils.Database(conn)
        migrate(db)
    except sqlite3.Error as exc:
        raise storage_error(exc, str(path)) from exc
    return db


def migrate(db: sqlite_utils.Database) -> int:
    """Apply every migration above the stored user_version; each statement is idempotent."""
    current = db.execute("PRAGMA user_version").fetchone()[0]
    for number in sorted(MIGRATIONS):
        if number <= current:
            continue
        with transaction(db):
            for statement in MIGRATIONS[number]:
                apply_statement(db, statement)
            db.execute(f"PRAGMA user_version = {number}")
    return max(current, max(MIGRATIONS))


def apply_statement(db: sqlite_utils.Database, statement: str | AddColumn) -> None:
    """One statement of a migration."""
    if isinstance(statement, str):
        db.execute(statement)
        return
    held = {row[1] for row in db.execute(f"PRAGMA table_info({statement.table})").fetchall()}
    if statement.column not in held:
        db.execute(f"ALTER TABLE {statement.table} ADD COLUMN {statement.column} {statement.declared}")


def data_version(db: sqlite_utils.Database) -> int | None:
    """SQLite's ``PRAGMA data_version`` (it changes when another connection commits); None elsewhere."""
    conn = getattr(db, "conn", None)
    if not isinstance(conn, sqlite3.Connection):
        return None
    return int(conn.execute("PRAGMA data_version").fetchone()[0])


@contextmanager
def transaction(db: sqlite_utils.Database) -> Iterator[sqlite_utils.Database]:
    """One write transaction (BEGIN IMMEDIATE ... COMMIT); rolled back on any exception."""
    try:
        db.execute("BEGIN IMMEDIATE")
    except sqlite3.Error as exc:
        raise storage_error(exc, _name(db)) from exc
    try:
        yield db
        db.execute("COMMIT")
    except BaseException as exc:
        # SQLite has already rolled back after some errors (a full disk): keep the real error then
        if _in_transaction(db):
            db.execute("ROLLBACK")
        if isinstance(exc, sqlite3.Error):
            raise storage_error(exc, _name(db)) from exc
        raise


def _in_transaction(db: sqlite_utils.Database) -> bool:
    """Whether a transaction is still open; the hub's PostgreSQL adapter answers for itself."""
    own = getattr(db, "in_transaction", None)  # office.pgdb.PgDatabase
    return bool(own) if own is not None else db.conn.in_transaction


def _name(db: sqlite_utils.Database) -> str:
    try:
        row = db.conn.execute("PRAGMA database_list").fetchone()
    except sqlite3.Error:
        return "the database"
    return str(row[2]) if row and row[2] else ":memory:"
