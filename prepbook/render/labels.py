"""Bottle labels as PDF: a titrant batch or a primary-standard lot.

The layout is prepbook's own: a text column on the left that carries the identity,
strength and dates of what is in the bottle, and a narrow column on the right with a QR
code of the bottle's code, the code in print under it, and the hazard signal word in white
on a black bar. The GHS pictograms are drawn as red-bordered diamonds beside the hazard
statements (``pictograms``); everything else is black on white, and nothing depends on
colour (a black border is offered for printers without colour).

The text never overflows its box: the layout tries font sizes from large to
``MIN_FONT_PT`` and, if it still does not fit, packs the dates into one running paragraph
and then prints the hazard statements by their codes (saying so on the label and in
``LabelLayout.notes``). A label that cannot be made to fit is refused, never clipped.

reportlab and qrcode are imported only inside the functions that draw.
"""

from __future__ import annotations

import io
import re
from typing import Any

import msgspec

from prepbook.errors import InvalidInput
from prepbook.lab.label_content import BatchLabel, Hazard, LabelContent, LotLabel
from prepbook.render import archival, pictograms
from prepbook.render.label_geometry import MIN_FONT_PT, PLACES, QR_SHARES, Geometry, geometry
from prepbook.render.label_side import draw_side
from prepbook.render.numbers import significant
from prepbook.render.sizes import MM, LabelSize, Sheet, grid
from prepbook.text import for_pdf

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


class Line(msgspec.Struct, frozen=True):
    """One paragraph of label text: ``role`` picks the style, ``text`` is plain text
    and ``bold`` lists the leading words printed in bold (the field's name)."""

    role: str  # "kicker", "title", "strength", "status", "field", "storage", "hazard", "footer"
    text: str
    lead: str = ""  # printed in bold before the text
    strong: bool = False  # the text itself in bold too (dates to act on)
    # Run-together fields (name, value, strong): printed "name value · name value"
    parts: tuple[tuple[str, str, bool], ...] = ()


class LabelLayout(msgspec.Struct, frozen=True):
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
    notes: tuple[str, ...] = msgspec.field(default_factory=tuple)
    pictograms: tuple[str, ...] = ()  # the GHS codes drawn
    pictogram_side_mm: float = 0.0  # side of each pictogram's square
    place: str = "under"  # the pictograms under the signal word, or beside the QR code
    code_top: float = 0.0

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
    signal, statements, _ = hazard_words(hazard)
    lines: list[Line] = []
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
        ("Standardized", _standardized(data) if std else "not yet", False),
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


def _standardized(data: BatchLabel) -> str:
    """The accepted run's lab date, who recorded it and who accepted it on review."""
    who = f" by {data.standardized_by}" if data.standardized_by else ""
    review = (f", reviewed by {data.reviewed_by}" if data.reviewed_by
              else ", no review recorded")
    return f"{data.standardized_on}{who}{review} ({data.run})"


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
            name, fontName=archival.BOLD if bold else archival.REGULAR, fontSize=size,
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
        return Paragraph(_unbroken(body), styles[line.role])
    body = f"<b>{for_pdf(line.text)}</b>" if line.strong else for_pdf(line.text)
    if line.lead:
        body = f"<b>{for_pdf(line.lead)}</b> {body}"
    if line.role == "footer":
        body = f"<i>{body}</i>"
    return Paragraph(_unbroken(body), styles[line.role])


_VALUE_UNIT = re.compile(r"(\d) (N|mol/L|°C|%)(?![\w/])")
_NOMINAL = re.compile(r"\b(nominal|Factor) (\d)")


def _unbroken(body: str) -> str:
    """Paragraph markup in which a value and its unit ("0.1 N"), and "nominal" and its
    value, are joined by a no-break space, so a line never breaks between them."""
    return _NOMINAL.sub(r"\1&nbsp;\2", _VALUE_UNIT.sub(r"\1&nbsp;\2", body))


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


def _frames(geo: Geometry) -> list[Any]:
    from reportlab.platypus import Frame

    return [Frame(x, y, w, h, leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0,
                  showBoundary=0)
            for x, y, w, h in geo.text_boxes if h > 0.5 and w > 0.5]


def _flow(canvas: Any, lines: list[Line], geo: Geometry, font: float,
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


TRADE = 0.85  # larger pictograms are worth at most this share of the text size


def _try(data: LabelContent, size: LabelSize, side: float, tier: int, font: float,
         scratch: Any) -> LabelLayout | None:
    """The layout at ``font`` and ``tier`` with pictograms of ``side``, if it fits."""
    signal, _, named = hazard_words(data.hazard)
    codes = tuple(pictograms.code_of(p) for p in named)
    lines = lines_for(data, tier)
    for place in PLACES if codes else PLACES[:1]:
        for share in QR_SHARES:
            geo = geometry(size, data.code, signal, font, tier, share, codes, side, place)
            used = _flow(scratch, lines, geo, font, tier) if geo.fits else None
            if used is not None:
                _, sy, _, sh = geo.side_box
                return LabelLayout(
                    size=size.name, font_pt=font, tier=tier, qr_share=share,
                    text_boxes=geo.text_boxes, text_heights_pt=tuple(used),
                    qr_box=(geo.qr_x, sy + sh - geo.qr_side, geo.qr_side, geo.qr_side),
                    side_box=geo.side_box, code_pt=geo.code_pt, code_lines=geo.code_lines,
                    bar_h=geo.bar_h, pictograms=codes,
                    pictogram_side_mm=round(side / MM, 6),
                    place=place, code_top=geo.code_top)
    return None


def _largest(data: LabelContent, size: LabelSize, side: float, tier: int, floor: float,
             scratch: Any) -> LabelLayout | None:
    """The largest font from ``MAX_FONT_PT`` down to ``floor`` (in steps) that fits, by
    bisection: a smaller font never needs more room."""
    steps = int(round((MAX_FONT_PT - floor) / STEP_PT))
    fonts = [round(MAX_FONT_PT - k * STEP_PT, 4) for k in range(steps + 1)]
    best = _try(data, size, side, tier, fonts[-1], scratch)
    if best is None:
        return None
    lo, hi = 0, len(fonts) - 1  # fonts[hi] fits; find the first that fits
    while lo < hi:
        mid = (lo + hi) // 2
        found = _try(data, size, side, tier, fonts[mid], scratch)
        if found is not None:
            best, hi = found, mid
        else:
            lo = mid + 1
    return best


def _fitted(data: LabelContent, size: LabelSize) -> LabelLayout | None:
    """The least packing (tier) at which the text fits; within it the largest font,
    traded for larger pictograms down to ``TRADE`` of that font."""
    from reportlab.pdfgen.canvas import Canvas

    scratch = Canvas(io.BytesIO(), pagesize=(size.width_pt, size.height_pt),
                     initialFontName=archival.register_fonts())
    _, _, named = hazard_words(data.hazard)
    sides = pictograms.SIDES_MM if named else pictograms.SIDES_MM[:1]
    # Pack harder before shrinking the text to its smallest: each tier has a floor.
    for tier, floor in ((0, MIN_FONT_PT + 0.75), (1, MIN_FONT_PT + 0.25), (2, MIN_FONT_PT)):
        found = [lay for side in sides
                 if (lay := _largest(data, size, side * MM, tier, floor, scratch))]
        if found:
            top = max(lay.font_pt for lay in found)
            return next(lay for lay in found if lay.font_pt >= TRADE * top - 1e-9)
    return None


def layout(data: LabelContent, size: LabelSize) -> LabelLayout:
    """Choose the least packing, the largest font and the largest pictograms at which
    everything fits; InvalidInput if nothing does."""
    lay = _fitted(data, size)
    if lay is None:
        _, _, named = hazard_words(data.hazard)
        marks = (f" and its {len(named)} GHS pictogram{'s' if len(named) > 1 else ''} "
                 f"({pictograms.SIDES_MM[-1]:g} mm)" if named else "")
        raise InvalidInput(f"the label text for {data.code}{marks} does not fit on "
                           f"{size.name} even at {MIN_FONT_PT} pt; choose a larger --size")
    notes: list[str] = []
    full = pictograms.SIDES_MM[0]
    if lay.pictograms and lay.pictogram_side_mm < full - 1e-6:
        notes.append(f"the GHS pictograms are {lay.pictogram_side_mm:.3g} mm across their "
                     f"square to fit {size.name}, under the {full:g} mm asked for "
                     "containers up to 3 L; a larger label carries them larger")
    if lay.tier >= 1:
        notes.append("the dates are run together on one line to fit")
    if lay.tier >= 2:
        notes.append("hazard statements are printed by code (H-numbers) to fit "
                     f"{size.name}; a larger label carries their full text")
        notes.append("the code is printed only under the QR code, and who "
                     "printed the label only in the record")
    return msgspec.structs.replace(lay, notes=tuple(notes))


def _draw_label(canvas: Any, data: LabelContent, lay: LabelLayout, x: float, y: float,
                size: LabelSize, *, outline: bool, colour: bool) -> None:
    canvas.saveState()
    canvas.translate(x, y)
    if outline:  # on a plain sheet, a dotted hairline shows where to cut
        canvas.setLineWidth(0.25)
        canvas.setDash(1, 2)
        canvas.rect(0, 0, size.width_pt, size.height_pt, stroke=1, fill=0)
        canvas.setDash()
    signal, _, _ = hazard_words(data.hazard)
    side = lay.pictogram_side_mm * MM
    geo = geometry(size, data.code, signal, lay.font_pt, lay.tier, lay.qr_share,
                    lay.pictograms, side, lay.place)
    _flow(canvas, lines_for(data, lay.tier), geo, lay.font_pt, lay.tier)
    draw_side(canvas, data.code, signal, qr_box=lay.qr_box, side_box=lay.side_box,
              code_pt=lay.code_pt, lines=lay.code_lines, bar_h=lay.bar_h,
              code_top=lay.code_top)
    for code, (px, py) in zip(lay.pictograms, geo.spots, strict=True):
        pictograms.draw(canvas, code, px, py, side, colour=colour)
    canvas.restoreState()


def label_pdf(data: LabelContent, size: LabelSize, *, copies: int = 1,
              sheet: Sheet | None = None, outline: bool = False,
              colour: bool = True) -> tuple[bytes, LabelLayout]:
    """The PDF/A-2b of ``copies`` labels: one per page of the label's size, or in a grid
    on ``sheet`` pages; ``colour`` False draws the pictograms' borders black. Returns
    the bytes and the layout used."""
    from reportlab.pdfgen.canvas import Canvas

    if copies < 1:
        raise InvalidInput("--copies must be at least 1")
    lay = layout(data, size)
    buffer = io.BytesIO()
    page = (size.width_pt, size.height_pt) if sheet is None else (sheet.width_pt,
                                                                  sheet.height_pt)
    canvas = Canvas(buffer, pagesize=page, invariant=1,
                    initialFontName=archival.register_fonts())
    if sheet is None:
        for _ in range(copies):
            _draw_label(canvas, data, lay, 0, 0, size, outline=outline, colour=colour)
            canvas.showPage()
    else:
        g = grid(sheet, size)
        left = copies
        while left > 0:
            for ox, oy in g.origins[: min(left, g.per_sheet)]:
                _draw_label(canvas, data, lay, ox, oy, size, outline=True, colour=colour)
            left -= g.per_sheet
            canvas.showPage()
    title = f"prepbook label {data.code}"
    canvas.setTitle(title)
    canvas.setSubject(f"{data.kind} label")
    canvas.setCreator("prepbook")
    canvas.save()
    return archival.pdf_a(buffer.getvalue(), title=title, subject=f"{data.kind} label"), lay
