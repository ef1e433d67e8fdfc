"""Equivalence volume from titration curves.

The curves are computed from the charge-balance model (prepbook.chem.equilibria) and
carry Gaussian noise of 0.005 pH, a typical meter resolution (common practice, no
source), at increments a bench analyst uses: about 0.5 mL far from the endpoint,
0.2-0.3 mL approaching it, 0.1 mL across it (common practice, no source). The true
equivalence volume comes from stoichiometry alone (Ve = n_sample * protons / C_titrant),
never from the program.

Methods checked:
- derivative methods (first-derivative maximum, second-derivative zero crossing):
  Harris, Quantitative Chemical Analysis, "Finding the end point with derivatives"
  (from memory);
- Gran's method: G. Gran, Analyst 77 (1952) 661, in the textbook form V * 10^-pH =
  Ka (Ve - V) for a weak acid, (V0 + V) 10^-pH = C (V - Ve) for excess strong acid
  (from memory, as presented in Harris).

Tolerances: the derivative estimate is held to half the finest increment near the
endpoint (0.05 mL for 0.1 mL steps), the resolution such data support (common
practice, no source); Gran to 0.1 mL (0.4 % of 25 mL), since noise of 0.005 pH is
1.2 % on each 10^-pH value.
"""

from __future__ import annotations

import functools
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from prepbook.chem.curves import MIN_POINTS, endpoint, gran, read_curve_csv
from prepbook.chem.equilibria import glass_electrode_mv, simulate_titration
from prepbook.errors import InvalidInput

ACETIC = (4.756,)  # NIST critically selected constants, via a standard analytical text
CARBONIC = (6.35, 10.33)  # same tabulation
NOISE_PH = 0.005
DERIVATIVE_TOL_ML = 0.05  # half of the 0.1 mL increments near the endpoint
GRAN_TOL_ML = 0.1


def _bench_volumes(rng: np.random.Generator, endpoints_ml: tuple[float, ...],
                   last_ml: float) -> list[float]:
    """Burette readings as an analyst takes them: uneven steps, finer near each endpoint."""
    volumes = [0.0]
    while volumes[-1] < last_ml:
        here = volumes[-1]
        near = min(abs(here - ve) for ve in endpoints_ml)
        if near < 1.5:
            step = rng.uniform(0.08, 0.12)
        elif near < 4.0:
            step = rng.uniform(0.2, 0.3)
        else:
            step = rng.uniform(0.4, 0.5)
        volumes.append(round(here + step, 2))
    return volumes


@functools.cache
def acetic_curve(seed: int) -> tuple[tuple[float, ...], tuple[float, ...], float]:
    """25.00 mL of 0.1 M acetic acid titrated with 0.1 M NaOH; returns volumes, noisy pH
    and the stoichiometric Ve (25.00 mL)."""
    c_acid, v0, c_naoh = 0.1, 25.00, 0.1
    ve = c_acid * v0 / c_naoh
    rng = np.random.default_rng(seed)
    volumes = _bench_volumes(rng, (ve,), 32.0)
    ph = np.array(simulate_titration(
        volumes, pkas=ACETIC, sample_concentration_mol_per_l=c_acid, sample_ml=v0,
        titrant_concentration_mol_per_l=c_naoh, initial_protons=1,
    ))
    ph = ph + rng.normal(0.0, NOISE_PH, len(ph))
    return tuple(volumes), tuple(float(x) for x in ph), ve


@functools.cache
def carbonate_curve(seed: int) -> tuple[tuple[float, ...], tuple[float, ...], float, float]:
    """25.00 mL of 0.05 M sodium carbonate titrated with 0.1 M HCl (closed vessel: no CO2
    lost); returns volumes, noisy pH and the stoichiometric Ve1 (12.50) and Ve2 (25.00)."""
    c_carbonate, v0, c_hcl = 0.05, 25.00, 0.1
    ve1 = c_carbonate * v0 / c_hcl
    ve2 = 2 * ve1
    rng = np.random.default_rng(seed)
    volumes = _bench_volumes(rng, (ve1, ve2), 32.0)
    ph = np.array(simulate_titration(
        volumes, pkas=CARBONIC, sample_concentration_mol_per_l=c_carbonate, sample_ml=v0,
        titrant_concentration_mol_per_l=c_hcl, initial_protons=0, titrant_is_base=False,
    ))
    ph = ph + rng.normal(0.0, NOISE_PH, len(ph))
    return tuple(volumes), tuple(float(x) for x in ph), ve1, ve2


# ----------------------------------------------------------------------------- weak acid


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_acetic_acid_endpoint_by_derivatives(seed: int) -> None:
    """Ve of acetic acid with NaOH within half the 0.1 mL increment (derivative method,
    Harris, from memory); the first-derivative cross-check agrees as closely."""
    volumes, ph, ve = acetic_curve(seed)
    result = endpoint(volumes, ph)
    assert result.method == "second derivative"
    assert result.equivalence_ml == pytest.approx(ve, abs=DERIVATIVE_TOL_ML)
    assert result.first_derivative_ml == pytest.approx(ve, abs=DERIVATIVE_TOL_ML)
    assert result.points == len(volumes)
    # The reading at the endpoint lies inside the jump, between the pH of the half-way
    # buffer (pKa, Henderson-Hasselbalch) and that of 10 % excess base.
    assert ACETIC[0] < result.reading_at_endpoint < 12.0


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_acetic_acid_gran_estimate(seed: int) -> None:
    """Gran's weak-acid function V * 10^-pH = Ka (Ve - V) (Gran 1952, textbook form, from
    memory): the x-intercept within 0.1 mL of the stoichiometric Ve."""
    volumes, ph, ve = acetic_curve(seed)
    result = endpoint(volumes, ph)
    assert result.gran_ml is not None
    assert result.gran_ml == pytest.approx(ve, abs=GRAN_TOL_ML)
    assert result.gran_points >= 4


def test_gran_slope_is_ka() -> None:
    """The slope of V * 10^-pH against V is -Ka (Gran 1952 / Harris, from memory): the
    fitted line recovers the acetic acid pKa 4.756 to 0.02 on a noise-free curve."""
    v0, c = 25.0, 0.1
    volumes = [float(v) for v in np.arange(0.0, 30.0, 0.25)]
    ph = simulate_titration(volumes, pkas=ACETIC, sample_concentration_mol_per_l=c,
                            sample_ml=v0, titrant_concentration_mol_per_l=c,
                            initial_protons=1)
    x = np.array([v for v in volumes if 12.5 <= v <= 23.75])
    y = np.array([v * 10.0 ** -p for v, p in zip(volumes, ph, strict=True)
                  if 12.5 <= v <= 23.75])
    slope = float(np.polyfit(x, y, 1)[0])
    assert -math.log10(-slope) == pytest.approx(ACETIC[0], abs=0.02)
    fit = gran(volumes, ph, region="weak-acid-before", equivalence_ml_estimate=25.0)
    assert fit.equivalence_ml == pytest.approx(c * v0 / c, abs=0.01)


# ----------------------------------------------------------------------------- carbonate


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_carbonate_second_endpoint_is_the_steepest(seed: int) -> None:
    """Na2CO3 with HCl: the steepest step is the second equivalence point (H2CO3), the one a
    2 eq/mol standardization uses; within half the 0.1 mL increment of 2 n / C_HCl."""
    volumes, ph, _, ve2 = carbonate_curve(seed)
    result = endpoint(volumes, ph)
    assert result.equivalence_ml == pytest.approx(ve2, abs=DERIVATIVE_TOL_ML)
    # Falling curve: the reading at the endpoint is below the bicarbonate pH.
    assert result.reading_at_endpoint < sum(CARBONIC) / 2


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_carbonate_gran_after_the_endpoint(seed: int) -> None:
    """After Ve2 the excess HCl gives (V0 + V) 10^-pH = C_HCl (V - Ve) (Gran 1952 textbook
    form, from memory): within 0.1 mL when the starting volume is given, and refused with a
    note when it is not."""
    volumes, ph, _, ve2 = carbonate_curve(seed)
    with_v0 = endpoint(volumes, ph, sample_ml=25.0)
    assert with_v0.gran_ml == pytest.approx(ve2, abs=GRAN_TOL_ML)
    without = endpoint(volumes, ph)
    assert without.gran_ml is None
    assert any("sample volume" in note for note in without.notes)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_carbonate_first_endpoint_in_a_search_window(seed: int) -> None:
    """The first (bicarbonate) endpoint, found by restricting the search, is shallow
    (pKa2 - pKa1 is about 4, which is why textbooks call it poorly defined, from memory):
    held to 0.15 mL of n / C_HCl rather than 0.05."""
    volumes, ph, ve1, _ = carbonate_curve(seed)
    result = endpoint(volumes, ph, search_ml=(5.0, 20.0))
    assert result.equivalence_ml == pytest.approx(ve1, abs=0.15)
    assert result.gran_ml is None


# ----------------------------------------------------------------------------- strong acid


def test_strong_acid_is_not_straightened_by_the_weak_acid_function() -> None:
    """For a strong acid, V * 10^-pH = C V (Ve - V)/(V0 + V) is curved, so the weak-acid
    Gran function is refused; (V0 + V) 10^(pH - pKw) = C_base (V - Ve) after the endpoint
    fits (Gran 1952 textbook form, from memory). HCl is modelled with pKa -6 (from memory:
    any pKa below about 0 behaves as strong here)."""
    rng = np.random.default_rng(7)
    volumes = _bench_volumes(rng, (25.0,), 35.0)
    ph = np.array(simulate_titration(volumes, pkas=(-6.0,), sample_concentration_mol_per_l=0.1,
                                     sample_ml=25.0, titrant_concentration_mol_per_l=0.1,
                                     initial_protons=1))
    ph = ph + rng.normal(0.0, NOISE_PH, len(ph))
    result = endpoint(volumes, ph)
    assert result.equivalence_ml == pytest.approx(25.0, abs=DERIVATIVE_TOL_ML)
    assert result.gran_ml is None
    assert any("not straight" in note for note in result.notes)
    after = gran(volumes, ph, region="excess-base-after",
                 equivalence_ml_estimate=result.equivalence_ml, sample_ml=25.0)
    assert after.equivalence_ml == pytest.approx(25.0, abs=GRAN_TOL_ML)


# ----------------------------------------------------------------------------- mV and invariants


def test_mv_readings_give_the_same_endpoint_without_gran() -> None:
    """A glass electrode reads E = E0 - 59.16 mV * pH (Nernst equation at 25 C): the same
    curve in mV has the same inflection; Gran is not applied to mV."""
    volumes, ph, ve = acetic_curve(0)
    mv = [glass_electrode_mv(p) for p in ph]
    result = endpoint(volumes, mv, kind="mV")
    assert result.equivalence_ml == pytest.approx(endpoint(volumes, ph).equivalence_ml,
                                                  rel=1e-9)
    assert result.equivalence_ml == pytest.approx(ve, abs=DERIVATIVE_TOL_ML)
    assert result.gran_ml is None
    assert any("needs pH" in note for note in result.notes)


@settings(max_examples=50, deadline=None)
@given(
    slope=st.floats(min_value=-80.0, max_value=80.0).filter(lambda s: abs(s) > 1.0),
    offset_mv=st.floats(min_value=-500.0, max_value=500.0),
    scale=st.floats(min_value=0.2, max_value=5.0),
    start_ml=st.floats(min_value=0.0, max_value=20.0),
)
def test_endpoint_is_invariant_under_electrode_and_burette_changes(
    slope: float, offset_mv: float, scale: float, start_ml: float
) -> None:
    """Real invariants of a titration: the electrode's offset and slope (any calibration,
    either lead polarity) do not move the inflection; a titrant k times weaker needs k times
    the volume (Ve scales by k); a burette started at a non-zero reading shifts every volume
    and the endpoint alike. (Affine maps of either axis preserve the inflection point:
    elementary calculus.)"""
    volumes, ph, _ = acetic_curve(0)
    reference = endpoint(volumes, ph).equivalence_ml
    mv = [offset_mv + slope * p for p in ph]
    moved = [start_ml + scale * v for v in volumes]
    result = endpoint(moved, mv, kind="mV")
    assert result.equivalence_ml == pytest.approx(start_ml + scale * reference, rel=1e-9)


@settings(max_examples=25, deadline=None)
@given(
    pka=st.floats(min_value=3.0, max_value=6.0),
    c_acid=st.floats(min_value=0.02, max_value=0.2),
    ratio=st.floats(min_value=0.5, max_value=2.0),
)
def test_endpoint_recovers_stoichiometric_volume(pka: float, c_acid: float,
                                                 ratio: float) -> None:
    """Across weak acids (pKa 3-6) and concentrations (0.02-0.2 M, titrant 0.5-2 times as
    strong), the derivative endpoint of a noise-free curve sampled every 0.1 mL near the
    endpoint is within half that increment of C_acid V0 / C_base (stoichiometry)."""
    v0 = 25.0
    c_base = c_acid * ratio
    ve = c_acid * v0 / c_base
    volumes = sorted({round(float(v), 3) for v in np.concatenate([
        np.arange(0.0, ve - 2.0, 0.5), np.arange(ve - 2.0, ve + 2.0, 0.1) + 0.037,
        np.arange(ve + 2.5, 1.3 * ve + 3.0, 0.5)]) if v >= 0})
    ph = simulate_titration(volumes, pkas=(pka,), sample_concentration_mol_per_l=c_acid,
                            sample_ml=v0, titrant_concentration_mol_per_l=c_base,
                            initial_protons=1)
    assert endpoint(volumes, ph).equivalence_ml == pytest.approx(ve, abs=DERIVATIVE_TOL_ML)


# ----------------------------------------------------------------------------- refusals


def _sigmoid(n: int = 11) -> tuple[list[float], list[float]]:
    volumes = [float(i) for i in range(n)]
    return volumes, [7.0 + 3.0 * math.tanh(v - n // 2) for v in volumes]


def test_sigmoid_helper_has_an_endpoint() -> None:
    """The refusal tests below change one thing each on this curve, which itself is
    accepted (a tanh step is symmetric about its centre: elementary calculus)."""
    volumes, readings = _sigmoid()
    assert endpoint(volumes, readings).equivalence_ml == pytest.approx(5.0, abs=1e-9)


def test_coarse_increments_at_the_endpoint_are_noted() -> None:
    """0.5 mL steps across a 25 mL endpoint (2 % of Ve) get a note; the 0.1 mL steps of the
    bench curves do not (threshold 1 % of Ve, common practice, no source)."""
    volumes = [float(v) for v in np.arange(0.0, 32.0, 0.5)]
    ph = simulate_titration(volumes, pkas=ACETIC, sample_concentration_mol_per_l=0.1,
                            sample_ml=25.0, titrant_concentration_mol_per_l=0.1,
                            initial_protons=1)
    assert any("increment across the steepest step" in n for n in endpoint(volumes, ph).notes)
    fine_volumes, fine_ph, _ = acetic_curve(0)
    assert not any("increment across" in n for n in endpoint(fine_volumes, fine_ph).notes)


def test_refuses_too_few_points() -> None:
    volumes, readings = _sigmoid(MIN_POINTS - 1)
    with pytest.raises(InvalidInput, match=f"at least {MIN_POINTS} points"):
        endpoint(volumes, readings)


@pytest.mark.parametrize("bad", [5.0, 4.5])
def test_refuses_volumes_not_strictly_increasing(bad: float) -> None:
    volumes, readings = _sigmoid()
    volumes[6] = bad
    with pytest.raises(InvalidInput, match="point 7: .*strictly increase"):
        endpoint(volumes, readings)


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), float("-inf")])
def test_refuses_non_finite_values(bad: float) -> None:
    volumes, readings = _sigmoid()
    readings[3] = bad
    with pytest.raises(InvalidInput, match="point 4: pH .* not a finite number"):
        endpoint(volumes, readings)
    volumes, readings = _sigmoid()
    volumes[10] = bad
    with pytest.raises(InvalidInput, match="point 11: volume"):
        endpoint(volumes, readings)


def test_refuses_negative_volume() -> None:
    volumes, readings = _sigmoid()
    volumes[0] = -0.5
    with pytest.raises(InvalidInput, match="point 1: volume -0.5 mL is negative"):
        endpoint(volumes, readings)


def test_refuses_a_flat_curve() -> None:
    with pytest.raises(InvalidInput, match="do not change"):
        endpoint([0, 1, 2, 3, 4, 5], [7.0] * 6)


def test_refuses_a_straight_line() -> None:
    volumes = [0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0]
    with pytest.raises(InvalidInput, match="no inflection"):
        endpoint(volumes, [3.0 + 0.5 * v for v in volumes])


def test_refuses_a_noisy_straight_line() -> None:
    rng = np.random.default_rng(3)
    volumes = [float(v) for v in np.arange(0.0, 20.0, 0.5)]
    readings = [3.0 + 0.2 * v + float(rng.normal(0, 0.005)) for v in volumes]
    with pytest.raises(InvalidInput, match="no inflection"):
        endpoint(volumes, readings)


def test_refuses_a_curve_that_stops_before_the_endpoint() -> None:
    """Only the buffer region and the start of the jump: steepest at the last point."""
    volumes = [float(v) for v in np.arange(0.0, 24.6, 0.5)]
    ph = simulate_titration(volumes, pkas=ACETIC, sample_concentration_mol_per_l=0.1,
                            sample_ml=25.0, titrant_concentration_mol_per_l=0.1,
                            initial_protons=1)
    with pytest.raises(InvalidInput, match="steepest at the end"):
        endpoint(volumes, ph)


def test_refuses_mismatched_lengths_and_unknown_kind() -> None:
    volumes, readings = _sigmoid()
    with pytest.raises(InvalidInput, match="11 volumes but 10 readings"):
        endpoint(volumes, readings[:-1])
    with pytest.raises(InvalidInput, match="'pH' or 'mV'"):
        endpoint(volumes, readings, kind="ph")


def test_refuses_mv_readings_labelled_ph() -> None:
    volumes, readings = _sigmoid()
    mv = [glass_electrode_mv(r) for r in readings]
    with pytest.raises(InvalidInput, match="are these readings mV"):
        endpoint(volumes, mv)


def test_refuses_a_backwards_search_window() -> None:
    volumes, readings = _sigmoid()
    with pytest.raises(InvalidInput, match="search window"):
        endpoint(volumes, readings, search_ml=(8.0, 2.0))


def test_gran_refuses_an_unknown_region() -> None:
    volumes, readings = _sigmoid()
    with pytest.raises(InvalidInput, match="Gran region"):
        gran(volumes, readings, region="somewhere", equivalence_ml_estimate=5.0)


def test_gran_with_too_few_points_is_not_applied() -> None:
    """A sparse curve: fewer than 4 points in the window gives no Gran value, with a note."""
    volumes, readings = _sigmoid()
    fit = gran(volumes, readings, region="weak-acid-before", equivalence_ml_estimate=5.0)
    assert fit.equivalence_ml is None
    assert "at least 4" in fit.notes[0]


# ----------------------------------------------------------------------------- CSV


def test_read_curve_csv_ph_with_comments_and_extra_columns() -> None:
    text = ("# exported by a meter\nVolume (mL),pH,Temp (C)\n0.00,2.88,25.0\n\n"
            "1.00,3.81,25.0\n2.50,4.15,25.1\n")
    volumes, readings, kind = read_curve_csv(text)
    assert (volumes, readings, kind) == ([0.0, 1.0, 2.5], [2.88, 3.81, 4.15], "pH")


def test_read_curve_csv_mv_semicolon_decimal_comma() -> None:
    text = "\ufeffvolume_ml;E_mV\n0,00;245,3\n0,50;231,0\n"
    assert read_curve_csv(text) == ([0.0, 0.5], [245.3, 231.0], "mV")


def test_read_curve_csv_defaults_to_ph() -> None:
    assert read_curve_csv("V,reading\n0,7\n1,8\n")[2] == "pH"


def test_read_curve_csv_round_trip_to_endpoint() -> None:
    """What the CLI does: text -> series -> endpoint, equal to the endpoint of the series."""
    volumes, ph, _ = acetic_curve(1)
    text = "volume_ml,pH\n" + "".join(f"{v!r},{p!r}\n" for v, p in zip(volumes, ph,
                                                                          strict=True))
    v2, p2, kind = read_curve_csv(text)
    assert endpoint(v2, p2, kind=kind).equivalence_ml == endpoint(volumes, ph).equivalence_ml


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("", "empty"),
        ("volume_ml\n0\n", "line 1: the header needs two columns"),
        ("0,7.0\n1,7.5\n", "line 1: the first row must be a header"),
        ("volume_ml,pH\n", "no data rows"),
        ("volume_ml,pH\n0,7.0\n1,abc\n", "line 3: pH 'abc' is not a number"),
        ("volume_ml,pH\n0,7.0\n1_0,7.2\n", "line 3: volume '1_0' is not a number"),
        ("volume_ml,pH\n0,7.0\nnan,7.2\n", "line 3: volume 'nan' is not a number"),
        ("volume_ml,pH\n0,7.0\n2\n", "line 3: expected volume and pH"),
        ("volume_ml,pH\n-1,7.0\n", "line 2: volume -1 mL is negative"),
        ("volume_ml,pH\n# note\n1,7.0\n1,7.1\n", "line 4: volume 1 mL does not exceed"),
        ("volume_ml,pH\n0,245.0\n", "line 2: pH 245 is outside"),
    ],
)
def test_read_curve_csv_refuses_with_the_line(text: str, message: str) -> None:
    with pytest.raises(InvalidInput, match=message):
        read_curve_csv(text)
