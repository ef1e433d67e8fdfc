"""The refusals of lab time, called on the services directly, as the terminal app calls
them (no command-line check in between): a late entry without a reason, a time skipped
or repeated at a daylight-saving change, a date outside the record's range, a zone
that is not one. Each raises ``InvalidInput`` before anything is written."""

from __future__ import annotations

from collections.abc import Iterator
from datetime import UTC, datetime, timedelta
from pathlib import Path
from zoneinfo import ZoneInfo

import pytest

from prepbook.errors import InvalidInput
from tests.conftest import row_counts
from tests.reliability.lab import PASSPHRASE, REPS, build_lab


@pytest.fixture
def lab(tmp_path: Path) -> Iterator[tuple[object, str, str]]:
    from prepbook.lab import settings
    from prepbook.store.engine import open_database

    target = str(tmp_path / "lab.db")
    in_service = build_lab(target)
    db = open_database(target)
    settings.set_value(db, actor="ada", key="timezone", value="Europe/Vienna", reason="ours",
                       passphrase=PASSPHRASE.format("ada"))
    try:
        yield db, target, in_service
    finally:
        db.dispose()


def _vienna(days: int) -> str:
    return (datetime.now(ZoneInfo("Europe/Vienna")) + timedelta(days=days)) \
        .strftime("%Y-%m-%dT%H:%M")


def test_services_refuse_a_late_entry_without_a_reason(lab) -> None:
    from prepbook.lab import batches, history, runs

    db, target, in_service = lab
    before = row_counts(target)
    late = _vienna(-5)
    with pytest.raises(InvalidInput, match="late entry needs a --reason"):
        batches.make_batch(db, actor="ben", spec="NaOH-0.1N", volume="1000",
                           solute_mass="4.1", at=late)
    with pytest.raises(InvalidInput, match="late entry"):
        batches.use_batch(db, actor="ben", code=in_service, volume="5", purpose="assay",
                          at=_vienna(-4))
    with pytest.raises(InvalidInput, match="late entry"):
        runs.standardize(db, actor="ben", batch=in_service, replicates=REPS, lot="KHP-0001",
                         balance="BAL-1", burette="BUR-1", at=_vienna(-4))
    assert row_counts(target) == before
    made = batches.make_batch(db, actor="ben", spec="NaOH-0.1N", volume="1000",
                              solute_mass="4.1", at=late, late_reason="from the bench log")
    # Retiring carries its own reason, which serves for a late retirement too.
    history.retire(db, actor="ben", code=made.batch, reason="spilled",
                   passphrase=PASSPHRASE.format("ben"), at=_vienna(-4))


def test_services_refuse_times_of_a_daylight_saving_change(lab) -> None:
    from prepbook.lab import batches

    db, target, _ = lab
    year = datetime.now(UTC).year - 1
    before = row_counts(target)
    # 2:30 on the last Sunday of March does not exist in Vienna; on the last Sunday of
    # October it occurs twice (EU Directive 2000/84/EC: changes at 01:00 UTC).
    march = max(datetime(year, 3, d) for d in range(25, 32) if datetime(year, 3, d).weekday() == 6)
    october = max(datetime(year, 10, d) for d in range(25, 32)
                  if datetime(year, 10, d).weekday() == 6)
    for day, words in ((march, "does not exist"), (october, "occurs twice")):
        with pytest.raises(InvalidInput, match=words):
            batches.make_batch(db, actor="ben", spec="NaOH-0.1N", volume="1000",
                               solute_mass="4.1", at=f"{day:%Y-%m-%d}T02:30",
                               late_reason="paper log")
    with pytest.raises(InvalidInput, match="1900-01-01 to 2999-12-31"):
        batches.make_batch(db, actor="ben", spec="NaOH-0.1N", volume="1000",
                           solute_mass="4.1", at="0001-01-01T00:00+01:00")
    assert row_counts(target) == before


def test_the_timezone_setting_takes_only_an_iana_name(lab) -> None:
    from prepbook.lab import settings

    db, target, _ = lab
    before = row_counts(target)
    with pytest.raises(InvalidInput, match="not an IANA time zone name"):
        settings.set_value(db, actor="ada", key="timezone", value="Mars/Olympus",
                           reason="x", passphrase=PASSPHRASE.format("ada"))
    with pytest.raises(InvalidInput, match="whole number"):
        settings.set_value(db, actor="ada", key="late_entry_hours", value="٧٢",
                           reason="x", passphrase=PASSPHRASE.format("ada"))
    assert row_counts(target) == before
    assert settings.lab_clock(db).zone == ZoneInfo("Europe/Vienna")
