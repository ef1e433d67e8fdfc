"""Reading and verifying the audit trail, for reviewers and auditors."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from sqlalchemy.exc import DBAPIError

from prepbook.errors import IntegrityError, InvalidInput
from prepbook.inputs import parse_date, parse_whole
from prepbook.store import audit
from prepbook.store.engine import Database
from prepbook.store.models import AUDITED_TABLES


def log(db: Database, *, record: str | None = None, actor: str | None = None,
        since: str | None = None, until: str | None = None,
        limit: int | None = None) -> list[audit.LogEntry]:
    """Audit events, filtered; ``record`` is TABLE or TABLE#ID."""
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
        return audit.log(s, record_type=record_type, record_id=record_id, actor=actor,
                         since=since_d, until=until_d, limit=limit)


def verify(db: Database, *, thorough: bool = False) -> audit.VerifyReport:
    """The chain recomputed and every audited row checked against its last event, and
    against the checkpoints of the database and of the configured witness folder; the
    schema, the file (``thorough``: every page) and the credentials too."""
    return verify_against(db, thorough=thorough)


@dataclass(frozen=True)
class CheckpointMade:
    """A signed checkpoint just made: its code, what it attests, where it is witnessed."""

    checkpoint: str
    events: int
    head_hash: str
    made_at: str
    lab: str
    witness_file: str | None


@dataclass(frozen=True)
class SigningKeyMade:
    """A new lab signing key: the private key's file and the public key (hex)."""

    file: str
    public_key: str


def verify_against(db: Database, *, codes: Sequence[str] = (), witness: str | None = None,
                   thorough: bool = False) -> audit.VerifyReport:
    """``verify``, held also against checkpoint ``codes`` typed from paper and the
    ``witness`` folder (default: the configured one)."""
    folder = Path(witness).expanduser() if witness else audit.witness_folder()
    try:
        with db.session(write=False) as s:
            return audit.verify(s, codes=codes, witness=folder, thorough=thorough)
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
