"""Long commands (the demo build, `audit verify`, exports, reports) show a progress bar
on stderr when it is a terminal; nothing with --json or -q, and stdout stays the
command's own."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from prepbook.cli.app import app


@pytest.fixture
def terminal(monkeypatch: pytest.MonkeyPatch) -> None:
    """stderr taken for a terminal, as Rich is told by TTY_COMPATIBLE=1."""
    monkeypatch.setenv("TTY_COMPATIBLE", "1")


def _demo(path: Path, *extra: str) -> tuple[int, str, str]:
    result = CliRunner().invoke(app, [*extra[:1], "demo", "--db", str(path), *extra[1:]])
    return result.exit_code, result.stdout, result.stderr


def test_demo_and_verify_show_their_progress_on_a_terminal(
        tmp_path: Path, terminal: None) -> None:
    from prepbook.lab import auditing, demo
    from prepbook.store.engine import open_database

    path = tmp_path / "demo.db"
    code, out, err = _demo(path, "-v")  # -v: the log and the bar both on stderr
    assert code == 0, err
    steps = demo.steps()
    assert "building the demo lab" in err and f"{steps}/{steps}" in err
    assert "building the demo lab" not in out

    result = CliRunner().invoke(app, ["--db", str(path), "audit", "verify"])
    assert result.exit_code == 0, result.stderr
    db = open_database(str(path))
    try:
        size = auditing.verify_size(db)
    finally:
        db.dispose()
    # every event and every audited row read, counted by the bar
    assert "verifying the audit trail" in result.stderr and f"{size}/{size}" in result.stderr
    assert result.stdout.startswith("audit trail verified")


def test_json_and_quiet_draw_no_progress(tmp_path: Path, terminal: None) -> None:
    path = tmp_path / "demo.db"
    code, out, err = _demo(path, "-q", "--json")
    assert code == 0, err
    assert isinstance(json.loads(out), list)  # stdout is the JSON document alone
    assert err == ""
    for args in (["-q", "audit", "verify"], ["audit", "verify", "--json"]):
        result = CliRunner().invoke(app, ["--db", str(path), *args])
        assert result.exit_code == 0 and result.stderr == "", (args, result.stderr)
    assert json.loads(result.stdout)["ok"] is True


def test_no_progress_when_stderr_is_not_a_terminal(tmp_path: Path) -> None:
    result = CliRunner().invoke(app, ["demo", "--db", str(tmp_path / "demo.db")])
    assert result.exit_code == 0 and result.stderr == ""
    assert "demo lab built" in result.stdout


def test_export_and_report_show_their_steps_on_a_terminal(tmp_path: Path,
                                                          terminal: None) -> None:
    path = tmp_path / "demo.db"
    assert _demo(path)[0] == 0
    batch = json.loads(CliRunner().invoke(app, ["--db", str(path), "status", "--json"])
                       .stdout)[0]["batch"]
    for args, said in (
            (["export", "runs", "--format", "xlsx", "-o", str(tmp_path / "runs.xlsx")],
             "exporting runs"),
            (["report", batch, "-o", str(tmp_path / "r.pdf")], f"report for {batch}")):
        result = CliRunner().invoke(app, ["--db", str(path), *args])
        assert result.exit_code == 0, result.stderr
        assert said in result.stderr and "2/2" in result.stderr, result.stderr
        assert said not in result.stdout
        quiet = CliRunner().invoke(app, ["--db", str(path), *args, "--replace", "--json"])
        assert quiet.exit_code == 0 and quiet.stderr == "", quiet.stderr
        json.loads(quiet.stdout)
