"""The JSON keys of `revoke` (DESIGN section 7), pinned in order."""

from __future__ import annotations

from tests.cli.test_bench_flow import _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli

# The commands whose --json keys this file pins (test_json_keys_audit checks the union).
PINNED = {"revoke"}
REVOKED = ["run", "batch", "status", "revoked_by", "revoked_at", "reason", "falls_back_to",
           "normality", "factor", "state", "uses_flagged"]


def test_revoke_keys(bench: Cli) -> None:  # noqa: F811
    run = _standardize(bench, _make_batch(bench))["run"]
    bench.ok("review", run, "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    revoked = bench.json("revoke", run, "--reason", "wrong lot", "--passphrase-stdin",
                         user="cleo", input="cleo-passphrase\n")
    assert list(revoked) == ["version", *REVOKED]
