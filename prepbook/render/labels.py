"""Bottle labels as PDF: a titrant batch or a primary-standard lot.

The layout is prepbook's own: a text column on the left that carries the identity,
strength and dates of what is in the bottle, and a narrow column on the right with a QR
code of the bottle's code, the code in print under it, and the hazard signal word in white
on a black bar. Everything is black on white so it survives a monochrome thermal or laser
printer; nothing depends on colour.

The text never overflows its box: the layout tries font sizes from large to
``MIN_FONT_PT`` and, if it still does not fit, packs the dates into one running paragraph
and then prints the hazard statements by their codes (saying so on the label and in
``LabelLayout.notes``). A label that cannot be made to fit is refused, never clipped.

reportlab and qrcode are imported only inside the functions that draw.
"""

from __future__ import annotations

import io
from dataclasses import dataclass, field
from typing import Any

from prepbook.errors import InvalidInput
from prepbook.lab.label_content import BatchLabel, Hazard, LabelContent, LotLabel
from prepbook.render.numbers import significant
from prepbook.render.sizes import MM, LabelSize, Sheet, grid
from prepbook.text import for_pdf

MIN_FONT_PT = 4.25  # smallest body text (a line about 1.75 mm): common practice, no source
MAX_FONT_PT = 9.0
STEP_PT = 0.25
TITLE_SCALE = 1.35
FACTOR_SCALE = 1.2
LEADING = 1.17  # line height / font size

SDS_LINE = "Follow the SDS, local regulations and lab procedures."

STATE_NOTES = {
    "new": "NOT YET STANDARDIZED - do not use for assays",
    "awaiting-review": "STANDARDIZATION AWAITING REVIEW",
    "due": "RESTANDARDIZATION DUE",
    "expired": "EXPIRED - do not use", "retired": "RETIRED - do not use",
}


@dataclass(frozen=True)
class Line:
    """One paragraph of label text: ``role`` picks the style, ``text`` is plain text
    and ``bold`` lists the leading words printed in bold (the field's name)."""

    role: str  # "kicker", "title", "strength", "status", "field", "storage", "hazard", "footer"
    text: str
    lead: str = ""  # printed in bold before the text
    strong: bool = False  # the text itself in bold too (dates to act on)
    # Run-together fields (name, value, strong): printed "name value · name value"
    parts: tuple[tuple[str, str, bool], ...] = ()


@dataclass(frozen=True)
class LabelLayout:
    """How a label was laid out: the font size chosen, the boxes, and what was packed."""

    size: str
    font_pt: float
    tier: int  # 0 full text, 1 dates packed, 2 hazard statements by code
    qr_share: float
    # x, y, width, height in points from the label's lower left: beside the side column, below it
    text_boxes: tuple[tuple[float, float, float, float], ...]
    text_heights_pt: tuple[float, ...]  # height the text uses in each box
    qr_box: tuple[float, float, float, float]
    side_box: tuple[float, float, float, float]  # top right: QR, code, signal word
    code_pt: float
    code_lines: tuple[str, ...]
    bar_h: float
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def fits(self) -> bool:
        boxes = [b for b in self.text_boxes if b[3] > 0.5 and b[2] > 0.5]
        return all(used <= box[3] + 1e-6 for used, box in zip(self.text_heights_pt, boxes,
                                                              strict=True))


# --- formatting (pure) ----------------------------------------------------------------


def _unit_word(unit: str) -> str:
    return "mol/L" if unit == "M" else "N"


def nominal_text(nominal: float, unit: str) -> str:
    return f"{nominal:g} {_unit_word(unit)}"


def hazard_words(hazard: Hazard) -> tuple[str | None, list[str], list[str]]:
    signal = hazard.get("signal_word") or None
    statements = [str(s) for s in hazard.get("statements") or ()]
    pictograms = [str(p) for p in hazard.get("pictograms") or ()]
    return signal, statements, pictograms


def _hazard_lines(hazard: Hazard, *, by_code: bool) -> list[Line]:
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


def batch_lines(data: BatchLabel, tier: int = 0) -> list[Line]:
    """The text of a titrant-bottle label, in reading order."""
    unit = data.unit
    lines = [Line("title", data.name)]
    if data.factor is not None and data.concentration is not None:
        lines.append(Line("strength", f"{significant(data.concentration)} "
                          f"{_unit_word(unit)} at 20 °C, nominal "
                          f"{nominal_text(data.nominal, unit)}",
                          lead=f"Factor {data.factor:.4f}"))
    else:
        lines.append(Line("strength", nominal_text(data.nominal, unit), lead="Nominal"))
    note = STATE_NOTES.get(data.state or "")
    if note:
        lines.append(Line("status", note))
    std = data.standardized_on
    # At tier 2 the code is left to the side column, where it is printed under the QR code.
    fields = [] if tier >= 2 else [("Batch", data.code, False)]
    fields += [
        ("Made", f"{data.made_on} by {data.made_by}", False),
        ("Standardized", f"{std} ({data.run})" if std else "not yet", False),
    ]
    if data.restandardize_by:
        fields.append(("Restandardize by", data.restandardize_by, True))
    fields.append(("Expires", data.expires or "-", True))
    lines.extend(_field_lines(fields, tier))
    if data.storage:
        lines.append(Line("storage", data.storage, lead="Storage:"))
    lines.extend(_hazard_lines(data.hazard, by_code=tier >= 2))
    lines.append(_footer(data, tier))
    return lines


def _field_lines(fields: list[tuple[str, str, bool]], tier: int) -> list[Line]:
    if tier >= 1:
        return [Line("field", "", parts=tuple(fields))]
    return [Line("field", v, lead=k, strong=strong) for k, v, strong in fields]


def lot_lines(data: LotLabel, tier: int = 0) -> list[Line]:
    """The text of a primary-standard lot label, in reading order."""
    lines = [Line("kicker", "PRIMARY STANDARD"), Line("title", data.name)]
    purity = f"{data.purity_percent} %"
    if data.purity_u_percent:
        purity += f" ± {data.purity_u_percent} %"
    lines.append(Line("strength", f"{purity} (certificate)", lead="Purity"))
    if data.expired:
        lines.append(Line("status", "EXPIRED - do not use"))
    fields = [] if tier >= 2 else [("Lot", data.code, False)]
    fields += [
        ("Material", f"{data.material} ({data.formula})", False),
        ("Certificate", data.certificate or "none recorded", False),
        ("Opened", data.opened_on or "not recorded", False),
        ("Dried", data.dried_on or "not recorded", True),
        ("Expires", data.expires, True),
    ]
    lines.extend(_field_lines(fields, tier))
    if data.drying:
        lines.append(Line("storage", data.drying, lead="Drying:"))
    lines.extend(_hazard_lines(data.hazard, by_code=tier >= 2))
    lines.append(_footer(data, tier))
    return lines


def _footer(data: LabelContent, tier: int) -> Line:
    if tier >= 2:  # who printed it and when stays in the record (label_prints)
        return Line("footer", SDS_LINE)
    return Line("footer", f"{SDS_LINE} Label printed {data.printed_on} by {data.printed_by}.")


def lines_for(data: LabelContent, tier: int = 0) -> list[Line]:
    lines = lot_lines(data, tier) if isinstance(data, LotLabel) else batch_lines(data, tier)
    if data.checkpoint:  # the audit trail's code when printed: the label is a witness too
        lines.append(Line("footer", f"Checkpoint {data.checkpoint}"))
    return lines


# --- layout and drawing (reportlab) ---------------------------------------------------


def _styles(font: float, tier: int = 0) -> dict[str, Any]:
    from reportlab.lib.colors import black
    from reportlab.lib.enums import TA_LEFT
    from reportlab.lib.styles import ParagraphStyle

    def style(name: str, size: float, *, bold: bool = False, after: float = 0.0) -> Any:
        return ParagraphStyle(
            name, fontName="Helvetica-Bold" if bold else "Helvetica", fontSize=size,
            leading=size * LEADING, alignment=TA_LEFT, spaceAfter=after,
            splitLongWords=1, allowWidows=1, allowOrphans=1)

    gap = font * 0.25
    # The tightest packing also narrows the step between title, strength and body text.
    title, strength = (TITLE_SCALE, FACTOR_SCALE) if tier < 2 else (1.2, 1.1)
    status = style("status", font, bold=True, after=gap)
    status.borderWidth = 0.6
    status.borderColor = black
    status.borderPadding = (font * 0.15, font * 0.3, font * 0.1, font * 0.3)
    status.leftIndent = font * 0.3
    status.rightIndent = font * 0.6
    status.spaceBefore = font * 0.25
    return {
        "kicker": style("kicker", font * 0.85, bold=True),
        "title": style("title", font * title, bold=True, after=gap),
        "strength": style("strength", font * strength, after=gap * 0.5),
        "status": status,
        "field": style("field", font),
        "storage": style("storage", font, after=0),
        "hazard": style("hazard", font),
        "footer": style("footer", font * 0.9),
    }


def _paragraph(line: Line, styles: dict[str, Any]) -> Any:
    from reportlab.platypus import Paragraph

    if line.parts:
        body = " · ".join(f"<b>{for_pdf(k)} {for_pdf(v)}</b>" if strong else
                          f"{for_pdf(k)} {for_pdf(v)}" for k, v, strong in line.parts)
        return Paragraph(body, styles[line.role])
    body = f"<b>{for_pdf(line.text)}</b>" if line.strong else for_pdf(line.text)
    if line.lead:
        body = f"<b>{for_pdf(line.lead)}</b> {body}"
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


def _paragraphs(lines: list[Line], font: float, tier: int) -> list[Any]:
    from reportlab.platypus import Spacer

    styles = _styles(font, tier)
    story: list[Any] = []
    previous: Line | None = None
    for line in lines:
        gap = _gap_before(line, previous, font)
        if gap:
            story.append(Spacer(1, gap))
        story.append(_paragraph(line, styles))
        previous = line
    return story


def _frames(geo: _Geometry) -> list[Any]:
    from reportlab.platypus import Frame

    return [Frame(x, y, w, h, leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0,
                  showBoundary=0)
            for x, y, w, h in geo.text_boxes if h > 0.5 and w > 0.5]


def _flow(canvas: Any, lines: list[Line], geo: _Geometry, font: float,
          tier: int) -> list[float] | None:
    """Flow the text into the frames on ``canvas``; the height used in each frame, or
    None when some text is left over (it does not fit)."""
    story = _paragraphs(lines, font, tier)
    used = []
    for frame in _frames(geo):
        _fill(frame, story, canvas)
        used.append(frame._y1 + frame._height - frame._y)  # top minus the current baseline
    return None if story else used


def _fill(frame: Any, story: list[Any], canvas: Any) -> None:
    """Add flowables to ``frame`` until one does not fit; split that one across frames."""
    while story:
        if frame.add(story[0], canvas, trySplit=0):
            story.pop(0)
            continue
        parts = frame.split(story[0], canvas)
        if len(parts) >= 2 and frame.add(parts[0], canvas, trySplit=0):
            story[0:1] = parts[1:]
        return


@dataclass(frozen=True)
class _Geometry:
    margin: float
    text_boxes: tuple[tuple[float, float, float, float], ...]  # beside the side column, below
    side_box: tuple[float, float, float, float]
    qr_side: float
    code_pt: float
    code_lines: tuple[str, ...]
    bar_h: float


QR_SHARES = (0.5, 0.42)  # of the label's inner height, tried in turn


def _geometry(size: LabelSize, code: str, signal: str | None, font: float,
              tier: int = 0, qr_share: float = QR_SHARES[0]) -> _Geometry:
    """Where things go: the side column (QR, code, signal word) at the top right, the text
    beside it and then across the full width below it."""
    w, h = size.width_pt, size.height_pt
    margin = max(1.2 * MM, min(3 * MM, h * 0.05))
    gutter = max(1.2 * MM, w * 0.02)
    inner_h = h - 2 * margin
    # The QR code stays at least 10 mm across (about 0.4 mm a module for a batch code).
    qr = max(10 * MM, min(26 * MM, inner_h * qr_share, w * 0.28))
    side_w = qr
    code_pt, code_lines = _code_lines(code, side_w, max(MIN_FONT_PT, min(font, 7.0)))
    bar_h = max(font * (1.9 if tier < 2 else 1.6), 6.0) if signal else 0.0
    bar_h = min(bar_h, 4 * MM)
    side_h = qr + code_pt * (0.3 + 1.2 * len(code_lines)) + \
        (bar_h + code_pt * 0.4 if signal else 0.0)
    side_h = min(side_h, inner_h)
    top = h - margin
    side = (w - margin - side_w, top - side_h, side_w, side_h)
    beside = (margin, top - side_h, w - 2 * margin - side_w - gutter, side_h)
    below_h = inner_h - side_h - gutter * 0.6
    below = (margin, margin, w - 2 * margin, max(0.0, below_h))
    return _Geometry(margin=margin, text_boxes=(beside, below), side_box=side, qr_side=qr,
                     code_pt=code_pt, code_lines=code_lines, bar_h=bar_h)


def _code_lines(code: str, width: float, size: float) -> tuple[float, tuple[str, ...]]:
    """The code under the QR code: one line if it fits at ``size``, else broken after a
    hyphen into two lines, else (a code with no hyphen) shrunk to the width."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    def fits(text: str) -> bool:
        return stringWidth(text, "Helvetica-Bold", size) <= width

    if fits(code):
        return size, (code,)
    cuts = [i + 1 for i, ch in enumerate(code) if ch == "-" and 0 < i < len(code) - 1]
    two = [(code[:i], code[i:]) for i in cuts if fits(code[:i]) and fits(code[i:])]
    if two:
        return size, min(two, key=lambda parts: abs(len(parts[0]) - len(parts[1])))
    return size * width / stringWidth(code, "Helvetica-Bold", size), (code,)


def layout(data: LabelContent, size: LabelSize) -> LabelLayout:
    """Choose the largest font (and the least packing) at which the text fits."""
    from reportlab.pdfgen.canvas import Canvas

    scratch = Canvas(io.BytesIO(), pagesize=(size.width_pt, size.height_pt))
    signal, _, _ = hazard_words(data.hazard)
    notes: list[str] = []
    # Pack harder before shrinking the text to its smallest: each tier has a floor.
    for tier, floor in ((0, MIN_FONT_PT + 0.75), (1, MIN_FONT_PT + 0.25), (2, MIN_FONT_PT)):
        lines = lines_for(data, tier)
        font = MAX_FONT_PT
        while font >= floor - 1e-9:
            for share in QR_SHARES:
                geo = _geometry(size, data.code, signal, font, tier, share)
                used = _flow(scratch, lines, geo, font, tier)
                if used is not None:
                    break
            if used is not None:
                if tier >= 1:
                    notes.append("the dates are run together on one line to fit")
                if tier >= 2:
                    notes.append("hazard statements are printed by code (H-numbers) to fit "
                                 f"{size.name}; a larger label carries their full text")
                    notes.append("the code is printed only under the QR code, and who "
                                 "printed the label only in the record")
                sx, sy, sw, sh = geo.side_box
                qr_box = (sx, sy + sh - geo.qr_side, geo.qr_side, geo.qr_side)
                return LabelLayout(size=size.name, font_pt=font, tier=tier, qr_share=share,
                                   text_boxes=geo.text_boxes, text_heights_pt=tuple(used),
                                   qr_box=qr_box, side_box=geo.side_box, code_pt=geo.code_pt,
                                   code_lines=geo.code_lines,
                                   bar_h=geo.bar_h, notes=tuple(notes))
            font = round(font - STEP_PT, 4)
    raise InvalidInput(f"the label text for {data.code} does not fit on {size.name} even at "
                       f"{MIN_FONT_PT} pt; choose a larger --size")


def _qr_matrix(text: str) -> list[list[bool]]:
    import qrcode
    from qrcode.constants import ERROR_CORRECT_M

    code = qrcode.QRCode(error_correction=ERROR_CORRECT_M, border=0)
    code.add_data(text)
    code.make(fit=True)
    return [list(row) for row in code.get_matrix()]


def _draw_side(canvas: Any, data: LabelContent, lay: LabelLayout) -> None:
    from reportlab.pdfbase.pdfmetrics import stringWidth

    qx, qy, qs, _ = lay.qr_box
    matrix = _qr_matrix(data.code)
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
    canvas.setFont("Helvetica-Bold", lay.code_pt)
    for i, part in enumerate(lay.code_lines):
        canvas.drawCentredString(sx + sw / 2, qy - lay.code_pt * (1.2 * i + 1.05), part)
    signal, _, _ = hazard_words(data.hazard)
    if signal and lay.bar_h:
        word = signal.upper()
        bar_y = sy
        size = min(lay.bar_h * 0.62, _fit(word, "Helvetica-Bold", lay.bar_h * 0.62, sw * 0.9))
        canvas.rect(sx, bar_y, sw, lay.bar_h, stroke=0, fill=1)
        canvas.setFillColorRGB(1, 1, 1)
        canvas.setFont("Helvetica-Bold", size)
        text_w = stringWidth(word, "Helvetica-Bold", size)
        canvas.drawString(sx + (sw - text_w) / 2, bar_y + (lay.bar_h - size * 0.72) / 2, word)
        canvas.setFillColorRGB(0, 0, 0)


def _fit(text: str, font: str, size: float, width: float) -> float:
    from reportlab.pdfbase.pdfmetrics import stringWidth

    w = stringWidth(text, font, size)
    return size if w <= width else size * width / w


def _draw_label(canvas: Any, data: LabelContent, lay: LabelLayout, x: float, y: float,
                size: LabelSize, *, outline: bool) -> None:
    canvas.saveState()
    canvas.translate(x, y)
    if outline:  # on a plain sheet, a dotted hairline shows where to cut
        canvas.setLineWidth(0.25)
        canvas.setDash(1, 2)
        canvas.rect(0, 0, size.width_pt, size.height_pt, stroke=1, fill=0)
        canvas.setDash()
    signal, _, _ = hazard_words(data.hazard)
    geo = _geometry(size, data.code, signal, lay.font_pt, lay.tier, lay.qr_share)
    _flow(canvas, lines_for(data, lay.tier), geo, lay.font_pt, lay.tier)
    _draw_side(canvas, data, lay)
    canvas.restoreState()


def label_pdf(data: LabelContent, size: LabelSize, *, copies: int = 1,
              sheet: Sheet | None = None, outline: bool = False) -> tuple[bytes, LabelLayout]:
    """The PDF of ``copies`` labels: one per page of the label's size, or in a grid on
    ``sheet`` pages. Returns the bytes and the layout used."""
    from reportlab.pdfgen.canvas import Canvas

    if copies < 1:
        raise InvalidInput("--copies must be at least 1")
    lay = layout(data, size)
    buffer = io.BytesIO()
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
    canvas.setTitle(f"prepbook label {data.code}")
    canvas.setSubject(f"{data.kind} label")
    canvas.setCreator("prepbook")
    canvas.save()
    return buffer.getvalue(), lay
