"""Assays through the command line, and the impact of a changed titrant value on them.

Every expected result is hand-worked here from the titration equation
N_a = N_t x (V_t - V_blank) / V_a (equivalents of analyte = equivalents of titrant,
any analytical chemistry textbook's titration equation), with N_t the titrant's
normality as the record gives it, and the mass concentration N_a x M(HCl) (n = 1) with
M(HCl) from the conventional standard atomic weights H 1.008 and Cl 35.45 (IUPAC/CIAAW
table of standard atomic weights, abridged to conventional values). `molmass`, a formula
library independent of prepbook's with its own (older, NIST) atomic weights, agrees
within the atomic-weight uncertainty of chlorine (about 1.6e-4 relative).
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from statistics import fmean

import pytest
from molmass import Formula

from tests.cli.test_bench_flow import REPS, bench  # noqa: F401
from tests.conftest import Cli, row_counts

# The second standardization reads 1 % less titrant: beyond the drift limit.
DRIFTED = ["0.8085:38.77", "0.8116:38.90", "0.8596:41.25"]
ALIQUOT = 25.0
BLANK = 0.05
VOLUMES = ["24.10", "24.16", "24.05"]
M_HCL = 1.008 + 35.45


def _at(days: int, clock: str = "10:00") -> str:
    return f"{(datetime.now(UTC).date() + timedelta(days=days)).isoformat()}T{clock}"


def hand_worked(n_t: float) -> float:
    """HCl in g/L from the titration equation, the mean of the replicates' results."""
    return fmean(n_t * (float(v) - BLANK) / ALIQUOT * M_HCL for v in VOLUMES)


def _standardize(cli: Cli, batch: str, day: int, reps: list[str]) -> str:
    args = ["standardize", batch, "--lot", "KHP-0001", "--balance", "BAL-1", "--burette",
            "BUR-1", "--at", _at(day), "--reason", "from the bench sheet"]
    for r in reps:
        args += ["--rep", r]
    return str(cli.json(*args, user="ben")["run"])


def _review(cli: Cli, run: str, decision: str = "--accept") -> None:
    cli.ok("review", run, decision, "--passphrase-stdin", "--reason", "checked", user="cleo",
           input="cleo-passphrase\n")


def _assay(cli: Cli, batch: str, day: int, sample: str, *extra: str) -> dict:
    args = ["assay", batch, "--sample", sample, "--analyte", "HCl", "--aliquot", str(ALIQUOT),
            "--blank", str(BLANK), "--limit", "3.40:3.56", "--at", _at(day),
            "--reason", "from the bench sheet"]
    for v in VOLUMES:
        args += ["--rep", v]
    return dict(cli.json(*args, *extra, user="ben"))


def _n20(cli: Cli, batch: str, run: str) -> float:
    shown = cli.json("batch", "show", batch)
    return float(next(r for r in shown["runs"] if r["run"] == run)["normality_20c"])


@pytest.fixture
def lab(bench: Cli) -> tuple[Cli, str, list[str], list[dict]]:  # noqa: F811
    """R1 (day -10), assay 1 (day -9), R2 (day -7), assays 2 and 3 (days -6 and -5)."""
    made = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                      "--at", _at(-12, "08:30"), "--reason", "from the bench sheet", user="ben")
    batch = str(made["batch"])
    r1 = _standardize(bench, batch, -10, REPS)
    _review(bench, r1)
    a1 = _assay(bench, batch, -9, "S-101")
    r2 = _standardize(bench, batch, -7, REPS)
    _review(bench, r2)
    a2 = _assay(bench, batch, -6, "S-102")
    a3 = _assay(bench, batch, -5, "S-103")
    return bench, batch, [r1, r2], [a1, a2, a3]


def test_an_assay_takes_the_accepted_normality_and_is_a_use(lab) -> None:
    cli, batch, (r1, r2), (a1, a2, _) = lab
    assert a1["run"] == r1 and a2["run"] == r2
    assert a1["result"] == pytest.approx(hand_worked(_n20(cli, batch, r1)), rel=1e-9)
    assert a1["result"] == pytest.approx(hand_worked(_n20(cli, batch, r1))
                                         * Formula("HCl").mass / M_HCL, rel=1.6e-4)
    assert a1["concentration"]["value"] == pytest.approx(a1["result"], rel=1e-12)
    assert a1["unit"] == "g/L"
    shown = cli.json("batch", "show", batch)
    assert [a["assay"] for a in shown["assays"]] == [a["assay"] for a in lab[3]]
    # Each assay's titrant is a use of the batch: the sum of its readings, in mL.
    uses = [u for u in shown["uses"] if (u["purpose"] or "").startswith("assay ")]
    assert len(uses) == 3
    assert float(uses[0]["volume_ml"]) == pytest.approx(sum(float(v) for v in VOLUMES))
    assert cli.json("audit", "verify")["ok"] is True


def test_a_correction_recomputes_exactly_the_results_that_used_it(lab) -> None:
    cli, batch, (r1, r2), (a1, a2, a3) = lab
    assert cli.json("impact", batch) == []
    before = row_counts(cli.db)
    cli.ok("correct", r2, "--replicate", "2", "--volume", "39.35", "--reason", "misread",
           "--passphrase-stdin", user="ben", input="ben-passphrase\n")
    _review(cli, r2)
    impacted = {row["assay"]: row for row in cli.json("impact", batch)}
    # Only the results made with R2; the one made with R1 is untouched.
    assert sorted(impacted) == sorted([a2["assay"], a3["assay"]])
    n_corrected = _n20(cli, batch, r2)
    assert n_corrected != pytest.approx(_n20(cli, batch, r1), rel=1e-6)
    for a in (a2, a3):
        row = impacted[a["assay"]]
        assert row["before"] == a["result"]
        assert row["after"] == pytest.approx(hand_worked(n_corrected), rel=1e-9)
        assert row["after_low"] is None and row["after_high"] is None
        assert row["change_percent"] == pytest.approx(
            100 * (hand_worked(n_corrected) / a["result"] - 1), rel=1e-4)
        assert row["crosses_limit"] is ((row["after"] > 3.56) != (a["result"] > 3.56))
        assert r2 in row["reason"] and "corrected" in row["reason"]
    # Nothing stored is overwritten: the assays and their results are as recorded.
    shown = cli.json("batch", "show", batch)
    assert [a["result"] for a in shown["assays"]] == [a1["result"], a2["result"], a3["result"]]
    after = row_counts(cli.db)
    assert after["assays"] == before["assays"] == 3
    assert cli.json("audit", "verify")["ok"] is True
    text = cli.ok("impact", batch).stdout
    assert a2["assay"] in text and a3["assay"] in text and a1["assay"] not in text
    assert f"{r2} was corrected after use" in text


def test_a_drift_gives_the_bracketing_range_and_leaves_earlier_results(lab) -> None:
    cli, batch, (r1, r2), (a1, a2, a3) = lab
    r3 = _standardize(cli, batch, -3, DRIFTED)
    _review(cli, r3)
    n2, n3 = _n20(cli, batch, r2), _n20(cli, batch, r3)
    assert abs(n3 / n2 - 1) > 0.005
    impacted = {row["assay"]: row for row in cli.json("impact", batch)}
    # Assay 1 was made before R2, the previous standardization: untouched.
    assert sorted(impacted) == sorted([a2["assay"], a3["assay"]])
    low, high = sorted((hand_worked(n2), hand_worked(n3)))
    for a in (a2, a3):
        row = impacted[a["assay"]]
        assert row["after"] is None
        assert row["after_low"] == pytest.approx(low, rel=1e-9)
        assert row["after_high"] == pytest.approx(high, rel=1e-9)
        assert row["change_percent"] == pytest.approx(100 * (n3 / n2 - 1), rel=1e-4)
        assert row["crosses_limit"] is (high > 3.56)
        assert "unknown" in row["reason"] and r3 in row["reason"]
    board = next(b for b in cli.json("status") if b["batch"] == batch)
    assert any("2 assay result(s) impacted" in w for w in board["warnings"])


def test_a_run_rejected_after_its_correction_leaves_the_range_of_what_stands(lab) -> None:
    cli, batch, (r1, r2), (a1, a2, a3) = lab
    cli.ok("correct", r2, "--replicate", "2", "--volume", "39.60", "--reason", "misread",
           "--passphrase-stdin", user="ben", input="ben-passphrase\n")
    _review(cli, r2, "--reject")
    impacted = {row["assay"]: row for row in cli.json("impact", batch)}
    assert sorted(impacted) == sorted([a1["assay"], a2["assay"], a3["assay"]])
    # Assay 1 used R1, which stands; but the next standardization after it is now
    # rejected and none has been accepted since: in doubt, with nothing to recompute.
    doubt = impacted[a1["assay"]]
    assert doubt["kind"] == "in-doubt" and r2 in doubt["reason"]
    assert doubt["after"] is doubt["after_low"] is doubt["change_percent"] is None
    assert doubt["crosses_limit"] is None
    only = hand_worked(_n20(cli, batch, r1))
    for a in (a2, a3):
        row = impacted[a["assay"]]
        assert row["after"] is None
        assert row["after_low"] == pytest.approx(only, rel=1e-9)
        assert row["after_high"] == pytest.approx(only, rel=1e-9)
        assert row["kind"] == "withdrawn"
        assert "rejected" in row["reason"] and r1 in row["reason"]


# ------------------------------------------------------------------ refusals


def test_an_assay_is_refused_for_a_batch_not_in_service(bench: Cli, counts) -> None:  # noqa: F811
    made = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                      "--at", _at(-3, "08:30"), "--reason", "from the bench sheet", user="ben")
    batch = str(made["batch"])
    before = counts(bench.db)
    res = bench.refused("assay", batch, "--sample", "S-1", "--analyte", "HCl", "--aliquot",
                        "25", "--rep", "24.1", user="ben")
    assert "new and may not be used" in res.stderr
    _standardize(bench, batch, -2, REPS)
    before = counts(bench.db)
    res = bench.refused("assay", batch, "--sample", "S-1", "--analyte", "HCl", "--aliquot",
                        "25", "--rep", "24.1", user="ben")
    assert "awaiting-review" in res.stderr
    assert counts(bench.db) == before


@pytest.mark.parametrize(("args", "word"), [
    (["--aliquot", "25", "--rep", "24,1"], "decimal"),
    (["--aliquot", "25", "--rep", "-24.1"], "greater than zero"),
    (["--aliquot", "25", "--mass", "1.2", "--rep", "24.1"], "exactly one"),
    (["--rep", "24.1"], "exactly one"),
    (["--aliquot", "25"], "at least one"),
    (["--aliquot", "25", "--rep", "0.04", "--blank", "0.05"], "blank"),
    (["--aliquot", "25", "--rep", "24.1", "--limit", "3.5"], "LOW:HIGH"),
    (["--aliquot", "25", "--rep", "24.1", "--limit", "3.6:3.5"], "below the upper"),
    (["--aliquot", "25", "--rep", "24.1", "--temp", "55"], "outside"),
    (["--aliquot", "25", "--rep", "24.1", "--at", "2999-01-01T10:00"], "future"),
])
def test_bad_assay_input_is_refused_and_writes_nothing(lab, counts, args: list[str],
                                                       word: str) -> None:
    cli, batch, _, _ = lab
    before = counts(cli.db)
    res = cli.refused("assay", batch, "--sample", "S-9", "--analyte", "HCl", *args,
                      user="ben")
    assert word in res.stderr
    assert counts(cli.db) == before


def test_an_unknown_batch_or_analyte_is_refused(lab, counts) -> None:
    cli, batch, _, _ = lab
    before = counts(cli.db)
    cli.refused("assay", "NO-SUCH", "--sample", "S-9", "--analyte", "HCl", "--aliquot", "25",
                "--rep", "24.1", user="ben")
    cli.refused("assay", batch, "--sample", "S-9", "--analyte", "unobtainium", "--aliquot",
                "25", "--rep", "24.1", user="ben")
    cli.refused("impact", "NO-SUCH")
    assert counts(cli.db) == before


def test_export_assays_keeps_the_readings_as_typed(lab, tmp_path) -> None:
    import csv

    cli, batch, (r1, _), (a1, _, _) = lab
    _assay(cli, batch, -4, "=1+2")
    out = tmp_path / "assays.csv"
    cli.ok("export", "assays", "--format", "csv", "-o", str(out))
    with out.open(encoding="utf-8", newline="") as f:
        rows = list(csv.DictReader(f))
    assert len(rows) == 4
    first = rows[0]
    assert first["assay"] == a1["assay"] and first["run"] == r1
    assert first["titrant_volumes_ml"] == ";".join(VOLUMES)
    assert float(first["result"]) == a1["result"] and first["result_unit"] == "g/L"
    assert rows[-1]["sample"] == "'=1+2"  # a formula-looking ID is made inert
