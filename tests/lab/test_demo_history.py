"""The synthetic history (`prepbook demo --years`) is a consistent record: entered through
the services, so the audit trail verifies and every count follows from the others."""

from __future__ import annotations

import sqlite3
from pathlib import Path

import pytest

from tests.conftest import Cli


@pytest.fixture(scope="module")
def history(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict]:
    from prepbook.lab import demo

    path = tmp_path_factory.mktemp("history") / "history.db"
    # A quarter of a year of a lab a third the default size: a few seconds.
    return path, demo.build_history(path, years=0.25, scale=0.3)


def _count(path: Path, sql: str) -> int:
    con = sqlite3.connect(path)
    try:
        return int(con.execute(sql).fetchone()[0])
    finally:
        con.close()


def test_history_verifies_and_its_counts_agree(history: tuple[Path, dict]) -> None:
    path, res = history
    assert res["verified"] is True
    cli = Cli(path)
    report = cli.json("audit", "verify")
    assert report["ok"] is True and report["events"] == res["events"]
    batches = _count(path, "SELECT count(*) FROM batches")
    runs = _count(path, "SELECT count(*) FROM runs")
    uses = _count(path, "SELECT count(*) FROM uses")
    assert (batches, runs, uses) == (res["batches"], res["runs"], res["uses"])
    # Three replicates a run, one review a run, every run reviewed (rejected ones repeated).
    assert _count(path, "SELECT count(*) FROM replicates") == 3 * runs
    assert _count(path, "SELECT count(*) FROM reviews") == runs
    assert _count(path, "SELECT count(*) FROM runs WHERE status = 'rejected'") == res["rejected"]
    assert _count(path, "SELECT count(*) FROM runs WHERE status = 'awaiting-review'") == 0
    # A busy lab: several runs and many uses per batch, and old batches retired.
    assert runs >= 2 * batches and uses >= 5 * batches
    assert _count(path, "SELECT count(*) FROM batches WHERE retired_at IS NOT NULL") \
        == res["retired"] > 0
    # Every event is one write: rows written plus the status changes and retirements.
    writes = sum(_count(path, f"SELECT count(*) FROM {t}") for t in (  # noqa: S608
        "users", "materials", "specs", "lots", "instruments", "batches", "runs", "replicates",
        "reviews", "uses"))
    assert report["events"] == writes + runs + res["retired"]


def test_history_has_drift_dilutions_secondaries_and_rejections(
        history: tuple[Path, dict]) -> None:
    path, res = history
    assert _count(path, "SELECT count(*) FROM batches WHERE method = 'dilution'") > 0
    assert _count(path, "SELECT count(*) FROM batches WHERE method = 'concentrate'") > 0
    assert _count(path, "SELECT count(*) FROM runs WHERE method = 'secondary'") > 0
    # Sodium hydroxide takes up carbon dioxide: over one batch's accepted runs the
    # normality falls from the first to the last.
    con = sqlite3.connect(path)
    try:
        rows = con.execute(
            "SELECT b.id, r.normality_20c FROM runs r JOIN batches b ON b.id = r.batch_id "
            "JOIN specs s ON s.id = b.spec_id WHERE s.code = 'NaOH-0.1N' AND "
            "r.status = 'accepted' ORDER BY b.id, r.performed_at").fetchall()
    finally:
        con.close()
    by_batch: dict[int, list[float]] = {}
    for bid, n in rows:
        by_batch.setdefault(bid, []).append(n)
    long_ones = [ns for ns in by_batch.values() if len(ns) >= 4]
    assert long_ones and all(ns[-1] < ns[0] for ns in long_ones)


def test_history_board_renders(history: tuple[Path, dict]) -> None:
    path, res = history
    cli = Cli(path)
    board = cli.json("status")
    assert [b["batch"] for b in board] == [b.batch for b in res["board"]]
    assert all(b["state"] != "retired" for b in board)
    assert "Board" in cli.ok("status").stdout
    shown = cli.json("batch", "show", res["example_batch"])
    assert shown["runs"] and shown["batch"] == res["example_batch"]


def test_history_refuses_an_existing_file(history: tuple[Path, dict]) -> None:
    from prepbook.errors import Refused
    from prepbook.lab import demo

    path, _ = history
    with pytest.raises(Refused):
        demo.build_history(path, years=1)
