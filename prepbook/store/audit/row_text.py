"""The snapshot text of a row as read by ``audit verify``, written without a dict per row.

The trail holds each record's snapshot as ``canonical_json`` of ``{column: canonical
value}``: keys sorted, no spaces. For one table the keys never change, so ``RowText``
writes that text from a template with a slot per column, filled from one encoder call
over the row's values.

How the slots are filled: the values are encoded as a JSON list whose items are
separated by a NUL character instead of a comma. JSON escapes every control character
inside a string (a NUL there is written ``\\u0000``), and every value is a scalar, so
each NUL in that text is a separator: splitting on it gives each value's JSON text,
exactly as ``canonical_json`` writes it.

Which values need their column's canonicaliser depends only on their types: a value
already of its column's canonical type (``canonical_type``: text as ``str``, whole
numbers as ``int``) or None is taken as read, any other goes through the
canonicaliser, which refuses what it refuses (a fraction in a whole-number column, a
flag other than 0/1) with ``ValueError``/``TypeError``. The tuple of types of a row is
looked up once per table and shape, so a row costs one lookup, not one test per column.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Sequence
from typing import Any

from sqlalchemy import Date, DateTime, Table

from prepbook.store.audit.chain import date_text, time_text
from prepbook.store.snapshot import audited_in_digest, canonical_type, snapshot_columns

Converter = Callable[[Any], Any]
_Plan = tuple[tuple[int, Converter], ...]  # (position, canonicaliser) of values to convert

_SEPARATOR = "\x00"  # never raw inside a JSON value: JSON escapes control characters
_values_text = json.JSONEncoder(separators=(_SEPARATOR, ":"), ensure_ascii=False,
                                allow_nan=False).encode


def converters(table: Table) -> tuple[tuple[str, Converter, type | None], ...]:
    """(name, canonicaliser, type kept as read) of each column, sorted by name.

    As ``snapshot_columns``, except that a time or date is read as stored (SQLite
    keeps text) and made the ISO text the snapshot holds, and that a value already of
    its column's canonical type (``canonical_type``) is taken as read.
    """
    out: list[tuple[str, Converter, type | None]] = []
    for name, convert in snapshot_columns(table):
        column = table.c[name]
        if not audited_in_digest(column):
            if isinstance(column.type, DateTime):
                convert = time_text
            elif isinstance(column.type, Date):
                convert = date_text
        out.append((name, convert, canonical_type(column)))
    return tuple(out)


class RowText:
    """The snapshot text of ``table``'s rows, read as plain tuples in ``names`` order."""

    def __init__(self, table: Table) -> None:
        self._converters = converters(table)
        self.names = tuple(name for name, _, _ in self._converters)
        slots = ",".join(f"{json.dumps(name)}:{{}}" for name in self.names)
        self._template = "{{" + slots + "}}"
        self._plans: dict[tuple[type, ...], _Plan] = {}

    def values(self, row: Sequence[Any]) -> list[Any]:
        """The row's canonical values (raises ``ValueError``/``TypeError`` for a value
        its canonicaliser refuses)."""
        kinds = tuple(map(type, row))
        plan = self._plans.get(kinds)
        if plan is None:
            plan = self._plans[kinds] = tuple(
                (at, convert) for at, ((_, convert, kept), kind)
                in enumerate(zip(self._converters, kinds, strict=True))
                if kind is not type(None) and kind is not kept)
        values = list(row)
        for at, convert in plan:
            values[at] = convert(values[at])
        return values

    def text(self, values: Sequence[Any]) -> str:
        """``canonical_json`` of ``dict(zip(names, values))`` for canonical ``values``."""
        return self._template.format(*_values_text(values)[1:-1].split(_SEPARATOR))
