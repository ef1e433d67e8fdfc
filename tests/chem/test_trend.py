"""Drift and the factor trend: a hand-checkable line and numpy/scipy as oracles."""

from __future__ import annotations

import math
from datetime import date, datetime, timedelta

import numpy as np
import pytest
from scipy import stats as sps

from prepbook.chem.trend import drift_percent, trend
from prepbook.errors import InvalidInput

START = date(2024, 3, 1)


def _days(*pairs: tuple[int, float]) -> list[tuple[date, float]]:
    return [(START + timedelta(days=d), f) for d, f in pairs]


def test_exact_line_hand_check() -> None:
    """Hand check: factor falls 0.010 every 30 days -> -1.0 % per 30 days, no scatter so a
    zero-width CI, and from 1.000 it reaches the 0.97 window edge on day 90."""
    result = trend(_days((0, 1.000), (30, 0.990), (60, 0.980)), window=(0.97, 1.03))
    assert result.slope_percent_per_30d == pytest.approx(-1.0, abs=1e-9)
    assert result.ci_low == pytest.approx(-1.0, abs=1e-9)
    assert result.ci_high == pytest.approx(-1.0, abs=1e-9)
    assert result.n == 3 and result.intercept == pytest.approx(1.0)
    assert result.forecast_leaves_window == START + timedelta(days=90)


def test_noisy_trend_against_numpy_least_squares() -> None:
    """Oracle: numpy polyfit slope; s_b = sqrt(SSR/(n-2)/Sxx) by hand; t from scipy.
    Also scipy.stats.linregress as a second oracle for the slope. Invented factors."""
    days = [0, 14, 29, 45, 60, 74, 91]
    factors = [1.0012, 1.0003, 0.9995, 0.9991, 0.9979, 0.9976, 0.9962]
    result = trend(_days(*zip(days, factors, strict=True)), window=(0.98, 1.02))
    x, y = np.array(days, float), np.array(factors)
    slope, intercept = np.polyfit(x, y, 1)
    residuals = y - (intercept + slope * x)
    s_b = math.sqrt((residuals @ residuals) / (len(x) - 2) / ((x - x.mean()) @ (x - x.mean())))
    half = sps.t.ppf(0.975, len(x) - 2) * s_b
    assert result.slope_percent_per_30d == pytest.approx(slope * 3000, rel=1e-9)
    assert result.slope_percent_per_30d == pytest.approx(sps.linregress(x, y).slope * 3000)
    assert result.ci_low == pytest.approx((slope - half) * 3000, rel=1e-9)
    assert result.ci_high == pytest.approx((slope + half) * 3000, rel=1e-9)
    crossing = (0.98 - intercept) / slope
    assert result.forecast_leaves_window == (
        datetime.combine(START, datetime.min.time()) + timedelta(days=crossing)).date()


def test_rising_factor_forecasts_the_upper_edge() -> None:
    """Hand check: +0.005 per 10 days from 1.00 reaches 1.02 on day 40."""
    result = trend(_days((0, 1.000), (10, 1.005), (20, 1.010)), window=(0.98, 1.02))
    assert result.forecast_leaves_window == START + timedelta(days=40)


def test_flat_trend_has_no_forecast() -> None:
    """Slope zero: the line never leaves the window."""
    result = trend(_days((0, 1.0), (10, 1.0), (20, 1.0)), window=(0.98, 1.02))
    assert result.slope_percent_per_30d == 0 and result.forecast_leaves_window is None


def test_moving_back_inward_has_no_forecast() -> None:
    """Above the window and falling: heading inward, so no leaving date."""
    result = trend(_days((0, 1.050), (10, 1.045), (20, 1.040)), window=(0.98, 1.02))
    assert result.slope_percent_per_30d < 0 and result.forecast_leaves_window is None


def test_already_outside_gives_the_past_crossing() -> None:
    """Below the window and still falling: the crossing (day -20 here) is reported, not
    hidden (owner's rule: nothing silently dropped)."""
    result = trend(_days((0, 0.970), (10, 0.965), (20, 0.960)), window=(0.98, 1.02))
    assert result.forecast_leaves_window == START - timedelta(days=20)


def test_datetimes_are_accepted() -> None:
    """Times of day count: 12 h apart is half a day (hand check)."""
    t0 = datetime(2024, 3, 1, 8, 0)
    pts = [(t0, 1.0), (t0 + timedelta(hours=12), 0.999), (t0 + timedelta(days=1), 0.998)]
    result = trend(pts, window=(0.9, 1.1))
    assert result.slope_per_day == pytest.approx(-0.002)


@pytest.mark.parametrize(
    ("points", "window"),
    [(_days((0, 1.0), (10, 0.99)), (0.98, 1.02)),
     (_days((0, 1.0), (0, 0.99), (0, 0.98)), (0.98, 1.02)),
     (_days((0, 1.0), (10, 0.99), (20, 0.98)), (1.02, 0.98)),
     (_days((0, 1.0), (10, float("nan")), (20, 0.98)), (0.98, 1.02))],
)
def test_bad_trend_input_is_refused(points, window) -> None:
    """Too few points, one time only, reversed window, non-finite factor."""
    with pytest.raises(InvalidInput):
        trend(points, window)


def test_drift_percent_hand_check() -> None:
    """Hand check: 0.1000 -> 0.0990 is -1.0 %."""
    assert drift_percent(0.1000, 0.0990) == pytest.approx(-1.0)
    with pytest.raises(InvalidInput):
        drift_percent(0.0, 0.1)
