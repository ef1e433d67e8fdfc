"""Without --rep, `standardize` asks for replicates one at a time."""

from __future__ import annotations

from tests.cli.test_bench_flow import _at, _make_batch, bench  # noqa: F401 (fixture)
from tests.conftest import Cli, row_counts


def test_replicates_are_asked_for_and_the_running_result_shown(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    answers = "20\n0.8085\n39.16\n0.8116\n39.29\n0.8596\n41.67\n\ny\n"
    result = bench.ok("standardize", batch, "--lot", "KHP-0001", "--at", _at(-1), user="ben",
                      input=answers)
    assert result.stdout.count("running: N =") == 3
    assert "(n = 3)" in result.stdout
    shown = bench.json("batch", "show", batch)
    assert [r["volume_ml"] for r in shown["runs"][0]["replicates"]] == ["39.16", "39.29", "41.67"]


def test_a_mistyped_replicate_is_refused_and_asked_again(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    answers = "20\n0.8085\n39,16\n0.8085\n39.16\n\ny\n"
    result = bench.ok("standardize", batch, "--lot", "KHP-0001", "--at", _at(-1), user="ben",
                      input=answers)
    assert "not taken" in result.stdout
    shown = bench.json("batch", "show", batch)
    assert [r["volume_ml"] for r in shown["runs"][0]["replicates"]] == ["39.16"]


def test_no_replicate_records_nothing(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    before = row_counts(bench.db)
    result = bench("standardize", batch, "--lot", "KHP-0001", user="ben", input="\n")
    assert result.exit_code == 1
    assert row_counts(bench.db) == before
