"""The whole bench flow through the command line, then the refusals.

The normality the board shows is checked against an independent computation:
N = 1000 m P / (M V) (the direct-standardization equation, EURACHEM/CITAC CG4
Example A2 model without the repeatability factor), with M(KHP) from `molmass`,
a second formula library with its own (NIST) atomic weights.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest
from molmass import Formula

from tests.conftest import Cli, row_counts

REPS = ["0.8085:39.16", "0.8116:39.29", "0.8596:41.67"]
PURITY = 0.9998


def _days(n: int) -> str:
    return (datetime.now(UTC).date() + timedelta(days=n)).isoformat()


def _at(days: int, clock: str = "10:00") -> str:
    return f"{_days(days)}T{clock}"


@pytest.fixture
def bench(cli: Cli) -> Cli:
    """A lab with an admin, a technician, a reviewer, a KHP lot and instruments."""
    cli.ok("init")
    cli.ok("user", "add", "ada", "--role", "admin", "--passphrase-stdin", user="ada",
           input="ada-passphrase\n")
    cli.ok("user", "add", "ben", "--role", "technician", "--passphrase-stdin", user="ada",
           input="ben-passphrase\nada-passphrase\n")
    cli.ok("user", "add", "cleo", "--role", "reviewer", "--passphrase-stdin", user="ada",
           input="cleo-passphrase\nada-passphrase\n")
    cli.ok("lot", "add", "KHP", "--code", "KHP-0001", "--purity", "99.98", "--purity-u", "0.05",
           "--expires", _days(400), "--dried", _days(-3), user="ben")
    cli.ok("lot", "add", "KHP", "--code", "KHP-OLD", "--purity", "99.95", "--expires",
           _days(-1), user="ben")
    cli.ok("instrument", "add", "BAL-1", "--kind", "balance", "--due", _days(200),
           "--readability", "0.0001", "--tolerance", "0.0002", user="ben")
    cli.ok("instrument", "add", "BUR-1", "--kind", "burette", "--due", _days(200),
           "--capacity", "50", "--tolerance", "0.05", user="ben")
    return cli


def _make_batch(cli: Cli) -> str:
    made = cli.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                    "--balance", "BAL-1", "--at", _at(-2, "08:30"), user="ben")
    return str(made["batch"])


def _standardize(cli: Cli, batch: str, *extra: str, user: str = "ben") -> dict:
    args = ["standardize", batch, "--lot", "KHP-0001", "--balance", "BAL-1", "--burette",
            "BUR-1", "--at", _at(-1)]
    for r in REPS:
        args += ["--rep", r]
    return cli.json(*args, *extra, user=user)


def test_bench_flow_ends_in_service_with_the_right_factor(bench: Cli) -> None:
    batch = _make_batch(bench)
    run = _standardize(bench, batch)
    assert run["status"] == "awaiting-review"
    assert run["batch"] == batch
    board = bench.json("status")
    assert [b["state"] for b in board if b["batch"] == batch] == ["awaiting-review"]

    bench.ok("review", run["run"], "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")

    m_khp = Formula("KHC8H4O4").mass
    expected = []
    for rep in REPS:
        mass, vol = (float(x) for x in rep.split(":"))
        expected.append(1000 * mass * PURITY / (m_khp * vol))
    expected_n = sum(expected) / len(expected)

    row = next(b for b in bench.json("status") if b["batch"] == batch)
    assert row["state"] == "in-service"
    assert row["normality"] == pytest.approx(expected_n, rel=2e-5)
    # At 20 C (the default) the factor is the normality over the 0.1 N nominal.
    assert row["factor"] == pytest.approx(expected_n / 0.1, rel=2e-5)
    assert row["restandardize_by"] is not None and row["expires"] is not None

    shown = bench.json("batch", "show", batch)
    assert shown["state"] == "in-service"
    assert [r["amount"] + ":" + r["volume_ml"] for r in shown["runs"][0]["replicates"]] == REPS
    assert shown["runs"][0]["reviews"][0]["reviewer"] == "cleo"
    assert shown["runs"][0]["lot"] == "KHP-0001"

    verify = bench.json("audit", "verify")
    assert verify["ok"] is True and verify["problems"] == []
    assert verify["events"] > 10


def test_readings_are_stored_exactly_as_entered(bench: Cli) -> None:
    batch = _make_batch(bench)
    res = bench.json("standardize", batch, "--lot", "KHP-0001", "--at", _at(-1),
                     "--rep", "0.80850:39.10", "--rep", "0.8116:39.20", "--rep",
                     "0.8596:41.60", user="ben")
    shown = bench.json("batch", "show", batch)
    reps = shown["runs"][0]["replicates"]
    assert [(r["amount"], r["volume_ml"]) for r in reps] == [
        ("0.80850", "39.10"), ("0.8116", "39.20"), ("0.8596", "41.60")]
    assert res["run"] == shown["runs"][0]["run"]


def _refusal_cases(batch: str, run: str) -> list[tuple[str | None, list[str], str | None, str]]:
    """(user, args, stdin, a word the message must contain)."""
    std = ["standardize", batch, "--lot", "KHP-0001", "--burette", "BUR-1", "--at", _at(-1)]
    return [
        ("ben", [*std, "--rep", "-0.5:20.00", "--rep", "0.5:20", "--rep", "0.5:20"], None,
         "greater than zero"),
        ("ben", [*std, "--rep", "0:20.00"], None, "greater than zero"),
        ("ben", [*std, "--rep", "0.8x:20.00"], None, "not a plain decimal"),
        ("ben", [*std, "--rep", "0.8085"], None, "AMOUNT:VOLUME"),
        ("ben", [*std, "--rep", "0.8085:0"], None, "greater than zero"),
        ("ben", [*std, "--rep", "0.8085:55.00"], None, "capacity"),
        ("ben", [*std, "--rep", "0.8085:40.00", "--repeatability", "8"], None, "at most 5 %"),
        ("ben", ["standardize", "NO-SUCH-BATCH", "--lot", "KHP-0001", "--rep", "0.8:40"], None,
         "no batch"),
        ("ben", ["standardize", batch, "--lot", "NOPE", "--rep", "0.8:40"], None, "no lot"),
        ("ben", ["standardize", batch, "--lot", "KHP-0001", "--burette", "BUR-9", "--rep",
                 "0.8:40"], None, "no instrument"),
        ("ben", ["standardize", batch, "--lot", "KHP-OLD", "--rep", "0.8:40"], None, "expired"),
        ("ben", ["standardize", batch, "--lot", "KHP-0001", "--rep", "0.8:40", "--at",
                 _at(3)], None, "future"),
        ("ben", ["batch", "make", "NO-SUCH-SPEC", "--volume", "1000", "--solute-mass", "4"],
         None, "spec"),
        ("ben", ["batch", "make", "NaOH-0.1N", "--volume", "-1000", "--solute-mass", "4"],
         None, "greater than zero"),
        ("ben", ["batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4",
                 "--at", _at(2)], None, "future"),
        ("ben", ["review", run, "--accept", "--passphrase-stdin"], "ben-passphrase\n",
         "reviewer"),
        ("ada", ["review", run, "--accept", "--passphrase-stdin"], "ada-passphrase\n",
         "cannot review"),
        ("cleo", ["review", run, "--reject", "--passphrase-stdin"], "cleo-passphrase\n",
         "reason"),
        ("ben", ["lot", "add", "KHP", "--code", "K2", "--purity", "101", "--expires",
                 _days(10)], None, "100"),
        ("ben", ["lot", "add", "KHP", "--code", "K2", "--purity", "99.9", "--expires",
                 "2027-13-01"], None, "date"),
        ("ben", ["lot", "add", "unobtainium", "--code", "K2", "--purity", "99.9", "--expires",
                 _days(10)], None, "unobtainium"),
        ("ben", ["instrument", "add", "B2", "--kind", "scale", "--due", _days(10)], None,
         "kind"),
        ("ben", ["user", "add", "dan", "--role", "technician", "--passphrase-stdin"],
         "dan-passphrase\nben-passphrase\n", "admin"),
    ]


def test_refusals_exit_1_with_one_line_and_write_nothing(bench: Cli) -> None:
    batch = _make_batch(bench)
    # ada (an admin) records this run, so ada may not review it.
    run = _standardize(bench, batch, user="ada")["run"]
    before = row_counts(bench.db)
    for user, args, stdin, word in _refusal_cases(batch, run):
        result = bench.refused(*args, user=user, input=stdin)
        assert word.lower() in result.stderr.lower(), (args, result.stderr)
        assert row_counts(bench.db) == before, args
    assert bench.json("audit", "verify")["ok"] is True


def test_a_user_unknown_to_the_database_cannot_record(bench: Cli) -> None:
    batch = _make_batch(bench)
    before = row_counts(bench.db)
    result = bench.refused("standardize", batch, "--lot", "KHP-0001", "--rep", "0.8:40",
                           user="mallory")
    assert "not a prepbook user" in result.stderr
    assert row_counts(bench.db) == before


def test_commands_refuse_a_database_that_was_never_initialized(tmp_path: Path) -> None:
    cli = Cli(tmp_path / "missing.db")
    result = cli.refused("status")
    assert "prepbook init" in result.stderr
    assert not (tmp_path / "missing.db").exists()


def test_init_twice_changes_nothing(cli: Cli) -> None:
    first = cli.json("init")
    assert first["created"] is True and first["specs_added"]
    before = row_counts(cli.db)
    second = cli.json("init")
    assert second["created"] is False
    assert second["materials_added"] == [] and second["specs_added"] == []
    assert second["backup"] is None
    assert row_counts(cli.db) == before


def test_builtin_specs_are_loaded(cli: Cli) -> None:
    cli.ok("init")
    codes = {s["code"] for s in cli.json("spec", "list")}
    for code in ["NaOH-0.1N", "NaOH-1N", "HCl-0.1N", "HCl-1N", "H2SO4-0.1N", "H2SO4-0.02N",
                 "KMnO4-0.1N", "Na2S2O3-0.1N", "I2-0.1N", "AgNO3-0.1N", "EDTA-0.05M"]:
        assert code in codes


def test_first_user_must_be_an_admin(cli: Cli) -> None:
    cli.ok("init")
    before = row_counts(cli.db)
    result = cli.refused("user", "add", "ben", "--role", "technician", "--passphrase-stdin",
                         input="ben-passphrase\n")
    assert "admin" in result.stderr
    assert row_counts(cli.db) == before


def test_a_wrong_passphrase_is_refused_recorded_and_locks_out(bench: Cli) -> None:
    """Only the failed attempt is written (the user's count and its audit event); after
    five in a row (the lockout_after setting) the user is locked out until unlocked."""
    batch = _make_batch(bench)
    run = _standardize(bench, batch)["run"]
    for attempt in range(1, 6):
        before = row_counts(bench.db)
        result = bench.refused("review", run, "--accept", "--passphrase-stdin", user="cleo",
                               input="wrong-passphrase\n")
        assert "wrong passphrase" in result.stderr
        after = row_counts(bench.db)
        assert after["audit_events"] == before["audit_events"] + 1
        assert {k: v for k, v in after.items() if k != "audit_events"} == \
            {k: v for k, v in before.items() if k != "audit_events"}
        assert ("locked out" in result.stderr) == (attempt == 5)
    # Locked: even the right passphrase is refused now, and nothing is written.
    before = row_counts(bench.db)
    result = bench.refused("review", run, "--accept", "--passphrase-stdin", user="cleo",
                           input="cleo-passphrase\n")
    assert "locked out" in result.stderr
    assert row_counts(bench.db) == before
    users = {u["name"]: u for u in bench.json("user", "list")}
    assert users["cleo"]["locked"] is True
    bench.ok("user", "unlock", "cleo", "--reason", "forgot passphrase, identity checked",
             "--passphrase-stdin", user="ada", input="ada-passphrase\n")
    bench.ok("review", run, "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    log = bench.json("audit", "log", "--actor", "cleo")
    assert sum(e["action"] == "auth.failed" for e in log) == 5
    assert bench.json("audit", "verify")["ok"] is True


def test_a_disabled_user_can_do_nothing(bench: Cli) -> None:
    bench.ok("user", "disable", "ben", "--reason", "left the lab", "--passphrase-stdin",
             user="ada", input="ada-passphrase\n")
    before = row_counts(bench.db)
    result = bench.refused("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass",
                           "4.1", user="ben")
    assert "disabled" in result.stderr
    assert row_counts(bench.db) == before
    bench.refused("user", "disable", "ada", "--reason", "x", "--passphrase-stdin", user="ada",
                  input="ada-passphrase\n")
