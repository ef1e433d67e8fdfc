"""The append-only audit trail: one hash-chained event per write, and its verification.

Each event stores the canonical JSON snapshot of the whole row after the write;
a large derived text column (``info={"audit": "digest"}``, a run's computed
result) is in it as its fingerprint ``sha256:<hex>``, and events written before
that hold its full text, which verification accepts as well (see ``_check_rows``).
Its hash covers (seq, at, actor, action, record_type, record_id, values, reason,
performed_at, prev_hash), so an edited, removed or reordered event breaks the
chain. With ``PREPBOOK_AUDIT_KEY_FILE`` naming a file that holds a lab secret
kept outside the database, the hash is an HMAC and a chain rewritten without the
secret no longer verifies. ``verify`` also compares every current row with the
snapshot of its last event, so a row edited, added or deleted behind prepbook's
back is found and named.

The hash is stored with its scheme (``sha256:<hex>`` or ``hmac-sha256:<hex>``) so
verification can say which one a chain was written with.
"""

from __future__ import annotations

import hashlib
import hmac
import json
import math
import os
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from datetime import UTC, date, datetime, time, timedelta
from json.decoder import scanstring  # type: ignore[attr-defined]
from json.encoder import c_make_encoder, encode_basestring  # type: ignore[attr-defined]
from pathlib import Path
from typing import Any

from sqlalchemy import String, select, type_coerce
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput
from prepbook.store.models import (
    AUDITED_TABLES,
    AuditEvent,
    AuditHead,
    Base,
    audited_in_digest,
    digested_columns,
    fingerprint,
    is_fingerprint,
    legacy_to_digest,
    passthrough_type,
    snapshot,
    snapshot_columns,
)

KEY_ENV = "PREPBOOK_AUDIT_KEY_FILE"
PLAIN = "sha256"
KEYED = "hmac-sha256"
_MAX_LISTED = 10  # problems of one kind listed one by one before they are counted

_events = AuditEvent.__table__
_head = AuditHead.__table__


@dataclass(frozen=True)
class VerifyReport:
    """Outcome of ``verify``: ok only when the chain and every audited row check out."""

    ok: bool
    events: int
    head_hash: str | None
    problems: tuple[str, ...]


# Built once: json.dumps with options would build a new encoder per call (verify is hot).
_canonical = json.JSONEncoder(
    sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False
).encode
_in_order = json.JSONEncoder(separators=(",", ":"), ensure_ascii=False, allow_nan=False).encode


def _not_json(value: Any) -> Any:
    raise TypeError(f"Object of type {type(value).__name__} is not JSON serializable")


if c_make_encoder is not None:
    # The C encoder ``_in_order`` builds on every call, built once: the same text for
    # the flat dicts of scalars the row check writes (no nesting, so no cycle check).
    _c_in_order = c_make_encoder(
        None, _not_json, encode_basestring, None, ":", ",", False, False, False
    )

    def _flat_json(value: dict[str, Any]) -> str:
        """``_in_order`` of a flat dict of scalars, without its per-call setup."""
        return "".join(_c_in_order(value, 0))
else:  # pragma: no cover - a Python without the _json accelerator

    def _flat_json(value: dict[str, Any]) -> str:
        return _in_order(value)


def canonical_json(value: Any) -> str:
    """The one JSON spelling of a value: sorted keys, no spaces, UTF-8, no NaN."""
    return _canonical(value)


def _json_bool(value: bool) -> str:
    return "true" if value else "false"


def _json_float(value: float) -> str:
    # json writes finite floats with float.__repr__; let it raise on NaN as it would.
    return float.__repr__(value) if math.isfinite(value) else _in_order(value)


# Exactly what _in_order writes for these scalar types, without its per-call setup.
_SCALAR: dict[type, Callable[[Any], str]] = {
    str: encode_basestring,
    int: int.__repr__,
    float: _json_float,
    bool: _json_bool,
    type(None): lambda _value: "null",
}


def _scalar_json(value: Any) -> str:
    write = _SCALAR.get(type(value))
    return write(value) if write is not None else _in_order(value)


def _object_json(keys: tuple[str, ...], values: Any) -> str:
    """``_in_order`` of a dict with these (already JSON-quoted, colon-ended) keys."""
    return "{" + ",".join(k + _scalar_json(v) for k, v in zip(keys, values, strict=True)) + "}"


def utc_naive(moment: datetime) -> datetime:
    """A datetime as naive UTC (aware ones converted; naive ones taken as UTC already)."""
    if moment.tzinfo is not None:
        return moment.astimezone(UTC).replace(tzinfo=None)
    return moment


def _iso(moment: datetime | None) -> str | None:
    return None if moment is None else moment.isoformat(timespec="microseconds")


def read_key() -> bytes | None:
    """The lab's audit secret from the file named by PREPBOOK_AUDIT_KEY_FILE, if set."""
    name = os.environ.get(KEY_ENV)
    if not name:
        return None
    try:
        key = Path(name).expanduser().read_bytes().strip()
    except OSError as exc:
        raise InvalidInput(f"cannot read the audit key file named by {KEY_ENV}: {exc}") from exc
    if not key:
        raise InvalidInput(f"the audit key file named by {KEY_ENV} ({name}) is empty")
    return key


def _hasher(key: bytes | None) -> tuple[str, Callable[[bytes], str]]:
    if key is None:
        return PLAIN, lambda payload: hashlib.sha256(payload).hexdigest()
    return KEYED, lambda payload: hmac.new(key, payload, hashlib.sha256).hexdigest()


def _payload(
    seq: int,
    at: str | None,
    actor: str,
    action: str,
    record_type: str,
    record_id: int,
    values: str,
    reason: str | None,
    performed_at: str | None,
    prev_hash: str | None,
) -> bytes:
    if (
        type(seq) is int
        and type(record_id) is int
        and type(at) is str
        and type(actor) is str
        and type(action) is str
        and type(record_type) is str
        and type(values) is str
    ):
        # The usual shapes, written in one go (verify's hot path); same bytes as below.
        q = encode_basestring
        text = (
            f"[{seq},{q(at)},{q(actor)},{q(action)},{q(record_type)},{record_id},{q(values)},"
            f"{'null' if reason is None else _scalar_json(reason)},"
            f"{'null' if performed_at is None else _scalar_json(performed_at)},"
            f"{'null' if prev_hash is None else _scalar_json(prev_hash)}]"
        )
        return text.encode()
    fields = (seq, at, actor, action, record_type, record_id, values, reason, performed_at)
    # Same bytes as json.dumps(list(fields), separators=(",", ":"), ensure_ascii=False).
    return ("[" + ",".join(map(_scalar_json, (*fields, prev_hash))) + "]").encode()


_HEAD_KEY = "prepbook_audit_head"


def _locked_head(session: Session) -> AuditHead | None:
    """The head row, read (and locked) once per transaction.

    The first event of a transaction reads the head FOR UPDATE (on SQLite the
    BEGIN IMMEDIATE write lock already excludes other writers); until that
    transaction ends nobody else can move the head, so later events of the same
    transaction use the row already held instead of reading it again. A savepoint
    rolled back expires the object, which then reloads itself on first use.
    """
    transaction = session.get_transaction()
    held = session.info.get(_HEAD_KEY)
    if held is not None and held[0] is transaction and held[1] in session:
        return held[1]  # type: ignore[no-any-return]
    head = session.execute(
        select(AuditHead)
        .where(AuditHead.id == 1)
        .with_for_update()
        .execution_options(populate_existing=True)
    ).scalar_one_or_none()
    if head is not None:
        session.info[_HEAD_KEY] = (transaction, head)
    return head


def record(
    session: Session,
    *,
    actor: str,
    action: str,
    row: Base,
    reason: str | None = None,
    performed_at: datetime | None = None,
) -> int:
    """Append the audit event for a write to ``row`` in the caller's transaction; its seq.

    Call it after every insert or permitted update. The head row is locked for the
    rest of the transaction (FOR UPDATE on PostgreSQL; on SQLite the session's
    BEGIN IMMEDIATE already holds the write lock), so events never interleave.
    """
    if not actor or not actor.strip():
        raise InvalidInput("an audit event needs an actor")
    if not action or not action.strip():
        raise InvalidInput("an audit event needs an action")
    table = row.__table__  # type: ignore[attr-defined]
    if table.name not in AUDITED_TABLES:
        raise InvalidInput(f"{table.name} rows are not audited")
    scheme, digest = _hasher(read_key())

    if getattr(row, "id", None) is None:
        session.flush()  # a new row gets its id
    values = canonical_json(snapshot(row))
    record_id = int(row.id)  # type: ignore[attr-defined]

    head = _locked_head(session)
    if head is None:
        # Only a schema built without the migration lacks the seeded head row.
        if session.execute(select(AuditEvent.seq).limit(1)).first() is not None:
            from prepbook.errors import IntegrityError

            raise IntegrityError("the audit head row is missing: run `prepbook audit verify`")
        head = AuditHead(id=1, seq=0, hash=None)
        session.add(head)
        session.info[_HEAD_KEY] = (session.get_transaction(), head)

    seq = head.seq + 1
    at = datetime.now(UTC).replace(tzinfo=None)
    when = utc_naive(performed_at) if performed_at is not None else None
    payload = _payload(
        seq,
        _iso(at),
        actor,
        action,
        table.name,
        record_id,
        values,
        reason,
        _iso(when),
        head.hash,
    )
    new_hash = f"{scheme}:{digest(payload)}"
    session.add(
        AuditEvent(
            seq=seq,
            at=at,
            actor=actor,
            action=action,
            record_type=table.name,
            record_id=record_id,
            values=values,
            reason=reason,
            performed_at=when,
            prev_hash=head.hash,
            hash=new_hash,
        )
    )
    head.seq = seq
    head.hash = new_hash
    # Not flushed here: the event and the head go out with the session's next flush
    # (the next write, query or the commit), in the same transaction. One flush per
    # write instead of two; whatever reads the trail through the ORM autoflushes, and
    # ``verify`` and ``log`` flush first.
    return seq


def _label(record_type: str, record_id: Any, values: dict[str, Any] | None) -> str:
    """'batches #3 (code B-1)': the table, the id and the human key where there is one."""
    text = f"{record_type} #{record_id}"
    if values:
        for key in ("code", "name", "key"):
            if values.get(key) is not None:
                return f"{text} ({key} {values[key]})"
    return text


def _stored_time_iso(raw: Any) -> str | None:
    """The canonical ISO text of a stored time, whatever the driver hands back.

    SQLite gives SQLAlchemy's text ``YYYY-MM-DD HH:MM:SS.ffffff``; that exact shape
    is rewritten without parsing (verify's hot path). Any other text is parsed; a
    change to the text changes the result, so the hash check still sees it.
    """
    if raw is None:
        return None
    if isinstance(raw, datetime):
        return _iso(raw)
    text = str(raw)
    if len(text) == 26 and text[10] == " " and text[19] == ".":
        return f"{text[:10]}T{text[11:]}"
    return _iso(datetime.fromisoformat(text))


class _Problems:
    """Problems grouped by kind, each kind listed up to a limit and then counted."""

    def __init__(self) -> None:
        self._kinds: dict[str, list[str]] = {}
        self._extra: dict[str, int] = {}

    def copy(self) -> _Problems:
        """A copy to go back to (verify starts its chain pass again on a fallback)."""
        out = _Problems()
        out._kinds = {kind: list(listed) for kind, listed in self._kinds.items()}
        out._extra = dict(self._extra)
        return out

    def reserve(self, kind: str) -> None:
        """Keep this kind's place in the order, before knowing whether it will list any."""
        self._kinds.setdefault(kind, [])

    def add(self, kind: str, message: str) -> None:
        listed = self._kinds.setdefault(kind, [])
        if len(listed) < _MAX_LISTED:
            listed.append(message)
        else:
            self._extra[kind] = self._extra.get(kind, 0) + 1

    def as_tuple(self) -> tuple[str, ...]:
        out: list[str] = []
        for kind, listed in self._kinds.items():
            out.extend(listed)
            if self._extra.get(kind):
                out.append(f"... and {self._extra[kind]} more like the above ({kind})")
        return tuple(out)


_BATCH = 10_000  # rows fetched at a time by verify
RowReader = Callable[[Sequence[Any]], dict[str, Any]]


def _batches(conn: Any, stmt: Any) -> Iterator[Sequence[Any]]:
    """The rows of a plain SELECT (no parameters), as tuples, a batch at a time.

    On SQLite through the driver's own cursor: the values are those SQLAlchemy would
    hand back for these column types (text, integers, floats; times read as text),
    without building a result row per event (verify's hot path). Elsewhere through
    SQLAlchemy, streamed.
    """
    if conn.dialect.name == "sqlite":
        sql = str(stmt.compile(dialect=conn.dialect, compile_kwargs={"literal_binds": True}))
        cursor = conn.connection.cursor()
        try:
            cursor.execute(sql)
            while rows := cursor.fetchmany(_BATCH):
                yield rows
        finally:
            cursor.close()
        return
    result = conn.execute(stmt.execution_options(yield_per=_BATCH))
    yield from result.partitions()


def _events_stmt(on_sqlite: bool) -> Any:
    def time_column(name: str) -> Any:
        # On SQLite read times as text and parse them here, so one tampered value is
        # reported instead of aborting the read.
        column = _events.c[name]
        return type_coerce(column, String()).label(name) if on_sqlite else column

    return select(
        _events.c.seq,
        time_column("at"),
        _events.c.actor,
        _events.c.action,
        _events.c.record_type,
        _events.c.record_id,
        _events.c["values"],
        _events.c.reason,
        time_column("performed_at"),
        _events.c.prev_hash,
        _events.c.hash,
    ).order_by(_events.c.seq)


class _NoTextFromSQLite(Exception):
    """SQLite cannot write the events' hashed text here: verify the Python way."""


def _sqlite_chain(conn: Any, in_sql: frozenset[str]) -> Iterator[Sequence[Any]] | None:
    """Every event as (seq, hashed text, record_type, record_id, values, prev_hash, hash),
    the hashed text written by SQLite's ``json_array``; None without JSON functions.

    The text is what ``_payload`` writes from the same row, for every event prepbook
    writes (``tests/store/test_audit.py`` checks that none goes the Python way). It can
    never give a false pass: ``json_array`` writes valid JSON, and two JSON texts that
    are equal decode to equal values, so an event whose text gives its stored hash
    holds exactly the values that were hashed (a number stored as text or as a
    fraction, or text stored as a number, is spelled differently). The one rewrite
    is a time's space for a "T", which turns only SQLAlchemy's stored shape, or the
    ISO text itself, into the ISO text, and both read back as that time. Any other
    text misses its hash and the event is read again and checked the Python way.
    ``values`` is selected only for the tables not in ``in_sql``. A blob stored in
    any column makes ``json_array`` fail: ``_NoTextFromSQLite``.
    """
    import sqlite3

    from sqlalchemy import case, func, literal
    from sqlalchemy.exc import DBAPIError

    try:
        conn.execute(select(func.json_array(literal("a"), 1)))
    except DBAPIError:
        return None

    def iso(name: str) -> Any:
        return func.replace(type_coerce(_events.c[name], String()), " ", "T")

    c = _events.c
    text = func.json_array(c.seq, iso("at"), c.actor, c.action, c.record_type, c.record_id,
                           c["values"], c.reason, iso("performed_at"), c.prev_hash)
    values = (case((c.record_type.in_(sorted(in_sql)), None), else_=c["values"])
              if in_sql else c["values"])
    stmt = select(c.seq, text, c.record_type, c.record_id, values, c.prev_hash,
                  c.hash).order_by(c.seq)

    def batches() -> Iterator[Sequence[Any]]:
        try:
            yield from _batches(conn, stmt)
        except sqlite3.OperationalError as exc:  # a blob: JSON cannot hold it
            raise _NoTextFromSQLite from exc

    return batches()


def verify(session: Session) -> VerifyReport:
    """Recompute the whole chain and check every audited row against its last event."""
    problems = _Problems()
    try:
        key = read_key()
    except InvalidInput as exc:
        problems.add("key", f"{exc}; keyed events cannot be checked")
        key = None
    scheme, digest = _hasher(key)
    other = KEYED if scheme == PLAIN else PLAIN
    session.flush()  # events still pending in this session are part of the trail
    conn = session.connection()
    on_sqlite = conn.dialect.name == "sqlite"
    # Tables whose rows SQLite itself compares with their last event's text (see
    # ``_check_rows``): their events need no fingerprint here.
    in_sql = frozenset(name for name, table in AUDITED_TABLES.items()
                       if on_sqlite and _sql_text_ok(conn, table))

    # The last event of each record of a table checked the Python way: its seq, a
    # digest of its snapshot (not the snapshot itself, which for a long history would
    # hold hundreds of MB) and whether the event matched its hash. The tables SQLite
    # compares itself (``sql_tables``, see ``_check_rows``) need nothing from here.
    last_values: dict[tuple[str, Any], tuple[int, bytes | None, bool]] = {}
    sql_tables: frozenset[str] = frozenset()
    count = prev_seq = wrong_scheme = 0
    prev_hash: str | None = None
    prefix = scheme + ":"
    other_prefix = other + ":"
    digest_of = _digest

    def event_checks_out(seq: int, at: Any, actor: Any, action: Any, rtype: Any, rid: Any,
                         values: Any, reason: Any, pat: Any, stored_prev: Any,
                         stored: Any) -> bool:
        """Whether one event, read whole, matches its hash (a problem named if not)."""
        nonlocal wrong_scheme
        try:
            at_iso = _stored_time_iso(at)
            pat_iso = _stored_time_iso(pat)
        except ValueError:
            problems.add(
                "edited", f"audit event #{seq} has an unreadable time: edited outside prepbook"
            )
            return False
        try:
            payload = _payload(
                seq, at_iso, actor, action, rtype, rid, values, reason, pat_iso, stored_prev
            )
        except (TypeError, ValueError) as exc:  # a blob, say, where text belongs
            problems.add("edited", f"audit event #{seq} ({_label(rtype, rid, None)}) cannot "
                         f"be read ({exc}): edited outside prepbook")
            return False
        if stored == prefix + digest(payload):
            return True
        if isinstance(stored, str) and stored.startswith(other_prefix):
            wrong_scheme += 1
        else:
            problems.add(
                "edited",
                f"audit event #{seq} ({_label(rtype, rid, None)}) does "
                "not match its hash: edited outside prepbook",
            )
        return False

    def not_linked(seq: int, stored_prev: Any, prev_seq: int, prev_hash: str | None) -> None:
        if seq != prev_seq + 1:
            missing = f"#{prev_seq + 1}" if seq == prev_seq + 2 else f"#{prev_seq + 1}-#{seq - 1}"
            problems.add(
                "gap", f"audit event {missing} missing before #{seq}: removed outside prepbook"
            )
        else:
            problems.add(
                "link",
                f"audit event #{seq} does not link to event #{prev_seq} "
                "(prev_hash differs): the trail was rewritten",
            )

    before = problems.copy()
    chain = _sqlite_chain(conn, in_sql) if on_sqlite else None
    try:
        if chain is None:
            raise _NoTextFromSQLite
        # SQLite writes each event's hashed text itself (``_sqlite_chain``). An event
        # whose text does not give its hash is read again whole after the pass and
        # checked the Python way, which is the reference: the two agree on every
        # event prepbook writes, and differ only by costing time.
        sql_tables = in_sql
        later: list[tuple[int, Any, Any]] = []
        for rows in chain:
            count += len(rows)
            for seq, payload, rtype, rid, values, stored_prev, stored in rows:
                if seq != prev_seq + 1 or stored_prev != prev_hash:
                    not_linked(seq, stored_prev, prev_seq, prev_hash)
                verified = payload is not None and stored == prefix + digest(payload.encode())
                if not verified:
                    if not later:
                        problems.reserve("edited")  # this kind's place in the order
                    later.append((seq, rtype, rid))
                if rtype not in sql_tables:
                    last_values[(rtype, rid)] = (seq, digest_of(values), verified)
                prev_seq = seq
                prev_hash = stored
        for at in range(0, len(later), 500):
            chunk = later[at:at + 500]
            stmt = _events_stmt(True).where(_events.c.seq.in_([seq for seq, _, _ in chunk]))
            whole = {row[0]: row for rows in _batches(conn, stmt) for row in rows}
            for seq, rtype, rid in chunk:
                if event_checks_out(*whole[seq]) and rtype not in sql_tables:
                    last = last_values[(rtype, rid)]
                    if last[0] == seq:
                        last_values[(rtype, rid)] = (seq, last[1], True)
    except _NoTextFromSQLite:
        # Elsewhere, or where SQLite cannot write the text (no JSON functions, or a
        # blob stored in an event): every event the Python way, from the start.
        problems = before
        last_values, sql_tables = {}, frozenset()
        count = prev_seq = wrong_scheme = 0
        prev_hash = None
        for rows in _batches(conn, _events_stmt(on_sqlite)):
            count += len(rows)
            for row in rows:
                seq, rtype, rid, values, stored_prev, stored = (
                    row[0], row[4], row[5], row[6], row[9], row[10])
                if seq != prev_seq + 1 or stored_prev != prev_hash:
                    not_linked(seq, stored_prev, prev_seq, prev_hash)
                verified = event_checks_out(*row)
                last_values[(rtype, rid)] = (seq, digest_of(values), verified)
                prev_seq = seq
                prev_hash = stored

    if wrong_scheme:
        if scheme == PLAIN:
            problems.add(
                "key",
                f"{wrong_scheme} audit event(s) are keyed (hmac-sha256) and "
                f"cannot be checked without the key: set {KEY_ENV}",
            )
        else:
            problems.add(
                "key",
                f"{wrong_scheme} audit event(s) are not keyed although an "
                "audit key is set: the chain was written or rewritten without it",
            )

    head = conn.execute(select(_head.c.seq, _head.c.hash).where(_head.c.id == 1)).first()
    head_rows = conn.execute(select(_head.c.id)).all()
    if head is None:
        if count:
            problems.add("head", "the audit head row is missing")
    else:
        if len(head_rows) > 1:
            problems.add("head", "the audit head table has more than one row")
        head_seq, head_hash = head
        if head_seq != prev_seq:
            if head_seq > prev_seq:
                problems.add(
                    "head",
                    f"the audit head names event #{head_seq} but the trail "
                    f"ends at #{prev_seq}: events removed from the end",
                )
            else:
                problems.add(
                    "head",
                    f"the audit head names event #{head_seq} but the trail "
                    f"goes on to #{prev_seq}: events added outside prepbook",
                )
        elif head_hash != prev_hash:
            problems.add("head", f"the audit head hash does not match event #{prev_seq}")

    _check_rows(conn, last_values, problems, sql_tables)
    listed = problems.as_tuple()
    return VerifyReport(ok=not listed, events=count, head_hash=prev_hash, problems=listed)


def _raw_date_text(raw: Any) -> str:
    """A SQLite date read as text: kept when it has the one shape SQLAlchemy writes."""
    text = str(raw)
    if len(text) == 10 and text[4] == "-" and text[7] == "-":
        return text
    return date.fromisoformat(text).isoformat()


def _digest(values: Any) -> bytes:
    """A short fingerprint of a snapshot's text, to tell whether a row still equals it."""
    text = values if isinstance(values, str) else repr(values)
    return hashlib.sha256(text.encode()).digest()


def _snapshots_of(conn: Any, seqs: Sequence[int]) -> dict[int, Any]:
    """The snapshots stored in these events (read again only for rows that need it)."""
    out: dict[int, Any] = {}
    for start in range(0, len(seqs), 500):
        chunk = seqs[start : start + 500]
        stmt = select(_events.c.seq, _events.c["values"]).where(_events.c.seq.in_(chunk))
        out.update((seq, values) for seq, values in conn.execute(stmt))
    return out


def _audited_snapshot(raw: Any) -> dict[str, Any]:
    try:
        audited = json.loads(raw)
    except (ValueError, TypeError):
        return {}
    return audited if isinstance(audited, dict) else {}


def _in_todays_form(raw: str, digested: tuple[str, ...]) -> str | None:
    """An event's snapshot text with the full text of digested columns as fingerprints.

    Events written before a column was digested hold its full text; this is the text
    ``record()`` would write today for the same row, or None when there was nothing to
    replace. It works on the text: a key of the flat snapshot is found as ``,"name":``
    (or first, after ``{``), which JSON cannot hold inside a string, where a quote is
    always escaped. Only that one string changes, so the result equals a row's text
    exactly when everything else in the event does.
    """
    out = raw
    for name in digested:
        key = encode_basestring(name) + ":"
        at = out.find("," + key)
        if at < 0:
            if not out.startswith("{" + key):
                continue
            at = 0
        start = at + 1 + len(key)
        if not out.startswith('"', start):
            continue  # null: nothing was digested
        try:
            value, end = scanstring(out, start + 1)
        except ValueError:
            return None
        if is_fingerprint(value):
            continue
        out = f"{out[:start]}{encode_basestring(fingerprint(value))}{out[end:]}"
    return None if out is raw else out


def _row_reader(
    table: Any, on_sqlite: bool
) -> tuple[Any, RowReader, Callable[[Sequence[Any]], str], Any]:
    """The SELECT of every row of ``table``, two ways of reading its snapshot, and on
    SQLite two SELECTs: the ids of the rows that differ from their last event (the
    rows' text written by SQLite itself), and the ids that have events but no row.

    ``careful`` gives the dict ``record()`` would snapshot, keyed in
    ``snapshot_columns`` order (sorted by name) so it dumps to the canonical JSON the
    event stored, every value through its column's canonicaliser (a value of the
    wrong type is converted or refused with ``ValueError``/``TypeError``). ``quick``
    gives that JSON text the fast way, text and integers as read; see
    ``_check_rows`` for when it may be trusted. The third SELECT (for a table of
    text, whole numbers, flags and times only; see ``_sql_text_ok``) has SQLite
    write that text with ``json_object``: a flag as true/false only when it is 1/0,
    a time with its space made a "T" (which gives the ISO text only from the shape
    SQLAlchemy stores or from the ISO text itself); anything else is spelled as
    stored, so it cannot equal the event's text by accident.
    """
    from sqlalchemy import Boolean, Date, DateTime, Integer, and_, case, func, literal

    names = tuple(name for name, _ in snapshot_columns(table))
    selected = []
    rendered: list[tuple[str, Any]] = []  # (name, expression) for json_object
    work: list[tuple[str, Callable[[Any], Any]]] = []
    as_read: set[str] = set()  # canonical text as selected, for ``quick``
    for name, convert in snapshot_columns(table):
        column = table.c[name]
        if on_sqlite and isinstance(column.type, DateTime | Date) and not audited_in_digest(column):
            text = type_coerce(column, String())
            expr: Any
            if isinstance(column.type, DateTime):
                # SQLite's 'YYYY-MM-DD HH:MM:SS.ffffff' rewritten to the canonical ISO
                # text by SQLite itself (the hot path); any other text is selected as
                # stored, so it cannot match its snapshot by accident and goes the
                # careful way, which parses it.
                expr = case(
                    (and_(func.length(text) == 26, func.substr(text, 11, 1) == " ",
                          func.substr(text, 20, 1) == "."),
                     func.substr(text, 1, 10) + "T" + func.substr(text, 12)),
                    else_=text)
                convert = _stored_time_iso
            else:
                # A date's stored text 'YYYY-MM-DD' is its canonical text already.
                expr = text
                convert = _raw_date_text
            selected.append(expr.label(name))
            # In SQLite's own text, a time's space becomes a "T": that turns only the
            # stored shape, or the ISO text itself, into the ISO text, and the careful
            # way reads both as that same time, so a match here is one there too.
            rendered.append((name, func.replace(text, " ", "T")
                             if isinstance(column.type, DateTime) else expr))
            as_read.add(name)
        else:
            selected.append(column)
            if isinstance(column.type, Boolean):
                flag = type_coerce(column, Integer())
                rendered.append((name, case((flag == 1, func.json("true")),
                                            (flag == 0, func.json("false")), else_=flag)))
            else:
                rendered.append((name, type_coerce(column, String())
                                 if passthrough_type(column) is str else column))
        work.append((name, convert))
    # Text is canonical as read (SQLite's text affinity keeps numbers as text, and
    # anything else, such as a blob, fails to encode), and so is an integer read as an
    # int (anything else read there spells differently from the event's number, and
    # goes the careful way); every other column converts.
    needed = tuple((n, c) for n, c in work
                   if n not in as_read and passthrough_type(table.c[n]) not in (str, int))

    def careful(row: Sequence[Any]) -> dict[str, Any]:
        return {
            name: None if v is None else convert(v)
            for (name, convert), v in zip(work, row, strict=True)
        }

    text_stmt = None
    if on_sqlite:
        # The ids of the rows whose text, as SQLite writes it, is not exactly the
        # stored text of their record's last event (or that have no event).
        pairs = [part for name, expr in rendered for part in (literal(name), expr)]
        last_seq = (select(func.max(_events.c.seq))
                    .where(_events.c.record_type == literal(table.name),
                           _events.c.record_id == table.c.id)
                    .scalar_subquery())
        event = _events.alias("last_event")
        differing = (
            select(table.c.id)
            .select_from(table.outerjoin(event, event.c.seq == last_seq))
            .where(func.json_object(*pairs).is_not(event.c["values"]))
            .order_by(table.c.id)
        )
        # And the records that have events but no row.
        gone = (
            select(_events.c.record_id).distinct()
            .where(_events.c.record_type == literal(table.name),
                   ~select(table.c.id).where(table.c.id == _events.c.record_id).exists())
            .order_by(_events.c.record_id)
        )
        text_stmt = (differing, gone)

    def quick(row: Sequence[Any]) -> str:
        current = dict(zip(names, row, strict=True))
        for name, convert in needed:
            v = current[name]
            if v is not None:
                current[name] = convert(v)
        return _flat_json(current)

    def as_is(row: Sequence[Any]) -> str:
        return _flat_json(dict(zip(names, row, strict=True)))

    stmt = select(*selected).order_by(table.c.id)
    return stmt, careful, (quick if needed else as_is), text_stmt


def _sql_text_ok(conn: Any, table: Any) -> bool:
    """Whether SQLite can write this table's snapshot text itself (``_row_reader``).

    Only for text, whole-number, flag and time columns (a float's spelling is
    Python's own), with SQLite's JSON functions at hand, and no blob stored in any
    column (``json_object`` refuses blobs: such a row goes the careful way, which
    names it).
    """
    if conn.dialect.name != "sqlite":
        return False
    from sqlalchemy import Boolean, Date, DateTime, Integer, func, literal, or_
    from sqlalchemy.exc import DBAPIError

    columns = [table.c[name] for name, _ in snapshot_columns(table)]
    if any(audited_in_digest(c) or not isinstance(c.type, String | Integer | Boolean | Date
                                                  | DateTime) for c in columns):
        return False
    try:
        conn.execute(select(func.json_object(literal("a"), 1)))
    except DBAPIError:  # an SQLite without its JSON functions: the Python way
        return False
    blob = conn.execute(select(table.c.id).where(
        or_(*(func.typeof(c) == "blob" for c in columns))).limit(1)).first()
    return blob is None


def _last_events(conn: Any, name: str, ids: Sequence[Any]) -> dict[tuple[str, Any],
                                                                     tuple[int, Any]]:
    """The seq and stored snapshot of the last event of each of these records."""
    from sqlalchemy import func

    seqs: dict[Any, int] = {}
    for start in range(0, len(ids), 500):
        stmt = (select(_events.c.record_id, func.max(_events.c.seq))
                .where(_events.c.record_type == name,
                       _events.c.record_id.in_(list(ids[start:start + 500])))
                .group_by(_events.c.record_id))
        seqs.update((rid, seq) for rid, seq in conn.execute(stmt))
    stored = _snapshots_of(conn, list(seqs.values()))
    return {(name, rid): (seq, stored.get(seq)) for rid, seq in seqs.items()}


def _check_rows(
    conn: Any, last_values: dict[tuple[str, Any], tuple[int, bytes | None, bool]],
    problems: _Problems, sql_tables: frozenset[str] = frozenset(),
) -> None:
    """Every audited row must equal the snapshot in its last event, and vice versa.

    A row equals its snapshot when its canonical JSON is the event's text. The quick
    snapshot (text and integers as read) is trusted only when it gives exactly the
    text of an event that matched its hash: that text was written by ``record()``, so
    a text column read as anything but a string, an integer column read as anything
    but an int, or a time in any other shape would have spelled it differently. Every
    other row is made with every canonicaliser.

    The tables in ``sql_tables`` are compared by SQLite itself (``_row_reader``): it
    returns only the rows it finds different, which are read, whole, and go the
    careful way with their last events read back, and the records that have events
    but no row (deleted). A row whose last event does not match its hash needs
    nothing more: the chain pass has named that event, and the careful way would
    compare the row with the same text.

    The rows that still differ are looked at again with their events read back: an
    event written before a column was digested holds that column's full text and is
    accepted when, that text replaced by its fingerprint, it is the row's text
    (``_in_todays_form``); anything else is named with the columns that differ.
    """
    on_sqlite = conn.dialect.name == "sqlite"
    seen: set[tuple[str, Any]] = set()
    gone: list[tuple[int, str, Any]] = []  # (last event's seq, table, id) of deleted rows
    for name, table in AUDITED_TABLES.items():
        stmt, careful, quick, text_stmt = _row_reader(table, on_sqlite)
        names = [n for n, _ in snapshot_columns(table)]
        rid_at = names.index("id")
        # Rows whose text is not their last event's: (row snapshot, its text, event seq).
        recheck: list[tuple[dict[str, Any], str, int]] = []

        def the_careful_way(row: Sequence[Any], name: str = name, careful: RowReader = careful,
                            rid_at: int = rid_at,
                            recheck: list[tuple[dict[str, Any], str, int]] = recheck,
                            lasts: dict[tuple[str, Any], Any] = last_values) -> None:
            """A row that is not its event's text as read: every value canonicalised."""
            try:
                current = careful(row)
            except (ValueError, TypeError) as exc:
                # Named on its own; the table's other rows are still checked.
                seen.add((name, row[rid_at]))
                problems.add("unreadable", f"{name} #{row[rid_at]} cannot be read "
                             f"({exc}): edited outside prepbook")
                return
            key = (name, current["id"])
            seen.add(key)
            last = lasts.get(key)
            if last is None:
                problems.add(
                    "added",
                    f"{_label(name, key[1], current)} has no audit event: "
                    "added outside prepbook",
                )
                return
            # Columns in sorted order: the canonical JSON record() stores.
            text = _flat_json(current)
            if _digest(text) == last[1]:
                return
            problems.reserve("differs")
            recheck.append((current, text, last[0]))

        try:
            if text_stmt is not None and name in sql_tables:
                # SQLite writes each row's text and compares it with the stored text of
                # the record's last event; only the rows that differ are read again.
                differing, deleted = text_stmt
                later = [row[0] for rows in _batches(conn, differing) for row in rows]
                missing = [row[0] for rows in _batches(conn, deleted) for row in rows]
                for at in range(0, len(later), 500):
                    ids = later[at:at + 500]
                    lasts = {key: (seq, _digest(values), True) for key, (seq, values)
                             in _last_events(conn, name, ids).items()}
                    for rows in _batches(conn, stmt.where(table.c.id.in_(ids))):
                        for row in rows:
                            the_careful_way(row, lasts=lasts)
                gone.extend((seq, name, rid) for (_, rid), (seq, _) in
                            _last_events(conn, name, missing).items())
            else:
                for rows in _batches(conn, stmt):
                    for row in rows:
                        last = last_values.get((name, row[rid_at]))
                        if last is not None and last[2]:
                            try:
                                quick_text = quick(row)
                            except (ValueError, TypeError):
                                quick_text = None
                            if quick_text is not None and _digest(quick_text) == last[1]:
                                seen.add((name, row[rid_at]))
                                continue
                        the_careful_way(row)
        except (ValueError, TypeError) as exc:
            problems.add(
                "unreadable", f"{name}: a row cannot be read ({exc}): edited outside prepbook"
            )
        if recheck:
            _recheck(conn, table, recheck, problems)

    for (name, rid), (seq, _, _) in last_values.items():
        if (name, rid) in seen:
            continue
        if name not in AUDITED_TABLES:
            problems.add("unknown", f"audit events name an unknown table {name!r} (#{rid})")
            continue
        gone.append((seq, name, rid))
    gone.sort(key=lambda item: item[0])  # in the order of their last events
    stored = _snapshots_of(conn, [seq for seq, _, _ in gone])
    for seq, name, rid in gone:
        audited = _audited_snapshot(stored.get(seq))
        problems.add(
            "deleted",
            f"{_label(name, rid, audited or None)}"
            " is gone but its audit events remain: deleted outside prepbook",
        )


def _recheck(
    conn: Any, table: Any, recheck: list[tuple[dict[str, Any], str, int]], problems: _Problems
) -> None:
    """Rows whose text is not their last event's: the legacy form passes, the rest differ."""
    digested = digested_columns(table)
    stored = _snapshots_of(conn, [seq for _, _, seq in recheck])
    missing = object()
    for current, text, seq in recheck:
        raw = stored.get(seq)
        if raw == text:
            continue  # the same text after all (its digest was not trusted)
        if digested and isinstance(raw, str) and _in_todays_form(raw, digested) == text:
            continue  # written before the column was digested, and unchanged since
        audited = legacy_to_digest(table, _audited_snapshot(raw))
        differ = sorted(
            column
            for column in set(current) | set(audited)
            if current.get(column, missing) != audited.get(column, missing)
        )
        problems.add(
            "differs",
            f"{_label(table.name, current['id'], current)} differs from its last "
            f"audited state in: {', '.join(differ)}",
        )


def log(
    session: Session,
    *,
    record_type: str | None = None,
    record_id: int | None = None,
    actor: str | None = None,
    since: date | datetime | None = None,
    until: date | datetime | None = None,
    limit: int | None = None,
) -> list[dict[str, Any]]:
    """Audit events as plain dicts, oldest first; ``limit`` keeps the most recent ones.

    Times are UTC. ``since`` is inclusive; ``until`` is inclusive too, and a plain
    date means the whole of that day.
    """
    stmt = select(
        _events.c.seq,
        _events.c.at,
        _events.c.actor,
        _events.c.action,
        _events.c.record_type,
        _events.c.record_id,
        _events.c.reason,
        _events.c.performed_at,
    )
    if record_type is not None:
        stmt = stmt.where(_events.c.record_type == record_type)
    if record_id is not None:
        stmt = stmt.where(_events.c.record_id == record_id)
    if actor is not None:
        stmt = stmt.where(_events.c.actor == actor)
    if since is not None:
        start = since if isinstance(since, datetime) else datetime.combine(since, time.min)
        stmt = stmt.where(_events.c.at >= utc_naive(start))
    if until is not None:
        if isinstance(until, datetime):
            stmt = stmt.where(_events.c.at <= utc_naive(until))
        else:
            stmt = stmt.where(_events.c.at < datetime.combine(until + timedelta(days=1), time.min))
    if limit is not None:
        if limit < 1:
            raise InvalidInput(f"limit must be a positive number of events, not {limit}")
        stmt = stmt.order_by(_events.c.seq.desc()).limit(limit)
    else:
        stmt = stmt.order_by(_events.c.seq)
    session.flush()
    rows = session.connection().execute(stmt).all()
    if limit is not None:
        rows.reverse()
    return [
        {
            "seq": row.seq,
            "at": _iso(row.at),
            "actor": row.actor,
            "action": row.action,
            "record": f"{row.record_type} #{row.record_id}",
            "record_type": row.record_type,
            "record_id": row.record_id,
            "reason": row.reason,
            "performed_at": _iso(row.performed_at),
        }
        for row in rows
    ]
