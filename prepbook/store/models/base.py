"""The declarative base of every prepbook table, its naming convention and the
enumerations the tables' CHECK constraints hold."""

from __future__ import annotations

from datetime import date, datetime
from typing import Any, ClassVar

from sqlalchemy import Boolean, Date, DateTime, Float, Integer, MetaData, String, Table
from sqlalchemy.orm import DeclarativeBase

# Stable constraint names, so Alembic batch mode on SQLite and PostgreSQL agree.
NAMING_CONVENTION: dict[str, str] = {
    "ix": "ix_%(table_name)s_%(column_0_N_name)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}

ROLES = ("technician", "reviewer", "admin")
UNITS = ("N", "M")
INSTRUMENT_KINDS = ("balance", "burette", "flask", "pipette", "thermometer", "meter")
BATCH_METHODS = ("solid", "concentrate", "dilution")
RUN_METHODS = ("direct", "secondary")
RUN_STATUSES = ("awaiting-review", "accepted", "rejected", "revoked")
DECISIONS = ("accept", "reject", "revoke")


def _one_of(column: str, values: tuple[str, ...]) -> str:
    """SQL for a CHECK that keeps an enumerated text column inside its allowed values."""
    quoted = ", ".join(f"'{v}'" for v in values)
    return f"{column} IN ({quoted})"


class Base(DeclarativeBase):
    """Declarative root carrying the shared metadata and its naming convention."""

    metadata = MetaData(naming_convention=NAMING_CONVENTION)
    type_annotation_map: ClassVar[dict[Any, Any]] = {
        str: String(),
        int: Integer(),
        float: Float(),
        bool: Boolean(),
        datetime: DateTime(),
        date: Date(),
    }

    # Columns that may change after insert (each change with an audit event).
    __updatable__: ClassVar[frozenset[str]] = frozenset()



def table_of(model: type[Base]) -> Table:
    """A model's table (SQLAlchemy types ``__table__`` as any FROM clause; a declarative
    model's is always a ``Table``)."""
    table = model.__table__
    assert isinstance(table, Table)
    return table
