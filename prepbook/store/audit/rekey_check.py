"""What ``verify`` makes of the recorded key changes: the key of each stretch.

Each change (``rekeying``) is accepted only when it follows the key in use before it,
names the trail's own event as the end of the old key's stretch, and both its proofs
verify: the old key's (made by whoever held the key of its time) and the new key's. A
change that fails is named and not followed, so the events written after it with the
new key are named as written with a different key. Old audit keys are HMAC secrets:
verify needs their files, found in the keyring folder (``audit_keyring`` in the
configuration, or PREPBOOK_AUDIT_KEYRING) or as the audit key set here. Old signing
keys need no file: their public keys are in the changes.
"""

from __future__ import annotations

import hmac
from collections.abc import Callable
from pathlib import Path

import msgspec
from sqlalchemy import Connection, select

from prepbook.errors import InvalidInput
from prepbook.store.audit import rekeying
from prepbook.store.audit.chain import key_fingerprint, read_key_file
from prepbook.store.audit.checkpoints import Keying, signature_verifies
from prepbook.store.audit.rotating import keyed_proof
from prepbook.store.models import AuditEvent, table_of

Add = Callable[[str, str], None]  # (kind, message)
KEYRING_ENV = "PREPBOOK_AUDIT_KEYRING"
_EVENTS = table_of(AuditEvent)


class Stretch(msgspec.Struct, frozen=True):
    """Events from ``first_seq`` on are keyed with ``key`` (None: not at hand, or plain)."""

    first_seq: int
    key: bytes | None


class SigningSpan(msgspec.Struct, frozen=True):
    """A signing key and the checkpoints it may sign: of ``first`` to ``last`` events."""

    public_key: str | None
    first: int
    last: int | None  # None: the key in use now


class Keys(msgspec.Struct, frozen=True):
    """The keys verify checks the trail with, stretch by stretch."""

    stretches: tuple[Stretch, ...]
    signing: tuple[SigningSpan, ...]

    def signs(self, public_key: str, events: int) -> bool:
        """True when ``public_key`` was the lab's signing key at a trail of ``events``."""
        return any(span.public_key == public_key and span.first <= events
                   and (span.last is None or events <= span.last) for span in self.signing)


def keyring_folder() -> Path | None:
    """The folder of old audit keys named by the configuration (or its variable)."""
    from prepbook.config import setting

    value = setting("audit_keyring").value
    return Path(str(value)).expanduser() if value else None


def _keyring(key: bytes | None, folder: Path | None, add: Add) -> dict[str, bytes]:
    """Fingerprint -> audit key, of the key set here and every file in ``folder``."""
    found: dict[str, bytes] = {}
    if folder is not None:
        if not folder.is_dir():
            add("key", f"the audit keyring folder {folder} does not exist")
        else:
            for path in sorted(p for p in folder.iterdir() if p.is_file()):
                try:
                    old = read_key_file(path, f"the keyring file {path}")
                except InvalidInput as exc:
                    add("key", f"{exc}: not an audit key")
                    continue
                found[str(key_fingerprint(old))] = old
    if key is not None:
        found[str(key_fingerprint(key))] = key
    return found


def _proofs_hold(change: rekeying.Rekeying, ring: dict[str, bytes], add: Add) -> bool:
    """True when both proofs of ``change`` verify (or, for an audit key not at hand,
    cannot be checked: that is named, and the change followed)."""
    text = rekeying.statement(change)
    if change.kind == rekeying.SIGNING:
        if not signature_verifies(change.old_key, change.old_proof, text):
            add("rekeyed", f"{change.name} is not signed with the signing key of its time "
                f"({change.old_key[:16]}): a key swapped outside prepbook, refused")
            return False
        if not signature_verifies(change.new_key, change.new_proof, text):
            add("rekeyed", f"{change.name} is not signed with its new key: refused")
            return False
        return True
    for role, fingerprint, proof in (("old", change.old_key, change.old_proof),
                                     ("new", change.new_key, change.new_proof)):
        held = ring.get(fingerprint)
        if held is None:
            add("key", f"the audit key {fingerprint} ({role} key of {change.name}) is not at "
                f"hand: the change and the events keyed with it cannot be verified; put "
                f"its file in the audit keyring (audit_keyring, or {KEYRING_ENV})")
        elif not hmac.compare_digest(keyed_proof(held, change), proof):
            add("rekeyed", f"{change.name} is not made with the {role} key (key "
                f"{fingerprint}): a key swapped outside prepbook, refused")
            return False
    return True


def checked(conn: Connection, kept: Keying | None, key: bytes | None,
            folder: Path | None, add: Add) -> Keys:
    """The keys of every stretch of the trail, each recorded change checked first."""
    if kept is None or not kept.changes:
        return Keys((Stretch(1, key),),
                    (SigningSpan(kept.public_key if kept else None, 0, None),))
    wanted = {c.after_seq for c in kept.changes}
    heads = {seq: hash_ for seq, hash_ in conn.execute(
        select(_EVENTS.c.seq, _EVENTS.c.hash).where(_EVENTS.c.seq.in_(wanted)))}
    needs_ring = any(c.kind == rekeying.AUDIT for c in kept.changes)
    ring = _keyring(key, folder if folder is not None else keyring_folder(), add) \
        if needs_ring else {}
    first = kept.first_fingerprint
    stretches = [Stretch(1, ring.get(first) if first and needs_ring else key)]
    signing = [SigningSpan(kept.first_public_key, 0, None)]
    in_use = {rekeying.AUDIT: first, rekeying.SIGNING: kept.first_public_key}
    last_after = {rekeying.AUDIT: 0, rekeying.SIGNING: 0}
    for change in kept.changes:
        if change.kind not in in_use or change.lab_id != kept.lab_id:
            add("rekeyed", f"{change.name} is not a change of this trail's keys (lab "
                f"{change.lab_id}): made outside prepbook")
            continue
        if change.old_key != in_use[change.kind]:
            add("rekeyed", f"{change.name} hands over from key {change.old_key[:16]}, but "
                f"the key in use then was {(in_use[change.kind] or 'none')[:16]}: made "
                "outside prepbook, refused")
            continue
        if change.after_seq < last_after[change.kind] or \
                heads.get(change.after_seq) != change.after_hash:
            add("rekeyed", f"{change.name} names an event #{change.after_seq} that is not "
                "the trail's: moved or made outside prepbook, refused")
            continue
        if not _proofs_hold(change, ring, add):
            continue
        in_use[change.kind] = change.new_key
        last_after[change.kind] = change.after_seq
        if change.kind == rekeying.AUDIT:
            stretches.append(Stretch(change.after_seq + 1, ring.get(change.new_key)))
        else:
            signing[-1] = SigningSpan(signing[-1].public_key, signing[-1].first,
                                      change.after_seq)
            signing.append(SigningSpan(change.new_key, change.after_seq, None))
    return Keys(tuple(stretches), tuple(signing))
