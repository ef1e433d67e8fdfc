"""Lab-wide settings, changed only by an admin with a signature."""

from __future__ import annotations

import msgspec
from sqlalchemy import select
from sqlalchemy.orm import Session

from prepbook import clock
from prepbook.clock import LabClock
from prepbook.errors import InvalidInput
from prepbook.inputs import parse_text, utc_now
from prepbook.lab.common import (
    LATE_AFTER_HOURS,
    acting,
    iso,
    lab_zone,
    late_after,
    setting,
    signed,
    whole_setting,
    write,
)
from prepbook.lab.security import PassphrasePolicy
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Setting


class SettingInfo(msgspec.Struct, frozen=True):
    key: str
    default: str
    help: str
    choices: tuple[str, ...] = ()
    integer_range: tuple[int, int] | None = None
    zone: bool = False  # an IANA time zone name (empty: the configuration's, else this
    # computer's zone)


KNOWN: dict[str, SettingInfo] = {
    s.key: s
    for s in (
        SettingInfo("balance_timeout_s", "5",
                    "seconds to wait for a balance's printed line before giving up "
                    "(common practice, no source)", integer_range=(1, 120)),
        SettingInfo("curve_tolerance_ul", "50",
                    "largest difference, in microlitres, between a typed titrant volume and "
                    "the endpoint of the replicate's recorded curve (the +/-0.05 mL of a "
                    "Class A 50 mL burette, ISO 385)", integer_range=(1, 5000)),
        SettingInfo("buoyancy", "off",
                    "correct weighings of primary standards for air buoyancy (NIST IR 6969 "
                    "SOP 2) in standardizations", choices=("on", "off")),
        SettingInfo("late_entry_hours", LATE_AFTER_HOURS,
                    "hours after the work within which it may be entered without a reason "
                    "(common practice, no source)", integer_range=(1, 8760)),
        SettingInfo("lockout_after", "5",
                    "wrong passphrases in a row that lock a user out for lockout_minutes "
                    "(common practice, no source)", integer_range=(1, 20)),
        SettingInfo("lockout_minutes", "15",
                    "minutes the first lockout lasts; each further wrong passphrase doubles "
                    "it, up to a day (common practice, no source)", integer_range=(1, 1440)),
        SettingInfo("passphrase_min_length", "12",
                    "fewest characters of a new passphrase (common practice, no source)",
                    integer_range=(8, 128)),
        SettingInfo("passphrase_name_rule", "on",
                    "refuse a new passphrase that contains the user's name",
                    choices=("on", "off")),
        SettingInfo("session_idle_minutes", "15",
                    "minutes without a write after which a login session ends (common "
                    "practice, no source)", integer_range=(1, 480)),
        SettingInfo("session_max_hours", "12",
                    "hours after which a login session ends however busy (common practice, "
                    "no source)", integer_range=(1, 24)),
        SettingInfo("min_burette_fraction_percent", "30",
                    "smallest titrant volume as a percentage of the burette's capacity "
                    "(USP <31>: 30 %)", integer_range=(1, 100)),
        SettingInfo("temperature_range_c", "3",
                    "laboratory temperature variation (+/- C, rectangular) in the titrant "
                    "volume uncertainty (common practice, no source)",
                    integer_range=(0, 20)),
        SettingInfo("timezone", "",
                    "the lab's time zone, an IANA name such as Europe/Vienna: times are typed "
                    "and shown in it, dates on codes and labels are its dates (empty: the "
                    "configuration's timezone, else this computer's zone)", zone=True),
        SettingInfo("warning_lead_days", "7",
                    "days of notice before restandardization and expiry dates (common "
                    "practice, no source)", integer_range=(0, 365)),
    )
}


class SettingValue(msgspec.Struct, frozen=True):
    """A setting as `prepbook settings` shows it (the fields are the JSON keys)."""

    key: str
    value: str
    default: str
    help: str
    changed_at: str | None
    changed_by: str | None


def lab_clock(db: Database) -> LabClock:
    with db.session(write=False) as s:
        return LabClock(zone=lab_zone(s), late_after=late_after(s))


class SettingChange(msgspec.Struct, frozen=True):
    key: str
    value: str
    changed_by: str


def show(db: Database) -> list[SettingValue]:
    with db.session(write=False) as s:
        rows = {r.key: r for r in s.scalars(select(Setting))}
    out = []
    for key, info in KNOWN.items():
        row = rows.get(key)
        out.append(SettingValue(key=key, value=row.value if row else info.default,
                                default=info.default, help=info.help,
                                changed_at=iso(row.updated_at) if row else None,
                                changed_by=row.updated_by if row else None))
    return out


@retry.on_conflict
def set_value(db: Database, *, actor: str, key: str, value: str, reason: str | None,
              passphrase: str | None) -> SettingChange:
    info = KNOWN.get(key)
    if info is None:
        raise InvalidInput(f"unknown setting {key!r}; one of {', '.join(KNOWN)}")
    value = value.strip()
    if info.choices and value not in info.choices:
        raise InvalidInput(f"{key} must be one of {', '.join(info.choices)}")
    if info.zone and value:
        value = clock.zone_name(clock.zone_named(value, key))
    if info.integer_range is not None:
        lo, hi = info.integer_range
        if not (value.isascii() and value.isdigit()) or not lo <= int(value) <= hi:
            raise InvalidInput(f"{key} must be a whole number from {lo} to {hi}")
    reason = parse_text(reason, "reason", max_len=500)
    if not (reason and reason.strip()):
        raise InvalidInput("changing a setting needs a --reason")
    signed(db, actor, passphrase, ("admin",), "change settings",
           meaning="changed a setting", what=f"{key} = {value}")
    with db.session() as s:
        admin = acting(s, actor, ("admin",), "change settings")
        now = utc_now()
        row = s.scalars(select(Setting).where(Setting.key == key)).first()
        if row is None:
            row = Setting(key=key, value=value, updated_at=now, updated_by=admin.name)
        else:
            row.value, row.updated_at, row.updated_by = value, now, admin.name
        write(s, admin.name, "setting.set", row, reason=reason)
        return SettingChange(key=key, value=value, changed_by=admin.name)


def passphrase_policy(s: Session) -> PassphrasePolicy:
    """The lab's passphrase policy (settings ``passphrase_min_length`` and
    ``passphrase_name_rule``; defaults: at least 12 characters, not containing the name)."""
    length_default = int(KNOWN["passphrase_min_length"].default)
    rule = setting(s, "passphrase_name_rule", KNOWN["passphrase_name_rule"].default)
    return PassphrasePolicy(min_length=whole_setting(s, "passphrase_min_length", length_default),
                            refuse_name=rule != "off")
