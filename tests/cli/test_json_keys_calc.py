"""The JSON keys of `calc`, `standardize`, `correct`, `exclude` and `review` (DESIGN section 4:
scripts depend on them; add freely, never rename). Pinned in order, nested objects too.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.conftest import Cli

# One budget row for calc and the recorded runs; ``missing`` (why a term was not evaluated)
# was added by the chemistry core, a new key as DESIGN section 4 allows.
# The commands whose --json keys this file pins (test_json_keys_audit checks the union).
PINNED = {"calc normality", "calc secondary", "calc solid", "calc liquid", "calc dilute",
          "calc adjust", "calc buoyancy", "calc temperature", "calc titer", "calc eqpoint",
          "calc endpoint", "standardize", "correct", "exclude", "review"}
BUDGET = ["quantity", "symbol", "value", "unit", "u", "u_relative", "contribution",
          "share_percent", "missing"]
CHECK = ["name", "passed", "severity", "message"]
RUN_RESULT = ["run", "batch", "normality", "normality_20c", "temperature_c", "factor", "unit",
              "sd", "rsd_percent", "u", "U", "k", "verdict", "checks", "warnings", "replicates",
              "budget", "status", "reference", "repeatability", "repeatability_rsd_percent",
              "reaction"]
RUN_REPLICATE = ["index", "normality", "outlier", "excluded", "true_mass_g"]

CALC = {
    ("normality", "--standard", "KHP", "--titrant", "NaOH", "--purity", "99.98",
     "--rep", "0.8085:39.16", "--rep", "0.8116:39.29", "--rep", "0.8596:41.67"):
        ["standard", "titrant", "reaction", "titrant_n_eq_per_mol", "blank_ml", "buoyancy",
         "normality", "molarity", "replicates", "sd", "rsd_percent", "u", "U", "k", "budget",
         "warnings", "repeatability_rsd_percent", "uncertainty_notes", "repeatability",
         "temperature_c", "normality_20c", "solvent", "expansion_per_c", "expansion_source"],
    ("secondary", "--reference-normality", "0.1", "--aliquot", "25", "--rep", "24.9",
     "--rep", "25.1"):
        ["reference_normality", "aliquot_ml", "blank_ml", "normality", "replicates", "sd",
         "rsd_percent", "warnings", "reference_u", "u", "U", "k", "budget",
         "repeatability_rsd_percent", "repeatability", "uncertainty_notes"],
    ("solid", "NaOH", "--normality", "0.1", "--volume", "1000"):
        ["solute", "name", "formula", "molar_mass_g_per_mol", "n_eq_per_mol", "reaction",
         "normality", "volume_ml", "purity_percent", "mass_g", "cautions"],
    ("liquid", "HCl", "--normality", "1", "--volume", "1000"):
        ["reagent", "name", "formula", "mass_fraction_percent", "density_g_per_ml",
         "molarity_mol_per_l", "n_eq_per_mol", "normality", "final_volume_ml", "volume_ml",
         "cautions", "source"],
    ("dilute", "--stock", "1.0131", "--normality", "0.1", "--volume", "1000"):
        ["stock_normality", "normality", "volume_ml", "stock_ml", "water_ml"],
    ("adjust", "--normality", "0.1047", "--target", "0.1", "--volume", "950"):
        ["normality", "target", "volume_now_ml", "add", "volume_ml"],
    ("buoyancy", "--mass", "0.3888", "--density", "1.636"):
        ["reading_g", "mass_g", "correction_g", "density_g_per_cm3", "air_density_g_per_cm3",
         "weights_density_g_per_cm3"],
    ("temperature", "--normality", "0.10214", "--from", "25", "--to", "20"):
        ["normality_from", "from_c", "to_c", "normality", "ratio", "solvent", "expansion_per_c",
         "expansion_source"],
    ("titer", "--titrant", "NaOH", "--normality", "0.1", "--analyte", "KHP"):
        ["titrant", "normality", "analyte", "analyte_formula", "analyte_n_eq_per_mol",
         "reaction", "mg_per_ml"],
    ("eqpoint", "--standard", "KHP", "--titrant", "NaOH", "--concentration", "0.05"):
        ["standard", "titrant", "reaction", "n_eq_per_mol", "concentration_mol_per_l", "ph",
         "suitable", "unsuitable", "titrant_concentration_mol_per_l",
         "sample_concentration_mol_per_l", "co2_removed", "tolerance_percent", "indicators",
         "notes"],
}


@pytest.mark.parametrize("args", list(CALC), ids=[a[0] for a in CALC])
def test_calc_json_keys(cli: Cli, args: tuple[str, ...]) -> None:
    out = cli.json("calc", *args)
    assert list(out) == ["version", *CALC[args]]


def test_calc_normality_nested_keys(cli: Cli) -> None:
    out = cli.json("calc", "normality", "--standard", "KHP", "--rep", "0.8085:39.16",
                   "--buoyancy")
    assert list(out["standard"]) == ["code", "name", "formula", "molar_mass_g_per_mol",
                                     "u_molar_mass_g_per_mol", "n_eq_per_mol",
                                     "equivalent_weight_g_per_eq", "purity_percent"]
    assert list(out["replicates"][0]) == ["index", "mass_g", "volume_ml", "normality",
                                          "true_mass_g", "outlier", "excluded"]
    assert out["replicates"][0]["mass_g"] == "0.8085"  # the reading as typed
    assert [list(line) for line in out["budget"]] == [BUDGET] * len(out["budget"])
    second = cli.json("calc", "secondary", "--reference-normality", "0.1", "--aliquot", "25",
                      "--rep", "24.9")
    assert list(second["replicates"][0]) == ["index", "aliquot_ml", "volume_ml", "normality",
                                             "true_mass_g", "outlier", "excluded"]


def test_calc_eqpoint_indicator_keys(cli: Cli) -> None:
    out = cli.json("calc", "eqpoint", "--standard", "KHP", "--titrant", "NaOH",
                   "--concentration", "0.05")
    assert [list(a) for a in out["indicators"]] == [
        ["name", "low_ph", "high_ph", "stop_ph", "error_percent", "error_range_percent",
         "suitable", "reason"]] * len(out["indicators"])


def test_calc_endpoint_json_keys(cli: Cli, tmp_path: Path) -> None:
    f = tmp_path / "curve.csv"
    f.write_text("volume_ml,pH\n" + "".join(f"{v},{3 + 8 / (1 + 10 ** (10 - v))}\n"
                                            for v in range(0, 21)))
    out = cli.json("calc", "endpoint", str(f))
    assert list(out) == ["version", "equivalence_ml", "method", "kind", "reading_at_endpoint",
                         "gran_ml", "gran_points", "points", "notes", "u_ml", "endpoints",
                         "window_ml", "smoothing_ml", "noise", "gran_agrees", "gran_tolerance_ml",
                         "volume_column", "reading_column", "preamble_lines"]
    assert [list(e) for e in out["endpoints"]] == [
        ["index", "volume_ml", "u_ml", "reading", "slope", "points_fitted"]]


@pytest.fixture
def lab(cli: Cli) -> Cli:
    """The README walkthrough's lab, with fixed dates."""
    cli.ok("init")
    for name, role, stdin in (("ada", "admin", "ada-passphrase\n"),
                              ("ben", "technician", "ben-passphrase\nada-passphrase\n"),
                              ("cleo", "reviewer", "cleo-passphrase\nada-passphrase\n")):
        cli.ok("user", "add", name, "--role", role, "--passphrase-stdin", user="ada",
               input=stdin)
    cli.ok("lot", "add", "KHP", "--code", "KHP-0001", "--purity", "99.98", "--purity-u", "0.05",
           "--expires", "2030-06-30", "--dried", "2026-11-29", user="ada")
    cli.ok("instrument", "add", "BAL-1", "--kind", "balance", "--due", "2030-06-01",
           "--readability", "0.0001", "--tolerance", "0.0002", user="ada")
    cli.ok("instrument", "add", "BUR-1", "--kind", "burette", "--due", "2030-06-01",
           "--capacity", "50", "--tolerance", "0.05", user="ada")
    cli.ok("batch", "make", "NaOH-0.1N", "--code", "NAOH-0001", "--volume", "1000",
           "--solute-mass", "4.1", "--balance", "BAL-1", "--at", "2026-12-01T08:00",
           "--reason", "from the bench log", user="ben")
    return cli


def test_standardize_correct_exclude_review_json_keys(lab: Cli) -> None:
    run = lab.json("standardize", "NAOH-0001", "--lot", "KHP-0001", "--balance", "BAL-1",
                   "--burette", "BUR-1", "--temp", "21.0", "--rep", "0.8085:39.16",
                   "--rep", "0.8116:39.29", "--rep", "0.8596:41.67", "--at", "2026-12-01T09:00",
                   "--reason", "from the bench log", user="ben")
    assert list(run) == ["version", *RUN_RESULT]
    assert [list(c) for c in run["checks"]] == [CHECK] * len(run["checks"])
    assert [list(r) for r in run["replicates"]] == [RUN_REPLICATE] * 3
    assert [list(line) for line in run["budget"]] == [BUDGET] * len(run["budget"])
    revised = ["version", *RUN_RESULT[:1], "previous_status", *RUN_RESULT[1:]]
    corrected = lab.json("correct", run["run"], "--replicate", "2", "--volume", "39.30",
                         "--reason", "misread", "--passphrase-stdin", user="ben",
                         input="ben-passphrase\n")
    assert list(corrected) == revised
    assert corrected["previous_status"] == "awaiting-review"
    excluded = lab.json("exclude", run["run"], "--replicate", "3", "--reason", "spoiled",
                        "--passphrase-stdin", user="ben", input="ben-passphrase\n")
    assert list(excluded) == revised
    assert [r["excluded"] for r in excluded["replicates"]] == [False, False, True]
    # Two replicates left fail the minimum of three: the run can only be rejected.
    reviewed = lab.json("review", "NAOH-0001", "--reject", "--reason", "two replicates left",
                        "--passphrase-stdin", "--at", "2026-12-01T10:00", user="cleo",
                        input="cleo-passphrase\n")
    assert list(reviewed) == [
        "version", "run", "method", "status", "performed_at", "recorded_at", "analyst", "lot",
        "lot_certificate", "reference_batch", "balance", "burette", "temperature_c",
        "blank_ml", "indicator", "normality", "normality_20c", "factor", "sd", "rsd_percent",
        "u", "U", "k", "verdict", "checks", "budget", "reviews", "reference", "repeatability",
        "repeatability_rsd_percent", "reaction", "batch"]
    assert list(reviewed["reviews"][0]) == ["reviewer", "decision", "reason", "signed_at"]
    assert set(reviewed["checks"][0]) == set(CHECK)
    assert set(reviewed["budget"][0]) == set(BUDGET)
    assert reviewed["status"] == "rejected" and reviewed["run"] == run["run"]


def test_standardize_preview_has_the_same_keys(lab: Cli) -> None:
    """Typed one at a time (no --rep), the recorded result has the same keys."""
    result = lab("standardize", "NAOH-0001", "--lot", "KHP-0001", "--at", "2026-12-01T09:00",
                 "--reason", "from the bench log", "--json", user="ben",
                 input="20\n0.8085\n39.16\n0.8116\n39.29\n\ny\n")
    assert result.exit_code == 0, result.stderr
    out = json.loads(result.stdout[result.stdout.index("{"):])
    assert list(out) == ["version", *RUN_RESULT]
