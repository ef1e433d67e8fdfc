"""Acceptance checks at their boundaries, each with the rule's source.

USP <41> (balances): minimum weight = 2000 x max(s, 0.41 d).
USP <31> (volumetric apparatus): titrant volume at least 30 % of the burette capacity.
European Pharmacopoeia 4.2.2: RSD not over 0.2 %, factor within 10 % of nominal.
Minimum of three replicates, lot and calibration dates: common practice, no source.
"""

from __future__ import annotations

from datetime import date, timedelta
from typing import Any

import pytest

from prepbook.catalog import find_spec
from prepbook.errors import InvalidInput
from prepbook.rules.acceptance import (
    AcceptanceRules,
    Check,
    check_standardization,
    failures,
    min_weight_g,
    verdict,
)

RUN = date(2024, 3, 5)
RULES = AcceptanceRules()


def _run(**overrides: Any) -> tuple[Check, ...]:
    """A run that passes every check; each test changes one thing."""
    args: dict[str, Any] = dict(
        replicate_count=3,
        rsd_percent=0.10,
        factor=1.0,
        volumes_ml=[20.0, 20.1, 19.9],
        masses_g=[0.40, 0.41, 0.40],
        balance_readability_g=0.0001,
        burette_capacity_ml=50.0,
        lot_expires=RUN + timedelta(days=365),
        lot_dried_on=RUN - timedelta(days=1),
        run_date=RUN,
        instruments=[("BAL-1", "balance", RUN + timedelta(days=30))],
    )
    args.update(overrides)
    return check_standardization(RULES, **args)


def _check(checks: tuple[Check, ...], name: str) -> Check:
    found = [c for c in checks if c.name == name]
    assert len(found) == 1, (name, checks)
    return found[0]


def test_a_clean_run_passes_every_check() -> None:
    checks = _run()
    assert all(c.passed for c in checks), [c for c in checks if not c.passed]
    assert verdict(checks) == "pass"
    assert {c.name for c in checks} == {
        "replicate-count",
        "rsd",
        "factor-window",
        "min-weight",
        "burette-fraction",
        "burette-capacity",
        "lot-expiry",
        "lot-dried",
        "calibration",
    }


# ---------------------------------------------------------------- USP <41>


def test_min_weight_usp41_example_uses_the_floor_0_41_d() -> None:
    """USP <41>: d = 0.1 mg and s < 0.41 d, so s -> 0.41 d = 0.041 mg; 2000 x 0.041 mg = 82 mg."""
    assert min_weight_g(0.0001) == pytest.approx(0.082)
    assert min_weight_g(0.0001, 0.00002) == pytest.approx(0.082)  # s = 0.02 mg < 0.041 mg


def test_min_weight_uses_s_when_it_exceeds_the_floor() -> None:
    """USP <41>: s = 0.1 mg > 0.41 d, so the minimum weight is 2000 s = 200 mg."""
    assert min_weight_g(0.0001, 0.0001) == pytest.approx(0.200)


@pytest.mark.parametrize(("d", "s"), [(0.0, None), (-0.001, None), (0.0001, -1e-6)])
def test_min_weight_refuses_nonsense(d: float, s: float | None) -> None:
    with pytest.raises(InvalidInput):
        min_weight_g(d, s)


def test_mass_at_the_usp41_minimum_weight_passes_and_just_below_fails() -> None:
    limit = min_weight_g(0.0001)
    at = _check(_run(masses_g=[limit, 0.4, 0.4]), "min-weight")
    assert at.passed
    below = _check(_run(masses_g=[0.4, limit * 0.999, 0.4]), "min-weight")
    assert not below.passed and below.severity == "fail"
    assert "replicate 2 mass" in below.message and "USP <41>" in below.message


def test_stated_minimum_weight_applies_when_stricter() -> None:
    checks = _run(balance_readability_g=0.0001, balance_min_weight_g=0.5)
    c = _check(checks, "min-weight")
    assert not c.passed and "stated minimum weight" in c.message


def test_min_weight_not_checked_without_balance_data_is_a_warning() -> None:
    c = _check(_run(balance_readability_g=None), "min-weight")
    assert (c.passed, c.severity) == (False, "warn")
    assert verdict(_run(balance_readability_g=None)) == "pass"


def test_secondary_standardization_has_no_min_weight_check() -> None:
    checks = _run(masses_g=None, lot_expires=None, lot_dried_on=None)
    assert "min-weight" not in {c.name for c in checks}
    assert "lot-expiry" not in {c.name for c in checks}


# ---------------------------------------------------------------- USP <31>


def test_burette_volume_at_30_percent_passes_and_below_fails() -> None:
    """USP <31>: 30 % of a 50 mL burette is 15 mL."""
    floor = 0.30 * 50.0
    assert _check(_run(volumes_ml=[floor, 20.0, 20.0]), "burette-fraction").passed
    c = _check(_run(volumes_ml=[20.0, 12.40, 20.0]), "burette-fraction")
    assert not c.passed and c.severity == "fail"
    assert c.message == (
        "replicate 2 titrant volume 12.40 mL is below 30 % of the 50 mL burette (15.0 mL), USP <31>"
    )


def test_excluded_replicates_are_not_checked() -> None:
    checks = _run(
        volumes_ml=[20.0, 12.40, 20.0, 20.0], masses_g=[0.4] * 4, excluded={2}, replicate_count=3
    )
    assert _check(checks, "burette-fraction").passed


def test_volume_beyond_the_burette_capacity_fails() -> None:
    c = _check(_run(volumes_ml=[20.0, 50.5, 20.0]), "burette-capacity")
    assert not c.passed and "exceeds" in c.message


def test_unknown_burette_capacity_is_a_warning() -> None:
    c = _check(_run(burette_capacity_ml=None), "burette-fraction")
    assert (c.passed, c.severity) == (False, "warn")
    assert "burette-capacity" not in {x.name for x in _run(burette_capacity_ml=None)}


# ---------------------------------------------------------------- Ph. Eur. 4.2.2


def test_rsd_at_the_limit_passes_and_above_fails() -> None:
    """European Pharmacopoeia 4.2.2: RSD not over 0.2 %."""
    assert _check(_run(rsd_percent=RULES.max_rsd_percent), "rsd").passed
    c = _check(_run(rsd_percent=0.21), "rsd")
    assert not c.passed and "0.21 %" in c.message and "4.2.2" in c.message
    assert verdict(_run(rsd_percent=0.21)) == "fail"


def test_rsd_that_cannot_be_computed_fails() -> None:
    c = _check(_run(rsd_percent=None, replicate_count=1), "rsd")
    assert not c.passed and c.severity == "fail"


@pytest.mark.parametrize(
    ("factor", "ok"), [(0.90, True), (1.10, True), (0.8999, False), (1.1001, False)]
)
def test_factor_window_boundaries(factor: float, ok: bool) -> None:
    """European Pharmacopoeia 4.2.2: within 10 % of the stated strength (0.90-1.10)."""
    c = _check(_run(factor=factor), "factor-window")
    assert c.passed is ok
    assert verdict(_run(factor=factor)) == ("pass" if ok else "fail")


def test_rules_are_configurable_per_spec() -> None:
    strict = AcceptanceRules(
        min_replicates=5, max_rsd_percent=0.1, factor_low=0.98, factor_high=1.02
    )
    checks = check_standardization(
        strict,
        replicate_count=3,
        rsd_percent=0.15,
        factor=1.03,
        volumes_ml=[20.0, 20.0, 20.0],
        run_date=RUN,
    )
    assert {c.name for c in checks if not c.passed and c.severity == "fail"} == {
        "replicate-count",
        "rsd",
        "factor-window",
    }


def test_rules_from_a_catalog_spec() -> None:
    spec = find_spec("NaOH-0.1N")
    rules = AcceptanceRules.from_spec(spec)
    assert (rules.max_rsd_percent, rules.factor_low, rules.factor_high) == (
        spec.max_rsd_percent,
        spec.factor_low,
        spec.factor_high,
    )
    assert rules.min_burette_fraction == 0.30  # USP <31>


@pytest.mark.parametrize(
    "kwargs",
    [
        {"min_replicates": 0},
        {"max_rsd_percent": 0.0},
        {"factor_low": 1.1, "factor_high": 0.9},
        {"factor_low": 1.01},
        {"min_burette_fraction": 1.5},
        {"drift_limit_percent": -1.0},
    ],
)
def test_nonsense_rules_are_refused(kwargs: dict[str, float]) -> None:
    with pytest.raises(InvalidInput):
        AcceptanceRules(**kwargs)


# ---------------------------------------------------------------- replicates


def test_replicate_count_boundary() -> None:
    """Three replicates: common practice, no source."""
    assert _check(_run(replicate_count=3), "replicate-count").passed
    c = _check(_run(replicate_count=2), "replicate-count")
    assert not c.passed and "2 replicate" in c.message


def test_outlier_is_a_warning_not_a_failure() -> None:
    checks = _run(outlier_index=2)
    c = _check(checks, "outlier")
    assert (c.passed, c.severity) == (False, "warn")
    assert "Grubbs" in c.message and "replicate 2" in c.message
    assert verdict(checks) == "pass"


# ---------------------------------------------------------------- lot and instruments


def test_lot_usable_through_its_expiry_date() -> None:
    assert _check(_run(lot_expires=RUN), "lot-expiry").passed
    c = _check(_run(lot_expires=RUN - timedelta(days=1)), "lot-expiry")
    assert not c.passed and c.severity == "fail"
    assert "2024-03-04" in c.message and "2024-03-05" in c.message


def test_lot_not_dried_is_a_warning() -> None:
    never = _check(_run(lot_dried_on=None), "lot-dried")
    after = _check(_run(lot_dried_on=RUN + timedelta(days=1)), "lot-dried")
    same_day = _check(_run(lot_dried_on=RUN), "lot-dried")
    assert (never.passed, never.severity) == (False, "warn")
    assert (after.passed, after.severity) == (False, "warn")
    assert same_day.passed
    assert verdict(_run(lot_dried_on=None)) == "pass"


def test_calibration_overdue_on_the_run_date_fails() -> None:
    on_due = [("BUR-2", "burette", RUN)]
    assert _check(_run(instruments=on_due), "calibration").passed
    overdue = [
        ("BAL-1", "balance", RUN + timedelta(days=3)),
        ("BUR-2", "burette", RUN - timedelta(days=1)),
    ]
    c = _check(_run(instruments=overdue), "calibration")
    assert not c.passed and c.severity == "fail"
    assert "burette BUR-2" in c.message and "BAL-1" not in c.message


# ---------------------------------------------------------------- indicator


def test_indicator_not_covering_the_equivalence_ph_is_a_warning() -> None:
    """Phenolphthalein 8.2-10.0 (from memory) does not cover a carbonate CO2 endpoint."""
    c = _check(
        _run(indicator="phenolphthalein", equivalence_ph=3.9, indicator_range=(8.2, 10.0)),
        "indicator",
    )
    assert (c.passed, c.severity) == (False, "warn")
    assert "phenolphthalein" in c.message and "3.90" in c.message
    edge = _check(
        _run(indicator="phenolphthalein", equivalence_ph=8.2, indicator_range=(8.2, 10.0)),
        "indicator",
    )
    assert edge.passed


# ---------------------------------------------------------------- bad input and verdict


@pytest.mark.parametrize(
    "overrides",
    [
        {"masses_g": [0.4, 0.4]},  # two masses for three volumes
        {"volumes_ml": [20.0, 0.0, 20.0]},
        {"masses_g": [0.4, -0.4, 0.4]},
        {"factor": 0.0},
        {"replicate_count": -1},
        {"outlier_index": 4},
        {"excluded": {0}},
        {"burette_capacity_ml": 0.0},
    ],
)
def test_bad_input_is_refused(overrides: dict[str, Any]) -> None:
    with pytest.raises(InvalidInput):
        _run(**overrides)


def test_verdict_fails_on_any_failed_fail_check_only() -> None:
    ok = Check("a", True, "fail", "")
    warned = Check("b", False, "warn", "")
    failed = Check("c", False, "fail", "")
    assert verdict([ok, warned]) == "pass"
    assert verdict([ok, warned, failed]) == "fail"
    assert verdict([]) == "pass"
    assert failures([ok, warned, failed]) == (failed, warned)
