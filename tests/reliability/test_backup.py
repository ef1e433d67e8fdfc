"""`prepbook backup -o FILE`: a consistent online copy of a SQLite database that
opens as a database of its own, verifies, and holds every row (issue 6)."""

from __future__ import annotations

import sqlite3
import threading
from pathlib import Path

import pytest

from prepbook.store.engine import open_database
from tests.conftest import Cli, row_counts
from tests.reliability.lab import bench_cycle, build_lab


@pytest.fixture(scope="module")
def lab_file(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, str]:
    path = tmp_path_factory.mktemp("lab") / "lab.db"
    return path, build_lab(str(path))


@pytest.fixture
def lab(lab_file: tuple[Path, str], tmp_path: Path) -> tuple[Cli, str]:
    """A private copy of the module's lab (SQLite's backup API: WAL content included)."""
    path = tmp_path / "lab.db"
    source, dest = sqlite3.connect(lab_file[0]), sqlite3.connect(path)
    try:
        source.backup(dest)
    finally:
        source.close()
        dest.close()
    return Cli(path), lab_file[1]


def test_a_restored_copy_verifies_and_holds_every_row(lab: tuple[Cli, str],
                                                      tmp_path: Path) -> None:
    cli, _ = lab
    copy = tmp_path / "copies" / "lab-copy.db"
    copy.parent.mkdir()
    report = cli.json("backup", "-o", str(copy))
    assert report["backup"] == str(copy.resolve())
    assert report["events"] == cli.json("audit", "verify")["events"]
    restored = Cli(copy)  # the copy opened as the database
    verdict = restored.json("audit", "verify")
    assert verdict["ok"] is True and verdict["problems"] == []
    assert row_counts(copy) == row_counts(cli.db)
    assert restored.json("status") == cli.json("status")
    # The copy is a working database: a bench can carry on in it.
    restored.ok("use", cli.json("status")[0]["batch"], "--volume", "10", "--purpose", "assay",
                user="ben")
    assert restored.json("audit", "verify")["ok"] is True


def test_an_existing_file_is_never_overwritten(lab: tuple[Cli, str], tmp_path: Path) -> None:
    cli, _ = lab
    taken = tmp_path / "taken.db"
    taken.write_bytes(b"a lab's other file")
    before = row_counts(cli.db)
    result = cli.refused("backup", "-o", str(taken))
    assert "never overwrites" in result.stderr
    assert taken.read_bytes() == b"a lab's other file"
    assert row_counts(cli.db) == before


@pytest.mark.parametrize("where", ["missing/folder/copy.db", "lab.db"])
def test_an_impossible_target_is_refused_and_nothing_is_written(
        lab: tuple[Cli, str], tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
        where: str) -> None:
    cli, _ = lab
    monkeypatch.chdir(tmp_path)
    def files() -> list[str]:  # SQLite's own -wal/-shm files come and go with connections
        return sorted(p.name for p in tmp_path.rglob("*") if not p.name.endswith(("-wal", "-shm")))

    names = files()
    cli.refused("backup", "-o", where)
    assert files() == names


def test_a_copy_taken_while_a_bench_writes_is_consistent(lab: tuple[Cli, str],
                                                         tmp_path: Path) -> None:
    cli, in_service = lab
    stop = threading.Event()
    errors: list[BaseException] = []

    def bench() -> None:
        db = open_database(str(cli.db))
        try:
            i = 0
            while not stop.is_set():
                bench_cycle(db, "ben", in_service, f"online-{i}")
                i += 1
        except BaseException as exc:  # pragma: no cover - reported below
            errors.append(exc)
        finally:
            db.dispose()

    writer = threading.Thread(target=bench)
    writer.start()
    try:
        copies = []
        for n in range(3):
            copies.append(tmp_path / f"copy-{n}.db")
            cli.ok("backup", "-o", str(copies[-1]))
    finally:
        stop.set()
        writer.join(60)
    assert errors == []
    for copy in copies:
        verdict = Cli(copy).json("audit", "verify")
        assert verdict["ok"] is True, verdict["problems"]
    # Each later copy holds at least what the earlier one did.
    events = [Cli(c).json("audit", "verify")["events"] for c in copies]
    assert events == sorted(events)


def test_on_postgresql_it_says_how_to_use_pg_dump_and_writes_nothing(tmp_path: Path) -> None:
    # No server is contacted: the advice needs only the address.
    cli = Cli("postgresql+psycopg://lab@db.example/prepbook")
    target = tmp_path / "copy.dump"
    result = cli.refused("backup", "-o", str(target))
    assert "pg_dump" in result.stderr and "postgresql://lab@db.example/prepbook" in result.stderr
    assert not target.exists()
