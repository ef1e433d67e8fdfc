"""The JSON keys of `calc sample`, `calc eqpoint --analyte` and `calc salt` (DESIGN
section 7: scripts depend on them; add freely, never rename). Pinned in order, nested
objects too. `calc eqpoint --standard` is pinned in test_json_keys_calc.py."""

from __future__ import annotations

from tests.cli.test_json_keys_calc import BUDGET
from tests.conftest import Cli

# The commands whose --json keys this file pins (test_json_keys_audit checks the union).
PINNED = {"calc sample", "calc salt"}

SAMPLE = ["analyte", "analyte_name", "method", "titrant", "titrant_normality",
          "titrant_n_eq_per_mol", "sample_kind", "blank_ml", "normality", "molarity",
          "concentration", "mass_fraction_percent", "reported_as", "replicates", "sd",
          "rsd_percent", "u", "U", "k", "budget", "warnings", "mg_per_ml",
          "equivalence_statement", "excess_reagent", "uncertainty_notes"]
SAMPLE_REPLICATE = ["index", "sample", "titrant_ml", "normality", "value", "outlier",
                    "excluded"]
EQPOINT_ANALYTE = ["analyte", "titrant", "method", "n_eq_per_mol", "concentration_mol_per_l",
                   "ph", "suitable", "unsuitable", "titrant_concentration_mol_per_l",
                   "sample_concentration_mol_per_l", "co2_removed", "tolerance_percent",
                   "indicators", "points", "notes"]
SALT = ["cation", "anion", "formula", "concentration_mol_per_l", "ph", "nature", "governing",
        "strengths", "reason", "sources"]


def test_calc_sample_keys(cli: Cli) -> None:
    out = cli.json("calc", "sample", "--analyte", "hardness", "--titrant", "EDTA",
                   "--molarity", "0.01", "--normality-u", "0.00004", "--aliquot", "50",
                   "--rep", "12.30", "--rep", "12.35")
    assert list(out) == ["version", *SAMPLE]
    assert list(out["concentration"]) == ["value", "unit", "as"]  # DESIGN section 7
    assert out["concentration"]["as"] == "CaCO3" and out["concentration"]["unit"] == "mg/L"
    assert [list(r) for r in out["replicates"]] == [SAMPLE_REPLICATE] * 2
    assert [list(line) for line in out["budget"]] == [BUDGET] * len(out["budget"])
    weighed = cli.json("calc", "sample", "--analyte", "chloride", "--titrant", "NH4SCN",
                       "--normality", "0.1", "--mass", "0.5", "--rep", "10",
                       "--excess-volume", "50", "--excess-normality", "0.1")
    assert list(weighed) == ["version", *SAMPLE]
    assert weighed["concentration"] is None and weighed["mass_fraction_percent"] > 0
    assert list(weighed["excess_reagent"]) == ["reagent", "normality", "U", "volume_ml"]


def test_calc_eqpoint_analyte_and_salt_keys(cli: Cli) -> None:
    out = cli.json("calc", "eqpoint", "--analyte", "H3PO4", "--titrant", "NaOH",
                   "--concentration", "0.05")
    assert list(out) == ["version", *EQPOINT_ANALYTE]
    assert [list(p) for p in out["points"]] == [["protons", "concentration_mol_per_l",
                                                 "ph"]] * 3
    salt = cli.json("calc", "salt", "NH4+", "acetate")
    assert list(salt) == ["version", *SALT]
    assert [list(s) for s in salt["strengths"]] == [["ion", "acts_as", "pk"]] * 2
