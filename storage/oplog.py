"""The op log and the one merge function used for local saves, imports and rebuilds.

Rules (ARCHITECTURE "Storage and sync"): per-field last-writer-wins by (hlc, origin) for editable
records, with concurrent edits recorded as conflicts; deficiency status as a forward-only
(cycle, stage) pair merged by maximum; insert-only records compared by content hash.
"""

from __future__ import annotations

import hashlib
import sqlite3
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from enum import StrEnum
from functools import partial
from typing import Any

import sqlite_utils

from storage.clock import HLC_MAX
from storage.db import INSERT_ENTITIES, SCHEMA_VERSION, SET_ENTITIES, data_version
from storage.fastjson import canonical, dumps_parsed, loads, loads_finite
from storage.stamps import utc_stamp

OP_KEYS = ("origin", "seq", "hlc", "entity", "record_id", "kind", "payload", "base", "schema_version", "wall_ms")
# Allowed ranges of an op's integers (closed): all fit SQLite's signed 64-bit integers.
SEQ_MAX = 2**53
WALL_MS_MAX = 1 << 46  # the year 4199
INT_RANGES = {"seq": (1, SEQ_MAX), "hlc": (0, HLC_MAX), "schema_version": (1, 10_000), "wall_ms": (0, WALL_MS_MAX)}
MAX_ID_CHARS = 64
INSERT_OP_SQL = f"INSERT INTO op ({', '.join(OP_KEYS)}) VALUES ({', '.join('?' * len(OP_KEYS))})"
_OP_KEY_SET = frozenset(OP_KEYS)


class OpKind(StrEnum):
    """What an op does; the value is what the log and bundles carry ("set", "insert", "status")."""

    SET = "set"  # per-field edit of an editable record (last writer wins per field)
    INSERT = "insert"  # an insert-only record (measurement, photo, issued notice): union by id
    STATUS = "status"  # a deficiency status move (forward-only lattice)


OP_KINDS = tuple(k.value for k in OpKind)
_KIND_OF: dict[Any, OpKind] = {k.value: k for k in OpKind}
_TEXT_KEYS = ("origin", "entity", "record_id", "kind")


class IntegrityError(Exception):
    """Same id, different content for an insert-only record, or an op that contradicts the log."""


def content_hash(payload: dict[str, Any]) -> str:
    """SHA-256 of an insert-only record's canonical content."""
    return hashlib.sha256(canonical(payload).encode()).hexdigest()


@dataclass(frozen=True)
class Op:
    """One saved change, as stored and as carried in bundles."""

    origin: str
    seq: int
    hlc: int
    entity: str
    record_id: str
    kind: OpKind
    payload: dict[str, Any]
    base: dict[str, Any]
    schema_version: int
    wall_ms: int

    @property
    def payload_text(self) -> str:
        """``canonical(payload)`` (encoded at each call: an op's copies and forgeries must not share it)."""
        return canonical(self.payload)

    @property
    def base_text(self) -> str:
        """``canonical(base)``."""
        return canonical(self.base) if self.base else "{}"

    def stored(self) -> tuple[Any, ...]:
        """(hlc, entity, record_id, kind, payload, base) as the ``op`` table holds them."""
        return (self.hlc, self.entity, self.record_id, self.kind.value, self.payload_text, self.base_text)

    def stored_parsed(self, finite: bool = False) -> tuple[Any, ...]:
        """``stored()`` of an op whose payload and base were parsed from JSON (``fastjson.dumps_parsed``)."""
        base = dumps_parsed(self.base, finite) if self.base else "{}"
        return (self.hlc, self.entity, self.record_id, self.kind.value, dumps_parsed(self.payload, finite), base)

    def row(self) -> dict[str, Any]:
        """The op as a row of the ``op`` table."""
        return {
            "origin": self.origin,
            "seq": self.seq,
            "hlc": self.hlc,
            "entity": self.entity,
            "record_id": self.record_id,
            "kind": self.kind.value,
            "payload": self.payload_text,
            "base": self.base_text,
            "schema_version": self.schema_version,
            "wall_ms": self.wall_ms,
        }

    @classmethod
    def from_row(cls, row: dict[str, Any]) -> Op:
        """Rebuild an op from a stored row or a bundle line (keys must match exactly).

        Every check of the constructor and ``validate`` is made here, in the same order with the same
        messages, on the row's values; the checked values then fill the instance directly (a bundle
        import builds one op per line: the dataclass constructor's ten frozen-attribute writes were a
        third of the parse).
        """
        if (row.keys() if isinstance(row, dict) else set(row)) != _OP_KEY_SET:  # a line may hold any JSON
            msg = f"op keys {sorted(row)} differ from {sorted(OP_KEYS)}"
            raise ValueError(msg)
        payload = row["payload"] if isinstance(row["payload"], dict) else loads(row["payload"])
        base = row["base"] if isinstance(row["base"], dict) else loads(row["base"])
        plain = _plainly_valid(row)  # True: every check below and in ``validate`` passes (the loops are skipped)
        if not plain:
            _check_row_types(row)
        if not isinstance(payload, dict) or not isinstance(base, dict):
            msg = "op payload and base must be JSON objects"
            raise ValueError(msg)
        kind = _KIND_OF.get(row["kind"])
        if kind is None:
            msg = f"unknown op kind {row['kind']!r}; allowed: {', '.join(OP_KINDS)}"
            raise ValueError(msg)
        op = cls.__new__(cls)
        op.__dict__.update(row, kind=kind, payload=payload, base=base)  # each value checked above
        if not plain:
            op.validate()
        return op

    def __post_init__(self) -> None:
        """Take the kind as text or as an OpKind (text is checked: an unknown kind is refused by name)."""
        if not isinstance(self.kind, OpKind):
            if self.kind not in OP_KINDS:
                msg = f"unknown op kind {self.kind!r}; allowed: {', '.join(OP_KINDS)}"
                raise ValueError(msg)
            object.__setattr__(self, "kind", OpKind(self.kind))

    def validate(self) -> None:
        """Refuse ops whose entity and kind do not go together."""
        if self.kind == OpKind.SET and self.entity not in SET_ENTITIES:
            msg = f"op kind 'set' on unknown entity {self.entity!r}"
            raise ValueError(msg)
        if self.kind == OpKind.INSERT and self.entity not in INSERT_ENTITIES:
            msg = f"op kind 'insert' on unknown entity {self.entity!r}"
            raise ValueError(msg)
        if self.kind == OpKind.STATUS and self.entity != "deficiency":
            msg = "op kind 'status' applies only to 'deficiency'"
            raise ValueError(msg)
        for key, (low, high) in INT_RANGES.items():
            value = getattr(self, key)
            if not low <= value <= high:
                msg = f"op {key} {value} out of range; allowed {low} to {high}"
                raise ValueError(msg)


_SEQ_LOW, _SEQ_HIGH = INT_RANGES["seq"]
_HLC_LOW, _HLC_HIGH = INT_RANGES["hlc"]
_SCHEMA_LOW, _SCHEMA_HIGH = INT_RANGES["schema_version"]
_WALL_LOW, _WALL_HIGH = INT_RANGES["wall_ms"]


def _plainly_valid(row: dict[str, Any]) -> bool:
    """True when a row passes ``_check_row_types`` and ``Op.validate`` with exact types (str, int).

    One expression instead of the loops: a bundle import checks every line. False does not refuse the
    row; it sends it through the checks themselves, which raise with the field's name and range (an int
    subclass other than bool, for example, passes them).
    """
    o, e, r, k = row["origin"], row["entity"], row["record_id"], row["kind"]
    s, h, v, w = row["seq"], row["hlc"], row["schema_version"], row["wall_ms"]
    return (
        type(o) is str
        and type(e) is str
        and type(r) is str
        and type(k) is str
        and 0 < len(o) <= MAX_ID_CHARS
        and 0 < len(e) <= MAX_ID_CHARS
        and 0 < len(r) <= MAX_ID_CHARS
        and 0 < len(k) <= MAX_ID_CHARS
        and type(s) is int
        and type(h) is int
        and type(v) is int
        and type(w) is int
        and _SEQ_LOW <= s <= _SEQ_HIGH
        and _HLC_LOW <= h <= _HLC_HIGH
        and _SCHEMA_LOW <= v <= _SCHEMA_HIGH
        and _WALL_LOW <= w <= _WALL_HIGH
        and (
            (k == "set" and e in SET_ENTITIES)
            or (k == "insert" and e in INSERT_ENTITIES)
            or k + e == "statusdeficiency"
        )
    )


def _check_row_types(row: dict[str, Any]) -> None:
    """Refuse a row whose text keys are not text of 1 to MAX_ID_CHARS characters or whose integers are not integers."""
    for key in _TEXT_KEYS:
        value = row[key]
        if not isinstance(value, str) or not 0 < len(value) <= MAX_ID_CHARS:
            msg = f"op {key} {str(value)[:40]!r} must be text of 1 to {MAX_ID_CHARS} characters"
            raise ValueError(msg)
    for key in INT_RANGES:
        value = row[key]
        if not isinstance(value, int) or isinstance(value, bool):
            msg = f"op {key} {str(value)[:40]!r} must be an integer"
            raise ValueError(msg)


def _now() -> str:
    return utc_stamp()  # 'Z'; rows written before this carry '+00:00', which storage.stamps also reads


IN_CHUNK = 256  # ids per ``IN (...)`` read of a batch's prefetch
KEEP_MAX = 200_000  # rows plus field stamps a batch keeps from one transaction to the next (about 50 MB)
HELD_SQL = "SELECT hlc, entity, record_id, kind, payload, base FROM op WHERE origin=? AND seq=?"
STAMP_SQL = "SELECT hlc, origin FROM field_stamp WHERE entity=? AND record_id=? AND field=?"
STAMP_WRITE_SQL = "INSERT OR REPLACE INTO field_stamp VALUES (?, ?, ?, ?, ?)"
Stamp = tuple[int, str]  # (hlc, origin) of a field's current value


def _store_sql(table: str) -> str:
    return (
        f"INSERT INTO {table} (id, site_id, data, content_hash) VALUES (?, ?, ?, ?) "
        "ON CONFLICT(id) DO UPDATE SET site_id = excluded.site_id, data = excluded.data"
    )


_ABSENT = object()  # ``ProjectionBatch.stored_site``: the table holds no row of this id
_ROW_WRITE_SQL: tuple[Callable[[str], str], ...] = (
    _store_sql,
    lambda table: f"UPDATE {table} SET data = ? WHERE id = ?",
    lambda table: f"UPDATE {table} SET site_id = ?, data = ? WHERE id = ?",
)


def _write_many(db: sqlite_utils.Database, sql: str, rows: Sequence[Sequence[Any]]) -> None:
    """One statement over many rows: ``executemany`` on SQLite, one ``execute`` a row elsewhere (PostgreSQL hub)."""
    conn = getattr(db, "conn", None)
    if isinstance(conn, sqlite3.Connection):
        conn.executemany(sql, rows)
        return
    for row in rows:
        db.execute(sql, list(row))


def _padded_chunks(items: Sequence[Any]) -> Iterable[tuple[list[Any], list[Any]]]:
    """``(chunk, padded)``: ``items`` at most IN_CHUNK at a time, each chunk also padded to a power of two.

    The padding repeats the chunk's last item (a key named twice in a lookup reads its row once), so
    only a few distinct statements are ever prepared.
    """
    for start in range(0, len(items), IN_CHUNK):
        part = list(items[start : start + IN_CHUNK])
        yield part, part + [part[-1]] * ((1 << (len(part) - 1).bit_length()) - len(part))


def read_stamp(db: sqlite_utils.Database, entity: str, record_id: str, field: str) -> Stamp | None:
    """The stored (hlc, origin) stamp of a field's current value; None if it has none."""
    row = db.execute(STAMP_SQL, [entity, record_id, field]).fetchone()
    return (row[0], row[1]) if row else None


def _held_op(db: sqlite_utils.Database, origin: str, seq: int) -> tuple[Any, ...] | None:
    """The stored (hlc, entity, record_id, kind, payload, base) of op ``origin:seq``; None if not held."""
    row = db.execute(HELD_SQL, [origin, seq]).fetchone()
    return tuple(row) if row is not None else None


def differs_from_held(db: sqlite_utils.Database, op: Op) -> bool:
    """Whether the log holds op ``origin:seq`` with other content than ``op`` (False when not held, or the same)."""
    held = _held_op(db, op.origin, op.seq)
    return held is not None and held != op.stored()


def _op_seq_at(db: sqlite_utils.Database, origin: str, hlc: int, entity: str, record_id: str) -> int | None:
    """The least seq of a stored op of ``origin`` stamped ``hlc`` on this record (the op that set a field)."""
    sql = "SELECT min(seq) FROM op WHERE origin=? AND hlc=? AND entity=? AND record_id=?"
    row = db.execute(sql, [origin, hlc, entity, record_id]).fetchone()
    return row[0] if row else None


def _load(db: sqlite_utils.Database, table: str, record_id: str) -> tuple[dict[str, Any] | None, str | None]:
    row = db.execute(f"SELECT data, content_hash FROM {table} WHERE id = ?", [record_id]).fetchone()
    return (loads(row[0]), row[1]) if row else (None, None)


def _store(db: sqlite_utils.Database, table: str, record_id: str, data: dict[str, Any], chash: str | None) -> None:
    db.execute(_store_sql(table), [record_id, data.get("site_id"), canonical(data), chash])


def touches(op: Op) -> list[tuple[str, str]]:
    """The projection rows (table, id) that merging ``op`` reads."""
    if op.kind == OpKind.STATUS:
        return [("deficiency_event", f"{op.origin}:{op.seq}"), ("deficiency", op.record_id)]
    return [(op.entity, op.record_id)]


class ProjectionBatch:
    """Projection rows, field stamps and held ops kept in memory across one transaction's ops.

    An import merges thousands of ops that touch the same few records; reading and re-writing a
    record's JSON and stamps per op was most of the import's time. Use inside the caller's
    transaction and call ``flush()`` before it commits (rows and stamps are written then, in one
    statement per table on SQLite). ``prefetch(ops)`` reads up front, in a few statements, what
    merging those ops would read one at a time. Local saves do not use it.
    """

    def __init__(self, db: sqlite_utils.Database, finite: bool = False):
        """Hold rows of ``db``'s projection tables.

        ``finite``: the ops merged through the batch hold no NaN or infinity (a bundle read by a
        ``fastjson.LineReader`` whose ``finite`` stayed True). It stays True while every row read was
        read by orjson too; the changed rows are then encoded keeping orjson's ``null`` (``dumps_parsed``).
        """
        self.db = db
        self.finite = finite
        self.rows: dict[tuple[str, str], tuple[dict[str, Any] | None, str | None]] = {}
        # (table, id) -> the row's site_id column as the table holds it, or _ABSENT: no row (written at flush()
        # as an INSERT; a held row as an UPDATE of its data, and of site_id only when that changed)
        self.stored_site: dict[tuple[str, str], object] = {}
        # dirty keys in insertion order (a dict): merged in log order they come nearly sorted, and sorting
        # a nearly sorted list for the write is several times faster than sorting a set's order
        self.dirty: dict[tuple[str, str], None] = {}
        self.stamps: dict[tuple[str, str, str], Stamp | None] = {}  # (entity, record_id, field) -> stamp
        self.dirty_stamps: dict[tuple[str, str, str], None] = {}
        self.held: dict[tuple[str, int], tuple[Any, ...] | None] = {}  # (origin, seq) -> stored op, None: not held
        self.seen: dict[str, int] = {}  # origin -> contiguous high-water mark, as the batch sees it
        self.held_max: dict[str, int] = {}  # origin -> largest seq held before the batch began
        self.new_ops: list[tuple[Any, ...]] = []  # op rows inserted by the batch, written at flush()
        # (origin, hlc, entity, record_id) -> least seq of new_ops; built from new_ops when a conflict first asks
        self.new_at: dict[tuple[str, int, str, str], int] | None = None
        self.version = data_version(db)  # SQLite's data_version when the batch began (renew() compares)

    def renew(self) -> None:
        """Carry the batch into the caller's next transaction of the same merge (call right after it began).

        The previous transaction must have been flushed and committed. Held ops and high-water marks are
        read again; the rows and field stamps read so far are kept only if no other connection committed
        in between (SQLite's ``PRAGMA data_version`` is unchanged: this connection's own commits do not
        change it) and they number at most KEEP_MAX; otherwise they are read again too. An import of
        many transactions thus decodes a record touched in several of them once.
        """
        if self.dirty or self.dirty_stamps or self.new_ops:
            msg = "ProjectionBatch.renew: flush() the batch and commit before the next transaction"
            raise RuntimeError(msg)
        version = data_version(self.db)
        if version is None or version != self.version or len(self.rows) + len(self.stamps) > KEEP_MAX:
            self.rows.clear()
            self.stored_site.clear()
            self.stamps.clear()
        self.version = version
        self.held.clear()
        self.seen.clear()
        self.held_max.clear()

    def prefetch(self, ops: Sequence[Op]) -> None:
        """Read what merging ``ops`` reads: the held ops of their seq ranges, their rows and field stamps.

        Only reads, and only what the batch does not hold yet: every value is the one ``held_op``,
        ``load`` and ``stamp`` would read one at a time.
        """
        self._prefetch_held(ops)
        rows, stamps = self.rows, self.stamps
        by_table: dict[str, dict[str, None]] = {}  # dicts, not sets: log order sorts fast (see ``dirty``)
        for op in ops:  # only what the batch does not hold yet (most of a later chunk's records are held)
            for table, record_id in touches(op) if op.kind is not OpKind.SET else ((op.entity, op.record_id),):
                if (table, record_id) not in rows:
                    by_table.setdefault(table, {})[record_id] = None
        for table, wanted in sorted(by_table.items()):
            self._prefetch_rows(table, sorted(wanted))
        sets = [op for op in ops if op.kind is OpKind.SET]
        rowless = {key: None for op in sets if rows[key := (op.entity, op.record_id)][0] is None}
        unstamped = self._unstamped(sorted(rowless))
        stamped: dict[tuple[str, str, str], None] = {}
        for op in sets:
            entity, record_id = op.entity, op.record_id
            keys = [k for f in op.payload if (k := (entity, record_id, f)) not in stamps]
            (stamps if (entity, record_id) in unstamped else stamped).update(dict.fromkeys(keys))
        self._prefetch_stamps(sorted(stamped))

    def _unstamped(self, records: list[tuple[str, str]]) -> set[tuple[str, str]]:
        """Those of these (entity, record_id) that hold no field stamp at all (each field's stamp is None).

        Asked of records without a row (a new record: its fields are stamped with its first save), so a batch
        creating thousands of records reads one answer per record instead of one per field. A record holding
        any stamp is not among them: its fields are read one by one, as before.
        """
        found: set[tuple[str, str]] = set()
        for part, padded in _padded_chunks(records):
            sql = (
                f"WITH w(e, r) AS (VALUES {', '.join(['(?, ?)'] * len(padded))}) SELECT w.e, w.r FROM w "
                "WHERE EXISTS (SELECT 1 FROM field_stamp s WHERE s.entity = w.e AND s.record_id = w.r)"
            )
            stamped = {(e, r) for e, r in self.db.execute(sql, [v for key in padded for v in key])}
            found.update(key for key in part if key not in stamped)
        return found

    def _prefetch_held(self, ops: Sequence[Op]) -> None:
        by_origin: dict[str, list[int]] = {}
        for op in ops:
            by_origin.setdefault(op.origin, []).append(op.seq)
        for origin, seqs in sorted(by_origin.items()):
            first, last = min(seqs), max(seqs)
            if last - first + 1 > 2 * len(seqs):  # scattered seqs: read one at a time when merged
                continue
            rows = self.db.execute(
                "SELECT seq, hlc, entity, record_id, kind, payload, base FROM op "
                "WHERE origin=? AND seq BETWEEN ? AND ?",
                [origin, first, last],
            )
            found = {r[0]: tuple(r[1:]) for r in rows}
            for seq in seqs:
                self.held.setdefault((origin, seq), found.get(seq))

    def _prefetch_rows(self, table: str, ids: list[str]) -> None:
        for _, padded in _padded_chunks(ids):
            for record_id, site_id, data, chash in self.db.execute(
                f"SELECT id, site_id, data, content_hash FROM {table} WHERE id IN ({', '.join('?' * len(padded))})",
                padded,
            ):
                self.rows[(table, record_id)] = (self._read(data), chash)
                self.stored_site[(table, record_id)] = site_id
        for record_id in ids:
            if (table, record_id) not in self.rows:
                self.rows[(table, record_id)] = (None, None)
                self.stored_site[(table, record_id)] = _ABSENT

    def _prefetch_stamps(self, keys: list[tuple[str, str, str]]) -> None:
        """The stamps of these (entity, record_id, field): a join of the keys with the primary key."""
        for part, padded in _padded_chunks(keys):
            sql = (
                f"WITH w(e, r, f) AS (VALUES {', '.join(['(?, ?, ?)'] * len(padded))}) "
                "SELECT s.entity, s.record_id, s.field, s.hlc, s.origin FROM w "
                "JOIN field_stamp s ON s.entity = w.e AND s.record_id = w.r AND s.field = w.f"
            )
            for key in part:
                self.stamps[key] = None
            for entity, record_id, field, hlc, origin in self.db.execute(sql, [v for key in padded for v in key]):
                self.stamps[(entity, record_id, field)] = (hlc, origin)

    def held_op(self, origin: str, seq: int) -> tuple[Any, ...] | None:
        """The stored op ``origin:seq`` as the batch sees it (see ``_held_op``)."""
        key = (origin, seq)
        if key not in self.held:
            self.held[key] = _held_op(self.db, origin, seq)
        return self.held[key]

    def add_op(self, op: Op, stored: tuple[Any, ...]) -> None:
        """Insert ``op`` (its ``stored()`` tuple) into the log as the batch sees it; written at ``flush()``.

        Reads of the log during the batch go through the batch first (``held_op``, ``op_seq_at``, the
        contiguous run), so they see these ops as if they had been written already.
        """
        self.new_ops.append((op.origin, op.seq, *stored, op.schema_version, op.wall_ms))
        self.held[(op.origin, op.seq)] = stored
        if self.new_at is not None:
            self._index_new(op.origin, op.seq, op.hlc, op.entity, op.record_id)
        self.advance_seen(op.origin, op.seq)

    def _index_new(self, origin: str, seq: int, hlc: int, entity: str, record_id: str) -> None:
        assert self.new_at is not None
        at = (origin, hlc, entity, record_id)
        self.new_at[at] = min(seq, self.new_at.get(at, seq))

    def op_seq_at(self, origin: str, hlc: int, entity: str, record_id: str) -> int | None:
        """The least seq of an op of ``origin`` stamped ``hlc`` on this record, held or added by the batch."""
        if self.new_at is None:  # the first conflict since flush(): index the ops added so far (kept up to date)
            self.new_at = {}
            for row in self.new_ops:
                self._index_new(row[0], row[1], row[2], row[3], row[4])
        found = [_op_seq_at(self.db, origin, hlc, entity, record_id), self.new_at.get((origin, hlc, entity, record_id))]
        return min((s for s in found if s is not None), default=None)

    def _holds(self, origin: str, seq: int) -> bool:
        """Whether op ``origin:seq`` is in the log as the batch sees it (read from the table if not known)."""
        key = (origin, seq)
        if key in self.held:
            return self.held[key] is not None
        return _has_op(self.db, origin, seq)

    def advance_seen(self, origin: str, seq: int) -> None:
        """An op of ``origin`` was inserted: move the contiguous high-water mark if it closes the run."""
        if origin not in self.seen:
            row = self.db.execute("SELECT seq FROM seen WHERE origin=?", [origin]).fetchone()
            self.seen[origin] = row[0] if row else 0
            top = self.db.execute("SELECT max(seq) FROM op WHERE origin=? AND seq <> ?", [origin, seq]).fetchone()
            added = [s for (o, s, *_rest) in self.new_ops if o == origin and s != seq]
            self.held_max[origin] = max([top[0] or 0, *added])
        if seq == self.seen[origin] + 1:
            # ops held beyond it (from an earlier bundle or earlier in this one) can close a longer run,
            # read through the log as the batch sees it
            held_beyond = seq < self.held_max[origin]
            self.seen[origin] = _contiguous_from(partial(self._holds, origin), seq) if held_beyond else seq
        else:
            self.held_max[origin] = max(self.held_max[origin], seq)

    def load(self, table: str, record_id: str) -> tuple[dict[str, Any] | None, str | None]:
        """The row (data, content hash) as the batch sees it."""
        key = (table, record_id)
        if key not in self.rows:
            sql = f"SELECT site_id, data, content_hash FROM {table} WHERE id = ?"
            row = self.db.execute(sql, [record_id]).fetchone()
            self.rows[key] = (self._read(row[1]), row[2]) if row else (None, None)
            self.stored_site[key] = row[0] if row else _ABSENT
        return self.rows[key]

    def _read(self, text: str) -> Any:
        """A stored row's JSON (``fastjson.loads``); one not read by orjson ends ``finite``."""
        if not self.finite:
            return loads(text)
        value, finite = loads_finite(text)
        self.finite = finite
        return value

    def store(self, table: str, record_id: str, data: dict[str, Any], chash: str | None) -> None:
        """Change a row in the batch (a None hash keeps the stored one, as ``_store`` does)."""
        key = (table, record_id)
        old_hash = self.rows.get(key, (None, None))[1]
        self.rows[key] = (data, chash if chash is not None else old_hash)
        self.dirty[key] = None

    def stamp(self, entity: str, record_id: str, field: str) -> Stamp | None:
        """The field's (hlc, origin) as the batch sees it."""
        key = (entity, record_id, field)
        if key not in self.stamps:
            self.stamps[key] = read_stamp(self.db, entity, record_id, field)
        return self.stamps[key]

    def set_stamp(self, entity: str, record_id: str, field: str, hlc: int, origin: str) -> None:
        """Give the field a new stamp in the batch."""
        key = (entity, record_id, field)
        self.stamps[key] = (hlc, origin)
        self.dirty_stamps[key] = None

    def _write_rows(self) -> None:
        """Write the changed rows: new ones as ``_store`` does, held ones as an ``UPDATE`` of what changed.

        The same final rows as ``_store``'s upsert (which keeps the held content hash): an ``UPDATE`` of the
        data alone leaves the ``site_id`` index untouched when the site did not change, and skips the
        upsert's failed insert.
        """
        writes: dict[tuple[str, int], list[tuple[Any, ...]]] = {}  # (table, 0 new / 1 data / 2 site and data)
        finite, stored_site = self.finite, self.stored_site
        for key in sorted(self.dirty):
            data, chash = self.rows[key]
            assert data is not None
            site_id, text, held_site = data.get("site_id"), dumps_parsed(data, finite), stored_site.get(key, _ABSENT)
            if held_site is _ABSENT:
                writes.setdefault((key[0], 0), []).append((key[1], site_id, text, chash))
            elif held_site == site_id and type(held_site) is type(site_id):
                writes.setdefault((key[0], 1), []).append((text, key[1]))
            else:
                writes.setdefault((key[0], 2), []).append((site_id, text, key[1]))
            stored_site[key] = site_id
        for (table, how), rows in sorted(writes.items()):
            _write_many(self.db, _ROW_WRITE_SQL[how](table), rows)
        self.dirty.clear()

    def flush(self) -> None:
        """Write the added ops, every changed row and stamp, and the high-water marks."""
        _write_many(self.db, INSERT_OP_SQL, self.new_ops)
        self.new_ops.clear()
        self.new_at = None
        self._write_rows()
        stamps = [(*key, *stamp) for key in sorted(self.dirty_stamps) if (stamp := self.stamps[key])]
        _write_many(self.db, STAMP_WRITE_SQL, stamps)
        self.dirty_stamps.clear()
        for origin, seq in self.seen.items():
            self.db.execute("INSERT OR REPLACE INTO seen VALUES (?, ?)", [origin, seq])


def apply_op(
    db: sqlite_utils.Database, op: Op, record_conflicts: bool = True, batch: ProjectionBatch | None = None
) -> None:
    """Merge one op into the projections (inside the caller's transaction; ``batch`` defers the writes)."""
    rows = batch or _Direct(db)
    if op.kind == OpKind.SET:
        _apply_set(db, op, record_conflicts, rows)
    elif op.kind == OpKind.INSERT:
        _apply_insert(op, rows)
    else:
        _apply_status(op, rows)


class _Direct:
    """Projection rows and stamps read and written straight away (the local save path)."""

    def __init__(self, db: sqlite_utils.Database):
        self.db = db

    def load(self, table: str, record_id: str) -> tuple[dict[str, Any] | None, str | None]:
        return _load(self.db, table, record_id)

    def store(self, table: str, record_id: str, data: dict[str, Any], chash: str | None) -> None:
        _store(self.db, table, record_id, data, chash)

    def stamp(self, entity: str, record_id: str, field: str) -> Stamp | None:
        return read_stamp(self.db, entity, record_id, field)

    def set_stamp(self, entity: str, record_id: str, field: str, hlc: int, origin: str) -> None:
        self.db.execute(STAMP_WRITE_SQL, [entity, record_id, field, hlc, origin])

    def op_seq_at(self, origin: str, hlc: int, entity: str, record_id: str) -> int | None:
        return _op_seq_at(self.db, origin, hlc, entity, record_id)


def _apply_set(db: sqlite_utils.Database, op: Op, record_conflicts: bool, rows: ProjectionBatch | _Direct) -> None:
    entity, record_id, bases = op.entity, op.record_id, op.base
    stamp, set_stamp = rows.stamp, rows.set_stamp  # looked up once: an import runs this for every field
    data, _ = rows.load(entity, record_id)
    data = data or {}
    new = (op.hlc, op.origin)
    changed = False
    for field, value in op.payload.items():
        current = stamp(entity, record_id, field)
        base = bases.get(field)
        base_t = (base[0], base[1]) if base else None
        if record_conflicts and current is not None and base_t != current and current != new:
            cur_seq = rows.op_seq_at(current[1], current[0], entity, record_id)
            _record_conflict(db, op, field, value, (*current, cur_seq), data.get(field), new > current)
        if current is None or new > current:
            data[field] = value
            changed = True
            set_stamp(entity, record_id, field, new[0], new[1])
    if changed:
        rows.store(entity, record_id, data, None)


def _record_conflict(
    db: sqlite_utils.Database,
    op: Op,
    field: str,
    value: Any,
    current: tuple[int, str, int | None],
    current_value: Any,
    incoming_wins: bool,
) -> None:
    """Log a concurrent edit; ``current`` is the field's (hlc, origin) stamp and the seq of the op that set it."""
    cur = (current[1], current[2], canonical(current_value))
    inc = (op.origin, op.seq, canonical(value))
    winner, loser = (inc, cur) if incoming_wins else (cur, inc)
    db.execute(
        "INSERT INTO conflict (entity, record_id, field, winner_origin, winner_seq, winner_value, loser_origin, "
        "loser_seq, loser_value, detected_at, resolved_by) VALUES (?,?,?,?,?,?,?,?,?,?,NULL)",
        [op.entity, op.record_id, field, *winner, *loser, _now()],
    )


def _apply_insert(op: Op, rows: ProjectionBatch | _Direct) -> None:
    chash = content_hash(op.payload)
    existing, stored_hash = rows.load(op.entity, op.record_id)
    if existing is not None:
        if stored_hash != chash:
            msg = f"{op.entity} {op.record_id}: same id, different content"
            raise IntegrityError(msg)
        return
    rows.store(op.entity, op.record_id, dict(op.payload), chash)


def _apply_status(op: Op, rows: ProjectionBatch | _Direct) -> None:
    cycle, stage = int(op.payload["cycle"]), int(op.payload["stage"])
    event_id = f"{op.origin}:{op.seq}"
    event = dict(op.payload, deficiency_id=op.record_id, hlc=op.hlc, origin=op.origin)
    _, ev_hash = rows.load("deficiency_event", event_id)
    if ev_hash is None:
        event_site = op.payload.get("site_id")
        rows.store("deficiency_event", event_id, dict(event, site_id=event_site), content_hash(event))
    data, _ = rows.load("deficiency", op.record_id)
    data = data or {}
    if (cycle, stage) > (int(data.get("cycle", 0)), int(data.get("stage", 0))):
        data["cycle"], data["stage"] = cycle, stage
        rows.store("deficiency", op.record_id, data, None)


def insert_op(
    db: sqlite_utils.Database, op: Op, batch: ProjectionBatch | None = None, stored: tuple[Any, ...] | None = None
) -> bool:
    """Append an op to the log; False if it is already held (same content), error if it differs.

    With a ``batch`` the op, the held ops and the contiguous high-water mark (table ``seen``) are kept
    in memory (written by ``batch.flush()``). ``stored`` is ``op.stored()`` when the caller has it.
    """
    row = batch.held_op(op.origin, op.seq) if batch is not None else _held_op(db, op.origin, op.seq)
    mine = stored if stored is not None else op.stored()
    if row is not None:
        if row != mine:
            msg = f"op {op.origin}:{op.seq} already held with different content"
            raise IntegrityError(msg)
        return False
    if batch is not None:
        batch.add_op(op, mine)
        return True
    db.execute(INSERT_OP_SQL, [op.origin, op.seq, *mine, op.schema_version, op.wall_ms])
    seen = db.execute("SELECT seq FROM seen WHERE origin=?", [op.origin]).fetchone()
    have = seen[0] if seen else 0
    if op.seq == have + 1:
        db.execute(
            "INSERT OR REPLACE INTO seen VALUES (?, ?)",
            [op.origin, _contiguous_from(partial(_has_op, db, op.origin), op.seq)],
        )
    return True


def _has_op(db: sqlite_utils.Database, origin: str, seq: int) -> bool:
    """Whether the log holds op ``origin:seq``."""
    return db.execute("SELECT 1 FROM op WHERE origin=? AND seq=?", [origin, seq]).fetchone() is not None


def _contiguous_from(holds: Callable[[int], bool], seq: int) -> int:
    """The last seq of the unbroken run of held ops of one origin that starts at ``seq`` (``holds(seq)``)."""
    nxt = seq
    while holds(nxt + 1):
        nxt += 1
    return nxt


def all_ops(db: sqlite_utils.Database) -> list[Op]:
    """Every op in the log, ordered by origin and seq."""
    cur = db.execute(f"SELECT {', '.join(OP_KEYS)} FROM op ORDER BY origin, seq")
    return [Op.from_row(dict(zip(OP_KEYS, r, strict=True))) for r in cur.fetchall()]


__all__ = [
    "SCHEMA_VERSION",
    "IntegrityError",
    "Op",
    "OpKind",
    "ProjectionBatch",
    "all_ops",
    "apply_op",
    "canonical",
    "differs_from_held",
    "insert_op",
    "read_stamp",
    "touches",
]
