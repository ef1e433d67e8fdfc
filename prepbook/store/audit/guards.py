"""Triggers by which the database itself refuses to rewrite the record.

The session already refuses deletes and changes to columns outside a model's
``__updatable__`` (``prepbook.store.engine``); these triggers say the same inside the
database, so plain SQL from a console or a database browser is refused too:

* ``audit_events``: never changed, never deleted;
* ``audit_head``: only its ``seq`` and ``hash`` move, the row is never deleted;
* every audited table: never deleted; only the columns in ``__updatable__`` change.

Someone who can drop a trigger (the owner of the SQLite file, the owner of the tables
on PostgreSQL) can still do all of this; ``audit verify`` then names the missing or
altered trigger (``schema_check``) beside the rows and events it finds changed.

On SQLite each table gets a delete trigger and an update trigger whose condition
names the columns that must not change (null-safe ``IS NOT``). On PostgreSQL one
function, ``prepbook_guard``, serves every table: it compares the old and new row as
JSON with the updatable columns (the trigger's arguments) left out, and refuses
TRUNCATE too. A revision that adds a column to a guarded table, or changes its
``__updatable__``, re-creates that table's guard with ``drop`` and ``create``.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

import msgspec

from prepbook.store.models import AUDITED_MODELS, AuditEvent, AuditHead, Base, table_of

PREFIX = "prepbook_guard_"
FUNCTION = "prepbook_guard"

# The body of the PostgreSQL trigger function; schema_check compares the stored one.
FUNCTION_BODY = """
BEGIN
  IF TG_OP IN ('DELETE', 'TRUNCATE') THEN
    RAISE EXCEPTION 'prepbook: % rows are never deleted', TG_TABLE_NAME
      USING ERRCODE = 'integrity_constraint_violation';
  END IF;
  IF TG_NARGS = 0 THEN
    RAISE EXCEPTION 'prepbook: % rows are never changed', TG_TABLE_NAME
      USING ERRCODE = 'integrity_constraint_violation';
  END IF;
  IF (to_jsonb(NEW) - TG_ARGV) IS DISTINCT FROM (to_jsonb(OLD) - TG_ARGV) THEN
    RAISE EXCEPTION 'prepbook: only % of % may change', array_to_string(TG_ARGV, ', '),
      TG_TABLE_NAME USING ERRCODE = 'integrity_constraint_violation';
  END IF;
  RETURN NEW;
END
"""


class Guarded(msgspec.Struct, frozen=True):
    """One guarded table: its name, every column, and the columns that may change."""

    table: str
    columns: tuple[str, ...]
    updatable: tuple[str, ...]


def _guarded_models() -> tuple[type[Base], ...]:
    return (AuditEvent, AuditHead, *AUDITED_MODELS)


def _updatable_columns(model: type[Base]) -> tuple[str, ...]:
    """The column names behind ``__updatable__`` (attribute names: ``U`` is
    ``expanded_u``), sorted."""
    attrs = model.__mapper__.column_attrs
    return tuple(sorted(attrs[key].columns[0].name for key in model.__updatable__))


def guarded_tables() -> tuple[Guarded, ...]:
    """Every guarded table as the models describe it (what verify expects)."""
    return tuple(
        Guarded(table_of(m).name, tuple(c.name for c in table_of(m).columns),
                _updatable_columns(m))
        for m in _guarded_models()
    )


def _q(name: str) -> str:
    return '"' + name.replace('"', '""') + '"'


def sqlite_triggers(guarded: Guarded) -> dict[str, str]:
    """Trigger name -> the exact CREATE TRIGGER text SQLite keeps in sqlite_master."""
    t = guarded.table
    delete = (f"CREATE TRIGGER {PREFIX}{t}_delete BEFORE DELETE ON {_q(t)} "
              f"BEGIN SELECT RAISE(ABORT, 'prepbook: {t} rows are never deleted'); END")
    fixed = [c for c in guarded.columns if c not in guarded.updatable]
    if guarded.updatable:
        when = " OR ".join(f"NEW.{_q(c)} IS NOT OLD.{_q(c)}" for c in fixed)
        allowed = ", ".join(guarded.updatable)
        update = (f"CREATE TRIGGER {PREFIX}{t}_update BEFORE UPDATE ON {_q(t)} WHEN {when} "
                  f"BEGIN SELECT RAISE(ABORT, 'prepbook: only {allowed} of {t} may change'); "
                  "END")
    else:
        update = (f"CREATE TRIGGER {PREFIX}{t}_update BEFORE UPDATE ON {_q(t)} "
                  f"BEGIN SELECT RAISE(ABORT, 'prepbook: {t} rows are never changed'); END")
    return {f"{PREFIX}{t}_delete": delete, f"{PREFIX}{t}_update": update}


def postgresql_triggers(guarded: Guarded) -> dict[str, str]:
    """Trigger name -> its CREATE TRIGGER statement (the function is made once).

    Written as ``pg_get_triggerdef`` prints it back (less the schema before the table
    name), so ``schema_check`` compares the two texts. Table names are plain lower-case
    identifiers and need no quotes.
    """
    t = guarded.table
    args = ", ".join(f"'{c}'" for c in guarded.updatable)
    return {
        f"{PREFIX}{t}": (f"CREATE TRIGGER {PREFIX}{t} BEFORE DELETE OR UPDATE ON {t} "
                         f"FOR EACH ROW EXECUTE FUNCTION {FUNCTION}({args})"),
        f"{PREFIX}{t}_truncate": (f"CREATE TRIGGER {PREFIX}{t}_truncate BEFORE TRUNCATE ON {t} "
                                  f"FOR EACH STATEMENT EXECUTE FUNCTION {FUNCTION}()"),
    }


def create_function_sql() -> str:
    return (f"CREATE OR REPLACE FUNCTION {FUNCTION}() RETURNS trigger LANGUAGE plpgsql "
            f"AS $guard${FUNCTION_BODY}$guard$")


def create_statements(dialect: str, tables: Iterable[Guarded]) -> list[str]:
    """The statements that guard ``tables`` on this dialect ('sqlite' or 'postgresql')."""
    if dialect == "sqlite":
        return [sql for g in tables for sql in sqlite_triggers(g).values()]
    return [create_function_sql(),
            *(sql for g in tables for sql in postgresql_triggers(g).values())]


def drop_statements(dialect: str, tables: Sequence[str]) -> list[str]:
    """The statements that remove the guards of ``tables`` (the function stays)."""
    if dialect == "sqlite":
        return [f"DROP TRIGGER IF EXISTS {PREFIX}{t}_{kind}"
                for t in tables for kind in ("delete", "update")]
    return [f"DROP TRIGGER IF EXISTS {PREFIX}{t}{end} ON {_q(t)}"
            for t in tables for end in ("", "_truncate")]
