"""Label prints are recorded with what they showed; outdated labels are found."""

from __future__ import annotations

import json
import sqlite3
from pathlib import Path

import pytest

from prepbook.cli.labels import print_label
from prepbook.errors import InvalidInput, NotFound, Refused
from prepbook.lab import auditing, labels
from prepbook.store.engine import open_database
from tests.cli.test_bench_flow import _at, _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli, is_url, row_counts


def _accept(cli: Cli, run: str) -> None:
    cli.ok("review", run, "--accept", "--passphrase-stdin", user="cleo",
           input="cleo-passphrase\n")


@pytest.fixture
def lab(bench: Cli) -> tuple[Cli, str, str]:  # noqa: F811
    if is_url(bench.db):
        pytest.skip("label prints are checked on SQLite files here")
    batch = _make_batch(bench)
    run = _standardize(bench, batch)["run"]
    _accept(bench, run)
    return bench, batch, run


def test_a_print_records_the_run_factor_and_dates_it_showed(lab: tuple[Cli, str, str],
                                                             tmp_path: Path) -> None:
    cli, batch, run = lab
    db = open_database(str(cli.db))
    res = print_label(db, actor="ben", code=batch, output=str(tmp_path / "l.pdf"),
                      size="62x29mm", copies=2)
    assert Path(res.file).is_file() and res.copies == 2 and res.run == run
    shown = cli.json("batch", "show", batch)
    con = sqlite3.connect(cli.db)
    try:
        row = con.execute("SELECT b.code, r.code, lp.factor, lp.restandardize_by, lp.expires, "
                          "lp.size, lp.copies, lp.printed_by, lp.shown_json FROM label_prints lp "
                          "JOIN batches b ON b.id = lp.batch_id JOIN runs r ON r.id = lp.run_id"
                          ).fetchall()
    finally:
        con.close()
    assert len(row) == 1
    code, run_code, factor, restd, expires, size, copies, by, shown_json = row[0]
    assert (code, run_code, size, copies, by) == (batch, run, "62x29mm", 2, "ben")
    assert factor == shown["runs"][0]["factor"]
    assert (restd, expires) == (shown["restandardize_by"], shown["expires"])
    assert json.loads(shown_json)["code"] == batch
    # The print is audited like every other write, and the trail still verifies.
    assert auditing.verify(db).ok is True
    assert any(e.action == "label.print" for e in auditing.log(db, record="label_prints"))


def test_a_newer_accepted_run_makes_the_label_stale(lab: tuple[Cli, str, str],
                                                    tmp_path: Path) -> None:
    cli, batch, first = lab
    db = open_database(str(cli.db))
    print_label(db, actor="ben", code=batch, output=str(tmp_path / "l.pdf"))
    assert labels.stale_labels(db) == []
    second = _standardize(cli, batch)["run"]
    # Awaiting review: the label still shows the accepted result, so it is not stale yet.
    assert labels.stale_labels(db) == []
    _accept(cli, second)
    stale = labels.stale_labels(db)
    assert [s.batch for s in stale] == [batch]
    assert stale[0].shown.run == first and stale[0].current.run == second
    assert any(second in r for r in stale[0].reasons)
    # A fresh label clears it.
    print_label(db, actor="ben", code=batch, output=str(tmp_path / "l2.pdf"))
    assert labels.stale_labels(db) == []


def test_a_label_printed_before_standardization_goes_stale_once_accepted(
        bench: Cli, tmp_path: Path) -> None:  # noqa: F811
    if is_url(bench.db):
        pytest.skip("SQLite file only")
    batch = _make_batch(bench)
    db = open_database(str(bench.db))
    res = print_label(db, actor="ben", code=batch, output=str(tmp_path / "new.pdf"))
    assert res.run is None and res.state == "new"
    _accept(bench, _standardize(bench, batch)["run"])
    assert [s.batch for s in labels.stale_labels(db)] == [batch]


def test_a_lot_label_is_recorded_against_the_lot(lab: tuple[Cli, str, str],
                                                 tmp_path: Path) -> None:
    cli, _, _ = lab
    db = open_database(str(cli.db))
    res = print_label(db, actor="ben", code="KHP-0001", lot=True,
                      output=str(tmp_path / "lot.pdf"))
    assert res.kind == "lot"
    con = sqlite3.connect(cli.db)
    try:
        assert con.execute("SELECT l.code FROM label_prints lp JOIN lots l ON l.id = lp.lot_id"
                           ).fetchall() == [("KHP-0001",)]
    finally:
        con.close()


@pytest.mark.parametrize(("kwargs", "error", "words"), [
    ({"code": "NO-SUCH-BATCH"}, NotFound, "no batch"),
    ({"code": "KHP-0001"}, NotFound, "pass --lot"),
    ({"size": "71x37mm"}, InvalidInput, "unknown label size"),
    ({"sheet": "a3"}, InvalidInput, "unknown sheet"),
    ({"copies": 0}, InvalidInput, "--copies"),
    ({"output": "nowhere/l.pdf"}, InvalidInput, "does not exist"),
    ({"output": "l.txt"}, InvalidInput, ".pdf"),
])
def test_bad_input_writes_no_row_and_no_file(lab: tuple[Cli, str, str], tmp_path: Path,
                                             kwargs: dict, error: type, words: str) -> None:
    cli, batch, _ = lab
    db = open_database(str(cli.db))
    args = {"actor": "ben", "code": batch, "output": str(tmp_path / "out" / "l.pdf")}
    (tmp_path / "out").mkdir()
    if "output" in kwargs:
        kwargs = {**kwargs, "output": str(tmp_path / "out" / kwargs["output"])}
    before = row_counts(cli.db)
    with pytest.raises(error, match=words):
        print_label(db, **{**args, **kwargs})
    assert row_counts(cli.db) == before
    assert list((tmp_path / "out").iterdir()) == []


def test_an_existing_file_is_replaced_only_when_asked(lab: tuple[Cli, str, str],
                                                      tmp_path: Path) -> None:
    cli, batch, _ = lab
    db = open_database(str(cli.db))
    target = tmp_path / "l.pdf"
    target.write_bytes(b"keep me")
    before = row_counts(cli.db)
    with pytest.raises(InvalidInput, match="already exists"):
        print_label(db, actor="ben", code=batch, output=str(target))
    assert target.read_bytes() == b"keep me" and row_counts(cli.db) == before
    print_label(db, actor="ben", code=batch, output=str(target), replace=True)
    assert target.read_bytes().startswith(b"%PDF")
    assert list(tmp_path.glob("*.part")) == []  # no temporary file left


def test_a_failure_while_drawing_leaves_no_file_and_no_row(lab: tuple[Cli, str, str],
                                                           tmp_path: Path,
                                                           monkeypatch: pytest.MonkeyPatch
                                                           ) -> None:
    from prepbook.render import labels as render

    cli, batch, _ = lab
    db = open_database(str(cli.db))

    def broken(*args: object, **kw: object) -> None:
        raise OSError("disk full")

    monkeypatch.setattr(render, "label_pdf", lambda *a, **k: (b"%PDF-partial", None))
    monkeypatch.setattr(Path, "write_bytes", broken)
    before = row_counts(cli.db)
    with pytest.raises(OSError):
        print_label(db, actor="ben", code=batch, output=str(tmp_path / "l.pdf"))
    monkeypatch.undo()
    assert row_counts(cli.db) == before
    assert list(tmp_path.glob("*l.pdf*")) == []


def test_a_retired_batch_is_not_relabelled(lab: tuple[Cli, str, str], tmp_path: Path) -> None:
    cli, batch, _ = lab
    cli.ok("batch", "retire", batch, "--reason", "spilled", "--passphrase-stdin", user="ben",
           input="ben-passphrase\n")
    db = open_database(str(cli.db))
    with pytest.raises(Refused, match="retired"):
        print_label(db, actor="ben", code=batch, output=str(tmp_path / "l.pdf"))


def test_the_service_records_the_content_it_delivers(lab: tuple[Cli, str, str],
                                                     tmp_path: Path) -> None:
    """The service hands the edge what the label shows and records exactly that."""
    from prepbook.lab.label_content import BatchLabel
    from prepbook.records import as_data

    cli, batch, run = lab
    db = open_database(str(cli.db))
    seen: list[object] = []

    class Drawn:
        font_pt = 6.5
        notes = ("packed",)

    def deliver(content: object, record: object) -> Drawn:
        seen.append(content)
        record()  # type: ignore[operator]
        return Drawn()

    res = labels.print_label(db, actor="ben", code=batch, size="70x37mm", copies=1,
                             file=str(tmp_path / "x.pdf"), deliver=deliver)
    assert len(seen) == 1 and isinstance(seen[0], BatchLabel)
    assert (seen[0].code, seen[0].run) == (batch, run)
    assert (res.run, res.font_pt, res.notes) == (run, 6.5, ("packed",))
    con = sqlite3.connect(cli.db)
    try:
        stored = con.execute("SELECT shown_json FROM label_prints").fetchone()[0]
    finally:
        con.close()
    assert json.loads(stored) == json.loads(json.dumps(as_data(seen[0])))


@pytest.mark.parametrize("how", ["never records", "fails after recording"])
def test_a_delivery_that_does_not_finish_records_nothing(lab: tuple[Cli, str, str],
                                                        tmp_path: Path, how: str) -> None:
    """No row without a delivered file: a file move that fails after the row was written
    rolls it back, and a delivery that never records is refused."""
    cli, batch, _ = lab
    db = open_database(str(cli.db))

    def deliver(content: object, record: object) -> object:
        if how == "never records":
            return None
        record()  # type: ignore[operator]
        raise InvalidInput("cannot write x.pdf: disk full")

    before = row_counts(cli.db)
    with pytest.raises((RuntimeError, InvalidInput)):
        labels.print_label(db, actor="ben", code=batch, size="70x37mm", copies=1,
                           file=str(tmp_path / "x.pdf"), deliver=deliver)
    assert row_counts(cli.db) == before
