"""Drift between standardizations and the trend of a titrant's factor over time.

Why: titrants change on the shelf (NaOH takes up CO2, thiosulfate decomposes); the
slope of the factor against time tells when a batch will leave its acceptance window
before it does.

The trend is an ordinary least-squares line factor = a + b t (t in days from the
first point). The slope is reported in percent of nominal per 30 days (the factor is
N/N_nominal, so 0.01 in factor is 1 % of nominal) with a two-sided 95 % confidence
interval b +/- t_{0.975, n-2} s_b (t from ``chem.student_t``; the line from
``statistics.linear_regression``, so no scipy is imported for a trend). The forecast
is the date where the fitted line crosses the window edge it is heading for: None when
the slope is zero (to rounding) or the line is heading back into the window; a date in
the past when the fitted line has already left it.
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Sequence
from datetime import date, datetime, time, timedelta

import msgspec

from prepbook.chem.student_t import t_975
from prepbook.errors import InvalidInput

DAYS_PER_PERIOD = 30.0
CONFIDENCE = 0.95
_FLAT_SLOPE_PER_DAY = 1e-12  # below this the line is taken as flat


class Trend(msgspec.Struct, frozen=True):
    """Least-squares trend of the factor against time."""

    slope_percent_per_30d: float
    ci_low: float  # 95 % CI of the slope, percent per 30 days
    ci_high: float
    n: int
    intercept: float  # fitted factor at ``origin``
    origin: datetime  # time of the earliest point (t = 0)
    slope_per_day: float  # factor units per day
    forecast_leaves_window: date | None


def drift_percent(previous: float, current: float) -> float:
    """Change from one standardization to the next, in percent of the previous."""
    for name, v in (("previous", previous), ("current", current)):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise InvalidInput(f"{name} value {v!r} is not a finite number")
    if previous <= 0:
        raise InvalidInput(f"previous value {previous:g} must be positive")
    return 100.0 * (current - previous) / previous


def _as_datetime(when: date | datetime, i: int) -> datetime:
    if isinstance(when, datetime):
        return when
    if isinstance(when, date):
        return datetime.combine(when, time())
    raise InvalidInput(f"point {i}: {when!r} is not a date or datetime")


def _slope_standard_error(days: list[float], factors: list[float], slope: float,
                          intercept: float) -> float:
    """s_b = sqrt(SSR / (n - 2) / Sxx), the standard error of an OLS slope."""
    mean_day = statistics.fmean(days)
    sxx = math.fsum((d - mean_day) ** 2 for d in days)
    ssr = math.fsum((f - (intercept + slope * d)) ** 2 for d, f in zip(days, factors, strict=True))
    return math.sqrt(ssr / (len(days) - 2) / sxx)


def trend(
    points: Sequence[tuple[date | datetime, float]], window: tuple[float, float]
) -> Trend:
    """Fit factor vs time and forecast when the line leaves ``window`` (low, high)."""
    if len(points) < 3:
        raise InvalidInput(f"a trend needs at least 3 points, not {len(points)}")
    low, high = window
    if not (math.isfinite(low) and math.isfinite(high)) or low >= high:
        raise InvalidInput(f"window {window!r} must be (low, high) with low < high")
    stamps = [_as_datetime(p[0], i) for i, p in enumerate(points, start=1)]
    aware = {s.tzinfo is not None for s in stamps}
    if len(aware) > 1:
        raise InvalidInput("points mix time-zone-aware and naive times")
    factors = []
    for i, (_, f) in enumerate(points, start=1):
        if isinstance(f, bool) or not isinstance(f, (int, float)) or not math.isfinite(f):
            raise InvalidInput(f"point {i}: factor {f!r} is not a finite number")
        factors.append(float(f))
    origin = min(stamps)
    days = [(s - origin).total_seconds() / 86400.0 for s in stamps]
    if statistics.pvariance(days) == 0:
        raise InvalidInput("all points are at the same time; no trend can be fitted")

    slope, intercept = statistics.linear_regression(days, factors)
    n = len(points)
    half = t_975(n - 2) * _slope_standard_error(days, factors, slope, intercept)
    to_pct = 100.0 * DAYS_PER_PERIOD

    forecast: date | None = None
    if abs(slope) > _FLAT_SLOPE_PER_DAY:
        last = max(days)
        fitted_last = intercept + slope * last
        edge = high if slope > 0 else low
        inward = (slope < 0 and fitted_last > high) or (slope > 0 and fitted_last < low)
        if not inward:
            crossing_day = (edge - intercept) / slope
            try:
                forecast = (origin + timedelta(days=crossing_day)).date()
            except OverflowError:
                forecast = None  # beyond the calendar: no practical forecast
    return Trend(
        slope_percent_per_30d=slope * to_pct,
        ci_low=(slope - half) * to_pct,
        ci_high=(slope + half) * to_pct,
        n=n,
        intercept=intercept,
        origin=origin,
        slope_per_day=slope,
        forecast_leaves_window=forecast,
    )
