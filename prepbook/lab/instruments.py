"""Balances, burettes, flasks, pipettes, thermometers and meters, with calibration due dates."""

from __future__ import annotations

from datetime import date, datetime

import msgspec
from msgspec.structs import asdict
from sqlalchemy import select

from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import parse_code, parse_date, parse_number, parse_text, utc_now
from prepbook.lab.common import acting, by_code, write
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import INSTRUMENT_KINDS, Instrument

UNITS = {"balance": "g", "burette": "mL", "flask": "mL", "pipette": "mL",
         "thermometer": "C", "meter": ""}


class InstrumentInfo(msgspec.Struct, frozen=True):
    """An instrument as the commands show it (the fields are the JSON keys)."""

    code: str
    kind: str
    unit: str
    due: str
    overdue: bool
    capacity: str | None
    tolerance: str | None
    readability: str | None


class Calibration(InstrumentInfo, frozen=True):
    """An instrument after a recalibration: when, on what certificate, and the due date
    it replaced."""

    calibrated: str
    certificate: str | None
    previous_due: str


def instrument_info(ins: Instrument, today: date | None = None) -> InstrumentInfo:
    today = today or utc_now().date()
    return InstrumentInfo(
        code=ins.code, kind=ins.kind, unit=UNITS.get(ins.kind, ""), due=ins.due.isoformat(),
        overdue=ins.due < today, capacity=ins.capacity_text, tolerance=ins.tolerance_text,
        readability=ins.readability_text)


@retry.on_conflict
def add_instrument(db: Database, *, actor: str, code: str, kind: str, due: str,
                   capacity: str | None, tolerance: str | None,
                   readability: str | None) -> InstrumentInfo:
    code = parse_code(code, "instrument code")
    if kind not in INSTRUMENT_KINDS:
        raise InvalidInput(f"instrument kind {kind!r} is not one of {', '.join(INSTRUMENT_KINDS)}")
    due_d = parse_date(due, "calibration due date")
    unit = UNITS[kind]
    cap = parse_number(capacity, f"capacity ({unit})", positive=True) if capacity else None
    tol = parse_number(tolerance, f"tolerance (+/- {unit})", non_negative=True) if tolerance \
        else None
    rd = parse_number(readability, f"readability ({unit})", positive=True) if readability \
        else None
    if kind == "burette" and cap is None:
        raise InvalidInput("a burette needs its --capacity (mL)")
    if cap is not None and tol is not None and tol.value >= cap.value:
        raise InvalidInput("tolerance must be smaller than the capacity")
    if cap is not None and rd is not None and rd.value >= cap.value:
        raise InvalidInput("readability must be smaller than the capacity")
    if tol is not None and kind in ("balance", "burette"):  # figures that cannot be right
        from prepbook.rules import plausibility as plaus

        if kind == "balance":
            plaus.balance_linearity(tol.value * 1000, f"{tol.value * 1000:g}")
        else:
            plaus.burette_tolerance(tol.value, tol.text, cap.value if cap else None)
    with db.session() as s:
        user = acting(s, actor, doing="add instruments")
        if s.scalars(select(Instrument).where(Instrument.code == code)).first() is not None:
            raise Refused(f"instrument {code!r} already exists")
        ins = Instrument(code=code, kind=kind, due=due_d,
                         capacity_text=cap.text if cap else None,
                         tolerance_text=tol.text if tol else None,
                         readability_text=rd.text if rd else None,
                         created_at=utc_now(), created_by=user.name)
        write(s, user.name, "instrument.add", ins)
        return instrument_info(ins)


def list_instruments(db: Database) -> list[InstrumentInfo]:
    today = utc_now().date()
    with db.session(write=False) as s:
        return [instrument_info(i, today)
                for i in s.scalars(select(Instrument).order_by(Instrument.kind, Instrument.code))]


@retry.on_conflict
def calibrate_instrument(db: Database, *, actor: str, code: str, calibrated: str, due: str,
                         certificate: str | None = None) -> Calibration:
    """Record a recalibration: the instrument's new due date, with when and on what
    certificate it was calibrated. The earlier due date stays in the audit trail."""
    on = parse_date(calibrated, "calibration date")
    due_d = parse_date(due, "next calibration due date")
    certificate = parse_text(certificate, "certificate", max_len=200)
    today = utc_now().date()
    if on > today:
        raise InvalidInput(f"the calibration date {on.isoformat()} is in the future")
    if due_d <= on:
        raise InvalidInput(f"the new due date {due_d.isoformat()} must be after the "
                           f"calibration ({on.isoformat()})")
    with db.session() as s:
        user = acting(s, actor, doing="record calibrations")
        ins = by_code(s, Instrument, code, "instrument")
        if due_d == ins.due:
            raise Refused(f"instrument {ins.code} is already due {due_d.isoformat()}; "
                          "nothing to record")
        previous = ins.due
        ins.due = due_d
        where = f", certificate {certificate}" if certificate else ""
        write(s, user.name, "instrument.calibrate", ins,
              reason=f"calibrated {on.isoformat()}{where}; was due {previous.isoformat()}",
              performed_at=datetime.combine(on, datetime.min.time()))
        return Calibration(**asdict(instrument_info(ins, today)), calibrated=on.isoformat(),
                           certificate=certificate, previous_due=previous.isoformat())
