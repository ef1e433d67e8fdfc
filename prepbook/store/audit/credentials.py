"""A person's credential may change only when the trail says it was changed.

Every event on a user's row holds the fingerprint of the passphrase hash
(``info={"audit": "digest"}`` on ``User.passphrase_hash``; older events hold the hash
itself, read in today's form through ``legacy_to_digest``). Only the actions in
``CREDENTIAL_ACTIONS`` may change it. Every signature writes an event on the signer's
row in the signed action's transaction, so the forgery "replace a user's hash with a
known one, sign as that user, put the original back" leaves an event whose
fingerprint is not the one before it, and ``credential_problems`` names it.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import Connection, select

from prepbook.store.audit.chain import label
from prepbook.store.models import AuditEvent, User, table_of
from prepbook.store.snapshot import decoded_snapshot, legacy_to_digest

# The only actions that may give a user a new passphrase hash.
CREDENTIAL_ACTIONS = frozenset({"user.add", "user.passphrase", "user.reset"})
_COLUMN = "passphrase_hash"


def credential_problems(conn: Connection) -> list[str]:
    """Each event at which a user's credential changed outside ``CREDENTIAL_ACTIONS``."""
    events = table_of(AuditEvent)
    users = table_of(User)
    rows = conn.execute(
        select(events.c.seq, events.c.action, events.c.record_id, events.c["values"])
        .where(events.c.record_type == users.name).order_by(events.c.seq))
    last: dict[Any, Any] = {}
    last_text: dict[Any, Any] = {}  # most events (signatures) repeat the row's snapshot
    problems = []
    for seq, action, rid, values in rows:
        if last_text.get(rid) == values and rid in last:
            continue  # the same snapshot as the user's event before: the same credential
        last_text[rid] = values
        snapshot = decoded_snapshot(values)
        if _COLUMN not in snapshot:
            continue  # an unreadable event: the chain check names it
        credential = legacy_to_digest(users, snapshot)[_COLUMN]
        if rid in last and credential != last[rid] and action not in CREDENTIAL_ACTIONS:
            problems.append(
                f"{label(users.name, rid, snapshot)}: the credential changed at audit event "
                f"#{seq} ({action}), which may not change it (only "
                f"{', '.join(sorted(CREDENTIAL_ACTIONS))}): the passphrase hash was "
                "swapped outside prepbook")
        last[rid] = credential
    return problems

