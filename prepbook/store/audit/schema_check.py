"""The schema as the migrations make it, compared with the live database; file damage.

``schema_problems`` names every difference between the live database and what
prepbook's revisions build: a table, column, index or constraint missing or added
(Alembic's ``compare_metadata`` against the models, which tests/store/
test_migrations.py keeps equal to the revisions), a guard trigger missing, disabled or
altered, and any trigger or view prepbook does not make. ``damage_problems`` runs
SQLite's ``PRAGMA quick_check`` (``integrity_check`` when thorough), which reads every
page: an overwritten index page passes the row check but not this one.
"""

from __future__ import annotations

import sqlite3
from pathlib import Path
from typing import Any

from sqlalchemy import Connection, text

from prepbook.store.audit import guards

_SHOWN = 5  # lines of a damage report listed before the rest are counted


def schema_problems(conn: Connection) -> list[str]:
    """Each difference between the live schema and the one prepbook's revisions make."""
    from alembic.autogenerate import compare_metadata
    from alembic.runtime.migration import MigrationContext

    from prepbook.store.models import Base

    context = MigrationContext.configure(conn, opts=comparing(conn.dialect.name))
    problems = [_described(diff) for diff in _flat(compare_metadata(context, Base.metadata))]
    if conn.dialect.name == "sqlite":
        problems += _sqlite_extras(conn)
    else:
        problems += _postgresql_extras(conn)
    return problems


def comparing(backend: str) -> dict[str, Any]:
    """Alembic's options for comparing a live ``backend`` ("sqlite", "postgresql") schema
    with the models: column types too, and an index the models mark for one backend
    only (``info={"backend": ...}``) only there."""
    def include(obj: Any, _name: Any, kind: str, _reflected: bool, _compare_to: Any) -> bool:
        only = obj.info.get("backend") if kind == "index" else None
        return only is None or only == backend

    return {"compare_type": True, "include_object": include}


def damage_problems(conn: Connection, *, thorough: bool = False) -> list[str]:
    """SQLite's own check of every page of the file (nothing to do on PostgreSQL)."""
    if conn.dialect.name != "sqlite":
        return []
    pragma = "integrity_check" if thorough else "quick_check"
    path = conn.engine.url.database
    if not path or path == ":memory:":
        return []
    lines: list[str] = []
    # A connection of its own, read-only: SQLite refuses to end a transaction in which a
    # read met a damaged page, and verify's own transaction must end cleanly.
    # (A file opened read-only already names itself as such a URI: see the engine.)
    from prepbook.store.engine import read_only_uri

    target = path if path.startswith("file:") else read_only_uri(Path(path))
    own = sqlite3.connect(target, uri=True)
    try:
        for row in own.execute(f"PRAGMA {pragma}"):
            lines.extend(str(row[0]).splitlines())
    except sqlite3.DatabaseError as exc:  # the check stopped on a page it cannot read
        lines.append(f"the check stopped: {exc}")
    finally:
        own.close()
    if lines == ["ok"]:
        return []
    lines = [line for line in lines if not line.startswith("*** in database")]
    shown = "; ".join(lines[:_SHOWN]) + (f"; and {len(lines) - _SHOWN} more"
                                         if len(lines) > _SHOWN else "")
    return [f"the database file is damaged (SQLite {pragma}): {shown}"]


def _flat(diffs: list[Any]) -> list[tuple[Any, ...]]:
    """compare_metadata gives column changes as lists of tuples; one flat list."""
    out: list[tuple[Any, ...]] = []
    for diff in diffs:
        out.extend(diff if isinstance(diff, list) else [diff])
    return out


def _described(diff: tuple[Any, ...]) -> str:
    kind = diff[0]
    if kind == "add_table":
        return f"table {diff[1].name} is missing from the schema"
    if kind == "remove_table":
        return f"table {diff[1].name} is not one prepbook makes: added outside prepbook"
    if kind == "add_column":
        return f"column {diff[2]}.{diff[3].name} is missing from the schema"
    if kind == "remove_column":
        return (f"column {diff[2]}.{diff[3].name} is not one prepbook makes: added outside "
                "prepbook")
    if kind in ("add_index", "remove_index"):
        index = diff[1]
        where = f"index {index.name} on {index.table.name}"
        return (f"{where} is missing from the schema" if kind == "add_index" else
                f"{where} is not one prepbook makes: added outside prepbook")
    if kind in ("add_constraint", "remove_constraint", "add_fk", "remove_fk"):
        constraint = diff[1]
        where = f"constraint {constraint.name} on {constraint.table.name}"
        return (f"{where} is missing from the schema" if kind.startswith("add") else
                f"{where} is not one prepbook makes: added outside prepbook")
    if kind.startswith("modify_"):
        return (f"column {diff[2]}.{diff[3]} differs from the schema prepbook makes "
                f"({kind[7:]}: {diff[5]!r} where prepbook makes {diff[6]!r})")
    return f"the schema differs from the one prepbook makes: {kind} {diff[1:]!r}"


def _triggers(found: dict[str, tuple[str, str]], expected: dict[str, tuple[str, str]]
              ) -> list[str]:
    """Compare trigger name -> (table, definition) found with what the guards make."""
    problems = []
    for name, (table, definition) in sorted(expected.items()):
        if name not in found:
            problems.append(f"trigger {name} on {table} is missing: the table is not "
                            "guarded against changes (dropped outside prepbook)")
        elif found[name][1] != definition:
            problems.append(f"trigger {name} on {table} is not the one prepbook makes: "
                            "altered outside prepbook")
    for name, (table, _) in sorted(found.items()):
        if name not in expected:
            problems.append(f"trigger {name} on {table} is not one prepbook makes: planted "
                            "outside prepbook")
    return problems


def _sqlite_extras(conn: Connection) -> list[str]:
    rows = conn.execute(text("SELECT type, name, tbl_name, sql FROM sqlite_master "
                             "WHERE type IN ('trigger', 'view')")).all()
    found = {name: (table, sql) for kind, name, table, sql in rows if kind == "trigger"}
    expected = {name: (g.table, sql) for g in guards.guarded_tables()
                for name, sql in guards.sqlite_triggers(g).items()}
    views = [f"view {name} is not one prepbook makes: added outside prepbook"
             for kind, name, _, _ in rows if kind == "view"]
    return _triggers(found, expected) + views


def _postgresql_extras(conn: Connection) -> list[str]:
    rows = conn.execute(text(
        "SELECT t.tgname, c.relname, t.tgenabled, pg_get_triggerdef(t.oid), n.nspname "
        "FROM pg_trigger t JOIN pg_class c ON c.oid = t.tgrelid "
        "JOIN pg_namespace n ON n.oid = c.relnamespace "
        "WHERE NOT t.tgisinternal AND n.nspname = current_schema()")).all()
    found = {name: (table, definition.replace(f" ON {schema}.", " ON "))
             for name, table, _, definition, schema in rows}
    expected = {name: (g.table, sql) for g in guards.guarded_tables()
                for name, sql in guards.postgresql_triggers(g).items()}
    problems = _triggers(found, expected)
    problems += [f"trigger {name} on {table} is disabled: the table is not guarded "
                 "(ALTER TABLE ... DISABLE TRIGGER outside prepbook)"
                 for name, table, enabled, _, _ in rows if enabled == "D"]
    body = conn.execute(text(
        "SELECT p.prosrc FROM pg_proc p JOIN pg_namespace n ON n.oid = p.pronamespace "
        "WHERE p.proname = :name AND n.nspname = current_schema()"),
        {"name": guards.FUNCTION}).scalars().all()
    if body != [guards.FUNCTION_BODY]:
        problems.append(f"the trigger function {guards.FUNCTION} is missing or not the one "
                        "prepbook makes: altered outside prepbook")
    views = conn.execute(text("SELECT table_name FROM information_schema.views "
                              "WHERE table_schema = current_schema()")).scalars().all()
    problems += [f"view {name} is not one prepbook makes: added outside prepbook"
                 for name in views]
    return problems
