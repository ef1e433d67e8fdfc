"""A database made at an older schema revision, holding data, upgrades with
`prepbook init` to the current one without loss (issue 6).

The fixture tests/fixtures/lab-<revision>.sqlite3 is built by
tests/fixtures/make_old_lab.py at the first released revision. The test is
generic: whatever the head is now, every row of every table the old file had is
still there unchanged, the audit trail verifies, a copy of the old file was made
when the revision changed (and it is the old file, row for row), and the lab
carries on working.
"""

from __future__ import annotations

import shutil
import sqlite3
from pathlib import Path

import pytest

from prepbook.store.migrate import HEAD_REVISION
from tests.conftest import Cli

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"
OLD_LABS = sorted(FIXTURES.glob("lab-*.sqlite3"))


def _tables(path: Path) -> dict[str, list[tuple]]:
    """Every row of every table, in id order, read with plain sqlite3."""
    con = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True)
    try:
        names = [r[0] for r in con.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%'")]
        out = {}
        for name in names:
            columns = [r[1] for r in con.execute(f'PRAGMA table_info("{name}")')]
            order = ", ".join(f'"{c}"' for c in columns)
            out[name] = [tuple(zip(columns, row, strict=True)) for row in
                         con.execute(f'SELECT {order} FROM "{name}" ORDER BY {order}')]
        return out
    finally:
        con.close()


def test_there_is_an_old_lab_to_upgrade() -> None:
    assert OLD_LABS, "tests/fixtures/make_old_lab.py has not been run"


@pytest.mark.parametrize("fixture", OLD_LABS, ids=lambda p: p.stem)
def test_init_upgrades_an_old_lab_without_loss(fixture: Path, tmp_path: Path) -> None:
    path = tmp_path / "lab.db"
    shutil.copyfile(fixture, path)
    old_revision = fixture.stem.removeprefix("lab-")
    before = _tables(path)
    assert before["alembic_version"] == [(("version_num", old_revision),)]
    assert before["runs"] and before["replicates"] and before["audit_events"]

    cli = Cli(path)
    refused = cli.refused("status")  # an old file is not used before it is upgraded
    if old_revision != HEAD_REVISION:
        assert "prepbook init" in refused.stderr
    report = cli.json("init", user="ada")
    assert report["from_revision"] == old_revision
    assert report["to_revision"] == HEAD_REVISION
    assert report["created"] is False
    after = _tables(path)

    # init loads the built-in entries the old lab's catalog lacked, each with its audit
    # event: the chain's head moves on (audit verify below proves the chain).
    appended = len(after["audit_events"]) - len(before["audit_events"])
    for table, rows in before.items():
        if table == "alembic_version" or (table == "audit_head" and appended):
            continue
        # Rows may gain columns in a later revision, never lose or change one.
        old_columns = [name for name, _ in rows[0]] if rows else []
        kept = [tuple(pair for pair in row if pair[0] in old_columns) for row in
                after[table][: len(rows)]]
        assert kept == rows, table
        # Such an entry is added once; nothing the lab had twice, nothing else.
        extra = [dict(row) for row in after[table][len(rows):]]
        if table in ("materials", "specs"):
            had = {dict(row)["code"] for row in rows}
            assert all(row["builtin"] and row["code"] not in had for row in extra), table
        else:
            assert all(row["action"].startswith("catalog.") for row in extra) if (
                table == "audit_events") else not extra, table
    assert after["alembic_version"] == [(("version_num", HEAD_REVISION),)]

    if old_revision != HEAD_REVISION:
        assert report["backup"] is not None
        assert _tables(Path(report["backup"])) == before
    else:
        assert report["backup"] is None

    verdict = cli.json("audit", "verify")
    assert verdict["ok"] is True, verdict["problems"]
    assert verdict["events"] == len(after["audit_events"])
    board = {b["batch"] for b in cli.json("status")}
    assert board == {dict(row)["code"] for row in before["batches"]}
    # The upgraded lab carries on: ben logs in (an event), a new write lands and the chain
    # still verifies.
    cli.ok("login", "ben", "--passphrase-stdin", input="ben-passphrase\n")
    cli.ok("lot", "add", "KHP", "--code", "KHP-AFTER-UPGRADE", "--purity", "99.97",
           "--expires", "2036-01-31", user="ben")
    verdict = cli.json("audit", "verify")
    assert verdict["ok"] is True and verdict["events"] == len(after["audit_events"]) + 2
