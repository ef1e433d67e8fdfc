"""Signed checkpoints of the trail, the witness folder, and the codes printed on paper.

A checkpoint says "this lab's trail had N events ending in this head hash, at this
time", signed with the lab's Ed25519 key (``cryptography``). The private key lives in a
file outside the database (``signing_key_file`` in the configuration, or
PREPBOOK_SIGNING_KEY_FILE); the public key is recorded in ``audit_keying``. Each
checkpoint is kept in ``audit_checkpoints`` and appended, as one JSON line, to the
witness folder (``witness_folder``), which the lab keeps outside the database's reach.
A trail later shortened, rolled back to an older copy or rewritten no longer reaches
what a checkpoint attests, and ``verify`` names it.

When the signing key is at hand, a checkpoint is made in every write transaction that
recorded events, just before it commits, and witnessed just after (``_before_commit``,
``_after_commit``: listeners on every ``Session``); ``make`` makes one on demand.

The code printed on reports and labels is ``<events>-<8 letters>``: the event count and
the first letters of the base32 SHA-256 of the head hash, so that a person can type it
back into ``audit verify --checkpoint`` (about 40 bits: a typed check, not a signature).
"""

from __future__ import annotations

import base64
import hashlib
import json
import os
import re
import uuid
from collections.abc import Mapping
from datetime import UTC, datetime
from pathlib import Path
from typing import TYPE_CHECKING, Any

import msgspec
from sqlalchemy import Connection, event, insert, select, true, update
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput, Refused
from prepbook.records import as_data
from prepbook.store.audit import rekeying
from prepbook.store.audit.chain import canonical_json, iso
from prepbook.store.models import AuditCheckpoint, AuditHead, AuditKeying, table_of

if TYPE_CHECKING:
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

SIGNING_KEY_ENV = "PREPBOOK_SIGNING_KEY_FILE"
WITNESS_PREFIX = "prepbook-checkpoints-"
_MAX_KEY_FILE_BYTES = 16_384  # a PEM Ed25519 key is about 120 bytes
_CODE = re.compile(r"^\s*(\d+)\s*-\s*([A-Za-z0-9]{8})\s*$")
_PENDING = "prepbook_checkpoint_pending"
HEAD_KEY = "prepbook_audit_head"  # set by ``writing.record``: this transaction wrote events

_KEYING = table_of(AuditKeying)
_CHECKPOINTS = table_of(AuditCheckpoint)
_HEAD = table_of(AuditHead)


class Keying(msgspec.Struct, frozen=True):
    """How this trail is kept (the ``audit_keying`` row, and the keys changed since).

    ``key_fingerprint`` and ``public_key`` are the keys in use now (after the
    ``changes``); ``first_fingerprint`` and ``first_public_key`` the ones recorded
    first.
    """

    lab_id: str
    scheme: str
    key_fingerprint: str | None
    public_key: str | None
    changes: tuple[rekeying.Rekeying, ...] = ()
    first_fingerprint: str | None = None
    first_public_key: str | None = None


class Checkpoint(msgspec.Struct, frozen=True):
    """One signed checkpoint, as stored in the database and in the witness folder."""

    lab_id: str
    events: int
    head_hash: str
    made_at: str  # ISO, UTC
    public_key: str  # Ed25519, raw, hex
    signature: str  # hex

    @property
    def code(self) -> str:
        return code_of(self.events, self.head_hash)

    @property
    def when(self) -> str:
        """'2026-12-04 10:31 UTC': how a person names it."""
        return f"{self.made_at[:16].replace('T', ' ')} UTC"


# --- codes ----------------------------------------------------------------------------


def code_of(events: int, head_hash: str) -> str:
    """The short code of a trail of ``events`` events ending in ``head_hash``."""
    letters = base64.b32encode(hashlib.sha256(head_hash.encode()).digest()).decode()[:8]
    return f"{events}-{letters}"


def parse_code(text: str) -> tuple[int, str]:
    """(events, code) of a code as typed: case, spaces and 0/1/8 for O/I/B forgiven."""
    match = _CODE.match(text)
    if match is None or int(match.group(1)) < 1:
        raise InvalidInput(f"checkpoint code {text!r} is not of the form EVENTS-LETTERS "
                           "(as printed: 'Checkpoint 54-K7QX2MDA')")
    letters = match.group(2).upper().translate(str.maketrans("018", "OIB"))
    events = int(match.group(1))
    return events, f"{events}-{letters}"


def head_code(session: Session) -> str | None:
    """The code of the trail as it stands in this session (None while it is empty)."""
    session.flush()
    row = session.connection().execute(
        select(_HEAD.c.seq, _HEAD.c.hash).where(_HEAD.c.id == 1)).first()
    if row is None or not row.seq or row.hash is None:
        return None
    return code_of(int(row.seq), row.hash)


# --- keying ---------------------------------------------------------------------------


def keying(conn: Connection) -> Keying | None:
    """The trail's keying row, if it was recorded, with the keys changed since applied."""
    return keying_of(conn.execute(
        select(*KEYING_COLUMNS).select_from(_KEYING.outerjoin(rekeying.TABLE, true()))
        .where(_KEYING.c.id == 1).order_by(rekeying.TABLE.c.id)).all())


# The keying row's columns, then a change of key's (one row per change, or one row of
# the keying alone): ``keying_of`` reads them from the end of each row, so a query may
# put columns of its own before them (the writer reads the head in the same statement).
KEYING_COLUMNS = (_KEYING.c.lab_id, _KEYING.c.scheme, _KEYING.c.key_fingerprint,
                  _KEYING.c.public_key, rekeying.TABLE.c.id, *rekeying.COLUMNS)


def keying_of(rows: Any) -> Keying | None:
    """The keying from rows ending in ``KEYING_COLUMNS`` (None: no keying recorded)."""
    tails = [tuple(r)[-len(KEYING_COLUMNS):] for r in rows]
    if not tails or tails[0][0] is None:
        return None
    lab_id, scheme, fingerprint, public_key = tails[0][:4]
    changes = tuple(rekeying.of_row(t[5:]) for t in tails if t[4] is not None)
    return Keying(lab_id, scheme,
                  rekeying.current(fingerprint, changes, rekeying.AUDIT),
                  rekeying.current(public_key, changes, rekeying.SIGNING),
                  changes, fingerprint, public_key)


def record_keying(conn: Connection, scheme: str, fingerprint: str | None) -> Keying:
    """Record the trail's scheme and key at its first write, under a new lab id."""
    made = Keying(uuid.uuid4().hex, scheme, fingerprint, None)
    conn.execute(insert(_KEYING).values(
        id=1, lab_id=made.lab_id, scheme=scheme, key_fingerprint=fingerprint,
        public_key=None, recorded_at=datetime.now(UTC).replace(tzinfo=None)))
    return made


# --- the signing key ------------------------------------------------------------------


def signing_key_path() -> Path | None:
    """The signing key file named by the configuration (or its environment variable)."""
    from prepbook.config import setting

    value = setting("signing_key_file").value
    return Path(str(value)).expanduser() if value else None


def load_signing_key(path: Path) -> Ed25519PrivateKey:
    """The lab's private signing key from its PEM file (one line on any fault)."""
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey
    from cryptography.hazmat.primitives.serialization import load_pem_private_key

    try:
        if not path.is_file():
            raise InvalidInput(f"the signing key file {path} does not exist or is not a file")
        if path.stat().st_size > _MAX_KEY_FILE_BYTES:
            raise InvalidInput(f"the signing key file {path} is too large to be a key")
        key = load_pem_private_key(path.read_bytes(), password=None)
    except OSError as exc:
        raise InvalidInput(f"cannot read the signing key file {path}: {exc}") from exc
    except (ValueError, TypeError) as exc:
        raise InvalidInput(f"the signing key file {path} holds no unencrypted PEM private "
                           "key") from exc
    if not isinstance(key, Ed25519PrivateKey):
        raise InvalidInput(f"the signing key file {path} holds a key that is not Ed25519")
    return key


def public_hex(key: Ed25519PrivateKey) -> str:
    from cryptography.hazmat.primitives.serialization import Encoding, PublicFormat

    return key.public_key().public_bytes(Encoding.Raw, PublicFormat.Raw).hex()


def new_signing_key(path: Path) -> str:
    """Write a new Ed25519 private key to ``path`` (never over a file; owner-only); its
    public key (hex)."""
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey
    from cryptography.hazmat.primitives.serialization import (
        Encoding,
        NoEncryption,
        PrivateFormat,
    )

    key = Ed25519PrivateKey.generate()
    pem = key.private_bytes(Encoding.PEM, PrivateFormat.PKCS8, NoEncryption())
    try:
        fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    except FileExistsError:
        raise InvalidInput(f"{path} exists already; a signing key is never overwritten") from None
    except OSError as exc:
        raise InvalidInput(f"cannot create {path}: {exc}") from exc
    with os.fdopen(fd, "wb") as out:
        out.write(pem)
    return public_hex(key)


def message(lab_id: str, events: int, head_hash: str, made_at: str) -> bytes:
    """The bytes a checkpoint's signature covers."""
    body = canonical_json({"lab": lab_id, "events": events, "head": head_hash,
                           "at": made_at})
    return f"prepbook checkpoint v1\n{body}".encode()


def signature_ok(cp: Checkpoint) -> bool:
    """True when ``cp.signature`` is its public key's signature of its fields."""
    return signature_verifies(cp.public_key, cp.signature,
                              message(cp.lab_id, cp.events, cp.head_hash, cp.made_at))


def signature_verifies(public_key: str, signature: str, text: bytes) -> bool:
    """True when ``signature`` (hex) is the Ed25519 signature of ``text`` by the public
    key ``public_key`` (raw, hex)."""
    from cryptography.exceptions import InvalidSignature
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey

    try:
        public = Ed25519PublicKey.from_public_bytes(bytes.fromhex(public_key))
        public.verify(bytes.fromhex(signature), text)
    except (InvalidSignature, ValueError, TypeError):
        return False
    return True


# --- making checkpoints ---------------------------------------------------------------


def make(session: Session, key: Ed25519PrivateKey) -> Checkpoint:
    """Sign and store a checkpoint of the trail as it stands in ``session``'s transaction.

    The first checkpoint records the lab's public key; a key that is not the recorded
    one is refused.
    """
    conn = session.connection()
    kept = keying(conn)
    head = conn.execute(select(_HEAD.c.seq, _HEAD.c.hash).where(_HEAD.c.id == 1)).first()
    if kept is None or head is None or not head.seq or head.hash is None:
        raise Refused("the audit trail is empty: there is nothing to checkpoint yet")
    public = public_hex(key)
    if kept.public_key is None:
        conn.execute(update(_KEYING).where(_KEYING.c.id == 1).values(public_key=public))
    elif kept.public_key != public:
        raise Refused(f"the signing key (public key {public[:16]}) is not this lab's "
                      f"(public key {kept.public_key[:16]}): no checkpoint was made")
    made_at = iso(datetime.now(UTC).replace(tzinfo=None))
    assert made_at is not None
    events = int(head.seq)
    signature = key.sign(message(kept.lab_id, events, head.hash, made_at)).hex()
    cp = Checkpoint(kept.lab_id, events, head.hash, made_at, public, signature)
    conn.execute(insert(_CHECKPOINTS).values(
        lab_id=cp.lab_id, events=cp.events, head_hash=cp.head_hash,
        made_at=datetime.fromisoformat(made_at), public_key=cp.public_key,
        signature=cp.signature))
    return cp


def stored(conn: Connection) -> list[Checkpoint]:
    """The checkpoints kept in the database, oldest first."""
    c = _CHECKPOINTS.c
    rows = conn.execute(select(c.lab_id, c.events, c.head_hash, c.made_at, c.public_key,
                               c.signature).order_by(c.id))
    return [Checkpoint(r.lab_id, int(r.events), r.head_hash,
                       iso(r.made_at) or "", r.public_key, r.signature) for r in rows]


# --- the witness folder ---------------------------------------------------------------


def witness_folder() -> Path | None:
    """The witness folder named by the configuration (or its environment variable)."""
    from prepbook.config import setting

    value = setting("witness_folder").value
    return Path(str(value)).expanduser() if value else None


def witness_file(folder: Path, lab_id: str) -> Path:
    return folder / f"{WITNESS_PREFIX}{lab_id}.jsonl"


def append_witness(folder: Path, cp: Checkpoint) -> Path:
    """Append ``cp`` as one JSON line to this lab's file in ``folder`` (synced to disk)."""
    if not folder.is_dir():
        raise InvalidInput(f"the witness folder {folder} does not exist")
    path = witness_file(folder, cp.lab_id)
    try:
        with path.open("a", encoding="utf-8") as out:
            out.write(json.dumps(as_data(cp), sort_keys=True) + "\n")
            out.flush()
            os.fsync(out.fileno())
    except OSError as exc:
        raise InvalidInput(f"cannot append to the witness file {path}: {exc}") from exc
    return path


def read_witness(folder: Path, lab_id: str) -> tuple[list[Checkpoint], list[str]]:
    """This lab's checkpoints in ``folder``, and what could not be read there."""
    path = witness_file(folder, lab_id)
    if not folder.is_dir():
        return [], [f"the witness folder {folder} does not exist"]
    if not path.is_file():
        return [], []
    found: list[Checkpoint] = []
    faults: list[str] = []
    try:
        lines = path.read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError) as exc:
        return [], [f"the witness file {path} cannot be read: {exc}"]
    for number, line in enumerate(lines, start=1):
        if not line.strip():
            continue
        try:
            found.append(checkpoint_of(json.loads(line)))
        except (ValueError, TypeError, KeyError):
            faults.append(f"line {number} of the witness file {path} is not a checkpoint")
    return found, faults


def other_trails(folder: Path, lab_id: str) -> list[str]:
    """Lab ids of the other trails witnessed in ``folder``."""
    if not folder.is_dir():
        return []
    return sorted(p.name[len(WITNESS_PREFIX):-len(".jsonl")]
                  for p in folder.glob(f"{WITNESS_PREFIX}*.jsonl")
                  if p != witness_file(folder, lab_id))


def checkpoint_of(data: Mapping[str, Any]) -> Checkpoint:
    """A checkpoint from its fields as written outside the database (ValueError, TypeError
    or KeyError when they are not one)."""
    cp = Checkpoint(lab_id=str(data["lab_id"]), events=int(data["events"]),
                    head_hash=str(data["head_hash"]), made_at=str(data["made_at"]),
                    public_key=str(data["public_key"]), signature=str(data["signature"]))
    datetime.fromisoformat(cp.made_at)  # a line whose time is no time is no checkpoint
    return cp


# --- after each write transaction -----------------------------------------------------


@event.listens_for(Session, "before_commit")
def _before_commit(session: Session) -> None:
    """Sign a checkpoint of a transaction that recorded events, when the key is at hand."""
    held = session.info.get(HEAD_KEY)
    if held is None or held[0] is not session.get_transaction():
        return
    path = signing_key_path()
    if path is None:
        return
    session.info[_PENDING] = make(session, load_signing_key(path))


def witness(cp: Checkpoint) -> Path | None:
    """Append a committed checkpoint to the configured witness database and witness
    folder (each if set); the file it went to in the folder."""
    from prepbook.store.audit import witness_db

    url = witness_db.witness_database()
    if url is not None:
        witness_db.witness(url, as_data(cp), cp.code)
    folder = witness_folder()
    if folder is None:
        return None
    try:
        return append_witness(folder, cp)
    except InvalidInput as exc:
        raise InvalidInput(f"recorded, and checkpoint {cp.code} kept in the database, but "
                           f"not witnessed: {exc}") from exc


def made_here(session: Session, cp: Checkpoint) -> None:
    """``cp`` is this transaction's checkpoint, made by its caller: witnessed after the
    commit, and no other made before it (a change of the signing key, whose old key
    no longer signs)."""
    session.info.pop(HEAD_KEY, None)
    session.info[_PENDING] = cp


@event.listens_for(Session, "after_commit")
def _after_commit(session: Session) -> None:
    """Witness the checkpoint just committed (the database keeps it in any case)."""
    cp = session.info.pop(_PENDING, None)
    if cp is not None:
        witness(cp)


@event.listens_for(Session, "after_rollback")
def _after_rollback(session: Session) -> None:
    session.info.pop(_PENDING, None)
