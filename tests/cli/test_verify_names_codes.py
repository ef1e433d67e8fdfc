"""`audit verify` names each record it finds wrong by its code beside the row id, as
the audit log does: a replicate by its run and position, a review by its run."""

from __future__ import annotations

import json

from tests.cli.test_bench_flow import _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli
from tests.tampering import tamper


def test_verify_names_a_tampered_replicate_and_review_by_their_run(bench: Cli) -> None:  # noqa: F811
    run = _standardize(bench, _make_batch(bench))["run"]
    bench.ok("review", run, "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    tamper(bench.db, "UPDATE replicates SET volume_ml_text = '39.06' WHERE position = 2")
    tamper(bench.db, "UPDATE reviews SET reason = 'looks fine' WHERE id = 1")
    report = json.loads(bench("audit", "verify", "--json").stdout)
    assert report["ok"] is False
    problems = "\n".join(report["problems"])
    assert f"replicates #2 ({run}/2)" in problems, problems
    assert f"reviews #1 ({run})" in problems, problems
    text = bench("audit", "verify").stdout
    assert f"replicates #2 ({run}/2)" in text
