"""Changes of the lab's keys, as recorded: the audit (HMAC) key and the signing key.

A trail that has begun keeps its keys until an admin changes one with ``audit
rotate-key`` (``rotating``). Each change is a row of ``audit_rekeyings``: after event
#N (whose hash it names), the key of this kind is the new one. The row carries the
HMAC (audit key) or Ed25519 signature (signing key) of its ``statement`` made with the
old key and with the new one, so only someone holding the key of its time can make a
change that ``audit verify`` accepts (``rekey_check``). The chain of events names the
key of each event (``key_id``), and each stretch of it is checked with its own key.

This module only reads: ``current`` gives the key a bench must hold now, which the
write path (``writing``) and the signing of checkpoints (``checkpoints.make``) compare
with their own.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from sqlalchemy import Connection, select

from prepbook.store.audit.chain import canonical_json, iso
from prepbook.store.models import table_of
from prepbook.store.models.trail import AuditRekeying

AUDIT = "audit"
SIGNING = "signing"
_TABLE = table_of(AuditRekeying)


@dataclass(frozen=True)
class Rekeying:
    """One recorded change of a key (a row of ``audit_rekeyings``)."""

    lab_id: str
    kind: str  # AUDIT or SIGNING
    after_seq: int  # the last event of the old key's stretch
    after_hash: str  # and its hash
    old_key: str  # a fingerprint (audit key) or a public key, hex (signing key)
    new_key: str
    made_at: str  # ISO, UTC
    made_by: str
    old_proof: str = ""
    new_proof: str = ""

    @property
    def name(self) -> str:
        """'the audit key change after event #40 (2026-12-05 07:10 UTC)'."""
        return (f"the {self.kind} key change after event #{self.after_seq} "
                f"({self.made_at[:16].replace('T', ' ')} UTC)")


def statement(change: Rekeying) -> bytes:
    """The bytes both proofs of a change cover (everything but the proofs)."""
    body = canonical_json({"lab": change.lab_id, "kind": change.kind,
                           "after": change.after_seq, "head": change.after_hash,
                           "old": change.old_key, "new": change.new_key,
                           "at": change.made_at, "by": change.made_by})
    return f"prepbook key change v1\n{body}".encode()


def recorded(conn: Connection) -> tuple[Rekeying, ...]:
    """Every recorded change, in the order made."""
    c = _TABLE.c
    rows = conn.execute(select(c.lab_id, c.kind, c.after_seq, c.after_hash, c.old_key,
                               c.new_key, c.made_at, c.made_by, c.old_proof, c.new_proof)
                        .order_by(c.id))
    return tuple(Rekeying(r.lab_id, r.kind, int(r.after_seq), r.after_hash, r.old_key,
                          r.new_key, iso(r.made_at) or "", r.made_by, r.old_proof,
                          r.new_proof) for r in rows)


def current(first: str | None, changes: Sequence[Rekeying], kind: str) -> str | None:
    """The key of ``kind`` in use now: the last change's new key, else the first one."""
    latest = [c.new_key for c in changes if c.kind == kind]
    return latest[-1] if latest else first
