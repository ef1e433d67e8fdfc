"""Dates, state and warnings of a batch's life.

Dates are checked against calendar facts (2024 is a leap year) rather than against the
code's own arithmetic; conventions (usable through the expiry date, due the day after
restandardize-by) are common practice, no source.
"""

from __future__ import annotations

import itertools
from datetime import date, timedelta
from typing import Any

import pytest
from hypothesis import given
from hypothesis import strategies as st

from prepbook.errors import InvalidInput
from prepbook.rules.life import (
    STATES,
    batch_state,
    batch_warnings,
    drift_between,
    expiry,
    restandardize_by,
)

TODAY = date(2024, 6, 15)


def test_restandardize_by_adds_the_interval() -> None:
    """Calendar fact: 2024 is a leap year, so 31 January + 30 days is 1 March."""
    assert restandardize_by(date(2024, 1, 31), 30) == date(2024, 3, 1)
    assert restandardize_by(date(2023, 1, 31), 30) == date(2023, 3, 2)


def test_restandardize_by_is_none_without_an_accepted_run_or_interval() -> None:
    assert restandardize_by(None, 7) is None
    assert restandardize_by(date(2024, 1, 1), None) is None
    with pytest.raises(InvalidInput):
        restandardize_by(date(2024, 1, 1), 0)


def test_expiry_is_made_plus_shelf_life() -> None:
    """Calendar fact: 1 February 2024 + 29 days is 1 March (leap year)."""
    assert expiry(date(2024, 2, 1), 29) == date(2024, 3, 1)


def test_expiry_never_later_than_a_parent() -> None:
    made = date(2024, 1, 10)
    lot = date(2024, 2, 1)
    stock = date(2024, 3, 1)
    assert expiry(made, 90, [stock, lot]) == lot
    assert expiry(made, 10, [stock, lot]) == date(2024, 1, 20)  # own shelf life is shorter
    assert expiry(made, 90, [made]) == made  # a parent expiring that day: usable that day


def test_expiry_refuses_a_parent_expired_before_making() -> None:
    with pytest.raises(InvalidInput, match="expired"):
        expiry(date(2024, 1, 10), 90, [date(2024, 1, 9)])
    with pytest.raises(InvalidInput):
        expiry(date(2024, 1, 10), 0)


@given(
    previous=st.floats(min_value=1e-4, max_value=10.0),
    percent=st.floats(min_value=-50.0, max_value=50.0),
)
def test_drift_between_inverts_a_percent_change(previous: float, percent: float) -> None:
    """Definition of a relative change: current = previous x (1 + p/100)."""
    current = previous * (1 + percent / 100)
    assert drift_between(previous, current) == pytest.approx(percent, abs=1e-9)


def test_drift_sign_and_bad_input() -> None:
    assert drift_between(0.1000, 0.1010) > 0 > drift_between(0.1010, 0.1000)
    for bad in ((0.0, 0.1), (0.1, -0.1), (float("nan"), 0.1)):
        with pytest.raises(InvalidInput):
            drift_between(*bad)


# ---------------------------------------------------------------- state


def _state(**overrides: Any) -> str:
    args: dict[str, Any] = dict(
        retired=False,
        today=TODAY,
        expires=TODAY + timedelta(days=60),
        has_runs=True,
        latest_status="accepted",
        last_accepted_on=TODAY - timedelta(days=3),
        restandardize_by=TODAY + timedelta(days=4),
    )
    args.update(overrides)
    return batch_state(**args)


def test_no_runs_is_new() -> None:
    assert (
        _state(has_runs=False, latest_status=None, last_accepted_on=None, restandardize_by=None)
        == "new"
    )


def test_only_rejected_runs_is_new() -> None:
    assert _state(latest_status="rejected", last_accepted_on=None, restandardize_by=None) == "new"


def test_first_run_awaiting_review() -> None:
    assert (
        _state(latest_status="awaiting-review", last_accepted_on=None, restandardize_by=None)
        == "awaiting-review"
    )


def test_accepted_and_current_is_in_service() -> None:
    assert _state() == "in-service"
    assert _state(restandardize_by=TODAY) == "in-service"  # may be used on that date


def test_restandardization_awaiting_review_keeps_a_current_batch_in_service() -> None:
    assert _state(latest_status="awaiting-review") == "in-service"
    assert _state(latest_status="rejected") == "in-service"


def test_past_restandardize_by_is_due() -> None:
    assert _state(restandardize_by=TODAY - timedelta(days=1)) == "due"
    assert _state(restandardize_by=TODAY - timedelta(days=1), latest_status="rejected") == "due"


def test_due_with_a_run_awaiting_review_shows_the_review() -> None:
    assert (
        _state(restandardize_by=TODAY - timedelta(days=1), latest_status="awaiting-review")
        == "awaiting-review"
    )


def test_expired_outranks_everything_but_retired() -> None:
    assert _state(expires=TODAY) == "in-service"  # usable through the expiry date
    assert _state(expires=TODAY - timedelta(days=1)) == "expired"
    assert (
        _state(
            expires=TODAY - timedelta(days=1),
            restandardize_by=TODAY - timedelta(days=2),
            latest_status="awaiting-review",
        )
        == "expired"
    )
    assert _state(expires=TODAY - timedelta(days=1), retired=True) == "retired"


def test_every_combination_gives_a_known_state() -> None:
    """Exhaustive over consistent inputs: the function is total and returns a listed state."""
    days = (-1, 0, 1)
    for retired, exp, status, accepted, rb in itertools.product(
        (False, True),
        days,
        (None, "awaiting-review", "accepted", "rejected"),
        (None, TODAY - timedelta(days=10)),
        (None, *days),
    ):
        if status == "accepted" and accepted is None:
            continue
        if status is None and accepted is not None:
            continue
        state = batch_state(
            retired=retired,
            today=TODAY,
            expires=TODAY + timedelta(days=exp),
            has_runs=status is not None,
            latest_status=status,
            last_accepted_on=accepted,
            restandardize_by=None if rb is None else TODAY + timedelta(days=rb),
        )
        assert state in STATES
        if retired:
            assert state == "retired"
        elif exp < 0:
            assert state == "expired"


@pytest.mark.parametrize(
    "overrides",
    [
        {"has_runs": False},  # status given without runs
        {"has_runs": True, "latest_status": None},
        {"latest_status": "approved"},
        {"latest_status": "accepted", "last_accepted_on": None},
        {
            "has_runs": False,
            "latest_status": None,
            "last_accepted_on": TODAY,
        },
    ],
)
def test_inconsistent_state_inputs_are_refused(overrides: dict[str, Any]) -> None:
    with pytest.raises(InvalidInput):
        _state(**overrides)


# ---------------------------------------------------------------- warnings


def _warnings(**overrides: Any) -> tuple[str, ...]:
    args: dict[str, Any] = dict(today=TODAY, expires=TODAY + timedelta(days=60))
    args.update(overrides)
    return batch_warnings(**args)


def test_no_warnings_for_a_healthy_batch() -> None:
    assert (
        _warnings(
            restandardize_by=TODAY + timedelta(days=30),
            instruments=[("BUR-1", "burette", TODAY + timedelta(days=90))],
            lots=[("L-1", TODAY + timedelta(days=90))],
            accepted_normalities=[0.1002, 0.1003],
            drift_limit_percent=0.5,
            latest_status="accepted",
        )
        == ()
    )


def test_expiry_warnings_within_lead_days() -> None:
    assert _warnings(expires=TODAY + timedelta(days=8), lead_days=7) == ()
    (w,) = _warnings(expires=TODAY + timedelta(days=7), lead_days=7)
    assert w == "expires on 2024-06-22 (in 7 days)"
    (w,) = _warnings(expires=TODAY - timedelta(days=1))
    assert w == "expired on 2024-06-14"


def test_restandardization_warnings() -> None:
    (soon,) = _warnings(restandardize_by=TODAY)
    assert soon == "restandardize by 2024-06-15 (today)"
    (late,) = _warnings(restandardize_by=TODAY - timedelta(days=2))
    assert late == "restandardization overdue since 2024-06-13 (2 days)"


def test_instrument_and_lot_warnings() -> None:
    ws = _warnings(
        instruments=[
            ("BAL-1", "balance", TODAY - timedelta(days=1)),
            ("BUR-1", "burette", TODAY + timedelta(days=3)),
        ],
        lots=[("L-7", TODAY - timedelta(days=5)), ("L-8", TODAY)],
    )
    assert "balance BAL-1 calibration overdue since 2024-06-14" in ws
    assert "burette BUR-1 calibration due 2024-06-18 (in 3 days)" in ws
    assert "lot L-7 expired on 2024-06-10" in ws
    assert not any("L-8" in w for w in ws)  # usable through its expiry date


def test_drift_warning_compares_the_last_two_accepted() -> None:
    """Exact binary fractions so the boundary is exact: 1 -> 1 + 2**-8 is 0.390625 %."""
    limit = 100 * 2**-8
    at_limit = _warnings(accepted_normalities=[1.0, 1 + 2**-8], drift_limit_percent=limit)
    assert at_limit == ()
    ws = _warnings(accepted_normalities=[1.2, 1.0, 1 + 2**-7], drift_limit_percent=limit)
    assert len(ws) == 1 and "drift +0.781 %" in ws[0] and "0.390625 % limit" in ws[0]
    assert _warnings(accepted_normalities=[1.0], drift_limit_percent=limit) == ()


def test_latest_run_warnings() -> None:
    assert _warnings(latest_status="rejected") == ("the latest standardization was rejected",)
    assert _warnings(latest_status="awaiting-review") == ("a standardization awaits review",)


def test_bad_lead_days_refused() -> None:
    with pytest.raises(InvalidInput):
        _warnings(lead_days=-1)
