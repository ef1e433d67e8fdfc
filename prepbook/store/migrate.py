"""Create or upgrade a prepbook database with the Alembic revisions shipped in the package.

Alembic is imported only inside these functions: commands that merely open a
database compare its revision with ``prepbook.store.revision.HEAD_REVISION`` and
never load Alembic.
"""

from __future__ import annotations

import sqlite3
from datetime import UTC, datetime
from pathlib import Path
from typing import TYPE_CHECKING, Any, TextIO

import msgspec

from prepbook.store.revision import HEAD_REVISION

if TYPE_CHECKING:
    from alembic.config import Config

    from prepbook.store.engine import Database


class UpgradeReport(msgspec.Struct, frozen=True):
    """What ``upgrade`` did: whether it created the schema, from and to which revision,
    and where it put the copy of the file taken before changing it."""

    created: bool
    from_revision: str | None
    to_revision: str
    backup_path: str | None


def alembic_config(url: str | None = None, *, stdout: TextIO | None = None) -> Config:
    """An Alembic configuration built in code from the installed ``prepbook.migrations``.

    Alembic's own messages go to ``stdout`` if given, else to a buffer: prepbook's
    stdout belongs to its output (``--json`` prints one document and nothing else).
    Passing the stream also avoids Alembic's default, the ``sys.stdout`` of the
    moment Alembic was first imported, which may since have been closed.
    """
    import io
    from importlib.resources import files

    from alembic.config import Config

    config = Config(stdout=stdout if stdout is not None else io.StringIO())
    config.set_main_option("script_location", str(files("prepbook.migrations")))
    if url is not None:
        # Passed as an attribute, not an ini option, so '%' in a password needs no escaping.
        config.attributes["url"] = url
    return config


def head_revision() -> str:
    """The newest revision shipped in the package."""
    from alembic.script import ScriptDirectory

    head = ScriptDirectory.from_config(alembic_config()).get_current_head()
    if head is None:  # pragma: no cover - the package always ships a revision
        raise RuntimeError("prepbook.migrations has no revision")
    return head


def current_revision(db: Database | str) -> str | None:
    """The revision a database is at, or None when it has no prepbook schema."""
    from alembic.runtime.migration import MigrationContext

    from prepbook.store.engine import Database, resolve_url

    database = db if isinstance(db, Database) else Database(resolve_url(db))
    try:
        with database.engine.connect() as conn:
            return MigrationContext.configure(conn).get_current_revision()
    finally:
        if database is not db:
            database.dispose()


def backup_sqlite(path: Path) -> Path:
    """A consistent copy of a live SQLite file next to it, named ``<file>.bak-<UTC time>``.

    Uses sqlite3's online backup API (safe while other connections are open, and it
    includes what is still in the WAL). An existing backup is never overwritten.
    """
    stamp = datetime.now(UTC).strftime("%Y%m%dT%H%M%SZ")
    backup = path.with_name(f"{path.name}.bak-{stamp}")
    counter = 1
    while backup.exists():
        backup = path.with_name(f"{path.name}.bak-{stamp}-{counter}")
        counter += 1
    source = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True)
    try:
        target = sqlite3.connect(backup)
        try:
            with target:
                source.backup(target)
        finally:
            target.close()
    finally:
        source.close()
    return backup


def _foreign_key_problems(conn: Any) -> list[Any]:
    return list(conn.exec_driver_sql("PRAGMA foreign_key_check").fetchall())


def upgrade(target: str) -> UpgradeReport:
    """Create the database if missing, else bring it to the head revision.

    An existing SQLite file below head is copied first (see ``backup_sqlite``);
    a database already at head is left untouched and no copy is made.
    """
    from alembic import command
    from alembic.runtime.migration import MigrationContext
    from alembic.util import CommandError
    from sqlalchemy.exc import SQLAlchemyError

    from prepbook.errors import DatabaseError
    from prepbook.store.engine import make_engine, resolve_url, sqlite_path

    url = resolve_url(target)
    path = sqlite_path(url)
    if path is not None and not path.parent.is_dir():
        raise DatabaseError(f"cannot create {path}: folder {path.parent} does not exist")
    existed = path is not None and path.is_file() and path.stat().st_size > 0

    head = HEAD_REVISION
    # Foreign keys off while migrating: batch mode rebuilds SQLite tables by copy.
    engine = make_engine(url, foreign_keys=False)
    try:
        # One transaction from the revision check to the last DDL statement: on SQLite
        # BEGIN IMMEDIATE holds the write lock throughout, so two `prepbook init` runs
        # queue instead of both creating the schema, and the copy is taken under it.
        with engine.begin() as conn:
            before = MigrationContext.configure(conn).get_current_revision()
            if before == head:
                return UpgradeReport(
                    created=False, from_revision=before, to_revision=head, backup_path=None
                )
            backup = backup_sqlite(path) if existed and path is not None else None
            config = alembic_config(url)
            config.attributes["connection"] = conn
            try:
                command.upgrade(config, "head")
            except CommandError as exc:
                raise DatabaseError(
                    f"cannot upgrade the database from revision {before}: {exc} "
                    "(is it from a newer prepbook?)"
                ) from exc
            if engine.dialect.name == "sqlite" and _foreign_key_problems(conn):
                raise DatabaseError(
                    "upgrade would leave broken foreign keys; nothing was changed"
                    + (f" (copy kept at {backup})" if backup else "")
                )
            after = MigrationContext.configure(conn).get_current_revision()
    except SQLAlchemyError as exc:
        orig = getattr(exc, "orig", None)
        reason = str(orig if orig is not None else exc).splitlines()[0]
        raise DatabaseError(f"cannot create or upgrade the database: {reason}") from exc
    finally:
        engine.dispose()
    return UpgradeReport(
        created=before is None,
        from_revision=before,
        to_revision=after or head,
        backup_path=str(backup) if backup else None,
    )
