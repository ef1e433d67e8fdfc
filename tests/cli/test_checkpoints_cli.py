"""Checkpoints as a person meets them: the code on a printed report typed back into
`audit verify`, a rollback to a `prepbook backup` copy, a bench without the lab's key."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from pypdf import PdfReader

from tests.cli.test_bench_flow import _make_batch, bench  # noqa: F401
from tests.conftest import Cli
from tests.tampering import tamper


@pytest.fixture
def witnessed(bench: Cli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:  # noqa: F811
    """The lab's signing key and QA's witness folder, set before the next write."""
    key = tmp_path / "qa" / "lab-signing.pem"
    key.parent.mkdir()
    made = bench("audit", "signing-key", str(key))
    assert made.exit_code == 0 and "public key" in made.stdout
    assert key.stat().st_mode & 0o077 == 0  # readable by its owner only
    folder = tmp_path / "witness"
    folder.mkdir()
    monkeypatch.setenv("PREPBOOK_SIGNING_KEY_FILE", str(key))
    monkeypatch.setenv("PREPBOOK_WITNESS_FOLDER", str(folder))
    return folder


def test_the_code_read_back_from_a_printed_report_is_accepted_by_verify(
        bench: Cli, tmp_path: Path) -> None:  # noqa: F811
    batch = _make_batch(bench)
    pdf = tmp_path / "report.pdf"
    bench.ok("report", batch, "-o", str(pdf))
    # Read back as a person reads the page: its text, as laid out (pypdf; poppler's
    # pdftotext did it before and was missing on some machines, so the test was skipped).
    printed = "\n".join(page.extract_text(extraction_mode="layout")
                         for page in PdfReader(pdf).pages)
    found = re.search(r"^\s*Checkpoint (\d+-[A-Z2-7]{8})\b", printed, re.MULTILINE)
    assert found, printed
    code = found.group(1)
    verified = bench.json("audit", "verify", "--checkpoint", code)
    assert verified["ok"] and verified["witnessed_events"] == int(code.split("-")[0])
    text = bench("audit", "verify", "--checkpoint", code).stdout
    assert "cannot be ruled out" not in text
    # The trail shortened behind prepbook's back: the paper says so.
    last = verified["events"]
    tamper(bench.db, "DELETE FROM audit_events WHERE seq = ?", last)
    tamper(bench.db, "UPDATE audit_head SET seq = ?, hash = (SELECT hash FROM audit_events "
                      "WHERE seq = ?)", last - 1, last - 1)
    result = bench("audit", "verify", "--checkpoint", code)
    assert result.exit_code == 1
    assert (f"{last - 1} events, but the checkpoint code {code} (typed) attests {last}: the "
            "trail was shortened or rolled back") in result.stdout


def test_verify_without_a_witness_says_truncation_cannot_be_ruled_out(
        bench: Cli) -> None:  # noqa: F811
    _make_batch(bench)
    result = bench("audit", "verify")
    assert result.exit_code == 0
    assert "note: no witness outside the database was checked" in result.stdout
    assert "cannot be ruled out" in result.stdout


@pytest.mark.sqlite_only(reason="restores a file copy made by `prepbook backup`")
def test_a_rollback_to_a_backup_copy_is_named_by_the_witness_folder(
        bench: Cli, witnessed: Path, tmp_path: Path) -> None:  # noqa: F811
    _make_batch(bench)
    copy = tmp_path / "old-copy.db"
    bench.ok("backup", "-o", str(copy))
    _make_batch(bench)
    now = bench.json("audit", "verify")
    assert now["ok"] and now["witnessed_events"] == now["events"]
    # The old copy put in the database's place (verified where it lies: the same file).
    result = bench("audit", "verify", "--json", db=copy)
    assert result.exit_code == 1, result.stderr
    assert result.stdout, result.stderr
    rolled = json.loads(result.stdout)
    assert rolled["events"] < now["events"]
    assert any(p.startswith(f"{rolled['events']} events, but the checkpoint of ") and
               p.endswith(f"(witness folder) attests {now['events']}: the trail was "
                          "shortened or rolled back") for p in rolled["problems"])
    # Without the witness folder the old copy passes, and verify says what it cannot know.
    empty = tmp_path / "empty-witness"
    empty.mkdir()
    result = bench("audit", "verify", "--witness", str(empty), db=copy)
    assert result.exit_code == 0 and "cannot be ruled out" in result.stdout


def test_audit_checkpoint_needs_the_signing_key(bench: Cli) -> None:  # noqa: F811
    _make_batch(bench)
    result = bench.refused("audit", "checkpoint")
    assert "no signing key" in result.stderr


def test_a_bench_without_the_audit_key_refuses_with_one_line(
        bench: Cli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    # A keyed lab: the key set from the first write on.
    key = tmp_path / "audit.key"
    key.write_bytes(b"the keyed lab's secret")
    monkeypatch.setenv("PREPBOOK_AUDIT_KEY_FILE", str(key))
    cli = Cli(tmp_path / "keyed.db")
    cli.ok("init")
    cli.ok("user", "add", "ada", "--role", "admin", "--passphrase-stdin", user="ada",
           input="ada-passphrase\n")
    monkeypatch.delenv("PREPBOOK_AUDIT_KEY_FILE")
    result = cli.refused("lot", "add", "KHP", "--code", "KHP-0009", "--purity", "99.98",
                         "--expires", "2099-01-01", user="ada")
    assert "this computer has no audit key" in result.stderr
    verify = cli("audit", "verify")
    assert verify.exit_code == 1 and "it cannot be verified" in verify.stdout
    assert "audit trail verified" not in verify.stdout
