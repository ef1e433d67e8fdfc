"""A second database as witness: every checkpoint also appended to a table there.

A lab names it with ``witness_database`` in the configuration (or
PREPBOOK_WITNESS_DATABASE): a PostgreSQL URL, or a SQLite file that the benches can
reach but not the lab's database's editors. Its table ``prepbook_witness_checkpoints``
is made once by its owner (``create``); the benches' account may only insert into it
(the README gives the grants), so whoever holds the lab's database cannot take back a
checkpoint already witnessed there. ``append`` adds one row per checkpoint; ``read``
gives a lab's rows to ``witnessing``, which holds them against the trail exactly as it
holds the witness folder's lines.

A witness that cannot be reached does not stop the lab: the write is kept, the
checkpoint stays in the lab's database, one line on stderr says it was not witnessed,
and ``audit verify`` lists the checkpoints the witness lacks.
"""

from __future__ import annotations

import functools
import sys
from collections.abc import Mapping
from typing import Any

from sqlalchemy import (
    Column,
    Engine,
    Integer,
    MetaData,
    String,
    Table,
    create_engine,
    insert,
    make_url,
    select,
)
from sqlalchemy.exc import SQLAlchemyError
from sqlalchemy.pool import NullPool

from prepbook.errors import DatabaseError, InvalidInput
from prepbook.store.audit import guards
from prepbook.store.engine import resolve_url, sqlite_path

TABLE_NAME = "prepbook_witness_checkpoints"
CONNECT_TIMEOUT_S = 5  # an unreachable witness delays a write by at most this
_META = MetaData()
TABLE = Table(
    TABLE_NAME, _META,
    Column("lab_id", String, nullable=False, index=True),
    Column("events", Integer, nullable=False),
    Column("head_hash", String, nullable=False),
    Column("made_at", String, nullable=False),  # ISO text, exactly as signed
    Column("public_key", String, nullable=False),
    Column("signature", String, nullable=False),
)
_FIELDS = tuple(c.name for c in TABLE.columns)


def witness_database() -> str | None:
    """The witness database named by the configuration (or its environment variable)."""
    from prepbook.config import setting

    value = setting("witness_database").value
    return str(value) if value else None


def shown(url: str) -> str:
    """The URL as it may be printed: its password hidden."""
    try:
        return make_url(resolve_url(url)).render_as_string(hide_password=True)
    except (DatabaseError, ValueError):
        return url.split("://")[0] + "://..."


def _engine(url: str, create: bool = False) -> Engine:
    """The engine of the witness at ``url``; a SQLite file must exist unless ``create``
    (SQLite would otherwise make an empty one, and witness into that)."""
    try:
        resolved = resolve_url(url)
    except DatabaseError as exc:
        raise InvalidInput(f"the witness database: {exc}") from None
    path = sqlite_path(resolved)
    if path is not None and not create and not path.is_file():
        raise InvalidInput(f"the witness database {path} does not exist")
    try:
        return _opened(resolved)
    except (ImportError, SQLAlchemyError) as exc:
        raise InvalidInput(f"the witness database {shown(url)} cannot be opened: "
                           f"{_first_line(exc)}") from None


@functools.cache
def _opened(resolved: str) -> Engine:
    """One engine per URL, which keeps no connection open (NullPool)."""
    timeout = "connect_timeout" if make_url(resolved).get_backend_name() == "postgresql" \
        else "timeout"
    return create_engine(resolved, poolclass=NullPool, connect_args={timeout: CONNECT_TIMEOUT_S})


def _first_line(exc: BaseException) -> str:
    orig = getattr(exc, "orig", None) or exc
    return (str(orig).strip().splitlines() or [type(orig).__name__])[0]


def create(url: str) -> str:
    """Make the witness table at ``url`` (a SQLite file is made if need be; there its
    rows are guarded against change by triggers, as the lab's record is); the URL as
    shown."""
    engine = _engine(url, True)
    try:
        with engine.begin() as conn:
            _META.create_all(conn)
            if conn.dialect.name == "sqlite":
                guarded = guards.Guarded(TABLE_NAME, _FIELDS, ())
                for name, sql in guards.sqlite_triggers(guarded).items():
                    conn.exec_driver_sql(f"DROP TRIGGER IF EXISTS {name}")
                    conn.exec_driver_sql(sql)
    except SQLAlchemyError as exc:
        raise InvalidInput(f"the witness table cannot be made in {shown(url)}: "
                           f"{_first_line(exc)}") from None
    return shown(url)


def append(url: str, checkpoint: Mapping[str, Any]) -> None:
    """Add a checkpoint (its fields) to the witness at ``url`` (InvalidInput, in one
    line, when it cannot)."""
    try:
        with _engine(url).begin() as conn:
            conn.execute(insert(TABLE).values({name: checkpoint[name] for name in _FIELDS}))
    except (SQLAlchemyError, OSError) as exc:
        raise InvalidInput(f"the witness database {shown(url)} cannot be written: "
                           f"{_first_line(exc)}") from None


def witness(url: str, checkpoint: Mapping[str, Any], code: str) -> bool:
    """Append a checkpoint (its fields; ``code`` names it) to the witness database; when
    it cannot be reached, say so in one line on stderr and go on (the lab must not
    stop). True when witnessed."""
    try:
        append(url, checkpoint)
    except InvalidInput as exc:
        sys.stderr.write(f"prepbook: warning: recorded, and checkpoint {code} kept in the "
                         f"database, but NOT witnessed: {exc}; `prepbook audit verify` will "
                         "list it as a gap\n")
        return False
    return True


def read(url: str, lab_id: str) -> tuple[list[dict[str, Any]], list[str], list[str]]:
    """This lab's checkpoints in the witness database (their fields, as stored), what
    could not be read there, and the lab ids of the other trails it witnesses."""
    try:
        with _engine(url).connect() as conn:
            rows = conn.execute(select(*TABLE.columns)).mappings().all()
    except InvalidInput as exc:
        return [], [str(exc)], []
    except (SQLAlchemyError, OSError) as exc:
        return [], [f"the witness database {shown(url)} cannot be read: "
                    f"{_first_line(exc)}"], []
    mine = [{name: row[name] for name in _FIELDS} for row in rows if row["lab_id"] == lab_id]
    others = sorted({str(row["lab_id"]) for row in rows if row["lab_id"] != lab_id})
    return mine, [], others
