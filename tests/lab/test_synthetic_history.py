"""The benchmarks' synthetic history (tests/benchmarks/synthetic.py) is written through
the services: its audit trail verifies and every count follows from the others."""

from __future__ import annotations

import sqlite3
from pathlib import Path

import pytest

from tests.benchmarks import synthetic
from tests.conftest import Cli


@pytest.fixture(scope="module")
def history(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict[str, int]]:
    path = tmp_path_factory.mktemp("history") / "history.db"
    # A year of a lab a third the default size (about 25 s): long enough for bottles to
    # run low and be replaced, which the volume each use and run draws must allow for.
    return path, synthetic.build(path, years=1.0, scale=0.3)


def _count(path: Path, sql: str) -> int:
    con = sqlite3.connect(path)
    try:
        return int(con.execute(sql).fetchone()[0])
    finally:
        con.close()


def test_history_verifies_and_its_counts_agree(history: tuple[Path, dict[str, int]]) -> None:
    path, res = history
    report = Cli(path).json("audit", "verify")
    assert report["ok"] is True
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
    # Every event is one service's write: rows written plus the status changes and
    # retirements, so nothing reached the database beside the services.
    writes = sum(_count(path, f"SELECT count(*) FROM {t}") for t in (  # noqa: S608
        "users", "materials", "specs", "lots", "instruments", "batches", "runs", "replicates",
        "reviews", "uses", "replicate_sources", "settings"))
    # Each signature is an event of its own: every review, retirement and user added by
    # the admin (all but the first user) is signed, and the lab's time zone set once.
    users = _count(path, "SELECT count(*) FROM users")
    signed = _count(path, "SELECT count(*) FROM audit_events WHERE action = 'user.signed'")
    assert signed == runs + res["retired"] + users - 1 + 1
    # and the suite logs in each user it adds (tests/conftest.py), at most once each
    logins = _count(path, "SELECT count(*) FROM audit_events WHERE action = 'user.login'")
    assert logins <= users
    assert report["events"] == writes + runs + res["retired"] + signed + logins


def test_history_lab_keeps_utc(history: tuple[Path, dict[str, int]]) -> None:
    # The simulator types its times in UTC; the lab says so, so the history is the same
    # on a machine in any zone: a retirement typed at 08:00 is stored at 08:00 UTC.
    path, _ = history
    con = sqlite3.connect(path)
    try:
        zone = con.execute("SELECT value FROM settings WHERE key = 'timezone'").fetchall()
        hours = {h for (h,) in con.execute(
            "SELECT substr(retired_at, 12, 8) FROM batches WHERE retired_at IS NOT NULL")}
    finally:
        con.close()
    assert zone == [("UTC",)]
    assert hours == {"08:00:00"}


def test_history_users_have_the_fixture_hash_cost(history: tuple[Path, dict[str, int]]) -> None:
    path, _ = history
    con = sqlite3.connect(path)
    try:
        hashes = [h for (h,) in con.execute("SELECT passphrase_hash FROM users")]
    finally:
        con.close()
    cost = synthetic.FIXTURE_COST
    assert len(hashes) == 12
    assert all(h.startswith(f"$argon2id$v=19$m={cost.memory_kib},t={cost.time_cost},"
                            f"p={cost.parallelism}$") for h in hashes)


def test_history_has_drift_dilutions_secondaries_and_rejections(
        history: tuple[Path, dict[str, int]]) -> None:
    path, res = history
    assert _count(path, "SELECT count(*) FROM batches WHERE method = 'dilution'") > 0
    assert _count(path, "SELECT count(*) FROM batches WHERE method = 'concentrate'") > 0
    assert _count(path, "SELECT count(*) FROM runs WHERE method = 'secondary'") > 0
    assert res["rejected"] > 0
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


def test_history_board_and_batch_show(history: tuple[Path, dict[str, int]]) -> None:
    path, _ = history
    cli = Cli(path)
    board = cli.json("status")
    assert board and all(b["state"] != "retired" for b in board)
    assert "Board" in cli.ok("status").stdout
    shown = cli.json("batch", "show", board[0]["batch"])
    assert shown["runs"] and shown["batch"] == board[0]["batch"]


def test_history_refuses_an_existing_file(history: tuple[Path, dict[str, int]]) -> None:
    path, _ = history
    with pytest.raises(FileExistsError):
        synthetic.build(path, years=1)


def test_cached_history_is_built_once_per_schema(tmp_path: Path) -> None:
    from prepbook.store.migrate import HEAD_REVISION

    folder = tmp_path / "cache"
    path, stats = synthetic.cached(folder, years=0.02, scale=0.1)
    assert path.name == f"history-0.02y-0.1x-b{synthetic.BUILDER}-{HEAD_REVISION}.db"
    assert stats["batches"] > 0 and stats["seconds"] > 0 and stats["peak_mb"] > 0
    assert _count(path, "SELECT count(*) FROM batches") == stats["batches"]
    built = path.stat().st_mtime_ns
    assert synthetic.cached(folder, years=0.02, scale=0.1) == (path, stats)
    assert path.stat().st_mtime_ns == built  # reused, not built again
    assert sorted(p.name for p in folder.iterdir()) == [path.name, path.with_suffix(".json").name]
