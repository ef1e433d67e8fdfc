"""Verifying the trail: one pass over the events, then every audited row against them.

``verify`` reads top to bottom:

0. ``_check_keying``: a keyed trail needs its own key here, else it cannot be verified;
   ``witnessing.gather`` collects every checkpoint in sight (the database, the witness
   folder, codes typed from paper).
1. ``_check_chain`` reads every event once, in seq order, as plain driver values
   (no ORM object, no type processing: SQLite's times arrive as the text stored), and
   recomputes its hash from the JSON text of its fields (``chain.payload``) with
   ``hashlib``/``hmac``. Each event must link to the one before it and be dated no
   earlier than it (beyond the clock tolerance). It keeps, for every record, the seq
   and snapshot text of its last event, and the hashes of the events checkpoints name.
2. ``_check_head`` compares the head row with the last event, and
   ``witnessing.compare`` every checkpoint with the trail (shortened, rewritten).
3. ``_check_rows`` reads every row of every audited table the same plain way, writes
   its canonical JSON (every value through its column's canonicaliser, which refuses a
   fraction in a whole-number column or a flag other than 0/1 instead of coercing it)
   and compares that text with its record's last event. A row that differs is looked
   at again: an event written before a column was digested holds that column's full
   text and passes when, put in today's form, it is the row's text; anything else is
   named with the columns that differ. Records with events but no row were deleted.

Problems are grouped by kind, each kind listed up to ``_MAX_LISTED`` times and then
counted, so a wholesale rewrite gives a readable report.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from datetime import datetime
from pathlib import Path
from typing import Any

import msgspec
from sqlalchemy import Connection, Table, select
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput
from prepbook.store.audit import rekey_check, witnessing
from prepbook.store.audit.chain import (
    CLOCK_TOLERANCE,
    KEY_ENV,
    KEYED,
    PLAIN,
    canonical_json,
    hasher,
    key_fingerprint,
    label,
    payload,
    read_key,
    time_text,
)
from prepbook.store.audit.checkpoints import Keying, code_of, keying
from prepbook.store.audit.defenses import store_problems
from prepbook.store.audit.row_text import RowText
from prepbook.store.models import AUDITED_TABLES, AuditEvent, AuditHead
from prepbook.store.snapshot import (
    decoded_snapshot as _decoded,
)
from prepbook.store.snapshot import (
    legacy_to_digest,
)

_MAX_LISTED = 10  # problems of one kind listed one by one before they are counted

# table name -> record id -> (seq, snapshot text) of the record's last event (a dict per
# table: keyed by the id alone, about a fifth faster to fill and empty than one dict
# keyed by (table, id) on the decade database).
LastEvents = dict[Any, dict[Any, tuple[Any, Any]]]


class VerifyReport(msgspec.Struct, frozen=True):
    """Outcome of ``verify``: ok only when the chain and every audited row check out.

    ``checkpoint`` is the code of the trail as verified (None while empty);
    ``witnessed_events`` how far a witness outside the database (the witness folder, a
    typed code) vouches for it; ``notes`` say what could not be ruled out.
    """

    ok: bool
    events: int
    head_hash: str | None
    problems: tuple[str, ...]
    checkpoint: str | None
    checkpoints_checked: int
    witnessed_events: int | None
    notes: tuple[str, ...]


class _Chain(msgspec.Struct, frozen=True):
    """What the pass over the events found: their number, where the chain ends."""

    events: int
    last_seq: int
    last_hash: str | None
    last_events: LastEvents
    hashes_at: dict[int, str]  # the hashes of the events checkpoints name


class _Problems:
    """Problems grouped by kind, in the order each kind was first met."""

    def __init__(self) -> None:
        self._listed: dict[str, list[str]] = {}
        self._more: dict[str, int] = {}

    def add(self, kind: str, message: str) -> None:
        listed = self._listed.setdefault(kind, [])
        if len(listed) < _MAX_LISTED:
            listed.append(message)
        else:
            self._more[kind] = self._more.get(kind, 0) + 1

    def as_tuple(self) -> tuple[str, ...]:
        out: list[str] = []
        for kind, listed in self._listed.items():
            out.extend(listed)
            if kind in self._more:
                out.append(f"... and {self._more[kind]} more like the above ({kind})")
        return tuple(out)


def verify(session: Session, *, codes: Sequence[str] = (), witness: Path | None = None,
           thorough: bool = False, witness_db: str | None = None,
           keyring: Path | None = None,
           advance: Callable[[int], None] | None = None) -> VerifyReport:
    """Recompute the whole chain, hold it against every checkpoint in sight (the
    database's, the ``witness`` folder's and the ``witness_db``'s, ``codes`` typed from
    paper) and check every audited row against its last event; the schema, the file
    (``thorough``: every page) and the credentials too. Each stretch of the chain is
    checked with the audit key of its time (old keys from the ``keyring`` folder).
    ``advance(n)`` is told of every n events and rows read."""
    problems = _Problems()
    try:
        key = read_key()
    except InvalidInput as exc:
        problems.add("key", f"{exc}; keyed events cannot be checked")
        key = None
    session.flush()  # events still pending in this session are part of the trail
    conn = session.connection()
    for kind, problem in store_problems(conn, thorough=thorough):
        problems.add(kind, problem)
    kept = keying(conn)
    _check_keying(kept, key, problems)
    keys = rekey_check.checked(conn, kept, key, keyring, problems.add)
    witnesses = witnessing.sources(witness, witness_db)
    seen = witnessing.gather(conn, kept, codes, witnesses, problems.add)
    chain = _check_chain(conn, keys.stretches, problems, {a.events for a in seen}, advance)
    removed = _check_head(conn, chain, problems)
    found = witnessing.compare(seen, chain.last_seq, chain.hashes_at, kept, keys, witnesses,
                               problems.add)
    _check_rows(conn, chain.last_events, problems, removed or found.shortened, advance)
    listed = problems.as_tuple()
    return VerifyReport(
        ok=not listed, events=chain.events, head_hash=chain.last_hash, problems=listed,
        checkpoint=code_of(chain.last_seq, chain.last_hash) if chain.last_hash else None,
        checkpoints_checked=len(seen), witnessed_events=found.witnessed_events,
        notes=(*_notes(chain, found, witnesses), *found.gaps))


def _notes(chain: _Chain, found: witnessing.Findings,
           witnesses: Sequence[witnessing.Source]) -> tuple[str, ...]:
    """What the checks could not rule out, said plainly."""
    if found.witnessed_events is None:
        where = ("no witness outside the database was checked" if not witnesses else
                 " or ".join(f"no checkpoint of the {w.name} {w.where}" for w in witnesses)
                 + " matched this trail")
        return (f"{where}: a shortened trail (its last events removed) or a rollback to an "
                "older copy cannot be ruled out; set witness_folder or witness_database, or "
                "give --checkpoint CODE from a printed report",)
    if found.witnessed_events < chain.last_seq:
        return (f"events up to #{found.witnessed_events} are attested by a witness outside "
                f"the database; the {chain.last_seq - found.witnessed_events} after it only "
                "by the database itself",)
    return ()


def _check_keying(kept: Keying | None, key: bytes | None, problems: _Problems) -> None:
    """A keyed trail cannot be verified without its own key: never "ok" then."""
    if kept is None or kept.scheme != KEYED:
        return
    if key is None:
        problems.add("key", f"this trail is keyed (key {kept.key_fingerprint}) and no audit "
                     f"key is set here: it cannot be verified; set {KEY_ENV}")
    elif kept.key_fingerprint is not None and key_fingerprint(key) != kept.key_fingerprint:
        problems.add("key", f"the audit key set here (key {key_fingerprint(key)}) is not the "
                     f"one this trail is keyed with (key {kept.key_fingerprint}): it cannot "
                     "be verified with it")


def _rows(conn: Connection, table: Table, names: Sequence[str],
          advance: Callable[[int], None] | None = None) -> Iterator[Sequence[Any]]:
    """Every row of ``table`` (these columns), in key order; ``advance(n)`` told of
    every page of n rows read when a progress bar is watching.

    Read through the driver's own cursor: plain tuples of the values as stored (SQLite
    keeps times as text), with no result object per row, which would cost about half
    as much again as the check itself. The cursor is iterated, not paged by hand (on
    SQLite pages of 10,000 rows cost about a third more than stepping through them).
    On PostgreSQL the cursor is a named (server-side) one, which its driver fetches a
    batch at a time as it is iterated, so memory stays bounded there too.
    """
    stmt = select(*(table.c[name] for name in names)).order_by(*table.primary_key.columns)
    driver = conn.connection
    named = conn.dialect.name == "postgresql"
    cursor: Any = driver.cursor(name="prepbook_audit_verify") if named else driver.cursor()
    try:
        cursor.execute(str(stmt.compile(dialect=conn.dialect)))
        if advance is None:
            yield from cursor
        else:
            while rows := cursor.fetchmany(_PAGE):
                yield from rows
                advance(len(rows))
    finally:
        cursor.close()


_PAGE = 10_000  # rows a progress bar is told of at a time
_EVENT_TABLE: Table = AuditEvent.__table__  # type: ignore[assignment]
_EVENT_COLUMNS = ("seq", "at", "actor", "action", "record_type", "record_id", "values",
                  "reason", "performed_at", "prev_hash", "hash", "os_login", "host", "key_id")


def _check_chain(conn: Connection, stretches: Sequence[rekey_check.Stretch],
                 problems: _Problems, wanted: set[int],
                 advance: Callable[[int], None] | None = None) -> _Chain:
    """One pass over the events: each hash recomputed (with the audit key of its
    stretch), each link to the one before, each time no earlier than the one before;
    the hashes of the ``wanted`` events kept."""
    later = list(stretches[1:])
    key = stretches[0].key
    scheme, digest = hasher(key)
    prefix = f"{scheme}:"
    other_prefix = f"{KEYED if scheme == PLAIN else PLAIN}:"
    our_key = key_fingerprint(key)
    switch_at = later[0].first_seq if later else None
    last_events: LastEvents = {}
    hashes_at: dict[int, str] = {}
    count = prev_seq = other_scheme = 0
    prev_hash: str | None = None
    prev_at = ""
    for (seq, at, actor, action, rtype, rid, values, reason, pat, linked, stored, login,
         host, key_id) in _rows(conn, _EVENT_TABLE, _EVENT_COLUMNS, advance):
        count += 1
        if seq != prev_seq + 1 or linked != prev_hash:
            _not_linked(problems, seq, prev_seq)
        while switch_at is not None and seq >= switch_at:  # the audit key was changed
            key = later.pop(0).key
            scheme, digest = hasher(key)
            prefix, our_key = f"{scheme}:", key_fingerprint(key)
            other_prefix = f"{KEYED if scheme == PLAIN else PLAIN}:"
            switch_at = later[0].first_seq if later else None
        of_table = last_events.get(rtype)
        if of_table is None:
            of_table = last_events[rtype] = {}
        of_table[rid] = (seq, values)
        if seq in wanted:
            hashes_at[seq] = stored
        prev_seq, prev_hash = seq, stored
        try:
            at_text = time_text(at)
            pat_text = None if pat is None else time_text(pat)
        except (ValueError, TypeError):
            problems.add("edited", f"audit event #{seq} has an unreadable time: "
                         "edited outside prepbook")
            continue
        if at_text < prev_at:  # ISO text of one shape sorts as time does
            _out_of_order(problems, seq, at_text, prev_at)
        prev_at = at_text
        try:
            hashed = payload(seq, at_text, actor, action, rtype, rid, values, reason,
                             pat_text, linked, login, host, key_id)
        except (ValueError, TypeError) as exc:  # a blob, say, where text belongs
            problems.add("edited", f"audit event #{seq} ({label(rtype, rid)}) cannot be "
                         f"read ({exc}): edited outside prepbook")
            continue
        if stored == prefix + digest(hashed):
            continue
        if isinstance(stored, str) and stored.startswith(other_prefix):
            other_scheme += 1
        elif key_id is not None and key_id != our_key and stored.startswith(f"{KEYED}:"):
            problems.add("other key", f"audit event #{seq} ({label(rtype, rid)}) was "
                         f"written with a different key (key {key_id}; the key set here "
                         f"is {our_key or 'none'})")
        else:
            problems.add("edited", f"audit event #{seq} ({label(rtype, rid)}) does not "
                         "match its hash: edited outside prepbook")
    if other_scheme:
        problems.add("key", _other_scheme(scheme, other_scheme))
    return _Chain(count, prev_seq, prev_hash, last_events, hashes_at)


def _out_of_order(problems: _Problems, seq: Any, at_text: str, prev_at: str) -> None:
    """Name an event dated before the one it follows, beyond the clock tolerance."""
    behind = datetime.fromisoformat(prev_at) - datetime.fromisoformat(at_text)
    if behind > CLOCK_TOLERANCE:
        problems.add("time", f"audit event #{seq} is dated {at_text[:19].replace('T', ' ')} "
                     f"UTC, {behind} before event #{seq - 1}: a clock set back, or times "
                     "edited outside prepbook")


def _not_linked(problems: _Problems, seq: Any, prev_seq: int) -> None:
    if seq != prev_seq + 1:
        missing = f"#{prev_seq + 1}" if seq == prev_seq + 2 else f"#{prev_seq + 1}-#{seq - 1}"
        problems.add("gap", f"audit event {missing} missing before #{seq}: "
                     "removed outside prepbook")
    else:
        problems.add("link", f"audit event #{seq} does not link to event #{prev_seq} "
                     "(prev_hash differs): the trail was rewritten")


def _other_scheme(scheme: str, count: int) -> str:
    if scheme == PLAIN:
        return (f"{count} audit event(s) are keyed (hmac-sha256) and cannot be checked "
                f"without the key: set {KEY_ENV}")
    return (f"{count} audit event(s) are not keyed although an audit key is set: the chain "
            "was written or rewritten without it")


def _check_head(conn: Connection, chain: _Chain, problems: _Problems) -> bool:
    """The single head row must name the chain's last event and its hash; True when it
    shows events removed from the end."""
    head = AuditHead.__table__
    rows = conn.execute(select(head.c.id, head.c.seq, head.c.hash)).all()
    if len(rows) > 1:
        problems.add("head", "the audit head table has more than one row")
    named = [(seq, hash_) for id_, seq, hash_ in rows if id_ == 1]
    if not named:
        if chain.events:
            problems.add("head", "the audit head row is missing")
        return False
    seq, hash_ = named[0]
    if seq > chain.last_seq:
        problems.add("head", f"the audit head names event #{seq} but the trail ends at "
                     f"#{chain.last_seq}: events removed from the end")
        return True
    if seq < chain.last_seq:
        problems.add("head", f"the audit head names event #{seq} but the trail goes on to "
                     f"#{chain.last_seq}: events added outside prepbook")
    elif hash_ != chain.last_hash:
        problems.add("head", f"the audit head hash does not match event #{chain.last_seq}")
    return False


def _check_rows(conn: Connection, last_events: LastEvents, problems: _Problems,
                shortened: bool, advance: Callable[[int], None] | None = None) -> None:
    """Every audited row must equal the snapshot of its last event, and vice versa (a
    row with no event, in a trail known to be ``shortened``: its event was removed)."""
    no_event = ("its audit event was removed from the end of the trail" if shortened
                else "added outside prepbook")
    for name, table in AUDITED_TABLES.items():
        writer = RowText(table)
        id_at = writer.names.index("id")
        of_table = last_events.get(name, {})
        for row in _rows(conn, table, writer.names, advance):
            last = of_table.pop(row[id_at], None)
            try:
                values = writer.values(row)
                text = writer.text(values)
            except (ValueError, TypeError) as exc:
                problems.add("unreadable", f"{name} #{row[id_at]} cannot be read "
                             f"({exc}): edited outside prepbook")
                continue
            if last is None:
                current = dict(zip(writer.names, values, strict=True))
                problems.add("added", f"{label(name, current['id'], current)} has no "
                             f"audit event: {no_event}")
            elif text != last[1]:
                _compare_again(table, dict(zip(writer.names, values, strict=True)), text,
                               last[1], problems)
    _report_deleted(last_events, problems)


def _compare_again(table: Table, current: dict[str, Any], text: str, event_values: Any,
                   problems: _Problems) -> None:
    """A row whose text is not its last event's: the pre-digest form passes, else named.

    An event written before a column was digested holds that column's full text; in
    today's form (``legacy_to_digest``) its canonical text is exactly the row's when
    nothing else changed. An event written before a column was added (a later
    migration) does not name it: the row matches while that column is still empty
    (NULL), and a value put there since is named.
    """
    audited = legacy_to_digest(table, _decoded(event_values))
    if audited and canonical_json(audited) == text:
        return
    differ = sorted(
        column for column in current.keys() | audited.keys()
        if not (column not in audited and current[column] is None)
        and (column not in current or column not in audited
             or canonical_json(current[column]) != canonical_json(audited[column]))
    )
    if audited and not differ:
        return
    problems.add("differs", f"{label(table.name, current['id'], current)} differs from its "
                 f"last audited state in: {', '.join(differ)}")


def _report_deleted(last_events: LastEvents, problems: _Problems) -> None:
    """Records with events but no row, in the order of their last events."""
    gone = []
    for name, of_table in last_events.items():
        for rid, (seq, values) in of_table.items():
            if name in AUDITED_TABLES:
                gone.append((seq, name, rid, values))
            else:
                problems.add("unknown", f"audit events name an unknown table {name!r} "
                             f"(#{rid})")
    gone.sort(key=lambda item: item[0])
    for _, name, rid, values in gone:
        problems.add("deleted", f"{label(name, rid, _decoded(values))} is gone but its audit "
                     "events remain: deleted outside prepbook")
