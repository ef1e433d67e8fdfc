"""The runs export names who reviewed each run, the decision and when it was signed (the
latest review), in CSV, XLSX and the columns `export --json` lists; a run not reviewed
yet has those cells empty."""

from __future__ import annotations

import csv
from datetime import datetime
from pathlib import Path

import openpyxl
from sqlalchemy import select

from prepbook.store.engine import open_database
from prepbook.store.models import Review, Run
from tests.cli.test_bench_flow import _at, _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli

REVIEW_COLUMNS = ["reviewer", "review_decision", "reviewed_at_utc"]


def _signed(cli: Cli) -> dict[str, tuple[str, str, datetime]]:
    db = open_database(str(cli.db))
    try:
        with db.session(write=False) as s:
            return {code: (who, decision, at) for code, who, decision, at in s.execute(
                select(Run.code, Review.reviewer, Review.decision, Review.signed_at)
                .join(Review, Review.run_id == Run.id))}
    finally:
        db.dispose()


def test_the_runs_export_has_the_reviewer_and_the_review_time(bench: Cli,  # noqa: F811
                                                              tmp_path: Path) -> None:
    batch = _make_batch(bench)
    reviewed = _standardize(bench, batch, "--temp", "21.0")["run"]
    bench.ok("review", reviewed, "--accept", "--passphrase-stdin", "--at", _at(-1, "15:00"),
             user="cleo", input="cleo-passphrase\n")
    waiting = _standardize(bench, batch)["run"]
    signed = _signed(bench)
    assert list(signed) == [reviewed]
    who, decision, at = signed[reviewed]

    listed = bench.json("export", "runs", "--format", "csv", "-o", str(tmp_path / "r.csv"))
    assert listed["columns"][-3:] == REVIEW_COLUMNS
    with (tmp_path / "r.csv").open(encoding="utf-8", newline="") as f:
        rows = {r["run"]: r for r in csv.DictReader(f)}
    assert [rows[reviewed][c] for c in REVIEW_COLUMNS] == \
        ["cleo", "accept", at.isoformat() + "Z"]
    assert [rows[waiting][c] for c in REVIEW_COLUMNS] == ["", "", ""]
    assert rows[reviewed]["temperature_c"] == "21.0"  # as typed

    bench.ok("export", "runs", "--format", "xlsx", "-o", str(tmp_path / "r.xlsx"))
    ws = openpyxl.load_workbook(tmp_path / "r.xlsx").active
    header = [c.value for c in ws[1]]
    cells = {row[0].value: dict(zip(header, row, strict=True))
             for row in ws.iter_rows(min_row=2)}
    mine = cells[reviewed]
    assert (mine["reviewer"].value, mine["review_decision"].value) == (who, decision)
    assert mine["reviewed_at_utc"].data_type == "d" and mine["reviewed_at_utc"].value == at
    assert mine["temperature_c"].data_type == "n" and mine["temperature_c"].value == 21.0
    assert mine["blank_ml"].data_type == "n"
    assert mine["performed_at_utc"].data_type == "d"
    assert cells[waiting]["reviewer"].value is None
    assert cells[waiting]["reviewed_at_utc"].value is None
