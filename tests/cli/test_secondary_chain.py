"""A batch standardized against another carries the reference's recorded uncertainty.

NaOH is standardized against KHP (direct) and accepted; HCl is then standardized against
that NaOH (secondary). The HCl run's budget must hold the NaOH run's own standard
uncertainty as its "reference normality" line, with the relative uncertainty the NaOH
record gives, and its combined relative uncertainty can never be below it (EURACHEM/CITAC
CG4, 3rd ed., section 8 rule 2: the relative uncertainties of a product add in quadrature;
CG4 Example A3 carries the NaOH of Example A2 into the HCl result the same way).
"""

from __future__ import annotations

import io
import math
from pathlib import Path

import pytest
from pypdf import PdfReader

from tests.cli.test_bench_flow import _at, _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli

HCL_REPS = ["25.00:24.90", "25.00:24.95", "25.00:24.92"]


def _accepted_naoh(bench: Cli) -> tuple[str, dict]:  # noqa: F811
    naoh = _make_batch(bench)
    run = _standardize(bench, naoh)
    bench.ok("review", run["run"], "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    return naoh, run


def _hcl(bench: Cli) -> str:  # noqa: F811
    made = bench.json("batch", "make", "HCl-0.1N", "--volume", "1000", "--stock-volume", "8.3",
                      "--at", _at(-2, "09:00"), user="ben")
    return str(made["batch"])


def _secondary(bench: Cli, hcl: str, naoh: str, *extra: str,  # noqa: F811
               reps: list[str] = HCL_REPS) -> dict:
    args = ["standardize", hcl, "--against", naoh, "--burette", "BUR-1", "--at",
            _at(-1, "11:00")]
    for r in reps:
        args += ["--rep", r]
    return bench.json(*args, *extra, user="ben")


def test_secondary_run_inherits_the_references_recorded_uncertainty(
        bench: Cli, tmp_path: Path) -> None:  # noqa: F811
    naoh, ref_run = _accepted_naoh(bench)
    hcl = _hcl(bench)
    res = _secondary(bench, hcl, naoh)
    # the reference as recorded: its accepted run, its u at 20 C (the run was at 20 C)
    assert res["reference"]["batch"] == naoh and res["reference"]["run"] == ref_run["run"]
    assert res["reference"]["u"] == pytest.approx(ref_run["u"], rel=1e-12)
    lines = {line["symbol"]: line for line in res["budget"]}
    rel_ref = ref_run["u"] / ref_run["normality"]
    assert lines["N_ref"]["u_relative"] == pytest.approx(rel_ref, rel=1e-9)
    assert lines["N_ref"]["missing"] is None
    assert {"N_ref", "V_aliquot", "V", "f_rep"} <= set(lines)
    # rule 2: the result's relative u is the quadrature sum of the lines', >= the reference's
    rel = res["u"] / res["normality"]
    assert rel == pytest.approx(math.sqrt(sum(line["u_relative"] ** 2
                                              for line in lines.values())), rel=1e-6)
    assert rel > rel_ref
    assert res["U"] == pytest.approx(2 * res["u"])
    assert res["repeatability"] == "estimated"

    # the record keeps it: batch show has the same budget, reference and source
    run = bench.json("batch", "show", hcl)["runs"][0]
    assert run["method"] == "secondary" and run["reference_batch"] == naoh
    assert run["U"] == pytest.approx(res["U"], rel=1e-12)
    assert run["reference"] == res["reference"]
    assert [b["symbol"] for b in run["budget"]] == [b["symbol"] for b in res["budget"]]
    assert run["repeatability"] == "estimated"
    text = bench.ok("batch", "show", hcl).stdout
    assert f"inherits from {naoh} (run {ref_run['run']}" in " ".join(text.split())

    # and the report, where a primary run shows its budget
    pdf = tmp_path / "hcl.pdf"
    bench.ok("report", hcl, "--output", str(pdf))
    reader = PdfReader(io.BytesIO(pdf.read_bytes()))
    page_text = " ".join(" ".join((p.extract_text() or "").split()) for p in reader.pages)
    assert "reference normality (N_ref)" in page_text
    assert f"inherits from {naoh} (run {ref_run['run']}" in page_text


def test_one_replicate_names_the_missing_repeatability_until_one_is_given(bench: Cli) -> None:  # noqa: F811
    naoh, _ = _accepted_naoh(bench)
    hcl = _hcl(bench)
    alone = _secondary(bench, hcl, naoh, reps=["25.00:24.90"])
    assert alone["repeatability"] == "missing"
    assert [b["symbol"] for b in alone["budget"] if b["missing"]] == ["f_rep"]
    text = bench.ok("batch", "show", hcl).stdout
    assert "f_rep" not in text and "repeatability missing" in " ".join(text.split())

    given = _secondary(bench, hcl, naoh, "--repeatability", "0.05", reps=["25.00:24.90"])
    assert given["repeatability"] == "given" and given["repeatability_rsd_percent"] == 0.05
    f_rep = next(b for b in given["budget"] if b["symbol"] == "f_rep")
    assert f_rep["missing"] is None and f_rep["u"] == pytest.approx(0.0005)
    # a correction recomputes the run with the repeatability it was recorded with
    fixed = bench.json("correct", given["run"], "--replicate", "1", "--volume", "24.91",
                       "--reason", "misread", "--passphrase-stdin", user="ben",
                       input="ben-passphrase\n")
    assert fixed["repeatability"] == "given"
    assert any(b["symbol"] == "f_rep" and b["u"] == pytest.approx(0.0005)
               for b in fixed["budget"])


def test_reaction_is_chosen_recorded_and_refused_when_unknown(bench: Cli) -> None:  # noqa: F811
    bench.ok("lot", "add", "Na2CO3", "--code", "SC-1", "--purity", "99.95", "--expires",
             "2099-01-01", user="ben")
    hcl = _hcl(bench)
    args = ["standardize", hcl, "--lot", "SC-1", "--balance", "BAL-1", "--burette", "BUR-1",
            "--at", _at(-1, "11:00"), "--rep", "0.2650:25.00", "--rep", "0.2655:25.04",
            "--rep", "0.2648:24.98"]
    default = bench.json(*args, user="ben")
    first = bench.json(*args, "--reaction", "acid-base-first", user="ben")
    assert default["reaction"] == "acid-base" and first["reaction"] == "acid-base-first"
    # n = 2 to CO2, n = 1 to hydrogen carbonate: the same readings give half the normality
    # (by hand: 0.2650 g / 105.99 g/mol = 2.5003 mmol in 25.00 mL -> 0.10001 M)
    assert first["normality"] == pytest.approx(default["normality"] / 2, rel=1e-12)
    assert bench.json("batch", "show", hcl)["runs"][1]["reaction"] == "acid-base-first"
    bad = bench.refused(*args, "--reaction", "to-the-moon", user="ben")
    assert "has no 'to-the-moon' reaction; it has: acid-base (acid-base, n = 2), " \
           "acid-base-first (acid-base, n = 1)" in bad.stderr
    assert len(bad.stderr.strip().splitlines()) == 1
