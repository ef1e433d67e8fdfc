"""The witness database and key changes as a lab meets them, through the command line.

QA makes the witness table (`audit witness-db`), names it, and every checkpoint lands
there too; `audit verify --witness-db` names a trail cut short behind prepbook's back,
and a witness that was down lists as a gap while the bench kept working. An admin
hands the audit key and the signing key over with `audit rotate-key`; verify checks
each stretch with its key (the old audit key from the keyring folder), and a bench
that kept the old key refuses to write.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.cli.test_bench_flow import _make_batch, bench  # noqa: F401
from tests.conftest import Cli, row_counts
from tests.store.test_key_rotation import _key
from tests.tampering import tamper


@pytest.fixture
def signing_key(bench: Cli, tmp_path: Path,  # noqa: F811
                monkeypatch: pytest.MonkeyPatch) -> Path:
    key = tmp_path / "qa" / "lab-signing.pem"
    key.parent.mkdir(exist_ok=True)
    bench.ok("audit", "signing-key", str(key))
    monkeypatch.setenv("PREPBOOK_SIGNING_KEY_FILE", str(key))
    return key


def test_a_witness_database_names_a_shortened_trail_and_lists_a_gap(
        bench: Cli, signing_key: Path, tmp_path: Path,  # noqa: F811
        monkeypatch: pytest.MonkeyPatch) -> None:
    witness = tmp_path / "qa" / "witness.db"
    made = bench.ok("audit", "witness-db", str(witness))
    assert "witness table prepbook_witness_checkpoints ready in sqlite:///" in made.stdout
    monkeypatch.setenv("PREPBOOK_WITNESS_DATABASE", str(witness))
    _make_batch(bench)
    ok = bench.json("audit", "verify")  # the configured witness database
    assert ok["ok"] and ok["witnessed_events"] == ok["events"] and ok["notes"] == []
    # The witness down (its file moved away): the bench works on, warned on stderr.
    moved = witness.with_name("moved.db")
    witness.rename(moved)
    before = row_counts(bench.db)
    down = bench("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                 "--balance", "BAL-1", "--json", user="ben")
    assert down.exit_code == 0, down.stderr
    assert row_counts(bench.db)["batches"] == before["batches"] + 1
    assert "NOT witnessed: the witness database" in down.stderr
    moved.rename(witness)
    gap = bench.json("audit", "verify")
    assert gap["ok"] and gap["witnessed_events"] == ok["events"]
    assert any("kept in the database are not in the witness database" in n
               for n in gap["notes"]), gap["notes"]
    # The witness back, the next write is witnessed; then the trail is cut short behind
    # prepbook's back, the database's checkpoints with it.
    _make_batch(bench)
    last = bench.json("audit", "verify")["witnessed_events"]
    tamper(bench.db, "DELETE FROM audit_checkpoints")
    tamper(bench.db, "DELETE FROM batches WHERE id = (SELECT max(id) FROM batches)")
    tamper(bench.db, "DELETE FROM audit_events WHERE seq = ?", last)
    tamper(bench.db, "UPDATE audit_head SET seq = ?, hash = (SELECT hash FROM audit_events "
                     "WHERE seq = ?)", last - 1, last - 1)
    passes = bench("audit", "verify", "--witness-db", str(tmp_path / "qa" / "empty.db"))
    assert passes.exit_code == 1, passes.stdout  # an unreadable witness is never "ok"
    assert "does not exist" in passes.stdout
    named = bench("audit", "verify", "--witness-db", f"sqlite:///{witness}")
    assert named.exit_code == 1
    assert "(witness database) attests" in named.stdout
    assert "the trail was shortened or rolled back" in named.stdout


@pytest.fixture
def keyed(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """The lab's audit key, set before the lab's first write (list it before bench)."""
    old = _key(tmp_path / "keyring", "2026.key", b"the first invented lab secret")
    monkeypatch.setenv("PREPBOOK_AUDIT_KEY_FILE", str(old))
    return old


def test_rotate_key_hands_the_audit_key_over_and_verify_checks_both_stretches(
        keyed: Path, bench: Cli, tmp_path: Path,  # noqa: F811
        monkeypatch: pytest.MonkeyPatch) -> None:
    new = _key(tmp_path / "bench", "2027.key", b"the second invented lab secret")
    _make_batch(bench)
    # Only an admin may, signed; nothing changes otherwise.
    bench.refused("audit", "rotate-key", "--audit-key", str(new), "--reason", "yearly",
                  "--passphrase-stdin", user="ben", input="ben-passphrase\n")
    changed = bench.json("audit", "rotate-key", "--audit-key", str(new), "--reason",
                         "yearly change of the lab's secret", "--passphrase-stdin",
                         user="ada", input="ada-passphrase\n")
    assert [c["kind"] for c in changed] == ["audit"]
    # A bench that kept the old key refuses to write, in one line.
    before = row_counts(bench.db)
    bench.refused("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                  "--balance", "BAL-1", user="ben")
    assert row_counts(bench.db) == before
    monkeypatch.setenv("PREPBOOK_AUDIT_KEY_FILE", str(new))
    _make_batch(bench)
    verified = bench.json("audit", "verify", "--keyring", str(tmp_path / "keyring"))
    assert verified["ok"], verified["problems"]
    monkeypatch.setenv("PREPBOOK_AUDIT_KEYRING", str(tmp_path / "keyring"))
    assert bench("audit", "verify").exit_code == 0  # the configured keyring
    monkeypatch.delenv("PREPBOOK_AUDIT_KEYRING")
    without = bench("audit", "verify")
    assert without.exit_code == 1
    assert "is not at hand" in without.stdout and "audit keyring" in without.stdout


def test_rotate_key_hands_the_signing_key_over(
        bench: Cli, signing_key: Path, tmp_path: Path,  # noqa: F811
        monkeypatch: pytest.MonkeyPatch) -> None:
    folder = tmp_path / "witness"
    folder.mkdir()
    monkeypatch.setenv("PREPBOOK_WITNESS_FOLDER", str(folder))
    _make_batch(bench)
    second = tmp_path / "qa" / "second.pem"
    bench.ok("audit", "signing-key", str(second))
    out = bench.ok("audit", "rotate-key", "--signing-key", str(second), "--reason",
                   "the first key's laptop was lost", "--passphrase-stdin", user="ada",
                   input="ada-passphrase\n").stdout
    assert "the signing key is now" in out and "first checkpoint of the new key" in out
    before = row_counts(bench.db)
    bench.refused("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                  "--balance", "BAL-1", user="ben")  # the old key no longer signs
    assert row_counts(bench.db) == before
    monkeypatch.setenv("PREPBOOK_SIGNING_KEY_FILE", str(second))
    _make_batch(bench)
    verified = bench.json("audit", "verify")
    assert verified["ok"], verified["problems"]
    assert verified["witnessed_events"] == verified["events"]


def test_rotate_key_refuses_bad_input_in_one_line(
        bench: Cli, tmp_path: Path) -> None:  # noqa: F811
    before = row_counts(bench.db)
    bench.refused("audit", "rotate-key", "--reason", "x", "--passphrase-stdin", user="ada",
                  input="ada-passphrase\n")  # no new key named
    bench.refused("audit", "rotate-key", "--audit-key", str(tmp_path / "none.key"),
                  "--reason", "x", "--passphrase-stdin", user="ada",
                  input="ada-passphrase\n")  # no audit key set here
    assert row_counts(bench.db) == before
