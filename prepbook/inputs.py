"""Parsing of what a person types: numbers, replicates, dates.

Pure and light (stdlib only), shared by the command line, the services and any
other front end. A reading keeps the text exactly as entered next to its value,
so "22.20" is stored as "22.20" and never reformatted. Every refusal is an
``InvalidInput`` whose message names the field and the offending text.
"""

from __future__ import annotations

import math
import re
import sys
from datetime import UTC, date, datetime, time, tzinfo
from decimal import Decimal, InvalidOperation
from typing import TYPE_CHECKING

import msgspec

from prepbook.errors import InvalidInput

if TYPE_CHECKING:
    from prepbook.devices.records import RecordedCurve, Weighing

# Decimal notation: optional sign, ASCII digits, optional point and digits, and an
# optional exponent of one to three digits after "e" or "E" ("1.5e-3", "2E-4"), which
# reads one way only. Thousands separators, "nan" and "inf" are refused on purpose:
# guessing is how values go wrong. Digits of other scripts are refused by name.
_NUMBER = re.compile(r"^[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]{1,3})?$")
_MAX_LEN = 32


class Reading(msgspec.Struct, frozen=True):
    """A number as entered (``text``) and as computed with (``value``)."""

    text: str
    value: float

    @property
    def decimals(self) -> int:
        """Decimal places of the value as entered (22.20 -> 2; 1.5e-3 -> 4, as 0.0015)."""
        mantissa, _, exponent = self.text.lower().partition("e")
        places = len(mantissa.split(".", 1)[1]) if "." in mantissa else 0
        return max(0, places - int(exponent or 0))


def _shown(text: str) -> str:
    clean = "".join(ch if ch.isprintable() else "?" for ch in text)
    return clean if len(clean) <= 40 else clean[:37] + "..."


def _foreign_character(raw: str) -> str | None:
    """The first non-ASCII character of ``raw``, named (e.g. a digit of another script)."""
    for ch in raw:
        if not ch.isascii():
            import unicodedata  # only on the failure path

            name = unicodedata.name(ch, "unnamed character")
            return f"'{ch}' (U+{ord(ch):04X} {name})"
    return None


def parse_number(
    text: str,
    what: str,
    *,
    positive: bool = False,
    non_negative: bool = False,
    maximum: float | None = None,
) -> Reading:
    """Parse a decimal number typed by a person, in plain or scientific notation.

    ``positive`` refuses zero and negatives, ``non_negative`` refuses negatives. Only
    the ASCII digits 0-9 are read: a digit of another script is refused by name.
    """
    raw = text.strip() if isinstance(text, str) else str(text)
    if not raw:
        raise InvalidInput(f"{what}: a number is required")
    foreign = _foreign_character(raw)
    if foreign is not None:
        raise InvalidInput(f"{what}: {_shown(raw)!r} holds {foreign}; type the digits 0-9 "
                           "and '.'")
    if "," in raw and "." not in raw and _NUMBER.match(raw.replace(",", ".")):
        raise InvalidInput(f"{what}: {_shown(raw)!r} uses a comma; write the decimal point as '.'")
    if len(raw) > _MAX_LEN or not _NUMBER.match(raw):
        raise InvalidInput(f"{what}: {_shown(raw)!r} is not a plain decimal number "
                           "(or one in scientific notation, such as 1.5e-3)")
    try:
        exact = Decimal(raw)
    except (InvalidOperation, ValueError):  # pragma: no cover - regex guards
        raise InvalidInput(f"{what}: {_shown(raw)!r} is not a number") from None
    value = float(exact)
    if not math.isfinite(value) or (exact != 0 and abs(value) < sys.float_info.min):
        raise InvalidInput(f"{what}: {_shown(raw)!r} is out of the range of numbers computed "
                           "with")
    if positive and value <= 0:
        raise InvalidInput(f"{what} must be greater than zero (got {raw})")
    if non_negative and value < 0:
        raise InvalidInput(f"{what} must not be negative (got {raw})")
    if maximum is not None and value > maximum:
        raise InvalidInput(f"{what} must not exceed {maximum:g} (got {raw})")
    return Reading(text=raw.lstrip("+"), value=value)


# The largest whole number a count or a record id may be (what both databases store).
MAX_WHOLE = 2**63 - 1


def parse_whole(text: str | int, what: str, *, minimum: int = 0,
                maximum: int = MAX_WHOLE) -> int:
    """A whole number typed with the ASCII digits 0-9 (a count, a number of days, a
    record id), between ``minimum`` and ``maximum``."""
    if isinstance(text, int) and not isinstance(text, bool):
        value = text
    else:
        raw = str(text).strip()
        foreign = _foreign_character(raw)
        if foreign is not None:
            raise InvalidInput(f"{what}: {_shown(raw)!r} holds {foreign}; type the digits 0-9")
        if not raw.isdigit() or len(raw) > 19:
            raise InvalidInput(f"{what}: {_shown(raw)!r} is not a whole number from "
                               f"{minimum} to {maximum}")
        value = int(raw)
    if not minimum <= value <= maximum:
        raise InvalidInput(f"{what} must be a whole number from {minimum} to {maximum} "
                           f"(got {value})")
    return value


def parse_percent(text: str, what: str) -> Reading:
    """A percentage in (0, 100], such as a certificate purity."""
    reading = parse_number(text, what, positive=True)
    if reading.value > 100:
        raise InvalidInput(f"{what} must be at most 100 % (got {reading.text})")
    return reading


#: A validated repeatability (RSD of one result, %) above this is not a volumetric
#: standardization's (common practice, no source; Ph. Eur. 4.2.2 accepts 0.2 %).
MAX_REPEATABILITY_RSD_PERCENT = 5.0


def parse_repeatability(text: str) -> Reading:
    """A standardization's validated repeatability as typed: the relative SD of one
    result, in (0, 5] %. The one reading of it for `standardize`, `calc normality`,
    `calc secondary` and `spec add`."""
    what = "repeatability RSD (%)"
    reading = parse_number(text, what, positive=True)
    if reading.value > MAX_REPEATABILITY_RSD_PERCENT:
        raise InvalidInput(f"{what} {reading.text} is not a volumetric standardization's "
                           f"(at most {MAX_REPEATABILITY_RSD_PERCENT:g} %)")
    return reading


class ReplicateEntry(msgspec.Struct, frozen=True):
    """One replicate as typed: ``MASS:VOL`` (or ``ALIQUOT:VOL``); a mass read from a
    balance carries its ``weighing``, a recorded curve its ``curve`` (``volume_from_curve``
    when the volume is the curve's endpoint): see ``prepbook.lab.replicate_sources``."""

    amount: Reading
    volume: Reading
    weighing: Weighing | None = None
    curve: RecordedCurve | None = None
    volume_from_curve: bool = False


def parse_replicate(text: str, position: int, *, amount_name: str = "mass (g)") -> ReplicateEntry:
    raw = text.strip()
    parts = raw.split(":")
    if len(parts) != 2:
        raise InvalidInput(
            f"replicate {position}: {_shown(raw)!r} should be AMOUNT:VOLUME, e.g. 0.4084:20.05"
        )
    amount = parse_number(parts[0], f"replicate {position} {amount_name}", positive=True)
    volume = parse_number(parts[1], f"replicate {position} titrant volume (mL)", positive=True)
    return ReplicateEntry(amount=amount, volume=volume)


def parse_replicates(texts: list[str], *, amount_name: str = "mass (g)") -> list[ReplicateEntry]:
    if not texts:
        raise InvalidInput("at least one replicate (--rep AMOUNT:VOLUME) is required")
    return [parse_replicate(t, i, amount_name=amount_name) for i, t in enumerate(texts, start=1)]


def parse_date(text: str, what: str) -> date:
    """An ISO 8601 calendar date (2026-03-31), within the dates the record accepts."""
    from prepbook.clock import in_range  # the clock loads zoneinfo; only dates need it

    raw = text.strip()
    try:
        day = date.fromisoformat(raw) if len(raw) == 10 else None
    except ValueError:
        day = None
    if day is None:
        raise InvalidInput(f"{what}: {_shown(raw)!r} is not a date; use YYYY-MM-DD")
    return in_range(day, what)


def parse_datetime(text: str, what: str, zone: tzinfo = UTC) -> datetime:
    """An ISO 8601 date, or date and time, typed in the lab's ``zone``: wall-clock
    time unless it gives its offset (``+01:00``, ``Z``). A date alone means noon.

    Returned as a naive UTC datetime, the form the record stores. A time that does not
    exist in ``zone`` or occurs twice there (a daylight-saving change) is refused.
    """
    from prepbook.clock import to_utc  # the clock loads zoneinfo; only dates need it

    raw = text.strip()
    try:
        if len(raw) == 10:
            moment = datetime.combine(date.fromisoformat(raw), time(12, 0))
        elif len(raw) > 32:
            raise ValueError(raw)
        else:
            moment = datetime.fromisoformat(raw.replace("Z", "+00:00"))
    except ValueError:
        raise InvalidInput(
            f"{what}: {_shown(raw)!r} is not a date and time; use YYYY-MM-DD or YYYY-MM-DDTHH:MM"
        ) from None
    return to_utc(moment, zone, what)


_CODE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._()/+-]{0,47}$")


def parse_code(text: str, what: str) -> str:
    """A record code (lot, instrument, batch): letters, digits and . _ - ( ) / +."""
    raw = text.strip()
    if not _CODE.match(raw):
        raise InvalidInput(
            f"{what}: {_shown(raw)!r} is not a valid code "
            "(1-48 letters, digits or . _ - ( ) / +, starting with a letter or digit)"
        )
    return raw


def parse_text(text: str | None, what: str, *, max_len: int = 2000) -> str | None:
    """Free text (notes, reasons): printable, bounded, stored as given."""
    if text is None:
        return None
    if len(text) > max_len:
        raise InvalidInput(f"{what} is longer than {max_len} characters")
    if not text.isprintable() and any(not (ch.isprintable() or ch in "\n\t") for ch in text):
        raise InvalidInput(f"{what} contains control characters")
    return text


def utc_now() -> datetime:
    """Now, as the naive UTC datetime the record stores."""
    return datetime.now(UTC).replace(tzinfo=None)
