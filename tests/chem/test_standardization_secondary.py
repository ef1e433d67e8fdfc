"""Secondary standardization against hand-worked values and EURACHEM/CITAC CG4 Example A3.

CG4 3rd ed. (2012) Example A3 titrates 15 mL of HCl with the NaOH standardized against
0.3888 g of KHP (18.64 mL), using 14.89 mL: c_HCl = 0.10139 mol/L, u_c = 0.00018 mol/L
(relative 0.0018), with a relative repeatability of 0.001 for the whole procedure. The
inputs and the result are recalled from the guide (from memory: /work's reference list
names the example but not its numbers), so the uncertainty is checked to the two
figures the guide prints. A3's model c_HCl = c_NaOH V_T2 / V_HCl is this module's
N = N_ref V_aliquot / V with the roles named the other way round (the reference is
the titrant there, the pipetted solution here); the products are the same.
"""

from __future__ import annotations

import math

import pytest

from prepbook.chem import standardization as st

# CG4 A3, the NaOH standardization step (A2's model without its own repeatability) and
# the HCl titration: values and standard uncertainties (from memory)
M_KHP, U_M_KHP = 0.3888, 0.00013
P_KHP, U_P_KHP = 1.0, 0.00029
MOLAR, U_MOLAR = 204.2212, 0.0038
V_T1, U_V_T1 = 18.64, 0.016
V_T2, U_V_T2 = 14.89, 0.015
V_HCL, U_V_HCL = 15.00, 0.011
U_REP = 0.001


def test_cg4_a3_the_naoh_uncertainty_carried_into_the_hcl_result() -> None:
    khp = st.PrimaryStandard("KHP", MOLAR, U_MOLAR, 1.0, P_KHP, U_P_KHP)
    naoh = st.direct(khp, [(M_KHP, V_T1)], uncertainty=st.UncertaintyInputs(
        U_M_KHP, U_V_T1, u_rel_repeatability=0.0))
    assert naoh.uncertainty is not None
    # by hand: 1000 x 0.3888 / (204.2212 x 18.64) = 0.102136 mol/L
    assert naoh.normality == pytest.approx(0.102136, abs=1e-6)
    hcl = st.secondary(naoh.normality, naoh.uncertainty.u, [(V_T2, V_HCL)],
                       uncertainty=st.UncertaintyInputs(0.0, U_V_HCL, u_aliquot_ml=U_V_T2,
                                                        u_rel_repeatability=U_REP))
    unc = hcl.uncertainty
    assert unc is not None and unc.complete
    assert round(hcl.normality, 5) == 0.10139  # CG4 A3's c_HCl
    assert round(unc.u, 5) in (0.00018, 0.00019)  # CG4 A3 prints 0.00018 mol/L
    # by hand, rule 2 (CG4 section 8): 0.00033^2 + 0.00029^2 + 0.000019^2 + 0.00086^2
    # (the NaOH) + 0.0010^2 + 0.00073^2 + 0.001^2 -> 0.00187 relative
    expected = math.sqrt(sum(x * x for x in (
        U_M_KHP / M_KHP, U_P_KHP, U_MOLAR / MOLAR, U_V_T1 / V_T1, U_V_T2 / V_T2,
        U_V_HCL / V_HCL, U_REP)))
    assert unc.u_relative == pytest.approx(expected, rel=1e-9)
    assert unc.u_relative == pytest.approx(0.00187, abs=0.00001)
    assert unc.u_relative > naoh.uncertainty.u_relative


def test_two_aliquots_by_hand() -> None:
    """0.1000 eq/L reference, 25.00 mL aliquots, 24.50 and 24.52 mL of titrant:
    2.5/24.50 = 0.1020408, 2.5/24.52 = 0.1019576 eq/L, mean 0.1019992 (by hand); the budget
    sits at the mean aliquot and mean volume and reports at the mean normality."""
    result = st.secondary(0.1000, 0.0001, [(25.00, 24.50), (25.00, 24.52)],
                          uncertainty=st.UncertaintyInputs(0.0, 0.02, u_aliquot_ml=0.015))
    assert [round(r.normality, 6) for r in result.replicates] == [0.102041, 0.101958]
    assert result.normality == pytest.approx(0.1019992, abs=1e-7)
    unc = result.uncertainty
    assert unc is not None and unc.value == pytest.approx(result.normality, rel=1e-12)
    lines = {line.symbol: line for line in unc.budget}
    assert lines["V"].value == pytest.approx(24.51)
    # repeatability by hand: s = 0.0000832 / sqrt 2 = 0.00005885; / (0.1019992 sqrt 2) = 4.080e-4
    assert lines["f_rep"].u == pytest.approx(4.080e-4, rel=1e-3)
    assert "V_blank" not in lines  # no blank, no blank line


def test_a_reference_without_uncertainty_keeps_the_line_as_missing() -> None:
    result = st.secondary(0.1000, None, [(25.00, 24.50), (25.00, 24.52)],
                          uncertainty=st.UncertaintyInputs(0.0, 0.02, u_aliquot_ml=0.015))
    unc = result.uncertainty
    assert unc is not None and unc.missing == ("N_ref",)
    assert [line.symbol for line in unc.budget].count("N_ref") == 1
    assert sum(line.share_percent for line in unc.budget) == pytest.approx(100)
