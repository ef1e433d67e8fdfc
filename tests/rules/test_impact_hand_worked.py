"""The impact rule (prepbook.rules.impact) with hand-worked drifts: below, at and above
the spec's drift limit (0.5 %, the catalog's default: common practice, no source).

Drift = 100 (N_current - N_previous) / N_previous, worked by hand in each comment; a
use made between two accepted standardizations is flagged only when their drift is
beyond the limit. A drift exactly at the limit is within it.
"""

from __future__ import annotations

from datetime import datetime

import pytest

from prepbook.rules.impact import RunPoint, UsePoint, uses_needing_review
from prepbook.rules.life import batch_warnings

LIMIT = 0.5
MONDAY, WEDNESDAY, FRIDAY = (datetime(2026, 11, d, 9, 0) for d in (2, 4, 6))


def _flags(previous: float, current: float) -> tuple:
    runs = [RunPoint("R-1", MONDAY, "accepted", previous),
            RunPoint("R-2", FRIDAY, "accepted", current)]
    return uses_needing_review(runs, [UsePoint(7, WEDNESDAY)], LIMIT)


@pytest.mark.parametrize(("previous", "current", "why"), [
    (0.1000, 0.10049, "by hand: 100 x 0.00049 / 0.1000 = +0.49 %, below"),
    (0.1000, 0.09951, "by hand: 100 x -0.00049 / 0.1000 = -0.49 %, below"),
    (0.1000, 0.10050, "by hand: 100 x 0.00050 / 0.1000 = +0.50 %, at the limit"),
    (0.2000, 0.2010, "by hand: 100 x 0.0010 / 0.2000 = +0.50 %, at the limit"),
])
def test_a_use_between_runs_within_the_limit_is_not_flagged(previous: float, current: float,
                                                            why: str) -> None:
    assert _flags(previous, current) == (), why


@pytest.mark.parametrize(("previous", "current", "words"), [
    (0.1000, 0.10051, "+0.51 %"),  # by hand: 100 x 0.00051 / 0.1000 = +0.51 %
    (0.1000, 0.09940, "-0.60 %"),  # by hand: 100 x -0.00060 / 0.1000 = -0.60 %
    (0.1000, 0.1010, "+1.00 %"),  # by hand: 100 x 0.0010 / 0.1000 = +1.00 %
])
def test_a_use_between_runs_beyond_the_limit_is_flagged(previous: float, current: float,
                                                        words: str) -> None:
    (flag,) = _flags(previous, current)
    assert flag.use == 7
    assert f"differ by {words} (limit 0.5 %)" in flag.reason


def test_only_uses_between_the_drifting_runs_are_flagged() -> None:
    """+1.00 % between R-1 (Monday) and R-2 (Friday): Wednesday's use is flagged, the
    uses before Monday and after Friday are not."""
    runs = [RunPoint("R-1", MONDAY, "accepted", 0.1000),
            RunPoint("R-2", FRIDAY, "accepted", 0.1010)]
    uses = [UsePoint(1, datetime(2026, 11, 1, 9, 0)), UsePoint(2, WEDNESDAY),
            UsePoint(3, datetime(2026, 11, 7, 9, 0))]
    assert [f.use for f in uses_needing_review(runs, uses, LIMIT)] == [2]


def test_the_batch_warning_agrees_at_the_limit() -> None:
    """The board's drift warning reads the same limit the same way: +0.50 % is within,
    +0.51 % beyond (by hand as above)."""
    from datetime import date

    def warned(current: float) -> bool:
        out = batch_warnings(today=date(2026, 11, 6), lead_days=7, expires=date(2027, 1, 1),
                             restandardize_by=None, instruments=[], lots=[],
                             accepted_normalities=[0.1000, current],
                             drift_limit_percent=LIMIT)
        return any("drift" in w for w in out)

    assert not warned(0.10050)
    assert warned(0.10051)
