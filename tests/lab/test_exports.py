"""Exports read back with pandas hold the same rows and values as the database, and
formula-like text comes back inert."""

from __future__ import annotations

import sqlite3
from datetime import datetime
from pathlib import Path

import openpyxl
import pandas as pd
import pytest

from prepbook.cli.exports import export_table
from prepbook.errors import InvalidInput
from prepbook.lab import batches, exports
from prepbook.store.engine import open_database
from tests.cli.test_bench_flow import _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli, is_url, row_counts

FORMULA_NOTE = '=HYPERLINK("http://example.invalid/x","click")'


@pytest.fixture
def lab(bench: Cli) -> Cli:  # noqa: F811
    if is_url(bench.db):
        pytest.skip("exports are compared with SQLite files here")
    batch = _make_batch(bench)
    run = _standardize(bench, batch)["run"]
    bench.ok("review", run, "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    batches.make_batch(open_database(str(bench.db)), actor="ben", spec="NaOH-0.1N",
                       volume="500", solute_mass="2.05", notes=FORMULA_NOTE)
    bench.ok("use", batch, "--volume", "25.0", "--purpose", "@SUM(A1:A2) assay 7", user="ben")
    return bench


def _read(path: Path, fmt: str) -> pd.DataFrame:
    if fmt == "csv":
        return pd.read_csv(path, dtype=str, keep_default_na=False)
    return pd.read_excel(path, dtype=str, keep_default_na=False, engine="openpyxl")


def _db(path: Path, sql: str) -> list[tuple]:
    con = sqlite3.connect(path)
    try:
        return con.execute(sql).fetchall()
    finally:
        con.close()


def _s(value: object) -> str:
    return "" if value is None else str(value)


@pytest.mark.parametrize("fmt", ["csv", "xlsx"])
def test_runs_export_has_the_database_rows_and_unrounded_values(lab: Cli, tmp_path: Path,
                                                                fmt: str) -> None:
    out = tmp_path / f"runs.{fmt}"
    res = export_table(open_database(str(lab.db)), kind="runs", fmt=fmt, output=str(out))
    # CSV as text, parsed with Python's float(); XLSX numbers as the cells hold them.
    df = _read(out, fmt) if fmt == "csv" else pd.read_excel(out, engine="openpyxl")
    rows = _db(lab.db, "SELECT r.code, b.code, r.status, r.normality, r.factor, r.rsd_percent, "
                       "r.expanded_u, r.performed_at FROM runs r JOIN batches b ON "
                       "b.id = r.batch_id ORDER BY r.id")
    assert res.rows == len(df) == len(rows) == 1
    for (code, batch, status, n, f, rsd, big_u, at), (_, row) in zip(rows, df.iterrows(),
                                                                      strict=True):
        assert (row["run"], row["batch"], row["status"]) == (code, batch, status)
        # Computed values are the record's floats, not rounded (repr round-trips a float).
        # CSV: exactly; XLSX: openpyxl writes 16 significant digits (documented).
        rel = 0 if fmt == "csv" else 1e-15
        for column, stored in (("normality_eq_per_l", n), ("factor", f),
                               ("rsd_percent", rsd), ("expanded_u_eq_per_l", big_u)):
            assert float(row[column]) == pytest.approx(stored, rel=rel, abs=0), column
        # CSV: ISO 8601 with the zone, the stored naive UTC time plus "Z"; XLSX: a
        # date-time cell holding the stored time (tests/render/test_exports_cells.py).
        stamp = str(row["performed_at_utc"])
        assert stamp.endswith("Z") if fmt == "csv" else not stamp.endswith("Z")
        assert datetime.fromisoformat(stamp.removesuffix("Z")) == datetime.fromisoformat(at)
    assert "normality_eq_per_l" in df.columns and "temperature_c" in df.columns


@pytest.mark.parametrize("fmt", ["csv", "xlsx"])
def test_replicates_keep_the_readings_exactly_as_typed(lab: Cli, tmp_path: Path,
                                                       fmt: str) -> None:
    out = tmp_path / f"reps.{fmt}"
    export_table(open_database(str(lab.db)), kind="replicates", fmt=fmt, output=str(out))
    df = _read(out, fmt)
    rows = _db(lab.db, "SELECT amount_text, volume_ml_text FROM replicates ORDER BY run_id, "
                       "position, version")
    assert list(zip(df["standard_mass_g"], df["titrant_volume_ml"], strict=True)) == rows


@pytest.mark.parametrize("fmt", ["csv", "xlsx"])
def test_every_export_has_one_row_per_record(lab: Cli, tmp_path: Path, fmt: str) -> None:
    tables = {"batches": "batches", "runs": "runs", "replicates": "replicates", "uses": "uses",
              "assays": "assays", "audit": "audit_events"}
    counts = row_counts(lab.db, sign_ins=True)  # every event is exported, logins too
    for kind in exports.KINDS:
        out = tmp_path / f"{kind}.{fmt}"
        export_table(open_database(str(lab.db)), kind=kind, fmt=fmt, output=str(out))
        df = _read(out, fmt)
        assert len(df) == counts[tables[kind]], kind
        stamps = [c for c in df.columns if c.endswith("_utc")]
        zone = "Z" if fmt == "csv" else ""  # XLSX: date-time cells, UTC by their name
        assert stamps and all(v == "" or (v.endswith(zone) and "-" in v and ":" in v
                                          and datetime.fromisoformat(v.removesuffix(zone)))
                              for c in stamps for v in df[c]), kind


@pytest.mark.parametrize("fmt", ["csv", "xlsx"])
def test_a_note_written_as_a_formula_comes_back_inert(lab: Cli, tmp_path: Path,
                                                      fmt: str) -> None:
    db = open_database(str(lab.db))
    out = tmp_path / f"batches.{fmt}"
    res = export_table(db, kind="batches", fmt=fmt, output=str(out))
    assert res.neutralised_cells >= 1
    notes = list(_read(out, fmt)["notes"])
    assert "'" + FORMULA_NOTE in notes and FORMULA_NOTE not in notes
    uses = tmp_path / f"uses.{fmt}"
    export_table(db, kind="uses", fmt=fmt, output=str(uses))
    assert list(_read(uses, fmt)["purpose"]) == ["'@SUM(A1:A2) assay 7"]
    if fmt == "xlsx":
        # openpyxl sees a text cell, not a formula (data type "s", not "f").
        ws = openpyxl.load_workbook(out).active
        cells = [c for row in ws.iter_rows() for c in row if isinstance(c.value, str)
                 and FORMULA_NOTE in c.value]
        assert cells and all(c.data_type == "s" for c in cells)
        assert not any(c.data_type == "f" for row in ws.iter_rows() for c in row)
    else:
        raw = out.read_text(encoding="utf-8")
        assert not any(line.startswith(("=", "+", "-", "@")) or ",=" in line
                       for line in raw.splitlines())


def test_the_audit_export_is_the_chain(lab: Cli, tmp_path: Path) -> None:
    out = tmp_path / "audit.csv"
    export_table(open_database(str(lab.db)), kind="audit", fmt="csv", output=str(out))
    df = _read(out, "csv")
    assert list(df["hash"]) == [r[0] for r in _db(lab.db, "SELECT hash FROM audit_events "
                                                          "ORDER BY seq")]
    assert list(df["prev_hash"])[1:] == list(df["hash"])[:-1]


def test_since_keeps_only_later_records(lab: Cli, tmp_path: Path) -> None:
    db = open_database(str(lab.db))
    out = tmp_path / "b.csv"
    export_table(db, kind="batches", fmt="csv", output=str(out), since="2999-01-01")
    assert len(_read(out, "csv")) == 0
    assert list(pd.read_csv(out).columns)[:2] == ["batch", "spec"]


@pytest.mark.parametrize(("kwargs", "words"), [
    ({"kind": "people"}, "unknown export"),
    ({"fmt": "json"}, "unknown format"),
    ({"output": "x.xlsx"}, "should end in .csv"),
    ({"since": "yesterday"}, "not a date"),
    ({"output": "missing/x.csv"}, "does not exist"),
])
def test_bad_export_requests_write_nothing(lab: Cli, tmp_path: Path, kwargs: dict,
                                           words: str) -> None:
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    args = {"kind": "runs", "fmt": "csv", "output": "x.csv", **kwargs}
    args["output"] = str(out_dir / args["output"])
    with pytest.raises(InvalidInput, match=words):
        export_table(open_database(str(lab.db)), **args)
    assert list(out_dir.iterdir()) == []
