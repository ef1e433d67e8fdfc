"""Many service calls in one transaction, for generating a synthetic history quickly.

``GroupedDatabase`` is a ``Database`` whose ``session()`` joins the transaction a
``group()`` block has opened, so a generator can push thousands of ordinary
service calls (each with its own audit events, checks and refusals) through one
commit instead of one commit and one fsync each. It is for building a fresh
synthetic database only (``prepbook demo --years``): its connections also run
with ``PRAGMA synchronous = OFF``, which trades crash safety of the file being
built for speed. Nothing a bench uses opens a database this way.

Inside a group, a row written through ``lab.common.write`` gets its id from
``BulkIds`` (the next id of its table; the group holds the database's write lock
from its first statement to its commit, so nobody else can take one) instead of
from a flush, so the unit of work sends many inserts in one go at the next query
or at the commit. Every row still gets its own audit event, computed from the
same values.

A service that raises inside a group spoils the whole group: the block rolls
back everything written since it began, even if the caller caught the error,
so a half-applied service call can never be committed.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

from sqlalchemy import event, func, select
from sqlalchemy.orm import Session

from prepbook.errors import DatabaseError
from prepbook.store.engine import Database, make_engine, resolve_url, sqlite_path

IDS_KEY = "prepbook_bulk_ids"


class BulkIds:
    """Primary keys handed out in a group, one counter per table."""

    def __init__(self, session: Session) -> None:
        self._session = session
        self._next: dict[str, int] = {}

    def assign(self, row: Any) -> None:
        """Give a new row its id and its columns' scalar defaults (what a flush would)."""
        table = row.__table__
        last = self._next.get(table.name)
        if last is None:
            last = self._session.execute(select(func.max(table.c.id))).scalar() or 0
        self._next[table.name] = last + 1
        row.id = last + 1
        for column in table.columns:
            default = column.default
            if default is not None and default.is_scalar and getattr(row, column.key) is None:
                setattr(row, column.key, default.arg)


class GroupedDatabase(Database):
    """A Database whose sessions share the transaction of the enclosing ``group()``."""

    def __init__(self, target: str) -> None:
        url = resolve_url(target)
        if sqlite_path(url) is None:
            raise DatabaseError("a grouped (bulk) database is for a new SQLite file only")
        engine = make_engine(url)

        @event.listens_for(engine, "connect")
        def _fast(dbapi_connection: Any, _record: Any) -> None:
            cursor = dbapi_connection.cursor()
            try:
                # A fresh file being generated: if the machine dies it is simply rebuilt.
                cursor.execute("PRAGMA synchronous = OFF")
                cursor.execute("PRAGMA cache_size = -65536")  # 64 MiB page cache
                # Lets ``code LIKE 'prefix-%'`` (the next free code) use the unique index
                # on code instead of reading every code; codes are case-sensitive anyway.
                cursor.execute("PRAGMA case_sensitive_like = ON")
            finally:
                cursor.close()

        super().__init__(url, engine=engine)
        self._open: Session | None = None
        self._spoiled: BaseException | None = None

    @contextmanager
    def group(self) -> Iterator[None]:
        """One transaction for every service call made inside the block."""
        if self._open is not None:
            raise DatabaseError("groups do not nest")
        with self._write() as session, session.begin():
            self.hold_writer_lock(session)
            self._open, self._spoiled = session, None
            session.info[IDS_KEY] = BulkIds(session)
            try:
                yield
                if self._spoiled is not None:
                    raise DatabaseError(
                        f"a service call failed inside a group ({self._spoiled}); "
                        "everything written in the group was rolled back"
                    ) from self._spoiled
            finally:
                self._open = None
                session.info.pop(IDS_KEY, None)

    @contextmanager
    def session(self, *, write: bool = True) -> Iterator[Session]:
        if self._open is None:
            with super().session(write=write) as session:
                yield session
            return
        try:
            yield self._open
        except BaseException as exc:
            self._spoiled = exc
            raise
