"""The lab's clock: times typed and shown in the lab's time zone, stored in UTC.

Pure (stdlib and ``tzlocal``): no storage, no terminal. The record keeps every time
as a naive UTC datetime; a person types and reads wall-clock time in the lab's zone
(an IANA name such as Europe/Vienna). Which zone is the lab's is decided in
``prepbook.lab.common.lab_zone`` (the database's ``timezone`` setting, else the
configuration's, else this computer's).

A wall-clock time that does not exist (the hour skipped when clocks go forward) or
that occurs twice (the hour repeated when they go back) is refused unless it names
its offset: guessing would put the work an hour off.
"""

from __future__ import annotations

from datetime import UTC, date, datetime, timedelta, tzinfo
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

import msgspec

from prepbook.errors import InvalidInput

# The dates the record accepts: wide enough for any lab's history and expiry, and far
# from the ends of Python's calendar so a day added or an offset applied never overflows.
EARLIEST = date(1900, 1, 1)
LATEST = date(2999, 12, 31)


def zone_named(name: str, what: str = "time zone") -> ZoneInfo:
    """The IANA zone ``name``, or one clear line saying it is not one."""
    try:
        return ZoneInfo(name.strip())
    except (ZoneInfoNotFoundError, ValueError, TypeError):
        raise InvalidInput(f"{what} {name!r} is not an IANA time zone name (such as "
                           "Europe/Vienna, America/Chicago or UTC)") from None


def machine_zone() -> tzinfo:
    """This computer's zone (``TZ`` or the system setting), as ``tzlocal`` finds it."""
    from tzlocal import get_localzone

    try:
        return get_localzone()
    except Exception:  # noqa: BLE001 - tzlocal raises several kinds; UTC is safe to show
        return UTC


def zone_name(zone: tzinfo) -> str:
    return str(getattr(zone, "key", None) or zone)


def in_range(day: date, what: str) -> date:
    if not EARLIEST <= day <= LATEST:
        raise InvalidInput(f"{what}: {day.isoformat()} is outside the dates the record "
                           f"accepts ({EARLIEST.isoformat()} to {LATEST.isoformat()})")
    return day


def to_utc(moment: datetime, zone: tzinfo, what: str) -> datetime:
    """A typed time as the naive UTC datetime the record stores. A naive ``moment`` is
    wall-clock time in ``zone``; one that does not exist there or occurs twice is
    refused. An aware one (an offset typed) is taken as it says."""
    in_range(moment.date(), what)
    if moment.tzinfo is None:
        first = moment.replace(tzinfo=zone, fold=0)
        second = moment.replace(tzinfo=zone, fold=1)
        offsets = first.utcoffset(), second.utcoffset()
        if offsets[0] != offsets[1]:
            shown = f"{moment:%Y-%m-%d %H:%M}"
            back = _roundtrip(first) == moment
            if not back:
                raise InvalidInput(f"{what} {shown} does not exist in {zone_name(zone)} (the "
                                   "clocks skip that hour); check the time, or add its offset")
            raise InvalidInput(f"{what} {shown} occurs twice in {zone_name(zone)} (the clocks "
                               f"go back); add the offset, {_offset(offsets[0])} or "
                               f"{_offset(offsets[1])}, e.g. {moment:%Y-%m-%dT%H:%M}"
                               f"{_offset(offsets[0])}")
        moment = first
    return moment.astimezone(UTC).replace(tzinfo=None)


def _roundtrip(aware: datetime) -> datetime:
    return aware.astimezone(UTC).astimezone(aware.tzinfo).replace(tzinfo=None)


def _offset(delta: timedelta | None) -> str:
    minutes = int((delta or timedelta()).total_seconds() // 60)
    sign = "+" if minutes >= 0 else "-"
    return f"{sign}{abs(minutes) // 60:02d}:{abs(minutes) % 60:02d}"


def local(moment: datetime, zone: tzinfo) -> datetime:
    """A stored (naive UTC) time as an aware time in ``zone``; at the very ends of the
    calendar (a record changed behind the tool's back), as it is stored, in UTC."""
    try:
        return moment.replace(tzinfo=UTC).astimezone(zone)
    except OverflowError:
        return moment.replace(tzinfo=UTC)


def local_date(moment: datetime, zone: tzinfo) -> date:
    """The lab's calendar date of a stored time (for batch codes and labels)."""
    return local(moment, zone).date()


def as_utc(value: datetime | str | None) -> datetime | None:
    """A stored time, or the ISO text the services return for one (naive, UTC), as a
    naive UTC datetime; None for a date alone or text that is not a time."""
    if value is None or isinstance(value, datetime):
        return value
    if "T" not in value:
        return None
    try:
        moment = datetime.fromisoformat(value)
    except ValueError:
        return None
    return moment.astimezone(UTC).replace(tzinfo=None) if moment.tzinfo else moment


def shown(value: datetime | str | None, zone: tzinfo) -> str:
    """A stored time as a person reads it: lab wall-clock time with its offset,
    ``2026-12-04 11:30 +01:00``. Accepts the ISO text the services return (naive,
    UTC); a date alone, or text that is not a time, is returned as it is."""
    if value is None:
        return "-"
    moment = as_utc(value)
    if moment is None:
        return str(value)
    there = local(moment, zone)
    return f"{there.year:04d}-{there:%m-%d %H:%M} {_offset(there.utcoffset())}"


def late(performed: datetime | str | None, entered: datetime | str | None,
         allowed: timedelta) -> bool:
    """True when work done at ``performed`` was entered at ``entered`` more than
    ``allowed`` later (a late entry, shown as such)."""
    done, typed = as_utc(performed), as_utc(entered)
    return done is not None and typed is not None and typed - done > allowed


class LabClock(msgspec.Struct, frozen=True):
    """The lab's time zone and how late an entry may be without a reason: what a
    screen, a report or a label needs to show times in lab time and mark late entries
    (``prepbook.lab.settings.lab_clock`` reads it from the database)."""

    zone: tzinfo = UTC
    late_after: timedelta = timedelta(hours=72)

    def shown(self, value: datetime | str | None) -> str:
        """A stored (UTC) time in lab wall-clock time with its offset."""
        return shown(value, self.zone)

    def late(self, performed: datetime | str | None, entered: datetime | str | None) -> bool:
        return late(performed, entered, self.late_after)

    def entered(self, performed: datetime | str | None,
                entered: datetime | str | None) -> str:
        """`` (entered ..., late)`` after a time entered late, else nothing."""
        if not self.late(performed, entered):
            return ""
        return f" (entered {self.shown(entered)}, late)"
