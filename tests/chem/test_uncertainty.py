"""GUM budgets against EURACHEM/CITAC CG4 3rd ed. (2012), Example A2 (NaOH against KHP)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from prepbook.chem import standardization as st
from prepbook.chem.uncertainty import InputQuantity, propagate
from prepbook.errors import InvalidInput

# CG4 A2, Table A2.1: value, standard uncertainty
A2_M_G, A2_U_M_G = 0.3888, 0.00013
A2_P, A2_U_P = 1.0, 0.00029
A2_MOLAR, A2_U_MOLAR = 204.2212, 0.0038
A2_V_ML, A2_U_V_ML = 18.64, 0.013
A2_U_REP = 0.0005


def _a2_result() -> st.StandardizationResult:
    khp = st.PrimaryStandard("potassium hydrogen phthalate", A2_MOLAR, A2_U_MOLAR, 1.0,
                             A2_P, A2_U_P)
    return st.direct(khp, [(A2_M_G, A2_V_ML)],
                     uncertainty=st.UncertaintyInputs(A2_U_M_G, A2_U_V_ML,
                                                      u_rel_repeatability=A2_U_REP))


def test_cg4_a2_result_to_its_stated_digits() -> None:
    """CG4 A2: c = 0.10214 mol/L, u_c = 0.00010 mol/L (relative 0.00097), U (k=2) = 0.00020."""
    result = _a2_result()
    unc = result.uncertainty
    assert unc is not None
    assert round(result.normality, 5) == 0.10214
    assert round(unc.u, 5) == 0.00010
    assert round(unc.u_relative, 5) == 0.00097
    assert unc.k == 2.0
    assert round(unc.U, 5) == 0.00020


def test_cg4_a2_relative_uncertainties_of_the_table() -> None:
    """CG4 A2, Table A2.1, relative standard uncertainties: m 0.00033, P 0.00029,
    M 0.000019, V 0.0007, repeatability 0.0005."""
    lines = {line.symbol: line for line in _a2_result().uncertainty.budget}
    assert set(lines) == {"m", "P", "M", "V", "f_rep"}
    assert round(lines["m"].u_relative, 5) == 0.00033
    assert round(lines["P"].u_relative, 5) == 0.00029
    assert round(lines["M"].u_relative, 6) == 0.000019
    assert round(lines["V"].u_relative, 4) == 0.0007
    assert round(lines["f_rep"].u_relative, 4) == 0.0005


def test_contributions_follow_the_cg4_rule_for_products() -> None:
    """CG4 A2 (Figure A2.3): for this multiplicative model u(y, x_i) = (y / x_i) u(x_i);
    checked line by line against the library's derivatives, and the shares add to 100."""
    result = _a2_result()
    for line in result.uncertainty.budget:
        assert line.contribution == pytest.approx(result.normality * line.u / line.value,
                                                  rel=1e-9)
    assert sum(line.share_percent for line in result.uncertainty.budget) == pytest.approx(100)


def test_secondary_budget_follows_rule_2_for_quotients() -> None:
    """CG4 section 8 rule 2: for a product/quotient the relative u's add in quadrature.
    Invented readings (demo numbers), rule as oracle."""
    u = st.UncertaintyInputs(u_mass_g=0.0, u_volume_ml=0.014, u_aliquot_ml=0.011,
                             u_rel_repeatability=0.001)
    result = st.secondary(0.10214, 0.00010, [(15.0, 14.89)], uncertainty=u)
    expected_rel = math.sqrt((0.00010 / 0.10214) ** 2 + (0.011 / 15.0) ** 2
                             + (0.014 / 14.89) ** 2 + 0.001**2)
    assert result.uncertainty.u_relative == pytest.approx(expected_rel, rel=1e-9)
    assert {line.symbol for line in result.uncertainty.budget} == {"N_ref", "V_aliquot", "V",
                                                                   "f_rep"}


def test_blank_line_contribution_is_its_derivative() -> None:
    """dN/dV_blank = N / (V - V_blank): the blank enters with the same weight as V
    (hand-derived from N = 1000 m P / (EW (V - V_blank)))."""
    khp = st.PrimaryStandard("KHP", A2_MOLAR, A2_U_MOLAR, 1.0, A2_P, A2_U_P)
    result = st.direct(khp, [(A2_M_G, A2_V_ML + 0.05)], blank_ml=0.05,
                       uncertainty=st.UncertaintyInputs(A2_U_M_G, A2_U_V_ML, u_blank_ml=0.01,
                                                        u_rel_repeatability=A2_U_REP))
    lines = {line.symbol: line for line in result.uncertainty.budget}
    assert lines["V_blank"].contribution == pytest.approx(result.normality * 0.01 / A2_V_ML,
                                                          rel=1e-9)
    assert round(result.normality, 5) == 0.10214  # CG4 A2 value, blank subtracted


def test_repeatability_from_replicates_is_sd_of_the_mean() -> None:
    """Module convention (see standardization docstring): u_rel(rep) = s/(mean sqrt(n)),
    numpy as oracle; the budget is evaluated at the mean mass and volume."""
    khp = st.PrimaryStandard("KHP", A2_MOLAR, A2_U_MOLAR, 1.0, A2_P, A2_U_P)
    reps = [(0.3888, 18.64), (0.4102, 19.70), (0.3711, 17.75), (0.4005, 19.22)]
    result = st.direct(khp, reps, uncertainty=st.UncertaintyInputs(A2_U_M_G, A2_U_V_ML))
    values = np.array([r.normality for r in result.replicates])
    lines = {line.symbol: line for line in result.uncertainty.budget}
    expected = values.std(ddof=1) / (values.mean() * math.sqrt(len(values)))
    assert lines["f_rep"].u == pytest.approx(expected, rel=1e-12)
    assert lines["m"].value == pytest.approx(np.mean([m for m, _ in reps]))
    assert lines["V"].value == pytest.approx(np.mean([v for _, v in reps]))
    assert result.uncertainty.value == pytest.approx(values.mean(), rel=1e-12)


def test_single_replicate_without_repeatability_says_so() -> None:
    """Owner's rule: nothing silently dropped; a missing component is named in the budget
    itself (a line marked missing, contributing nothing) and in a note."""
    khp = st.PrimaryStandard("KHP", A2_MOLAR, A2_U_MOLAR, 1.0, A2_P, A2_U_P)
    result = st.direct(khp, [(A2_M_G, A2_V_ML)],
                       uncertainty=st.UncertaintyInputs(A2_U_M_G, A2_U_V_ML))
    lines = {line.symbol: line for line in result.uncertainty.budget}
    assert lines["f_rep"].missing is not None and lines["f_rep"].contribution == 0.0
    assert result.uncertainty.missing == ("f_rep",)
    assert result.uncertainty.complete is False
    assert any("repeatability" in note for note in result.uncertainty.notes)


def test_mass_helper_against_cg4_a2() -> None:
    """CG4 A2: linearity +/- 0.15 mg, rectangular -> 0.15/sqrt(3) printed as 0.09 mg,
    counted twice (tare and gross) -> sqrt(2 x 0.09^2) = 0.13 mg. The helper keeps full
    precision (0.087 mg, 0.12 mg); the guide's 0.13 comes from its rounded 0.09."""
    single = st.mass_u_from_balance(0.15e-3, weighings=1)
    double = st.mass_u_from_balance(0.15e-3)
    assert round(single * 1000, 2) == 0.09
    assert double == pytest.approx(math.sqrt(2) * single, rel=1e-12)
    assert round(math.sqrt(2 * round(single * 1000, 2) ** 2), 2) == 0.13
    assert abs(double - A2_U_M_G) < 0.01e-3


def test_volume_helper_against_cg4_a2() -> None:
    """CG4 A2: burette +/- 0.03 mL triangular -> 0.012 mL; +/- 3 C at about 19 mL with
    2.1e-4 /C rectangular -> the guide prints 0.006 mL, but its own inputs give 0.0069 mL
    (19 x 2.1e-4 x 3 / sqrt 3); so the helper's combined 0.014 mL exceeds the guide's
    0.013 mL by that rounding."""
    calibration = st.volume_u_from_burette(0.03, 19.0, temperature_range_c=0.0)
    temperature = st.volume_u_from_burette(0.0, 19.0, temperature_range_c=3.0)
    combined = st.volume_u_from_burette(0.03, 19.0)
    assert round(calibration, 3) == 0.012
    assert 0.006 <= temperature < 0.007
    assert combined == pytest.approx(math.hypot(calibration, temperature), rel=1e-12)
    assert abs(combined - A2_U_V_ML) <= 0.0011


@pytest.mark.parametrize(
    "call",
    [
        lambda: st.mass_u_from_balance(-0.1),
        lambda: st.mass_u_from_balance(0.1e-3, weighings=0),
        lambda: st.volume_u_from_burette(0.03, 0.0),
        lambda: st.volume_u_from_burette(float("nan"), 10.0),
    ],
)
def test_helpers_refuse_bad_input(call) -> None:
    """Owner's rule: bad input -> InvalidInput."""
    with pytest.raises(InvalidInput):
        call()


def test_propagate_zero_uncertainty_inputs_add_nothing() -> None:
    """GUM: an exactly known input contributes zero (and must not trip a library warning,
    which pytest turns into an error here)."""
    result = propagate(lambda a, b: a * b,
                       [InputQuantity("a", "a", 2.0, "1", 0.1),
                        InputQuantity("b", "b", 3.0, "1", 0.0)])
    assert result.u == pytest.approx(0.3)
    assert [line.contribution for line in result.budget] == [pytest.approx(0.3), 0.0]
