"""What an instrument hands over: a weighing from a balance, a curve from a meter.

Plain frozen values, made here from what arrived (``BalanceReading``) or from the
bytes of an exported file (``recorded_curve``), carried with a replicate into the
record (``prepbook.inputs.ReplicateEntry``).
"""

from __future__ import annotations

import hashlib
from datetime import datetime

import msgspec

from prepbook.errors import InvalidInput

MAX_CURVE_BYTES = 2_000_000


class Weighing(msgspec.Struct, frozen=True):
    """A stable net mass read from a balance: its code, the value as printed (g), the
    line it printed (as received, escaped) and when it was read (naive UTC)."""

    balance: str
    mass_text: str
    unit: str
    raw: str
    read_at: datetime
    port: str
    profile: str


class RecordedCurve(msgspec.Struct, frozen=True):
    """A titration curve exported by a meter or an automatic titrator: the file byte
    for byte, its SHA-256, and what prepbook reads in it (the points and the
    inflections found, in mL; the last one is the curve's endpoint)."""

    file_name: str
    content: bytes
    sha256: str
    kind: str  # "pH" or "mV"
    volumes_ml: tuple[float, ...]
    readings: tuple[float, ...]
    endpoints_ml: tuple[float, ...]
    endpoint_u_ml: float
    notes: tuple[str, ...]

    @property
    def endpoint_ml(self) -> float:
        """The equivalence volume the curve gives (its last inflection)."""
        return self.endpoints_ml[-1]


def recorded_curve(file_name: str, content: bytes) -> RecordedCurve:
    """Read and analyse an exported curve (``read_curve`` for the columns and preamble,
    ``find_endpoints`` for the inflections); a file that cannot be read is refused."""
    from prepbook.chem.curve_files import curve_text, read_curve
    from prepbook.chem.inflections import find_endpoints

    if len(content) > MAX_CURVE_BYTES:
        raise InvalidInput(f"the curve file {file_name!r} is {len(content)} bytes; at most "
                           f"{MAX_CURVE_BYTES} are stored")
    text = curve_text(content, file_name)
    try:
        curve = read_curve(text)
        report = find_endpoints(curve.volumes_ml, curve.readings, kind=curve.kind)
    except InvalidInput as exc:
        raise InvalidInput(f"the curve file {file_name!r}: {exc}") from None
    return RecordedCurve(
        file_name=file_name, content=content, sha256=hashlib.sha256(content).hexdigest(),
        kind=curve.kind, volumes_ml=curve.volumes_ml, readings=curve.readings,
        endpoints_ml=tuple(f.volume_ml for f in report.inflections),
        endpoint_u_ml=report.inflections[-1].u_ml, notes=report.notes)
