"""Readings straight from the instruments, through the command line: masses read from a
(simulated) balance and volumes checked against, or taken from, stored titration curves.

The equivalence volume a curve must give is the stoichiometric one,
V = 1000 m P / (M N), with M(KHP) from `molmass` (its own NIST atomic weights), the
direct-standardization equation of EURACHEM/CITAC CG4 Example A2 without f_rep. The
tolerance of 0.05 mL is a Class A 50 mL burette's (ISO 385).
"""

from __future__ import annotations

import hashlib
import json
import re
from collections.abc import Iterator
from pathlib import Path

import pytest
from molmass import Formula

from prepbook.devices.profiles import find_profile
from prepbook.devices.simulator import SimulatedBalance, SocketServer
from prepbook.lab.demo_readings import khp_curve
from tests.cli.test_bench_flow import _at, _make_batch, bench  # noqa: F401 (fixture)
from tests.conftest import Cli, is_url, row_counts
from tests.tampering import tamper

MASSES = ["0.8085", "0.8116", "0.8596"]
NORMALITY = 0.1003  # the invented strength the curves are computed for
PURITY = 0.9998


def _ve(mass: str) -> float:
    return 1000 * float(mass) * PURITY / (Formula("KHC8H4O4").mass * NORMALITY)


@pytest.fixture
def balance(bench: Cli) -> Iterator[SimulatedBalance]:  # noqa: F811
    """BAL-1 connected to a simulated balance on a loopback socket."""
    simulated = SimulatedBalance(find_profile("mark-first"), MASSES)
    server = SocketServer(simulated).start()
    try:
        bench.ok("instrument", "connect", "BAL-1", "--port", server.url, "--profile",
                 "mark-first", user="ben")
        yield simulated
    finally:
        server.stop()


@pytest.fixture
def curves(tmp_path: Path) -> list[Path]:
    """A meter's export for each mass, with a UTF-8 mark and a Latin-1 byte in its
    preamble, so "byte for byte" means something."""
    out = []
    for i, mass in enumerate(MASSES, start=1):
        path = tmp_path / f"curve{i}.csv"
        path.write_bytes(b"\xef\xbb\xbfMeter \xb5-export\r\n"
                         + khp_curve(float(mass), PURITY, NORMALITY, seed=i))
        out.append(path)
    return out


def _standardize(cli: Cli, batch: str, reps: list[str], *extra: str) -> dict:
    args = ["standardize", batch, "--lot", "KHP-0001", "--balance", "BAL-1", "--burette",
            "BUR-1", "--at", _at(-1), *extra]
    for r in reps:
        args += ["--rep", r]
    return cli.json(*args, user="ben")


def _rows(db: Path | str, sql: str) -> list[tuple]:
    """Rows read behind prepbook's back (SQLAlchemy Core, either backend)."""
    from sqlalchemy import create_engine, text
    from sqlalchemy.pool import NullPool

    engine = create_engine(str(db) if is_url(db) else f"sqlite:///{db}", poolclass=NullPool)
    try:
        with engine.connect() as conn:
            return [tuple(r) for r in conn.execute(text(sql))]
    finally:
        engine.dispose()


def test_masses_read_from_the_balance_are_stored_with_their_raw_line_and_audited(
        bench: Cli, balance: SimulatedBalance) -> None:  # noqa: F811
    batch = _make_batch(bench)
    run = _standardize(bench, batch, ["@balance:39.16", "0.8116:39.29", "@balance:41.67"])
    shown = bench.json("batch", "show", batch)
    assert [r["amount"] for r in shown["runs"][0]["replicates"]] == ["0.8085", "0.8116",
                                                                       "0.8116"]
    sources = _rows(bench.db, "SELECT amount_source, amount_instrument, amount_raw, "
                              "volume_source FROM replicate_sources ORDER BY id")
    assert sources == [("balance", "BAL-1", "S      +0.8085 g", "typed"),
                       ("typed", None, None, "typed"),
                       ("balance", "BAL-1", "S      +0.8116 g", "typed")]
    events = [json.loads(v) for (v,) in _rows(
        bench.db, "SELECT \"values\" FROM audit_events WHERE record_type = 'replicate_sources' "
                  "ORDER BY seq")]
    assert [e["amount_raw"] for e in events] == ["S      +0.8085 g", None, "S      +0.8116 g"]
    assert run["status"] == "awaiting-review"
    text = bench.ok("batch", "show", batch).stdout
    assert "1.1: mass read from balance BAL-1" in text and "2.1: mass typed" in text
    # When it was read, in lab time with its offset, as every other time shown.
    assert re.search(r"BAL-1 at \d{4}-\d\d-\d\d \d\d:\d\d [+-]\d\d:\d\d, printed as", text), text
    assert bench.json("audit", "verify")["ok"] is True

    tamper(bench.db, "UPDATE replicate_sources SET amount_raw = 'S      +0.8090 g' "
                      "WHERE id = 1")
    verify = json.loads(bench("audit", "verify", "--json").stdout)
    assert verify["ok"] is False
    assert any("replicate_sources" in p and "amount_raw" in p for p in verify["problems"])


@pytest.mark.parametrize(("mode", "words"), [
    ("unstable", "not stable"), ("wrong-unit", "not grams"), ("overload", "overload"),
    ("silent", "no reading from the balance"),
])
def test_a_balance_reading_that_cannot_be_taken_records_nothing(
        bench: Cli, balance: SimulatedBalance, mode: str, words: str) -> None:  # noqa: F811
    batch = _make_batch(bench)
    if mode == "silent":
        bench.ok("settings", "set", "balance_timeout_s", "1", "--reason", "test",
                 "--passphrase-stdin",
                 user="ada", input="ada-passphrase\n")
    balance.set(mode=mode)
    before = row_counts(bench.db)
    result = bench.refused("standardize", batch, "--lot", "KHP-0001", "--balance", "BAL-1",
                           "--at", _at(-1), "--rep", "@balance:39.16", user="ben")
    assert words in result.stderr
    assert row_counts(bench.db) == before


def test_balance_needed_for_a_balance_reading(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    result = bench.refused("standardize", batch, "--lot", "KHP-0001", "--at", _at(-1),
                           "--rep", "@balance:39.16", user="ben")
    assert "--balance" in result.stderr
    result = bench.refused("instrument", "read", "BAL-1")
    assert "no connection" in result.stderr
    result = bench.refused("instrument", "connect", "BUR-1", "--port", "COM3", "--profile",
                           "mark-first", user="ben")
    assert "only a balance" in result.stderr


def test_instrument_read_gives_one_mass_and_writes_nothing(
        bench: Cli, balance: SimulatedBalance) -> None:  # noqa: F811
    before = row_counts(bench.db)
    got = bench.json("instrument", "read", "BAL-1")
    assert (got["balance"], got["mass_text"], got["mass_g"], got["raw"]) == \
        ("BAL-1", "0.8085", 0.8085, "S      +0.8085 g")
    assert row_counts(bench.db) == before


def test_a_curve_is_stored_byte_for_byte_and_gives_the_volume(
        bench: Cli, curves: list[Path]) -> None:  # noqa: F811
    from prepbook.lab import replicate_curves
    from prepbook.store.engine import open_database

    batch = _make_batch(bench)
    reps = [f"{m}:@{c}" for m, c in zip(MASSES, curves, strict=True)]
    run = _standardize(bench, batch, reps)
    volumes = [float(r["volume_ml"]) for r in
               bench.json("batch", "show", batch)["runs"][0]["replicates"]]
    for mass, volume in zip(MASSES, volumes, strict=True):
        assert volume == pytest.approx(_ve(mass), abs=0.1)
    db = open_database(str(bench.db))
    for i, path in enumerate(curves, start=1):
        assert replicate_curves.load(db, run["run"], i) == path.read_bytes()
    back = path.parent / "back.csv"
    bench.ok("instrument", "curve", run["run"], "--replicate", "2", "-o", str(back))
    assert back.read_bytes() == curves[1].read_bytes()
    assert "exists" in bench.refused("instrument", "curve", run["run"], "--replicate", "2",
                                     "-o", str(back)).stderr
    stored = _rows(bench.db, "SELECT sha256, size_bytes FROM replicate_curves ORDER BY position")
    assert stored[0] == (hashlib.sha256(curves[0].read_bytes()).hexdigest(),
                         len(curves[0].read_bytes()))
    audited = json.loads(_rows(bench.db, "SELECT \"values\" FROM audit_events WHERE "
                                         "record_type = 'replicate_curves' ORDER BY seq")[0][0])
    assert audited["content"] == "sha256:" + stored[0][0]
    check = next(c for c in run["checks"] if c["name"] == "curve-endpoint")
    assert check["passed"] and "3 volume(s) taken from the curve" in check["message"]
    text = bench.ok("batch", "show", batch).stdout
    assert "curve of replicate 1: curve1.csv" in text and "E" in text


def test_editing_a_stored_curve_outside_prepbook_is_found(
        bench: Cli, curves: list[Path]) -> None:  # noqa: F811
    batch = _make_batch(bench)
    _standardize(bench, batch, [f"{MASSES[0]}:@{curves[0]}"])
    assert bench.json("audit", "verify")["ok"] is True
    edited = curves[0].read_bytes().replace(b"Meter", b"Metre")
    tamper(bench.db, "UPDATE replicate_curves SET content = ? WHERE id = 1", edited)
    verify = json.loads(bench("audit", "verify", "--json").stdout)
    assert verify["ok"] is False
    assert any("replicate_curves" in p and "content" in p for p in verify["problems"])


def test_a_typed_volume_that_disagrees_with_its_curve_fails_the_run(
        bench: Cli, curves: list[Path]) -> None:  # noqa: F811
    batch = _make_batch(bench)
    agree = [f"{m}:{_ve(m):.2f}@{c}" for m, c in zip(MASSES, curves, strict=True)]
    run = _standardize(bench, batch, agree)
    check = next(c for c in run["checks"] if c["name"] == "curve-endpoint")
    assert check["passed"], check["message"]

    batch2 = _make_batch(bench)
    # Replicate 2 typed with two digits swapped: 40.79 read as 40.97.
    wrong = list(agree)
    wrong[1] = f"{MASSES[1]}:{_ve(MASSES[1]) + 0.3:.2f}@{curves[1]}"
    run = _standardize(bench, batch2, wrong)
    check = next(c for c in run["checks"] if c["name"] == "curve-endpoint")
    assert not check["passed"] and check["severity"] == "fail"
    assert "replicate 2:" in check["message"] and "replicate 1:" not in check["message"]
    shown = bench.json("batch", "show", batch2)
    assert shown["runs"][0]["verdict"] == "fail"


def test_a_correction_is_checked_against_the_stored_curve(
        bench: Cli, curves: list[Path]) -> None:  # noqa: F811
    batch = _make_batch(bench)
    reps = [f"{m}:@{c}" for m, c in zip(MASSES, curves, strict=True)]
    run = _standardize(bench, batch, reps)
    res = bench.json("correct", run["run"], "--replicate", "1", "--volume",
                     f"{_ve(MASSES[0]) + 0.5:.2f}", "--reason", "burette read again",
                     "--passphrase-stdin", user="ben", input="ben-passphrase\n")
    check = next(c for c in res["checks"] if c["name"] == "curve-endpoint")
    assert not check["passed"] and "replicate 1:" in check["message"]
    sources = _rows(bench.db, "SELECT volume_source FROM replicate_sources ORDER BY id")
    assert sources[-1] == ("typed",)  # the corrected volume was typed, not the curve's


def test_the_prompt_reads_a_mass_from_the_balance(
        bench: Cli, balance: SimulatedBalance) -> None:  # noqa: F811
    batch = _make_batch(bench)
    answers = "20\nb\n39.16\n0.8116\n39.29\n\ny\n"  # temperature ... confirmation
    result = bench.ok("standardize", batch, "--lot", "KHP-0001", "--balance", "BAL-1",
                      "--at", _at(-1), user="ben", input=answers)
    assert "read 0.8085 g from balance BAL-1" in result.stdout
    sources = _rows(bench.db, "SELECT amount_source, amount_raw FROM replicate_sources "
                              "ORDER BY id")
    assert sources == [("balance", "S      +0.8085 g"), ("typed", None)]


def test_the_prompt_refuses_an_unstable_reading_and_asks_again(
        bench: Cli, balance: SimulatedBalance) -> None:  # noqa: F811
    batch = _make_batch(bench)
    balance.set(mode="unstable")
    result = bench.ok("standardize", batch, "--lot", "KHP-0001", "--balance", "BAL-1",
                      "--at", _at(-1), user="ben", input="20\nb\n0.8116\n39.29\n\ny\n")
    assert "not taken" in result.stdout and "not stable" in result.stdout
    assert _rows(bench.db, "SELECT amount_source FROM replicate_sources") == [("typed",)]


def test_a_curve_that_cannot_be_read_records_nothing(bench: Cli, tmp_path: Path) -> None:  # noqa: F811
    batch = _make_batch(bench)
    flat = tmp_path / "flat.csv"
    flat.write_text("volume_ml,pH\n" + "".join(f"{v},{7.0}\n" for v in range(20)),
                    encoding="ascii")
    before = row_counts(bench.db)
    for rep, words in ((f"0.8085:@{flat}", "no inflection"),
                       (f"0.8085:39.16@{tmp_path / 'missing.csv'}", "cannot read the curve")):
        result = bench.refused("standardize", batch, "--lot", "KHP-0001", "--at", _at(-1),
                               "--rep", rep, user="ben")
        assert words in result.stderr
    assert row_counts(bench.db) == before
