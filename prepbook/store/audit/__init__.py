"""The append-only audit trail: one hash-chained event per write, and its verification.

By concern: ``chain`` (the key and the hashed text both sides share), ``writing``
(``record``, called for every write), ``verifying`` (``verify``) and ``reading``
(``log``). Callers import the names below from ``prepbook.store.audit``.

An edited, removed or reordered event breaks the chain; ``verify`` also compares every
current row with the snapshot of its last event, so a row edited, added or deleted
behind prepbook's back is found and named.
"""

from prepbook.store.audit.chain import KEY_ENV, KEYED, PLAIN, canonical_json, read_key, utc_naive
from prepbook.store.audit.reading import LogEntry, log
from prepbook.store.audit.verifying import VerifyReport, verify
from prepbook.store.audit.writing import record

__all__ = [
    "LogEntry",
    "KEYED",
    "KEY_ENV",
    "PLAIN",
    "VerifyReport",
    "canonical_json",
    "log",
    "read_key",
    "record",
    "utc_naive",
    "verify",
]
