"""Review, integrity and the life of a batch, through the command line.

Tamper tests change the database directly (as someone with a database browser or
a SQL console would: sqlite3 on the file, or plain SQL on the PostgreSQL server)
and check that `audit verify` exits 1 and names what was altered. The guard triggers
refuse such changes, so the tamperer first drops the guards of the tables they edit
(as the owner of the file can), and verify names the missing guards too.
"""

from __future__ import annotations

import hashlib
import json
import sqlite3
from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest
from molmass import Formula

from tests.cli.test_bench_flow import REPS, _at, _days, _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli, on_postgres, raw_sql, row_counts
from tests.tampering import drop_guards, guarded_again, missing_guards

M_KHP = Formula("KHC8H4O4").mass


# A standardization names its balance and burette (a missing one is a failed check).
INSTRUMENTS = ("--balance", "BAL-1", "--burette", "BUR-1")


def _accept(cli: Cli, run: str) -> None:
    cli.ok("review", run, "--accept", "--passphrase-stdin", user="cleo",
           input="cleo-passphrase\n")


def _verify_fails(cli: Cli) -> str:
    result = cli("audit", "verify")
    assert result.exit_code == 1, result.stdout
    return result.stdout


def _unguarded(cli: Cli, *tables: str) -> list[str]:
    """Drop the guards of ``tables``; what verify will then say of them."""
    drop_guards(cli.db, tables)
    return missing_guards(cli.db, *tables)


def _verify_names(cli: Cli, *expected: str) -> list[str]:
    """verify --json fails, and each expected text is in one of its problems."""
    result = cli("audit", "verify", "--json")
    assert result.exit_code == 1, result.stdout
    problems: list[str] = json.loads(result.stdout)["problems"]
    for text in expected:
        assert any(text in p for p in problems), (text, problems)
    return problems


# ------------------------------------------------------------------ tamper evidence


@pytest.fixture
def recorded(bench: Cli) -> tuple[Cli, str, str]:  # noqa: F811
    batch = _make_batch(bench)
    run = _standardize(bench, batch)["run"]
    _accept(bench, run)
    bench.ok("use", batch, "--volume", "20", "--purpose", "assay", user="ben")
    assert bench.json("audit", "verify")["ok"] is True
    return bench, batch, run


def test_an_edited_replicate_is_named(recorded: tuple[Cli, str, str]) -> None:
    cli, _, _ = recorded
    guards = _unguarded(cli, "replicates")
    raw_sql(cli.db, "UPDATE replicates SET volume_ml_text = '39.61' WHERE position = 1")
    problems = _verify_names(cli, *guards)
    assert any("replicates #1" in p and "volume_ml_text" in p for p in problems), problems


@pytest.mark.parametrize(("sql", "column"), [
    # A fraction in a whole-number column must not be read back as its whole part...
    ("UPDATE replicates SET position = 1.25 WHERE id = 1", "position"),
    # ...nor a flag that is neither 0 nor 1 as a yes or a no.
    ("UPDATE replicates SET excluded = '' WHERE id = 1", "excluded"),
    # A blob where text belongs (SQLite cannot write it as JSON: the careful way names it).
    ("UPDATE replicates SET volume_ml_text = x'00ff' WHERE id = 1", "volume_ml_text"),
    # A time in another shape than the one stored, and a different time.
    ("UPDATE replicates SET created_at = '2020-01-01 00:00:00.000000' WHERE id = 1",
     "created_at"),
])
def test_a_value_of_the_wrong_kind_is_found_not_coerced(
        recorded: tuple[Cli, str, str], sql: str, column: str) -> None:
    cli, _, _ = recorded
    if on_postgres():
        pytest.skip("the server's column types refuse these values outright")
    guards = _unguarded(cli, "replicates")
    raw_sql(cli.db, sql)
    problems = _verify_names(cli, *guards)
    assert any(p.startswith("replicates #1") for p in problems), problems


def test_an_inserted_row_is_named(recorded: tuple[Cli, str, str]) -> None:
    cli, _, _ = recorded
    raw_sql(cli.db, "INSERT INTO uses (batch_id, used_at, used_by, volume_ml_text, purpose) "
                 "VALUES (1, '2026-01-01 10:00:00', 'ben', '5', 'slipped in')")
    out = _verify_fails(cli)
    assert "uses #2" in out


def test_a_deleted_row_is_named(recorded: tuple[Cli, str, str]) -> None:
    cli, _, _ = recorded
    guards = _unguarded(cli, "uses")
    raw_sql(cli.db, "DELETE FROM uses WHERE id = 1")
    _verify_names(cli, *guards, "uses #1")


def test_an_edited_or_removed_audit_event_is_found(recorded: tuple[Cli, str, str]) -> None:
    cli, _, _ = recorded
    guards = _unguarded(cli, "audit_events")
    raw_sql(cli.db, "UPDATE audit_events SET actor = 'mallory' WHERE seq = 3")
    _verify_names(cli, *guards, "audit event #3")


def test_a_removed_audit_event_is_found(recorded: tuple[Cli, str, str]) -> None:
    cli, _, _ = recorded
    guards = _unguarded(cli, "audit_events")
    raw_sql(cli.db, "DELETE FROM audit_events WHERE seq = 5")
    _verify_names(cli, *guards, "#5")


def test_verify_json_lists_problems(recorded: tuple[Cli, str, str]) -> None:
    cli, _, _ = recorded
    guards = _unguarded(cli, "batches")
    raw_sql(cli.db, "UPDATE batches SET notes = 'edited behind its back'")
    _verify_names(cli, *guards)
    result = cli("audit", "verify", "--json")
    assert result.exit_code == 1
    doc = json.loads(result.stdout)
    assert doc["ok"] is False and doc["events"] > 0
    assert any("batches #1" in p and "notes" in p for p in doc["problems"])


def test_a_keyed_chain_rebuilt_without_the_key_fails(tmp_path: Path,
                                                     monkeypatch: pytest.MonkeyPatch) -> None:
    """A forger who edits a row and recomputes every hash with plain SHA-256 (not having
    the lab's HMAC key) still fails verification."""
    key = tmp_path / "lab.key"
    key.write_bytes(b"a lab secret kept outside the database, 32+ bytes long!")
    monkeypatch.setenv("PREPBOOK_AUDIT_KEY_FILE", str(key))
    cli = Cli(tmp_path / "keyed.db")
    cli.ok("init")
    cli.ok("user", "add", "ada", "--role", "admin", "--passphrase-stdin", user="ada",
           input="ada-passphrase\n")
    cli.ok("instrument", "add", "BUR-1", "--kind", "burette", "--due", _days(30), "--capacity",
           "50", user="ada")
    assert cli.json("audit", "verify")["ok"] is True
    from prepbook.store.audit import canonical_json

    guards = _unguarded(cli, "instruments", "audit_events", "audit_head")
    con = sqlite3.connect(cli.db)
    con.execute("UPDATE instruments SET capacity_text = '25'")
    rows = con.execute("SELECT seq, at, actor, action, record_type, record_id, \"values\", "
                       "reason, performed_at FROM audit_events ORDER BY seq").fetchall()
    prev = None
    for seq, at, actor, action, rtype, rid, values, reason, performed in rows:
        vals = json.loads(values)
        if rtype == "instruments":
            vals["capacity_text"] = "25"
            values = json.dumps(vals)
            con.execute('UPDATE audit_events SET "values" = ? WHERE seq = ?', (values, seq))
        body = canonical_json({"seq": seq, "at": at, "actor": actor, "action": action,
                               "record_type": rtype, "record_id": rid, "values": vals,
                               "reason": reason, "performed_at": performed, "prev_hash": prev})
        digest = "sha256:" + hashlib.sha256(body.encode()).hexdigest()
        con.execute("UPDATE audit_events SET prev_hash = ?, hash = ? WHERE seq = ?",
                    (prev, digest, seq))
        prev = digest
    con.execute("UPDATE audit_head SET hash = ?", (prev,))
    con.commit()
    con.close()
    _verify_names(cli, *guards)


# ------------------------------------------------------------------ corrections


def test_a_correction_is_a_new_version_and_returns_the_run_to_review(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    run = _standardize(bench, batch)["run"]
    _accept(bench, run)
    before = row_counts(bench.db)
    bench.refused("correct", run, "--replicate", "2", "--volume", "39.30", "--reason", " ",
                  "--passphrase-stdin", user="ben", input="ben-passphrase\n")
    assert row_counts(bench.db) == before
    res = bench.json("correct", run, "--replicate", "2", "--volume", "39.30", "--reason",
                     "misread burette on the bench sheet", "--passphrase-stdin",
                     user="ben", input="ben-passphrase\n")
    assert res["previous_status"] == "accepted" and res["status"] == "awaiting-review"
    # Recomputed with the corrected reading (EURACHEM A2 model, molmass M):
    readings = [(0.8085, 39.16), (0.8116, 39.30), (0.8596, 41.67)]
    expected = sum(1000 * m * 0.9998 / (M_KHP * v) for m, v in readings) / 3
    assert res["normality"] == pytest.approx(expected, rel=2e-5)
    shown = bench.json("batch", "show", batch)
    reps = shown["runs"][0]["replicates"]
    second = [r for r in reps if r["position"] == 2]
    assert [(r["version"], r["volume_ml"], r["current"]) for r in second] == [
        (1, "39.29", False), (2, "39.30", True)]
    assert second[1]["reason"] == "misread burette on the bench sheet"
    assert shown["state"] == "awaiting-review"
    # The person who corrected it may not be its reviewer either: cleo may.
    _accept(bench, run)
    assert bench.json("audit", "verify")["ok"] is True


def test_an_excluded_replicate_leaves_the_mean(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    run = _standardize(bench, batch)["run"]
    res = bench.json("exclude", run, "--replicate", "3", "--reason", "endpoint overshot",
                     "--passphrase-stdin", user="ben", input="ben-passphrase\n")
    kept = [(0.8085, 39.16), (0.8116, 39.29)]
    expected = sum(1000 * m * 0.9998 / (M_KHP * v) for m, v in kept) / 2
    assert res["normality"] == pytest.approx(expected, rel=2e-5)
    assert [r["excluded"] for r in res["replicates"]] == [False, False, True]
    assert any(c["name"] == "replicate-count" and not c["passed"] for c in res["checks"])
    bench.refused("exclude", run, "--replicate", "3", "--reason", "again", "--passphrase-stdin",
                  user="ben", input="ben-passphrase\n")


# ------------------------------------------------------------------ life of a batch


def test_expired_and_retired_batches_cannot_be_standardized_or_used(bench: Cli) -> None:  # noqa: F811
    old = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                     "--at", _at(-120), "--reason", "from the bench log", user="ben")["batch"]
    assert old  # NaOH-0.1N keeps 90 days (catalog, common practice)
    before = row_counts(bench.db)
    r = bench.refused("standardize", old, "--lot", "KHP-0001", "--rep", "0.8:40", user="ben")
    assert "expired" in r.stderr
    r = bench.refused("use", old, "--volume", "10", "--purpose", "assay", user="ben")
    assert "expired" in r.stderr
    assert row_counts(bench.db) == before
    fresh = _make_batch(bench)
    bench.refused("batch", "retire", fresh, "--reason", "", "--passphrase-stdin", user="ben",
                  input="ben-passphrase\n")
    bench.ok("batch", "retire", fresh, "--reason", "spilled", "--passphrase-stdin", user="ben",
             input="ben-passphrase\n")
    r = bench.refused("standardize", fresh, "--lot", "KHP-0001", "--rep", "0.8:40", user="ben")
    assert "retired" in r.stderr
    assert fresh not in {b["batch"] for b in bench.json("status")}


def test_a_retirement_can_be_dated_but_not_before_what_the_batch_went_through(
        bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)  # made two days ago at 08:30
    _accept(bench, _standardize(bench, batch)["run"])  # standardized yesterday at 10:00
    sign = {"user": "ben", "input": "ben-passphrase\n"}
    before = row_counts(bench.db)
    for at, words in ((_at(-3), "before the batch was made"),
                      (_at(-1, "09:00"), "was standardized on"),
                      (_at(2), "in the future"),
                      ("yesterday", "--at")):
        r = bench.refused("batch", "retire", batch, "--reason", "spilled", "--at", at,
                          "--passphrase-stdin", **sign)
        assert words in r.stderr, (at, r.stderr)
    assert row_counts(bench.db) == before
    done = bench.json("batch", "retire", batch, "--reason", "spilled on the bench",
                      "--at", _at(-1, "16:45"), "--passphrase-stdin", "--json", **sign)
    assert done["retired_at"] == _at(-1, "16:45")
    assert bench.json("batch", "show", batch)["retired"]["at"] == _at(-1, "16:45")
    event = bench.json("audit", "log", "--record", "batches")[-1]
    assert event["action"] == "batch.retire"
    assert bench.json("audit", "verify")["ok"] is True


def test_a_due_batch_cannot_be_used(bench: Cli) -> None:  # noqa: F811
    batch = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                       "--at", _at(-20), "--reason", "from the bench log", user="ben")["batch"]
    run = bench.json("standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS,
                     "--at", _at(-19), "--reason", "from the bench log",
                     *sum((["--rep", r] for r in REPS), []), user="ben")["run"]
    _accept(bench, run)
    row = next(b for b in bench.json("status") if b["batch"] == batch)
    assert row["state"] == "due"  # NaOH-0.1N: restandardize every 7 days
    r = bench.refused("use", batch, "--volume", "10", "--purpose", "assay", user="ben")
    assert "due" in r.stderr


def test_a_stock_expiry_caps_its_dilution(bench: Cli) -> None:  # noqa: F811
    """Expiry = made + shelf life, never later than what it was made from (DESIGN)."""
    stock = bench.json("batch", "make", "HCl-1N", "--volume", "1000", "--stock-volume", "86",
                       "--at", _at(-300), "--reason", "from the bench log", user="ben")
    dil = bench.json("batch", "make", "HCl-0.1N", "--volume", "1000", "--from-batch",
                     stock["batch"], "--aliquot", "100", "--at", _at(-1), user="ben")
    own = (datetime.now(UTC).date() + timedelta(days=-1 + 365)).isoformat()
    assert stock["expires"] < own
    assert dil["expires"] == stock["expires"]


def test_trend_forecast_matches_a_hand_least_squares(bench: Cli) -> None:  # noqa: F811
    batch = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                       "--at", _at(-40), "--reason", "from the bench log", user="ben")["batch"]
    sets = [(-39, ["0.8085:39.16", "0.8116:39.29", "0.8596:41.67"]),
            (-30, ["0.8085:39.26", "0.8116:39.39", "0.8596:41.77"]),
            (-20, ["0.8085:39.38", "0.8116:39.51", "0.8596:41.90"]),
            (-10, ["0.8085:39.47", "0.8116:39.60", "0.8596:41.99"])]
    for day, reps in sets:
        run = bench.json("standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS,
                         "--at", _at(day), "--reason", "from the bench log",
                         *sum((["--rep", r] for r in reps), []), user="ben")["run"]
        _accept(bench, run)
    t = bench.json("trend", batch)
    xs = [float(d) for d, _ in sets]
    ys = [h["factor"] for h in t["history"]]
    n = len(xs)
    mx, my = sum(xs) / n, sum(ys) / n
    slope = sum((x - mx) * (y - my) for x, y in zip(xs, ys, strict=True)) / \
        sum((x - mx) ** 2 for x in xs)
    intercept = my - slope * mx
    assert t["slope_percent_per_30d"] == pytest.approx(slope * 30 * 100, rel=1e-3)
    lo, _hi = t["window"]
    crossing_day = (lo - intercept) / slope  # falling: leaves through the lower limit
    expected = (datetime.now(UTC).date() + timedelta(days=crossing_day)).isoformat()
    got = datetime.fromisoformat(t["forecast_leaves_window"]).date()
    assert abs((got - datetime.fromisoformat(expected).date()).days) <= 1
    assert [h["change_percent"] is None for h in t["history"]] == [True, False, False, False]
    text = bench.ok("trend", batch).stdout
    assert "least-squares line" in text and "o" in text


def test_drift_beyond_the_limit_flags_the_uses_since_the_previous_standardization(
        bench: Cli) -> None:  # noqa: F811
    batch = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                       "--at", _at(-6), "--reason", "from the bench log", user="ben")["batch"]
    first = bench.json("standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS,
                       "--at", _at(-5, "09:00"), "--reason", "from the bench log",
                       *sum((["--rep", r] for r in REPS), []), user="ben")["run"]
    _accept(bench, first)
    bench.ok("use", batch, "--volume", "20", "--purpose", "sample 17", "--at", _at(-4),
             "--reason", "from the bench log", user="ben")
    bench.ok("use", batch, "--volume", "20", "--purpose", "sample 18", "--at", _at(-3),
             "--reason", "from the bench log", user="ben")
    # About 1 % weaker: beyond the 0.5 % drift limit of NaOH-0.1N.
    weaker = ["0.8085:39.56", "0.8116:39.69", "0.8596:42.09"]
    second = bench.json("standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS,
                     "--at", _at(-2),
                        *sum((["--rep", r] for r in weaker), []), user="ben")["run"]
    _accept(bench, second)
    bench.ok("use", batch, "--volume", "20", "--purpose", "sample 19", "--at", _at(-1), user="ben")
    t = bench.json("trace", batch)
    flagged = [u["purpose"] for u in t["uses_needing_review"]]
    assert flagged == ["sample 17", "sample 18"]
    assert "limit 0.5 %" in t["uses_needing_review"][0]["why"]
    assert len(t["downward"]["uses"]) == 3
    row = next(b for b in bench.json("status") if b["batch"] == batch)
    assert any("drift" in w.lower() for w in row["warnings"])


def test_the_board_compares_and_shows_normalities_at_20_c(bench: Cli) -> None:  # noqa: F811
    # The same readings at 10 C and at 35 C give the same normality at those
    # temperatures, but water expands by about 0.57 % between them (0.99970 and
    # 0.99403 g/mL, CIPM formula; see tests/chem/test_corrections.py): at 20 C the
    # second result is about 0.57 % stronger, beyond the 0.5 % drift limit of
    # NaOH-0.1N. The trend and the board must both see that drift, and the board's
    # normality must be the one its factor and the label use.
    batch = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                       "--at", _at(-6), "--reason", "from the bench log", user="ben")["batch"]
    reps = sum((["--rep", r] for r in REPS), [])
    cold = bench.json("standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS,
                      "--at", _at(-5), "--reason", "from the bench log", "--temp", "10",
                      *reps, user="ben")
    _accept(bench, cold["run"])
    warm = bench.json("standardize", batch, "--lot", "KHP-0001", *INSTRUMENTS,
                     "--at", _at(-2), "--temp", "35",
                      *reps, user="ben")
    _accept(bench, warm["run"])
    assert warm["normality"] == pytest.approx(cold["normality"], rel=1e-12)
    shown = bench.json("batch", "show", batch)
    runs = {r["run"]: r for r in shown["runs"]}
    n20 = runs[warm["run"]]["normality_20c"]
    assert n20 / runs[cold["run"]]["normality_20c"] - 1 == pytest.approx(0.0057, abs=0.0003)
    row = next(b for b in bench.json("status") if b["batch"] == batch)
    assert row["normality"] == n20 == shown["normality"]
    assert row["factor"] == pytest.approx(n20 / 0.1, rel=1e-12)
    assert any("drift" in w.lower() for w in row["warnings"]), row["warnings"]
    trend = bench.json("trend", batch)
    assert abs(trend["history"][-1]["change_percent"]) > 0.5


def test_a_time_stored_the_iso_way_is_the_same_time(recorded: tuple[Cli, str, str]) -> None:
    # 'T' for SQLAlchemy's space in a table SQLite compares itself (replicates) and in
    # one the Python way compares (batches): the same times, so nothing to report.
    cli, _, _ = recorded
    if on_postgres():
        pytest.skip("the server stores times as times")
    with guarded_again(cli.db):
        raw_sql(cli.db, "UPDATE replicates SET created_at = replace(created_at, ' ', 'T')")
        raw_sql(cli.db, "UPDATE batches SET made_at = replace(made_at, ' ', 'T')")
    assert cli.json("audit", "verify")["ok"] is True
    with guarded_again(cli.db):
        raw_sql(cli.db, "UPDATE replicates SET created_at = replace(created_at, 'T', ' ') "
                     "|| 'Z' WHERE id = 1")
    assert "replicates #1" in _verify_fails(cli)
