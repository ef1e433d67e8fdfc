"""Reading and verifying the audit trail, for reviewers and auditors."""

from __future__ import annotations

import re
from collections import defaultdict
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import msgspec
from sqlalchemy import func, null, select
from sqlalchemy.exc import DBAPIError
from sqlalchemy.orm import Session

from prepbook.errors import IntegrityError, InvalidInput, Refused
from prepbook.inputs import parse_date, parse_text, parse_whole
from prepbook.lab.common import acting, signed
from prepbook.store import audit, retry
from prepbook.store.audit import rekey_check, rotating, witness_db
from prepbook.store.audit.chain import read_key_file
from prepbook.store.engine import Database
from prepbook.store.models import (
    AUDITED_TABLES,
    Assay,
    AssayReplicate,
    AuditEvent,
    Batch,
    Instrument,
    InstrumentConnection,
    LabelPrint,
    Lot,
    Material,
    Replicate,
    ReplicateCurve,
    ReplicateSource,
    Review,
    Run,
    Setting,
    Spec,
    Use,
    User,
)


class AuditEntry(audit.LogEntry, frozen=True):
    """An audit event with its record named as a person types it (``code``): the
    record's own code (a batch, run, lot, instrument, spec, material or assay code, a
    user's name, a setting's key), or for a part of a record the code of the whole:
    ``R260520-1/2`` replicate 2 of run R260520-1 (``v2`` its second version), a
    review by its run, a use by its batch. None for a record no longer found."""

    code: str | None = None


def _versioned(code: str, position: int | None, version: int | None) -> str:
    part = code if position is None else f"{code}/{position}"
    return part if not version or version == 1 else f"{part} v{version}"


def _own_code(model: Any) -> Callable[[], Any]:
    return lambda: select(model.id, model.code, null(), null())


# table -> the statement giving (id, code, position, version) of its rows (built when
# first asked for).
_NAMED: dict[str, Callable[[], Any]] = {
    **{m.__tablename__: _own_code(m)
       for m in (Material, Spec, Lot, Instrument, Batch, Run, Assay)},
    "users": lambda: select(User.id, User.name, null(), null()),
    "settings": lambda: select(Setting.id, Setting.key, null(), null()),
    "replicates": lambda: select(Replicate.id, Run.code, Replicate.position,
                                 Replicate.version).join(Run, Replicate.run_id == Run.id),
    "replicate_sources": lambda: (
        select(ReplicateSource.id, Run.code, Replicate.position, Replicate.version)
        .join(Replicate, ReplicateSource.replicate_id == Replicate.id)
        .join(Run, Replicate.run_id == Run.id)),
    "replicate_curves": lambda: select(ReplicateCurve.id, Run.code, ReplicateCurve.position,
                                       null()).join(Run, ReplicateCurve.run_id == Run.id),
    "reviews": lambda: select(Review.id, Run.code, null(), null()).join(
        Run, Review.run_id == Run.id),
    "uses": lambda: select(Use.id, Batch.code, null(), null()).join(
        Batch, Use.batch_id == Batch.id),
    "assay_replicates": lambda: select(AssayReplicate.id, Assay.code, AssayReplicate.position,
                                       null()).join(Assay, AssayReplicate.assay_id == Assay.id),
    "instrument_connections": lambda: select(
        InstrumentConnection.id, Instrument.code, null(), InstrumentConnection.version).join(
        Instrument, InstrumentConnection.instrument_id == Instrument.id),
    "label_prints": lambda: select(LabelPrint.id, Batch.code, null(), null()).join(
        Batch, LabelPrint.batch_id == Batch.id).union_all(
        select(LabelPrint.id, Lot.code, null(), null()).join(Lot, LabelPrint.lot_id == Lot.id)),
}

_CHUNK = 500  # ids asked for by list, far below any backend's limit on bound parameters


def _codes(session: Session, events: Sequence[audit.LogEntry]) -> dict[tuple[str, int], str]:
    """(table, id) -> code of every record the events name."""
    wanted: dict[str, set[int]] = defaultdict(set)
    for e in events:
        wanted[e.record_type].add(e.record_id)
    return _codes_of(session, wanted)


def _codes_of(session: Session, wanted: dict[str, set[int]]) -> dict[tuple[str, int], str]:
    """(table, id) -> code of the ``wanted`` rows that exist: one query per table named,
    whatever the number of rows (by their ids when they are few, else the table's every
    row)."""
    named: dict[tuple[str, int], str] = {}
    for table, ids in wanted.items():
        if table not in _NAMED:
            continue
        stmt = _NAMED[table]().subquery()
        query = select(stmt)
        if len(ids) <= _CHUNK:
            query = query.where(stmt.c[0].in_(sorted(ids)))
        for rid, code, position, version in session.execute(query):
            named[(table, rid)] = _versioned(code, position, version)
    return named


_LOG_FIELDS = audit.LogEntry.__struct_fields__


# "replicates #17" in a problem of verify, not already followed by its own key ("(code ...")
_ROW_IN_TEXT = re.compile(r"\b([a-z_]+) #(\d+)\b(?! \()")


def _problems_by_code(session: Session, problems: tuple[str, ...]) -> tuple[str, ...]:
    """Verify's problems with each record they name shown by its code as well, beside
    the row id ("replicates #17 (R261203-2/2)", as "batches #3 (code B-1)"), where the
    row is still there."""
    wanted: dict[str, set[int]] = defaultdict(set)
    for problem in problems:
        for table, rid in _ROW_IN_TEXT.findall(problem):
            if table in _NAMED:
                wanted[table].add(int(rid))
    if not wanted:
        return problems
    codes = _codes_of(session, wanted)

    def shown(match: re.Match[str]) -> str:
        code = codes.get((match[1], int(match[2])))
        return f"{match[0]} ({code})" if code else match[0]

    return tuple(_ROW_IN_TEXT.sub(shown, problem) for problem in problems)


def named(session: Session, events: Sequence[audit.LogEntry]) -> list[AuditEntry]:
    """``events`` with the code of each one's record (``AuditEntry.code``)."""
    codes = _codes(session, events)
    return [AuditEntry(**{name: getattr(e, name) for name in _LOG_FIELDS},
                       code=codes.get((e.record_type, e.record_id))) for e in events]


def log(db: Database, *, record: str | None = None, actor: str | None = None,
        since: str | None = None, until: str | None = None,
        limit: int | None = None) -> list[AuditEntry]:
    """Audit events, filtered, each with its record's code; ``record`` is TABLE or
    TABLE#ID."""
    record_type = record_id = None
    if record:
        name, _, rid = record.partition("#")
        if name not in AUDITED_TABLES:
            raise InvalidInput(f"unknown record type {name!r}; one of "
                               f"{', '.join(sorted(AUDITED_TABLES))}")
        record_type = name
        if rid:
            record_id = parse_whole(rid, "record id")
    if limit is not None and limit < 1:
        raise InvalidInput("--limit must be at least 1")
    since_d = parse_date(since, "--since") if since else None
    until_d = parse_date(until, "--until") if until else None
    if since_d and until_d and since_d > until_d:
        raise InvalidInput("--since is after --until")
    with db.session(write=False) as s:
        return named(s, audit.log(s, record_type=record_type, record_id=record_id,
                                  actor=actor, since=since_d, until=until_d, limit=limit))


def verify(db: Database, *, thorough: bool = False) -> audit.VerifyReport:
    """The chain recomputed and every audited row checked against its last event, and
    against the checkpoints of the database and of the configured witness folder; the
    schema, the file (``thorough``: every page) and the credentials too."""
    return verify_against(db, thorough=thorough)


class CheckpointMade(msgspec.Struct, frozen=True):
    """A signed checkpoint just made: its code, what it attests, where it is witnessed."""

    checkpoint: str
    events: int
    head_hash: str
    made_at: str
    lab: str
    witness_file: str | None


class SigningKeyMade(msgspec.Struct, frozen=True):
    """A new lab signing key: the private key's file and the public key (hex)."""

    file: str
    public_key: str


def verify_size(db: Database) -> int:
    """How many events and audited rows ``verify`` reads (its ``advance`` adds up to it
    on an unchanged database)."""
    with db.session(write=False) as s:
        return sum(int(s.scalar(select(func.count()).select_from(table)) or 0)
                   for table in (AuditEvent.__table__, *AUDITED_TABLES.values()))


def verify_against(db: Database, *, codes: Sequence[str] = (), witness: str | None = None,
                   thorough: bool = False, witness_database: str | None = None,
                   keyring: str | None = None,
                   advance: Callable[[int], None] | None = None) -> audit.VerifyReport:
    """``verify``, held also against checkpoint ``codes`` typed from paper, the
    ``witness`` folder and the ``witness_database`` (default: the configured ones), each
    stretch of the chain checked with its audit key (old ones from the ``keyring``
    folder, default: the configured one); ``advance(n)`` after every n events and rows
    read."""
    folder = Path(witness).expanduser() if witness else audit.witness_folder()
    url = witness_database or witness_db.witness_database()
    ring = Path(keyring).expanduser() if keyring else rekey_check.keyring_folder()
    try:
        with db.session(write=False) as s:
            report = audit.verify(s, codes=codes, witness=folder, thorough=thorough,
                                  witness_db=url, keyring=ring, advance=advance)
            try:
                problems = _problems_by_code(s, report.problems)
            except DBAPIError:  # a table verify found damaged: the problems as they are
                return report
            return msgspec.structs.replace(report, problems=problems)
    except DBAPIError as exc:  # pages that cannot be read: one line, never a traceback
        raise IntegrityError(f"the database cannot be read to the end ({exc.orig}): restore "
                             "it from a backup; `prepbook audit verify --thorough` on a "
                             "copy lists the damage") from exc


def checkpoint(db: Database) -> CheckpointMade:
    """Sign a checkpoint of the trail now, keep it and witness it (for a schedule)."""
    path = audit.signing_key_path()
    if path is None:
        raise InvalidInput("no signing key: set signing_key_file in the configuration or "
                           f"{audit.SIGNING_KEY_ENV} (`prepbook audit signing-key PATH` "
                           "makes one)")
    key = audit.load_signing_key(path)
    with db.session() as s:
        cp = audit.make_checkpoint(s, key)
    witnessed = audit.witness(cp)
    return CheckpointMade(checkpoint=cp.code, events=cp.events, head_hash=cp.head_hash,
                          made_at=cp.made_at, lab=cp.lab_id,
                          witness_file=str(witnessed) if witnessed else None)


def new_signing_key(path: str) -> SigningKeyMade:
    """Make the lab's checkpoint-signing key pair; the private key goes to ``path``."""
    target = Path(path).expanduser()
    return SigningKeyMade(file=str(target), public_key=audit.new_signing_key(target))


def checkpoint_code(db: Database) -> str | None:
    """The code of the trail as it stands, for a printed page (None while empty)."""
    with db.session(write=False) as s:
        return audit.head_code(s)


class KeyChanged(msgspec.Struct, frozen=True):
    """A key of the lab handed over to a new one by ``rotate_key``."""

    kind: str  # "audit" (fingerprints) or "signing" (public keys, hex)
    old_key: str
    new_key: str
    after_event: int  # the last event of the old key
    made_at: str
    made_by: str
    checkpoint: str | None  # the new signing key's first checkpoint


def make_witness_database(url: str) -> str:
    """Make the checkpoint table of a witness database (run as its owner); its URL as
    shown (password hidden)."""
    return witness_db.create(url)


@retry.on_conflict
def rotate_key(db: Database, *, actor: str, passphrase: str | None, reason: str | None,
               audit_key: str | None = None, signing_key: str | None = None
               ) -> list[KeyChanged]:
    """Hand the lab's audit key and/or signing key over to the key in the file given
    (admin, signed): the change is proven with the key in use (this bench's) and the
    new one, and recorded after the trail's head."""
    if not audit_key and not signing_key:
        raise InvalidInput("name the new key: --audit-key FILE and/or --signing-key FILE")
    reason = parse_text(reason, "reason", max_len=500)
    if not (reason and reason.strip()):
        raise InvalidInput("changing a key needs a --reason")
    old_audit = new_audit = old_signing = new_signing = None
    if audit_key:
        old_audit = audit.read_key()
        if old_audit is None:
            raise Refused(f"no audit key is set here: set {audit.KEY_ENV} to the key in use "
                          "to hand it over; nothing was changed")
        target = Path(audit_key).expanduser()
        new_audit = read_key_file(target, f"the new audit key file {target}")
    if signing_key:
        path = audit.signing_key_path()
        if path is None:
            raise Refused("no signing key is set here: set signing_key_file to the key in use "
                          "to hand it over; nothing was changed")
        old_signing = audit.load_signing_key(path)
        new_signing = audit.load_signing_key(Path(signing_key).expanduser())
    kinds = " and ".join(k for k, given in (("audit", audit_key), ("signing", signing_key))
                         if given)
    signed(db, actor, passphrase, ("admin",), "change the lab's keys",
           meaning="changed the lab's keys", what=f"the {kinds} key ({reason})")
    changed: list[KeyChanged] = []
    with db.session() as s:
        admin = acting(s, actor, ("admin",), "change the lab's keys")
        if new_audit is not None:
            change = rotating.change_audit_key(s, old_audit, new_audit, admin.name)
            changed.append(KeyChanged(change.kind, change.old_key, change.new_key,
                                      change.after_seq, change.made_at, change.made_by, None))
        if old_signing is not None and new_signing is not None:
            change, cp = rotating.change_signing_key(s, old_signing, new_signing, admin.name)
            changed.append(KeyChanged(change.kind, change.old_key, change.new_key,
                                      change.after_seq, change.made_at, change.made_by,
                                      cp.code))
    return changed
