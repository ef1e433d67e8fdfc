"""Where things go on a bottle label: the side column at the top right (QR code, the
code in print, the signal word, the GHS pictograms under them or left of the QR code),
the text beside it and then across the full width below it."""

from __future__ import annotations

import msgspec

from prepbook.render import pictograms
from prepbook.render.label_side import code_lines
from prepbook.render.sizes import MM, LabelSize

MIN_FONT_PT = 4.25  # smallest body text (a line about 1.75 mm): common practice, no source


class Geometry(msgspec.Struct, frozen=True):
    margin: float
    text_boxes: tuple[tuple[float, float, float, float], ...]  # beside the side column, below
    side_box: tuple[float, float, float, float]  # QR code, code and signal word
    qr_side: float
    code_pt: float
    code_lines: tuple[str, ...]
    bar_h: float
    # Lower left corners of the pictograms, under the side box; and whether all fits
    spots: tuple[tuple[float, float], ...] = ()
    fits: bool = True
    qr_x: float = 0.0
    code_top: float = 0.0  # the code's lines hang from here (under the QR code or the group)


QR_SHARES = (0.5, 0.42)  # of the label's inner height, tried in turn
# Where the pictograms go, tried in turn: under the signal word (in two staggered rows,
# or in one row), or left of the QR code
PLACES = ("under", "under in a row", "beside")


def geometry(size: LabelSize, code: str, signal: str | None, font: float,
              tier: int = 0, qr_share: float = QR_SHARES[0], codes: tuple[str, ...] = (),
              side_pt: float = 0.0, place: str = PLACES[0]) -> Geometry:
    """Where things go: the side column (QR, code, signal word, the GHS pictograms under
    them or left of the QR code) at the top right, the text beside it and then across
    the full width below it."""
    w, h = size.width_pt, size.height_pt
    margin = max(1.2 * MM, min(3 * MM, h * 0.05))
    gutter = max(1.2 * MM, w * 0.02)
    inner_h = h - 2 * margin
    # The QR code stays at least 10 mm across (about 0.4 mm a module for a batch code).
    qr = max(10 * MM, min(26 * MM, inner_h * qr_share, w * 0.28))
    group_w, group_h, spots = pictograms.places(len(codes), side_pt,
                                                one_row=place == "under in a row")
    beside_qr = place == "beside" and bool(codes)
    side_w = qr + group_w + 0.8 * MM if beside_qr else max(qr, group_w)
    code_pt, lines = code_lines(code, side_w, max(MIN_FONT_PT, min(font, 7.0)))
    bar_h = max(font * (1.9 if tier < 2 else 1.6), 6.0) if signal else 0.0
    bar_h = min(bar_h, 4 * MM)
    top_h = max(qr, group_h) if beside_qr else qr
    upper_h = top_h + code_pt * (0.3 + 1.2 * len(lines)) + \
        (bar_h + code_pt * 0.4 if signal else 0.0)
    lower_h = group_h + 0.8 * MM if codes and not beside_qr else 0.0
    side_h = upper_h + lower_h
    top = h - margin
    sx = w - margin - side_w
    side = (sx, top - upper_h, side_w, upper_h)
    beside = (margin, top - side_h, w - 2 * margin - side_w - gutter, side_h)
    below_h = inner_h - side_h - gutter * 0.6
    below = (margin, margin, w - 2 * margin, max(0.0, below_h))
    if beside_qr:
        left, group_top, qr_x = sx, top, sx + side_w - qr
    else:
        left, group_top, qr_x = sx + (side_w - group_w) / 2, top - upper_h - 0.8 * MM, \
            sx + (side_w - qr) / 2
    return Geometry(margin=margin, text_boxes=(beside, below), side_box=side, qr_side=qr,
                     code_pt=code_pt, code_lines=lines, bar_h=bar_h,
                     spots=tuple((left + x, group_top + y) for x, y in spots),
                     fits=side_h <= inner_h + 1e-6, qr_x=qr_x, code_top=top - top_h)
