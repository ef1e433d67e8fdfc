"""Repeatability in a budget, and the budget of a secondary standardization.

EURACHEM/CITAC Guide CG4, Quantifying Uncertainty in Analytical Measurement, 3rd ed.
(2012), Example A2 (standardising NaOH against KHP): one titration, the repeatability
taken from the method validation as a relative SD of 0.0005; c = 0.10214 mol/L,
u_c = 0.00010 mol/L (relative 0.00097). Expected values are worked by hand beside each
test; the rule "relative uncertainties of a product add in quadrature" (CG4 section 8,
rule 2) is the oracle for the secondary budget.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as hst

from prepbook.chem import standardization as st
from prepbook.chem.uncertainty import repeatability_term, secondary_budget
from prepbook.errors import InvalidInput
from prepbook.records import as_data

A2_M_G, A2_U_M_G = 0.3888, 0.00013
A2_P, A2_U_P = 1.0, 0.00029
A2_MOLAR, A2_U_MOLAR = 204.2212, 0.0038
A2_V_ML, A2_U_V_ML = 18.64, 0.013
KHP = st.PrimaryStandard("potassium hydrogen phthalate", A2_MOLAR, A2_U_MOLAR, 1.0, A2_P,
                         A2_U_P)


def test_cg4_a2_one_replicate_with_the_validated_repeatability() -> None:
    """CG4 A2: with f_rep's 0.0005 the combined relative uncertainty is 0.00097 and
    u_c = 0.00010 mol/L; by hand: sqrt(0.00033^2 + 0.00029^2 + 0.000019^2 + 0.00070^2 +
    0.0005^2) = 0.00097."""
    result = st.direct(KHP, [(A2_M_G, A2_V_ML)], uncertainty=st.UncertaintyInputs(
        A2_U_M_G, A2_U_V_ML, u_rel_repeatability=0.0005))
    unc = result.uncertainty
    assert unc is not None and unc.complete
    assert round(unc.u_relative, 5) == 0.00097
    assert round(unc.u, 5) == 0.00010


def test_cg4_a2_without_repeatability_is_low_and_says_so() -> None:
    """Without f_rep the same inputs give sqrt(0.00097^2 - 0.0005^2) ~ 0.00083 by hand
    (0.000824 at full precision), about 14 % below the guide's 0.00097, so the result
    carries the missing line, which reaches any export of the budget's fields."""
    result = st.direct(KHP, [(A2_M_G, A2_V_ML)],
                       uncertainty=st.UncertaintyInputs(A2_U_M_G, A2_U_V_ML))
    unc = result.uncertainty
    assert unc is not None
    assert unc.u_relative == pytest.approx(0.000824, abs=0.000005)
    assert unc.missing == ("f_rep",)
    exported = [as_data(line) for line in unc.budget]
    assert [row["symbol"] for row in exported if row["missing"]] == ["f_rep"]
    assert "validated repeatability" in exported[-1]["missing"]


def test_validated_repeatability_wins_over_the_replicates() -> None:
    """Given a validated value, it is used even with several replicates; without one
    three results 0.1021, 0.1023, 0.1022 give s = 0.0001, mean 0.1022 and
    u = 0.0001 / (0.1022 sqrt 3) = 5.6493e-4 (by hand)."""
    values = [0.1021, 0.1023, 0.1022]
    given_term = repeatability_term(0.0005, values)
    assert given_term.line is not None and given_term.line.u == 0.0005
    assert not given_term.missing
    estimated = repeatability_term(None, values)
    assert estimated.line is not None
    assert estimated.line.u == pytest.approx(5.6493e-4, rel=1e-4)
    alone = repeatability_term(None, [0.1022])
    assert alone.line is None and alone.missing[0].symbol == "f_rep"
    with pytest.raises(InvalidInput):
        repeatability_term(-0.001, values)


def test_secondary_budget_worked_by_hand() -> None:
    """Reference 0.10214 +/- 0.00010 eq/L (the A2 result); 20 mL pipette +/- 0.03 mL;
    titrant 20.43 mL, burette +/- 0.03 mL; +/- 3 C; validated repeatability 0.0005.
    By hand: u(pipette) = sqrt((0.03/sqrt 6)^2 + (20 x 2.1e-4 x 3/sqrt 3)^2) =
    sqrt(1.5000e-4 + 5.2920e-5) = 0.014245 mL; u(burette) = sqrt(1.5e-4 +
    (20.43 x 2.1e-4 x 3/sqrt 3)^2) = sqrt(1.5000e-4 + 5.5221e-5) = 0.014326 mL;
    relative: 9.7905e-4, 7.1225e-4, 7.0122e-4, 5.0e-4 -> sqrt(2.2076e-6) = 1.4858e-3.
    N = 0.10214 x 20 / 20.43 = 0.099990 eq/L."""
    result = secondary_budget(0.10214, 0.00010, 20.0, 20.43, pipette_tolerance_ml=0.03,
                              burette_tolerance_ml=0.03, u_rel_repeatability=0.0005)
    assert result.value == pytest.approx(0.099990, abs=5e-7)
    assert result.u_relative == pytest.approx(1.4858e-3, rel=2e-4)
    lines = {line.symbol: line for line in result.budget}
    assert lines["V_aliquot"].u == pytest.approx(0.014245, rel=1e-4)
    assert lines["V"].u == pytest.approx(0.014326, rel=1e-4)
    assert result.complete
    assert math.isclose(result.U, 2 * result.u)


def test_secondary_budget_with_one_replicate_reports_repeatability_missing() -> None:
    result = secondary_budget(0.10214, 0.00010, 20.0, 20.43, pipette_tolerance_ml=0.03,
                              burette_tolerance_ml=0.03, replicate_normalities=[0.09999])
    assert result.missing == ("f_rep",)
    two = secondary_budget(0.10214, 0.00010, 20.0, 20.43, pipette_tolerance_ml=0.03,
                           burette_tolerance_ml=0.03,
                           replicate_normalities=[0.09990, 0.10010])
    assert two.complete and "f_rep" in {line.symbol for line in two.budget}


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"reference_normality": 0.0}, "reference normality"),
        ({"u_reference_normality": -1e-4}, "reference normality"),
        ({"aliquot_ml": float("nan")}, "aliquot"),
        ({"blank_ml": 30.0}, "not greater than the blank"),
    ],
)
def test_secondary_budget_refusals(kwargs: dict[str, float], message: str) -> None:
    args: dict[str, float] = {"reference_normality": 0.1, "u_reference_normality": 1e-4,
                              "aliquot_ml": 20.0, "volume_ml": 20.4}
    args.update(kwargs)
    with pytest.raises(InvalidInput, match=message):
        secondary_budget(**args, pipette_tolerance_ml=0.03,  # type: ignore[arg-type]
                         burette_tolerance_ml=0.03)



@settings(max_examples=200, deadline=None)
@given(
    n_ref=hst.floats(min_value=0.001, max_value=5.0),
    rel_ref=hst.one_of(hst.just(0.0), hst.floats(min_value=1e-9, max_value=0.05)),
    aliquot=hst.floats(min_value=1.0, max_value=100.0),
    volume=hst.floats(min_value=1.0, max_value=100.0),
    pipette=hst.floats(min_value=0.0, max_value=0.1),
    burette=hst.floats(min_value=0.0, max_value=0.1),
    temperature=hst.floats(min_value=0.0, max_value=10.0),
    repeatability=hst.one_of(hst.none(), hst.floats(min_value=0.0, max_value=0.01)),
)
def test_inherited_uncertainty_is_never_below_the_references(  # type: ignore[no-untyped-def]
        n_ref, rel_ref, aliquot, volume, pipette, burette, temperature, repeatability):
    result = secondary_budget(n_ref, rel_ref * n_ref, aliquot, volume,
                              pipette_tolerance_ml=pipette, burette_tolerance_ml=burette,
                              temperature_range_c=temperature,
                              u_rel_repeatability=repeatability)
    assert result.u_relative >= rel_ref * (1 - 1e-12)
    assert math.isfinite(result.u)
