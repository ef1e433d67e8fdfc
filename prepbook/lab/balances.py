"""Balances on a serial line: their connection, and one mass read from them.

``connect`` records how prepbook reaches a balance (its port and print-line profile);
each new connection is a new version, audited. ``read_mass`` takes one stable net
reading in grams from a balance (``prepbook.devices.balance``), with the balance's
code, the time and the raw line; nothing is written (the reading is recorded with
the replicate it belongs to, see ``prepbook.lab.replicate_sources``).
"""

from __future__ import annotations

import msgspec
from sqlalchemy import select
from sqlalchemy.orm import Session

from prepbook.devices.profiles import BalanceProfile, find_profile, load_profiles
from prepbook.devices.records import Weighing
from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import parse_text, utc_now
from prepbook.lab.common import acting, by_code, iso, setting, write
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Instrument, InstrumentConnection


class Connection(msgspec.Struct, frozen=True):
    """A balance's connection as the commands show it (the fields are the JSON keys)."""

    balance: str
    port: str
    profile: str
    connection_version: int  # the connection record's number: 1, then 2 when changed
    speed: int
    data_bits: int
    parity: str
    stop_bits: float
    connected_at: str
    connected_by: str


class ProfileInfo(msgspec.Struct, frozen=True):
    """A print-line profile as ``instrument profiles`` lists it."""

    name: str
    description: str
    speed: int
    data_bits: int
    parity: str
    stop_bits: float
    source: str


def lab_profiles_file() -> str | None:
    """The lab's own profile file, from the configuration (None: the shipped ones only)."""
    from prepbook.config import setting as config_setting

    value = config_setting("balance_profiles").value
    return str(value) if value else None


def loaded_profiles() -> list[BalanceProfile]:
    """Every profile (shipped and the lab's), by name."""
    return sorted(load_profiles(lab_profiles_file()).values(), key=lambda p: p.name)


def profiles() -> list[ProfileInfo]:
    return [ProfileInfo(name=p.name, description=p.description, speed=p.speed,
                        data_bits=p.data_bits, parity=p.parity, stop_bits=p.stop_bits,
                        source=p.source)
            for p in loaded_profiles()]


def _latest(s: Session, instrument: Instrument) -> InstrumentConnection | None:
    return s.scalars(select(InstrumentConnection)
                     .where(InstrumentConnection.instrument_id == instrument.id)
                     .order_by(InstrumentConnection.version.desc()).limit(1)).first()


def _info(ins: Instrument, c: InstrumentConnection, p: BalanceProfile) -> Connection:
    return Connection(balance=ins.code, port=c.port, profile=c.profile,
                      connection_version=c.version,
                      speed=p.speed, data_bits=p.data_bits, parity=p.parity,
                      stop_bits=p.stop_bits, connected_at=iso(c.created_at) or "",
                      connected_by=c.created_by)


def _balance(s: Session, code: str) -> Instrument:
    ins = by_code(s, Instrument, code, "instrument")
    if ins.kind != "balance":
        raise InvalidInput(f"instrument {ins.code} is a {ins.kind}; only a balance is read "
                           "over a serial line")
    return ins


@retry.on_conflict
def connect(db: Database, *, actor: str, code: str, port: str, profile: str) -> Connection:
    """Record how a balance is reached: a port (``/dev/ttyUSB0``, ``COM3``,
    ``socket://host:port``) and a print-line profile."""
    port_text = parse_text(port, "port", max_len=300)
    if not port_text or not port_text.strip() or port_text != port_text.strip():
        raise InvalidInput("--port names the serial port or pyserial URL, e.g. /dev/ttyUSB0, "
                           "COM3 or socket://192.0.2.10:4001")
    chosen = find_profile(profile, lab_profiles_file())
    with db.session() as s:
        user = acting(s, actor, doing="connect instruments")
        ins = _balance(s, code)
        last = _latest(s, ins)
        if last is not None and (last.port, last.profile) == (port_text, chosen.name):
            raise Refused(f"balance {ins.code} is already connected on {port_text} with "
                          f"profile {chosen.name}; nothing to record")
        row = InstrumentConnection(instrument_id=ins.id, version=(last.version + 1) if last
                                   else 1, port=port_text, profile=chosen.name,
                                   created_at=utc_now(), created_by=user.name)
        write(s, user.name, "instrument.connect", row)
        return _info(ins, row, chosen)


def _connected(s: Session, code: str) -> tuple[Instrument, InstrumentConnection]:
    """A balance and its current connection; refused when it has none."""
    ins = _balance(s, code)
    c = _latest(s, ins)
    if c is None:
        raise Refused(f"balance {ins.code} has no connection; record one with "
                      f"`prepbook instrument connect {ins.code} --port PORT --profile NAME`")
    return ins, c


def connection(db: Database, code: str) -> Connection:
    """A balance's current connection; refused when it has none."""
    with db.session(write=False) as s:
        ins, c = _connected(s, code)
        return _info(ins, c, find_profile(c.profile, lab_profiles_file()))


def read_mass(db: Database, code: str, *, timeout_s: float | None = None) -> Weighing:
    """One stable net mass in grams from the balance ``code`` (nothing is written)."""
    from prepbook.devices.balance import read_mass as read_line

    with db.session(write=False) as s:
        ins, c = _connected(s, code)
        balance, port, profile_name = ins.code, c.port, c.profile
        wait = timeout_s if timeout_s is not None else float(
            setting(s, "balance_timeout_s", "5"))
    if not 0 < wait <= 120:
        raise InvalidInput(f"timeout {wait:g} s must be above 0 and at most 120")
    profile = find_profile(profile_name, lab_profiles_file())
    reading = read_line(port, profile, timeout_s=wait)
    return Weighing(balance=balance, mass_text=reading.value_text, unit=reading.unit,
                    raw=reading.raw, read_at=utc_now(), port=port, profile=profile.name)
