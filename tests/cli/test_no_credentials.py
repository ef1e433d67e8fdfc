"""Secrets stay secret, and a credential changes only where the trail says so.

Attacks: anyone who may run `prepbook export audit` (or read the database's JSON) looks
for passphrase hashes to attack offline; someone with write access to the database
replaces a user's passphrase hash with one whose passphrase they know, signs as that
user, and puts the original hash back.
"""

from __future__ import annotations

import json
import shutil
import zipfile
from pathlib import Path

import pytest
from sqlalchemy import create_engine, select, text
from sqlalchemy.pool import NullPool

from prepbook.lab.common import user_named, write
from prepbook.lab.exports import KINDS
from prepbook.lab.security import hash_passphrase
from prepbook.render.exports import FORMATS
from prepbook.store.engine import open_database
from prepbook.store.models import AuditEvent
from prepbook.store.snapshot import fingerprint
from tests.cli.test_bench_flow import _make_batch, bench  # noqa: F401
from tests.cli.test_integrity import recorded  # noqa: F401
from tests.cli.test_tamper_every_table import every_table  # noqa: F401
from tests.conftest import Cli, is_url, raw_sql
from tests.tampering import guarded_again

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"
OLD_LAB = FIXTURES / "lab-ff8077f934d0.sqlite3"
ARGON2 = "$argon2"


def _every_text_cell(db: Path | str) -> list[tuple[str, str, str]]:
    """(table, column, text) of every non-empty cell of every table, read directly;
    the users' passphrase_hash column itself (the one place the hash belongs) left out."""
    engine = create_engine(str(db) if is_url(db) else f"sqlite:///{db}", poolclass=NullPool)
    cells = []
    try:
        from sqlalchemy import inspect

        with engine.connect() as conn:
            for table in inspect(conn).get_table_names():
                columns = [c["name"] for c in inspect(conn).get_columns(table)]
                for row in conn.execute(text(f'SELECT * FROM "{table}"')):
                    for column, value in zip(columns, row, strict=True):
                        if value is not None and (table, column) != ("users",
                                                                    "passphrase_hash"):
                            cells.append((table, column, str(value)))
    finally:
        engine.dispose()
    return cells


def _hashes(db: Path | str) -> list[str]:
    engine = create_engine(str(db) if is_url(db) else f"sqlite:///{db}", poolclass=NullPool)
    try:
        with engine.connect() as conn:
            found = conn.execute(text("SELECT passphrase_hash FROM users")).scalars().all()
    finally:
        engine.dispose()
    assert found and all(h.startswith(ARGON2) for h in found), found
    return list(found)


def _leaks(texts: list[tuple[str, str]], hashes: list[str]) -> list[str]:
    """Where any hash, or anything shaped like one, appears in ``texts``."""
    return [where for where, body in texts
            if ARGON2 in body or any(h in body for h in hashes)]


def _exported_texts(cli: Cli, out: Path) -> list[tuple[str, str]]:
    """The text of every export in every format (XLSX: every part of the archive)."""
    texts = []
    for kind in KINDS:
        for fmt in FORMATS:
            path = out / f"{kind}.{fmt}"
            cli.ok("export", kind, "--format", fmt, "-o", str(path), user="ada")
            if fmt == "xlsx":
                with zipfile.ZipFile(path) as archive:
                    texts += [(f"{path.name}:{part}", archive.read(part).decode("utf-8"))
                              for part in archive.namelist()]
            else:
                texts.append((path.name, path.read_text(encoding="utf-8")))
    return texts


def test_no_table_and_no_export_holds_a_passphrase_hash(every_table: Cli,  # noqa: F811
                                                        tmp_path: Path) -> None:
    cli = every_table
    hashes = _hashes(cli.db)
    cells = [(f"{t}.{c}", body) for t, c, body in _every_text_cell(cli.db)]
    assert any(where == "audit_events.values" for where, _ in cells)
    assert _leaks(cells, hashes) == []
    assert _leaks(_exported_texts(cli, tmp_path), hashes) == []
    shown = [("user list", cli.ok("user", "list", "--json").stdout),
             ("audit log", cli.ok("audit", "log", "--json").stdout)]
    assert _leaks(shown, hashes) == []
    # The trail holds each user's credential as its fingerprint, so a change is seen.
    events = [json.loads(body) for where, body in cells if where == "audit_events.values"]
    fingerprints = {e["passphrase_hash"] for e in events if "passphrase_hash" in e}
    assert fingerprints == {fingerprint(h) for h in hashes}


@pytest.mark.sqlite_only(reason="the fixture is an SQLite file from an earlier release")
def test_an_old_lab_whose_trail_holds_hashes_exports_only_fingerprints(tmp_path: Path) -> None:
    path = tmp_path / "old.db"
    shutil.copyfile(OLD_LAB, path)
    hashes = _hashes(path)
    raw = [(f"{t}.{c}", body) for t, c, body in _every_text_cell(path)]
    assert _leaks(raw, hashes), "the old trail should hold the hashes themselves"
    cli = Cli(path)
    cli.ok("init", user="ada")
    assert cli.json("audit", "verify")["ok"] is True  # old events still verify
    assert _leaks(_exported_texts(cli, tmp_path), hashes) == []


# ------------------------------------------------------------------ a swapped credential


def _swap_hash(db: Path | str, name: str, new_hash: str) -> str:
    """Put ``new_hash`` in place of a user's passphrase hash, no event; the old hash."""
    engine = create_engine(str(db) if is_url(db) else f"sqlite:///{db}", poolclass=NullPool)
    try:
        with engine.connect() as conn:
            old = conn.execute(text("SELECT passphrase_hash FROM users WHERE name = :n"),
                               {"n": name}).scalar_one()
    finally:
        engine.dispose()
    with guarded_again(db):  # the careful forger puts the guards back
        raw_sql(db, "UPDATE users SET passphrase_hash = ? WHERE name = ?", new_hash, name)
    return str(old)


def _credential_problems(cli: Cli) -> list[str]:
    result = cli("audit", "verify", "--json")
    assert result.exit_code == 1, result.stdout
    return [p for p in json.loads(result.stdout)["problems"] if "credential" in p]


def test_a_signature_made_with_a_swapped_hash_is_found_through_todays_signed_actions(
        bench: Cli) -> None:  # noqa: F811
    """ben has one failed attempt; the forger swaps his hash, signs a retirement as him
    (which clears the count: an event on his row), and puts the hash back."""
    batch = _make_batch(bench)
    bench.refused("batch", "retire", batch, "--reason", "spilled", "--passphrase-stdin",
                  user="ben", input="a wrong guess\n")
    original = _swap_hash(bench.db, "ben", hash_passphrase("forger-knows-this"))
    bench.ok("batch", "retire", batch, "--reason", "spilled", "--passphrase-stdin",
             user="ben", input="forger-knows-this\n")
    _swap_hash(bench.db, "ben", original)
    cleared = [e for e in bench.json("audit", "log", "--record", "users")
               if e["action"] == "auth.cleared"][-1]
    problems = _credential_problems(bench)
    assert problems == [
        f"users #2 (name ben): the credential changed at audit event #{cleared['seq']} "
        "(auth.cleared), which may not change it (only user.add, user.passphrase, "
        "user.reset): the passphrase hash was swapped outside prepbook"]


def test_a_signature_event_on_the_signers_row_finds_a_swapped_hash(bench: Cli) -> None:  # noqa: F811
    """Every signature writes a "user.signed" event on the signer's row (as the session
    work makes it); written here through the service layer's one write path."""
    original = _swap_hash(bench.db, "cleo", hash_passphrase("forger-knows-this"))
    db = open_database(str(bench.db))
    try:
        with db.session() as s:
            cleo = user_named(s, "cleo")
            write(s, "cleo", "user.signed", cleo, reason="reviewed and accepted: R-1")
            seq = s.scalars(select(AuditEvent.seq).order_by(AuditEvent.seq.desc())).first()
    finally:
        db.dispose()
    _swap_hash(bench.db, "cleo", original)
    problems = _credential_problems(bench)
    assert problems == [
        f"users #3 (name cleo): the credential changed at audit event #{seq} (user.signed), "
        "which may not change it (only user.add, user.passphrase, user.reset): the "
        "passphrase hash was swapped outside prepbook"]
    # The row put back is named too: it differs from the signature's snapshot.
    result = bench("audit", "verify", "--json")
    assert any(p == "users #3 (name cleo) differs from its last audited state in: "
               "passphrase_hash" for p in json.loads(result.stdout)["problems"])


def test_a_new_passphrase_through_a_credential_action_is_no_problem(bench: Cli) -> None:  # noqa: F811
    db = open_database(str(bench.db))
    try:
        with db.session() as s:
            ben = user_named(s, "ben")
            ben.passphrase_hash = hash_passphrase("a new passphrase for ben")
            write(s, "ada", "user.reset", ben, reason="forgotten")
            write(s, "ben", "user.signed", ben, reason="recorded: a use")
    finally:
        db.dispose()
    assert bench.json("audit", "verify")["ok"] is True
