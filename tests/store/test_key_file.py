"""The audit key file: a regular file of sensible size, kept private.

Attacks and accidents: PREPBOOK_AUDIT_KEY_FILE pointed at /dev/zero or /dev/urandom
(read whole, memory runs out), at a FIFO (the read waits for ever), at a one-byte
file (a key anyone can guess), or at a file the whole lab can read.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from prepbook.errors import InvalidInput
from prepbook.store.audit import chain
from prepbook.store.audit.chain import KEY_ENV, read_key

posix_only = pytest.mark.skipif(os.name != "posix", reason="POSIX devices, FIFOs and modes")


def _key_at(monkeypatch: pytest.MonkeyPatch, path: Path | str) -> None:
    monkeypatch.setenv(KEY_ENV, str(path))


def _private(path: Path, data: bytes) -> Path:
    path.write_bytes(data)
    path.chmod(0o600)
    return path


@posix_only
@pytest.mark.parametrize("device", ["/dev/zero", "/dev/urandom"])
def test_a_device_is_refused_before_any_read(monkeypatch: pytest.MonkeyPatch,
                                             device: str) -> None:
    _key_at(monkeypatch, device)
    with pytest.raises(InvalidInput, match="is not a regular file"):
        read_key()


@posix_only
def test_a_fifo_is_refused_without_waiting(monkeypatch: pytest.MonkeyPatch,
                                           tmp_path: Path) -> None:
    fifo = tmp_path / "key.fifo"
    os.mkfifo(fifo)
    _key_at(monkeypatch, fifo)
    with pytest.raises(InvalidInput, match="is not a regular file"):
        read_key()  # no writer ever opens it: a plain read would wait for ever


@pytest.mark.parametrize(("data", "words"), [
    (b"", "is empty"),
    (b"x", "holds only 1 bytes"),
    (b"fifteen-bytes!!\n", "holds only 15 bytes"),
    (b"k" * (chain.KEY_MAX_BYTES + 1), f"holds {chain.KEY_MAX_BYTES + 1} bytes"),
])
def test_a_key_too_short_or_too_long_is_refused(monkeypatch: pytest.MonkeyPatch,
                                                tmp_path: Path, data: bytes,
                                                words: str) -> None:
    _key_at(monkeypatch, _private(tmp_path / "lab.key", data))
    with pytest.raises(InvalidInput, match=words):
        read_key()


def test_a_private_key_of_sixteen_bytes_or_more_is_read(monkeypatch: pytest.MonkeyPatch,
                                                        tmp_path: Path,
                                                        capsys: pytest.CaptureFixture[str]
                                                        ) -> None:
    _key_at(monkeypatch, _private(tmp_path / "lab.key", b"sixteen-bytes-ok\n"))
    assert read_key() == b"sixteen-bytes-ok"
    assert capsys.readouterr().err == ""


@posix_only
def test_a_key_others_can_read_is_warned_about_once(monkeypatch: pytest.MonkeyPatch,
                                                    tmp_path: Path,
                                                    capsys: pytest.CaptureFixture[str]) -> None:
    key = _private(tmp_path / "lab.key", b"a lab secret kept outside the database")
    key.chmod(0o644)
    _key_at(monkeypatch, key)
    assert read_key() == b"a lab secret kept outside the database"
    read_key()  # read on every event: warned once
    lines = capsys.readouterr().err.splitlines()
    assert lines == [f"prepbook: warning: the audit key file {key} is readable by group or "
                     f"others; make it private (chmod 600 {key})"]


@posix_only
def test_a_write_with_a_device_for_a_key_is_one_line(monkeypatch: pytest.MonkeyPatch,
                                                     tmp_path: Path) -> None:
    from tests.conftest import Cli, row_counts

    cli = Cli(tmp_path / "lab.db")
    cli.ok("init")
    before = row_counts(cli.db)
    _key_at(monkeypatch, "/dev/zero")
    result = cli.refused("user", "add", "ada", "--role", "admin", "--passphrase-stdin",
                         user="ada", input="ada-passphrase\n")
    assert "is not a regular file" in result.stderr
    assert row_counts(cli.db) == before
