"""Every inflection of modelled titration curves (tests/chem/model_curves.py: the
equilibrium model with equivalence volumes from stoichiometry alone).

Tolerances: at 0.1 mL steps a local least-squares derivative stays within about 0.03 mL
of the equivalence volume with 0.01 pH of noise (the figure the finder was asked to
meet; the old differences missed carbonate's first endpoint by up to 0.3 mL). With
uneven steps up to 0.3 mL the resolution is the local step; each estimate is then held
to three times its own stated standard uncertainty.
"""

from __future__ import annotations

import pytest

from prepbook.chem.curves import endpoint
from prepbook.chem.inflections import compare_tolerance_ml, find_endpoints, reading_noise
from prepbook.errors import InvalidInput
from tests.chem.model_curves import (
    ACETIC,
    CARBONATE,
    CASES,
    STEP_PATTERNS,
    STRONG,
    curve,
)

EVEN, UNEVEN = STEP_PATTERNS


@pytest.mark.parametrize("case", CASES, ids=lambda c: c.name)
@pytest.mark.parametrize("noise", [0.0, 0.005, 0.01])
@pytest.mark.parametrize("seed", range(4))
def test_every_endpoint_within_0_03_ml_at_even_steps(case, noise, seed) -> None:  # type: ignore[no-untyped-def]
    v, ph = curve(case, EVEN, noise, seed)
    report = find_endpoints(v, ph, sample_ml=case.sample_ml)
    found = [item.volume_ml for item in report.inflections]
    assert len(found) == len(case.equivalence_ml)
    for got, true in zip(found, case.equivalence_ml, strict=True):
        assert abs(got - true) <= 0.03


@pytest.mark.parametrize("case", CASES, ids=lambda c: c.name)
@pytest.mark.parametrize("seed", range(6))
def test_uneven_steps_within_three_stated_uncertainties(case, seed) -> None:  # type: ignore[no-untyped-def]
    v, ph = curve(case, UNEVEN, 0.01, seed)
    report = find_endpoints(v, ph, sample_ml=case.sample_ml)
    assert len(report.inflections) == len(case.equivalence_ml)
    for item, true in zip(report.inflections, case.equivalence_ml, strict=True):
        assert 0 < item.u_ml < 0.15
        assert abs(item.volume_ml - true) <= 3 * item.u_ml


def test_old_derivative_misses_carbonate_first_endpoint_where_the_new_one_holds() -> None:
    """The shortfall this replaces: with 0.005 pH of noise the old differences put
    carbonate's first endpoint more than 0.1 mL off on some of these curves."""
    window = (0.0, 31.0)
    old = [abs(endpoint(*curve(CARBONATE, EVEN, 0.005, s), search_ml=window).equivalence_ml
               - CARBONATE.equivalence_ml[0]) for s in range(10)]
    new = [abs(find_endpoints(*curve(CARBONATE, EVEN, 0.005, s)).inflections[0].volume_ml
               - CARBONATE.equivalence_ml[0]) for s in range(10)]
    assert max(old) > 0.1
    assert max(new) < 0.03


def test_each_inflection_has_its_own_uncertainty_and_direction() -> None:
    v, ph = curve(CARBONATE, EVEN, 0.01, 1)
    first, second = find_endpoints(v, ph).inflections
    assert first.slope < 0 and second.slope < 0  # pH falls as acid is added
    assert first.u_ml != second.u_ml
    assert first.points_fitted >= 7 and second.points_fitted >= 7
    # The pH at each: bicarbonate about 8.3, carbonic acid about 3.9 (the model's
    # equivalence pH values, roughly (pKa1 + pKa2) / 2 = 8.34 for the first).
    assert 8.0 < first.reading < 8.7
    assert 3.5 < second.reading < 4.5


def test_window_keeps_only_the_inflections_inside_it() -> None:
    v, ph = curve(CARBONATE, EVEN, 0.01, 2)
    report = find_endpoints(v, ph, window_ml=(5.0, 31.0))
    assert len(report.inflections) == 1
    assert abs(report.inflections[0].volume_ml - CARBONATE.equivalence_ml[0]) <= 0.03
    assert report.window_ml == (5.0, 31.0)
    assert report.gran_ml is None
    second = find_endpoints(v, ph, window_ml=(31.0, 50.0)).inflections
    assert len(second) == 1 and abs(second[0].volume_ml - 41.26) <= 0.03


def test_gran_agrees_on_a_weak_acid_and_flags_a_wrong_sample_volume() -> None:
    v, ph = curve(CARBONATE, EVEN, 0.0, 0)
    good = find_endpoints(v, ph, sample_ml=50.0)
    assert good.gran_ml is not None and good.gran_agrees is True
    assert abs(good.gran_ml - 41.26) < 0.1
    wrong = find_endpoints(v, ph, sample_ml=5.0)  # V0 mistyped: Gran's line tilts
    assert wrong.gran_agrees is False
    assert any("disagree" in note for note in wrong.notes)
    va, pa = curve(ACETIC, EVEN, 0.005, 0)
    acetic = find_endpoints(va, pa)
    assert acetic.gran_agrees is True  # V 10^-pH before the endpoint, no V0 needed


def test_gran_needs_ph_and_a_sample_volume_after_the_endpoint() -> None:
    v, ph = curve(STRONG, EVEN, 0.0, 0)
    mv = [400.0 - 59.16 * p for p in ph]
    report = find_endpoints(v, mv, kind="mV")
    assert report.gran_ml is None and report.gran_agrees is None
    assert abs(report.inflections[0].volume_ml - 20.862) <= 0.03
    assert report.inflections[0].slope < 0


def test_compare_tolerance_is_the_larger_of_share_and_two_u() -> None:
    assert compare_tolerance_ml(20.0, 0.01) == pytest.approx(0.1)  # 0.5 % of 20 mL
    assert compare_tolerance_ml(20.0, 0.08) == pytest.approx(0.16)  # 2 x 0.08 mL
    with pytest.raises(InvalidInput):
        compare_tolerance_ml(20.0, 0.01, -0.1)


def test_reading_noise_from_second_differences() -> None:
    """Alternating +/-0.01 on a straight line: second differences are +/-0.04, so the
    estimate is 1.4826 * 0.04 / sqrt(6) = 0.02421 (worked by hand)."""
    values = [0.5 * i + (0.01 if i % 2 else -0.01) for i in range(20)]
    assert reading_noise(values) == pytest.approx(0.024211, rel=1e-4)
    assert reading_noise([1.0, 2.0]) == 0.0


@pytest.mark.parametrize(
    ("volumes", "readings", "kwargs", "message"),
    [
        ([0, 1, 2], [1, 2, 3], {}, "at least 9 points"),
        ([float(i) for i in range(20)], [7.0] * 20, {}, "no inflection"),
        ([float(i) for i in range(20)], [0.3 * i for i in range(20)], {}, "no inflection"),
        ([float(i) for i in range(20)], [0.3 * i for i in range(20)],
         {"window_ml": (5.0, 2.0)}, "not a range"),
        ([float(i) for i in range(20)], [0.3 * i for i in range(20)],
         {"window_ml": (0.0, 3.0)}, "4 points lie in the window"),
        ([float(i) for i in range(20)], [0.3 * i for i in range(20)],
         {"smoothing_ml": -1.0}, "smoothing span"),
    ],
)
def test_refusals(volumes, readings, kwargs, message) -> None:  # type: ignore[no-untyped-def]
    with pytest.raises(InvalidInput, match=message):
        find_endpoints(volumes, readings, **kwargs)
