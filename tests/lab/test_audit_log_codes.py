"""The audit log names each record by the code a person types (a batch, run or lot
code, a user's name), beside the table and row id it always gave."""

from __future__ import annotations

from tests.cli.test_bench_flow import REPS, _at, _make_batch, bench  # noqa: F401
from tests.conftest import Cli


def test_audit_log_names_records_by_their_codes(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    args = ["standardize", batch, "--lot", "KHP-0001", "--balance", "BAL-1", "--burette",
            "BUR-1", "--at", _at(-1)]
    for r in REPS:
        args += ["--rep", r]
    run = bench.json(*args, user="ben")["run"]
    bench.ok("review", run, "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    events = bench.json("audit", "log")
    code = {(e["record_type"], e["action"]): e["code"] for e in events}
    assert code[("batches", "batch.make")] == batch
    assert code[("runs", "run.record")] == run
    reviews = [e["code"] for e in events if e["record_type"] == "reviews"]
    assert reviews == [run]  # a review is named by its run
    assert code[("lots", "lot.add")] in {"KHP-0001", "KHP-OLD"}
    assert code[("instruments", "instrument.add")] in {"BAL-1", "BUR-1"}
    replicates = sorted(e["code"] for e in events if e["record_type"] == "replicates")
    assert replicates == [f"{run}/1", f"{run}/2", f"{run}/3"]
    users = {e["code"] for e in events if e["record_type"] == "users"}
    assert {"ada", "ben", "cleo"} <= users
    # the old keys are kept: the table and row id beside the code
    assert all(e["record"] == f"{e['record_type']} #{e['record_id']}" for e in events)
    assert all(e["code"] for e in events)
    text = bench.ok("audit", "log").stdout
    for named in (run, batch, "(runs #", "(batches #"):
        assert named in text
