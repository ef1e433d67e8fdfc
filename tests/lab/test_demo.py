"""The demo lab shows the tool's range, built through the same services."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.conftest import Cli, row_counts


@pytest.fixture(scope="module")
def demo_db(tmp_path_factory: pytest.TempPathFactory) -> Path:
    from prepbook.lab import demo

    path = tmp_path_factory.mktemp("demo") / "demo-lab.db"
    demo.build(path)
    return path


def test_demo_board_shows_every_state_worth_showing(demo_db: Path) -> None:
    cli = Cli(demo_db)
    board = cli.json("status")
    states = {b["state"] for b in board}
    assert {"due", "expired", "awaiting-review", "in-service", "new"} <= states
    assert cli.json("audit", "verify")["ok"] is True


def test_demo_has_drift_a_rejection_a_secondary_and_a_dilution(demo_db: Path) -> None:
    cli = Cli(demo_db)
    board = cli.json("status")
    shows = [cli.json("batch", "show", b["batch"]) for b in board]
    runs = [r for s in shows for r in s["runs"]]
    assert any(r["status"] == "rejected" and r["reviews"][0]["reason"] for r in runs)
    assert any(r["method"] == "secondary" and r["reference_batch"] for r in runs)
    assert any(s["preparation"]["method"] == "dilution" and s["preparation"]["from_batch"]
               for s in shows)
    # Sodium hydroxide takes up CO2: its accepted normality falls run after run.
    naoh = max((s for s in shows if s["spec"] == "NaOH-0.1N"), key=lambda s: len(s["runs"]))
    accepted = [r["normality_20c"] for r in naoh["runs"] if r["status"] == "accepted"]
    assert len(accepted) >= 4
    assert all(b < a for a, b in zip(accepted, accepted[1:], strict=False))


def test_demo_never_overwrites(demo_db: Path) -> None:
    from prepbook.errors import Refused
    from prepbook.lab import demo

    before = row_counts(demo_db)
    with pytest.raises(Refused):
        demo.build(demo_db)
    assert row_counts(demo_db) == before


def test_demo_command_prints_the_board(tmp_path: Path) -> None:
    cli = Cli(tmp_path / "unused.db")
    result = cli.ok("demo", "--db", str(tmp_path / "d.db"))
    assert "Board" in result.stdout and "DUE" in result.stdout and "EXPIRED" in result.stdout


def test_demo_builds_where_a_db_typed_before_the_command_says(tmp_path: Path) -> None:
    cli = Cli(tmp_path / "lab.db")
    result = cli.ok("demo", "--json")
    assert (tmp_path / "lab.db").exists()
    assert not (tmp_path / "demo-lab.db").exists()
    assert json.loads(result.stdout)


def test_demo_refuses_a_server_url_and_writes_nothing(tmp_path: Path) -> None:
    cli = Cli("postgresql+psycopg://someone@127.0.0.1:1/nowhere")
    result = cli.refused("demo")
    assert "server URL" in result.stderr
    assert list(tmp_path.iterdir()) == []


def test_demo_weighs_on_the_simulated_balance_and_stores_curves(demo_db: Path) -> None:
    from prepbook.lab import replicate_sources
    from prepbook.store.engine import open_database

    cli = Cli(demo_db)
    weighed = [b["batch"] for b in cli.json("status")
               if any(r.from_instruments for r in
                      replicate_sources.of_batch(open_database(str(demo_db)),
                                                 b["batch"]).values())]
    assert len(weighed) == 1
    readings = next(iter(replicate_sources.of_batch(open_database(str(demo_db)),
                                                    weighed[0]).values()))
    assert [s.amount_source for s in readings.sources] == ["balance"] * 3
    assert all(s.raw and s.raw.startswith("S ") for s in readings.sources)
    assert [s.volume_source for s in readings.sources] == ["curve", "typed", "curve"]
    assert len(readings.curves) == 3
    run = cli.json("batch", "show", weighed[0])["runs"][0]
    assert any(c["name"] == "curve-endpoint" and c["passed"] for c in run["checks"])
