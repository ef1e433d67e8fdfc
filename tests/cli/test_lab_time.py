"""Lab time (issue 14): times are typed and shown in the lab's time zone and stored in
UTC; codes and labels carry the lab's date; a time skipped or repeated at a
daylight-saving change is refused; an entry made long after the work needs a reason.

The zones are switched in one process by setting the lab's zone (the database's
``timezone`` setting): east of UTC (Asia/Tokyo, +09:00 all year), west of it
(America/Chicago) and one with daylight saving (Europe/Vienna). The expected UTC
times are computed independently with the standard library's zoneinfo.
"""

from __future__ import annotations

from datetime import UTC, date, datetime, timedelta
from zoneinfo import ZoneInfo

import pytest

from tests.cli.test_bench_flow import bench  # noqa: F401
from tests.conftest import Cli, row_counts

EAST, WEST, SUMMER = "Asia/Tokyo", "America/Chicago", "Europe/Vienna"


def _set_zone(cli: Cli, zone: str) -> None:
    cli.ok("settings", "set", "timezone", zone, "--reason", "the lab's own zone",
           "--passphrase-stdin", user="ada", input="ada-passphrase\n")


def _local(zone: str, days: int = 0, hours: int = 0) -> datetime:
    """Wall-clock time in ``zone``, ``days`` and ``hours`` from now, to the minute."""
    now = datetime.now(ZoneInfo(zone)) + timedelta(days=days, hours=hours)
    return now.replace(second=0, microsecond=0)


def _utc_text(local: datetime) -> str:
    return local.astimezone(UTC).replace(tzinfo=None).isoformat(timespec="minutes")


def _last_event(cli: Cli) -> dict:
    return cli.json("audit", "log", "--limit", "1")[-1]


@pytest.mark.parametrize("zone", [EAST, WEST, SUMMER])
def test_at_is_wall_clock_time_in_the_lab_zone_and_stored_in_utc(bench: Cli, zone: str) -> None:  # noqa: F811
    _set_zone(bench, zone)
    # An hour ago on the lab's clock: in Tokyo the old reading (as UTC) put it nine
    # hours in the future and refused it; in Chicago it was shifted by six hours.
    typed = _local(zone, hours=-1)
    made = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                      "--at", typed.strftime("%Y-%m-%dT%H:%M"), user="ben")
    event = _last_event(bench)
    assert event["action"] == "batch.make"
    assert event["performed_at"].startswith(_utc_text(typed))
    # The batch code carries the lab's date of the work, not the UTC date.
    assert made["batch"].startswith(f"NaOH-0.1N-{typed:%y%m%d}-")
    # Shown back in lab time, with the offset.
    shown = bench.ok("batch", "show", made["batch"]).stdout
    offset = typed.strftime("%z")
    assert f"made {typed:%Y-%m-%d %H:%M} {offset[:3]}:{offset[3:]}" in shown


def test_the_batch_code_takes_the_lab_date_east_and_west_of_utc(bench: Cli) -> None:  # noqa: F811
    """08:00 in Tokyo is 23:00 UTC the day before; 20:00 in Chicago is 01:00 or 02:00 UTC
    the day after: each code carries the date on the lab's own calendar."""
    # Two days back, so that 20:00 in Chicago is past at any hour the tests run; with a
    # reason, as 08:00 in Tokyo two days back can be more than 72 h ago.
    day = (datetime.now(UTC) - timedelta(days=2)).date()
    for zone, clock in ((EAST, "08:00"), (WEST, "20:00")):
        _set_zone(bench, zone)
        made = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass",
                          "4.1", "--at", f"{day.isoformat()}T{clock}",
                          "--reason", "from the bench log", user="ben")
        utc_day = datetime.fromisoformat(_last_event(bench)["performed_at"]).date()
        assert utc_day != day  # the two calendars differ at this hour
        assert made["batch"].startswith(f"NaOH-0.1N-{day:%y%m%d}-")


def _last_sunday(year: int, month: int) -> date:
    last = date(year, month + 1, 1) - timedelta(days=1)
    return last - timedelta(days=(last.weekday() + 1) % 7)


def test_a_time_skipped_or_repeated_at_a_daylight_saving_change_is_refused(bench: Cli) -> None:  # noqa: F811
    """European summer time: clocks go from 02:00 to 03:00 on the last Sunday of March and
    from 03:00 back to 02:00 on the last Sunday of October (EU Directive 2000/84/EC)."""
    _set_zone(bench, SUMMER)
    year = datetime.now(UTC).year - 1
    spring, autumn = _last_sunday(year, 3), _last_sunday(year, 10)
    before = row_counts(bench.db)
    gap = bench.refused("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                        "--at", f"{spring}T02:30", "--reason", "paper log", user="ben")
    assert "does not exist in Europe/Vienna" in gap.stderr
    twice = bench.refused("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass",
                          "4.1", "--at", f"{autumn}T02:30", "--reason", "paper log", user="ben")
    assert "occurs twice in Europe/Vienna" in twice.stderr and "+02:00 or +01:00" in twice.stderr
    assert row_counts(bench.db) == before
    # With its offset the repeated hour is unambiguous: the second 02:30 is 01:30 UTC.
    bench.ok("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
             "--at", f"{autumn}T02:30+01:00", "--reason", "paper log", user="ben")
    assert _last_event(bench)["performed_at"].startswith(f"{autumn}T01:30")


def test_an_entry_made_long_after_the_work_needs_a_reason(bench: Cli) -> None:  # noqa: F811
    _set_zone(bench, EAST)
    typed = _local(EAST, days=-4).strftime("%Y-%m-%dT%H:%M")
    before = row_counts(bench.db)
    refused = bench.refused("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass",
                            "4.1", "--at", typed, user="ben")
    assert "late entry needs a --reason" in refused.stderr and "72 h" in refused.stderr
    assert row_counts(bench.db) == before
    made = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                      "--at", typed, "--reason", "copied from the bench log", user="ben")
    event = _last_event(bench)
    assert event["reason"] == "copied from the bench log"
    # Marked late in batch show and in the audit log (lab time, with its offset).
    assert "late)" in bench.ok("batch", "show", made["batch"]).stdout
    log = bench.ok("audit", "log", "--limit", "1").stdout
    assert "LATE" in log and "+09:00" in log
    # Within the lab's limit no reason is asked; the limit is a lab setting.
    bench.ok("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
             "--at", _local(EAST, days=-2).strftime("%Y-%m-%dT%H:%M"), user="ben")
    bench.ok("settings", "set", "late_entry_hours", "24", "--reason", "SOP 12 rev 3",
             "--passphrase-stdin", user="ada", input="ada-passphrase\n")
    bench.refused("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                  "--at", _local(EAST, days=-2).strftime("%Y-%m-%dT%H:%M"), user="ben")


def test_dates_outside_the_supported_range_are_one_line(bench: Cli) -> None:  # noqa: F811
    before = row_counts(bench.db)
    out = bench.refused("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                        "--at", "0001-01-01T00:00+01:00", user="ben")
    assert "1900-01-01 to 2999-12-31" in out.stderr
    bench.refused("audit", "log", "--until", "9999-12-31")
    bench.refused("audit", "log", "--since", "0001-01-01")
    bench.refused("lot", "add", "KHP", "--code", "KHP-9", "--purity", "99.9", "--expires",
                  "9999-12-31", user="ben")
    assert row_counts(bench.db) == before


def test_a_zone_that_is_not_an_iana_name_is_one_line(
        bench: Cli, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    before = row_counts(bench.db)
    out = bench.refused("settings", "set", "timezone", "Mars/Olympus", "--reason", "x",
                        "--passphrase-stdin", user="ada", input="ada-passphrase\n")
    assert "not an IANA time zone name" in out.stderr
    monkeypatch.setenv("PREPBOOK_TIMEZONE", "Europe/Atlantis")
    out = bench.refused("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                        "--at", _local(EAST, days=-1).strftime("%Y-%m-%d"), user="ben")
    assert "Europe/Atlantis" in out.stderr
    assert row_counts(bench.db) == before


def test_the_configured_zone_serves_until_the_lab_sets_its_own(
        bench: Cli, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    monkeypatch.setenv("PREPBOOK_TIMEZONE", WEST)
    typed = _local(WEST, hours=-2)
    bench.ok("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
             "--at", typed.strftime("%Y-%m-%dT%H:%M"), user="ben")
    assert _last_event(bench)["performed_at"].startswith(_utc_text(typed))
    _set_zone(bench, EAST)  # the database's setting wins over this computer's
    typed = _local(EAST, hours=-2)
    bench.ok("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
             "--at", typed.strftime("%Y-%m-%dT%H:%M"), user="ben")
    assert _last_event(bench)["performed_at"].startswith(_utc_text(typed))
