"""Label stock sizes and the sheets that carry several labels.

The sizes are common blank adhesive-label formats (metric and inch) as sold by
many suppliers; they are given by their dimensions, not by any product number.
A sheet (A4 or US Letter) holds as many labels as fit in a grid inside its
margins, centred, with a small gap between labels and a dotted cut line round
each: it is meant for plain adhesive sheets cut by hand (margins and gap are
common practice, no source). Pre-cut sheets have their own pitch: print one
label per page and let the printer driver place it, or check the pitch first.
"""

from __future__ import annotations

import re

import msgspec

from prepbook.errors import InvalidInput

MM = 72 / 25.4  # points per millimetre
INCH = 72.0  # points per inch


class LabelSize(msgspec.Struct, frozen=True):
    """One label stock size; the drawing works in points (1/72 in)."""

    name: str  # as typed on the command line, e.g. "70x37mm"
    width_pt: float
    height_pt: float
    note: str

    @property
    def description(self) -> str:
        return f"{self.name} ({self.note})"


class Sheet(msgspec.Struct, frozen=True):
    """A page that carries a grid of labels."""

    name: str
    width_pt: float
    height_pt: float
    margin_pt: float
    gap_pt: float


def _mm(name: str, w: float, h: float, note: str) -> LabelSize:
    return LabelSize(name, w * MM, h * MM, note)


def _inch(name: str, w: float, h: float, note: str) -> LabelSize:
    return LabelSize(name, w * INCH, h * INCH, note)


SIZES: dict[str, LabelSize] = {
    s.name: s
    for s in (
        _mm("100x50mm", 100, 50, "large bottle label"),
        _mm("89x36mm", 89, 36, "address-roll size"),
        _mm("70x37mm", 70, 37, "medium bottle label"),
        _mm("62x29mm", 62, 29, "narrow roll"),
        _inch("4x2in", 4, 2, "large bottle label, inch stock"),
        _inch("2.625x1in", 2.625, 1, "small bottle label, inch stock"),
    )
}
DEFAULT_SIZE = "70x37mm"

SHEETS: dict[str, Sheet] = {
    "a4": Sheet("a4", 210 * MM, 297 * MM, margin_pt=8 * MM, gap_pt=2.5 * MM),
    "letter": Sheet("letter", 8.5 * INCH, 11 * INCH, margin_pt=0.3 * INCH, gap_pt=0.125 * INCH),
}

_SIZE = re.compile(r"^\s*([0-9]+(?:\.[0-9]+)?)\s*[x×X*]\s*([0-9]+(?:\.[0-9]+)?)\s*(mm|in)?\s*$")


def _fmt(value: str) -> str:
    text = value.rstrip("0").rstrip(".") if "." in value else value
    return text or "0"


def size_names() -> str:
    return ", ".join(SIZES)


def find_size(text: str) -> LabelSize:
    """The label size named ``text`` ("70x37mm", "70 x 37 mm", "4x2in"); InvalidInput if unknown.

    Without a unit, the size is looked up in millimetres and then in inches.
    """
    m = _SIZE.match(text.lower())
    if m is not None:
        w, h, unit = _fmt(m.group(1)), _fmt(m.group(2)), m.group(3)
        for u in ((unit,) if unit else ("mm", "in")):
            found = SIZES.get(f"{w}x{h}{u}")
            if found is not None:
                return found
    raise InvalidInput(f"unknown label size {text!r}; one of {size_names()}")


def find_sheet(text: str) -> Sheet:
    sheet = SHEETS.get(text.strip().lower())
    if sheet is None:
        raise InvalidInput(f"unknown sheet {text!r}; one of {', '.join(SHEETS)}")
    return sheet


class Grid(msgspec.Struct, frozen=True):
    """Where the labels go on one sheet: lower-left corner of each, in points."""

    columns: int
    rows: int
    origins: tuple[tuple[float, float], ...]

    @property
    def per_sheet(self) -> int:
        return self.columns * self.rows


def grid(sheet: Sheet, size: LabelSize) -> Grid:
    """The grid of ``size`` labels on ``sheet``, centred, filled row by row from the top."""
    usable_w = sheet.width_pt - 2 * sheet.margin_pt
    usable_h = sheet.height_pt - 2 * sheet.margin_pt
    cols = int((usable_w + sheet.gap_pt) // (size.width_pt + sheet.gap_pt))
    rows = int((usable_h + sheet.gap_pt) // (size.height_pt + sheet.gap_pt))
    if cols < 1 or rows < 1:  # pragma: no cover - every listed size fits both sheets
        raise InvalidInput(f"a {size.name} label does not fit on a {sheet.name} sheet")
    block_w = cols * size.width_pt + (cols - 1) * sheet.gap_pt
    block_h = rows * size.height_pt + (rows - 1) * sheet.gap_pt
    left = (sheet.width_pt - block_w) / 2
    top = (sheet.height_pt + block_h) / 2
    origins = []
    for r in range(rows):
        for c in range(cols):
            x = left + c * (size.width_pt + sheet.gap_pt)
            y = top - (r + 1) * size.height_pt - r * sheet.gap_pt
            origins.append((x, y))
    return Grid(cols, rows, tuple(origins))
