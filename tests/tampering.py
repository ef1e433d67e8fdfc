"""The attacker with write access to the database: drop the store's guards first.

The guard triggers (``prepbook.store.audit.guards``) refuse UPDATE and DELETE on the
trail and the audited tables; whoever owns the SQLite file (or the tables on
PostgreSQL) can drop them, and a tamper test does just that before it edits. ``audit
verify`` then names the missing triggers beside what was edited, unless the attacker
put them back (``guarded_again``).
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from pathlib import Path

from sqlalchemy import create_engine, text
from sqlalchemy.pool import NullPool

from prepbook.store.audit import guards


def _run(db: Path | str, statements: list[str]) -> None:
    url = str(db) if "://" in str(db) else f"sqlite:///{db}"
    engine = create_engine(url, poolclass=NullPool)
    try:
        with engine.begin() as conn:
            for statement in statements:
                conn.execute(text(statement))
    finally:
        engine.dispose()


def _dialect(db: Path | str) -> str:
    return "postgresql" if "://" in str(db) else "sqlite"


def drop_guards(db: Path | str, tables: Sequence[str] | None = None) -> None:
    """Drop the guard triggers of ``tables`` (default: all), as someone holding the
    database file can."""
    names = tables if tables is not None else [g.table for g in guards.guarded_tables()]
    _run(db, guards.drop_statements(_dialect(db), names))


def missing_guards(db: Path | str, *tables: str) -> list[str]:
    """What verify says of the dropped guards of ``tables``, in its order."""
    triggers = (guards.sqlite_triggers if _dialect(db) == "sqlite"
                else guards.postgresql_triggers)
    named = sorted((name, g.table) for g in guards.guarded_tables() if g.table in tables
                   for name in triggers(g))
    return [f"trigger {name} on {table} {MISSING_GUARD} (dropped outside prepbook)"
            for name, table in named]


def restore_guards(db: Path | str) -> None:
    """Put the guard triggers back exactly as prepbook makes them."""
    _run(db, guards.create_statements(_dialect(db), guards.guarded_tables()))


@contextmanager
def guarded_again(db: Path | str) -> Iterator[None]:
    """Guards dropped for the block and put back after it: the careful attacker."""
    drop_guards(db)
    try:
        yield
    finally:
        restore_guards(db)


MISSING_GUARD = "is missing: the table is not guarded against changes"


def tamper(db: Path | str, sql: str, *params: object) -> None:
    """One change behind prepbook's back by the careful attacker: the guards dropped, the
    statement run (``tests.conftest.raw_sql``), the guards put back."""
    from tests.conftest import raw_sql

    with guarded_again(db):
        raw_sql(db, sql, *params)
