"""The JSON keys of the batch commands (`batch make/show/use/retire`, `use`, `status`,
`trend`, `trace`, `report`), pinned: scripts read them, so a key renamed or dropped
in the services or the output layer fails here (README and DESIGN section 4)."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.cli.test_bench_flow import REPS, _at, _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli

# The commands whose --json keys this file pins (test_json_keys_audit checks the union).
PINNED = {"batch make", "batch show", "batch use", "batch retire", "use", "status", "trend",
          "trace", "report"}
SHOW = ["batch", "spec", "spec_name", "nominal", "unit", "state", "normality", "factor",
        "restandardize_by", "expires", "warnings", "preparation", "retired", "runs", "uses",
        "diluted_into", "uses_needing_review", "storage", "hazard", "remaining_ml", "assays"]
PREPARATION = ["method", "volume_ml", "solute_mass_g", "solute_lot", "concentrate_volume_ml",
               "from_batch", "aliquot_ml", "flask", "balance", "theoretical_normality",
               "made_at", "recorded_at", "made_by", "notes"]
RUN = ["run", "method", "status", "performed_at", "recorded_at", "analyst", "lot",
       "lot_certificate", "reference_batch", "balance", "burette", "temperature_c", "blank_ml",
       "indicator", "normality", "normality_20c", "factor", "sd", "rsd_percent", "u", "U", "k",
       "verdict", "checks", "budget", "reviews", "replicates", "reference", "repeatability",
       "repeatability_rsd_percent", "reaction"]
REPLICATE = ["position", "version", "current", "amount", "volume_ml", "excluded", "reason",
             "normality", "outlier", "recorded_by", "recorded_at"]
REVIEW = ["reviewer", "decision", "reason", "signed_at"]
CHECK = {"name", "passed", "severity", "message"}
BUDGET = {"quantity", "symbol", "value", "unit", "u", "u_relative", "contribution",
          "share_percent", "missing"}
USE = ["at", "by", "volume_ml", "purpose"]
RETIRED = ["at", "by", "reason"]
DOUBTFUL_USE = ["used_at", "used_by", "volume_ml", "purpose", "why"]
STATUS = ["batch", "spec", "state", "normality", "factor", "standardized_on",
          "restandardize_by", "expires", "warnings", "remaining_ml", "instruments"]
TREND = ["batch", "spec", "nominal", "unit", "window", "drift_limit_percent", "history",
         "slope_percent_per_30d", "slope_ci_percent_per_30d", "forecast_leaves_window", "note"]
TREND_POINT = ["run", "performed_at", "normality", "normality_20c", "factor", "change_percent",
               "beyond_drift_limit"]
TRACE = ["batch", "spec", "upward", "downward", "uses_needing_review"]
LOT = ["code", "material", "purity_percent", "purity_u_percent", "certificate", "expires",
       "dried_on"]
INSTRUMENT = ["code", "kind", "due", "overdue_now", "capacity", "tolerance"]
MADE = ["batch", "spec", "method", "theoretical_normality", "theoretical_factor", "unit",
        "made_at", "expires", "cautions", "warnings"]
USED = ["batch", "used_at", "used_by", "volume_ml", "purpose", "normality", "factor"]
RETIREMENT = ["batch", "retired_at", "retired_by", "reason"]
REPORT = ["batch", "file", "pages", "runs", "head_hash", "audit_ok", "printed_at"]

# The second standardization reads 1 % less titrant: beyond the drift limit, so the use
# between the two standardizations is in doubt.
DRIFTED = ["0.8085:38.77", "0.8116:38.90", "0.8596:41.25"]


def _accept(cli: Cli, run: str) -> None:
    cli.ok("review", run, "--accept", "--passphrase-stdin", user="cleo",
           input="cleo-passphrase\n")


@pytest.fixture
def lab(bench: Cli) -> tuple[Cli, str, str]:  # noqa: F811 (fixture)
    """A stock batch standardized twice (a use in doubt between), a dilution of it
    (retired), the dilution standardized against the stock."""
    stock = _make_batch(bench)
    _accept(bench, _standardize(bench, stock)["run"])
    bench.ok("use", stock, "--volume", "25", "--purpose", "assay", "--at", _at(-1, "12:00"),
             user="ben")
    args = ["standardize", stock, "--lot", "KHP-0001", "--balance", "BAL-1", "--burette",
            "BUR-1", "--at", _at(-1, "16:00")]
    for r in DRIFTED:
        args += ["--rep", r]
    _accept(bench, bench.json(*args, user="ben")["run"])
    dilution = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--from-batch",
                          stock, "--aliquot", "100", "--at", _at(-1, "17:00"), user="ben")
    assert list(dilution) == ["version", *MADE]
    return bench, stock, dilution["batch"]


def test_batch_show_keys(lab: tuple[Cli, str, str]) -> None:
    cli, stock, _ = lab
    shown = cli.json("batch", "show", stock)
    assert list(shown) == ["version", *SHOW]
    assert list(shown["preparation"]) == PREPARATION
    assert len(shown["runs"]) == 2
    for run in shown["runs"]:
        assert list(run) == RUN
        assert [list(r) for r in run["replicates"]] == [REPLICATE] * 3
        assert [list(r) for r in run["reviews"]] == [REVIEW]
        assert run["checks"] and all(set(c) == CHECK for c in run["checks"])
        assert run["budget"] and all(set(b) == BUDGET for b in run["budget"])
    assert [list(u) for u in shown["uses"]] == [USE]
    assert [list(u) for u in shown["uses_needing_review"]] == [DOUBTFUL_USE]
    assert shown["retired"] is None and isinstance(shown["diluted_into"], list)
    assert isinstance(shown["hazard"], dict) and isinstance(shown["warnings"], list)


def test_status_trend_and_trace_keys(lab: tuple[Cli, str, str]) -> None:
    cli, stock, dilution = lab
    board = cli.json("status")
    assert board and all(list(item) == STATUS for item in board)
    trend = cli.json("trend", stock)
    assert list(trend) == ["version", *TREND]
    assert [list(h) for h in trend["history"]] == [TREND_POINT] * 2
    assert len(trend["window"]) == 2
    trace = cli.json("trace", stock)
    assert list(trace) == ["version", *TRACE]
    assert list(trace["upward"]) == ["preparation", "stock_chain", "standardizations"]
    assert list(trace["upward"]["preparation"]) == ["method", "made_at", "made_by",
                                                    "solute_lot", "flask", "balance"]
    assert list(trace["upward"]["preparation"]["balance"]) == INSTRUMENT
    for run in trace["upward"]["standardizations"]:
        assert list(run) == ["run", "status", "performed_at", "analyst", "lot",
                             "reference_batch", "balance", "burette", "reviewers"]
        assert list(run["lot"]) == LOT and list(run["burette"]) == INSTRUMENT
    assert list(trace["downward"]) == ["diluted_into", "reference_for", "uses", "assays"]
    assert trace["downward"]["diluted_into"] == [
        {"batch": dilution, "spec": "NaOH-0.1N", "from": stock,
         "made_at": _at(-1, "17:00")}]
    assert [list(u) for u in trace["downward"]["uses"]] == [
        ["used_at", "used_by", "volume_ml", "purpose"]]
    assert [list(u) for u in trace["uses_needing_review"]] == [DOUBTFUL_USE]
    child = cli.json("trace", dilution)
    assert [list(a) for a in child["upward"]["stock_chain"]] == [
        ["batch", "spec", "made_at", "expires", "standardized_by", "lot"]]
    assert list(child["upward"]["stock_chain"][0]["lot"]) == LOT


def test_use_retire_and_report_keys(lab: tuple[Cli, str, str], tmp_path: Path) -> None:
    cli, stock, dilution = lab
    used = ["version", *USED]
    assert list(cli.json("batch", "use", stock, "--volume", "5", "--purpose", "assay",
                              user="ben")) == used
    assert list(cli.json("use", stock, "--purpose", "assay", user="ben")) == used
    retired = cli.json("batch", "retire", dilution, "--reason", "spilled",
                       "--passphrase-stdin", user="ben", input="ben-passphrase\n")
    assert list(retired) == ["version", *RETIREMENT]
    shown = cli.json("batch", "show", dilution)
    assert list(shown["retired"]) == RETIRED
    report = cli.json("report", stock, "-o", str(tmp_path / "r.pdf"))
    assert list(report) == ["version", *REPORT]
    assert report["runs"] == 2 and report["audit_ok"] is True
