"""Bottle labels as PDF: a titrant batch or a primary-standard lot.

The layout is prepbook's own: a text column on the left that carries the
identity, strength and dates of what is in the bottle, and a narrow column on
the right with a QR code of the bottle's code, the code in print under it, and
the hazard signal word in white on a black bar. Everything is black on white so
it survives a monochrome thermal or laser printer; nothing depends on colour.

The text never overflows its box: the layout tries font sizes from large to
``MIN_FONT_PT`` and, if it still does not fit, packs the dates into one running
paragraph and then prints the hazard statements by their codes (saying so on the
label and in ``LabelLayout.notes``). A label that cannot be made to fit is
refused, never clipped.

reportlab and qrcode are imported only inside the functions that draw.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass, field
from typing import Any
from xml.sax.saxutils import escape

from prepbook.errors import InvalidInput
from prepbook.render.sizes import MM, LabelSize, Sheet, grid

MIN_FONT_PT = 4.5  # smallest body text on a label: common practice, no source
MAX_FONT_PT = 9.0
STEP_PT = 0.25
TITLE_SCALE = 1.35
FACTOR_SCALE = 1.2
LEADING = 1.17  # line height / font size

SDS_LINE = "Follow the SDS, local regulations and your lab's procedures."

STATE_NOTES = {
    "new": "NOT YET STANDARDIZED - do not use for assays",
    "awaiting-review": "STANDARDIZATION AWAITING REVIEW",
    "due": "RESTANDARDIZATION DUE",
    "expired": "EXPIRED - do not use",
    "retired": "RETIRED - do not use",
}


@dataclass(frozen=True)
class Line:
    """One paragraph of label text: ``role`` picks the style, ``text`` is plain text
    and ``bold`` lists the leading words printed in bold (the field's name)."""

    role: str  # "title", "strength", "status", "field", "storage", "hazard", "footer"
    text: str
    lead: str = ""  # printed in bold before the text


@dataclass(frozen=True)
class LabelLayout:
    """How a label was laid out: the font size chosen, the boxes, and what was packed."""

    size: str
    font_pt: float
    tier: int  # 0 full text, 1 dates packed, 2 hazard statements by code
    text_box: tuple[float, float, float, float]  # x, y, width, height (points, from lower left)
    text_height_pt: float  # height the text actually uses
    qr_box: tuple[float, float, float, float]
    side_box: tuple[float, float, float, float]  # right column: QR, code, signal word
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def fits(self) -> bool:
        return self.text_height_pt <= self.text_box[3] + 1e-6


# --- formatting (pure) ----------------------------------------------------------------


def significant(value: float, digits: int = 5) -> str:
    """A value with ``digits`` significant figures for reading (the record keeps all)."""
    if value == 0 or not math.isfinite(value):
        return str(value)
    magnitude = math.floor(math.log10(abs(value)))
    decimals = max(0, digits - 1 - magnitude)
    return f"{value:.{decimals}f}"


def nominal_text(nominal: float, unit: str) -> str:
    return f"{nominal:g} {'mol/L' if unit == 'M' else 'N'}"


def _unit_word(unit: str) -> str:
    return "mol/L" if unit == "M" else "N"


def hazard_words(hazard: dict[str, Any]) -> tuple[str | None, list[str], list[str]]:
    signal = hazard.get("signal_word") or None
    statements = [str(s) for s in hazard.get("statements") or ()]
    pictograms = [str(p) for p in hazard.get("pictograms") or ()]
    return signal, statements, pictograms


def _hazard_lines(hazard: dict[str, Any], *, by_code: bool) -> list[Line]:
    signal, statements, pictograms = hazard_words(hazard)
    lines: list[Line] = []
    if pictograms:
        lines.append(Line("hazard", ", ".join(pictograms), lead="GHS pictograms:"))
    if statements:
        if by_code:
            codes = " ".join(s.split(" ", 1)[0] for s in statements)
            lines.append(Line("hazard", f"{codes} (full statements in the SDS)",
                              lead="Hazard statements:"))
        else:
            lines.append(Line("hazard", " ".join(statements)))
    if not signal and not statements:
        lines.append(Line("hazard", "not classified at this concentration (check the SDS)",
                          lead="Hazard:"))
    return lines


def batch_lines(data: dict[str, Any], tier: int = 0) -> list[Line]:
    """The text of a titrant-bottle label, in reading order."""
    unit = data["unit"]
    lines = [Line("title", data["name"])]
    if data.get("factor") is not None and data.get("concentration") is not None:
        lines.append(Line("strength", f"{significant(data['concentration'])} "
                          f"{_unit_word(unit)} at 20 °C, nominal "
                          f"{nominal_text(data['nominal'], unit)}",
                          lead=f"Factor {data['factor']:.4f}"))
    else:
        lines.append(Line("strength", f"{nominal_text(data['nominal'], unit)} "
                          "(no accepted standardization)", lead="Nominal"))
    note = STATE_NOTES.get(data.get("state") or "")
    if note:
        lines.append(Line("status", note))
    std = data.get("standardized_on")
    std_text = f"{std} ({data['run']})" if std else "not yet"
    fields = [
        ("Batch", data["code"]),
        ("Made", f"{data['made_on']} by {data['made_by']}"),
        ("Standardized", std_text),
        ("Restandardize by", data.get("restandardize_by") or "after the first standardization"),
        ("Expires", data["expires"]),
    ]
    if tier >= 1:
        lines.append(Line("field", " · ".join(f"{k} {v}" for k, v in fields)))
    else:
        lines.extend(Line("field", str(v), lead=k) for k, v in fields)
    if data.get("storage"):
        lines.append(Line("storage", data["storage"], lead="Storage:"))
    lines.extend(_hazard_lines(data.get("hazard") or {}, by_code=tier >= 2))
    lines.append(Line("footer", f"{SDS_LINE} Label printed {data['printed_on']} by "
                      f"{data['printed_by']}."))
    return lines


def lot_lines(data: dict[str, Any], tier: int = 0) -> list[Line]:
    """The text of a primary-standard lot label, in reading order."""
    lines = [Line("title", data["name"])]
    purity = f"{data['purity_percent']} %"
    if data.get("purity_u_percent"):
        purity += f" ± {data['purity_u_percent']} %"
    lines.append(Line("strength", f"{purity} (certificate)", lead="Purity"))
    if data.get("expired"):
        lines.append(Line("status", "EXPIRED - do not use"))
    fields = [
        ("Lot", data["code"]),
        ("Material", f"{data['material']} ({data['formula']})"),
        ("Certificate", data.get("certificate") or "none recorded"),
        ("Opened", data.get("opened_on") or "not recorded"),
        ("Dried", data.get("dried_on") or "not recorded"),
        ("Expires", data["expires"]),
    ]
    if tier >= 1:
        lines.append(Line("field", " · ".join(f"{k} {v}" for k, v in fields)))
    else:
        lines.extend(Line("field", str(v), lead=k) for k, v in fields)
    if data.get("drying"):
        lines.append(Line("storage", data["drying"], lead="Drying:"))
    lines.extend(_hazard_lines(data.get("hazard") or {}, by_code=tier >= 2))
    lines.append(Line("footer", f"{SDS_LINE} Label printed {data['printed_on']} by "
                      f"{data['printed_by']}."))
    return lines


def lines_for(data: dict[str, Any], tier: int = 0) -> list[Line]:
    return lot_lines(data, tier) if data.get("kind") == "lot" else batch_lines(data, tier)


# --- layout and drawing (reportlab) ---------------------------------------------------


def _styles(font: float) -> dict[str, Any]:
    from reportlab.lib.enums import TA_LEFT
    from reportlab.lib.styles import ParagraphStyle

    def style(name: str, size: float, *, bold: bool = False, after: float = 0.0) -> Any:
        return ParagraphStyle(
            name, fontName="Helvetica-Bold" if bold else "Helvetica", fontSize=size,
            leading=size * LEADING, alignment=TA_LEFT, spaceAfter=after,
            splitLongWords=1, allowWidows=1, allowOrphans=1,
        )

    gap = font * 0.25
    return {
        "title": style("title", font * TITLE_SCALE, bold=True, after=gap),
        "strength": style("strength", font * FACTOR_SCALE, after=gap * 0.5),
        "status": style("status", font, bold=True, after=gap * 0.5),
        "field": style("field", font),
        "storage": style("storage", font, after=0),
        "hazard": style("hazard", font),
        "footer": style("footer", font * 0.9),
    }


def _paragraph(line: Line, styles: dict[str, Any]) -> Any:
    from reportlab.platypus import Paragraph

    body = escape(line.text)
    if line.lead:
        body = f"<b>{escape(line.lead)}</b> {body}"
    if line.role == "footer":
        body = f"<i>{body}</i>"
    return Paragraph(body, styles[line.role])


def _gap_before(line: Line, previous: Line | None, font: float) -> float:
    """A little air between groups (identity, dates, storage, hazard, footer)."""
    if previous is None or previous.role == line.role:
        return 0.0
    if line.role in ("storage", "hazard", "footer") and previous.role != line.role:
        return font * 0.35
    return 0.0


def _measure(lines: list[Line], width: float, font: float) -> tuple[float, list[Any]]:
    styles = _styles(font)
    total = 0.0
    placed = []
    previous: Line | None = None
    for line in lines:
        para = _paragraph(line, styles)
        _, h = para.wrap(width, 10_000)
        gap = _gap_before(line, previous, font)
        total += gap + h + para.style.spaceAfter
        placed.append((gap, para, h))
        previous = line
    return total, placed


@dataclass(frozen=True)
class _Geometry:
    margin: float
    text_box: tuple[float, float, float, float]
    side_box: tuple[float, float, float, float]
    qr_side: float


def _geometry(size: LabelSize) -> _Geometry:
    w, h = size.width_pt, size.height_pt
    margin = max(1.5 * MM, min(3 * MM, h * 0.06))
    gutter = max(1.2 * MM, w * 0.02)
    side_w = min(w * 0.30, h - 2 * margin)
    # QR, then the code in print (about two lines), then the signal-word bar.
    qr = min(side_w, (h - 2 * margin) * 0.72)
    text_w = w - 2 * margin - side_w - gutter
    return _Geometry(
        margin=margin,
        text_box=(margin, margin, text_w, h - 2 * margin),
        side_box=(w - margin - side_w, margin, side_w, h - 2 * margin),
        qr_side=qr,
    )


def layout(data: dict[str, Any], size: LabelSize) -> LabelLayout:
    """Choose the largest font (and the least packing) at which the text fits."""
    geo = _geometry(size)
    _, _, text_w, text_h = geo.text_box
    notes: list[str] = []
    for tier in (0, 1, 2):
        lines = lines_for(data, tier)
        font = MAX_FONT_PT
        while font >= MIN_FONT_PT - 1e-9:
            used, _ = _measure(lines, text_w, font)
            if used <= text_h:
                if tier >= 1:
                    notes.append("the dates are run together on one line to fit")
                if tier >= 2:
                    notes.append("hazard statements are printed by code (H-numbers) to fit "
                                 f"{size.name}; a larger label carries their full text")
                sx, sy, sw, sh = geo.side_box
                qr_box = (sx + (sw - geo.qr_side) / 2, sy + sh - geo.qr_side, geo.qr_side,
                          geo.qr_side)
                return LabelLayout(size=size.name, font_pt=font, tier=tier,
                                   text_box=geo.text_box, text_height_pt=used, qr_box=qr_box,
                                   side_box=geo.side_box, notes=tuple(notes))
            font = round(font - STEP_PT, 4)
    raise InvalidInput(f"the label text for {data['code']} does not fit on {size.name} even at "
                       f"{MIN_FONT_PT} pt; choose a larger --size")


def _qr_matrix(text: str) -> list[list[bool]]:
    import qrcode
    from qrcode.constants import ERROR_CORRECT_M

    code = qrcode.QRCode(error_correction=ERROR_CORRECT_M, border=0)
    code.add_data(text)
    code.make(fit=True)
    return [list(row) for row in code.get_matrix()]


def _fit_single_line(canvas: Any, text: str, font: str, size: float, width: float) -> float:
    from reportlab.pdfbase.pdfmetrics import stringWidth

    w = stringWidth(text, font, size)
    return size if w <= width else size * width / w


def _draw_side(canvas: Any, data: dict[str, Any], lay: LabelLayout) -> None:
    from reportlab.pdfbase.pdfmetrics import stringWidth

    qx, qy, qs, _ = lay.qr_box
    matrix = _qr_matrix(data["code"])
    n = len(matrix)
    module = qs / n
    canvas.setFillColorRGB(0, 0, 0)
    for r, row in enumerate(matrix):
        c = 0
        while c < n:  # one rectangle per run of dark modules: crisp and small
            if row[c]:
                start = c
                while c < n and row[c]:
                    c += 1
                canvas.rect(qx + start * module, qy + qs - (r + 1) * module,
                            (c - start) * module, module, stroke=0, fill=1)
            else:
                c += 1
    sx, sy, sw, sh = lay.side_box
    code_font = _fit_single_line(canvas, data["code"], "Helvetica-Bold",
                                 max(lay.font_pt, 5.0), sw)
    code_y = qy - code_font * 1.25
    canvas.setFont("Helvetica-Bold", code_font)
    canvas.drawCentredString(sx + sw / 2, code_y, data["code"])
    signal, _, _ = hazard_words(data.get("hazard") or {})
    if signal:
        word = signal.upper()
        room = code_y - code_font * 0.6 - sy
        bar_h = min(room, max(lay.font_pt * 2.0, 6.0))
        if bar_h > 4:
            size = _fit_single_line(canvas, word, "Helvetica-Bold", bar_h * 0.62, sw * 0.9)
            bar_y = sy + (room - bar_h) / 2 if room > bar_h else sy
            canvas.rect(sx, bar_y, sw, bar_h, stroke=0, fill=1)
            canvas.setFillColorRGB(1, 1, 1)
            canvas.setFont("Helvetica-Bold", size)
            text_w = stringWidth(word, "Helvetica-Bold", size)
            canvas.drawString(sx + (sw - text_w) / 2, bar_y + (bar_h - size * 0.72) / 2, word)
            canvas.setFillColorRGB(0, 0, 0)


def _draw_text(canvas: Any, data: dict[str, Any], lay: LabelLayout) -> None:
    x, y, w, h = lay.text_box
    _, placed = _measure(lines_for(data, lay.tier), w, lay.font_pt)
    top = y + h
    for gap, para, ph in placed:
        top -= gap + ph
        para.drawOn(canvas, x, top)
        top -= para.style.spaceAfter


def _draw_label(canvas: Any, data: dict[str, Any], lay: LabelLayout, x: float, y: float,
                size: LabelSize, *, outline: bool) -> None:
    canvas.saveState()
    canvas.translate(x, y)
    if outline:  # on a plain sheet, a hairline shows where to cut
        canvas.setLineWidth(0.25)
        canvas.setDash(1, 2)
        canvas.rect(0, 0, size.width_pt, size.height_pt, stroke=1, fill=0)
        canvas.setDash()
    _draw_text(canvas, data, lay)
    _draw_side(canvas, data, lay)
    # A rule between the text and the side column, for the eye.
    sx = lay.side_box[0]
    gx = (lay.text_box[0] + lay.text_box[2] + sx) / 2
    canvas.setLineWidth(0.3)
    canvas.line(gx, lay.text_box[1], gx, lay.text_box[1] + lay.text_box[3])
    canvas.restoreState()


def label_pdf(data: dict[str, Any], size: LabelSize, *, copies: int = 1,
              sheet: Sheet | None = None, outline: bool = False) -> tuple[bytes, LabelLayout]:
    """The PDF of ``copies`` labels: one per page of the label's size, or in a grid on
    ``sheet`` pages. Returns the bytes and the layout used."""
    from reportlab.pdfgen.canvas import Canvas

    if copies < 1:
        raise InvalidInput("--copies must be at least 1")
    lay = layout(data, size)
    buffer = io.BytesIO()
    what = "lot" if data.get("kind") == "lot" else "batch"
    if sheet is None:
        canvas = Canvas(buffer, pagesize=(size.width_pt, size.height_pt), invariant=1)
        for _ in range(copies):
            _draw_label(canvas, data, lay, 0, 0, size, outline=outline)
            canvas.showPage()
    else:
        canvas = Canvas(buffer, pagesize=(sheet.width_pt, sheet.height_pt), invariant=1)
        g = grid(sheet, size)
        left = copies
        while left > 0:
            for ox, oy in g.origins[: min(left, g.per_sheet)]:
                _draw_label(canvas, data, lay, ox, oy, size, outline=True)
            left -= g.per_sheet
            canvas.showPage()
    canvas.setTitle(f"prepbook label {data['code']}")
    canvas.setSubject(f"{what} label")
    canvas.setCreator("prepbook")
    canvas.save()
    return buffer.getvalue(), lay
