"""Only plausible, timely and reviewable entries reach the record (the entry and review
findings of issue 14), through the command line: each refusal exits 1 with one line on
stderr and leaves every table's row count unchanged.

Bounds of plausibility are the lab's (prepbook.rules.plausibility names each source);
the example readings are those of tests/cli/test_bench_flow.py (KHP against 0.1 N NaOH).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

from tests.cli.test_bench_flow import REPS, _at, _days, _make_batch, bench  # noqa: F401
from tests.conftest import Cli

Counts = Callable[[Path | str], dict[str, int]]
SWAPPED = ["--rep", "39.16:0.8085", "--rep", "39.29:0.8116", "--rep", "41.67:0.8596"]
INSTRUMENTS = ["--balance", "BAL-1", "--burette", "BUR-1"]
CLEO = {"user": "cleo", "input": "cleo-passphrase\n"}


def _reps(reps: list[str]) -> list[str]:
    return sum((["--rep", r] for r in reps), [])


def _run(cli: Cli, batch: str, reps: list[str] = REPS, *extra: str, at: int = -1) -> Any:
    return cli.json("standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS, "--temp", "21",
                    "--at", _at(at), *_reps(reps), *extra, user="ben")


def _accept(cli: Cli, run: str, at: int = -1) -> None:
    cli.ok("review", run, "--accept", "--passphrase-stdin", "--at", _at(at, "11:00"), **CLEO)


def _refused(cli: Cli, counts: Counts, *args: str, **kw: Any) -> str:
    before = counts(cli.db)
    result = cli.refused(*args, **kw)
    assert counts(cli.db) == before
    return str(result.stderr)


# -- plausibility at entry ----------------------------------------------------------------------

def test_swapped_mass_and_volume_of_the_issue_are_refused_at_entry(bench: Cli,  # noqa: F811
                                                                   counts: Counts) -> None:
    batch = _make_batch(bench)
    err = _refused(bench, counts, "standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS,
                   *SWAPPED, user="ben")
    assert "look swapped: did you mean --rep 0.8085:39.16" in err


@pytest.mark.parametrize(("rep", "said"), [
    ("808.5:39.16", "was it in mg? 808.5 mg is 0.8085 g"),
    ("0.8085:0.0001", "at or below 0.1 mL"),
    ("0.8085:1000000", "exceeds the burette's capacity (50 mL)"),
    ("0.8085:" + "9" * 31, "exceeds the burette's capacity"),
    ("0.8085:1.5", "outside the plausible 0.5-2"),
])
def test_readings_that_cannot_be_right_are_refused(bench: Cli, counts: Counts,  # noqa: F811
                                                   rep: str, said: str) -> None:
    batch = _make_batch(bench)
    err = _refused(bench, counts, "standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS,
                   "--rep", rep, user="ben")
    assert said in err


@pytest.mark.parametrize(("args", "said"), [
    (["--rep", "39.16:0.8085"], "look swapped"),
    (["--rep", "0.8085:39.16", "--purity", "0.0000001"], "cannot be a primary standard's"),
    (["--rep", "0.8085:39.16", "--linearity", "1000000000"], "balance linearity"),
    (["--rep", "0.8085:" + "9" * 31], "largest burette in common use"),
    (["--rep", "0.8085:39.16", "--burette-tolerance", "5"], "no volumetric burette's"),
])
def test_calc_refuses_what_is_physically_absurd(cli: Cli, args: list[str], said: str) -> None:
    result = cli.refused("calc", "normality", "--standard", "KHP", "--titrant", "NaOH", *args)
    assert said in result.stderr


def test_calc_warns_on_stderr_about_what_is_unusual(cli: Cli) -> None:
    result = cli.ok("calc", "normality", "--standard", "KHP", "--titrant", "NaOH",
                    "--purity", "98.5", "--linearity", "5", *_reps(REPS))
    lines = result.stderr.splitlines()
    assert any("purity 98.5 % is unusual" in line for line in lines)
    assert any("balance linearity 5 mg is unusual" in line for line in lines)
    assert "unusual" not in result.stdout


# -- review gates --------------------------------------------------------------------------------

def test_a_review_before_any_run_exists_is_refused(bench: Cli, counts: Counts) -> None:  # noqa: F811
    assert "no run with code" in _refused(bench, counts, "review", "R-1", "--accept",
                                          "--passphrase-stdin", **CLEO)
    batch = _make_batch(bench)
    assert "0 runs awaiting review" in _refused(bench, counts, "review", batch, "--accept",
                                                "--passphrase-stdin", **CLEO)


def test_a_failed_run_cannot_be_accepted_but_corrected_and_reviewed_again(
        bench: Cli, counts: Counts) -> None:  # noqa: F811
    batch = _make_batch(bench)
    run = _run(bench, batch, ["0.8085:39.16", "0.8116:39.29", "0.8596:43.67"])
    assert run["verdict"] == "fail"
    err = _refused(bench, counts, "review", run["run"], "--accept", "--passphrase-stdin", **CLEO)
    assert f"run {run['run']} failed a check and cannot be accepted: rsd:" in err
    bench.ok("correct", run["run"], "--replicate", "3", "--volume", "41.67", "--reason",
             "misread the burette", "--passphrase-stdin", user="ben", input="ben-passphrase\n")
    _accept(bench, run["run"])
    assert bench.json("batch", "show", batch)["state"] == "in-service"


def test_the_swapped_run_forced_past_entry_is_not_acceptable(
        bench: Cli, counts: Counts, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    batch = _make_batch(bench)
    with monkeypatch.context() as m:  # as if recorded before the plausibility rules
        m.setattr("prepbook.lab.runs.plaus.replicates", lambda *a, **k: ())
        m.setattr("prepbook.lab.runs.plaus.factor", lambda *a, **k: None)
        run = bench.json("standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS, *SWAPPED,
                         "--at", _at(-1), user="ben")
    assert run["factor"] > 1000 and run["verdict"] == "fail"
    err = _refused(bench, counts, "review", run["run"], "--accept", "--passphrase-stdin", **CLEO)
    assert "factor-window" in err
    bench.ok("review", run["run"], "--reject", "--reason", "mass and volume swapped",
             "--passphrase-stdin", **CLEO)


def test_no_balance_and_no_burette_is_a_failed_check(bench: Cli, counts: Counts) -> None:  # noqa: F811
    batch = _make_batch(bench)
    run = bench.json("standardize", batch, "--lot", "KHP-0001", "--at", _at(-1),
                     *_reps(REPS), user="ben")
    check = next(c for c in run["checks"] if c["name"] == "instruments")
    assert not check["passed"] and "no balance and no burette named" in check["message"]
    assert run["verdict"] == "fail"
    assert "instruments:" in _refused(bench, counts, "review", run["run"], "--accept",
                                      "--passphrase-stdin", **CLEO)


def test_a_backdated_run_with_a_lot_expired_since_fails(bench: Cli, counts: Counts) -> None:  # noqa: F811
    batch = _make_batch(bench)
    bench.ok("lot", "add", "KHP", "--code", "KHP-LAST", "--purity", "99.98", "--expires",
             _days(-1), "--dried", _days(-3), user="ben")
    run = bench.json("standardize", batch, "--lot", "KHP-LAST", *INSTRUMENTS, "--temp", "21",
                     "--at", _at(-2, "09:00"), *_reps(REPS), user="ben")
    check = next(c for c in run["checks"] if c["name"] == "lot-expiry")
    assert not check["passed"] and "before the run was entered on" in check["message"]
    assert "lot-expiry" in _refused(bench, counts, "review", run["run"], "--accept",
                                    "--passphrase-stdin", **CLEO)


def test_the_review_shows_what_is_signed_before_the_passphrase(
        bench: Cli, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    batch = _make_batch(bench)
    run = _run(bench, batch)

    def ask(self: Any, prompt: str, *, confirm: bool = False) -> str:
        print("<passphrase asked>")
        return "cleo-passphrase"

    monkeypatch.setattr("prepbook.cli.session.Passphrases.get", ask)
    out = bench.ok("review", run["run"], "--accept", user="cleo").stdout
    shown, asked, after = out.partition("<passphrase asked>")
    assert asked and f"You are about to sign: accept run {run['run']}" in shown
    assert "factor 1.0" in shown and "ok   rsd:" in shown and "ok   instruments:" in shown
    assert "accepted by cleo" in after


# -- temperature and interactive entry ----------------------------------------------------------

def test_rep_mode_without_a_temperature_says_20_c_was_assumed(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    run = bench.json("standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS, "--at", _at(-1),
                     *_reps(REPS), user="ben")
    assert run["temperature_c"] == 20
    assert any(w.startswith("no temperature given: computed at the reference temperature 20 C")
               for w in run["warnings"])


def test_one_stray_enter_records_nothing(bench: Cli, counts: Counts) -> None:  # noqa: F811
    batch = _make_batch(bench)
    before = counts(bench.db)
    # temperature, one replicate, an Enter that ends, an Enter that declines
    result = bench("standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS, "--at", _at(-1),
                   user="ben", input="21\n0.8085\n39.16\n\n\n")
    assert result.exit_code == 1
    assert "To be recorded: 1 replicate(s)" in result.stdout
    assert "FAIL replicate-count" in result.stdout
    assert result.stderr.strip() == "prepbook: not confirmed: nothing recorded"
    assert counts(bench.db) == before


def test_the_temperature_is_asked_offering_the_last_one_used(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    _run(bench, batch)  # at 21 C
    answers = "\n" + "".join(f"{r.replace(':', chr(10))}\n" for r in REPS) + "\ny\n"
    result = bench.ok("standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS, "--at",
                      _at(-1, "12:00"), user="ben", input=answers)
    assert "[Enter: 21, the last used for this batch or spec]" in result.stdout
    runs = bench.json("batch", "show", batch)["runs"]
    assert [r["temperature_c"] for r in runs] == ["21", "21"]


# -- volumes ---------------------------------------------------------------------------------------

def test_a_use_beyond_what_remains_is_refused(bench: Cli, counts: Counts) -> None:  # noqa: F811
    batch = _make_batch(bench)
    _accept(bench, _run(bench, batch)["run"])
    titrated = 39.16 + 39.29 + 41.67
    assert bench.json("batch", "show", batch)["remaining_ml"] == pytest.approx(1000 - titrated)
    err = _refused(bench, counts, "use", batch, "--volume", "2500", "--purpose", "assay",
                   user="ben")
    assert "more than remains in batch" in err and "(879.88 mL of 1000 mL made)" in err
    assert "--purpose" in _refused(bench, counts, "use", batch, "--volume", "25", user="ben")
    bench.ok("use", batch, "--volume", "25", "--purpose", "sample 1187", user="ben")
    left = 1000 - titrated - 25
    assert bench.json("batch", "show", batch)["remaining_ml"] == pytest.approx(left)
    row = next(b for b in bench.json("status") if b["batch"] == batch)
    assert row["remaining_ml"] == pytest.approx(left)
    assert "854.88" in bench.ok("status").stdout


# -- revoke ----------------------------------------------------------------------------------------

def test_revoke_falls_back_and_flags_the_uses_since(bench: Cli, counts: Counts) -> None:  # noqa: F811
    batch = _make_batch(bench)
    first = _run(bench, batch, at=-2)
    _accept(bench, first["run"], at=-2)
    second = _run(bench, batch, ["0.8085:39.36", "0.8116:39.49", "0.8596:41.88"], at=-1)
    _accept(bench, second["run"], at=-1)
    bench.ok("use", batch, "--volume", "20", "--purpose", "sample 7", "--at", _at(-1, "12:00"),
             user="ben")
    assert "--reason" in _refused(bench, counts, "revoke", second["run"], "--passphrase-stdin",
                                  **CLEO)
    assert "only a reviewer or admin" in _refused(
        bench, counts, "revoke", second["run"], "--reason", "x", "--passphrase-stdin",
        user="ben", input="ben-passphrase\n")
    done = bench.json("revoke", second["run"], "--reason", "wrong lot weighed",
                      "--passphrase-stdin", **CLEO)
    assert done["status"] == "revoked" and done["falls_back_to"] == first["run"]
    assert done["factor"] == pytest.approx(first["factor"]) and done["uses_flagged"] == 1
    shown = bench.json("batch", "show", batch)
    assert shown["factor"] == pytest.approx(first["factor"]) and shown["state"] == "in-service"
    assert [r["status"] for r in shown["runs"]] == ["accepted", "revoked"]
    assert shown["runs"][1]["reviews"][-1]["decision"] == "revoke"
    why = [u["why"] for u in shown["uses_needing_review"]]
    assert why == [f"made while the result of {second['run']} stood, which was revoked"]
    assert why == [u["why"] for u in bench.json("trace", batch)["uses_needing_review"]]
    row = next(b for b in bench.json("status") if b["batch"] == batch)
    assert any("was revoked" in w for w in row["warnings"])
    assert "is revoked; only an accepted" in _refused(
        bench, counts, "revoke", second["run"], "--reason", "again", "--passphrase-stdin", **CLEO)
    assert bench.json("audit", "verify")["ok"] is True


def test_revoking_the_only_result_takes_the_batch_out_of_service(bench: Cli,  # noqa: F811
                                                                  counts: Counts) -> None:
    batch = _make_batch(bench)
    run = _run(bench, batch)
    _accept(bench, run["run"])
    done = bench.json("revoke", run["run"], "--reason", "balance found faulty",
                      "--passphrase-stdin", **CLEO)
    assert done["falls_back_to"] is None and done["state"] == "new"
    assert "is new and may not be used" in _refused(bench, counts, "use", batch, "--volume",
                                                    "5", "--purpose", "assay", user="ben")


@pytest.mark.parametrize(("args", "said"), [
    (["lot", "add", "KHP", "--code", "KHP-X", "--purity", "0.0000001", "--expires",
      _days(300)], "cannot be a primary standard's"),
    (["instrument", "add", "BAL-X", "--kind", "balance", "--due", _days(300), "--tolerance",
      "1000000"], "balance linearity 1e+09 mg"),
    (["instrument", "add", "BUR-X", "--kind", "burette", "--due", _days(300), "--capacity",
      "50", "--tolerance", "5"], "no volumetric burette's"),
])
def test_absurd_lot_and_instrument_figures_are_refused(bench: Cli, counts: Counts,  # noqa: F811
                                                       args: list[str], said: str) -> None:
    assert said in _refused(bench, counts, *args, user="ben")
