"""Alembic environment for prepbook, run from the installed package.

prepbook builds the Alembic configuration in code (``prepbook.store.migrate``):
no alembic.ini is needed. The caller passes an open connection in
``config.attributes["connection"]`` (or a URL in ``config.attributes["url"]``).
SQLite gets batch mode, because it can alter a table only by rebuilding it.
"""

from __future__ import annotations

from alembic import context
from sqlalchemy import Connection, create_engine, pool

from prepbook.store.audit.schema_check import comparing
from prepbook.store.models import Base

config = context.config
target_metadata = Base.metadata


def _url() -> str:
    url = config.attributes.get("url") or config.get_main_option("sqlalchemy.url")
    if not url:
        raise RuntimeError("no database URL: pass config.attributes['url'] or a connection")
    return str(url)


def _configure(backend: str, **kwargs: object) -> None:
    context.configure(
        target_metadata=target_metadata,
        **comparing(backend),
        **kwargs,  # type: ignore[arg-type]
    )


def run_migrations_offline() -> None:
    """Emit SQL to stdout instead of running it (``--sql`` mode)."""
    url = _url()
    _configure(
        url.partition(":")[0].partition("+")[0],
        url=url,
        literal_binds=True,
        dialect_opts={"paramstyle": "named"},
        render_as_batch=url.startswith("sqlite"),
    )
    with context.begin_transaction():
        context.run_migrations()


def _run(connection: Connection) -> None:
    backend = connection.dialect.name
    _configure(backend, connection=connection, render_as_batch=backend == "sqlite")
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_online() -> None:
    """Migrate through the caller's connection, or one opened here from the URL."""
    connection = config.attributes.get("connection")
    if connection is not None:
        _run(connection)
        return
    engine = create_engine(_url(), poolclass=pool.NullPool)
    try:
        with engine.begin() as conn:
            _run(conn)
    finally:
        engine.dispose()


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
