"""The append-only audit trail: one hash-chained event per write, and its verification.

By concern: ``chain`` (the key and the hashed text both sides share), ``writing``
(``record``, called for every write), ``verifying`` (``verify``), ``reading``
(``log``), ``checkpoints`` (signed checkpoints, the witness folder, the codes printed
on paper) and ``witnessing`` (holding checkpoints against the trail). Callers import
the names below from ``prepbook.store.audit``.

An edited, removed or reordered event breaks the chain; ``verify`` also compares every
current row with the snapshot of its last event, so a row edited, added or deleted
behind prepbook's back is found and named.
"""

from prepbook.store.audit.chain import KEY_ENV, KEYED, PLAIN, canonical_json, read_key, utc_naive
from prepbook.store.audit.checkpoints import (
    SIGNING_KEY_ENV,
    Checkpoint,
    head_code,
    load_signing_key,
    new_signing_key,
    signing_key_path,
    witness,
    witness_folder,
)
from prepbook.store.audit.checkpoints import make as make_checkpoint
from prepbook.store.audit.reading import LogEntry, log
from prepbook.store.audit.verifying import VerifyReport, verify
from prepbook.store.audit.writing import record, record_all

__all__ = [
    "SIGNING_KEY_ENV",
    "Checkpoint",
    "LogEntry",
    "KEYED",
    "KEY_ENV",
    "PLAIN",
    "VerifyReport",
    "canonical_json",
    "head_code",
    "load_signing_key",
    "make_checkpoint",
    "new_signing_key",
    "signing_key_path",
    "witness",
    "witness_folder",
    "log",
    "read_key",
    "record",
    "record_all",
    "utc_naive",
    "verify",
]
