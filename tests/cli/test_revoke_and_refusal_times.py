"""Two corners of issue 14: the uses flagged by a revocation stop at the revocation,
and the times inside refusals are the lab's wall-clock times with their offset."""

from __future__ import annotations

import re

from tests.cli.test_bench_flow import _at, _make_batch, bench  # noqa: F401
from tests.cli.test_gates import CLEO, Counts, _accept, _refused, _run
from tests.conftest import Cli


def test_uses_after_the_revocation_are_not_flagged(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    first = _run(bench, batch, at=-2)
    _accept(bench, first["run"], at=-2)
    second = _run(bench, batch, ["0.8085:39.36", "0.8116:39.49", "0.8596:41.88"], at=-1)
    _accept(bench, second["run"], at=-1)
    bench.ok("use", batch, "--volume", "20", "--purpose", "while it stood",
             "--at", _at(-1, "12:00"), user="ben")
    bench.ok("revoke", second["run"], "--reason", "wrong lot weighed", "--at", _at(-1, "15:00"),
             "--passphrase-stdin", **CLEO)
    # After the revocation the batch stands on the first result again: a use then was
    # made with the value in force, and the revoked result played no part in it.
    bench.ok("use", batch, "--volume", "20", "--purpose", "after the revocation",
             "--at", _at(-1, "18:00"), user="ben")
    bench.ok("use", batch, "--volume", "20", "--purpose", "today", user="ben")
    flagged = bench.json("batch", "show", batch)["uses_needing_review"]
    assert [u["purpose"] for u in flagged] == ["while it stood"]
    assert [u["purpose"] for u in bench.json("trace", batch)["uses_needing_review"]] == \
        ["while it stood"]


def _set_tokyo(cli: Cli) -> None:
    cli.ok("settings", "set", "timezone", "Asia/Tokyo", "--reason", "the lab's own zone",
           "--passphrase-stdin", user="ada", input="ada-passphrase\n")
    # Two days back at 08:00 in Tokyo is 23:00 UTC three days back: late in the UTC day
    # that is more than the default 72 h. A wider window keeps the refusals tested here
    # the ones about order, at any hour the tests run.
    cli.ok("settings", "set", "late_entry_hours", "120", "--reason", "entries from a week's log",
           "--passphrase-stdin", user="ada", input="ada-passphrase\n")


TOKYO_TIME = re.compile(r"\d{4}-\d\d-\d\d \d\d:\d\d \+09:00")


def test_times_in_refusals_are_lab_time_with_the_offset(bench: Cli,  # noqa: F811
                                                        counts: Counts) -> None:
    _set_tokyo(bench)
    batch = _make_batch(bench)  # made two days ago at 08:30 lab time
    early = _at(-2, "08:00")
    err = _refused(bench, counts, "standardize", batch, "--lot", "KHP-0001", "--balance",
                   "BAL-1", "--burette", "BUR-1", "--temp", "21", "--at", early,
                   "--rep", "0.8085:39.16", "--rep", "0.8116:39.29", "--rep", "0.8596:41.67",
                   user="ben")
    assert len(TOKYO_TIME.findall(err)) == 2, err
    assert f"{early.replace('T', ' ')} +09:00" in err
    run = _run(bench, batch, at=-1)
    err = _refused(bench, counts, "review", run["run"], "--accept", "--at", early,
                   "--passphrase-stdin", **CLEO)
    assert len(TOKYO_TIME.findall(err)) == 2, err
    _accept(bench, run["run"])
    err = _refused(bench, counts, "revoke", run["run"], "--reason", "x", "--at", early,
                   "--passphrase-stdin", **CLEO)
    assert len(TOKYO_TIME.findall(err)) == 2, err
    err = _refused(bench, counts, "batch", "retire", batch, "--reason", "x", "--at", early,
                   "--passphrase-stdin", user="ben", input="ben-passphrase\n")
    assert len(TOKYO_TIME.findall(err)) == 2, err


def test_replicate_numbers_take_ascii_digits_only(bench: Cli, counts: Counts) -> None:  # noqa: F811
    batch = _make_batch(bench)
    run = _run(bench, batch)["run"]
    for typed in ("٢", "２", "2.0", "0"):
        err = _refused(bench, counts, "correct", run, "--replicate", typed, "--volume", "39.20",
                       "--reason", "misread", "--passphrase-stdin", user="ben",
                       input="ben-passphrase\n")
        assert "--replicate" in err, err
        err = _refused(bench, counts, "exclude", run, "--replicate", typed, "--reason",
                       "spilled", "--passphrase-stdin", user="ben", input="ben-passphrase\n")
        assert "--replicate" in err, err
    assert "type the digits 0-9" in _refused(
        bench, counts, "instrument", "curve", run, "--replicate", "٢", "-o", "x.csv")
    bench.ok("correct", run, "--replicate", "2", "--volume", "39.30", "--reason", "misread",
             "--passphrase-stdin", user="ben", input="ben-passphrase\n")


def test_login_and_lockout_times_are_lab_time(bench: Cli) -> None:  # noqa: F811
    _set_tokyo(bench)
    said = bench.ok("login", "ben", "--passphrase-stdin", input="ben-passphrase\n").stdout
    assert len(TOKYO_TIME.findall(said)) == 2, said
    for _ in range(5):
        wrong = bench("login", "ben", "--passphrase-stdin", input="not-bens-passphrase\n")
        assert wrong.exit_code == 1
    assert "locked out until" in wrong.stderr and TOKYO_TIME.search(wrong.stderr), wrong.stderr
