"""The titration equation for samples (prepbook.chem.sample), against published methods
and hand-worked values, each source named beside its check.

Expected values are worked by hand in each test (the arithmetic is written out), never
taken from the function under test.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as s

from prepbook.catalog.samples import analyte_titration
from prepbook.chem.sample import (
    Analyte,
    ExcessReagent,
    Instruments,
    Solution,
    sample_result,
)
from prepbook.errors import InvalidInput


def _analyte(code: str, titrant: str, method: str | None = None) -> Analyte:
    return analyte_titration(code, titrant, method).computed


def test_diprotic_acid_with_a_monoprotic_base_hand_worked() -> None:
    """Textbook titration equation, diprotic case (hand-worked): 25.00 mL of sulfuric acid
    takes 32.40 mL of 0.1000 M NaOH. N_a = 0.1000 x 32.40 / 25.00 = 0.12960 eq/L;
    c = N_a / 2 = 0.06480 mol/L; 0.06480 x 98.072 g/mol = 6.3551 g/L."""
    r = sample_result(_analyte("H2SO4", "NaOH"), Solution("NaOH", 0.1000), [25.00], [32.40])
    assert r.normality == pytest.approx(0.12960, rel=1e-12)
    assert r.molarity == pytest.approx(0.06480, rel=1e-12)
    assert r.concentration == pytest.approx(0.06480 * 98.072, rel=1e-4)
    assert r.unit == "g/L" and r.mass_fraction_percent is None


def test_monoprotic_base_with_a_diprotic_acid_titrant_hand_worked() -> None:
    """An unknown base with a standardized acid whose n differs (hand-worked): 20.00 mL of
    NaOH takes 18.50 mL of 0.05000 M H2SO4 (0.1000 N). N_a = 0.1000 x 18.50 / 20.00 =
    0.09250 eq/L = 0.09250 mol/L NaOH (n = 1)."""
    found = analyte_titration("NaOH", "H2SO4")
    assert found.titrant_n_eq_per_mol == 2  # so 0.05 M H2SO4 is 0.1 N
    r = sample_result(found.computed, Solution("H2SO4", 0.05000 * 2), [20.00], [18.50])
    assert r.normality == pytest.approx(0.09250, rel=1e-12)
    assert r.molarity == pytest.approx(0.09250, rel=1e-12)


def test_weak_acid_with_a_strong_base_vinegar_hand_worked() -> None:
    """Vinegar acidity (hand-worked): 10.00 mL of vinegar takes 41.20 mL of 0.2000 N NaOH.
    0.2000 x 41.20 = 8.240 meq of acetic acid, x 60.052 mg/mmol = 494.83 mg in 10 mL,
    so 4.9483 g/100 mL (a "5 % acidity" label)."""
    r = sample_result(_analyte("vinegar acidity", "NaOH"), Solution("NaOH", 0.2000), [10.00],
                      [41.20])
    assert r.unit == "g/100 mL"
    assert r.concentration == pytest.approx(8.240 * 60.052 / 10.00 / 10, rel=1e-4)
    assert r.concentration == pytest.approx(4.948, abs=0.001)


def test_total_alkalinity_standard_methods_2320b() -> None:
    """Standard Methods 2320 B (from memory): alkalinity, mg CaCO3/L = A x N x 50 000 /
    mL sample. 100 mL sample, A = 8.40 mL of 0.02 N H2SO4: 8.40 x 0.02 x 50 000 / 100 =
    84.0 mg/L. The method rounds CaCO3's equivalent weight to 50 (50.04 here), so the
    tolerance is the 0.09 % that rounding makes."""
    r = sample_result(_analyte("alkalinity", "H2SO4"), Solution("H2SO4", 0.02), [100.0], [8.40])
    assert r.unit == "mg/L" and r.reported_as == "CaCO3"
    assert r.concentration == pytest.approx(8.40 * 0.02 * 50_000 / 100, rel=0.001)
    # hand-worked with M(CaCO3) = 100.086 g/mol: 0.168 meq x 50.043 mg/meq / 0.100 L
    assert r.concentration == pytest.approx(0.168 * 100.086 / 2 / 0.100, rel=1e-4)


def test_total_hardness_standard_methods_2340c() -> None:
    """Standard Methods 2340 C (from memory): hardness (EDTA) as mg CaCO3/L = A x B x 1000 /
    mL sample, B = mg CaCO3 equivalent to 1.00 mL of EDTA titrant (1.000 for 0.01 M EDTA).
    50.0 mL sample, A = 12.30 mL of 0.01000 M EDTA: 12.30 x 1.000 x 1000 / 50.0 = 246 mg/L
    (B is 1.0009 with M(CaCO3) = 100.09, hence the tolerance)."""
    r = sample_result(_analyte("hardness", "EDTA"), Solution("EDTA", 0.01000), [50.0], [12.30])
    assert r.reported_as == "CaCO3"
    assert r.concentration == pytest.approx(12.30 * 1.000 * 1000 / 50.0, rel=0.001)
    assert r.mg_per_ml == pytest.approx(1.000, abs=0.001)  # B of the method


def test_chloride_argentometric_standard_methods_4500cl_b() -> None:
    """Standard Methods 4500-Cl- B (from memory): mg Cl-/L = (A - B) x N x 35 450 / mL
    sample, A the sample's titration, B the blank's. 100 mL, A = 7.65 mL, B = 0.20 mL,
    N = 0.0141: (7.45 x 0.0141 x 35 450) / 100 = 37.24 mg/L."""
    r = sample_result(_analyte("chloride", "AgNO3"), Solution("AgNO3", 0.0141), [100.0],
                      [7.65], blank_ml=0.20)
    expected = (7.65 - 0.20) * 0.0141 * 35_450 / 100
    assert r.concentration == pytest.approx(expected, rel=1e-4)
    assert any(line.symbol == "V_blank" for line in r.uncertainty.budget)


def test_chloride_by_back_titration_hand_worked() -> None:
    """Volhard back-titration (hand-worked): 50.00 mL of sample, 25.00 mL of 0.1000 N
    AgNO3 added, the excess takes 10.00 mL of 0.1000 N NH4SCN. Chloride = 2.500 - 1.000
    = 1.500 meq, x 35.45 mg/meq = 53.175 mg in 50 mL: 1063.5 mg/L."""
    found = analyte_titration("chloride", "NH4SCN")
    assert found.method.name == "Volhard" and found.excess_reagent is not None
    excess = ExcessReagent(Solution("AgNO3", 0.1000, U=0.0002), 25.00)
    r = sample_result(found.computed, Solution("NH4SCN", 0.1000, U=0.0002), [50.00], [10.00],
                      excess=excess)
    assert r.back_titration
    assert r.concentration == pytest.approx(1.500 * 35.45 / 50.00 * 1000, rel=1e-4)
    symbols = [line.symbol for line in r.uncertainty.budget]
    assert {"N_r", "V_r", "N_t", "V_s", "V_t"} <= set(symbols)
    # More thiocyanate gives less chloride: the sign of the back-titration.
    less = sample_result(found.computed, Solution("NH4SCN", 0.1000), [50.00], [12.00],
                         excess=excess)
    assert less.concentration == pytest.approx(1.300 * 35.45 / 50.00 * 1000, rel=1e-4)


def test_back_titration_refuses_a_titrant_beyond_the_excess() -> None:
    found = analyte_titration("chloride", "NH4SCN")
    excess = ExcessReagent(Solution("AgNO3", 0.1000), 10.00)
    with pytest.raises(InvalidInput, match="excess"):
        sample_result(found.computed, Solution("NH4SCN", 0.1000), [50.0], [10.50],
                      excess=excess)


def test_weighed_sample_mass_fraction_hand_worked() -> None:
    """Ascorbic acid in a powder (hand-worked): 0.2000 g takes 20.00 mL of 0.1000 N
    iodine. 2.000 meq x 176.12 / 2 mg/meq = 176.12 mg: 88.06 % w/w."""
    r = sample_result(_analyte("vitamin C", "I2"), Solution("I2", 0.1000), [0.2000], [20.00],
                      sample_is_mass=True)
    assert r.normality is None and r.concentration is None
    assert r.mass_fraction_percent == pytest.approx(2.000 * 176.12 / 2 / 200.0 * 100, rel=2e-4)
    assert r.unit == "%"
    assert any(line.symbol == "m" for line in r.uncertainty.budget)


# Pharmacopoeial statements, from memory: "each mL of <titrant> is equivalent to x mg of
# <analyte>". x = N M / n, so each checks the molar mass and n together; tolerance half a
# unit in the last digit quoted plus the atomic-weight rounding.
EACH_ML = [
    ("acetic-acid", "NaOH", None, 0.1, 6.005),     # 0.1 N NaOH, 6.005 mg C2H4O2
    ("ascorbic-acid", "I2", None, 0.1, 8.806),     # 0.1 N iodine, 8.806 mg C6H8O6
    ("H2O2", "KMnO4", None, 0.1, 1.701),           # 0.1 N KMnO4, 1.701 mg H2O2
    ("Fe2+", "Ce(SO4)2", None, 0.1, 5.585),        # 0.1 N ceric, 5.585 mg Fe
    ("Na2CO3", "HCl", None, 1.0, 52.99),           # 1 N acid, 52.99 mg Na2CO3
    ("chloride", "AgNO3", None, 0.1, 3.545),       # 0.1 N AgNO3, 3.545 mg Cl
    ("Ca", "EDTA", None, 0.05, 2.004),             # 0.05 M edetate, 2.004 mg Ca
    ("HCl", "NaOH", None, 1.0, 36.46),             # 1 N NaOH, 36.46 mg HCl
    ("H2SO4", "NaOH", None, 1.0, 49.04),           # 1 N NaOH, 49.04 mg H2SO4
]


@pytest.mark.parametrize(("analyte", "titrant", "method", "strength", "mg"), EACH_ML,
                         ids=[f"{a}-{t}" for a, t, *_ in EACH_ML])
def test_pharmacopoeial_each_ml_statements(analyte: str, titrant: str, method: str | None,
                                           strength: float, mg: float) -> None:
    r = sample_result(_analyte(analyte, titrant, method), Solution(titrant, strength), [10.0],
                      [5.0])
    decimals = len(f"{mg}".split(".")[1])
    assert r.mg_per_ml == pytest.approx(mg, abs=0.5 * 10**-decimals + 0.0005 * strength * 10)


def test_budget_holds_each_term_and_combines_them_in_quadrature() -> None:
    """The titrant's own uncertainty, the pipette, the burette and the repeatability each
    appear; the model is a product, so the relative u is the root sum of the relative
    terms (GUM 5.1.6), computed here by hand from the instrument rules of CG4 Example A2."""
    analyte = _analyte("HCl", "NaOH")
    titrant = Solution("NaOH", 0.1021, U=0.0002, k=2)
    volumes = [24.50, 24.55, 24.45]
    r = sample_result(analyte, titrant, [25.00], volumes,
                      instruments=Instruments(burette_tolerance_ml=0.05,
                                              pipette_tolerance_ml=0.03,
                                              temperature_range_c=3.0))
    symbols = [line.symbol for line in r.uncertainty.budget]
    assert symbols == ["N_t", "V_s", "V_t", "M", "f_rep"]
    gamma = 2.1e-4

    def vol_u(tol: float, v: float) -> float:
        return math.hypot(tol / math.sqrt(6), v * gamma * 3.0 / math.sqrt(3))

    mean_v = sum(volumes) / 3
    values = [0.1021 * v / 25.00 for v in volumes]
    mean = sum(values) / 3
    sd = math.sqrt(sum((x - mean) ** 2 for x in values) / 2)
    rel = math.sqrt((0.0001 / 0.1021) ** 2 + (vol_u(0.03, 25.0) / 25.0) ** 2
                    + (vol_u(0.05, mean_v) / mean_v) ** 2
                    + (analyte.u_molar_mass_g_per_mol / analyte.molar_mass_g_per_mol) ** 2
                    + (sd / (mean * math.sqrt(3))) ** 2)
    assert r.uncertainty.u_relative == pytest.approx(rel, rel=1e-6)
    expanded = r.uncertainty.U
    assert expanded == pytest.approx(2 * rel * r.value, rel=1e-6)
    assert r.uncertainty.complete


def test_a_titrant_without_uncertainty_is_named_missing_never_dropped() -> None:
    r = sample_result(_analyte("HCl", "NaOH"), Solution("NaOH", 0.1), [25.0], [24.0])
    assert set(r.uncertainty.missing) == {"N_t", "f_rep"}
    assert not r.uncertainty.complete
    assert any("titrant" in note for note in r.uncertainty.notes)


def test_replicates_each_give_a_result_and_an_excluded_one_leaves_the_mean() -> None:
    analyte = _analyte("HCl", "NaOH")
    r = sample_result(analyte, Solution("NaOH", 0.1), [25.0, 20.0, 25.0], [24.0, 19.3, 30.0],
                      excluded=[3])
    values = [0.1 * 24.0 / 25.0 * 36.46, 0.1 * 19.3 / 20.0 * 36.46]
    assert [rep.excluded for rep in r.replicates] == [False, False, True]
    assert r.concentration == pytest.approx(sum(values) / 2, rel=2e-4)
    assert r.stats.n == 2


@pytest.mark.parametrize(("amounts", "volumes", "blank", "message"), [
    ([25.0], [0.5], 0.5, "blank"),
    ([25.0, 25.0], [10.0, 10.0, 10.0], 0.0, "one per replicate"),
    ([0.0], [10.0], 0.0, "positive"),
    ([25.0], [], 0.0, "no replicate"),
])
def test_bad_input_is_refused(amounts: list[float], volumes: list[float], blank: float,
                              message: str) -> None:
    with pytest.raises(InvalidInput, match=message):
        sample_result(_analyte("HCl", "NaOH"), Solution("NaOH", 0.1), amounts, volumes,
                      blank_ml=blank)


def test_back_titration_states_the_each_ml_figure_for_the_excess_reagent() -> None:
    """In a back-titration the sample consumes the excess reagent: each mL of 0.1 N silver
    nitrate is equivalent to 3.545 mg of chloride (pharmacopoeial chloride assays, from
    memory), whatever the thiocyanate's normality."""
    found = analyte_titration("chloride", "NH4SCN")
    r = sample_result(found.computed, Solution("NH4SCN", 0.05), [50.0], [10.0],
                      excess=ExcessReagent(Solution("AgNO3", 0.1), 25.0))
    assert r.mg_per_ml == pytest.approx(3.545, abs=0.0005)


@given(normality=s.floats(0.001, 2.0), factor=s.floats(0.5, 2.0),
       volumes=s.lists(s.floats(1.0, 50.0), min_size=1, max_size=5))
def test_a_direct_result_is_proportional_to_the_titrant_s_normality(
        normality: float, factor: float, volumes: list[float]) -> None:
    """N_a = N_t V_t / V_s: scaling the titrant's normality scales every result by the
    same factor (what a corrected standardization does to the samples titrated with it)."""
    analyte = _analyte("HCl", "NaOH")
    a = sample_result(analyte, Solution("NaOH", normality), [25.0], volumes)
    b = sample_result(analyte, Solution("NaOH", normality * factor), [25.0], volumes)
    assert b.value == pytest.approx(a.value * factor, rel=1e-9)
    assert b.uncertainty.u_relative == pytest.approx(a.uncertainty.u_relative, rel=1e-6)


@given(more=s.floats(0.01, 5.0))
def test_more_back_titrant_means_less_analyte(more: float) -> None:
    found = analyte_titration("chloride", "NH4SCN")
    excess = ExcessReagent(Solution("AgNO3", 0.1), 25.0)
    a = sample_result(found.computed, Solution("NH4SCN", 0.1), [50.0], [10.0], excess=excess)
    b = sample_result(found.computed, Solution("NH4SCN", 0.1), [50.0], [10.0 + more],
                      excess=excess)
    assert b.value < a.value


def test_eurachem_citac_example_a3_value() -> None:
    """EURACHEM/CITAC CG4, 3rd ed., Example A3 (its table A3.1, read from a stored copy of
    the example's summary): 15 mL of HCl takes 14.89 mL of the NaOH of Example A2
    (0.3888 g KHP, purity 1.0, 204.2212 g/mol, 18.64 mL): c(HCl) = 0.10139 mol/L. The
    NaOH's own relative uncertainty enters the result's: it can only add to it."""
    c_naoh = 1000 * 0.3888 * 1.0 / (204.2212 * 18.64)
    u_naoh = 0.000966 * c_naoh  # m, P, V_T1 and M of table A3.1 in quadrature
    r = sample_result(_analyte("HCl", "NaOH"), Solution("NaOH", c_naoh, U=2 * u_naoh),
                      [15.0], [14.89])
    assert r.molarity == pytest.approx(0.10139, abs=0.000005)
    assert r.uncertainty.u_relative > 0.000966
    share = {line.symbol: line.share_percent for line in r.uncertainty.budget}
    assert share["N_t"] > 0
