"""``RowText`` writes a row's snapshot text exactly as a dict through ``canonical_json``.

``audit verify`` compares each audited row with its last event's snapshot text, which the
trail wrote as ``canonical_json`` of ``{column: canonical value}``. ``RowText`` writes that
text from a template without a dict per row; these tests hold it against the plain way
(a dict of every value through its column's canonicaliser, then ``canonical_json``) over
many generated rows of every audited table: the same text, or both refuse the row.
"""

from __future__ import annotations

from datetime import date, datetime
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sqlalchemy import Table

from prepbook.store.audit.chain import canonical_json
from prepbook.store.audit.row_text import RowText, converters
from prepbook.store.models import AUDITED_TABLES

_STORED_TIME = st.datetimes(min_value=datetime(1900, 1, 1)).map(
    lambda moment: moment.isoformat(sep=" ", timespec="microseconds"))
_ANY_VALUE = st.one_of(
    st.none(), st.text(), st.integers(), st.floats(), st.booleans(), st.binary(max_size=8),
    st.datetimes(), st.dates(), _STORED_TIME, st.dates().map(date.isoformat),
    st.sampled_from([0, 1, 2, -1, 1.0, 1.5, "", "0", "\x00", '"', "\\", "\u2028", "é"]),
)


def _plain_text(table: Table, row: tuple[Any, ...]) -> str:
    """The snapshot text the plain way: a dict of canonical values, then canonical_json."""
    current = {name: value if value is None or type(value) is kept else convert(value)
               for (name, convert, kept), value in zip(converters(table), row, strict=True)}
    return canonical_json(current)


def _outcome(write: Any) -> tuple[str, Any]:
    try:
        return "text", write()
    except (ValueError, TypeError):
        return "refused", None


@pytest.mark.parametrize("name", sorted(AUDITED_TABLES))
@settings(max_examples=150, deadline=None)
@given(data=st.data())
def test_row_text_is_the_plain_text_or_both_refuse(name: str, data: st.DataObject) -> None:
    table = AUDITED_TABLES[name]
    writer = RowText(table)
    row = data.draw(st.tuples(*(_ANY_VALUE for _ in writer.names)))
    assert _outcome(lambda: writer.text(writer.values(row))) == \
        _outcome(lambda: _plain_text(table, row))


def test_a_row_as_stored_on_sqlite_gives_its_snapshot_text() -> None:
    """A worked case written out by hand: times as SQLite stores them, a flag as 0/1."""
    writer = RowText(AUDITED_TABLES["replicates"])
    stored: dict[str, Any] = dict.fromkeys(writer.names)
    stored.update(id=7, run_id=3, position=1, version=2, amount_text="0.2041",
                  volume_ml_text="20.05", excluded=0, reason='said "no"\x00',
                  created_at="2024-03-01 09:15:00.000000", created_by="ada")
    assert writer.text(writer.values(tuple(stored.values()))) == (
        '{"amount_text":"0.2041","created_at":"2024-03-01T09:15:00.000000",'
        '"created_by":"ada","excluded":false,"id":7,"position":1,'
        '"reason":"said \\"no\\"\\u0000","run_id":3,"supersedes_id":null,"version":2,'
        '"volume_ml_text":"20.05"}')


@pytest.mark.parametrize(("column", "bad"), [
    ("position", 1.5), ("position", "1"), ("position", b"\x01"), ("position", True),
    ("excluded", 2), ("excluded", "0"), ("excluded", 0.5), ("created_at", "yesterday"),
])
def test_a_value_its_canonicaliser_refuses_is_refused(column: str, bad: Any) -> None:
    """A fraction in a whole-number column, a flag other than 0/1, a time that is no
    time: refused, not coerced."""
    writer = RowText(AUDITED_TABLES["replicates"])
    row: list[Any] = [None] * len(writer.names)
    row[writer.names.index(column)] = bad
    with pytest.raises((ValueError, TypeError)):
        writer.text(writer.values(row))


def test_a_date_of_another_type_takes_its_canonical_form() -> None:
    """A date read as a date object (PostgreSQL) and as text (SQLite) give one text."""
    writer = RowText(AUDITED_TABLES["lots"])
    at = writer.names.index("expires")
    as_text: list[Any] = [None] * len(writer.names)
    as_text[at] = "2030-01-31"
    as_date = list(as_text)
    as_date[at] = date(2030, 1, 31)
    assert writer.text(writer.values(as_text)) == writer.text(writer.values(as_date))
