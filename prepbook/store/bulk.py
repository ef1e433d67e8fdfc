"""Many service calls in one transaction, for generating a synthetic history quickly.

``GroupedDatabase`` is a ``Database`` whose ``session()`` joins the transaction a
``group()`` block has opened, so a generator can push thousands of ordinary
service calls (each with its own audit events, checks and refusals) through one
commit instead of one commit and one fsync each. It is for building a fresh
synthetic database only (``prepbook demo --years``): its connections also run
with ``PRAGMA synchronous = OFF``, which trades crash safety of the file being
built for speed. Nothing a bench uses opens a database this way.

Inside a group, a new row written through ``lab.common.write`` gets its id from
``BulkWriter`` (the next id of its table; the group holds the database's write
lock from its first statement to its commit, so nobody else can take one) and is
not handed to the ORM's unit of work: its column values are kept in a buffer,
and the row object becomes a stored row (in the session when its model lets
columns change). Its audit event is buffered the same way, and the chain's head is
kept in memory. The rows are written out (one multi-row INSERT per table, in
foreign-key order, then any buffered UPDATEs) just before the next statement of any
kind reaches the database (an engine ``before_cursor_execute`` hook: a query, a lazy
load, the unit of work's own statements); the events and the head go with them
whenever that statement names an audit table, once 20,000 events wait, and at the
end of the group. So no statement ever sees the database without a row or event
already written. Every row still gets its own audit event, computed
from the same values as outside a group.

A service that raises inside a group spoils the whole group: the block rolls
back everything written since it began, even if the caller caught the error,
so a half-applied service call can never be committed.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from functools import cache
from typing import Any

from sqlalchemy import Table, bindparam, event, func, insert, inspect, select, update
from sqlalchemy.engine import Connection
from sqlalchemy.orm import Session, make_transient_to_detached
from sqlalchemy.orm.attributes import set_committed_value

from prepbook.errors import DatabaseError, IntegrityError
from prepbook.store.engine import Database, make_engine, resolve_url, sqlite_path

IDS_KEY = "prepbook_bulk_ids"
_EVENTS_BACKLOG = 20_000  # audit events held at most before they are written anyway


def writer_of(session: Session) -> BulkWriter | None:
    """The group's writer when ``session`` is a group's, else None."""
    return session.info.get(IDS_KEY)  # type: ignore[no-any-return]


class BulkWriter:
    """New rows and audit events of a group, buffered until the next statement."""

    def __init__(self, session: Session) -> None:
        self._session = session
        self._next: dict[str, int] = {}
        self._rows: dict[Table, list[dict[str, Any]]] = {}
        self._updates: list[tuple[Table, int, dict[str, Any]]] = []
        self._events: list[dict[str, Any]] = []
        self._head: tuple[int, str | None] | None = None
        self._head_written: tuple[int, str | None] | None = None
        self._columns: dict[type, tuple[tuple[str, str], ...]] = {}
        self._compiled: dict[tuple[Any, ...], tuple[str, tuple[str, ...], tuple[Any, ...]]] = {}
        self._busy = False

    # -- ids -----------------------------------------------------------------------
    def _next_id(self, table: Table) -> int:
        last = self._next.get(table.name)
        if last is None:
            last = self._session.execute(select(func.max(table.c.id))).scalar() or 0
        self._next[table.name] = last + 1
        return last + 1

    def _keys(self, row: Any) -> tuple[tuple[str, str], ...]:
        """(attribute, column key) of every column of the row's table."""
        cls = type(row)
        keys = self._columns.get(cls)
        if keys is None:
            mapper = inspect(cls)
            table = mapper.local_table
            keys = tuple((prop.key, column.key) for prop in mapper.column_attrs
                         for column in prop.columns if column.table is table)
            self._columns[cls] = keys
        return keys

    # -- rows ----------------------------------------------------------------------
    def add(self, row: Any) -> None:
        """A new row: its id and scalar defaults (what a flush would give), buffered."""
        table = row.__table__
        if getattr(row, "id", None) is None:
            row.id = self._next_id(table)
        for column in table.columns:
            default = column.default
            if default is not None and default.is_scalar and getattr(row, column.key) is None:
                setattr(row, column.key, default.arg)
        values = {}
        state = row.__dict__
        for attr, key in self._keys(row):
            if attr not in state:
                setattr(row, attr, None)  # loaded as NULL, not expired (no reload)
            values[key] = state[attr]
        self._rows.setdefault(table, []).append(values)
        # The object becomes a stored row. One whose model lets columns change joins
        # the session (its changes come back through ``change``); one that can never
        # change (a replicate, a use, a review: most rows) stays outside it, detached,
        # so the session does not carry hundreds of thousands of rows it will never
        # write, and a later query reads it from the database like any other row.
        make_transient_to_detached(row)
        if type(row).__updatable__:
            self._session.add(row)

    def change(self, row: Any) -> None:
        """A stored row changed in place: its UPDATE, buffered after the inserts.

        Only the columns its model lets change may differ (as outside a group, where
        the session's flush guard refuses any other change); the object's state is
        then marked as written, so the unit of work has nothing left to do for it.
        """
        state = inspect(row)
        changed = {attr: key for attr, key in self._keys(row)
                   if state.attrs[attr].history.has_changes()}
        if not changed:
            return
        refused = sorted(set(changed) - type(row).__updatable__)
        if refused:
            raise IntegrityError(
                f"{row.__table__.name} #{row.id}: {', '.join(refused)} cannot be changed "
                "once recorded; record a correction instead")
        values = {key: state.dict[attr] for attr, key in changed.items()}
        self._updates.append((row.__table__, row.id, values))
        for attr in changed:
            set_committed_value(row, attr, state.dict[attr])
        # Also drop the "modified" flag, as a flush would, so the unit of work does not
        # visit the row again (InstanceState._commit_all is what SQLAlchemy's own
        # flush calls; without it the row is only visited for nothing).
        commit_all = getattr(state, "_commit_all", None)
        if commit_all is not None:
            commit_all(state.dict, self._session.identity_map)

    # -- the audit chain -------------------------------------------------------------
    def head(self) -> tuple[int, str | None]:
        """(seq, hash) of the chain's last event, written or buffered."""
        if self._head is None:
            from prepbook.store.models import AuditHead

            self.flush(self._session.connection())
            found = self._session.execute(
                select(AuditHead.seq, AuditHead.hash).where(AuditHead.id == 1)).first()
            if found is None:
                raise DatabaseError("the audit head row is missing: run `prepbook audit verify`")
            self._head = self._head_written = (found[0], found[1])
        return self._head

    def add_event(self, values: dict[str, Any]) -> None:
        self._events.append(values)
        self._head = (values["seq"], values["hash"])

    # -- writing out -----------------------------------------------------------------
    @property
    def pending(self) -> bool:
        return bool(self._rows or self._updates or self._events
                    or self._head != self._head_written)

    def before(self, connection: Connection, statement: str) -> None:
        """Write what ``statement`` may see: the rows always; the trail's events and
        head when it names an audit table (no service reads them inside a group), or
        when many events are waiting."""
        trail = "audit_" in statement or len(self._events) >= _EVENTS_BACKLOG
        if self._rows or self._updates or (trail and self.pending):
            self.flush(connection, trail=trail)

    def flush(self, connection: Connection, *, trail: bool = True) -> None:
        """Write every buffered row (and with ``trail`` every event and the head), in
        foreign-key order.

        The statements are SQLAlchemy's own (compiled once per table and set of
        columns, values through each column type's bind processor), sent with the
        driver's ``executemany`` on the group's connection and transaction.
        """
        if self._busy or not self.pending:
            return
        from prepbook.store.models import AuditEvent, AuditHead

        self._busy = True
        try:
            cursor = connection.connection.driver_connection.cursor()  # type: ignore[union-attr]
            try:
                rows, self._rows = self._rows, {}
                for table in _insert_order():
                    batch = rows.pop(table, None)
                    if batch:
                        self._send(cursor, connection, table, batch)
                if rows:  # pragma: no cover - every mapped table is in the metadata
                    raise DatabaseError(
                        f"rows of unknown tables: {sorted(t.name for t in rows)}")
                updates, self._updates = self._updates, []
                for table, row_id, values in updates:
                    self._send(cursor, connection, table, [values], row_id=row_id)
                if not trail:
                    return
                events, self._events = self._events, []
                if events:
                    self._send(cursor, connection, AuditEvent.__table__, events)
                if self._head != self._head_written and self._head is not None:
                    seq, hash_ = self._head
                    self._send(cursor, connection, AuditHead.__table__,
                               [{"seq": seq, "hash": hash_}], row_id=1)
                    self._head_written = self._head
            finally:
                cursor.close()
        finally:
            self._busy = False

    def _send(self, cursor: Any, connection: Connection, table: Any,
              params: list[dict[str, Any]], row_id: int | None = None) -> None:
        """INSERT ``params`` into ``table``, or with ``row_id`` UPDATE that one row."""
        names = tuple(params[0])
        key = (table.name, row_id is None, names)
        compiled = self._compiled.get(key)
        if compiled is None:
            stmt = insert(table) if row_id is None else \
                update(table).where(table.c.id == bindparam("row_id_"))
            text = stmt.values({n: bindparam(n, type_=table.c[n].type) for n in names}) \
                .compile(dialect=connection.dialect)
            order = tuple(text.positiontup or ())
            processors = tuple(
                text.binds[n].type.dialect_impl(connection.dialect)
                .bind_processor(connection.dialect) for n in order)
            compiled = self._compiled[key] = (str(text), order, processors)
        sql, order, processors = compiled
        if row_id is not None:
            params = [p | {"row_id_": row_id} for p in params]
        rows = [tuple(v if proc is None or v is None else proc(v)
                      for v, proc in zip([p[n] for n in order], processors, strict=True))
                for p in params]
        cursor.executemany(sql, rows)
        if row_id is not None and cursor.rowcount != 1:  # pragma: no cover - read or written
            raise DatabaseError(f"{table.name} #{row_id} is missing")


@cache
def _insert_order() -> tuple[Table, ...]:
    """Every table, parents before children (the order inserts must go in)."""
    from prepbook.store.models import Base

    return tuple(Base.metadata.sorted_tables)


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

        @event.listens_for(engine, "before_cursor_execute")
        def _write_buffer_first(conn: Connection, _cursor: Any, statement: str,
                                *_args: Any) -> None:
            # Whatever a statement reads or changes, the buffered rows are there first.
            writer = self._writer
            if writer is not None:
                writer.before(conn, statement)

        super().__init__(url, engine=engine)
        self._open: Session | None = None
        self._writer: BulkWriter | None = None
        self._spoiled: BaseException | None = None

    @contextmanager
    def group(self) -> Iterator[None]:
        """One transaction for every service call made inside the block."""
        if self._open is not None:
            raise DatabaseError("groups do not nest")
        with self._write() as session, session.begin():
            self.hold_writer_lock(session)
            self._open, self._spoiled = session, None
            self._writer = session.info[IDS_KEY] = BulkWriter(session)
            try:
                yield
                if self._spoiled is not None:
                    raise DatabaseError(
                        f"a service call failed inside a group ({self._spoiled}); "
                        "everything written in the group was rolled back"
                    ) from self._spoiled
                session.flush()
                self._writer.flush(session.connection())
            finally:
                self._open = self._writer = None
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
