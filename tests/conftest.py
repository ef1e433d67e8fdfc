"""Shared fixtures: a CLI runner at a fixed width on a scratch database.

Tests never touch the real home directory or a real lab database: PREPBOOK_DB
and PREPBOOK_USER are cleared and HOME points into tmp_path.

The database behind the fixtures is a SQLite file under tmp_path, or, when
PREPBOOK_TEST_PG_URL names a PostgreSQL server whose user may create databases
(``postgresql+psycopg://USER@127.0.0.1:PORT/postgres``, password in PGPASSWORD),
a database of its own on that server for each test, created for the test and
dropped after it. Tests that are about SQLite itself (the file, its pragmas,
raw sqlite3 access) are skipped on PostgreSQL, each with its reason: request
``db_file`` (the SQLite file) or mark the test ``@pytest.mark.sqlite_only(reason=...)``.
"""

from __future__ import annotations

import json
import os
import sqlite3
import sys
import uuid
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import msgspec
import pytest
from typer.testing import CliRunner, Result

PG_URL_ENV = "PREPBOOK_TEST_PG_URL"

# Tests of SQLite itself that take only the `db` fixture (so the `db_file` rule below
# cannot see them); anything new should use the sqlite_only marker instead.
SQLITE_ONLY: dict[str, str] = {
    "tests/store/test_engine.py::test_sqlite_runs_in_wal_with_foreign_keys_and_busy_timeout":
        "checks SQLite pragmas (WAL journal, foreign_keys, busy_timeout)",
}


def pg_server_url() -> str | None:
    """The PostgreSQL server the suite runs against, or None for SQLite."""
    return os.environ.get(PG_URL_ENV) or None


def on_postgres() -> bool:
    return pg_server_url() is not None


def pytest_configure(config: pytest.Config) -> None:
    config.addinivalue_line(
        "markers",
        "sqlite_only(reason): about SQLite itself; skipped when the suite runs on PostgreSQL",
    )


def pytest_report_header(config: pytest.Config) -> str:
    url = pg_server_url()
    if url is None:
        return "prepbook database backend: SQLite (a file under tmp_path for each test)"
    from sqlalchemy.engine import make_url

    shown = make_url(url).render_as_string(hide_password=True)
    return f"prepbook database backend: PostgreSQL at {shown} (a fresh database for each test)"


def pytest_terminal_summary(terminalreporter: Any) -> None:
    # Also at -q, where the header is not shown: which database this run used.
    terminalreporter.write_line(pytest_report_header(terminalreporter.config))


def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    if not on_postgres():
        return
    for item in items:
        marker = item.get_closest_marker("sqlite_only")
        reason = None
        if marker is not None:
            reason = marker.kwargs.get("reason") or (marker.args[0] if marker.args else None)
            reason = reason or "about SQLite itself"
        else:
            reason = SQLITE_ONLY.get(item.nodeid.split("[")[0])
        if reason is not None:
            item.add_marker(pytest.mark.skip(reason=f"SQLite-specific: {reason}"))


_SERVER_CONNECTIONS: list[Any] = []


@pytest.fixture(scope="session", autouse=True)
def _hold_server_connections() -> Iterator[None]:
    """On PostgreSQL, keep every server connection the tests open until it is closed here.

    A command closes its database when it ends, but a test that calls the services
    directly may open a Database and leave it to the garbage collector; psycopg then
    warns that an open connection was collected, which the suite treats as an error.
    Held here, the connections are closed explicitly: those a test opened when it
    ends, those a module or session fixture opened when the session ends. SQLite
    connections are left alone (a held one would keep its WAL from being checkpointed).
    """
    if not on_postgres():
        yield
        return
    from sqlalchemy import event
    from sqlalchemy.pool import Pool

    def keep(dbapi_connection: Any, _record: Any) -> None:
        if type(dbapi_connection).__module__.startswith("psycopg"):
            _SERVER_CONNECTIONS.append(dbapi_connection)

    event.listen(Pool, "connect", keep)
    try:
        yield
    finally:
        event.remove(Pool, "connect", keep)
        for connection in _SERVER_CONNECTIONS:
            connection.close()
        _SERVER_CONNECTIONS.clear()


@pytest.fixture(autouse=True)
def _close_server_connections(_hold_server_connections: None) -> Iterator[None]:
    start = len(_SERVER_CONNECTIONS)
    yield
    for connection in _SERVER_CONNECTIONS[start:]:
        connection.close()
    del _SERVER_CONNECTIONS[start:]


@contextmanager
def scratch_pg_database(server_url: str | None = None) -> Iterator[str]:
    """A new, empty PostgreSQL database on the test server; its URL; dropped afterwards.

    Only the database created here is ever dropped (its name is made here).
    """
    from sqlalchemy import create_engine, text
    from sqlalchemy.engine import make_url
    from sqlalchemy.pool import NullPool

    server = server_url or pg_server_url()
    assert server is not None, f"{PG_URL_ENV} is not set"
    name = f"prepbook_test_{uuid.uuid4().hex[:16]}"
    admin = create_engine(server, isolation_level="AUTOCOMMIT", poolclass=NullPool)
    try:
        with admin.connect() as conn:
            conn.execute(text(f'CREATE DATABASE "{name}"'))
        try:
            yield make_url(server).set(database=name).render_as_string(hide_password=False)
        finally:
            with admin.connect() as conn:
                conn.execute(
                    text("SELECT pg_terminate_backend(pid) FROM pg_stat_activity "
                         "WHERE datname = :n AND pid <> pg_backend_pid()"),
                    {"n": name},
                )
                conn.execute(text(f'DROP DATABASE IF EXISTS "{name}"'))
    finally:
        admin.dispose()


@pytest.fixture
def db_target(tmp_path: Path) -> Iterator[Path | str]:
    """Where a test's database lives: a SQLite path under tmp_path, or a scratch
    PostgreSQL URL when the suite runs on PostgreSQL. Nothing is created yet."""
    if on_postgres():
        with scratch_pg_database() as url:
            yield url
    else:
        yield tmp_path / "lab.db"


@pytest.fixture(scope="session", autouse=True)
def _session_files_of_the_suite(tmp_path_factory: pytest.TempPathFactory) -> Iterator[None]:
    """Login session files of fixtures built once for a module or the session go under
    a folder of the suite's own, never the real user's state folder (each test then gets
    a folder of its own: ``_isolated_env``)."""
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("PREPBOOK_SESSION_DIR", str(tmp_path_factory.mktemp("sessions")))
        yield


# (database identity, user name) -> the passphrase a test gave when it added that user.
PASSPHRASES: dict[tuple[str, str], str] = {}


def remember_passphrase(db: Any, name: str, passphrase: str) -> None:
    """Note ``name``'s passphrase on ``db`` (a Database or a --db target), so that
    ``cli(..., user=name)`` can log them in."""
    PASSPHRASES[(_identity(db), name)] = passphrase


def _identity(db: Any) -> str:
    from prepbook.lab.sessions import database_identity
    from prepbook.store.engine import Database, resolve_url

    return database_identity(db.url if isinstance(db, Database) else resolve_url(str(db)))


def passphrase_of(db: Any, name: str) -> str:
    """The passphrase a test gave ``name`` on ``db``, else the latest given to that name
    on any database (a copy of a module's demo lab), else ``NAME-passphrase``."""
    exact = PASSPHRASES.get((_identity(db), name))
    if exact is not None:
        return exact
    others = [p for (_, who), p in PASSPHRASES.items() if who == name]
    # else the suite's convention for invented users, which the committed old lab in
    # tests/fixtures was made with (make_old_lab.py)
    return others[-1] if others else f"{name}-passphrase"


def log_in(db: Any, name: str, passphrase: str) -> None:
    """A real login through the service, its token kept in this test's session folder,
    exactly as `prepbook login` keeps it."""
    from prepbook.cli import session_files
    from prepbook.lab import sessions
    from prepbook.store.engine import Database, open_database

    database = db if isinstance(db, Database) else open_database(str(db))
    os_login, host = sessions.os_account()
    opened = sessions.login(database, name=name, passphrase=passphrase, os_login=os_login,
                            host=host)
    session_files.save(database, name, opened.token)


@pytest.fixture(scope="session", autouse=True)
def _users_log_in_when_added() -> Iterator[None]:
    """Every user a test adds (through the CLI or the service) is remembered with the
    passphrase the test gave, and logged in at once, so that ``cli(..., user=NAME)``
    finds the live session a write needs (row counts taken after the set-up include
    it)."""
    from prepbook.lab import people

    real = people.add_user

    def add_and_log_in(db: Any, *args: Any, **kw: Any) -> Any:
        added = real(db, *args, **kw)
        remember_passphrase(db, kw["name"], kw["passphrase"])
        if AUTO_LOGIN:
            log_in(db, kw["name"], kw["passphrase"])
        return added

    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(people, "add_user", add_and_log_in)
        yield


AUTO_LOGIN = True


@pytest.fixture
def no_auto_login(monkeypatch: pytest.MonkeyPatch) -> None:
    """Users this test adds are not logged in for it (tests of sessions themselves)."""
    monkeypatch.setattr(sys.modules[__name__], "AUTO_LOGIN", False)


@pytest.fixture(autouse=True)
def _isolated_env(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("PREPBOOK_SESSION_DIR", str(tmp_path / "sessions"))
    # The invented users of the suite have passphrases such as "ben-passphrase", older
    # than the rule that a passphrase must not contain the name; the suite's default
    # lifts that rule (tests of the policy itself restore it: ``strict_passphrases``).
    from prepbook.lab import settings

    monkeypatch.setitem(settings.KNOWN, "passphrase_name_rule", msgspec.structs.replace(
        settings.KNOWN["passphrase_name_rule"], default="off"))
    monkeypatch.delenv("PREPBOOK_DB", raising=False)
    monkeypatch.delenv("PREPBOOK_USER", raising=False)
    monkeypatch.delenv("PREPBOOK_AUDIT_KEY_FILE", raising=False)
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    # The configuration file: a path under tmp_path, never the user's own (on every OS).
    monkeypatch.setenv("PREPBOOK_CONFIG", str(tmp_path / "home" / "prepbook-config.toml"))
    for name in ("PREPBOOK_TIMEZONE", "PREPBOOK_WITNESS_FOLDER", "PREPBOOK_SIGNING_KEY_FILE",
                 "PREPBOOK_WITNESS_DATABASE", "PREPBOOK_AUDIT_KEYRING",
                 "PREPBOOK_DISPLAY_WIDTH",
                 "PREPBOOK_DISPLAY_COLOR", "XDG_CONFIG_HOME"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("COLUMNS", "160")
    monkeypatch.setenv("NO_COLOR", "1")


class Cli:
    """Runs prepbook in-process through Typer's CliRunner."""

    def __init__(self, db: Path | str) -> None:
        self.db = db
        self.runner = CliRunner()

    def __call__(self, *args: str, user: str | None = None, input: str | None = None,
                 db: Path | str | None = None) -> Result:
        from prepbook.cli.app import app

        target = db or self.db
        full = ["--db", str(target)]
        if user:
            self._live(target, user)
            full += ["--user", user]
        full += list(args)
        result = self.runner.invoke(app, full, input=input)
        if result.exception is not None and not isinstance(result.exception, SystemExit):
            raise AssertionError(f"prepbook {' '.join(args)} raised "
                                 f"{result.exception!r}\n{result.stdout}\n{result.stderr}") \
                from result.exception
        return result

    def _live(self, target: Path | str, user: str) -> None:
        """Log ``user`` in (with the passphrase the test gave when adding them) unless
        they have a live session here; a user not added yet, or one who cannot log in,
        is left to the command to refuse."""
        from prepbook.cli import session_files
        from prepbook.errors import PrepbookError
        from prepbook.lab import sessions
        from prepbook.store.engine import open_database

        passphrase = passphrase_of(target, user)
        if not AUTO_LOGIN:
            return
        try:
            db = open_database(str(target))
        except PrepbookError:
            return
        try:
            token = session_files.held(db).get(user)
            info = sessions.describe(db, name=user, token=token) if token else None
            if info is None or not info.live:
                log_in(db, user, passphrase)
        except PrepbookError:
            return
        finally:
            db.dispose()

    def ok(self, *args: str, **kw: Any) -> Result:
        result = self(*args, **kw)
        assert result.exit_code == 0, (args, result.stdout, result.stderr)
        return result

    def json(self, *args: str, **kw: Any) -> Any:
        return json.loads(self.ok(*args, "--json", **kw).stdout)

    def refused(self, *args: str, **kw: Any) -> Result:
        result = self(*args, **kw)
        assert result.exit_code == 1, (args, result.exit_code, result.stdout, result.stderr)
        assert result.stdout == "", result.stdout
        lines = result.stderr.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("prepbook: "), result.stderr
        return result


@pytest.fixture
def cli(db_target: Path | str) -> Cli:
    return Cli(db_target)


def is_url(db: Path | str) -> bool:
    return isinstance(db, str) and "://" in db


# Signing in is not the write a test watches: ``row_counts`` leaves it out by default
# (``cli(..., user=NAME)`` may log NAME in just before the command it runs).
SIGN_IN_TABLE = "login_sessions"
SIGN_IN_ACTION = "user.login"


def row_counts(db: Path | str, *, sign_ins: bool = False) -> dict[str, int]:
    """Rows in every table, read with plain sqlite3 or SQLAlchemy Core (not through
    prepbook); without ``sign_ins``, login sessions and their audit events are not
    counted."""
    counts = _server_row_counts(str(db), sign_ins) if is_url(db) else \
        _file_row_counts(db, sign_ins)
    if not sign_ins:
        counts.pop(SIGN_IN_TABLE, None)
    return counts


def _file_row_counts(db: Path | str, sign_ins: bool) -> dict[str, int]:
    con = sqlite3.connect(db)
    try:
        names = [r[0] for r in con.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%'")]
        counts = {n: con.execute(f'SELECT COUNT(*) FROM "{n}"').fetchone()[0] for n in names}
        if not sign_ins and "audit_events" in counts:
            counts["audit_events"] = con.execute(
                "SELECT COUNT(*) FROM audit_events WHERE action <> ?",
                (SIGN_IN_ACTION,)).fetchone()[0]
        return counts
    finally:
        con.close()


def raw_sql(db: Path | str, sql: str, *params: Any) -> None:
    """Change the database behind prepbook's back (a tamper test), on either backend.

    ``?`` placeholders, as in sqlite3; on PostgreSQL the statement runs through
    SQLAlchemy Core with the same values. Committed at once.
    """
    if not is_url(db):
        con = sqlite3.connect(db)
        try:
            con.execute(sql, params)
            con.commit()
        finally:
            con.close()
        return
    from sqlalchemy import create_engine, text
    from sqlalchemy.pool import NullPool

    parts = sql.split("?")
    named = parts[0] + "".join(f":p{i}{rest}" for i, rest in enumerate(parts[1:]))
    engine = create_engine(str(db), poolclass=NullPool)
    try:
        with engine.begin() as conn:
            conn.execute(text(named), {f"p{i}": v for i, v in enumerate(params)})
    finally:
        engine.dispose()


def _server_row_counts(url: str, sign_ins: bool) -> dict[str, int]:
    from sqlalchemy import column, create_engine, func, inspect, select, table
    from sqlalchemy.pool import NullPool

    engine = create_engine(url, poolclass=NullPool)
    try:
        with engine.connect() as conn:
            names = inspect(conn).get_table_names()
            counts = {n: conn.execute(select(func.count()).select_from(table(n))).scalar_one()
                      for n in names}
            if not sign_ins and "audit_events" in counts:
                counts["audit_events"] = conn.execute(
                    select(func.count()).select_from(table("audit_events"))
                    .where(column("action") != SIGN_IN_ACTION)).scalar_one()
            return counts
    finally:
        engine.dispose()


@pytest.fixture
def counts() -> Callable[[Path | str], dict[str, int]]:
    return row_counts
