"""A titrant's solvent without a spec (`calc normality --temp`, `calc temperature
--solvent`) and in a lab's own spec (`spec add --solvent --expansion --repeatability`),
issue 17.

Hand-worked values:
- British Pharmacopoeia, Appendix I B, Perchloric Acid VS: Vc = V[1 + 0.0011(t1 - t2)],
  so N(20) = N(25) x (1 + 0.0011 x 5) = 1.0055 N(25).
- Potassium hydrogen phthalate, KHC8H4O4, from the IUPAC standard atomic weights
  (abridged, K 39.0983, C 12.011, H 1.008, O 15.999): 204.2223 g/mol; 0.3502 g
  titrated with 17.14 mL (n = 1): N = 0.3502 / (204.2223 x 0.01714) = 0.1000466 eq/L.
- Water (CIPM formula, Tanaka et al., Metrologia 38 (2001) 301): rho(20) / rho(25) =
  998.2067 / 997.0470.
"""

from __future__ import annotations

import json
from datetime import UTC, datetime, timedelta

import pytest

from prepbook.lab.specs import SpecInfo, spec_info
from prepbook.store.models import Spec
from tests.conftest import Cli, row_counts

KHP_N_25 = 0.3502 / (204.2223 * 0.01714)  # by hand, above
BP = "British Pharmacopoeia, Appendix I B"
NORMALITY = ("calc", "normality", "--standard", "KHP", "--rep", "0.3502:17.14")


def _days(n: int) -> str:
    return (datetime.now(UTC).date() + timedelta(days=n)).isoformat()


@pytest.mark.parametrize("how", [
    ("--titrant", "HClO4", "--solvent", "glacial acetic acid"),
    ("--titrant", "HClO4", "--spec", "HClO4-0.1N"),
    ("--reaction", "acid-base-nonaqueous", "--solvent", "Glacial  Acetic Acid"),
], ids=["solvent", "spec", "reaction"])
def test_perchloric_acid_standardized_at_25_c_is_carried_with_acetic_acids_expansion(
        cli: Cli, how: tuple[str, ...]) -> None:
    out = cli.json(*NORMALITY, "--temp", "25", *how)
    assert out["normality"] == pytest.approx(KHP_N_25, rel=1e-6)
    assert out["temperature_c"] == 25.0
    # BP Appendix I B: factor 1 + 0.0011 x 5 = 1.0055 (water's would be 1.00116)
    assert out["normality_20c"] == pytest.approx(KHP_N_25 * 1.0055, rel=1e-6)
    assert out["normality_20c"] / out["normality"] == pytest.approx(1.0055, rel=1e-12)
    assert (out["solvent"], out["expansion_per_c"]) == ("glacial acetic acid", 0.0011)
    assert BP in out["expansion_source"]
    text = cli.ok(*NORMALITY, "--temp", "25", *how).stdout
    assert "carried from 25 C with glacial acetic acid's cubic expansion 0.0011 per C" in text
    assert "N(20 C) = 0.10060 eq/L" in text


def test_a_coefficient_the_user_states_is_used_with_its_source(cli: Cli) -> None:
    out = cli.json(*NORMALITY, "--titrant", "HClO4", "--temp", "25", "--solvent",
                   "glacial acetic acid", "--expansion", "0.00107", "--expansion-source",
                   "our own dilatometry, report D-12")
    # by hand: 1 + 0.00107 x 5 = 1.00535
    assert out["normality_20c"] / out["normality"] == pytest.approx(1.00535, rel=1e-12)
    assert (out["expansion_per_c"], out["expansion_source"]) == (
        0.00107, "our own dilatometry, report D-12")


def test_an_aqueous_titrant_is_carried_with_waters_density(cli: Cli) -> None:
    out = cli.json(*NORMALITY, "--titrant", "NaOH", "--temp", "25")
    # Tanaka et al. 2001: 998.2067 / 997.0470
    assert out["normality_20c"] / out["normality"] == pytest.approx(998.2067 / 997.0470,
                                                                    rel=1e-7)
    assert (out["solvent"], out["expansion_per_c"]) == ("water", None)
    assert "Tanaka" in out["expansion_source"]
    plain = cli.json(*NORMALITY, "--titrant", "NaOH")  # no temperature: nothing carried
    assert (plain["temperature_c"], plain["normality_20c"], plain["solvent"]) == (
        None, None, None)


@pytest.mark.parametrize(("extra", "said"), [
    (("--titrant", "HClO4", "--temp", "25"), "glacial acetic acid"),
    (("--reaction", "acid-base-nonaqueous", "--temp", "25"), "--solvent"),
    (("--titrant", "HClO4", "--temp", "20"), "glacial acetic acid"),
    (("--titrant", "HClO4", "--temp", "25", "--solvent", "dioxane"), "--expansion"),
    (("--titrant", "HClO4", "--temp", "25", "--solvent", "dioxane", "--expansion", "0.001"),
     "--expansion-source"),
    (("--titrant", "HClO4", "--temp", "25", "--solvent", "dioxane", "--expansion", "0.05",
      "--expansion-source", "a guess"), "0.05"),
    (("--titrant", "HClO4", "--temp", "25", "--expansion", "0.001", "--expansion-source",
      "x"), "--solvent"),
    (("--titrant", "NaOH", "--temp", "25", "--solvent", "water", "--expansion", "0.001",
      "--expansion-source", "x"), "water"),
    (("--titrant", "HClO4", "--solvent", "glacial acetic acid"), "--temp"),
    (("--titrant", "HClO4", "--temp", "25", "--spec", "HClO4-0.1N", "--solvent", "water"),
     "not both"),
    (("--titrant", "HClO4", "--temp", "45", "--solvent", "glacial acetic acid"), "0-40"),
], ids=["unstated", "by-reaction", "unstated-at-20", "unknown-solvent", "no-source",
        "implausible", "no-solvent", "water-with-coefficient", "no-temperature", "both",
        "out-of-range"])
def test_an_unstated_or_unusable_solvent_is_refused_in_one_line(
        cli: Cli, extra: tuple[str, ...], said: str) -> None:
    result = cli.refused(*NORMALITY, *extra)
    assert result.stdout == ""
    assert len(result.stderr.strip().splitlines()) == 1, result.stderr
    assert said in result.stderr


def test_calc_temperature_takes_a_solvent_without_a_spec(cli: Cli) -> None:
    out = cli.json("calc", "temperature", "--normality", "0.1", "--from", "25", "--to", "20",
                   "--solvent", "glacial acetic acid")
    assert out["normality"] == pytest.approx(0.100550, rel=1e-12)  # 0.1 x 1.0055
    assert BP in out["expansion_source"]
    refused = cli.refused("calc", "temperature", "--normality", "0.1", "--from", "25",
                          "--to", "20", "--solvent", "toluene")
    assert "toluene" in refused.stderr


@pytest.fixture
def lab(cli: Cli) -> Cli:
    """An admin, ada, and a lot of potassium hydrogen phthalate."""
    cli.ok("init")
    cli.ok("user", "add", "ada", "--role", "admin", "--passphrase-stdin", user="ada",
           input="ada-passphrase\n")
    cli.ok("lot", "add", "KHP", "--code", "KHP-0001", "--purity", "99.98", "--expires",
           _days(400), "--dried", _days(-3), user="ada")
    return cli


VALIDATION = "method validation VAL-2026-07, 10 runs"


def test_a_labs_perchloric_acid_spec_carries_its_solvent_and_repeatability_to_its_runs(
        lab: Cli) -> None:
    spec = lab.json("spec", "add", "HClO4-0.05N", "--solute", "HClO4", "--nominal", "0.05",
                    "--standard", "KHP", "--solvent", "glacial acetic acid",
                    "--repeatability", "0.12", "--repeatability-source", VALIDATION,
                    user="ada")
    assert (spec["solvent"], spec["expansion_per_c"]) == ("glacial acetic acid", 0.0011)
    assert BP in spec["expansion_source"]
    assert (spec["repeatability_rsd_percent"], spec["repeatability_source"]) == (
        0.12, VALIDATION)
    assert lab.json("spec", "show", "HClO4-0.05N") == spec
    shown = lab.ok("spec", "show", "HClO4-0.05N").stdout
    assert "glacial acetic acid's cubic expansion 0.0011 per C" in shown
    assert f"validated repeatability: 0.12 % ({VALIDATION})" in shown

    made = lab.json("batch", "make", "HClO4-0.05N", "--volume", "1000", "--stock-volume",
                    "4.3", "--at", f"{_days(-2)}T08:30", "--reason", "from the bench log",
                    user="ada")
    run = lab.json("standardize", made["batch"], "--lot", "KHP-0001", "--temp", "25",
                   "--rep", "0.1751:17.14", "--at", f"{_days(-1)}T10:00",
                   "--reason", "from the bench log", user="ada")
    # One replicate: the spec's validated 0.12 % stands in for the missing scatter.
    assert (run["repeatability"], run["repeatability_rsd_percent"]) == ("spec", 0.12)
    line = next(b for b in run["budget"] if b["quantity"] == "repeatability")
    assert line["u_relative"] == pytest.approx(0.0012, rel=1e-12)
    # BP Appendix I B: N(20) = N(25) x 1.0055
    assert run["normality_20c"] / run["normality"] == pytest.approx(1.0055, rel=1e-9)


def test_a_labs_spec_in_another_solvent_with_its_own_coefficient(lab: Cli) -> None:
    spec = lab.json("spec", "add", "NaOH-0.1N-EtOH", "--solute", "NaOH", "--nominal", "0.1",
                    "--solvent", "ethanol", "--expansion", "0.0011", "--expansion-source",
                    "from memory, ethanol near 20 C", user="ada")
    assert (spec["solvent"], spec["expansion_per_c"], spec["expansion_source"]) == (
        "ethanol", 0.0011, "from memory, ethanol near 20 C")
    plain = lab.json("spec", "show", "NaOH-0.1N")  # a built-in aqueous one
    assert (plain["solvent"], plain["expansion_per_c"], plain["repeatability_rsd_percent"]) \
        == ("water", None, None)


@pytest.mark.parametrize(("extra", "said"), [
    ((), "glacial acetic acid"),  # perchloric acid, solvent unstated
    (("--solvent", "dioxane"), "--expansion"),
    (("--solvent", "glacial acetic acid", "--expansion", "0.02", "--expansion-source", "x"),
     "0.02"),
    (("--solvent", "glacial acetic acid", "--repeatability", "0.1"), "--repeatability-source"),
    (("--solvent", "glacial acetic acid", "--repeatability-source", "VAL-1"), "--repeatability"),
    (("--solvent", "glacial acetic acid", "--repeatability", "8", "--repeatability-source",
      "VAL-1"), "8"),
    (("--solvent", "glacial acetic acid", "--repeatability", "0", "--repeatability-source",
      "VAL-1"), "repeatability"),
    (("--solvent", "glacial acetic acid", "--repeatability", "0.1", "--repeatability-source",
      " "), "--repeatability-source"),
], ids=["unstated", "unknown-solvent", "implausible-expansion", "rsd-without-source",
        "source-without-rsd", "implausible-rsd", "zero-rsd", "blank-source"])
def test_spec_add_refuses_in_one_line_and_writes_nothing(
        lab: Cli, extra: tuple[str, ...], said: str) -> None:
    before = row_counts(lab.db)
    result = lab.refused("spec", "add", "HClO4-0.05N", "--solute", "HClO4", "--nominal",
                         "0.05", *extra, user="ada")
    assert len(result.stderr.strip().splitlines()) == 1, result.stderr
    assert said in result.stderr
    assert "HClO4-0.05N" not in [s["code"] for s in lab.json("spec", "list")]
    assert row_counts(lab.db) == before
    lab.refused("spec", "show", "HClO4-0.05N")


def _stored_spec(data: dict[str, object]) -> SpecInfo:
    """A spec row as an older database may hold it (never written here)."""
    return spec_info(Spec(code=str(data["code"]), name="X 0.1 N", solute_code="NaOH", nominal=0.1,
                          unit="N", data=json.dumps(data), builtin=False,
                          created_at=datetime.now(UTC), created_by="ada"))


def test_spec_show_says_why_a_specs_runs_are_refused() -> None:
    """Before, `spec show` said a non-aqueous spec without a coefficient was carried with
    water's density, while its standardizations were in fact refused
    (lab.preparing.spec_expansion); a lab's perchloric acid spec stored before specs
    stated their solvent was both shown and carried as water."""
    from prepbook.cli.specs import solvent_line

    methanol = _stored_spec({"code": "X-0.1N", "solvent": "methanol"})
    assert methanol.expansion_per_c is None
    assert methanol.expansion_refused is not None
    assert "no cubic expansion coefficient" in methanol.expansion_refused
    shown = solvent_line(methanol)
    assert "water" not in shown and shown.startswith("[yellow]methanol: ")
    assert "standardizations on this spec are refused" in shown

    old = _stored_spec({"code": "HClO4-0.05N-LAB", "solute": "HClO4"})
    assert old.solvent == "not stated"
    assert old.expansion_refused is not None
    assert "glacial acetic acid" in old.expansion_refused
    assert "--solvent" in old.expansion_refused

    water = _stored_spec({"code": "X-0.1N"})
    assert water.expansion_refused is None
    assert solvent_line(water) == "water (water's density)"
    stated = _stored_spec({"code": "X-0.1N", "solvent": "methanol", "expansion_per_c": 0.0012,
                           "sources": {"expansion_per_c": "from memory"}})
    assert solvent_line(stated) == "methanol's cubic expansion 0.0012 per C (from memory)"
