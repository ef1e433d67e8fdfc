"""Titration curves read from the text files meters export.

What a meter's export may hold, and how each is read:

* **a preamble**: lines of metadata (instrument, sample, operator, date) before the
  header. The header is the line just above the first row whose first two cells are
  numbers; everything above it is counted and skipped;
* **either column order**, named by the headers: the volume column is the one whose
  header names a volume ("volume", "vol", "V", or a header holding "mL"); the reading
  column is the one named pH, or mV / E / potential / EMF for an electrode potential.
  When a header names only one of them the other is the first remaining column; when
  it names neither, the old convention holds: column 1 volume, column 2 the reading
  (mV when its header holds "mV", else pH);
* **separators**: a tab or ";" when the header holds one (then a decimal comma is
  read as well), otherwise ","; a quoted cell "7,01" in a comma file is a decimal comma;
* lines beginning with "#" and blank lines are skipped anywhere.

Every refusal is one ``InvalidInput`` line naming the line of the file (1-based).
"""

from __future__ import annotations

import csv
import re
from pathlib import Path

import msgspec

from prepbook.errors import InvalidInput

PH_READING_RANGE = (-2.0, 16.0)
"""pH readings outside this range are refused as probably mV (the span a pH meter
displays; common practice, no source)."""

_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")
_WORD = re.compile(r"[a-z]+")


class CurveFile(msgspec.Struct, frozen=True):
    """A curve as read from a file: the series, the kind of reading, which columns
    (1-based, as named in the header) they came from, and how many preamble lines
    were skipped above the header."""

    volumes_ml: tuple[float, ...]
    readings: tuple[float, ...]
    kind: str
    volume_column: int
    reading_column: int
    header_line: int
    preamble_lines: int


def _delimiter(line: str) -> str:
    return "\t" if "\t" in line else ";" if ";" in line else ","


def _number_or_none(cell: str, decimal_comma: bool) -> float | None:
    cleaned = cell.strip()
    if decimal_comma or ("," in cleaned and "." not in cleaned):
        cleaned = cleaned.replace(",", ".")
    return float(cleaned) if _NUMBER.fullmatch(cleaned) else None


def _split(line: str, delimiter: str) -> list[str]:
    return [cell.strip() for cell in next(csv.reader([line], delimiter=delimiter))]


def _numeric_row(line: str) -> bool:
    """At least two cells, the first two numbers (in the separator this line uses)."""
    delimiter = _delimiter(line)
    cells = _split(line, delimiter)
    return len(cells) >= 2 and all(
        _number_or_none(cell, delimiter != ",") is not None for cell in cells[:2])


def _is_volume(name: str) -> bool:
    words = _WORD.findall(name.lower())
    return bool(words) and (words[0] in ("v", "vol", "volume", "titrant") or "ml" in words)


def _reading_kind(name: str) -> str | None:
    words = _WORD.findall(name.lower())
    if not words:
        return None
    if "ph" in words:
        return "pH"
    if "mv" in words or words[0] in ("e", "emf", "potential", "u"):
        return "mV"
    return None


def _columns(header: list[str], line: int) -> tuple[int, int, str]:
    """(volume index, reading index, kind), 0-based, from the header's names."""
    volume = [i for i, name in enumerate(header) if _is_volume(name)]
    readings = [(i, kind) for i, name in enumerate(header)
                if (kind := _reading_kind(name)) is not None and i not in volume]
    if volume and readings:
        return volume[0], readings[0][0], readings[0][1]
    if len(header) < 2:
        raise InvalidInput(f"line {line}: the header needs two columns, volume (mL) "
                           "and pH or mV")
    if volume:  # the reading is the first other column, as in the old convention
        other = 1 if volume[0] == 0 else 0
        return volume[0], other, "mV" if "mv" in header[other].lower() else "pH"
    if readings:
        return (1 if readings[0][0] == 0 else 0), readings[0][0], readings[0][1]
    return 0, 1, "mV" if "mv" in header[1].lower() else "pH"


def read_curve(text: str) -> CurveFile:
    """The curve in a meter's export (see the module docstring for what is read).

    Refused (InvalidInput, naming the line): no header or no data, a cell that is not
    a number, a row too short, a negative volume, volumes not strictly increasing, a
    pH reading outside ``PH_READING_RANGE``.
    """
    lines = text.lstrip("\ufeff").splitlines()
    rows = [(n, line) for n, line in enumerate(lines, start=1)
            if line.strip() and not line.lstrip().startswith("#")]
    if not rows:
        raise InvalidInput("the curve file is empty: expected a header row, then volume (mL) "
                           "and pH or mV")
    first_data = next((i for i, (_, line) in enumerate(rows) if _numeric_row(line)), None)
    if first_data == 0:
        raise InvalidInput(f"line {rows[0][0]}: the first row must be a header such as "
                           "'volume_ml,pH', found numbers")
    header_at = 0 if first_data is None else first_data - 1
    header_line, header_text = rows[header_at]
    delimiter = _delimiter(header_text)
    decimal_comma = delimiter != ","
    volume_at, reading_at, kind = _columns(_split(header_text, delimiter), header_line)
    needed = max(volume_at, reading_at) + 1

    volumes: list[float] = []
    readings: list[float] = []
    for line, row_text in rows[header_at + 1:]:
        cells = _split(row_text, delimiter)
        if len(cells) < needed:
            raise InvalidInput(f"line {line}: expected volume and {kind}, found "
                               f"{len(cells)} value")
        volume = _number_or_none(cells[volume_at], decimal_comma)
        if volume is None:
            raise InvalidInput(f"line {line}: volume {cells[volume_at]!r} is not a number")
        reading = _number_or_none(cells[reading_at], decimal_comma)
        if reading is None:
            raise InvalidInput(f"line {line}: {kind} {cells[reading_at]!r} is not a number")
        if volume < 0:
            raise InvalidInput(f"line {line}: volume {volume:g} mL is negative")
        if volumes and volume <= volumes[-1]:
            raise InvalidInput(f"line {line}: volume {volume:g} mL does not exceed the "
                               f"previous {volumes[-1]:g} mL; volumes must strictly increase")
        if kind == "pH" and not PH_READING_RANGE[0] <= reading <= PH_READING_RANGE[1]:
            raise InvalidInput(f"line {line}: pH {reading:g} is outside "
                               f"{PH_READING_RANGE[0]:g}..{PH_READING_RANGE[1]:g}; "
                               "if these are mV, name the column 'mV'")
        volumes.append(volume)
        readings.append(reading)
    if not volumes:
        raise InvalidInput(f"line {header_line}: a header but no data rows")
    preamble = sum(1 for n, _ in enumerate(lines, start=1) if n < header_line)
    return CurveFile(tuple(volumes), tuple(readings), kind, volume_at + 1, reading_at + 1,
                     header_line, preamble)


def read_curve_file(path: str | Path) -> CurveFile:
    """``read_curve`` of a file on disk, UTF-8 (with or without BOM) or Latin-1.

    A file that cannot be opened or decoded is one ``InvalidInput`` line naming it.
    """
    where = Path(path)
    try:
        raw = where.read_bytes()
    except OSError as exc:
        raise InvalidInput(f"cannot read the curve file {str(where)!r}: "
                           f"{exc.strerror or exc}") from None
    return read_curve(curve_text(raw, str(where)))


def curve_text(raw: bytes, name: str) -> str:
    """An exported curve's bytes as text: UTF-8 (with or without BOM) or Latin-1; a file
    holding NUL bytes is not a text export and is refused, naming it."""
    if b"\x00" in raw:
        raise InvalidInput(f"the curve file {name!r} is not text (it holds NUL bytes); "
                           "export the curve as CSV")
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        return raw.decode("latin-1")
