"""The life of a titrant batch: dates, state and warnings (pure lab policy, no I/O).

Date conventions (common practice, no source): a batch is usable through its expiry date
and may be used on its restandardize-by date; it is expired / due from the day after.
The same holds for an instrument's calibration due date and a lot's expiry.

State precedence, highest first (``batch_state``):

1. ``retired``         retired by a person; nothing else matters.
2. ``expired``         past its expiry date, whatever its standardizations say.
3. ``awaiting-review`` a standardization awaits review and there is no accepted result that
                       is still current (never accepted, or past restandardize-by). The
                       work the board asks for is the review, not another titration.
4. ``due``             accepted once, but past restandardize-by and nothing awaits review.
5. ``in-service``      an accepted standardization is current. A newer run awaiting review,
                       or a newer rejected run, does not take the batch out of service (the
                       accepted value stands until its restandardize-by date); both show as
                       warnings.
6. ``new``             never accepted and nothing awaits review: no runs yet, or only
                       rejected ones (it has no normality to use; the rejection is a warning).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from datetime import date, timedelta
from typing import Literal

from prepbook.errors import InvalidInput

BatchState = Literal["new", "awaiting-review", "in-service", "due", "expired", "retired"]
RunStatus = Literal["awaiting-review", "accepted", "rejected"]
STATES: tuple[BatchState, ...] = (
    "new",
    "awaiting-review",
    "in-service",
    "due",
    "expired",
    "retired",
)
RUN_STATUSES: tuple[RunStatus, ...] = ("awaiting-review", "accepted", "rejected")

#: Days of notice before a date comes due (common practice, no source).
DEFAULT_LEAD_DAYS = 7


def _days(value: int, what: str, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or value < minimum:
        raise InvalidInput(f"{what} must be a whole number of days >= {minimum}, not {value!r}")
    return value


def restandardize_by(last_accepted: date | None, interval_days: int | None) -> date | None:
    """The date by which the batch must be standardized again: last accepted + interval.

    None when there is no accepted standardization yet or the spec sets no interval.
    """
    if last_accepted is None or interval_days is None:
        return None
    return last_accepted + timedelta(days=_days(interval_days, "restandardization interval", 1))


def expiry(made_on: date, shelf_life_days: int, parents: Sequence[date] = ()) -> date:
    """Made + shelf life, but never later than the expiry of anything it was made from.

    ``parents`` are the expiry dates of the stock batch or solute lot. A parent that had
    already expired when the batch was made is bad input (it should not have been used):
    InvalidInput, rather than an expiry date before the batch existed.
    """
    own = made_on + timedelta(days=_days(shelf_life_days, "shelf life", 1))
    for p in parents:
        if p < made_on:
            raise InvalidInput(
                f"made on {made_on.isoformat()} from material that expired on {p.isoformat()}"
            )
    return min((own, *parents))


def drift_between(previous_n: float, current_n: float) -> float:
    """Percent change from the previous accepted normality (or factor) to the current one.

    Positive when the titrant got stronger. The arithmetic is the chemistry core's
    (``chem.trend.drift_percent``) so the board and the trend agree; here both values must
    also be positive, since a batch's accepted normality cannot be zero or negative.
    """
    from prepbook.chem.trend import drift_percent

    for label, v in (("previous", previous_n), ("current", current_n)):
        number = isinstance(v, int | float) and not isinstance(v, bool)
        if not (number and math.isfinite(v) and v > 0):
            raise InvalidInput(f"{label} normality must be a positive number, not {v!r}")
    return drift_percent(previous_n, current_n)


def drift_beyond(drift_percent: float, limit_percent: float) -> bool:
    """Whether a drift lies beyond its limit. A drift at the limit is within it, also
    when the subtraction lands a last binary digit above it (0.1 -> 0.1005 N computes as
    0.5000000000000004 %)."""
    size = abs(drift_percent)
    return size > limit_percent and not math.isclose(size, limit_percent, rel_tol=1e-9)


def batch_state(
    *,
    retired: bool,
    today: date,
    expires: date,
    has_runs: bool,
    latest_status: RunStatus | None,
    last_accepted_on: date | None,
    restandardize_by: date | None,
) -> BatchState:
    """The batch's state on ``today`` (precedence in the module docstring).

    ``latest_status`` is the status of the most recent run (None without runs);
    ``last_accepted_on`` the date of the most recent accepted run; ``restandardize_by``
    the date from ``restandardize_by()`` (None: the spec sets no interval).
    Inconsistent inputs (runs without a status, an accepted date without runs) are refused.
    """
    if latest_status is not None and latest_status not in RUN_STATUSES:
        raise InvalidInput(f"unknown run status {latest_status!r}")
    if has_runs != (latest_status is not None):
        raise InvalidInput("has_runs and latest_status disagree")
    if last_accepted_on is not None and not has_runs:
        raise InvalidInput("an accepted standardization date without any run")
    if latest_status == "accepted" and last_accepted_on is None:
        raise InvalidInput("the latest run is accepted but no accepted date is given")
    if retired:
        return "retired"
    if today > expires:
        return "expired"
    past_due = restandardize_by is not None and today > restandardize_by
    current = last_accepted_on is not None and not past_due
    if latest_status == "awaiting-review" and not current:
        return "awaiting-review"
    if last_accepted_on is not None:
        return "due" if past_due else "in-service"
    return "new"


def _when(d: date, today: date) -> str:
    days = (d - today).days
    if days == 0:
        return "today"
    return f"in {days} day{'s' if days != 1 else ''}"


def instrument_warnings(instruments: Sequence[tuple[str, str, date]], today: date,
                        lead_days: int = DEFAULT_LEAD_DAYS) -> tuple[tuple[str, str], ...]:
    """(code, warning) of each instrument of ``instruments`` (code, kind, calibration due)
    whose calibration is overdue or due within ``lead_days``; an instrument named twice
    is warned of once."""
    lead = _days(lead_days, "lead time", 0)
    out: dict[str, str] = {}
    for code, kind, due in instruments:
        if code in out:
            continue
        if today > due:
            out[code] = f"{kind} {code} calibration overdue since {due.isoformat()}"
        elif (due - today).days <= lead:
            out[code] = f"{kind} {code} calibration due {due.isoformat()} ({_when(due, today)})"
    return tuple(out.items())


def batch_warnings(
    *,
    today: date,
    expires: date,
    restandardize_by: date | None = None,
    lead_days: int = DEFAULT_LEAD_DAYS,
    instruments: Sequence[tuple[str, str, date]] = (),
    lots: Sequence[tuple[str, date]] = (),
    accepted_normalities: Sequence[float] = (),
    drift_limit_percent: float | None = None,
    latest_status: RunStatus | None = None,
) -> tuple[str, ...]:
    """Plain-text warnings about a batch on ``today``, most urgent kinds first.

    ``instruments`` are (code, kind, calibration due) of the instruments the batch depends
    on; ``lots`` are (code, expiry) of the lots it was made or standardized from;
    ``accepted_normalities`` the accepted results in chronological order (the drift of the
    last two is compared with ``drift_limit_percent``). ``lead_days`` is the notice given
    before a date (common practice, no source).
    """
    lead = _days(lead_days, "lead time", 0)
    out: list[str] = []
    if today > expires:
        out.append(f"expired on {expires.isoformat()}")
    elif (expires - today).days <= lead:
        out.append(f"expires on {expires.isoformat()} ({_when(expires, today)})")
    if restandardize_by is not None:
        if today > restandardize_by:
            late = (today - restandardize_by).days
            out.append(
                f"restandardization overdue since {restandardize_by.isoformat()} "
                f"({late} day{'s' if late != 1 else ''})"
            )
        elif (restandardize_by - today).days <= lead:
            out.append(
                f"restandardize by {restandardize_by.isoformat()} "
                f"({_when(restandardize_by, today)})"
            )
    out.extend(text for _, text in instrument_warnings(instruments, today, lead))
    for code, lot_expires in lots:
        if today > lot_expires:
            out.append(f"lot {code} expired on {lot_expires.isoformat()}")
    if len(accepted_normalities) >= 2 and drift_limit_percent is not None:
        if not drift_limit_percent > 0:
            raise InvalidInput(f"drift limit must be positive, not {drift_limit_percent}")
        d = drift_between(accepted_normalities[-2], accepted_normalities[-1])
        if drift_beyond(d, drift_limit_percent):
            out.append(
                f"drift {d:+.3g} % between the last two accepted standardizations exceeds "
                f"the {drift_limit_percent:g} % limit"
            )
    if latest_status == "rejected":
        out.append("the latest standardization was rejected")
    elif latest_status == "awaiting-review":
        out.append("a standardization awaits review")
    return tuple(out)
