"""A database made at the initial revision upgrades to label prints and keeps its data."""

from __future__ import annotations

import sqlite3
from pathlib import Path

from alembic import command

from prepbook.store import migrate


def test_an_initial_revision_database_upgrades_and_keeps_its_rows(tmp_path: Path) -> None:
    path = tmp_path / "old.db"
    url = f"sqlite:///{path}"
    command.upgrade(migrate.alembic_config(url), "ff8077f934d0")
    con = sqlite3.connect(path)
    con.execute("INSERT INTO settings (key, value, updated_at, updated_by) "
                "VALUES ('lab_name', 'kept', '2026-01-01 00:00:00', 'ana')")
    con.commit()
    assert "label_prints" not in {r[0] for r in con.execute(
        "SELECT name FROM sqlite_master WHERE type='table'")}
    con.close()

    report = migrate.upgrade(str(path))

    assert (report.from_revision, report.to_revision) == ("ff8077f934d0", migrate.HEAD_REVISION)
    assert report.backup_path is not None and Path(report.backup_path).is_file()
    con = sqlite3.connect(path)
    try:
        assert con.execute("SELECT value FROM settings").fetchall() == [("kept",)]
        columns = {r[1] for r in con.execute("PRAGMA table_info('label_prints')")}
        assert {"batch_id", "lot_id", "run_id", "printed_at", "factor", "restandardize_by",
                "expires", "file_name"} <= columns
    finally:
        con.close()
