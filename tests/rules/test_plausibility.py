"""Plausibility bounds at entry (prepbook.rules.plausibility) and the acceptance checks
that issue 14 added: required instruments, lot and calibration on the entry day too.
The bounds are the lab's (common practice, no source, as the module says)."""

from __future__ import annotations

from datetime import date

import pytest

from prepbook.errors import InvalidInput
from prepbook.rules import plausibility as plaus
from prepbook.rules.acceptance import AcceptanceRules, check_standardization


def _rep(amount: str, volume: str) -> plaus.Replicate:
    return plaus.Replicate(1, float(amount), float(volume), amount, volume)


@pytest.mark.parametrize(("amount", "volume", "said"), [
    ("39.16", "0.8085", "look swapped: did you mean --rep 0.8085:39.16"),
    ("808.5", "39.16", "was it in mg? 808.5 mg is 0.8085 g"),
    ("5000000", "39.16", "more than one titration weighs"),
    ("0.8085", "0.1", "at or below 0.1 mL"),
    ("0.8085", "120", "largest burette in common use"),
])
def test_weighed_readings_that_cannot_be_right(amount: str, volume: str, said: str) -> None:
    with pytest.raises(InvalidInput, match=said.replace("?", r"\?")):
        plaus.weighed_replicate(_rep(amount, volume))


def test_the_burette_capacity_bounds_the_volume_and_plausible_ones_pass() -> None:
    with pytest.raises(InvalidInput, match="capacity"):
        plaus.weighed_replicate(_rep("0.8085", "39.16"), burette_capacity_ml=25)
    assert plaus.weighed_replicate(_rep("0.8085", "39.16"), burette_capacity_ml=50) == ()
    assert "unusual" in plaus.weighed_replicate(_rep("8", "39.16"))[0]
    assert "small" in plaus.weighed_replicate(_rep("0.05", "2.5"))[0]


def test_factor_purity_linearity_and_tolerance_bounds() -> None:
    plaus.factor(1.9, nominal=0.1, unit="N")
    with pytest.raises(InvalidInput, match="mass in mg"):
        plaus.factor(1000.4, nominal=0.1, unit="N")
    with pytest.raises(InvalidInput, match="plausible 0.5-2"):
        plaus.factor(0.3, nominal=0.1, unit="N")
    with pytest.raises(InvalidInput, match=r"as a fraction is 99.98 %"):
        plaus.primary_purity(0.9998, "0.9998")
    assert plaus.primary_purity(99.98, "99.98") == ()
    with pytest.raises(InvalidInput, match="balance linearity"):
        plaus.balance_linearity(1e9, "1e9")
    assert plaus.balance_linearity(0.15, "0.15") == ()
    with pytest.raises(InvalidInput, match="no volumetric burette"):
        plaus.burette_tolerance(3, "3", 10)


def _checks(**kw: object) -> dict[str, tuple[bool, str]]:
    base: dict[str, object] = dict(replicate_count=3, rsd_percent=0.1, factor=1.0,
                                   volumes_ml=[40.0, 40.0, 40.0], run_date=date(2026, 11, 30))
    base.update(kw)
    return {c.name: (c.passed, c.message)
            for c in check_standardization(AcceptanceRules(), **base)}  # type: ignore[arg-type]


def test_a_missing_required_instrument_fails() -> None:
    checks = _checks(required_instruments=("balance", "burette"),
                     instruments=(("BUR-1", "burette", date(2027, 1, 1)),))
    assert checks["instruments"] == (False, checks["instruments"][1])
    assert "no balance named" in checks["instruments"][1]
    assert _checks(required_instruments=("burette",),
                   instruments=(("BUR-1", "burette", date(2027, 1, 1)),))["instruments"][0]


def test_lot_and_calibration_are_checked_on_the_entry_day_too() -> None:
    """The issue's case: a lot that expired on 2026-12-01, used on 2026-12-04 with the
    run dated 2026-11-30."""
    checks = _checks(lot_expires=date(2026, 12, 1), entered_on=date(2026, 12, 4),
                     instruments=(("BAL-1", "balance", date(2026, 12, 2)),))
    assert checks["lot-expiry"][0] is False
    assert "before the run was entered on 2026-12-04" in checks["lot-expiry"][1]
    assert checks["calibration"][0] is False
    on_time = _checks(lot_expires=date(2026, 12, 1), entered_on=date(2026, 11, 30))
    assert on_time["lot-expiry"][0] is True
