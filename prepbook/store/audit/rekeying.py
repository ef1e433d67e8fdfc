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
from typing import Any

import msgspec
from sqlalchemy import Connection, select

from prepbook.store.audit.chain import canonical_json, iso
from prepbook.store.models import table_of
from prepbook.store.models.trail import AuditRekeying

AUDIT = "audit"
SIGNING = "signing"
_TABLE = table_of(AuditRekeying)


class Rekeying(msgspec.Struct, frozen=True):
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


TABLE = _TABLE
# The columns a change is read from, in the order ``of_row`` takes them.
COLUMNS = tuple(_TABLE.c[name] for name in (
    "lab_id", "kind", "after_seq", "after_hash", "old_key", "new_key", "made_at", "made_by",
    "old_proof", "new_proof"))


def of_row(values: Sequence[Any]) -> Rekeying:
    """A change from the values of ``COLUMNS``."""
    lab_id, kind, after_seq, after_hash, old_key, new_key, made_at, made_by, old_proof, \
        new_proof = values
    return Rekeying(lab_id, kind, int(after_seq), after_hash, old_key, new_key,
                    iso(made_at) or "", made_by, old_proof, new_proof)


def recorded(conn: Connection) -> tuple[Rekeying, ...]:
    """Every recorded change, in the order made."""
    return tuple(of_row(tuple(r)) for r in conn.execute(select(*COLUMNS).order_by(_TABLE.c.id)))


def current(first: str | None, changes: Sequence[Rekeying], kind: str) -> str | None:
    """The key of ``kind`` in use now: the last change's new key, else the first one."""
    latest = [c.new_key for c in changes if c.kind == kind]
    return latest[-1] if latest else first
