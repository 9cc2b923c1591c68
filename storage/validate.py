"""Imported records pass the same pydantic models as a local save, before the first write.

A bundle op carries a partial record (``set``), a whole one (``insert``) or a status move. Each is
checked here field by field against ``core``'s models; the first bad field refuses the bundle whole,
naming the record and the field.
"""

from __future__ import annotations

import hashlib
import re
from functools import cache
from typing import Annotated, Any

from pydantic import BaseModel, TypeAdapter, ValidationError

from core.models import Beam, bearings_with_stand_ins
from core.overrides import TableRecord, record_id
from core.records import Deficiency, IssuedNotice, PhotoRecord, Site, Stage, StatusEvent, Visit
from core.results import PRIORITY_ORDER
from storage.clock import HLC_MAX
from storage.oplog import MAX_ID_CHARS, Op, OpKind, canonical

SHA256 = re.compile(r"^[0-9a-f]{64}$")
MAX_VALUE_CHARS = 100_000  # one field's canonical JSON (a long description fits easily)
MAX_CYCLE = 1_000

MODELS: dict[str, type[BaseModel]] = {
    "site": Site,
    "visit": Visit,
    "beam": Beam,
    "deficiency": Deficiency,
    "table_row": TableRecord,
}
# every record that travels in ops, by entity: what ``storage.db.SCHEMA_VERSION`` versions
SYNCED_MODELS: dict[str, type[BaseModel]] = {
    **MODELS,
    "issued_notice": IssuedNotice,
    "photo": PhotoRecord,
    "deficiency_event": StatusEvent,
}


def _shape(schema: Any) -> Any:
    """A JSON Schema without its titles and descriptions (wording is not shape)."""
    if isinstance(schema, dict):
        return {k: _shape(v) for k, v in schema.items() if k not in ("title", "description")}
    if isinstance(schema, list):
        return [_shape(v) for v in schema]
    return schema


def record_schema_fingerprint() -> str:
    """SHA-256 of the shape of every synced record (fields, types, defaults, bounds).

    A change needs a new ``storage.db.SCHEMA_VERSION`` (ledger: tests/storage/record_schemas.txt), so that
    an older app holds what it cannot read instead of refusing or misreading it.
    """
    shapes = {entity: _shape(model.model_json_schema()) for entity, model in sorted(SYNCED_MODELS.items())}
    return hashlib.sha256(canonical(shapes).encode()).hexdigest()


# fields a record holds besides its model's (location, drafts, bookkeeping); free JSON, size-bounded
ALWAYS_TEXT_ID = ("site_id", "beam_id", "deficiency_id")


class RecordInvalid(ValueError):
    """An imported record that a local save would have refused."""


def check_priority(priority: Any) -> None:
    """The deficiency priorities the app offers (the same rule as ``Store.raise_deficiency``)."""
    if priority not in PRIORITY_ORDER:
        msg = f"priority {priority!r}; allowed: {list(PRIORITY_ORDER)}"
        raise ValueError(msg)


@cache
def _adapter(entity: str, field: str) -> TypeAdapter[Any] | None:
    model = MODELS[entity]
    info = model.model_fields.get(field)
    if info is None:
        return None
    annotation: Any = info.annotation
    if entity == "beam":  # an undo may put back a field that was never set
        annotation = annotation | None
    return TypeAdapter(Annotated[annotation, info])


def _where(op: Op, field: str) -> str:
    return f"{op.entity} {op.record_id} field {field!r} (op {op.origin[:8]}:{op.seq})"


def _first_error(exc: ValidationError) -> str:
    e = exc.errors()[0]
    loc = ".".join(str(p) for p in e["loc"])
    return f"{loc + ': ' if loc else ''}{e['msg']} (got {str(e.get('input'))[:60]!r})"


def _long(payload_text: str) -> bool:
    """Whether any field's value can be too long: each one's canonical text is part of the payload's."""
    return len(payload_text) > MAX_VALUE_CHARS


def _check_size(op: Op, field: str, value: Any) -> None:
    if len(canonical(value)) > MAX_VALUE_CHARS:
        msg = f"{_where(op, field)}: value longer than {MAX_VALUE_CHARS} characters"
        raise RecordInvalid(msg)


def _check_id(op: Op, field: str, value: Any, optional: bool) -> None:
    if value is None and optional:
        return
    if not isinstance(value, str) or not 0 < len(value) <= MAX_ID_CHARS:
        msg = f"{_where(op, field)}: must be a record id (text of 1 to {MAX_ID_CHARS} characters)"
        raise RecordInvalid(msg)


def _check_set_field(op: Op, field: str, value: Any, long: bool) -> None:
    """One field of an edit: ids as ids, model fields by the model, nothing a local edit cannot set."""
    if long:
        _check_size(op, field, value)
    if op.entity == "table_row" and field not in TableRecord.model_fields:  # a firm's record holds its model's alone
        msg = f"{_where(op, field)}: not a field of table_row"
        raise RecordInvalid(msg)
    if field == "site_id" or field in ALWAYS_TEXT_ID:
        _check_id(op, field, value, optional=field != "site_id")
        return
    if op.entity != "beam" and field in ("id", "cycle", "stage"):
        msg = f"{_where(op, field)}: not set by an edit"
        raise RecordInvalid(msg)
    adapter = _adapter(op.entity, field)
    if op.entity == "beam" and field == "bearings" and isinstance(value, list):
        # as the app saves a beam being entered: a restraint or length not yet entered is None
        value = bearings_with_stand_ins(value, len(value))
    if adapter is None:
        if op.entity != "beam":  # beams carry location fields and drafts besides the model's
            msg = f"{_where(op, field)}: not a field of {op.entity}"
            raise RecordInvalid(msg)
        return
    try:
        adapter.validate_python(value)
        if op.entity == "deficiency" and field == "priority":
            check_priority(value)
    except (ValidationError, ValueError) as exc:
        why = _first_error(exc) if isinstance(exc, ValidationError) else str(exc)
        msg = f"{_where(op, field)}: {why}"
        raise RecordInvalid(msg) from exc


def _is_stamp(stamp: Any) -> bool:
    """A base stamp: [hlc, origin] with the hlc in range and the origin an id."""
    return (
        isinstance(stamp, list)
        and len(stamp) == 2
        and isinstance(stamp[0], int)
        and not isinstance(stamp[0], bool)
        and 0 <= stamp[0] <= HLC_MAX
        and isinstance(stamp[1], str)
        and 0 < len(stamp[1]) <= MAX_ID_CHARS
    )


def _check_table_row(op: Op) -> None:
    """A table row record whole in one edit (as ``firm_tables.record`` writes it) passes the model whole, under its id.

    An edit of part of a record (written by an older app resolving a conflict) is checked field by field only:
    refusing it would refuse its whole bundle for good; the record it leaves is checked whole where it is used
    (``firm_tables.read``), and set aside there if it is not valid.
    """
    if not set(TableRecord.model_fields) <= set(op.payload):
        return
    try:
        record = TableRecord.model_validate(op.payload)
    except ValidationError as exc:
        field = ".".join(str(p) for p in exc.errors()[0]["loc"]) or "(record)"
        msg = f"{_where(op, field)}: {_first_error(exc)}"
        raise RecordInvalid(msg) from exc
    if record_id(record.table, record.row) != op.record_id:
        msg = f"{_where(op, 'row')}: names table {record.table!r} row {record.row!r}, not the row of its record id"
        raise RecordInvalid(msg)


def _check_set(op: Op, long: bool) -> None:
    for field, value in op.payload.items():
        _check_set_field(op, field, value, long)
    if op.entity == "table_row":
        _check_table_row(op)
    for field, stamp in op.base.items():
        if not _is_stamp(stamp):
            msg = f"{_where(op, field)}: base stamp {str(stamp)[:60]} is not [hlc, origin]"
            raise RecordInvalid(msg)


def _check_status(op: Op, long: bool) -> None:
    p = op.payload
    try:
        StatusEvent.model_validate(
            {k: p.get(k) for k in StatusEvent.model_fields if k in p} | {"deficiency_id": op.record_id}
        )
    except ValidationError as exc:
        field = str(exc.errors()[0]["loc"][0]) if exc.errors()[0]["loc"] else "(status)"
        msg = f"{_where(op, field)}: {_first_error(exc)}"
        raise RecordInvalid(msg) from exc
    if not isinstance(p["cycle"], int) or not 0 <= p["cycle"] <= MAX_CYCLE:
        msg = f"{_where(op, 'cycle')}: {p['cycle']!r} out of range 0 to {MAX_CYCLE}"
        raise RecordInvalid(msg)
    if p["stage"] not in tuple(int(s) for s in Stage) or isinstance(p["stage"], bool):
        msg = f"{_where(op, 'stage')}: {p['stage']!r}; allowed {[int(s) for s in Stage]}"
        raise RecordInvalid(msg)
    extra = set(p) - set(StatusEvent.model_fields) - {"site_id"}
    if extra:
        msg = f"{_where(op, sorted(extra)[0])}: not a field of a status move"
        raise RecordInvalid(msg)
    _check_id(op, "site_id", p.get("site_id"), optional=True)
    for field, value in p.items() if long else ():
        _check_size(op, field, value)


def _check_insert(op: Op, long: bool) -> None:
    p = op.payload
    for field, value in p.items() if long else ():
        _check_size(op, field, value)
    if op.entity == "issued_notice":
        try:
            IssuedNotice.model_validate(dict(p, id=op.record_id))
        except ValidationError as exc:
            field = str(exc.errors()[0]["loc"][0]) if exc.errors()[0]["loc"] else "(notice)"
            msg = f"{_where(op, field)}: {_first_error(exc)}"
            raise RecordInvalid(msg) from exc
        if not SHA256.match(str(p["pdf_sha256"])):
            msg = f"{_where(op, 'pdf_sha256')}: not a SHA-256"
            raise RecordInvalid(msg)
        _check_id(op, "site_id", p["site_id"], optional=False)
        return
    _check_id(op, "site_id", p.get("site_id"), optional=False)
    for field in ("beam_id", "deficiency_id"):
        _check_id(op, field, p.get(field), optional=True)
    if op.entity == "photo":
        _check_photo(op, p)


CAPTION_MAX = PhotoRecord.model_fields["caption"].metadata[0].max_length


def _check_photo(op: Op, p: dict[str, Any]) -> None:
    """A photo record as a local save writes it (``PhotoRecord``: ids, SHA-256, time, marks within the photo).

    All but the caption's length: photos of 0.6.0 had no limit on it, and a markup copies its original's.
    """
    if not SHA256.match(str(p.get("sha256"))):
        msg = f"{_where(op, 'sha256')}: not a SHA-256"
        raise RecordInvalid(msg)
    caption = p.get("caption", "")
    try:
        PhotoRecord.model_validate(dict(p, caption=caption[:CAPTION_MAX] if isinstance(caption, str) else caption))
    except ValidationError as exc:
        field = ".".join(str(x) for x in exc.errors()[0]["loc"]) or "(photo)"
        msg = f"{_where(op, field)}: {_first_error(exc)}"
        raise RecordInvalid(msg) from exc


STAGE_VERIFIED = 2  # a deficiency's stages: 0 open, 1 corrected, 2 verified


def reviewer_only(op: Op, role: str | None) -> str | None:
    """Why a status move is refused: only a device enrolled as a reviewer verifies a deficiency; else None.

    ``role``: the role the office hub enrolled the op's origin device for; None when it is not known (a hub
    that lists no roles, a demo database), and nothing is refused then. The hub holds the same rule
    (office/rules.py), so a tablet and the hub agree on what such a move does.
    """
    if role is None or role == "reviewer" or op.kind != "status":
        return None
    if int(op.payload.get("stage", -1)) == STAGE_VERIFIED:
        return f"not_reviewer: only a reviewer verifies a deficiency; this device is enrolled as {role}"
    return None


def check_op_record(op: Op, payload_text: str | None = None) -> None:
    """Raise RecordInvalid (naming record and field) unless the op's content is what a local save writes.

    ``payload_text`` is ``op.payload_text`` when the caller has encoded it already.
    """
    long = _long(op.payload_text if payload_text is None else payload_text)
    if op.kind == OpKind.SET:
        _check_set(op, long)
    elif op.kind == OpKind.STATUS:
        _check_status(op, long)
    else:
        _check_insert(op, long)


__all__ = ["SYNCED_MODELS", "RecordInvalid", "check_op_record", "check_priority", "record_schema_fingerprint"]
