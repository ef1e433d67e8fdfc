"""Keeping the record safe: a consistent copy of a live SQLite database.

``backup`` uses SQLite's online backup API (the same one ``prepbook init`` uses
before an upgrade): it copies a consistent snapshot while benches keep working,
WAL content included. It never overwrites a file; a copy that could not be
finished is removed (it is the one file this call created) and the reason given.
On PostgreSQL the server's own tools make the copy; prepbook says how.
"""

from __future__ import annotations

import sqlite3
from pathlib import Path

import msgspec

from prepbook.errors import DatabaseError, InvalidInput, Refused


def _pg_advice(url: str) -> Refused:
    from sqlalchemy.engine import URL, make_url

    parsed = make_url(url)
    # The libpq form of the same address, without any password (pg_dump reads
    # ~/.pgpass or PGPASSWORD): nothing secret is printed.
    plain = URL.create(parsed.get_backend_name(), username=parsed.username, host=parsed.host,
                       port=parsed.port, database=parsed.database, query=parsed.query)
    shown = plain.render_as_string(hide_password=False)
    return Refused(
        "prepbook backup copies a SQLite file; this database is on a PostgreSQL server, "
        f"so use the server's own tools: pg_dump --format=custom --file=FILE '{shown}' "
        "(restore into an empty database with pg_restore --dbname=URL FILE)"
    )


def _output_path(output: str) -> Path:
    if output is None or not output.strip():
        raise InvalidInput("give the file to write the copy to: -o FILE")
    if "\x00" in output or any(ord(c) < 32 for c in output):
        raise InvalidInput("the backup file name contains control characters")
    path = Path(output).expanduser()
    if len(str(path)) > 4096 or any(len(part.encode()) > 255 for part in path.parts):
        raise InvalidInput("the backup file name is too long")
    return path


class BackupReport(msgspec.Struct, frozen=True):
    """What `prepbook backup` copied (the fields are the JSON keys)."""

    database: str
    backup: str
    bytes: int
    events: int


def backup(target: str, output: str) -> BackupReport:
    """Copy the SQLite database at ``target`` to the new file ``output``."""
    from prepbook.store.engine import open_database, resolve_url, sqlite_path

    url = resolve_url(target)
    source = sqlite_path(url)
    if source is None:
        if url.startswith("sqlite"):
            raise Refused("an in-memory database cannot be backed up")
        raise _pg_advice(url)
    dest = _output_path(output)
    open_database(target).dispose()  # refuses a missing file or one not at head
    if not dest.parent.is_dir():
        raise InvalidInput(f"cannot write {dest}: folder {dest.parent} does not exist")
    if dest.exists() or dest.is_symlink():
        raise Refused(f"{dest} already exists; prepbook never overwrites a file: "
                      "choose a new name")
    if dest.resolve() == source.resolve():
        raise Refused("the copy cannot be the database itself")
    try:
        claimed = dest.open("xb")  # claims the name: two backups cannot share a file
    except FileExistsError as exc:
        raise Refused(f"{dest} already exists; prepbook never overwrites a file") from exc
    except OSError as exc:
        raise InvalidInput(f"cannot write {dest}: {exc.strerror or exc}") from exc
    claimed.close()
    try:
        events = _copy(source, dest)
    except BaseException as exc:
        dest.unlink(missing_ok=True)  # the unfinished copy made above, nothing else
        if isinstance(exc, sqlite3.Error | OSError):
            raise DatabaseError(f"the backup to {dest} failed and was removed: {exc}") from exc
        raise
    return BackupReport(database=str(source), backup=str(dest.resolve()),
                        bytes=dest.stat().st_size, events=events)


def _copy(source: Path, dest: Path) -> int:
    """The online copy, then a check of the copy; the number of audit events in it."""
    from prepbook.store.engine import BUSY_TIMEOUT_S

    src = sqlite3.connect(f"{source.resolve().as_uri()}?mode=ro", uri=True,
                          timeout=BUSY_TIMEOUT_S)
    try:
        out = sqlite3.connect(dest)
        try:
            with out:
                src.backup(out)
            check = out.execute("PRAGMA integrity_check").fetchall()
            if check != [("ok",)]:
                raise sqlite3.DatabaseError(f"the copy fails its integrity check: {check[:3]}")
            return int(out.execute("SELECT COUNT(*) FROM audit_events").fetchone()[0])
        finally:
            out.close()
    finally:
        src.close()
