"""One mass from a balance on a serial line, through pyserial.

``read_mass`` opens the port (a device such as ``/dev/ttyUSB0`` or ``COM3``, or a
pyserial URL such as ``socket://host:port`` for a serial-to-network adapter), asks
for one printed line as the profile says, and reads lines until one is the balance's
print line or the time is up. Lines that are not print lines (noise on the wire, a
header) are passed over; characters around a print line are ignored. Only a stable
reading in grams is taken: unstable, another unit, an overload or no answer in time
is a ``ReadingRefused`` (one line, nothing to record).

The raw line is kept beside the value exactly as it arrived, each byte outside
printable ASCII (and the backslash) written as ``\\xNN``, so any text column can
hold it.
"""

from __future__ import annotations

import time

import msgspec

from prepbook.devices.profiles import BalanceProfile
from prepbook.errors import Refused

UNIT = "g"
MAX_LINE_BYTES = 256


class ReadingRefused(Refused):
    """The balance gave no reading prepbook can take (unstable, unit, overload, silent)."""


class PrintLine(msgspec.Struct, frozen=True):
    """A print line understood: the value as printed (sign and spaces removed), its
    unit and whether the balance marked it stable."""

    value_text: str
    unit: str
    stable: bool


class BalanceReading(msgspec.Struct, frozen=True):
    """A stable reading in grams taken from a balance, and the line it came in."""

    value_text: str
    unit: str
    raw: str  # the line as received (``escape_raw``)
    lines_passed_over: int  # lines before it that were not print lines


def escape_raw(data: bytes) -> str:
    """``data`` as text: printable ASCII as is, every other byte (and ``\\``) as ``\\xNN``."""
    return "".join(chr(b) if 0x20 <= b < 0x7F and b != 0x5C else f"\\x{b:02x}" for b in data)


def parse_print_line(text: str, profile: BalanceProfile) -> PrintLine | None:
    """The print line within ``text``, or None when ``text`` holds none.

    Raises ``ReadingRefused`` for an overload line."""
    if profile.overload.search(text):
        raise ReadingRefused(f"the balance reports an overload or a reading out of its range "
                             f"({text.strip()!r}); unload it and weigh again")
    found = profile.line.search(text)
    if found is None:
        return None
    value = "".join(found["value"].split()).lstrip("+")
    mark = found.groupdict().get("mark") or ""
    return PrintLine(value_text=value, unit=found["unit"], stable=mark.strip() in profile.stable)


def take(line: PrintLine, raw: str, *, passed_over: int = 0) -> BalanceReading:
    """A print line as a reading, or ``ReadingRefused`` when it is not a stable mass in g."""
    if not line.stable:
        raise ReadingRefused(f"the balance was not stable ({raw!r}); wait for the stability "
                             "mark and read again")
    if line.unit != UNIT:
        raise ReadingRefused(f"the balance printed {line.value_text} {line.unit}, not grams; "
                             f"set it to weigh in {UNIT}")
    return BalanceReading(value_text=line.value_text, unit=line.unit, raw=raw,
                          lines_passed_over=passed_over)


def _serial_settings(profile: BalanceProfile) -> dict[str, object]:
    import serial

    parity = {"none": serial.PARITY_NONE, "even": serial.PARITY_EVEN, "odd": serial.PARITY_ODD,
              "mark": serial.PARITY_MARK, "space": serial.PARITY_SPACE}[profile.parity]
    stop = {1.0: serial.STOPBITS_ONE, 1.5: serial.STOPBITS_ONE_POINT_FIVE,
            2.0: serial.STOPBITS_TWO}[profile.stop_bits]
    return {"baudrate": profile.speed, "bytesize": profile.data_bits, "parity": parity,
            "stopbits": stop}


def read_mass(port: str, profile: BalanceProfile, *, timeout_s: float) -> BalanceReading:
    """Ask the balance on ``port`` for one printed line and take it (see the module)."""
    import serial

    deadline = time.monotonic() + timeout_s
    try:
        link = serial.serial_for_url(port, timeout=min(0.2, timeout_s), write_timeout=timeout_s,
                                     **_serial_settings(profile))
    except (serial.SerialException, ValueError, OSError) as exc:
        raise ReadingRefused(f"cannot open the balance's port {port!r}: {exc}") from None
    passed_over = 0
    try:
        link.reset_input_buffer()  # an earlier print left on the line is not this weighing
        if profile.ask:
            link.write(profile.ask.encode("latin-1"))
            link.flush()
        pending = b""
        while time.monotonic() < deadline:
            chunk = link.read_until(b"\n", MAX_LINE_BYTES)
            pending += chunk
            if not pending.endswith(b"\n") and len(pending) < MAX_LINE_BYTES:
                continue
            data, pending = pending.rstrip(b"\r\n"), b""
            raw = escape_raw(data)
            line = parse_print_line(data.decode("latin-1"), profile)
            if line is None:
                passed_over += 1
                continue
            return take(line, raw, passed_over=passed_over)
    except serial.SerialException as exc:
        raise ReadingRefused(f"the balance's port {port!r} failed: {exc}") from None
    finally:
        link.close()
    heard = f" ({passed_over} line(s) that were not print lines)" if passed_over else ""
    raise ReadingRefused(f"no reading from the balance on {port!r} within {timeout_s:g} s"
                         f"{heard}; check the cable, the port and the profile")
