"""A row as the audit trail stores it: a canonical, JSON-safe snapshot.

``snapshot(row)`` is the same on SQLite and PostgreSQL: every value goes through its
column type's canonicaliser (times as ISO text, whole numbers refused if fractional,
flags only 0/1). A column marked ``info={"audit": "digest"}`` (a large text derived
from the rest of the record, such as a run's computed result, or a secret, such as a
user's passphrase hash) enters the snapshot as its fingerprint ``sha256:<hex>``
instead of in full; see ``fingerprint``. Events written before a column was marked
still verify (``legacy_to_digest``).
"""

from __future__ import annotations

import hashlib
import json
import math
import re
from collections.abc import Callable, Mapping
from datetime import UTC, date, datetime
from decimal import Decimal
from functools import cache
from typing import Any

from sqlalchemy import Boolean, Date, DateTime, Float, Integer, String, Table, inspect

from prepbook.store.models import Base


def _datetime(value: Any) -> str:
    if isinstance(value, datetime):
        if value.tzinfo is not None:
            value = value.astimezone(UTC).replace(tzinfo=None)
        return value.isoformat(timespec="microseconds")
    return str(value)


def _date(value: Any) -> str:
    if isinstance(value, datetime):
        value = value.date()
    return value.isoformat() if isinstance(value, date) else str(value)


def _float(value: Any) -> float | str:
    number = float(value)
    # JSON has no NaN/Infinity; keep them readable rather than failing the write.
    return number if math.isfinite(number) else repr(number)


def _int(value: Any) -> int:
    """A whole number as stored; anything else (1.25, 'x', a blob) is refused, never
    truncated, so a fraction written into a whole-number column cannot pass as it."""
    if type(value) is int:
        return value
    if isinstance(value, float) and value.is_integer():
        return int(value)
    raise ValueError(f"{value!r} is not a whole number")


def _bool(value: Any) -> bool:
    """A flag as stored: True/False or 1/0 only (not 2, '' or 'yes')."""
    if type(value) is bool:
        return value
    if type(value) is int and value in (0, 1):
        return bool(value)
    raise ValueError(f"{value!r} is not a yes/no flag")


def _text(value: Any) -> str:
    return value if type(value) is str else str(value)


def _converter(column_type: Any) -> Callable[[Any], Any]:
    """The canonicalising function for one column type (chosen once per column)."""
    if isinstance(column_type, DateTime):
        return _datetime
    if isinstance(column_type, Date):
        return _date
    if isinstance(column_type, Boolean):
        return _bool
    if isinstance(column_type, Float):
        return _float
    if isinstance(column_type, Integer):
        return _int
    if isinstance(column_type, String):  # Text is a String
        return _text
    return lambda value: str(value) if isinstance(value, Decimal) else value


def canonical_value(column_type: Any, value: Any) -> Any:
    """One column value in the form both databases agree on (JSON-safe, type-driven)."""
    return None if value is None else _converter(column_type)(value)


FINGERPRINT_PREFIX = "sha256:"
_FINGERPRINT = re.compile(r"sha256:[0-9a-f]{64}")


def fingerprint(value: Any) -> str:
    """``sha256:<hex>`` of a text column's UTF-8 text (of a binary column's bytes): what
    the snapshot holds for it.

    Any change to the text changes the fingerprint, so the row check of ``audit
    verify`` still finds an edit to a digested column.
    """
    if isinstance(value, bytes | memoryview):  # a stored file: the hash of its bytes
        return FINGERPRINT_PREFIX + hashlib.sha256(value).hexdigest()
    text = value if type(value) is str else str(value)
    return FINGERPRINT_PREFIX + hashlib.sha256(text.encode()).hexdigest()


def is_fingerprint(value: Any) -> bool:
    """Whether a snapshot value has the exact shape ``fingerprint`` writes."""
    return type(value) is str and _FINGERPRINT.fullmatch(value) is not None


def audited_in_digest(column: Any) -> bool:
    """Whether the audit snapshot holds this column as its fingerprint."""
    return bool(column.info.get("audit") == "digest")


@cache
def digested_columns(table: Table) -> tuple[str, ...]:
    """The names of ``table``'s columns that the snapshot holds as fingerprints, sorted."""
    return tuple(sorted(c.name for c in table.columns if audited_in_digest(c)))


def legacy_to_digest(table: Table, audited: dict[str, Any]) -> dict[str, Any]:
    """A snapshot written before a column was digested, in today's form.

    Events recorded before ``fingerprint`` existed hold the full text of a digested
    column; that text is replaced by its fingerprint (a value already shaped like
    one is taken as one), so the old snapshot compares with a row read today. The
    event itself is never rewritten: its hash is over the text it stores.
    """
    return _fingerprinted(digested_columns(table), audited)


def _fingerprinted(names: tuple[str, ...], audited: dict[str, Any]) -> dict[str, Any]:
    """``audited`` with each of ``names`` held in full replaced by its fingerprint."""
    if not names:
        return audited
    out = dict(audited)
    for name in names:
        value = out.get(name)
        if isinstance(value, str) and not is_fingerprint(value):
            out[name] = fingerprint(value)
    return out


@cache
def secret_columns(table: Table) -> tuple[str, ...]:
    """The digested columns of ``table`` that hold a secret (``info={"secret": True}``)."""
    return tuple(name for name in digested_columns(table) if table.c[name].info.get("secret"))


def without_secrets(table: Table, audited: dict[str, Any]) -> dict[str, Any]:
    """A snapshot with every secret as its fingerprint, for showing outside the trail.

    Events recorded before a secret was digested hold it in full (a user's passphrase
    hash); an export shows them in today's form instead. Other columns are untouched.
    """
    return _fingerprinted(secret_columns(table), audited)


def decoded_snapshot(values: Any) -> dict[str, Any]:
    """An event's stored snapshot text as a dict ({} when it is not a JSON object)."""
    try:
        decoded = json.loads(values)
    except (ValueError, TypeError):
        return {}
    return decoded if isinstance(decoded, dict) else {}


def canonical_type(column: Any) -> type | None:
    """The type a value of this column already has when it is canonical as read (text
    read as ``str``, whole numbers as ``int``), so a reader may skip the canonicaliser
    for it; None when every value goes through it."""
    convert = _column_converter(column)
    return str if convert is _text else int if convert is _int else None


def _column_converter(column: Any) -> Callable[[Any], Any]:
    return fingerprint if audited_in_digest(column) else _converter(column.type)


@cache
def snapshot_columns(table: Table) -> tuple[tuple[str, Callable[[Any], Any]], ...]:
    """(column name, canonicaliser) for every column of ``table``, sorted by name.

    Sorted so a dict built in this order dumps to the same JSON as ``sort_keys``.
    A digested column's canonicaliser is ``fingerprint``.
    """
    return tuple(sorted((c.name, _column_converter(c)) for c in table.columns))


def snapshot_mapping(table: Table, values: Mapping[str, Any]) -> dict[str, Any]:
    """Canonical snapshot from a mapping keyed by column name (e.g. a Core result row)."""
    return {
        name: None if values[name] is None else convert(values[name])
        for name, convert in snapshot_columns(table)
    }


def snapshot(row: Base) -> dict[str, Any]:
    """All columns of an ORM row, keyed by column name, canonical and JSON-safe.

    Keyed by the database column name (``expanded_u``, not ``U``) so the snapshot
    can be compared with a plain read of the table.
    """
    mapper = inspect(row).mapper
    table = mapper.local_table
    assert isinstance(table, Table)  # declarative models map one table each
    by_name: dict[str, Any] = {}
    for prop in mapper.column_attrs:
        for column in prop.columns:
            if column.table is table:
                by_name[column.name] = getattr(row, prop.key)
    return snapshot_mapping(table, by_name)
