"""What ``verify`` checks beyond the chain and the rows: the store's own defences.

The schema against what the revisions make (tables, columns, indexes, the guard
triggers), the file's pages (SQLite's quick check; the full integrity check when
thorough), and each user's credential against its history in the trail. Each check
returns its problems; this module gives each its kind for the report.
"""

from __future__ import annotations

from sqlalchemy import Connection

from prepbook.store.audit.credentials import credential_problems
from prepbook.store.audit.schema_check import damage_problems, schema_problems


def store_problems(conn: Connection, *, thorough: bool = False) -> list[tuple[str, str]]:
    """(kind, problem) for every defence of the store found wanting."""
    found = [("damage", p) for p in damage_problems(conn, thorough=thorough)]
    if found:  # the other checks read through indexes, which may be the damaged pages
        return found
    found += [("schema", p) for p in schema_problems(conn)]
    found += [("credential", p) for p in credential_problems(conn)]
    return found
