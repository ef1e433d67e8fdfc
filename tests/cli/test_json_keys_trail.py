"""The JSON keys of `audit rotate-key` are a contract: a QA script records them."""

from __future__ import annotations

from pathlib import Path

from tests.cli.test_bench_flow import _make_batch, bench  # noqa: F401
from tests.cli.test_witness_rotation_cli import keyed  # noqa: F401
from tests.conftest import Cli

# The commands whose --json keys this file pins (test_json_keys_audit checks the union).
PINNED = {"audit rotate-key"}
KEY_CHANGED = ["kind", "old_key", "new_key", "after_event", "made_at", "made_by",
               "checkpoint"]


def test_rotate_key_keys(keyed: Path, bench: Cli, tmp_path: Path) -> None:  # noqa: F811
    new = tmp_path / "new.key"
    new.write_text("the second invented lab secret")
    new.chmod(0o600)
    _make_batch(bench)
    changed = bench.json("audit", "rotate-key", "--audit-key", str(new), "--reason", "yearly",
                         "--passphrase-stdin", user="ada", input="ada-passphrase\n")
    assert len(changed) == 1 and list(changed[0]) == KEY_CHANGED
    assert changed[0]["kind"] == "audit" and changed[0]["made_by"] == "ada"
    assert changed[0]["checkpoint"] is None
