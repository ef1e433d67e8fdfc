"""Direct and secondary standardization: CG4 A2 values, hand checks, refusals."""

from __future__ import annotations

import statistics

import pytest

from prepbook.chem import standardization as st
from prepbook.chem.corrections import buoyancy_true_mass
from prepbook.chem.formula import molar_mass
from prepbook.errors import InvalidInput

KHP = st.PrimaryStandard("potassium hydrogen phthalate", 204.2212, 0.0038, 1.0, 1.0, 0.00029,
                         density_g_per_cm3=1.636)  # CG4 A2 M; density from memory (REFERENCES)


def test_direct_normality_cg4_a2() -> None:
    """CG4 A2: 0.3888 g KHP, purity 1.0, M 204.2212, 18.64 mL -> 0.10214 mol/L."""
    assert round(st.direct_normality(0.3888, 1.0, 204.2212, 18.64), 5) == 0.10214


def test_blank_is_subtracted() -> None:
    """CG4 A2 again with a 0.10 mL blank added to the reading: same 0.10214."""
    assert round(st.direct_normality(0.3888, 1.0, 204.2212, 18.74, blank_ml=0.10), 5) == 0.10214


def test_equivalent_weight_uses_n() -> None:
    """USP HCl VS: each 52.99 mg of sodium carbonate = 1 mL of 1 N (from memory): n = 2."""
    m = molar_mass("Na2CO3")
    carbonate = st.PrimaryStandard("sodium carbonate", m.value_g_per_mol, m.u_g_per_mol, 2.0)
    assert round(carbonate.equivalent_weight_g_per_eq, 2) == 52.99


def test_secondary_normality_hand_check() -> None:
    """N1 V1 = N2 V2: 25.00 mL of 0.1000 N takes 24.50 mL -> 2.5/24.5 = 0.10204 eq/L."""
    assert round(st.secondary_normality(0.1000, 25.00, 24.50), 5) == 0.10204


def test_mean_of_replicates_and_per_replicate_values() -> None:
    """The result is the mean of each replicate's own normality (definition)."""
    reps = [(0.3888, 18.64), (0.4102, 19.70), (0.3711, 17.75)]
    result = st.direct(KHP, reps)
    # N = 1000 m / (M V), M = 204.2212 g/mol (CG4 A2), worked by hand:
    #   388.8 / (204.2212 x 18.64 = 3806.6832) = 0.1021362
    #   410.2 / (204.2212 x 19.70 = 4023.1576) = 0.1019597
    #   371.1 / (204.2212 x 17.75 = 3624.9263) = 0.1023745
    each = [0.1021362, 0.1019597, 0.1023745]
    assert [r.normality for r in result.replicates] == pytest.approx(each, abs=1e-7)
    # mean by hand: (0.1021362 + 0.1019597 + 0.1023745) / 3 = 0.3064704 / 3 = 0.1021568
    assert result.normality == pytest.approx(0.1021568, abs=1e-7)
    assert [r.index for r in result.replicates] == [1, 2, 3]
    assert result.uncertainty is None and result.stats.n == 3


def test_buoyancy_correction_uses_the_standard_density() -> None:
    """NIST IR 6969 SOP 2 via corrections.buoyancy_true_mass; the reading is kept too."""
    result = st.direct(KHP, [(0.3888, 18.64)], buoyancy=st.Buoyancy())
    rep = result.replicates[0]
    assert rep.amount == 0.3888
    # By hand (SOP 2): 0.3888 x (1 - 0.0012/8.0 = 0.99985) / (1 - 0.0012/1.636 = 0.99926650)
    # = 0.3888 x 1.00058392 = 0.3890270 g; N = 389.0270 / 3806.6832 = 0.1021958 eq/L
    assert rep.true_mass_g == pytest.approx(0.3890270, abs=1e-7)
    assert rep.true_mass_g == pytest.approx(buoyancy_true_mass(0.3888, 1.636))
    assert rep.normality == pytest.approx(0.1021958, abs=1e-7)


def test_buoyancy_without_density_is_refused() -> None:
    """A correction that cannot be made is refused, not skipped."""
    no_density = st.PrimaryStandard("KHP", 204.2212, 0.0038, 1.0)
    with pytest.raises(InvalidInput, match="density"):
        st.direct(no_density, [(0.3888, 18.64)], buoyancy=st.Buoyancy())


def test_exclusion_by_index_keeps_the_replicate_visible() -> None:
    """Owner's rule: excluded, not deleted; the mean uses the others."""
    reps = [(0.3888, 18.64), (0.4102, 19.70), (0.3711, 18.50)]
    result = st.direct(KHP, reps, excluded=[3])
    assert result.replicates[2].excluded and result.replicates[2].normality > 0
    assert result.normality == pytest.approx(
        statistics.fmean(r.normality for r in result.replicates[:2]))
    assert result.stats.n == 2


def test_outlier_flagged_not_dropped() -> None:
    """Grubbs (ISO 5725-2, n = 6, 1.8871): one replicate titrated 1 % long is flagged and
    stays in the mean."""
    reps = [(0.4000, 19.58), (0.4000, 19.59), (0.4000, 19.57), (0.4000, 19.58),
            (0.4000, 19.59), (0.4000, 19.78)]
    result = st.direct(KHP, reps)
    assert [r.outlier for r in result.replicates] == [False] * 5 + [True]
    assert result.stats.n == 6 and result.stats.outlier.index == 6
    assert result.normality == pytest.approx(
        statistics.fmean(r.normality for r in result.replicates))


def test_secondary_with_replicates() -> None:
    """N1 V1 = N2 V2 per replicate, mean of the three."""
    result = st.secondary(0.1000, 0.0001, [(25.0, 24.50), (25.0, 24.52), (25.0, 24.48)])
    assert result.normality == pytest.approx(statistics.fmean(
        [2.5 / 24.50, 2.5 / 24.52, 2.5 / 24.48]))


@pytest.mark.parametrize(
    ("reps", "kwargs", "expected"),
    [
        ([(0.39, 18.6), (0.0, 18.6)], {}, "replicate 2: mass (g) 0"),
        ([(0.39, 18.6), (-0.2, 18.6)], {}, "replicate 2: mass (g) -0.2"),
        ([(0.39, 18.6), (0.39, -1.0)], {}, "replicate 2: titrant volume (mL) -1"),
        ([(0.39, 18.6), (0.39, 0.05)], {"blank_ml": 0.05}, "replicate 2: titrant volume 0.05"),
        ([(0.39, 18.6), ("abc", 18.6)], {}, "replicate 2: mass (g) 'abc'"),
        ([(0.39, 18.6), (0.39,)], {}, "replicate 2:"),
        ([(0.39, 18.6)], {"blank_ml": -0.1}, "blank"),
        ([(0.39, 18.6), (0.40, 18.9)], {"excluded": [1, 2]}, "no replicate left"),
        ([(0.39, 18.6)], {"excluded": [2]}, "cannot exclude replicate 2"),
        ([], {}, "no replicates"),
    ],
)
def test_bad_replicates_are_refused_with_a_clear_message(reps, kwargs, expected) -> None:
    """Owner's rule: a one-line message naming the replicate and the value."""
    with pytest.raises(InvalidInput) as info:
        st.direct(KHP, reps, **kwargs)
    assert expected in str(info.value)
    assert "\n" not in str(info.value)


@pytest.mark.parametrize("purity", [0.0, 1.0001, -0.5, 99.9])
def test_purity_outside_unit_interval_is_refused(purity: float) -> None:
    """Purity is a mass fraction in (0, 1] (99.9 given as percent is caught)."""
    bad = st.PrimaryStandard("KHP", 204.2212, 0.0038, 1.0, purity)
    with pytest.raises(InvalidInput, match="purity"):
        st.direct(bad, [(0.3888, 18.64)])


def test_secondary_refuses_bad_reference() -> None:
    """A reference normality must be positive."""
    with pytest.raises(InvalidInput, match="reference normality"):
        st.secondary(0.0, 0.0, [(25.0, 24.5)])
