"""Changing the lab's audit key or signing key: the write side of ``rekeying``.

Called in the transaction of an admin's signed ``audit rotate-key``, after the
signature's own event: the change takes effect after the trail's head as it then
stands, and is proven with the old key (the one this bench holds, which the trail
names as the key in use) and with the new one. A change of the signing key also
makes the first checkpoint under the new key, at the same head.
"""

from __future__ import annotations

import hashlib
import hmac
from datetime import UTC, datetime
from typing import TYPE_CHECKING

from msgspec.structs import replace
from sqlalchemy import insert, select
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput, Refused
from prepbook.store.audit import checkpoints, rekeying
from prepbook.store.audit.chain import KEYED, iso, key_fingerprint
from prepbook.store.models import AuditHead, table_of
from prepbook.store.models.trail import AuditRekeying

if TYPE_CHECKING:
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

_HEAD = table_of(AuditHead)
_TABLE = table_of(AuditRekeying)


def keyed_proof(key: bytes, change: rekeying.Rekeying) -> str:
    """The HMAC-SHA256 (hex) of a change's statement with an audit key."""
    return hmac.new(key, rekeying.statement(change), hashlib.sha256).hexdigest()


def _begin(session: Session, kind: str, old_key: str | None, new_key: str,
           by: str) -> tuple[checkpoints.Keying, rekeying.Rekeying]:
    """The trail's keying and the change (without proofs), after the head as it stands."""
    session.flush()
    conn = session.connection()
    kept = checkpoints.keying(conn)
    head = conn.execute(select(_HEAD.c.seq, _HEAD.c.hash).where(_HEAD.c.id == 1)
                        .with_for_update()).first()
    if kept is None or head is None or not head.seq or head.hash is None:
        raise Refused("the audit trail has not begun: its keys are recorded at its first "
                      "write and its first checkpoint; nothing to change")
    in_use = kept.key_fingerprint if kind == rekeying.AUDIT else kept.public_key
    if old_key != in_use:
        raise Refused(f"the {kind} key set here ({(old_key or 'none')[:16]}) is not the one "
                      f"this lab's trail uses now ({(in_use or 'none')[:16]}): only the key "
                      "in use can hand over to a new one; nothing was changed")
    if new_key == in_use:
        raise InvalidInput(f"the new {kind} key is the one in use already")
    assert in_use is not None  # equal to old_key, which was given
    made_at = iso(datetime.now(UTC).replace(tzinfo=None))
    assert made_at is not None
    return kept, rekeying.Rekeying(kept.lab_id, kind, int(head.seq), head.hash, in_use,
                                   new_key, made_at, by)


def _store(session: Session, change: rekeying.Rekeying) -> None:
    session.connection().execute(insert(_TABLE).values(
        lab_id=change.lab_id, kind=change.kind, after_seq=change.after_seq,
        after_hash=change.after_hash, old_key=change.old_key, new_key=change.new_key,
        made_at=datetime.fromisoformat(change.made_at), made_by=change.made_by,
        old_proof=change.old_proof, new_proof=change.new_proof))


def change_audit_key(session: Session, old: bytes | None, new: bytes,
                     by: str) -> rekeying.Rekeying:
    """Hand a keyed trail over from the audit key ``old`` (this bench's) to ``new``."""
    kept = checkpoints.keying(session.connection())
    if kept is not None and kept.scheme != KEYED:
        raise Refused("this lab's audit trail is not keyed: there is no audit key to "
                      "change; nothing was changed")
    new_id = key_fingerprint(new)
    assert new_id is not None
    _, change = _begin(session, rekeying.AUDIT, key_fingerprint(old), new_id, by)
    assert old is not None  # _begin refused a bench without the key in use
    change = replace(change, old_proof=keyed_proof(old, change),
                     new_proof=keyed_proof(new, change))
    _store(session, change)
    return change


def change_signing_key(session: Session, old: Ed25519PrivateKey, new: Ed25519PrivateKey,
                       by: str) -> tuple[rekeying.Rekeying, checkpoints.Checkpoint]:
    """Hand the lab's checkpoints over from the signing key ``old`` to ``new``; the first
    checkpoint signed with ``new`` (witnessed after the commit)."""
    _, change = _begin(session, rekeying.SIGNING, checkpoints.public_hex(old),
                       checkpoints.public_hex(new), by)
    text = rekeying.statement(change)
    change = replace(change, old_proof=old.sign(text).hex(), new_proof=new.sign(text).hex())
    _store(session, change)
    cp = checkpoints.make(session, new)
    checkpoints.made_here(session, cp)
    return change, cp
