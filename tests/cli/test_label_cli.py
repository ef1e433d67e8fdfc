"""prepbook label / report / export through the command line, including refusals."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.conftest import Cli, row_counts


@pytest.fixture(scope="module")
def demo_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    from prepbook.lab import demo

    path = tmp_path_factory.mktemp("demo") / "d.db"
    demo.build(path)
    return path


@pytest.fixture
def demo_cli(demo_file: Path, tmp_path: Path) -> Cli:
    import sqlite3

    copy = tmp_path / "d.db"
    source, target = sqlite3.connect(demo_file), sqlite3.connect(copy)
    try:
        source.backup(target)  # includes what is still in the WAL
    finally:
        source.close()
        target.close()
    return Cli(copy)


def _batch(cli: Cli, state: str = "in-service") -> str:
    return next(b["batch"] for b in cli.json("status") if b["state"] == state)


def test_label_writes_a_pdf_and_reports_what_it_showed(demo_cli: Cli, tmp_path: Path) -> None:
    code = _batch(demo_cli)
    out = tmp_path / "l.pdf"
    res = demo_cli.json("label", code, "-o", str(out), "--size", "4x2in", "--copies", "2",
                        user="ines")
    assert out.read_bytes().startswith(b"%PDF") and res["copies"] == 2
    assert res["run"] and res["factor"] and res["size"] == "4x2in"
    human = demo_cli.ok("label", code, "-o", str(out), "--replace", user="ines").stdout
    assert code in human and "written to" in human
    assert demo_cli.json("label", "--stale") == []


def test_default_file_name_is_in_the_working_folder(demo_cli: Cli, tmp_path: Path,
                                                    monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    code = _batch(demo_cli)
    demo_cli.ok("label", code, user="ines")
    assert (tmp_path / f"label-{code}.pdf").is_file()


def test_a_lot_label(demo_cli: Cli, tmp_path: Path) -> None:
    lots = demo_cli.json("lot", "list")
    out = tmp_path / "lot.pdf"
    res = demo_cli.json("label", lots[0]["code"], "--lot", "-o", str(out), user="ines")
    assert res["kind"] == "lot" and out.is_file()


@pytest.mark.parametrize(("args", "words"), [
    (["label", "NO-SUCH", "-o", "{tmp}/a.pdf"], "no batch"),
    (["label", "{code}", "-o", "{tmp}/a.pdf", "--size", "5x5in"], "unknown label size"),
    (["label", "{code}", "-o", "{tmp}/missing/a.pdf"], "does not exist"),
    (["label", "{code}", "-o", "{tmp}/a.pdf", "--sheet", "tabloid"], "unknown sheet"),
    (["label", "{code}", "--stale"], "--stale"),
    (["label"], "give a batch code"),
    (["report", "NO-SUCH", "-o", "{tmp}/r.pdf"], "no batch"),
    (["report", "{code}", "-o", "{tmp}/missing/r.pdf"], "does not exist"),
    (["export", "people", "--format", "csv", "-o", "{tmp}/e.csv"], "unknown export"),
    (["export", "runs", "--format", "ods", "-o", "{tmp}/e.ods"], "unknown format"),
    (["export", "runs", "--format", "csv", "-o", "{tmp}/missing/e.csv"], "does not exist"),
])
def test_refusals_exit_1_with_one_line_and_leave_no_file(demo_cli: Cli, tmp_path: Path,
                                                          args: list[str], words: str) -> None:
    out = tmp_path / "out"
    out.mkdir()
    code = _batch(demo_cli)
    before = row_counts(demo_cli.db)
    filled = [a.format(tmp=out, code=code) for a in args]
    result = demo_cli.refused(*filled, user="ines")
    assert words in result.stderr
    assert row_counts(demo_cli.db) == before
    assert list(out.rglob("*")) == []


def test_an_existing_output_is_kept_without_replace(demo_cli: Cli, tmp_path: Path) -> None:
    out = tmp_path / "runs.csv"
    out.write_text("mine\n")
    demo_cli.refused("export", "runs", "--format", "csv", "-o", str(out))
    assert out.read_text() == "mine\n"
    demo_cli.ok("export", "runs", "--format", "csv", "-o", str(out), "--replace")
    assert out.read_text().startswith("run,batch")


def test_report_and_export_commands(demo_cli: Cli, tmp_path: Path) -> None:
    code = next(b["batch"] for b in demo_cli.json("status") if b["spec"] == "NaOH-0.1N")
    res = demo_cli.json("report", code, "-o", str(tmp_path / "r.pdf"))
    assert res["audit_ok"] is True and res["pages"] >= 1
    exp = demo_cli.json("export", "replicates", "--format", "xlsx", "-o",
                        str(tmp_path / "r.xlsx"), "--since", "2000-01-01")
    assert exp["rows"] > 10 and "titrant_volume_ml" in exp["columns"]
    assert json.loads(demo_cli.ok("audit", "verify", "--json").stdout)["ok"] is True
