"""The hash chain's pieces shared by writing and verifying: the key, the hashed text.

An event's hash covers the JSON array (seq, at, actor, action, record_type, record_id,
values, reason, performed_at, prev_hash), written with ``json.dumps(fields,
separators=(",", ":"), ensure_ascii=False)``; times are ISO text with microseconds.
Events written since the writer's login and host are recorded append (os_login, host,
key_id) to the array; older events, which have none of the three, keep the ten fields.
It is stored with its scheme: ``sha256:<hex>``, or ``hmac-sha256:<hex>`` when
``PREPBOOK_AUDIT_KEY_FILE`` names a file holding a lab secret kept outside the
database (a chain rewritten without the secret then no longer verifies).
"""

from __future__ import annotations

import hashlib
import hmac
import json
import os
import stat
import sys
from collections.abc import Callable
from datetime import UTC, date, datetime, timedelta
from pathlib import Path
from typing import Any

from prepbook.errors import InvalidInput

KEY_ENV = "PREPBOOK_AUDIT_KEY_FILE"
PLAIN = "sha256"
KEYED = "hmac-sha256"
# How far an event may be dated before the one it follows (benches' clocks differ by a
# few seconds even when kept in time; a clock set back by more is refused and named).
CLOCK_TOLERANCE = timedelta(seconds=60)

# Built once with the public JSONEncoder: json.dumps with options builds one per call.
_canonical = json.JSONEncoder(
    sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False
).encode
_fields = json.JSONEncoder(separators=(",", ":"), ensure_ascii=False, allow_nan=False).encode

Hasher = Callable[[bytes], str]


def canonical_json(value: Any) -> str:
    """The one JSON spelling of a value: sorted keys, no spaces, UTF-8, no NaN."""
    return _canonical(value)


def payload(seq: Any, at: Any, actor: Any, action: Any, record_type: Any, record_id: Any,
            values: Any, reason: Any, performed_at: Any, prev_hash: Any,
            os_login: Any = None, host: Any = None, key_id: Any = None) -> bytes:
    """The bytes an event's hash is taken over (times already as ISO text).

    The writer's login, host and key id are appended when any of them is set (every
    event written since they are recorded), so older events hash as they always did.
    Raises ``TypeError`` or ``ValueError`` for a value JSON cannot hold (a blob, NaN).
    """
    if os_login is None and host is None and key_id is None:
        return _fields([seq, at, actor, action, record_type, record_id, values, reason,
                        performed_at, prev_hash]).encode()
    return _fields([seq, at, actor, action, record_type, record_id, values, reason,
                    performed_at, prev_hash, os_login, host, key_id]).encode()


KEY_MIN_BYTES = 16  # shorter than a 128-bit secret: refused
KEY_MAX_BYTES = 4096  # a key file is a few dozen bytes; anything this big is not one
_warned: set[tuple[str, int, int]] = set()  # (file, inode, mode) already warned about


def read_key() -> bytes | None:
    """The lab's audit secret from the file named by PREPBOOK_AUDIT_KEY_FILE, if set.

    The file must be a regular file of 16 bytes to 4 KB (a device such as /dev/zero
    or a FIFO is refused from its ``stat``, before any read, so nothing hangs or fills
    memory); one readable by group or others gets a one-line warning on stderr (POSIX).
    """
    name = os.environ.get(KEY_ENV)
    if not name:
        return None
    return read_key_file(Path(name).expanduser(),
                         f"the audit key file named by {KEY_ENV} ({name})")


def read_key_file(path: Path, where: str) -> bytes:
    """An audit secret from ``path`` (``where`` names it in messages), as ``read_key``."""
    try:
        if not stat.S_ISREG(os.stat(path).st_mode):
            raise InvalidInput(f"{where} is not a regular file")
        # O_NONBLOCK: were it swapped for a FIFO since the stat, the open does not wait.
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
        with os.fdopen(fd, "rb") as handle:
            info = os.fstat(handle.fileno())
            if not stat.S_ISREG(info.st_mode):
                raise InvalidInput(f"{where} is not a regular file")
            if info.st_size > KEY_MAX_BYTES:
                raise InvalidInput(f"{where} holds {info.st_size} bytes; a key file holds "
                                   f"{KEY_MIN_BYTES} to {KEY_MAX_BYTES}")
            key = handle.read(KEY_MAX_BYTES + 1).strip()
    except OSError as exc:
        raise InvalidInput(f"cannot read {where}: {exc}") from exc
    if not key:
        raise InvalidInput(f"{where} is empty")
    if len(key) < KEY_MIN_BYTES:
        raise InvalidInput(f"{where} holds only {len(key)} bytes; a key needs at least "
                           f"{KEY_MIN_BYTES} (e.g. 32 random bytes)")
    _warn_if_shared(path, info)
    return key


def key_fingerprint(key: bytes | None) -> str | None:
    """A short name of an audit key that reveals nothing of it (an HMAC of a fixed text)."""
    if key is None:
        return None
    return hmac.new(key, b"prepbook audit key fingerprint", hashlib.sha256).hexdigest()[:16]


def _warn_if_shared(path: Path, info: os.stat_result) -> None:
    """One line on stderr, once per file, when group or others may read the key."""
    if os.name != "posix" or not info.st_mode & (stat.S_IRGRP | stat.S_IROTH):
        return
    seen = (str(path), info.st_ino, info.st_mode)
    if seen in _warned:
        return
    _warned.add(seen)
    sys.stderr.write(f"prepbook: warning: the audit key file {path} is readable by group or "
                     f"others; make it private (chmod 600 {path})\n")


def hasher(key: bytes | None) -> tuple[str, Hasher]:
    """The scheme and the hex digest function for this key (None: plain SHA-256)."""
    if key is None:
        return PLAIN, lambda data: hashlib.sha256(data).hexdigest()
    return KEYED, lambda data: hmac.new(key, data, hashlib.sha256).hexdigest()


def utc_naive(moment: datetime) -> datetime:
    """A datetime as naive UTC (aware ones converted; naive ones taken as UTC already)."""
    if moment.tzinfo is not None:
        return moment.astimezone(UTC).replace(tzinfo=None)
    return moment


def iso(moment: datetime | None) -> str | None:
    """A stored time as the ISO text the chain hashes (microseconds always written)."""
    return None if moment is None else moment.isoformat(timespec="microseconds")


def time_text(raw: Any) -> str:
    """The ISO text of a time as the driver hands it back (not None).

    PostgreSQL gives a datetime. SQLite gives the text SQLAlchemy stored,
    ``YYYY-MM-DD HH:MM:SS.ffffff``: that exact shape only needs its space made a "T"
    (the hot path of ``audit verify``); any other text is parsed, so a changed text
    gives another result, and text that is no time raises ``ValueError``.
    """
    if isinstance(raw, datetime):
        return raw.isoformat(timespec="microseconds")
    if type(raw) is str and len(raw) == 26 and raw[10] == " " and raw[19] == ".":
        return f"{raw[:10]}T{raw[11:]}"
    return datetime.fromisoformat(str(raw)).isoformat(timespec="microseconds")


def date_text(raw: Any) -> str:
    """The ISO text of a date as the driver hands it back (not None); see ``time_text``."""
    if isinstance(raw, datetime):
        return raw.date().isoformat()
    if isinstance(raw, date):
        return raw.isoformat()
    if type(raw) is str and len(raw) == 10 and raw[4] == "-" and raw[7] == "-":
        return raw
    return date.fromisoformat(str(raw)).isoformat()


def label(record_type: Any, record_id: Any, values: dict[str, Any] | None = None) -> str:
    """'batches #3 (code B-1)': the table, the id and the human key where there is one."""
    text = f"{record_type} #{record_id}"
    if values:
        for key in ("code", "name", "key"):
            if values.get(key) is not None:
                return f"{text} ({key} {values[key]})"
    return text
