"""The README's PostgreSQL set-up: a bench account that may only add to the trail.

Attack: a bench's database account, used from a SQL console instead of prepbook,
deletes or rewrites audit events, drops or disables a guard trigger, or changes a
column prepbook never updates. With the README's grants each is refused by the
server, while prepbook itself works through that account as usual.
"""

from __future__ import annotations

import re
import uuid
from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url
from sqlalchemy.exc import DBAPIError
from sqlalchemy.pool import NullPool

from prepbook.store.audit import guards
from prepbook.store.models import AuditKeying, LoginSession, table_of
from tests.cli.test_bench_flow import _days, _make_batch, _standardize
from tests.conftest import Cli, on_postgres

README = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
pytestmark = pytest.mark.skipif(not on_postgres(), reason="PostgreSQL accounts and grants")


def _role_sql() -> str:
    match = re.search(r"<!-- postgresql roles[^>]*-->\s*```sql\n(.*?)```", README, re.S)
    assert match, "README has no PostgreSQL role block"
    return match.group(1)


def test_the_readme_grants_updates_of_exactly_the_updatable_columns() -> None:
    granted = {table: tuple(sorted(c.strip() for c in cols.split(",")))
               for cols, table in re.findall(r"GRANT UPDATE \(([^)]*)\) ON (\w+)", _role_sql())}
    expected = {g.table: g.updatable for g in guards.guarded_tables() if g.updatable}
    # Tables outside the guarded record whose rows still change: the trail's keying (its
    # public key, at the first checkpoint) and the login sessions (the idle clock).
    for model in (AuditKeying, LoginSession):
        expected[table_of(model).name] = tuple(sorted(model.__updatable__))
    assert granted == expected


@pytest.fixture
def bench_account(db_target: str) -> Iterator[tuple[Cli, str]]:
    """The owner's database made with `prepbook init`, the README's grants given to an
    account of its own: (a CLI working as that account, its URL)."""
    owner = Cli(db_target)
    owner.ok("init")
    role = f"prepbook_bench_{uuid.uuid4().hex[:12]}"
    secret = uuid.uuid4().hex
    sql = _role_sql().replace("prepbook_bench", role).replace("choose-a-passphrase", secret)
    engine = create_engine(db_target, poolclass=NullPool)
    try:
        with engine.begin() as conn:
            for statement in filter(str.strip, sql.split(";")):
                conn.execute(text(statement))
        url = make_url(db_target).set(username=role, password=secret)
        yield Cli(url.render_as_string(hide_password=False)), role
    finally:
        with engine.begin() as conn:
            conn.execute(text(f"DROP OWNED BY {role}"))
            conn.execute(text(f"DROP ROLE {role}"))
        engine.dispose()


def _refused_to(url: str, sql: str) -> str:
    engine = create_engine(url, poolclass=NullPool)
    try:
        with pytest.raises(DBAPIError) as caught, engine.begin() as conn:
            conn.execute(text(sql))
        return str(caught.value.orig)
    finally:
        engine.dispose()


def test_a_bench_account_works_but_cannot_rewrite_or_unguard(
        bench_account: tuple[Cli, str]) -> None:
    cli, _ = bench_account
    admin = ""  # the first user signs nothing; the admin signs every later one
    for name, role in (("ada", "admin"), ("ben", "technician"), ("cleo", "reviewer")):
        cli.ok("user", "add", name, "--role", role, "--passphrase-stdin", user="ada",
               input=f"{name}-passphrase\n{admin}")
        admin = "ada-passphrase\n"
    cli.ok("lot", "add", "KHP", "--code", "KHP-0001", "--purity", "99.98", "--expires",
           _days(400), "--dried", _days(-3), user="ben")
    cli.ok("instrument", "add", "BAL-1", "--kind", "balance", "--due", _days(200),
           "--readability", "0.0001", user="ben")
    cli.ok("instrument", "add", "BUR-1", "--kind", "burette", "--due", _days(200),
           "--capacity", "50", user="ben")
    batch = _make_batch(cli)
    run = _standardize(cli, batch)["run"]
    cli.ok("review", run, "--accept", "--passphrase-stdin", user="cleo",
           input="cleo-passphrase\n")
    cli.ok("settings", "set", "lockout_after", "6", "--reason", "lab policy",
           "--passphrase-stdin", user="ada", input="ada-passphrase\n")
    cli.ok("batch", "retire", batch, "--reason", "spilled", "--passphrase-stdin", user="ben",
           input="ben-passphrase\n")
    assert cli.json("audit", "verify")["ok"] is True
    url = str(cli.db)
    for sql in ("DELETE FROM audit_events", "UPDATE audit_events SET actor = 'mallory'",
                "TRUNCATE audit_events", "DELETE FROM audit_head",
                "UPDATE users SET name = 'mallory'", "UPDATE batches SET notes = 'x'"):
        assert "permission denied" in _refused_to(url, sql), sql
    for sql in ("DROP TRIGGER prepbook_guard_audit_events ON audit_events",
                "ALTER TABLE runs DISABLE TRIGGER prepbook_guard_runs",
                "ALTER TABLE lots ADD COLUMN side_notes text",
                "CREATE TRIGGER quiet BEFORE UPDATE ON users FOR EACH ROW "
                "EXECUTE FUNCTION prepbook_guard()"):
        refusal = _refused_to(url, sql)
        assert "must be owner" in refusal or "permission denied" in refusal, (sql, refusal)
    assert cli.json("audit", "verify")["ok"] is True
