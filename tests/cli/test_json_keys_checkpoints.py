"""The JSON keys `audit verify` adds for checkpoints, and those of `audit checkpoint`,
are a contract: scripts (a QA schedule, say) read them."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.cli.test_bench_flow import _make_batch, bench  # noqa: F401
from tests.conftest import Cli

# The commands whose --json keys this file pins (test_json_keys_audit checks the union).
PINNED = {"audit verify", "audit checkpoint", "audit log"}
VERIFY = ["ok", "events", "head_hash", "problems", "checkpoint", "checkpoints_checked",
          "witnessed_events", "notes"]
CHECKPOINT = ["checkpoint", "events", "head_hash", "made_at", "lab", "witness_file"]
LOG = ["seq", "at", "actor", "action", "record", "record_type", "record_id", "reason",
       "performed_at", "os_login", "host", "code"]


def test_audit_verify_and_checkpoint_keys(bench: Cli, tmp_path: Path,  # noqa: F811
                                          monkeypatch: pytest.MonkeyPatch) -> None:
    _make_batch(bench)
    events = bench.json("audit", "log")
    assert events and all(list(e) == LOG for e in events)
    assert all(e["os_login"] and e["host"] for e in events)
    unwitnessed = bench.json("audit", "verify")
    assert list(unwitnessed) == ["version", *VERIFY]
    assert unwitnessed["witnessed_events"] is None and len(unwitnessed["notes"]) == 1
    key = tmp_path / "lab-signing.pem"
    assert bench("audit", "signing-key", str(key)).exit_code == 0
    folder = tmp_path / "witness"
    folder.mkdir()
    monkeypatch.setenv("PREPBOOK_SIGNING_KEY_FILE", str(key))
    monkeypatch.setenv("PREPBOOK_WITNESS_FOLDER", str(folder))
    made = bench.json("audit", "checkpoint")
    assert list(made) == ["version", *CHECKPOINT]
    assert made["checkpoint"] == unwitnessed["checkpoint"]
    witnessed = bench.json("audit", "verify")
    assert list(witnessed) == ["version", *VERIFY]
    assert witnessed["witnessed_events"] == witnessed["events"] == made["events"]
    assert witnessed["notes"] == [] and witnessed["ok"] is True
