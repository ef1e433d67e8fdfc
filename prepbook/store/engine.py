"""Where the database is, how to connect to it, and the one-transaction session.

SQLite (the embedded default) runs in WAL mode with a busy timeout and foreign
keys on, and every write transaction starts with ``BEGIN IMMEDIATE`` so two
benches writing at once queue for the lock instead of deadlocking on a
read-then-write upgrade. On PostgreSQL every write transaction first takes one
transaction-scoped advisory lock, to the same effect.

This module does not import Alembic: the schema revision is read with a plain
query and compared with ``prepbook.store.revision.HEAD_REVISION``.
"""

from __future__ import annotations

import gc
import os
import re
import sqlite3
from collections.abc import Iterator
from contextlib import contextmanager, nullcontext, suppress
from pathlib import Path, PureWindowsPath
from typing import Any
from urllib.parse import quote

from sqlalchemy import Engine, create_engine, event, make_url, text
from sqlalchemy.engine import URL
from sqlalchemy.exc import ArgumentError, NoSuchModuleError, SQLAlchemyError
from sqlalchemy.orm import ORMExecuteState, Session, sessionmaker
from sqlalchemy.orm.exc import StaleDataError

from prepbook.errors import DatabaseError, IntegrityError
from prepbook.store.revision import HEAD_REVISION

BUSY_TIMEOUT_S = 30.0
_READ_ONLY = "prepbook_read_only"
_WINDOWS_DRIVE = re.compile(r"^[A-Za-z]:[\\/]")


def resolve_url(target: str) -> str:
    """An SQLAlchemy URL for ``target``: a path becomes ``sqlite:///<absolute path>``.

    Anything containing ``://`` is taken as a URL already. A Windows drive path
    (``C:\\lab\\prep.db``) is recognised on any platform so a URL written on one
    machine means the same file everywhere.
    """
    target = target.strip()
    if not target:
        raise DatabaseError("no database given: pass --db PATH or set PREPBOOK_DB")
    if "://" in target:
        _supported(target)
        return target
    if target == ":memory:":
        return "sqlite://"
    if _WINDOWS_DRIVE.match(target):
        database = PureWindowsPath(target).as_posix()
    else:
        database = str(Path(target).expanduser().resolve())
    # Escape only what make_url would otherwise read as a query string or an escape.
    escaped = database.replace("%", "%25").replace("?", "%3F").replace("#", "%23")
    return f"sqlite:///{escaped}"


# The backends prepbook is built and tested for, as a user writes them.
SUPPORTED = "SQLite (a file path, or sqlite:///PATH) and PostgreSQL (postgresql+psycopg://...)"


def _supported(url: str) -> URL:
    """``url`` parsed, if it names a backend prepbook works with; else one clear line."""
    try:
        parsed = make_url(url)
    except (ArgumentError, ValueError):
        raise DatabaseError(f"{url.split('://')[0]}://... is not a database URL "
                            f"prepbook can read; it works with {SUPPORTED}") from None
    backend = parsed.get_backend_name()
    if backend not in ("sqlite", "postgresql"):
        raise DatabaseError(f"unsupported database {backend!r}: prepbook works with "
                            f"{SUPPORTED}")
    return parsed


def database_error(exc: BaseException) -> DatabaseError | None:
    """One clear line for what went wrong in the database (or the disk under it): a
    missing table, a read-only file or folder, a full disk, a number too large to store,
    a file that cannot be opened. None for anything else (a constraint, a bug), which
    keeps its own type for the caller."""
    orig = getattr(exc, "orig", None) or exc
    message = str(orig).splitlines()[0] if str(orig) else type(orig).__name__
    lowered = message.lower()
    sqlstate = getattr(orig, "sqlstate", None)
    missing = re.search(r'no such table: (\w+)|relation "(\w+)" does not exist', message)
    if missing:
        table = missing.group(1) or missing.group(2)
        return DatabaseError(f"not a prepbook database, or damaged: table {table} is missing")
    if "readonly database" in lowered or "read-only" in lowered or sqlstate == "25006":
        return DatabaseError("the database is read-only (the file or its folder cannot be "
                             "written by this user); nothing was written")
    if "disk is full" in lowered or "no space left" in lowered or sqlstate == "53100":
        return DatabaseError("the disk is full; nothing was written (free some space and "
                             "try again)")
    if isinstance(orig, OverflowError) or "too large" in lowered or sqlstate == "22003":
        return DatabaseError("a number given is too large to store or look up "
                             f"(at most {2**63 - 1})")
    if "unable to open database file" in lowered:
        return DatabaseError("cannot open the database file (its folder is missing, or not "
                             "readable and writable by this user)")
    return None


def sqlite_path(url: str) -> Path | None:
    """The file behind a SQLite URL, or None for a server or an in-memory database."""
    parsed = make_url(url)
    if parsed.get_backend_name() != "sqlite":
        return None
    database = parsed.database
    if not database or database == ":memory:" or database.startswith("file:"):
        return None
    return Path(database)


def _install_sqlite_pragmas(engine: Engine, *, foreign_keys: bool) -> None:
    """The pysqlite recipe: driver autocommit off, SQLAlchemy emits BEGIN itself."""

    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_connection: Any, _record: Any) -> None:
        # Stop pysqlite from issuing its own deferred BEGIN; we emit ours below.
        dbapi_connection.isolation_level = None
        cursor = dbapi_connection.cursor()
        try:
            cursor.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
            # A read-only file stays in its journal mode: it is only read.
            with suppress(sqlite3.OperationalError):
                cursor.execute("PRAGMA journal_mode = WAL")
            cursor.execute(f"PRAGMA foreign_keys = {'ON' if foreign_keys else 'OFF'}")
        finally:
            cursor.close()

    @event.listens_for(engine, "begin")
    def _on_begin(connection: Any) -> None:
        # Writers take the lock up front; read-only sessions keep a deferred BEGIN
        # so the board never waits for a bench.
        if connection.get_execution_options().get(_READ_ONLY):
            connection.exec_driver_sql("BEGIN")
        else:
            connection.exec_driver_sql("BEGIN IMMEDIATE")


def make_engine(url: str, *, foreign_keys: bool = True) -> Engine:
    """An engine configured for prepbook (pragmas and BEGIN IMMEDIATE on SQLite).

    A SQLite file that this user cannot write (or in a folder it cannot write) is
    opened read-only, so reading it (``audit verify``) works and a write is refused
    with one line rather than failing half-way.
    """
    parsed = _supported(url)
    try:
        if parsed.get_backend_name() == "sqlite":
            path = sqlite_path(url)
            if path is not None and path.is_file() and not _writable(path):
                url = f"sqlite:///{read_only_uri(path)}&uri=true"
            engine = create_engine(url, connect_args={"timeout": BUSY_TIMEOUT_S})
            _install_sqlite_pragmas(engine, foreign_keys=foreign_keys)
            return engine
        return create_engine(url, pool_pre_ping=True)
    except (NoSuchModuleError, ImportError) as exc:
        raise DatabaseError(f"the database driver for {parsed.drivername!r} is not installed "
                            f"({exc}); for PostgreSQL: pip install 'prepbook[postgres]'") \
            from None


def _writable(path: Path) -> bool:
    return os.access(path, os.W_OK) and os.access(path.parent, os.W_OK)


def read_only_uri(path: Path) -> str:
    """An SQLite URI opening ``path`` for reading only. In a folder closed to writing
    no -wal or -shm file can be made: a file with no write-ahead log beside it is
    opened as immutable (nobody can change it there either); one with a log is read
    through it, as SQLite can when the log's files are there."""
    wal = path.with_name(path.name + "-wal")
    logged = wal.is_file() and wal.stat().st_size > 0
    immutable = not os.access(path.parent, os.W_OK) and not logged
    flags = "mode=ro&immutable=1" if immutable else "mode=ro"
    return f"file:{quote(str(path.resolve().as_posix()))}?{flags}"


def _refuse_deletes_and_silent_updates(session: Session, _context: Any, _instances: Any) -> None:
    """Keep the record append-only: no deletes, and only the updatable columns change."""
    from sqlalchemy import inspect

    from prepbook.store.models import Base

    if session.deleted:
        names = ", ".join(sorted({type(o).__name__ for o in session.deleted}))
        raise IntegrityError(f"records are never deleted (attempted on: {names})")
    for obj in session.dirty:
        if not isinstance(obj, Base):
            continue
        state = inspect(obj)
        allowed = type(obj).__updatable__
        changed = []
        for attr in state.mapper.column_attrs:
            if attr.key not in allowed and state.attrs[attr.key].history.has_changes():
                changed.append(attr.key)
        for rel in state.mapper.relationships:
            if rel.direction.name != "MANYTOONE":
                continue
            local = {c.key for c in rel.local_columns}
            if not local <= allowed and state.attrs[rel.key].history.has_changes():
                changed.append(rel.key)
        if changed:
            table = obj.__tablename__
            raise IntegrityError(
                f"{table} #{state.identity[0] if state.identity else '?'}: "
                f"{', '.join(sorted(changed))} cannot be changed once recorded; "
                "record a correction instead"
            )


def _refuse_bulk_writes(state: ORMExecuteState) -> None:
    """Bulk UPDATE/DELETE would bypass the audit trail; refuse them."""
    if state.is_delete:
        raise IntegrityError("records are never deleted (bulk DELETE refused)")
    if state.is_update:
        raise IntegrityError("bulk UPDATE bypasses the audit trail; update rows one by one")


@contextmanager
def _no_collection() -> Iterator[None]:
    """Python's cyclic garbage collector paused for the block (a write transaction): a
    full collection in a long-running process takes 100-200 ms, and every other bench
    would wait that long for the writer lock. A write makes little garbage; it is
    collected after the commit, as usual. Left as found when the caller had paused it."""
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


# The advisory lock every PostgreSQL write transaction holds (any constant bigint;
# this one spells "prepbook" in ASCII, truncated to 63 bits).
WRITER_LOCK_KEY = int.from_bytes(b"prepbook", "big") & (2**63 - 1)
# The first key of a batch's own lock (two 32-bit keys: the second is the batch id,
# wrapped into 31 bits; two batches sharing a lock only wait for each other).
BATCH_LOCK_SPACE = int.from_bytes(b"pbBt", "big") & (2**31 - 1)


class Database:
    """An open prepbook database: its URL, engine and transactional sessions."""

    def __init__(self, url: str, *, engine: Engine | None = None) -> None:
        self.url = url
        self.engine = engine if engine is not None else make_engine(url)
        self.path = sqlite_path(url)
        self._write = sessionmaker(bind=self.engine, expire_on_commit=False)
        self._read = sessionmaker(
            bind=self.engine.execution_options(**{_READ_ONLY: True}), expire_on_commit=False
        )
        for factory in (self._write, self._read):
            event.listen(factory, "before_flush", _refuse_deletes_and_silent_updates)
            event.listen(factory, "do_orm_execute", _refuse_bulk_writes)
        self._shared: Session | None = None
        self._failed: BaseException | None = None

    @property
    def is_sqlite(self) -> bool:
        """True for the embedded database (file or memory)."""
        return self.engine.dialect.name == "sqlite"

    @contextmanager
    def session(self, *, write: bool = True, shared: bool = False) -> Iterator[Session]:
        """One transaction: committed when the block ends, rolled back on any exception.

        ``write=False`` starts a deferred transaction on SQLite, for reads that must
        not queue behind a writer; it is still rolled back on error. Inside
        ``one_transaction`` it is that block's transaction instead. ``shared``: the
        writer lock taken in shared mode (``hold_writer_lock``), by a write that changes
        nothing another shared write reads, except under a lock of its own, and the
        trail: a use (its batch's draws, read after ``hold_batch_lock``), a login
        session's idle clock (its own row, which PostgreSQL locks as it is updated).
        """
        if self._shared is not None:
            try:
                yield self._shared
            except BaseException as exc:
                self._failed = exc
                raise
            return
        factory = self._write if write else self._read
        try:
            with (_no_collection() if write else nullcontext()), factory() as session, \
                    session.begin():
                if write:
                    self.hold_writer_lock(session, shared=shared)
                yield session
        except StaleDataError as exc:  # a trigger swallowed a write: one line, not a trace
            raise IntegrityError("the database did not store a change prepbook wrote (a "
                                 "trigger or rule added outside prepbook?); nothing was "
                                 "recorded: run `prepbook audit verify`") from exc
        except (SQLAlchemyError, OverflowError) as exc:
            from prepbook.store.retry import is_collision

            translated = None if is_collision(exc) else database_error(exc)
            if translated is None:
                raise  # a collision: the retry decorator reruns the whole transaction
            raise translated from exc

    @contextmanager
    def one_transaction(self) -> Iterator[None]:
        """Commit several service calls at once: every ``session()`` inside the block
        joins one write transaction.

        Each call is checked, refused and audited exactly as on its own, and sees
        the writes of the calls before it. It saves a commit (and a disk sync) per
        call, for a program writing many calls in a row, such as a benchmark's
        synthetic history. A call that fails inside the block fails the whole block:
        nothing of it is written, even if the caller went on after the error. One
        thread only; blocks do not nest.
        """
        if self._shared is not None:
            raise DatabaseError("one_transaction blocks do not nest")
        with self.session() as session:
            self._shared, self._failed = session, None
            try:
                yield
                if self._failed is not None:
                    raise DatabaseError(
                        f"a call failed inside one transaction ({self._failed}); "
                        "nothing of the block was written") from self._failed
            finally:
                self._shared = None

    def hold_writer_lock(self, session: Session, *, shared: bool = False) -> None:
        """Make ``session``'s transaction the only writer until it ends.

        SQLite: BEGIN IMMEDIATE (set on connect) already does this. PostgreSQL: a
        transaction-scoped advisory lock taken before anything is read, so the next
        code, the duplicate checks and the audit head are all read after the previous
        writer has committed (READ COMMITTED sees each statement's latest commits).
        PostgreSQL releases it itself at commit or rollback, crash included.

        ``shared`` (PostgreSQL; SQLite has one writer at a time whatever is asked): the
        lock is taken in shared mode, by writes that change nothing another shared write
        reads except under a lock of their own (uses, each under its batch's lock; a
        login session's idle clock). They run beside one another, never beside any other
        write, which takes it exclusively and waits for them (PostgreSQL also queues a
        new shared request behind a waiting exclusive one, so those are not starved).
        Two uses of the same batch are kept apart by ``hold_batch_lock``, and the audit
        events of shared writes by the head row, which the first event of a transaction
        locks (FOR UPDATE) until it commits.
        """
        if self.engine.dialect.name == "postgresql":
            take = "pg_advisory_xact_lock_shared" if shared else "pg_advisory_xact_lock"
            session.execute(text(f"SELECT {take}(:key)"), {"key": WRITER_LOCK_KEY})

    def hold_batch_lock(self, session: Session, batch_id: int) -> None:
        """Hold one batch's own lock until the transaction ends (PostgreSQL; a no-op on
        SQLite), for a ``shared`` write of one batch's draws: another of the same batch waits,
        so each reads what is left after the one before it has committed. The two-key
        form of the advisory lock: its own space, apart from the writer lock's key."""
        if self.engine.dialect.name == "postgresql":
            session.execute(text("SELECT pg_advisory_xact_lock(:space, :id)"),
                            {"space": BATCH_LOCK_SPACE, "id": batch_id & 0x7FFFFFFF})

    def dispose(self) -> None:
        """Close pooled connections (lets a test or a backup see a quiet file)."""
        self.engine.dispose()

    def __repr__(self) -> str:
        return f"Database({make_url(self.url).render_as_string(hide_password=True)!r})"


def _init_hint(what: str) -> DatabaseError:
    return DatabaseError(f"{what}: run `prepbook init` to create or upgrade it")


def _sqlite_revision(path: Path) -> str | None:
    """The schema revision of a SQLite file, read without creating or changing anything."""
    try:
        con = sqlite3.connect(read_only_uri(path), uri=True, timeout=BUSY_TIMEOUT_S)
    except sqlite3.Error as exc:
        raise DatabaseError(f"cannot open the database {path}: {exc}") from exc
    try:
        row = con.execute("SELECT version_num FROM alembic_version").fetchone()
    except sqlite3.OperationalError as exc:
        if "no such table" in str(exc):
            return None
        raise DatabaseError(f"cannot read the database {path}: {exc}") from exc
    except sqlite3.DatabaseError as exc:
        raise DatabaseError(f"{path} is not a prepbook database: {exc}") from exc
    finally:
        con.close()
    return row[0] if row else None


def _server_revision(db: Database) -> str | None:
    from sqlalchemy import inspect

    try:
        with db.engine.connect() as conn:
            if not inspect(conn).has_table("alembic_version"):
                return None
            return conn.execute(text("SELECT version_num FROM alembic_version")).scalar()
    except SQLAlchemyError as exc:
        reason = str(exc).splitlines()[0]
        raise DatabaseError(f"cannot connect to the database: {reason}") from exc


def open_database(target: str, *, must_exist: bool = True) -> Database:
    """Open the database at ``target``; with ``must_exist`` it must be at the schema head.

    A missing SQLite file is reported, never created as a side effect; so is a file
    whose schema is older (or newer) than this prepbook.
    """
    url = resolve_url(target)
    path = sqlite_path(url)
    if not must_exist:
        return Database(url)
    if path is not None:
        if not path.is_file():
            raise _init_hint(f"no prepbook database at {path}")
        revision = _sqlite_revision(path)
        db = None
    else:
        db = Database(url)
        revision = _server_revision(db)
    if revision != HEAD_REVISION:
        if db is not None:
            db.dispose()
        where = str(path) if path is not None else "the database"
        if revision is None:
            raise _init_hint(f"{where} has no prepbook schema")
        raise _init_hint(
            f"{where} is at schema revision {revision}, this prepbook needs {HEAD_REVISION}"
        )
    return db if db is not None else Database(url)
