"""Each beam's recheck result, stored beside its record and refreshed when what it depends on changes.

A stored result is a local, derived copy (never synced: every device recomputes it from the synced
records): status, the governing check and its utilisation, the finding codes, and the table rows the
recheck used with their status. Triggers in the database mark a result stale (``input_hash`` set
to '') when its beam, its site's design bases or a firm table record changes, whoever writes (a
save, an import), and the next read recomputes the stale and missing ones, so a stale result is
never shown. ``input_hash`` (a SHA-256 over the beam's stored record, its site's design bases and
the firm's table records) records what a result was computed from.
"""

from __future__ import annotations

import hashlib
import json
import sys
from collections import deque
from collections.abc import Callable, Iterable, Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass, field
from functools import lru_cache
from json.encoder import encode_basestring_ascii as _ascii
from typing import Any

from core import tables
from core.records import DesignBasis, chosen_basis
from storage.db import data_version, transaction
from storage.gcpause import gc_paused

UNCHECKED = "unchecked"  # the record is incomplete (or refused): nothing to recheck yet
PENDING = "pending"  # the placeholder row a new beam gets (storage/db.py migration 4) until its first recheck


@dataclass(frozen=True)
class StoredResult:
    """One beam's stored recheck result."""

    beam_id: str
    site_id: str
    input_hash: str
    status: str
    governing: str  # "bending R1 (positive)", "shear", "bearing 2", "deflection", or "" when unchecked
    utilisation: float | None
    findings: tuple[dict[str, str], ...]  # {"code", "priority", "region"} per finding
    rows_used: tuple[dict[str, str], ...]  # {"clause", "source", "status"} per table row the recheck used
    mark: str = ""  # the beam's list fields, kept beside its result so the site list reads no record
    level: str = ""
    gridline: str = ""
    archived: bool = False

    @property
    def finding_codes(self) -> list[str]:
        """The codes of the findings, in the recheck's order."""
        return [f["code"] for f in self.findings]


def beam_fields() -> tuple[str, ...]:
    """The contract-1 fields of a beam (the rest of a record is location and drafts)."""
    from core.models import Beam

    return tuple(Beam.model_fields)


SYSTEM_RECORDED = "system_recorded"  # the record's flag beside ``system``: whether the reviewer recorded it


def recorded_system(data: dict[str, Any]) -> Any:
    """A record's load-sharing system (sawn lumber's KH) where it was recorded, else None: not recorded.

    Storage keeps a system not recorded as "single" with ``system_recorded`` false, a record every version
    of the model reads; core takes None as a single member and says so. A record saved before the flag
    holds "single" without it: not recorded either (the tablet had no way to record one). Any other
    case stored there was given.
    """
    system = data.get("system")
    if data.get(SYSTEM_RECORDED) is True or system not in (None, "single"):
        return system
    return None


def beam_input(data: dict[str, Any], site: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """A stored record's contract-1 fields as core's ``Beam`` reads them (the system as recorded).

    ``site`` (the site's record, or its ``design_basis`` and ``load_bases``): a beam whose record keeps a
    tributary width has its line loads derived again from the site's basis as it stands (``derived_loads``).
    """
    fields = set(beam_fields())
    out = {k: v for k, v in data.items() if k in fields}
    out["system"] = recorded_system(data)
    return out if site is None else derived_loads(out, data, site_bases(site))


Bases = tuple[DesignBasis, dict[str, DesignBasis]]  # a site's main design basis and its named ones


def site_bases(site: Mapping[str, Any]) -> Bases:
    """A site record's design bases: its main one and its named ones (``Site.design_basis``, ``load_bases``)."""
    named = site.get("load_bases") or {}
    return DesignBasis.model_validate(site.get("design_basis") or {}), {
        name: DesignBasis.model_validate(b) for name, b in named.items()
    }


@lru_cache(maxsize=256)
def _bases_of(text: str) -> Bases | None:
    """``site_bases`` of a site's bases as ``_site_bases`` writes them (JSON [design_basis, load_bases]); '' None."""
    if not text:
        return None
    main, named = json.loads(text)
    return site_bases({"design_basis": main, "load_bases": named})


def basis_of(record: Mapping[str, Any], bases: Bases) -> tuple[str, DesignBasis]:
    """The basis a beam's loads come from: its named one (``load_bases``), else the site's main one ('')."""
    main, named = bases
    return chosen_basis(main, named, str(record.get("load_basis") or ""))


def derived_loads(fields: dict[str, Any], record: Mapping[str, Any], bases: Bases) -> dict[str, Any]:
    """``fields`` with the line loads derived from the site's basis as it stands, where ``record`` keeps a width.

    The tablet derives a beam's line loads (kPa x tributary width = kN/m, common practice) when its width or
    basis is entered; a site's basis corrected later (a higher snow load) must reach every such beam on every
    device, the office's too: so the recheck derives them again from the synced site and record, never from
    the copy of the loads the record kept. Loads typed directly (no width recorded) are used as recorded.
    """
    width = record.get("tributary_m")
    if width is None:
        return fields
    _, basis = basis_of(record, bases)
    return dict(fields, loads=dict(fields.get("loads") or {}, **basis.line_loads_kn_m(float(width))))


def stored_system(system: Any) -> dict[str, Any]:
    """The record's fields for a model's ``system`` (None: not recorded), as ``recorded_system`` reads them back."""
    return {"system": "single" if system is None else system, SYSTEM_RECORDED: system is not None}


Triples = tuple[tuple[str, str, str], ...]
FINDING_KEYS = ("code", "priority", "region")
ROW_KEYS = ("clause", "source", "status")


@lru_cache(maxsize=1)
def _stored_beam() -> type[Any]:
    """``Beam`` that ignores the record's other keys (location, drafts): validated straight from its text.

    The same fields, validators and instances' values as ``Beam.model_validate`` of the record's beam
    fields (a subclass changes only ``extra``), without decoding the text into a dict first.
    """
    from pydantic import ConfigDict, ValidationInfo, model_validator

    from core.models import Beam

    class StoredBeam(Beam):
        model_config = ConfigDict(frozen=True, extra="ignore")

        @model_validator(mode="before")
        @classmethod
        def _as_recorded(cls, data: Any, info: ValidationInfo) -> Any:
            """The system as recorded; with the site's bases in the context, the line loads derived from them."""
            if not isinstance(data, dict):
                return data
            out = dict(data, system=recorded_system(data))
            bases = info.context.get("bases") if info.context else None
            return out if bases is None else derived_loads(out, data, bases)

    return StoredBeam


Summ = tuple[str, str, float | None, Triples, Triples]
UNCHECKED_SUMMARY: Summ = (UNCHECKED, "", None, (), ())
# distinct designs kept per process (0: no memo), cleared when full: about 1.6 KB each (20,000: ~32 MB)
MEMO_MAX = 20_000
_MEMO: dict[tuple[int, bytes], Summ] = {}
# a memo that found (almost) nothing in its first lookups of a run stops being consulted for the rest of it:
# computing a key costs ~15-25 us a beam, for nothing on a portfolio where no two beams are alike
MEMO_PROBE = 2_000  # lookups before the memo may stand idle
MEMO_MIN_HIT_SHARE = 0.05  # below this share of hits after MEMO_PROBE lookups, it stands idle
_MEMO_SEEN = [0, 0]  # lookups and hits since ``memo_reset``


def memo_reset() -> None:
    """Start a run's count of memo lookups afresh (each refresh and portfolio run; workers inherit it)."""
    _MEMO_SEEN[0] = _MEMO_SEEN[1] = 0


def _memo_idle() -> bool:
    """True when this run's first MEMO_PROBE lookups found fewer than MEMO_MIN_HIT_SHARE hits."""
    lookups, hits = _MEMO_SEEN
    return lookups >= MEMO_PROBE and hits < MEMO_MIN_HIT_SHARE * lookups


def _summary(record_text: str, bases: str = "") -> Summ:
    """Recheck one stored beam record: (status, governing check, utilisation, findings, table rows used).

    Findings as (code, priority, region), table rows as (clause, source, status); an incomplete record
    gives ``UNCHECKED_SUMMARY``. Memoised per process (``_memo_key``, at most ``MEMO_MAX`` designs):
    beams that differ only in their mark and the record's keys outside contract 1 (location, notes)
    share one recheck, as the repeated members of a building do; a run whose first lookups find almost
    nothing stops consulting it (``_memo_idle``). ``bases``: the site's bases as ``_site_bases`` writes them, from
    which a beam that keeps a tributary width takes its line loads (``derived_loads``).
    """
    site = _bases_of(bases)
    try:
        beam = _stored_beam().model_validate_json(record_text, context=None if site is None else {"bases": site})
    except ValueError:  # a ValidationError: the record is incomplete or refused
        return UNCHECKED_SUMMARY
    if MEMO_MAX <= 0 or _memo_idle():
        return _summary_of(beam)
    key = _memo_key(beam)
    hit = _MEMO.get(key)
    _MEMO_SEEN[0] += 1
    if hit is None:
        if len(_MEMO) >= MEMO_MAX:
            _MEMO.clear()
        hit = _MEMO[key] = _summary_of(beam)
    else:
        _MEMO_SEEN[1] += 1
    return hit


def _memo_key(beam: Any) -> tuple[int, bytes]:
    """What a summary is a pure function of: the tables generation and every contract-1 field but ``mark``.

    ``core.recheck.recheck`` reads the validated ``Beam`` and the table rows in force (``core.tables``,
    whose ``generation`` changes whenever a firm's records change what a lookup returns); its caches
    are keyed by the same. The mark reaches only ``Recheck.mark`` and the findings' message text,
    neither kept in a summary. The fields as the model's JSON (every field, defaults too), as SHA-256.
    """
    text = beam.model_dump_json(exclude=_NOT_IN_KEY)
    return tables.generation(), hashlib.sha256(text.encode()).digest()


_NOT_IN_KEY = {"mark"}  # a set, not a frozenset: pydantic's serializer takes a set's fast path (4.8 vs 9.0 us)


def _summary_of(beam: Any) -> Summ:
    """``_summary`` of a validated beam (no memo): the recheck, reduced to what a stored result keeps.

    The status-only recheck with the table rows it used (``core.recheck.recheck_with_rows``: the same set
    the traced recheck's lines name), so no trace is built.
    """
    from core.recheck import recheck_with_rows
    from core.results import governing_check

    try:
        result, used = recheck_with_rows(beam)
    except ValueError:
        return UNCHECKED_SUMMARY
    names = [f"bending {r.region}" for r in result.bending]
    names.append("shear")
    names += [f"bearing {b.support}" for b in result.bearing]
    names.append("deflection")
    index, _ = governing_check(result.bending, result.shear, result.bearing, result.deflection)
    governing = names[index]  # an unrated bending region governs a member whose capacity is unknown
    findings = tuple((f.code, f.priority.value, f.region or "") for f in result.findings)
    util = None if result.governing_utilisation is None else round(float(result.governing_utilisation), 6)
    return result.status.value, governing, util, findings, tuple(sorted(used))


def stale_after_new_results_version(db: Any) -> bool:
    """Mark every stored result stale once when the recheck's output changed (``core.results.RESULTS_VERSION``).

    Stored results are otherwise refreshed only when a beam, its site's bases or a firm table record
    changes (the triggers): an app update whose recheck prints something else (an engineering fix) would
    leave every site showing the old statuses. True when results were marked stale.
    """
    from core.results import RESULTS_VERSION

    row = db.execute("SELECT value FROM meta WHERE key = 'results_version'").fetchone()
    if row is not None and row[0] == str(RESULTS_VERSION):
        return False
    with transaction(db):
        db.execute("UPDATE beam_result SET input_hash = '' WHERE input_hash != ''")
        db.execute("INSERT OR REPLACE INTO meta VALUES ('results_version', ?)", [str(RESULTS_VERSION)])
    return True


def tables_stamp(db: Any) -> str:
    """A digest of the firm's table records (verifications, overrides); '' while there are none."""
    exists = db.execute("SELECT 1 FROM sqlite_master WHERE type='table' AND name='table_row'").fetchone()
    if not exists:
        return ""
    h = hashlib.sha256()
    for rid, data in db.execute("SELECT id, data FROM table_row ORDER BY id").fetchall():
        h.update(f"{rid}\x1f{data}\x1e".encode())
    return h.hexdigest()


def _site_bases(db: Any, site_id: str | None) -> str:
    row = db.execute("SELECT data FROM site WHERE id=?", [site_id]).fetchone() if site_id else None
    if row is None:
        return ""
    site = json.loads(row[0])
    return json.dumps([site.get("design_basis"), site.get("load_bases")], sort_keys=True)


def input_hash(record_text: str, bases: str, stamp: str) -> str:
    """The key a stored result is valid for: the beam's stored text, its site's bases, the tables."""
    return hashlib.sha256(f"{record_text}\x1f{bases}\x1f{stamp}".encode()).hexdigest()


def _row(r: tuple[Any, ...]) -> StoredResult:
    return StoredResult(
        beam_id=r[0],
        site_id=r[1],
        input_hash=r[2],
        status=r[3],
        governing=r[4],
        utilisation=r[5],
        findings=tuple(json.loads(r[6])),
        rows_used=tuple(json.loads(_set_text(r))),
    )


def _set_text(r: tuple[Any, ...]) -> str:
    """A stored result's table rows' text (column 7 of ``_STORED_SQL``); a result naming a missing set is an error."""
    if r[7] is None:
        msg = f"stored result of beam {r[0]} names a set of table rows that is not in rows_set"
        raise ValueError(msg)
    return str(r[7])


COLUMNS = "beam_id, site_id, input_hash, status, governing, utilisation, findings"  # then the table rows
_LISTED = "mark, level, gridline, archived"  # a result's list fields, after its table rows
# a stored result's columns as ``as_row`` gives them: its table rows' text read from their set (migration 9:
# ``rows_set``, one row per distinct set; a result names its set by ``rows_id``, NULL for no rows)
_STORED_COLUMNS = ", ".join(f"r.{c}" for c in COLUMNS.split(", ")) + (
    ", CASE WHEN r.rows_id IS NULL THEN '[]' ELSE s.rows END"
)
_STORED_FROM = " FROM beam_result r LEFT JOIN rows_set s ON s.id = r.rows_id"
_STORED_SQL = f"SELECT {_STORED_COLUMNS}{_STORED_FROM}"


def stored(db: Any, site_id: str | None = None, needing_action: bool = False) -> dict[str, StoredResult]:
    """The stored results (of one site, or all), whatever their age; ``needing_action``: not ok, not unchecked."""
    where = (["r.site_id=?"] if site_id else []) + [f"r.status != '{PENDING}'"]
    if needing_action:
        where.append(f"r.status NOT IN ('ok', '{UNCHECKED}')")
    sql = _STORED_SQL + " WHERE " + " AND ".join(where)
    return {r[0]: _row(r) for r in db.execute(sql, [site_id] if site_id else []).fetchall()}


def stored_rows(db: Any) -> dict[str, tuple[Any, ...]]:
    """Every ``beam_result`` row as ``as_row`` gives it (its table rows' text read from their set), by beam id."""
    listed = ", ".join(f"r.{c}" for c in _LISTED.split(", "))
    return {r[0]: tuple(r) for r in db.execute(f"SELECT {_STORED_COLUMNS}, {listed}{_STORED_FROM}").fetchall()}


def site_list(db: Any, site_id: str) -> list[tuple[str, dict[str, Any], str]]:
    """[(beam id, {mark, level, gridline}, status)] of a site's beams from the stored results.

    One indexed read of the results table (the list fields are stored beside each result: no record
    decoded, no join, no sort), ordered by level, gridline and mark; archived beams left out; a field
    not recorded is absent from the dict. Call ``refresh`` first so no status is stale.
    """
    sql = (
        "SELECT beam_id, mark, level, gridline, status FROM beam_result WHERE site_id = ? AND archived = 0 "
        "ORDER BY level, gridline, mark"
    )
    out = []
    for bid, mark, level, grid, status in db.execute(sql, [site_id]).fetchall():
        rec = {"mark": mark, "level": level, "gridline": grid}
        out.append((bid, {k: v for k, v in rec.items() if v}, UNCHECKED if status == PENDING else status))
    return out


def needing_action(db: Any, site_id: str) -> list[tuple[str, str, list[dict[str, str]]]]:
    """[(beam id, mark, findings)] of a site's beams whose stored result is neither ok nor unchecked.

    In list order, archived beams left out; one indexed read. Call ``refresh`` first.
    """
    sql = (
        "SELECT beam_id, mark, findings FROM beam_result WHERE site_id = ? AND archived = 0 "
        f"AND status NOT IN ('ok', '{UNCHECKED}', '{PENDING}') ORDER BY level, gridline, mark"
    )
    return [(bid, mark, json.loads(found)) for bid, mark, found in db.execute(sql, [site_id]).fetchall()]


# the columns written, in ``as_row``'s order but for the table rows: the id of their set (``rows_set``) instead
# of their text; rows_used itself always holds '[]' (migration 9)
_ROW_COLUMNS = (*COLUMNS.split(", "), "rows_id", *_LISTED.split(", "))
# an upsert, not INSERT OR REPLACE: a row that exists is updated in place, so the indexes on columns
# that did not change (site, list fields) are left alone (about 2.5x cheaper on a rerun)
ROW_SQL = (
    f"INSERT INTO beam_result (rows_used, {', '.join(_ROW_COLUMNS)}) "
    f"VALUES ('[]', {', '.join('?' * len(_ROW_COLUMNS))}) "
    "ON CONFLICT(beam_id) DO UPDATE SET " + ", ".join(f"{c} = excluded.{c}" for c in _ROW_COLUMNS[1:])
)


def _json_of(keys: tuple[str, str, str], items: Triples) -> str:
    """The stored JSON text of findings or table rows: a list of objects with ``keys``."""
    return json.dumps([dict(zip(keys, item, strict=True)) for item in items])


@lru_cache(maxsize=1024)
def _findings_json(items: Triples) -> str:
    """Findings' JSON, encoded once per distinct set (few: a code, a priority, a region each)."""
    return _json_of(FINDING_KEYS, items)


@lru_cache(maxsize=1024)
def _rows_json(items: Triples) -> str:
    """``_json_of(ROW_KEYS, items)``, each row's object encoded once per distinct row.

    Most single rows recur from beam to beam (the grade row, the service and treatment factors, the clause
    notes), and so do whole sets: the beams of a portfolio share a handful (6 on 100k bench beams). One
    text object per distinct set: a part's rows sent back from a worker then carry each set once (pickle
    writes an object it has written before as a reference), and ``write_rows`` hashes each object once.
    The text is the one ``json.dumps`` writes: ``encode_basestring_ascii`` is its encoder for a str.
    """
    return "[" + ", ".join(map(_row_text, items)) + "]"


# the rows that recur are few (26 of 19,482 distinct on 20k bench beams, 88 % of uses): a small cache
@lru_cache(maxsize=2048)
def _row_text(item: tuple[str, str, str]) -> str:
    """One table row's JSON object, as ``json.dumps`` writes it."""
    return "{" + ", ".join(f"{_ascii(k)}: {_ascii(v)}" for k, v in zip(ROW_KEYS, item, strict=True)) + "}"


def as_row(r: StoredResult) -> tuple[Any, ...]:
    """The ``beam_result`` row of a result, in ROW_SQL's column order."""
    return (
        r.beam_id,
        r.site_id,
        r.input_hash,
        r.status,
        r.governing,
        r.utilisation,
        json.dumps(list(r.findings)),
        json.dumps(list(r.rows_used)),
        r.mark,
        r.level,
        r.gridline,
        int(r.archived),
    )


def write(db: Any, results: Iterable[StoredResult]) -> None:
    """Store results with their beams' list fields (inside the caller's transaction)."""
    write_rows(db, [as_row(r) for r in results])


class Untouched:
    """Whether nothing but its holder has written the database since it was made (a run's first read).

    Nothing committed by another connection (SQLite's ``PRAGMA data_version`` unchanged: this connection's own
    commits do not change it) and nothing written through this connection but by the holder (its
    ``total_changes`` where the holder's last write left it). Once it fails it stays failed.
    """

    def __init__(self, db: Any) -> None:
        self.db, self.conn = db, db.conn
        self.version = data_version(db)
        self.changes = self.conn.total_changes
        self.broken = self.version is None  # not SQLite: never taken to hold

    def holds(self) -> bool:
        """True while nothing else has written; ask inside the write transaction (it holds the write lock)."""
        self.broken = self.broken or self.conn.total_changes != self.changes or data_version(self.db) != self.version
        return not self.broken

    def wrote(self) -> None:
        """The holder wrote (inside the same transaction, after ``holds``): its own changes are not another's."""
        self.changes = self.conn.total_changes


def write_rows(db: Any, rows: list[tuple[Any, ...]], untouched: Untouched | None = None) -> None:
    """Store ``beam_result`` rows made by ``as_row`` (inside the caller's transaction), current ones only.

    A row is written only while its key is still the key of the beam's record, site bases and tables as they
    stand inside this transaction (``BEGIN IMMEDIATE`` holds the write lock): a beam saved after its record
    was read keeps its stale mark instead of getting the old recheck under the old key. ``untouched``: made
    before the rows' inputs were read; while it holds, nothing can have changed them, so the records are not
    read and hashed again (the portfolio's parent: ~3.5 us a beam).
    """
    current = rows if untouched is not None and untouched.holds() else _still_current(db, rows)
    ids = _set_ids(db, {r[7]: None for r in current})
    db.conn.executemany(ROW_SQL, [(*r[:7], ids[r[7]], *r[8:]) for r in current])
    if untouched is not None:
        untouched.wrote()


def _set_ids(db: Any, texts: Iterable[str]) -> dict[str, int | None]:
    """The ``rows_set`` id of each table rows' text, adding the sets not held yet (inside the caller's transaction).

    Read inside the writing transaction, never kept across transactions: ``prune_sets`` may remove a set no
    result names between two of them. No rows ('[]') is NULL, as a new beam's placeholder row has it.
    """
    ids: dict[str, int | None] = {}
    for text in texts:
        if text == "[]":
            ids[text] = None
            continue
        found = db.conn.execute("SELECT id FROM rows_set WHERE rows = ?", [text]).fetchone()
        ids[text] = found[0] if found else db.conn.execute("INSERT INTO rows_set (rows) VALUES (?)", [text]).lastrowid
    return ids


def prune_sets(db: Any) -> int:
    """Remove the sets of table rows no stored result names (inside the caller's transaction); how many went."""
    sql = "DELETE FROM rows_set WHERE id NOT IN (SELECT rows_id FROM beam_result WHERE rows_id IS NOT NULL)"
    return int(db.conn.execute(sql).rowcount)


def _still_current(db: Any, rows: list[tuple[Any, ...]]) -> list[tuple[Any, ...]]:
    """The rows whose input hash (row[2]) is the key of their beam's record as it stands now."""
    stamp = tables_stamp(db)
    bases: dict[str, str] = {}
    now: dict[str, str] = {}
    ids = [r[0] for r in rows]
    for i in range(0, len(ids), 500):
        part = ids[i : i + 500]
        sql = f"SELECT id, site_id, data FROM beam WHERE id IN ({','.join('?' * len(part))})"
        for bid, sid, text in db.execute(sql, part).fetchall():
            if sid not in bases:
                bases[sid] = _site_bases(db, sid)
            now[bid] = input_hash(text, bases[sid], stamp)
    return [r for r in rows if now.get(r[0]) == r[2]]


def _text(value: Any) -> str:
    return "" if value is None else str(value)


# beam id, site id, input hash, record text, its list fields' JSON, its site's bases (``_site_bases``)
Job = tuple[str, str, str, str, str, str]
# the fields a result keeps besides the recheck's, as one JSON array read by SQLite from the record
# (json_extract with several paths): [mark, level, gridline, archived], null where absent
_LIST_FIELDS_SQL = "json_extract(b.data, '$.mark', '$.level', '$.gridline', '$.archived')"


def _evaluate(job: Job) -> tuple[list[str], bool, tuple[str, str, float | None, Triples, Triples]]:
    """A job's list fields (mark, level, gridline as text), archived flag and ``_summary``.

    An archived beam is not rechecked. The list fields and the flag are the record's own JSON values
    (SQLite copies each value's text), read without decoding the whole record.
    """
    mark, level, gridline, archived = json.loads(job[4])
    summary = UNCHECKED_SUMMARY if archived else _summary(job[3], job[5])
    return [_text(mark), _text(level), _text(gridline)], bool(archived), summary


def compute(job: Job) -> StoredResult:
    """Recheck one job (``jobs``: beam id, site id, input hash, record text, list fields) into a StoredResult.

    An archived beam is not rechecked (``unchecked``): its row only carries the archived flag.
    """
    beam_id, site_id, key = job[:3]
    (mark, level, gridline), archived, (status, governing, util, findings, used) = _evaluate(job)
    return StoredResult(
        beam_id,
        site_id,
        key,
        status,
        governing,
        util,
        tuple(dict(zip(FINDING_KEYS, f, strict=True)) for f in findings),
        tuple(dict(zip(ROW_KEYS, r, strict=True)) for r in used),
        mark=mark,
        level=level,
        gridline=gridline,
        archived=archived,
    )


def jobs(db: Any, site_id: str | None = None, only_stale: bool = True) -> Iterator[Job]:
    """(beam id, site id, input hash, record text, list fields) of every beam (of a site) without a current result.

    The database's triggers (storage/db.py, migrations 3 and 4) give every new beam a stale result row
    and mark a result stale when its beam, its site's design bases or a firm table record changes, so
    stale ones are found through a small index without reading any other record (archived beams too:
    their rows then carry the archived flag). With ``only_stale=False``, every beam not archived.
    """
    from storage import firm_tables

    # the stamp first: a table record that arrives between the two (a sync in another thread) leaves these rows
    # hashed under the older stamp, so ``write_rows`` drops them (they stay stale) instead of storing rows
    # computed with the older records under the newer stamp
    stamp = tables_stamp(db)
    firm_tables.apply(db)  # lookups honour the firm's verified and corrected rows (inherited by workers)
    bases: dict[str, str] = {}
    if only_stale:
        sql = (
            f"SELECT b.id, b.site_id, b.data, {_LIST_FIELDS_SQL} FROM beam_result r JOIN beam b ON b.id = r.beam_id "
            "WHERE r.input_hash = ''" + (" AND r.site_id = ?" if site_id else "") + " ORDER BY b.id"
        )
    else:
        sql = _every_beam_sql(site_id) + " ORDER BY b.id"
    for bid, sid, text, listed in db.execute(sql, [site_id] if site_id else []).fetchall():
        if sid not in bases:
            bases[sid] = _site_bases(db, sid)
        yield bid, sid or "", input_hash(text, bases[sid], stamp), text, listed, bases[sid]


def _every_beam_sql(site_id: str | None, after: bool = False, paged: bool = False) -> str:
    """Every beam not archived (of a site; ``after``: with an id above a bound), as a job's columns.

    ``paged``: read in id order through the id index (``+b.site_id`` keeps SQLite off the site index,
    which would sort the whole site again for every page: 0.31 s instead of 0.03 s for a 10k site).
    """
    site = ["+b.site_id = ?" if paged else "b.site_id = ?"] if site_id else []
    where = [*site, "NOT coalesce(json_extract(b.data, '$.archived'), 0)"] + (["b.id > ?"] if after else [])
    return f"SELECT b.id, b.site_id, b.data, {_LIST_FIELDS_SQL} FROM beam b WHERE " + " AND ".join(where)


Raw = tuple[str, str | None, str, str]  # beam id, site id, record text, list fields' JSON: a job before its hash
Part = tuple[str, dict[str | None, str], list[Raw]]  # the tables stamp, site id -> its bases, the records


def _parts(db: Any, site_id: str | None, chunk: int, stamp: str) -> Iterator[Part]:
    """The portfolio's parts: ``chunk`` records at a time in id order, each read when it is asked for.

    Read page by page (an id bound and a limit: no cursor stays open across the caller's writes), so
    only the parts in flight are in memory. Each part carries what its worker needs to hash its jobs, with
    ``stamp``, the tables stamp read before the firm's records were applied (``jobs`` says why).
    """
    bases: dict[str | None, str] = {}
    first, more = _every_beam_sql(site_id, paged=True), _every_beam_sql(site_id, after=True, paged=True)
    head = [site_id] if site_id else []
    last: str | None = None
    while True:
        sql, args = (first, head) if last is None else (more, [*head, last])
        raw: list[Raw] = db.execute(f"{sql} ORDER BY b.id LIMIT ?", [*args, chunk]).fetchall()
        if not raw:
            return
        sites = {r[1] for r in raw}
        for sid in sites - bases.keys():
            bases[sid] = _site_bases(db, sid)
        yield stamp, {sid: bases[sid] for sid in sites}, raw
        last = raw[-1][0]


_ARCHIVED_SQL = "coalesce(json_extract(b.data, '$.archived'), 0)"


def _count(db: Any, site_id: str | None, archived: bool = False) -> int:
    """How many beams (of a site) the portfolio rechecks: every one not archived (``archived``: those it leaves out)."""
    where = ("" if archived else "NOT ") + _ARCHIVED_SQL + (" AND b.site_id = ?" if site_id else "")
    return int(db.execute(f"SELECT count(*) FROM beam b WHERE {where}", [site_id] if site_id else []).fetchone()[0])


def archived_count(db: Any, site_id: str | None) -> int:
    """How many beams (of a site) are archived: the portfolio recheck leaves them out."""
    return _count(db, site_id, archived=True)


Place = tuple[str, str, str, str]  # site name, mark, level, gridline ('' when not recorded)


def places(db: Any, beam_ids: list[str], chunk: int = 500) -> dict[str, Place]:
    """Site name, mark, level and gridline of each beam in ``beam_ids`` (read ``chunk`` ids at a time)."""
    out: dict[str, Place] = {}
    for i in range(0, len(beam_ids), chunk):
        ids = beam_ids[i : i + chunk]
        rows = db.execute(
            "SELECT b.id, json_extract(s.data, '$.name'), json_extract(b.data, '$.mark'), "
            "json_extract(b.data, '$.level'), json_extract(b.data, '$.gridline') "
            f"FROM beam b LEFT JOIN site s ON s.id = b.site_id WHERE b.id IN ({','.join('?' * len(ids))})",
            ids,
        ).fetchall()
        out.update({r[0]: (str(r[1] or ""), str(r[2] or ""), str(r[3] or ""), str(r[4] or "")) for r in rows})
    return out


def has_stale(db: Any, site_id: str) -> bool:
    """True when a result of the site is stale: its beam, the site's bases or a table row changed since it was stored.

    One probe of the partial index of stale rows (migration 4), for a screen that asks whether what it shows
    is still current (a sync in another thread may have changed a beam).
    """
    sql = "SELECT 1 FROM beam_result WHERE site_id = ? AND input_hash = '' LIMIT 1"
    return db.execute(sql, [site_id]).fetchone() is not None


def stale_count(db: Any, site_id: str) -> int:
    """How many of the site's results are stale: the beams ``refresh`` would recheck (through the stale-row index)."""
    sql = "SELECT count(*) FROM beam_result WHERE site_id = ? AND input_hash = ''"
    return int(db.execute(sql, [site_id]).fetchone()[0])


def refresh(db: Any, site_id: str) -> int:
    """Recompute (here, in this process) the stale results of a site in one transaction; return how many were stale."""
    stored = [stale for _, stale in refresh_parts(db, site_id)]  # one part, or none when nothing is stale
    return stored[-1] if stored else 0


def refresh_parts(db: Any, site_id: str, part: int | None = None) -> Iterator[tuple[int, int]]:
    """Recompute a site's stale results ``part`` beams at a time (None: all at once); yield (done, stale) after each.

    Each part is stored in its own transaction before it is yielded, so a caller that stops iterating (the
    site screen's background recheck, when the reviewer leaves) keeps the parts already stored and leaves the
    rest stale for the next reader. The stale beams are found once, at the start; a beam saved after that
    keeps its stale mark (``write_rows``). Rows by ``row_of`` (the rows ``as_row(compute(job))`` gives,
    without building each StoredResult: about 8 % less CPU a beam), summaries through the per-process memo.
    """
    if part is not None and part < 1:
        msg = f"part must be at least 1 beam (or None for all at once), got {part}"
        raise ValueError(msg)
    todo = list(jobs(db, site_id))
    memo_reset()
    step = part or max(len(todo), 1)
    for start in range(0, len(todo), step):
        rows = [row_of(j) for j in todo[start : start + step]]
        with transaction(db):
            write_rows(db, rows)
        yield min(start + step, len(todo)), len(todo)


def fresh(db: Any, site_id: str) -> dict[str, StoredResult]:
    """Every current result of a site, recomputing only the stale ones."""
    refresh(db, site_id)
    return stored(db, site_id)


def progress_bar(done: int, total: int, width: int = 40) -> str:
    """'[#########...........]  1,234 / 10,000 beams' for the portfolio recheck's stderr."""
    filled = width * done // total if total else width
    return f"[{'#' * filled}{'.' * (width - filled)}] {done:,} / {total:,} beams"


@dataclass(frozen=True)
class Summary:
    """What the portfolio recheck compares and reports of a result: status, governing check, utilisation."""

    beam_id: str
    status: str
    governing: str
    utilisation: float | None


@dataclass
class PortfolioRun:
    """What a portfolio recheck did: how many beams it rechecked, and those whose result moved.

    ``moved``: (stored before, new) for every beam with no stored result or whose status, governing
    check or utilisation differs; the others are counted, stored and not kept (memory stays bounded).
    """

    rechecked: int = 0
    moved: list[tuple[Summary | None, Summary]] = field(default_factory=list)


Light = dict[str, tuple[str, str, float | None]]  # beam id -> (status, governing, utilisation)


def _before(db: Any, site_id: str | None) -> Light:
    """Map beam id -> (status, governing, utilisation) of the stored results: the light columns only."""
    sql = f"SELECT beam_id, status, governing, utilisation FROM beam_result WHERE status != '{PENDING}'"
    sql += " AND site_id = ?" if site_id else ""
    return {r[0]: (r[1], r[2], r[3]) for r in db.execute(sql, [site_id] if site_id else []).fetchall()}


def recheck_all(
    db: Any,
    site_id: str | None = None,
    processes: int = 2,
    on_progress: Callable[[int, int], None] | None = None,
    chunk: int = 500,
    commit_rows: int = 5000,
) -> PortfolioRun:
    """Recheck every stored beam (of one site, or all) and store the results; return what moved.

    The rechecks run in ``processes`` worker processes (1 = in this process), ``chunk`` beams a task,
    in id order. The records are streamed to the workers part by part (``_parts``, two parts in flight
    per worker), so the workers start on the first parts at once and no more records are held than are
    in flight; each worker hashes its jobs and encodes their rows for storage, so this process only
    reads the records, compares the light columns with the stored ones and writes rows, ``commit_rows``
    a transaction. This process runs with automatic cyclic collection paused (``storage.gcpause``); the
    workers are started before it and pause their own collector for each part (``_rows_of``).
    """
    from storage import firm_tables

    untouched = Untouched(db)  # before anything is read: while it holds, every row computed is current
    stamp = tables_stamp(db)  # before the records are applied (``jobs`` says why)
    firm_tables.apply(db)  # before any worker starts: workers inherit the firm's table rows
    memo_reset()  # so do they the memo's fresh count
    with _workers(processes) as pool, gc_paused():  # workers fork first: they inherit neither records nor pause
        parts = _InFlight(pool, _parts(db, site_id, chunk, stamp), ahead=2 * processes)  # the workers start now
        before = _before(db, site_id)
        total = _count(db, site_id)
        run = PortfolioRun()
        if on_progress:
            on_progress(0, total)
        pending: list[tuple[Any, ...]] = []
        for rows in parts:
            pending += rows
            run.moved += _moved(before, rows)
            if len(pending) >= commit_rows:
                _write_batch(db, pending, untouched)
                pending = []
            run.rechecked += len(rows)
            if on_progress:
                on_progress(run.rechecked, total)
        _write_batch(db, pending, untouched)
        with transaction(db):
            prune_sets(db)  # the sets the results named before this run and no longer do
    return run


class _InFlight:
    """The rows of each part, in order, with up to ``ahead`` parts sent to the pool before they are asked for.

    The first parts are sent at construction, so the workers start before the caller reads anything
    else; each row list taken sends the next part. Without a pool, each part is rechecked here when its
    rows are asked for.
    """

    def __init__(self, pool: Any, parts: Iterator[Part], ahead: int) -> None:
        self._pool, self._parts = pool, parts
        self._flight: deque[Any] = deque()
        if pool is not None:
            for _ in range(ahead):
                self._send()

    def _send(self) -> None:
        part = next(self._parts, None)
        if part is not None:
            self._flight.append(self._pool.apply_async(_rows_of, (part,)))

    def __iter__(self) -> Iterator[list[tuple[Any, ...]]]:
        if self._pool is None:
            yield from map(_rows_of, self._parts)
            return
        while self._flight:
            rows = self._flight.popleft().get()
            self._send()
            yield rows


def _moved(before: Light, rows: list[tuple[Any, ...]]) -> list[tuple[Summary | None, Summary]]:
    """(stored, new) of the rows whose status, governing check or utilisation differ from the stored ones."""
    out = []
    for row in rows:
        was = before.get(row[0])
        if was is None or was != (row[3], row[4], row[5]):
            out.append((None if was is None else Summary(row[0], *was), Summary(row[0], row[3], row[4], row[5])))
    return out


def _write_batch(db: Any, rows: list[tuple[Any, ...]], untouched: Untouched) -> None:
    if rows:
        with transaction(db):
            write_rows(db, rows, untouched)


@contextmanager
def _workers(processes: int) -> Iterator[Any]:
    """A pool of ``processes`` worker processes (None for 1: everything runs here)."""
    if processes <= 1:
        yield None
        return
    import multiprocessing

    ctx = multiprocessing.get_context("fork" if sys.platform.startswith("linux") else "spawn")
    with ctx.Pool(processes, initializer=_worker_signals) as pool:
        yield pool


def _worker_signals() -> None:
    """A worker ends on SIGTERM, whatever handler the parent had (the pool's end terminates its workers).

    A forked worker inherits the parent's handlers: in a process that has opened a window, SDL's handler
    turns SIGTERM into a quit event, so ``Pool.terminate`` waited for ever on a worker blocked on the task
    queue's lock (a portfolio recheck run after the app's screens, in the test process, hung there).
    """
    import signal

    signal.signal(signal.SIGTERM, signal.SIG_DFL)


def _rows_of(part: Part) -> list[tuple[Any, ...]]:
    """Hash and recheck a part's records into ``beam_result`` rows (run in a worker: small tuples sent back).

    Automatic cyclic collection is paused for the part (a recheck makes no reference cycles: after a
    paused portfolio recheck of 10,000 beams in one process, ``gc.collect()`` found none).
    """
    stamp, bases, raw = part
    with gc_paused():
        return [
            row_of((bid, sid or "", input_hash(text, bases[sid], stamp), text, listed, bases[sid]))
            for bid, sid, text, listed in raw
        ]


def row_of(job: Job) -> tuple[Any, ...]:
    """``as_row(compute(job))`` without the StoredResult (the findings' and rows' JSON shared)."""
    (mark, level, gridline), archived, (status, governing, util, findings, used) = _evaluate(job)
    return (
        *job[:3],
        status,
        governing,
        util,
        _findings_json(findings),
        _rows_json(used),
        mark,
        level,
        gridline,
        int(archived),
    )


def changed(
    pairs: Iterable[tuple[Summary | None, Summary]],
) -> list[tuple[Summary | None, Summary]]:
    """The pairs whose status or governing check differ (a beam with no stored result counts as changed)."""
    return [(b, a) for b, a in pairs if b is None or (b.status, b.governing) != (a.status, a.governing)]
